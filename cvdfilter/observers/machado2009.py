"""Machado, Oliveira & Fernandes (2009) anomalous trichromats, via colour-science.

Machado et al. model anomalous trichromacy by shifting the affected cone
fundamental by Delta = 20 nm x severity (severity 0-1) toward the other
long-wavelength cone (for tritanomaly, the S cone toward longer wavelengths).
The shift itself is colour-science's
``colour.blindness.msds_cmfs_anomalous_trichromacy_Machado2009``.

Reference: Machado, G. M., Oliveira, M. M., & Fernandes, L. A. F. (2009). A
physiologically-based model for simulation of color vision deficiency. IEEE
Transactions on Visualization and Computer Graphics, 15(6), 1291-1298.

Public: :func:`machado_fundamentals`, :data:`MAX_SHIFT_NM`.
"""

from __future__ import annotations

import functools

import numpy as np

__all__ = ["machado_fundamentals", "MAX_SHIFT_NM"]

#: Machado et al. (2009): severity 1 corresponds to a 20 nm shift.
MAX_SHIFT_NM = 20.0

_CONE = {"protan": 0, "deutan": 1, "tritan": 2}


@functools.lru_cache(maxsize=64)
def _shifted_table(deficiency: str, severity: float, age: float, field: float) -> np.ndarray:
    import colour

    from . import cie2006

    wl = cie2006.table_wavelengths()
    base = cie2006.fundamentals_from_absorbance(cie2006.photopigment_absorbance(), age=age, field=field)
    cmfs = colour.colorimetry.LMS_ConeFundamentals(base, wl, name="cvdfilter base")
    d = np.zeros(3)
    d[_CONE[deficiency]] = MAX_SHIFT_NM * severity
    shifted = colour.blindness.msds_cmfs_anomalous_trichromacy_Machado2009(cmfs, d)
    values = np.asarray(shifted.copy().align(colour.SpectralShape(wl[0], wl[-1], 1)).values)
    return values / values.max(axis=0)


def machado_fundamentals(deficiency: str, severity: float, *, age: float = 32.0, field: float = 2.0) -> np.ndarray:
    """Cone fundamentals of a Machado (2009) anomalous trichromat on the table grid (441, 3)."""
    return _shifted_table(deficiency, float(severity), float(age), float(field))

"""Machado, Oliveira & Fernandes (2009) anomalous trichromats, via colour-science.

Machado et al. model anomalous trichromacy by shifting the affected cone
fundamental by Delta = 20 nm x severity (severity 0-1) toward the other
long-wavelength cone (for tritanomaly, the S cone toward longer wavelengths).
The shift itself is colour-science's
``colour.blindness.msds_cmfs_anomalous_trichromacy_Machado2009``.

Reference: Machado, G. M., Oliveira, M. M., & Fernandes, L. A. F. (2009). A
physiologically-based model for simulation of color vision deficiency. IEEE
Transactions on Visualization and Computer Graphics, 15(6), 1291-1298.

Public: :func:`machado_fundamentals`, :func:`machado_peak_factors`, :data:`MAX_SHIFT_NM`.
"""

from __future__ import annotations

import functools

import numpy as np

__all__ = ["machado_fundamentals", "machado_peak_factors", "MAX_SHIFT_NM"]

#: Machado et al. (2009): severity 1 corresponds to a 20 nm shift.
MAX_SHIFT_NM = 20.0

_CONE = {"protan": 0, "deutan": 1, "tritan": 2}


@functools.lru_cache(maxsize=64)
def _shifted_table(deficiency: str, severity: float, age: float, field: float) -> np.ndarray:
    from . import cie2006

    wl = cie2006.table_wavelengths()
    base = cie2006.fundamentals_from_absorbance(cie2006.photopigment_absorbance(), age=age, field=field)
    if severity == 0:  # the normal observer exactly (colour-science's round trip adds ~1e-15)
        return base
    import colour

    cmfs = colour.colorimetry.LMS_ConeFundamentals(base, wl, name="cvdfilter base")
    d = np.zeros(3)
    d[_CONE[deficiency]] = MAX_SHIFT_NM * severity
    shifted = colour.blindness.msds_cmfs_anomalous_trichromacy_Machado2009(cmfs, d)
    return np.asarray(shifted.copy().align(colour.SpectralShape(wl[0], wl[-1], 1)).values)


def machado_fundamentals(deficiency: str, severity: float, *, age: float = 32.0, field: float = 2.0) -> np.ndarray:
    """Cone fundamentals of a Machado (2009) anomalous trichromat on the table grid (441, 3), peaks 1."""
    values = _shifted_table(deficiency, float(severity), float(age), float(field))
    return values / values.max(axis=0)


def machado_peak_factors(deficiency: str, severity: float, *, age: float = 32.0, field: float = 2.0) -> np.ndarray:
    """Peaks (3,) of the Machado (2009) fundamentals before they are normalised to 1.

    Machado et al. blend the affected cone with the other one scaled by a ratio
    of areas, so the anomalous cone's size relative to the normal cones is part
    of the model; their opponent-space simulation (``cvdfilter.observers.simulate``)
    needs it back: ``machado_fundamentals(...) * machado_peak_factors(...)`` are
    colour-science's unnormalised fundamentals.
    """
    return _shifted_table(deficiency, float(severity), float(age), float(field)).max(axis=0)

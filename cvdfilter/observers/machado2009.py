"""Machado, Oliveira & Fernandes (2009) anomalous trichromats.

Protanomaly and deuteranomaly: the affected cone fundamental is blended with
the other long-wavelength one, equivalent to a peak shift of Delta = 20 nm x
severity (severity 0-1), with the equations as corrected in the authors'
errata (alpha = (20 - Delta) / 20)::

    L_a = alpha L + 0.96 (area_L / area_M) (1 - alpha) M
    M_a = alpha M + (1 / 0.96) (area_M / area_L) (1 - alpha) L

Tritanomaly: the S fundamental is shifted in wavelength toward longer
wavelengths, ``S_a(lambda) = S(lambda - Delta)``. The matrices Machado et al.
published for tritanomaly are not on the 20 nm scale: fed Smith & Pokorny
fundamentals and the "Typical CRT Brainard 1997" primaries at their 5 nm
sampling, they are reproduced at severities 0.1, 0.2, ..., 1.0 by S shifts of
5, 11, 17, ..., 59 nm (best fits 5.00-59.02 nm, within 7e-4 per entry;
tests/test_simulate.py), i.e. 60 x severity - 1 nm. :data:`TRITAN_SHIFTS_NM`
holds those points; between them (and from 0 to 0.1) the shift is
interpolated linearly, so severity 0 is the normal observer and the shift is
continuous in severity.

The L/M blend agrees with colour-science's
``colour.blindness.msds_cmfs_anomalous_trichromacy_Machado2009`` (tested);
the S shift uses a cubic spline of the table, zero outside it.

Reference: Machado, G. M., Oliveira, M. M., & Fernandes, L. A. F. (2009). A
physiologically-based model for simulation of color vision deficiency. IEEE
Transactions on Visualization and Computer Graphics, 15(6), 1291-1298; and the
authors' errata and supplementary matrices.

Public: :func:`machado_fundamentals`, :func:`machado_peak_factors`, :func:`machado_shifted`,
:func:`machado_shift_nm`, :func:`machado_severity`, :func:`max_shift_nm`, :data:`MAX_SHIFT_NM`,
:data:`TRITAN_SHIFTS_NM`.
"""

from __future__ import annotations

import functools

import numpy as np

from .anomalous import CONE_INDEX as _CONE

__all__ = ["machado_fundamentals", "machado_peak_factors", "machado_shifted", "machado_shift_nm",
           "machado_severity", "max_shift_nm", "MAX_SHIFT_NM", "TRITAN_SHIFTS_NM"]

#: Machado et al. (2009): protan and deutan severity 1 corresponds to a 20 nm shift.
MAX_SHIFT_NM = 20.0
#: Tritanomaly: (severity, S shift in nm) at which the published matrices are reproduced
#: (fitted to the published tables, see the module docstring); (0, 0) added: the normal observer.
TRITAN_SHIFTS_NM = ((0.0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0),
                    (0.0, 5.0, 11.0, 17.0, 23.0, 29.0, 35.0, 41.0, 47.0, 53.0, 59.0))
#: Machado et al.'s factor in the L/M blend (errata).
_FACTOR = 0.96


def max_shift_nm(deficiency: str) -> float:
    """The shift (nm) at severity 1: 20 for protan and deutan, 59 for tritan."""
    return TRITAN_SHIFTS_NM[1][-1] if deficiency == "tritan" else MAX_SHIFT_NM


def machado_shift_nm(deficiency: str, severity) -> float:
    """The shift in nm for a severity 0-1 (see the module docstring)."""
    if deficiency == "tritan":
        return float(np.interp(severity, *TRITAN_SHIFTS_NM))
    return float(severity) * MAX_SHIFT_NM


def machado_severity(deficiency: str, shift_nm) -> float:
    """The severity 0-1 for a shift in nm (the inverse of :func:`machado_shift_nm`)."""
    if deficiency == "tritan":
        return float(np.interp(shift_nm, TRITAN_SHIFTS_NM[1], TRITAN_SHIFTS_NM[0]))
    return float(shift_nm) / MAX_SHIFT_NM


def machado_shifted(fundamentals, wavelengths, deficiency: str, severity: float) -> np.ndarray:
    """Machado et al.'s anomalous fundamentals, unnormalised, shape (n_wl, 3).

    Parameters
    ----------
    fundamentals : array_like
        Normal L, M, S fundamentals (n_wl, 3) on ``wavelengths``, or (..., n_wl, 3) for many observers
        at once (each blended with its own areas).
    wavelengths : array_like
        Evenly spaced wavelengths, nm (n_wl,).
    deficiency : str
        ``protan``, ``deutan`` or ``tritan``.
    severity : float
        0-1.

    Examples
    --------
    >>> wl = np.arange(380.0, 781.0, 5.0)
    >>> f = np.exp(-0.5 * ((wl[:, None] - [560.0, 530.0, 440.0]) / 40.0) ** 2)
    >>> bool(np.array_equal(machado_shifted(f, wl, "deutan", 0.0), f))
    True
    """
    f = np.array(fundamentals, dtype=float)
    wl = np.asarray(wavelengths, dtype=float)
    if severity == 0:
        return f
    k = _CONE[deficiency]
    if deficiency == "tritan":
        from scipy.interpolate import CubicSpline

        x = wl - machado_shift_nm(deficiency, severity)
        inside = (x >= wl[0]) & (x <= wl[-1])
        f[..., 2] = np.where(inside, CubicSpline(wl, f[..., 2], axis=-1)(np.clip(x, wl[0], wl[-1])), 0.0)
        return f
    alpha = 1.0 - float(severity)
    area = np.trapezoid(f[..., :2], wl, axis=-2)
    other = 1 - k
    ratio = _FACTOR * area[..., 0] / area[..., 1] if k == 0 else area[..., 1] / area[..., 0] / _FACTOR
    f[..., k] = alpha * f[..., k] + np.asarray(ratio)[..., None] * (1.0 - alpha) * f[..., other]
    return f


@functools.lru_cache(maxsize=64)
def _shifted_table(deficiency: str, severity: float, age: float, field: float) -> np.ndarray:
    from . import cie2006

    wl = cie2006.table_wavelengths()
    base = cie2006.fundamentals_from_absorbance(cie2006.photopigment_absorbance(), age=age, field=field)
    out = machado_shifted(base, wl, deficiency, severity)
    out.setflags(write=False)
    return out


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
    the unnormalised fundamentals of :func:`machado_shifted`.
    """
    return _shifted_table(deficiency, float(severity), float(age), float(field)).max(axis=0)

"""Individual observers: the CIE 2006 model with the physiological deviations of Asano, Fairchild & Blonde
(2016), vectorised over members (what :mod:`cvdfilter.observers.population` draws and builds).

Each member's lens and macular densities, L, M and S peak optical densities
(scaled by 1 + d/100, clipped at -100 %) and L, M and S pigment peaks (moved
along the wavelength axis, A'(lambda) = A(lambda - shift), as the paper and its
reference code do) deviate from the CIE 170-1 observer of its age and field;
the fundamentals are then built exactly as for the fixed observer.

References: Asano Y, Fairchild MD, Blonde L (2016), Individual colorimetric
observer model, PLoS One 11, e0145671; CIE 170-1:2006.

Public: :func:`individual_fundamentals`, :func:`members_to_grid`.
"""

from __future__ import annotations

import numpy as np

from ..spectra.grid import Grid
from . import cie2006

__all__ = ["individual_fundamentals", "members_to_grid"]

_CHUNK = 1024  # members per vectorised block (bounds the temporaries)


def _template(cone: int, x: np.ndarray) -> np.ndarray:
    """Linear absorbance of pigment ``cone`` at wavelengths ``x`` (any shape), log absorbance continued
    linearly past the table (the rule of :func:`cie2006.shifted_absorbance`, operation for operation)."""
    knots = cie2006._spline_pieces()[f"x{cone}"]
    lo, hi = knots[0], knots[-1]
    y = cie2006._spline_eval(cone, np.clip(x, lo, hi))
    ends = cie2006._spline_eval(cone, np.array([lo, hi]))
    d_lo, d_hi = cie2006._spline_eval(cone, np.array([lo, hi]), nu=1)
    y = np.where(x < lo, ends[0] + d_lo * (x - lo), y)
    y = np.where(x > hi, ends[1] + d_hi * (x - hi), y)
    return 10.0 ** y


def _normal_pigment(cone: int, peak_shift: np.ndarray) -> np.ndarray:
    """(n, 441) absorbance of a normal pigment moved by ``peak_shift`` nm along wavelength.

    A'(lambda) = A(lambda - shift), the tabulated A exactly where the shift is 0. The S pigment is 0
    beyond its table (615 nm), as in the fixed observer, shifted or not (so the result is continuous
    in the shift).
    """
    wl = cie2006.table_wavelengths()
    table = cie2006.photopigment_absorbance()[:, cone]
    x = wl[None, :] - peak_shift[:, None]
    shifted = _template(cone, x)
    if cone == 2:
        hi = cie2006._spline_pieces()["x2"][-1]
        shifted = np.where(x > hi, 0.0, shifted)
    return np.where(peak_shift[:, None] == 0, table[None, :], shifted)


def _anomalous_pigment(cone: int, other: int, pigment_shift: np.ndarray, peak_shift: np.ndarray) -> np.ndarray:
    """(n, 441) anomalous pigment (:func:`cie2006.anomalous_pigment`) then moved by ``peak_shift`` along
    wavelength; equal to the fixed observer's pigment where ``peak_shift`` is 0."""
    wl = cie2006.table_wavelengths()
    peaks = cie2006.pigment_peaks()
    signed = peaks[other] - peaks[cone]
    separation, direction = abs(signed), np.sign(signed)
    s = np.clip(np.asarray(pigment_shift, dtype=float), 0.0, separation)[:, None]
    lam = wl[None, :] - peak_shift[:, None]
    unshifted = (peak_shift == 0)[:, None]
    table = cie2006.photopigment_absorbance()
    p, q = peaks[cone], peaks[other]
    own = _template(cone, lam * p / (p + direction * s))
    own = np.where(unshifted & (s == 0), table[None, :, cone], own)
    back = -direction * (separation - s)
    toward = _template(other, lam * q / (q + back))
    toward = np.where(unshifted & (back == 0), table[None, :, other], toward)
    w = s / separation
    return np.where(w == 0, own, (1.0 - w) * own + w * toward)


def individual_fundamentals(*, age, field: float = 2.0, lens_density_pct=0.0, macular_density_pct=0.0,
                            density_pct=(0.0, 0.0, 0.0), peak_shift_nm=(0.0, 0.0, 0.0), anomalous=None,
                            quanta: bool = False) -> np.ndarray:
    """Cone fundamentals of individual observers on the CIE 2006 table grid (390-830 nm, 1 nm).

    Vectorised over members (no loop over members or wavelengths).

    Parameters
    ----------
    age : array_like
        Years (20-80), shape (n,) or scalar.
    field : float
        Field size, deg (1-10), one for all members.
    lens_density_pct, macular_density_pct : array_like
        Deviations, %, shape (n,) or scalar; clipped at -100.
    density_pct : array_like
        Deviations of the L, M, S peak optical densities, %, shape (n, 3) or (3,); clipped at -100.
    peak_shift_nm : array_like
        Shifts of the L, M, S pigments along wavelength, nm, shape (n, 3) or (3,).
    anomalous : tuple (cone, other, pigment_shift) or None
        Replace pigment ``cone`` by the anomalous pigment moved ``pigment_shift`` nm (shape (n,))
        toward ``other`` (:func:`cie2006.anomalous_pigment`), before its individual peak shift.
    quanta : bool
        Quantal instead of energy-based sensitivities.

    Returns
    -------
    numpy.ndarray
        Shape (n, 441, 3), each member's L, M, S normalised to a peak of 1.

    Examples
    --------
    >>> lms = individual_fundamentals(age=[32.0])
    >>> bool(np.array_equal(lms[0], cie2006.fundamentals_from_absorbance(cie2006.photopigment_absorbance())))
    True
    """
    age = np.atleast_1d(np.asarray(age, dtype=float))
    n = len(age)
    lens = np.broadcast_to(np.asarray(lens_density_pct, dtype=float), (n,))
    mac = np.broadcast_to(np.asarray(macular_density_pct, dtype=float), (n,))
    dens = np.broadcast_to(np.asarray(density_pct, dtype=float), (n, 3))
    shifts = np.broadcast_to(np.asarray(peak_shift_nm, dtype=float), (n, 3))
    if anomalous is not None:
        cone, other, pshift = anomalous
        pshift = np.broadcast_to(np.asarray(pshift, dtype=float), (n,))
    out = np.empty((n, len(cie2006.table_wavelengths()), 3))
    for start in range(0, n, _CHUNK):  # blocks of members bound the temporaries; each block is vectorised
        sl = slice(start, min(start + _CHUNK, n))
        pig = np.empty((sl.stop - sl.start, out.shape[1], 3))
        for c in range(3):  # three cones, each vectorised over members and wavelengths
            if anomalous is not None and c == cone:
                pig[:, :, c] = _anomalous_pigment(cone, other, pshift[sl], shifts[sl, c])
            else:
                pig[:, :, c] = _normal_pigment(c, shifts[sl, c])
        out[sl] = _build(pig, age[sl], field, lens[sl], mac[sl], dens[sl], quanta)
    return out


def _build(absorbance, age, field, lens_pct, mac_pct, dens_pct, quanta):
    """Self-screening, macula and lens per member, as :func:`cie2006.fundamentals_from_absorbance`."""
    t = cie2006._tables()
    d = cie2006.peak_optical_density(field)[None, :] * (1.0 + np.maximum(dens_pct, -100.0) / 100.0)  # (n, 3)
    alpha = 1.0 - 10.0 ** (-d[:, None, :] * absorbance)
    factor = np.where(age <= 60, 1 + 0.02 * (age - 32), 1.56 + 0.0667 * (age - 60))  # CIE 170-1 lens by age
    ocular = (t["docul1"][None, :] * factor[:, None] + t["docul2"][None, :]) \
        * (1.0 + np.maximum(lens_pct, -100.0) / 100.0)[:, None]
    macula = cie2006.macular_density(field)[None, :] * (1.0 + np.maximum(mac_pct, -100.0) / 100.0)[:, None]
    pre = 10.0 ** (-(macula + ocular))
    sens = alpha * pre[:, :, None]
    if not quanta:
        sens = sens * t["wl"][None, :, None]
    return sens / sens.max(axis=1, keepdims=True)


def members_to_grid(values: np.ndarray, grid: Grid) -> np.ndarray:
    """(n, 441, 3) table values onto ``grid`` -> (n, n_wl, 3); zero outside 390-830 nm."""
    wl = cie2006.table_wavelengths()
    target = grid.wavelengths
    if np.allclose(target, np.round(target)):
        out = np.zeros((values.shape[0], len(target), 3))
        idx = np.round(target - wl[0]).astype(int)
        ok = (idx >= 0) & (idx < len(wl))
        k = np.flatnonzero(ok)
        if len(k) and np.all(np.diff(idx[k]) == 1):  # a whole-nm 1 nm grid: one block copy
            out[:, k[0]:k[-1] + 1] = values[:, idx[k[0]]:idx[k[-1]] + 1]
        else:
            out[:, ok] = values[:, idx[ok]]
        return out
    n = values.shape[0]
    flat = np.moveaxis(values, 1, 0).reshape(len(wl), n * 3)
    return np.moveaxis(cie2006.to_grid(flat, grid).reshape(len(target), n, 3), 0, 1)

"""Rayleigh match (Rayleigh 1881): the red/green mixture an observer matches to a yellow.

Rayleigh, Lord (1881). Experiments on colour. Nature 25, 64-66.

Instrument (our own model): narrowband primaries, Gaussian in radiance with a
full width at half maximum of :data:`PRIMARY_FWHM_NM` = 5 nm, centred on
:data:`PRIMARIES_NM` (red 670, green 545, yellow 589 nm, about where the
classic instruments put them). The observer sets the reading r (0 = all green,
1 = all red) of the mixture r a_R R + (1 - r) a_G G and the yellow's intensity.
The scale is calibrated so that the reference normal observer (CIE 2006, 32
years, 2 deg) matches at r = 0.5 without a filter (a_R / a_G chosen so;
common practice for such instruments: the normal match mid-scale).

Match. The S cones are left out: their catches from these lights are tiny
and below the Weber range, and the test is designed to leave them silent
(common practice). With the yellow's intensity free, a mixture matches when
its L/M catch ratio equals the yellow's. The matching range is the set of
readings whose receptor-noise distance from the yellow in the L, M channel,
|ln(L/M)_mix - ln(L/M)_Y| / sqrt(e_L^2 + e_M^2) (Vorobyev & Osorio 1998 for two
channels), is at most :data:`MATCH_THRESHOLD` = 1 JND. ``red_fraction`` is the
mid-point of that range, ``range`` its width (reading units, 0-1), and
``range_log_odds`` its width in ln(r / (1 - r)). For a protanope or deuteranope
(one channel) every reading matches: range 1, mid-point 0.5.

Filter. A filter in front of the instrument scales each narrowband primary by
its transmittance, so in the narrowband limit the match in cone terms is the
same: the reading's odds r/(1-r) move by the factor T(545)/T(670) and the range
in log-odds is unchanged. With primaries of finite width under a steep edge
both may move slightly; :func:`rayleigh_match` computes them exactly from the
filtered primary spectra.

Public: :data:`PRIMARIES_NM`, :data:`PRIMARY_FWHM_NM`, :data:`MATCH_THRESHOLD`,
:func:`primaries`, :func:`rayleigh_match`, :func:`reference_calibration`.
"""

from __future__ import annotations

import numpy as np

__all__ = ["PRIMARIES_NM", "PRIMARY_FWHM_NM", "MATCH_THRESHOLD", "primaries", "rayleigh_match", "reference_calibration"]

#: Centre wavelengths (nm) of the red, green and yellow primaries (ours, near the classic choice).
PRIMARIES_NM = {"red": 670.0, "green": 545.0, "yellow": 589.0}
#: Full width at half maximum of each primary (nm), Gaussian in radiance (ours).
PRIMARY_FWHM_NM = 5.0
#: Receptor-noise distance (JND) within which a mixture still matches the yellow (the model's unit).
MATCH_THRESHOLD = 1.0


def primaries(wavelengths, *, fwhm: float = PRIMARY_FWHM_NM) -> np.ndarray:
    """Red, green, yellow primary spectra (unit area), shape (3, n_wl)."""
    wl = np.asarray(wavelengths, dtype=float)
    centres = np.array([PRIMARIES_NM["red"], PRIMARIES_NM["green"], PRIMARIES_NM["yellow"]])
    sigma = fwhm / (2 * np.sqrt(2 * np.log(2)))
    g = np.exp(-0.5 * ((wl[None, :] - centres[:, None]) / sigma) ** 2)
    return g / g.sum(axis=1, keepdims=True)


def _catches(fundamentals, wavelengths, transmittance, fwhm):
    prim = primaries(wavelengths, fwhm=fwhm)
    if transmittance is not None:
        prim = prim * np.asarray(transmittance, dtype=float)[..., None, :]
    f = np.asarray(fundamentals, dtype=float)[..., :2]  # L, M
    # (..., 3 primaries, 2 cones); broadcast filters (F, 1, ...) against members
    return np.einsum("...pw,...wc->...pc", prim, f) if prim.ndim > 2 else np.einsum("pw,...wc->...pc", prim, f)


def _odds(c, target_log_ratio):
    lr, mr = c[..., 0, 0], c[..., 0, 1]
    lg, mg = c[..., 1, 0], c[..., 1, 1]
    rho = np.exp(target_log_ratio)
    num, den = rho * mg - lg, lr - rho * mr
    with np.errstate(divide="ignore", invalid="ignore"):
        x = num / den
    return np.where((x > 0) & np.isfinite(x), x, np.nan)


def rayleigh_match(fundamentals, wavelengths, noise, *, transmittance=None, calibration=None,
                   fwhm: float = PRIMARY_FWHM_NM, threshold: float = MATCH_THRESHOLD) -> dict[str, np.ndarray]:
    """The Rayleigh match of observers, with or without a filter in front of the instrument.

    Parameters
    ----------
    fundamentals : array_like
        Energy-based cone fundamentals, shape (..., n_wl, 3) (members of a population on the leading axes).
    wavelengths : array_like
        nm, shape (n_wl,).
    noise : array_like
        e_L, e_M, e_S (NaN for a missing cone); only e_L and e_M are used.
    transmittance : array_like, optional
        Filter transmittance, fraction 0-1, shape (n_wl,) or (F, 1, ..., n_wl) broadcasting against members.
    calibration : float, optional
        a_R / a_G, the instrument's red-to-green radiance ratio; None = reading 0.5 for the reference normal.
    fwhm : float
        Primary width, nm.
    threshold : float
        Match tolerance, JND.

    Returns
    -------
    dict
        ``red_fraction`` (mid-point of the matching range, reading 0-1), ``range`` (width, reading units),
        ``range_log_odds`` (width in ln odds), ``low``, ``high`` (ends of the range), ``match`` (the exact
        match reading), each shape (...).
    """
    wl = np.asarray(wavelengths, dtype=float)
    e = np.asarray(noise, dtype=float)
    if calibration is None:
        calibration = reference_calibration(wl, fwhm=fwhm)
    c = _catches(fundamentals, wl, transmittance, fwhm)
    yellow = np.log(c[..., 2, 0]) - np.log(c[..., 2, 1])
    dichromat = not (np.isfinite(e[0]) and np.isfinite(e[1]))
    width = threshold * np.sqrt(e[0] ** 2 + e[1] ** 2) if not dichromat else np.inf

    def reading(target):
        x = _odds(c, target) / calibration  # reading odds r/(1-r)
        return x / (1 + x)

    exact = reading(yellow)
    if dichromat:
        shape = np.shape(yellow)
        low, high = np.zeros(shape), np.ones(shape)
    else:
        # ln(L/M) of the mixture falls as r rises (red has the higher L/M), so +width gives the low end
        a, b = reading(yellow + width), reading(yellow - width)
        a = np.where(np.isnan(a), np.where(c[..., 1, 0] / c[..., 1, 1] > np.exp(yellow + width), 1.0, 0.0), a)
        b = np.where(np.isnan(b), 1.0, b)
        low, high = np.minimum(a, b), np.maximum(a, b)
    with np.errstate(divide="ignore"):
        lo_odds = np.log(low) - np.log1p(-low)
        hi_odds = np.log(high) - np.log1p(-high)
    return {"red_fraction": (low + high) / 2, "range": high - low, "range_log_odds": hi_odds - lo_odds,
            "low": low, "high": high, "match": np.where(dichromat, 0.5, exact)}


def reference_calibration(wavelengths, *, fwhm: float = PRIMARY_FWHM_NM) -> float:
    """a_R / a_G that puts the reference normal observer's exact match at reading 0.5."""
    from ..observers.observer import observer
    from ..spectra.grid import Grid

    wl = np.asarray(wavelengths, dtype=float)
    grid = Grid(float(wl[0]), float(wl[-1]), float(wl[1] - wl[0]))
    ref = observer("normal", grid)
    c = _catches(ref.fundamentals, wl, None, fwhm)
    yellow = np.log(c[2, 0]) - np.log(c[2, 1])
    return float(_odds(c, yellow))


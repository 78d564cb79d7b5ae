"""The CIE 170-1:2006 physiological observer by age and field size.

Builds cone fundamentals from their parts, as CIE 170-1:2006 does:

* low-density photopigment absorbance A_i(lambda) of L, M and S (tabulated,
  ``cone_data/cie2006_photopigment_absorbance.csv``);
* peak optical density of the pigments by field size f (deg):
  D_L = D_M = 0.38 + 0.54 exp(-f / 1.333), D_S = 0.30 + 0.45 exp(-f / 1.333);
  self-screened absorptance alpha_i = 1 - 10^(-D_i A_i);
* macular pigment density: the 2 deg table (peak 0.35 at 460 nm) scaled to a
  peak of 0.485 exp(-f / 6.132);
* lens and ocular media density by age a (years): D_ocul = D1 (1 + 0.02 (a - 32))
  + D2 for 20 <= a <= 60, D1 (1.56 + 0.0667 (a - 60)) + D2 for a > 60;
* quantal fundamentals alpha_i 10^(-D_mac - D_ocul), energy-based after
  multiplying by lambda, each normalised to a peak of 1.

The model runs on the tables' own 1 nm grid (390-830 nm) and is then taken onto
the working grid; below 390 nm the fundamentals are 0 (CIE 170-1 tabulates
from 390 nm).

The photopigment absorbance is kept separate from the pre-receptoral filters
so that anomalous observers shift the pigment alone
(:func:`shifted_absorbance`) and then pass through the same lens, macula and
self-screening (:func:`fundamentals_from_absorbance`).

References: CIE 170-1:2006, Fundamental chromaticity diagram with
physiological axes - Part 1; Stockman & Sharpe (2000), Vision Research 40,
1711-1737.

Anomalous pigments (:func:`anomalous_pigment`) and the meaning of an L/M
``shift``: :func:`peak_shift_table` relates a pigment shift to the move of the
fundamental's peak (:func:`fundamental_peaks`) in the reference observer (32
years, 2 deg); :func:`pigment_shift_for` inverts it.

Public: :func:`table_wavelengths`, :func:`photopigment_absorbance`,
:func:`pigment_peaks`, :func:`shifted_absorbance`, :func:`anomalous_pigment`,
:func:`fundamental_peaks`, :func:`peak_shift_table`, :func:`pigment_shift_for`,
:func:`fundamental_separation`, :func:`ocular_media_density`,
:func:`macular_density`, :func:`peak_optical_density`,
:func:`fundamentals_from_absorbance`, :func:`cone_fundamentals`, :func:`to_grid`.
"""

from __future__ import annotations

import functools
from importlib import resources

import numpy as np

from ..spectra.grid import DEFAULT_GRID, Grid

__all__ = ["table_wavelengths", "photopigment_absorbance", "pigment_peaks", "shifted_absorbance",
           "anomalous_pigment", "fundamental_peaks", "peak_shift_table", "pigment_shift_for",
           "fundamental_separation", "REFERENCE_AGE", "REFERENCE_FIELD",
           "ocular_media_density", "macular_density", "peak_optical_density",
           "fundamentals_from_absorbance", "cone_fundamentals", "to_grid", "AGE_RANGE", "FIELD_RANGE"]

#: Ages and field sizes CIE 170-1:2006 covers.
AGE_RANGE = (20.0, 80.0)
FIELD_RANGE = (1.0, 10.0)


def _csv(name: str) -> np.ndarray:
    text = resources.files("cvdfilter.cone_data").joinpath(name).read_text()
    rows = [line.split(",") for line in text.strip().splitlines()[1:]]
    return np.array([[float(c) if c else np.nan for c in r] for r in rows])


@functools.lru_cache(maxsize=1)
def _tables() -> dict[str, np.ndarray]:
    a = _csv("cie2006_photopigment_absorbance.csv")
    o = _csv("cie2006_ocular_media_density.csv")
    m = _csv("cie2006_macular_density.csv")
    return {"wl": a[:, 0], "log_abs": a[:, 1:4], "docul1": o[:, 1], "docul2": o[:, 2], "mac2": m[:, 1]}


def table_wavelengths() -> np.ndarray:
    """The tables' own wavelengths, 390-830 nm at 1 nm."""
    return _tables()["wl"].copy()


def photopigment_absorbance() -> np.ndarray:
    """Low-density absorbance of L, M, S (peak 1, linear), shape (441, 3); 0 where not tabulated."""
    return np.nan_to_num(10.0 ** _tables()["log_abs"], nan=0.0)


@functools.lru_cache(maxsize=1)
def _log_abs_splines():
    from scipy.interpolate import CubicSpline

    t = _tables()
    wl, la = t["wl"], t["log_abs"]
    splines = []
    for i in range(3):
        ok = np.isfinite(la[:, i])
        splines.append(CubicSpline(wl[ok], la[ok, i], extrapolate=False))
    return splines


@functools.lru_cache(maxsize=1)
def _tables_digest() -> str:
    """A short hash of the absorbance table, so cached results follow the data."""
    import hashlib

    return hashlib.sha1(np.ascontiguousarray(_tables()["log_abs"]).tobytes()).hexdigest()[:16]


def _disk_cached(key: str, build) -> np.ndarray:
    # The splines below need scipy.interpolate, which takes most of a second to
    # import. Results on the bundled tables alone (reference data) go to the
    # on-disk reference cache; results that depend on a user's parameter do not.
    from ..spectra.cache import cached_arrays

    return cached_arrays(f"cie2006-{key}-{_tables_digest()}", lambda: {"v": build()})["v"]


def _spline_pieces() -> dict[str, np.ndarray]:
    """Breakpoints ``x{i}`` and coefficients ``c{i}`` (4, n) of the log-absorbance splines (reference data)."""
    from ..spectra.cache import cached_arrays

    def build():
        out = {}
        for i, s in enumerate(_log_abs_splines()):
            out[f"x{i}"], out[f"c{i}"] = np.asarray(s.x, dtype=float), np.asarray(s.c, dtype=float)
        return out

    return cached_arrays(f"cie2006-log-abs-splines-{_tables_digest()}", build)


def _spline_eval(cone: int, xq: np.ndarray, nu: int = 0) -> np.ndarray:
    """Evaluate the cubic spline of :func:`_log_abs_splines` (or its first derivative) with numpy alone."""
    pieces = _spline_pieces()
    x, c = pieces[f"x{cone}"], pieces[f"c{cone}"]
    xq = np.asarray(xq, dtype=float)
    i = np.clip(np.searchsorted(x, xq, side="right") - 1, 0, len(x) - 2)
    dx = xq - x[i]
    if nu == 1:
        return (3.0 * c[0, i] * dx + 2.0 * c[1, i]) * dx + c[2, i]
    return ((c[0, i] * dx + c[1, i]) * dx + c[2, i]) * dx + c[3, i]


@functools.lru_cache(maxsize=1)
def _pigment_peaks_cached() -> tuple:
    return tuple(float(v) for v in _disk_cached("pigment-peaks", _pigment_peaks))


def pigment_peaks() -> np.ndarray:
    """Peak wavelengths of the L, M, S pigments, nm (see :func:`_pigment_peaks`)."""
    return np.array(_pigment_peaks_cached())


def _pigment_peaks() -> np.ndarray:
    """Peak wavelengths of the L, M, S low-density absorbance spectra, nm.

    The tabulated CIE 2006 absorbances are slightly bumpy at the top (they are
    back-calculated from the fundamentals: L has two maxima, at 545 and 555 nm),
    so the peak is taken as the absorbance-weighted centroid of the region
    within 10 % of the maximum, on a 0.01 nm sampling of the cubic spline:
    about 553.0, 530.0 and 417.5 nm.
    """
    fine = np.arange(390.0, 700.0, 0.01)
    peaks = []
    for s in _log_abs_splines():
        a = np.nan_to_num(10.0 ** s(fine), nan=0.0)
        top = a >= 0.9 * a.max()
        peaks.append(float(np.sum(fine[top] * a[top]) / np.sum(a[top])))
    return np.array(peaks)


def shifted_absorbance(cone: int, shift_nm: float) -> np.ndarray:
    """Absorbance of one pigment with its peak moved by ``shift_nm`` along log wavenumber.

    The template keeps its shape on a log-wavenumber axis (the way Stockman &
    Sharpe shift pigment templates): A'(lambda) = A(lambda * p / (p + shift)),
    where p is the pigment's peak wavelength, so the peak moves from p to
    p + shift. Outside the tabulated range the log absorbance is continued
    linearly from the end of the table.

    Parameters
    ----------
    cone : int
        0 = L, 1 = M, 2 = S.
    shift_nm : float
        Peak shift in nm (positive = toward longer wavelengths).

    Returns
    -------
    numpy.ndarray
        Linear absorbance, peak 1, shape (441,) on :func:`table_wavelengths`.
    """
    if shift_nm == 0:
        return photopigment_absorbance()[:, cone]
    from ..spectra.cache import memo_arrays

    return memo_arrays(f"cie2006-shifted-{int(cone)}-{float(shift_nm)!r}",
                       lambda: {"v": _shifted_absorbance(cone, shift_nm)})["v"].copy()


def _shifted_absorbance(cone: int, shift_nm: float) -> np.ndarray:
    wl = _tables()["wl"]
    pieces = _spline_pieces()
    peak = pigment_peaks()[cone]
    x = wl * peak / (peak + shift_nm)
    lo, hi = pieces[f"x{cone}"][0], pieces[f"x{cone}"][-1]
    y = _spline_eval(cone, np.clip(x, lo, hi))
    ends = _spline_eval(cone, np.array([lo, hi]))
    d_lo, d_hi = _spline_eval(cone, np.array([lo, hi]), nu=1)
    y = np.where(x < lo, ends[0] + d_lo * (x - lo), y)
    y = np.where(x > hi, ends[1] + d_hi * (x - hi), y)
    return 10.0 ** y


def anomalous_pigment(cone: int, other: int, pigment_shift: float) -> np.ndarray:
    """Absorbance of an anomalous pigment whose peak moved ``pigment_shift`` nm toward ``other``.

    The affected pigment's template is moved along log wavenumber
    (:func:`shifted_absorbance`) and blended toward the other pigment's
    template, moved back to the same peak, in proportion
    w = pigment_shift / pigment separation:
    A' = (1 - w) A_own(shifted) + w A_other(moved back). Shift 0 gives the
    normal pigment exactly, shift = separation the other pigment exactly (the
    dichromatic limit); both parts share one peak, so the pigment's peak moves
    by ``pigment_shift``.

    Parameters
    ----------
    cone, other : int
        Affected and target pigment (0 = L, 1 = M, 2 = S).
    pigment_shift : float
        nm, 0 to the pigment separation (values outside are clamped).

    Returns
    -------
    numpy.ndarray
        Linear absorbance, peak 1, shape (441,) on :func:`table_wavelengths`.
    """
    return _anomalous_pigments(cone, other, np.array([float(pigment_shift)]), cached=True)[0]


def _anomalous_pigments(cone: int, other: int, pigment_shifts: np.ndarray, *, cached: bool) -> np.ndarray:
    """:func:`anomalous_pigment` for an array of shifts, shape (n, 441); uncached rows need scipy."""
    peaks = pigment_peaks()
    signed = peaks[other] - peaks[cone]
    separation, direction = abs(signed), np.sign(signed)
    shifts = np.clip(np.asarray(pigment_shifts, dtype=float), 0.0, separation)
    out = np.empty((len(shifts), len(table_wavelengths())))
    for i, s in enumerate(shifts):  # a handful of rows (the table builder passes a few hundred)
        own = (shifted_absorbance(cone, direction * s) if cached
               else _shifted_absorbance_or_table(cone, direction * s))
        w = s / separation
        if w == 0.0:
            out[i] = own
            continue
        back = -direction * (separation - s)
        toward = shifted_absorbance(other, back) if cached else _shifted_absorbance_or_table(other, back)
        out[i] = (1.0 - w) * own + w * toward
    return out


def _shifted_absorbance_or_table(cone: int, shift_nm: float) -> np.ndarray:
    return photopigment_absorbance()[:, cone] if shift_nm == 0 else _shifted_absorbance(cone, shift_nm)


#: The reference observer on which ``shift`` is defined: CIE 170-1, 32 years, 2 deg.
REFERENCE_AGE, REFERENCE_FIELD = 32.0, 2.0
#: Rows of the pigment-shift -> fundamental-peak table per pigment pair.
_PEAK_TABLE_ROWS = 601


def fundamental_peaks(fundamentals: np.ndarray, *, lo: float = 390.0, hi: float = 700.0) -> np.ndarray:
    """Peak wavelengths (lambda max) of sensitivities on the CIE 2006 table grid, nm.

    The maximum of a not-a-knot cubic spline through the 1 nm values, found on a
    0.01 nm sampling between ``lo`` and ``hi`` and refined by a parabola through
    the highest sample and its neighbours (so the result varies smoothly with
    the curve). ``fundamentals`` is (441,) or (441, k); returns a float or (k,).
    """
    from scipy.interpolate import CubicSpline

    values = np.asarray(fundamentals, dtype=float)
    flat = values.reshape(len(table_wavelengths()), -1)
    fine = np.arange(lo, hi + 1e-9, 0.01)
    y = CubicSpline(table_wavelengths(), flat, axis=0)(fine)  # (n_fine, k)
    i = np.clip(np.argmax(y, axis=0), 1, len(fine) - 2)
    k = np.arange(flat.shape[1])
    y0, y1, y2 = y[i - 1, k], y[i, k], y[i + 1, k]
    den = y0 - 2 * y1 + y2
    offset = np.where(den < 0, 0.5 * (y0 - y2) / np.where(den < 0, den, -1.0), 0.0)
    peaks = fine[i] + offset * 0.01
    return peaks.reshape(values.shape[1:]) if values.ndim > 1 else float(peaks[0])


def _peak_shift_table(cone: int, other: int) -> np.ndarray:
    """Rows (pigment shift nm, move of the affected fundamental's peak nm), shape (n, 2).

    Pigment shifts from 0 to the pigment separation in equal steps; for each,
    the affected cone's energy-based fundamental of the reference observer
    (:data:`REFERENCE_AGE`, :data:`REFERENCE_FIELD`) is rebuilt and its peak
    (:func:`fundamental_peaks`) compared with the normal one. The move grows
    strictly with the pigment shift (checked here), so the table inverts.
    """
    peaks = pigment_peaks()
    separation = abs(peaks[other] - peaks[cone])
    shifts = np.linspace(0.0, separation, _PEAK_TABLE_ROWS)
    pigments = np.repeat(photopigment_absorbance()[None], len(shifts), axis=0)  # (n, 441, 3)
    pigments[:, :, cone] = _anomalous_pigments(cone, other, shifts, cached=False)
    d = peak_optical_density(REFERENCE_FIELD)[cone]
    pre = 10.0 ** (-(macular_density(REFERENCE_FIELD) + ocular_media_density(REFERENCE_AGE)))
    sens = (1.0 - 10.0 ** (-d * pigments[:, :, cone])) * pre * _tables()["wl"]  # (n, 441), energy
    lo = min(peaks[cone], peaks[other]) - 60.0
    hi = max(peaks[cone], peaks[other]) + 60.0
    fpeaks = fundamental_peaks(sens.T, lo=max(lo, 390.0), hi=min(hi, 760.0))
    moves = np.abs(fpeaks - fpeaks[0])
    if not np.all(np.diff(moves) > 0):
        raise RuntimeError("fundamental peak does not move monotonically with the pigment shift")
    return np.column_stack([shifts, moves])


@functools.lru_cache(maxsize=8)
def peak_shift_table(cone: int, other: int) -> np.ndarray:
    """Pigment shift (column 0) against the move of the fundamental's peak (column 1), nm; read-only.

    See :func:`_peak_shift_table`; cached on disk, so the hot path needs no scipy.
    """
    # the key names the rule's version: change it when the peak rule or the template blend changes
    table = _disk_cached(f"peak-shift-v1-{int(cone)}-{int(other)}-{_PEAK_TABLE_ROWS}",
                         lambda: _peak_shift_table(cone, other))
    table = np.array(table)
    table.flags.writeable = False
    return table


def pigment_shift_for(cone: int, other: int, shift: float) -> float:
    """The pigment shift, nm, that moves the reference fundamental's peak by ``shift`` nm toward ``other``.

    Linear interpolation in :func:`peak_shift_table` (continuous and strictly
    increasing); 0 gives 0 and the fundamental separation gives the pigment
    separation exactly.
    """
    table = peak_shift_table(cone, other)
    return float(np.interp(shift, table[:, 1], table[:, 0]))


def fundamental_separation(cone: int, other: int) -> float:
    """Distance, nm, between the two cones' fundamental peaks in the reference observer.

    The largest ``shift`` (the dichromatic limit): L-M 27.35 nm. Defined for L
    and M only: the S fundamental's peak is shaped by macular pigment and lens
    and jumps (about 448 -> 472 nm) as the S pigment moves toward M.
    """
    return float(peak_shift_table(cone, other)[-1, 1])


def ocular_media_density(age: float = 32.0) -> np.ndarray:
    """Optical density of lens and ocular media at ``age`` years (CIE 170-1), shape (441,)."""
    t = _tables()
    if age <= 60:
        factor = 1 + 0.02 * (age - 32)
    else:
        factor = 1.56 + 0.0667 * (age - 60)
    return t["docul1"] * factor + t["docul2"]


def macular_density(field: float = 2.0) -> np.ndarray:
    """Macular pigment optical density for a ``field``-deg field (CIE 170-1), shape (441,)."""
    peak = round(0.485 * np.exp(-field / 6.132), 3)  # CIE 170-1 quotes densities to 3 decimals
    return _tables()["mac2"] / 0.35 * peak


def peak_optical_density(field: float = 2.0) -> np.ndarray:
    """Peak photopigment optical densities of L, M, S for a ``field``-deg field (CIE 170-1)."""
    lm = round(0.38 + 0.54 * np.exp(-field / 1.333), 3)
    s = round(0.30 + 0.45 * np.exp(-field / 1.333), 3)
    return np.array([lm, lm, s])


def fundamentals_from_absorbance(absorbance: np.ndarray, *, age: float = 32.0, field: float = 2.0,
                                 pigment_density: np.ndarray | None = None, quanta: bool = False) -> np.ndarray:
    """Cone fundamentals from pigment absorbance through self-screening, macula and lens.

    Parameters
    ----------
    absorbance : numpy.ndarray
        Low-density absorbance (peak 1), shape (441, 3), on :func:`table_wavelengths`.
    age : float
        Years, 20-80.
    field : float
        Field size, deg, 1-10.
    pigment_density : array_like, optional
        Peak optical densities (3,); default :func:`peak_optical_density`.
    quanta : bool
        Return quantal instead of energy-based sensitivities.

    Returns
    -------
    numpy.ndarray
        Shape (441, 3), each column normalised to a peak of 1.
    """
    d = peak_optical_density(field) if pigment_density is None else np.asarray(pigment_density, dtype=float)
    alpha = 1.0 - 10.0 ** (-d * absorbance)
    pre = 10.0 ** (-(macular_density(field) + ocular_media_density(age)))
    sens = alpha * pre[:, None]
    if not quanta:
        sens = sens * _tables()["wl"][:, None]
    return sens / sens.max(axis=0)


def to_grid(values: np.ndarray, grid: Grid = DEFAULT_GRID) -> np.ndarray:
    """Take (441, k) table values onto ``grid``; zero outside 390-830 nm.

    Grids on whole nanometres pick the tabulated values directly; other grids
    are resampled with colour-science's cubic-spline interpolation.
    """
    wl = _tables()["wl"]
    target = grid.wavelengths
    if np.allclose(target, np.round(target)):
        out = np.zeros((len(target),) + values.shape[1:])
        idx = np.round(target - wl[0]).astype(int)
        ok = (idx >= 0) & (idx < len(wl))
        out[ok] = values[idx[ok]]
        return out
    from ..spectra.grid import resample

    return resample(wl, values, grid, method="cubic", outside="zero")


def cone_fundamentals(*, age: float = 32.0, field: float = 2.0, grid: Grid = DEFAULT_GRID,
                      quanta: bool = False) -> np.ndarray:
    """CIE 2006 cone fundamentals for ``age`` and ``field``, shape (n_wl, 3), peaks at 1.

    Examples
    --------
    >>> lms = cone_fundamentals()
    >>> [int(380 + i) for i in lms.argmax(axis=0)]
    [570, 543, 442]
    """
    lms = fundamentals_from_absorbance(photopigment_absorbance(), age=age, field=field, quanta=quanta)
    return to_grid(lms, grid)

"""The one spectral grid every computation shares.

By default 380-780 nm at 1 nm (shared/CONVENTIONS.md, section 3). Everything
is resampled once onto the grid with colour-science's interpolation; hot paths
then work on plain numpy arrays shaped (n_filters, n_wl), (n_wl, n_samples)
and (n_wl, 3).

Public: :class:`Grid`, :data:`DEFAULT_GRID`, :func:`resample`.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

__all__ = ["Grid", "DEFAULT_GRID", "resample"]


@dataclass(frozen=True)
class Grid:
    """A regular wavelength grid in nm.

    Parameters
    ----------
    start, end
        First and last wavelength, nm (inclusive).
    step
        Spacing, nm (0.1 to 10).

    Examples
    --------
    >>> Grid().wavelengths[[0, -1]]
    array([380., 780.])
    >>> len(Grid(step=5).wavelengths)
    81
    """

    start: float = 380.0
    end: float = 780.0
    step: float = 1.0

    def __post_init__(self) -> None:
        if not (0.1 <= self.step <= 10):
            raise ValueError(f"grid step must be between 0.1 and 10 nm, got {self.step}")
        if not (self.end > self.start):
            raise ValueError(f"grid end ({self.end}) must be above its start ({self.start})")
        n = (self.end - self.start) / self.step
        if abs(n - round(n)) > 1e-9:
            raise ValueError("grid range must be a whole number of steps")

    @cached_property
    def wavelengths(self) -> np.ndarray:
        """Wavelengths in nm, shape (n_wl,); read-only (one array shared by every user of the grid)."""
        n = int(round((self.end - self.start) / self.step)) + 1
        wl = np.round(self.start + self.step * np.arange(n), 6)
        wl.setflags(write=False)
        return wl

    @property
    def size(self) -> int:
        return len(self.wavelengths)

    def key(self) -> str:
        """A short text key for caches and reports, e.g. ``380-780/1``."""
        return f"{self.start:g}-{self.end:g}/{self.step:g}"

    def shape(self):
        """The matching ``colour.SpectralShape`` (imports colour-science)."""
        import colour

        return colour.SpectralShape(self.start, self.end, self.step)


DEFAULT_GRID = Grid()


def resample(wavelengths, values, grid: Grid = DEFAULT_GRID, *, method: str = "linear",
             outside: str = "edge") -> np.ndarray:
    """Resample spectra onto ``grid`` (linear with numpy; cubic and Sprague with colour-science).

    Parameters
    ----------
    wavelengths
        Sample wavelengths, nm, shape (n_pts,), strictly increasing.
    values
        Values at those wavelengths, shape (n_pts,) or (n_pts, n_spectra).
    grid
        Target grid.
    method
        ``"linear"`` (default: never overshoots, right for measured filters
        with sharp notches), ``"cubic"`` or ``"sprague"`` (CIE 15 practice for
        smooth, regularly sampled data).
    outside
        ``"edge"`` holds the end values constant outside the measured range;
        ``"zero"`` sets them to 0 (right for cone fundamentals).

    Returns
    -------
    numpy.ndarray
        Shape (n_wl,) or (n_wl, n_spectra), on ``grid``.
    """
    wl = np.ascontiguousarray(wavelengths, dtype=float)
    vals = np.ascontiguousarray(values, dtype=float)
    one = vals.ndim == 1
    if one:
        vals = vals[:, None]
    if method == "linear" and wl.size >= 2 and np.all(np.diff(wl) > 0):
        # Piecewise-linear interpolation with the end values held (or zero)
        # outside, vectorised over spectra: the numbers of colour-science's
        # LinearInterpolator (numpy.interp) without importing colour-science.
        out = _linear(wl, vals, grid.wavelengths, outside)
    else:
        out = _resample(wl, vals, grid, method, outside)
    return out[:, 0] if one else out


def _linear(wl: np.ndarray, vals: np.ndarray, target: np.ndarray, outside: str) -> np.ndarray:
    j = np.clip(np.searchsorted(wl, target, side="right") - 1, 0, wl.size - 2)
    w = np.clip((target - wl[j]) / (wl[j + 1] - wl[j]), 0.0, 1.0)[:, None]
    out = vals[j] * (1.0 - w) + vals[j + 1] * w
    if outside != "edge":
        out[(target < wl[0]) | (target > wl[-1])] = 0.0
    return out


def _resample(wl, vals, grid, method, outside):
    from colour.algebra import CubicSplineInterpolator, Extrapolator, LinearInterpolator, SpragueInterpolator

    interpolator = {"linear": LinearInterpolator, "cubic": CubicSplineInterpolator,
                    "sprague": SpragueInterpolator}[method]
    target = grid.wavelengths
    inside = (target >= wl[0]) & (target <= wl[-1])
    out = np.empty((len(target), vals.shape[1]))
    for j in range(vals.shape[1]):  # loop over spectra (few), not wavelengths
        interp = interpolator(wl, vals[:, j])
        if outside == "edge":
            ex = Extrapolator(interp, method="Constant")
            out[:, j] = ex(target)
        else:
            col = np.zeros(len(target))
            col[inside] = interp(target[inside])
            out[:, j] = col
    return out

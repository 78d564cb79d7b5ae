"""Hue-circle arrangement tasks: our own caps, a model observer that arranges them, and CIELUV for scoring.

The caps (``cvdfilter/data/task_caps.csv``, made by ``cvdfilter/data/make_task_caps.py``)
are our own design: Munsell renotation colours at value 6 equally spaced in hue
(coarse: 16 caps at chroma 6; fine: 24 caps at chroma 4), with reflectances
recovered by Jakob & Hanika (2019) in colour-science. They are not the caps of
any commercial or clinical test.

The model observer (ours). Each trial, every cap's log cone catches
f_i = ln q_i (through the filter, under the light) are perturbed by Gaussian
noise of standard deviation ``trial_noise`` x e_i, the receptor noise of the
observer's channel i (Vorobyev & Osorio 1998, :mod:`cvdfilter.metrics.discrimination`),
drawn afresh per cap and trial. Starting from the first cap (fixed), the
observer repeatedly places the unplaced cap nearest to the last one placed in
its receptor-noise-limited space (Delta S, JND). The same noise draws serve the
runs with and without the filter (common random numbers), so a neutral filter
changes nothing trial by trial. Von Kries adaptation adds a constant to every
f_i, to which Delta S is blind, so the result does not depend on the degree of
adaptation.

Public: :data:`ARRANGEMENT_DESIGNS`, :func:`caps`, :func:`cap_luv`, :func:`arrange`.
"""

from __future__ import annotations

import functools
import pathlib

import numpy as np

from ..spectra.grid import DEFAULT_GRID, Grid, resample

__all__ = ["ARRANGEMENT_DESIGNS", "caps", "cap_luv", "arrange", "luv"]

#: Task name -> (cap prefix in task_caps.csv, description). Our own designs.
ARRANGEMENT_DESIGNS = {
    "arrangement": ("coarse", "16 caps, Munsell value 6, chroma 6, equal hue steps (ours)"),
    "arrangement-fine": ("fine", "24 caps, Munsell value 6, chroma 4, equal hue steps (ours)"),
}

_CAPS_FILE = pathlib.Path(__file__).resolve().parent.parent / "data" / "task_caps.csv"


@functools.lru_cache(maxsize=4)
def _caps_table() -> tuple[np.ndarray, tuple, tuple, np.ndarray]:
    lines = _CAPS_FILE.read_text().splitlines()
    notations = tuple(lines[3].lstrip("# ").split(","))
    header = lines[4].split(",")
    data = np.loadtxt(_CAPS_FILE, delimiter=",", comments="#", skiprows=5)
    return data[:, 0], tuple(header[1:]), notations, data[:, 1:]


def caps(task: str, grid: Grid = DEFAULT_GRID) -> tuple[tuple, tuple, np.ndarray]:
    """The caps of an arrangement task.

    Returns
    -------
    names : tuple of str
    notations : tuple of str
        Munsell notation of each cap (renotation colour it was made from).
    reflectance : numpy.ndarray
        Fraction 0-1, shape (N_caps, n_wl) on ``grid`` (linear resampling).
    """
    prefix = ARRANGEMENT_DESIGNS[task][0]
    wl, names, notations, table = _caps_table()
    keep = [i for i, n in enumerate(names) if n.startswith(prefix + "-")]
    refl = resample(wl, table[:, keep], grid).T
    out = np.ascontiguousarray(refl)
    out.setflags(write=False)
    return tuple(names[i] for i in keep), tuple(notations[i] for i in keep), out


def luv(xyz, white_xyz) -> np.ndarray:
    """CIE 1976 L*, u*, v* (CIE 15:2018) of XYZ (..., 3) for a white XYZ (3,)."""
    xyz = np.asarray(xyz, dtype=float)
    w = np.asarray(white_xyz, dtype=float)

    def uv_prime(c):
        den = c[..., 0] + 15 * c[..., 1] + 3 * c[..., 2]
        return 4 * c[..., 0] / den, 9 * c[..., 1] / den

    yr = xyz[..., 1] / w[1]
    eps, kappa = 216 / 24389, 24389 / 27  # CIE 15:2018, exact fractions
    lstar = np.where(yr > eps, 116 * np.cbrt(yr) - 16, kappa * yr)
    u, v = uv_prime(xyz)
    un, vn = uv_prime(w)
    return np.stack([lstar, 13 * lstar * (u - un), 13 * lstar * (v - vn)], axis=-1)


def cap_luv(reflectance, spd, grid: Grid = DEFAULT_GRID) -> np.ndarray:
    """CIELUV of caps (N, n_wl) under a light (n_wl,), CIE 1931 2 deg, white = the light itself. (N, 3)."""
    from ..observers.fundamentals import cie1931_cmfs

    cmfs = cie1931_cmfs(grid)
    weights = np.asarray(spd)[:, None] * cmfs
    return luv(np.asarray(reflectance) @ weights, weights.sum(axis=0))


def arrange(points) -> np.ndarray:
    """Greedy nearest-neighbour arrangement from cap 0, vectorised over any leading axes.

    Parameters
    ----------
    points : array_like
        Perceived positions of the caps (Euclidean = Delta S), shape (..., N, k).

    Returns
    -------
    numpy.ndarray of int
        Cap order, shape (..., N); the first entry is 0.

    Examples
    --------
    >>> arrange(np.array([[0.0], [3.0], [1.0], [2.0]])).tolist()
    [0, 2, 3, 1]
    """
    p = np.asarray(points, dtype=float)
    lead, n = p.shape[:-2], p.shape[-2]
    flat = p.reshape(-1, n, p.shape[-1])
    b = flat.shape[0]
    rows = np.arange(b)
    order = np.zeros((b, n), dtype=np.intp)
    used = np.zeros((b, n), dtype=bool)
    used[:, 0] = True
    current = np.zeros(b, dtype=np.intp)
    for step in range(1, n):  # a loop over placement steps (sequential by nature), not over trials
        d = ((flat - flat[rows, current][:, None, :]) ** 2).sum(-1)
        d[used] = np.inf
        current = d.argmin(axis=1)
        order[:, step] = current
        used[rows, current] = True
    return order.reshape(*lead, n)

"""Figure-ground dot plates of our own design, and their legibility for a model observer.

Three designs (ours; not the plates, figures, layouts or numbering of any
commercial or clinical test). Every plate is a disc of jittered dots; each dot
is a figure or a ground dot, with a random lightness factor (0.85, 1.0 or 1.15,
which the chromatic receptor-noise model cannot see) on top of its colour.
Colours are reflectances: a flat grey of :data:`BASE_REFLECTANCE` plus a smooth
spectral change d(lambda) built from Gaussian basis functions (centres 400-700 nm
every 30 nm, sd 25 nm) by silent substitution under D65 for the reference
normal observer (CIE 2006, 32 years, 2 deg).

* ``hidden-protan`` / ``hidden-deutan`` (normal reads, the dichromat should not):
  figure = base + a d, ground = base - a d, with d changing only the missing
  cone's catch (the other two cones' catches unchanged: a metamer pair for the
  dichromat). a is set so the reference normal observer sees figure and ground
  :data:`HIDDEN_CONTRAST` JND apart.
* ``reverse-protan`` / ``reverse-deutan`` (the dichromat reads, a normal
  observer should not): figure and ground differ only in the S-cone catch
  (:data:`REVERSE_CONTRAST` JND for the reference normal observer), and every
  dot carries a random change along the dichromat's silent direction (uniform
  amplitude, RMS :data:`MASK_RMS` JND for the normal observer): a mask the
  normal observer sees and the dichromat does not.
* ``filter-only``: figure and ground are metamers for the reference normal
  observer (all three catches equal under D65), differing most near 575 nm; no
  observer without a filter separates them, a filter that treats the two
  spectra differently can.

Legibility index (ours): L = D / sqrt(1 + s^2), with D the receptor-noise
distance (JND) between the mean figure dot and the mean ground dot and s the
pooled RMS distance of dots from their own group mean (JND); the 1 is the
receptor noise itself (one JND). A plate is "read" when L >=
:data:`READ_THRESHOLD` = 2 (ours: figure and ground two noise units apart).

Public: :data:`PLATE_NAMES`, :func:`plate_designs`, :func:`legibility`, :func:`plate_image`.
"""

from __future__ import annotations

import functools

import numpy as np

from ..spectra.grid import DEFAULT_GRID, Grid

__all__ = ["PLATE_NAMES", "READ_THRESHOLD", "HIDDEN_CONTRAST", "REVERSE_CONTRAST", "MASK_RMS", "BASE_REFLECTANCE",
           "Plate", "plate_designs", "legibility", "plate_image"]

PLATE_NAMES = ("hidden-protan", "hidden-deutan", "reverse-protan", "reverse-deutan", "filter-only")
#: Legibility index at or above which a plate counts as read (ours).
READ_THRESHOLD = 2.0
#: Figure-ground distance (JND) of the hidden plates for the reference normal observer (ours).
HIDDEN_CONTRAST = 6.0
#: Figure-ground distance (JND) of the reverse plates for the reference normal observer (ours).
REVERSE_CONTRAST = 5.0
#: RMS of the masking pattern of the reverse plates for the reference normal observer, JND (ours).
MASK_RMS = 8.0
#: Flat grey reflectance the plate colours are built on (ours).
BASE_REFLECTANCE = 0.45
#: Largest spectral change of the filter-only plate (reflectance units, ours).
FILTER_ONLY_AMPLITUDE = 0.2
_LEVELS = np.array([0.85, 1.0, 1.15])
_CELLS = 22  # dots across the plate's diameter
_LAYOUT_SEED = 20260  # fixed: the layout is part of the design, not of a run


class Plate:
    """One plate: dot layout (unit disc), figure mask and per-dot reflectance (n_dots, n_wl)."""

    def __init__(self, name, centres, radii, figure, reflectance):
        self.name, self.centres, self.radii, self.figure, self.reflectance = name, centres, radii, figure, reflectance


def _layout():
    rng = np.random.default_rng(_LAYOUT_SEED)
    step = 2.0 / _CELLS
    g = (np.arange(_CELLS) + 0.5) * step - 1.0
    x, y = np.meshgrid(g, g)
    c = np.stack([x.ravel(), y.ravel()], axis=1) + rng.uniform(-0.18, 0.18, (x.size, 2)) * step
    keep = np.hypot(c[:, 0], c[:, 1]) < 0.94
    c = c[keep]
    radii = rng.uniform(0.30, 0.45, len(c)) * step
    levels = _LEVELS[rng.integers(0, 3, len(c))]
    mask_amp = rng.uniform(-1, 1, len(c))
    return c, radii, levels, mask_amp


def _figure_mask(name: str, c: np.ndarray) -> np.ndarray:
    x, y = c[:, 0], c[:, 1]
    r = np.hypot(x, y)
    if name.startswith("hidden"):  # a thick ring
        return (r > 0.35) & (r < 0.65)
    if name.startswith("reverse"):  # a plus sign
        return ((np.abs(x) < 0.17) & (np.abs(y) < 0.6)) | ((np.abs(y) < 0.17) & (np.abs(x) < 0.6))
    return (np.abs(x) + np.abs(y)) < 0.55  # a diamond


def _basis(wl):
    centres = np.arange(400.0, 701.0, 30.0)
    return np.exp(-0.5 * ((wl[:, None] - centres[None, :]) / 25.0) ** 2)  # (n_wl, n_basis)


def _silent(weights_silent, weights_target, basis):
    """A unit change d = B c with zero catch for the silent cones, maximal catch for the target."""
    a = weights_silent.T @ basis  # (k, nb)
    _, _, vt = np.linalg.svd(a)
    null = vt[a.shape[0]:].T  # (nb, nb - k)
    t = null.T @ (basis.T @ weights_target)
    c = null @ (t / np.linalg.norm(t))
    d = basis @ c
    return d / np.abs(d).max()


@functools.lru_cache(maxsize=4)
def plate_designs(grid: Grid = DEFAULT_GRID) -> tuple:
    """The five plates on ``grid`` (reflectances under D65 design conditions)."""
    from ..metrics.discrimination import receptor_noise, rnl_transform
    from ..observers.observer import observer
    from ..spectra.illuminants import illuminant

    wl = grid.wavelengths
    ref = observer("normal", grid)
    e = illuminant("D65", grid).spd
    w = ref.fundamentals * e[:, None]  # (n_wl, 3) catch weights
    basis = _basis(wl)
    p_norm = rnl_transform(receptor_noise())
    base = np.full(wl.size, BASE_REFLECTANCE)
    c, radii, levels, mask_amp = _layout()

    def rnl_dist(r1, r2):
        return float(np.linalg.norm(p_norm @ (np.log(r1 @ w) - np.log(r2 @ w))))

    def scale_to(d, target):  # amplitude giving ``target`` JND between base + a d and base - a d (monotone)
        lo, hi = 0.0, 0.3
        for _ in range(50):
            mid = (lo + hi) / 2
            lo, hi = (mid, hi) if rnl_dist(base + mid * d, base - mid * d) < target else (lo, mid)
        return (lo + hi) / 2

    plates = []
    for name in PLATE_NAMES:
        fig = _figure_mask(name, c)
        sign = np.where(fig, 1.0, -1.0)[:, None]
        if name.startswith("hidden"):
            missing = 0 if name.endswith("protan") else 1
            silent = [i for i in range(3) if i != missing]
            d = _silent(w[:, silent], w[:, missing], basis)
            refl = base + sign * scale_to(d, HIDDEN_CONTRAST) * d
        elif name.startswith("reverse"):
            missing = 0 if name.endswith("protan") else 1
            d_s = _silent(w[:, :2], w[:, 2], basis)  # S only
            keep = [i for i in range(3) if i != missing]
            d_m = _silent(w[:, keep], w[:, missing], basis)  # the dichromat's silent direction
            a_s = scale_to(d_s, REVERSE_CONTRAST)
            # uniform amplitudes in [-1, 1] have RMS 1/sqrt(3): scale so the normal RMS is MASK_RMS
            a_m = scale_to(d_m, 2 * MASK_RMS * np.sqrt(3))
            refl = base + sign * a_s * d_s + (mask_amp[:, None] * a_m) * d_m
        else:
            target = np.exp(-0.5 * ((wl - 575.0) / 20.0) ** 2)
            d = _silent(w, target, basis)
            refl = base + sign * FILTER_ONLY_AMPLITUDE * d
        refl = np.clip(refl * levels[:, None], 0.0, 1.0)
        refl.setflags(write=False)
        plates.append(Plate(name, c, radii, fig, refl))
    return tuple(plates)


def legibility(points, figure) -> np.ndarray:
    """Legibility index of plates from the dots' receptor-noise coordinates.

    Parameters
    ----------
    points : array_like
        Dot coordinates y = P ln q (JND units), shape (..., n_dots, k).
    figure : array_like of bool
        Which dots belong to the figure, shape (n_dots,).

    Returns
    -------
    numpy.ndarray
        D / sqrt(1 + s^2), shape (...).

    Examples
    --------
    >>> pts = np.array([[0.0], [0.0], [3.0], [3.0]])
    >>> float(legibility(pts, np.array([False, False, True, True])))
    3.0
    """
    y = np.asarray(points, dtype=float)
    f = np.asarray(figure, dtype=bool)
    mf, mg = y[..., f, :].mean(-2), y[..., ~f, :].mean(-2)
    dist = np.linalg.norm(mf - mg, axis=-1)
    dev = np.concatenate([y[..., f, :] - mf[..., None, :], y[..., ~f, :] - mg[..., None, :]], axis=-2)
    s2 = (dev ** 2).sum(-1).mean(-1)
    return dist / np.sqrt(1.0 + s2)


def plate_image(plate: Plate, srgb_dots, *, size: int = 480) -> np.ndarray:
    """An 8-bit RGB image of a plate: dot colours (n_dots, 3, encoded sRGB 0-1) on a white paper."""
    px = (np.arange(size) + 0.5) / size * 2 - 1
    x, y = np.meshgrid(px, px)
    pix = np.stack([x.ravel(), -y.ravel()], axis=1)
    c = plate.centres
    nearest = np.empty(pix.shape[0], dtype=np.intp)
    inside = np.empty(pix.shape[0], dtype=bool)
    for start in range(0, pix.shape[0], 16384):  # chunks of pixels keep the distance table small
        d2 = ((pix[start:start + 16384, None, :] - c[None, :, :]) ** 2).sum(-1)
        k = d2.argmin(axis=1)
        nearest[start:start + 16384] = k
        inside[start:start + 16384] = d2[np.arange(len(k)), k] <= plate.radii[k] ** 2
    img = np.ones((pix.shape[0], 3))
    img[inside] = np.asarray(srgb_dots)[nearest[inside]]
    return np.round(np.clip(img, 0, 1) * 255).astype(np.uint8).reshape(size, size, 3)

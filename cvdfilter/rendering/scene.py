"""The spectral scene and the display model of rendering.

An sRGB image is taken as surfaces (the Mallett & Yuksel 2019 reflectance
basis, :func:`mallett_basis`) under the illuminant, or as light from a display
(``display[:PRIMARIES]``); its linear sRGB is shown back through the display
model :func:`display_matrix` (see :mod:`cvdfilter.rendering`).

Public: :func:`mallett_basis`, :func:`display_matrix`, :func:`scene_model`, :func:`interpolation_matrix`.

References
----------
Mallett, I., & Yuksel, C. (2019). Spectral Primary Decomposition for Rendering
with sRGB Reflectance. Eurographics Symposium on Rendering.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..spectra.cache import cached_arrays
from ..spectra.grid import DEFAULT_GRID, Grid

__all__ = ["mallett_basis", "display_matrix", "scene_model", "interpolation_matrix"]


def mallett_basis(grid: Grid = DEFAULT_GRID) -> np.ndarray:
    """The Mallett & Yuksel (2019) sRGB reflectance basis on ``grid``, shape (n_wl, 3).

    Columns R, G, B; fractions 0-1; they sum to 1 at every wavelength.
    Resampled linearly from colour-science's 5 nm table (linear interpolation
    keeps the values non-negative and the sum 1), held constant outside it.

    Examples
    --------
    >>> b = mallett_basis()
    >>> b.shape, bool(np.allclose(b.sum(axis=1), 1.0, atol=1e-4))
    ((401, 3), True)
    """

    def build():
        from colour.recovery import MSDS_BASIS_FUNCTIONS_sRGB_MALLETT2019 as basis

        from ..spectra.grid import resample

        return {"basis": resample(basis.wavelengths, basis.values, grid, method="linear", outside="edge")}

    return cached_arrays(f"mallett2019-basis-{grid.key()}", build)["basis"]


def display_matrix(normal, grid: Grid = DEFAULT_GRID) -> np.ndarray:
    """The display model: linear sRGB (row vector) to a normal observer's adapted L, M, S.

    ``lms = rgb @ display_matrix(obs)``. The rows are the adapted cone
    excitations of the three Mallett-Yuksel basis spectra under CIE D65, so
    ``(1, 1, 1)`` maps to ``(1, 1, 1)`` (see the module docstring).

    Parameters
    ----------
    normal : Observer or str
        A normal observer.
    grid : Grid

    Returns
    -------
    numpy.ndarray
        Shape (3, 3), dimensionless.
    """
    from ..observers.observer import observer as make_observer
    from ..spectra.illuminants import illuminant

    obs = make_observer(normal, grid)
    d65 = illuminant("D65", grid).spd
    weights = d65[:, None] * obs.fundamentals
    white = d65 @ obs.fundamentals
    return (mallett_basis(grid).T @ weights) / white


def scene_model(scene: str, illuminant_spd: np.ndarray, normal, grid: Grid):
    """(name, stimuli (n_wl, 3) per unit linear R, G, B, display matrix (3, 3)) for a scene spec."""
    text = str(scene).strip()
    kind, _, name = text.partition(":")
    kind = kind.strip().lower()
    if kind == "reflectance" and not name:
        return "reflectance", mallett_basis(grid) * illuminant_spd[:, None], display_matrix(normal, grid)
    if kind == "display":
        from ..observers.display import DISPLAY_PRIMARIES, adapted_rgb_to_lms, display_primaries

        name = name.strip() or DISPLAY_PRIMARIES[0]
        p = display_primaries(name, grid)
        label = [n for n in DISPLAY_PRIMARIES if n.lower() == name.lower()][0]
        # The display matrix works on row vectors: the transpose of the display module's (column) one.
        return f"display:{label}", p, adapted_rgb_to_lms(normal.fundamentals, p).T
    raise InputError(f"unknown scene '{scene}'",
                     hint="use reflectance (surfaces under the illuminant) or display[:PRIMARIES] "
                          "(light from a display, e.g. display:Typical CRT Brainard 1997)")


def interpolation_matrix(wl: np.ndarray, target: np.ndarray, *, hold: bool) -> np.ndarray:
    """(n_target, n_wl): linear interpolation from samples at ``wl`` to ``target`` as a matrix."""
    eye = np.eye(len(wl))
    kw = {} if hold else {"left": 0.0, "right": 0.0}
    return np.stack([np.interp(target, wl, eye[j], **kw) for j in range(len(wl))], axis=1)

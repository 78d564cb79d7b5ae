"""Inputs of the scorecard's ``discernible`` group: the counting method and the stimuli (surface set or scenes).

:func:`discernible_inputs` checks the method, the cube size and the simulation and reads the ``--scene``
cubes (reflectance only: a radiance cube has no white to adapt to) into :class:`DiscernibleInputs`;
:mod:`cvdfilter.score_discernible` counts them. Public: :func:`discernible_inputs`,
:class:`DiscernibleInputs`, :data:`DISCERNIBLE_METHODS`, :data:`DEFAULT_METHOD`.
"""

from __future__ import annotations

import pathlib
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .errors import InputError

__all__ = ["discernible_inputs", "DiscernibleInputs", "DISCERNIBLE_METHODS", "DEFAULT_METHOD"]


#: Counting spaces (``--discernible-method``): name -> what is counted.
DISCERNIBLE_METHODS = {
    "cielab": "unit cubes of CIELAB (Delta E*ab = 1), Linhares, Pinto & Nascimento 2008",
    "cam16ucs": "unit cubes of CAM16-UCS (Delta E' = 1; Li et al. 2017, Luo, Cui & Li 2006), the "
                "Euclidean stand-in for CIEDE2000",
    "rnl": "unit cubes of 1 JND in the observer's receptor-noise space (Vorobyev & Osorio 1998 chromatic "
           "coordinates plus the achromatic coordinate of the same cone noise)",
}
DEFAULT_METHOD = "cielab"


@dataclass(frozen=True, eq=False)
class _Stimulus:
    name: str
    samples: np.ndarray  # (m, n_pixels), contiguous: (k, m) @ (m, n) is the fast product layout
    interpolation: np.ndarray  # (n_wl, m): from the stimulus's bands to the grid
    identity: bool = False  # the bands are the grid (interpolation is the identity)


@dataclass(frozen=True, eq=False)
class DiscernibleInputs:
    """Validated inputs of the ``discernible`` group.

    Attributes
    ----------
    stimuli : tuple
        What is counted: the scorecard's surface set, or each scene cube (reflectance).
    method : str
        A key of :data:`DISCERNIBLE_METHODS`.
    simulation : str or None
        Simulation for dichromats (cielab, cam16ucs); None = Brettel 1997 (the published choice).
    cube_size : float
        Cube edge in the method's units.
    """

    stimuli: tuple
    method: str
    simulation: str | None = None
    cube_size: float = 1.0
    sources: tuple = field(default_factory=tuple)

    @property
    def names(self) -> list:
        return [s.name for s in self.stimuli]

    def settings(self) -> dict:
        """The JSON ``models.discernible`` block: method, space, cube, pooling and constants."""
        from .metrics.discernible import CAM16_VIEWING

        d: dict[str, Any] = {
            "method": self.method, "space": DISCERNIBLE_METHODS[self.method], "cube_size": self.cube_size,
            "stimuli": [{"name": s.name, "pixels": int(s.samples.shape[1]), "bands": int(s.samples.shape[0])}
                        for s in self.stimuli],
            "pooled": "union of the stimuli's colours (a cube counts once if any pixel of any stimulus is in "
                      "it); mean_scene_ratio = mean over stimuli of with / without",
            "adaptation_model": "von Kries, g = w0^-(1-a) w^-a (the scorecard's adaptation)",
            "helped": "populations: share of members with discernible_colours.ratio above 1 + ratio_tolerance",
        }
        if self.method in ("cielab", "cam16ucs"):
            d["simulation"] = self.simulation or "brettel1997 for dichromats (Linhares et al. 2008); identity " \
                                                 "for normal and anomalous observers"
            d["simulation_reference_white"] = "the illuminant"
            d["lms_to_xyz"] = "CIE 170-2:2015 2 deg matrix, the normal base observer's cone signals"
            d["white"] = "the illuminant seen by the normal base observer"
        if self.method == "cam16ucs":
            d["cam16_viewing"] = dict(CAM16_VIEWING)
        if self.method == "rnl":
            d["noise"] = "the scorecard's receptor noise (weber_fraction, cone_ratios; replacement model)"
        return d


def discernible_inputs(scenes, surfaces, *, method: str = DEFAULT_METHOD, simulation: str | None = None,
                       cube_size: float = 1.0, grid=None) -> DiscernibleInputs:
    """Check the group's inputs before any heavy work.

    ``scenes`` are cube paths or :class:`~cvdfilter.io.cubes.Cube` objects (reflectance); without them the
    scorecard's ``surfaces`` (a SurfaceSet) are counted.
    """
    from .io.cubes import Cube, read_cube
    from .spectra.grid import DEFAULT_GRID

    grid = DEFAULT_GRID if grid is None else grid
    key = str(method).strip().lower().replace("-", "").replace("_", "")
    if key not in DISCERNIBLE_METHODS:
        from .errors import did_you_mean

        close = did_you_mean(str(method), DISCERNIBLE_METHODS)
        raise InputError(f"unknown discernible-colour method '{method}'" + (f" ({close})" if close else ""),
                         hint=f"use one of {', '.join(DISCERNIBLE_METHODS)}")
    try:
        size = float(cube_size)
    except (TypeError, ValueError):
        size = float("nan")
    if not (np.isfinite(size) and size > 0):
        raise InputError(f"cube size must be a positive number, got {cube_size!r}")
    if simulation is not None:
        from .observers.simulate import METHOD_DESCRIPTIONS

        if simulation not in METHOD_DESCRIPTIONS:
            raise InputError(f"unknown simulation '{simulation}'", hint=f"use one of {', '.join(METHOD_DESCRIPTIONS)}")
    if scenes is None or isinstance(scenes, (str, pathlib.Path, Cube)):
        scenes = [] if scenes is None else [scenes]
    stimuli: list[_Stimulus] = []
    sources: list[str] = []
    for sc in scenes:
        cube = sc if isinstance(sc, Cube) else read_cube(sc)
        name = cube.path or f"scene {len(stimuli) + 1}"
        if cube.kind != "reflectance":
            raise InputError("discernible colours need a reflectance cube (a radiance cube has no white to "
                             "place the colours against)", source=name, hint="give a reflectance cube")
        wl = np.asarray(cube.wavelengths, dtype=float)
        eye = np.eye(len(wl))
        # linear interpolation onto the grid, held at the end values outside the bands (as the renderer)
        p = np.stack([np.interp(grid.wavelengths, wl, eye[j]) for j in range(len(wl))], axis=1)
        stimuli.append(_Stimulus(name, np.ascontiguousarray(np.asarray(cube.data, dtype=float).reshape(-1, len(wl)).T),
                                 p))
        sources.append(name)
    if not stimuli:
        stimuli.append(_Stimulus(surfaces.name, np.ascontiguousarray(surfaces.reflectance, dtype=float),
                                 np.eye(grid.size), identity=True))
    names = [s.name for s in stimuli]
    if len(set(names)) != len(names):
        raise InputError(f"scene '{next(n for n in names if names.count(n) > 1)}' given twice")
    return DiscernibleInputs(tuple(stimuli), key, simulation, size, tuple(sources))


# --- the computation -----------------------------------------------------------------------------------
#
# The rows of the work are (member, filter state) pairs: a fixed observer is a group of one member, a
# population's members are one group, and every chunk is a range of a group's rows, member-major. Per
# member only the fundamentals and the 3x3 maps differ, so they are stacked over the members and gathered
# per row: one product per chunk gives every row's signals and one count covers every row.

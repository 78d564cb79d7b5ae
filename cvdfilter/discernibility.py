"""Number of discernible colours of a scene or surface set, with and without a filter.

The measure of Linhares, Pinto & Nascimento (2008): every pixel (or sample)
of the stimulus is placed in CIELAB as a normal viewer would see the observer
see it, CIELAB is cut into unit cubes, and the non-empty cubes are counted
(:mod:`cvdfilter.metrics.discernible`). Per observer and filter state:

1. Cone excitations of the light reaching the eye: reflectance x illuminant
   x filter transmittance (the filter in front of the eye), with the
   observer's own fundamentals.
2. Von Kries gains for the adapting white seen through the filter, degree
   ``adaptation`` (as the scorecard: ``full`` = adapted to the filtered light).
3. The observer's simulation for a normal viewer
   (:func:`cvdfilter.observers.simulate.simulation`, reference white = the
   illuminant): Brettel, Vienot & Mollon (1997) for dichromats by default,
   as in Linhares et al. 2008; identity for normal and (with the default cone
   normalisation) anomalous observers, whose view lives in their fundamentals.
4. The normal base observer's adapted cone excitations, times its cone
   excitations of the illuminant, to XYZ with the CIE 170-2 2 deg
   LMS-to-XYZ matrix; CIELAB against the illuminant's XYZ (CIE 15:2018).
5. The count of occupied cubes of edge ``cube_size`` (1 Delta E*ab).

The result gives counts, the ratio with/without each filter and the ratio
to the normal base observer without a filter. Model predictions, not
clinical evidence.

Public: :func:`discernible_colours`, :class:`DiscernibleColours`.
"""

from __future__ import annotations

import pathlib
from dataclasses import dataclass, field

import numpy as np

from .cautions import CAVEAT
from .errors import InputError
from .spectra.grid import DEFAULT_GRID, Grid

__all__ = ["discernible_colours", "DiscernibleColours", "DEFAULT_OBSERVERS", "METHOD_TEXT"]

DEFAULT_OBSERVERS = ("normal", "protanomalous", "deuteranomalous", "protanope", "deuteranope")
METHOD_TEXT = ("number of discernible colours (Linhares, Pinto & Nascimento 2008): count of non-empty "
               "CIELAB cubes of edge cube_size occupied by the stimulus's colours as a normal viewer sees "
               "the observer see them (observer's cone excitations through the filter, von Kries adaptation, "
               "the observer's simulation for a normal viewer, normal base observer -> XYZ via CIE 170-2 "
               "2 deg matrix -> CIELAB against the illuminant)")


@dataclass(frozen=True, eq=False)
class DiscernibleColours:
    """Counts of discernible colours.

    Attributes
    ----------
    stimulus : str
        What was counted (surface set name or cube file / ``synthetic``).
    n_colours : int
        Pixels or samples counted.
    observers : tuple of str
        Canonical observer specs.
    filters : tuple of str
        Filter names (may be empty).
    without : numpy.ndarray
        Count per observer without a filter, shape (n_observers,).
    with_filter : numpy.ndarray
        Count per filter and observer, shape (n_filters, n_observers).
    normal_without : numpy.ndarray
        Count of each observer's normal base observer without a filter, (n_observers,).
    methods : tuple of str
        The simulation used per observer.
    settings : dict
        Inputs, thresholds and model constants.
    """

    stimulus: str
    n_colours: int
    observers: tuple
    filters: tuple
    without: np.ndarray
    with_filter: np.ndarray
    normal_without: np.ndarray
    methods: tuple
    settings: dict = field(default_factory=dict)

    @property
    def ratio(self) -> np.ndarray:
        """With / without, shape (n_filters, n_observers)."""
        return self.with_filter / self.without

    @property
    def ratio_to_normal(self) -> np.ndarray:
        """Without a filter, relative to the normal base observer without a filter, (n_observers,)."""
        return self.without / self.normal_without

    @property
    def ratio_to_normal_with(self) -> np.ndarray:
        """With each filter, relative to the normal base observer without a filter, (n_filters, n_observers)."""
        return self.with_filter / self.normal_without

    def to_dict(self) -> dict:
        """JSON-ready: ``tool``, ``version``, ``inputs``, ``method``, ``constants``, ``caveat`` and
        per observer ``discernible_colours: {without, with, ratio, ratio_to_normal, method}``."""
        from ._version import __version__

        per = {}
        for j, o in enumerate(self.observers):
            per[o] = {"discernible_colours": {
                "without": int(self.without[j]),
                "with": {f: int(self.with_filter[i, j]) for i, f in enumerate(self.filters)},
                "ratio": {f: float(self.ratio[i, j]) for i, f in enumerate(self.filters)},
                "ratio_to_normal": float(self.ratio_to_normal[j]),
                "ratio_to_normal_with": {f: float(self.ratio_to_normal_with[i, j])
                                         for i, f in enumerate(self.filters)},
                "normal_without": int(self.normal_without[j]),
                "method": self.methods[j]}}
        return {"tool": "cvdfilter", "version": __version__, "caveat": CAVEAT,
                "inputs": dict(self.settings["inputs"]), "method": METHOD_TEXT,
                "constants": dict(self.settings["constants"]),
                "stimulus": self.stimulus, "n_colours": self.n_colours, "observers": per}


def _stimulus(stimulus, grid: Grid, wavelengths, cube_kind):
    """(samples (N, m), interpolation (n_wl, m) from the samples' wavelengths to the grid, name)."""
    from .io.cubes import Cube, is_cube_path, read_cube
    from .spectra.surfaces import SurfaceSet, surface_set

    if isinstance(stimulus, (str, pathlib.Path)) and is_cube_path(stimulus):
        stimulus = read_cube(stimulus, wavelengths=wavelengths, kind=cube_kind)
    if isinstance(stimulus, Cube):
        name = stimulus.path or "cube"
        if stimulus.kind != "reflectance":
            raise InputError("discernible colours need a reflectance cube (a radiance cube has no white "
                             "to place CIELAB against)", source=name, hint="give a reflectance cube")
        wl = stimulus.wavelengths
        eye = np.eye(len(wl))
        # linear interpolation onto the grid, held at the end values outside the bands (as the renderer)
        p = np.stack([np.interp(grid.wavelengths, wl, eye[j]) for j in range(len(wl))], axis=1)
        data = stimulus.data.reshape(-1, len(wl))
        return np.asarray(data, dtype=float), p, name
    s = stimulus if isinstance(stimulus, SurfaceSet) else surface_set(stimulus, grid)
    return np.ascontiguousarray(s.reflectance.T), np.eye(grid.size), s.name


def discernible_colours(stimulus="munsell", *, filter=None, observers=DEFAULT_OBSERVERS, illuminant="D65",
                        adaptation="full", method: str | None = None, cube_size: float = 1.0,
                        wavelengths=None, cube_kind: str | None = None,
                        grid: Grid = DEFAULT_GRID) -> DiscernibleColours:
    """Number of discernible colours per observer, with and without filters (module docstring).

    Parameters
    ----------
    stimulus : str, path, Cube or SurfaceSet
        A surface set name (``munsell``, ``ces99``, ...), a reflectance file, a cube file
        (``.npy``/``.npz``) or a :class:`~cvdfilter.io.cubes.Cube` (e.g. from
        :func:`cvdfilter.synthetic_scene`); reflectance only.
    filter : str, list or FilterSet, optional
        Filter(s) in front of the eye (specs as for :func:`cvdfilter.load_filters`).
    observers : sequence of str
        Observer specs (fixed observers; populations are not taken here).
    illuminant : str
        The scene light (:func:`cvdfilter.illuminant`).
    adaptation : str or float
        ``full``, ``none`` or a degree 0-1 (von Kries, as the scorecard).
    method : str, optional
        Simulation for dichromats (:data:`cvdfilter.observers.simulate.METHODS`); default
        ``brettel1997`` (the paper's). Other observers use their own default.
    cube_size : float
        Edge of the counting cube, CIELAB units (default 1).
    wavelengths, cube_kind
        For cube files, as :func:`cvdfilter.io.cubes.read_cube`.
    grid : Grid

    Returns
    -------
    DiscernibleColours
    """
    from .observers.observer import observer as make_observer
    from .observers.spaces import parse_adaptation
    from .spectra.filters import load_filters
    from .spectra.illuminants import illuminant as make_illuminant

    if not (np.isfinite(cube_size) and cube_size > 0):
        raise InputError(f"cube size must be a positive number, got {cube_size}")
    a = parse_adaptation(adaptation)
    ill = make_illuminant(illuminant, grid)
    e = ill.spd
    obs = [make_observer(o, grid) for o in ([observers] if isinstance(observers, str) else observers)]
    if not obs:
        raise InputError("give at least one observer")
    fs = load_filters(filter, grid=grid) if filter is not None else None
    t = np.ones((1, grid.size)) if fs is None else np.vstack([np.ones(grid.size), fs.transmittance])
    samples, p, name = _stimulus(stimulus, grid, wavelengths, cube_kind)
    bases = {}
    for o in obs:
        b = o.base if o.base is not None else o
        bases.setdefault(b.spec, b)
    base_list = list(bases.values())
    # conditions: (observer, filter state) for every observer, then each base normal without a filter
    conds = [(o, k) for o in obs for k in range(len(t))] + [(b, 0) for b in base_list]
    weights = np.concatenate([(e * t[k])[:, None] * o.fundamentals for o, k in conds], axis=1)
    # one product for every condition, float64 (so that a model invariance, such as a neutral filter under
    # full adaptation, is not broken by rounding at a cube boundary), laid out (condition x cone, pixel)
    lms_all = (p.T @ weights).T @ samples.T
    counts, methods = _condition_counts(conds, lms_all, e, t, a, method, cube_size, n_first=len(obs) * len(t))
    n_o, n_t = len(obs), len(t)
    per = counts[:n_o * n_t].reshape(n_o, n_t)
    base_counts = dict(zip((b.spec for b in base_list), counts[n_o * n_t:]))
    normal_without = np.array([base_counts[(o.base if o.base is not None else o).spec] for o in obs])
    settings = _settings(name, fs, obs, ill, a, method, cube_size, methods)
    return DiscernibleColours(stimulus=name, n_colours=int(samples.shape[0]),
                              observers=tuple(o.spec for o in obs),
                              filters=() if fs is None else tuple(fs.names),
                              without=per[:, 0].copy(), with_filter=per[:, 1:].T.copy(),
                              normal_without=normal_without, methods=tuple(methods), settings=settings)


def _condition_counts(conds: list, lms_all: np.ndarray, e: np.ndarray, t: np.ndarray, a: float, method,
                      cube_size: float, *, n_first: int) -> tuple[np.ndarray, list]:
    """Discernible colours per condition (observer, filter state) from the cone catches ``lms_all``
    (condition x cone, pixel), and the simulation method of each observer's first ``n_first`` conditions
    without a filter."""
    from .metrics.discernible import count_planes, lab_planes
    from .observers.fundamentals import LMS_TO_XYZ_2DEG
    from .observers.simulate import simulation
    from .observers.spaces import von_kries_gains

    counts = np.empty(len(conds), dtype=np.int64)
    methods = []
    sims = {}
    for c, (o, k) in enumerate(conds):  # a loop over conditions (observer x filter), vectorised over pixels
        if o.spec not in sims:
            m = method if (method is not None and o.kind == "dichromat") else None
            sims[o.spec] = simulation(o, method=m, reference_white=e)
        sim = sims[o.spec]
        white = o.fundamentals.T @ (e * t[k])
        gains = von_kries_gains(white, o.fundamentals.T @ e, adaptation=a)
        base = o.base if o.base is not None else o
        w_n = base.fundamentals.T @ e
        # gains, simulation, the normal base's scale and LMS -> XYZ folded into one 3x3 matrix per half-space
        mats = [LMS_TO_XYZ_2DEG @ (w_n[:, None] * sm) * gains for sm in sim.matrices]
        x = lms_all[3 * c:3 * c + 3]
        xyz = mats[0] @ x
        if len(mats) == 2:
            other = mats[1] @ x
            side = (sim.separator * gains) @ x >= 0
            xyz = np.where(side, xyz, other)
        counts[c] = count_planes(lab_planes(xyz, LMS_TO_XYZ_2DEG @ w_n, dtype=np.float32), cube_size=cube_size)
        if c < n_first and k == 0:
            methods.append(sim.method)
    return counts, methods


def _settings(name: str, fs, obs: list, ill, a: float, method, cube_size: float, methods: list) -> dict:
    """The inputs and model constants of a count (``DiscernibleColours.settings``)."""
    return {
        "inputs": {"stimulus": name, "filters": [] if fs is None else list(fs.names),
                   "observers": [o.spec for o in obs], "illuminant": ill.name,
                   "adaptation": a, "method": method, "cube_size": cube_size},
        "constants": {"cube_size_delta_e_ab": cube_size,
                      "lms_to_xyz": "CIE 170-2:2015 2 deg matrix (observers.fundamentals.LMS_TO_XYZ_2DEG)",
                      "cielab_white": "the illuminant, seen by the normal base observer (CIE 15:2018 formulae)",
                      "adaptation_model": "von Kries, g = w0^-(1-a) w^-a (Scorecard convention)",
                      "adaptation_degree": a,
                      "simulation_reference_white": "the illuminant",
                      "simulations": dict(zip((o.spec for o in obs), methods))},
    }

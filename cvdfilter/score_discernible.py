"""The scorecard's ``discernible`` group: the number of discernible colours per observer and filter.

For every observer (and every member of a population) and every filter, the colours of each stimulus (the
scorecard's surface set, or each ``--scene`` cube) are counted in unit cubes of a colour space
(:data:`DISCERNIBLE_METHODS`; the count itself is :mod:`cvdfilter.metrics.discernible`):

- ``cielab`` (default): Linhares, Pinto & Nascimento (2008), as :func:`cvdfilter.discernible_colours`:
  the observer's cone signals through the filter, von Kries adaptation, the observer's simulation for a
  normal viewer (Brettel, Vienot & Mollon 1997 for dichromats), the normal base observer's XYZ (CIE 170-2
  2 deg matrix), CIELAB against the illuminant; unit cubes of Delta E*ab = 1.
- ``cam16ucs``: the same colours in CAM16-UCS (Li et al. 2017; the UCS of Luo, Cui & Li 2006 on CAM16),
  unit cubes of Delta E' = 1. CIEDE2000 is not a Euclidean distance, so no partition of a space into
  cells of equal Delta E00 exists; CAM16-UCS is the uniform space whose Euclidean distance was fitted to
  the same combined data sets as CIEDE2000 and predicts them about as well (Luo, Cui & Li 2006).
- ``rnl``: the observer's own receptor-noise space (Vorobyev & Osorio 1998), no simulation: the chromatic
  coordinates of the model in JND plus the achromatic coordinate of the same cone noise
  (:func:`~cvdfilter.metrics.discernible.receptor_noise_space`), unit cubes of 1 JND (for dichromats the
  space has two dimensions, and the cubes are squares).

Reported per observer: for each stimulus (``scenes``) and pooled over the stimuli the count without a filter,
with each filter, the ratio with / without, the count of the observer's normal base observer without a filter
and the ratios to it. **Pooled** means the union of the stimuli's colours: a cube counts once if any pixel of
any stimulus falls in it (the count of one scene made of all of them); ``mean_scene_ratio`` is the mean over
stimuli of the per-stimulus ratios with / without.

The work is vectorised over filters: per chunk of filters one product gives every pixel's signals for every
filter, and one count covers them all. Model predictions, not clinical evidence.

Public: :func:`discernible_inputs`, :class:`DiscernibleInputs`, :func:`score_discernible`,
:data:`DISCERNIBLE_METHODS`, :data:`DEFAULT_METHOD` (the JSON entry is
:func:`cvdfilter.scorecard_json.discernible_entry`).
"""

from __future__ import annotations

import pathlib
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .errors import InputError

__all__ = ["discernible_inputs", "DiscernibleInputs", "score_discernible", "DISCERNIBLE_METHODS", "DEFAULT_METHOD",
           "STORE_KEYS"]

#: Counting spaces (``--discernible-method``): name -> what is counted.
DISCERNIBLE_METHODS = {
    "cielab": "unit cubes of CIELAB (Delta E*ab = 1), Linhares, Pinto & Nascimento 2008",
    "cam16ucs": "unit cubes of CAM16-UCS (Delta E' = 1; Li et al. 2017, Luo, Cui & Li 2006), the "
                "Euclidean stand-in for CIEDE2000",
    "rnl": "unit cubes of 1 JND in the observer's receptor-noise space (Vorobyev & Osorio 1998 chromatic "
           "coordinates plus the achromatic coordinate of the same cone noise)",
}
DEFAULT_METHOD = "cielab"
#: Pixel-states (pixels x filters) per chunk: bounds the working memory to a few hundred MB.
CHUNK_PIXEL_STATES = 1 << 21
#: Per-observer arrays written into the scorecard (``discernible_`` + key); per stimulus j the same with
#: ``discernible_scene{j}_``.
STORE_KEYS = ("without", "with", "ratio", "normal_without", "ratio_to_normal", "ratio_to_normal_with")


@dataclass(frozen=True, eq=False)
class _Stimulus:
    name: str
    samples: np.ndarray  # (m, n_pixels), contiguous: (k, m) @ (m, n) is the fast product layout
    interpolation: np.ndarray  # (n_wl, m): from the stimulus's bands to the grid


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
                                 np.eye(grid.size)))
    names = [s.name for s in stimuli]
    if len(set(names)) != len(names):
        raise InputError(f"scene '{next(n for n in names if names.count(n) > 1)}' given twice")
    return DiscernibleInputs(tuple(stimuli), key, simulation, size, tuple(sources))


# --- the computation -----------------------------------------------------------------------------------

@dataclass(eq=False)
class _Condition:
    """One observer's way from cone catches to counting coordinates (all but the filter)."""

    observer: Any
    kind: str  # "matrices" (cielab, cam16ucs) or "rnl"
    sim: Any = None  # Simulation
    w_n: Any = None  # the normal base's white (3,)
    space: Any = None  # (3, 3) receptor-noise space


def _condition(o, d: DiscernibleInputs, e: np.ndarray, noise_args: dict) -> _Condition:
    from .observers.simulate import simulation

    if d.method == "rnl":
        from .metrics.discernible import receptor_noise_space
        from .metrics.discrimination import receptor_noise

        noise = receptor_noise(o.missing_cone, **noise_args)
        return _Condition(o, "rnl", space=receptor_noise_space(noise))
    m = d.simulation if (d.simulation is not None and o.kind == "dichromat") else None
    base = o.base if o.base is not None else o
    return _Condition(o, "matrices", sim=simulation(o, method=m, reference_white=e),
                      w_n=base.fundamentals.T @ e)


def _coordinates(cond: _Condition, t: np.ndarray, stim: _Stimulus, e: np.ndarray, a: float, method: str):
    """Counting coordinates (K, 3, n_pixels) of ``stim`` through the K transmittance rows ``t`` (K, n_wl),
    and which rows are defined (the filtered white excites every cone the observer has)."""
    from .metrics.discernible import cam16ucs_planes, lab_planes
    from .observers.fundamentals import LMS_TO_XYZ_2DEG
    from .observers.spaces import von_kries_gains

    o = cond.observer
    phi = np.asarray(o.fundamentals, dtype=float)
    k_rows, n_wl = t.shape
    white0 = phi.T @ e
    whites = (t * e) @ phi  # (K, 3)
    present = [c for c in range(3) if c != o.missing_cone]
    defined = np.all(whites[:, present] > 0, axis=1)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        gains = von_kries_gains(whites, white0, adaptation=a)
    gains = np.where(defined[:, None] & np.isfinite(gains), gains, 1.0)
    # cone weights per pixel band and filter: W[m, k, c] = sum_w p[w, m] e[w] t[k, w] phi[w, c]
    A = stim.interpolation * e[:, None]
    W = (A.T @ (t.T[:, :, None] * phi[:, None, :]).reshape(n_wl, k_rows * 3)).reshape(-1, k_rows, 3)
    n = stim.samples.shape[1]
    if cond.kind == "rnl":
        from .metrics.discrimination import log_catches

        wg = np.ascontiguousarray((W * gains[None]).reshape(-1, k_rows * 3).T)  # (K*3, m)
        f = log_catches(wg @ stim.samples).reshape(k_rows, 3, n)  # ln of the adapted cone signals
        return np.einsum("xc,kcn->kxn", cond.space, f), defined
    # gains, the simulation, the normal base's scale and LMS -> XYZ folded into 3x3 matrices per filter
    sims = cond.sim.matrices
    mats = np.stack([LMS_TO_XYZ_2DEG @ (cond.w_n[:, None] * sm) for sm in sims])  # (j, 3, 3)
    folded = mats[None] * gains[:, None, None, :]  # (K, j, 3, 3): M_j diag(g_k)
    rows = [np.einsum("mkc,kxc->kxm", W, folded[:, i]) for i in range(len(sims))]
    if len(sims) == 2:
        sep = cond.sim.separator[None, :] * gains  # (K, 3)
        rows.append(np.einsum("mkc,kc->km", W, sep)[:, None, :])
    big = np.ascontiguousarray(np.concatenate(rows, axis=1))  # (K, 3 j [+1], m)
    out = (big.reshape(-1, big.shape[2]) @ stim.samples).reshape(k_rows, big.shape[1], n)
    xyz = out[:, 0:3]
    if len(sims) == 2:
        xyz = np.where(out[:, 6:7] >= 0, xyz, out[:, 3:6])
    planes = np.ascontiguousarray(np.moveaxis(xyz, 1, 0)).reshape(3, -1)  # (3, K*n)
    white_xyz = LMS_TO_XYZ_2DEG @ cond.w_n
    if method == "cam16ucs":
        coords = cam16ucs_planes(planes, white_xyz)
        bad = ~np.all(np.isfinite(coords), axis=0)
        if bad.any():
            coords[:, bad] = np.nan
    else:
        # float32 after the ratio to the white, as discernible_colours (equal ratios keep equal values)
        coords = lab_planes(planes, white_xyz, dtype=np.float32)
    return np.ascontiguousarray(coords.reshape(3, k_rows, n).transpose(1, 0, 2)), defined


def _count(coords: np.ndarray, cube_size: float, keys: bool):
    """Counts (K,) of the finite colours of ``coords`` (K, 3, n), with (rows, packed) keys when asked, and
    the number of undefined colours per row (K,) (cam16ucs only: they are not counted, and are reported).

    Undefined colours are parked in one cube beyond every finite colour, which is then taken off again."""
    from .metrics.discernible import count_planes_many

    finite = np.all(np.isfinite(coords), axis=1)  # (K, n)
    excluded = coords.shape[2] - np.count_nonzero(finite, axis=1)
    if not excluded.any():
        return count_planes_many(coords, cube_size=cube_size, keys=keys), excluded
    top = np.array([np.max(coords[:, a][finite]) if finite.any() else 0.0 for a in range(3)])
    park = np.floor(top / cube_size) * cube_size + 2 * cube_size  # a cube no finite colour reaches
    coords = np.where(finite[:, None, :], coords, park[None, :, None])
    got = count_planes_many(coords, cube_size=cube_size, keys=keys)
    counts = (got[0] if keys else got) - (excluded > 0)
    if not keys:
        return counts, excluded
    rows, packed = got[1]
    probe = count_planes_many(park[None, :, None] + 0.5 * cube_size, cube_size=cube_size, keys=True)[1][1][0]
    keep = packed != probe
    return (counts, (rows[keep], packed[keep])), excluded


def _chunk(n_pixels: int) -> int:
    return max(1, min(1024, CHUNK_PIXEL_STATES // max(1, n_pixels)))


def _without(cond: _Condition, d: DiscernibleInputs, e: np.ndarray, a: float, n_wl: int) -> tuple:
    """Counts per stimulus without a filter (n_s,), the occupied cubes per stimulus (several stimuli only),
    undefined colours."""
    ones = np.ones((1, n_wl))
    counts, parts, excluded = np.zeros(len(d.stimuli)), [], 0
    pooled = len(d.stimuli) > 1
    for j, stim in enumerate(d.stimuli):
        c, _ = _coordinates(cond, ones, stim, e, a, d.method)
        got, x = _count(c, d.cube_size, pooled)
        counts[j] = (got[0] if pooled else got)[0]
        if pooled:
            parts.append(got[1])
        excluded += int(x.sum())
    return counts, parts, excluded


def _pool(counts: np.ndarray, parts: list) -> float:
    from .metrics.discernible import count_union

    return float(count_union(parts, 1)[0]) if len(parts) > 1 else float(counts[0])


@dataclass
class _Unit:
    """One observer (or population member) to count: its condition, whether its no-filter state is still to
    count (``own``: then its rows are the no-filter row and the filters), and where its normal base's
    counts without a filter come from (``ref``: a unit index, or ``(condition, _without(...))``)."""

    k: int
    cond: _Condition
    own: bool
    ref: Any
    n_rows: int


@dataclass
class _Shared:
    """What every chunk needs (shipped once per run): the stimuli, the light, the filters, and per chunk
    ``(unit, lo, hi)`` over its unit's rows."""

    d: DiscernibleInputs
    e: np.ndarray
    a: float
    T: np.ndarray
    units: list
    chunks: list

    def rows(self, unit: _Unit, lo: int, hi: int) -> np.ndarray:
        """Rows ``lo:hi`` of the unit's transmittances: for an ``own`` unit the no-filter row, then the filters."""
        if not unit.own:
            return self.T[lo:hi]
        if lo > 0:
            return self.T[lo - 1:hi - 1]
        return np.vstack([np.ones((1, self.T.shape[1])), self.T[:hi - 1]])


def _chunk_counts(sh: _Shared, c: int, _c1: int) -> dict:
    """Chunk ``c`` (a pure function): counts per stimulus, pooled, undefined colours for its rows, and the
    no-filter state's occupied cubes when the chunk holds it (first chunk of an ``own`` unit)."""
    from .metrics.discernible import count_union

    u, lo, hi = sh.chunks[c]
    unit, d = sh.units[u], sh.d
    rows = sh.rows(unit, lo, hi)
    pooled = len(d.stimuli) > 1
    scene = np.full((len(d.stimuli), hi - lo), np.nan)
    excluded = np.zeros(hi - lo)
    parts, parts0 = [], []
    defined = np.ones(hi - lo, dtype=bool)
    for j, stim in enumerate(d.stimuli):
        coords, ok = _coordinates(unit.cond, rows, stim, sh.e, sh.a, d.method)
        got, x = _count(coords, d.cube_size, pooled)
        counts = got[0] if pooled else got
        defined &= ok
        scene[j] = np.where(ok, counts, np.nan)
        excluded += x
        if pooled:
            parts.append(got[1])
            if unit.own and lo == 0:
                r, k = got[1]
                parts0.append((r[r == 0], k[r == 0]))
    with_ = np.where(defined, count_union(parts, hi - lo), np.nan) if pooled else scene[0].copy()
    return {"scene": scene, "excluded": excluded, "with": with_, "parts0": parts0}


def _observer_counts(unit: _Unit, parts: list, reference: tuple | None) -> dict:
    """Arrays of one observer from its chunks' results (in order): per stimulus and pooled, without / with /
    normal_without / excluded.

    ``reference`` is ``(condition, _without(...))`` of the normal base observer; None for a normal observer
    counted here for the first time: it is its own reference, its no-filter state counted in its first chunk
    with the filters (``out["reference"]``).
    """
    scene = np.concatenate([p["scene"] for p in parts], axis=1)
    excluded = np.concatenate([p["excluded"] for p in parts])
    with_ = np.concatenate([p["with"] for p in parts])
    first = 1 if unit.own else 0
    mine: tuple
    if unit.own:
        s0, x0 = scene[:, 0].copy(), float(excluded[0])
        mine = (unit.cond, (s0, parts[0]["parts0"], x0))
    else:
        assert reference is not None
        mine = reference
        s0, parts0, x0 = reference[1]
    ref = mine if reference is None else reference
    sn, parts_n, _ = ref[1]
    return {"scene_without": s0, "scene_with": scene[:, first:], "scene_normal": sn,
            "without": _pool(s0, mine[1][1]), "normal_without": _pool(sn, parts_n),
            "with": with_[first:], "excluded": excluded[first:] + x0, "reference": mine}


def _units(inp, d: DiscernibleInputs, e: np.ndarray, a: float) -> list:
    """Every observer and member to count, in order, with its condition and its normal reference: a normal
    observer is its own reference (shared with those it is the base of, and with its own later copies)."""
    from .score_population import is_population

    n_wl = inp.grid.size
    noise_args = {"weber": inp.weber_fraction, "cone_ratios": inp.cone_ratios}
    references: dict = {}  # normal observer spec -> unit index (counted there) or (condition, its counts)
    units: list = []
    for k, o in enumerate(inp.observers):
        for m in (o.members() if is_population(o) else [o]):  # per member only the 3x3 maps differ
            if m.base is None:
                ref = references.get(m.spec)
                if ref is None:
                    cond, own = _condition(m, d, e, noise_args), True
                    references[m.spec] = len(units)
                else:
                    cond = (units[ref].cond if isinstance(ref, int) else ref[0])
                    own = False
            else:
                cond, own = _condition(m, d, e, noise_args), True
                if m.base.spec not in references:
                    base_cond = _condition(m.base, d, e, noise_args)
                    references[m.base.spec] = (base_cond, _without(base_cond, d, e, a, n_wl))
                ref = references[m.base.spec]
            units.append(_Unit(k, cond, own, ref, len(inp.filters) + (1 if own else 0)))
    return units


def score_discernible(inp, d: DiscernibleInputs, per_obs: list, progress=None, scheduler="local") -> None:
    """Fill every observer's ``discernible_*`` arrays in ``per_obs`` (the scorecard's ``per_observer``).

    ``inp`` is the run's :class:`~cvdfilter.score_plan.ScoreInputs`. A fixed observer gets arrays over
    filters (and scalars for the no-filter counts); a population gets (filters, members) and (members,),
    which the population summaries turn into statistics. The chunks (an observer or member x a range of
    filters, every stimulus) run on the executor ``scheduler`` names or is (:mod:`cvdfilter.execution`;
    default this process) and are assembled in order: the same counts wherever they ran.
    """
    from .execution import map_chunks
    from .score_population import is_population

    e = np.asarray(inp.illuminant.spd, dtype=float)
    T = np.asarray(inp.filters.transmittance, dtype=float)
    a = float(inp.adaptation)
    units = _units(inp, d, e, a)
    size = _chunk(max(s.samples.shape[1] for s in d.stimuli))
    chunks = [(u, lo, min(unit.n_rows, lo + size)) for u, unit in enumerate(units)
              for lo in range(0, unit.n_rows, size)]
    shared = _Shared(d, e, a, T, units, chunks)
    total, done = sum(unit.n_rows for unit in units), 0

    def tick(n_done: int, n_total: int, c: int) -> None:
        nonlocal done
        done += chunks[c][2] - chunks[c][1]
        if progress is not None:
            progress("discernible", done, total)

    results: list = []  # per unit, its counts (assembled in unit order)
    parts: list = []
    for c, part in enumerate(map_chunks(_chunk_counts, shared, [(c, c + 1) for c in range(len(chunks))],
                                        scheduler=scheduler, progress=tick)):
        parts.append(part)
        u = chunks[c][0]
        if chunks[c][2] < units[u].n_rows:
            continue
        ref = units[u].ref
        reference = results[ref]["reference"] if isinstance(ref, int) else ref
        results.append(_observer_counts(units[u], parts, reference))
        parts = []
    for k, o in enumerate(inp.observers):
        mine = [r for r, unit in zip(results, units) if unit.k == k]
        per_obs[k].update(_store(mine, len(d.stimuli), is_population(o)))


def _ratios(without, with_, normal):
    with np.errstate(divide="ignore", invalid="ignore"):
        return with_ / without, without / normal, with_ / normal


def _store(results: list, n_s: int, population: bool) -> dict:
    """The per-observer arrays: fixed observer (filters,) / scalars; population (filters, members) / (members,)."""
    def stack(key, j=None):
        vals = [r[key] if j is None else r[key][j] for r in results]
        v = np.stack([np.asarray(x, dtype=float) for x in vals], axis=-1)
        return v if population else v[..., 0]

    store = {}
    specs = [("", None)] + [(f"scene{j}_", j) for j in range(n_s)] if n_s > 1 else [("", None)]
    for prefix, j in specs:
        if j is None:
            w0, w1, wn = stack("without"), stack("with"), stack("normal_without")
        else:
            w0, w1, wn = stack("scene_without", j), stack("scene_with", j), stack("scene_normal", j)
        ratio, to_normal, to_normal_with = _ratios(w0, w1, wn)
        for key, v in zip(STORE_KEYS, (w0, w1, ratio, wn, to_normal, to_normal_with)):
            store[f"discernible_{prefix}{key}"] = v
    if n_s > 1:
        ratios = np.stack([store[f"discernible_scene{j}_ratio"] for j in range(n_s)])
        store["discernible_mean_scene_ratio"] = ratios.mean(axis=0)
    store["discernible_excluded_pixels"] = stack("excluded")
    return store

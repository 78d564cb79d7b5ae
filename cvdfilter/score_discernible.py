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

The work is vectorised over filters and population members: a population's members are one array (their
fundamentals and 3x3 maps stacked), and per chunk of (member, filter) rows one product gives every pixel's
signals for every row, and one count covers them all. Model predictions, not clinical evidence.

Public: :func:`score_discernible`, :data:`STORE_KEYS`; re-exported from :mod:`cvdfilter.discernible_inputs`:
:func:`discernible_inputs`, :class:`DiscernibleInputs`, :data:`DISCERNIBLE_METHODS`, :data:`DEFAULT_METHOD` (the
JSON entry is :func:`cvdfilter.scorecard_json.discernible_entry`).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from .discernible_inputs import DEFAULT_METHOD, DISCERNIBLE_METHODS, DiscernibleInputs, _Stimulus, discernible_inputs

__all__ = ["discernible_inputs", "DiscernibleInputs", "score_discernible", "DISCERNIBLE_METHODS", "DEFAULT_METHOD",
           "STORE_KEYS", "CHUNK_PIXEL_STATES"]

#: Pixel-states (pixels x filters) per chunk: bounds the working memory to a few hundred MB.
CHUNK_PIXEL_STATES = 1 << 21
#: Per-observer arrays written into the scorecard (``discernible_`` + key); per stimulus j the same with
#: ``discernible_scene{j}_``.
STORE_KEYS = ("without", "with", "ratio", "normal_without", "ratio_to_normal", "ratio_to_normal_with")


@dataclass(eq=False)
class _Condition:
    """The way from cone catches to counting coordinates (all but the filter) of M observers at once (a fixed
    observer, M = 1, or a population's members), every array over the members first."""

    kind: str  # "matrices" (cielab, cam16ucs) or "rnl"
    phi: np.ndarray  # (M, n_wl, 3) the members' fundamentals
    white0: np.ndarray  # (M, 3) their cone signals of the illuminant
    missing: int | None  # the absent cone (dichromats), the same for every member
    maps: Any = None  # (M, j, 3, 3) LMS_TO_XYZ diag(w_n) S_i: the simulation's pieces S_i to the base's XYZ
    separator: Any = None  # (M, 3) two-piece simulations: which piece a colour takes (None: one piece)
    white_xyz: Any = None  # (M, 3) the normal base observer's XYZ of the illuminant
    space: Any = None  # (3, 3) receptor-noise space (the same for every member: the noise is per cone type)


def _maps(observers: Callable[[int, int], list], kind: str, d: DiscernibleInputs, e: np.ndarray, n: int) -> tuple:
    """The simulations' pieces (n, j, 3, 3) and separators ((n, 3) or None) of ``n`` members.

    The simulation of a normal or anomalous observer is one linear map the same for every member (identity;
    Machado et al. 2009 with cone normalisation), built once; a dichromat's (Brettel et al. 1997 by
    default) depends on the member's fundamentals and is built per member (3x3 matrices only).
    ``observers`` is a callable giving the members as :class:`~cvdfilter.observers.observer.Observer`.
    """
    from .observers.simulate import simulation

    method = d.simulation if kind == "dichromat" else None
    if kind != "dichromat":
        s = simulation(observers(0, 1)[0], method=method, reference_white=e)
        if s.separator is None and np.array_equal(s.matrices, np.eye(3)[None]):
            return np.broadcast_to(np.eye(3), (n, 1, 3, 3)), None
    sims = [simulation(m, method=method, reference_white=e) for m in observers(0, n)]
    mats = np.stack([np.asarray(s.matrices, dtype=float) for s in sims])
    seps = [s.separator for s in sims]
    return mats, (None if seps[0] is None else np.stack([np.asarray(x, dtype=float) for x in seps]))


def _condition(o, d: DiscernibleInputs, e: np.ndarray, noise_args: dict, *, base: bool = False) -> _Condition:
    """The condition of a fixed observer (one member) or of every member of a population; ``base``: of the
    population members' normal base observers."""
    from .observers.fundamentals import LMS_TO_XYZ_2DEG
    from .score_population import is_population

    if is_population(o):
        phi, phi_n = (o.base_fundamentals if base else o.fundamentals), o.base_fundamentals
        kind, missing = ("normal", None) if base else (o.kind, o.missing_cone)

        def members(lo: int, hi: int) -> list:
            return [m.base for m in o.members(lo, hi)] if base else o.members(lo, hi)
    else:
        phi, kind, missing = np.asarray(o.fundamentals, dtype=float)[None], o.kind, o.missing_cone
        phi_n = np.asarray((o.base if o.base is not None else o).fundamentals, dtype=float)[None]

        def members(lo: int, hi: int) -> list:
            return [o]
    phi, phi_n = np.asarray(phi, dtype=float), np.asarray(phi_n, dtype=float)
    white0 = np.matmul(phi.transpose(0, 2, 1), e)  # (M, 3): per member phi.T @ e
    if d.method == "rnl":
        from .metrics.discernible import receptor_noise_space
        from .metrics.discrimination import receptor_noise

        return _Condition("rnl", phi, white0, missing, space=receptor_noise_space(receptor_noise(missing,
                                                                                                 **noise_args)))
    w_n = np.matmul(phi_n.transpose(0, 2, 1), e)  # (M, 3) the normal base's white
    sims, separator = _maps(members, kind, d, e, phi.shape[0])
    maps = np.matmul(LMS_TO_XYZ_2DEG, w_n[:, None, :, None] * sims)  # (M, j, 3, 3)
    white_xyz = np.matmul(LMS_TO_XYZ_2DEG, w_n[:, :, None])[..., 0]  # (M, 3)
    return _Condition("matrices", phi, white0, missing, maps=maps, separator=separator, white_xyz=white_xyz)


def _coordinates(cond: _Condition, members: np.ndarray, t: np.ndarray, stim: _Stimulus, e: np.ndarray, a: float,
                 method: str):
    """Counting coordinates (R, 3, n_pixels) of ``stim`` for R rows, row r being member ``members[r]`` of
    ``cond`` through the transmittance ``t[r]`` (``t`` (R, n_wl)), and which rows are defined (the filtered
    white excites every cone the observer has)."""
    from .metrics.discernible import cam16ucs_planes, lab_planes
    from .observers.spaces import von_kries_gains

    phi = cond.phi[members]  # (R, n_wl, 3)
    n_rows, n_wl = t.shape
    white0 = cond.white0[members]
    whites = np.matmul((t * e)[:, None, :], phi)[:, 0]  # (R, 3)
    present = [c for c in range(3) if c != cond.missing]
    defined = np.all(whites[:, present] > 0, axis=1)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        gains = von_kries_gains(whites, white0, adaptation=a)
    gains = np.where(defined[:, None] & np.isfinite(gains), gains, 1.0)
    # cone weights per pixel band and row: W[m, r, c] = sum_w p[w, m] e[w] t[r, w] phi_r[w, c]
    tp = (t.T[:, :, None] * phi.transpose(1, 0, 2)).reshape(n_wl, n_rows * 3)
    if stim.identity:  # bands = the grid: the product with diag(e) is exact as a scaling
        W = (e[:, None] * tp).reshape(-1, n_rows, 3)
    else:
        W = ((stim.interpolation * e[:, None]).T @ tp).reshape(-1, n_rows, 3)
    n = stim.samples.shape[1]
    if cond.kind == "rnl":
        from .metrics.discrimination import log_catches

        wg = np.ascontiguousarray((W * gains[None]).reshape(-1, n_rows * 3).T)  # (R*3, m)
        f = log_catches(wg @ stim.samples).reshape(n_rows, 3, n)  # ln of the adapted cone signals
        return np.einsum("xc,kcn->kxn", cond.space, f), defined
    # gains, the simulation, the normal base's scale and LMS -> XYZ folded into 3x3 matrices per row
    folded = cond.maps[members] * gains[:, None, None, :]  # (R, j, 3, 3): M_j diag(g_r)
    n_pieces = folded.shape[1]
    rows = [np.einsum("mkc,kxc->kxm", W, folded[:, i]) for i in range(n_pieces)]
    if cond.separator is not None:
        sep = cond.separator[members] * gains  # (R, 3)
        rows.append(np.einsum("mkc,kc->km", W, sep)[:, None, :])
    big = np.ascontiguousarray(np.concatenate(rows, axis=1).transpose(1, 0, 2))  # (3 j [+1], R, m)
    out = (big.reshape(-1, big.shape[2]) @ stim.samples).reshape(big.shape[0], n_rows, n)
    planes = out[0:3]  # (3, R, n) XYZ, contiguous
    if cond.separator is not None:
        planes = np.where(out[6:7] >= 0, planes, out[3:6])
    white = cond.white_xyz[members].T[:, :, None]  # (3, R, 1): each row's white
    if method == "cam16ucs":
        same = bool(np.all(white == white[:, :1]))  # one member: one white (the same numbers either way)
        coords = cam16ucs_planes(planes.reshape(3, -1), white[:, 0, 0] if same else
                                 np.broadcast_to(white, planes.shape).reshape(3, -1))
        bad = ~np.all(np.isfinite(coords), axis=0)
        if bad.any():
            coords[:, bad] = np.nan
    else:
        # float32 after the ratio to the white, as discernible_colours (equal ratios keep equal values)
        coords = lab_planes(planes, white, dtype=np.float32)
    return coords.reshape(3, n_rows, n).transpose(1, 0, 2), defined  # (R, 3, n), a view


def _count(coords: np.ndarray, cube_size: float, keys: bool):
    """Counts (R,) of the finite colours of ``coords`` (R, 3, n), with (rows, packed) keys when asked, and
    the number of undefined colours per row (R,) (cam16ucs only: they are not counted, and are reported).

    Undefined colours are parked in one cube beyond every finite colour, which is then taken off again."""
    from .metrics.discernible import count_planes_many

    finite = np.all(np.isfinite(coords), axis=1)  # (R, n)
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


@dataclass
class _Group:
    """A fixed observer (one member) or a population's members, counted together.

    Each member has ``n_rows`` rows: with ``own`` its no-filter state first, then the filters (a reference
    group, ``k`` None, has the no-filter row only: the normal base observers that others are compared to);
    without ``own`` (a normal observer counted before) the filters only, its no-filter counts those of group
    ``mine``. ``normal`` is the group holding the members' normal base observers' no-filter counts (None: the
    group itself, or ``mine``).
    """

    k: int | None
    cond: _Condition
    own: bool
    mine: int | None
    normal: int | None
    n_rows: int

    @property
    def size(self) -> int:
        return int(self.cond.phi.shape[0])


@dataclass
class _Shared:
    """What every chunk needs (shipped once per run): the stimuli, the light, the filters with the no-filter
    state first (``states``), the groups, and per chunk ``(group, lo, hi)`` over its group's flat rows
    (member-major: row f is member ``f // n_rows``, state ``f % n_rows``)."""

    d: DiscernibleInputs
    e: np.ndarray
    a: float
    states: np.ndarray
    groups: list
    chunks: list

    def rows(self, group: _Group, lo: int, hi: int) -> tuple:
        """Member indices (R,) and transmittances (R, n_wl) of the group's flat rows ``lo:hi``."""
        f = np.arange(lo, hi)
        members, state = np.divmod(f, group.n_rows)
        return members, self.states[state + (0 if group.own else 1)]


def _chunk_counts(sh: _Shared, c: int, _c1: int) -> dict:
    """Chunk ``c`` (a pure function): per row the counts per stimulus, whether the row is defined, the
    undefined colours, and the count pooled over the stimuli (the union of their cubes)."""
    from .metrics.discernible import count_union

    g, lo, hi = sh.chunks[c]
    group, d = sh.groups[g], sh.d
    members, t = sh.rows(group, lo, hi)
    pooled = len(d.stimuli) > 1
    scene = np.zeros((len(d.stimuli), hi - lo))
    excluded = np.zeros(hi - lo)
    parts = []
    defined = np.ones(hi - lo, dtype=bool)
    for j, stim in enumerate(d.stimuli):
        coords, ok = _coordinates(group.cond, members, t, stim, sh.e, sh.a, d.method)
        got, x = _count(coords, d.cube_size, pooled)
        scene[j] = got[0] if pooled else got
        defined &= ok
        excluded += x
        if pooled:
            parts.append(got[1])
    union = count_union(parts, hi - lo).astype(float) if pooled else scene[0].copy()
    return {"scene": scene, "defined": defined, "excluded": excluded, "union": union}


def _groups(inp, d: DiscernibleInputs, e: np.ndarray) -> list:
    """Every observer (a population: all its members) to count, in order, with its condition and where its
    normal reference is: a normal observer is its own reference (shared with those it is the base of, and with
    its own later copies); other observers' bases are reference groups placed before them."""
    from .score_population import is_population

    noise_args = {"weber": inp.weber_fraction, "cone_ratios": inp.cone_ratios}
    n_f = len(inp.filters)
    references: dict = {}  # normal observer (or population) spec -> group index holding its no-filter counts
    groups: list = []
    for k, o in enumerate(inp.observers):
        pop = is_population(o)
        if (o.kind == "normal") if pop else (o.base is None):
            ref = references.get(o.spec)
            if ref is None:
                references[o.spec] = len(groups)
                groups.append(_Group(k, _condition(o, d, e, noise_args), True, None, None, n_f + 1))
            else:
                groups.append(_Group(k, groups[ref].cond, False, ref, ref, n_f))
            continue
        key = ("base", o.spec) if pop else o.base.spec
        if key not in references:
            references[key] = len(groups)
            base = _condition(o, d, e, noise_args, base=True) if pop else _condition(o.base, d, e, noise_args)
            groups.append(_Group(None, base, True, None, None, 1))
        groups.append(_Group(k, _condition(o, d, e, noise_args), True, None, references[key], n_f + 1))
    return groups


def _assemble(groups: list, parts: list, n_s: int) -> list:
    """Per group its arrays over members from its chunks' results (in order): ``(without, counts)`` where
    ``without`` = (per stimulus (n_s, M), pooled (M,), undefined colours (M,)) of the no-filter state and
    ``counts`` the filters' (per stimulus (n_s, M, n_f), pooled (M, n_f), undefined colours (M, n_f)) for
    an observer's group (None for a reference group).

    A reference group's no-filter counts are taken whole; an observer's count of a state whose filtered white
    leaves a cone without signal is NaN (and its pooled no-filter count, over several stimuli, is the union's).
    """
    out: list = []
    by_group: list = [[] for _ in groups]
    for g, part in parts:
        by_group[g].append(part)
    for group, mine in zip(groups, by_group):
        m, r = group.size, group.n_rows
        cat = {key: np.concatenate([p[key] for p in mine], axis=-1) for key in mine[0]} if mine else {}
        if group.own:
            raw = cat["scene"].reshape(n_s, m, r)
            defined = cat["defined"].reshape(m, r)
            union = cat["union"].reshape(m, r)
            excluded = cat["excluded"].reshape(m, r)
            scene = raw if group.k is None else np.where(defined[None], raw, np.nan)
            w0 = union[:, 0] if (group.k is None or n_s > 1) else scene[0, :, 0]
            without = (scene[:, :, 0], w0, excluded[:, 0])
            first = 1
        else:
            without = out[group.mine][0]
            defined = cat["defined"].reshape(m, r)
            scene = np.where(defined[None], cat["scene"].reshape(n_s, m, r), np.nan)
            union, excluded = cat["union"].reshape(m, r), cat["excluded"].reshape(m, r)
            first = 0
        counts = None
        if group.k is not None:
            counts = (scene[:, :, first:], np.where(defined, union, np.nan)[:, first:],
                      excluded[:, first:] + without[2][:, None])
        out.append((without, counts))
    return out


def score_discernible(inp, d: DiscernibleInputs, per_obs: list, progress=None, scheduler="local") -> None:
    """Fill every observer's ``discernible_*`` arrays in ``per_obs`` (the scorecard's ``per_observer``).

    ``inp`` is the run's :class:`~cvdfilter.score_plan.ScoreInputs`. A fixed observer gets arrays over
    filters (and scalars for the no-filter counts); a population gets (filters, members) and (members,),
    which the population summaries turn into statistics. The chunks (a range of (member, filter state) rows
    of an observer's group, every stimulus) run on the executor ``scheduler`` names or is
    (:mod:`cvdfilter.execution`; default this process) and are assembled in order: the same counts wherever
    they ran. Working memory is bounded by :data:`CHUNK_PIXEL_STATES` per chunk.
    """
    from .execution import map_chunks
    from .score_population import is_population

    e = np.asarray(inp.illuminant.spd, dtype=float)
    T = np.asarray(inp.filters.transmittance, dtype=float)
    a = float(inp.adaptation)
    groups = _groups(inp, d, e)
    size = _chunk(max(s.samples.shape[1] for s in d.stimuli))
    chunks = [(g, lo, min(group.size * group.n_rows, lo + size)) for g, group in enumerate(groups)
              for lo in range(0, group.size * group.n_rows, size)]
    shared = _Shared(d, e, a, np.vstack([np.ones((1, T.shape[1])), T]), groups, chunks)
    total, done = sum(group.size * group.n_rows for group in groups), 0

    def tick(n_done: int, n_total: int, c: int) -> None:
        nonlocal done
        done += chunks[c][2] - chunks[c][1]
        if progress is not None:
            progress("discernible", done, total)

    parts = [(chunks[c][0], part) for c, part in enumerate(
        map_chunks(_chunk_counts, shared, [(c, c + 1) for c in range(len(chunks))], scheduler=scheduler,
                   progress=tick))]
    results = _assemble(groups, parts, len(d.stimuli))
    for g, group in enumerate(groups):
        if group.k is None:
            continue
        normal = group.normal if group.normal is not None else g
        o = inp.observers[group.k]
        per_obs[group.k].update(_store(results[g][0], results[normal][0], results[g][1], len(d.stimuli),
                                       is_population(o)))


def _ratios(without, with_, normal):
    with np.errstate(divide="ignore", invalid="ignore"):
        return with_ / without, without / normal, with_ / normal


def _store(without: tuple, normal: tuple, counts: tuple, n_s: int, population: bool) -> dict:
    """The per-observer arrays: fixed observer (filters,) / scalars; population (filters, members) / (members,)."""
    def shape(v):
        v = np.asarray(v, dtype=float)
        v = v.T if v.ndim == 2 else v  # (members, filters) -> (filters, members)
        return v if population else v[..., 0]

    s0, w0, _ = without
    sn, wn, _ = normal
    scene, with_, excluded = counts
    store = {}
    specs = [("", None)] + [(f"scene{j}_", j) for j in range(n_s)] if n_s > 1 else [("", None)]
    for prefix, j in specs:
        if j is None:
            v0, v1, vn = shape(w0), shape(with_), shape(wn)
        else:
            v0, v1, vn = shape(s0[j]), shape(scene[j]), shape(sn[j])
        ratio, to_normal, to_normal_with = _ratios(v0, v1, vn)
        for key, v in zip(STORE_KEYS, (v0, v1, ratio, vn, to_normal, to_normal_with)):
            store[f"discernible_{prefix}{key}"] = v
    if n_s > 1:
        ratios = np.stack([store[f"discernible_scene{j}_ratio"] for j in range(n_s)])
        store["discernible_mean_scene_ratio"] = ratios.mean(axis=0)
    store["discernible_excluded_pixels"] = shape(excluded)
    return store

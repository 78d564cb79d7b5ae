"""How :func:`cvdfilter.score` computes: validated inputs, a plan per observer, and a chunk runner.

The scorecard's computation in three typed steps:

1. :class:`ScoreInputs` (:meth:`ScoreInputs.validate`, in :mod:`cvdfilter.score_inputs`, re-exported here):
   every argument checked and turned into objects (filters, light, surfaces, observers, thresholds, signal
   lights) before any heavy work.
2. :func:`filter_results`: the per-filter numbers (photometry and road use, normal observer, CIE D65), and
   :func:`plan_observers`: per observer an :class:`ObserverPlan` (cone columns, no-filter references) and the
   result arrays it fills.
3. :class:`ChunkRunner`: one call ``runner(lo, hi)`` scores filters ``lo:hi`` and writes only that slice of
   the result arrays; ``runner.compute(lo, hi)`` returns that slice instead (a pure chunk function) and
   ``runner.assemble(lo, hi, part)`` copies it in. :func:`run_chunks` maps ``compute`` over the chunks on an
   executor of :mod:`cvdfilter.execution` (threads in this process, or a Dask cluster) and assembles the
   results in chunk order, so the numbers are the same bits wherever the chunks ran.

Public: :class:`ScoreInputs`, :class:`ObserverPlan`, :class:`ChunkRunner`, :func:`filter_results`,
:func:`plan_observers`, :func:`run_chunks`, :func:`parse_metrics`, :data:`METRIC_GROUPS`,
:data:`CORE_METRICS`, :data:`DEFAULT_OBSERVERS`, :data:`PAIR_KEYS`, :data:`CONFUSION_KEYS`.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .score_inputs import (CONFUSION_KEYS, CORE_METRICS, DEFAULT_OBSERVERS, METRIC_GROUPS, OPTIONAL_GROUPS,
                           PAIR_KEYS, ScoreInputs, parse_metrics)

__all__ = ["ScoreInputs", "ObserverPlan", "ChunkRunner", "filter_results", "plan_observers", "run_chunks",
           "parse_metrics", "METRIC_GROUPS", "CORE_METRICS", "DEFAULT_OBSERVERS", "PAIR_KEYS", "CONFUSION_KEYS",
           "OPTIONAL_GROUPS"]

Progress = Callable[[str, int, int], None]


def workers() -> int:
    """Threads for the chunks: the CPUs this process may use (at most 8); CVDFILTER_THREADS overrides."""
    import os

    env = os.environ.get("CVDFILTER_THREADS")
    if env and env.isdigit() and int(env) > 0:
        return int(env)
    try:
        n = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        n = os.cpu_count() or 1
    return max(1, min(8, n))


# --- 2. per filter and per observer ----------------------------------------------------------------------

def filter_results(inp: ScoreInputs) -> dict:
    """Per-filter arrays (first axis filters): photometry and road use (normal observer, CIE D65)."""
    from .metrics.photometry import luminous_transmittance, xyz_to_uv_prime, xyz_to_xy
    from .metrics.road_use import (SIGNAL_COLOURS, iso12312_category, min_ratio_in_band, road_use_flags,
                                   signal_quotients)

    T, E, cmfs, d65 = inp.filters.transmittance, inp.illuminant.spd, inp.cmfs, inp.d65
    ybar = cmfs[:, 1]
    results: dict = {}
    tau_v = luminous_transmittance(T, d65, ybar)
    results["luminous_transmittance"] = tau_v
    results["luminous_transmittance_illuminant"] = luminous_transmittance(T, E, ybar)
    xyz_d65 = T @ (d65[:, None] * cmfs)
    results["chromaticity"] = xyz_to_xy(xyz_d65)
    uv1 = xyz_to_uv_prime(T @ (E[:, None] * cmfs))
    uv0 = xyz_to_uv_prime(E @ cmfs)
    results["white_shift"] = np.hypot(uv1[:, 0] - uv0[0], uv1[:, 1] - uv0[1])
    if "road_use" in inp.groups:
        lights = inp.signal_lights
        cat = iso12312_category(tau_v)
        ratio, at_nm = min_ratio_in_band(T, tau_v, inp.grid.wavelengths)
        by_colour, by_light = signal_quotients(T, tau_v, lights, ybar)
        suitable, night = road_use_flags(cat, ratio, by_colour, tau_v, inp.signal_limits)
        results.update({"iso12312_category": cat, "min_ratio": ratio, "min_ratio_at_nm": at_nm,
                        "suitable": suitable, "night_suitable": night})
        for c in SIGNAL_COLOURS:
            results[f"signal_quotient_{c}"] = by_colour[c]
            names = [light.name for light in lights if light.colour == c]
            stack = np.stack([by_light[n] for n in names], axis=1)
            worst = np.argmin(np.nan_to_num(stack, nan=np.inf), axis=1)
            results[f"signal_light_{c}"] = np.array(names, dtype=object)[worst]
    return results


def cone_basis(observers) -> tuple[np.ndarray, list]:
    """Unique cone-sensitivity columns (n_wl, K) and, per observer, the indices of its L, M, S columns."""
    columns: list = []
    index = []
    seen: dict = {}
    for o in observers:
        idx = []
        for c in range(3):
            col = np.ascontiguousarray(o.fundamentals[:, c], dtype=float)
            key = col.tobytes()  # equal bytes = equal columns (one dictionary look-up, not a scan)
            if key not in seen:
                seen[key] = len(columns)
                columns.append(col)
            idx.append(seen[key])
        index.append(idx)
    return np.stack(columns, axis=1), index


@dataclass(eq=False)
class ObserverPlan:
    """What one observer's metrics need per chunk, prepared once, and the arrays they fill.

    Attributes
    ----------
    observer : Observer
    cols : list of int
        The observer's L, M, S columns in the shared cone basis.
    w0 : numpy.ndarray
        (3,) cone catches of the white without a filter.
    channels, rms0
        Contrast: the opponent channels and the RMS contrast without a filter (None without ``contrast``).
    rnl : dict or None
        Receptor-noise reference without a filter (``rnl_reference``), for the pair metrics.
    confusion : dict or None
        Confused-pair reference (``confusion_reference``) for deficient observers with a normal base.
    store : dict of numpy.ndarray
        The result arrays over filters (``Scorecard.per_observer`` entry); a chunk writes its own slice.
    masks : dict or None
        The references' pair sets as masks over all pairs (``discrimination.pair_masks``), for the counts
        and the median taken from one pass over every pair's distance.
    """

    observer: Any
    cols: list
    w0: np.ndarray
    channels: Any = None
    rms0: Any = None
    rnl: Any = None
    confusion: dict | None = None
    store: dict = field(default_factory=dict)
    masks: dict | None = None


def _pair_plan(plan: ObserverPlan, inp: ScoreInputs, q0: np.ndarray, stimuli: np.ndarray, n_f: int) -> None:
    """The receptor-noise references and pair-count arrays of one observer."""
    from .metrics.confusion import confusion_reference, normally_discriminable
    from .metrics.discrimination import receptor_noise, rnl_reference

    o, groups, store = plan.observer, inp.groups, plan.store
    n_s = len(inp.surfaces)
    noise = receptor_noise(o.missing_cone, weber=inp.weber_fraction, cone_ratios=inp.cone_ratios)
    normal_noise = receptor_noise(None, weber=inp.weber_fraction, cone_ratios=inp.cone_ratios)
    # The pairs the normal observer (this observer's base, or itself) tells apart without a filter:
    # the set the median runs over and the confused pairs are drawn from.
    normal = o.base if o.base is not None else o
    sets = normally_discriminable(stimuli[:, :n_s].T @ normal.fundamentals, normal_noise, inp.normal_threshold)
    with_confusion = "confusion" in groups and o.kind != "normal" and o.base is not None
    plan.rnl = rnl_reference(q0, noise, threshold=inp.discrimination_threshold,
                             thresholds=inp.distribution_thresholds if "discrimination" in groups else (),
                             median_pairs=sets[0], extra_radii=(inp.deficient_threshold,) if with_confusion else ())
    if with_confusion:
        plan.confusion = confusion_reference(q0, noise, None, None, normal_threshold=inp.normal_threshold,
                                             deficient_threshold=inp.deficient_threshold, rnl=plan.rnl, sets=sets)
        for key in CONFUSION_KEYS:
            store[f"confusion_{key}"] = np.zeros(n_f, dtype=np.int64)
        store["confusion_normally_discriminable"] = plan.confusion["count"]
        store["confusion_median_without"] = plan.rnl["median"]
        store["confusion_median_with"] = np.full(n_f, np.nan)
        store["confusion_median_ratio"] = np.full(n_f, np.nan)
    if "discrimination" in groups:
        for key in PAIR_KEYS:
            store[f"discriminable_{key}"] = np.zeros(n_f, dtype=np.int64)
        for t in inp.distribution_thresholds:
            for key in PAIR_KEYS:
                store[f"discriminable_at_{t:g}_{key}"] = np.zeros(n_f, dtype=np.int64)
        store["discriminable_median_without"] = plan.rnl["median"]
        store["discriminable_median_with"] = np.full(n_f, np.nan)
        store["discriminable_median_ratio"] = np.full(n_f, np.nan)
    from .metrics.discrimination import pair_masks

    plan.masks = pair_masks(plan.rnl, [plan.confusion["unseen"], plan.confusion["unseen_close"]]
                            if plan.confusion is not None else [])


def plan_observers(inp: ScoreInputs, observers=None) -> tuple[list[ObserverPlan], ChunkRunner]:
    """Per observer (default: all of ``inp``'s) its :class:`ObserverPlan`, and the :class:`ChunkRunner`
    that fills them."""
    from .catch_products import stimuli_columns
    from .metrics.contrast import opponent_channels, rms_without

    grid, n_f, n_s = inp.grid, len(inp.filters), len(inp.surfaces)
    observers = inp.observers if observers is None else observers
    basis, cols = cone_basis(observers)
    k_cols = basis.shape[1]
    # The surfaces, the white (the light itself), then zero columns (catch_products: size-independent bits).
    stimuli = stimuli_columns(inp.illuminant.spd, inp.surfaces.reflectance)
    width = stimuli.shape[1]
    # B[lambda, (cone, sample)]
    B = (basis[:, :, None] * stimuli[:, None, :]).reshape(grid.size, k_cols * width)
    Q0 = B.sum(axis=0).reshape(k_cols, width)  # without the filter (T = 1)
    plans = []
    for k, o in enumerate(observers):
        c = cols[k]
        q0, w0 = Q0[c, :n_s].T, Q0[c, n_s]
        plan = ObserverPlan(o, c, w0)
        if "contrast" in inp.groups:
            plan.channels = opponent_channels(o.kind, o.deficiency, o.luminance_weights)
            plan.rms0 = rms_without(q0, w0, plan.channels)
            for key in ("luminance_contrast_gain", "red_green_gain", "blue_yellow_gain"):
                plan.store[key] = np.full(n_f, np.nan)
        if "discrimination" in inp.groups or "confusion" in inp.groups:
            _pair_plan(plan, inp, q0, stimuli, n_f)
        plans.append(plan)
    runner = ChunkRunner(inp.filters.transmittance, B, k_cols, n_s, plans, inp.groups, inp.adaptation,
                         np.empty((n_f, k_cols)))
    return plans, runner


# --- 3. chunks ------------------------------------------------------------------------------------------

@dataclass(eq=False)
class ChunkRunner:
    """Scores a range of filters for every planned observer: ``runner(lo, hi)``.

    One matrix product gives every cone catch of the chunk, laid out (filters, unique cone columns,
    surfaces + white + zero padding, :mod:`cvdfilter.catch_products`); per observer the metrics receive
    planes (one (F, N) array per cone) and the log catches computed once per chunk. A call writes only
    rows ``lo:hi`` of the plans' arrays and of :attr:`whites`, so chunks may run in any order, on any
    thread.
    """

    transmittance: np.ndarray
    B: np.ndarray
    k_cols: int
    n_samples: int
    plans: list
    groups: tuple
    adaptation: float
    whites: np.ndarray
    #: Per plan: the per-filter result keys and how to allocate them (dtype, fill, trailing shape);
    #: taken from the full-size stores on first use (:meth:`light` keeps them when it drops the stores).
    templates: list | None = None

    def __call__(self, lo: int, hi: int) -> int:
        from .metrics.discrimination import log_catches, rnl_points

        from .catch_products import catch_product

        n_s = self.n_samples
        Q = catch_product(self.transmittance[lo:hi], self.B).reshape(hi - lo, self.k_cols, -1)
        S, white = Q[:, :, :n_s], Q[:, :, n_s]
        self.whites[lo:hi] = white
        need_logs = "discrimination" in self.groups or "confusion" in self.groups
        logs = log_catches(S) if need_logs else np.empty(0)
        for plan in self.plans:
            c = plan.cols
            if "contrast" in self.groups:
                self._contrast(plan, [S[:, i, :] for i in c], white[:, c], lo, hi)
            if need_logs:
                points = rnl_points(logs[:, c, :], plan.rnl)  # y = P ln q: Delta S is their distance
                self._pairs(plan, points, lo, hi)
        return hi

    def _contrast(self, plan: ObserverPlan, planes: list, white: np.ndarray, lo: int, hi: int) -> None:
        from .metrics.contrast import gains_from_planes

        g = gains_from_planes(planes, white, plan.w0, plan.rms0, plan.channels, adaptation=self.adaptation)
        store = plan.store
        store["luminance_contrast_gain"][lo:hi] = g[:, 0]
        store["red_green_gain"][lo:hi] = g[:, 1]
        store["blue_yellow_gain"][lo:hi] = g[:, 2]

    def _pairs(self, plan: ObserverPlan, points, lo: int, hi: int) -> None:
        from .metrics.confusion import confusion_from_points
        from .metrics.discrimination import dense_changes, discriminable_from_points

        store, masks = plan.store, plan.masks
        assert masks is not None  # made by _pair_plan with the references
        # One pass over every pair's distance gives the median and, exactly, every count.
        more = (plan.confusion["deficient_threshold"], masks["lists"]) if plan.confusion is not None else ()
        changes, among, med = dense_changes(points, plan.rnl, masks, more)
        if "discrimination" in self.groups:
            d = discriminable_from_points(points, plan.rnl, changes, median=med)
            for key in PAIR_KEYS:
                store[f"discriminable_{key}"][lo:hi] = d[key]
            for t, counts in d["at"].items():
                for key in PAIR_KEYS:
                    store[f"discriminable_at_{t:g}_{key}"][lo:hi] = counts[key]
            store["discriminable_median_with"][lo:hi] = d["median_with"]
            store["discriminable_median_ratio"][lo:hi] = d["median_ratio"]
        if plan.confusion is not None:
            d = confusion_from_points(points, plan.confusion, changes, median=med, among=among)
            for key in CONFUSION_KEYS:
                store[f"confusion_{key}"][lo:hi] = d[key]
            store["confusion_median_with"][lo:hi] = d["median_with"]
            store["confusion_median_ratio"][lo:hi] = d["median_ratio"]

    # -- chunks as pure functions (the execution layer, cvdfilter.execution) --------------------------------

    def _templates(self) -> list:
        if self.templates is None:
            n_f = self.transmittance.shape[0]
            self.templates = [{k: (v.dtype, v.flat[0] if v.size else 0, v.shape[1:]) for k, v in p.store.items()
                               if isinstance(v, np.ndarray) and v.ndim >= 1 and v.shape[0] == n_f}
                              for p in self.plans]
        return self.templates

    def compute(self, lo: int, hi: int) -> dict:
        """Scores filters ``lo:hi`` and returns them, writing nothing shared: ``{"whites": (n, K) array,
        "stores": per plan {key: (n,) array}}`` (the per-filter result keys only)."""
        n = hi - lo
        templates = self._templates()
        plans = [dataclasses.replace(p, store={**p.store, **{k: np.full((n, *shape), fill, dtype=dtype)
                                                             for k, (dtype, fill, shape) in t.items()}})
                 for p, t in zip(self.plans, templates)]
        part = dataclasses.replace(self, transmittance=self.transmittance[lo:hi], plans=plans,
                                   whites=np.empty((n, self.k_cols)), templates=templates)
        part(0, n)
        return {"whites": part.whites, "stores": [{k: p.store[k] for k in t} for p, t in zip(plans, templates)]}

    def assemble(self, lo: int, hi: int, part: dict) -> None:
        """Copies a :meth:`compute` result into rows ``lo:hi`` of the result arrays."""
        self.whites[lo:hi] = part["whites"]
        for plan, store in zip(self.plans, part["stores"]):
            for k, v in store.items():
                plan.store[k][lo:hi] = v

    def light(self) -> ChunkRunner:
        """A copy without the full-size result arrays (what a cluster's workers need: ship it once)."""
        templates = self._templates()
        plans = [dataclasses.replace(p, store={k: v for k, v in p.store.items() if k not in t})
                 for p, t in zip(self.plans, templates)]
        return dataclasses.replace(self, plans=plans, whites=np.empty((0, self.k_cols)), templates=templates)

    def mark_undefined(self) -> None:
        """After every chunk: a filter that leaves some cone no light (a black filter) has no defined pair
        statistics (``store["undefined"]``)."""
        for plan in self.plans:
            present = [c for i, c in enumerate(plan.cols) if i != plan.observer.missing_cone]
            plan.store["undefined"] = ~np.all(self.whites[:, present] > 0, axis=1)


def _compute_chunk(runner: ChunkRunner, lo: int, hi: int) -> dict:
    return runner.compute(lo, hi)


def _call_chunk(runner: Callable[[int, int], int], lo: int, hi: int) -> None:
    runner(lo, hi)


def run_chunks(runner: Callable[[int, int], int], n_filters: int, *, chunk: int,
               progress: Progress | None = None, scheduler=None) -> None:
    """Score every chunk of ``chunk`` filters on the executor ``scheduler`` names (default: this process,
    threads; see :mod:`cvdfilter.execution`) and assemble the results in chunk order.

    A :class:`ChunkRunner` is mapped with :meth:`ChunkRunner.compute` (a pure function: the same bits on
    threads or on a cluster) and :meth:`ChunkRunner.assemble`; any other callable ``runner(lo, hi)`` that
    writes its own slice runs on local threads. ``progress("filters", done, total)`` after each chunk.
    """
    from .execution import LocalExecutor, chunk_bounds, executor, map_chunks

    bounds = chunk_bounds(n_filters, chunk)
    sizes = [hi - lo for lo, hi in bounds]
    done = 0

    def tick(n_done: int, n_total: int, i: int) -> None:
        nonlocal done
        done += sizes[i]
        if progress is not None:
            progress("filters", done, n_filters)

    if not isinstance(runner, ChunkRunner):
        for _ in map_chunks(_call_chunk, runner, bounds, scheduler=LocalExecutor(min(workers(), len(bounds) or 1)),
                            progress=tick):
            pass
        return
    ex = scheduler if hasattr(scheduler, "map") else executor(scheduler)
    try:
        if isinstance(ex, LocalExecutor) and ex.threads > len(bounds):
            ex = LocalExecutor(max(1, len(bounds)))
        local = isinstance(ex, LocalExecutor)
        runner._templates()  # once, before the threads share the runner
        shared = runner if local else runner.light()
        for (lo, hi), part in zip(bounds, ex.map(_compute_chunk, shared, bounds, progress=tick)):
            runner.assemble(lo, hi, part)
    finally:
        if ex is not scheduler:
            ex.close()

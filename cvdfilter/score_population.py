"""Populations in the scorecard: members scored as arrays over (filters, members), then summarised per metric.

A population (:class:`~cvdfilter.observers.population.Population`, a spec with ``n=N``) is scored in blocks
of members, every metric vectorised over filters and members with the fixed-observer path's arithmetic
(:func:`population_scores`, :class:`MemberBlock`); its JSON entry
(:func:`population_entry`) gives every per-observer metric as ``{mean, sd, p2_5, p50, p97_5}`` over the
members and the share of members helped with a Wilson 95 % interval (:mod:`cvdfilter.metrics.population_stats`).

Public: :func:`is_population`, :func:`score_populations`, :func:`population_scores`, :func:`population_summaries`,
:func:`population_entry`, :class:`MemberBlock`, :data:`MEMBER_BLOCK`, :data:`SETS_PER_CHUNK`, :data:`STATS`,
:data:`CONTRAST_KEYS`.
"""

from __future__ import annotations

import threading

import numpy as np

from .score_plan import CONFUSION_KEYS, PAIR_KEYS

_CONFUSION_KEYS, _PAIR_KEYS = CONFUSION_KEYS, PAIR_KEYS

__all__ = ["is_population", "score_populations", "population_scores", "population_summaries", "population_entry",
           "MemberBlock", "MEMBER_BLOCK", "SETS_PER_CHUNK", "STATS", "CONTRAST_KEYS"]

#: Statistics of a population metric (JSON keys), from metrics.population_stats.STATISTICS.
STATS = ("mean", "sd", "p2_5", "p50", "p97_5")
CONTRAST_KEYS = ("luminance_contrast_gain", "red_green_gain", "blue_yellow_gain")
_STATS = STATS
_CONTRAST_KEYS = CONTRAST_KEYS


def is_population(o) -> bool:
    """True for a :class:`~cvdfilter.observers.population.Population` (checked by name: no import)."""
    return type(o).__name__ == "Population"


def score_populations(inp, per_obs: list, groups, progress=None, scheduler="local") -> None:
    """Fill ``per_obs[k]`` for every population among ``inp.observers`` (a
    :class:`~cvdfilter.score_plan.ScoreInputs`) with :func:`population_scores`, with the run's settings,
    on one executor (``scheduler``: a name or an :class:`~cvdfilter.execution.Executor`; default this process)."""
    from .execution import executor

    ex = scheduler if hasattr(scheduler, "map") else executor(scheduler)
    try:
        for k, pop in enumerate(inp.observers):
            if is_population(pop):
                per_obs[k] = population_scores(inp, pop, groups, progress, scheduler=ex)
    finally:
        if ex is not scheduler:
            ex.close()


#: Members per block: the block's cone basis (wavelengths x members x 3 x (surfaces + 1), float64) stays
#: near 30 MB, so memory is bounded whatever the population size.
MEMBER_BLOCK = 32
#: Point sets (filter x member) per chunk of the filter loop: the chunk's cone catches, logs and points
#: (float64) stay near 8 MB each per thread; large enough for an efficient matrix product.
SETS_PER_CHUNK = 3200


def population_scores(inp, pop, groups, progress=None, scheduler="local") -> dict:
    """Per-observer arrays of every member of ``pop``: (filters, members), or (members,) for values that do
    not depend on the filter.

    Vectorised over members: members are taken in blocks of :data:`MEMBER_BLOCK`; per block the
    no-filter references of every member are made at once (:class:`MemberBlock`) and the filters run in
    chunks of ``SETS_PER_CHUNK // MEMBER_BLOCK``. Every (block, chunk of filters) is one task on the
    executor ``scheduler`` names or is (:mod:`cvdfilter.execution`; default this process), so blocks run side
    by side; a block is built where its tasks run (once per thread or worker: :func:`_block_for`) and every
    metric comes back as an array over (filters, members), assembled in task order: the same bits wherever
    the tasks ran. The arithmetic per member is the fixed-observer path's
    (:class:`~cvdfilter.score_plan.ChunkRunner`), so a member scores exactly as the same observer scored alone.
    """
    from .execution import chunk_bounds, executor

    ex = scheduler if hasattr(scheduler, "map") else executor(scheduler)
    work = _PopulationWork(inp, pop, tuple(groups), chunk_bounds(pop.n, MEMBER_BLOCK),
                           chunk_bounds(len(inp.filters), max(1, SETS_PER_CHUNK // MEMBER_BLOCK)))
    store = _allocate(inp, pop, groups)
    tasks = work.tasks()

    def tick(n_done: int, n_total: int, i: int) -> None:
        if progress is not None:
            progress("members", pop.n * n_done // n_total, pop.n)

    try:
        for (b, c), part in zip(tasks, ex.map(_run_task, work, [(t, t + 1) for t in range(len(tasks))],
                                              progress=tick)):
            (lo, hi), (f_lo, f_hi) = work.blocks[b], work.filter_chunks[c]
            for key, v in part.items():
                if store[key].ndim == 1:  # per member (no filter): sent with the block's first chunk
                    store[key][lo:hi] = v
                else:
                    store[key][f_lo:f_hi, lo:hi] = v
    finally:
        _LOCAL.__dict__.clear()  # this thread's cached block (pool threads end with the map)
        if ex is not scheduler:
            ex.close()
    return store


class _PopulationWork:
    """What every task of one population's scoring shares (shipped once to a cluster's workers): the run's
    inputs, the population, the member blocks and the chunks of filters."""

    def __init__(self, inp, pop, groups: tuple, blocks: list, filter_chunks: list) -> None:
        import os
        import uuid

        self.inp, self.pop, self.groups = inp, pop, groups
        self.blocks, self.filter_chunks = blocks, filter_chunks
        self.token = f"{os.getpid()}-{uuid.uuid4().hex}"  # names this run in the per-thread block cache

    def tasks(self) -> list[tuple[int, int]]:
        """(block index, filter chunk index) of every task, block by block."""
        return [self.task(t) for t in range(len(self.blocks) * len(self.filter_chunks))]

    def task(self, t: int) -> tuple[int, int]:
        """(block index, filter chunk index) of task ``t``."""
        return divmod(t, len(self.filter_chunks))


_LOCAL = threading.local()


def _block_for(work: _PopulationWork, b: int) -> MemberBlock:
    """Member block ``b`` of ``work``, built once per thread (or worker) that runs its tasks: the last block
    a thread built is kept (with its cone basis, reused as the next block's buffer)."""
    key = (work.token, b)
    cached = getattr(_LOCAL, "block", None)
    if cached is not None and cached[0] == key:
        return cached[1]
    lo, hi = work.blocks[b]
    buffer = cached[1].B if cached is not None else None
    _LOCAL.block = None  # the old block goes before the new one is built (memory)
    block = MemberBlock(work.inp, work.pop, lo, hi, work.groups, buffer=buffer)
    _LOCAL.block = (key, block)
    return block


def _run_task(work: _PopulationWork, t: int, _t1: int) -> dict:
    b, c = work.task(t)
    block = _block_for(work, b)
    f_lo, f_hi = work.filter_chunks[c]
    out = block.compute(f_lo, f_hi)
    if c == 0:
        out.update(block.member_values())
    return out


def _allocate(inp, pop, groups) -> dict:
    """The population's arrays: (filters, members) per metric, (members,) for values without a filter."""
    n_f, n = len(inp.filters), pop.n
    store: dict = {}

    def arr(key, dtype=float, fill=np.nan, per_filter=True):
        store[key] = np.full((n_f, n) if per_filter else (n,), fill, dtype=dtype)

    pairs = "discrimination" in groups or "confusion" in groups
    if "contrast" in groups:
        for key in CONTRAST_KEYS:
            arr(key)
    if pairs and "confusion" in groups and pop.kind != "normal":
        for key in CONFUSION_KEYS:
            arr(f"confusion_{key}", np.int64, 0)
        arr("confusion_normally_discriminable", np.int64, 0, per_filter=False)
        arr("confusion_median_without", per_filter=False)
        arr("confusion_median_with")
        arr("confusion_median_ratio")
    if pairs and "discrimination" in groups:
        for key in PAIR_KEYS:
            arr(f"discriminable_{key}", np.int64, 0)
        for x in inp.distribution_thresholds:
            for key in PAIR_KEYS:
                arr(f"discriminable_at_{float(x):g}_{key}", np.int64, 0)
        arr("discriminable_median_without", per_filter=False)
        arr("discriminable_median_with")
        arr("discriminable_median_ratio")
    arr("undefined", bool, False)
    return store


class MemberBlock:
    """Scores members ``lo:hi`` of a population for ranges of filters.

    Made once per block (where its tasks run): the cone basis of its members, and per member the
    references without a filter (contrast RMS, the receptor-noise transform rotated to the member's own
    points, its close pairs at every radius, the normally discriminable pairs of its own normal observer
    and the median over them). :meth:`compute` scores filters ``f_lo:f_hi`` and returns the results,
    writing nothing shared; :meth:`member_values` gives the values without a filter. ``buffer``: a float64
    array of the cone basis' size to reuse (the previous block's), else one is allocated.
    """

    def __init__(self, inp, pop, lo: int, hi: int, groups, buffer: np.ndarray | None = None) -> None:
        from .catch_products import stimuli_columns
        from .metrics.basis_kernel import basis_and_catches

        self.lo, self.hi = lo, hi
        self.transmittance = inp.filters.transmittance
        self.adaptation = inp.adaptation
        self.distribution_thresholds = tuple(float(x) for x in inp.distribution_thresholds)
        self.n_s, self.mb = len(inp.surfaces), hi - lo
        self.contrast = "contrast" in groups
        self.pairs = "discrimination" in groups or "confusion" in groups
        self.discrimination = "discrimination" in groups
        self.with_confusion = "confusion" in groups and pop.kind != "normal"
        self.missing = pop.missing_cone
        # The surfaces, the white, zero columns: the fixed path's columns (catch_products), so the same bits.
        stimuli = stimuli_columns(inp.illuminant.spd, inp.surfaces.reflectance)
        self.width = stimuli.shape[1]
        # B[lambda, (member, cone, sample)]: the products of the fixed path's cone basis, member by member,
        # and their sum over wavelength (the catches without a filter), as the fixed path forms them.
        B, q0all = basis_and_catches(pop.fundamentals[lo:hi], stimuli, buffer)
        self.B = B.reshape(inp.grid.size, -1)
        q0 = np.ascontiguousarray(q0all[:, :, :self.n_s].transpose(0, 2, 1))  # (members, surfaces, 3)
        self.w0 = np.ascontiguousarray(q0all[:, :, self.n_s])  # (members, 3)
        if self.contrast:
            self._contrast_references(pop, q0)
        if self.pairs:
            self._pair_references(inp, pop, stimuli, q0)

    def _contrast_references(self, pop, q0: np.ndarray) -> None:
        from .metrics.contrast import contrast_rms, opponent_channels
        from .observers.spaces import von_kries_gains

        self.channels = opponent_channels(pop.kind, pop.deficiency, pop.luminance_weights)
        with np.errstate(divide="ignore", invalid="ignore"):
            g0 = von_kries_gains(self.w0, adaptation=1.0)
        self.rms0 = contrast_rms([q0[:, :, c] for c in range(3)], self.w0, self.channels, gains=g0)

    def _pair_references(self, inp, pop, stimuli: np.ndarray, q0: np.ndarray) -> None:
        """Per member, in the offset layout of the chunks' pair distances: the pairs its own normal observer
        tells apart without a filter (the median's pairs), its close pairs at every radius and its confused
        pair sets, all from float64 squared distances; the median without a filter from the kernel."""
        from .metrics.discrimination import log_catches, receptor_noise, rnl_transform
        from .metrics.pair_statistics import sq_distances
        from .metrics.pairs import dense_pair_statistics, pair_count, principal_rotations

        n_s = self.n_s
        noise = receptor_noise(self.missing, weber=inp.weber_fraction, cone_ratios=inp.cone_ratios)
        normal_noise = receptor_noise(None, weber=inp.weber_fraction, cone_ratios=inp.cone_ratios)
        self.total = pair_count(n_s)
        base = np.asarray(pop.base_fundamentals[self.lo:self.hi], dtype=float)
        nq0 = np.matmul(stimuli[:, :n_s].T, base)
        yn = log_catches(nq0) @ rnl_transform(normal_noise).T
        seen = sq_distances([yn[:, :, r] for r in range(yn.shape[2])]) >= float(inp.normal_threshold) ** 2
        # The receptor-noise transform, rotated per member so that its first coordinate has the
        # largest spread (as pair_reference does for one observer).
        t = rnl_transform(noise)
        logs0 = log_catches(q0)
        rot = principal_rotations(np.matmul(logs0, t.T))
        self.t = np.matmul(t.T[None], rot).transpose(0, 2, 1)  # (members, k, 3)
        y0 = np.matmul(logs0, self.t.transpose(0, 2, 1))  # (members, surfaces, k)
        self.k = self.t.shape[1]
        planes = [y0[:, :, r] for r in range(self.k)]
        d2 = sq_distances(planes)
        self.t0, self.td = float(inp.discrimination_threshold), float(inp.deficient_threshold)
        radii = {self.t0} | (set(self.distribution_thresholds) if self.discrimination else set())
        if self.with_confusion:
            radii.add(self.td)
        with np.errstate(invalid="ignore"):
            self.close = {r: d2 < r * r for r in sorted(radii)}
        self.keep = seen  # the median's pairs: the normally discriminable ones
        # A first guess for the kernel's median search (only its speed depends on it): every 16th pair's median.
        guess = np.median(d2[:, ::16], axis=1) if d2.shape[1] >= 16 else None
        self.m0 = np.sqrt(dense_pair_statistics(planes, [], [], seen, guess=guess)[2])
        if self.with_confusion:
            self.unseen = ~seen
            with np.errstate(invalid="ignore"):
                self.unseen_close = self.unseen & (d2 < self.td * self.td)

    def member_values(self) -> dict:
        """The block's values that do not depend on the filter, (members,) each."""
        out: dict = {}
        if self.pairs and self.with_confusion:
            out["confusion_normally_discriminable"] = self.keep.sum(axis=1)
            out["confusion_median_without"] = self.m0
        if self.pairs and self.discrimination:
            out["discriminable_median_without"] = self.m0
        return out

    def compute(self, f_lo: int, f_hi: int) -> dict:
        """Scores filters ``f_lo:f_hi`` for the block's members: ``{key: (filters, members) array}``."""
        from .catch_products import catch_product

        mb, n_s = self.mb, self.n_s
        nf = f_hi - f_lo
        Q = catch_product(self.transmittance[f_lo:f_hi], self.B).reshape(nf, mb, 3, self.width)
        S, white = Q[..., :n_s], Q[..., n_s]
        present = [c for c in range(3) if c != self.missing]
        out = {"undefined": ~np.all(white[:, :, present] > 0, axis=2)}
        if self.contrast:
            out.update(self._contrast(Q))
        if self.pairs:
            out.update(self._pair_results(*self._pair_counts(S)))
        return out

    def _contrast(self, Q: np.ndarray) -> dict:
        """The contrast gains from the chunk's catches ``Q`` (filters, members, 3, surfaces + white + padding)."""
        from .metrics.contrast import contrast_rms
        from .observers.spaces import von_kries_gains

        nf, mb, n_s = Q.shape[0], self.mb, self.n_s
        S, white = Q[..., :n_s], Q[..., n_s]
        catches = Q.reshape(nf * mb, 3, self.width)  # one C-ordered array: the compiled loop reads it directly
        w1 = white.reshape(nf * mb, 3)
        w0 = np.broadcast_to(self.w0, (nf, mb, 3)).reshape(nf * mb, 3)
        rms0 = np.broadcast_to(self.rms0, (nf, mb, 3)).reshape(nf * mb, 3)
        planes = [S[:, :, c, :].reshape(nf * mb, n_s) for c in range(3)]  # views: elementwise work, same bits
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            g1 = von_kries_gains(w1, w0, adaptation=self.adaptation)
            g = contrast_rms(planes, w1, self.channels, gains=g1, catches=catches) / rms0
        g = np.where(np.isfinite(g), g, np.nan).reshape(nf, mb, 3)
        return {key: g[:, :, c] for c, key in enumerate(CONTRAST_KEYS)}

    def _pair_counts(self, S: np.ndarray) -> tuple:
        """Per radius (close without, close with, close both) and, for confusion, the counts among the
        unseen pairs; the median Delta S with the filter. Each (filters, members)."""
        from .metrics.discrimination import log_catches
        from .metrics.pairs import dense_pair_statistics

        nf, mb, n_s = S.shape[0], self.mb, self.n_s
        logs = log_catches(S)
        y = np.matmul(self.t[None], logs)  # (filters, members, k, surfaces): y = P ln q per member
        planes = y.reshape(nf * mb, self.k, n_s).transpose(1, 0, 2)  # (k, sets, surfaces): a view, no copy
        # Every pair's distance once, in a compiled kernel: the counts at every radius (among the member's
        # own pair sets) and the median over its normally discriminable pairs, row by row (filter x member).
        radii = list(self.close)
        listed = list(self.close.items())
        if self.with_confusion:
            listed += [(self.td, self.unseen), (self.td, self.unseen_close)]
        close, among, med2 = dense_pair_statistics(planes, radii, listed, self.keep, guess=self.m0 ** 2)
        med = np.sqrt(med2).reshape(nf, mb)
        counts = {r: (mask.sum(axis=1), close[i].reshape(nf, mb), among[i].reshape(nf, mb))
                  for i, (r, mask) in enumerate(self.close.items())}
        extra = [a.reshape(nf, mb) for a in among[len(radii):]]
        return counts, extra, med

    def _pair_results(self, counts: dict, extra: list, med: np.ndarray) -> dict:
        out = {}
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = np.where(self.m0 > 0, med / self.m0, np.nan)
        total = self.total
        if self.discrimination:
            for prefix, r in [("discriminable", self.t0)] + [(f"discriminable_at_{x:g}", x)
                                                            for x in self.distribution_thresholds]:
                close0, close1, both = counts[r]
                out[f"{prefix}_without"] = total - close0
                out[f"{prefix}_with"] = total - close1
                out[f"{prefix}_gained"] = close0 - both
                out[f"{prefix}_lost"] = close1 - both
            out["discriminable_median_with"] = med
            out["discriminable_median_ratio"] = ratio
        if self.with_confusion:
            close0, close1, both = counts[self.td]
            without = close0 - self.unseen_close.sum(axis=1)
            with_ = close1 - extra[0]
            both_set = both - extra[1]
            out["confusion_without"] = without
            out["confusion_with"] = with_
            out["confusion_resolved"] = without - both_set
            out["confusion_created"] = with_ - both_set
            out["confusion_median_with"] = med
            out["confusion_median_ratio"] = ratio
        return out


def population_summaries(card) -> dict:
    """Per population index: metric -> statistics arrays over filters (computed once, vectorised)."""
    from .metrics.population_stats import RATIO_TOLERANCE, share_helped, spread

    out = {}
    for k, pop in enumerate(card.observers):
        if not is_population(pop):
            continue
        o = card.per_observer[k]
        undefined = o.get("undefined", np.zeros((len(card), pop.n), dtype=bool))
        stats, helped = {}, {}
        for key, v in o.items():
            if key == "undefined":
                continue
            v = np.asarray(v, dtype=float)
            if v.ndim == 2 and key not in _CONTRAST_KEYS:
                v = np.where(undefined, np.nan, v)
            stats[key] = spread(v)
        defined = ~undefined
        if "red_green_gain" in o:
            for key in ("red_green_gain", "blue_yellow_gain"):
                g = np.asarray(o[key], dtype=float)
                helped[key] = share_helped(np.nan_to_num(g, nan=0.0) > 1.0 + RATIO_TOLERANCE, np.isfinite(g))
        if "discriminable_gained" in o:
            net = np.asarray(o["discriminable_gained"]) - np.asarray(o["discriminable_lost"])
            helped["discriminable_pairs_net"] = share_helped(net > 0, defined)
        if "confusion_resolved" in o:
            net = np.asarray(o["confusion_resolved"]) - np.asarray(o["confusion_created"])
            helped["confusion_pairs_net"] = share_helped(net > 0, defined)
        ratio = o.get("confusion_median_ratio", o.get("discriminable_median_ratio"))
        if ratio is not None:
            r = np.where(undefined, np.nan, np.asarray(ratio, dtype=float))
            helped["median_delta_s_ratio"] = share_helped(np.nan_to_num(r, nan=0.0) > 1.0 + RATIO_TOLERANCE,
                                                          np.isfinite(r))
        if "discernible_ratio" in o:  # helped: more discernible colours with the filter than without
            r = np.asarray(o["discernible_ratio"], dtype=float)
            helped["discernible_ratio"] = share_helped(np.nan_to_num(r, nan=0.0) > 1.0 + RATIO_TOLERANCE,
                                                       np.isfinite(r))
        out[k] = (stats, helped)
    return out

def population_entry(card, i: int, k: int) -> dict:
    """A population's entry: every per-observer metric as ``{mean, sd, p2_5, p50, p97_5}`` over members
    (counts per count), ``helped`` shares with Wilson 95 % intervals, ``members`` when asked."""
    from .scorecard import _at_key, _num

    pop = card.observers[k]
    stats, helped = card._population_summaries[k]
    st = card.settings

    def s(key, digits: int = 6):
        v = stats[key]
        if v["n"].ndim:
            v = {name: a[i] for name, a in v.items()}
        if int(v["n"]) == 0:
            return None
        return {name: _num(v[name], digits) for name in _STATS}

    d = {"observer": pop.spec, "population": {"n": pop.n, "variation": pop.variation, "seed": pop.seed}}
    if "contrast" in card.metrics:
        for key in _CONTRAST_KEYS:
            d[key] = s(key)
    if "discrimination" in card.metrics:
        pairs = {key: s(f"discriminable_{key}") for key in _PAIR_KEYS}
        d["discriminable_pairs"] = None if pairs["with"] is None else {
            "threshold_jnd": st["discrimination_threshold"], **pairs}
        dist = {_at_key(t): {key: s(f"discriminable_at_{t:g}_{key}") for key in _PAIR_KEYS}
                for t in st["distribution_thresholds"]}
        dist["median_without"] = s("discriminable_median_without", 4)
        dist["median_with"] = s("discriminable_median_with", 4)
        dist["median_ratio"] = s("discriminable_median_ratio")
        d["delta_s_distribution"] = None if pairs["with"] is None else dist
    if "confusion" in card.metrics:
        if "confusion_with" not in stats or s("confusion_with") is None:
            d["confusion_pairs"] = None
        else:
            d["confusion_pairs"] = {
                "normal_threshold_jnd": st["normal_threshold"],
                "deficient_threshold_jnd": st["deficient_threshold"],
                "normally_discriminable": s("confusion_normally_discriminable"),
                **{key: s(f"confusion_{key}") for key in _CONFUSION_KEYS},
                "median_delta_s_without": s("confusion_median_without", 4),
                "median_delta_s_with": s("confusion_median_with", 4),
                "median_delta_s_ratio": s("confusion_median_ratio"),
            }
    if "discernible" in card.metrics:
        from .scorecard_json import discernible_entry

        d["discernible_colours"] = discernible_entry(card, i, k, summary=s)
    d["helped"] = {key: {"share": _num(h["share"][i]), "ci_low": _num(h["ci_low"][i]),
                         "ci_high": _num(h["ci_high"][i]), "helped": int(h["helped"][i]), "n": int(h["n"][i])}
                   for key, h in helped.items()}
    if card.members:
        o = card.per_observer[k]
        undefined = o.get("undefined")
        mem = {}
        for key, v in o.items():
            if key == "undefined":
                continue
            v = np.asarray(v)
            row = v[i] if v.ndim == 2 else v
            if undefined is not None and v.ndim == 2 and key not in _CONTRAST_KEYS:
                row = np.where(undefined[i], np.nan, row.astype(float))
            mem[key] = [_num(x) if isinstance(x, float) else x for x in row.tolist()]
        d["members"] = mem
    return d

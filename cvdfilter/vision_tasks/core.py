"""``cvdfilter.tasks``: how model observers would do on colour-vision tasks of our own design, with and without
each filter.

Tasks (registry :data:`TASKS`): ``arrangement`` and ``arrangement-fine``
(hue-circle arrangement, :mod:`.arrangement`, scored by the moment method,
:mod:`.moments`), ``plates`` (figure-ground dot plates, :mod:`.plates`) and
``rayleigh`` (the Rayleigh match, :mod:`.rayleigh`). docs/tasks.md documents the
designs, the scoring, the verdict criteria and the references. The result type, its verdicts and views
and the task constants live in :mod:`.result` (re-exported here).

Observers: spec strings, :class:`~cvdfilter.observers.observer.Observer` objects,
or :class:`ObserverMembers` (a name, a stack of fundamentals (n, n_wl, 3) and the
missing cone), so that a population's members run as one array.

Public: :func:`tasks`, :class:`TaskResult`, :class:`ObserverMembers`, :data:`TASKS`, :data:`DEFAULT_OBSERVERS`,
:data:`ARRANGEMENT_MARGIN`, :data:`PLATE_MARGIN`, :data:`RAYLEIGH_MARGIN`, :data:`TRIAL_NOISE`, :data:`TASKS_CAUTION`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import InputError
from ..metrics.discrimination import CONE_RATIOS, WEBER_FRACTION, receptor_noise, rnl_transform
from ..spectra.grid import DEFAULT_GRID, Grid
from . import moments as _moments
from .arrangement import ARRANGEMENT_DESIGNS, arrange, cap_luv, caps
from .plates import READ_THRESHOLD, legibility, plate_designs
from .rayleigh import MATCH_THRESHOLD, PRIMARIES_NM, PRIMARY_FWHM_NM, rayleigh_match, reference_calibration
from .result import (ARRANGEMENT_MARGIN, DEFAULT_OBSERVERS, PLATE_MARGIN, RAYLEIGH_MARGIN, ROBUSTNESS_FACTORS,
                     TASKS, TASKS_CAUTION, TRIAL_NOISE, TaskResult)

__all__ = ["tasks", "TaskResult", "ObserverMembers", "TASKS", "DEFAULT_OBSERVERS", "ARRANGEMENT_MARGIN",
           "PLATE_MARGIN", "RAYLEIGH_MARGIN", "TRIAL_NOISE", "TASKS_CAUTION"]

#: Caps x trials x filters x members handled at once by the arranger (memory bound, about 100 MB per chunk).
_CHUNK_CAPS = 2_000_000


@dataclass(frozen=True)
class ObserverMembers:
    """One observer or a population as one array.

    Attributes
    ----------
    name : str
        Label in the outputs (a spec string).
    fundamentals : numpy.ndarray
        Energy-based L, M, S fundamentals of the members, shape (n_members, n_wl, 3).
    missing_cone : int or None
        0, 1, 2 for a dichromat (the same for all members), else None.
    population : dict or None
        ``{n, variation, seed}`` of a sampled population (set from a population spec); a stack of more than
        one member given without it is reported as a population with ``variation`` and ``seed`` null.
    """

    name: str
    fundamentals: np.ndarray
    missing_cone: int | None = None
    population: dict | None = None


def _members(item, grid: Grid) -> ObserverMembers:
    if isinstance(item, ObserverMembers):
        f = np.asarray(item.fundamentals, dtype=float)
        if f.ndim != 3 or f.shape[1:] != (grid.size, 3):
            raise InputError(f"fundamentals must be (n, {grid.size}, 3), got {f.shape}", source=item.name)
        if item.population is None and f.shape[0] > 1:
            from dataclasses import replace

            return replace(item, population={"n": int(f.shape[0]), "variation": None, "seed": None})
        return item
    from ..observers.observer import observer
    from ..observers.population import Population, is_population_spec, population

    if isinstance(item, Population) or is_population_spec(item):
        pop = item if isinstance(item, Population) else population(item, grid)
        return ObserverMembers(pop.spec, np.asarray(pop.fundamentals), pop.centre.missing_cone,
                               {"n": int(pop.n), "variation": pop.variation, "seed": int(pop.seed)})
    o = observer(item, grid)
    return ObserverMembers(o.spec, np.asarray(o.fundamentals)[None], o.missing_cone)


def arrangement_scores(task: str, fundamentals, noise, weights, uv, z, *, trial_noise: float = TRIAL_NOISE,
                       grid: Grid = DEFAULT_GRID) -> dict[str, np.ndarray]:
    """Moment scores of a model observer's arrangements.

    Parameters
    ----------
    task : str
        ``arrangement`` or ``arrangement-fine``.
    fundamentals : array_like
        (M, n_wl, 3) members' fundamentals.
    noise : array_like
        e_L, e_M, e_S (NaN for a missing cone).
    weights : array_like
        Light reaching the eye per unit reflectance, (F, n_wl) (illuminant x filter; row 0 no filter).
    uv : array_like
        CIELUV u*, v* of the caps under the reference light, (N, 2).
    z : array_like
        Standard normal draws, (T, N, 3), shared by all filters (common random numbers).

    Returns
    -------
    dict of numpy.ndarray
        The scores of :data:`moments.SCORE_NAMES`, each (F, M, T), and ``order`` (F, M, T, N), the cap order.
    """
    _, _, refl = caps(task, grid)
    e = np.asarray(noise, dtype=float)
    p = rnl_transform(e)
    catches = np.einsum("nw,fw,mwc->fmnc", refl, np.asarray(weights), np.asarray(fundamentals))
    f = np.log(np.maximum(catches, 1e-300))  # (F, M, N, 3)
    # per-cap sd trial_noise x e_i / sqrt(2): the difference of two caps then has sd trial_noise JND
    jitter = (trial_noise / np.sqrt(2)) * np.nan_to_num(e) * np.asarray(z)  # (T, N, 3)
    n_f, n_m = f.shape[:2]
    t, n = jitter.shape[:2]
    order = np.empty((n_f, n_m, t, n), dtype=np.intp)
    step = max(1, _CHUNK_CAPS // (n_f * t * n))  # members per chunk: bounded memory for large populations
    for m0 in range(0, n_m, step):
        noisy = f[:, m0:m0 + step, None] + jitter[None, None]  # (F, m, T, N, 3)
        order[:, m0:m0 + step] = arrange(noisy @ p.T)
    out = _moments.moment_scores(uv, order)
    out["order"] = order  # (F, M, T, N): the arrangements themselves (figures draw one)
    return out


@dataclass(frozen=True, eq=False)
class _TaskWork:
    """What every observer's chunk of :func:`tasks` needs (shipped once to a cluster's workers)."""

    members: list
    task_list: tuple
    weights: np.ndarray
    transmittance: np.ndarray
    uv_by_task: dict
    z_by_task: dict
    plates: tuple
    calibration: Any
    grid: Grid
    weber_fraction: float
    cone_ratios: Any
    trial_noise: float


def _member_scores(w: _TaskWork, lo: int, hi: int) -> dict:
    """Scores of observers ``lo:hi`` on every task: {(task, observer name): scores}."""
    scores: dict = {}
    for m in w.members[lo:hi]:
        e = receptor_noise(m.missing_cone, weber=w.weber_fraction, cone_ratios=w.cone_ratios)
        fund = np.asarray(m.fundamentals, dtype=float)
        for t in w.task_list:
            if t in ARRANGEMENT_DESIGNS:
                scores[(t, m.name)] = arrangement_scores(t, fund, e, w.weights, w.uv_by_task[t], w.z_by_task[t],
                                                         trial_noise=w.trial_noise, grid=w.grid)
            elif t == "plates":
                scores[(t, m.name)] = _plate_scores(w.plates, w.weights, fund, e)
            else:
                # the filter sits in front of the instrument: it scales the primaries, not the room light
                r = rayleigh_match(fund[None], w.grid.wavelengths, e, transmittance=w.transmittance[:, None, :],
                                   calibration=w.calibration)
                scores[(t, m.name)] = r
    return scores


def tasks(filters, *, observers=DEFAULT_OBSERVERS, tasks=tuple(TASKS), trials: int = 500, seed: int = 0,
          illuminant: str = "D65", trial_noise: float = TRIAL_NOISE, weber_fraction: float = WEBER_FRACTION,
          cone_ratios=CONE_RATIOS, grid: Grid = DEFAULT_GRID, scheduler=None) -> TaskResult:
    """How model observers would do on our colour-vision tasks, without and with each filter.

    Parameters
    ----------
    filters
        Anything :func:`cvdfilter.load_filters` accepts (spec strings, files, example names, arrays).
    observers : sequence
        Observer spec strings, :class:`~cvdfilter.Observer` objects or :class:`ObserverMembers`
        (a population's members stacked as fundamentals (n, n_wl, 3)).
    tasks : sequence of str
        Any of :data:`TASKS`.
    trials : int
        Arrangement trials per observer member (>= 1).
    seed : int
        Seed of the trial noise (the same draws serve every filter and observer).
    illuminant : str
        The light the caps and plates are seen in (also the reference light of the scoring).
    trial_noise : float
        Per-cap noise of the arrangement trials in units of the receptor noise (> 0).
    weber_fraction, cone_ratios
        Receptor-noise model constants (:mod:`cvdfilter.metrics.discrimination`).
    scheduler : str or Executor, optional
        Where the observers' work runs (:mod:`cvdfilter.execution`: ``local``, ``local:N``, a Dask
        address); one chunk per observer, the same numbers wherever they ran.

    Returns
    -------
    TaskResult
        ``.to_dict()`` is the JSON of ``cvdfilter tasks --format json``.
    """
    from ..spectra.filters import load_filters
    from ..spectra.illuminants import illuminant as make_illuminant

    task_list = _check_tasks(tasks, trials, trial_noise)
    fs = load_filters(filters, grid=grid)
    ill = make_illuminant(illuminant, grid)
    members = [_members(o, grid) for o in ([observers] if isinstance(observers, str) else observers)]
    names = [m.name for m in members]
    if len(set(names)) != len(names):
        raise InputError("an observer is listed twice", source=", ".join(names))
    transmittance = np.vstack([np.ones((1, grid.size)), fs.transmittance])  # row 0: no filter
    weights = transmittance * ill.spd[None, :]
    rng = np.random.default_rng(seed)
    scores: dict = {}
    uv_by_task = {}
    z_by_task = {}
    for t in task_list:
        if t in ARRANGEMENT_DESIGNS:
            _, _, refl = caps(t, grid)
            uv_by_task[t] = cap_luv(refl, ill.spd, grid)[:, 1:]
            z_by_task[t] = rng.standard_normal((int(trials), refl.shape[0], 3))
    plates = plate_designs(grid) if "plates" in task_list else ()
    calibration = reference_calibration(grid.wavelengths) if "rayleigh" in task_list else None
    from ..execution import chunk_bounds, map_chunks

    shared = _TaskWork(members, task_list, weights, transmittance, uv_by_task, z_by_task, plates, calibration,
                       grid, weber_fraction, cone_ratios, trial_noise)
    for part in map_chunks(_member_scores, shared, chunk_bounds(len(members), 1), scheduler=scheduler):
        scores.update(part)  # in observer order, whatever order the chunks finished in
    info = tuple({"source": s, **{k: v for k, v in i.items() if k in ("spec", "path", "units", "sha256")}}
                 for s, i in zip(fs.sources or ("",) * len(fs), fs.info or ({},) * len(fs)))
    settings = _settings(trials, seed, ill.name, uv_by_task, weber_fraction, cone_ratios, trial_noise, calibration)
    populations = {m.name: m.population for m in members if m.population is not None}
    return TaskResult(tuple(fs.names), info, tuple(names), task_list, scores, settings, populations)


def _check_tasks(tasks, trials, trial_noise) -> tuple:
    """The tasks asked for, each once, after checking them and the trial settings up front."""
    task_list = tuple(dict.fromkeys([tasks] if isinstance(tasks, str) else tasks))
    for t in task_list:
        if t not in TASKS:
            raise InputError(f"unknown task '{t}'", source=str(t), hint="use " + ", ".join(TASKS))
    if isinstance(trials, bool) or int(trials) != trials or trials < 1:
        raise InputError(f"trials must be a whole number >= 1, got {trials}", source="--trials")
    if not trial_noise > 0:
        raise InputError(f"trial noise must be > 0, got {trial_noise}", source="--trial-noise")
    return task_list


def _plate_scores(plates, weights: np.ndarray, fund: np.ndarray, e: np.ndarray) -> dict:
    """Legibility of every plate, (filters, members, plates), in the receptor-noise space."""
    p = rnl_transform(e)
    refl = np.stack([pl.reflectance for pl in plates])  # (P, D, n_wl)
    catches = np.einsum("pdw,fw,mwc->fmpdc", refl, weights, fund)
    y = np.log(np.maximum(catches, 1e-300)) @ p.T
    leg = np.stack([legibility(y[:, :, i], pl.figure) for i, pl in enumerate(plates)], axis=-1)
    return {"legibility": leg}


def _settings(trials, seed, illuminant_name: str, uv_by_task: dict, weber_fraction, cone_ratios, trial_noise,
              calibration) -> dict:
    """Every setting and model constant of a run, for the result's JSON."""
    return {"trials": int(trials), "seed": int(seed), "illuminant": illuminant_name, "cap_uv": uv_by_task,
            "models": {"weber_fraction": weber_fraction, "cone_ratios": list(cone_ratios),
                       "trial_noise": trial_noise, "arrangement_margin": ARRANGEMENT_MARGIN,
                       "plate_read_threshold": READ_THRESHOLD, "plate_margin": PLATE_MARGIN,
                       "rayleigh_margin": RAYLEIGH_MARGIN, "rayleigh_match_threshold_jnd": MATCH_THRESHOLD,
                       "robustness_factors": list(ROBUSTNESS_FACTORS),
                       "rayleigh_primaries_nm": dict(PRIMARIES_NM), "rayleigh_primary_fwhm_nm": PRIMARY_FWHM_NM,
                       "rayleigh_calibration": calibration,
                       "arrangement_scoring": "moment method, Vingrys & King-Smith 1988, CIELUV u*v* under "
                                              "the illuminant (CIE 1931 2 deg)",
                       "discrimination": "receptor-noise-limited model, Vorobyev & Osorio 1998",
                       "caps": "Munsell renotation colours (colour-science), reflectances by Jakob & Hanika "
                               "2019; our own design"}}

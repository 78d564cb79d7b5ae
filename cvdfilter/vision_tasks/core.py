"""``cvdfilter.tasks``: how model observers would do on colour-vision tasks of our own design, with and without
each filter.

Tasks (registry :data:`TASKS`): ``arrangement`` and ``arrangement-fine``
(hue-circle arrangement, :mod:`.arrangement`, scored by the moment method,
:mod:`.moments`), ``plates`` (figure-ground dot plates, :mod:`.plates`) and
``rayleigh`` (the Rayleigh match, :mod:`.rayleigh`). docs/tasks.md documents the
designs, the scoring, the verdict criteria and the references.

Observers: spec strings, :class:`~cvdfilter.observers.observer.Observer` objects,
or :class:`ObserverMembers` (a name, a stack of fundamentals (n, n_wl, 3) and the
missing cone), so that a population's members run as one array.

Public: :func:`tasks`, :class:`TaskResult`, :class:`ObserverMembers`, :data:`TASKS`, :data:`DEFAULT_OBSERVERS`,
:data:`ARRANGEMENT_MARGIN`, :data:`PLATE_MARGIN`, :data:`RAYLEIGH_MARGIN`, :data:`TRIAL_NOISE`, :data:`TASKS_CAUTION`.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .._version import __version__
from ..cautions import CAVEAT
from ..errors import InputError
from ..metrics.discrimination import CONE_RATIOS, WEBER_FRACTION, receptor_noise, rnl_transform
from ..spectra.grid import DEFAULT_GRID, Grid
from . import moments as _moments
from .arrangement import ARRANGEMENT_DESIGNS, arrange, cap_luv, caps
from .plates import PLATE_NAMES, READ_THRESHOLD, legibility, plate_designs
from .rayleigh import MATCH_THRESHOLD, PRIMARIES_NM, PRIMARY_FWHM_NM, rayleigh_match, reference_calibration

__all__ = ["tasks", "TaskResult", "ObserverMembers", "TASKS", "DEFAULT_OBSERVERS", "ARRANGEMENT_MARGIN",
           "PLATE_MARGIN", "RAYLEIGH_MARGIN", "TRIAL_NOISE", "TASKS_CAUTION"]

#: Task name -> one-line description (the CLI's help, ``to_dict`` and docs/tasks.md follow it).
TASKS = {
    "arrangement": "hue-circle arrangement, " + ARRANGEMENT_DESIGNS["arrangement"][1],
    "arrangement-fine": "hue-circle arrangement, " + ARRANGEMENT_DESIGNS["arrangement-fine"][1],
    "plates": "figure-ground dot plates of our own design (" + ", ".join(PLATE_NAMES) + ")",
    "rayleigh": "Rayleigh match, red 670 / green 545 nm against yellow 589 nm",
}
DEFAULT_OBSERVERS = ("normal", "protanomalous", "deuteranomalous", "protanope", "deuteranope")
#: Trial noise in units of the receptor noise: each cap's log catches get noise of sd TRIAL_NOISE x e_i / sqrt(2)
#: per trial, so that the perceived difference of two caps has sd TRIAL_NOISE JND (1 = the model's own noise:
#: Delta S = 1 is one standard deviation, d' = 1).
TRIAL_NOISE = 1.0
#: Arrangement verdict: easier when (share of trials with a lower TES with the filter) minus (share with a
#: higher TES) is at least this; harder when it is at most minus this (ours; the margin is printed).
ARRANGEMENT_MARGIN = 0.25
#: Plates: a plate's legibility changes when it moves by at least this (index units; a quarter of the
#: read threshold, ours). The task is easier when more plates gain than lose, harder when more lose.
PLATE_MARGIN = 0.5
#: Rayleigh: easier/harder when the matching range in log odds (the match's width in cone terms) shrinks/grows
#: by at least this fraction (ours).
RAYLEIGH_MARGIN = 0.1
#: What every tasks output says besides :data:`cautions.CAVEAT`.
TASKS_CAUTION = ("Tasks of our own design, performed by model observers: not a clinical test and not a prediction "
                 "of any person's result. Clinical colour-vision testing belongs to licensed practice with the "
                 "standard tests.")

_SCORES = _moments.SCORE_NAMES
#: Caps x trials x filters x members handled at once by the arranger (memory bound, about 100 MB per chunk).
_CHUNK_CAPS = 2_000_000
#: Factors applied to each verdict margin to test the verdict's robustness (ours): a verdict is "robust" when
#: it is the same at half and at twice the margin.
ROBUSTNESS_FACTORS = (0.5, 2.0)


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
    """

    name: str
    fundamentals: np.ndarray
    missing_cone: int | None = None


def _members(item, grid: Grid) -> ObserverMembers:
    if isinstance(item, ObserverMembers):
        f = np.asarray(item.fundamentals, dtype=float)
        if f.ndim != 3 or f.shape[1:] != (grid.size, 3):
            raise InputError(f"fundamentals must be (n, {grid.size}, 3), got {f.shape}", source=item.name)
        return item
    from ..observers.observer import observer
    from ..observers.population import Population, is_population_spec, population

    if isinstance(item, Population) or is_population_spec(item):
        pop = item if isinstance(item, Population) else population(item, grid)
        return ObserverMembers(pop.spec, np.asarray(pop.fundamentals), pop.centre.missing_cone)
    o = observer(item, grid)
    return ObserverMembers(o.spec, np.asarray(o.fundamentals)[None], o.missing_cone)


@dataclass
class TaskResult:
    """Scores of every task for every filter x observer, without (index 0) and with each filter.

    Attributes
    ----------
    filters : tuple of str
    filter_info : tuple of dict
    observers : tuple of str
    tasks : tuple of str
    scores : dict
        ``scores[(task, observer)]``: for arrangement tasks a dict score name -> array (F + 1, members, trials)
        and ``order`` -> (F + 1, members, trials, caps);
        for ``rayleigh`` a dict -> array (F + 1, members); for ``plates`` ``legibility`` -> (F + 1, members, plates).
        Index 0 of the first axis is without a filter.
    settings : dict
        Trials, seed, illuminant, model constants and thresholds.
    """

    filters: tuple
    filter_info: tuple
    observers: tuple
    tasks: tuple
    scores: dict
    settings: dict = field(default_factory=dict)

    # -- verdicts ----------------------------------------------------------------------------------------------
    def _verdict(self, task: str, obs: str, f: int) -> tuple[str, dict]:
        verdict, basis = self._verdict_at(task, obs, f, 1.0)
        others = [self._verdict_at(task, obs, f, k)[0] for k in ROBUSTNESS_FACTORS]
        basis["robust"] = all(v == verdict for v in others)
        basis["robustness"] = ("the same verdict at " + " and ".join(f"{k:g}x" for k in ROBUSTNESS_FACTORS)
                               + " the margin" if basis["robust"] else
                               "the verdict changes when the margin is halved or doubled: a borderline case")
        return verdict, basis

    def _verdict_at(self, task: str, obs: str, f: int, factor: float) -> tuple[str, dict]:
        s = self.scores[(task, obs)]
        if task in ARRANGEMENT_DESIGNS:
            t0, t1 = s["tes"][0], s["tes"][f + 1]
            better = float(np.mean(t1 < t0 - 1e-9))
            worse = float(np.mean(t1 > t0 + 1e-9))
            effect = better - worse
            margin = ARRANGEMENT_MARGIN * factor
            verdict = "easier" if effect >= margin else "harder" if effect <= -margin else "no change"
            return verdict, {"share_trials_lower_tes": better, "share_trials_higher_tes": worse,
                             "effect": effect, "margin": ARRANGEMENT_MARGIN,
                             "criterion": "share of trials (x members) with a lower TES with the filter minus the "
                                          "share with a higher TES: easier at >= +margin, harder at <= -margin"}
        if task == "plates":
            leg = np.median(s["legibility"], axis=1)  # (F + 1, plates), median over members
            change = leg[f + 1] - leg[0]
            margin = PLATE_MARGIN * factor
            gains = int((change >= margin).sum())
            losses = int((change <= -margin).sum())
            verdict = "easier" if gains > losses else "harder" if losses > gains else "no change"
            return verdict, {"plates_gaining": [PLATE_NAMES[i] for i in np.nonzero(change >= margin)[0]],
                             "plates_losing": [PLATE_NAMES[i] for i in np.nonzero(change <= -margin)[0]],
                             "legibility_change": {p: float(c) for p, c in zip(PLATE_NAMES, change)},
                             "margin": PLATE_MARGIN,
                             "criterion": "a plate gains (loses) when its legibility rises (falls) by >= margin; "
                                          "easier when more plates gain than lose, harder when more lose"}
        w0 = float(np.median(s["range_log_odds"][0]))
        w1 = float(np.median(s["range_log_odds"][f + 1]))
        rel = (w1 - w0) / w0 if np.isfinite(w0) and np.isfinite(w1) and w0 > 0 else 0.0
        margin = RAYLEIGH_MARGIN * factor
        verdict = "easier" if rel <= -margin else "harder" if rel >= margin else "no change"
        m0, m1 = float(np.median(s["red_fraction"][0])), float(np.median(s["red_fraction"][f + 1]))
        return verdict, {"range_log_odds_change": rel, "margin": RAYLEIGH_MARGIN,
                         "mid_point_shift": m1 - m0,
                         "range_shift": float(np.median(s["range"][f + 1]) - np.median(s["range"][0])),
                         "criterion": "relative change of the matching range in log odds (its width in cone "
                                      "terms): easier at <= -margin, harder at >= +margin"}

    def _summary(self, task: str, obs: str, index: int) -> dict:
        s = self.scores[(task, obs)]
        if task in ARRANGEMENT_DESIGNS:
            return {k: float(np.median(s[k][index])) for k in _SCORES}
        if task == "plates":
            leg = np.median(s["legibility"][index], axis=0)
            return {"legibility": {p: float(v) for p, v in zip(PLATE_NAMES, leg)},
                    "read": {p: bool(v >= READ_THRESHOLD) for p, v in zip(PLATE_NAMES, leg)}}
        return {"red_fraction": float(np.median(s["red_fraction"][index])),
                "range": float(np.median(s["range"][index])),
                "range_log_odds": float(np.median(s["range_log_odds"][index]))}

    def results(self) -> list[dict]:
        """One record per filter x observer x task (the ``results`` of the JSON)."""
        out = []
        for f, name in enumerate(self.filters):
            for obs in self.observers:
                for task in self.tasks:
                    verdict, basis = self._verdict(task, obs, f)
                    rec = {"filter": name, "observer": obs, "task": task, "without": self._summary(task, obs, 0),
                           "with": self._summary(task, obs, f + 1), "verdict": verdict, "basis": basis}
                    if task in ARRANGEMENT_DESIGNS:
                        s = self.scores[(task, obs)]
                        rec["spread"] = {k: {"without": _quartiles(s[k][0]), "with": _quartiles(s[k][f + 1])}
                                         for k in ("tes", "c_index", "crossings")}
                    out.append(rec)
        return out

    def summaries(self) -> dict[str, str]:
        """One line per filter: for which tasks (and observers) it makes the task easier and harder."""
        lines = {}
        res = self.results()
        n_obs = len(self.observers)
        for name in self.filters:
            parts = []
            for word in ("easier", "harder"):
                per_task = []
                for task in self.tasks:
                    who = [r["observer"] for r in res if r["filter"] == name and r["task"] == task
                           and r["verdict"] == word]
                    if who:
                        per_task.append(f"{task} ({'all observers' if len(who) == n_obs > 1 else ', '.join(who)})")
                if per_task:
                    parts.append(f"{word}: " + "; ".join(per_task))
            lines[name] = " | ".join(parts) if parts else "no change on any task for any observer"
        return lines

    def to_dict(self) -> dict:
        """The JSON document of ``cvdfilter tasks --format json``."""
        return {"tool": "cvdfilter", "version": __version__, "caveat": CAVEAT, "cautions": [TASKS_CAUTION],
                "inputs": {"filters": [dict(i, name=n) for n, i in zip(self.filters, self.filter_info)],
                           "observers": list(self.observers), "tasks": list(self.tasks),
                           "trials": self.settings["trials"], "seed": self.settings["seed"],
                           "illuminant": self.settings["illuminant"]},
                "models": self.settings["models"], "results": self.results(), "summary": self.summaries()}

    def cap_uv(self, task: str) -> np.ndarray:
        """CIELUV u*, v* of an arrangement task's caps under the run's light, (N, 2)."""
        return self.settings["cap_uv"][task]

    def to_json(self) -> str:
        return json.dumps(_clean(self.to_dict()), indent=2, ensure_ascii=False, allow_nan=False) + "\n"

    def rows(self) -> tuple[list, list]:
        """Header and rows of the table view: one row per filter x observer x task."""
        head = ["filter", "observer", "task", "without", "with", "verdict"]
        rows = []
        for r in self.results():
            cells = []
            for state in ("without", "with"):
                v = r[state]
                if r["task"] in ARRANGEMENT_DESIGNS:
                    cells.append(f"TES {v['tes']:.1f}, C {v['c_index']:.2f}, {v['crossings']:g} cross")
                elif r["task"] == "plates":
                    cells.append(f"{sum(v['read'].values())} read: "
                                 + " ".join(f"{x:.1f}" for x in v["legibility"].values()))
                else:
                    cells.append(f"r {v['red_fraction']:.3f}, range {v['range']:.3f}")
            mark = "" if r["basis"]["robust"] else " *"
            rows.append([r["filter"], r["observer"], r["task"], *cells, r["verdict"] + mark])
        return head, rows

    def _footer(self) -> list[str]:
        m = self.settings["models"]
        return ([f"{n}: {t}" for n, t in self.summaries().items()] + [""] +
                [f"Trials: {self.settings['trials']} (seed {self.settings['seed']}), illuminant "
                 f"{self.settings['illuminant']}; Weber fraction {m['weber_fraction']:g}, cone ratios "
                 f"{':'.join(f'{x:g}' for x in m['cone_ratios'])}, trial noise {m['trial_noise']:g} x receptor "
                 f"noise; plate read threshold {READ_THRESHOLD:g}; Rayleigh match threshold "
                 f"{MATCH_THRESHOLD:g} JND, primaries {PRIMARY_FWHM_NM:g} nm FWHM.",
                 f"Verdicts: arrangement {ARRANGEMENT_MARGIN:g} (share of trials), plates {PLATE_MARGIN:g} "
                 f"(legibility), Rayleigh {RAYLEIGH_MARGIN:g} (relative range); see docs/tasks.md. * borderline: "
                 "the verdict changes when its margin is halved or doubled.",
                 "Arrangement: medians over trials of the total error score (TES), confusion index (C) and "
                 "path crossings (moment method, Vingrys & King-Smith 1988). Plates: number read and the "
                 "legibility of " + ", ".join(PLATE_NAMES) + ". Rayleigh: red fraction r (mid-point) and "
                 "matching range on the instrument scale.",
                 TASKS_CAUTION, CAVEAT])

    def to_table(self, width: int = 100) -> str:
        from ..tables import text_table

        import textwrap

        head, rows = self.rows()
        footer = [textwrap.fill(x, width=width, subsequent_indent="  ") if x else x for x in self._footer()]
        return text_table(head, rows, width=width) + "\n" + "\n".join(footer) + "\n"

    def to_markdown(self) -> str:
        from ..tables import markdown_table

        head, rows = self.rows()
        return markdown_table(head, rows) + "\n" + "\n\n".join(x for x in self._footer() if x) + "\n"

    def to_csv(self) -> str:
        from ..tables import csv_text

        head = ["filter", "observer", "task", "verdict", "state", "score", "value", "caveat"]
        rows = []
        caveat = TASKS_CAUTION + " " + CAVEAT
        for r in self.results():
            for state in ("without", "with"):
                for k, v in _flatten(r[state]).items():
                    rows.append([r["filter"], r["observer"], r["task"], r["verdict"], state, k,
                                 _fmt(v), caveat])
        return csv_text(head, rows)


def _fmt(v):
    if isinstance(v, bool):
        return str(v).lower()
    if isinstance(v, float):
        return f"{v:.6g}" if np.isfinite(v) else ""
    return v


def _flatten(d: dict, prefix: str = "") -> dict:
    out = {}
    for k, v in d.items():
        if isinstance(v, dict):
            out.update(_flatten(v, f"{prefix}{k}."))
        else:
            out[f"{prefix}{k}"] = v
    return out


def _quartiles(a) -> list[float]:
    return [float(x) for x in np.percentile(np.asarray(a), [25, 50, 75])]


def _clean(obj):
    if isinstance(obj, dict):
        return {k: _clean(v) for k, v in obj.items()}
    if isinstance(obj, list):
        return [_clean(v) for v in obj]
    if isinstance(obj, float) and not np.isfinite(obj):
        return None
    return obj


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
    return TaskResult(tuple(fs.names), info, tuple(names), task_list, scores, settings)


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

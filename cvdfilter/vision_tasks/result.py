"""What :func:`cvdfilter.vision_tasks.tasks` returns: :class:`TaskResult` with its verdicts and views
(JSON, CSV, Markdown, a table), and the task registry and verdict margins it applies.

:mod:`cvdfilter.vision_tasks.core` computes the scores and re-exports these names.

Public: :class:`TaskResult`, :data:`TASKS`, :data:`DEFAULT_OBSERVERS`, :data:`TRIAL_NOISE`,
:data:`ARRANGEMENT_MARGIN`, :data:`PLATE_MARGIN`, :data:`RAYLEIGH_MARGIN`, :data:`TASKS_CAUTION`,
:data:`ROBUSTNESS_FACTORS`.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field

import numpy as np

from .._version import __version__
from ..cautions import CAVEAT
from ..metrics.population_stats import CONFIDENCE, STATISTICS
from . import moments as _moments
from .arrangement import ARRANGEMENT_DESIGNS
from .plates import PLATE_NAMES, READ_THRESHOLD
from .rayleigh import MATCH_THRESHOLD, PRIMARY_FWHM_NM

__all__ = ["TaskResult", "TASKS", "DEFAULT_OBSERVERS", "TRIAL_NOISE", "ARRANGEMENT_MARGIN", "PLATE_MARGIN",
           "RAYLEIGH_MARGIN", "TASKS_CAUTION", "ROBUSTNESS_FACTORS"]

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
#: What the headline verdict of a population is (the verdict of one observer applied to its pooled scores).
_POOLED = {"arrangement": "pooled: the criterion applied to the trials of all members together",
           "plates": "pooled: the criterion applied to each plate's median legibility over members",
           "rayleigh": "pooled: the criterion applied to the median matching range over members"}
_MEMBER_CRITERION = ("each member's own verdict by the criterion in basis, applied to its own trials, plates or "
                     "match (cvdfilter.vision_tasks.members); members gives the share of members with each "
                     "verdict; borderline the share whose own verdict changes when the margin is halved or "
                     "doubled, shares_at_margin_factors the shares easier and harder at those margins; "
                     "member_spread the spread over members of the task's main score change")
_INTERVAL = f"Wilson score interval, {100 * CONFIDENCE:g} % (Wilson 1927)"
#: Factors applied to each verdict margin to test the verdict's robustness (ours): a verdict is "robust" when
#: it is the same at half and at twice the margin.
ROBUSTNESS_FACTORS = (0.5, 2.0)


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
    populations : dict
        Observer name -> ``{n, variation, seed}`` for each observer that is a population (more than one
        member); their records add each member's own verdict (:mod:`.members`).
    """

    filters: tuple
    filter_info: tuple
    observers: tuple
    tasks: tuple
    scores: dict
    settings: dict = field(default_factory=dict)
    populations: dict = field(default_factory=dict)
    _member_cache: dict = field(default_factory=dict, init=False, repr=False, compare=False)

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
        from .members import TES_TOLERANCE, VERDICT_CODES, arrangement_rule, plates_rule, rayleigh_rule

        name = {c: w for w, c in VERDICT_CODES.items()}
        s = self.scores[(task, obs)]
        if task in ARRANGEMENT_DESIGNS:
            t0, t1 = s["tes"][0], s["tes"][f + 1]
            better = float(np.mean(t1 < t0 - TES_TOLERANCE))
            worse = float(np.mean(t1 > t0 + TES_TOLERANCE))
            effect = better - worse
            verdict = name[int(arrangement_rule(effect, ARRANGEMENT_MARGIN * factor))]
            return verdict, {"share_trials_lower_tes": better, "share_trials_higher_tes": worse,
                             "effect": effect, "margin": ARRANGEMENT_MARGIN,
                             "criterion": "share of trials (x members) with a lower TES with the filter minus the "
                                          "share with a higher TES: easier at >= +margin, harder at <= -margin"}
        if task == "plates":
            leg = np.median(s["legibility"], axis=1)  # (F + 1, plates), median over members
            change = leg[f + 1] - leg[0]
            margin = PLATE_MARGIN * factor
            verdict = name[int(plates_rule(change, margin))]
            return verdict, {"plates_gaining": [PLATE_NAMES[i] for i in np.nonzero(change >= margin)[0]],
                             "plates_losing": [PLATE_NAMES[i] for i in np.nonzero(change <= -margin)[0]],
                             "legibility_change": {p: float(c) for p, c in zip(PLATE_NAMES, change)},
                             "margin": PLATE_MARGIN,
                             "criterion": "a plate gains (loses) when its legibility rises (falls) by >= margin; "
                                          "easier when more plates gain than lose, harder when more lose"}
        w0 = float(np.median(s["range_log_odds"][0]))
        w1 = float(np.median(s["range_log_odds"][f + 1]))
        rel = (w1 - w0) / w0 if np.isfinite(w0) and np.isfinite(w1) and w0 > 0 else 0.0
        verdict = name[int(rayleigh_rule(rel, RAYLEIGH_MARGIN * factor))]
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
                    if obs in self.populations:
                        rec.update(self._member_record(task, obs, f))
                    out.append(rec)
        return out

    # -- populations: each member's own verdict ----------------------------------------------------------------
    def _members_of(self, task: str, obs: str) -> dict:
        """Per-member verdicts (at the margin and at the robustness factors), their shares with Wilson
        intervals and the spread of the main score changes, for every filter at once (cached)."""
        key = (task, obs)
        if key not in self._member_cache:
            from ..metrics.population_stats import share_helped, spread
            from .members import VERDICT_CODES, member_changes, member_verdicts

            s = self.scores[key]
            codes = member_verdicts(task, s, (1.0, *ROBUSTNESS_FACTORS))  # (1 + factors, F, M)
            defined = np.ones(codes.shape[1:], dtype=bool)
            shares = {word.replace(" ", "_"): share_helped(codes[0] == c, defined)
                      for word, c in VERDICT_CODES.items()}
            borderline = share_helped((codes[1:] != codes[:1]).any(axis=0), defined)
            at = {f"{k:g}x": {w: (c == VERDICT_CODES[w]).mean(axis=-1) for w in ("easier", "harder")}
                  for k, c in zip(ROBUSTNESS_FACTORS, codes[1:])}
            changes = {name: spread(v) for name, v in member_changes(task, s).items()}
            self._member_cache[key] = (shares, borderline, at, changes)
        return self._member_cache[key]

    def _member_record(self, task: str, obs: str, f: int) -> dict:
        """The keys a population's record adds: ``population``, ``verdict_scope``, ``members``,
        ``members_basis`` and ``member_spread`` (docs/tasks.md, Populations)."""
        shares, borderline, at, changes = self._members_of(task, obs)

        def share(h) -> dict:
            return {"share": float(h["share"][f]), "ci_low": float(h["ci_low"][f]),
                    "ci_high": float(h["ci_high"][f]), "count": int(h["helped"][f]), "n": int(h["n"][f])}

        def stats(v) -> dict:
            return {**{k: float(v[k][f]) for k in STATISTICS}, "n": int(v["n"][f])}

        return {"population": dict(self.populations[obs]), "verdict_scope": _POOLED[_task_kind(task)],
                "members": {k: share(h) for k, h in shares.items()},
                "members_basis": {"criterion": _MEMBER_CRITERION, "interval": _INTERVAL,
                                  "borderline": share(borderline),
                                  "shares_at_margin_factors": {k: {w: float(v[f]) for w, v in d.items()}
                                                               for k, d in at.items()}},
                "member_spread": {k: stats(v) for k, v in changes.items()}}

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
                    recs = [r for r in res if r["filter"] == name and r["task"] == task and r["verdict"] == word]
                    who = [_who(r, word) for r in recs]
                    if who:
                        every = len(who) == n_obs > 1 and not any("members" in r for r in recs)
                        per_task.append(f"{task} ({'all observers' if every else ', '.join(who)})")
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
        if self.populations:
            head.append("members easier / harder (95 % CI)")
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
            row = [r["filter"], r["observer"], r["task"], *cells, r["verdict"] + mark]
            if self.populations:
                if "members" in r:
                    row[-1] = r["verdict"] + " (pooled)" + mark
                    row.append(" / ".join(_share_cell(r["members"][k]) for k in ("easier", "harder")))
                else:
                    row.append("-")
            rows.append(row)
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
                 *([_POPULATION_NOTE] if self.populations else []),
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
            if "members" in r:  # a population: shares of members per verdict, spread of the score changes
                basis = r["members_basis"]
                blocks = {"members": {**r["members"], "borderline": basis["borderline"],
                                      **{f"at_{k}_margin": v for k, v in basis["shares_at_margin_factors"].items()}},
                          "member_spread": r["member_spread"]}
                for state, block in blocks.items():
                    for k, v in _flatten(block).items():
                        rows.append([r["filter"], r["observer"], r["task"], r["verdict"], state, k,
                                     _fmt(v), caveat])
        return csv_text(head, rows)


_POPULATION_NOTE = ("Populations: the verdict is pooled over the members (marked 'pooled'); 'members easier / "
                    "harder' is the share of members whose own verdict, by the same criterion on their own trials, "
                    "plates or match, is easier / harder, with a Wilson 95 % interval (Wilson 1927); the JSON "
                    "adds the spread over members of each task's score change. Model members, not a sample of "
                    "people.")


def _share_cell(h: dict) -> str:
    return f"{100 * h['share']:.0f} % ({100 * h['ci_low']:.0f}-{100 * h['ci_high']:.0f})"


def _who(r: dict, word: str) -> str:
    """An observer in a summary line; a population with the share of its members for whom the word holds."""
    if "members" not in r:
        return r["observer"]
    return f"{r['observer']}: pooled, {100 * r['members'][word]['share']:.0f} % of members"


def _task_kind(task: str) -> str:
    return "arrangement" if task in ARRANGEMENT_DESIGNS else task


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

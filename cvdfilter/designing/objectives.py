"""What a design maximises and what it must satisfy: metric references and requirement expressions.

A **metric** is a scorecard key as ``cvdfilter score --format json`` writes it, with nested keys joined
by dots, optionally for a named observer in brackets::

    red_green_gain                       the design observer's (the first --observer)
    confusion_pairs.resolved[protanope]  another observer (scored as well)
    luminous_transmittance               a per-filter key (no observer)
    road_use.suitable                    a yes/no key (1 = yes)
    discernible_colours.ratio            the literature metric (needs --surfaces munsell or a scene)
    tasks.arrangement.tes                a task score (cvdfilter.designing.task_scores)
    confusion_pairs.net                  resolved - created (also discriminable_pairs.net: gained - lost)

For a population observer (a spec with ``n=N``) a per-observer key takes a statistic over the members
as prefix: ``mean:``, ``sd:``, ``p2_5:``, ``p50:``, ``p97_5:`` (the population entry's statistics), or
``share:`` for the share of members helped (the entry's ``helped`` keys: ``share:red_green_gain``,
``share:confusion_pairs_net``, ...). Task scores take the same statistics over the members' own values
(``mean:tasks.arrangement.tes``), and ``share:tasks.TASK.easier`` (``.harder``) is the share of members for
whom the task gets easier (harder) with the filter (cvdfilter.designing.task_scores).

A **requirement** compares a metric with a number: ``METRIC OP NUMBER`` with OP one of ``>=``, ``<=``,
``>``, ``<``, ``==`` (also ``≥``, ``≤``); a yes/no key alone means "is yes" and ``not KEY`` "is no"::

    luminous_transmittance>=0.43      iso12312_category<=1      white_shift<=0.01
    road_use.suitable                 rendition.rf>=80          discriminable_pairs.lost[normal]<=50

The numbers of a scorecard are read by :func:`cvdfilter.designing.reading.metric_values` (arrays over
filters, used during the search) and :func:`cvdfilter.designing.reading.entry_value` (one JSON entry, used on
re-scoring).

Public: :class:`Metric`, :class:`Requirement`, :func:`parse_metric`, :func:`parse_requirement`,
:data:`FILTER_KEYS`, :data:`OBSERVER_KEYS`, :data:`STAT_PREFIXES`, :data:`HELPED_KEYS`.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from ..errors import InputError, clip_text, did_you_mean
from .task_scores import TASK_KEYS, TASK_SHARE_KEYS

__all__ = ["Metric", "Requirement", "parse_metric", "parse_requirement", "FILTER_KEYS", "OBSERVER_KEYS",
           "STAT_PREFIXES", "HELPED_KEYS", "groups_needed"]

_SIGNALS = ("red", "yellow", "green", "blue")
#: Per-filter keys (JSON key -> metric group), yes/no keys marked by ``BOOL_KEYS``.
FILTER_KEYS = {
    "luminous_transmittance": "photometry", "luminous_transmittance_illuminant": "photometry",
    "white_shift": "photometry", "chromaticity.x": "photometry", "chromaticity.y": "photometry",
    "iso12312_category": "road_use", "road_use.suitable": "road_use", "road_use.night_suitable": "road_use",
    "road_use.min_ratio_475_650": "road_use", "road_use.min_ratio_at_nm": "road_use",
    **{f"signal_quotients.{c}": "road_use" for c in _SIGNALS},
    **{f"rendition.{k}": "rendition" for k in ("rf", "rg", "ra", "cct_k", "duv")},
}
_PAIRS = ("without", "with", "gained", "lost")
_CONFUSED = ("without", "with", "resolved", "created")
#: The distribution thresholds the design scores with (the scorer's defaults, JND).
_AT = {"at_1_jnd": 1.0, "at_2_jnd": 2.0, "at_4_jnd": 4.0}
#: Per-observer keys (JSON key -> metric group).
OBSERVER_KEYS = {
    "red_green_gain": "contrast", "blue_yellow_gain": "contrast", "luminance_contrast_gain": "contrast",
    **{f"discriminable_pairs.{k}": "discrimination" for k in (*_PAIRS, "net")},
    **{f"delta_s_distribution.{a}.{k}": "discrimination" for a in _AT for k in _PAIRS},
    **{f"delta_s_distribution.{k}": "discrimination" for k in ("median_without", "median_with", "median_ratio")},
    **{f"confusion_pairs.{k}": "confusion" for k in (*_CONFUSED, "net", "normally_discriminable",
                                                     "median_delta_s_without", "median_delta_s_with",
                                                     "median_delta_s_ratio")},
    **{f"discernible_colours.{k}": "discernible" for k in ("without", "with", "ratio", "normal_without",
                                                            "ratio_to_normal", "ratio_to_normal_with")},
    **{k: "tasks" for k in TASK_KEYS},
}
BOOL_KEYS = ("road_use.suitable", "road_use.night_suitable")
#: Statistics over a population's members (the population entry's keys).
STAT_PREFIXES = ("mean", "sd", "p2_5", "p50", "p97_5")
#: ``share:`` keys (the population entry's ``helped`` block), with the dotted spellings accepted for them.
HELPED_KEYS = {"red_green_gain": "red_green_gain", "blue_yellow_gain": "blue_yellow_gain",
               "discriminable_pairs_net": "discriminable_pairs_net",
               "discriminable_pairs.net": "discriminable_pairs_net",
               "confusion_pairs_net": "confusion_pairs_net", "confusion_pairs.net": "confusion_pairs_net",
               "median_delta_s_ratio": "median_delta_s_ratio", "discernible_ratio": "discernible_ratio",
               "discernible_colours.ratio": "discernible_ratio"}
#: The scorer's group behind each ``share:`` key (score_population.population_summaries).
_HELPED_GROUPS = {"red_green_gain": "contrast", "blue_yellow_gain": "contrast",
                  "discriminable_pairs_net": "discrimination", "confusion_pairs_net": "confusion",
                  "median_delta_s_ratio": "confusion", "discernible_ratio": "discernible"}
_OPS = (">=", "<=", "==", ">", "<")
_METRIC_HELP = ("a scorecard key such as red_green_gain, confusion_pairs.net, luminous_transmittance, "
                "rendition.rf; for a population mean:KEY, p2_5:KEY or share:KEY (share:tasks.TASK.easier); "
                "another observer as KEY[SPEC]")


@dataclass(frozen=True)
class Metric:
    """A scorecard number: ``key`` (JSON, dotted), ``stat`` (population prefix or None), ``observer``
    (spec string; None for per-filter keys), ``text`` (as the user wrote it, canonical)."""

    key: str
    stat: str | None
    observer: str | None
    text: str

    @property
    def per_observer(self) -> bool:
        return self.observer is not None

    @property
    def group(self) -> str:
        if self.key in TASK_SHARE_KEYS:
            return "tasks"
        if self.stat == "share":
            return _HELPED_GROUPS[self.key]
        return FILTER_KEYS.get(self.key) or OBSERVER_KEYS.get(self.key) or "contrast"

    @property
    def is_bool(self) -> bool:
        return self.key in BOOL_KEYS


@dataclass(frozen=True)
class Requirement:
    """``metric op value`` (a yes/no key alone: ``== 1``; ``not KEY``: ``== 0``); ``text`` as given."""

    metric: Metric
    op: str
    value: float
    text: str

    def satisfied(self, values) -> np.ndarray:
        """Whether each value meets the requirement (NaN, i.e. undefined, never does)."""
        v = np.asarray(values, dtype=float)
        with np.errstate(invalid="ignore"):
            ok = {">=": v >= self.value, "<=": v <= self.value, ">": v > self.value, "<": v < self.value,
                  "==": v == self.value}[self.op]
        return ok & np.isfinite(v)

    def violation(self, values) -> np.ndarray:
        """How far each value is from meeting the requirement, >= 0 (0 = met), scaled by the bound's size;
        undefined values count as violation 1 + the largest other one. Strict comparisons and ``==`` on
        a continuous key keep a margin of 1e-9 of the scale."""
        v = np.asarray(values, dtype=float)
        scale = max(abs(self.value), 1e-3)
        margin = 1e-9 * scale if self.op in (">", "<") else 0.0
        if self.op in (">=", ">"):
            g = (self.value + margin - v) / scale
        elif self.op in ("<=", "<"):
            g = (v - self.value + margin) / scale
        else:
            g = np.abs(v - self.value) / scale
        g = np.where(self.satisfied(v), 0.0, np.maximum(g, 1e-12))
        bad = ~np.isfinite(g)
        if bad.any():
            g = np.where(bad, 1.0 + (np.nanmax(np.where(bad, np.nan, g)) if (~bad).any() else 0.0), g)
        return g


def _split_observer(text: str, what: str) -> tuple[str, str | None]:
    """``KEY[SPEC]`` -> (KEY, SPEC); brackets must close at the end."""
    if "[" not in text:
        if "]" in text:
            raise InputError(f"{what} '{clip_text(text)}': ']' without '['", hint=_METRIC_HELP)
        return text, None
    head, _, rest = text.partition("[")
    if not rest.endswith("]") or not rest[:-1].strip():
        raise InputError(f"{what} '{clip_text(text)}': give the observer as KEY[SPEC], e.g. "
                         "discriminable_pairs.lost[normal]", hint=_METRIC_HELP)
    return head, rest[:-1].strip()


def parse_metric(text: str, observer: str, *, is_population=None, what: str = "metric") -> Metric:
    """A metric reference (see the module docstring); ``observer`` is the design observer's spec.

    Examples
    --------
    >>> parse_metric("red_green_gain", "deuteranomalous").observer
    'deuteranomalous'
    >>> parse_metric("p2_5:red_green_gain", "deuteranomalous:n=50,seed=1").stat
    'p2_5'
    >>> parse_metric("luminous_transmittance", "normal").observer is None
    True
    """
    if is_population is None:
        from ..observers.population import is_population_spec as is_population
    raw = " ".join(str(text).split())
    if not raw:
        raise InputError(f"empty {what}", hint=_METRIC_HELP)
    body, spec = _split_observer(raw, what)
    stat = None
    m = re.fullmatch(r"\s*([a-z0-9_]+)\s*:\s*(.+)", body, flags=re.I)
    if m and m.group(1).lower() in (*STAT_PREFIXES, "share"):
        stat, body = m.group(1).lower(), m.group(2)
    elif m:
        close = did_you_mean(m.group(1).lower(), [*STAT_PREFIXES, "share"])
        raise InputError(f"{what} '{clip_text(raw)}': unknown statistic '{clip_text(m.group(1))}'"
                         + (f"; {close}" if close else ""), hint="use mean:, sd:, p2_5:, p50:, p97_5: or share:")
    key = body.strip().lower().replace(" ", "")
    if key in FILTER_KEYS:
        if spec is not None or stat is not None:
            raise InputError(f"{what} '{clip_text(raw)}': {key} is a property of the filter, not of an observer",
                             hint=f"write {key} alone")
        return Metric(key, None, None, key)
    if stat == "share":
        if key not in HELPED_KEYS and key not in TASK_SHARE_KEYS:
            raise InputError(f"{what} '{clip_text(raw)}': share: takes one of "
                             f"{', '.join(sorted(set(HELPED_KEYS.values())))} or tasks.TASK.easier, "
                             "tasks.TASK.harder")
        key = HELPED_KEYS.get(key, key)
    elif key in TASK_SHARE_KEYS:
        raise InputError(f"{what} '{clip_text(raw)}': {key} is a share of a population's members",
                         hint=f"write share:{key} for a population (a spec with n=N)")
    elif key not in OBSERVER_KEYS:
        close = did_you_mean(key, [*FILTER_KEYS, *OBSERVER_KEYS])
        raise InputError(f"{what} '{clip_text(raw)}': unknown scorecard key '{clip_text(key)}'"
                         + (f"; {close}" if close else ""), hint=_METRIC_HELP)
    obs = spec if spec is not None else observer
    population = is_population(obs)
    if population and stat is None:
        raise InputError(f"{what} '{clip_text(raw)}': {clip_text(obs)} is a population; say which statistic",
                         hint=f"e.g. mean:{key}, p2_5:{key} or share:{_share_example(key)}")
    if not population and stat is not None:
        raise InputError(f"{what} '{clip_text(raw)}': {stat}: applies to a population (a spec with n=N), "
                         f"and {clip_text(obs)} is one observer",
                         hint=f"write {key}" if key not in TASK_SHARE_KEYS else
                         "name a population (a spec with n=N), or use a task score such as tasks.arrangement.effect")
    if population and stat != "share" and key.endswith(".net"):
        raise InputError(f"{what} '{clip_text(raw)}': a population has no statistics of {key}",
                         hint=f"use share:{key.replace('.', '_')} or mean: of its parts")
    canonical = (f"{stat}:" if stat else "") + key + (f"[{spec}]" if spec is not None else "")
    return Metric(key, stat, obs, canonical)


def _share_example(key: str) -> str:
    if key in TASK_KEYS:
        return f"tasks.{key.split('.')[1]}.easier"
    return key if key in HELPED_KEYS else "red_green_gain"


def parse_requirement(text: str, observer: str, *, is_population=None) -> Requirement:
    """A requirement expression (see the module docstring).

    Examples
    --------
    >>> r = parse_requirement("luminous_transmittance>=0.43", "normal")
    >>> r.metric.key, r.op, r.value
    ('luminous_transmittance', '>=', 0.43)
    >>> parse_requirement("road_use.suitable", "normal").value
    1.0
    """
    raw = " ".join(str(text).replace("\u2265", ">=").replace("\u2264", "<=").split())
    if not raw:
        raise InputError("empty requirement", hint="e.g. luminous_transmittance>=0.43 or road_use.suitable")
    negate = False
    if raw.lower().startswith("not "):
        negate, raw_body = True, raw[4:].strip()
    else:
        raw_body = raw
    # the operator comes after any [observer] (whose spec may hold '=')
    close = raw_body.rfind("]")
    tail_from = close + 1 if close >= 0 else 0
    m = re.search(r"(>=|<=|==|=|>|<|!=)", raw_body[tail_from:])
    if m is None:
        metric = parse_metric(raw_body, observer, is_population=is_population, what="requirement")
        if not metric.is_bool:
            raise InputError(f"requirement '{clip_text(raw)}' has no comparison",
                             hint=f"write e.g. {metric.text}>=0.5 (only yes/no keys such as road_use.suitable "
                                  "stand alone)")
        return Requirement(metric, "==", 0.0 if negate else 1.0, raw)
    op = m.group(1)
    if op in ("=", "!="):
        raise InputError(f"requirement '{clip_text(raw)}': use >=, <=, >, < or == (not {op})")
    if negate:
        raise InputError(f"requirement '{clip_text(raw)}': 'not' goes with a yes/no key alone",
                         hint="e.g. not road_use.night_suitable")
    left = raw_body[:tail_from + m.start()].strip()
    right = raw_body[tail_from + m.end():].strip()
    metric = parse_metric(left, observer, is_population=is_population, what="requirement")
    if right.lower() in ("true", "yes") and metric.is_bool:
        value = 1.0
    elif right.lower() in ("false", "no") and metric.is_bool:
        value = 0.0
    else:
        try:
            value = float(right)
        except ValueError:
            raise InputError(f"requirement '{clip_text(raw)}': '{clip_text(right)}' is not a number",
                             hint=f"e.g. {metric.text}{op}0.5") from None
        if not math.isfinite(value):
            raise InputError(f"requirement '{clip_text(raw)}': the bound must be a finite number")
    return Requirement(metric, op, value, raw)


def groups_needed(metrics) -> list[str]:
    """The scorer's metric groups the given metrics need, in the scorer's order."""
    from ..score_plan import METRIC_GROUPS, OPTIONAL_GROUPS

    wanted = {m.group for m in metrics}
    groups = [g for g in METRIC_GROUPS + OPTIONAL_GROUPS if g in wanted]
    return groups or ["photometry"]  # task metrics alone: the scorer still gives the photometry

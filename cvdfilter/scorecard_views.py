"""Views of a :class:`~cvdfilter.scorecard.Scorecard`: CSV, Markdown and the plain-text table.

Presentation only (no colour science): every view reads the scorecard's JSON document
(``Scorecard.to_dict()``) and lays it out with :mod:`cvdfilter.tables`, the one table writer of the package
(text, Markdown and CSV, shared with the report and the CLI).

Public: :func:`to_csv`, :func:`csv_rows`, :func:`to_markdown`, :func:`to_table`, :func:`median_ratio`,
:data:`GAIN_CAUTION`.
"""

from __future__ import annotations

import textwrap

from . import tables as _tables
from .observers.labels import label_legend, table_labels
from .score_plan import CONFUSION_KEYS, PAIR_KEYS
from .score_population import STATS as _STATS
from .tables import fixed as _fmt, yes_no as _yes

__all__ = ["to_csv", "csv_rows", "to_markdown", "to_table", "median_ratio", "GAIN_CAUTION"]



def run_columns(card) -> dict:
    """The CSV columns every row repeats: tool, version, light, surfaces, adaptation, cautions (and the
    signal limits with road use); also the streamed rows' (:mod:`cvdfilter.score_stream`)."""
    head = card.header()
    run = {"tool": head["tool"], "version": head["version"], "illuminant": head["illuminant"]["name"],
           "surfaces": head["surfaces"]["name"], "adaptation": head["adaptation"]["spec"],
           "caveat": head["caveat"], "cautions": " ".join(head["cautions"])}
    if "road_use" in card.metrics:
        ru = head["models"]["road_use"]
        run["signal_limits"] = ",".join(f"{c}={v:g}" for c, v in ru["signal_limits"].items())
        run["signal_limits_reading"] = ru["signal_limits_reading"]
    return run


def csv_rows(card) -> tuple[list, list]:
    """Header and rows: one row per filter x observer, nested keys joined with dots; a population gives
    one row per statistic (column ``statistic``: mean, sd, p2_5, p50, p97_5), its ``helped`` shares on
    every row, and no per-member values."""
    run = run_columns(card)
    rows, columns = [], []
    seen, layouts = set(), set()
    for i in range(len(card)):
        f = card.filter_dict(i)
        obs = f.pop("observers")
        flat_f = _flatten(f)
        for o in [r for o0 in obs for r in _population_csv_entries(o0)]:
            row = {**flat_f, **_flatten(o), **run}
            layout = tuple(row)
            if layout not in layouts:  # rows share a few key layouts: merge each new one once
                layouts.add(layout)
                for key in layout:
                    if key not in seen:
                        seen.add(key)
                        columns.append(key)
            rows.append(row)
    # Run-level columns last, whatever order the rows met them in.
    columns = [c for c in columns if c not in run] + list(run)
    return columns, [[row.get(c) for c in columns] for row in rows]

def to_csv(card) -> str:
    """One row per filter x observer (:func:`csv_rows`); booleans as ``true``/``false``."""
    columns, rows = csv_rows(card)
    return _tables.csv_text(columns, [[("true" if v is True else "false" if v is False else v) for v in r]
                                      for r in rows])


def _summary_rows(card, doc: dict):
    filt_rows, obs_rows, rend_rows = [], [], []
    for f in doc["filters"]:
        if "road_use" in card.metrics or "photometry" in card.metrics:
            filt_rows.append(_filter_row(f))
        if "rendition" in card.metrics:
            rd = f["rendition"]
            rend_rows.append([f["name"], _fmt(rd["rf"], 1), _fmt(rd["rg"], 1), _fmt(rd["ra"], 1),
                              _fmt(rd["cct_k"], 0), _fmt(rd["duv"], 4),
                              " ".join(_fmt(v, 0) for v in rd["chroma_shifts"])])
        for o in f["observers"]:
            obs_rows.append(_observer_row(f["name"], o, card.metrics, f=f))
    return filt_rows, obs_rows, rend_rows

def to_markdown(card) -> str:
    """A Markdown report: inputs, tables, road-use reasons, cautions."""
    doc = card.to_dict()
    filt_rows, obs_rows, rend_rows = _summary_rows(card, doc)
    lines = ["# cvdfilter scorecard", "", f"_{doc['caveat']}_", ""]
    lines += _inputs_lines(doc, markdown=True) + [""]
    if filt_rows:
        lines += ["## Photometry and road use (normal observer, CIE D65, CIE 1931 2 deg)", ""]
        lines += _tables.markdown_lines(_FILTER_HEADER, filt_rows) + [""]
    if "road_use" in card.metrics:
        lines += ["### Road-use reasons", ""]
        for f in doc["filters"]:
            lines.append(f"- **{f['name']}**: " + " ".join(f["road_use"]["reasons"]))
        lines.append("")
    if rend_rows:
        lines += ["## Colour rendition of the illuminant through the filter (CIE 2017 / TM-30, CIE 13.3)", ""]
        lines += _tables.markdown_lines(_RENDITION_HEADER, rend_rows) + [""]
    if obs_rows and len(obs_rows[0]) > 2:
        lines += ["## Per observer", "", _observer_note(doc), ""]
        if any("population" in o for o in doc["observers"]):
            lines += [_POPULATION_NOTE, ""]
        lines += _tables.markdown_lines(_observer_header(card.metrics), obs_rows) + [""]
        helped = _helped_rows(doc)
        if helped:
            lines += ["### Share of population members helped (Wilson 95 % interval)", ""]
            lines += _tables.markdown_lines(helped[0], helped[1]) + [""]
    if card.sensitivity is not None:
        lines += ["## Sensitivity", "", _SENSITIVITY_NOTE, ""]
        for f, rows in _sensitivity_rows(card.sensitivity):
            lines += [f"### {f}", ""] + _tables.markdown_lines(_SENSITIVITY_HEADER, rows) + [""]
    lines += ["## Cautions", ""] + [f"- {c}" for c in [doc["caveat"], *doc["cautions"]]] + [""]
    return "\n".join(lines)

def to_table(card, width: int = 100) -> str:
    """A plain-text summary at most ``width`` columns wide, cautions underneath."""
    doc = card.to_dict()
    filt_rows, obs_rows, rend_rows = _summary_rows(card, doc)
    parts = []
    if filt_rows:
        parts.append(_tables.text_table(_FILTER_HEADER, filt_rows, "Photometry and road use (CIE D65, CIE 1931 2 deg)",
                                 width))
    if rend_rows:
        parts.append(_tables.text_table(_RENDITION_HEADER[:-1], [r[:-1] for r in rend_rows],
                                 "Colour rendition, illuminant x filter", width))
    if obs_rows and len(obs_rows[0]) > 2:
        parts.append(textwrap.fill(_observer_note(doc), width=width) + "\n")
        if any("population" in o for o in doc["observers"]):
            parts.append(textwrap.fill(_POPULATION_NOTE, width=width) + "\n")
        specs = [o["observer"] for o in doc["observers"]]
        labels = dict(zip(specs, table_labels(specs)))   # short labels; the legend line maps them to specs
        for f in doc["filters"]:
            rows = [_observer_row(f["name"], o, card.metrics, compact=True, labels=labels) for o in f["observers"]]
            parts.append(_tables.text_table(_observer_header(card.metrics, compact=True), rows,
                                     f"Per observer: {f['name']} - costs: {_costs_text(f)}", width))
        helped = _helped_rows(doc, labels)
        if helped:
            parts.append(_tables.text_table(helped[0], helped[1],
                                            "Share of population members helped (Wilson 95 % interval)", width))
        if label_legend(specs):
            parts.append(textwrap.fill(label_legend(specs), width=width, break_long_words=False,
                                       break_on_hyphens=False) + "\n")
    if card.sensitivity is not None:
        parts.append(textwrap.fill(_SENSITIVITY_NOTE, width=width) + "\n")
        for name, rows in _sensitivity_rows(card.sensitivity):
            parts.append(_tables.text_table(_SENSITIVITY_HEADER, rows, f"Sensitivity: {name}", width))
    notes = []
    if "road_use" in card.metrics:
        unsuitable = [f for f in doc["filters"] if not f["road_use"]["suitable"]]
        if len(doc["filters"]) <= 20:
            for f in unsuitable:
                failing = [s for s in f["road_use"]["reasons"]
                           if any(w in s for w in ("not suitable", "falls to", "below the limit", "outside"))]
                notes.append(f"{f['name']}: not for road use. " + " ".join(failing))
        elif unsuitable:
            notes.append(f"{len(unsuitable)} of {len(doc['filters'])} filters fail a road-use check "
                         "(see --format json for the reasons).")
        lights = "; ".join(f"{c}: " + ", ".join(l["name"] + (" (measured)" if l["kind"] == "measured" else "")
                                                for l in v["lights"])
                           for c, v in doc["signal_lights"].items())
        modelled = any(l["kind"] == "modelled" for v in doc["signal_lights"].values() for l in v["lights"])
        notes.append("Signal lights: " + lights + (" - modelled spectra are an approximation, from memory."
                                                    if modelled else "."))
        notes.append(_limits_text(doc))
    notes += _inputs_lines(doc, markdown=False)
    notes += [doc["caveat"], *doc["cautions"]]
    wrapped = "\n".join(textwrap.fill(n, width=width) for n in notes)
    return "\n".join(parts) + "\n" + wrapped + "\n"


_FILTER_HEADER = ["filter", "tau_v %", "cat", "day", "night", "min T/tau_v", "lowest Q", "x", "y", "du'v'"]
_RENDITION_HEADER = ["filter", "Rf", "Rg", "Ra", "CCT K", "Duv", "chroma shifts h1-h16 %"]
#: Why a gain is not a recommendation (printed with every table of gains).
GAIN_CAUTION = ("A gain is not a recommendation: a smooth tint can raise the red-green gain as much as a notch; "
                "read every gain beside its costs (luminous transmittance, white shift, Rf for the normal "
                "observer, pairs lost).")


def _observer_note(doc: dict) -> str:
    """The note above the per-observer tables: what each column is, with every threshold named."""
    m = doc["models"]
    t = m["discrimination"]["threshold_jnd"]
    dist = "/".join(f"{x:g}" for x in m["discrimination"]["distribution_thresholds_jnd"])
    tn, td = m["confusion"]["normal_threshold_jnd"], m["confusion"]["deficient_threshold_jnd"]
    return ("Gains: RMS contrast with the filter / without it (1 = no change; RG red-green, BY blue-yellow, lum "
            "luminance). Surface pairs, receptor-noise model (Vorobyev & Osorio 1998), without -> with the "
            f"filter: discriminable at Delta S >= {t:g} JND (+gained/-lost; counts at {dist} JND in the JSON); "
            f"confused = Delta S >= {tn:g} JND for the normal observer and < {td:g} JND for this observer "
            "(-resolved/+created). dS ratio: median Delta S, over the pairs the normal observer discriminates, "
            "with / without the filter (no threshold of its own; above 1 the surfaces move apart). "
            + _discernible_note(m) + GAIN_CAUTION)


def _discernible_note(models: dict) -> str:
    """The sentence on the discernible-colour columns (empty without the group)."""
    d = models.get("discernible")
    if not d:
        return ""
    where = ", ".join(s["name"] for s in d["stimuli"])
    pooled = " (pooled: union of the stimuli's colours)" if len(d["stimuli"]) > 1 else ""
    return (f"Colours: number of discernible colours of {where}{pooled}, counted as occupied cubes of edge "
            f"{d['cube_size']:g} ({d['method']}: {d['space']}), without -> with the filter; ratio = with / "
            "without; vs normal = this observer's count / the normal observer's without a filter. ")


def _costs_text(f: dict) -> str:
    """The costs of one filter, for the line beside its gains."""
    rf = (f.get("rendition") or {}).get("rf")
    rf_text = f"Rf {_fmt(rf, 1)}" if "rendition" in f else "Rf not computed (--metrics all)"
    if "luminous_transmittance" not in f:
        return f"tau_v and white shift not computed (add photometry to --metrics), {rf_text}"
    tv = f.get("luminous_transmittance")
    return (f"tau_v {_fmt(None if tv is None else 100 * tv, 1)} %, white shift du'v' {_fmt(f.get('white_shift'), 4)}, "
            + rf_text)


def _limits_text(doc: dict) -> str:
    from .metrics.road_use import describe_signal_limits

    ru = doc["models"]["road_use"]
    return describe_signal_limits(ru["signal_limits"], ru["signal_limits_reading"])


_SENSITIVITY_NOTE = ("Sensitivity: each verdict recomputed with one model constant or threshold moved at a time "
                     "(Weber fraction x0.5 and x1.5, L:M cone ratio 1:1 and 4:1, every JND threshold x0.8 and "
                     "x1.25, the other reading of the signal-quotient limits). 'robust' = the sign of the change "
                     "(net pairs, ratio - 1, road-use verdict) is the same in every variation.")
_SENSITIVITY_HEADER = ["observer", "measure", "default", "range", "robust"]
_SENSITIVITY_LABELS = {"discriminable_net": "discriminable gained - lost",
                       "confused_net_resolved": "confused resolved - created",
                       "median_delta_s_ratio": "dS ratio",
                       "discernible_ratio": "colours ratio"}


def _sensitivity_rows(sens: dict):
    """(filter name, rows) for the sensitivity tables."""
    def show(v):
        return "-" if v is None else (f"{v:.3f}" if isinstance(v, float) else f"{v:+d}" if isinstance(v, int)
                                      and not isinstance(v, bool) else str(v))

    for f in sens["filters"]:
        rows = []
        if "road_use_suitable" in f:
            r = f["road_use_suitable"]
            vals = r["values"]
            rows.append(["-", "road use (day)", _yes(vals["default"]),
                         ", ".join(f"{k}: {_yes(v)}" for k, v in vals.items() if k != "default"), _yes(r["robust"])])
        for o in f["observers"]:
            for key, label in _SENSITIVITY_LABELS.items():
                if key in o:
                    r = o[key]
                    if "statistic" in r:  # a population: shares of members (score_sensitivity._population_rows)
                        label = f"{label}: {r['statistic']}"
                    rows.append([o["observer"], label, show(r["values"]["default"]),
                                 f"{show(r['min'])} .. {show(r['max'])}", _yes(r["robust"])])
        yield f["name"], rows


def _filter_row(f: dict) -> list:
    ru = f.get("road_use")
    q = f.get("signal_quotients") or {}
    lowest = min(((v, c) for c, v in q.items() if v is not None), default=None)
    cat = f.get("iso12312_category", None)
    tv = f.get("luminous_transmittance")
    chrom = f.get("chromaticity") or {}
    return [f["name"], _fmt(None if tv is None else 100 * tv, 1),
            ("-" if ru is None else ("out" if cat is None else str(cat))),
            "-" if ru is None else _yes(ru["suitable"]), "-" if ru is None else _yes(ru["night_suitable"]),
            "-" if ru is None or ru["min_ratio_475_650"] is None else (
                f"{ru['min_ratio_475_650']:.2g}" if ru["min_ratio_475_650"] < 0.095 else
                _fmt(ru["min_ratio_475_650"], 2)),
            "-" if lowest is None else f"{lowest[0]:.2f} {lowest[1]}",
            _fmt(chrom.get("x"), 4), _fmt(chrom.get("y"), 4), _fmt(f.get("white_shift"), 4)]


def _observer_header(metrics, *, compact: bool = False) -> list:
    h = [] if compact else ["filter"]
    h.append("observer")
    if "contrast" in metrics:
        h += ["RG gain", "BY gain", "lum gain"]
    if "discrimination" in metrics:
        h += ["discriminable", "+/-"] if compact else [
            "discriminable without", "with", "gained", "lost"]
    if "confusion" in metrics:
        h += ["confused", "res./new"] if compact else ["confused without", "with", "resolved", "created"]
    if "discrimination" in metrics or "confusion" in metrics:
        h += ["dS ratio"]
    if "discernible" in metrics:
        h += ["colours", "ratio", "vs normal"] if compact else [
            "colours without", "with", "ratio", "vs normal without", "vs normal with"]
    if not compact:
        h += ["tau_v %", "du'v'", "Rf"]
    return h


def _observer_row(name: str, o: dict, metrics, *, compact: bool = False, f: dict | None = None,
                  labels: dict | None = None) -> list:
    if "population" in o:  # tables show the median member (JSON: the spread and the shares helped)
        o = _population_csv_entries(o, statistics=("p50",))[0]
    row = [] if compact else [name]
    row.append((labels or {}).get(o["observer"], o["observer"]))
    if "contrast" in metrics:
        row += [_fmt(o["red_green_gain"], 3), _fmt(o["blue_yellow_gain"], 3), _fmt(o["luminance_contrast_gain"], 3)]
    if "discrimination" in metrics:
        row += _pair_cells(o["discriminable_pairs"], PAIR_KEYS, "+-", compact)
    if "confusion" in metrics:
        row += _pair_cells(o["confusion_pairs"], CONFUSION_KEYS, "-+", compact)
    if "discrimination" in metrics or "confusion" in metrics:
        row.append(_fmt(median_ratio(o), 3))
    if "discernible" in metrics:
        row += _discernible_cells(o.get("discernible_colours"), compact)
    if f is not None:
        tv = f.get("luminous_transmittance")
        row += [_fmt(None if tv is None else 100 * tv, 1), _fmt(f.get("white_shift"), 4),
                _fmt((f.get("rendition") or {}).get("rf"), 1)]
    return row


def _pair_cells(block: dict | None, keys: tuple, signs: str, compact: bool) -> list:
    """Cells of a pair block: without, with and the two changes (``keys``), or ``without->with`` and the
    changes signed by ``signs`` (compact); dashes where the block does not apply."""
    if compact:
        if block is None:
            return ["-", "-"]
        return [f"{block[keys[0]]}->{block[keys[1]]}", f"{signs[0]}{block[keys[2]]}/{signs[1]}{block[keys[3]]}"]
    return ["-"] * 4 if block is None else [block[k] for k in keys]


def _discernible_cells(b: dict | None, compact: bool) -> list:
    """Cells of the discernible-colour block (pooled over the stimuli): counts, ratio with / without, and the
    ratios to the normal observer without a filter (compact: without -> with)."""
    if b is None:
        return ["-"] * (3 if compact else 5)

    def n(v):
        return "-" if v is None else f"{v:.0f}"

    if compact:
        return [f"{n(b['without'])}->{n(b['with'])}", _fmt(b["ratio"], 3),
                f"{_fmt(b['ratio_to_normal'], 3)}->{_fmt(b['ratio_to_normal_with'], 3)}"]
    return [n(b["without"]), n(b["with"]), _fmt(b["ratio"], 3), _fmt(b["ratio_to_normal"], 3),
            _fmt(b["ratio_to_normal_with"], 3)]


def median_ratio(o: dict):
    """The median Delta S ratio of an observer entry (the same number in both pair blocks)."""
    c = o.get("confusion_pairs")
    if c is not None:
        return c["median_delta_s_ratio"]
    d = o.get("delta_s_distribution")
    return None if d is None else d["median_ratio"]


def _inputs_lines(doc: dict, *, markdown: bool) -> list:
    b = "- " if markdown else ""
    ill, surf = doc["illuminant"], doc["surfaces"]
    lines = [f"{b}Illuminant: {ill['name']} ({ill['source']}).",
             f"{b}Surfaces: {surf['name']}, {surf['count']} samples, {surf['pairs']} pairs ({surf['source']}).",
             f"{b}Adaptation: {doc['adaptation']['spec']} ({doc['adaptation']['model']}).",
             f"{b}Observers: " + ", ".join(o["observer"] for o in doc["observers"]) + "."]
    if markdown and "signal_lights" in doc:
        for c, v in doc["signal_lights"].items():
            names = ", ".join(f"{l['name']} ({l['kind']}: {l['source']})" for l in v["lights"])
            lines.append(f"- Signal lights, {c} (limit {v['limit']:g}): {names}.")
        lines.append(f"- {_limits_text(doc)}")
    return lines


#: Printed with the tables when an observer is a population.
_POPULATION_NOTE = ("Population rows (a spec with n=N) show the median member; --format json gives each metric's "
                    "mean, SD and 2.5/50/97.5 percentiles over the members and the share of members helped, with a "
                    "Wilson 95 % interval (--format csv: one row per statistic).")
def _pick(v, stat: str):
    if isinstance(v, dict):
        if set(v) == set(_STATS):
            return v[stat]
        return {k: _pick(x, stat) for k, x in v.items()}
    return v


_HELPED_LABELS = {"red_green_gain": "RG gain > 1", "blue_yellow_gain": "BY gain > 1",
                  "discriminable_pairs_net": "discr. net > 0", "confusion_pairs_net": "confused net > 0",
                  "median_delta_s_ratio": "dS ratio > 1", "discernible_ratio": "colours ratio > 1"}


def _helped_rows(doc: dict, labels: dict | None = None):
    """(header, rows) of the shares helped, one row per filter x population; None without populations."""
    rows, keys = [], []
    for f in doc["filters"]:
        for o in f["observers"]:
            if "population" not in o:
                continue
            for k in o["helped"]:
                if k not in keys:
                    keys.append(k)
            rows.append((f["name"], o))
    if not rows:
        return None

    def cell(h):
        if h is None or h["share"] is None:
            return "-"
        return f"{100 * h['share']:.0f} % ({100 * h['ci_low']:.0f}-{100 * h['ci_high']:.0f})"

    header = ["filter", "population", *(_HELPED_LABELS.get(k, k) for k in keys)]
    return header, [[name, (labels or {}).get(o["observer"], o["observer"]), *(cell(o["helped"].get(k)) for k in keys)]
                    for name, o in rows]


def _population_csv_entries(o: dict, statistics=_STATS) -> list:
    """A fixed observer's entry as is; a population's as one entry per statistic (``statistic`` key)."""
    if "population" not in o:
        return [o]
    body = {k: v for k, v in o.items() if k not in ("members", "helped", "population", "observer")}
    return [{"observer": o["observer"], "statistic": stat, "population": o["population"], **_pick(body, stat),
             "helped": o["helped"]} for stat in statistics]


def _flatten(d: dict, prefix: str = "") -> dict:
    """Nested dicts -> dotted keys; lists of numbers -> key.1, key.2, ...; lists of text -> one joined cell."""
    out = {}
    for k, v in d.items():
        key = f"{prefix}{k}"
        if isinstance(v, dict):
            out.update(_flatten(v, key + "."))
        elif v is None and k in _DICT_KEYS:
            out.update({f"{key}.{s}": None for s in _DICT_KEYS[k]})
        elif isinstance(v, list) and (k in _TEXT_LISTS or (v and all(isinstance(x, str) for x in v))):
            out[key] = " ".join(v)
        elif isinstance(v, list):
            out.update({f"{key}.{j + 1}": x for j, x in enumerate(v)})
        else:
            out[key] = v
    return out


#: Keys whose value is a list of sentences: one CSV cell, even when empty.
_TEXT_LISTS = ("reasons", "warnings")
#: Keys whose value is a dict or null, with the sub-keys a null flattens to (CSV columns stay aligned).
_DICT_KEYS = {"confusion_pairs": ("normal_threshold_jnd", "deficient_threshold_jnd", "normally_discriminable",
                                  *CONFUSION_KEYS, "median_delta_s_without", "median_delta_s_with",
                                  "median_delta_s_ratio"),
              "discriminable_pairs": ("threshold_jnd", *PAIR_KEYS),
              "delta_s_distribution": (*(f"{_at}.{k}" for _at in ("at_1_jnd", "at_2_jnd", "at_4_jnd")
                                         for k in PAIR_KEYS), "median_without", "median_with", "median_ratio")}

"""The report's tables, read from the scorecard's JSON document (the numbers the report publishes).

A mixin of :class:`cvdfilter.reporting.Report`: inputs and reproduction rows, photometry and road use,
rendition, the per-observer table (HTML grouped, Markdown per filter, flat), the observer-population table.
The document is the one the report embeds (``Report.card``), so every table matches it cell for cell.

Public: :class:`ReportTables`, :data:`POPULATION_NOTE`, :data:`OBSERVER_NOTE`.
"""

from __future__ import annotations

import html
import re

from .cautions import CAVEAT
from .tables import fixed as _fmt, markdown_cell as _md_cell, markdown_lines as _md_table, yes_no as _yes

__all__ = ["ReportTables", "POPULATION_NOTE", "OBSERVER_NOTE"]


class ReportTables:
    """Tables of a report (mixin: needs ``card``, ``filters``, ``figures`` and ``environment``)."""

    def _input_rows(self) -> list[tuple[str, str]]:
        c = self.card
        ill, surf, ad = c["illuminant"], c["surfaces"], c["adaptation"]
        grid = c["grid"]
        models = c.get("models", {})
        disc = models.get("discrimination", {})
        rows = [
            ("Illuminant", f"{ill['name']} ({ill['source']})"),
            ("Observers", "; ".join(f"{o['observer']} ({o['kind']})" for o in c["observers"])),
            ("Surface set", f"{surf['name']}: {surf['count']} samples, {surf['pairs']} pairs ({surf['source']})"),
            ("Adaptation", f"{ad['spec']} ({ad['model']})"),
            ("Wavelength grid", f"{grid['start_nm']:g}-{grid['end_nm']:g} nm in {grid['step_nm']:g} nm steps"),
            ("Metrics", ", ".join(c.get("metrics", []))),
        ]
        if disc:
            rows.append(("Receptor noise", f"Weber fraction {disc.get('weber_fraction_l')} (L cone), cone ratios "
                                           f"L:M:S {':'.join(f'{v:g}' for v in disc.get('cone_ratios_lms', []))}"))
            rows.append(("Discrimination thresholds",
                         f"discriminable at Delta S >= {disc.get('threshold_jnd', 1.0):g} JND; distribution at "
                         + ", ".join(f"{t:g}" for t in disc.get("distribution_thresholds_jnd", [])) + " JND"))
        conf = models.get("confusion")
        if conf:
            rows.append(("Confused pairs", f"Delta S >= {conf.get('normal_threshold_jnd', 1.0):g} JND for the normal "
                                           f"observer and < {conf.get('deficient_threshold_jnd', 1.0):g} JND for the "
                                           "deficient observer (receptor-noise model)"))
        road = models.get("road_use")
        if road:
            limits = ", ".join(f"{k} {v:g}" for k, v in road["signal_limits"].items())
            rows.append(("Signal-quotient limits", f"{limits} (reading '{road['signal_limits_reading']}': "
                                                   f"{road['signal_limits_source']})"))
        for colour_name, v in c.get("signal_lights", {}).items():
            rows.append((f"Signal lights, {colour_name}",
                         f"limit {v['limit']:g}; " + ", ".join(f"{l['name']} ({l['kind']}: {l['source']})"
                                                              for l in v["lights"])))
        env = self.environment
        rows.append(("Tool", f"cvdfilter {env['version']}, Python {env['python']}"))
        rows.append(("Libraries", ", ".join(f"{k} {v}" for k, v in env["libraries"].items())))
        rows.append(("Platform", env["platform"]))
        return rows

    def _filter_input_rows(self) -> tuple[list, list]:
        header = ["filter", "source", "input", "SHA-256 of the file", "SHA-256 of the transmittance on the grid"]
        rows = [[f["name"], f["source"], f["input"] or "", f["sha256_file"] or "-", f["sha256_transmittance"]]
                for f in self.filters]
        return header, rows

    def _photometry_table(self) -> tuple[list, list]:
        header = ["filter", "luminous transmittance (%)", "ISO 12312-1 category", "road use (day)", "night",
                  "min T / tau_v, 475-650 nm", "signal quotients R / Y / G / B", "x", "y", "white shift du'v'"]
        rows = []
        for f in self.card["filters"]:
            ru = f.get("road_use") or {}
            q = f.get("signal_quotients") or {}
            ch = f.get("chromaticity") or {}
            tv = f.get("luminous_transmittance")
            cat = f.get("iso12312_category")
            rows.append([f["name"], _fmt(None if tv is None else 100 * tv, 1),
                         "-" if not ru else ("outside" if cat is None else str(cat)),
                         _yes(ru.get("suitable")), _yes(ru.get("night_suitable")),
                         _fmt(ru.get("min_ratio_475_650"), 3),
                         " / ".join(_fmt(q.get(k), 2) for k in ("red", "yellow", "green", "blue")) if q else "-",
                         _fmt(ch.get("x"), 4), _fmt(ch.get("y"), 4), _fmt(f.get("white_shift"), 4)])
        return header, rows

    def _rendition_table(self) -> tuple[list, list]:
        header = ["filter", "Rf", "Rg", "Ra", "CCT (K)", "Duv", "local chroma shifts h1-h16 (%)"]
        rows = []
        for f in self.card["filters"]:
            r = f.get("rendition")
            if r:
                rows.append([f["name"], _fmt(r["rf"], 1), _fmt(r["rg"], 1), _fmt(r["ra"], 1), _fmt(r["cct_k"], 0),
                             _fmt(r["duv"], 4), " ".join(_fmt(v, 0) for v in r["chroma_shifts"])])
        return header, rows

    #: Per-observer table: column groups (HTML spans them over their columns) and the columns.
    # Costs (luminous transmittance, white shift, Rf for the normal observer) are the filter's, the same for
    # every observer: they head each filter's group of rows (and sit in every row of the flat table), so a
    # gain is never shown alone.
    _OBSERVER_GROUPS = (("", 1), ("contrast gain (with / without filter)", 3),
                        ("discriminable surface pairs", 4), ("confused surface pairs", 4), ("", 1))
    _OBSERVER_COLUMNS = ("observer", "red-green", "blue-yellow", "luminance", "without filter", "with filter",
                         "gained", "lost", "without filter", "with filter", "resolved", "created",
                         "median \u0394S ratio")
    _OBSERVER_FLAT = ("contrast gain: red-green", "contrast gain: blue-yellow", "contrast gain: luminance",
                      "discriminable pairs: without", "with", "gained", "lost", "confused pairs: without", "with",
                      "resolved", "created", "median Delta S ratio", "cost: luminous transmittance (%)",
                      "cost: white shift du'v'", "cost: Rf (normal observer)")

    def _observer_rows(self) -> list[tuple[str, list]]:
        """Per filter: its name, its costs and one row per observer (readable observer label, the numbers, then
        the filter's three costs repeated)."""
        from .observers.labels import observer_label

        out = []
        for f in self.card["filters"]:
            tv = f.get("luminous_transmittance")
            costs = [_fmt(None if tv is None else 100 * tv, 1), _fmt(f.get("white_shift"), 4),
                     _fmt((f.get("rendition") or {}).get("rf"), 1)]
            rows = []
            for o in f["observers"]:
                if "population" in o:   # the median member (the population table gives the spread)
                    o = {"observer": o["observer"], **_median_member(o)}
                p = o.get("discriminable_pairs")
                cp = o.get("confusion_pairs")
                dist = o.get("delta_s_distribution")
                ratio = cp["median_delta_s_ratio"] if cp else (dist or {}).get("median_ratio")
                try:
                    who = observer_label(o["observer"])
                except Exception:   # a label is cosmetic; the spec is always a valid name
                    who = str(o["observer"])
                rows.append([who, _fmt(o.get("red_green_gain"), 3),
                             _fmt(o.get("blue_yellow_gain"), 3), _fmt(o.get("luminance_contrast_gain"), 3),
                             *(["-"] * 4 if not p else [p["without"], p["with"], p["gained"], p["lost"]]),
                             *(["-"] * 4 if not cp else [cp["without"], cp["with"], cp["resolved"], cp["created"]]),
                             _fmt(ratio, 3), *costs])
            out.append((f["name"], costs, rows))
        return out

    @staticmethod
    def _costs_text(costs) -> str:
        tv, ws, rf = costs
        return (f"costs: luminous transmittance {tv} %, white shift \u0394u\u2032v\u2032 {ws}, "
                f"Rf (normal observer) {rf}")

    def _observer_table(self) -> tuple[list, list]:
        """The per-observer numbers as one flat table (filter, observer, ...): for CSV-like uses."""
        header = ["filter", "observer", *self._OBSERVER_FLAT]
        return header, [[name, *r] for name, _, rows in self._observer_rows() for r in rows]

    def _observer_html(self) -> str:
        """Grouped headers, a full-width row naming each filter, then its observers (no filter column:
        long names never squeeze the numbers, and the table fits a 1,200-pixel window)."""
        e = html.escape
        n_cols = len(self._OBSERVER_COLUMNS)
        out = ['<table class="observers">', "<thead><tr>" + "".join(
            f'<th colspan="{span}" class="group">{e(g)}</th>' for g, span in self._OBSERVER_GROUPS) + "</tr>",
               "<tr>" + "".join(f"<th>{e(c)}</th>" for c in self._OBSERVER_COLUMNS) + "</tr></thead>", "<tbody>"]
        for name, costs, rows in self._observer_rows():
            out.append(f'<tr class="filter"><th colspan="{n_cols}" scope="rowgroup">{e(name)} '
                       f'<span class="costs">\u2014 {e(self._costs_text(costs))}</span></th></tr>')
            for r in rows:
                r = r[:n_cols]
                out.append("<tr>" + "".join(f'<td class="num">{e(str(v))}</td>' if _is_number(v) and j else
                                            f"<td>{e(str(v))}</td>" for j, v in enumerate(r)) + "</tr>")
        out += ["</tbody>", "</table>"]
        return "\n".join(out)

    def _observer_markdown(self) -> list[str]:
        header = ["observer", *self._OBSERVER_FLAT[:len(self._OBSERVER_COLUMNS) - 1]]
        lines = []
        for name, costs, rows in self._observer_rows():
            lines += [f"**{_md_cell(name)}** \u2014 {self._costs_text(costs)}", "",
                      *_md_table(header, [r[:len(header)] for r in rows]), ""]
        return lines

    def _population_table(self) -> tuple[list, list, str] | None:
        """(header, rows, legend line) of the populations: per filter x population x metric the median
        member, the 2.5-97.5 % range of the members and, where defined, the share helped with its Wilson
        95 % interval; None without populations."""
        from .observers.labels import label_legend, table_labels

        specs = [o["observer"] for o in self.card["observers"] if "population" in o]
        if not specs:
            return None
        labels = dict(zip(specs, table_labels(specs)))
        header = ["filter", "population", "metric", "median member", "95 % of members", "members helped (95 % CI)"]
        rows = []
        for f in self.card["filters"]:
            for o in f["observers"]:
                if "population" not in o:
                    continue
                helped = o.get("helped") or {}
                for name, get, digits, key in _POPULATION_ROWS:
                    v = get(o)
                    h = helped.get(key) if key else None
                    if v is None and h is None:
                        continue
                    rows.append([f["name"], labels[o["observer"]], name,
                                 "-" if v is None else _fmt(v["p50"], digits),
                                 "-" if v is None else f"{_fmt(v['p2_5'], digits)} to {_fmt(v['p97_5'], digits)}",
                                 _helped_cell(h)])
        return header, rows, label_legend(specs, prefix="Populations: ")

    def _numbered(self) -> list[tuple]:
        """(number or None, figure): figures that are drawn are numbered 1, 2, ... in order; those left out
        get None (a note, no caption)."""
        out, k = [], 0
        for fig in self.figures:
            if fig.svg:
                k += 1
                out.append((k, fig))
            else:
                out.append((None, fig))
        return out

    def _reasons(self) -> list[tuple[str, list]]:
        return [(f["name"], f["road_use"]["reasons"]) for f in self.card["filters"] if f.get("road_use")]


# --- helpers ----------------------------------------------------------------------------------

_OBSERVER_NOTE = ("Gains are the RMS contrast of the surfaces with the filter divided by that without it (1 = no "
                  "change). Pairs are surface pairs in the receptor-noise model (Vorobyev & Osorio 1998): "
                  "discriminable at the threshold named under Inputs (1 JND by default), and confused when the "
                  "normal observer discriminates them and the deficient observer does not; the median Delta S "
                  "ratio (over the pairs the normal observer discriminates, with / without the filter) needs no "
                  "threshold. '-' where a metric does not apply (no red-green axis for a dichromat, no confused "
                  "pairs for a normal observer). A gain is not a recommendation: a smooth tint can raise the "
                  "red-green gain as much as a notch; every gain is printed beside its costs.")
OBSERVER_NOTE = _OBSERVER_NOTE

#: What the population table is, printed above it (the caveat covers every number as well).
POPULATION_NOTE = ("Each population (an observer spec with n=N) is a sample of model observers whose lens, macular "
                   "and photopigment densities and pigment peaks vary as Asano, Fairchild & Blonde (2016) model "
                   "them (anomalous trichromats also in the position of the anomalous pigment). Median member and "
                   "the range holding 95 % of the members (2.5-97.5 percentiles); members helped: gain or median "
                   "Delta S ratio above 1, or net pairs above 0, with a Wilson 95 % interval. The spread is the "
                   "model's, not that of measured people: " + CAVEAT)


def _median_member(o: dict) -> dict:
    """A population entry's statistics dicts replaced by their medians (p50), recursively."""
    def pick(v):
        if isinstance(v, dict):
            if "p50" in v and "p2_5" in v:
                return v["p50"]
            return {k: pick(x) for k, x in v.items()}
        return v

    return {k: pick(v) for k, v in o.items() if k not in ("observer", "population", "helped", "members")}


def _helped_cell(h) -> str:
    if not h or h.get("share") is None:
        return "-"
    return f"{100 * h['share']:.0f} % ({100 * h['ci_low']:.0f}-{100 * h['ci_high']:.0f} %)"


def _nested(*keys):
    def get(o):
        v = o
        for k in keys:
            v = v.get(k) if isinstance(v, dict) else None
        return v if isinstance(v, dict) and "p50" in v else None
    return get


#: Population table rows: label, getter of the statistics dict, digits, key of ``helped`` (or None).
_POPULATION_ROWS = (
    ("red-green gain", _nested("red_green_gain"), 3, "red_green_gain"),
    ("blue-yellow gain", _nested("blue_yellow_gain"), 3, "blue_yellow_gain"),
    ("luminance gain", _nested("luminance_contrast_gain"), 3, None),
    ("discriminable pairs gained", _nested("discriminable_pairs", "gained"), 1, None),
    ("discriminable pairs lost", _nested("discriminable_pairs", "lost"), 1, None),
    ("discriminable pairs, net gain > 0", lambda o: None, 0, "discriminable_pairs_net"),
    ("confused pairs resolved", _nested("confusion_pairs", "resolved"), 1, None),
    ("confused pairs created", _nested("confusion_pairs", "created"), 1, None),
    ("confused pairs, net resolved > 0", lambda o: None, 0, "confusion_pairs_net"),
    ("median Delta S ratio", lambda o: _nested("confusion_pairs", "median_delta_s_ratio")(o)
     or _nested("delta_s_distribution", "median_ratio")(o), 3, "median_delta_s_ratio"),
)


def _is_number(v) -> bool:
    if isinstance(v, (int, float)) and not isinstance(v, bool):
        return True
    return bool(re.fullmatch(r"-?\d+(\.\d+)?", str(v)))


def _html_table(header, rows, *, mono_cols=()) -> str:
    e = html.escape
    out = ["<table>", "<thead><tr>" + "".join(f"<th>{e(str(h))}</th>" for h in header) + "</tr></thead>", "<tbody>"]
    for r in rows:
        cells = []
        for j, v in enumerate(r):
            cls = "mono" if j in mono_cols else ("num" if _is_number(v) else "")
            cells.append(f'<td class="{cls}">{e(str(v))}</td>' if cls else f"<td>{e(str(v))}</td>")
        out.append("<tr>" + "".join(cells) + "</tr>")
    out += ["</tbody>", "</table>"]
    return "\n".join(out)


"""Reports: every number of a scorecard, its figures, its models and everything needed to reproduce it.

:func:`report` scores the filters (:func:`cvdfilter.scorecard.score`), draws
the spectrum, chromaticity, gains, swatches and hues figures
(:mod:`cvdfilter.figures`) and assembles a :class:`Report` that writes

* a self-contained HTML file: figures embedded as inline SVG, styles inline, no
  scripts and no external requests (a Content-Security-Policy forbids any);
* or a Markdown file with the figures as SVG files beside it (in
  ``<name>_figures/``, with the full scorecard JSON).

Sections: the caveat; inputs and reproduction (filters with SHA-256
checksums, illuminant, observers, surface set, adaptation, grid, model
settings, the command line, tool and library versions); the scorecard
tables; the figures; the models and their references; the cautions.

A file filter's checksum is the SHA-256 of the file's bytes; a spec, an
example resampled from a file or an array filter also gets the SHA-256 of
its transmittance on the grid (little-endian float64), so any filter can be
checked against the report.

Public: :func:`report`, :class:`Report`, :class:`ReportFigure`, :data:`REFERENCES`,
:data:`SECTIONS`, :func:`environment`, :func:`transmittance_sha256`.
"""

from __future__ import annotations

import hashlib
import html
import json
import os
import pathlib
import re
import shlex
from collections.abc import Iterable
from dataclasses import dataclass, field

import numpy as np

from ._version import __version__
from .cautions import CAVEAT, EYE_CARE_CAUTION, ROAD_CAUTION
from .errors import InputError
from .tables import fixed as _fmt, markdown_cell as _md_cell, markdown_lines as _md_table, yes_no as _yes

__all__ = ["report", "Report", "ReportFigure", "REFERENCES", "SECTIONS", "environment", "transmittance_sha256",
           "REPORT_FIGURES"]

#: Section id -> heading, in order.
SECTIONS = {
    "caveat": "Caveat",
    "inputs": "Inputs and reproduction",
    "scorecard": "Scorecard",
    "figures": "Figures",
    "models": "Models and references",
    "cautions": "Cautions",
}

#: Figures a report draws, in order (``sweep`` only when the filters differ in a parameter).
REPORT_FIGURES = ("spectrum", "chromaticity", "gains", "population", "swatches", "sweep", "hues")

#: (what it is used for, reference)
REFERENCES = (
    ("Cone fundamentals (normal observers, by age and field size)",
     "CIE 170-1:2006 Fundamental chromaticity diagram with physiological axes, Part 1; Stockman, A. & "
     "Sharpe, L. T. (2000) Vision Research 40, 1711-1737"),
    ("Anomalous trichromats: pigment shifted on a log-wavenumber axis",
     "Stockman & Sharpe (2000) template shifts; CIE 170-1:2006 self-screening, lens and macular pigment"),
    ("Anomalous trichromats, alternative model; simulation for a normal viewer",
     "Machado, G. M., Oliveira, M. M. & Fernandes, L. A. F. (2009) IEEE TVCG 15(6), 1291-1298"),
    ("Dichromats: simulation for a normal viewer",
     "Brettel, H., Vienot, F. & Mollon, J. D. (1997) JOSA A 14(10), 2647-2655; Vienot, F., Brettel, H. & "
     "Mollon, J. D. (1999) Color Research & Application 24(4), 243-252"),
    ("Copunctal points and confusion lines",
     "Smith, V. C. & Pokorny, J. (1975) Vision Research 15, 161-171; Wyszecki, G. & Stiles, W. S. (1982) "
     "Color Science, 2nd ed., section 5.14"),
    ("MacLeod-Boynton chromaticity", "MacLeod, D. I. A. & Boynton, R. M. (1979) JOSA 69, 1183-1186, "
                                     "scaled as in CIE 170-1:2006"),
    ("Adaptation", "von Kries coefficient law (von Kries 1902)"),
    ("Discriminable pairs", "Vorobyev, M. & Osorio, D. (1998) Proc. R. Soc. B 265, 351-358 "
                            "(receptor-noise-limited model)"),
    ("Luminous transmittance, categories, signal-light quotients",
     "ISO 12312-1:2013 (its own tables govern); CIE 1931 2 deg V(lambda), CIE illuminant D65"),
    ("Colour rendition", "CIE 224:2017 / ANSI/IES TM-30-18 (Rf, Rg, local chroma shifts); CIE 13.3-1995 (Ra); "
                         "computed with colour-science"),
    ("Surface colours in the swatches", "Mallett, I. & Yuksel, C. (2019) Spectral primary decomposition for "
                                        "rendering with sRGB reflectance; IEC 61966-2-1 (sRGB)"),
    ("Figure palette", "Okabe, M. & Ito, K. (2008) Color Universal Design, https://jfly.uni-koeln.de/color/"),
    ("Reference data and colorimetry", "colour-science (Mansencal et al.), https://www.colour-science.org"),
)

_LIBRARIES = ("numpy", "scipy", "colour-science", "matplotlib", "scikit-image", "typer")


def environment() -> dict:
    """Tool, Python, library and platform versions."""
    import platform
    import sys
    from importlib.metadata import PackageNotFoundError, version

    libs = {}
    for name in _LIBRARIES:
        try:
            libs[name] = version(name)
        except PackageNotFoundError:  # pragma: no cover - all are dependencies
            libs[name] = "not installed"
    return {"tool": "cvdfilter", "version": __version__, "python": sys.version.split()[0],
            "libraries": libs, "platform": platform.platform()}


def transmittance_sha256(transmittance) -> str:
    """SHA-256 of a transmittance curve on the grid, as little-endian float64 bytes.

    Examples
    --------
    >>> len(transmittance_sha256(np.ones(401)))
    64
    """
    return hashlib.sha256(np.ascontiguousarray(transmittance, dtype="<f8").tobytes()).hexdigest()


@dataclass
class ReportFigure:
    """One figure of a report: ``kind``, ``caption``, ``svg`` (bytes), ``note`` (why it is missing, if it is)."""

    kind: str
    caption: str
    svg: bytes = b""
    note: str = ""


@dataclass
class Report:
    """A scorecard with its figures, models, cautions and reproduction record.

    Attributes
    ----------
    card : dict
        The scorecard (``Scorecard.to_dict()``).
    filters : list of dict
        Per filter: ``name``, ``source``, ``input``, ``sha256_file`` (or None),
        ``sha256_transmittance``.
    figures : list of ReportFigure
    command : str
        A command line that makes the same report.
    environment : dict
        Tool, Python, library and platform versions (:func:`environment`).
    written : list of pathlib.Path
        Files written by :func:`report` when it was given ``output``.
    """

    card: dict
    filters: list
    figures: list = field(default_factory=list)
    command: str = ""
    environment: dict = field(default_factory=environment)
    written: list = field(default_factory=list)

    # -- content shared by both formats -------------------------------------------------------

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

    # -- HTML ---------------------------------------------------------------------------------

    def to_html(self) -> str:
        """The report as one self-contained HTML page (inline SVG figures, no scripts, no requests)."""
        e = html.escape
        out = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
               '<meta http-equiv="Content-Security-Policy" content="default-src \'none\'; '
               'style-src \'unsafe-inline\'; img-src data:">',
               '<meta name="viewport" content="width=device-width, initial-scale=1">',
               f"<title>cvdfilter report: {e(', '.join(f['name'] for f in self.filters[:3]))}"
               f"{' ...' if len(self.filters) > 3 else ''}</title>",
               f"<style>{_CSS}</style>", "</head>", "<body>", "<main>",
               "<h1>cvdfilter report</h1>",
               f'<p class="meta">cvdfilter {e(self.environment["version"])}; filters: '
               f"{e(', '.join(f['name'] for f in self.filters))}</p>",
               '<section id="caveat" class="caveat">', f"<h2>{SECTIONS['caveat']}</h2>",
               f"<p><strong>{e(CAVEAT)}</strong></p>", "</section>"]
        # inputs
        out += ['<section id="inputs">', f"<h2>{SECTIONS['inputs']}</h2>", "<h3>Filters</h3>",
                _html_table(*self._filter_input_rows(), mono_cols=(3, 4)), "<h3>Settings and versions</h3>",
                '<table class="kv">', *(f"<tr><th>{e(k)}</th><td>{e(v)}</td></tr>" for k, v in self._input_rows()),
                "</table>", "<h3>Command</h3>", f"<pre><code>{e(self.command)}</code></pre>", "</section>"]
        # scorecard
        out += ['<section id="scorecard">', f"<h2>{SECTIONS['scorecard']}</h2>",
                "<h3>Photometry and road use (normal observer, CIE D65, CIE 1931 2 deg)</h3>",
                _html_table(*self._photometry_table())]
        reasons = self._reasons()
        if reasons:
            out.append("<h4>Road-use reasons</h4><ul>")
            out += [f"<li><strong>{e(n)}</strong>: {e(' '.join(r))}</li>" for n, r in reasons]
            out.append("</ul>")
            out.append(f'<p class="caution">{e(ROAD_CAUTION)}</p>')
        header, rows = self._rendition_table()
        if rows:
            out += ["<h3>Colour rendition of the light through the filter (TM-30 / CIE 224, CIE 13.3)</h3>",
                    _html_table(header, rows)]
        out += ["<h3>Per observer</h3>", f"<p>{e(_OBSERVER_NOTE)}</p>", self._observer_html()]
        pop = self._population_table()
        if pop:
            out += ['<h3 id="populations">Observer populations</h3>', f"<p>{e(POPULATION_NOTE)}</p>",
                    _html_table(pop[0], pop[1]), f"<p>{e(pop[2])}</p>"]
        out += [
                "<details><summary>Full scorecard (JSON)</summary>",
                f"<pre><code>{e(json.dumps(self.card, indent=1, ensure_ascii=False))}</code></pre></details>",
                "</section>"]
        # figures
        out += ['<section id="figures">', f"<h2>{SECTIONS['figures']}</h2>"]
        for k, fig in self._numbered():
            if k is None:
                # a figure left out gets a note, never a caption or a number
                out.append(f'<p class="note" id="left-out-{e(fig.kind)}">{e(fig.note)}</p>')
                continue
            out.append(f'<figure id="figure-{e(fig.kind)}">')
            out.append(_inline_svg(fig.svg, f"f{k}", fig.caption))
            out.append(f"<figcaption><strong>Figure {k}.</strong> {e(fig.caption)}</figcaption></figure>")
        out.append("</section>")
        # models
        out += ['<section id="models">', f"<h2>{SECTIONS['models']}</h2>", "<dl>"]
        for use, ref in REFERENCES:
            out.append(f"<dt>{e(use)}</dt><dd>{e(ref)}</dd>")
        out += ["</dl>", "</section>"]
        # cautions
        out += ['<section id="cautions">', f"<h2>{SECTIONS['cautions']}</h2>", "<ul>",
                *(f"<li>{e(c)}</li>" for c in (CAVEAT, ROAD_CAUTION, EYE_CARE_CAUTION)), "</ul>", "</section>",
                "</main>", "</body>", "</html>", ""]
        return "\n".join(out)

    # -- Markdown -----------------------------------------------------------------------------

    def to_markdown(self, figure_dir: str = "report_figures") -> tuple[str, dict]:
        """The report as Markdown plus its side files.

        Returns
        -------
        text : str
        files : dict
            Relative path (under ``figure_dir``) -> bytes: one SVG per figure and ``scorecard.json``.
        """
        files: dict[str, bytes] = {}
        lines = ["# cvdfilter report", "",
                 f"cvdfilter {self.environment['version']}; filters: {', '.join(f['name'] for f in self.filters)}", "",
                 f"## {SECTIONS['caveat']}", "", f"**{CAVEAT}**", "",
                 f"## {SECTIONS['inputs']}", "", "### Filters", "", *_md_table(*self._filter_input_rows()), "",
                 "### Settings and versions", "", *_md_table(["setting", "value"], self._input_rows()), "",
                 "### Command", "", "```", self.command, "```", "",
                 f"## {SECTIONS['scorecard']}", "",
                 "### Photometry and road use (normal observer, CIE D65, CIE 1931 2 deg)", "",
                 *_md_table(*self._photometry_table()), ""]
        reasons = self._reasons()
        if reasons:
            lines += ["#### Road-use reasons", ""] + [f"- **{n}**: {' '.join(r)}" for n, r in reasons]
            lines += ["", f"_{ROAD_CAUTION}_", ""]
        header, rows = self._rendition_table()
        if rows:
            lines += ["### Colour rendition of the light through the filter (TM-30 / CIE 224, CIE 13.3)", "",
                      *_md_table(header, rows), ""]
        json_name = f"{figure_dir}/scorecard.json"
        files[json_name] = (json.dumps(self.card, indent=2, ensure_ascii=False) + "\n").encode("utf-8")
        lines += ["### Per observer", "", _OBSERVER_NOTE, "", *self._observer_markdown()]
        pop = self._population_table()
        if pop:
            lines += ["### Observer populations", "", POPULATION_NOTE, "", *_md_table(pop[0], pop[1]), "", pop[2], ""]
        lines += [f"The full scorecard: [{json_name}]({_md_link(json_name)}).", "",
                  f"## {SECTIONS['figures']}", ""]
        for k, fig in self._numbered():
            if k is None:
                lines += [f"_{fig.note}_", ""]
                continue
            name = f"{figure_dir}/{k:02d}-{fig.kind}.svg"
            files[name] = fig.svg
            lines += [f"![Figure {k}: {fig.kind}]({_md_link(name)})", "", f"**Figure {k}.** {fig.caption}", ""]
        lines += [f"## {SECTIONS['models']}", ""] + [f"- **{use}**: {ref}" for use, ref in REFERENCES] + [""]
        lines += [f"## {SECTIONS['cautions']}", ""] + [f"- {c}" for c in (CAVEAT, ROAD_CAUTION, EYE_CARE_CAUTION)]
        return "\n".join(lines) + "\n", files

    # -- writing ------------------------------------------------------------------------------

    def save(self, path: str | os.PathLike, *, inputs: Iterable[str | os.PathLike] = ()) -> list[pathlib.Path]:
        """Write the report: ``.html``/``.htm`` (one file) or ``.md`` (plus ``<name>_figures/``).

        Everything is built in memory first and each file is written atomically,
        so bad input leaves nothing behind. Returns the paths written.
        """
        from .io.atomic import check_outputs, check_writable, write_bytes, write_text

        path = pathlib.Path(path)
        suffix = path.suffix.lower()
        if suffix in (".html", ".htm"):
            text = self.to_html()
            return [write_text(path, text, inputs=inputs)]
        if suffix == ".md":
            folder = f"{path.stem}_figures"
            text, files = self.to_markdown(folder)
            targets = {path.parent / rel: data for rel, data in files.items()}
            check_outputs([path, *targets], inputs)
            for p in (path, *targets):  # refuse before the first file is written
                check_writable(p)
            written = [write_bytes(p, data, inputs=inputs) for p, data in targets.items()]
            written.append(write_text(path, text, inputs=inputs))
            return written
        raise InputError(f"cannot tell the report format from '{path.name}'", source=str(path),
                         hint="end the file name in .html or .md")


# --- helpers ----------------------------------------------------------------------------------

_OBSERVER_NOTE = ("Gains are the RMS contrast of the surfaces with the filter divided by that without it (1 = no "
                  "change). Pairs are surface pairs in the receptor-noise model (Vorobyev & Osorio 1998): "
                  "discriminable at the threshold named under Inputs (1 JND by default), and confused when the "
                  "normal observer discriminates them and the deficient observer does not; the median Delta S "
                  "ratio (over the pairs the normal observer discriminates, with / without the filter) needs no "
                  "threshold. '-' where a metric does not apply (no red-green axis for a dichromat, no confused "
                  "pairs for a normal observer). A gain is not a recommendation: a smooth tint can raise the "
                  "red-green gain as much as a notch; every gain is printed beside its costs.")

_CSS = """
body{font-family:"DejaVu Sans",Arial,Helvetica,sans-serif;font-size:15px;line-height:1.45;color:#222;margin:0;
background:#fff}
main{max-width:980px;margin:0 auto;padding:1rem 1.25rem 3rem}
h1{font-size:1.6rem;margin:.4rem 0}h2{font-size:1.25rem;border-bottom:1px solid #ccc;padding-bottom:.2rem;
margin-top:2rem}h3{font-size:1.05rem;margin-top:1.4rem}h4{font-size:.95rem}
.meta{color:#555;font-size:.9rem}
.caveat{border:2px solid #D55E00;background:#fff7f0;padding:.2rem 1rem .6rem;margin:1rem 0}
.caveat h2{border:0;margin-top:.6rem}
.caution{border-left:4px solid #D55E00;padding-left:.6rem}
table{border-collapse:collapse;font-size:.82rem;margin:.4rem 0 1rem;display:block;overflow-x:auto;max-width:100%}
th,td{border:1px solid #ccc;padding:.2rem .4rem;text-align:left;vertical-align:top}
th{background:#f2f2f2}td.num{text-align:right;font-variant-numeric:tabular-nums}
td.mono{font-family:"DejaVu Sans Mono",monospace;font-size:.72rem;word-break:break-all}
table.kv th{width:12rem}
table.observers{font-size:.76rem}table.observers td.num,table.observers td:first-child{white-space:nowrap}
table.observers th,table.observers td{padding:.15rem .3rem}table.observers .costs{font-weight:normal}table.observers th.group{text-align:center}
table.observers tr.filter th{background:#fafafa;font-weight:bold;text-align:left;word-break:break-word}
pre{background:#f6f6f6;padding:.6rem;overflow-x:auto;font-size:.8rem;white-space:pre-wrap;word-break:break-all}
figure{margin:1.2rem 0;padding:0}figure svg{width:100%;height:auto;display:block}
figcaption{font-size:.88rem;color:#333;margin-top:.3rem}
dt{font-weight:bold;margin-top:.5rem}dd{margin-left:1.2rem}
.note{color:#555;font-style:italic}
@media print{main{max-width:none}details{display:none}}
"""


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


def _md_link(rel: str) -> str:
    return "/".join(part.replace(" ", "%20") for part in rel.split("/"))


def _inline_svg(svg: bytes, prefix: str, label: str) -> str:
    """An SVG document as an inline element: no prolog, ids prefixed so figures never collide."""
    text = svg.decode("utf-8")
    text = text[text.index("<svg"):]
    seen: dict[str, int] = {}

    def unique(m):
        # Artist gids may repeat inside one figure (one per panel); ids in a page must not.
        name = m.group(1)
        seen[name] = seen.get(name, 0) + 1
        suffix = "" if seen[name] == 1 else f"__{seen[name]}"
        return f'id="{prefix}-{name}{suffix}"'

    text = re.sub(r'\bid="([^"]+)"', unique, text)
    text = re.sub(r"url\(#([^)]+)\)", rf"url(#{prefix}-\1)", text)
    text = re.sub(r'(xlink:href|href)="#([^"]+)"', rf'\1="#{prefix}-\2"', text)
    return text.replace("<svg ", f'<svg role="img" aria-label="{html.escape(label)}" ', 1)


def _describe_filters(fs) -> list[dict]:
    out = []
    for i, name in enumerate(fs.names):
        info = fs.info[i] if i < len(fs.info) else {}
        sha_file = info.get("sha256")
        if sha_file is None and info.get("parts"):
            parts = [p.get("sha256") for p in info["parts"] if p.get("sha256")]
            sha_file = " * ".join(parts) if parts else None
        out.append({"name": name, "source": fs.sources[i] if i < len(fs.sources) else "array",
                    "input": info.get("path") or info.get("spec"), "sha256_file": sha_file,
                    "sha256_transmittance": transmittance_sha256(fs.transmittance[i])})
    return out


def _command(filters, illuminant, observers, surfaces, adaptation, metrics, style, output) -> str:
    args = ["cvdfilter", "report", *[str(f) for f in filters]]
    args += ["--illuminant", str(illuminant)]
    for o in observers:
        args += ["--observer", str(o)]
    args += ["--surfaces", str(surfaces), "--adaptation", str(adaptation), "--metrics", str(metrics)]
    for s in style or ():
        args += ["--style", str(s)]
    args += ["-o", str(output or "report.html")]
    return " ".join(shlex.quote(a) for a in args)


def _first_deficient(observers) -> str | None:
    from .observers.observer import observer as make_observer

    from .observers.population import is_population_spec

    objs = [make_observer(o) for o in observers if not is_population_spec(o)]
    for kind in ("dichromat", "anomalous"):
        for o in objs:
            if o.kind == kind and o.deficiency in ("protan", "deutan", "tritan"):
                return o.spec
    return None


def _figures(fs, card, *, illuminant, observers, surfaces, adaptation, style,
             member_card=None) -> list[ReportFigure]:
    from .figures import figure
    from .figures.hues import hues_card

    figs: list[ReportFigure] = []
    n = len(fs)
    names = ", ".join(fs.names[:4]) + (" ..." if n > 4 else "")
    common = {"illuminant": illuminant, "adaptation": adaptation, "width": "double", "style": style}
    deficient = _first_deficient(observers)
    from .observers.population import is_population_spec

    anomalous = [o for o in observers if "anomalous" in str(o) and not is_population_spec(o)]
    populations = [o for o in observers if is_population_spec(o)]

    def add(kind, caption, make, limit=None):
        if limit is not None and n > limit:
            figs.append(ReportFigure(kind, caption, note=f"Not drawn: the {kind} figure compares at most {limit} "
                                                         f"filters and this report has {n}; draw it for fewer "
                                                         f"filters with 'cvdfilter figure {kind} FILTER ...'."))
            return
        result = make()
        figs.append(ReportFigure(kind, caption, result.to_bytes("svg", salt=f"cvdfilter-report-{kind}")))
        result.close()

    add("spectrum", f"Spectral transmittance of {names} with notches marked (centre and FWHM), the relative "
                    f"spectral power of {illuminant} and the cone fundamentals (CIE 170-1) of the normal observer"
                    + (" and of " + ", ".join(anomalous) if anomalous else "") + ".",
        lambda: figure("spectrum", fs, observers=["normal", *anomalous], **{k: v for k, v in common.items()
                                                                            if k != "adaptation"}), limit=16)
    if deficient:
        # A filter that passes no light to a cone has no chromaticity: it is left out of this figure, and
        # said so in the caption (or in a note when no filter is left).
        from .figures.chromaticity import unlit_cones

        unlit = unlit_cones(fs, illuminant=illuminant, observer=deficient)
        keep = [i for i, name in enumerate(fs.names) if name not in unlit]
        left_out = "; ".join(f"{name} (no light for the {', '.join(cones)} cone{'s' if len(cones) > 1 else ''})"
                             for name, cones in unlit.items())
        caption = (f"MacLeod-Boynton chromaticities of the {surfaces} surfaces under {illuminant} without and "
                   f"with each filter (adaptation {adaptation}), with the {deficient} observer's copunctal point "
                   "and confusion lines; above 24 surfaces, arrows are drawn for 24 spread over the diagram and the "
                   "others are dots." + (f" Left out, having no chromaticity: {left_out}." if unlit else ""))
        if keep:
            add("chromaticity", caption, lambda: figure("chromaticity", _subset(fs, keep), observers=deficient,
                                                        surfaces=surfaces, **common), limit=4)
        else:
            figs.append(ReportFigure("chromaticity", caption, note=f"The chromaticity figure is left out: no "
                                                                   f"filter has a chromaticity ({left_out})."))
    add("gains", "Red-green, blue-yellow and luminance contrast gains (with / without the filter, log scale) "
                 "and discriminable surface pairs gained and lost, per observer.",
        lambda: figure("gains", fs, observers=observers, surfaces=surfaces, card=card, **common), limit=8)
    if populations:
        add("population", "Red-green gain (with / without the filter, log scale) of every member of each observer "
                          "population: the distribution of the members, the median member and the range holding "
                          "95 % of them; on the right the share of members helped (gain above 1) with its Wilson "
                          "95 % interval.",
            lambda: figure("population", fs, observers=populations, surfaces=surfaces, card=member_card,
                           **common), limit=4)
    if deficient:
        # the first filter that lets every cone see some light (adapting to a black filter is undefined)
        from .observers.spaces import parse_adaptation

        lit = keep if parse_adaptation(adaptation) > 0 else list(range(n))
        if lit:
            first = fs.names[lit[0]]
            add("swatches", f"The {surfaces} surfaces under {illuminant} for the normal observer and the "
                            f"{deficient} observer (simulated for a normal viewer), without and with {first}"
                            + (" (the first filter)" if n > 1 and lit[0] == 0 else "")
                            + (" (the first filter with light for every cone)" if lit[0] > 0 else "") + ".",
                lambda: figure("swatches", _one(fs, lit[0]), observers=deficient, surfaces=surfaces, **common))
        else:
            figs.append(ReportFigure("swatches", "Surface colours without and with the filter.",
                                     note=f"The swatches figure is left out: no filter passes light to every cone "
                                          f"({left_out}), so there is nothing to adapt to."))
    from .figures.sweep import filter_parameters

    varying, _ = filter_parameters(fs) if n >= 3 else ([], {})
    if len(varying) == 2:
        add("sweep", f"Red-green gain per observer and luminous transmittance over the two swept parameters "
                     f"({varying[0]} across, {varying[1]} up), as heat maps on the cividis colour scale (one "
                     "colour bar per metric).",
            lambda: figure("sweep", fs, card=card, **common))
    elif varying:
        add("sweep", f"Red-green gain per observer and luminous transmittance against the swept parameter "
                     f"({varying[0]}).",
            lambda: figure("sweep", fs, card=card, **common))
    if all("rendition" in f for f in card["filters"]):
        add("hues", f"TM-30 local chroma shift per hue bin of {illuminant} through each filter and alone.",
            lambda: figure("hues", fs, card=hues_card(card, fs.grid, illuminant), **common), limit=7)
    return figs


def _one(fs, i):
    return _subset(fs, [i])


def _subset(fs, keep):
    from .spectra.filters import FilterSet

    return FilterSet(tuple(fs.names[i] for i in keep), fs.transmittance[keep], fs.grid,
                     tuple(fs.sources[i] for i in keep) if fs.sources else (),
                     tuple(fs.info[i] for i in keep) if fs.info else ())


def report(filters, *, illuminant: str = "D65", observers=None, surfaces: str = "ces99", adaptation="full",
           metrics: str = "all", style=None, output: str | os.PathLike | None = None,
           units: str | None = None, bandwidth: float | None = None) -> Report:
    """Score filters and build a report with tables, figures, models, cautions and a reproduction record.

    Parameters
    ----------
    filters
        Filter specs, paths, example names or a FilterSet (as for :func:`cvdfilter.score`).
    illuminant, observers, surfaces, adaptation, metrics
        As for :func:`cvdfilter.score` (observers default to its defaults). A population observer
        (a spec with ``n=N``) adds the observer-populations table (median member, 95 % range of the
        members, share helped) and the population figure.
    style
        Figure style (:func:`cvdfilter.figures.parse_style`).
    output : path, optional
        Also write the report there (``.html`` or ``.md``).

    Returns
    -------
    Report
        ``.to_html()``, ``.to_markdown()``, ``.save(path)``.

    Raises
    ------
    cvdfilter.errors.InputError
        For bad input, before anything is written.
    """
    from .figures.common import load_filters_checked
    from .figures.style import Style, parse_style
    from .scorecard import DEFAULT_OBSERVERS, score

    observers = list(DEFAULT_OBSERVERS if observers is None else
                     ([observers] if isinstance(observers, str) else observers))
    if output is not None and pathlib.Path(output).suffix.lower() not in (".html", ".htm", ".md"):
        raise InputError(f"cannot tell the report format from '{pathlib.Path(output).name}'", source=str(output),
                         hint="end the file name in .html or .md")
    if style is None or isinstance(style, (dict, Style)):
        style_items, parsed_style = [], parse_style(style)
    else:
        style_items = [style] if isinstance(style, (str, os.PathLike)) else list(style)
        parsed_style = parse_style([str(x) for x in style_items])
    from .spectra.filters import spec_paths, with_file_options

    filters = with_file_options(filters, units=units, bandwidth=bandwidth)  # units/bandwidth of filter files
    fs = load_filters_checked(filters)
    from .observers.population import is_population_spec

    # populations: the per-member values feed the population figure; the report's card leaves them out
    with_members = any(is_population_spec(o) for o in observers)
    member_card = score(fs, illuminant=illuminant, observers=observers, surfaces=surfaces, adaptation=adaptation,
                        metrics=metrics, members=with_members).to_dict()
    card = member_card if not with_members else {
        **member_card, "filters": [{**f, "observers": [{k: v for k, v in o.items() if k != "members"}
                                                       for o in f["observers"]]} for f in member_card["filters"]]}
    observer_specs = [o["observer"] for o in card["observers"]]
    figs = _figures(fs, card, illuminant=illuminant, observers=observer_specs, surfaces=surfaces,
                    adaptation=adaptation, style=parsed_style, member_card=member_card)
    raw_filters = [filters] if isinstance(filters, (str, os.PathLike)) else list(filters) \
        if isinstance(filters, (list, tuple)) else list(fs.names)
    command = _command(raw_filters, illuminant, observer_specs, surfaces, adaptation, metrics,
                       style_items if all(isinstance(s, str) for s in style_items) else (), output)
    result = Report(card=card, filters=_describe_filters(fs), figures=figs, command=command)
    if output is not None:
        inputs = [p for f in raw_filters for p in spec_paths(f)]  # files inside specs (FILE:COL@units=...)
        inputs += [s for s in style_items if isinstance(s, str) and pathlib.Path(s).exists()]
        result.written = result.save(output, inputs=inputs)
    return result

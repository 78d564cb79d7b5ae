"""The report written out: one self-contained HTML page, or Markdown with its figures beside it.

A mixin of :class:`cvdfilter.reporting.Report` (``to_html``, ``to_markdown``, ``save``) with the page's
style sheet and the inline-SVG helper. Sections (:data:`SECTIONS`) and references (:data:`REFERENCES`)
are defined here and re-exported by :mod:`cvdfilter.reporting`.

Public: :class:`ReportFormats`, :data:`SECTIONS`, :data:`REPORT_FIGURES`, :data:`REFERENCES`.
"""

from __future__ import annotations

import html
import json
import os
import pathlib
import re
from collections.abc import Iterable

from .cautions import CAVEAT, EYE_CARE_CAUTION, ROAD_CAUTION
from .errors import InputError
from .report_tables import _OBSERVER_NOTE, POPULATION_NOTE, _html_table
from .tables import markdown_lines as _md_table

__all__ = ["ReportFormats", "SECTIONS", "REPORT_FIGURES", "REFERENCES"]

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


class ReportFormats:
    """HTML and Markdown of a report (mixin of :class:`cvdfilter.reporting.Report`)."""

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

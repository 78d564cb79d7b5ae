"""The result of :func:`cvdfilter.design` and its views: ``designs.json`` (:meth:`DesignResult.to_dict`),
``designs.csv``, one curve file per design, the Pareto figure and the spectrum figure of the best designs.

Public: :class:`DesignResult`.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field

import numpy as np

from .engine import Archive, DesignProblem
from .spaces import CURVE_DIGITS

__all__ = ["DesignResult"]


@dataclass
class DesignResult:
    """The outcome of :func:`design`.

    Attributes
    ----------
    designs : list of dict
        Best first: ``rank``, ``spec`` (spec string, or the curve file for free-form designs),
        ``parameters``, ``objectives`` {metric: value}, ``requirements`` {expression: value},
        ``scorecard`` (the design's JSON entry in ``cvdfilter score``), and ``curve`` (transmittance on
        the grid, not in the JSON).
    references : list of dict
        The reference filters scored the same way (``spec``, ``objectives``, ``requirements``, ``meets``).
    problem : DesignProblem
    archive : Archive
        Every candidate scored during the search.
    run : dict
        Algorithm, library, population, generations, evaluations, why it stopped.
    inputs : dict
        The arguments (canonical) and the command that reproduces the run.
    header : dict
        The scorecard header of the re-score (models, thresholds and constants used).
    """

    designs: list
    references: list
    problem: DesignProblem
    archive: Archive
    run: dict
    inputs: dict
    header: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        """``designs.json``: ``{tool, version, caveat, inputs, designs: [{rank, spec, objectives, scorecard}]}``
        plus the run record, the scorer's models and the references."""
        from .._version import __version__
        from ..cautions import CAVEAT, EYE_CARE_CAUTION, ROAD_CAUTION

        return {
            "tool": "cvdfilter", "version": __version__, "caveat": CAVEAT,
            "cautions": [ROAD_CAUTION, EYE_CARE_CAUTION,
                         "A design is the optimum of a model under the stated bounds, not a clinical "
                         "recommendation; manufacturability is not modelled beyond those bounds."],
            "inputs": self.inputs,
            "search": self.run,
            "models": self.header.get("models", {}),
            "designs": [{k: v for k, v in d.items() if k != "curve"} for d in self.designs],
            "references": self.references,
        }

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), indent=2, ensure_ascii=False, allow_nan=False) + "\n"

    def metric_names(self) -> list[str]:
        return [m.text for m, _ in self.problem.objectives]

    def csv_text(self) -> str:
        """``designs.csv``: one row per design, objectives first, then every scorecard number."""
        from ..tables import csv_text

        rows = [_flatten_entry(d["scorecard"]) for d in self.designs]
        keys: list[str] = []
        for r in rows:
            keys += [k for k in r if k not in keys]
        objectives = self.metric_names()
        header = ["rank", "spec", *objectives, *keys]
        body = [[d["rank"], d["spec"], *(d["objectives"][m] for m in objectives), *(r.get(k) for k in keys)]
                for d, r in zip(self.designs, rows)]
        return csv_text(header, body)

    def table_text(self, width: int = 100) -> str:
        """The ranked designs as a text table, the caveat underneath."""
        from ..cautions import CAVEAT
        from ..tables import text_table

        names = self.metric_names()
        rows = [[d["rank"], *(_cell(d["objectives"][m]) for m in names), "yes", d["spec"]] for d in self.designs]
        for r in self.references:
            rows.append(["ref", *(_cell(r["objectives"][m]) for m in names),
                         "yes" if r["meets_requirements"] else "no", r["spec"]])
        text = text_table(["rank", *names, "meets", "design"], rows, width=width)
        return text + "\n" + CAVEAT + "\n"

    def curve_csv(self, d: dict) -> str:
        """A design's curve file: wavelength (nm) and transmittance (fraction), comment lines first."""
        from ..cautions import CAVEAT

        wl = self.problem.space.grid.wavelengths
        lines = [f"# cvdfilter design, rank {d['rank']}: {d['spec'] if self.problem.space.kind == 'notch' else ''}"
                 .rstrip(": "),
                 f"# {self.inputs['command']}",
                 f"# {CAVEAT}",
                 "wavelength_nm,transmittance_fraction"]
        lines += [f"{w:g},{v:.{CURVE_DIGITS}f}" for w, v in zip(wl.tolist(), d["curve"].tolist())]
        return "\n".join(lines) + "\n"

    def pareto_figure(self, **kwargs):
        """The objectives of every candidate scored, the designs and the references (FigureResult)."""
        from ..figures.pareto import pareto_figure

        return pareto_figure(self, **kwargs)

    def spectrum_figure(self, n: int = 4, **kwargs):
        """Transmittance of the best ``n`` designs over the illuminant and cone fundamentals."""
        from ..figures import figure

        fs = _designs_filterset(self, self.designs[:n])
        kwargs.setdefault("width", "double")
        return figure("spectrum", fs, title=f"The best designs, ranks 1-{len(fs)}", **kwargs)

    def write(self, folder, *, inputs=(), formats=("png",), dpi: float = 300.0) -> list:
        """Write every output into ``folder`` (atomically, file by file; never over an input)."""
        import pathlib

        from ..io.atomic import check_outputs, write_text

        out = pathlib.Path(folder)
        names = ["designs.json", "designs.csv", *(f"curves/design-{d['rank']:02d}.csv" for d in self.designs),
                 *(f"pareto.{f}" for f in formats), *(f"spectra.{f}" for f in formats)]
        check_outputs([out / n for n in names], inputs)
        texts = {"designs.json": self.to_json(), "designs.csv": self.csv_text(),
                 **{f"curves/design-{d['rank']:02d}.csv": self.curve_csv(d) for d in self.designs}}
        figures = [("pareto", self.pareto_figure()), ("spectra", self.spectrum_figure())]
        blobs = {f"{name}.{f}": fig.to_bytes(f, dpi=dpi) for name, fig in figures for f in formats}
        for fig in figures:
            fig[1].close()
        written = []
        for name, text in texts.items():
            written.append(write_text(out / name, text, inputs=inputs))
        from ..io.atomic import write_bytes

        for name, data in blobs.items():
            written.append(write_bytes(out / name, data, inputs=inputs))
        return written


def _cell(v) -> str:
    if v is None:
        return "-"
    return f"{v:.4g}" if isinstance(v, float) else str(v)


def _flatten_entry(entry: dict) -> dict:
    """A scorecard entry as {column: scalar}: nested keys joined by dots; per observer KEY[SPEC], a
    population's statistics STAT:KEY[SPEC] and shares helped share:KEY[SPEC] (the metric syntax)."""
    from ..score_population import STATS

    out: dict = {}

    def walk(node, prefix, spec):
        for k, v in node.items():
            key = f"{prefix}{k}"
            if isinstance(v, dict) and set(STATS) <= set(v):
                for s in STATS:
                    out[f"{s}:{key}[{spec}]"] = v[s]
            elif isinstance(v, dict):
                walk(v, key + ".", spec)
            elif isinstance(v, list):
                if k == "reasons":
                    out[key if spec is None else f"{key}[{spec}]"] = "; ".join(map(str, v))
            elif k not in ("observer",):
                out[key if spec is None else f"{key}[{spec}]"] = v

    top = {k: v for k, v in entry.items() if k not in ("observers",)}
    walk(top, "", None)
    for o in entry.get("observers", []):
        spec = o["observer"]
        helped = o.get("helped", {})
        walk({k: v for k, v in o.items() if k not in ("helped", "population", "members")}, "", spec)
        for k, h in helped.items():
            out[f"share:{k}[{spec}]"] = h["share"]
    return out


def _designs_filterset(result: DesignResult, designs: list):
    """The designs as a FilterSet named as their curve files (``design-01``...; the spec strings of the
    notch designs stay in the records): a legend of full spec strings would repeat every parameter."""
    from ..spectra.filters import FilterSet

    grid = result.problem.space.grid
    names = tuple(f"design-{d['rank']:02d}" for d in designs)
    t = np.vstack([d["curve"] for d in designs])
    return FilterSet(names, t, grid, ("spec",) * len(names), tuple({"spec": d["spec"]} for d in designs))

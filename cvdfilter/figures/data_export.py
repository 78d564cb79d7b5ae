"""The numbers a figure plots, as a tidy CSV table, so a lab can re-plot them in its own style.

One table per figure kind (:func:`figure_table`), in long ("tidy") form where
the figure has series, wide where it shares one axis (spectrum: one row per
wavelength). Every file starts with ``#`` comment lines naming the tool,
version, figure kind, inputs and the caveat (read with e.g.
``pandas.read_csv(path, comment="#")``). Values are the plotted values in the
units of the figure's axes (transmittance in %, luminous transmittance in %,
chroma shift in %), at full precision.

Public: :func:`figure_table`, :func:`data_csv`, :func:`save_data`.
"""

from __future__ import annotations

import csv
import io
import json
import os
import pathlib
from collections.abc import Iterable

import numpy as np

__all__ = ["figure_table", "data_csv", "save_data"]


def _num(v):
    if v is None:
        return ""
    if isinstance(v, (bool, np.bool_)):
        return int(v)
    if isinstance(v, (int, np.integer)):
        return int(v)
    if isinstance(v, (float, np.floating)):
        return "" if not np.isfinite(v) else repr(float(v))
    return str(v)


def _spectrum(d):
    names = d["filters"]
    header = ["wavelength_nm"] + [f"transmittance_pct:{n}" for n in names] + ["illuminant_relative"]
    header += [f"cone:{k}" for k in d["cones"]]
    t = np.asarray(d["transmittance"])
    cols = [np.asarray(d["wavelengths"])] + [100 * t[i] for i in range(len(names))]
    cols += [np.asarray(d["illuminant_relative"])] + [np.asarray(v) for v in d["cones"].values()]
    rows = [list(r) for r in zip(*cols)]
    notes = [f"notches of {n}: " + ("; ".join(f"centre {x['center']:.2f} nm, FWHM {x['fwhm']:.2f} nm, depth "
                                              f"{x['depth']:.4f}" for x in ns) or "none")
             for n, ns in zip(names, d["notches"])]
    return header, rows, notes


def _chromaticity(d):
    ax, ay = d["axis_labels"]
    header = ["filter", "surface", f"without: {ax}", f"without: {ay}", f"with (adapted): {ax}",
              f"with (adapted): {ay}"]
    rows = []
    for f in d["filters"]:
        for label, w0, w1 in zip(d["labels"], f["without"], f["with"]):
            rows.append([f["name"], label, *w0, *w1])
        rows.append([f["name"], "white (filtered, unadapted | adapted)", *d["white"], *f["white_filtered"]])
    notes = [f"space {d['space']}; observer {d['observer']}; illuminant {d['illuminant']}; surfaces {d['surfaces']}; "
             f"adaptation {d['adaptation']:g}",
             "last row per filter: the unfiltered white (without) and the filtered white before adaptation (with)"]
    if d.get("copunctal") is not None:
        notes.append(f"copunctal point {d['copunctal'][0]!r}, {d['copunctal'][1]!r}")
    return header, rows, notes


def _hues(d):
    from .hues import HUE_BIN_NAMES

    header = ["series", "bin", "hue_name", "hue_from_deg", "hue_to_deg", "local_chroma_shift_pct"]
    rows = []
    for s in d["series"]:
        for b, v in zip(d["bins"], s["chroma_shift"]):
            rows.append([s["name"], int(b), HUE_BIN_NAMES[int(b) - 1], (b - 1) * 22.5, b * 22.5, v])
    return header, rows, [f"illuminant {d['illuminant']}; first series: the illuminant alone"]


def _swatches(d):
    header = ["view", "surface", "R8", "G8", "B8", "R_linear", "G_linear", "B_linear"]
    rows = []
    for v in d["views"]:
        for label, c8, lin in zip(d["labels"], d["srgb8"][v], d["linear"][v]):
            rows.append([v, label, *[int(x) for x in c8], *lin])
    return header, rows, [f"filter {d['filter']}; observer {d['observer']}; illuminant {d['illuminant']}; "
                          f"surfaces {d['surfaces']}; sRGB (linear values not clipped)"]


def _images(d):
    header = ["view", "title", "height_px", "width_px", "reduced_by"]
    rows = [[v, d["titles"][v], a.shape[0], a.shape[1], d["reduced_by"]] for v, a in d["views"].items()]
    return header, rows, [f"image {d['image']}; the pixels themselves: cvdfilter render (full size, lossless)"]


def _sweep(d):
    if d.get("chart") == "heatmap":
        header = ["metric", "observer", d["x_key"], d["y_key"], "value"]
        rows = []
        for p in d["panels"]:
            for c in p["cells"]:
                for j, yv in enumerate(d["y"]):
                    for i, xv in enumerate(d["x"]):
                        rows.append([p["metric"], c["observer"] or "", xv, yv, c["z"][j, i]])
        return header, rows, ["value in the axis units of the figure (luminous transmittance in %)"]
    groups = sorted({k for p in d["panels"] for line in p["lines"] for k in line["group"]})
    header = ["metric", "observer", *groups, d["x_key"], "value"]
    rows = []
    for p in d["panels"]:
        for line in p["lines"]:
            for xv, yv in zip(line["x"], line["y"]):
                rows.append([p["metric"], line["observer"] or "", *[line["group"].get(g, "") for g in groups], xv, yv])
    return header, rows, ["value in the axis units of the figure (luminous transmittance in %)"]


def _per_filter_observer(d):
    """Any (n_filters, n_observers) arrays in the data (directly or in a dict of them): long form."""
    filters, observers = list(d.get("filters", [])), list(d.get("observers", []))
    shape = (len(filters), len(observers))
    header = ["filter", "observer", "quantity", "value"]
    rows = []

    def visit(prefix, value):
        if isinstance(value, dict):
            for k, v in value.items():
                visit(f"{prefix}.{k}" if prefix else str(k), v)
            return
        a = np.asarray(value) if isinstance(value, (list, tuple, np.ndarray)) else None
        if a is not None and a.dtype.kind in "fiub" and a.shape == shape:
            for i, f in enumerate(filters):
                for k, o in enumerate(observers):
                    rows.append([f, o, prefix, a[i, k]])
        elif a is not None and a.dtype.kind in "fiub" and a.shape == (len(filters),):
            for i, f in enumerate(filters):
                rows.append([f, "", prefix, a[i]])

    visit("", {k: v for k, v in d.items() if k not in ("filters", "observers")})
    return header, rows, []


def _population(d):
    """Every member's value of the metric, then the plotted statistics and shares helped (member empty)."""
    header = ["filter", "observer", "quantity", "member", "value"]
    rows = []
    for i, f in enumerate(d["filters"]):
        for j, o in enumerate(d["populations"]):
            rows += [[f, o, d["metric"], m, v] for m, v in enumerate(np.asarray(d["values"][i][j]).tolist())]
            rows += [[f, o, q, "", d[q][i, j]] for q in ("p2_5", "p50", "p97_5", "share", "ci_low", "ci_high")]
    return header, rows, ["p2_5, p50, p97_5: percentiles of the members' values; share, ci_low, ci_high: the "
                          "share of members helped and its Wilson 95 % interval"]


def _tasks(d):
    """The drawn arrangement paths (cap order, u*, v*), the moment ellipses and the verdict grid."""
    header = ["part", "state", "filter", "observer", "task", "step", "cap", "u_star", "v_star", "value"]
    uv = np.asarray(d["uv"])
    rows = []
    for state in ("without", "with"):
        for step, cap in enumerate(d[f"order_{state}"]):
            rows.append(["path", state, "", "", "", step, int(cap), uv[cap, 0], uv[cap, 1], ""])
        for name, v in zip(("r_major", "r_minor", "confusion_angle_deg"), d[f"ellipse_{state}"]):
            rows.append([f"ellipse:{name}", state, "", "", "", "", "", "", "", v])
    for (obs, task), per_filter in zip(d["rows"], d["verdicts"]):
        for f, v in zip(d["filters"], per_filter):
            rows.append(["verdict", "", f, obs, task, "", "", "", "", v])
    return header, rows, ["path and ellipses: the first observer and filter's median-TES trials (u*, v* CIELUV)"]


_TABLES = {"spectrum": _spectrum, "chromaticity": _chromaticity, "hues": _hues, "swatches": _swatches,
           "images": _images, "sweep": _sweep, "gains": _per_filter_observer,
           "tasks": _tasks, "population": _population}


def figure_table(result) -> tuple[list[str], list[list], list[str]]:
    """(header, rows, notes) of what the figure plots (see the module docstring)."""
    make = _TABLES.get(result.kind, _per_filter_observer)
    return make(result.data)


def data_csv(result) -> str:
    """The figure's data as CSV text, with ``#`` comment lines for provenance and the caveat."""
    from .._version import __version__
    from ..cautions import CAVEAT

    header, rows, notes = figure_table(result)
    buf = io.StringIO()
    buf.write(f"# tool: cvdfilter {__version__}\n# figure: {result.kind}\n")
    buf.write("# inputs: " + json.dumps(result.inputs, default=str, ensure_ascii=False) + "\n")
    for n in notes:
        buf.write(f"# {n}\n")
    buf.write(f"# caveat: {CAVEAT}\n")
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    for r in rows:
        w.writerow([_num(v) for v in r])
    return buf.getvalue()


def save_data(result, path: str | os.PathLike, *, inputs: Iterable[str | os.PathLike] = ()) -> pathlib.Path:
    """Write :func:`data_csv` atomically to ``path`` (never over an input)."""
    from ..io.atomic import write_text

    return write_text(path, data_csv(result), inputs=inputs)

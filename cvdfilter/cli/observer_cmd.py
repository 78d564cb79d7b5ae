"""``cvdfilter inspect-observer``: peaks, shift, copunctal point and neutral points of observers."""

from __future__ import annotations

from typing import List, Optional

import typer

from .common import emit, fail, resolve_format, table_text, to_json


def _fmt_xy(xy) -> str:
    return "-" if xy is None else f"({xy[0]:.4f}, {xy[1]:.4f})"


def _fmt_peaks(peaks) -> str:
    return "-" if peaks is None else ", ".join(f"{c} {v:.1f}" for c, v in peaks.items())


def _fmt_spread(s, unit: str = "") -> str:
    return (f"mean {s['mean']:.2f}, SD {s['sd']:.2f}, 95 % of members {s['p2_5']:.2f} to {s['p97_5']:.2f}"
            + (f" {unit}" if unit else ""))


def _population_block(d: dict) -> str:
    pop = d["population"]
    rows = [("kind", d["kind"] + (f" ({d['deficiency']})" if d["deficiency"] else "")),
            ("members", f"{pop['n']} (variation {pop['variation']}, seed {pop['seed']})"),
            ("centre observer", d["centre"])]
    if d["separation_sd_nm"] is not None:
        rows.append(("separation SD", f"{d['separation_sd_nm']:g} nm"))
    rows += [(f"{c} fundamental peak", _fmt_spread(s, "nm")) for c, s in d["fundamental_peaks_nm"].items()]
    if d["fundamental_separation_nm"] is not None:
        rows.append(("own peak separation", _fmt_spread(d["fundamental_separation_nm"], "nm")))
    rows += [(k, _fmt_spread(s, s["unit"])) for k, s in d["parameters"].items()]
    rows += [("note", n) for n in d["notes"]]
    return table_text(["", ""], rows, title=d["spec"])


def register(app: typer.Typer) -> None:
    @app.command("inspect-observer")
    def inspect_observer(
        specs: List[str] = typer.Argument(..., help="Observer specs (see: cvdfilter list observers)."),
        white: str = typer.Option("D65", "--white", help="White for the neutral points: an illuminant spec, "
                                                          "or E for equal energy."),
        step: float = typer.Option(1.0, "--step", help="Grid step, nm (grid 380-780 nm)."),
        format: Optional[str] = typer.Option(None, "--format", "-f",
                                             help="table or json (default: from the -o extension, else table)."),
        output: Optional[str] = typer.Option(None, "--output", "-o", help="Write to this file instead of stdout."),
    ) -> None:
        """Describe observers: cone and pigment peaks, pigment shift, copunctal point, neutral points.

        Example: cvdfilter inspect-observer deuteranomalous:shift=8 protanope --white D65

        A population spec (any spec plus n=N) prints a summary of its members:
        cvdfilter inspect-observer deuteranomalous:n=200,seed=7
        """
        from ..errors import InputError
        from ..observers.describe import describe_observers
        from ..spectra.grid import Grid

        try:
            format = resolve_format(format, output, ("table", "json"))
        except InputError as exc:
            fail(exc)
        try:
            data = describe_observers(specs, white=white, grid=Grid(step=step))
        except (InputError, ValueError) as exc:
            fail(exc)
        if format == "json":
            emit(to_json(data), output)
            return
        blocks = []
        for d in data["observers"]:
            if "population" in d:
                blocks.append(_population_block(d))
                continue
            rows = [
                ("kind", d["kind"] + (f" ({d['deficiency']})" if d["deficiency"] else "")),
                ("fundamental peaks", _fmt_peaks(d["fundamental_peaks_nm"]) + " nm"),
                ("pigment peaks", _fmt_peaks(d["pigment_peaks_nm"]) + (" nm" if d["pigment_peaks_nm"] else "")),
                ("luminance peak", f"{d['luminance_peak_nm']:.1f} nm"),
            ]
            if d["shift_nm"] is not None:
                sep = d["separation_nm"]
                rows.append(("shift", f"{d['shift_nm']:.2f} nm ({d['affected_cone']} cone, "
                             f"{d['shift_measure'] or 'Machado 2009'})"
                             + (f", {sep:.2f} of {d['normal_separation_nm']:.2f} nm left" if sep is not None else "")))
            if d["copunctal_point"] is not None:
                rows.append(("copunctal point", f"{_fmt_xy(d['copunctal_point'])} in {d['xy_system']} xy"))
            if d["kind"] == "dichromat":
                pts = "; ".join(f"{p['wavelength_nm']:.1f} nm {_fmt_xy(p['xy'])}" for p in d["neutral_points"])
                rows.append((f"neutral points ({data['white']})", pts or "none found"))
            rows.append(("simulation", d["simulation"]))
            rows += [("note", n) for n in d["notes"]]
            blocks.append(table_text(["", ""], rows, title=d["spec"]))
        import textwrap

        emit("\n".join(blocks) + "\n" + textwrap.fill(data["caveat"], 100) + "\n", output)

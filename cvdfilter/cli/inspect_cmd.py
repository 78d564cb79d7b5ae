"""``cvdfilter inspect``: describe filter curves (files, examples or specs)."""

from __future__ import annotations

from typing import List, Optional

import typer

from .common import BANDWIDTH_HELP, UNITS_HELP, emit, fail, input_files, resolve_format, table_text, to_json


def register(app: typer.Typer) -> None:
    @app.command("inspect")
    def inspect(
        filters: List[str] = typer.Argument(..., help="Filter files (FILE, FILE:COLUMN, FILE@units=od), example "
                                                      "names or specs."),
        units: Optional[str] = typer.Option(None, "--units", help=UNITS_HELP),
        bandwidth: Optional[float] = typer.Option(None, "--bandwidth", help=BANDWIDTH_HELP),
        step: float = typer.Option(1.0, "--step", help="Grid step, nm (grid 380-780 nm)."),
        format: Optional[str] = typer.Option(None, "--format", "-f",
                                             help="table or json (default: from the -o extension, else table)."),
        output: Optional[str] = typer.Option(None, "--output", "-o", help="Write to this file instead of stdout."),
    ) -> None:
        """Describe filters: range, sampling, units and which rule decided them, extrapolation, extremes,
        features (notches, edges, band-passes, ripple), warnings.

        Example: cvdfilter inspect larkhill-notch-575 "notch:center=575,fwhm=35,depth=0.8"
        """
        from ..errors import InputError
        from ..inspection import feature_text, inspect_filters
        from ..spectra.filters import extrapolation_text
        from ..spectra.grid import Grid

        try:
            fmt = resolve_format(format, output, ("table", "json"))
            specs = [*filters]
            data = inspect_filters(specs, grid=Grid(step=step), units=units, bandwidth=bandwidth)
        except (InputError, ValueError) as exc:
            fail(exc)
        inputs = input_files(filters)
        if fmt == "json":
            try:
                emit(to_json(data), output, inputs=inputs)
            except InputError as exc:
                fail(exc)
            return
        blocks = []
        for f in data["filters"]:
            rng = f["measured_range_nm"]
            where = f"{f['source']}" + (f" {f['path']}" if f["path"] else "")
            if f.get("column_number") and ":" in f["name"]:
                where += f", column {f['column'] if f['column'] is not None else f['column_number']}"
            rows = [
                ("source", where),
                ("measured range",
                 f"{rng[0]:g}-{rng[1]:g} nm, sampling {f['sampling_nm']:g} nm" if rng else "parametric"),
                ("units", f"{f['units']} ({f['units_reason']})" if f["units"] else "-"),
                ("extrapolation", extrapolation_text(f["extrapolated"]) or "none"),
                ("transmittance", f"min {f['min_transmittance']:.4f} at {f['min_at_nm']:g} nm, "
                                  f"max {f['max_transmittance']:.4f}"),
                ("luminous transm.", f"{100 * f['luminous_transmittance_d65']:.1f} % (CIE D65, CIE 1931 2 deg)"),
                ("features", "; ".join(feature_text(x) for x in f["features"]) or "none"),
            ]
            rows += [("warning", w) for w in f["warnings"] if not w.startswith("extrapolated ")]
            blocks.append(table_text(["", ""], rows, title=f["name"]))
        try:
            emit("\n".join(blocks) + f"\n{data['caveat']}\n", output, inputs=inputs)
        except InputError as exc:
            fail(exc)

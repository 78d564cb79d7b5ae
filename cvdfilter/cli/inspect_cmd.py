"""``cvdfilter inspect``: describe filter curves (files, examples or specs)."""

from __future__ import annotations

from typing import List, Optional

import typer

from .common import emit, fail, table_text, to_json


def register(app: typer.Typer) -> None:
    @app.command("inspect")
    def inspect(
        filters: List[str] = typer.Argument(..., help="Filter files, example names or specs."),
        units: Optional[str] = typer.Option(None, "--units", help="fraction, percent or od (default: detect)"),
        bandwidth: Optional[float] = typer.Option(None, "--bandwidth",
                                                  help="Instrument bandwidth, nm: apply the Stearns & Stearns correction."),
        step: float = typer.Option(1.0, "--step", help="Grid step, nm (grid 380-780 nm)."),
        format: str = typer.Option("table", "--format", "-f", help="table or json"),
        output: Optional[str] = typer.Option(None, "--output", "-o", help="Write to this file instead of stdout."),
    ) -> None:
        """Describe filters: range, sampling, detected units, extremes, notches, warnings.

        Example: cvdfilter inspect larkhill-notch-575 "notch:center=575,fwhm=35,depth=0.8"
        """
        from ..errors import InputError
        from ..inspection import inspect_filters
        from ..spectra.grid import Grid

        if format not in ("table", "json"):
            fail(f"--format {format} is not table or json")
        try:
            data = inspect_filters(filters, grid=Grid(step=step), units=units, bandwidth=bandwidth)
        except InputError as exc:
            fail(exc)
        except ValueError as exc:
            fail(exc)
        if format == "json":
            emit(to_json(data), output, inputs=filters)
            return
        blocks = []
        for f in data["filters"]:
            rng = f["measured_range_nm"]
            rows = [
                ("source", f"{f['source']}" + (f" {f['path']}" if f["path"] else "")),
                ("measured range", f"{rng[0]:g}-{rng[1]:g} nm, sampling {f['sampling_nm']:g} nm" if rng else "parametric"),
                ("units", f"{f['units']} ({f['units_reason']})" if f["units"] else "-"),
                ("transmittance", f"min {f['min_transmittance']:.4f} at {f['min_at_nm']:g} nm, "
                                  f"max {f['max_transmittance']:.4f}"),
                ("luminous transm.", f"{100 * f['luminous_transmittance_d65']:.1f} % (CIE D65, CIE 1931 2 deg)"),
                ("notches", "; ".join(f"{n['center']:.1f} nm, FWHM {n['fwhm']:.1f} nm, depth {n['depth']:.3f}"
                                      for n in f["notches"]) or "none"),
            ]
            rows += [("warning", w) for w in f["warnings"]]
            blocks.append(table_text(["", ""], rows, title=f["name"]))
        emit("\n".join(blocks) + f"\n{data['caveat']}\n", output, inputs=filters)

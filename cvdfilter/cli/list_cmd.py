"""``cvdfilter list``: what illuminants, observers, surface sets, filters and simulation methods are available."""

from __future__ import annotations

import typer

from .common import emit, fail, table_text, to_json


def register(app: typer.Typer) -> None:
    @app.command("list")
    def list_(
        kind: str = typer.Argument(..., help="illuminants, observers, surfaces, filters or methods"),
        format: str = typer.Option("table", "--format", "-f", help="table or json"),
    ) -> None:
        """List what is available (``filters`` also shows how to select one column of a file:
        lenses.csv:"Lens A" or lenses.csv:2, and per-file options: lens.csv@units=od).

        Example: cvdfilter list observers
        """
        from ..errors import InputError
        from ..inspection import catalog

        try:
            data = catalog(kind)
        except InputError as exc:
            fail(exc)
        if format == "json":
            emit(to_json(data), None)
            return
        if format != "table":
            fail(f"--format {format} is not table or json")
        items = data["items"]
        if kind == "illuminants":
            rows = [(group, ", ".join(names)) for group, names in items.items()]
            text = table_text(["group", "names"], rows)
        elif kind == "observers":
            text = table_text(["form", "parameters", "model"],
                              [(i["form"], i["parameters"], i["model"]) for i in items])
        elif kind in ("surfaces", "methods"):
            text = table_text(["name", "description"], [(i["name"], i["description"]) for i in items])
        else:
            text = table_text(["example", "description"], [(i["name"], i["description"]) for i in items["examples"]],
                              title="Bundled example filters (invented data)")
            text += "\n" + table_text(["spec", "form"], list(items["spec_forms"].items()), title="Spec forms")
            text += "\n" + table_text(["file", "meaning"], list(items["file_forms"].items()),
                                      title="Files: naming, column selection and per-file options")
        emit(text, None)

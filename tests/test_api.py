"""The public API namespace: lazy names, no clash with submodules, the type stub."""

from __future__ import annotations

import ast
import pathlib
import pkgutil
import subprocess
import sys
import textwrap

import cvdfilter

PACKAGE = pathlib.Path(cvdfilter.__file__).parent


def _submodules() -> set[str]:
    return {m.name for m in pkgutil.iter_modules(cvdfilter.__path__)}


def test_no_public_name_is_also_a_submodule():
    # `import cvdfilter.X` sets the attribute X on the package, replacing a lazy name X.
    clash = set(cvdfilter._LAZY) & _submodules()
    assert not clash, f"public names that are also submodules: {sorted(clash)}"


def test_functions_stay_functions_after_importing_every_submodule():
    # A fresh interpreter: import every module of the package, touch every lazy name, then check that each
    # public name is still the object its module defines (cvdfilter.render used to become the module).
    code = textwrap.dedent("""
        import importlib, inspect, pkgutil, types
        import cvdfilter as cf
        cf.Renderer  # touching a class used to import the module under the function's name
        for m in pkgutil.walk_packages(cf.__path__, "cvdfilter."):
            if not m.name.endswith("__main__"):
                importlib.import_module(m.name)
        for name, module in cf._LAZY.items():
            value = getattr(cf, name)
            assert not isinstance(value, types.ModuleType), name
            assert value is getattr(importlib.import_module(module), name), name
        assert inspect.isfunction(cf.render) and inspect.isfunction(cf.report)
        assert cf.render.__module__ == "cvdfilter.rendering" and cf.report.__module__ == "cvdfilter.reporting"
        print("ok")
    """)
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=300)
    assert r.returncode == 0 and r.stdout.strip() == "ok", r.stderr


def _stub_imports() -> dict[str, str]:
    tree = ast.parse((PACKAGE / "__init__.pyi").read_text())
    names = {}
    for node in tree.body:
        if isinstance(node, ast.ImportFrom):
            module = "cvdfilter" + ("." + node.module if node.module else "")
            for alias in node.names:
                assert alias.asname == alias.name, f"re-export needs 'import {alias.name} as {alias.name}'"
                names[alias.name] = module
    return names


def test_stub_lists_exactly_the_lazy_names():
    names = _stub_imports()
    names.pop("__version__")
    assert names == cvdfilter._LAZY
    tree = ast.parse((PACKAGE / "__init__.pyi").read_text())
    stub_all = next(ast.literal_eval(n.value) for n in tree.body
                    if isinstance(n, ast.Assign) and n.targets[0].id == "__all__")
    assert stub_all == cvdfilter.__all__
    assert sorted(dir(cvdfilter)) == sorted(cvdfilter.__all__)


def test_stub_and_marker_ship_with_the_package():
    import tomllib

    pyproject = tomllib.loads((PACKAGE.parent / "pyproject.toml").read_text())
    data = pyproject["tool"]["setuptools"]["package-data"]["cvdfilter"]
    assert "*.pyi" in data and "py.typed" in data
    assert (PACKAGE / "py.typed").exists()


def test_type_checker_sees_the_lazy_names(tmp_path):
    # mypy (a test dependency) reads the stub: the lazy names have their real signatures, not Any.
    snippet = tmp_path / "use_api.py"
    snippet.write_text(textwrap.dedent("""
        import cvdfilter as cf
        import cvdfilter.rendering
        import cvdfilter.reporting

        reveal_type(cf.render)
        reveal_type(cf.report)
        obs: cf.Observer = cf.observer("deuteranope")
        grid: cf.Grid = cf.DEFAULT_GRID
    """))
    from mypy import api

    out, err, status = api.run([str(snippet), "--follow-imports=silent", "--ignore-missing-imports",
                                "--no-error-summary", "--cache-dir", str(tmp_path / "mypy-cache")])
    assert status == 0, out + err
    revealed = [line for line in out.splitlines() if "Revealed type" in line]
    assert len(revealed) == 2
    assert '"def (image:' in revealed[0] and "cvdfilter.reporting.Report" in revealed[1], out


def test_the_24_patch_chart_has_a_neutral_name():
    # The 24-patch chart set is named chart24; the product name of the physical chart appears nowhere in
    # the interface, docs or outputs, only as colour-science's own dataset key (needed to load the data).
    from typer.testing import CliRunner

    from cvdfilter.cli.app import app
    from cvdfilter.spectra.surfaces import SURFACE_SETS, surface_set

    old = "color" + "checker"
    assert "chart24" in SURFACE_SETS and len(surface_set("chart24")) == 24
    assert "Ohta" in SURFACE_SETS["chart24"]  # whose measurements they are
    root = PACKAGE.parent
    suffixes = (".py", ".md", ".sh", ".toml", ".json", ".pyi", ".csv")
    skip = ("build", "demo-output")
    files = [p for p in root.glob("**/*") if p.is_file() and p.suffix in suffixes
             and not any(part.startswith(".") or part in skip for part in p.relative_to(root).parts)]
    for path in files:
        for line in path.read_text(errors="replace").splitlines():
            if old in line.lower():
                assert "SDS_COLOURCHECKERS[" in line, f"{path.relative_to(root)}: {line.strip()}"
    out = CliRunner().invoke(app, ["list", "surfaces", "--format", "json"]).stdout
    assert old not in out.lower() and "chart24" in out

"""Outputs unchanged: the scorecard (JSON, CSV, Markdown, table), rendered pixels, a report and a figure
compared byte for byte with files captured before a refactoring (tests/data/golden/make_golden.py).

A difference here means an output changed. If the change is intended (a fixed defect), regenerate the files
with ``.venv/bin/python tests/data/golden/make_golden.py`` and say why in the commit message.
"""

from __future__ import annotations

import difflib
import importlib.util
import pathlib

import pytest

GOLDEN = pathlib.Path(__file__).parent / "data" / "golden"


def _maker():
    spec = importlib.util.spec_from_file_location("make_golden", GOLDEN / "make_golden.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def current() -> dict:
    return _maker().outputs()


def test_golden_files_cover_every_output(current):
    stored = {p.name for p in GOLDEN.iterdir() if p.name != "make_golden.py"}
    assert stored == set(current)


@pytest.mark.parametrize("name", sorted(p.name for p in GOLDEN.iterdir() if p.name != "make_golden.py"))
def test_output_unchanged(current, name):
    expected = (GOLDEN / name).read_bytes()
    got = current[name]
    if got != expected and not name.endswith(".svg"):
        diff = "\n".join(difflib.unified_diff(expected.decode().splitlines(), got.decode().splitlines(),
                                              "golden", "now", n=1, lineterm=""))
        pytest.fail(f"{name} changed:\n{diff[:4000]}")
    assert got == expected, f"{name} changed"

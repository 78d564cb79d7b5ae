"""One registry per kind of spec: the parser, ``cvdfilter list`` and the docs read the same mapping.

Invariants of the code's own structure (no outside reference): every registered filter shape, parametric
light and surface set is listed by ``list``, accepted by its parser and named in docs/getting-started.md.
"""

import json
import pathlib
import subprocess
import sys

import pytest

from cvdfilter.inspection import catalog
from cvdfilter.spectra.filters import FILTER_SHAPES, SPEC_FORMS, parse_filter_spec
from cvdfilter.spectra.illuminants import ILLUMINANT_KINDS, illuminant
from cvdfilter.spectra.surfaces import SURFACE_SET_KINDS

DOCS = (pathlib.Path(__file__).resolve().parent.parent / "docs" / "getting-started.md").read_text()


def _list_json(kind: str) -> dict:
    r = subprocess.run([sys.executable, "-m", "cvdfilter", "list", kind, "--format", "json"],
                       capture_output=True, text=True, check=True)
    return json.loads(r.stdout)


@pytest.mark.parametrize("name", list(FILTER_SHAPES))
def test_filter_shape_is_listed_parsed_and_documented(name):
    shape = FILTER_SHAPES[name]
    assert catalog("filters")["items"]["spec_forms"][name] == shape.form == SPEC_FORMS[name]
    fs = parse_filter_spec(shape.example)
    assert len(fs) == 1 and fs.names[0].startswith(f"{name}:") and fs.sources == ("spec",)
    assert shape.example in DOCS


def test_list_filters_command_shows_the_registry():
    forms = _list_json("filters")["items"]["spec_forms"]
    assert list(forms)[:len(FILTER_SHAPES)] == list(FILTER_SHAPES)


def test_parametric_form_wins_over_a_file_of_that_name(tmp_path, monkeypatch):
    # The spec's form decides: a file called like a spec in the working folder changes nothing.
    monkeypatch.chdir(tmp_path)
    (tmp_path / "nd").write_text("not a filter file")
    (tmp_path / "nd:t=0.5").write_text("not a filter file")
    assert parse_filter_spec("nd:t=0.5").names == ("nd:t=0.5",)


@pytest.mark.parametrize("name", list(ILLUMINANT_KINDS))
def test_illuminant_kind_is_listed_parsed_and_documented(name):
    kind = ILLUMINANT_KINDS[name]
    assert kind.form in catalog("illuminants")["items"]["parametric"]
    spec = kind.form.replace("=K", "=5000")
    assert illuminant(spec).name == kind.canonical.format(value=5000.0)
    assert kind.form in DOCS


def test_list_illuminants_command_shows_the_registry():
    assert _list_json("illuminants")["items"]["parametric"] == [k.form for k in ILLUMINANT_KINDS.values()]


def test_surface_sets_are_listed_and_documented():
    listed = [i["name"] for i in _list_json("surfaces")["items"]]
    assert listed == [*SURFACE_SET_KINDS, "PATH"]
    for name in SURFACE_SET_KINDS:
        assert name in DOCS

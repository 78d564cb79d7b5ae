"""``cvdfilter inspect-observer`` and the describe API behind it."""

from __future__ import annotations

import json

import numpy as np
import pytest
from typer.testing import CliRunner

from cvdfilter.cli.app import app
from cvdfilter.observers.describe import describe_observer, describe_observers

runner = CliRunner()


def test_json_output_schema():
    r = runner.invoke(app, ["inspect-observer", "deuteranomalous:shift=8", "protanope", "normal:data=sp1975",
                            "--format", "json"])
    assert r.exit_code == 0, r.output
    data = json.loads(r.stdout)
    assert data["tool"] == "cvdfilter" and data["version"] and data["caveat"]
    assert data["inputs"]["observers"] == ["deuteranomalous:shift=8", "protanope", "normal:data=sp1975"]
    assert data["white"] == "D65"
    d, p, n = data["observers"]
    assert d["shift_nm"] == 8 and d["affected_cone"] == "M"
    # the M pigment peak moves by the shift toward L (CIE 2006 pigment peaks ~530 and ~553 nm)
    assert d["pigment_peaks_nm"]["M"] - 529.92 == pytest.approx(8.0, abs=0.05)
    # copunctal points, CIE 2015 2 deg xy (issue 3 check values)
    assert np.allclose(d["copunctal_point"], [1.3267, -0.3267], atol=1e-3)
    assert np.allclose(p["copunctal_point"], [0.7384, 0.2616], atol=1e-3)
    assert len(p["neutral_points"]) == 1 and abs(p["neutral_points"][0]["wavelength_nm"] - 492) < 4
    assert n["pigment_peaks_nm"] is None and n["xy_system"] == "cie1931"


def test_table_output_and_white():
    r = runner.invoke(app, ["inspect-observer", "tritanope", "--white", "A"])
    assert r.exit_code == 0, r.output
    assert "copunctal point" in r.stdout and "neutral points (A)" in r.stdout
    assert "not clinical evidence" in r.stdout  # the caveat
    for line in r.stdout.splitlines():
        assert len(line) <= 100


@pytest.mark.parametrize("args,needle", [
    (["inspect-observer", "martian"], "unknown observer"),
    (["inspect-observer", "deuteranomalous:shift=99"], "outside"),
    (["inspect-observer", "protanope", "--white", "nonsense-lamp"], "nonsense-lamp"),
    (["inspect-observer", "normal", "--format", "xml"], "--format"),
])
def test_bad_input_is_one_line_exit_2(args, needle):
    r = runner.invoke(app, args)
    assert r.exit_code == 2
    err = r.stderr if r.stderr else r.output
    assert needle in err
    assert "Traceback" not in r.output
    assert len(err.strip().splitlines()) == 1
    assert r.stdout == ""


def test_describe_api_matches_cli_and_equal_energy():
    one = describe_observer("deuteranope", white=None)
    assert round(one["neutral_points"][0]["wavelength_nm"]) == 498
    many = describe_observers(["deuteranope"], white=None)
    assert many["white"] == "equal-energy" and many["observers"][0]["spec"] == "deuteranope"
    aged = describe_observer("deuteranope:age=70,field=10")
    assert aged["xy_system"] == "own-10" and aged["copunctal_fit_residual"] < 1e-9
    assert any("own cone-fundamental-based" in n for n in aged["notes"])

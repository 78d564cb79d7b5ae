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
    assert d["shift_nm"] == 8 and d["affected_cone"] == "M" and d["shift_measure"] == "fundamental peak"
    # shift = the move of the M fundamental's peak toward L in the reference observer (CIE 2006, 32 y,
    # 2 deg: M peaks at 542.82 nm, L at 570.17 nm; issue 9), measured here on the 1 nm grid by the
    # describe parabola (0.05 nm); 27.35 - 8 nm are left between the peaks
    assert d["fundamental_peaks_nm"]["M"] - 542.82 == pytest.approx(8.0, abs=0.05)
    assert d["separation_nm"] == pytest.approx(27.35 - 8, abs=0.01)
    assert d["normal_separation_nm"] == pytest.approx(27.35, abs=0.01)
    assert d["fundamental_separation_nm"] == pytest.approx(27.35 - 8, abs=0.05)
    # the M pigment peak moves by the pigment shift the observer reports (CIE 2006 pigment peak ~529.92 nm)
    assert d["pigment_peaks_nm"]["M"] - 529.92 == pytest.approx(d["pigment_shift_nm"], abs=0.01)
    assert 7.5 < d["pigment_shift_nm"] < 8.5
    # copunctal points, CIE 2015 2 deg xy (issue 3 check values)
    assert np.allclose(d["copunctal_point"], [1.3267, -0.3267], atol=1e-3)
    assert np.allclose(p["copunctal_point"], [0.7384, 0.2616], atol=1e-3)
    assert len(p["neutral_points"]) == 1 and abs(p["neutral_points"][0]["wavelength_nm"] - 492) < 4
    assert n["pigment_peaks_nm"] is None and n["xy_system"] == "cie1931"


def test_table_states_what_shift_means():
    r = runner.invoke(app, ["inspect-observer", "protanomalous", "deuteranomalous:age=70", "tritanomalous"])
    assert r.exit_code == 0, r.output
    out = " ".join(r.stdout.split())
    assert "protanomalous:separation=10" in out and "deuteranomalous:separation=6,age=70" in out
    assert "17.35 nm (L cone, fundamental peak), 10.00 of 27.35 nm left" in out
    assert "in the CIE 2006 observer at 32 years and 2 deg" in out
    assert "at this observer's own age and field the peaks are" in out
    assert "15.00 nm (S cone, pigment peak)" in out


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

"""``cvdfilter score`` through a real subprocess: formats, files, sweeps, bad input."""

from __future__ import annotations

import csv
import io
import json
import subprocess
import sys

import pytest

from cvdfilter.cautions import CAVEAT, ROAD_CAUTION
from cvdfilter.scorecard import score


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "cvdfilter", "score", *args], capture_output=True, text=True,
                          cwd=cwd)


@pytest.fixture
def two_column_file(tmp_path):
    # A measured-style file with two filters in percent (every column of a multi-column file is a filter).
    p = tmp_path / "lenses.csv"
    rows = ["nm,lens A %,lens B %"]
    for w in range(380, 781, 5):
        a = 90 - 70 * (abs(w - 580) < 12)
        rows.append(f"{w},{a},{40}")
    p.write_text("\n".join(rows) + "\n")
    return p


def test_json_is_exactly_the_api_dict(two_column_file):
    args = [str(two_column_file), "larkhill-rose-tint", "--observer", "normal", "--observer", "deuteranope",
            "--metrics", "all", "--illuminant", "A"]
    r = run(*args, "--format", "json")
    assert r.returncode == 0, r.stderr
    data = json.loads(r.stdout)
    api = score([str(two_column_file), "larkhill-rose-tint"], observers=["normal", "deuteranope"], metrics="all",
                illuminant="A").to_dict()
    assert data == json.loads(json.dumps(api))
    assert [f["name"] for f in data["filters"]] == ["lenses:lens A %", "lenses:lens B %", "larkhill-rose-tint"]
    assert data["filters"][1]["luminous_transmittance"] == pytest.approx(0.4, abs=1e-6)
    assert data["illuminant"]["name"] == "A"


def test_csv_markdown_and_output_file(tmp_path):
    out = tmp_path / "card.csv"
    r = run("notch:center=540..600/20,fwhm=30,depth=0.8", "--metrics", "core", "--format", "csv", "--output",
            str(out))
    assert r.returncode == 0, r.stderr
    assert r.stdout == "" and "wrote" in r.stderr
    rows = list(csv.DictReader(io.StringIO(out.read_text())))
    assert len(rows) == 4 * 5  # 4 swept filters x 5 default observers
    assert {row["observer"] for row in rows} == {"normal", "protanomalous:separation=10", "deuteranomalous:separation=6",
                                                 "protanope", "deuteranope"}
    assert rows[0]["caveat"] == CAVEAT
    md = run("larkhill-notch-575", "--metrics", "core", "--format", "markdown")
    assert md.returncode == 0, md.stderr
    assert md.stdout.startswith("# cvdfilter scorecard") and ROAD_CAUTION in md.stdout


def test_table_fits_100_columns_with_cautions_under_it():
    r = run("larkhill-notch-575", "larkhill-grey-reference", "--metrics", "core")
    assert r.returncode == 0, r.stderr
    lines = r.stdout.splitlines()
    assert max(len(line) for line in lines) <= 100
    flat = " ".join(r.stdout.split())
    assert " ".join(CAVEAT.split()) in flat and " ".join(ROAD_CAUTION.split()) in flat
    assert flat.index("Per observer") < flat.index(" ".join(CAVEAT.split()))


def test_signal_spectra_option(tmp_path):
    p = tmp_path / "signals.csv"
    p.write_text("nm,red\n" + "\n".join(f"{w},{1.0 if 610 <= w <= 650 else 0.0}" for w in range(380, 781, 5)))
    r = run("nd:t=0.5", "--metrics", "road_use", "--observer", "normal", "--signal-spectra", str(p), "-f", "json")
    assert r.returncode == 0, r.stderr
    lights = json.loads(r.stdout)["signal_lights"]["red"]["lights"]
    assert [(l["name"], l["kind"]) for l in lights] == [("red", "measured")]


@pytest.mark.parametrize("args,needle", [
    (["no-such-lens.csv"], "no such file"),
    (["nd:t=0.5", "--observer", "martian"], "unknown observer"),
    (["nd:t=0.5", "--adaptation", "1.5"], "adaptation"),
    (["nd:t=0.5", "--metrics", "beauty"], "unknown metrics"),
    (["nd:t=0.5", "--surfaces", "moon-rocks"], "unknown surface set"),
    (["nd:t=0.5", "--format", "yaml"], "--format"),
    (["notch:center=575,fwhm=30"], "depth"),
])
def test_bad_input_one_line_exit_2_nothing_written(tmp_path, args, needle):
    out = tmp_path / "card.json"
    r = run(*args, "--output", str(out))
    assert r.returncode == 2
    assert r.stdout == ""
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and needle in lines[0] and "Traceback" not in r.stderr
    assert not out.exists() and list(tmp_path.iterdir()) == []


def test_output_never_overwrites_an_input(two_column_file):
    before = two_column_file.read_text()
    r = run(str(two_column_file), "--metrics", "photometry", "--output", str(two_column_file))
    assert r.returncode == 2 and "overwrite" in r.stderr
    assert two_column_file.read_text() == before


def test_signal_limits_are_printed_in_every_format(tmp_path):
    # Issue 9: every output that judges road use names the limits it used.
    for fmt, needle in (("table", "Signal-quotient limits: red 0.8, yellow 0.8, green 0.6, blue 0.4"),
                        ("markdown", "Signal-quotient limits: red 0.8, yellow 0.8, green 0.6, blue 0.4"),
                        ("csv", "red=0.8,yellow=0.8,green=0.6,blue=0.4"),
                        ("json", '"blue": 0.4')):
        r = run("nd:t=0.5", "--observer", "normal", "--metrics", "photometry,road_use", "--format", fmt,
                "--signal-limits", "red=0.8,yellow=0.8,green=0.6,blue=0.4")
        assert r.returncode == 0, r.stderr
        assert needle in " ".join(r.stdout.split()) or needle in r.stdout, fmt
    r = run("nd:t=0.5", "--observer", "normal", "--metrics", "road_use", "--format", "json")
    assert json.loads(r.stdout)["models"]["road_use"]["signal_limits"]["blue"] == 0.6


def test_model_constants_are_cli_options():
    args = ["larkhill-notch-575", "--observer", "deuteranope", "--metrics", "discrimination,confusion",
            "--format", "json"]
    r = run(*args, "--weber-fraction", "0.03", "--cone-ratios", "12:3:1", "--jnd-threshold", "1.25")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    m = d["models"]
    assert m["discrimination"]["weber_fraction_l"] == 0.03 and m["discrimination"]["cone_ratios_lms"] == [12, 3, 1]
    assert m["confusion"]["normal_threshold_jnd"] == 1.25 and m["confusion"]["deficient_threshold_jnd"] == 1.25
    api = score("larkhill-notch-575", observers=["deuteranope"], metrics="discrimination,confusion",
                weber_fraction=0.03, cone_ratios=(12, 3, 1), discrimination_threshold=1.25, normal_threshold=1.25,
                deficient_threshold=1.25).to_dict()
    assert d["filters"] == api["filters"]


def test_sensitivity_section(tmp_path):
    out = tmp_path / "s.json"
    r = run("larkhill-notch-575", "nd:t=0.5", "--observer", "normal", "--observer", "deuteranope", "--metrics",
            "core", "--sensitivity", "--format", "json", "-o", str(out))
    assert r.returncode == 0, r.stderr
    sens = json.loads(out.read_text())["sensitivity"]
    names = [v["name"] for v in sens["variations"]]
    assert "weber_fraction=0.01" in names and "thresholds x1.25" in names and "signal_limits=blue-0.4" in names
    nd = sens["filters"][1]
    # A neutral filter changes nothing under any variation: every verdict is robust, every ratio 1.
    for o in nd["observers"]:
        assert o["median_delta_s_ratio"]["min"] == o["median_delta_s_ratio"]["max"] == 1.0
        assert o["discriminable_net"]["robust"]
    assert nd["road_use_suitable"]["robust"]
    table = run("larkhill-notch-575", "--observer", "deuteranope", "--metrics", "core", "--sensitivity")
    assert table.returncode == 0 and "Sensitivity: larkhill-notch-575" in table.stdout


@pytest.mark.parametrize("bad", [["--cone-ratios", "10:5"], ["--cone-ratios", "10:5:-1"], ["--weber-fraction", "0"],
                                 ["--jnd-threshold", "-1"], ["--signal-limits", "violet=0.5"]])
def test_bad_model_options_exit_2(bad, tmp_path):
    out = tmp_path / "x.json"
    r = run("nd:t=0.5", "--observer", "normal", *bad, "-o", str(out))
    assert r.returncode == 2, (bad, r.stderr)
    assert len(r.stderr.strip().splitlines()) == 1 and not out.exists()

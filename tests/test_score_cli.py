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
    assert {row["observer"] for row in rows} == {"normal", "protanomalous:shift=16", "deuteranomalous:shift=16",
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

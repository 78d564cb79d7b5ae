"""The list and inspect commands, through a real subprocess (exit codes, stderr, atomic output)."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "cvdfilter", *args], capture_output=True, text=True, cwd=cwd)


@pytest.mark.parametrize("kind", ["illuminants", "observers", "surfaces", "filters", "methods"])
def test_list(kind):
    r = run("list", kind)
    assert r.returncode == 0, r.stderr
    data = json.loads(run("list", kind, "--format", "json").stdout)
    assert data["tool"] == "cvdfilter" and data["kind"] == kind


def test_inspect_json_on_file_spec_and_example(tmp_path):
    f = tmp_path / "lens.csv"
    f.write_text("nm,T%\n" + "\n".join(f"{w},{90 - 80 * (abs(w - 575) < 10)}" for w in range(380, 781, 5)))
    r = run("inspect", str(f), "larkhill-notch-575", "nd:t=0.5", "--format", "json")
    assert r.returncode == 0, r.stderr
    data = json.loads(r.stdout)
    assert {"tool", "version", "caveat", "filters"} <= data.keys()
    lens, example, nd = data["filters"]
    assert lens["units"] == "percent" and "percent" in lens["units_reason"]
    assert len(lens["sha256"]) == 64
    assert example["notches"] and abs(example["notches"][0]["center"] - 575) < 2
    assert nd["luminous_transmittance_d65"] == pytest.approx(0.5)


@pytest.mark.parametrize("content,needle", [
    ("", "empty"), ("380,0.5\n400,abc\n780,0.5\n", "line 2"), ("380,0.5\n380,0.5\n780,0.5\n", "twice"),
    ("450,0.5\n780,0.5\n", "missing 400-450 nm"), ("380,0.5\n400,nan\n780,0.5\n", "finite"),
])
def test_bad_input_one_line_exit_2_nothing_written(tmp_path, content, needle):
    f = tmp_path / "bad.csv"
    f.write_text(content)
    out = tmp_path / "out.json"
    r = run("inspect", str(f), "--format", "json", "--output", str(out))
    assert r.returncode == 2
    assert r.stdout == ""
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and "bad.csv" in lines[0] and needle in lines[0]
    assert "Traceback" not in r.stderr
    assert not out.exists() and not list(tmp_path.glob(".out*"))


def test_output_never_overwrites_input(tmp_path):
    f = tmp_path / "lens.csv"
    f.write_text("\n".join(f"{w},0.5" for w in range(380, 781, 10)))
    before = f.read_text()
    r = run("inspect", str(f), "--format", "json", "--output", str(f))
    assert r.returncode == 2 and f.read_text() == before


def test_help_has_examples():
    for cmd in ("list", "inspect"):
        r = run(cmd, "--help")
        assert r.returncode == 0 and "Example" in r.stdout

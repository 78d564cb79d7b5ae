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


# --- users' files through every command (tests/data/, invented) -------------------------------------------------

import pathlib  # noqa: E402

DATA = pathlib.Path(__file__).resolve().parent / "data"
ROOT = DATA.parent.parent
DARK = str(DATA / "dark_lens_percent_no_unit.csv")
PARTIAL = str(DATA / "measured_400_700_only.csv")


def _one_line_exit_2(r, *needles):
    assert r.returncode == 2, r.stderr
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in r.stderr, r.stderr
    for n in needles:
        assert n in lines[0], lines[0]


def _command(cmd, filt, tmp_path):
    """Arguments running one command on filter spec(s) ``filt`` (a list)."""
    if cmd == "score":
        return ["score", *filt, "--metrics", "core", "--observer", "normal", "--format", "json"]
    if cmd == "inspect":
        return ["inspect", *filt, "--format", "json"]
    if cmd == "figure":
        return ["figure", "spectrum", *filt, "-o", str(tmp_path / "f.svg")]
    if cmd == "report":
        return ["report", *filt, "--metrics", "core", "--observer", "normal", "-o", str(tmp_path / "r.md")]
    return ["render", str(ROOT / "test_images" / "gradient_grey.png"), "--filter", filt[0], "--view", "filtered",
            "--out", str(tmp_path / "out"), "-q"]


@pytest.mark.parametrize("cmd", ["score", "inspect", "figure", "report", "render"])
def test_units_option_and_per_file_form_on_every_command(cmd, tmp_path):
    # Without units the dark lens is refused with one line asking for --units; --units and FILE@units= both work.
    _one_line_exit_2(run(*_command(cmd, [DARK], tmp_path)), "dark_lens_percent_no_unit.csv", "--units")
    r = run(*_command(cmd, [DARK], tmp_path), "--units", "percent")
    assert r.returncode == 0, r.stderr
    r = run(*_command(cmd, [f"{DARK}@units=percent"], tmp_path / "b"))
    assert r.returncode == 0, r.stderr
    r = run(*_command(cmd, [DARK], tmp_path / "c"), "--units", "percent", "--bandwidth", "5")
    assert r.returncode == 0, r.stderr


@pytest.mark.parametrize("cmd", ["score", "inspect", "figure", "report", "render"])
def test_extrapolation_warned_in_every_command(cmd, tmp_path):
    r = run(*_command(cmd, [PARTIAL], tmp_path))
    assert r.returncode == 0, r.stderr
    assert "warning:" in r.stderr and "extrapolated 380-399 nm held at the 400 nm value" in r.stderr


def test_score_json_records_source_column_and_extrapolation(tmp_path):
    r = run("score", PARTIAL, f"{DATA / 'three_lenses.csv'}:Lens B (%T)", "--metrics", "core", "--observer",
            "normal", "--format", "json")
    assert r.returncode == 0, r.stderr
    partial, lens_b = json.loads(r.stdout)["filters"]
    assert partial["name"] == "measured_400_700_only"
    assert [(e["from_nm"], e["to_nm"], e["method"]) for e in partial["extrapolated"]] == [
        (380, 399, "constant"), (701, 780, "constant")]
    assert lens_b["name"] == "three_lenses:Lens B (%T)"
    assert lens_b["source"]["path"].endswith("three_lenses.csv") and lens_b["source"]["column"] == "Lens B (%T)"
    assert lens_b["source"]["column_number"] == 2 and lens_b["extrapolated"] == []


def test_score_names_filters_by_file_and_keeps_them_apart():
    r = run("score", str(DATA / "same_header_a.csv"), str(DATA / "same_header_b.csv"), str(DATA / "batch1/lens.csv"),
            str(DATA / "batch2/lens.csv"), "--metrics", "core", "--observer", "normal", "--format", "json")
    assert r.returncode == 0, r.stderr
    names = [f["name"] for f in json.loads(r.stdout)["filters"]]
    assert names == ["same_header_a", "same_header_b", "batch1/lens", "batch2/lens"]


@pytest.mark.parametrize("cmd", ["score", "inspect"])
def test_output_format_follows_the_extension(cmd, tmp_path):
    base = [cmd, "nd:t=0.5"] + (["--metrics", "core", "--observer", "normal"] if cmd == "score" else [])
    if cmd == "score":
        out = tmp_path / "out.csv"
        assert run(*base, "-o", str(out)).returncode == 0
        import csv as _csv
        import io as _io

        rows = list(_csv.DictReader(_io.StringIO(out.read_text())))
        assert rows and rows[0]["name"] == "nd:t=0.5"
    out = tmp_path / "out.json"
    assert run(*base, "-o", str(out)).returncode == 0
    assert json.loads(out.read_text())["tool"] == "cvdfilter"
    bad = tmp_path / "x.csv"
    _one_line_exit_2(run(*base, "--format", "json", "-o", str(bad)), "contradicts")
    assert not bad.exists()


def test_list_filters_documents_selection_and_options():
    r = run("list", "filters")
    assert r.returncode == 0
    assert "PATH:COLUMN" in r.stdout and "PATH:N" in r.stdout and "PATH@units=U" in r.stdout


@pytest.mark.parametrize("args,needles", [
    (["score", "notch:center=575,fwhm=35,depth=0.8*"], ["empty term in a stack"]),
    (["score", "notch:center=400..700/0.0001,fwhm=30,depth=0.8"], ["at most 50,000"]),
    (["inspect", "/dev/zero"], ["/dev/zero", "not a regular file"]),
    (["inspect", str(DATA / "workbook.xlsx")], ["workbook.xlsx", "export the sheet"]),
    (["inspect", str(DATA / "tm2714_no_spectral_data.spdx")], ["tm2714_no_spectral_data.spdx", "no spectral data"]),
    (["score", "nd:t=0.5", "--observer", "deuteranop"], ["did you mean 'deuteranope'"]),
    (["score", "nd:t=0.5", "--illuminant", "D6"], ["did you mean"]),
    (["score", "nd:t=0.5", "--surfaces", "ces9"], ["did you mean 'ces99'"]),
    (["inspect", f"{DATA / 'three_lenses.csv'}:Lens Z"], ["no column 'Lens Z'"]),
    (["render", str(ROOT / "test_images" / "gradient_grey.png"), "--filter", str(DATA / "three_lenses.csv"),
      "--out", "unused-out"], ["FILE:COLUMN"]),
])
def test_faults_are_one_line_exit_2(args, needles, tmp_path):
    _one_line_exit_2(run(*args, cwd=tmp_path), *needles)


def test_named_pipe_does_not_hang(tmp_path):
    import os

    fifo = tmp_path / "pipe.csv"
    os.mkfifo(fifo)
    r = subprocess.run([sys.executable, "-m", "cvdfilter", "inspect", str(fifo)], capture_output=True, text=True,
                       timeout=120)
    _one_line_exit_2(r, "not a regular file")


@pytest.mark.parametrize("fmt,output,expected", [
    (None, None, "table"), (None, "x.csv", "csv"), (None, "x.json", "json"), (None, "x.md", "markdown"),
    (None, "x.txt", "table"), ("json", "x.txt", "json"), ("csv", "x.CSV", "csv"), ("json", None, "json"),
    (None, "x.out", "table"), ("json", "x.csv", "contradicts"), ("yaml", None, "is not one of"),
])
def test_resolve_format_rule(fmt, output, expected):
    from cvdfilter.cli.common import resolve_format
    from cvdfilter.errors import InputError

    if expected in ("contradicts", "is not one of"):
        with pytest.raises(InputError, match=expected):
            resolve_format(fmt, output)
    else:
        assert resolve_format(fmt, output) == expected

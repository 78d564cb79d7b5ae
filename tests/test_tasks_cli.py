"""``cvdfilter tasks`` through a real subprocess: formats, stimulus export, bad input."""

from __future__ import annotations

import csv
import io
import json
import subprocess
import sys

from cvdfilter.cautions import CAVEAT
from cvdfilter.vision_tasks import tasks
from cvdfilter.vision_tasks.core import TASKS_CAUTION


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "cvdfilter", "tasks", *args], capture_output=True, text=True,
                          cwd=cwd)


def test_json_is_exactly_the_api_dict():
    r = run("larkhill-notch-575", "nd:t=0.5", "--observer", "normal", "--observer", "deuteranomalous",
            "--trials", "40", "--seed", "3", "--format", "json")
    assert r.returncode == 0, r.stderr
    data = json.loads(r.stdout)
    api = tasks(["larkhill-notch-575", "nd:t=0.5"], observers=["normal", "deuteranomalous"], trials=40, seed=3)
    assert data == json.loads(api.to_json())
    assert data["caveat"] == CAVEAT and TASKS_CAUTION in data["cautions"]
    assert len(data["results"]) == 2 * 2 * 4
    assert set(data["summary"]) == {"larkhill-notch-575", "nd:t=0.5"}


def test_table_csv_markdown_carry_the_caveat(tmp_path):
    for fmt in ("table", "markdown"):
        r = run("larkhill-rose-tint", "--observer", "deuteranope", "--task", "rayleigh", "--format", fmt)
        assert r.returncode == 0, r.stderr
        assert "not a clinical test" in r.stdout and "licensed practice" in r.stdout
        assert "larkhill-rose-tint:" in r.stdout  # the one-line summary
    out = tmp_path / "t.csv"
    r = run("larkhill-rose-tint", "--observer", "deuteranope", "--task", "plates", "-o", str(out))
    assert r.returncode == 0, r.stderr
    rows = list(csv.DictReader(io.StringIO(out.read_text())))
    assert rows and all("not a clinical test" in row["caveat"] for row in rows)
    assert {row["verdict"] for row in rows} <= {"easier", "harder", "no change"}


def test_export_stimuli(tmp_path):
    folder = tmp_path / "stimuli"
    r = run("nd:t=0.5", "--task", "rayleigh", "--observer", "normal", "--export-stimuli", str(folder),
            "--format", "json")
    assert r.returncode == 0, r.stderr
    names = {p.name for p in folder.iterdir()}
    assert {"caps.csv", "stimuli.json", "rayleigh-primaries.csv", "plate-hidden-deutan.png",
            "plate-filter-only.csv"} <= names
    header = [line for line in (folder / "caps.csv").read_text().splitlines() if not line.startswith("#")][0]
    assert header.split(",")[1:3] == ["coarse-01", "coarse-02"] and len(header.split(",")) == 1 + 16 + 24


def test_bad_input_one_line_exit_2_nothing_written(tmp_path):
    out = tmp_path / "o.json"
    for args in (["nope.csv"], ["nd:t=0.5", "--task", "sorting"], ["nd:t=0.5", "--trials", "0"],
                 ["nd:t=0.5", "--observer", "martian"], ["nd:t=0.5", "--format", "xml"]):
        r = run(*args, "-o", str(out))
        assert r.returncode == 2, (args, r.stderr)
        assert len(r.stderr.strip().splitlines()) == 1 and "Traceback" not in r.stderr
        assert not out.exists()


def test_units_apply_to_filter_files_and_format_follows_the_output(tmp_path):
    # Issue 10: every command that reads spectra takes --units; the format follows -o unless --format says
    # otherwise, and a contradiction is refused. A file of 0.3 everywhere with no unit word is ambiguous
    # (fraction or optical density); with --units od it is a neutral filter of T = 10^-0.3 (definition of
    # optical density, common practice), which leaves the Rayleigh reading unchanged.
    lens = tmp_path / "flat.csv"
    lens.write_text("nm,value\n" + "".join(f"{w},0.3\n" for w in range(380, 781, 5)))
    r = run(str(lens), "--task", "rayleigh", "--observer", "normal")
    assert r.returncode == 2 and "--units" in r.stderr
    out = tmp_path / "r.json"
    r = run(str(lens), "--task", "rayleigh", "--observer", "normal", "--units", "od", "-o", str(out))
    assert r.returncode == 0, r.stderr
    res = json.loads(out.read_text())["results"][0]
    assert res["verdict"] == "no change"
    assert abs(res["with"]["red_fraction"] - res["without"]["red_fraction"]) < 1e-9
    r = run("nd:t=0.5", "--task", "rayleigh", "--format", "json", "-o", str(tmp_path / "x.csv"))
    assert r.returncode == 2 and not (tmp_path / "x.csv").exists()

"""The figure and report commands: options, formats, reproducible files and one-line errors."""

from __future__ import annotations

import os
import subprocess
import sys

import numpy as np
import pytest
from typer.testing import CliRunner

from cvdfilter.cautions import CAVEAT
from cvdfilter.cli.app import app

runner = CliRunner()


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "cvdfilter", *args], capture_output=True, text=True, cwd=cwd)


def invoke(*args):
    return runner.invoke(app, [str(a) for a in args])


@pytest.mark.parametrize("command", ["figure", "report"])
def test_help_has_an_example(command):
    r = invoke(command, "--help")
    assert r.exit_code == 0 and "Example: cvdfilter " + command in " ".join(r.output.split())


def test_figure_files_are_byte_identical_across_processes(tmp_path):
    # Two fresh processes, each running the command for an SVG and a PDF (through the CLI app,
    # in-process, so the test pays for two interpreter starts rather than four).
    script = (
        "import sys; from typer.testing import CliRunner; from cvdfilter.cli.app import app\n"
        "for out in sys.argv[1:]:\n"
        "    r = CliRunner().invoke(app, ['figure', 'spectrum', 'larkhill-notch-575', '--observer',\n"
        "                                 'deuteranomalous', '-o', out])\n"
        "    assert r.exit_code == 0, r.output\n")
    # The first process starts with an empty reference-data cache (computed afresh with
    # colour-science), the second reads it back: the files must not notice.
    env = {**os.environ, "CVDFILTER_CACHE_DIR": str(tmp_path / "cache")}
    for k in range(2):
        r = subprocess.run([sys.executable, "-c", script, str(tmp_path / f"run{k}.svg"),
                            str(tmp_path / f"run{k}.pdf")], capture_output=True, text=True, env=env)
        assert r.returncode == 0, r.stderr
    for fmt in ("svg", "pdf"):
        assert (tmp_path / f"run0.{fmt}").read_bytes() == (tmp_path / f"run1.{fmt}").read_bytes()


@pytest.fixture(scope="module")
def small_png(tmp_path_factory):
    # Open data shipped with scikit-image (NASA astronaut photograph), reduced to 48 x 48.
    import skimage.data
    from PIL import Image

    path = tmp_path_factory.mktemp("img") / "astronaut-small.png"
    Image.fromarray(np.ascontiguousarray(skimage.data.astronaut()[::11, ::11][:48, :48])).save(path)
    return path


def test_every_kind_through_the_command(tmp_path, small_png):
    cases = [
        ("spectrum", ["larkhill-notch-575", "larkhill-double-notch", "--observer", "normal",
                      "--observer", "protanomalous:shift=6", "--width", "double"], "pdf"),
        ("chromaticity", ["larkhill-notch-575", "--observer", "protanope", "--space", "xy",
                          "--surfaces", "tcs14"], "svg"),
        ("gains", ["larkhill-notch-575", "--observer", "normal", "--observer", "deuteranope",
                   "--surfaces", "chart24", "--width", "120"], "png"),
        ("hues", ["larkhill-rose-tint", "--chart", "radial", "--illuminant", "FL2"], "svg"),
        ("swatches", ["larkhill-double-notch", "--observer", "tritanope", "--surfaces", "chart24",
                      "--adaptation", "0.5"], "pdf"),
        ("images", ["larkhill-notch-575", "--image", str(small_png), "--observer", "deuteranope"], "png"),
        ("sweep", ["notch:center=540..600/30,fwhm=30,depth=0.8", "--observer", "deuteranope",
                   "--surfaces", "chart24", "--metric", "blue_yellow_gain",
                   "--metric", "discriminable_pairs.gained"], "svg"),
    ]
    for kind, args, fmt in cases:
        out = tmp_path / f"{kind}.{fmt}"
        r = invoke("figure", kind, *args, "-o", out, "--dpi", "100")
        assert r.exit_code == 0, (kind, r.output)
        assert out.exists() and out.stat().st_size > 1000
    # options reach the figure: the radial chart and the metrics named on the command line
    hues = (tmp_path / "hues.svg").read_text()
    assert "Relative chroma per hue bin" in hues and "FL2 alone" in hues
    sweep = (tmp_path / "sweep.svg").read_text()
    assert "Blue-yellow gain" in sweep and "Discriminable" in sweep and "Notch centre (nm)" in sweep


def test_caveat_title_and_style_options(tmp_path):
    style = tmp_path / "journal.style"
    style.write_text("font_size: 8.5\ncaveat_size: 6\n")
    with_caveat = tmp_path / "a.svg"
    r = invoke("figure", "gains", "larkhill-notch-575", "--observer", "deuteranope", "--surfaces", "chart24",
               "--style", style, "--title", "Figure 3", "-o", with_caveat)
    assert r.exit_code == 0, r.output
    text = with_caveat.read_text()
    assert "Figure 3" in text and "font: 8.5px" in text.replace("8.5pt", "8.5px") or "8.5" in text
    assert "not clinical evidence" in text
    without = tmp_path / "b.svg"
    r = invoke("figure", "gains", "larkhill-notch-575", "--observer", "deuteranope", "--surfaces", "chart24",
               "--no-caveat", "--title", "", "-o", without)
    assert r.exit_code == 0, r.output
    text = without.read_text()
    assert "not clinical evidence" not in text and "Contrast gains" not in text


@pytest.mark.parametrize("args,needle", [
    (["figure", "pie", "larkhill-notch-575", "-o", "{tmp}/x.svg"], "unknown figure kind"),
    (["figure", "spectrum", "larkhill-notch-575", "-o", "{tmp}/x.jpg"], "end the file name in .pdf, .svg or .png"),
    (["figure", "spectrum", "nope-filter", "-o", "{tmp}/x.svg"], "unknown filter"),
    (["figure", "spectrum", "larkhill-notch-575", "--style", "font_size=2", "-o", "{tmp}/x.svg"], "below 6 pt"),
    (["figure", "spectrum", "larkhill-notch-575", "--width", "huge", "-o", "{tmp}/x.svg"], "--width"),
    (["figure", "spectrum", "larkhill-notch-575", "--chart", "bar", "-o", "{tmp}/x.svg"], "does not apply"),
    (["figure", "chromaticity", "larkhill-notch-575", "--space", "luv", "-o", "{tmp}/x.svg"], "--space luv"),
    (["figure", "sweep", "larkhill-notch-575", "-o", "{tmp}/x.svg"], "sweep needs several filters"),
    (["figure", "sweep", "notch:center=540..560/10,fwhm=30,depth=0.8", "--metric", "happiness",
      "-o", "{tmp}/x.svg"], "unknown metric"),
    (["report", "larkhill-notch-575", "-o", "{tmp}/x.docx"], "end the file name in .html or .md"),
    (["report", "larkhill-notch-575", "--observer", "martian", "-o", "{tmp}/x.html"], "unknown observer"),
])
def test_bad_input_is_one_line_exit_2_and_writes_nothing(tmp_path, args, needle):
    r = run(*[a.replace("{tmp}", str(tmp_path)) for a in args])
    assert r.returncode == 2, r.stderr
    lines = [line for line in r.stderr.splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith("cvdfilter: error:") and needle in lines[0], r.stderr
    assert "Traceback" not in r.stderr
    assert list(tmp_path.iterdir()) == []


def test_figure_never_overwrites_an_input(tmp_path):
    lens = tmp_path / "lens.csv"
    lens.write_text("nm,T (fraction)\n380,0.9\n575,0.1\n780,0.9\n")
    before = lens.read_bytes()
    r = invoke("figure", "spectrum", lens, "-o", tmp_path / "lens.csv.svg")
    assert r.exit_code == 0, r.output
    r = run("figure", "spectrum", str(lens), "-o", str(lens))
    assert r.returncode == 2 and lens.read_bytes() == before


def test_report_command_writes_html_with_caveat(tmp_path):
    out = tmp_path / "r.html"
    r = invoke("report", "larkhill-grey-reference", "--observer", "normal", "--observer", "deuteranope",
               "--surfaces", "tcs14", "--metrics", "core", "-o", out)
    assert r.exit_code == 0, r.output
    text = out.read_text()
    assert CAVEAT.replace("'", "&#x27;") in text and "--metrics core" in text
    assert 'id="figure-hues"' not in text            # no rendition block asked for, no hues figure


def test_figure_data_option_writes_the_plotted_numbers(tmp_path):
    out, data = tmp_path / "hues.svg", tmp_path / "hues.csv"
    r = invoke("figure", "hues", "larkhill-notch-575", "-o", out, "--data", data)
    assert r.exit_code == 0, r.output
    lines = data.read_text().splitlines()
    assert lines[0].startswith("# tool: cvdfilter") and any(line == f"# caveat: {CAVEAT}" for line in lines)
    rows = [line.split(",") for line in lines if not line.startswith("#")]
    assert rows[0] == ["series", "bin", "hue_name", "hue_from_deg", "hue_to_deg", "local_chroma_shift_pct"]
    assert len(rows) == 1 + 2 * 16                         # the illuminant alone and the filter, 16 bins each
    # a non-CSV data file or the figure's own output is refused in one line, nothing written
    r = run("figure", "hues", "larkhill-notch-575", "-o", str(tmp_path / "b.svg"), "--data", str(tmp_path / "b.txt"))
    assert r.returncode == 2 and "CSV" in r.stderr and not (tmp_path / "b.svg").exists()


def test_figure_arrows_option(tmp_path):
    r = invoke("figure", "chromaticity", "larkhill-notch-575", "--surfaces", "ces99", "--arrows", "mean",
               "-o", tmp_path / "c.svg", "--data", tmp_path / "c.csv")
    assert r.exit_code == 0, r.output and (tmp_path / "c.svg").exists()
    r = run("figure", "chromaticity", "larkhill-notch-575", "--arrows", "many", "-o", str(tmp_path / "d.svg"))
    assert r.returncode == 2 and "--arrows" in r.stderr

"""A filter that passes no light (``nd:t=0``, a file of zeros) in the chromaticity figure, swatches and report.

Such a filter has no chromaticity and nothing to adapt to: the figures refuse it with one line naming it
(exit 2, no file written), and the report leaves it out of those figures with a note, without a numpy
warning on stderr.
"""

from __future__ import annotations

import pathlib
import warnings

import pytest
from typer.testing import CliRunner

from cvdfilter.cli.app import app
from cvdfilter.errors import InputError

DATA = pathlib.Path(__file__).parent / "data"
ZERO_FILE = str(DATA / "zero-transmittance.csv")
runner = CliRunner()


@pytest.mark.parametrize("spec", ["nd:t=0", ZERO_FILE])
def test_chromaticity_figure_refuses_a_black_filter(spec, tmp_path):
    out = tmp_path / "c.png"
    r = runner.invoke(app, ["figure", "chromaticity", spec, "-o", str(out)])
    assert r.exit_code == 2
    lines = [line for line in r.output.splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith("cvdfilter: error:") and "no light" in lines[0]
    assert ("nd:t=0" if spec == "nd:t=0" else "zero-transmittance") in lines[0]
    assert "Warning" not in r.output and not out.exists()


def test_unlit_cones_names_the_cones():
    import numpy as np

    from cvdfilter.figures.chromaticity import unlit_cones
    from cvdfilter.spectra.filters import FilterSet
    from cvdfilter.spectra.grid import DEFAULT_GRID

    # A glass that is exactly 0 below 640 nm leaves the S cone without light (the CIE 170-1 S fundamental
    # is tabulated as 0 beyond 615 nm), not L or M.
    wl = DEFAULT_GRID.wavelengths
    fs = FilterSet(("red-glass", "clear"), np.stack([(wl >= 640) * 0.9, np.full(wl.size, 0.9)]))
    assert unlit_cones(fs, observer="deuteranope") == {"red-glass": ("S",)}
    assert unlit_cones("nd:t=0") == {"nd:t=0": ("L", "M", "S")}


def test_swatches_refuse_adapting_to_a_black_filter_but_show_it_unadapted():
    from cvdfilter.figures import figure

    with pytest.raises(InputError, match="nd:t=0.*no light"):
        figure("swatches", "nd:t=0", observers="deuteranope")
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # no numpy warning
        r = figure("swatches", "nd:t=0", observers="deuteranope", adaptation="none", caveat=False)
    assert int(r.data["srgb8"]["filtered"].max()) == 0  # black through a black filter
    r.close()


def test_report_leaves_a_black_filter_out_of_the_figures(tmp_path):
    from cvdfilter.reporting import report

    with warnings.catch_warnings():
        warnings.simplefilter("error")  # a numpy RuntimeWarning here used to reach stderr
        rep = report(["nd:t=0", "larkhill-notch-575"], observers=["normal", "deuteranope"], surfaces="chart24",
                     metrics="core")
    figs = {f.kind: f for f in rep.figures}
    assert "Left out, having no chromaticity: nd:t=0 (no light for the L, M, S cones)" in figs["chromaticity"].caption
    assert figs["chromaticity"].svg and not figs["chromaticity"].note  # still drawn for the other filter
    assert "larkhill-notch-575" in figs["swatches"].caption and figs["swatches"].svg

    with warnings.catch_warnings():
        warnings.simplefilter("error")
        alone = report(["nd:t=0"], observers=["normal", "deuteranope"], surfaces="chart24", metrics="core")
    figs = {f.kind: f for f in alone.figures}
    assert figs["chromaticity"].note and "nd:t=0" in figs["chromaticity"].note and not figs["chromaticity"].svg
    assert figs["swatches"].note and not figs["swatches"].svg


def test_report_cli_with_a_black_filter_file(tmp_path):
    out = tmp_path / "r.md"
    r = runner.invoke(app, ["report", ZERO_FILE, "--observer", "deuteranope", "--metrics", "core", "-o", str(out)])
    assert r.exit_code == 0, r.output
    assert "RuntimeWarning" not in r.output and "Traceback" not in r.output
    text = out.read_text()
    assert "zero-transmittance" in text and "no light" in text


def test_images_figure_refuses_adapting_to_a_black_filter(tmp_path):
    out = tmp_path / "i.png"
    r = runner.invoke(app, ["figure", "images", ZERO_FILE, "-o", str(out)])
    assert r.exit_code == 2 and "no light" in r.output and "zero-transmittance" in r.output
    assert not out.exists()

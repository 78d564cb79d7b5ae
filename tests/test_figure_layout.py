"""Layout of every figure kind over a matrix of cases, checked from the drawn artists (not pixels).

Cases: 1, 4 and 12 filters (as many as the kind takes); short and long filter names; single (89 mm) and
double (183 mm) column width. In each: no text outside the figure, no two text boxes overlapping, every
text at least 6 pt at final size (mathtext subscripts counted at their drawn 0.7 size), and every plotted
series in a style of its own. 6 pt is the smallest print size journals' figure guidelines accept for text
at final size (common practice; the issue asks for it).

The default run covers every kind, count, name length and width at least once (a covering subset of the
matrix); ``CVDFILTER_FULL_LAYOUT=1`` runs the full matrix. Scorecards are computed once per filter set
(the 24-patch chart set, three observers) and reused.
"""

from __future__ import annotations

import itertools
import os

import numpy as np
import pytest

from cvdfilter.figures import figure
from cvdfilter.figures.layout import layout_problems, series_styles, text_items

FULL = os.environ.get("CVDFILTER_FULL_LAYOUT") == "1"
OBSERVERS = ["normal", "deuteranope", "protanomalous:shift=16"]
_CENTERS = np.linspace(470, 640, 12)


def _names(n: int, length: str) -> list[str]:
    if length == "short":
        return [f"LB-{k + 1}" for k in range(n)]
    # invented names, as long as a user's lens file column headers can be
    return [f"Larkhill Optics Bench prototype LB-{k + 1} with an extra-long descriptive lens name (invented)"
            for k in range(n)]


_SETS: dict = {}


def _filterset(n: int, length: str):
    key = (n, length)
    if key not in _SETS:
        from cvdfilter.spectra.filters import FilterSet, load_filters

        specs = [f"notch:center={c:.0f},fwhm={22 + 3 * (k % 4)},depth={0.55 + 0.03 * (k % 5):.2f}"
                 for k, c in enumerate(_CENTERS[:n] if n > 1 else [575])]
        fs = load_filters(specs)
        _SETS[key] = FilterSet(tuple(_names(n, length)), fs.transmittance, fs.grid, fs.sources, fs.info)
    return _SETS[key]


_CARDS: dict = {}


def _card(n: int, length: str) -> dict:
    key = (n, length)
    if key not in _CARDS:
        from cvdfilter.scorecard import score

        _CARDS[key] = score(_filterset(n, length), observers=OBSERVERS, surfaces="chart24",
                            metrics="core").to_dict()
    return _CARDS[key]


_SWEEPS = {1: "notch:center=575,fwhm=30,depth=0.8",
           4: "notch:center=540..600/20,fwhm=30,depth=0.8",
           12: "notch:center=540..600/20,fwhm=20..40/10,depth=0.8"}   # 4 x 3: the two-parameter heat map


def _sweep_card(n: int) -> dict:
    key = ("sweep", n)
    if key not in _CARDS:
        from cvdfilter.scorecard import score

        _CARDS[key] = score(_SWEEPS[n], observers=OBSERVERS, surfaces="chart24", metrics="core").to_dict()
    return _CARDS[key]


#: kind -> filter counts it takes
_COUNTS = {"spectrum": (1, 4, 12), "chromaticity": (1, 4), "gains": (1, 4), "hues": (1, 4),
           "swatches": (1,), "images": (1,), "sweep": (4, 12), "population": (1, 4)}
POPULATIONS = ["deuteranomalous:n=40,seed=3", "normal:age=20..70,n=40,seed=3"]


def _population_card(n: int, length: str) -> dict:
    key = ("population", n, length)
    if key not in _CARDS:
        from cvdfilter.scorecard import score

        _CARDS[key] = score(_filterset(n, length), observers=POPULATIONS, surfaces="chart24", metrics="core",
                            members=True).to_dict()
    return _CARDS[key]


def _small_image():
    # Open data shipped with scikit-image (NASA astronaut photograph), reduced to 64 x 64.
    import skimage.data

    return np.ascontiguousarray(skimage.data.astronaut()[::8, ::8])


def _make(kind: str, n: int, length: str, width: str):
    if kind == "sweep":
        return figure("sweep", _SWEEPS[n], observers=OBSERVERS, surfaces="chart24", width=width,
                      card=_sweep_card(n))
    fs = _filterset(n, length)
    if kind == "spectrum":
        return figure("spectrum", fs, observers=["normal", "protanomalous:shift=16"], width=width)
    if kind == "chromaticity":
        return figure("chromaticity", fs, observers="deuteranope", surfaces="ces99", illuminant="FL2",
                      width=width)
    if kind == "gains":
        return figure("gains", fs, observers=OBSERVERS, surfaces="chart24", width=width, card=_card(n, length))
    if kind == "hues":
        return figure("hues", fs, width=width)
    if kind == "swatches":
        return figure("swatches", fs, observers="deuteranope", surfaces="chart24", width=width)
    if kind == "images":
        return figure("images", fs, observers="protanomalous:shift=16", width=width,
                      image=None if (length, width) == ("long", "double") else _small_image())
    if kind == "population":
        return figure("population", fs, observers=POPULATIONS, surfaces="chart24", width=width,
                      card=_population_card(n, length))
    raise AssertionError(kind)


def _cases():
    cases = []
    for kind, counts in _COUNTS.items():
        lengths = ("short",) if kind == "sweep" else ("short", "long")
        full = list(itertools.product(counts, lengths, ("single", "double")))
        # covering subset: every count, every name length and both widths at least once per kind
        cover = {(c, lengths[k % len(lengths)], ("single", "double")[k % 2]) for k, c in enumerate(counts)}
        cover |= {(counts[-1], lengths[-1], "single"), (counts[0], lengths[-1], "double")}
        for case in full:
            marks = [] if (FULL or case in cover) else [pytest.mark.skip(reason="full matrix: CVDFILTER_FULL_LAYOUT=1")]
            cases.append(pytest.param(kind, *case, id=f"{kind}-{case[0]}-{case[1]}-{case[2]}", marks=marks))
    return cases


@pytest.mark.parametrize("kind,n,length,width", _cases())
def test_layout_matrix(kind, n, length, width):
    r = _make(kind, n, length, width)
    fig = r.figure
    try:
        assert fig.get_figwidth() * 25.4 == pytest.approx({"single": 89.0, "double": 183.0}[width])
        problems = layout_problems(fig)
        assert not problems, "\n".join(problems)
        # every series in a style of its own (colour, line style, marker, fill or hatch), per panel
        by_axes: dict = {}
        for k, label, key in series_styles(fig):
            by_axes.setdefault(k, {}).setdefault(key, set()).add(label)
        for k, styles in by_axes.items():
            shared = {key: labels for key, labels in styles.items() if len(labels) > 1}
            assert not shared, f"series drawn alike in panel {k}: {shared}"
        # long filter names are shown whole somewhere (wrapped, not cut) when the kind names filters
        if length == "long" and kind in ("spectrum", "chromaticity", "hues", "swatches", "images"):
            text = " ".join(" ".join(it["text"].split()) for it in text_items(fig))
            assert "extra-long descriptive lens name (invented)" in text.replace("\u2026", "")
    finally:
        r.close()


def test_layout_checker_finds_what_it_should():
    # The checks themselves: a text past the edge, two overlapping texts and a 5 pt text are all reported.
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(2, 1), dpi=72)
    FigureCanvasAgg(fig)
    fig.text(0.9, 0.5, "runs past the right edge", fontsize=7)
    fig.text(0.1, 0.2, "one", fontsize=7)
    fig.text(0.1, 0.2, "two", fontsize=7)
    fig.text(0.1, 0.8, "tiny", fontsize=5)
    fig.text(0.5, 0.8, "R$_{cs}$", fontsize=7)          # subscript drawn at 0.7 x 7 = 4.9 pt
    problems = layout_problems(fig)
    assert any("outside" in p and "right edge" in p for p in problems)
    assert any("overlap" in p and "'one'" in p and "'two'" in p for p in problems)
    assert any("'tiny'" in p and "< 6" in p for p in problems)
    assert any("R$_{cs}$" in p and "4.90 pt" in p for p in problems)

"""Populations in figures, reports and tables: what is drawn is read back from the artists (gids).

Outside check: the 2.5-97.5 % interval drawn equals ``numpy.percentile`` of the members' own values
(linear interpolation, numpy's default), taken from the scorecard's per-member arrays, not from the figure.
"""

from __future__ import annotations

import numpy as np
import pytest

from cvdfilter.errors import InputError
from cvdfilter.figures import figure
from cvdfilter.figures.population import share_percent
from cvdfilter.scorecard import score

POP = "deuteranomalous:n=40,seed=3"
FILTERS = ["larkhill-notch-575", "larkhill-rose-tint"]


@pytest.fixture(scope="module")
def scored():
    return score(FILTERS, observers=[POP, "normal"], surfaces="chart24", metrics="core", members=True)


def _gid(fig, gid):
    found = fig.findobj(lambda a: a.get_gid() == gid)
    assert found, gid
    return found[0]


def _segments_x(coll) -> np.ndarray:
    # a NaN end (a fixed observer: no interval) leaves an empty segment: no line drawn
    return np.array([[seg[0][0], seg[1][0]] if len(seg) == 2 else [np.nan, np.nan] for seg in coll.get_segments()])


def test_population_figure_interval_is_numpy_percentiles(scored):
    card = scored.to_dict()
    r = figure("population", FILTERS, observers=[POP], card=card)
    try:
        rg = np.asarray(scored.per_observer[0]["red_green_gain"], dtype=float)   # (filters, members)
        for i in range(len(FILTERS)):
            # outside check: numpy's percentiles of the members' values (numpy.percentile, linear)
            lo, med, hi = np.percentile(rg[i], [2.5, 50.0, 97.5])
            seg = _segments_x(_gid(r.figure, f"interval-{i}-0"))[0]
            assert seg == pytest.approx([lo, hi], rel=1e-5)
            assert _gid(r.figure, f"median-{i}-0").get_xdata()[0] == pytest.approx(med, rel=1e-5)
            assert _gid(r.figure, f"violin-{i}-0") is not None
            h = card["filters"][i]["observers"][0]["helped"]["red_green_gain"]
            text = _gid(r.figure, f"helped-{i}-0").get_text()
            assert f"{share_percent(h['share'])} %" in text and f"{100 * h['ci_low']:.0f}" in text
            # the figure's percentiles agree with the scorecard's own statistics
            s = card["filters"][i]["observers"][0]["red_green_gain"]
            assert [s["p2_5"], s["p50"], s["p97_5"]] == pytest.approx([lo, med, hi], rel=1e-4)
        assert r.data["populations"] == [card["observers"][0]["observer"]]   # the normal observer is left out
    finally:
        r.close()


def test_population_figure_net_pairs_metric(scored):
    card = scored.to_dict()
    r = figure("population", FILTERS, observers=[POP], card=card, metrics=["confusion_pairs.net"])
    try:
        o = scored.per_observer[0]
        net = np.asarray(o["confusion_resolved"], float) - np.asarray(o["confusion_created"], float)
        assert r.data["p50"][:, 0] == pytest.approx(np.percentile(net, 50.0, axis=1))
        assert _gid(r.figure, "reference").get_xdata()[0] == 0.0
    finally:
        r.close()


def test_population_figure_refuses_what_it_cannot_draw(scored):
    with pytest.raises(InputError, match="population observer"):
        figure("population", FILTERS, observers=["normal"], surfaces="chart24")
    with pytest.raises(InputError, match="not drawn by the population figure"):
        figure("population", FILTERS, card=scored.to_dict(), metrics=["white_shift"])
    no_members = score(FILTERS, observers=[POP], surfaces="chart24", metrics="core").to_dict()
    with pytest.raises(InputError, match="per-member"):
        figure("population", FILTERS, card=no_members)


def test_gains_figure_draws_population_spread(scored):
    card = scored.to_dict()
    r = figure("gains", FILTERS, card=card)
    try:
        rg = np.asarray(scored.per_observer[0]["red_green_gain"], dtype=float)
        for i in range(len(FILTERS)):
            seg = _segments_x(_gid(r.figure, f"spread-red_green_gain-{i}"))
            # row 0 is the population (outside check: numpy.percentile); row 1, the fixed observer, has none
            assert seg[0] == pytest.approx(np.percentile(rg[i], [2.5, 97.5]), rel=1e-5)
            assert np.all(np.isnan(seg[1]))
            marker = _gid(r.figure, f"gain-red_green_gain-{i}").get_xdata()
            assert marker[0] == pytest.approx(np.median(rg[i]), rel=1e-5)
            assert marker[1] == pytest.approx(card["filters"][i]["observers"][1]["red_green_gain"])
        gained = np.asarray(scored.per_observer[0]["discriminable_gained"], float)
        seg = _segments_x(_gid(r.figure, "pairs-gained-spread-0"))[0]
        assert seg == pytest.approx(np.percentile(gained[0], [2.5, 97.5]))
        labels = [t.get_text() for t in r.figure.axes[0].get_yticklabels()]
        assert labels[0] == "deuteranomalous\n(6 nm apart), n=40"
    finally:
        r.close()


@pytest.mark.parametrize("kind", ["spectrum", "hues", "chromaticity"])
def test_other_kinds_refuse_populations_in_one_line(kind):
    with pytest.raises(InputError) as exc:
        figure(kind, ["larkhill-notch-575"], observers=[POP])
    assert "population" in str(exc.value) and "\n" not in str(exc.value)


def test_population_figure_cli(tmp_path):
    from typer.testing import CliRunner

    from cvdfilter.cli.app import app

    out = tmp_path / "pop.png"
    res = CliRunner().invoke(app, ["figure", "population", "larkhill-notch-575", "--observer", POP,
                                   "--surfaces", "chart24", "--metric", "blue_yellow_gain", "-o", str(out),
                                   "--data", str(tmp_path / "pop.csv")])
    assert res.exit_code == 0, res.output
    assert out.read_bytes().startswith(b"\x89PNG")
    text = (tmp_path / "pop.csv").read_text()
    assert "blue_yellow_gain" in text and "deuteranomalous:separation=6,n=40" in text and "ci_high" in text
    res = CliRunner().invoke(app, ["figure", "hues", "larkhill-notch-575", "--observer", POP, "-o",
                                   str(tmp_path / "h.png")])
    assert res.exit_code == 2 and "takes single observers" in res.output


def test_score_table_short_labels_with_legend():
    from cvdfilter.observers.labels import label_legend, table_labels

    sc = score(["larkhill-notch-575"], observers=[POP, "normal", "protanomalous:shift=16"], surfaces="chart24",
               metrics="core")
    spec = sc.to_dict()["observers"][0]["observer"]
    text = sc.to_table(width=100)
    # the observer column shows the short label, unbroken, and the legend maps it to the full spec
    assert "deuteranomalous (6 nm apart), n=40 = " + spec in " ".join(text.split())
    assert "protanomalous (shift 16 nm) = protanomalous:shift=16" in " ".join(text.split())
    assert table_labels([spec, "normal"]) == ["deuteranomalous (6 nm apart), n=40", "normal"]
    assert table_labels(["deuteranomalous:n=40,seed=3", "deuteranomalous:n=40,seed=4"])[1].endswith("#2")
    assert label_legend(["normal"]) == ""
    # JSON and CSV keep the full spec verbatim
    assert spec in sc.to_json() and spec in sc.to_csv()


def test_report_population_section(tmp_path):
    from cvdfilter.reporting import report

    r = report(["larkhill-notch-575"], observers=["normal", POP], surfaces="chart24", metrics="core")
    md, files = r.to_markdown()
    html = r.to_html()
    spec = r.card["observers"][1]["observer"]
    assert "### Observer populations" in md and 'id="populations"' in html
    assert "Populations: deuteranomalous (6 nm apart), n=40 = " + spec in md
    o = r.card["filters"][0]["observers"][1]
    s, h = o["red_green_gain"], o["helped"]["red_green_gain"]
    row = next(line for line in md.splitlines() if "| red-green gain |" in line)
    assert f"{s['p50']:.3f}" in row and f"{s['p2_5']:.3f} to {s['p97_5']:.3f}" in row
    assert f"{100 * h['share']:.0f} % ({100 * h['ci_low']:.0f}-{100 * h['ci_high']:.0f} %)" in row
    assert "not that of measured people" in md and "not clinical evidence" in md
    assert [f.kind for f in r.figures].count("population") == 1
    assert any(name.endswith("-population.svg") for name in files)
    assert "members" not in o     # the per-member values feed the figure, not the report's JSON


def test_share_percent_never_rounds_to_all_or_none():
    assert [share_percent(x) for x in (0.0, 0.004, 0.5, 0.995, 1.0)] == ["0", "<1", "50", ">99", "100"]

"""The ``tasks`` figure: it draws what cvdfilter.tasks computed, and its text stays inside and legible."""

from __future__ import annotations

import numpy as np
import pytest

from cvdfilter import figure
from cvdfilter.figures.tasks import VERDICT_STYLE
from cvdfilter.vision_tasks import tasks


@pytest.fixture(scope="module")
def result_and_figure():
    res = tasks(["larkhill-notch-575", "larkhill-grey-reference"], observers=["normal", "deuteranope"], trials=40)
    return res, figure("tasks", ["larkhill-notch-575", "larkhill-grey-reference"], result=res)


def _artist(fig, gid):
    found = fig.findobj(lambda a: a.get_gid() == gid)
    assert found, gid
    return found[0]


def test_cells_are_the_verdicts(result_and_figure):
    res, r = result_and_figure
    records = {(x["filter"], x["observer"], x["task"]): x["verdict"] for x in res.results()}
    for k, (obs, task) in enumerate(r.data["rows"]):
        for j, name in enumerate(res.filters):
            patch = _artist(r.figure, f"verdict-{k}-{j}")
            colour = VERDICT_STYLE[records[(name, obs, task)]][0]
            assert np.allclose(patch.get_facecolor()[:3], tuple(int(colour[i:i + 2], 16) / 255 for i in (1, 3, 5)))
    # the neutral reference changes nothing: every cell of its grid says so
    assert all(row[1] == "no change" for row in r.data["verdicts"])


def test_path_and_ellipse_are_the_result(result_and_figure):
    res, r = result_and_figure
    uv = res.cap_uv("arrangement")
    line = _artist(r.figure, "path-without")
    np.testing.assert_allclose(np.c_[line.get_xdata(), line.get_ydata()], uv[r.data["order_without"]])
    s = res.scores[("arrangement", "deuteranope")]
    assert r.data["ellipse_without"][0] == pytest.approx(float(np.median(s["r_major"][0])))
    e = _artist(r.figure, "ellipse-without")
    pts = np.c_[e.get_xdata(), e.get_ydata()] - uv.mean(axis=0)
    assert np.linalg.norm(pts, axis=1).max() == pytest.approx(r.data["ellipse_without"][0], rel=1e-3)


@pytest.mark.parametrize("width", ["single", "double"])
def test_text_inside_and_not_too_small(width):
    res = tasks(["larkhill-notch-575"], observers=["normal", "deuteranomalous", "deuteranope"], trials=20)
    r = figure("tasks", ["larkhill-notch-575"], width=width, result=res)
    fig = r.figure
    renderer = fig.canvas.get_renderer()
    box = fig.bbox
    for t in fig.findobj(lambda a: hasattr(a, "get_text") and hasattr(a, "get_fontsize")):
        if not t.get_text().strip() or not t.get_visible():
            continue
        assert t.get_fontsize() >= 6.0, t.get_text()
        bb = t.get_window_extent(renderer)
        assert bb.x0 >= box.x0 - 1 and bb.x1 <= box.x1 + 1 and bb.y0 >= box.y0 - 1 and bb.y1 <= box.y1 + 1, \
            t.get_text()

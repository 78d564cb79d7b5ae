"""Tasks on observer populations: each member's own verdict, the shares of members easier / harder / no
change with Wilson intervals, the spread of the score changes, and the views that show them."""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest

from cvdfilter.metrics.population_stats import STATISTICS
from cvdfilter.observers.observer import observer
from cvdfilter.vision_tasks import ObserverMembers, tasks
from cvdfilter.vision_tasks.plates import PLATE_NAMES
from cvdfilter.vision_tasks.members import VERDICT_CODES, member_changes, member_values, member_verdicts
from cvdfilter.vision_tasks.result import ROBUSTNESS_FACTORS

FILTERS = ["larkhill-notch-575", "larkhill-rose-tint", "nd:t=0.5", "longpass:edge=560,width=15"]
ALL_TASKS = ["arrangement", "plates", "rayleigh"]


@pytest.fixture(scope="module")
def population_run():
    return tasks(FILTERS, observers=["deuteranomalous:n=12,seed=3", "protanomalous:n=9,seed=5,variation=asano2016"],
                 tasks=ALL_TASKS, trials=30, seed=2)


@pytest.mark.parametrize("kind", ["deuteranomalous", "protanope", "normal"])
def test_zero_variation_gives_every_member_the_fixed_observers_verdict(kind):
    # Internal consistency check (no outside reference): with variation=none every member is the fixed
    # observer (the population model's invariant), so each member's own verdict, applied to its own trials,
    # plates and match, must be the fixed observer's verdict on every task and filter, and so must the
    # verdicts at half and twice the margin; the spread of the score changes collapses onto its value.
    pop = f"{kind}:n=4,variation=none,seed=1" + (",separation_sd=0" if kind == "deuteranomalous" else "")
    res = tasks(FILTERS, observers=[pop, kind], tasks=ALL_TASKS, trials=30, seed=4)
    name = next(o for o in res.observers if "n=4" in o)
    fixed = {(r["filter"], r["task"]): r for r in res.results() if r["observer"] != name}
    for r in (r for r in res.results() if r["observer"] == name):
        ref = fixed[(r["filter"], r["task"])]
        word = ref["verdict"].replace(" ", "_")
        assert r["members"][word]["share"] == 1.0, (r["filter"], r["task"], r["members"])
        assert r["members"][word]["count"] == r["members"][word]["n"] == 4
        assert r["members_basis"]["borderline"]["share"] == (0.0 if ref["basis"]["robust"] else 1.0)
        f = FILTERS.index(r["filter"])
        for k in ROBUSTNESS_FACTORS:
            at = r["members_basis"]["shares_at_margin_factors"][f"{k:g}x"]
            word_k = res._verdict_at(r["task"], res.observers[1], f, k)[0]
            assert at == {w: float(w == word_k) for w in ("easier", "harder")}
        if r["task"] == "arrangement":
            tes = r["member_spread"]["tes_change"]
            assert tes["p50"] == pytest.approx(ref["with"]["tes"] - ref["without"]["tes"], abs=1e-12)
            assert tes["sd"] == pytest.approx(0.0, abs=1e-12)
            assert r["member_spread"]["effect"]["mean"] == pytest.approx(ref["basis"]["effect"], abs=1e-12)
        elif r["task"] == "plates":
            for plate, change in ref["basis"]["legibility_change"].items():
                assert r["member_spread"][f"legibility_change.{plate}"]["p50"] == pytest.approx(change, abs=1e-12)
    # member by member, at every margin factor, against the fixed observer's own verdict function
    for (task, obs), s in res.scores.items():
        if obs != name:
            continue
        codes = member_verdicts(task, s, (1.0, *ROBUSTNESS_FACTORS))
        for f in range(len(FILTERS)):
            for j, k in enumerate((1.0, *ROBUSTNESS_FACTORS)):
                want = VERDICT_CODES[res._verdict_at(task, res.observers[1], f, k)[0]]
                assert np.all(codes[j, f] == want)


def test_one_member_verdicts_are_the_observers_verdicts():
    # Internal consistency: for one observer (one member) the per-member criteria are the verdict's criteria.
    res = tasks(FILTERS, observers=["deuteranomalous", "protanope"], tasks=ALL_TASKS, trials=40, seed=1)
    for r in res.results():
        codes = member_verdicts(r["task"], res.scores[(r["task"], r["observer"])])[0]
        assert codes[FILTERS.index(r["filter"]), 0] == VERDICT_CODES[r["verdict"]]
        assert "members" not in r and "population" not in r  # one observer: no population keys


def test_per_member_verdicts_are_each_members_own(population_run):
    # The vectorised verdicts equal the criteria applied to each member's scores one at a time.
    for (task, _), s in population_run.scores.items():
        codes = member_verdicts(task, s)[0]
        n_members = codes.shape[1]
        for m in range(n_members):
            one = {k: np.asarray(v)[:, m:m + 1] for k, v in s.items() if k != "match"}
            np.testing.assert_array_equal(member_verdicts(task, one)[0][:, 0], codes[:, m])


def test_population_records_carry_shares_intervals_and_spread(population_run):
    from scipy.stats import binomtest

    res = population_run
    recs = res.results()
    assert len(recs) == len(FILTERS) * 2 * len(ALL_TASKS)
    for r in recs:
        pop = r["population"]
        assert set(pop) == {"n", "variation", "seed"} and pop["variation"] == "asano2016"
        assert pop["n"] in (12, 9) and pop["seed"] in (3, 5)
        assert r["verdict_scope"].startswith("pooled")
        assert set(r["members"]) == {"easier", "harder", "no_change"}
        for h in (*r["members"].values(), r["members_basis"]["borderline"]):
            assert {"share", "ci_low", "ci_high", "n"} <= set(h)
            assert 0.0 <= h["ci_low"] <= h["share"] <= h["ci_high"] <= 1.0
            assert h["n"] == pop["n"] and h["share"] == h["count"] / h["n"]
            # Reference library: scipy.stats.binomtest(k, n).proportion_ci(method="wilson") (Wilson 1927).
            ci = binomtest(h["count"], h["n"]).proportion_ci(confidence_level=0.95, method="wilson")
            assert h["ci_low"] == pytest.approx(ci.low, abs=1e-12)
            assert h["ci_high"] == pytest.approx(ci.high, abs=1e-12)
        total = sum(h["count"] for h in r["members"].values())
        assert total == pop["n"]  # every member has exactly one verdict
        want = {"arrangement": {"tes_change", "effect"}, "rayleigh": {"range_log_odds_change"},
                "plates": {f"legibility_change.{p}" for p in PLATE_NAMES}}[r["task"]]
        assert set(r["member_spread"]) == want
        for v in r["member_spread"].values():
            assert set(v) == {*STATISTICS, "n"}
            if v["n"]:
                assert v["p2_5"] <= v["p50"] <= v["p97_5"] and v["sd"] >= 0


def test_a_neutral_filter_changes_nothing_for_any_member(population_run):
    # A neutral-density filter leaves every ratio of catches, so every member's verdict is "no change"
    # (the invariant of the receptor-noise model, Vorobyev & Osorio 1998).
    for r in population_run.results():
        if r["filter"] == "nd:t=0.5":
            assert r["members"]["no_change"]["share"] == 1.0
            for v in r["member_spread"].values():
                if v["n"]:
                    assert abs(v["mean"]) < 1e-9 and abs(v["p97_5"]) < 1e-9


def test_json_is_reproducible_and_fixed_records_are_unchanged(population_run):
    again = tasks(FILTERS, observers=["deuteranomalous:n=12,seed=3", "protanomalous:n=9,seed=5,variation=asano2016"],
                  tasks=ALL_TASKS, trials=30, seed=2)
    assert again.to_json() == population_run.to_json()
    doc = json.loads(population_run.to_json())
    assert doc["caveat"] and doc["cautions"]
    # a mixed run: the fixed observer's record is the one of a run without the population
    mixed = tasks(FILTERS[:1], observers=["deuteranomalous:n=3,seed=1", "deuteranomalous"], tasks=ALL_TASKS,
                  trials=20).results()
    alone = tasks(FILTERS[:1], observers=["deuteranomalous"], tasks=ALL_TASKS, trials=20).results()
    assert [r for r in mixed if "members" not in r] == alone


def test_member_changes_and_values_have_one_value_per_filter_and_member(population_run):
    for (task, obs), s in population_run.scores.items():
        n = population_run.populations[obs]["n"]
        for v in member_changes(task, s).values():
            assert v.shape == (len(FILTERS), n)
        key = {"arrangement": "tes", "plates": "read", "rayleigh": "range_log_odds"}[task]
        assert member_values(task, key, s).shape == (len(FILTERS), n)


def test_a_stack_of_members_is_reported_as_a_population():
    o = observer("deuteranomalous")
    members = ObserverMembers("deutan-pair", np.stack([o.fundamentals, o.fundamentals]), None)
    res = tasks(FILTERS[:1], observers=[members], tasks=["rayleigh"], trials=5)
    r = res.results()[0]
    assert r["population"] == {"n": 2, "variation": None, "seed": None}
    assert r["members"][r["verdict"].replace(" ", "_")]["share"] == 1.0


def test_views_show_the_share_of_members(population_run):
    head, rows = population_run.rows()
    assert head[-1].startswith("members easier / harder")
    assert all("(pooled)" in row[5] and " % (" in row[6] for row in rows)
    table = population_run.to_table()
    assert "Wilson 95 % interval" in table and "Tasks of our own design" in table and "not clinical" in table
    md = population_run.to_markdown()
    assert "members easier / harder" in md and "pooled" in md
    summary = population_run.summaries()["larkhill-notch-575"]
    assert "% of members" in summary
    import csv
    import io

    lines = list(csv.reader(io.StringIO(population_run.to_csv())))
    assert lines[0] == ["filter", "observer", "task", "verdict", "state", "score", "value", "caveat"]
    states = {row[4] for row in lines[1:]}
    assert states == {"without", "with", "members", "member_spread"}
    scores = {row[5] for row in lines[1:] if row[4] == "members"}
    assert {"easier.share", "easier.ci_low", "easier.ci_high", "harder.share", "no_change.share",
            "borderline.share", "at_0.5x_margin.easier", "at_2x_margin.harder"} <= scores
    assert {row[5] for row in lines[1:] if row[4] == "member_spread" and row[2] == "arrangement"} == {
        f"{k}.{s}" for k in ("tes_change", "effect") for s in (*STATISTICS, "n")}
    assert all(row[7] for row in lines[1:])  # the caveat on every row


def test_the_command_reports_populations_as_json():
    r = subprocess.run([sys.executable, "-m", "cvdfilter", "tasks", "larkhill-notch-575", "--observer",
                        "deuteranomalous:n=5,seed=1", "--task", "arrangement", "--trials", "20", "--format", "json"],
                       capture_output=True, text=True, timeout=300)
    assert r.returncode == 0, r.stderr
    doc = json.loads(r.stdout)
    rec = doc["results"][0]
    assert rec["population"] == {"n": 5, "variation": "asano2016", "seed": 1}
    assert set(rec["members"]) == {"easier", "harder", "no_change"}
    assert "not a clinical test" in doc["cautions"][0] and doc["caveat"]


def test_tasks_figure_shows_each_populations_share_of_members():
    # The figure's cells for a population carry the shares of members easier / harder that the tasks
    # result reports (internal consistency: one computation, two views); single observers have none.
    from cvdfilter.figures import figure
    from cvdfilter.vision_tasks import tasks

    kw = dict(observers=["deuteranomalous:n=6,seed=2", "protanope"], tasks=["arrangement", "plates"], trials=5,
              seed=1)
    res = tasks(["larkhill-notch-575"], **kw)
    fig = figure("tasks", ["larkhill-notch-575"], observers=kw["observers"], result=res)
    shares = fig.data["member_shares"]
    records = {(r["observer"], r["task"]): r for r in res.results()}
    for (obs, task), row in zip(fig.data["rows"], shares):
        rec = records[(obs, task)]
        if "members" in rec:
            assert row[0] == (rec["members"]["easier"]["share"], rec["members"]["harder"]["share"])
        else:
            assert row[0] is None

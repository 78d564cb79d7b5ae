"""Design objectives from the tasks and the literature metric, and resumable design (issue 16)."""

from __future__ import annotations

import json

import pytest

import cvdfilter
from cvdfilter.designing.checkpoint import CHECKPOINT_NAME
from cvdfilter.errors import InputError

FAST = dict(references=[], metrics="photometry")


# --- task scores as objectives --------------------------------------------------------------------------

def test_a_task_score_objective_is_the_tasks_commands_number_for_the_design():
    r = cvdfilter.design("deuteranomalous", minimise="tasks.arrangement.tes",
                         require="tasks.arrangement.effect>=0", family="notch:k=1", budget=30, seed=3, top=3,
                         task_trials=4, **FAST)
    assert r.inputs["task_trials"] == 4 and r.inputs["task_seed"] == 3
    specs = [d["spec"] for d in r.designs]
    # the same numbers as `cvdfilter tasks --trials 4 --seed 3` writes for those filters (its JSON view)
    t = cvdfilter.tasks(specs, observers=["deuteranomalous"], tasks=["arrangement"], trials=4, seed=3)
    for d, rec in zip(r.designs, t.results()):
        assert d["objectives"]["tasks.arrangement.tes"] == pytest.approx(rec["with"]["tes"], abs=1e-6)
        assert d["requirements"]["tasks.arrangement.effect>=0"] == pytest.approx(rec["basis"]["effect"], abs=1e-6)
        assert rec["basis"]["effect"] >= 0
    tes = [d["objectives"]["tasks.arrangement.tes"] for d in r.designs]
    assert tes == sorted(tes)
    again = cvdfilter.design("deuteranomalous", minimise="tasks.arrangement.tes",
                             require="tasks.arrangement.effect>=0", family="notch:k=1", budget=30, seed=3, top=3,
                             task_trials=4, **FAST)
    assert again.to_json() == r.to_json()  # a fixed trial seed: the objective is deterministic


def test_task_metrics_are_checked_before_any_search():
    with pytest.raises(InputError, match="unknown scorecard key"):
        cvdfilter.design("deuteranomalous", maximise="tasks.arrangement.nope", budget=20, **FAST)
    with pytest.raises(InputError, match="population"):
        cvdfilter.design("deuteranomalous:n=4,seed=1", maximise="tasks.arrangement.tes", budget=20, **FAST)
    with pytest.raises(InputError, match="share of a population"):
        cvdfilter.design("deuteranomalous:n=4,seed=1", maximise="tasks.arrangement.easier", budget=20, **FAST)
    with pytest.raises(InputError, match="task trials"):
        cvdfilter.design("deuteranomalous", maximise="tasks.plates.read", budget=20, task_trials=0, **FAST)


# --- task scores of a population --------------------------------------------------------------------------

@pytest.mark.parametrize("text, words", [
    ("share:tasks.arrangement.easier[deuteranomalous]", "applies to a population"),
    ("share:tasks.arrangement.tes", "share: takes"),
    ("tasks.plates.harder", "share of a population"),
    ("tasks.rayleigh.range", "say which statistic"),
])
def test_population_task_metrics_are_checked(text, words):
    from cvdfilter.designing.objectives import parse_metric

    with pytest.raises(InputError, match=words):
        parse_metric(text, "deuteranomalous:n=5,seed=1")


@pytest.mark.parametrize("text", ["share:tasks.arrangement.easier", "share:tasks.rayleigh.harder",
                                  "mean:tasks.arrangement.tes", "p2_5:tasks.arrangement.effect",
                                  "p50:tasks.plates.read", "sd:tasks.plates.legibility.filter-only"])
def test_population_task_metrics_parse_as_task_metrics(text):
    from cvdfilter.designing.objectives import groups_needed, parse_metric

    m = parse_metric(text, "deuteranomalous:n=5,seed=1")
    assert m.group == "tasks" and m.text == text
    assert groups_needed([m]) == ["photometry"]


def test_a_design_maximises_the_share_of_members_for_whom_a_task_gets_easier():
    pop = "deuteranomalous:n=5,seed=1"
    r = cvdfilter.design(pop, maximise=["share:tasks.arrangement.easier", "p2_5:tasks.arrangement.effect"],
                         require="luminous_transmittance>=0.3", family="notch:k=1", budget=24, seed=2, top=2,
                         task_trials=8, **FAST)
    specs = [d["spec"] for d in r.designs]
    assert specs
    # the same numbers as `cvdfilter tasks --trials 8 --seed 2` gives each design for that population
    t = cvdfilter.tasks(specs, observers=[pop], tasks=["arrangement"], trials=8, seed=2)
    for d, rec in zip(r.designs, t.results()):
        o = d["scorecard"]["observers"][0]
        share = d["objectives"]["share:tasks.arrangement.easier"]
        assert share == pytest.approx(rec["members"]["easier"]["share"], abs=1e-6)
        assert o["helped"]["tasks.arrangement.easier"]["share"] == share
        h = o["helped"]["tasks.arrangement.easier"]
        assert h["n"] == 5 and 0 <= h["ci_low"] <= share <= h["ci_high"] <= 1
        p2_5 = d["objectives"]["p2_5:tasks.arrangement.effect"]
        assert p2_5 == pytest.approx(rec["member_spread"]["effect"]["p2_5"], abs=1e-6)
        assert o["tasks"]["arrangement"]["effect"]["p2_5"] == p2_5
    doc = json.loads(r.to_json())
    assert doc["caveat"]
    head = r.csv_text().splitlines()[0]
    assert f"share:tasks.arrangement.easier[{r.designs[0]['scorecard']['observers'][0]['observer']}]" in head
    assert "p2_5:tasks.arrangement.effect[" in head


# --- the literature metric --------------------------------------------------------------------------------

def test_discernible_colours_ratio_as_objective_matches_the_standalone_count():
    r = cvdfilter.design("deuteranomalous", maximise="discernible_colours.ratio", family="notch:k=1",
                         surfaces="munsell", budget=16, seed=2, top=2, **FAST)
    assert "discernible" in r.inputs["metric_groups_searched"]
    for d in r.designs:
        assert "discernible_colours" in d["scorecard"]["observers"][0]
        # the literature count (Linhares, Pinto & Nascimento 2008) as cvdfilter.discernible_colours gives it
        alone = cvdfilter.discernible_colours("munsell", filter=d["spec"], observers=["deuteranomalous"])
        assert d["objectives"]["discernible_colours.ratio"] == pytest.approx(float(alone.ratio[0, 0]), abs=1e-6)


# --- resumable design ---------------------------------------------------------------------------------------

class _Interrupt:
    def __init__(self, after: int) -> None:
        self.after = after

    def __call__(self, done: int, total: int) -> None:
        if done >= self.after:
            raise KeyboardInterrupt


@pytest.mark.parametrize("objectives", [dict(maximise="red_green_gain"),
                                        dict(maximise=["red_green_gain", "luminous_transmittance"])])
def test_an_interrupted_design_resumed_gives_the_uninterrupted_result(tmp_path, objectives):
    kw = dict(objectives, require="luminous_transmittance>=0.4", family="notch:k=1", budget=120, seed=5, top=4,
              **FAST)
    whole = cvdfilter.design("deuteranomalous", checkpoint=tmp_path / "a" / CHECKPOINT_NAME, **kw)
    ckpt = tmp_path / "b" / CHECKPOINT_NAME
    cut = cvdfilter.design("deuteranomalous", checkpoint=ckpt, progress=_Interrupt(50), **kw)
    assert cut.run["stopped"] == "interrupted" and cut.run["evaluations"] < whole.run["evaluations"]
    resumed = cvdfilter.design("deuteranomalous", checkpoint=ckpt, resume=True, **kw)
    assert json.dumps(resumed.designs, default=list) == json.dumps(whole.designs, default=list)
    assert resumed.run["evaluations"] == whole.run["evaluations"]
    rec = resumed.run["resumed"]
    assert rec["from"] == str(ckpt) and rec["stopped_then"] == "interrupted"
    assert rec["evaluations_in_checkpoint"] == cut.run["evaluations"]
    # every candidate of the checkpoint is asked for again (NSGA-II may ask for a repeated candidate twice)
    assert rec["evaluations_reused"] >= cut.run["evaluations"]
    assert whole.to_dict()["search"]["resumed"] is None
    assert json.loads(resumed.to_json())["search"]["resumed"]["sha256"]


def test_resume_refuses_a_missing_or_foreign_checkpoint(tmp_path):
    ckpt = tmp_path / CHECKPOINT_NAME
    with pytest.raises(InputError, match="no checkpoint"):
        cvdfilter.design("deuteranomalous", maximise="red_green_gain", budget=20, checkpoint=ckpt, resume=True,
                         **FAST)
    cvdfilter.design("deuteranomalous", maximise="red_green_gain", budget=20, seed=1, checkpoint=ckpt, **FAST)
    with pytest.raises(InputError, match="differs in seed"):
        cvdfilter.design("deuteranomalous", maximise="red_green_gain", budget=20, seed=2, checkpoint=ckpt,
                         resume=True, **FAST)
    ckpt.write_text("not a checkpoint")
    with pytest.raises(InputError, match="not a design checkpoint"):
        cvdfilter.design("deuteranomalous", maximise="red_green_gain", budget=20, seed=1, checkpoint=ckpt,
                         resume=True, **FAST)


def test_the_command_resumes_from_its_output_folder(tmp_path):
    import subprocess
    import sys

    args = [sys.executable, "-m", "cvdfilter", "design", "--observer", "deuteranomalous", "--maximise",
            "red_green_gain", "--budget", "30", "--seed", "1", "--top", "2", "--no-references", "--metrics",
            "photometry", "-o", str(tmp_path)]
    first = subprocess.run(args, capture_output=True, text=True, timeout=600)
    assert first.returncode == 0, first.stderr
    assert (tmp_path / CHECKPOINT_NAME).is_file()
    again = subprocess.run([*args, "--resume"], capture_output=True, text=True, timeout=600)
    assert again.returncode == 0, again.stderr
    doc = json.loads((tmp_path / "designs.json").read_text())
    assert doc["search"]["resumed"]["stopped_then"] == doc["search"]["stopped"]
    assert "--resume" not in doc["inputs"]["command"]  # the command reproduces the result without it
    other = [("2" if a == "1" and args[i - 1] == "--seed" else a) for i, a in enumerate(args)]
    wrong = subprocess.run([*other, "--resume"], capture_output=True, text=True, timeout=600)
    assert wrong.returncode == 2 and "differs in seed" in wrong.stderr and "Traceback" not in wrong.stderr


@pytest.mark.parametrize("metric, group", [("share:discernible_colours.ratio", "discernible"),
                                           ("share:confusion_pairs_net", "confusion"),
                                           ("share:discriminable_pairs_net", "discrimination"),
                                           ("mean:discernible_colours.ratio", "discernible"),
                                           ("share:red_green_gain", "contrast")])
def test_population_metrics_ask_the_scorer_for_their_group(metric, group):
    from cvdfilter.designing.objectives import groups_needed, parse_metric

    assert groups_needed([parse_metric(metric, "deuteranomalous:n=4,seed=1")]) == [group]


def test_a_robust_discernible_design_has_numbers():
    r = cvdfilter.design("deuteranomalous:n=3,seed=1", maximise="share:discernible_colours.ratio",
                         surfaces="munsell", budget=12, seed=1, top=1, **FAST)
    assert r.designs[0]["objectives"]["share:discernible_ratio"] is not None

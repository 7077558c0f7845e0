"""Revising the hypothesis set (case/revision.py through the Case's edits).

The scenario (a conveyor stoppage at a parcel depot) and its numbers are
invented test data.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

import beliefledger as bl
from beliefledger.errors import CaseError, CaseTypeError


def depot() -> bl.Case:
    case = bl.Case("Conveyor stoppage", hypotheses={
        "belt slip": {"prior": 0.45, "source": "depot log (invented)"},
        "motor overload": {"prior": 0.35, "source": "depot log (invented)"},
        "other cause": {"prior": 0.20, "source": "judgement (invented)"}})
    case.add_evidence("thermal tag", states=["tripped", "clear"],
                      likelihoods={"belt slip": [0.1, 0.9], "motor overload": [0.8, 0.2],
                                   "other cause": [0.3, 0.7]},
                      observed="tripped", source="relay sheet (invented)")
    case.add_evidence("belt marks", states=["glazed", "normal"],
                      likelihoods={"belt slip": [0.7, 0.3], "motor overload": [0.2, 0.8],
                                   "other cause": [0.4, 0.6]},
                      observed="normal", source="inspection (invented)")
    case.add_scenario("fleet rates", {"belt slip": 0.3, "motor overload": 0.5,
                                      "other cause": 0.2}, source="fleet data (invented)")
    return case


NEW_COLS = {"thermal tag": [0.6, 0.4], "belt marks": [0.5, 0.5]}


def test_a_new_cause_carved_out_of_the_catch_all_leaves_the_others_alone():
    case = depot()
    case.add_hypothesis("jammed parcel", 0.05, likelihoods=NEW_COLS,
                        take_prior_from="other cause", source="new lead (invented)")
    assert case.base_priors.to_dict() == pytest.approx(
        {"belt slip": 0.45, "motor overload": 0.35, "other cause": 0.15, "jammed parcel": 0.05})
    assert case.scenario_priors("fleet rates").to_dict() == pytest.approx(
        {"belt slip": 0.3, "motor overload": 0.5, "other cause": 0.15, "jammed parcel": 0.05})
    carved = [a for a in case.assumptions if a["kind"] == "carve-prior"]
    assert [a["target"] for a in carved] == ["base", "fleet rates"]
    assert "carved out of 'other cause' (0.2 -> 0.15)" in carved[0]["detail"]
    assert not [a for a in case.assumptions if a["kind"] == "rescale-priors"]
    np.testing.assert_allclose(case.evidence["thermal tag"].likelihoods["jammed parcel"],
                               [0.6, 0.4])


def test_a_share_of_the_donor_in_every_scenario():
    case = depot()
    case.add_scenario("thin catch-all", {"belt slip": 0.5, "motor overload": 0.4,
                                         "other cause": 0.1}, source="invented")
    case.add_hypothesis("jammed parcel", share=0.25, likelihoods=NEW_COLS,
                        take_prior_from="other cause")
    for sc, donor in (("base", 0.2), ("fleet rates", 0.2), ("thin catch-all", 0.1)):
        pri = case.scenario_priors(sc)
        assert pri["jammed parcel"] == pytest.approx(0.25 * donor)
        assert pri["other cause"] == pytest.approx(0.75 * donor)
        assert pri.sum() == pytest.approx(1)


def test_rescaling_everything_is_an_explicit_recorded_choice():
    case = depot()
    before = case.to_dict()
    with pytest.raises(CaseError, match="take_prior_from='other cause'.*rescale=True") as exc:
        case.add_hypothesis("jammed parcel", 0.1, likelihoods=NEW_COLS)
    assert "0.9" in str(exc.value)
    assert case.to_dict() == before
    case.add_hypothesis("jammed parcel", 0.1, likelihoods=NEW_COLS, rescale=True)
    assert case.base_priors.to_dict() == pytest.approx(
        {"belt slip": 0.405, "motor overload": 0.315, "other cause": 0.18, "jammed parcel": 0.1})
    kinds = [(a["kind"], a["target"]) for a in case.assumptions]
    assert ("rescale-priors", "base") in kinds and ("rescale-priors", "fleet rates") in kinds
    # a prior of 0 takes nothing from anyone
    case.add_hypothesis("sabotage", 0.0, likelihoods=NEW_COLS)
    assert case.base_priors["sabotage"] == 0.0


@pytest.mark.parametrize("kwargs, match", [
    ({"prior": 0.3, "take_prior_from": "other cause"}, "cannot carve a prior of 0.3.*is 0.2"),
    ({"prior": 0.1, "take_prior_from": "other cause", "scenario_priors": {"fleet rates": 0.25}},
     "in scenario 'fleet rates' is 0.2"),
    ({"prior": 0.1, "take_prior_from": "ghost"}, "no hypothesis named 'ghost'"),
    ({"prior": 0.1, "take_prior_from": "other cause", "share": 0.5}, "exactly one of prior="),
    ({"share": 0.5}, "name the donor with take_prior_from"),
    ({"prior": 0.1, "take_prior_from": "other cause", "rescale": True}, "not both"),
    ({"share": 1.5, "take_prior_from": "other cause"}, "outside"),
    ({"prior": None}, "give the prior of new hypothesis"),
    ({"prior": 0.1, "rescale": True, "scenario_priors": {"ghost": 0.1}}, "unknown scenario"),
])
def test_bad_carves_are_refused_and_change_nothing(kwargs, match):
    case = depot()
    before = case.to_dict()
    with pytest.raises(CaseError, match=match):
        case.add_hypothesis("jammed parcel", likelihoods=NEW_COLS, **kwargs)
    assert case.to_dict() == before


def test_equal_scenarios_stay_equal_and_data_scenarios_go_stale():
    case = depot()
    case.add_scenario("flat", meaning="equal", source="no reason to prefer any (invented)")
    est = bl.prior_from_counts({"belt slip": 12, "motor overload": 7, "other cause": 3},
                               data="depot incidents 2019-2025 (invented)")
    est.add_scenario(case, "depot history")
    assert case.scenarios["depot history"].meaning == "data"
    led = case.update()
    assert "scenario-stale" not in {f.code for f in led.flags}
    case.add_hypothesis("jammed parcel", 0.05, likelihoods=NEW_COLS,
                        take_prior_from="other cause")
    assert case.scenario_priors("flat").tolist() == pytest.approx([0.25] * 4)
    assert any(a["kind"] == "scenario-kept-equal" and a["target"] == "flat"
               for a in case.assumptions)
    flags = [f for f in case.update().flags if f.code == "scenario-stale"]
    assert [f.where for f in flags] == ["scenario 'depot history'"]
    assert "'jammed parcel' added" in flags[0].message
    case.remove_hypothesis("jammed parcel")
    assert case.scenario_priors("flat").tolist() == pytest.approx([1 / 3] * 3)
    assert "scenario-stale" not in {f.code for f in case.update().flags}
    # the meanings survive a save; a hand-edited equal scenario that is not equal is flagged
    data = json.loads(bl.casefile.dumps(case))
    back = bl.casefile.loads(json.dumps(data))
    assert back.scenarios["flat"].meaning == "equal"
    assert back.scenarios["depot history"].basis == ("belt slip", "motor overload",
                                                     "other cause")
    flat = next(s for s in data["case"]["scenarios"] if s["name"] == "flat")
    flat["priors"] = {"belt slip": 0.5, "motor overload": 0.3, "other cause": 0.2}
    stale = bl.casefile.loads(json.dumps(data)).update().flags
    assert any(f.code == "scenario-stale" and "declared equal priors" in f.message
               for f in stale)
    # a stated scenario without a meaning writes no new keys (older readers take it)
    fleet = next(s for s in data["case"]["scenarios"] if s["name"] == "fleet rates")
    assert set(fleet) == {"name", "priors", "source", "note"}


def test_scenario_meanings_are_checked():
    case = depot()
    with pytest.raises(CaseError, match="declared equal priors but its priors differ"):
        case.add_scenario("flat", {"belt slip": 0.5, "motor overload": 0.3, "other cause": 0.2},
                          meaning="equal")
    with pytest.raises(CaseError, match="name the data set"):
        case.add_scenario("history", {"belt slip": 0.5, "motor overload": 0.3,
                                      "other cause": 0.2}, meaning="data")
    with pytest.raises(CaseError, match="needs its priors"):
        case.add_scenario("history", meaning="data", source="x")
    with pytest.raises(CaseError, match="is not one of"):
        case.add_scenario("history", meaning="vibes")


def test_split_gives_each_part_its_share_in_every_scenario():
    case = depot()
    case.split_hypothesis("motor overload", into={"motor overload": 0.6, "drive jam": 0.4},
                          likelihoods={"drive jam": {"thermal tag": [0.9, 0.1],
                                                     "belt marks": [0.3, 0.7]}},
                          note="the drive can jam without overloading the motor (invented)")
    assert case.hypothesis_names == ["belt slip", "motor overload", "drive jam", "other cause"]
    assert case.base_priors.to_dict() == pytest.approx(
        {"belt slip": 0.45, "motor overload": 0.21, "drive jam": 0.14, "other cause": 0.2})
    assert case.scenario_priors("fleet rates")["drive jam"] == pytest.approx(0.2)
    np.testing.assert_allclose(case.evidence["thermal tag"].likelihoods["motor overload"],
                               [0.8, 0.2])
    np.testing.assert_allclose(case.evidence["thermal tag"].likelihoods["drive jam"], [0.9, 0.1])
    rec = case.assumptions[-1]
    assert rec["kind"] == "split-hypothesis" and rec["target"] == "motor overload"
    assert "'drive jam' (0.4 of it: prior 0.14)" in rec["detail"]
    assert "can jam" in rec["detail"]


@given(shares=st.lists(st.floats(0.05, 1), min_size=2, max_size=4))
def test_a_split_that_inherits_the_likelihoods_changes_no_other_posterior(shares):
    total = sum(shares)
    into = {f"part {i}": s / total for i, s in enumerate(shares)}
    into[next(iter(into))] += 1 - sum(into.values())  # exact sum
    case = depot()
    before = case.update().posterior
    case.split_hypothesis("belt slip", into=into)
    after = case.update().posterior
    # the parts' posteriors add up to the old one's; the others are as they were
    assert after[list(into)].sum() == pytest.approx(before["belt slip"], rel=1e-12)
    for h in ("motor overload", "other cause"):
        assert after[h] == pytest.approx(before[h], rel=1e-12)


def test_split_keeps_groups_and_loss_rows_and_refuses_bad_input():
    case = depot()
    bl.set_loss_table(case, {"retension belt": {"belt slip": 0, "motor overload": 5,
                                                "other cause": 3},
                             "swap motor": {"belt slip": 4, "motor overload": 0,
                                            "other cause": 3}}, kind="loss")
    case.group_hypotheses("mechanical", ["belt slip", "motor overload"])
    before = case.to_dict()
    for into, match in (({"a": 0.5, "b": 0.4}, "sum to 0.9, not 1"),
                        ({"belt slip": 0.5, "other cause": 0.5}, "that name is taken"),
                        ({}, "must map each new hypothesis"),
                        ({"a": -0.5, "b": 1.5}, "outside")):
        with pytest.raises((CaseError, CaseTypeError), match=match):
            case.split_hypothesis("belt slip", into=into)
        assert case.to_dict() == before
    with pytest.raises(CaseError, match="not among its parts"):
        case.split_hypothesis("belt slip", into={"a": 0.5, "b": 0.5},
                              likelihoods={"c": NEW_COLS})
    case.split_hypothesis("belt slip", into={"worn belt": 0.7, "wet belt": 0.3})
    assert case.hypothesis_groups["mechanical"] == ("motor overload", "worn belt", "wet belt")
    table = bl.loss_table(case)
    assert table.loc["swap motor", "wet belt"] == 4 and "belt slip" not in table.columns
    assert bl.casefile.dumps(bl.casefile.loads(bl.casefile.dumps(case))) == \
        bl.casefile.dumps(case)


def test_remove_can_give_the_prior_to_one_hypothesis():
    case = depot()
    case.remove_hypothesis("motor overload", give_prior_to="other cause")
    assert case.base_priors.to_dict() == pytest.approx({"belt slip": 0.45, "other cause": 0.55})
    assert case.scenario_priors("fleet rates").to_dict() == pytest.approx(
        {"belt slip": 0.3, "other cause": 0.7})
    assert case.assumptions[-1]["kind"] == "give-prior"
    with pytest.raises(CaseError, match="itself"):
        case.remove_hypothesis("belt slip", give_prior_to="belt slip")


def test_the_workbench_editor_carves_new_causes_out_of_the_catch_all(demo_case):
    pytest.importorskip("ipywidgets")
    bl.set_loss_table(demo_case, None)
    ed = bl.HypothesisEditor(demo_case)
    catch = next(h for h in demo_case.hypotheses.values() if h.catch_all)
    others = {n: h.prior for n, h in demo_case.hypotheses.items() if n != catch.name}
    ed.add("refrigerant pipe fatigue", 0.01)
    for n, p in others.items():
        assert demo_case.base_priors[n] == pytest.approx(p)
    assert f"taken from '{catch.name}'" in ed.status.message

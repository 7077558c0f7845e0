"""Each flag fires when it should, says what a reviewer needs, and stays quiet otherwise."""

from __future__ import annotations

import pytest

import beliefledger as bl
from beliefledger.flags import Flag


def codes(case):
    return [f.code for f in case.update().flags]


def sourced_case(**kw):
    case = bl.Case("c", {"A": {"prior": 0.5, "source": "log"},
                         "B": {"prior": 0.3, "source": "log"},
                         "Other": {"prior": 0.2, "source": "judgement"}}, **kw)
    return case


def test_demo_case_has_only_the_shared_source_warning(demo_case):
    ledger = demo_case.update()
    assert [(f.code, f.severity) for f in ledger.flags] == [("shared-source", "warning")]
    msg = ledger.flags[0].message
    assert "'detector alarm order'" in msg and "'night operator's account'" in msg
    assert "decibans" in msg


def test_zero_prior_message_names_cromwell():
    case = sourced_case()
    case.set_priors({"A": 0.0, "B": 0.8, "Other": 0.2})
    (f,) = [f for f in case.update().flags if f.code == "zero-prior"]
    assert f.severity == "warning"
    assert "can never gain belief" in f.message and "Cromwell" in f.message
    assert f.where == "hypothesis 'A'"


def test_column_sum_after_a_cell_edit():
    case = sourced_case()
    case.add_evidence("E", states=["x", "y"], source="bench",
                      likelihoods={"A": [0.5, 0.5], "B": [0.5, 0.5], "Other": [0.5, 0.5]},
                      observed="x")
    case.set_likelihood("E", "B", 0.7, state="x")
    (f,) = [f for f in case.update().flags if f.code == "column-sum"]
    assert f.severity == "error" and "'E'" in f.message and "'B'" in f.message
    assert "1.2" in f.message


def test_no_catch_all_is_info_and_silenced_by_exhaustive():
    case = bl.Case("c", {"A": {"prior": 0.5, "source": "x"}, "B": {"prior": 0.5, "source": "x"}})
    (f,) = [f for f in case.update().flags if f.code == "no-catch-all"]
    assert f.severity == "info"
    case.set_details(exhaustive=True)
    assert "no-catch-all" not in codes(case)


def test_near_certain_prior():
    case = bl.Case("c", {"A": 1e-8, "Other": 1 - 1e-8})
    found = [f for f in case.update().flags if f.code == "near-certain"]
    assert {f.where for f in found} == {"hypothesis 'A'", "hypothesis 'Other'"}


def test_unsourced_numbers_are_listed():
    case = bl.Case("c", {"A": 0.5, "Other": 0.5})
    case.add_evidence("E", states=["x", "y"], likelihoods={"A": [0.9, 0.1], "Other": [0.5, 0.5]},
                      observed="x")
    msgs = [f.message for f in case.update().flags if f.code == "unsourced"]
    assert any("prior(s) of 'A', 'Other'" in m for m in msgs)
    assert any("evidence 'E'" in m for m in msgs)


def test_dominant_evidence():
    case = sourced_case()
    case.add_evidence("weak", states=["x", "y"], source="s",
                      likelihoods={"A": [0.55, 0.45], "B": [0.5, 0.5], "Other": [0.5, 0.5]},
                      observed="x")
    case.add_evidence("strong", states=["x", "y"], source="s",
                      likelihoods={"A": [0.99, 0.01], "B": [0.05, 0.95], "Other": [0.1, 0.9]},
                      observed="x")
    (f,) = [f for f in case.update().flags if f.code == "dominant-evidence"]
    assert "'strong'" in f.message and "%" in f.message
    # it says its threshold, since near that share it can come and go between scenarios
    assert "raised above 50%" in f.message


def test_shared_source_needs_two_observed_items():
    case = sourced_case()
    for name in ("alarm A", "alarm B"):
        case.add_evidence(name, states=["on", "off"], source="s", shared_source="bus 3",
                          likelihoods={"A": [0.9, 0.1], "B": [0.4, 0.6], "Other": [0.5, 0.5]})
    case.observe("alarm A", "on")
    assert "shared-source" not in codes(case)
    case.observe("alarm B", "on")
    (f,) = [f for f in case.update().flags if f.code == "shared-source"]
    assert "'bus 3'" in f.message and f.where == "shared source 'bus 3'"


def test_errors_come_first_and_flags_serialise():
    case = sourced_case()
    case.set_prior("A", 0.9)
    ledger = case.update()
    assert ledger.flags[0].severity == "error"
    frame = ledger.flags_frame()
    assert list(frame.columns) == ["code", "severity", "message", "where"]
    assert str(ledger.flags[0]).startswith("[error] prior-sum:")


def test_flag_rejects_unknown_severity():
    with pytest.raises(ValueError, match="severity 'fatal'"):
        Flag("x", "fatal", "m")


def test_all_zero_priors_give_an_error_not_nan():
    case = sourced_case()
    for h in case.hypothesis_names:
        case.set_prior(h, 0.0)
    ledger = case.update()
    assert not ledger.posterior.isna().any()
    assert ledger.flags[0].code == "prior-sum" and "All priors" in ledger.flags[0].message


def test_an_uncertainty_range_without_a_source_is_flagged(small_case):
    for e in ("E1", "E2"):
        small_case.set_likelihood(e, "H1", [0.9, 0.1] if e == "E1" else [0.3, 0.7],
                                  source="invented test data")
    small_case.set_hypothesis("H1", source="invented")
    bl.set_likelihood_uncertainty(small_case, "E1", "H1", low=0.8, high=0.95)
    flags = [f for f in small_case.update().flags if f.code == "unsourced"]
    assert any(f.where == "likelihood uncertainty" and "'E1' under 'H1'" in f.message
               for f in flags)
    bl.set_likelihood_uncertainty(small_case, "E1", "H1", low=0.8, high=0.95,
                                  source="vendor spread, invented")
    assert not any(f.where == "likelihood uncertainty" for f in small_case.update().flags)


# --------------------------------------------------------------------------- issue-16 flags


def test_order_sensitive_fires_and_stays_quiet():
    from test_uncertain import flip_case, kiln

    flags = {f.code: f for f in flip_case().update().flags}
    f = flags["order-sensitive"]
    assert f.severity == "warning" and f.where == "evidence 'report'"
    assert "do not commute" in f.message and "likelihood weights" in f.message
    quiet = kiln()
    quiet.observe("flame colour", probability={"blue": 0.1, "yellow": 0.8, "orange": 0.1})
    assert "order-sensitive" not in {f.code for f in quiet.update().flags}


def test_scenario_stale_fires_and_stays_quiet():
    from test_revision import NEW_COLS, depot

    case = depot()
    case.add_scenario("history", {"belt slip": 0.5, "motor overload": 0.3, "other cause": 0.2},
                      meaning="data", source="depot incidents (invented)")
    assert "scenario-stale" not in {f.code for f in case.update().flags}
    case.add_hypothesis("jammed parcel", 0.05, likelihoods=NEW_COLS,
                        take_prior_from="other cause")
    (f,) = [f for f in case.update().flags if f.code == "scenario-stale"]
    assert f.severity == "warning" and f.where == "scenario 'history'"
    assert "depot incidents (invented)" in f.message and "Refit it" in f.message
    case.use_scenario("history")
    assert [f.where for f in case.update().flags if f.code == "scenario-stale"] == \
        ["scenario 'history'"]


def test_an_unsourced_uncertain_observation_is_flagged():
    from test_uncertain import kiln

    case = kiln()
    case.observe("flame colour", likelihood={"blue": 0.2, "yellow": 0.7, "orange": 0.1})
    f = next(f for f in case.update().flags if f.code == "unsourced"
             and "uncertain observation" in f.message)
    assert f.where == "evidence 'flame colour'" and "who gave the report" in f.message
    case.observe("flame colour", likelihood={"blue": 0.2, "yellow": 0.7, "orange": 0.1},
                 source="the operator (invented)")
    assert not any("uncertain observation" in f.message for f in case.update().flags)

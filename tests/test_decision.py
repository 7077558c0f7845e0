"""Decisions under the posterior: loss and payoff tables, expected losses, Bayes actions,
thresholds and the per-scenario summary; storage of the table and bad input.

Numbers are invented and worked by hand in the comments.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

import beliefledger as bl
from beliefledger import decision, value
from beliefledger.casefile import dumps, loads
from beliefledger.errors import CaseError, CaseFileError, CaseTypeError
from helpers.decisions import LOSS3, prospect_case, three_cause_case


def test_three_action_thresholds_by_hand():
    case = bl.Case("gas", hypotheses={"leak": 0.2, "no leak": 0.8}, exhaustive=True)
    loss = pd.DataFrame({"leak": [1.0, 10.0, 30.0], "no leak": [5.0, 1.0, 0.0]},
                        index=["shut down", "monitor", "ignore"])
    # with t = P(leak): shut 5 - 4t, monitor 1 + 9t, ignore 30t;
    # ignore = monitor at t = 1/21, monitor = shut at t = 4/13
    thr = decision.decision_threshold(case, loss, hypothesis="leak")
    assert thr["action"].tolist() == ["ignore", "monitor", "shut down"]
    assert thr["to_probability"].tolist()[:2] == pytest.approx([1 / 21, 4 / 13])
    assert thr["current"].tolist() == [False, True, False]
    assert decision.bayes_action(case, loss) == "monitor"


def test_decision_summary_covers_every_scenario():
    case = three_cause_case()
    case.observe("T", "yes")
    case.add_scenario("wide", {"A": 0.2, "B": 0.2, "C": 0.6}, source="invented")
    decision.set_loss_table(case, LOSS3, units="k$")
    s = decision.decision_summary(case)
    assert list(s.index) == ["base", "wide"]
    for sc in s.index:
        el = decision.expected_loss(case, scenario=sc)
        assert s.loc[sc, ["a1", "a2"]].tolist() == pytest.approx(el.tolist())
        assert s.loc[sc, "bayes_action"] == decision.bayes_action(case, scenario=sc)
    # wide: joint (0.04, 0.18, 0.3) / 0.52; a1 = (1.8 + 1.2) / 0.52, a2 = (0.32 + 1.2) / 0.52
    assert s.loc["wide", "a1"] == pytest.approx(3.0 / 0.52)
    assert s.loc["wide", "bayes_action"] == "a2"
    json.dumps(s.to_dict(orient="index"))  # JSON-ready for the record


# --------------------------------------------------------------------------- storage and bad input


def test_loss_table_round_trip_and_hypothesis_edits():
    case = prospect_case()
    text = dumps(case)
    assert dumps(loads(text)) == text
    case.rename_hypothesis("bad", "dry hole")
    assert decision.loss_table(case).columns.tolist() == ["good", "dry hole"]
    before = dumps(case)
    with pytest.raises(CaseError, match="needs a value for new hypothesis 'gas'"):
        case.add_hypothesis("gas", 0.1, rescale=True, likelihoods={"seismic test": [0.5, 0.5]})
    with pytest.raises(CaseError, match="no payoff given for action 'do not drill'"):
        case.add_hypothesis("gas", 0.1, rescale=True, likelihoods={"seismic test": [0.5, 0.5]},
                            extra_values={"loss_table": {"drill": 100}})
    assert dumps(case) == before
    case.add_hypothesis("gas", 0.1, rescale=True, likelihoods={"seismic test": [0.5, 0.5]},
                        extra_values={"loss_table": {"drill": 100, "do not drill": 0}})
    assert decision.loss_table(case).loc["drill", "gas"] == -100
    case.remove_hypothesis("gas")
    assert decision.loss_table(case).columns.tolist() == ["good", "dry hole"]
    assert dumps(loads(dumps(case))) == dumps(case)


def test_bad_loss_tables_are_refused_and_the_case_is_unchanged():
    case = three_cause_case()
    decision.set_loss_table(case, LOSS3, units="k$")
    before = dumps(case)
    with pytest.raises(CaseError, match=r"no value for action 'a1' under hypothesis\(es\) "
                                        r"\['C'\]"):
        decision.set_loss_table(case, LOSS3.drop(columns="C"))
    bad = LOSS3.copy()
    bad.loc["a2", "B"] = np.nan
    with pytest.raises(CaseError, match="loss of action 'a2' under hypothesis 'B' is nan"):
        decision.set_loss_table(case, bad)
    bad.loc["a2", "B"] = np.inf
    with pytest.raises(CaseError, match="is inf"):
        decision.set_loss_table(case, bad)
    with pytest.raises(CaseError, match=r"unknown hypothesis\(es\) \['D'\]"):
        decision.set_loss_table(case, LOSS3.assign(D=1.0))
    with pytest.raises(CaseError, match="has no actions"):
        decision.set_loss_table(case, {})
    with pytest.raises(CaseError, match="kind 'cost'"):
        decision.set_loss_table(case, LOSS3, kind="cost")
    with pytest.raises(CaseTypeError, match="must be a number"):
        decision.set_loss_table(case, {"a1": {"A": "zero", "B": 1, "C": 1}})
    with pytest.raises(CaseError, match="twice"):
        decision.set_loss_table(case, pd.concat([LOSS3, LOSS3.iloc[:1]]))
    assert dumps(case) == before
    with pytest.raises(CaseError, match="no value for action 'a1'"):
        value.evsi(case, "T", loss=LOSS3.drop(columns="A"))
    with pytest.raises(CaseError, match="cost of observing 'T' is -1"):
        value.rank_next_evidence(case, cost={"T": -1})
    with pytest.raises(CaseError, match=r"unknown evidence \['X'\]"):
        value.rank_next_evidence(case, cost={"X": 1})
    with pytest.raises(CaseError, match="unknown ranking criterion"):
        value.rank_next_evidence(case, by="fun")
    case.observe("T", "yes")
    with pytest.raises(CaseError, match="already observed"):
        value.evsi(case, "T")
    assert value.rank_next_evidence(case).empty


def test_missing_table_and_bad_stored_section():
    case = three_cause_case()
    with pytest.raises(CaseError, match="has no loss table; set one with"):
        decision.expected_loss(case)
    with pytest.raises(CaseError, match="needs a loss table"):
        value.rank_next_evidence(case, by="evsi")
    with pytest.raises(CaseError, match="unknown field"):
        case.set_extra("loss_table", {"table": LOSS3.T.to_dict(), "colour": "red"})
    data = json.loads(dumps(case))
    data["case"]["extras"] = {"loss_table": {"kind": "loss", "table": {"a1": {"A": 1, "B": 2}}}}
    with pytest.raises(CaseFileError, match=r"under hypothesis\(es\) \['C'\]"):
        loads(json.dumps(data))


def test_docstring_examples_run():
    import doctest

    result = doctest.testmod(decision, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert result.attempted >= 4 and result.failed == 0

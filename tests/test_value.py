"""Value of information and decisions.

Checks against the outside world: the oil-prospect example of Samuelson &
Marks (CHECKS.md item 11) and ``scipy.stats.entropy`` as the reference for
entropies. Other numbers are invented and worked by hand in the comments.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy import stats

import beliefledger as bl
from beliefledger import decision, value
from beliefledger.casefile import dumps, loads
from beliefledger.errors import CaseError, CaseFileError, CaseTypeError

PROSPECT_PAYOFF = {"drill": {"good": 600.0, "bad": -200.0},
                   "do not drill": {"good": 0.0, "bad": 0.0}}


def prospect_case() -> bl.Case:
    """Samuelson & Marks, *Managerial Economics*, chapter "The Value of Information":
    payoff +600k if the prospect is good, -200k if not, P(good) = 0.4; a test that
    is favourable with probability 0.5, with P(good | favourable) = 0.6 and
    P(good | unfavourable) = 0.2 (CHECKS.md item 11, read in the text). The
    likelihoods follow by Bayes' rule: P(fav | good) = 0.6*0.5/0.4 = 0.75 and
    P(fav | bad) = 0.4*0.5/0.6 = 1/3."""
    case = bl.Case("prospect", hypotheses={"good": 0.4, "bad": 0.6}, exhaustive=True)
    case.add_evidence("seismic test", states=["favourable", "unfavourable"],
                      likelihoods={"good": [0.75, 0.25], "bad": [1 / 3, 2 / 3]})
    decision.set_loss_table(case, PROSPECT_PAYOFF, kind="payoff", units="k$",
                         source="Samuelson & Marks, Managerial Economics")
    return case


# --------------------------------------------------------------------------- published check


def test_samuelson_marks_value_of_perfect_information():
    case = prospect_case()
    # drill: 0.4*600 - 0.6*200 = 120 (k$) against 0 for not drilling
    assert decision.bayes_action(case) == "drill"
    assert decision.expected_loss(case)["drill"] == pytest.approx(-120.0)
    # with perfect information: 0.4*600 + 0.6*0 = 240, so EVPI = 240 - 120 = 120
    assert value.evpi(case) == pytest.approx(120.0)


def test_samuelson_marks_value_of_the_imperfect_test():
    case = prospect_case()
    pre = value.preposterior(case, "seismic test")
    assert pre.loc["favourable", "probability"] == pytest.approx(0.5)
    assert pre.loc["favourable", "good"] == pytest.approx(0.6)
    assert pre.loc["unfavourable", "good"] == pytest.approx(0.2)
    # after a favourable result drilling is worth 0.6*600 - 0.4*200 = 280, after an
    # unfavourable one 0.2*600 - 0.8*200 = -40 (so do not drill, 0)
    fav, unf = case.copy(), case.copy()
    fav.observe("seismic test", "favourable")
    unf.observe("seismic test", "unfavourable")
    assert -decision.expected_loss(fav)["drill"] == pytest.approx(280.0)
    assert -decision.expected_loss(unf)["drill"] == pytest.approx(-40.0)
    assert decision.bayes_action(unf) == "do not drill"
    # best plan 0.5*280 + 0.5*0 = 140; EVSI = 140 - 120 = 20 (recomputed, CHECKS.md item 11)
    assert value.evsi(case, "seismic test") == pytest.approx(20.0)
    ranked = value.rank_next_evidence(case, cost={"seismic test": 5.0})
    assert ranked.loc["seismic test", "evsi"] == pytest.approx(20.0)
    assert ranked.loc["seismic test", "net_value"] == pytest.approx(15.0)
    assert "'do not drill'" in ranked.loc["seismic test", "reason"]


def test_samuelson_marks_break_even_probability():
    case = prospect_case()
    # drilling breaks even where 600 t - 200 (1 - t) = 0, t = 0.25
    thr = decision.decision_threshold(case, hypothesis="good")
    assert thr["action"].tolist() == ["do not drill", "drill"]
    assert thr["to_probability"].iloc[0] == pytest.approx(0.25)
    assert thr["current"].tolist() == [False, True]


def test_payoff_and_loss_tables_agree():
    case = prospect_case()
    loss = -pd.DataFrame(PROSPECT_PAYOFF).T
    assert value.evsi(case, "seismic test", loss=loss) == pytest.approx(20.0)
    assert value.evpi(case, loss=loss) == pytest.approx(120.0)
    pd.testing.assert_frame_equal(decision.loss_table(case), decision.loss_table(case, loss),
                                  check_names=False)
    summary = decision.decision_summary(case)
    assert summary.loc["base", "drill"] == pytest.approx(120.0)
    assert summary.loc["base", "measure"] == "expected payoff"
    assert summary.loc["base", "do not drill"] == 0.0 and not np.signbit(
        summary.loc["base", "do not drill"])


# --------------------------------------------------------------------------- worked by hand


def three_cause_case() -> bl.Case:
    """Invented: a pump fault with three causes and one pending test."""
    case = bl.Case("pump", hypotheses={"A": 0.5, "B": 0.3, "C": 0.2}, exhaustive=True)
    case.add_evidence("T", states=["yes", "no"],
                      likelihoods={"A": [0.2, 0.8], "B": [0.9, 0.1], "C": [0.5, 0.5]})
    return case


LOSS3 = pd.DataFrame({"A": [0.0, 8.0], "B": [10.0, 0.0], "C": [4.0, 4.0]},
                     index=["a1", "a2"])


def test_three_causes_by_hand():
    case = three_cause_case()
    # P(yes) = 0.5*0.2 + 0.3*0.9 + 0.2*0.5 = 0.1 + 0.27 + 0.1 = 0.47
    pred = value.predictive(case, "T")
    assert pred.tolist() == pytest.approx([0.47, 0.53])
    pre = value.preposterior(case, "T")
    # posterior after yes: (0.1, 0.27, 0.1) / 0.47 -> MAP B; after no: (0.4, 0.03, 0.1) / 0.53
    assert pre.loc["yes", ["A", "B", "C"]].tolist() == pytest.approx([0.1 / 0.47, 0.27 / 0.47,
                                                                      0.1 / 0.47])
    assert pre.loc["yes", "map"] == "B" and pre.loc["no", "map"] == "A"
    assert pre.loc["expected", ["A", "B", "C"]].tolist() == pytest.approx([0.5, 0.3, 0.2])
    r = value.rank_next_evidence(case, loss=LOSS3)
    # the MAP changes from A only after 'yes': probability 0.47
    assert r.loc["T", "p_map_changes"] == pytest.approx(0.47)
    # entropy reduction against scipy.stats.entropy (reference library)
    h_now = stats.entropy([0.5, 0.3, 0.2], base=2)
    h_after = (0.47 * stats.entropy([0.1, 0.27, 0.1], base=2)
               + 0.53 * stats.entropy([0.4, 0.03, 0.1], base=2))
    assert r.loc["T", "expected_entropy_reduction"] == pytest.approx(h_now - h_after, rel=1e-12)
    # losses now: a1 = 0 + 3 + 0.8 = 3.8, a2 = 4 + 0 + 0.8 = 4.8 -> a1
    # after yes (joint 0.1, 0.27, 0.1): a1 2.7 + 0.4 = 3.1, a2 0.8 + 0.4 = 1.2 -> 1.2
    # after no (joint 0.4, 0.03, 0.1): a1 0.3 + 0.4 = 0.7, a2 3.2 + 0.4 = 3.6 -> 0.7
    # EVSI = 3.8 - (1.2 + 0.7) = 1.9; EVPI = 3.8 - 0.2*4 = 3.0
    assert decision.expected_loss(case, LOSS3).tolist() == pytest.approx([3.8, 4.8])
    assert r.loc["T", "evsi"] == pytest.approx(1.9)
    assert value.evpi(case, LOSS3) == pytest.approx(3.0)


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
    decision.set_loss_table(case, LOSS3)
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


# --------------------------------------------------------------------------- properties


@st.composite
def pending_cases(draw):
    n_h = draw(st.integers(2, 5))
    n_items = draw(st.integers(1, 4))
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    hyps = [f"H{j}" for j in range(n_h)]
    pri = rng.dirichlet(np.ones(n_h))
    case = bl.Case("p", hypotheses=dict(zip(hyps, pri.tolist(), strict=True)), normalize=True,
                   exhaustive=True)
    for i in range(n_items):
        ns = int(rng.integers(2, 5))
        case.add_evidence(f"e{i}", states=[f"s{k}" for k in range(ns)],
                          likelihoods={h: rng.dirichlet(np.ones(ns) * 0.5).tolist()
                                       for h in hyps},
                          observed=None if i else "s0")
    n_a = int(rng.integers(2, 5))
    loss = pd.DataFrame(rng.normal(size=(n_a, n_h)) * 10, index=[f"a{k}" for k in range(n_a)],
                        columns=hyps)
    return case, loss


@given(pending_cases())
def test_information_and_value_bounds(data):
    case, loss = data
    r = value.rank_next_evidence(case, loss=loss)
    p = case.update().posterior.to_numpy()
    h_now = stats.entropy(p, base=2)
    e_max = value.evpi(case, loss)
    for name in r.index:
        # expected entropy after observing is never above the current entropy
        assert r.loc[name, "expected_entropy_reduction"] >= 0
        assert r.loc[name, "expected_entropy_reduction"] <= h_now + 1e-9
        # 0 <= EVSI <= EVPI
        assert 0 <= r.loc[name, "evsi"] <= e_max + 1e-9 * max(1, abs(e_max))
        # the expected posterior is the current posterior
        pre = value.preposterior(case, name)
        np.testing.assert_allclose(pre.loc["expected", case.hypothesis_names].astype(float),
                                   p, atol=1e-12)
        assert 0 <= r.loc[name, "p_map_changes"] <= 1


@given(pending_cases())
def test_vectorised_values_equal_a_plain_loop(data):
    case, loss = data
    r = value.rank_next_evidence(case, loss=loss)
    p = case.update().posterior.to_numpy()
    L = loss.to_numpy()
    now = min(L @ p)
    for name in r.index:
        tab = case.evidence[name].table
        after = 0.0
        info = stats.entropy(p, base=2)
        for k in range(tab.shape[0]):
            joint = tab[k] * p
            px = joint.sum()
            if px > 0:
                after += min(L @ joint)
                info -= px * stats.entropy(joint / px, base=2)
        assert r.loc[name, "evsi"] == pytest.approx(now - after, abs=1e-9)
        assert r.loc[name, "expected_entropy_reduction"] == pytest.approx(info, abs=1e-9)


@given(pending_cases())
def test_a_test_that_never_changes_the_decision_is_worth_nothing(data):
    case, loss = data
    # make action a0 dominate: its loss is the lowest under every hypothesis
    loss.iloc[0] = loss.min(axis=0) - 1.0
    r = value.rank_next_evidence(case, loss=loss)
    assert (r["evsi"] == 0).all()
    assert r["reason"].str.contains("worth 0|cannot move belief").all()


def test_uninformative_item_has_no_value():
    case = three_cause_case()
    case.add_evidence("coin", states=["h", "t"],
                      likelihoods={"A": [0.5, 0.5], "B": [0.5, 0.5], "C": [0.5, 0.5]})
    r = value.rank_next_evidence(case, loss=LOSS3)
    assert r.loc["coin", "expected_entropy_reduction"] == 0
    assert r.loc["coin", "evsi"] == 0 and r.loc["coin", "p_map_changes"] == 0
    assert r.index.tolist() == ["T", "coin"]
    assert r["rank"].tolist() == [1, 2]
    assert r.loc["coin", "reason"].startswith("cannot move belief")


def test_ranking_criteria_and_columns(demo_case):
    r = value.rank_next_evidence(demo_case)  # the demo case carries a loss table
    assert r.index.tolist() == ["suction pressure trend"]
    assert r.index.name == "evidence"
    for col in ("expected_entropy_reduction", "p_map_changes", "reason", "evsi"):
        assert col in r.columns
    decision.set_loss_table(demo_case, None)
    assert "evsi" not in value.rank_next_evidence(demo_case).columns
    case = three_cause_case()
    case.add_evidence("U", states=["a", "b", "c"],
                      likelihoods={"A": [0.8, 0.1, 0.1], "B": [0.1, 0.8, 0.1],
                                   "C": [0.1, 0.1, 0.8]})
    by_info = value.rank_next_evidence(case)
    assert by_info["expected_entropy_reduction"].is_monotonic_decreasing
    by_map = value.rank_next_evidence(case, by="p_map_changes")
    assert by_map["p_map_changes"].is_monotonic_decreasing
    assert value.rank_next_evidence(case, evidence="U").index.tolist() == ["U"]


# --------------------------------------------------------------------------- dependent evidence


def test_value_of_a_pending_group_member_is_conditioned_on_the_observed_one():
    case = bl.Case("valve weep", hypotheses={"weep": 0.3, "dry": 0.7}, exhaustive=True)
    case.add_evidence("dye test", states=["pos", "neg"],
                      likelihoods={"weep": [0.9, 0.1], "dry": [0.2, 0.8]}, observed="pos")
    case.add_evidence("sniffer", states=["pos", "neg"],
                      likelihoods={"weep": [0.8, 0.2], "dry": [0.3, 0.7]})
    case.add_joint_group("same sample", ["dye test", "sniffer"],
                         covariance={"weep": 0.05, "dry": 0.10})
    # P(sniffer pos | dye pos, weep) = 0.77 / 0.9; (| dry) = 0.16 / 0.2 = 0.8
    # posterior after dye pos: weep 0.27 / 0.41; P(sniffer pos | e) = (0.231 + 0.112) / 0.41
    assert value.predictive(case, "sniffer")["pos"] == pytest.approx(0.343 / 0.41)
    lik = case.predictive_likelihoods("sniffer")
    assert lik.loc["pos"].tolist() == pytest.approx([0.77 / 0.9, 0.8])


# --------------------------------------------------------------------------- storage and bad input


def test_loss_table_round_trip_and_hypothesis_edits():
    case = prospect_case()
    text = dumps(case)
    assert dumps(loads(text)) == text
    case.rename_hypothesis("bad", "dry hole")
    assert decision.loss_table(case).columns.tolist() == ["good", "dry hole"]
    before = dumps(case)
    with pytest.raises(CaseError, match="needs a value for new hypothesis 'gas'"):
        case.add_hypothesis("gas", 0.1, likelihoods={"seismic test": [0.5, 0.5]})
    with pytest.raises(CaseError, match="no payoff given for action 'do not drill'"):
        case.add_hypothesis("gas", 0.1, likelihoods={"seismic test": [0.5, 0.5]},
                            extra_values={"loss_table": {"drill": 100}})
    assert dumps(case) == before
    case.add_hypothesis("gas", 0.1, likelihoods={"seismic test": [0.5, 0.5]},
                        extra_values={"loss_table": {"drill": 100, "do not drill": 0}})
    assert decision.loss_table(case).loc["drill", "gas"] == -100
    case.remove_hypothesis("gas")
    assert decision.loss_table(case).columns.tolist() == ["good", "dry hole"]
    assert dumps(loads(dumps(case))) == dumps(case)


def test_bad_loss_tables_are_refused_and_the_case_is_unchanged():
    case = three_cause_case()
    decision.set_loss_table(case, LOSS3)
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

"""Value of information and decisions.

Checks against the outside world: the oil-prospect example of Samuelson &
Marks (CHECKS.md item 11) and ``scipy.stats.entropy`` as the reference for
entropies. Other numbers are invented and worked by hand in the comments.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy import stats

import beliefledger as bl
from beliefledger import decision, value
from helpers.decisions import LOSS3, PROSPECT_PAYOFF, prospect_case, three_cause_case

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


def _two_cause_case() -> bl.Case:
    case = bl.Case("Report value (invented)", hypotheses={"A": 0.6, "B": 0.4}, exhaustive=True)
    case.add_evidence("witness", states=["saw A", "saw B"],
                      likelihoods={"A": [1.0, 0.0], "B": [0.0, 1.0]}, source="invented")
    return case


def test_the_value_of_a_report_of_reliability_r_by_hand():
    # The item reveals the cause; a report right with probability r is a binary channel:
    # P(report A) = 0.6 r + 0.4 (1 - r). For r = 0.8: 0.56; the posterior after "A" is
    # 0.48 / 0.56, after "B" 0.12 / 0.44. The information is H(H) - E[H(H | report)].
    case = _two_cause_case()
    pred = bl.predictive(case, "witness", reliability=0.8)
    np.testing.assert_allclose(pred.to_numpy(), [0.56, 0.44], rtol=1e-12)
    pre = bl.preposterior(case, "witness", reliability=0.8)
    np.testing.assert_allclose(pre.loc["saw A", "A"], 0.48 / 0.56, rtol=1e-12)
    np.testing.assert_allclose(pre.loc["saw B", "A"], 0.12 / 0.44, rtol=1e-12)

    def h2(p):
        return -(p * np.log2(p) + (1 - p) * np.log2(1 - p))
    info = h2(0.6) - 0.56 * h2(0.48 / 0.56) - 0.44 * h2(0.12 / 0.44)
    ranked = bl.rank_next_evidence(case, reliability=0.8)
    assert ranked.loc["witness", "reliability"] == 0.8
    np.testing.assert_allclose(ranked.loc["witness", "expected_entropy_reduction"], info,
                               rtol=1e-12)
    certain = bl.rank_next_evidence(case)
    assert certain.loc["witness", "expected_entropy_reduction"] == pytest.approx(h2(0.6))
    assert "reliability" not in certain.columns
    # r = 1 is the certain observation; a report is never worth more
    one = bl.rank_next_evidence(case, reliability={"witness": 1.0})
    assert one.loc["witness", "expected_entropy_reduction"] == pytest.approx(h2(0.6))
    loss = pd.DataFrame({"A": [0, 10], "B": [10, 0]}, index=["act on A", "act on B"])
    assert bl.evsi(case, "witness", loss, reliability=0.8) <= bl.evsi(case, "witness", loss)
    # the report's value equals that of observing it in its likelihood form
    for report in ("saw A", "saw B"):
        c = case.copy()
        c.observe_report("witness", report, 0.8)
        np.testing.assert_allclose(c.update().posterior_values,
                                   pre.loc[report, ["A", "B"]].to_numpy(dtype=float),
                                   rtol=1e-12)


def test_bad_reliabilities_are_refused():
    case = _two_cause_case()
    with pytest.raises(bl.CaseError, match="outside"):
        bl.rank_next_evidence(case, reliability=1.5)
    with pytest.raises(bl.CaseError, match="above 0"):
        bl.rank_next_evidence(case, reliability=0.0)
    with pytest.raises(bl.CaseError, match="not among the pending items"):
        bl.rank_next_evidence(case, reliability={"ghost": 0.8})
    case.observe("witness", likelihood={"saw A": 0.8, "saw B": 0.2})
    with pytest.raises(bl.CaseError, match="uncertain observation"):
        bl.evsi(case, "witness", pd.DataFrame({"A": [0, 1], "B": [1, 0]}, index=["x", "y"]))

"""Dependent evidence: joint groups, conditional likelihoods, shared-source tags.

Numbers in these tests are invented (demo scenarios of our own) unless a
source is named beside the check. The reference for the dependent update is
brute-force enumeration of the full joint distribution of every item's state
under each hypothesis, written independently of the case's step machinery.
"""

from __future__ import annotations

import itertools
import json
import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

import beliefledger as bl
from beliefledger.casefile import dumps, loads
from beliefledger.errors import CaseError, CaseFileError


def two_tests(cov=None, observed=("pos", "pos")) -> bl.Case:
    """Two binary tests read off one sample (invented numbers)."""
    case = bl.Case("valve weep", hypotheses={"weep": 0.3, "dry": 0.7}, exhaustive=True)
    case.add_evidence("dye test", states=["pos", "neg"],
                      likelihoods={"weep": [0.9, 0.1], "dry": [0.2, 0.8]}, observed=observed[0])
    case.add_evidence("sniffer", states=["pos", "neg"],
                      likelihoods={"weep": [0.8, 0.2], "dry": [0.3, 0.7]}, observed=observed[1])
    if cov is not None:
        case.add_joint_group("same sample", ["dye test", "sniffer"], covariance=cov)
    return case


# --------------------------------------------------------------------------- joint groups


def test_covariance_group_worked_by_hand():
    case = two_tests(cov={"weep": 0.05, "dry": 0.10})
    # P(pos, pos | weep) = 0.9*0.8 + 0.05 = 0.77;  P(pos, pos | dry) = 0.2*0.3 + 0.10 = 0.16
    # posterior(weep) = 0.3*0.77 / (0.3*0.77 + 0.7*0.16) = 0.231 / 0.343 = 0.6734694
    tr = case.update()
    assert tr.posterior["weep"] == pytest.approx(0.231 / 0.343, rel=1e-12)
    assert tr.step_names == ["prior", "same sample"]
    assert tr.members["same sample"] == ("dye test", "sniffer")
    step = tr.to_dict()["steps"][1]  # what a record shows: one step, its members listed
    assert step["step"] == "same sample" and step["members"] == ["dye test", "sniffer"]
    # the other cells keep each test's own table as its margin:
    # P(pos, neg | weep) = 0.9*0.2 - 0.05 = 0.13; P(neg, pos | weep) = 0.1*0.8 - 0.05 = 0.03;
    # P(neg, neg | weep) = 0.1*0.2 + 0.05 = 0.07
    jt = case.joint_table("same sample")
    assert jt["weep"].tolist() == pytest.approx([0.77, 0.13, 0.03, 0.07])
    assert list(jt.index) == [("pos", "pos"), ("pos", "neg"), ("neg", "pos"), ("neg", "neg")]
    # independence would give 0.3*0.72 / (0.3*0.72 + 0.7*0.06) = 0.216 / 0.258 = 0.8372093:
    # the positive dependence lowers the combined weight, as it should
    assert two_tests().update().posterior["weep"] == pytest.approx(0.216 / 0.258, rel=1e-12)


def test_correlation_is_converted_to_covariance():
    case = two_tests()
    case.add_joint_group("same sample", ["dye test", "sniffer"], correlation=0.5)
    # cov = rho * sqrt(p1 q1 p2 q2): weep 0.5*sqrt(0.9*0.1*0.8*0.2) = 0.5*0.12 = 0.06
    cov = case.joint_groups["same sample"].covariance
    assert cov["weep"] == pytest.approx(0.06)
    assert cov["dry"] == pytest.approx(0.5 * math.sqrt(0.2 * 0.8 * 0.3 * 0.7))


@given(p1=st.floats(0.01, 0.99), p2=st.floats(0.01, 0.99), q1=st.floats(0.01, 0.99),
       q2=st.floats(0.01, 0.99), prior=st.floats(0.01, 0.99),
       obs=st.tuples(st.sampled_from(["pos", "neg"]), st.sampled_from(["pos", "neg"])))
def test_zero_covariance_equals_independent_update(p1, p2, q1, q2, prior, obs):
    def build(group):
        case = bl.Case("t", hypotheses={"A": prior, "B": 1 - prior}, exhaustive=True)
        case.add_evidence("x", states=["pos", "neg"], likelihoods={"A": [p1, 1 - p1],
                                                                   "B": [q1, 1 - q1]},
                          observed=obs[0])
        case.add_evidence("y", states=["pos", "neg"], likelihoods={"A": [p2, 1 - p2],
                                                                   "B": [q2, 1 - q2]},
                          observed=obs[1])
        if group:
            case.add_joint_group("xy", ["x", "y"], covariance=0.0)
        return case

    a = build(False).update().posterior
    b = build(True).update().posterior
    np.testing.assert_allclose(b.to_numpy(), a.to_numpy(), rtol=1e-12, atol=1e-15)


def test_infeasible_covariance_is_refused_with_its_bounds_and_case_unchanged():
    case = two_tests()
    before = dumps(case)
    # under 'weep' the bounds are [-min(0.9*0.8, 0.1*0.2), min(0.9*0.2, 0.1*0.8)] = [-0.02, 0.08]
    with pytest.raises(CaseError, match=r"under hypothesis 'weep' is outside its feasible "
                                        r"range \[-0.02, 0.08\]"):
        case.add_joint_group("same sample", ["dye test", "sniffer"], covariance=0.09)
    assert dumps(case) == before
    with pytest.raises(CaseError, match=r"\[-0.02, 0.08\]"):
        case.add_joint_group("same sample", ["dye test", "sniffer"], covariance=-0.03)
    assert dumps(case) == before


def test_edit_that_makes_a_covariance_infeasible_is_rejected():
    case = two_tests(cov={"weep": 0.07, "dry": 0.0})
    before = dumps(case)
    # new column (0.95, 0.05) for weep: upper bound min(0.95*0.2, 0.05*0.8) = 0.04 < 0.07
    with pytest.raises(CaseError, match="covariance 0.07 of joint group 'same sample'"):
        case.set_likelihood("dye test", "weep", [0.95, 0.05])
    assert dumps(case) == before


def test_joint_table_form_and_margin_check():
    case = two_tests()
    joint = {"weep": [0.77, 0.13, 0.03, 0.07], "dry": [0.16, 0.04, 0.14, 0.66]}
    case.add_joint_group("same sample", ["dye test", "sniffer"], joint=joint)
    assert case.update().posterior["weep"] == pytest.approx(0.231 / 0.343, rel=1e-12)
    case.remove_joint_group("same sample")
    before = dumps(case)
    bad = {"weep": [0.70, 0.20, 0.03, 0.07], "dry": [0.16, 0.04, 0.14, 0.66]}
    # margin of dye test 'pos' under weep: 0.70 + 0.20 = 0.9 fine; sniffer 'pos': 0.70 + 0.03
    with pytest.raises(CaseError, match=r"P\('pos' of 'sniffer' \| weep\) = 0.73, but the "
                                        r"item's own table says 0.8"):
        case.add_joint_group("same sample", ["dye test", "sniffer"], joint=bad)
    assert dumps(case) == before
    with pytest.raises(CaseError, match="sums to 1.1"):
        case.add_joint_group("g", ["dye test", "sniffer"],
                             joint={"weep": [0.87, 0.13, 0.03, 0.07], "dry": joint["dry"]})


def test_joint_table_accepts_a_frame_with_a_multiindex():
    case = two_tests()
    ref = two_tests(cov={"weep": 0.05, "dry": 0.10})
    case.add_joint_group("same sample", ["dye test", "sniffer"],
                         joint=ref.joint_table("same sample"))
    assert case.joint_groups["same sample"].kind == "table"
    np.testing.assert_allclose(case.update().posterior, ref.update().posterior, rtol=1e-12)


def test_a_joint_frame_named_after_its_items_may_list_them_in_any_order():
    """Defect: a flat list follows the group's member order, last member fastest, which
    is easy to get wrong. A frame indexed by the items' names is put in order, and a
    frame named after other things is refused saying the order."""
    ref = two_tests(cov={"weep": 0.05, "dry": 0.10})
    table = ref.joint_table("same sample")  # index levels: dye test, sniffer
    swapped = table.reorder_levels(["sniffer", "dye test"]).sort_index()
    case = two_tests()
    case.add_joint_group("same sample", ["dye test", "sniffer"], joint=swapped)
    np.testing.assert_allclose(case.joint_table("same sample").to_numpy(), table.to_numpy())
    bad = table.copy()
    bad.index = bad.index.set_names(["first", "second"])
    with pytest.raises(CaseError, match=r"name the index levels after the group's items.*"
                                        r"last item's state varying fastest"):
        two_tests().add_joint_group("same sample", ["dye test", "sniffer"], joint=bad)
    with pytest.raises(CaseError, match=r"3 values for 4 combined states; combined states are "
                                        r"tuples of the states of \['dye test', 'sniffer'\]"):
        two_tests().add_joint_group("same sample", ["dye test", "sniffer"],
                                    joint={"weep": [0.5, 0.2, 0.3], "dry": [0.25] * 4})


def test_a_covariance_at_its_bound_gives_an_exact_zero_cell():
    """Defect: at a feasible bound one joint cell is exactly 0, but rounding left about
    1e-17, so impossible evidence became merely unlikely."""
    case = two_tests(observed=("neg", "neg"))
    # under 'weep' the lower bound is -P(neg)P(neg) = -(0.1 x 0.2); typed as -0.02 it is
    # 4e-18 away from the product 0.1 * 0.2 = 0.020000000000000004 in floating point
    assert 0.1 * 0.2 - 0.02 > 0
    case.add_joint_group("same sample", ["dye test", "sniffer"],
                         covariance={"weep": -0.02, "dry": 0.0})
    cells = case.joint_table("same sample")["weep"]
    assert (cells == 0.0).sum() == 1  # exactly zero, not 1e-17
    assert cells.loc[("neg", "neg")] == 0.0  # P(neg)P(neg) = 0.02 < 0.72: that cell vanishes
    ledger = case.update()
    assert ledger.posterior["weep"] == 0.0 and "weep" in ledger.eliminated


def test_three_item_table_group_partial_observation():
    case = bl.Case("t", hypotheses={"A": 0.5, "B": 0.5}, exhaustive=True)
    for n, (a, b) in {"x": (0.6, 0.3), "y": (0.7, 0.2), "z": (0.5, 0.4)}.items():
        case.add_evidence(n, states=["t", "f"], likelihoods={"A": [a, 1 - a], "B": [b, 1 - b]})
    # joint = independent product: the group must then reproduce the plain update
    prod = {h: [float(np.prod(c)) for c in itertools.product(
        *[case.evidence[n].table[:, j] for n in "xyz"])] for j, h in enumerate("AB")}
    case.add_joint_group("xyz", ["x", "y", "z"], joint=prod)
    case.observe("y", "t")
    tr = case.update()
    # only y observed: the step is y's own table row, P(t | A) = 0.7, P(t | B) = 0.2
    assert tr.members == {"xyz": ("y",)}
    assert tr.posterior["A"] == pytest.approx(0.7 / 0.9)
    case.observe("x", "f")
    tr = case.update()
    assert tr.members == {"xyz": ("x", "y")}
    assert tr.posterior["A"] == pytest.approx(0.5 * 0.4 * 0.7 / (0.5 * 0.4 * 0.7 + 0.5 * 0.7 * 0.2))


# --------------------------------------------------------------------------- conditional likelihoods


def witness_case() -> bl.Case:
    """The second witness heard the first one's account (invented numbers)."""
    case = bl.Case("fire origin", hypotheses={"kitchen": 0.4, "wiring": 0.6}, exhaustive=True)
    case.add_evidence("first witness", states=["kitchen", "hall"],
                      likelihoods={"kitchen": [0.7, 0.3], "wiring": [0.4, 0.6]})
    case.add_conditional_evidence(
        "second witness", given="first witness", states=["kitchen", "hall"],
        likelihoods={"kitchen": {"kitchen": [0.9, 0.1], "wiring": [0.8, 0.2]},
                     "hall": {"kitchen": [0.3, 0.7], "wiring": [0.1, 0.9]}})
    return case


def test_conditional_margin_and_rows_worked_by_hand():
    case = witness_case()
    ev = case.evidence["second witness"]
    # margin P(second = kitchen | kitchen) = 0.9*0.7 + 0.3*0.3 = 0.72
    # margin P(second = kitchen | wiring)  = 0.8*0.4 + 0.1*0.6 = 0.38
    assert ev.table[0].tolist() == pytest.approx([0.72, 0.38])
    assert ev.given == "first witness" and ev.is_conditional
    cl = ev.conditional_likelihoods
    assert cl.loc[("hall", "hall"), "wiring"] == pytest.approx(0.9)
    case.observe("first witness", "kitchen")
    case.observe("second witness", "kitchen")
    tr = case.update()
    # P(k, k | kitchen) = 0.7*0.9 = 0.63, P(k, k | wiring) = 0.4*0.8 = 0.32
    # posterior(kitchen) = 0.4*0.63 / (0.4*0.63 + 0.6*0.32) = 0.252 / 0.444
    assert tr.posterior["kitchen"] == pytest.approx(0.252 / 0.444, rel=1e-12)
    assert tr.log_likelihoods.loc["second witness"].tolist() == pytest.approx(
        [math.log(0.9), math.log(0.8)])


def test_conditional_with_parent_unobserved_sums_the_parent_out():
    case = witness_case()
    case.observe("second witness", "kitchen")
    tr = case.update()
    # P(second = kitchen | H) is the margin: 0.72 and 0.38
    assert tr.posterior["kitchen"] == pytest.approx(0.4 * 0.72 / (0.4 * 0.72 + 0.6 * 0.38))


def test_parent_edit_refreshes_the_child_margin():
    case = witness_case()
    case.set_likelihood("first witness", "kitchen", [0.5, 0.5])
    # 0.9*0.5 + 0.3*0.5 = 0.6
    assert case.evidence["second witness"].table[0, 0] == pytest.approx(0.6)
    with pytest.raises(CaseError, match="set_conditional_likelihoods"):
        case.set_likelihood("second witness", "kitchen", [0.5, 0.5])
    case.set_conditional_likelihoods(
        "second witness", {"kitchen": {"kitchen": [0.5, 0.5], "wiring": [0.5, 0.5]},
                           "hall": {"kitchen": [0.5, 0.5], "wiring": [0.5, 0.5]}})
    assert case.evidence["second witness"].table.tolist() == [[0.5, 0.5], [0.5, 0.5]]


def test_conditional_bad_input():
    case = witness_case()
    before = dumps(case)
    with pytest.raises(CaseError, match="no evidence named 'third witness'"):
        case.add_conditional_evidence("x", given="third witness", states=["a", "b"],
                                      likelihoods={})
    with pytest.raises(CaseError, match=r"missing state\(s\) \['hall'\]"):
        case.add_conditional_evidence("x", given="first witness", states=["a", "b"],
                                      likelihoods={"kitchen": {"kitchen": [1, 0],
                                                               "wiring": [1, 0]}})
    with pytest.raises(CaseError, match="sum to 0.9"):
        case.add_conditional_evidence(
            "x", given="first witness", states=["a", "b"],
            likelihoods={"kitchen": {"kitchen": [0.5, 0.4], "wiring": [1, 0]},
                         "hall": {"kitchen": [1, 0], "wiring": [1, 0]}})
    with pytest.raises(CaseError, match="stated given 'first witness'; remove"):
        case.remove_evidence("first witness")
    assert dumps(case) == before


def test_conditional_on_a_later_item_in_a_file_is_refused():
    data = witness_case().to_dict()
    data["evidence"] = data["evidence"][::-1]
    with pytest.raises(CaseError, match="conditional evidence 'second witness' is stated given "
                                        "'first witness', which comes after it"):
        bl.Case.from_dict(data)
    data = witness_case().to_dict()
    data["evidence"][1]["given"] = "nobody"
    with pytest.raises(CaseError, match="given 'nobody', which is not an evidence item"):
        bl.Case.from_dict(data)


def test_group_with_a_cycle_is_refused():
    case = witness_case()
    before = dumps(case)
    with pytest.raises(CaseError, match="dependency cycle: conditional evidence 'second "
                                        "witness' is stated given 'first witness' and both are "
                                        "in joint group 'accounts'"):
        case.add_joint_group("accounts", ["first witness", "second witness"],
                             joint={"kitchen": [0.25] * 4, "wiring": [0.25] * 4})
    assert dumps(case) == before
    case.add_evidence("third", states=["a", "b"], likelihoods={"kitchen": [0.5, 0.5],
                                                               "wiring": [0.5, 0.5]})
    before = dumps(case)
    with pytest.raises(CaseError, match="use one way of stating the dependence"):
        case.add_joint_group("mixed", ["first witness", "third"], covariance=0.0)
    with pytest.raises(CaseError, match="one group at most"):
        c2 = two_tests(cov=0.0)
        c2.add_joint_group("again", ["sniffer", "dye test"], covariance=0.0)
    with pytest.raises(CaseError, match="name of an evidence item"):
        case.add_joint_group("third", ["first witness", "third"], covariance=0.0)
    assert dumps(case) == before


# --------------------------------------------------------------------------- brute force reference


def _random_dependent_case(rng, n_items=5, n_h=3):
    hyps = [f"H{j}" for j in range(n_h)]
    pri = rng.dirichlet(np.ones(n_h))
    case = bl.Case("random", hypotheses=dict(zip(hyps, pri.tolist(), strict=True)),
                   normalize=True, exhaustive=True)
    for i in range(n_items):
        ns = int(rng.integers(2, 4))
        states = [f"s{k}" for k in range(ns)]
        earlier = [n for n in case.evidence_names]
        if earlier and rng.random() < 0.5:
            parent = case.evidence[earlier[int(rng.integers(len(earlier)))]]
            tabs = {ps: {h: rng.dirichlet(np.ones(ns)).tolist() for h in hyps}
                    for ps in parent.states}
            case.add_conditional_evidence(f"e{i}", given=parent.name, states=states,
                                          likelihoods=tabs)
        else:
            case.add_evidence(f"e{i}", states=states,
                              likelihoods={h: rng.dirichlet(np.ones(ns)).tolist() for h in hyps})
    # a joint group of two plain items that are not in a chain, with a random joint table
    free = [n for n in case.evidence_names if n not in case.dependence_links()]
    if len(free) >= 2:
        a, b = free[:2]
        na, nb = len(case.evidence[a].states), len(case.evidence[b].states)
        # a random dependent joint table; the two items' tables become its margins
        j = {h: rng.dirichlet(np.ones(na * nb) * 0.7).reshape(na, nb) for h in hyps}
        sa, sb = case.evidence[a].states, case.evidence[b].states
        case.set_likelihoods(a, {h: dict(zip(sa, j[h].sum(axis=1), strict=True)) for h in hyps},
                             normalize=True)
        case.set_likelihoods(b, {h: dict(zip(sb, j[h].sum(axis=0), strict=True)) for h in hyps},
                             normalize=True)
        case.add_joint_group("pair", [a, b], joint={h: j[h].reshape(-1).tolist() for h in hyps})
    return case


def _brute_force(case):
    """P(H | observed) and P(x | observed, H) for every item by enumerating all states."""
    ev = case.evidence
    names = case.evidence_names
    hyps = case.hypothesis_names
    groups = case.joint_groups
    grouped = {m: g for g in groups.values() for m in g.members}
    joint = {}
    for combo in itertools.product(*[range(len(ev[n].states)) for n in names]):
        s = dict(zip(names, combo, strict=True))
        p = np.ones(len(hyps))
        for g in groups.values():
            arr = g.joint_array(ev)
            p = p * arr[tuple(s[m] for m in g.members)]
        for n in names:
            e = ev[n]
            if n in grouped:
                continue
            if e.given is not None:
                p = p * e.conditional[s[e.given], s[n]]
            else:
                p = p * e.table[s[n]]
        joint[combo] = p
    obs = {n: ev[n].states.index(ev[n].observed) for n in names if ev[n].observed is not None}

    def match(combo, fixed):
        return all(combo[names.index(n)] == k for n, k in fixed.items())

    p_e = sum(v for c, v in joint.items() if match(c, obs))
    prior = case.priors.to_numpy()
    with np.errstate(divide="ignore", invalid="ignore"):
        post = prior * p_e / np.sum(prior * p_e)
    pred = {}
    for n in names:
        if n in obs:
            continue
        rows = []
        for k in range(len(ev[n].states)):
            rows.append(sum(v for c, v in joint.items() if match(c, {**obs, n: k})))
        with np.errstate(divide="ignore", invalid="ignore"):
            pred[n] = np.vstack(rows) / p_e
    return post, pred, p_e


@pytest.mark.parametrize("seed", range(12))
def test_dependent_update_matches_brute_force_enumeration(seed):
    rng = np.random.default_rng(seed)
    case = _random_dependent_case(rng)
    for n in case.evidence_names:
        if rng.random() < 0.6:
            case.observe(n, case.evidence[n].states[int(rng.integers(len(case.evidence[n].states)))])
    post, pred, p_e = _brute_force(case)
    tr = case.update()
    np.testing.assert_allclose(tr.posterior.to_numpy(), post, rtol=1e-9, atol=1e-12)
    # the steps multiply to P(all observed | H), averaged under the prior
    np.testing.assert_allclose(np.exp(tr.log_evidence), np.sum(case.priors.to_numpy() * p_e),
                               rtol=1e-9)
    for n, ref in pred.items():
        np.testing.assert_allclose(case.predictive_likelihoods(n).to_numpy(), ref, rtol=1e-9,
                                   atol=1e-12)
    assert dumps(loads(dumps(case))) == dumps(case)


@given(seed=st.integers(0, 2**32 - 1), frac=st.floats(0, 1), obs=st.integers(0, 7))
def test_covariance_group_matches_brute_force(seed, frac, obs):
    rng = np.random.default_rng(seed)
    hyps = ["H0", "H1", "H2"]
    case = bl.Case("cov", hypotheses=dict(zip(hyps, rng.dirichlet(np.ones(3)).tolist(),
                                              strict=True)), normalize=True, exhaustive=True)
    for n in ("a", "b", "c"):
        case.add_evidence(n, states=["t", "f"],
                          likelihoods={h: rng.dirichlet(np.ones(2)).tolist() for h in hyps})
    ta, tb = case.evidence["a"].table, case.evidence["b"].table
    lo = -np.minimum(ta[0] * tb[0], ta[1] * tb[1])
    hi = np.minimum(ta[0] * tb[1], ta[1] * tb[0])
    cov = lo + frac * (hi - lo)  # anywhere in the feasible range, edges included
    case.add_joint_group("ab", ["a", "b"], covariance=dict(zip(hyps, cov.tolist(), strict=True)))
    for k, n in enumerate(("a", "b", "c")):
        if obs >> k & 1:
            case.observe(n, "t" if rng.random() < 0.5 else "f")
    post, pred, _ = _brute_force(case)
    tr = case.update()
    if tr.stopped_at is None:
        np.testing.assert_allclose(tr.posterior.to_numpy(), post, rtol=1e-9, atol=1e-12)
    for n, ref in pred.items():
        got = case.predictive_likelihoods(n).to_numpy()
        ok = np.isfinite(ref).all(axis=0)  # columns the observed evidence does not rule out
        np.testing.assert_allclose(got[:, ok], ref[:, ok], rtol=1e-9, atol=1e-12)


def test_chain_with_an_unobserved_middle_item():
    case = witness_case()
    case.add_conditional_evidence(
        "insurer note", given="second witness", states=["kitchen", "hall"],
        likelihoods={"kitchen": {"kitchen": [0.6, 0.4], "wiring": [0.5, 0.5]},
                     "hall": {"kitchen": [0.2, 0.8], "wiring": [0.3, 0.7]}})
    case.observe("first witness", "hall")
    case.observe("insurer note", "hall")
    tr = case.update()
    # P(note = hall | first = hall, H) = sum_b P(note = hall | b, H) P(b | first = hall, H)
    # kitchen: 0.4*0.3 + 0.8*0.7 = 0.68;  wiring: 0.5*0.1 + 0.7*0.9 = 0.68
    np.testing.assert_allclose(np.exp(tr.log_likelihoods.loc["insurer note"]), [0.68, 0.68])
    # first witness: hall 0.3 vs 0.6 -> posterior kitchen = 0.4*0.3 / (0.4*0.3 + 0.6*0.6)
    assert tr.posterior["kitchen"] == pytest.approx(0.12 / 0.48)


# --------------------------------------------------------------------------- files and edits


def test_round_trip_is_exact_and_plain_files_are_unchanged():
    case = witness_case()
    case.add_evidence("dye test", states=["pos", "neg"],
                      likelihoods={"kitchen": [0.9, 0.1], "wiring": [0.2, 0.8]}, observed="pos")
    case.add_evidence("sniffer", states=["pos", "neg"],
                      likelihoods={"kitchen": [0.8, 0.2], "wiring": [0.3, 0.7]}, observed="neg")
    case.add_joint_group("same sample", ["dye test", "sniffer"],
                         covariance={"kitchen": 0.01, "wiring": -0.02}, source="bench trial",
                         note="one swab")
    text = dumps(case)
    again = loads(text)
    assert dumps(again) == text
    assert again.to_dict() == case.to_dict()
    np.testing.assert_array_equal(again.update().posterior, case.update().posterior)
    # a case without dependence writes no new keys: files of older versions read unchanged
    plain = two_tests()
    d = plain.to_dict()
    assert "groups" not in d and all("given" not in e for e in d["evidence"])
    assert dumps(loads(dumps(plain))) == dumps(plain)


def test_file_with_bad_group_is_refused():
    data = json.loads(dumps(two_tests(cov=0.01)))
    data["case"]["joint_groups"][0]["covariance"]["weep"] = 0.5
    with pytest.raises(CaseFileError, match="feasible range"):
        loads(json.dumps(data))
    data["case"]["joint_groups"][0]["members"] = ["dye test", "ghost"]
    with pytest.raises(CaseFileError, match="unknown evidence 'ghost'"):
        loads(json.dumps(data))


def test_hypothesis_edits_carry_groups_and_conditionals():
    case = witness_case()
    case.add_evidence("dye test", states=["pos", "neg"],
                      likelihoods={"kitchen": [0.9, 0.1], "wiring": [0.2, 0.8]}, observed="pos")
    case.add_evidence("sniffer", states=["pos", "neg"],
                      likelihoods={"kitchen": [0.8, 0.2], "wiring": [0.3, 0.7]}, observed="pos")
    case.add_joint_group("same sample", ["dye test", "sniffer"], covariance=0.01)
    case.rename_hypothesis("wiring", "electrical")
    assert list(case.joint_groups["same sample"].covariance.index) == ["kitchen", "electrical"]
    case.add_hypothesis("arson", 0.1, rescale=True, likelihoods={
        "first witness": [0.5, 0.5],
        "second witness": {"kitchen": [0.5, 0.5], "hall": [0.5, 0.5]},
        "dye test": [0.5, 0.5], "sniffer": [0.5, 0.5]})
    assert case.joint_groups["same sample"].covariance["arson"] == 0.0
    assert case.assumptions[-1]["kind"] == "group-independence"
    assert case.evidence["second witness"].table[:, 2].tolist() == pytest.approx([0.5, 0.5])
    case.remove_hypothesis("kitchen")
    assert case.evidence["second witness"].conditional.shape == (2, 2, 2)
    assert dumps(loads(dumps(case))) == dumps(case)
    case.rename_evidence("dye test", "dye")
    assert case.joint_groups["same sample"].members == ("dye", "sniffer")
    case.rename_evidence("first witness", "witness 1")
    assert case.evidence["second witness"].given == "witness 1"
    with pytest.raises(CaseError, match="in joint group 'same sample'; remove the group"):
        case.remove_evidence("dye")


# --------------------------------------------------------------------------- shared-source tag


def test_shared_source_flag_and_its_weight():
    case = two_tests()
    case.set_evidence("dye test", shared_source="swab 7")
    case.set_evidence("sniffer", shared_source="swab 7")
    tr = case.update()
    found = [f for f in tr.flags if f.code == "shared-source"]
    assert len(found) == 1
    w = bl.step_weights(tr)["decibans"].sum()  # both steps together
    assert f"{w:+.1f} decibans" in found[0].message
    # numbers left alone by the tag
    np.testing.assert_array_equal(tr.posterior, two_tests().update().posterior)
    # once the two items form one joint group the dependence is stated: no flag
    case.add_joint_group("same sample", ["dye test", "sniffer"], covariance=0.0)
    assert not [f for f in case.update().flags if f.code == "shared-source"]


def test_shared_source_across_a_group_and_an_item_counts_the_group_step_once():
    case = two_tests(cov=0.02)
    case.add_evidence("smell", states=["yes", "no"],
                      likelihoods={"weep": [0.6, 0.4], "dry": [0.3, 0.7]}, observed="yes")
    for n in ("dye test", "sniffer", "smell"):
        case.set_evidence(n, shared_source="same crew")
    tr = case.update()
    found = [f for f in tr.flags if f.code == "shared-source"]
    assert len(found) == 1
    w = bl.step_weights(tr)["decibans"]
    assert f"{w['same sample'] + w['smell']:+.1f} decibans" in found[0].message

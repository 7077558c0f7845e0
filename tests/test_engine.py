"""The engine against published worked examples, scipy, and its own invariants."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy.special import logsumexp

import beliefledger as bl
from beliefledger._logmath import log_normalizer
from beliefledger.case import Evidence
from beliefledger.engine import update


def coin_case(n_heads: int, prior_fair: float = 0.75) -> bl.Case:
    case = bl.Case("coin", hypotheses={"fair": prior_fair, "two-headed": 1 - prior_fair},
                   exhaustive=True)
    for k in range(n_heads):
        case.add_evidence(f"toss {k + 1}", states=["heads", "tails"],
                          likelihoods={"fair": [0.5, 0.5], "two-headed": [1.0, 0.0]},
                          observed="heads")
    return case


# --- NASA/SP-2009-569 (Dezfuli et al. 2009), section 2.2, Table 1 -------------------
# Fair vs two-headed coin, priors 0.75 / 0.25, one head: P(D) = 0.625, posterior
# 0.60 / 0.40. After five heads the fair coin is "about 10:1" against; exact
# P(fair) = 0.75/32 / (0.75/32 + 0.25) = 0.0857142857..., odds 10.67:1.


def test_nasa_coin_one_head():
    ledger = coin_case(1).update()
    assert ledger.evidence_probability.iloc[0] == pytest.approx(0.625, abs=5e-4)
    assert ledger.posterior["fair"] == pytest.approx(0.60, abs=5e-3)
    assert ledger.posterior["two-headed"] == pytest.approx(0.40, abs=5e-3)


def test_nasa_coin_five_heads_sequential():
    ledger = coin_case(5).update()
    assert list(ledger.steps.index) == ["prior"] + [f"toss {k}" for k in range(1, 6)]
    assert ledger.posterior["fair"] == pytest.approx(0.0857142857, rel=1e-9)
    odds_against = ledger.posterior["two-headed"] / ledger.posterior["fair"]
    assert odds_against == pytest.approx(10.67, abs=0.005)  # "about 10:1"
    assert ledger.map_hypothesis == "two-headed"
    # each step's predictive probability of heads: 0.625 first, rising after
    assert ledger.evidence_probability.is_monotonic_increasing


# --- Gigerenzer & Hoffrage (1995), Psychological Review 102(4): base rate 1 %, hit rate
# 80 %, false-alarm rate 9.6 % -> posterior 0.078 (exact 0.07764; 8/103 in frequencies).
# Secondary source (CHECKS.md item 2).


def test_screening_posterior():
    case = bl.Case("screen", hypotheses={"condition": 0.01, "no condition": 0.99},
                   exhaustive=True)
    case.add_evidence("test", states=["positive", "negative"],
                      likelihoods={"condition": [0.8, 0.2], "no condition": [0.096, 0.904]},
                      observed="positive")
    ledger = case.update()
    assert ledger.posterior["condition"] == pytest.approx(0.07764, abs=5e-6)
    assert ledger.posterior["condition"] == pytest.approx(8 / 103, abs=5e-4)
    assert bl.likelihood_ratio(case, "test", "condition", "no condition") == pytest.approx(
        8.33, abs=0.005)


# --- Three production lines (CHECKS.md item 3; a standard total-probability exercise
# as printed in a national secondary-school textbook, secondary): shares 0.25/0.35/0.40,
# defect rates 0.05/0.04/0.02; P(line 2 | defective) = 28/69; MAP line 2, ML line 1.


def test_three_lines_map_differs_from_ml():
    case = bl.Case("lines", hypotheses={"line 1": 0.25, "line 2": 0.35, "line 3": 0.40},
                   exhaustive=True)
    case.add_evidence("item", states=["defective", "sound"],
                      likelihoods={"line 1": [0.05, 0.95], "line 2": [0.04, 0.96],
                                   "line 3": [0.02, 0.98]},
                      observed="defective")
    ledger = case.update()
    assert ledger.posterior["line 2"] == pytest.approx(28 / 69, rel=1e-12)
    assert ledger.evidence_probability.iloc[0] == pytest.approx(0.0345, rel=1e-12)
    assert ledger.map_hypothesis == "line 2"
    assert ledger.ml_hypothesis == "line 1"
    assert "map-differs-from-ml" in {f.code for f in ledger.flags}


def test_likelihood_evidence_vector_gives_the_same_answer():
    case = bl.Case("lines", hypotheses={"line 1": 0.25, "line 2": 0.35, "line 3": 0.40},
                   exhaustive=True)
    case.add_evidence("item", likelihood_evidence=True, observed="defective",
                      likelihoods={"line 1": 0.05, "line 2": 0.04, "line 3": 0.02})
    assert case.update().posterior["line 2"] == pytest.approx(28 / 69, rel=1e-12)


# --- Good, Michie & Timms (1945), General Report on Tunny, "The deciban": twenty heads,
# fair vs two-headed, prior odds 1:10^4 against two-headed (-40 db); total +60.2 db,
# posterior +20.2 db, about 100:1 on (exact 2^20 / 10^4 = 104.8576).


def test_twenty_heads_deciban_example():
    case = coin_case(20, prior_fair=1e4 / (1e4 + 1))
    ledger = case.update()
    odds_on = ledger.posterior["two-headed"] / ledger.posterior["fair"]
    assert odds_on == pytest.approx(104.8576, rel=1e-9)
    w = bl.step_weights(ledger, focus="two-headed")
    assert w["decibans"].sum() == pytest.approx(60.206, abs=0.001)
    assert w["decibans"].iloc[0] == pytest.approx(3.0103, abs=1e-4)  # "3 db" per head
    lo = w["log_odds_after"].iloc[-1] * 10 / math.log(10)
    assert lo == pytest.approx(20.206, abs=0.001)


# --- scipy as the reference implementation ------------------------------------------


def test_log_normalizer_matches_scipy(rng):
    x = rng.normal(scale=50, size=(40, 17))
    x[3, :5] = -np.inf
    np.testing.assert_allclose(log_normalizer(x, axis=1), logsumexp(x, axis=1), rtol=1e-12)
    allinf = np.full((2, 3), -np.inf)
    assert np.all(log_normalizer(allinf, axis=1) == -np.inf)


def test_posterior_matches_direct_computation(rng):
    h, k = 7, 12
    names = [f"H{i}" for i in range(h)]
    prior = rng.dirichlet(np.ones(h))
    case = bl.Case("random", hypotheses=dict(zip(names, prior, strict=True)))
    total = np.log(prior).copy()
    for j in range(k):
        table = rng.dirichlet(np.ones(3), size=h).T  # states x hypotheses, columns sum to 1
        obs = int(rng.integers(3))
        case.add_evidence(f"E{j}", states=["a", "b", "c"],
                          likelihoods={n: list(table[:, i]) for i, n in enumerate(names)},
                          observed="abc"[obs])
        total += np.log(table[obs])
    expected = np.exp(total - logsumexp(total))
    np.testing.assert_allclose(case.update().posterior.to_numpy(), expected, rtol=1e-10)


def test_many_items_do_not_underflow():
    # 10,000 evidence items over 1,000 hypotheses: the product of likelihoods is far
    # below the smallest double (about 1e-308) yet the posterior is exact in log space.
    h, k = 1_000, 10_000
    rng = np.random.default_rng(7)
    names = tuple(f"H{i}" for i in range(h))
    lik = rng.uniform(0.05, 0.95, size=(k, h))
    # members built directly: this test is about the engine, not input checks
    items = [Evidence(f"E{j}", ("yes", "no"), names, np.vstack([lik[j], 1 - lik[j]]),
                      observed="yes") for j in range(k)]
    case = bl.Case.from_members("big", [bl.Hypothesis(n, 1 / h) for n in names], evidence=items)
    ledger = case.update()
    total = np.log(lik).sum(axis=0)
    assert total.max() < -700  # the plain product underflows
    expected = np.exp(total - logsumexp(total))
    np.testing.assert_allclose(ledger.posterior.to_numpy(), expected, rtol=1e-8, atol=1e-300)
    assert ledger.posterior.sum() == pytest.approx(1.0, abs=1e-12)
    assert len(ledger.steps) == k + 1
    assert not ledger.steps.isna().any().any()


# --- exact zeros -----------------------------------------------------------------


def test_zero_prior_stays_exactly_zero():
    case = bl.Case("z", hypotheses={"A": 0.0, "B": 0.6, "Other": 0.4})
    case.add_evidence("E", states=["x", "y"],
                      likelihoods={"A": [1.0, 0.0], "B": [0.01, 0.99], "Other": [0.5, 0.5]},
                      observed="x")
    ledger = case.update()
    assert ledger.posterior["A"] == 0.0
    assert (ledger.steps["A"] == 0.0).all()
    assert "zero-prior" in {f.code for f in ledger.flags}


def test_zero_likelihood_eliminates_and_is_reported():
    case = bl.Case("z", hypotheses={"A": 0.5, "B": 0.3, "Other": 0.2})
    case.add_evidence("E1", states=["x", "y"],
                      likelihoods={"A": [0.0, 1.0], "B": [0.5, 0.5], "Other": [0.5, 0.5]},
                      observed="x")
    case.add_evidence("E2", states=["x", "y"],
                      likelihoods={"A": [1.0, 0.0], "B": [0.5, 0.5], "Other": [0.5, 0.5]},
                      observed="x")
    ledger = case.update()
    assert ledger.posterior["A"] == 0.0
    assert ledger.eliminated == ["A"]
    elim = [f for f in ledger.flags if f.code == "eliminated"]
    assert len(elim) == 1 and "'E1'" in elim[0].message and "'A'" in elim[0].message


def test_impossible_evidence_stops_at_previous_step():
    case = bl.Case("z", hypotheses={"A": 0.5, "B": 0.5}, exhaustive=True)
    case.add_evidence("E1", states=["x", "y"],
                      likelihoods={"A": [0.9, 0.1], "B": [0.2, 0.8]}, observed="x")
    case.add_evidence("E2", states=["x", "y"],
                      likelihoods={"A": [0.0, 1.0], "B": [0.0, 1.0]}, observed="x")
    case.add_evidence("E3", states=["x", "y"],
                      likelihoods={"A": [0.5, 0.5], "B": [0.5, 0.5]}, observed="x")
    ledger = case.update()
    assert ledger.stopped_at == "E2"
    assert ledger.skipped == ["E2", "E3"]
    assert list(ledger.steps.index) == ["prior", "E1"]
    assert ledger.posterior["A"] == pytest.approx(0.45 / 0.55)
    codes = [f.code for f in ledger.flags]
    assert codes[0] == "impossible-evidence"
    assert not ledger.ok
    assert not ledger.posterior.isna().any()


def test_unobserved_evidence_is_carried_but_does_not_update(small_case):
    ledger = small_case.update()
    assert "E3" not in ledger.steps.index
    small_case.observe("E3", "yes")
    assert "E3" in small_case.update().steps.index


def test_no_evidence_posterior_is_prior():
    case = bl.Case("p", hypotheses={"A": 0.7, "Other": 0.3})
    ledger = case.update()
    assert ledger.posterior.to_dict() == {"A": 0.7, "Other": 0.3}
    assert ledger.ml_hypothesis is None
    assert "no-evidence" in {f.code for f in ledger.flags}


def test_steps_rows_sum_to_one_and_order_is_evidence_order(demo_case):
    ledger = demo_case.update()
    np.testing.assert_allclose(ledger.steps.sum(axis=1), 1.0, rtol=1e-12)
    observed = [e.name for e in demo_case.evidence.values() if e.observed is not None]
    assert ledger.evidence_steps == observed


def test_update_under_named_scenario_leaves_case_alone(demo_case):
    base = demo_case.update()
    other = update(demo_case, scenario="uniform")
    assert demo_case.active_scenario == "base"
    assert other.scenario == "uniform"
    assert not np.allclose(base.posterior, other.posterior)
    demo_case.use_scenario("uniform")
    pd.testing.assert_series_equal(demo_case.update().posterior, other.posterior)


def test_ledger_to_dict_is_json_ready(demo_case):
    import json

    text = json.dumps(demo_case.update().to_dict(), allow_nan=False)
    assert "posterior" in json.loads(text)


# --- properties (Hypothesis) --------------------------------------------------------

probs = st.floats(min_value=0.001, max_value=0.999, allow_nan=False)


ONE_TO_FIVE = st.integers(1, 5)


@st.composite
def random_cases(draw, n_items=ONE_TO_FIVE):
    h = draw(st.integers(2, 5))
    weights = draw(st.lists(st.floats(0.01, 1.0), min_size=h, max_size=h))
    total = sum(weights)
    names = [f"H{i}" for i in range(h)]
    case = bl.Case("prop", hypotheses={n: w / total for n, w in zip(names, weights, strict=True)},
                   normalize=True)
    for j in range(draw(n_items)):
        col = [draw(probs) for _ in names]
        case.add_evidence(f"E{j}", states=["yes", "no"],
                          likelihoods={n: [p, 1 - p] for n, p in zip(names, col, strict=True)},
                          observed=draw(st.sampled_from(["yes", "no"])))
    return case


@given(random_cases())
def test_posterior_sums_to_one(case):
    post = case.update().posterior
    assert post.sum() == pytest.approx(1.0, abs=1e-12)
    assert (post >= 0).all()


@given(random_cases(n_items=st.integers(2, 5)), st.randoms(use_true_random=False))
def test_order_of_independent_evidence_does_not_matter(case, random):
    before = case.update().posterior
    items = list(case.evidence.values())
    random.shuffle(items)
    d = case.to_dict()
    order = [e.name for e in items]
    d["evidence"] = sorted(d["evidence"], key=lambda e: order.index(e["name"]))
    shuffled = bl.Case.from_dict(d)
    assert shuffled.evidence_names == order
    np.testing.assert_allclose(shuffled.update().posterior, before, rtol=1e-9)


@given(random_cases(n_items=st.integers(2, 2)))
def test_product_of_likelihoods_equals_two_updates(case):
    e1, e2 = case.evidence.values()
    joint = {h: float(e1.likelihood_of(e1.observed)[h] * e2.likelihood_of(e2.observed)[h])
             for h in case.hypothesis_names}
    one = bl.Case("one", hypotheses=dict(case.priors), normalize=True)
    one.add_evidence("both", likelihood_evidence=True, observed="seen", likelihoods=joint)
    np.testing.assert_allclose(one.update().posterior, case.update().posterior, rtol=1e-9)


@given(random_cases(), st.integers(0, 4))
def test_a_zero_prior_stays_zero(case, which):
    name = case.hypothesis_names[which % len(case.hypothesis_names)]
    pri = case.priors.to_dict()
    pri[name] = 0.0
    case.set_priors(pri, normalize=True)
    assert (case.update().steps[name] == 0.0).all()


# --------------------------------------------------------------------------- the running sum


def _drifting_case(n_h: int, n_items: int, seed: int) -> tuple[bl.Case, np.ndarray, np.ndarray]:
    """Evidence whose strongest hypothesis changes every step by huge ratios (1e-40), so a
    running log sum drifts far below its maximum (invented numbers; members built directly)."""
    rng = np.random.default_rng(seed)
    names = tuple(f"H{i}" for i in range(n_h))
    logs = rng.uniform(-92.0, 0.0, size=(n_items, n_h))  # down to about 1e-40
    prior = rng.dirichlet(np.ones(n_h))
    items = []
    for k in range(n_items):
        seen = np.exp(logs[k])
        table = np.vstack([seen, 1 - seen])
        items.append(Evidence(f"E{k}", ("seen", "not seen"), names, table, observed="seen"))
    hyps = [bl.Hypothesis(n, float(p)) for n, p in zip(names, prior, strict=True)]
    return bl.Case.from_members("drift", hyps, evidence=items), np.log(prior), logs


@pytest.mark.parametrize("n_h,n_items", [(6, 40), (400, 120)])  # the vectorised and the row path
def test_every_step_matches_logsumexp_however_far_the_sum_drifts(n_h, n_items):
    case, log_prior, logs = _drifting_case(n_h, n_items, seed=n_h)
    ledger = case.update()
    # reference: scipy.special.logsumexp on the plain cumulative sums (a general-purpose
    # library's log-space normalisation, independent of the engine's shifting)
    cum = np.vstack([log_prior, log_prior + np.cumsum(np.log(np.exp(logs)), axis=0)])
    expected = np.exp(cum - logsumexp(cum, axis=1, keepdims=True))
    np.testing.assert_allclose(ledger.probabilities, expected, rtol=1e-9, atol=1e-300)
    np.testing.assert_allclose(ledger.log_steps, cum - logsumexp(cum, axis=1, keepdims=True),
                               rtol=1e-9, atol=1e-9)
    ev = np.exp(np.diff(logsumexp(cum, axis=1)))
    np.testing.assert_allclose(ledger.evidence_probability.to_numpy(), ev, rtol=1e-9)


def test_a_ledger_cannot_be_changed(demo_case):
    ledger = demo_case.update()
    with pytest.raises(AttributeError, match="immutable"):
        ledger.flags = ()
    with pytest.raises(ValueError, match="read-only"):
        ledger.steps.iloc[0, 0] = 0.5
    with pytest.raises(ValueError, match="read-only"):
        ledger.probabilities[0, 0] = 0.5
    assert ledger.flags == demo_case.update().flags  # filled once, at construction


def test_update_all_gives_each_scenario_once(demo_case):
    every = bl.update_all(demo_case)
    assert list(every) == demo_case.scenario_names
    for name, ledger in every.items():
        alone = update(demo_case, scenario=name)
        assert ledger.scenario == name
        np.testing.assert_array_equal(ledger.probabilities, alone.probabilities)
        assert ledger.flags == alone.flags and ledger.map_hypothesis == alone.map_hypothesis


def test_stopped_update_says_so_where_people_look():
    case = bl.Case("stop", hypotheses={"A": 0.6, "Other": 0.4})
    case.add_evidence("reading", states=["x", "y"],
                      likelihoods={"A": [1.0, 0.0], "Other": [1.0, 0.0]}, observed="y")
    ledger = case.update()
    assert ledger.stopped_at == "reading"
    assert "STOPPED before 'reading'" in repr(ledger)
    assert "update stopped" in ledger.posterior.name and "'reading'" in ledger.posterior.name
    from beliefledger.display import ledger_text

    assert "STOPPED" in ledger_text(ledger).splitlines()[0]

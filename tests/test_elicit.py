"""Priors, probabilities, rates and likelihoods from data, checked against
published worked examples and scipy.stats."""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy import stats

import beliefledger as bl
from beliefledger.elicit import pool_distributions
from beliefledger.errors import CaseError, CaseTypeError


def sig2(x: float) -> str:
    """A number at the two significant figures the source prints."""
    return f"{x:.1e}"


# --- NASA/SP-2009-569 (Dezfuli et al. 2009), section 4.2.1.1, Example 1 -------------
# Beta-binomial: prior Beta(1.24, 189075); 2 failures in 285 demands. Printed:
# prior mean 6.56e-6, prior 5th/95th percentiles 5.4e-7 / 1.8e-5; posterior mean
# 1.7e-5, 90 % interval (5.0e-6, 3.5e-5). The text prints the posterior b as
# 189,226; the arithmetic gives 189,075 + 285 - 2 = 189,358 (two significant
# figures of every summary are the same either way).

def test_nasa_beta_binomial_example_prior():
    prior = bl.probability_from_demands(0, 0, prior=(1.24, 189075))
    assert f"{prior.mean:.3g}" == "6.56e-06"
    lo, hi = prior.interval(0.9)
    assert (sig2(lo), sig2(hi)) == ("5.4e-07", "1.8e-05")
    assert [f.code for f in prior.flags] == ["no-data"]


def test_nasa_beta_binomial_example_posterior():
    est = bl.probability_from_demands(2, 285, prior=(1.24, 189075))
    assert est.a == pytest.approx(3.24)
    assert est.b == pytest.approx(189358)  # not the misprinted 189,226
    assert sig2(est.mean) == "1.7e-05"
    lo, hi = est.interval(0.9)
    assert (sig2(lo), sig2(hi)) == ("5.0e-06", "3.5e-05")
    assert "2 in 285 demands" in est.source.where
    assert "Beta(1.24, 189075)" in est.source.why


# --- NASA/SP-2009-569, section 4.2.2.1, Example 3 ------------------------------------
# Gamma-Poisson: prior Gamma(1.6, 365000 h); 0 failures in 200 days (4800 h).
# Printed: posterior Gamma(1.6, 369800 h), 5th/95th percentiles 5.6e-7 / 1.1e-5
# per hour, reliability over 1000 h 0.996.

def test_nasa_gamma_poisson_example():
    est = bl.rate_from_events(0, 200 * 24, prior=(1.6, 365000), unit="h")
    assert (est.shape, est.rate) == (pytest.approx(1.6), pytest.approx(369800))
    lo, hi = est.interval(0.9)
    assert (sig2(lo), sig2(hi)) == ("5.6e-07", "1.1e-05")
    assert f"{1 - est.probability_of_event(1000):.3f}" == "0.996"
    assert [f.code for f in est.flags] == ["zero-count"]


# --- Jeffreys priors (NASA/SP-2009-569 sections 4.2.1 and 4.2.2; CHECKS.md 9-10) ---
# Demand failures: Beta(0.5, 0.5), posterior mean (x + 0.5) / (n + 1).
# Poisson rate: Gamma(0.5, 0), posterior Gamma(x + 0.5, t).

@given(n=st.integers(0, 10_000), frac=st.floats(0, 1))
def test_jeffreys_demand_rule(n, frac):
    x = int(round(frac * n))
    est = bl.probability_from_demands(x, n)
    assert (est.a, est.b) == (x + 0.5, n - x + 0.5)
    assert est.mean == pytest.approx((x + 0.5) / (n + 1), rel=1e-12)


@given(x=st.integers(0, 500), t=st.floats(1e-3, 1e7))
def test_jeffreys_rate_rule(x, t):
    est = bl.rate_from_events(x, t)
    assert (est.shape, est.rate) == (x + 0.5, pytest.approx(t))
    assert est.mean == pytest.approx((x + 0.5) / t, rel=1e-12)


@pytest.mark.parametrize("level", [0.5, 0.8, 0.9, 0.95, 0.99])
def test_intervals_match_scipy(level):
    # scipy.stats as the reference for equal-tailed intervals
    b = bl.probability_from_demands(3, 40, prior="uniform")
    assert b.interval(level) == pytest.approx(stats.beta.interval(level, 4, 38), rel=1e-12)
    g = bl.rate_from_events(4, 1200.0)
    assert g.interval(level) == pytest.approx(stats.gamma.interval(level, 4.5, scale=1 / 1200),
                                              rel=1e-12)
    d = bl.prior_from_counts({"a": 5, "b": 2, "c": 0}, pseudo=0.5)
    iv = d.interval(level)
    alpha = np.array([5.5, 2.5, 0.5])
    for i, name in enumerate(["a", "b", "c"]):
        ref = stats.beta.interval(level, alpha[i], alpha.sum() - alpha[i])
        assert (iv.loc[name, "low"], iv.loc[name, "high"]) == pytest.approx(ref, rel=1e-12)


def test_probability_of_event_is_negative_binomial():
    # scipy.stats.nbinom: events in t under a Gamma(shape, rate) posterior are
    # negative binomial with n = shape, p = rate / (rate + t).
    g = bl.rate_from_events(3, 5000.0, prior=(0.5, 100.0))
    for t in (1.0, 250.0, 4000.0, 1e6):
        ref = 1 - stats.nbinom.pmf(0, g.shape, g.rate / (g.rate + t))
        assert g.probability_of_event(t) == pytest.approx(ref, rel=1e-10)
    assert g.probability_of_event(0) == 0.0


# --- Dirichlet priors from counts --------------------------------------------------

def test_prior_from_counts_dirichlet():
    est = bl.prior_from_counts({"seal": 6, "valve": 3, "other": 0})
    assert est.alpha.to_dict() == {"seal": 7.0, "valve": 4.0, "other": 1.0}
    assert est.priors() == pytest.approx({"seal": 7 / 12, "valve": 4 / 12, "other": 1 / 12})
    # scipy.stats.dirichlet as the reference for the mean
    assert est.mean.to_numpy() == pytest.approx(stats.dirichlet.mean([7, 4, 1]))
    z = [f for f in est.flags if f.code == "zero-count"]
    assert len(z) == 1 and "'other'" in z[0].message and "pseudo-count" in z[0].message
    assert "seal: 6" in est.source.where and "N = 9" in est.source.where
    assert "pseudo-count 1" in est.source.why


def test_prior_from_counts_feeds_a_case():
    est = bl.prior_from_counts(pd.Series({"pump": 4, "valve": 1, "Other cause": 1}),
                               data="site log 2019-2025 (invented)")
    case = bl.Case("from counts", hypotheses=est.priors(), source=est.source)
    assert case.base_priors.sum() == pytest.approx(1)
    assert case.hypotheses["pump"].source == est.source
    assert est.source.where.startswith("site log 2019-2025 (invented): counts")
    case.set_priors({"pump": 0.5, "valve": 0.25, "Other cause": 0.25})
    case.set_priors(est.priors(), source=est.source)
    assert case.base_priors["pump"] == pytest.approx(5 / 9)


def test_prior_from_counts_as_a_scenario():
    case = bl.Case("scenario", hypotheses={"pump": 0.5, "valve": 0.3, "Other cause": 0.2})
    est = bl.prior_from_counts({"pump": 2, "valve": 6, "Other cause": 1},
                               data="plant history (invented)")
    est.add_scenario(case, "plant history")
    assert case.scenario_priors("plant history").to_dict() == pytest.approx(
        {"pump": 0.25, "valve": 7 / 12, "Other cause": 2 / 12})
    assert case.scenarios["plant history"].source == est.source
    before = case.to_dict()
    with pytest.raises(CaseError, match=r"missing hypothesis\(es\) \[.valve.\]"):
        bl.prior_from_counts({"pump": 2, "seal": 1, "Other cause": 1}).add_scenario(case, "x")
    assert case.to_dict() == before


def test_dirichlet_sample_mean_within_tolerance(rng):
    # tolerance derived from the draws: 5 standard errors of each marginal mean
    est = bl.prior_from_counts({"a": 12, "b": 3, "c": 1, "d": 0}, pseudo=0.5)
    n = 40_000
    x = est.sample(n, rng)
    assert list(x.columns) == ["a", "b", "c", "d"]
    assert np.allclose(x.sum(axis=1), 1)
    a = est.alpha.to_numpy()
    a0 = a.sum()
    sd = np.sqrt(a * (a0 - a) / (a0**2 * (a0 + 1)))
    assert np.all(np.abs(x.mean().to_numpy() - a / a0) < 5 * sd / math.sqrt(n))


def test_pseudo_zero_with_zero_count_refused():
    with pytest.raises(CaseError, match=r"'b'.*pseudo=0.*Cromwell"):
        bl.prior_from_counts({"a": 3, "b": 0}, pseudo=0)
    est = bl.prior_from_counts({"a": 3, "b": 1}, pseudo=0)
    assert est.priors() == {"a": 0.75, "b": 0.25}


@pytest.mark.parametrize("counts, match", [
    ({"a": -1, "b": 2}, r"count of 'a'.*-1.*negative"),
    ({"a": 1.5, "b": 2}, r"count of 'a'.*1\.5.*not a whole number"),
    ({"a": float("nan"), "b": 2}, r"count of 'a' .*nan"),
    ({"a": 3}, r"at least two"),
])
def test_bad_counts(counts, match):
    with pytest.raises(CaseError, match=match):
        bl.prior_from_counts(counts)


def test_bad_types_and_values():
    with pytest.raises(CaseTypeError, match="whole number"):
        bl.prior_from_counts({"a": True, "b": 2})
    with pytest.raises(CaseTypeError, match="dict or a Series"):
        bl.prior_from_counts([1, 2])
    with pytest.raises(CaseError, match="pseudo-count is -1"):
        bl.prior_from_counts({"a": 1, "b": 2}, pseudo=-1)
    with pytest.raises(CaseError, match=r"failures \(5\) exceed demands \(3\)"):
        bl.probability_from_demands(5, 3)
    with pytest.raises(CaseError, match="prior parameter b is 0"):
        bl.probability_from_demands(1, 3, prior=(1, 0))
    with pytest.raises(CaseError, match="'flat' is not known"):
        bl.probability_from_demands(1, 3, prior="flat")
    with pytest.raises(CaseError, match="exposure is -2"):
        bl.rate_from_events(1, -2)
    with pytest.raises(CaseError, match="improper"):
        bl.rate_from_events(0, 0)
    with pytest.raises(CaseError, match="number of draws is 0"):
        bl.prior_from_counts({"a": 1, "b": 2}).sample(0)


@pytest.mark.parametrize("level", [0, 1, -0.5, 1.2, float("nan")])
def test_levels_outside_unit_interval(level):
    est = bl.probability_from_demands(1, 10)
    with pytest.raises(CaseError, match="strictly between 0 and 1"):
        est.interval(level)
    with pytest.raises(CaseError, match="strictly between 0 and 1"):
        bl.prior_from_counts({"a": 1, "b": 2}).interval(level)


# --- likelihoods from a test's characteristics --------------------------------------

def test_likelihood_from_test_table():
    est = bl.likelihood_from_test(0.9, 0.95, target="leak", hypotheses=["leak", "vent", "other"],
                                  states=("alarm", "quiet"))
    assert est.likelihoods() == {"leak": [0.9, pytest.approx(0.1)],
                                 "vent": [pytest.approx(0.05), 0.95],
                                 "other": [pytest.approx(0.05), 0.95]}
    assert est.positive_likelihood_ratio == pytest.approx(18)
    assert est.negative_likelihood_ratio == pytest.approx(0.1 / 0.95)
    assert "sensitivity 0.9" in est.source.where


def test_gigerenzer_hoffrage_base_rate():
    # Gigerenzer & Hoffrage (1995), Psychological Review 102(4), 684-704 (read
    # secondary, CHECKS.md 2): base rate 1 %, hit rate 80 %, false-alarm rate
    # 9.6 %: posterior 0.078 (exact 0.07764), LR+ 8.33.
    case = bl.Case("screening", hypotheses={"condition": 0.01, "no condition": 0.99},
                   exhaustive=True)
    est = bl.likelihood_from_test(0.8, 1 - 0.096, target="condition", hypotheses=case)
    est.add_to(case, "screen", observed="positive")
    assert f"{case.update().posterior['condition']:.3f}" == "0.078"
    assert f"{est.positive_likelihood_ratio:.2f}" == "8.33"
    assert case.evidence["screen"].source == est.source


def test_likelihood_from_test_flags_and_errors():
    est = bl.likelihood_from_test(1.0, 0.3, target="a", hypotheses=["a", "b"])
    codes = [f.code for f in est.flags]
    assert "zero-likelihood" in codes and "uninformative-test" not in codes
    est = bl.likelihood_from_test(0.4, 0.5, target="a", hypotheses=["a", "b"])
    assert "uninformative-test" in [f.code for f in est.flags]
    with pytest.raises(CaseError, match="target 'z' is not one of"):
        bl.likelihood_from_test(0.9, 0.9, target="z", hypotheses=["a", "b"])
    with pytest.raises(CaseError, match=r"sensitivity is 1\.2"):
        bl.likelihood_from_test(1.2, 0.9, target="a", hypotheses=["a", "b"])
    with pytest.raises(CaseError, match="two names"):
        bl.likelihood_from_test(0.9, 0.9, target="a", hypotheses=["a", "b"], states=("x",))


def test_likelihood_from_counts_beta_uncertainty():
    # Beta-binomial with the Jeffreys prior (NASA/SP-2009-569 section 4.2.1):
    # sensitivity ~ Beta(TP + 0.5, FN + 0.5), specificity ~ Beta(TN + 0.5, FP + 0.5).
    est = bl.likelihood_from_counts(40, 5, 10, 95, target="a", hypotheses=["a", "b", "c"])
    s, p = est.sensitivity_estimate, est.specificity_estimate
    assert (s.a, s.b) == (40.5, 10.5) and (p.a, p.b) == (95.5, 5.5)
    assert est.sensitivity == pytest.approx(40.5 / 51)
    assert est.table.loc["positive", "b"] == pytest.approx(5.5 / 101)
    assert "TP 40, FP 5, FN 10, TN 95" in est.source.where
    json.dumps(est.to_dict(), allow_nan=False)
    with pytest.raises(CaseError, match="no case of 'a'"):
        bl.likelihood_from_counts(0, 5, 0, 95, target="a", hypotheses=["a", "b"])
    with pytest.raises(CaseError, match="false positives is -1"):
        bl.likelihood_from_counts(1, -1, 0, 95, target="a", hypotheses=["a", "b"])


def test_add_to_records_tied_uncertainty():
    case = bl.Case("test", hypotheses={"a": 0.2, "b": 0.5, "c": 0.3})
    est = bl.likelihood_from_counts(40, 5, 10, 95, target="a", hypotheses=case)
    est.add_to(case, "lab test", observed="positive")
    reg = bl.uncertainty_register(case)
    assert list(reg["hypothesis"]) == ["a", "b", "c"]
    assert list(reg["tie"]) == ["", "specificity", "specificity"]
    sec = case.extras["uncertainty"]["likelihoods"]
    assert sec[0]["alpha"] == {"positive": 40.5, "negative": 10.5}
    assert sec[1]["alpha"] == {"positive": 5.5, "negative": 95.5}
    # The tied columns share one draw: with fixed priors, b : c stays 5 : 3 in every draw.
    res = bl.simulate(case, draws=2_000, seed=11, progress=False)
    ratio = res.samples[:, 1] / res.samples[:, 2]
    assert np.allclose(ratio, 0.5 / 0.3, rtol=1e-12)
    assert res.samples[:, 0].std() > 0.01


def test_add_to_refused_leaves_case_unchanged():
    case = bl.Case("test", hypotheses={"a": 0.5, "b": 0.5})
    est = bl.likelihood_from_counts(4, 1, 1, 9, target="a", hypotheses=case)
    est.add_to(case, "lab test", observed="positive")
    before, version = case.to_dict(), case.version
    with pytest.raises(CaseError, match="already exists"):
        est.add_to(case, "lab test", observed="negative")
    assert case.to_dict() == before and case.version == version


def test_estimates_repr_and_json():
    ests = [bl.prior_from_counts({"a": 2, "b": 1}), bl.probability_from_demands(1, 9),
            bl.rate_from_events(2, 10.0, unit="yr"),
            bl.likelihood_from_test(0.9, 0.8, target="a", hypotheses=["a", "b"])]
    for e in ests:
        assert "0x" not in repr(e)
        json.dumps(e.to_dict(), allow_nan=False)
    assert repr(ests[2]) == "GammaEstimate(rate: Gamma(2.5, 10), mean 0.25 per yr, from 2 in 10)"


# --------------------------------------------------------------------------- expert pools (invented judgements)

# Linear pool p = sum_i w_i p_i and logarithmic pool p ~ prod_i p_i^w_i: Clemen & Winkler
# (1999), Risk Analysis 19(2), section 3 (recalled from memory); the numbers by hand.
def test_linear_pool_by_hand():
    two = {"Ayla": {"compressor": 0.6, "refrigerant leak": 0.3, "other cause": 0.1},
           "Bram": {"compressor": 0.2, "refrigerant leak": 0.5, "other cause": 0.3}}
    assert pool_distributions(two) == pytest.approx(
        {"compressor": 0.4, "refrigerant leak": 0.4, "other cause": 0.2})
    assert pool_distributions(two, weights={"Ayla": 3, "Bram": 1}) == pytest.approx(
        {"compressor": 0.5, "refrigerant leak": 0.35, "other cause": 0.15})


def test_log_pool_by_hand():
    two = {"Ayla": {"compressor": 0.6, "refrigerant leak": 0.3, "other cause": 0.1},
           "Bram": {"compressor": 0.2, "refrigerant leak": 0.5, "other cause": 0.3}}
    raw = np.sqrt([0.6 * 0.2, 0.3 * 0.5, 0.1 * 0.3])
    assert list(pool_distributions(two, method="log").values()) == pytest.approx(
        raw / raw.sum(), rel=1e-12)
    # an expert who gives a state 0 vetoes it in the log pool, not in the linear one
    veto = {"Ayla": {"a": 0.0, "b": 1.0}, "Bram": {"a": 0.5, "b": 0.5}}
    assert pool_distributions(veto, method="log") == {"a": 0.0, "b": 1.0}
    assert pool_distributions(veto)["a"] == pytest.approx(0.25)
    with pytest.raises(CaseError, match="logarithmic pool is undefined"):
        pool_distributions({"Ayla": {"a": 0.0, "b": 1.0}, "Bram": {"a": 1.0, "b": 0.0}},
                           method="log")


def test_pooled_ranges_are_the_pooled_distributions_intervals():
    # Each range is read as a Beta with mean = best fitted to the 90 % range; the linear
    # pool is their mixture, the log pool Beta(sum w a, sum w b) (the normalized weighted
    # geometric mean of Beta densities, derived by hand). Checked with scipy.stats.beta.
    from beliefledger.uncertainty import fit_concentration

    judged = {"Ayla": {"yes": (0.4, 0.6, 0.75), "no": (0.25, 0.4, 0.6)},
              "Bram": {"yes": (0.1, 0.2, 0.35), "no": (0.65, 0.8, 0.9)}}
    ab = []
    for e in ("Ayla", "Bram"):
        lo, best, hi = judged[e]["yes"]
        k = fit_concentration(best, lo, hi, 0.9)[0]
        ab.append((best * k, (1 - best) * k))
    lin = bl.pool(judged)
    lo, hi = lin.ranges.loc["yes", ["low", "high"]]
    for x, q in ((lo, 0.05), (hi, 0.95)):
        assert sum(0.5 * stats.beta.cdf(x, a, b) for a, b in ab) == pytest.approx(q, abs=1e-9)
    assert lin.values["yes"] == pytest.approx(0.4)
    log = bl.pool(judged, method="log")
    a = 0.5 * (ab[0][0] + ab[1][0])
    b = 0.5 * (ab[0][1] + ab[1][1])
    np.testing.assert_allclose(log.ranges.loc["yes", ["low", "high"]].to_numpy(dtype=float),
                               stats.beta.ppf([0.05, 0.95], a, b), rtol=1e-9)
    # a range that cannot be read as a distribution gives no pooled range, and says so
    edge = bl.pool({"Ayla": {"yes": (0.6, 0.6, 0.8), "no": (0.2, 0.4, 0.4)},
                    "Bram": {"yes": 0.2, "no": 0.8}})
    assert edge.ranges["low"].isna().all()

"""Monte Carlo over uncertain inputs: draws against exact distributions (scipy.stats,
quadrature), reproducibility, and the exact-sum sampler."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy import stats

import beliefledger as bl
from beliefledger.errors import CaseError
from helpers.stats import dkw, snapshot  # noqa: F401


def two_way(prior: float = 0.3, l1: float = 0.8, l2: float = 0.3) -> bl.Case:
    """One observed item, two hypotheses (invented numbers)."""
    case = bl.Case("two", hypotheses={"A": prior, "B": 1 - prior}, exhaustive=True)
    case.add_evidence("E", states=["yes", "no"],
                      likelihoods={"A": [l1, 1 - l1], "B": [l2, 1 - l2]}, observed="yes")
    return case


# --- Monte Carlo ------------------------------------------------------------------------

def test_no_uncertainty_gives_zero_width_intervals(demo_case):
    res = bl.simulate(demo_case, draws=5_000, seed=3, progress=False)
    frame = res.to_frame()
    post = demo_case.update().posterior
    assert (frame["low"] == frame["high"]).all()
    assert frame["low"].to_numpy() == pytest.approx(post.to_numpy(), abs=1e-12)
    assert res.changed_share == 0.0
    assert res.map_probability[post.idxmax()] == 1.0
    assert "no input carries uncertainty" in res.summary


def test_prior_dirichlet_sample_mean_and_quantiles():
    # No evidence: the posterior draws are the prior's Dirichlet draws. Mean
    # within 5 standard errors (derived from the draws), quantiles within the
    # DKW bound of the exact Beta marginals (scipy.stats.beta as reference).
    case = bl.Case("priors only", hypotheses={"a": 0.5, "b": 0.3, "c": 0.2})
    bl.set_prior_uncertainty(case, concentration=12.0)
    n = 60_000
    res = bl.simulate(case, draws=n, seed=5, progress=False)
    alpha = np.array([6.0, 3.6, 2.4])
    a0 = alpha.sum()
    sd = np.sqrt(alpha * (a0 - alpha) / (a0**2 * (a0 + 1)))
    mean = res.to_frame()["mean"].to_numpy()
    assert np.all(np.abs(mean - alpha / a0) < 5 * sd / math.sqrt(n))
    iv = res.interval(0.9)
    for i, h in enumerate("abc"):
        cdf = stats.beta.cdf(iv.loc[h, ["low", "high"]].to_numpy(), alpha[i], a0 - alpha[i])
        assert np.all(np.abs(cdf - [0.05, 0.95]) < dkw(n))


def test_likelihood_uncertainty_against_exact_distribution():
    # One observed item, P(yes | A) ~ Beta(a, b), everything else fixed. The
    # posterior of A is an increasing function of that likelihood, so its
    # quantiles and P(A is MAP) follow exactly from scipy.stats.beta.
    p, l2, k, m = 0.3, 0.3, 25.0, 0.8
    case = two_way(p, m, l2)
    bl.set_likelihood_uncertainty(case, "E", "A", concentration=k)
    n = 60_000
    res = bl.simulate(case, draws=n, seed=9, progress=False, level=0.8)

    def post(lik):
        return p * lik / (p * lik + (1 - p) * l2)

    iv = res.interval()
    for q, col in ((0.1, "low"), (0.9, "high")):
        # compare in probability: F(estimated quantile) within the DKW bound
        lik_at = iv.loc["A", col] * (1 - p) * l2 / (p * (1 - iv.loc["A", col]))
        assert abs(stats.beta.cdf(lik_at, m * k, (1 - m) * k) - q) < dkw(n)
    exact_map = stats.beta.sf((1 - p) * l2 / p, m * k, (1 - m) * k)  # A wins iff post > 1/2
    assert abs(res.map_probability["A"] - exact_map) < dkw(n)
    assert res.changed_share == pytest.approx(1 - res.map_probability["A"])
    assert res.base_posterior["A"] == pytest.approx(post(m))


def test_off_centre_distribution_is_noted(small_case):
    # P(present | H1) = 0.9 in the case, but the counts say about 0.5
    bl.set_likelihood_uncertainty(small_case, "E1", "H1", counts={"present": 10, "absent": 10})
    res = bl.simulate(small_case, draws=1_000, seed=1, progress=False)
    assert len(res.notes) == 1 and "P(present | H1) for 'E1' has mean 0.5" in res.notes[0]
    assert res.to_dict()["notes"] == res.notes
    bl.set_likelihood_uncertainty(small_case, "E1", "H1", counts={"present": 18, "absent": 2})
    assert bl.simulate(small_case, draws=1_000, seed=1, progress=False).notes == []
    bl.set_prior_uncertainty(small_case, alpha={"H1": 1, "H2": 1, "Other": 8})
    assert len(bl.simulate(small_case, draws=1_000, seed=1, progress=False).notes) == 3


def test_exact_zeros_stay_zero():
    case = bl.Case("zeros", hypotheses={"a": 0.6, "b": 0.4, "c": 0.0})
    case.add_evidence("E", states=["x", "y"], likelihoods={"a": [0.5, 0.5], "b": [0.0, 1.0],
                                                           "c": [0.5, 0.5]}, observed="x")
    bl.set_prior_uncertainty(case, concentration=10)
    bl.set_likelihood_uncertainty(case, "E", "b", concentration=10)
    res = bl.simulate(case, draws=3_000, seed=2, progress=False)
    assert np.all(res.samples[:, 1:] == 0.0)
    assert np.all(res.samples[:, 0] == 1.0)


def test_simulate_reproducible_and_seed_recorded(small_case):
    bl.set_prior_uncertainty(small_case, concentration=20)
    bl.set_likelihood_uncertainty(small_case, "E1", "H2", low=0.1, high=0.35)
    a = bl.simulate(small_case, draws=40_000, seed=123, progress=False)
    b = bl.simulate(small_case, draws=40_000, seed=123, progress=False)
    c = bl.simulate(small_case, draws=40_000, seed=124, progress=False)
    assert np.array_equal(a.samples, b.samples)
    assert not np.array_equal(a.samples, c.samples)
    # chunks carry their own seeds: the number of threads does not change the draws
    one = bl.simulate(small_case, draws=5 * 1024, seed=7, chunk=1024, workers=1, progress=False)
    three = bl.simulate(small_case, draws=5 * 1024, seed=7, chunk=1024, workers=3,
                        progress=False)
    assert np.array_equal(one.samples, three.samples)
    fresh = bl.simulate(small_case, draws=1_000, progress=False)
    again = bl.simulate(small_case, draws=1_000, seed=fresh.seed, progress=False)
    assert np.array_equal(fresh.samples, again.samples)
    d = a.to_dict()
    json.dumps(d, allow_nan=False)
    assert d["seed"] == 123 and d["draws"] == 40_000 and set(d["hypotheses"]) == {"H1", "H2",
                                                                                    "Other"}
    assert "0x" not in repr(a) and a.summary in repr(a)
    assert a.map_probability.sum() == pytest.approx(1)


def test_simulate_bad_input(small_case):
    before = snapshot(small_case)
    with pytest.raises(CaseError, match="number of draws is 0"):
        bl.simulate(small_case, draws=0)
    with pytest.raises(CaseError, match="strictly between 0 and 1"):
        bl.simulate(small_case, draws=10, level=1.0)
    with pytest.raises(CaseError, match="no scenario named 'x'"):
        bl.simulate(small_case, draws=10, scenario="x")
    with pytest.raises(CaseError, match="seed must be"):
        bl.simulate(small_case, draws=10, seed=-4)
    assert snapshot(small_case) == before


def test_progress_bar_switch(small_case, capsys):
    bl.set_prior_uncertainty(small_case, concentration=20)
    bl.simulate(small_case, draws=3 * 1024, seed=1, chunk=1024, progress=False)
    assert capsys.readouterr().err == ""
    bl.simulate(small_case, draws=3 * 1024, seed=1, chunk=1024, progress=True)
    assert "draw" in capsys.readouterr().err


def test_simulate_under_a_scenario(demo_case):
    bl.set_prior_uncertainty(demo_case, concentration=50)
    res = bl.simulate(demo_case, draws=2_000, seed=4, scenario="uniform", progress=False)
    assert res.scenario == "uniform"
    assert res.base_posterior.to_numpy() == pytest.approx(
        bl.update(demo_case, scenario="uniform").posterior.to_numpy())
    assert demo_case.active_scenario == "base"


# --- the exact-sum sampler (simulate's default for independent entries) -------------

@pytest.mark.parametrize("a, b", [(8.0, 12.0), (0.5, 30.0), (2.0, 1e4), (40.0, 60.0)])
def test_log_beta_sum_single_term_matches_scipy(a, b):
    # scipy.stats.beta as the reference: S = log B, so F_S(x) = I_{e^x}(a, b)
    from beliefledger.montecarlo import LogBetaSum

    s = LogBetaSum(np.array([a]), np.array([b]))
    assert s.ok, s.reason
    assert np.max(np.abs(stats.beta.cdf(np.exp(s.x), a, b) - s.cdf)) < 1e-10
    u = np.random.default_rng(4).random(50_000)
    assert np.max(np.abs(stats.beta.cdf(np.exp(s.draw(u)), a, b) - u)) < 2e-6


def test_log_beta_sum_two_terms_matches_quadrature():
    # reference: the convolution F_S(x) = int F_1(x - y) f_2(y) dy by scipy quadrature,
    # with f_2 the density of log B_2 (B_2 ~ Beta(a2, b2))
    from scipy import integrate

    from beliefledger.montecarlo import LogBetaSum

    (a1, b1), (a2, b2) = (6.0, 3.0), (2.5, 9.0)
    s = LogBetaSum(np.array([a1, a2]), np.array([b1, b2]))
    assert s.ok, s.reason

    def exact(x):
        def f(y):
            return stats.beta.cdf(np.exp(x - y), a1, b1) * stats.beta.pdf(np.exp(y), a2,
                                                                          b2) * np.exp(y)
        return integrate.quad(f, -60, 0, epsabs=1e-14, epsrel=1e-12, limit=800, points=[x])[0]

    # between grid points: linear interpolation is off by at most dx^2 max|F''| / 8,
    # estimated from the grid's second differences (with a 50 % margin)
    bound = 1.5 * np.max(np.abs(np.diff(s.cdf, 2))) / 8 + 1e-12
    assert bound < 3e-7  # the grid is fine enough: about 1e-7 in probability at worst
    for x in (-4.0, -2.5, -1.8, -1.0, -0.5):
        assert np.interp(x, s.x, s.cdf) == pytest.approx(exact(x), abs=bound)
    for i in np.linspace(0, len(s.x) - 1, 7).astype(int)[1:-1]:  # on the grid
        assert s.cdf[i] == pytest.approx(exact(s.x[i]), abs=1e-11)


def test_log_beta_sum_refuses_what_it_cannot_tabulate():
    from beliefledger.montecarlo import LogBetaSum

    s = LogBetaSum(np.array([1.0]), np.array([1.0]))  # density with a jump at 0
    assert not s.ok and "characteristic function" in s.reason


def random_uncertain_case(seed: int, n_hyp: int = 5, n_ev: int = 8) -> bl.Case:
    """Random invented case, a concentration on every observed column."""
    r = np.random.default_rng(seed)
    hyps = [f"H{i}" for i in range(n_hyp)]
    case = bl.Case("random", hypotheses=dict(zip(hyps, r.dirichlet(np.full(n_hyp, 3.0)),
                                                 strict=True)), normalize=True)
    for e in range(n_ev):
        cols = np.clip(r.dirichlet([2.0, 2.0, 2.0], size=n_hyp), 0.02, None)
        cols /= cols.sum(axis=1, keepdims=True)
        case.add_evidence(f"E{e}", states=["x", "y", "z"],
                          likelihoods={h: list(cols[j]) for j, h in enumerate(hyps)},
                          observed="xyz"[e % 3])
    for j, h in enumerate(hyps):  # lists: one edit for every item of this hypothesis
        bl.set_likelihood_uncertainty(case, case.evidence_names, h, concentration=5.0 + 7 * j)
    bl.set_prior_uncertainty(case, concentration=15.0)
    return case


def test_simulate_sum_and_direct_agree():
    # Same distribution two ways: two-sample Kolmogorov-Smirnov on every
    # hypothesis' posterior (scipy.stats.ks_2samp), seeds fixed.
    case = random_uncertain_case(21)
    auto = bl.simulate(case, draws=30_000, seed=1, progress=False)
    direct = bl.simulate(case, draws=30_000, seed=2, progress=False, method="direct")
    assert set(auto.methods.values()) == {"sum"}
    assert set(direct.methods.values()) == {"direct"}
    for j in range(5):
        assert stats.ks_2samp(auto.samples[:, j], direct.samples[:, j]).pvalue > 1e-4
    ma, md = auto.map_probability, direct.map_probability
    assert np.all(np.abs(ma - md) < 2 * dkw(30_000))
    with pytest.raises(CaseError, match="method 'fast' is not known"):
        bl.simulate(case, draws=10, method="fast")


def test_uncertain_steps_are_held_at_their_weights_and_said_so():
    from test_uncertain import flip_case

    case = flip_case()
    bl.set_prior_uncertainty(case, concentration=50, source="invented")
    res = bl.simulate(case, draws=4000, seed=5)
    assert any("held at its likelihood weights" in n and "Jeffrey" in n for n in res.notes)
    bl.set_likelihood_uncertainty(case, "report", "A", concentration=20, source="invented")
    with pytest.raises(bl.CaseError, match="uncertain observation"):
        bl.simulate(case, draws=100, seed=5)

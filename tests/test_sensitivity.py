"""Prior scenarios, sweeps, break-even priors, tornado tables, the uncertainty
section and Monte Carlo: against the engine, closed forms and scipy.stats."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy import optimize, stats

import beliefledger as bl
from beliefledger.case.extras import validate_uncertainty
from beliefledger.errors import CaseError
from beliefledger.uncertainty import fit_concentration


def dkw(n: int, delta: float = 1e-6) -> float:
    """Dvoretzky-Kiefer-Wolfowitz bound: sup |F_n - F| <= this with prob 1 - delta."""
    return math.sqrt(math.log(2 / delta) / (2 * n))


def two_way(prior: float = 0.3, l1: float = 0.8, l2: float = 0.3) -> bl.Case:
    """One observed item, two hypotheses (invented numbers)."""
    case = bl.Case("two", hypotheses={"A": prior, "B": 1 - prior}, exhaustive=True)
    case.add_evidence("E", states=["yes", "no"],
                      likelihoods={"A": [l1, 1 - l1], "B": [l2, 1 - l2]}, observed="yes")
    return case


def snapshot(case: bl.Case):
    return case.to_dict(), case.version, case.active_scenario


# --- prior scenarios -----------------------------------------------------------------

def test_robustness_matches_engine(demo_case):
    before = snapshot(demo_case)
    rob = bl.robustness(demo_case)
    frame = rob.to_frame()
    assert list(frame.index) == demo_case.scenario_names
    for s in demo_case.scenario_names:
        tr = bl.update(demo_case, scenario=s)
        assert frame.loc[s, demo_case.hypothesis_names].to_numpy() == pytest.approx(
            tr.posterior.to_numpy(), abs=1e-15)
        assert frame.loc[s, "map"] == tr.map_hypothesis
    assert rob.stable
    assert rob.verdict == "the MAP is 'compressor seal leak' under all 3 scenarios"
    assert snapshot(demo_case) == before
    json.dumps(rob.to_dict(), allow_nan=False)


def test_robustness_reports_a_change():
    case = two_way(prior=0.3, l1=0.8, l2=0.3)  # posterior A = 0.24 / 0.45 = 0.533
    case.add_scenario("sceptical", {"A": 0.1, "B": 0.9})
    case.add_scenario("uniform", {"A": 0.5, "B": 0.5})
    rob = bl.robustness(case)
    assert not rob.stable
    assert rob.changed_under == ["sceptical"]
    assert rob.verdict == ("the MAP is 'A' under 'base' but changes under 'sceptical' "
                           "(to 'B')")
    sub = bl.robustness(case, ["uniform", "base"])
    assert sub.stable and list(sub.to_frame().index) == ["uniform", "base"]
    with pytest.raises(CaseError, match="no scenario named 'typo'"):
        bl.robustness(case, ["base", "typo"])


# --- one-way sweeps ------------------------------------------------------------------

def test_sweep_prior_against_engine(demo_case):
    h = "relief valve lifted"
    before = snapshot(demo_case)
    values = [0.0, 0.05, 0.2, 0.5, 0.9]
    sw = bl.sweep_prior(demo_case, h, values)
    assert sw.index.name == f"prior of '{h}'" and sw.attrs["base"] == 0.2
    assert np.allclose(sw.sum(axis=1), 1)
    for v in values:
        c = demo_case.copy()
        c.set_prior(h, v, rescale=True)  # the others rescaled in proportion
        assert sw.loc[v].to_numpy() == pytest.approx(c.update().posterior.to_numpy(), abs=1e-12)
    assert snapshot(demo_case) == before
    default = bl.sweep_prior(demo_case, h, points=11)
    assert list(default.index) == pytest.approx(np.linspace(0, 1, 11))


@given(p=st.floats(0.01, 0.99), l1=st.floats(0.01, 0.99), l2=st.floats(0.01, 0.99))
def test_sweep_prior_closed_form(p, l1, l2):
    # two hypotheses: P(A | e) = x l1 / (x l1 + (1 - x) l2)  (Bayes' theorem)
    sw = bl.sweep_prior(two_way(p, l1, l2), "A", [0.0, 0.25, 0.5, 1.0])
    x = np.array([0.0, 0.25, 0.5, 1.0])
    assert sw["A"].to_numpy() == pytest.approx(x * l1 / (x * l1 + (1 - x) * l2), abs=1e-12)
    assert np.all(np.diff(sw["A"].to_numpy()) >= 0)


def test_sweep_likelihood_against_engine(demo_case):
    ev, h = "detector alarm order", "relief valve lifted"
    obs = demo_case.evidence[ev].observed
    sw = bl.sweep_likelihood(demo_case, ev, h, [0.05, 0.3, 0.9])
    assert sw.index.name == f"P({obs} | {h})"
    for v in (0.05, 0.3, 0.9):
        c = demo_case.copy()
        col = demo_case.evidence[ev].likelihoods[h].to_numpy()
        i = demo_case.evidence[ev].states.index(obs)
        new = col * (1 - v) / (1 - col[i])
        new[i] = v
        c.set_likelihood(ev, h, list(new))
        assert sw.loc[v].to_numpy() == pytest.approx(c.update().posterior.to_numpy(), abs=1e-12)
    # sweeping another state moves the observed entry through the renormalization
    other = "cold room first"
    sw2 = bl.sweep_likelihood(demo_case, ev, h, [0.5], state=other)
    c = demo_case.copy()
    col = demo_case.evidence[ev].likelihoods[h]
    new = col * (1 - 0.5) / (1 - col[other])
    new[other] = 0.5
    c.set_likelihood(ev, h, new.to_dict())
    assert sw2.iloc[0].to_numpy() == pytest.approx(c.update().posterior.to_numpy(), abs=1e-12)


def test_sweep_errors(demo_case, small_case):
    before = snapshot(small_case)
    with pytest.raises(CaseError, match="'E3' is not observed"):
        bl.sweep_likelihood(small_case, "E3", "H1")
    with pytest.raises(CaseError, match=r"value 1\.5 is outside \[0, 1\]"):
        bl.sweep_prior(small_case, "H1", [0.2, 1.5])
    with pytest.raises(CaseError, match="no hypothesis named 'H9'"):
        bl.sweep_prior(small_case, "H9")
    with pytest.raises(CaseError, match="points is 1"):
        bl.sweep_prior(small_case, "H1", points=1)
    with pytest.raises(CaseError, match="no scenario named 'nope'"):
        bl.sweep_prior(small_case, "H1", scenario="nope")
    assert snapshot(small_case) == before


# --- break-even priors ---------------------------------------------------------------

def test_break_even_closed_form_two_hypotheses():
    # P(A|e) = P(B|e) when x l1 = (1 - x) l2, i.e. x = l2 / (l1 + l2)
    be = bl.break_even_prior(two_way(0.3, 0.8, 0.3), "A")
    assert be.against == "B"
    assert be.prior == pytest.approx(0.3 / 1.1, rel=1e-12)
    assert be.bayes_factor == pytest.approx(0.8 / 0.3)


def test_break_even_equalises_posteriors(demo_case):
    h = "evaporator coil corrosion"
    be = bl.break_even_prior(demo_case, h)
    assert be.against == "compressor seal leak"  # the strongest rival
    sw = bl.sweep_prior(demo_case, h, [be.prior])
    assert sw.iloc[0][h] == pytest.approx(sw.iloc[0][be.against], rel=1e-9)
    # independent check: a root finder on the sweep (scipy.optimize.brentq)
    root = optimize.brentq(
        lambda x: (lambda r: r[h] - r[be.against])(bl.sweep_prior(demo_case, h, [x]).iloc[0]),
        1e-9, 1 - 1e-9, xtol=1e-14)
    assert be.prior == pytest.approx(root, rel=1e-7)
    lo, hi = be.scenario_range
    assert (lo, hi) == (0.2, 0.35)  # base 0.25, industry 0.35, uniform 0.2
    assert be.inside_scenario_range is (lo <= be.prior <= hi)
    assert "equal posteriors" in be.summary
    json.dumps(be.to_dict(), allow_nan=False)


@given(seed=st.integers(0, 2**32 - 1), n_hyp=st.integers(2, 6))
def test_break_even_property(seed, n_hyp):
    # for any case: at the break-even prior the hypothesis and its rival have
    # equal posteriors (through the sweep, i.e. the engine's arithmetic)
    r = np.random.default_rng(seed)
    hyps = [f"H{i}" for i in range(n_hyp)]
    case = bl.Case("p", hypotheses=dict(zip(hyps, r.dirichlet(np.ones(n_hyp)), strict=True)),
                   normalize=True)
    for e in range(3):
        cols = np.clip(r.dirichlet([1.0, 1.0], size=n_hyp), 1e-3, None)
        cols /= cols.sum(axis=1, keepdims=True)
        case.add_evidence(f"E{e}", states=["a", "b"], observed="a",
                          likelihoods={h: list(cols[j]) for j, h in enumerate(hyps)})
    be = bl.break_even_prior(case, "H0")
    assert 0 < be.prior < 1
    row = bl.sweep_prior(case, "H0", [be.prior]).iloc[0]
    assert row["H0"] == pytest.approx(row[be.against], rel=1e-8)
    assert row[be.against] == pytest.approx(row.drop("H0").max(), rel=1e-12)


def test_break_even_against_named_rival_and_inside_range():
    case = two_way(0.3, 0.8, 0.3)
    case.add_scenario("low", {"A": 0.1, "B": 0.9})
    be = bl.break_even_prior(case, "B", against="A")
    assert be.prior == pytest.approx(0.8 / 1.1)
    assert be.scenario_range == (0.7, 0.9) and be.inside_scenario_range is True
    assert "inside the range the scenarios span" in be.summary


def test_break_even_none_when_eliminated():
    case = two_way(0.3, 0.8, 0.0)
    be = bl.break_even_prior(case, "A")
    assert not be.exists and be.inside_scenario_range is None
    assert "impossible under 'B'" in be.summary
    with pytest.raises(CaseError, match="itself"):
        bl.break_even_prior(case, "A", against="A")


# --- tornado -------------------------------------------------------------------------

def test_tornado_ranges_and_ranking(demo_case):
    before = snapshot(demo_case)
    t = bl.tornado(demo_case)
    assert t.attrs["focus"] == "compressor seal leak"
    assert list(t["swing"]) == sorted(t["swing"], reverse=True)
    n_obs = len(demo_case.observed_evidence)
    assert len(t) == 5 + 5 * n_obs
    pr = t[t["kind"] == "prior"].set_index("hypothesis")
    # scenario spans for priors that differ across scenarios
    assert pr.loc["compressor seal leak", ["low", "high"]].tolist() == [0.2, 0.35]
    assert pr.loc["compressor seal leak", "range_from"] == "scenarios"
    lk = t[t["kind"] == "likelihood"].iloc[0]
    o = lk["base"] / (1 - lk["base"])
    if lk["range_from"] == "±50% in odds":
        assert lk["low"] == pytest.approx(0.5 * o / (1 + 0.5 * o))
        assert lk["high"] == pytest.approx(1.5 * o / (1 + 1.5 * o))
    # every row recomputed through the engine on an edited copy
    for _, row in t.head(6).iterrows():
        for end in ("low", "high"):
            c = demo_case.copy()
            if row["kind"] == "prior":
                c.set_prior(row["hypothesis"], row[end], rescale=True)
            else:
                c.set_likelihood(row["evidence"], row["hypothesis"], row[end],
                                 state=row["state"])
            got = c.update().posterior["compressor seal leak"]
            assert row[f"focus_at_{end}"] == pytest.approx(got, abs=1e-12)
    assert snapshot(demo_case) == before


def test_tornado_uses_given_and_stated_ranges(small_case):
    bl.set_likelihood_uncertainty(small_case, "E1", "H1", low=0.8, high=0.97)
    t = bl.tornado(small_case, focus="H2", ranges={("prior", "H1"): (0.3, 0.6)})
    row = t.set_index("input").loc["prior of 'H1'"]
    assert (row["low"], row["high"], row["range_from"]) == (0.3, 0.6, "given")
    row = t.set_index("input").loc["P(present | H1) of 'E1'"]
    assert (row["low"], row["high"], row["range_from"]) == (0.8, 0.97, "stated range")
    with pytest.raises(CaseError, match="does not contain the value in use"):
        bl.tornado(small_case, ranges={("prior", "H1"): (0.6, 0.9)})
    with pytest.raises(CaseError, match="'E3', which is not observed"):
        bl.tornado(small_case, ranges={("E3", "H1"): (0.1, 0.9)})


# --- the uncertainty section -----------------------------------------------------------

def test_fit_concentration_recovers_a_beta():
    # scipy.stats.beta as the reference: the 5th/95th percentiles of Beta(8, 12)
    lo, hi = stats.beta.ppf([0.05, 0.95], 8, 12)
    k, fl, fh = fit_concentration(0.4, lo, hi, 0.9)
    assert k == pytest.approx(20, rel=1e-5)
    assert (fl, fh) == pytest.approx((lo, hi), rel=1e-6)


@pytest.mark.parametrize("low, best, high", [(0.9, 0.8, 0.95), (0.5, 0.8, 0.7),
                                             (0.9, 0.8, 0.7), (0.0, 0.8, 0.9)])
def test_bad_ranges_leave_case_unchanged(small_case, low, best, high):
    small_case.set_likelihood("E1", "H1", [0.8, 0.2])
    before = snapshot(small_case)
    with pytest.raises(CaseError, match="range"):
        bl.set_likelihood_uncertainty(small_case, "E1", "H1", low=low, best=best, high=high)
    assert snapshot(small_case) == before


def test_uncertainty_input_errors(small_case):
    before = snapshot(small_case)
    with pytest.raises(CaseError, match="best 0.5 differs"):
        bl.set_likelihood_uncertainty(small_case, "E1", "H1", low=0.3, best=0.5, high=0.95)
    with pytest.raises(CaseError, match="exactly one of"):
        bl.set_likelihood_uncertainty(small_case, "E1", "H1", low=0.8, high=0.95,
                                      concentration=5)
    with pytest.raises(CaseError, match="negative"):
        bl.set_likelihood_uncertainty(small_case, "E1", "H1", counts={"present": -2,
                                                                       "absent": 3})
    with pytest.raises(CaseError, match="not a whole number"):
        bl.set_likelihood_uncertainty(small_case, "E1", "H1", counts={"present": 2.5,
                                                                       "absent": 3})
    with pytest.raises(CaseError, match=r"missing states \['absent'\]"):
        bl.set_likelihood_uncertainty(small_case, "E1", "H1", counts={"present": 2})
    with pytest.raises(CaseError, match="strictly between 0 and 1"):
        bl.set_likelihood_uncertainty(small_case, "E1", "H1", low=0.8, high=0.95, level=1.5)
    with pytest.raises(CaseError, match="concentration is -3"):
        bl.set_prior_uncertainty(small_case, concentration=-3)
    with pytest.raises(CaseError, match=r"missing hypotheses \['Other'\]"):
        bl.set_prior_uncertainty(small_case, alpha={"H1": 2, "H2": 3})
    with pytest.raises(CaseError, match="no evidence named 'E9'"):
        bl.set_likelihood_uncertainty(small_case, "E9", "H1", concentration=5)
    assert snapshot(small_case) == before


def test_validator_rejects_raw_sections(small_case):
    with pytest.raises(CaseError, match="unknown field"):
        small_case.set_extra("uncertainty", {"prior": None, "extra": 1})
    with pytest.raises(CaseError, match="kind 'normal'"):
        small_case.set_extra("uncertainty", {"prior": {"kind": "normal"}})
    with pytest.raises(CaseError, match="given twice"):
        e = {"evidence": "E1", "hypothesis": "H1", "kind": "concentration",
             "concentration": 4}
        small_case.set_extra("uncertainty", {"likelihoods": [e, dict(e)]})
    assert "uncertainty" not in small_case.extras
    # tied entries must agree; a raw section is accepted and refused when used
    small_case.set_extra("uncertainty", {"likelihoods": [
        {"evidence": "E1", "hypothesis": "H1", "kind": "concentration",
         "concentration": 4, "tie": "t"},
        {"evidence": "E1", "hypothesis": "H2", "kind": "concentration",
         "concentration": 4, "tie": "t"}]})
    with pytest.raises(CaseError, match="tied as 't'"):
        bl.simulate(small_case, draws=10, seed=1)
    bl.clear_uncertainty(small_case)
    assert "uncertainty" not in small_case.extras


def test_many_columns_in_one_edit(small_case):
    version = small_case.version
    bl.set_likelihood_uncertainty(small_case, ["E1", "E2"], ["H1", "H2"], low=0.05, high=0.95,
                                  state=None)
    assert small_case.version == version + 1
    sec = small_case.extras["uncertainty"]["likelihoods"]
    assert [(e["evidence"], e["hypothesis"]) for e in sec] == [
        ("E1", "H1"), ("E1", "H2"), ("E2", "H1"), ("E2", "H2")]
    # each range fitted around its own column's entry (the observed state)
    assert [e["fit"]["best"] for e in sec] == [0.9, 0.2, 0.7, 0.4]
    before = snapshot(small_case)
    with pytest.raises(CaseError, match="no hypothesis named 'H7'"):
        bl.set_likelihood_uncertainty(small_case, ["E1", "E2"], ["H1", "H7"], concentration=3)
    assert snapshot(small_case) == before


def test_section_round_trip_and_register(small_case, tmp_path):
    bl.set_prior_uncertainty(small_case, bl.prior_from_counts({"H1": 5, "H2": 3, "Other": 2},
                                                              data="invented log"))
    bl.set_likelihood_uncertainty(small_case, "E1", "H1", low=0.75, high=0.97)
    bl.set_likelihood_uncertainty(small_case, "E2", "H2", counts={"high": 6, "low": 4})
    sec = small_case.extras["uncertainty"]
    assert validate_uncertainty(sec, small_case) == sec  # normalized form is a fixed point
    loaded = bl.load_case(small_case.save(tmp_path / "c.json"))
    assert loaded.extras["uncertainty"] == sec
    reg = bl.uncertainty_register(loaded)
    assert list(reg["input"]) == ["priors", "likelihood of 'E1' under 'H1'",
                                  "likelihood of 'E2' under 'H2'"]
    assert reg.loc[0, "parameters"] == "alpha H1: 6, H2: 4, Other: 3"
    assert "invented log" in reg.loc[0, "source"]
    assert reg.loc[1, "range"] == "0.75 / 0.9 / 0.97 for 'present' (90%)"
    assert "fitted" in reg.loc[1, "method"]
    assert "pseudo-count 0.5" in reg.loc[2, "method"]
    assert reg.loc[2, "parameters"] == "alpha high: 6.5, low: 4.5"


def test_stale_entry_is_reported_and_clearable(small_case, tmp_path):
    bl.set_likelihood_uncertainty(small_case, "E2", "H1", concentration=10)
    bl.set_likelihood_uncertainty(small_case, "E1", "H2", concentration=10)
    small_case.remove_evidence("E2")
    # a saved file with a stale entry still loads: nothing saved is lost
    loaded = bl.load_case(small_case.save(tmp_path / "stale.json"))
    assert loaded.extras == small_case.extras
    for c in (small_case, loaded):
        with pytest.raises(CaseError, match="names evidence 'E2'.*clear_uncertainty"):
            bl.simulate(c, draws=10, seed=1)
        with pytest.raises(CaseError, match="names evidence 'E2'"):
            bl.uncertainty_register(c)
        with pytest.raises(CaseError, match="names evidence 'E2'"):
            bl.set_prior_uncertainty(c, concentration=5)
        bl.clear_uncertainty(c, evidence="E2")
        assert [e["evidence"] for e in c.extras["uncertainty"]["likelihoods"]] == ["E1"]
        assert bl.simulate(c, draws=10, seed=1).inputs == ["likelihood of 'E1' under 'H2'"]


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

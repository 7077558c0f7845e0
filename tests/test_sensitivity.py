"""Prior scenarios, sweeps, break-even priors and tornado tables: against the engine,
closed forms and scipy.stats."""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy import optimize

import beliefledger as bl
from beliefledger.errors import CaseError
from helpers.stats import dkw, snapshot  # noqa: F401


def two_way(prior: float = 0.3, l1: float = 0.8, l2: float = 0.3) -> bl.Case:
    """One observed item, two hypotheses (invented numbers)."""
    case = bl.Case("two", hypotheses={"A": prior, "B": 1 - prior}, exhaustive=True)
    case.add_evidence("E", states=["yes", "no"],
                      likelihoods={"A": [l1, 1 - l1], "B": [l2, 1 - l2]}, observed="yes")
    return case


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
    with pytest.raises(CaseError, match="'E3' is pending"):
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
    with pytest.raises(CaseError, match="'E3', which is pending"):
        bl.tornado(small_case, ranges={("E3", "H1"): (0.1, 0.9)})




def test_break_even_prior_with_no_evidence_observed_is_the_rivals_prior():
    """Defect found sealing a case with nothing observed: the break-even prior raised an
    IndexError. With no evidence the Bayes factor is 1, so the MAP and its rival are equal
    when x / (r (1 - x) / (1 - p)) = 1 (the formula in the docstring, by hand)."""
    case = bl.Case("Nothing seen yet (invented)", hypotheses={"a": 0.5, "b": 0.3, "Other": 0.2})
    case.add_evidence("e", states=["yes", "no"], likelihoods={"a": [0.9, 0.1], "b": [0.2, 0.8],
                                                             "Other": [0.5, 0.5]})
    be = bl.break_even_prior(case, "a")
    p, r = 0.5, 0.3
    c = r / (1 - p)
    assert be.against == "b"
    assert be.prior == pytest.approx(c / (1 + c), rel=1e-12)


def test_a_prior_sweep_re_derives_jeffrey_weights_at_every_point():
    from test_uncertain import flip_case

    case = flip_case()
    sweep = bl.sweep_prior(case, "A", [0.2, 0.5, 0.8])
    for x, row in sweep.iterrows():
        c = case.copy()
        c.set_priors({"A": x, "B": 1 - x})
        np.testing.assert_allclose(row.to_numpy(), c.update().posterior_values, rtol=1e-12)
    with pytest.raises(bl.CaseError, match="Jeffrey"):
        bl.break_even_prior(case, "A")
    with pytest.raises(bl.CaseError, match="Jeffrey"):
        bl.tornado(case)


def test_tornado_holds_a_likelihood_form_observation_at_its_weights():
    from test_uncertain import kiln

    case = kiln()
    case.observe("flame colour", likelihood={"blue": 0.2, "yellow": 0.7, "orange": 0.1})
    table = bl.tornado(case)
    assert "flame colour" not in set(table["evidence"])
    assert {"alarm log"} <= set(table["evidence"])
    with pytest.raises(bl.CaseError, match="uncertain observation"):
        bl.sweep_likelihood(case, "flame colour", "burner fault")

"""The uncertainty section: ranges fitted to Beta distributions (checked against
scipy.stats), counts and stated parameters, bad input, storage and the register."""

from __future__ import annotations

import pytest
from scipy import stats

import beliefledger as bl
from beliefledger.case.extras import validate_uncertainty
from beliefledger.errors import CaseError
from beliefledger.uncertainty import fit_concentration
from helpers.stats import dkw, snapshot  # noqa: F401

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



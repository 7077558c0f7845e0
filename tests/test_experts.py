"""Several experts (experts.py, case/experts.py, the pools of elicit.py).

The scenario (a chiller failure at a data hall) and every expert, judgement
and calibration answer are invented test data.
"""

from __future__ import annotations

import json
import math

import pandas as pd
import pytest

import beliefledger as bl
from beliefledger import display
from beliefledger.errors import CaseError, CaseTypeError

HYPS = ["compressor", "refrigerant leak", "other cause"]


def hall() -> bl.Case:
    case = bl.Case("Chiller failure", hypotheses={
        "compressor": {"prior": 0.5, "source": "site records (invented)"},
        "refrigerant leak": {"prior": 0.3, "source": "site records (invented)"},
        "other cause": {"prior": 0.2, "source": "judgement (invented)"}})
    case.add_evidence("oil on floor", states=["yes", "no"],
                      likelihoods={"compressor": [0.6, 0.4], "refrigerant leak": [0.2, 0.8],
                                   "other cause": [0.3, 0.7]},
                      observed="yes", source="maker's note (invented)")
    for name, org in (("Ayla", "maker's field service"), ("Bram", "site engineer"),
                      ("Cato", "insurer's surveyor"), ("Dita", "independent consultant")):
        bl.add_expert(case, name, source={"where": f"{org} (invented)", "who": name,
                                          "why": "has seen such failures"})
    return case


PRIORS = {"Ayla": {"compressor": 0.6, "refrigerant leak": 0.3, "other cause": 0.1},
          "Bram": {"compressor": 0.2, "refrigerant leak": 0.5, "other cause": 0.3},
          "Cato": {"compressor": 0.5, "refrigerant leak": 0.25, "other cause": 0.25},
          "Dita": {"compressor": 0.1, "refrigerant leak": 0.8, "other cause": 0.1}}


# --------------------------------------------------------------------------- with the case

def test_judgements_stay_with_the_case_and_round_trip():
    case = hall()
    bl.set_expert_prior(case, "Ayla", {"compressor": (0.45, 0.6, 0.75),
                                       "refrigerant leak": (0.2, 0.3, 0.45),
                                       "other cause": (0.05, 0.1, 0.2)},
                        source={"where": "interview 3 March (invented)"})
    bl.set_expert_likelihood(case, "Bram", "oil on floor", "compressor", (0.5, 0.7, 0.85),
                             state="yes")
    table = bl.expert_judgements(case)
    assert len(table) == 5
    row = table[(table["expert"] == "Bram") & (table["key"] == "no")].iloc[0]
    assert (row["low"], row["best"], row["high"]) == pytest.approx((0.15, 0.3, 0.5))
    text = bl.casefile.dumps(case)
    back = bl.casefile.loads(text)
    assert bl.casefile.dumps(back) == text
    pd.testing.assert_frame_equal(bl.expert_judgements(back), table)
    # the case's own numbers are untouched until a pool is applied
    assert case.base_priors["compressor"] == 0.5


def test_pool_from_the_case_and_apply_it_for_the_monte_carlo():
    case = hall()
    for e, pri in PRIORS.items():
        bl.set_expert_prior(case, e, pri)
    bl.set_expert_likelihood(case, "Ayla", "oil on floor", "refrigerant leak",
                             {"yes": (0.1, 0.2, 0.35), "no": (0.65, 0.8, 0.9)})
    bl.set_expert_likelihood(case, "Bram", "oil on floor", "refrigerant leak",
                             {"yes": (0.2, 0.35, 0.5), "no": (0.5, 0.65, 0.8)})
    pri = bl.pool(case, "prior")
    assert pri.values.to_dict() == pytest.approx({"compressor": 0.35,
                                                  "refrigerant leak": 0.4625,
                                                  "other cause": 0.1875})
    assert pri.weighting == "equal" and "4 experts" in pri.source.where
    lik = bl.pool(case, ("oil on floor", "refrigerant leak"), weights={"Ayla": 1, "Bram": 3})
    assert lik.values["yes"] == pytest.approx(0.25 * 0.2 + 0.75 * 0.35)
    bl.apply_pool(case, pri)
    bl.apply_pool(case, lik)
    assert case.base_priors.to_dict() == pytest.approx(pri.values.to_dict())
    assert case.evidence["oil on floor"].likelihoods["refrigerant leak"].tolist() == \
        pytest.approx([lik.values["yes"], lik.values["no"]])
    entry = bl.uncertainty.current_uncertainty(case)["likelihoods"][0]
    assert entry["fit"]["state"] == "yes"
    assert entry["fit"]["low"] == pytest.approx(lik.ranges.loc["yes", "low"])
    assert entry["fit"]["high"] == pytest.approx(lik.ranges.loc["yes", "high"])
    assert "prior" not in bl.uncertainty.current_uncertainty(case)  # no prior ranges given
    kinds = [a["kind"] for a in case.assumptions]
    assert kinds.count("expert-pool") == 2
    result = bl.simulate(case, draws=2000, seed=3)
    assert "likelihood of 'oil on floor' under 'refrigerant leak'" in result.inputs


def test_pooled_prior_ranges_set_a_dirichlet_on_the_priors():
    case = hall()
    bl.set_expert_prior(case, "Ayla", {"compressor": (0.45, 0.6, 0.75),
                                       "refrigerant leak": (0.2, 0.3, 0.45),
                                       "other cause": (0.05, 0.1, 0.2)})
    bl.set_expert_prior(case, "Bram", {"compressor": (0.3, 0.4, 0.55),
                                       "refrigerant leak": (0.3, 0.45, 0.6),
                                       "other cause": (0.08, 0.15, 0.25)})
    pooled = bl.pool(case)
    bl.apply_pool(case, pooled)
    prior = bl.uncertainty.current_uncertainty(case)["prior"]
    assert prior["kind"] == "concentration" and "geometric mean" in prior["method"]


def test_the_conclusion_under_each_expert_alone():
    case = hall()
    for e, pri in PRIORS.items():
        bl.set_expert_prior(case, e, pri)
    review = bl.expert_review(case)
    # by hand: oil on floor 'yes' gives 0.6 / 0.2 / 0.3; the case's MAP is 'compressor'
    # (0.30 vs 0.06 vs 0.06); Dita's 0.1 / 0.8 / 0.1 gives 0.06 / 0.16 / 0.03
    assert review.reference == "compressor"
    assert review.frame.loc["Dita", "map"] == "refrigerant leak"
    assert review.frame.loc["Dita", "p_map"] == pytest.approx(0.16 / 0.25)
    assert review.verdict == ("MAP 'compressor' unchanged under 3 of 4 experts (changes under "
                              "'Dita': MAP 'refrigerant leak')")
    spread = review.spread.set_index("key")
    assert spread.loc["compressor", "lowest"] == 0.1 and spread.loc["compressor", "highest"] == 0.6
    assert spread.loc["compressor", "case"] == 0.5
    html = display.experts_html(review)
    assert "unchanged under 3 of 4 experts" in html and "insurer&#x27;s surveyor" in html
    assert review._repr_html_() == html


def test_performance_weights_feed_the_pool():
    case = hall()
    for e in ("Ayla", "Bram"):
        bl.set_expert_prior(case, e, PRIORS[e])
    truths = {f"q{i}": float(10 + i) for i in range(10)}
    good = {q: [x - 3, x - 0.5 if i % 2 else x + 0.5, x + 3]
            for i, (q, x) in enumerate(truths.items())}
    bad = {q: [x + 1, x + 2, x + 3] for q, x in truths.items()}  # always too high
    bl.set_calibration(case, truths, {"Ayla": good, "Bram": bad})
    scores = bl.calibration_scores(case)
    assert scores.frame.loc["Ayla", "calibration"] > 0.5 > scores.frame.loc["Bram",
                                                                           "calibration"]
    pooled = bl.pool(case, weights="performance")
    w = scores.weights
    assert pooled.weights.to_dict() == pytest.approx((w / w.sum()).to_dict())
    assert pooled.values["compressor"] == pytest.approx(w["Ayla"] * 0.6 + w["Bram"] * 0.2)
    with pytest.raises(CaseError, match="no expert reaches the calibration cutoff"):
        bl.pool(case, weights="performance", cutoff=0.999999)
    bl.set_expert_prior(case, "Cato", PRIORS["Cato"])
    with pytest.raises(CaseError, match="answered no calibration question"):
        bl.pool(case, weights="performance")


@pytest.mark.parametrize("call, match", [
    (lambda c: bl.set_expert_prior(c, "Zed", PRIORS["Ayla"]), "no expert named 'Zed'"),
    (lambda c: bl.set_expert_prior(c, "Ayla", {"compressor": 0.6, "refrigerant leak": 0.3,
                                               "other cause": 0.2}), "sum to 1.1, not 1"),
    (lambda c: bl.set_expert_prior(c, "Ayla", {"compressor": 0.7, "refrigerant leak": 0.3}),
     r"misses \['other cause'\]"),
    (lambda c: bl.set_expert_prior(c, "Ayla", {"compressor": (0.7, 0.6, 0.8),
                                               "refrigerant leak": 0.3, "other cause": 0.1}),
     "not in order"),
    (lambda c: bl.set_expert_likelihood(c, "Ayla", "oil on floor", "compressor",
                                        {"yes": 0.6, "maybe": 0.4}),
     r"names unknown \['maybe'\]"),
    (lambda c: bl.set_expert_likelihood(c, "Ayla", "oil on floor", "compressor", 1.4,
                                        state="yes"), "between 0 and 1"),
    (lambda c: bl.add_expert(c, "Ayla"), "already listed"),
    (lambda c: bl.set_calibration(c, {"q1": 3.0}, {"Zed": {"q1": [1, 2, 4]}}),
     "no expert named 'Zed'"),
    (lambda c: bl.set_calibration(c, {"q1": 3.0}, {"Ayla": {"q1": [4, 2, 1]}}),
     "increasing numbers"),
])
def test_bad_expert_input_is_refused_and_changes_nothing(call, match):
    case = hall()
    bl.set_expert_prior(case, "Bram", PRIORS["Bram"])
    before = case.to_dict()
    with pytest.raises((CaseError, CaseTypeError), match=match):
        call(case)
    assert case.to_dict() == before


def test_bad_pool_weights_are_refused_naming_the_fix():
    case = hall()
    for e, pri in PRIORS.items():
        bl.set_expert_prior(case, e, pri)
    before = case.to_dict()
    for weights, match in (({"Ayla": -1, "Bram": 1, "Cato": 1, "Dita": 1}, "below zero"),
                           ({"Ayla": 0, "Bram": 0, "Cato": 0, "Dita": 0}, "all 0"),
                           ({"Ayla": 1, "Zed": 1}, r"unknown expert\(s\) \['Zed'\]"),
                           ("loudest", "is not 'equal', 'performance'"),
                           ({"Ayla": float("nan"), "Bram": 1, "Cato": 1, "Dita": 1}, "finite")):
        with pytest.raises(CaseError, match=match):
            bl.pool(case, weights=weights)
    with pytest.raises(CaseError, match="pool method 'median'"):
        bl.pool(case, method="median")
    with pytest.raises(CaseError, match="no expert has judged"):
        bl.pool(case, ("oil on floor", "compressor"))
    with pytest.raises(CaseError, match="no calibration questions"):
        bl.pool(case, weights="performance")
    assert case.to_dict() == before


def test_judgements_for_an_earlier_hypothesis_set_are_kept_but_not_pooled():
    case = hall()
    bl.set_expert_prior(case, "Ayla", PRIORS["Ayla"])
    bl.set_expert_prior(case, "Bram", PRIORS["Bram"])
    case.rename_hypothesis("other cause", "something else")
    assert bl.pool(case).values["something else"] == pytest.approx(0.2)  # renames follow
    case.add_hypothesis("fan motor", 0.05, likelihoods={"oil on floor": [0.1, 0.9]},
                        take_prior_from="something else")
    with pytest.raises(CaseError, match="earlier hypothesis set"):
        bl.pool(case)
    assert bl.expert_judgements(case)["stale"].all()
    review = bl.expert_review(case)
    assert len(review.stale) == 2 and len(review.frame) == 0
    assert "earlier hypothesis set" in display.experts_html(review)
    back = bl.casefile.loads(bl.casefile.dumps(case))  # stale judgements still load
    assert len(bl.expert_judgements(back)) == 6


def test_a_file_naming_an_unknown_expert_is_refused():
    case = hall()
    bl.set_expert_prior(case, "Ayla", PRIORS["Ayla"])
    data = json.loads(bl.casefile.dumps(case))
    data["case"]["extras"]["experts"]["judgements"][0]["expert"] = "Zed"
    with pytest.raises(bl.CaseFileError, match="names expert 'Zed'"):
        bl.casefile.loads(json.dumps(data))


def test_remove_expert_drops_their_input():
    case = hall()
    bl.set_expert_prior(case, "Ayla", PRIORS["Ayla"])
    bl.remove_expert(case, "Ayla")
    assert "Ayla" not in bl.expert_judgements(case)["expert"].tolist()
    for e in ("Bram", "Cato", "Dita"):
        bl.remove_expert(case, e)
    assert "experts" not in case.extras
    assert math.isfinite(case.update().posterior.sum())

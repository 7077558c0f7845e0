"""The tidy tables behind every chart, checked against the engine's ledger.

Log-odds are checked against ``scipy.special.logit`` (a reference
implementation of ln(p / (1 - p))); weights against measures.step_weights.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.special import logit

import beliefledger as bl
from beliefledger import chartdata
from beliefledger.measures import format_lr, step_weights

DB_PER_NAT = 10 / math.log(10)




def test_waterfall_bars_chain_and_match_the_weights(demo_case):
    ledger = demo_case.update()
    focus = "relief valve lifted"
    data = chartdata.waterfall_data(ledger, focus)
    w = step_weights(ledger, focus)
    mid = data.iloc[1:-1]
    np.testing.assert_allclose(mid["decibans"], w["decibans"])
    assert list(mid["verbal"]) == list(w["verbal"])
    # each bar starts where the previous one ended
    np.testing.assert_allclose(data["start_db"].iloc[1:-1].to_numpy(),
                               data["end_db"].iloc[:-2].to_numpy())
    # prior and posterior ends are the log-odds of the focus against the rest,
    # checked against scipy.special.logit of the ledger's probabilities
    p0, p1 = ledger.steps[focus].iloc[0], ledger.posterior[focus]
    assert data["end_db"].iloc[0] == pytest.approx(logit(p0) * DB_PER_NAT)
    assert data["end_db"].iloc[-1] == pytest.approx(logit(p1) * DB_PER_NAT)
    # and the steps add up from one to the other
    assert data["end_db"].iloc[0] + mid["decibans"].sum() == pytest.approx(data["end_db"].iloc[-1])
    assert list(data["kind"].iloc[1:-1]) == ["for" if d > 0 else "against" if d < 0 else "neutral"
                                             for d in w["decibans"]]
    np.testing.assert_allclose(data["probability"].iloc[:-1], ledger.steps[focus].to_numpy())
    assert data["probability"].iloc[-1] == ledger.posterior[focus]
    # the prior and posterior are levels (positions on the axis), not bars from zero
    for k in (0, -1):
        assert data["start_db"].iloc[k] == data["end_db"].iloc[k]
    np.testing.assert_allclose(mid["bayes_factor"], w["bayes_factor"])


def test_waterfall_labels_carry_decibans_and_the_likelihood_ratio(demo_case):
    ledger = demo_case.update()
    data = chartdata.waterfall_data(ledger)
    row = data.iloc[1]
    lines = [ln for ln in row["label"].split("\n") if ln]  # padded at the top
    assert lines[0] == f"{row['decibans']:+.1f} decibans"  # never "dB": not decibels
    # the verbal strength sits beside the likelihood ratio it describes
    assert " ".join(lines[1:]).startswith(f"{format_lr(row['bayes_factor'])} \u2014 "
                                          f"{row['verbal'].split()[0]}")
    assert "below 2" not in "".join(data["label"])
    assert all("dB" not in label for label in data["label"])
    assert all(label.count("\n") == chartdata.LABEL_LINES - 1 for label in data["label"])


def test_waterfall_draws_infinite_log_odds_at_the_edge(eliminating_case):
    ledger = eliminating_case.update()
    data = chartdata.waterfall_data(ledger, "A")
    assert math.isinf(data["decibans"].iloc[1]) and data["decibans"].iloc[1] < 0
    assert data["clipped"].iloc[1] and data["clipped"].iloc[-1]
    assert np.isfinite(data[["start_db", "end_db"]].to_numpy()).all()
    assert "-inf decibans" in data["label"].iloc[1]
    assert data["end_db"].iloc[-1] < data["end_db"].iloc[0]


def test_waterfall_step_named_like_an_endpoint_does_not_collide():
    case = bl.Case("names", hypotheses={"A": 0.6, "Other": 0.4})
    case.add_evidence("prior", states=["s", "t"], likelihoods={"A": [0.8, 0.2],
                                                               "Other": [0.3, 0.7]},
                      observed="s")
    data = chartdata.waterfall_data(case.update())
    assert list(data["step"]) == ["prior", "prior (evidence)", "posterior"]


def test_prior_posterior_max_bars_keeps_the_map(small_case):
    ledger = small_case.update()
    data = chartdata.prior_posterior_data(ledger, max_bars=1)
    assert set(data["hypothesis"]) >= {ledger.map_hypothesis}
    assert data["hypothesis"].nunique() <= 2


@pytest.mark.parametrize("factor,text", [
    (2.5, "LR 2.5"), (1.5, "LR 1.5"), (0.5, "LR 0.5"), (0.025, "LR 1/40"), (0.004, "LR 1/250"),
    (12_000.4, "LR 12,000"), (0.0, "LR 0"), (math.inf, "LR inf"), (0.09200000000000001, "LR 1/10.9"),
])
def test_likelihood_ratios_read_as_people_write_them(factor, text):
    assert format_lr(factor) == text


def test_decibans_and_probabilities_as_text():
    assert chartdata.fmt_decibans(3.0103) == "+3.0 decibans"
    assert chartdata.fmt_decibans(-math.inf) == "-inf decibans"
    assert chartdata.fmt_probability(0.5678) == "P=0.568"
    assert chartdata.fmt_probability(0.0) == "P=0"

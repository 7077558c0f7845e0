"""Hypothesis groups (case/rollups.py) and reading a ledger at group level.

The scenario (a conveyor stoppage at a parcel depot) and its numbers are
invented test data.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

import beliefledger as bl
from beliefledger import chartdata, display
from beliefledger.errors import CaseError
from test_revision import NEW_COLS, depot


def grouped() -> bl.Case:
    case = depot()
    case.group_hypotheses("mechanical", ["belt slip", "motor overload"],
                          note="parts of the conveyor itself (invented)")
    return case


def test_group_posterior_is_exactly_the_members_sum():
    led = grouped().update()
    gp = led.group_posterior
    assert list(gp.index) == ["mechanical", "other cause"]
    assert gp["mechanical"] == math.fsum([led.posterior["belt slip"],
                                          led.posterior["motor overload"]])
    assert gp["other cause"] == led.posterior["other cause"]
    assert gp.sum() == pytest.approx(1, abs=1e-15)
    steps = led.group_steps
    np.testing.assert_allclose(steps["mechanical"],
                               led.steps["belt slip"] + led.steps["motor overload"], rtol=1e-15)
    assert led.group_map == "mechanical"


@given(seed=st.integers(0, 10_000))
def test_group_sums_hold_for_random_cases(seed):
    rng = np.random.default_rng(seed)
    n = int(rng.integers(3, 8))
    hyps = {f"H{j}": float(p) for j, p in enumerate(rng.dirichlet(np.ones(n)))}
    case = bl.Case("random (invented)", hypotheses=hyps, normalize=True)
    case.add_evidence("E", states=["a", "b"], likelihoods={h: [float(x), 1 - float(x)]
                                                           for h, x in zip(hyps, rng.random(n),
                                                                           strict=True)},
                      observed="a")
    members = [h for h in hyps if rng.random() < 0.5] or ["H0"]
    case.group_hypotheses("G", members)
    led = case.update()
    assert led.group_posterior["G"] == math.fsum(led.posterior[m] for m in members)


def test_waterfall_at_group_level():
    # log-odds of the group against the rest at every step, by hand from the steps table
    led = grouped().update()
    w = bl.step_weights(led, "mechanical")
    g = led.steps["belt slip"] + led.steps["motor overload"]
    lo = np.log(g / (1 - g)).to_numpy()
    np.testing.assert_allclose(w["log_odds_before"], lo[:-1], rtol=1e-12)
    np.testing.assert_allclose(w["log_odds_after"], lo[1:], rtol=1e-12)
    data = chartdata.waterfall_data(led, "mechanical")
    np.testing.assert_allclose(data["probability"].iloc[:-1], g, rtol=1e-12)
    svg = bl.figures.waterfall_figure(led, focus="mechanical").svg
    assert "Weight of evidence for &#x27;mechanical&#x27;" in svg
    with pytest.raises(CaseError, match="or hypothesis group"):
        bl.step_weights(led, "ghost")


def test_groups_follow_renames_removals_additions_and_saves():
    case = grouped()
    case.rename_hypothesis("belt slip", "slipping belt")
    assert case.hypothesis_groups["mechanical"] == ("slipping belt", "motor overload")
    case.add_hypothesis("drive jam", 0.05, likelihoods=NEW_COLS, take_prior_from="other cause",
                        group="mechanical")
    assert case.hypothesis_groups["mechanical"][-1] == "drive jam"
    text = bl.casefile.dumps(case)
    back = bl.casefile.loads(text)
    assert back.hypothesis_groups == case.hypothesis_groups
    assert bl.casefile.dumps(back) == text
    for h in ("slipping belt", "motor overload", "drive jam"):
        case.remove_hypothesis(h)
    assert case.hypothesis_groups == {}  # the group left empty went
    assert "hypothesis_groups" not in case.extras


def test_bad_groups_are_refused_and_change_nothing():
    case = grouped()
    before = case.to_dict()
    for args, match in ((("mechanical", ["other cause"]), "already exists"),
                        (("human", ["belt slip"]), "in groups 'mechanical' and 'human'"),
                        (("other cause", ["other cause"]), "name of a hypothesis"),
                        (("human", ["ghost"]), "no hypothesis named 'ghost'"),
                        (("human", []), "non-empty list"),
                        (("human", "belt slip"), "must be a list")):
        with pytest.raises((CaseError, bl.CaseTypeError), match=match):
            case.group_hypotheses(*args)
        assert case.to_dict() == before
    with pytest.raises(CaseError, match="no hypothesis group named 'ghost'"):
        case.ungroup_hypotheses("ghost")
    with pytest.raises(CaseError, match="which the case does not have"):
        case.add_hypothesis("drive jam", 0.05, likelihoods=NEW_COLS,
                            take_prior_from="other cause", group="ghost")
    assert case.to_dict() == before
    with pytest.raises(CaseError, match="name of a hypothesis"):
        case.add_hypothesis("mechanical", 0.0, likelihoods=NEW_COLS)
    assert case.to_dict() == before
    case.ungroup_hypotheses("mechanical")
    assert case.hypothesis_groups == {}


def test_groups_html_names_members_and_explains_why_not_merged():
    led = grouped().update()
    html = display.groups_html(led)
    assert "mechanical" in html and "belt slip, motor overload" in html
    assert "not be exact" in html
    assert display.groups_html(depot().update()) == ""
    assert "Hypothesis groups" in display.ledger_html(led)

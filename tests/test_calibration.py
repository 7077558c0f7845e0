"""Cooke's classical model (calibration.py): calibration and information scores, weights.

Calibration answers are invented test data, built so that each expert's
realizations fall in chosen inter-quantile bins.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

import beliefledger as bl
from beliefledger.calibration import classical_model
from beliefledger.errors import CaseError

P = np.array([0.05, 0.45, 0.45, 0.05])  # the bins of the 5 %, 50 %, 95 % quantiles


def _answers(bins: list[int]) -> tuple[dict[str, float], dict[str, list[float]]]:
    """Questions whose truth is 100 + i, and quantiles that put it in bin ``bins[i]``."""
    truths, quants = {}, {}
    for i, b in enumerate(bins):
        x = 100.0 + i
        offsets = {0: (1, 2, 3), 1: (-1, 1, 2), 2: (-2, -1, 1), 3: (-3, -2, -1)}[b]
        truths[f"q{i}"] = x
        quants[f"q{i}"] = [x + o for o in offsets]
    return truths, quants


def _relative_information(counts: list[int]) -> float:
    s = np.array(counts) / sum(counts)
    return float(sum(si * math.log(si / pi) for si, pi in zip(s, P, strict=True) if si > 0))


# Cooke (1991), Experts in Uncertainty, the classical model (recalled from memory): with s
# the share of realizations in each bin and N questions, the calibration score is the
# chance that a chi-square variable with (bins - 1) = 3 degrees of freedom exceeds
# 2 N I(s, p). Checked against scipy.stats.chi2 on that formula.
@pytest.mark.parametrize("bins", [[0, 1, 1, 1, 1, 2, 2, 2, 2, 3],   # s = p: perfect
                                  [1, 1, 1, 2, 2, 2, 1, 2, 1, 2],   # too wide
                                  [0, 3, 0, 3, 0, 3, 0, 3, 0, 3],   # always outside
                                  [1, 2, 1, 2, 0, 1, 2, 1, 2, 1]])
def test_calibration_score_is_the_published_chi_square_tail(bins):
    truths, quants = _answers(bins)
    scores = classical_model(truths, {"E": quants})
    counts = [bins.count(k) for k in range(4)]
    assert scores.frame.loc["E", "hits"] == counts
    expected = stats.chi2.sf(2 * len(bins) * _relative_information(counts), 3)
    assert scores.frame.loc["E", "calibration"] == pytest.approx(expected, rel=1e-10)


def test_calibration_by_hand():
    # s = (0.1, 0.4, 0.4, 0.1): I = 0.2 ln 2 + 0.8 ln(8/9) = 0.138629 - 0.094226 = 0.044403;
    # 2 N I = 0.88806;
    # chi2(3) tail there 0.828 (scipy, three figures)
    truths, quants = _answers([0, 1, 1, 1, 1, 2, 2, 2, 2, 3])
    cal = classical_model(truths, {"E": quants}).frame.loc["E", "calibration"]
    assert 0.2 * math.log(2) + 0.8 * math.log(8 / 9) == pytest.approx(0.044403, abs=5e-7)
    assert cal == pytest.approx(0.828, abs=5e-4)


def test_information_score_by_hand():
    # One question, truth 4; expert A's quantiles 2 / 5 / 9, B's 1 / 3 / 10. The intrinsic
    # range is [1, 10] widened by 10 % of its span each side: [0.1, 10.9] (10.8 long).
    # A's information: sum p_j ln(p_j / (width_j / 10.8)) over widths 1.9, 3, 4, 1.9.
    scores = classical_model({"q": 4.0}, {"A": {"q": [2, 5, 9]}, "B": {"q": [1, 3, 10]}})
    widths = np.array([1.9, 3, 4, 1.9])
    by_hand = float(np.sum(P * np.log(P / (widths / 10.8))))
    assert scores.frame.loc["A", "information"] == pytest.approx(by_hand, rel=1e-12)
    widths_b = np.array([0.9, 2, 7, 0.9])
    assert scores.frame.loc["B", "information"] == pytest.approx(
        float(np.sum(P * np.log(P / (widths_b / 10.8)))), rel=1e-12)
    f = scores.frame
    assert f["weight"].sum() == pytest.approx(1)
    assert f.loc["A", "unnormalized"] == pytest.approx(f.loc["A", "calibration"]
                                                       * f.loc["A", "information"])


def test_log_scale_questions_score_the_logs():
    truths = {"q": 100.0}
    a = classical_model(truths, {"A": {"q": [10, 50, 1000]}, "B": {"q": [20, 200, 500]}},
                        scales={"q": "log"})
    b = classical_model({"q": math.log(100)}, {
        "A": {"q": [math.log(10), math.log(50), math.log(1000)]},
        "B": {"q": [math.log(20), math.log(200), math.log(500)]}})
    np.testing.assert_allclose(a.frame["information"], b.frame["information"], rtol=1e-12)


def test_cutoff_and_bad_input():
    truths, good = _answers([0, 1, 1, 1, 1, 2, 2, 2, 2, 3])
    _, bad = _answers([0, 3] * 5)
    scores = classical_model(truths, {"good": good, "bad": bad}, cutoff=0.01)
    assert scores.frame.loc["bad", "weight"] == 0 and scores.frame.loc["good", "weight"] == 1
    with pytest.raises(CaseError, match="increasing"):
        classical_model({"q": 1.0}, {"A": {"q": [3, 2, 1]}})
    with pytest.raises(CaseError, match="every calibration question"):
        classical_model({"q": 1.0, "r": 2.0}, {"A": {"q": [0, 1, 2]}})
    with pytest.raises(CaseError, match="log scale"):
        classical_model({"q": 1.0}, {"A": {"q": [-1, 1, 2]}}, scales={"q": "log"})
    with pytest.raises(CaseError, match="no calibration question"):
        classical_model({}, {"A": {}})


def test_calibration_kept_with_the_case_round_trips():
    case = bl.Case("calibration (invented)", hypotheses={"A": 0.5, "Other": 0.5})
    bl.add_expert(case, "Ayla", source="invented")
    truths, quants = _answers([0, 1, 1, 2, 3])
    bl.set_calibration(case, truths, {"Ayla": quants}, scales={"q0": "uniform"})
    back = bl.casefile.loads(bl.casefile.dumps(case))
    assert bl.calibration_scores(back).frame.to_dict() == \
        bl.calibration_scores(case).frame.to_dict()

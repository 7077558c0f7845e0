"""Performance weights for experts from calibration questions: Cooke's classical model.

Each expert gives quantiles (usually 5 %, 50 %, 95 %) for questions whose
true values the analyst knows; the model scores how often the truths fall
in each inter-quantile bin against the bins' probabilities (calibration)
and how narrow the quantiles are (information), and weighs each expert by
their product. :func:`beliefledger.pool` uses the weights
(``weights="performance"``).

References
----------
Cooke, R. M. (1991). *Experts in Uncertainty*, Oxford University Press
(recalled from memory; the calibration score is checked against
``scipy.stats.chi2`` on the formula as published, and the information score
by hand).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from ._checks import check_positive, fmt_g
from .errors import CaseError

if TYPE_CHECKING:
    from .case import Case

_g = fmt_g


class CalibrationScores:
    """The classical model's scores of each expert on the calibration questions.

    ``frame`` has one row per expert: ``calibration`` (the p-value of the
    chi-square statistic 2·N·I(s, p)), ``information`` (mean relative
    information against the uniform background on each question's intrinsic
    range), ``hits`` (realizations per inter-quantile bin), ``unnormalized``
    (calibration x information, 0 below the cutoff) and ``weight`` (that,
    normalized). ``weights`` is the last column as a Series.

    References
    ----------
    Cooke (1991), *Experts in Uncertainty* (recalled from memory;
    the calibration score is checked against ``scipy.stats.chi2`` on the
    formula as published).
    """

    def __init__(self, frame: pd.DataFrame, quantiles: tuple[float, ...], n: int,
                 cutoff: float, overshoot: float) -> None:
        self.frame, self.quantiles, self.n_questions = frame, quantiles, n
        self.cutoff, self.overshoot = cutoff, overshoot

    @property
    def weights(self) -> pd.Series:
        return self.frame["weight"].copy()

    def __repr__(self) -> str:
        best = self.frame["weight"].idxmax()
        return (f"CalibrationScores({len(self.frame)} experts on {self.n_questions} questions; "
                f"highest weight '{best}' {self.frame.loc[best, 'weight']:.3g})")


def classical_model(realizations: Mapping[str, float],
                    assessments: Mapping[str, Mapping[str, Any]], *,
                    quantiles: Any = (0.05, 0.5, 0.95), scales: Mapping[str, str] | None = None,
                    overshoot: float = 0.1, cutoff: float = 0.0) -> CalibrationScores:
    """Performance weights from calibration questions (Cooke's classical model).

    Parameters
    ----------
    realizations : mapping
        Question -> its true value (known to the analyst, not the experts).
    assessments : mapping
        Expert -> {question: the expert's quantiles}, at ``quantiles``.
    quantiles : sequence of float
        The probabilities of the quantiles asked for (default 5 %, 50 %, 95 %).
    scales : mapping, optional
        Question -> ``"uniform"`` (default) or ``"log"`` (the background measure
        for the information score; values are then taken in logs).
    overshoot : float
        How far the intrinsic range of a question reaches beyond the smallest
        and largest value named (10 % of their span, the usual choice).
    cutoff : float
        Experts whose calibration score is below it get weight 0.

    For each expert, ``s`` is the share of realizations in each of the bins
    the quantiles cut, ``p`` the bins' probabilities (0.05, 0.45, 0.45, 0.05),
    I(s, p) = Σ s_j ln(s_j / p_j) and N the number of questions; the
    calibration score is P(χ²(m) ≥ 2·N·I(s, p)) with m = bins - 1. The
    information score is the mean over questions of
    Σ p_j ln(p_j / ((x_j - x_{j-1}) / (U - L))), the expert's interpolated
    distribution against the uniform one on the intrinsic range [L, U]. The
    weight is calibration x information (0 below ``cutoff``), normalized.
    """
    from scipy import special

    qs = tuple(float(q) for q in quantiles)
    if not qs or any(not 0 < q < 1 for q in qs) or any(b <= a for a, b in zip(qs, qs[1:], strict=False)):
        raise CaseError(f"quantiles {quantiles!r:.60} must be increasing probabilities strictly "
                        "between 0 and 1")
    p = np.diff(np.array([0.0, *qs, 1.0]))
    questions = list(realizations)
    if not questions:
        raise CaseError("no calibration question; give at least one with its realization")
    if not assessments:
        raise CaseError("no expert assessed the calibration questions")
    scales = dict(scales or {})
    for e, rows in assessments.items():
        if set(rows) != set(questions):
            raise CaseError(f"expert '{e}' must assess every calibration question {questions}")
    kov = check_positive("overshoot", overshoot, allow_zero=True)

    def tr(q: str, x: float) -> float:
        if scales.get(q, "uniform") == "log":
            if x <= 0:
                raise CaseError(f"calibration question '{q}' is on the log scale, but a value "
                                f"is {x:g}; log-scale values must be above 0")
            return math.log(x)
        return float(x)

    vals = {e: {q: [tr(q, v) for v in rows[q]] for q in questions}
            for e, rows in assessments.items()}
    for e, rows in vals.items():
        for q, v in rows.items():
            if len(v) != len(qs) or any(b <= a for a, b in zip(v, v[1:], strict=False)):
                raise CaseError(f"expert '{e}' on calibration question '{q}': give {len(qs)} "
                                f"increasing quantiles (at {', '.join(_g(x) for x in qs)})")
    real = {q: tr(q, realizations[q]) for q in questions}
    n = len(questions)
    out = []
    for e, rows in vals.items():
        hits = np.zeros(len(p))
        info = 0.0
        for q in questions:
            x = rows[q]
            hits[int(np.searchsorted(x, real[q], side="right"))] += 1
            lo = min(min(r[q][0] for r in vals.values()), real[q])
            hi = max(max(r[q][-1] for r in vals.values()), real[q])
            span = hi - lo
            if span <= 0:
                raise CaseError(f"calibration question '{q}': every value named is the same, so "
                                "it has no range to score information on")
            pts = np.array([lo - kov * span, *x, hi + kov * span])
            width = np.diff(pts) / (pts[-1] - pts[0])
            info += float(np.sum(p * np.log(p / width)))
        s = hits / n
        with np.errstate(divide="ignore", invalid="ignore"):
            rel = float(np.sum(np.where(s > 0, s * np.log(s / p), 0.0)))
        cal = float(special.gammaincc((len(p) - 1) / 2, n * rel))  # P(chi2(m) >= 2 N I)
        inf_score = info / n
        out.append({"expert": e, "calibration": cal, "information": inf_score,
                    "hits": [int(h) for h in hits],
                    "unnormalized": cal * inf_score if cal >= cutoff else 0.0})
    frame = pd.DataFrame(out).set_index("expert")
    total = frame["unnormalized"].sum()
    if total <= 0:
        raise CaseError(f"no expert reaches the calibration cutoff {_g(cutoff)}; lower it, or "
                        "use equal or stated weights")
    frame["weight"] = frame["unnormalized"] / total
    return CalibrationScores(frame, qs, n, float(cutoff), kov)


def calibration_scores(case: Case, *, cutoff: float = 0.0) -> CalibrationScores:
    """The classical model run on the calibration questions kept with ``case``
    (:func:`beliefledger.set_calibration`)."""
    from .case.experts import experts_section

    cal = experts_section(case).get("calibration")
    if not cal:
        raise CaseError("the case has no calibration questions; add them with "
                        "bl.set_calibration(case, questions, assessments) for performance "
                        "weights, or use equal or stated weights")
    return classical_model({q["name"]: q["realization"] for q in cal["questions"]},
                           cal["assessments"], quantiles=cal["quantiles"],
                           scales={q["name"]: q["scale"] for q in cal["questions"]},
                           cutoff=cutoff)


__all__ = ["classical_model", "calibration_scores", "CalibrationScores"]

"""Odds, likelihood ratios, Bayes factors, weight of evidence and verbal scales.

References
----------
Good, I. J., Michie, D. & Timms, G. (1945). *General Report on Tunny*, "The
deciban": weight of evidence in decibans, 10·log10 of the Bayes factor.
Kass, R. E. & Raftery, A. E. (1995). Bayes factors. *JASA* 90, 773-795, §3.2.
Jeffreys, H. (1961). *Theory of Probability*, 3rd ed., appendix B.
ENFSI (2015). *Guideline for Evaluative Reporting in Forensic Science*,
verbal equivalents of the likelihood ratio (scale recalled from memory here;
check it against your copy of the guideline before citing it in a report).
McGee, S. (2002). Simplifying likelihood ratios. *J Gen Intern Med* 17, 647-650.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from ._logmath import log_normalizer, log_odds_of_set, log_odds_path
from .errors import CaseError

if TYPE_CHECKING:
    from .case import Case
    from .engine import Ledger

LN10 = math.log(10.0)
DECIBANS_PER_NAT = 10.0 / LN10
BITS_PER_NAT = 1.0 / math.log(2.0)


def _positive(x: float, what: str) -> float:
    x = float(x)
    if math.isnan(x) or x < 0:
        raise CaseError(f"{what} must be a non-negative number, got {x}")
    return x


def odds(p: float) -> float:
    """Odds p / (1 - p) of a probability (``inf`` for p = 1)."""
    p = float(p)
    if not 0 <= p <= 1:
        raise CaseError(f"probability {p} is outside [0, 1]")
    return math.inf if p == 1 else p / (1 - p)


def probability_from_odds(o: float) -> float:
    """Probability o / (1 + o) from odds (1 for infinite odds)."""
    o = _positive(o, "odds")
    return 1.0 if math.isinf(o) else o / (1 + o)


def log_odds(p: float) -> float:
    """Natural-log odds ln(p / (1 - p))."""
    p = float(p)
    if not 0 <= p <= 1:
        raise CaseError(f"probability {p} is outside [0, 1]")
    if p == 0:
        return -math.inf
    if p == 1:
        return math.inf
    return math.log(p) - math.log1p(-p)


def decibans(factor: float) -> float:
    """Weight of evidence in decibans: 10·log10(Bayes factor) (Good et al. 1945)."""
    f = _positive(factor, "Bayes factor")
    return -math.inf if f == 0 else 10 * math.log10(f)


def bits(factor: float) -> float:
    """Weight of evidence in bits: log2(Bayes factor)."""
    f = _positive(factor, "Bayes factor")
    return -math.inf if f == 0 else math.log2(f)


def nats(factor: float) -> float:
    """Weight of evidence in nats: ln(Bayes factor)."""
    f = _positive(factor, "Bayes factor")
    return -math.inf if f == 0 else math.log(f)


def factor_from_decibans(db: float) -> float:
    return 10 ** (float(db) / 10)


def format_lr(factor: float) -> str:
    """A likelihood ratio for people: ``"LR 2.5"``, ``"LR 1/40"`` below 0.1, ``"LR 12,000"``,
    ``"LR 0"`` or ``"LR inf"`` (three significant figures; no float noise)."""
    f = float(factor)
    if math.isnan(f):
        return "LR undefined"
    if math.isinf(f):
        return "LR inf"
    if f == 0:
        return "LR 0"
    if f < 0.1:
        inv = 1 / f
        return f"LR 1/{inv:,.0f}" if inv >= 100 else f"LR 1/{inv:.3g}"
    if f >= 1000:
        return f"LR {f:,.0f}" if f < 1e7 else f"LR {f:.2e}"
    return f"LR {f:.3g}"


# --------------------------------------------------------------------------- verbal scales

_ENFSI = [
    (2.0, "no meaningful support"),
    (10.0, "weak support"),
    (100.0, "moderate support"),
    (1_000.0, "moderately strong support"),
    (10_000.0, "strong support"),
    (1_000_000.0, "very strong support"),
    (math.inf, "extremely strong support"),
]


def enfsi_label(lr: float) -> str:
    """Verbal equivalent of a likelihood ratio on the ENFSI (2015) scale.

    Bands: 2-10 weak, 10-100 moderate, 100-1,000 moderately strong,
    1,000-10,000 strong, 10,000-1,000,000 very strong, above 1,000,000
    extremely strong support; LR = 1 supports neither proposition; LR < 1
    mirrors the scale for the alternative (1/LR). The band below 2 is this
    tool's wording, not the guideline's. Bands include their lower edge.

    References
    ----------
    ENFSI Guideline for Evaluative Reporting in Forensic Science (2015);
    recalled from memory, verify against the guideline.
    """
    lr = _positive(lr, "likelihood ratio")
    if lr == 1:
        return "supports neither proposition"
    flip = lr < 1
    x = math.inf if lr == 0 else (1 / lr if flip else lr)
    label = next(text for edge, text in _ENFSI if x < edge or math.isinf(edge))
    if label.startswith("no meaningful"):
        return label
    return f"{label} for the alternative" if flip else f"{label} for the proposition"


def kass_raftery_label(factor: float) -> str:
    """Kass & Raftery (1995, §3.2) evidence category of a Bayes factor B.

    Bands on 2·ln B: 0-2 "not worth more than a bare mention", 2-6 "positive",
    6-10 "strong", above 10 "very strong" (B roughly 1-3, 3-20, 20-150, over
    150; the exact edges used are 2·ln B = 2, 6, 10). B < 1 is read as
    evidence against, on the same bands for 1/B.

    References
    ----------
    Kass, R. E. & Raftery, A. E. (1995). Bayes factors. JASA 90, 773-795.
    """
    b = _positive(factor, "Bayes factor")
    if b == 1:
        return "not worth more than a bare mention"
    s = math.inf if b == 0 else abs(2 * math.log(b))
    if s < 2:
        label = "not worth more than a bare mention"
    elif s < 6:
        label = "positive"
    elif s < 10:
        label = "strong"
    else:
        label = "very strong"
    return label if b > 1 or label.startswith("not worth") else f"{label} (against)"


def jeffreys_label(factor: float) -> str:
    """Jeffreys (1961, appendix B) grade of a Bayes factor K, in half-units of log10 K.

    Edges at K = 10^0.5, 10, 10^1.5, 100: "barely worth mentioning",
    "substantial", "strong", "very strong", "decisive". K < 1 is graded on
    1/K and marked "(against)".

    References
    ----------
    Jeffreys, H. (1961). Theory of Probability, 3rd ed., Oxford, appendix B.
    """
    k = _positive(factor, "Bayes factor")
    x = math.inf if k == 0 else (1 / k if k < 1 else k)
    if x < 10**0.5:
        label = "barely worth mentioning"
    elif x < 10:
        label = "substantial"
    elif x < 10**1.5:
        label = "strong"
    elif x < 100:
        label = "very strong"
    else:
        label = "decisive"
    return f"{label} (against)" if k < 1 else label


SCALES = {"enfsi": enfsi_label, "kass-raftery": kass_raftery_label, "jeffreys": jeffreys_label}


def verbal(factor: float, scale: str = "enfsi") -> str:
    """Verbal label of a likelihood ratio or Bayes factor on a named scale."""
    try:
        fn = SCALES[scale]
    except KeyError:
        raise CaseError(f"unknown verbal scale {scale!r}; choose one of {sorted(SCALES)}") from None
    return fn(factor)


_RULE_OF_THUMB = {0.1: -0.45, 0.2: -0.30, 0.5: -0.15, 1.0: 0.0, 2.0: 0.15, 5.0: 0.30, 10.0: 0.45}


def rule_of_thumb_shift(lr: float) -> float:
    """McGee's (2002) bedside shift in probability for LR 0.1, 0.2, 0.5, 1, 2, 5 or 10.

    A quick estimate only: it is inaccurate below 10 % or above 90 %. Use
    the exact update for anything that matters.
    """
    key = float(lr)
    if key not in _RULE_OF_THUMB:
        raise CaseError(f"the rule of thumb covers LR {sorted(_RULE_OF_THUMB)} only, got {lr}")
    return _RULE_OF_THUMB[key]


def update_probability(p: float, lr: float) -> float:
    """Exact posterior probability from a prior probability and a likelihood ratio."""
    o = odds(p)
    lr = _positive(lr, "likelihood ratio")
    if math.isinf(o):
        return 1.0 if lr > 0 else math.nan
    return probability_from_odds(o * lr)


# --------------------------------------------------------------------------- on cases and ledgers


def likelihood_ratio(case: Case, evidence: str, hypothesis: str, against: str | None = None,
                     *, state: str | None = None) -> float:
    """P(state | hypothesis) / P(state | against) for one evidence item.

    ``state`` defaults to the observed state (for an uncertain observation,
    the likelihood row of its step, its weights applied). With ``against=None`` the
    denominator is the rest: the other hypotheses mixed by their probabilities
    just before this item in the ledger (for an unobserved item, by the
    current posterior).
    """
    ev = case.evidence.get(evidence)
    if ev is None:
        raise CaseError(f"no evidence named {evidence!r}; the items are {case.evidence_names}")
    names = case.hypothesis_names
    if hypothesis not in names:
        raise CaseError(f"no hypothesis named {hypothesis!r}; the hypotheses are {names}")
    st = state if state is not None else ev.observed
    if st is None and ev.uncertain is None:
        raise CaseError(f"evidence '{evidence}' is pending (not observed yet); pass state=... to ask about one of its states")
    if st is None:  # an uncertain observation: its step's weighted likelihood row
        ledger0 = case.update()
        if evidence not in ledger0.evidence_steps:
            raise CaseError(f"evidence '{evidence}' was not applied (the update stopped before "
                            "it); pass state=... to ask about one of its states")
        row = np.exp(ledger0.log_likelihoods.loc[evidence])
    else:
        row = ev.likelihood_of(st)
    num = float(row[hypothesis])
    if against is not None:
        if against not in names:
            raise CaseError(f"no hypothesis named {against!r}; the hypotheses are {names}")
        den = float(row[against])
    else:
        ledger = case.update()
        if evidence in ledger.evidence_steps:
            k = ledger.step_names.index(evidence) - 1
            w = ledger.steps.iloc[k]
        else:
            w = ledger.posterior
        w = w.drop(hypothesis)
        tot = float(w.sum())
        if tot <= 0:
            raise CaseError(f"the other hypotheses have no belief left, so 'the rest' is empty "
                            f"for '{hypothesis}'")
        den = float((w * row.drop(hypothesis)).sum() / tot)
    if den == 0:
        return math.inf if num > 0 else math.nan
    return num / den


def bayes_factor(ledger: Ledger, hypothesis: str, against: str | None = None) -> float:
    """Bayes factor of all applied evidence for ``hypothesis`` against ``against``
    (or against the prior-weighted rest): posterior odds / prior odds."""
    names = ledger.hypotheses
    if hypothesis not in names:
        raise CaseError(f"no hypothesis named {hypothesis!r}; the hypotheses are {names}")
    j = names.index(hypothesis)
    if against is not None:
        if against not in names:
            raise CaseError(f"no hypothesis named {against!r}; the hypotheses are {names}")
        ll = ledger.log_likelihoods
        a = float(ll[hypothesis].sum())
        b = float(ll[against].sum())
        with np.errstate(invalid="ignore"):
            return float(np.exp(a - b)) if np.isfinite(b) else (math.inf if np.isfinite(a)
                                                                 else math.nan)
    lo = log_odds_path(ledger.log_steps[[0, -1]], j)
    with np.errstate(invalid="ignore"):
        return float(np.exp(lo[1] - lo[0]))


def step_weights(ledger: Ledger, focus: str | None = None, scale: str = "enfsi") -> pd.DataFrame:
    """Per-step weight of evidence for ``focus`` (default: the MAP) against the rest.

    ``focus`` may also be a hypothesis group (``case.group_hypotheses``): the
    weights are then those for the group's members together against the rest.

    Columns: ``log_odds_before``, ``log_odds_after`` (natural log),
    ``bayes_factor``, ``decibans``, ``bits``, ``nats``, ``verbal`` (on
    ``scale``) and ``direction`` ("for", "against" or "neutral"). The rest is
    the mixture of the other hypotheses at each step, so the decibans of the
    rows add up to the total change from prior to posterior log-odds.
    """
    focus = ledger.map_hypothesis if focus is None else focus
    cols = ledger.focus_columns(focus)
    lo = log_odds_of_set(ledger.log_steps, cols)
    with np.errstate(invalid="ignore"):
        d = np.diff(lo)
    rows = []
    for k, step in enumerate(ledger.evidence_steps):
        n = float(d[k])
        if np.isnan(n):  # -inf to -inf: the focus is already out; no information
            n = 0.0
        bf = math.exp(n) if n < 700 else math.inf
        rows.append({
            "step": step,
            "log_odds_before": float(lo[k]),
            "log_odds_after": float(lo[k + 1]),
            "bayes_factor": bf,
            "decibans": n * DECIBANS_PER_NAT,
            "bits": n * BITS_PER_NAT,
            "nats": n,
            "verbal": verbal(bf, scale),
            "direction": "for" if n > 0 else ("against" if n < 0 else "neutral"),
        })
    cols = ["step", "log_odds_before", "log_odds_after", "bayes_factor", "decibans", "bits",
            "nats", "verbal", "direction"]
    return pd.DataFrame(rows, columns=cols).set_index("step")


def entropy_bits(p: np.ndarray, axis: int = -1) -> np.ndarray:
    """Shannon entropy in bits along ``axis`` (0·log 0 taken as 0)."""
    p = np.asarray(p, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.where(p > 0, p * np.log2(np.where(p > 0, p, 1.0)), 0.0)
    return -np.sum(t, axis=axis)


__all__ = [
    "odds", "probability_from_odds", "log_odds", "decibans", "bits", "nats",
    "factor_from_decibans", "format_lr", "enfsi_label", "kass_raftery_label", "jeffreys_label", "verbal",
    "SCALES", "rule_of_thumb_shift", "update_probability", "likelihood_ratio", "bayes_factor",
    "step_weights", "entropy_bits", "log_normalizer",
]

"""Uncertain observations: reading the weights, the witness helper, and the arithmetic.

An evidence item whose state was not seen for certain enters the update in
one of two forms (see :class:`~beliefledger.case.members.UncertainObservation`):

* **likelihood form** (virtual evidence): relative weights λ(s) ∝ P(report |
  state s). The item contributes P(report | H) ∝ Σ_s λ(s)·P(s | H) to the
  update; only the ratios of the weights matter (Pearl 1988, section 2.2.2).
* **probability form** (Jeffrey's rule): the analyst's probability q(s) of
  each state after the observation. Applied at its place in the sequence,
  the update P'(H) = Σ_s q(s)·P(H | s, what came before) equals virtual
  evidence with weights λ(s) ∝ q(s) / P(s | what came before) (Chan &
  Darwiche 2005), so it needs the predictive over the item's states at that
  step, and moving it elsewhere in the sequence changes it: Jeffrey updates
  do not commute.

Pure numpy; no case objects beyond an item's states.

References
----------
Pearl, J. (1988). *Probabilistic Reasoning in Intelligent Systems*, Morgan
Kaufmann, section 2.2.2 (virtual evidence).
Jeffrey, R. C. (1965). *The Logic of Decision*, McGraw-Hill (probability
kinematics).
Chan, H. & Darwiche, A. (2005). On the revision of probabilistic beliefs
using uncertain evidence. *Artificial Intelligence* 163, 67-90 (Jeffrey's
rule as virtual evidence with weights q(s) / P(s); their non-commutativity).
All three recalled from memory for the formulas, which the tests check by
hand computation and against an outside engine.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Mapping
from typing import Any

import numpy as np
import pandas as pd

from .._checks import SUM_TOL, check_probability, fmt_g, key_gaps
from ..errors import CaseError, CaseTypeError
from .members import LIKELIHOOD_FORM, PROBABILITY_FORM


def parse_weights(item: str, states: tuple[str, ...], spec: Any, form: str) -> tuple[float, ...]:
    """One weight per state, in the item's state order, from a mapping state -> weight.

    Every state must be named (an omitted state is a common slip, so it is an
    error, not a zero). Likelihood weights are finite and non-negative, not
    all zero, on any scale; probabilities lie in [0, 1] and sum to 1 within
    ``SUM_TOL``.
    """
    label = "likelihood weights" if form == LIKELIHOOD_FORM else "probabilities"
    what = f"{label} of the uncertain observation of evidence '{item}'"
    if isinstance(spec, pd.Series):
        spec = spec.to_dict()
    if not isinstance(spec, Mapping):
        raise CaseTypeError(f"{what} must map each state {list(states)} to a number, got "
                            f"{type(spec).__name__} {spec!r:.60}")
    missing, unknown = key_gaps(spec, states)
    if unknown or missing:
        raise CaseError(f"{what} name unknown state(s) {unknown} and miss state(s) {missing}; "
                        f"give one number for each of the item's states {list(states)}"
                        + (" (0 for a state the report rules out)" if missing else ""))
    out = []
    for s in states:
        v = spec[s]
        if isinstance(v, np.generic):
            v = v.item()
        if isinstance(v, bool) or not isinstance(v, numbers.Real):
            raise CaseTypeError(f"{what}: the value for state '{s}' must be a number, got "
                                f"{type(v).__name__} {v!r:.40}")
        if form == PROBABILITY_FORM:
            out.append(check_probability(f"{what}: probability of state '{s}'", v))
            continue
        try:
            x = float(v)
        except OverflowError:  # an integer longer than a float holds
            x = math.inf
        if not math.isfinite(x) or x < 0:
            raise CaseError(f"{what}: the weight of state '{s}' is {x:g}; weights are finite "
                            "numbers of 0 or more (only their ratios matter, e.g. 0.8 and 0.2, "
                            "or 4 and 1)")
        out.append(x)
    total = math.fsum(out)
    if form == LIKELIHOOD_FORM and total <= 0:
        raise CaseError(f"{what} are all 0, which would rule out every state; give at least "
                        "one positive weight (only their ratios matter)")
    if form == PROBABILITY_FORM and abs(total - 1) > SUM_TOL:
        raise CaseError(f"{what} sum to {fmt_g(total)}, not 1 (within {SUM_TOL:g}); give the "
                        "probability of each state after the observation so that they sum to "
                        "1, or give relative weights with likelihood= instead")
    return tuple(out)


def report_weights(states: Any, reported: str, reliability: float) -> dict[str, float]:
    """Likelihood weights of a report from a witness or instrument right with probability r.

    On an item of k states, a report of state ``reported`` has probability r
    when that is the true state and (1 - r) / (k - 1) for each other true
    state (errors spread evenly over the wrong states). Those are the weights
    this returns: the likelihood form of the report, for
    ``case.observe(item, likelihood=...)``. With r = 1 it is a certain
    observation; with r = 1 / k the report carries no information.

    Parameters
    ----------
    states : sequence of str
        The item's states (``case.evidence_item(name).states``).
    reported : str
        The state reported.
    reliability : float
        r, the chance the report is right, in (0, 1]; below 1 / k the report
        points away from the state it names, which is allowed but unusual.

    Examples
    --------
    >>> report_weights(["machine room", "office", "dock"], "machine room", 0.8)
    {'machine room': 0.8, 'office': 0.1, 'dock': 0.1}

    References
    ----------
    The symmetric error channel: common practice for a witness or sensor of
    stated accuracy (e.g. Pearl 1988, section 2.2.2, where the weights are
    the likelihoods of the report).
    """
    st = tuple(states)
    if len(st) < 2:
        raise CaseError(f"a report needs an item of two or more states, got {list(st)}")
    if reported not in st:
        raise CaseError(f"reported state {reported!r:.60} is not one of the item's states "
                        f"{list(st)}; name one of them")
    r = check_probability("reliability of the report", reliability)
    if r <= 0:
        raise CaseError("reliability of the report is 0: a report that is never right still "
                        "carries information; give the chance it is right, above 0")
    wrong = (1.0 - r) / (len(st) - 1)
    return {s: (r if s == reported else wrong) for s in st}


def report_matrix(k: int, reliability: float) -> np.ndarray:
    """P(report r | true state s) of a report right with probability ``reliability`` on a
    k-state item: reliability on the diagonal, the rest spread evenly (k x k, rows the
    report, columns the true state)."""
    r = float(reliability)
    m = np.full((k, k), (1.0 - r) / (k - 1) if k > 1 else 0.0)
    np.fill_diagonal(m, r)
    return m


def likelihood_vector(table: np.ndarray, weights: Any) -> np.ndarray:
    """P(report | H) up to a factor: the weights (largest scaled to 1) times the table."""
    w = np.asarray(weights, dtype=float)
    top = w.max() if w.size else 0.0
    return (w / top if top > 0 else w) @ table


def jeffrey_weights(table: np.ndarray, q: Any, before: np.ndarray
                    ) -> tuple[np.ndarray, np.ndarray, list[int]]:
    """The likelihood weights equivalent to Jeffrey's rule at one step.

    ``table`` is P(state | H) (states x hypotheses), ``q`` the stated
    probabilities of the states after the observation, ``before`` the
    probabilities of the hypotheses just before it. Returns ``(weights,
    predictive, unreachable)``: λ(s) = q(s) / P(s | before), scaled so the
    largest is 1; P(s | before) = Σ_H P(s | H)·P(H | before); and the states
    with q(s) > 0 that the evidence before makes impossible (their weight is 0:
    Jeffrey's rule cannot put belief on them). ``before`` may be unnormalized.

    References
    ----------
    Chan & Darwiche (2005), *Artificial Intelligence* 163 (recalled from memory).
    """
    q = np.asarray(q, dtype=float)
    b = np.asarray(before, dtype=float)
    total = b.sum()
    if not total > 0:
        return np.zeros(len(q)), np.full(len(q), np.nan), []
    pred = table @ (b / total)
    ok = pred > 0
    unreachable = [int(i) for i in np.flatnonzero((q > 0) & ~ok)]
    # the ratio in log space: a predictive near the smallest float would overflow q / P
    ll = np.full(len(q), -np.inf)
    with np.errstate(divide="ignore"):
        ll[ok] = np.log(q[ok]) - np.log(pred[ok])
    top = ll.max() if ll.size else -np.inf
    lam = np.exp(ll - top) if np.isfinite(top) else np.zeros(len(q))
    return lam, pred, unreachable


__all__ = ["parse_weights", "report_weights", "report_matrix", "likelihood_vector",
           "jeffrey_weights"]

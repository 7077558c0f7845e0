"""Value of information and decisions.

Two questions the update alone does not answer: *what should we look at
next?* and *what do we do now?*

For a pending evidence item (defined but not observed yet), the current
posterior gives its predictive distribution over states, the posterior that
each state would lead to, the expected reduction in entropy about the
hypothesis (the mutual information, in bits), the probability that observing
it changes the MAP hypothesis and, given a loss table, the expected value of
sample information (EVSI). :func:`evpi` gives the expected value of perfect
information about the hypothesis. All items are scored at once: one
(items x states x hypotheses) array, one product with the loss table.

Losses come from a loss (or payoff) table (:mod:`beliefledger.decision`).
Values of information are the same in both conventions (a fall in expected
loss is a rise in expected payoff).

An item is valued as if observed last. When a Jeffrey (probability-form)
observation sits after it in the case's order, observing the item for real
re-derives that update's weights, so the posterior then differs slightly
from the one predicted here.

The numbers support a decision; they do not make it. Where the case touches
health or safety, local codes, regulations and licensed practice prevail
over any expected-loss ranking.

References
----------
Raiffa, H. & Schlaifer, R. (1961), *Applied Statistical Decision Theory*,
Harvard: preposterior analysis, EVSI and EVPI.
Lindley, D. V. (1956), "On a measure of the information provided by an
experiment", *Annals of Mathematical Statistics* 27, 986-1005: expected
information gain (mutual information) as the value of an experiment.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from ._checks import check_number, check_probability
from .calls import ANALYSIS_MIMETYPE, Call
from .case.extras import LOSS_TABLE
from .case.uncertain import report_matrix
from .decision import posterior_array, resolve_losses
from .errors import CaseError, CaseTypeError

if TYPE_CHECKING:
    from .case import Case

MAP_TOL = 1e-12
"""A posterior must beat the current MAP hypothesis by more than this to count as a change."""
CRITERIA = ("expected_entropy_reduction", "p_map_changes", "evsi", "net_value")


class Ranking(pd.DataFrame):
    """The table :func:`rank_next_evidence` returns: a DataFrame that also keeps the call
    that made it (``.call``), so a sealed record ranks with the same costs and criterion.
    Selections and sorts of it keep the call; everything else is a plain DataFrame."""

    _metadata = ["call"]

    @property
    def _constructor(self):
        return Ranking

    def _repr_mimebundle_(self, include=None, exclude=None) -> dict[str, Any]:
        call = getattr(self, "call", None)
        return {ANALYSIS_MIMETYPE: call.bundle()} if call is not None else {}


def evpi(case: Case, loss: Any = None, *, kind: str = "loss",
         scenario: str | None = None) -> float:
    """Expected value of perfect information about the hypothesis.

    EVPI = min_a E[loss(a, H)] - E[min_a loss(a, H)]: what it would be worth to
    learn the true hypothesis before acting, under the current posterior.

    References
    ----------
    Raiffa & Schlaifer (1961), *Applied Statistical Decision Theory*, ch. 4.
    """
    arr, _, _ = resolve_losses(case, loss, kind)
    p = posterior_array(case, scenario)
    a_now = int(np.argmin(arr @ p))
    # sum_H P(H) (loss(a_now, H) - min_a loss(a, H)): each term >= 0
    return float(p @ (arr[a_now] - arr.min(axis=0)))



# --------------------------------------------------------------------------- value of information


def _clip_zero(x: np.ndarray) -> np.ndarray:
    """Round tiny negative results of a non-negative quantity (rounding noise) to 0."""
    return np.where((x < 0) & (x > -1e-12), 0.0, x)


def _pending(case: Case, evidence: Any) -> list[str]:
    """The items to score: the named ones (each must be pending) or every pending item."""
    if evidence is None:
        return [e.name for e in case.evidence.values() if e.observed is None]
    names = [evidence] if isinstance(evidence, str) else list(evidence)
    out = []
    for n in names:
        ev = case.evidence_item(n)
        if ev.is_observed:
            seen = (repr(ev.observed) if ev.observed is not None else
                    f"an uncertain observation, {ev.uncertain.form} form")
            raise CaseError(f"evidence '{ev.name}' is already observed ({seen}); value "
                            "of information is for pending items (to ask what it would "
                            f"have been worth, copy the case and call observe('{ev.name}', None))")
        out.append(ev.name)
    return out


def _reliabilities(case: Case, names: list[str], reliability: Any) -> dict[str, float]:
    """Item -> the reliability of the report that would observe it (items left out: seen
    for certain)."""
    if reliability is None:
        return {}
    if isinstance(reliability, pd.Series):
        reliability = reliability.to_dict()
    given = reliability if isinstance(reliability, Mapping) else {n: reliability for n in names}
    unknown = [k for k in given if k not in names]
    if unknown:
        raise CaseError(f"reliability names {unknown}, which are not among the pending items "
                        f"scored {names}")
    out = {}
    for n, r in given.items():
        x = check_probability(f"reliability of the report on '{n}'", r)
        if x <= 0:
            raise CaseError(f"reliability of the report on '{n}' is 0; give the chance the "
                            "report is right, above 0")
        if len(case.evidence[n].states) < 2:
            raise CaseError(f"evidence '{n}' has one state; a report on it carries nothing")
        out[n] = x
    return out


def _report_table(lik: np.ndarray, r: float | None) -> np.ndarray:
    """P(report | H) of a report right with probability r on an item with table ``lik``
    (the reported states in the item's order); the table itself when r is None."""
    if r is None:
        return lik
    return report_matrix(lik.shape[0], r) @ lik


def _stack(case: Case, names: list[str], reliability: Mapping[str, float] | None = None
           ) -> np.ndarray:
    """P(state | H, other observed evidence) for each item (of the report on it, for items
    with a reliability), padded with zero rows: shape (items, most states, hypotheses)."""
    evs = case.evidence
    if not case.has_dependence:
        tabs = [evs[n].table for n in names]  # no stated dependence: each item's own table
    else:
        tabs = [case.predictive_table(n) for n in names]
    rel = reliability or {}
    tabs = [_report_table(t, rel.get(n)) for n, t in zip(names, tabs, strict=True)]
    n_h = len(case.hypothesis_names)
    s_max = max((t.shape[0] for t in tabs), default=1)
    out = np.zeros((len(tabs), s_max, n_h))
    for i, t in enumerate(tabs):
        out[i, : t.shape[0]] = t
    return out


def _voi(lik: np.ndarray, p: np.ndarray, losses: np.ndarray | None) -> dict[str, np.ndarray]:
    """Vectorised preposterior analysis.

    lik: (items, states, H) likelihoods; p: (H,) current posterior; losses:
    (actions, H) or None. Returns per-item arrays.
    """
    joint = lik * p  # P(state, H | e)
    pred = joint.sum(axis=2)  # P(state | e)
    with np.errstate(divide="ignore", invalid="ignore"):
        # mutual information I(H; X) = sum P(x, h) log2(P(x | h) / P(x))
        terms = np.where(joint > 0, joint * (np.log2(np.where(lik > 0, lik, 1.0))
                                             - np.log2(np.where(pred > 0, pred, 1.0))[..., None]),
                         0.0)
        post = np.where(pred[..., None] > 0, joint / np.where(pred > 0, pred, 1.0)[..., None], 0.0)
    info = _clip_zero(terms.sum(axis=(1, 2)))
    cur = int(np.argmax(p))
    changes = (post.max(axis=2) - post[:, :, cur] > MAP_TOL) & (pred > 0)
    out = {"pred": pred, "post": post, "info": info,
           "p_map": np.minimum((pred * changes).sum(axis=1), 1.0)}
    if losses is not None:
        a_now = int(np.argmin(losses @ p))
        risk = joint @ losses.T  # (items, states, actions): P(x) * E[loss(a) | e, x]
        # EVSI = sum_x P(x) (E[loss(a_now) | x] - min_a E[loss(a) | x]): the same
        # quantity as min_a E[loss(a)] - sum_x P(x) min_a E[loss(a) | x] (because
        # sum_x P(x, H) = P(H)), written so each term is >= 0 and exactly 0 when
        # a_now stays best after outcome x.
        out["evsi"] = (risk[:, :, a_now] - risk.min(axis=2)).sum(axis=1)
        out["best_after"] = risk.argmin(axis=2)
    return out


def predictive(case: Case, evidence: str, *, scenario: str | None = None,
               reliability: float | None = None) -> pd.Series:
    """P(state | evidence so far) for an item: sum over H of P(state | H, e)·P(H | e).

    With ``reliability`` r: the chance of each *report* of a witness or
    instrument right with probability r (errors spread evenly over the other
    states), indexed by the state reported."""
    names = _pending(case, evidence)
    ev = case.evidence[names[0]]
    rel = _reliabilities(case, names, reliability)
    lik = _report_table(case.predictive_table(ev.name), rel.get(ev.name))
    return pd.Series(lik @ posterior_array(case, scenario), index=pd.Index(ev.states, name="state"),
                     name="probability")


def preposterior(case: Case, evidence: str, *, scenario: str | None = None,
                 reliability: float | None = None) -> pd.DataFrame:
    """What observing an item could do: one row per state with its predictive
    ``probability``, the posterior it would lead to (one column per hypothesis)
    and the ``map`` hypothesis then. A final row ``expected`` holds the
    probability-weighted posterior, which equals the current posterior (the
    law of total probability: belief is not expected to move).

    With ``reliability`` r the rows are the possible *reports* of a witness or
    instrument right with probability r, each leading to the posterior its
    likelihood form gives (``case.observe_report``)."""
    names = _pending(case, evidence)
    ev = case.evidence[names[0]]
    p = posterior_array(case, scenario)
    rel = _reliabilities(case, names, reliability)
    lik = _report_table(case.predictive_table(ev.name), rel.get(ev.name))
    joint = lik * p
    pred = joint.sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        post = np.where(pred[:, None] > 0, joint / np.where(pred > 0, pred, 1)[:, None], np.nan)
    hyps = case.hypothesis_names
    frame = pd.DataFrame(post, index=pd.Index(ev.states, name="state"), columns=hyps)
    frame.insert(0, "probability", pred)
    frame["map"] = [hyps[int(np.nanargmax(r))] if np.isfinite(r).any() else None for r in post]
    frame.loc["expected"] = [float(pred.sum()), *(np.nan_to_num(post).T @ pred), None]
    return frame


def evsi(case: Case, evidence: str, loss: Any = None, *, kind: str = "loss",
         scenario: str | None = None, reliability: float | None = None) -> float:
    """Expected value of sample information of observing one item before acting.

    EVSI = min_a E[loss(a, H) | e] - sum_x P(x | e)·min_a E[loss(a, H) | e, x]:
    the fall in expected loss from choosing the action after seeing the item.
    It is never negative and never above :func:`evpi`; it is 0 when no
    outcome of the item would change the best action. With ``reliability`` r
    it is the value of a report on the item right with probability r (never
    more than seeing the state for certain).

    References
    ----------
    Raiffa & Schlaifer (1961), *Applied Statistical Decision Theory*, ch. 4.
    """
    names = _pending(case, evidence)
    losses, _, _ = resolve_losses(case, loss, kind)
    rel = _reliabilities(case, names, reliability)
    res = _voi(_stack(case, names, rel), posterior_array(case, scenario), losses)
    return float(res["evsi"][0])


def rank_next_evidence(case: Case, loss: Any = None, *, kind: str = "loss",
                       by: str | None = None, cost: Any = None, scenario: str | None = None,
                       evidence: Any = None, reliability: Any = None) -> pd.DataFrame:
    """Rank the pending evidence (not observed yet) by what observing it is expected to give.

    Parameters
    ----------
    case : Case
    loss : DataFrame, mapping or None
        A loss (or payoff, with ``kind="payoff"``) table, actions x
        hypotheses. ``None`` uses the case's own table when it has one
        (:func:`set_loss_table`); without any, EVSI columns are left out.
    kind : {"loss", "payoff"}
    by : str, optional
        Ranking criterion: ``"evsi"`` (default with a loss table),
        ``"net_value"`` (default when costs are given too),
        ``"expected_entropy_reduction"`` (default without a loss table) or
        ``"p_map_changes"``. Ties keep the case's order.
    cost : mapping or Series, optional
        Cost of observing each item, in the loss table's units (items left
        out cost 0); gives ``net_value = evsi - cost``.
    scenario : str, optional
        Prior scenario (default: the active one).
    evidence : str or list, optional
        Rank only these items (default: every pending item).
    reliability : float or mapping, optional
        Score an uncertain observation instead of a certain one: the item
        would be observed through a report right with probability r (one
        number for every item, or item -> r). The value of such a report is
        that of its likelihood form (``case.observe_report``); it is never more
        than seeing the state for certain.

    Returns
    -------
    DataFrame
        Indexed by evidence name, best first: ``rank``, ``states``,
        ``reliability`` (with ``reliability=``; 1 for an item seen for certain),
        ``expected_entropy_reduction`` (bits), ``p_map_changes``,
        ``most_likely_state``, ``p_most_likely`` and, with a loss table,
        ``evsi``, ``cost``, ``net_value``; then ``reason`` (one line).

    References
    ----------
    Lindley (1956), *Ann. Math. Statist.* 27, 986-1005 (expected information);
    Raiffa & Schlaifer (1961) (EVSI).
    """
    names = _pending(case, evidence)
    given_evidence = None if evidence is None else list(names)
    losses = actions = None
    use_loss = loss is not None or LOSS_TABLE in case.extras
    if use_loss:
        losses, actions, kind = resolve_losses(case, loss, kind)
    costs = np.zeros(len(names))
    if cost is not None:
        if not use_loss:
            raise CaseError("costs are in the loss table's units, so ranking net of cost needs a "
                            "loss table: pass loss=... or store one with set_loss_table")
        cmap = cost.to_dict() if isinstance(cost, pd.Series) else cost
        if not isinstance(cmap, Mapping):
            raise CaseTypeError(f"cost must map evidence name -> cost, got {type(cost).__name__}")
        unknown = [k for k in cmap if k not in case.evidence]
        if unknown:
            raise CaseError(f"cost names unknown evidence {unknown}; the items are "
                            f"{case.evidence_names}")
        for i, n in enumerate(names):
            if n in cmap:
                c = check_number(f"cost of observing '{n}'", cmap[n])
                if c < 0:
                    raise CaseError(f"cost of observing '{n}' is {c:g}; a cost cannot be "
                                    "negative")
                costs[i] = c
    if by is None:
        by = ("net_value" if cost is not None else "evsi") if use_loss \
            else "expected_entropy_reduction"
    if by not in CRITERIA:
        raise CaseError(f"unknown ranking criterion {by!r:.40}; choose one of {list(CRITERIA)}")
    if by in ("evsi", "net_value") and not use_loss:
        raise CaseError(f"ranking by '{by}' needs a loss table: pass loss=... or store one "
                        "with set_loss_table")
    cols = ["rank", "states", *(["reliability"] if reliability is not None else []),
            "expected_entropy_reduction", "p_map_changes", "most_likely_state",
            "p_most_likely"]
    if use_loss:
        cols += ["evsi", "cost", "net_value"]
    cols.append("reason")
    settings = {"kind": kind, "by": by, "scenario": scenario, "evidence": given_evidence,
                "cost": None if cost is None else {n: float(c) for n, c in zip(names, costs,
                                                                               strict=True)
                                                   if n in cmap},
                "loss": None if loss is None else {
                    a: {h: float(-v if kind == "payoff" else v) + 0.0
                        for h, v in zip(case.hypothesis_names, row, strict=True)}
                    for a, row in zip(actions, losses, strict=True)}}
    call = Call.of("rank_next_evidence", case, settings)
    if not names:
        out = Ranking(columns=cols, index=pd.Index([], name="evidence"))
        out.call = call
        return out
    p = posterior_array(case, scenario)
    rel = _reliabilities(case, names, reliability)
    res = _voi(_stack(case, names, rel), p, losses)
    hyps = case.hypothesis_names
    cur = hyps[int(np.argmax(p))]
    h_now = float(-np.sum(np.where(p > 0, p * np.log2(np.where(p > 0, p, 1.0)), 0.0)))
    now_action = None
    if use_loss:
        now_action = actions[int(np.argmin(losses @ p))]
    evs = case.evidence
    n_states = np.array([len(evs[n].states) for n in names])
    # padded states have probability 0, so argmax finds a real state
    k_best = res["pred"].argmax(axis=1)
    columns: dict[str, Any] = {
        "states": n_states,
        "reliability": np.array([rel.get(n, 1.0) for n in names]),
        "expected_entropy_reduction": res["info"],
        "p_map_changes": res["p_map"],
        "most_likely_state": [evs[n].states[k] for n, k in zip(names, k_best, strict=True)],
        "p_most_likely": res["pred"][np.arange(len(names)), k_best],
    }
    if use_loss:
        columns["evsi"] = res["evsi"]
        columns["cost"] = costs
        columns["net_value"] = res["evsi"] - costs
    reasons = []
    for i in range(len(names)):
        row = {c: v[i] for c, v in columns.items()}
        switch = []
        if use_loss:
            ns = n_states[i]
            switch = sorted({actions[a] for a, q in zip(res["best_after"][i, :ns],
                                                        res["pred"][i, :ns], strict=True)
                             if q > 0} - {now_action})
        reasons.append(_reason(row, h_now, cur, now_action, switch))
    columns["reason"] = reasons
    order = np.argsort(-np.asarray(columns[by], dtype=float), kind="stable")
    data = {"rank": np.arange(1, len(names) + 1)}
    for c in cols[1:]:
        v = columns[c]
        data[c] = v[order] if isinstance(v, np.ndarray) else [v[i] for i in order]
    out = Ranking(data, index=pd.Index([names[i] for i in order], name="evidence"))
    out.call = call
    return out


def _reason(row: dict[str, Any], h_now: float, cur: str, action: str | None,
            switch: list[str]) -> str:
    info = row["expected_entropy_reduction"]
    if info <= 1e-12:
        return ("cannot move belief: its likelihoods are the same under every hypothesis still "
                "in play")
    share = f" ({info / h_now:.0%} of the {h_now:.2f} bits now)" if h_now > 0 else ""
    text = f"expected to remove {info:.3f} bits{share}"
    pm = row["p_map_changes"]
    text += (f"; {pm:.0%} chance it displaces '{cur}' as the MAP hypothesis" if pm > 0
             else f"; no outcome displaces '{cur}'")
    if action is not None:
        if row["evsi"] <= 0:
            text += f"; no outcome changes the best action '{action}', so it is worth 0 here"
        else:
            text += (f"; worth {row['evsi']:.4g} because some outcome switches the best action "
                     f"from '{action}' to {', '.join(repr(s) for s in switch)}")
            if row["cost"] > 0:
                text += (f"; net of its cost {row['cost']:.4g}: {row['net_value']:.4g}")
    return text


__all__ = ["evpi", "evsi", "predictive", "preposterior", "rank_next_evidence", "Ranking", "CRITERIA",
           "MAP_TOL"]

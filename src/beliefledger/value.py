"""Value of information and decisions.

Two questions the update alone does not answer: *what should we look at
next?* and *what do we do now?*

For an evidence item that is defined but not yet observed, the current
posterior gives its predictive distribution over states, the posterior that
each state would lead to, the expected reduction in entropy about the
hypothesis (the mutual information, in bits), the probability that observing
it changes the MAP hypothesis and, given a loss table, the expected value of
sample information (EVSI). :func:`evpi` gives the expected value of perfect
information about the hypothesis. All items are scored at once: one
(items x states x hypotheses) array, one product with the loss table.

A loss table is a DataFrame indexed by action with one column per hypothesis;
a payoff table is its negative. Every function takes ``kind="loss"`` or
``kind="payoff"`` to say which was given, and the case can keep one table
(:func:`set_loss_table`, stored as the ``"decision"`` extras section).
Values of information are the same in both conventions (a fall in expected
loss is a rise in expected payoff).

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

import math
import numbers
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from .case import Source, _check_name, _check_text
from .errors import CaseError, CaseTypeError

if TYPE_CHECKING:
    from .case import Case

DECISION_KEY = "decision"
"""The extras section holding the case's loss (or payoff) table."""

KINDS = ("loss", "payoff")
RESERVED_ACTIONS = ("bayes_action", "measure", "active")
MAP_TOL = 1e-12
"""A posterior must beat the current MAP hypothesis by more than this to count as a change."""
CRITERIA = ("expected_entropy_reduction", "p_map_changes", "evsi", "net_value")


# --------------------------------------------------------------------------- the loss table


def _number(what: str, v: Any) -> float:
    if isinstance(v, np.generic):
        v = v.item()
    if isinstance(v, bool) or not isinstance(v, numbers.Real):
        raise CaseTypeError(f"{what} must be a number, got {type(v).__name__} {v!r:.60}")
    x = float(v)
    if not math.isfinite(x):
        raise CaseError(f"{what} is {x}; losses and payoffs must be finite numbers")
    return x


def _check_kind(kind: Any) -> str:
    if kind not in KINDS:
        raise CaseError(f"kind {kind!r:.40} is not one of {list(KINDS)}; say whether the table "
                        "holds losses (lower is better) or payoffs (higher is better)")
    return kind


def _rows_from(table: Any) -> dict[Any, Any]:
    """action -> {hypothesis: value} from a DataFrame or a mapping."""
    if isinstance(table, pd.DataFrame):
        if not table.index.is_unique:
            dup = sorted({str(a) for a in table.index[table.index.duplicated()]})
            raise CaseError(f"the loss table lists action(s) {dup} twice; each action is one row")
        cols = list(table.columns)
        vals = table.to_numpy(dtype=object)
        return {a: dict(zip(cols, vals[i], strict=True)) for i, a in enumerate(table.index)}
    if isinstance(table, Mapping):
        return {a: (r.to_dict() if isinstance(r, pd.Series) else r) for a, r in table.items()}
    raise CaseTypeError("a loss table must be a DataFrame (actions as rows, one column per "
                        f"hypothesis) or a mapping action -> {{hypothesis: value}}, got "
                        f"{type(table).__name__}")


def _check_rows(rows: Mapping[Any, Any], case: Case, kind: str) -> dict[str, dict[str, float]]:
    hyps = case.hypothesis_names
    if not rows:
        raise CaseError("the loss table has no actions; give at least one row (usually two or "
                        "more actions to choose between)")
    out: dict[str, dict[str, float]] = {}
    for a, row in rows.items():
        act = _check_name("action", a)
        if act in RESERVED_ACTIONS:
            raise CaseError(f"action name '{act}' is reserved for summary columns; rename it")
        if act in out:
            raise CaseError(f"action '{act}' appears twice in the loss table")
        if not isinstance(row, Mapping):
            raise CaseTypeError(f"row of action '{act}' must map each hypothesis to a {kind}, "
                                f"got {type(row).__name__}")
        missing = [h for h in hyps if h not in row]
        if missing:
            raise CaseError(f"the {kind} table has no value for action '{act}' under "
                            f"hypothesis(es) {missing}; give a {kind} for every hypothesis")
        extra = [h for h in row if h not in hyps]
        if extra:
            raise CaseError(f"the {kind} table row '{act}' names unknown hypothesis(es) "
                            f"{[str(x) for x in extra]}; the hypotheses are {hyps}")
        out[act] = {h: _number(f"{kind} of action '{act}' under hypothesis '{h}'", row[h])
                    for h in hyps}
    return out


def validate_decision(value: Any, case: Case) -> dict[str, Any]:
    """Check the ``"decision"`` extras section: a loss or payoff table for ``case``.

    The section is ``{"kind": "loss" | "payoff", "table": {action: {hypothesis:
    value}}, "units": str, "source": {...}, "note": str}``; every action gives a
    finite value for every hypothesis. Runs on ``case.set_extra`` and on load.
    """
    if not isinstance(value, Mapping):
        raise CaseError(f"extras section 'decision' must be an object, got {type(value).__name__}")
    allowed = {"kind", "table", "units", "source", "note"}
    extra = set(value) - allowed
    if extra:
        raise CaseError(f"extras section 'decision' has unknown field(s) {sorted(extra)}; "
                        f"allowed: {sorted(allowed)}")
    if "table" not in value:
        raise CaseError("extras section 'decision' has no 'table'")
    kind = _check_kind(value.get("kind", "loss"))
    if not isinstance(value["table"], Mapping):
        raise CaseError("the 'table' of extras section 'decision' must map action -> "
                        "{hypothesis: value}")
    rows = _check_rows(value["table"], case, kind)
    src = Source.coerce(value.get("source"), what="source of the loss table")
    return {"kind": kind, "table": rows, "units": _check_text("units", value.get("units", "")),
            "source": src.to_dict(), "note": _check_text("note", value.get("note", ""))}


def decision_hypotheses_changed(value: Any, case: Case, renamed: Mapping[str, str | None],
                                added: Mapping[str, Any]) -> dict[str, Any]:
    """Keep the loss table in step with renamed, removed or added hypotheses.

    A new hypothesis needs a value for every action:
    ``case.add_hypothesis(..., extra_values={"decision": {action: value}})``.
    """
    table: dict[str, dict[str, float]] = {}
    for act, row in value["table"].items():
        new = {}
        for h, v in row.items():
            target = renamed.get(h, h)
            if target is not None:
                new[target] = v
        table[act] = new
    for h, given in added.items():
        vals = given.get(DECISION_KEY) if isinstance(given, Mapping) else None
        if not isinstance(vals, Mapping):
            raise CaseError(f"the case's {value['kind']} table needs a value for new hypothesis "
                            f"'{h}' under every action {list(table)}; pass "
                            f"extra_values={{'decision': {{action: value, ...}}}} to "
                            "add_hypothesis, or remove the table first (set_loss_table(case, "
                            "None))")
        for act in table:
            if act not in vals:
                raise CaseError(f"new hypothesis '{h}': no {value['kind']} given for action "
                                f"'{act}'; give one for every action {list(table)}")
            table[act][h] = vals[act]
        unknown = [a for a in vals if a not in table]
        if unknown:
            raise CaseError(f"new hypothesis '{h}': unknown action(s) {unknown}; the actions are "
                            f"{list(table)}")
    return validate_decision({**value, "table": table}, case)


def set_loss_table(case: Case, table: Any, *, kind: str = "loss", source: Any = None,
                   units: str = "", note: str = "") -> None:
    """Store a loss (or payoff) table on the case; ``table=None`` removes it.

    Parameters
    ----------
    case : Case
    table : DataFrame or mapping
        Actions as rows (the index), one column per hypothesis; or a mapping
        action -> {hypothesis: value}.
    kind : {"loss", "payoff"}
        Whether lower (loss) or higher (payoff) is better.
    source : Source, str or dict
        Where the figures came from.
    units : str
        Their unit (e.g. "kEUR", "hours of downtime").
    note : str

    Examples
    --------
    >>> import beliefledger as bl
    >>> case = bl.Case("Pump trip", hypotheses={"bearing": 0.6, "Other": 0.4})
    >>> bl.set_loss_table(case, {"replace bearing": {"bearing": 1, "Other": 5},
    ...                          "run on": {"bearing": 20, "Other": 0}}, units="k$")
    >>> bl.bayes_action(case)
    'replace bearing'
    """
    if table is None:
        case.set_extra(DECISION_KEY, None)
        return
    kind = _check_kind(kind)
    rows = _check_rows(_rows_from(table), case, kind)
    src = Source.coerce(source, what="source of the loss table")
    case.set_extra(DECISION_KEY, {"kind": kind, "table": rows, "units": units,
                                  "source": src.to_dict(), "note": note})


def _resolve(case: Case, loss: Any, kind: str) -> tuple[np.ndarray, list[str], str]:
    """(losses actions x hypotheses, action names, kind as given)."""
    if loss is None:
        sec = case.extras.get(DECISION_KEY)
        if sec is None:
            raise CaseError("the case has no loss table; set one with "
                            "bl.set_loss_table(case, table, kind='loss' or 'payoff') or pass "
                            "loss=DataFrame (actions as rows, hypotheses as columns)")
        kind, rows = sec["kind"], sec["table"]
        rows = _check_rows(rows, case, kind)  # catches a table left behind by an edit
    else:
        kind = _check_kind(kind)
        rows = _check_rows(_rows_from(loss), case, kind)
    hyps = case.hypothesis_names
    arr = np.array([[rows[a][h] for h in hyps] for a in rows], dtype=float)
    return (-arr if kind == "payoff" else arr), list(rows), kind


def loss_table(case: Case, loss: Any = None, *, kind: str = "loss") -> pd.DataFrame:
    """The losses in use (actions x hypotheses; a payoff table comes back negated)."""
    arr, actions, _ = _resolve(case, loss, kind)
    return pd.DataFrame(arr, index=pd.Index(actions, name="action"),
                        columns=pd.Index(case.hypothesis_names, name="hypothesis"))


# --------------------------------------------------------------------------- decisions


def _posterior(case: Case, scenario: str | None) -> np.ndarray:
    from .engine import update

    post = update(case, scenario=scenario, with_flags=False).posterior.to_numpy(float)
    if not np.all(np.isfinite(post)) or post.sum() <= 0:
        raise CaseError(f"the posterior under scenario '{scenario or case.active_scenario}' is "
                        "undefined (all priors zero); fix the priors before deciding")
    return post


def expected_loss(case: Case, loss: Any = None, *, kind: str = "loss",
                  scenario: str | None = None) -> pd.Series:
    """Expected loss of each action under the posterior: sum over H of loss(a, H)·P(H | e).

    With a payoff table the result is still in loss terms (the negated
    expected payoff); :func:`decision_summary` reports in the table's own terms.
    """
    arr, actions, _ = _resolve(case, loss, kind)
    return pd.Series(arr @ _posterior(case, scenario), index=pd.Index(actions, name="action"),
                     name="expected_loss")


def bayes_action(case: Case, loss: Any = None, *, kind: str = "loss",
                 scenario: str | None = None) -> str:
    """The action of least expected loss under the posterior (first listed on a tie)."""
    el = expected_loss(case, loss, kind=kind, scenario=scenario)
    return str(el.index[int(np.argmin(el.to_numpy()))])


def decision_summary(case: Case, loss: Any = None, *, kind: str = "loss") -> pd.DataFrame:
    """Expected loss (or payoff) of every action under the posterior of every scenario.

    One row per prior scenario ('base' first), the posterior computed from
    that scenario's priors and all observed evidence; one column per action
    in the table's own terms, then ``bayes_action`` (the best action under
    that scenario), ``measure`` ("expected loss" or "expected payoff") and
    ``active`` (the case's active scenario). JSON-ready via
    ``.to_dict(orient="index")``.
    """
    arr, actions, kind = _resolve(case, loss, kind)
    sign = -1.0 if kind == "payoff" else 1.0
    rows = []
    for sc in case.scenario_names:
        el = arr @ _posterior(case, sc)
        row: dict[str, Any] = {a: float(sign * v) + 0.0 for a, v in zip(actions, el, strict=True)}
        row["bayes_action"] = actions[int(np.argmin(el))]
        row["measure"] = f"expected {kind}"
        row["active"] = sc == case.active_scenario
        rows.append(row)
    out = pd.DataFrame(rows, index=pd.Index(case.scenario_names, name="scenario"))
    return out[[*actions, "bayes_action", "measure", "active"]]


def evpi(case: Case, loss: Any = None, *, kind: str = "loss",
         scenario: str | None = None) -> float:
    """Expected value of perfect information about the hypothesis.

    EVPI = min_a E[loss(a, H)] - E[min_a loss(a, H)]: what it would be worth to
    learn the true hypothesis before acting, under the current posterior.

    References
    ----------
    Raiffa & Schlaifer (1961), *Applied Statistical Decision Theory*, ch. 4.
    """
    arr, _, _ = _resolve(case, loss, kind)
    p = _posterior(case, scenario)
    a_now = int(np.argmin(arr @ p))
    # sum_H P(H) (loss(a_now, H) - min_a loss(a, H)): each term >= 0
    return float(p @ (arr[a_now] - arr.min(axis=0)))


def decision_threshold(case: Case, loss: Any = None, *, kind: str = "loss",
                       hypothesis: str | None = None,
                       scenario: str | None = None) -> pd.DataFrame:
    """Where the best action changes as the probability of one hypothesis moves.

    The probability t of ``hypothesis`` (default: the MAP) runs from 0 to 1
    while the other hypotheses keep their current relative weights (their
    posterior shares; prior shares if the posterior leaves them nothing,
    equal shares if those are zero too). Expected losses are straight lines
    in t, so the best action is constant on intervals; each row is one
    interval: ``hypothesis``, ``from_probability``, ``to_probability``,
    ``action`` and ``current`` (the interval holding today's posterior). The
    thresholds are the interval edges inside (0, 1).

    Examples
    --------
    >>> import beliefledger as bl
    >>> case = bl.Case("Tank alarm", hypotheses={"leak": 0.2, "no leak": 0.8},
    ...                exhaustive=True)
    >>> bl.set_loss_table(case, {"drain tank": {"leak": 1, "no leak": 5},
    ...                          "carry on": {"leak": 21, "no leak": 0}})
    >>> t = bl.decision_threshold(case, hypothesis="leak")
    >>> [(round(a, 6), act) for a, act in zip(t["from_probability"], t["action"])]
    [(0.0, 'carry on'), (0.2, 'drain tank')]

    (carry on costs 21t, draining 5 - 4t: equal at t = 0.2.)
    """
    arr, actions, _ = _resolve(case, loss, kind)
    hyps = case.hypothesis_names
    p = _posterior(case, scenario)
    focus = hyps[int(np.argmax(p))] if hypothesis is None else hypothesis  # MAP as the engine
    if focus not in hyps:
        raise CaseError(f"no hypothesis named {focus!r}; the hypotheses are {hyps}")
    j = hyps.index(focus)
    rest = np.delete(p, j)
    if rest.sum() <= 0:
        rest = np.delete(case.scenario_priors(scenario or case.active_scenario).to_numpy(), j)
    if rest.sum() <= 0:
        rest = np.ones(len(hyps) - 1)
    q = rest / rest.sum() if len(rest) else rest
    at_one = arr[:, j]
    at_zero = np.delete(arr, j, axis=1) @ q if len(q) else np.zeros(len(actions))
    slope = at_one - at_zero
    cuts = {0.0, 1.0}
    for a in range(len(actions)):
        for b in range(a + 1, len(actions)):
            d = slope[a] - slope[b]
            if d != 0:
                t = (at_zero[b] - at_zero[a]) / d
                if 0 < t < 1:
                    cuts.add(float(t))
    edges = sorted(cuts)
    segs: list[list[Any]] = []
    for lo, hi in zip(edges[:-1], edges[1:], strict=True):
        mid = 0.5 * (lo + hi)
        best = actions[int(np.argmin(at_zero + slope * mid))]
        if segs and segs[-1][2] == best:
            segs[-1][1] = hi
        else:
            segs.append([lo, hi, best])
    now = float(p[j])
    rows = [{"hypothesis": focus, "from_probability": lo, "to_probability": hi, "action": act,
             "current": bool(lo <= now <= hi and (now < hi or hi == 1.0))}
            for lo, hi, act in segs]
    out = pd.DataFrame(rows, columns=["hypothesis", "from_probability", "to_probability",
                                      "action", "current"])
    out.index.name = "interval"
    return out


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
        ev = case._get_ev(n)
        if ev.observed is not None:
            raise CaseError(f"evidence '{ev.name}' is already observed ({ev.observed!r}); value "
                            "of information is for items not yet observed (to ask what it would "
                            f"have been worth, copy the case and call observe('{ev.name}', None))")
        out.append(ev.name)
    return out


def _stack(case: Case, names: list[str]) -> np.ndarray:
    """P(state | H, other observed evidence) for each item, padded with zero rows:
    shape (items, most states, hypotheses)."""
    evs = case._evidence
    if not case._groups and all(e.given is None for e in evs.values()):
        tabs = [evs[n].table for n in names]  # no stated dependence: each item's own table
    else:
        tabs = [case._predictive_array(n) for n in names]
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


def predictive(case: Case, evidence: str, *, scenario: str | None = None) -> pd.Series:
    """P(state | evidence so far) for an item: sum over H of P(state | H, e)·P(H | e)."""
    names = _pending(case, evidence)
    ev = case.evidence[names[0]]
    lik = case._predictive_array(ev.name)
    return pd.Series(lik @ _posterior(case, scenario), index=pd.Index(ev.states, name="state"),
                     name="probability")


def preposterior(case: Case, evidence: str, *, scenario: str | None = None) -> pd.DataFrame:
    """What observing an item could do: one row per state with its predictive
    ``probability``, the posterior it would lead to (one column per hypothesis)
    and the ``map`` hypothesis then. A final row ``expected`` holds the
    probability-weighted posterior, which equals the current posterior (the
    law of total probability: belief is not expected to move)."""
    names = _pending(case, evidence)
    ev = case.evidence[names[0]]
    p = _posterior(case, scenario)
    lik = case._predictive_array(ev.name)
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
         scenario: str | None = None) -> float:
    """Expected value of sample information of observing one item before acting.

    EVSI = min_a E[loss(a, H) | e] - sum_x P(x | e)·min_a E[loss(a, H) | e, x]:
    the fall in expected loss from choosing the action after seeing the item.
    It is never negative and never above :func:`evpi`; it is 0 when no
    outcome of the item would change the best action.

    References
    ----------
    Raiffa & Schlaifer (1961), *Applied Statistical Decision Theory*, ch. 4.
    """
    names = _pending(case, evidence)
    losses, _, _ = _resolve(case, loss, kind)
    res = _voi(_stack(case, names), _posterior(case, scenario), losses)
    return float(res["evsi"][0])


def rank_next_evidence(case: Case, loss: Any = None, *, kind: str = "loss",
                       by: str | None = None, cost: Any = None, scenario: str | None = None,
                       evidence: Any = None) -> pd.DataFrame:
    """Rank the evidence not yet observed by what observing it is expected to give.

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
        Rank only these items (default: every item not yet observed).

    Returns
    -------
    DataFrame
        Indexed by evidence name, best first: ``rank``, ``states``,
        ``expected_entropy_reduction`` (bits), ``p_map_changes``,
        ``most_likely_state``, ``p_most_likely`` and, with a loss table,
        ``evsi``, ``cost``, ``net_value``; then ``reason`` (one line).

    References
    ----------
    Lindley (1956), *Ann. Math. Statist.* 27, 986-1005 (expected information);
    Raiffa & Schlaifer (1961) (EVSI).
    """
    names = _pending(case, evidence)
    losses = actions = None
    use_loss = loss is not None or DECISION_KEY in case.extras
    if use_loss:
        losses, actions, kind = _resolve(case, loss, kind)
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
                c = _number(f"cost of observing '{n}'", cmap[n])
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
    cols = ["rank", "states", "expected_entropy_reduction", "p_map_changes",
            "most_likely_state", "p_most_likely"]
    if use_loss:
        cols += ["evsi", "cost", "net_value"]
    cols.append("reason")
    if not names:
        return pd.DataFrame(columns=cols, index=pd.Index([], name="evidence"))
    p = _posterior(case, scenario)
    res = _voi(_stack(case, names), p, losses)
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
    return pd.DataFrame(data, index=pd.Index([names[i] for i in order], name="evidence"))


def _reason(row: dict[str, Any], h_now: float, cur: str, action: str | None,
            switch: list[str]) -> str:
    info = row["expected_entropy_reduction"]
    if info <= 1e-12:
        return ("cannot move belief: its likelihoods are the same under every hypothesis still "
                "in play")
    share = f" ({info / h_now:.0%} of the {h_now:.2f} bits now)" if h_now > 0 else ""
    text = f"expected to remove {info:.3f} bits{share}"
    pm = row["p_map_changes"]
    text += (f"; {pm:.0%} chance it displaces '{cur}' as the leading hypothesis" if pm > 0
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


__all__ = [
    "validate_decision", "decision_hypotheses_changed", "set_loss_table", "loss_table",
    "expected_loss", "bayes_action", "decision_summary", "decision_threshold", "evpi",
    "evsi", "predictive", "preposterior", "rank_next_evidence", "DECISION_KEY", "KINDS",
]

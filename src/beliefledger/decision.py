"""Decisions under the posterior: loss (or payoff) tables, expected losses, Bayes actions.

A loss table is a DataFrame indexed by action with one column per hypothesis;
a payoff table is its negative. Every function takes ``kind="loss"`` or
``kind="payoff"`` to say which was given, and the case can keep one table
(:func:`set_loss_table`, stored as the ``"loss_table"`` extras section with its
units and source).

The numbers support a decision; they do not make it. Where the case touches
health or safety, local codes, regulations and licensed practice prevail
over any expected-loss ranking.

References
----------
Raiffa, H. & Schlaifer, R. (1961), *Applied Statistical Decision Theory*,
Harvard (Bayes actions, expected loss).
"""

from __future__ import annotations

import warnings
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from .case import Source
from .case.extras import LOSS_TABLE, check_loss_kind, check_loss_rows, loss_rows
from .errors import CaseError

if TYPE_CHECKING:
    from .case import Case


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
        Their unit (e.g. "kEUR", "hours of downtime"). Without one a warning asks for
        it, a review flag (``loss-unit-missing``) says so and records show "unit not
        given".
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
        case.set_extra(LOSS_TABLE, None)
        return
    kind = check_loss_kind(kind)
    rows = check_loss_rows(loss_rows(table), case, kind)
    src = Source.coerce(source, what="source of the loss table")
    units = str(units or "").strip()
    if not units:
        warnings.warn("the loss table has no unit: pass units='kEUR' (or 'hours of downtime', "
                      "whatever its figures are in) so readers of the record know what they "
                      "mean; it is stored as 'unit not given'", UserWarning, stacklevel=2)
    case.set_extra(LOSS_TABLE, {"kind": kind, "table": rows, "units": units,
                                  "source": src.to_dict(), "note": note})


def resolve_losses(case: Case, loss: Any, kind: str) -> tuple[np.ndarray, list[str], str]:
    """(losses actions x hypotheses, action names, kind as given)."""
    if loss is None:
        sec = case.extras.get(LOSS_TABLE)
        if sec is None:
            raise CaseError("the case has no loss table; set one with "
                            "bl.set_loss_table(case, table, kind='loss' or 'payoff') or pass "
                            "loss=DataFrame (actions as rows, hypotheses as columns)")
        kind, rows = sec["kind"], sec["table"]
        rows = check_loss_rows(rows, case, kind)  # catches a table left behind by an edit
    else:
        kind = check_loss_kind(kind)
        rows = check_loss_rows(loss_rows(loss), case, kind)
    hyps = case.hypothesis_names
    arr = np.array([[rows[a][h] for h in hyps] for a in rows], dtype=float)
    return (-arr if kind == "payoff" else arr), list(rows), kind


def loss_table(case: Case, loss: Any = None, *, kind: str = "loss") -> pd.DataFrame:
    """The losses in use (actions x hypotheses; a payoff table comes back negated)."""
    arr, actions, _ = resolve_losses(case, loss, kind)
    return pd.DataFrame(arr, index=pd.Index(actions, name="action"),
                        columns=pd.Index(case.hypothesis_names, name="hypothesis"))


# --------------------------------------------------------------------------- decisions


def _checked(post: np.ndarray, scenario: str) -> np.ndarray:
    if not np.all(np.isfinite(post)) or post.sum() <= 0:
        raise CaseError(f"the posterior under scenario '{scenario}' is undefined (all priors "
                        "zero); fix the priors before deciding")
    return post


def posterior_array(case: Case, scenario: str | None) -> np.ndarray:
    """The posterior under ``scenario`` (default: the active one) as an array."""
    from .engine import update

    sc = case.active_scenario if scenario is None else scenario
    return _checked(update(case, scenario=sc, with_flags=False).posterior_values, sc)


def expected_loss(case: Case, loss: Any = None, *, kind: str = "loss",
                  scenario: str | None = None) -> pd.Series:
    """Expected loss of each action under the posterior: sum over H of loss(a, H)·P(H | e).

    With a payoff table the result is still in loss terms (the negated
    expected payoff); :func:`decision_summary` reports in the table's own terms.
    """
    arr, actions, _ = resolve_losses(case, loss, kind)
    return pd.Series(arr @ posterior_array(case, scenario), index=pd.Index(actions, name="action"),
                     name="expected_loss")


def bayes_action(case: Case, loss: Any = None, *, kind: str = "loss",
                 scenario: str | None = None) -> str:
    """The action of least expected loss under the posterior (first listed on a tie)."""
    el = expected_loss(case, loss, kind=kind, scenario=scenario)
    return str(el.index[int(np.argmin(el.to_numpy()))])


def decision_summary(case: Case, loss: Any = None, *, kind: str = "loss",
                     ledgers: Mapping[str, Any] | None = None) -> pd.DataFrame:
    """Expected loss (or payoff) of every action under the posterior of every scenario.

    One row per prior scenario ('base' first), the posterior computed from
    that scenario's priors and all observed evidence; one column per action
    in the table's own terms, then ``bayes_action`` (the best action under
    that scenario), ``measure`` ("expected loss" or "expected payoff") and
    ``active`` (the case's active scenario). JSON-ready via
    ``.to_dict(orient="index")``. ``ledgers`` (scenario -> ledger, from
    ``engine.update_all``) saves recomputing them.
    """
    from .engine import update_all

    arr, actions, kind = resolve_losses(case, loss, kind)
    if ledgers is None or not set(case.scenario_names) <= set(ledgers):
        ledgers = update_all(case, with_flags=False)
    sign = -1.0 if kind == "payoff" else 1.0
    rows = []
    for sc in case.scenario_names:
        el = arr @ _checked(ledgers[sc].posterior_values, sc)
        row: dict[str, Any] = {a: float(sign * v) + 0.0 for a, v in zip(actions, el, strict=True)}
        row["bayes_action"] = actions[int(np.argmin(el))]
        row["measure"] = f"expected {kind}"
        row["active"] = sc == case.active_scenario
        rows.append(row)
    out = pd.DataFrame(rows, index=pd.Index(case.scenario_names, name="scenario"))
    return out[[*actions, "bayes_action", "measure", "active"]]



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
    ...                          "carry on": {"leak": 21, "no leak": 0}}, units="k$")
    >>> t = bl.decision_threshold(case, hypothesis="leak")
    >>> [(round(a, 6), act) for a, act in zip(t["from_probability"], t["action"])]
    [(0.0, 'carry on'), (0.2, 'drain tank')]

    (carry on costs 21t, draining 5 - 4t: equal at t = 0.2.)
    """
    arr, actions, _ = resolve_losses(case, loss, kind)
    hyps = case.hypothesis_names
    p = posterior_array(case, scenario)
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



__all__ = ["set_loss_table", "loss_table", "expected_loss", "bayes_action", "decision_summary",
           "decision_threshold", "resolve_losses", "posterior_array"]

"""Several experts: their numbers kept with the case, pooled, and the conclusion under each.

Each expert is named and sourced (:func:`add_expert`); each gives a prior
(:func:`set_expert_prior`) or a likelihood column
(:func:`set_expert_likelihood`), every value a number or a low / best /
high range. The judgements stay in the case (the ``"experts"`` extras
section, :mod:`beliefledger.case.experts`), whatever is done with them:
:func:`beliefledger.pool` combines them, :func:`apply_pool` puts the pooled
numbers (and ranges, for the Monte Carlo) into the case, and
:func:`expert_review` says whether the MAP holds under each expert alone
("MAP unchanged under 3 of 4 experts"), like prior scenarios do.
Calibration questions for performance weights are kept too
(:func:`set_calibration`).
"""

from __future__ import annotations

import copy
import math
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from ._checks import check_name, check_text, fmt_g
from .case import Source
from .case.experts import (
    EXPERTS,
    check_expert,
    check_judgement,
    check_value,
    expert_names,
    experts_section,
    is_stale,
)
from .elicit import PooledJudgement
from .errors import CaseError, CaseTypeError

if TYPE_CHECKING:
    from .case import Case


def _store(case: Case, sec: dict[str, Any]) -> None:
    empty = not sec["experts"] and not sec.get("calibration")
    case.set_extra(EXPERTS, None if empty else sec)


def add_expert(case: Case, name: str, *, source: Any = None, note: str = "") -> None:
    """Add a named expert (``source``: who they are, their standing, why they were asked)."""
    nm = check_name("expert", name)
    sec = copy.deepcopy(experts_section(case))
    if nm in expert_names(case):
        raise CaseError(f"expert '{nm}' is already listed; choose another name")
    sec["experts"].append({"name": nm,
                           "source": Source.coerce(source, what=f"source of expert '{nm}'")
                           .to_dict(), "note": check_text(f"note of expert '{nm}'", note)})
    _store(case, sec)


def remove_expert(case: Case, name: str) -> None:
    """Remove an expert with all of their judgements and calibration answers."""
    nm = check_expert(case, name)
    sec = copy.deepcopy(experts_section(case))
    sec["experts"] = [e for e in sec["experts"] if e["name"] != nm]
    sec["judgements"] = [j for j in sec["judgements"] if j["expert"] != nm]
    cal = sec.get("calibration")
    if cal:
        cal["assessments"].pop(nm, None)
        if not cal["assessments"]:
            sec.pop("calibration")
    _store(case, sec)


def _put(case: Case, judgement: dict[str, Any]) -> None:
    j = check_judgement(judgement, case)
    sec = copy.deepcopy(experts_section(case))
    key = (j["expert"], j["target"], j.get("evidence"), j.get("hypothesis"))
    sec["judgements"] = [x for x in sec["judgements"]
                         if (x["expert"], x["target"], x.get("evidence"), x.get("hypothesis"))
                         != key] + [j]
    _store(case, sec)


def set_expert_prior(case: Case, expert: str, priors: Mapping[str, Any], *,
                     source: Any = None, note: str = "") -> None:
    """Enter one expert's priors: hypothesis -> a number or (low, best, high) (or a dict
    with ``best`` and optionally ``low`` / ``high``). The best values sum to 1. An
    earlier prior judgement of the same expert is replaced."""
    check_expert(case, expert)
    if isinstance(priors, pd.Series):
        priors = priors.to_dict()
    _put(case, {"expert": expert, "target": "prior", "values": priors,
                "source": Source.coerce(source).to_dict(), "note": note})


def set_expert_likelihood(case: Case, expert: str, evidence: str, hypothesis: str,
                          values: Any, *, state: str | None = None, source: Any = None,
                          note: str = "") -> None:
    """Enter one expert's likelihood column P(state | hypothesis) of one item.

    ``values`` maps every state to a number or (low, best, high); with
    ``state`` on a two-state item, ``values`` is that one state's number or
    range and the other state gets the rest (1 - best, and the mirrored
    range).
    """
    check_expert(case, expert)
    ev = case.evidence_item(evidence)
    h = case.hypothesis(hypothesis).name
    if state is not None:
        ev.state_index(state)
        if len(ev.states) != 2:
            raise CaseError(f"state= gives one state's value, which fixes the other only on a "
                            f"two-state item; evidence '{ev.name}' has states {list(ev.states)}: "
                            "give a value for every state")
        v = check_value(f"expert '{expert}''s P({state} | {h}) of evidence '{ev.name}'", values)
        other = next(s for s in ev.states if s != state)
        rest = {"best": 1 - v["best"]}
        if "low" in v:
            rest.update(low=1 - v["high"], high=1 - v["low"])
        values = {state: v, other: {k: rest[k] for k in ("low", "best", "high") if k in rest}}
    if isinstance(values, pd.Series):
        values = values.to_dict()
    _put(case, {"expert": expert, "target": "likelihood", "evidence": ev.name, "hypothesis": h,
                "values": values, "source": Source.coerce(source).to_dict(), "note": note})


def set_calibration(case: Case, questions: Mapping[str, float],
                    assessments: Mapping[str, Mapping[str, Any]], *,
                    quantiles: Any = (0.05, 0.5, 0.95), scales: Mapping[str, str] | None = None,
                    notes: Mapping[str, str] | None = None) -> None:
    """Keep calibration questions with the case: question -> its true value, and each
    expert's quantiles for every question (expert -> {question: [q05, q50, q95]}), for
    performance weights (``bl.pool(..., weights="performance")``)."""
    if not isinstance(questions, Mapping) or not isinstance(assessments, Mapping):
        raise CaseTypeError("questions must map question -> realization and assessments expert "
                            "-> {question: quantiles}")
    for e in assessments:
        check_expert(case, e)
    sec = copy.deepcopy(experts_section(case))
    sec["calibration"] = {
        "quantiles": [float(q) if isinstance(q, int | float) and not isinstance(q, bool) else q
                      for q in quantiles],
        "questions": [{"name": q, "realization": x, "scale": (scales or {}).get(q, "uniform"),
                       "note": (notes or {}).get(q, "")} for q, x in questions.items()],
        "assessments": {e: {q: list(v) if isinstance(v, list | tuple) else v
                            for q, v in rows.items()} if isinstance(rows, Mapping) else rows
                        for e, rows in assessments.items()}}
    _store(case, sec)


def _label(j: Mapping[str, Any]) -> str:
    return ("prior" if j["target"] == "prior" else
            f"P(state | '{j['hypothesis']}') of '{j['evidence']}'")


def expert_judgements(case: Case) -> pd.DataFrame:
    """Every expert's input as entered, one row per number: ``expert``, ``input``,
    ``key`` (hypothesis or state), ``low``, ``best``, ``high``, ``stale`` (entered for
    an earlier hypothesis set), ``source``, ``note``."""
    rows = []
    for j in experts_section(case)["judgements"]:
        stale = is_stale(j, case)
        for k, v in j["values"].items():
            rows.append({"expert": j["expert"], "input": _label(j), "key": k,
                         "low": v.get("low", np.nan), "best": v["best"],
                         "high": v.get("high", np.nan), "stale": stale,
                         "source": str(Source(**j["source"])), "note": j["note"]})
    return pd.DataFrame(rows, columns=["expert", "input", "key", "low", "best", "high", "stale",
                                       "source", "note"])


def apply_pool(case: Case, pooled: PooledJudgement, *, state: str | None = None) -> None:
    """Put pooled expert judgements into the case, recorded as an assumption.

    The pooled best values become the case's priors (the hypothesis table's)
    or the likelihood column, with the pool as their source. Where the
    experts gave ranges, the pooled range feeds the Monte Carlo: for a
    likelihood column, a range on ``state`` (default: the observed state, or
    the first state with a pooled range) through
    :func:`beliefledger.set_likelihood_uncertainty`; for priors, a Dirichlet
    centred on them whose concentration is the geometric mean of the ones
    fitted to each hypothesis' pooled range (a Dirichlet has one).
    """
    from .uncertainty import fit_concentration, set_likelihood_uncertainty, set_prior_uncertainty

    if not isinstance(pooled, PooledJudgement) or pooled.target not in ("prior", "likelihood"):
        raise CaseTypeError("apply_pool takes a PooledJudgement of a case's prior or likelihood "
                            "(bl.pool(case, ...))")
    vals = {k: float(v) for k, v in pooled.values.items()}
    ranged = pooled.ranges.dropna()
    what = pooled.label
    if pooled.target == "prior":
        if set(vals) != set(case.hypothesis_names):
            raise CaseError(f"the pooled priors are for {sorted(vals)}, not the case's hypotheses "
                            f"{case.hypothesis_names}; pool again")
        ks = []
        for _, r in ranged.iterrows():
            if 0 < r["low"] < r["best"] < r["high"] < 1:
                ks.append(fit_concentration(r["best"], r["low"], r["high"], pooled.level)[0])
        case.set_priors(vals, source=pooled.source)
        if ks and len(ks) == len(vals):
            k = math.exp(sum(math.log(x) for x in ks) / len(ks))
            set_prior_uncertainty(case, concentration=k, source=pooled.source,
                                  method=f"Dirichlet centred on the pooled priors, concentration "
                                         f"{fmt_g(k)}: the geometric mean of those fitted to each "
                                         f"hypothesis' pooled {pooled.level:.0%} range")
    else:
        ev = case.evidence_item(pooled.evidence)
        if set(vals) != set(ev.states):
            raise CaseError(f"the pooled likelihoods are for states {sorted(vals)}, not those of "
                            f"evidence '{ev.name}' {list(ev.states)}; pool again")
        st = state
        if st is None:
            st = ev.observed if ev.observed in ranged.index else next(iter(ranged.index), None)
        elif st not in ranged.index:
            raise CaseError(f"no pooled range for state '{st}' of evidence '{ev.name}': not every "
                            "expert gave one")
        case.set_likelihood(ev.name, pooled.hypothesis, [vals[s] for s in ev.states],
                            source=pooled.source)
        if st is not None:
            r = ranged.loc[st]
            set_likelihood_uncertainty(case, ev.name, pooled.hypothesis, low=float(r["low"]),
                                       high=float(r["high"]), state=st, level=pooled.level,
                                       source=pooled.source)
    case.record_assumption(
        "expert-pool", "priors" if pooled.target == "prior" else pooled.evidence,
        f"{what} set to the {pooled.method} opinion pool of {len(pooled.weights)} experts "
        f"({pooled.weighting} weights: "
        + ", ".join(f"{e} {fmt_g(w)}" for e, w in pooled.weights.items()) + "): "
        + ", ".join(f"{k} {fmt_g(v)}" for k, v in vals.items())
        + (f"; pooled {pooled.level:.0%} ranges feed the Monte Carlo" if len(ranged) else ""))


class ExpertReview:
    """The conclusion under each expert's numbers alone, and the spread of every number.

    ``frame``: one row per expert who gave numbers, with ``inputs`` (how many
    judgements), ``map``, ``p_map`` and ``changed`` (the MAP differs from the
    case's). ``spread``: one row per judged number, each expert's best, the
    lowest, the highest and the case's own value. ``verdict`` says it in a
    sentence ("MAP 'X' unchanged under 3 of 4 experts").
    """

    def __init__(self, title: str, reference: str, frame: pd.DataFrame, spread: pd.DataFrame,
                 experts: list[dict[str, Any]], stale: list[str]) -> None:
        self.title, self.reference = title, reference
        self.frame, self.spread, self.experts, self.stale = frame, spread, experts, stale

    @property
    def stable(self) -> bool:
        return not bool(self.frame["changed"].any())

    @property
    def verdict(self) -> str:
        n = len(self.frame)
        if not n:
            return "no expert has given numbers for this case yet"
        same = int((~self.frame["changed"]).sum())
        text = f"MAP '{self.reference}' unchanged under {same} of {n} experts"
        moved = self.frame[self.frame["changed"]]
        if len(moved):
            text += " (changes under " + ", ".join(
                f"'{e}': MAP '{r['map']}'" for e, r in moved.iterrows()) + ")"
        return text

    summary = verdict

    def to_dict(self) -> dict[str, Any]:
        return {"title": self.title, "reference": self.reference, "verdict": self.verdict,
                "experts": [{"expert": e, "map": r["map"], "p_map": float(r["p_map"]),
                             "changed": bool(r["changed"]), "inputs": int(r["inputs"])}
                            for e, r in self.frame.iterrows()],
                "stale": list(self.stale)}

    def __repr__(self) -> str:
        return f"ExpertReview({self.title!r}: {self.verdict})"

    def _repr_html_(self) -> str:
        from .display import experts_html

        return experts_html(self)


def expert_review(case: Case) -> ExpertReview:
    """The MAP under each expert's numbers alone (their priors and likelihoods in place
    of the case's, the case's own numbers elsewhere), and the spread of each number.

    Judgements entered for an earlier hypothesis set are left out and listed in
    ``stale``.
    """
    sec = experts_section(case)
    ref = case.update().map_hypothesis
    by: dict[str, list[dict[str, Any]]] = {}
    stale = []
    for j in sec["judgements"]:
        if is_stale(j, case):
            stale.append(f"{j['expert']}: {_label(j)}")
            continue
        by.setdefault(j["expert"], []).append(j)
    rows, spread = [], {}
    for ex in expert_names(case):
        js = by.get(ex)
        if not js:
            continue
        alone = case.copy()
        for j in js:
            vals = {k: v["best"] for k, v in j["values"].items()}
            if j["target"] == "prior":
                alone.use_scenario(None)
                alone.set_priors(vals, source={"where": f"expert {ex}"})
            else:
                ev = alone.evidence_item(j["evidence"])
                alone.set_likelihood(ev.name, j["hypothesis"], [vals[s] for s in ev.states])
            for k, v in vals.items():
                spread.setdefault((j["target"], j.get("evidence"), j.get("hypothesis"), k),
                                  {})[ex] = v
        led = alone.update()
        rows.append({"expert": ex, "inputs": len(js), "map": led.map_hypothesis,
                     "p_map": float(led.posterior[led.map_hypothesis]),
                     "changed": led.map_hypothesis != ref})
    frame = pd.DataFrame(rows, columns=["expert", "inputs", "map", "p_map", "changed"]
                         ).set_index("expert")
    srows = []
    for (target, ev_name, hyp, key), vals in spread.items():
        if target == "prior":
            own = float(case.priors[key])
        else:
            ev = case.evidence[ev_name]
            own = float(ev.table[ev.states.index(key), ev.hypotheses.index(hyp)])
        label = _label({"target": target, "evidence": ev_name, "hypothesis": hyp})
        srows.append({"input": label, "key": key, **vals, "lowest": min(vals.values()),
                      "highest": max(vals.values()), "case": own})
    spread_frame = pd.DataFrame(srows)
    return ExpertReview(case.title, ref, frame, spread_frame, list(sec["experts"]), stale)


__all__ = ["add_expert", "remove_expert", "set_expert_prior", "set_expert_likelihood",
           "set_calibration", "expert_judgements", "apply_pool", "expert_review",
           "ExpertReview"]

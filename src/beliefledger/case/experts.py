"""Several experts' numbers, kept with the case: the ``"experts"`` extras section.

Each expert is named and sourced; each judgement is one expert's full
distribution for one input, every value a single number or a low / best /
high range:

    {"experts": [{"name": "A. Moreau", "source": {...}, "note": "..."}],
     "judgements": [
        {"expert": "A. Moreau", "target": "prior",
         "values": {hypothesis: {"best": 0.3, "low": 0.2, "high": 0.45}, ...},
         "source": {...}, "note": "..."},
        {"expert": "A. Moreau", "target": "likelihood", "evidence": "E", "hypothesis": "H",
         "values": {state: {"best": 0.7}, ...}, "source": {...}, "note": "..."}],
     "calibration": {"quantiles": [0.05, 0.5, 0.95],
                     "questions": [{"name": "q1", "realization": 41.0, "scale": "uniform"}],
                     "assessments": {expert: {question: [q05, q50, q95]}}}}

The section is validated on every edit and on load. A judgement keeps the
names it was entered with: when a hypothesis is renamed it follows; when the
hypothesis set changes otherwise, the judgement no longer covers the case's
hypotheses and is *stale* (kept, shown, and refused by the pool until it is
entered again), so no expert's input is lost or silently re-spread.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

from .._checks import check_name, check_text, fmt_g, key_gaps
from ..errors import CaseError, CaseTypeError
from .extras import Section, register_section
from .members import Source

if TYPE_CHECKING:
    from .model import Case

EXPERTS = "experts"
TARGETS = ("prior", "likelihood")
SCALES = ("uniform", "log")
_JUDGEMENT_KEYS = {"expert", "target", "evidence", "hypothesis", "values", "source", "note"}


def _finite(v: Any) -> bool:
    """A finite real number (no bool; an integer too long for a float is not finite)."""
    if isinstance(v, bool) or not isinstance(v, int | float):
        return False
    try:
        return math.isfinite(v)
    except OverflowError:
        return False


def _err(fn, *args: Any) -> Any:
    try:
        return fn(*args)
    except CaseTypeError as exc:
        raise CaseError(str(exc)) from None


def _src(value: Any, what: str) -> dict[str, str]:
    return _err(lambda v: Source.coerce(v, what=what).to_dict(), value)


def check_value(what: str, value: Any) -> dict[str, float]:
    """One judged probability: a number, a (low, best, high) triple or a mapping with
    ``best`` and optionally ``low`` and ``high``; returned as a mapping."""
    if isinstance(value, Mapping):
        extra = set(value) - {"low", "best", "high"}
        if extra or "best" not in value:
            raise CaseError(f"{what} must give 'best' (and optionally 'low' and 'high'), got "
                            f"fields {sorted(map(str, value))}")
        parts = {k: value[k] for k in ("low", "best", "high") if k in value}
    elif isinstance(value, list | tuple):
        if len(value) != 3:
            raise CaseError(f"{what} is {value!r:.60}; give one number or a (low, best, high) "
                            "triple")
        parts = dict(zip(("low", "best", "high"), value, strict=True))
    else:
        parts = {"best": value}
    out: dict[str, float] = {}
    for k, v in parts.items():
        if not _finite(v) or not 0 <= v <= 1:
            raise CaseError(f"{what}: {k} is {v!r:.40}; give a probability between 0 and 1")
        out[k] = float(v)
    if ("low" in out) != ("high" in out):
        raise CaseError(f"{what} gives only one end of a range; give both low and high, or "
                        "neither")
    if "low" in out and not out["low"] <= out["best"] <= out["high"]:
        raise CaseError(f"{what}: low {fmt_g(out['low'])} / best {fmt_g(out['best'])} / high "
                        f"{fmt_g(out['high'])} is not in order; give low <= best <= high")
    return {k: out[k] for k in ("low", "best", "high") if k in out}


def check_distribution(what: str, values: Any, keys: list[str] | None) -> dict[str, dict]:
    """A judged distribution: key -> value (see :func:`check_value`); the bests sum to 1.
    With ``keys`` the mapping must name exactly those keys."""
    if not isinstance(values, Mapping) or not values:
        raise CaseError(f"{what} must map each {'state' if keys is None else 'name'} to a "
                        "probability (or a low / best / high range)")
    if keys is not None:
        missing, unknown = key_gaps(values, keys)
        if missing or unknown:
            raise CaseError(f"{what} misses {missing} and names unknown {unknown}; give one "
                            f"value for each of {keys[:12]}")
    out = {str(k): check_value(f"{what}, value for '{k}'", v) for k, v in values.items()}
    total = math.fsum(v["best"] for v in out.values())
    if abs(total - 1) > 1e-6:
        raise CaseError(f"{what}: the best values sum to {fmt_g(total)}, not 1; an expert's "
                        "numbers for one input form a distribution, so make them sum to 1")
    return out


def _keys_now(j: Mapping[str, Any], case: Case) -> list[str] | None:
    """The keys a judgement must cover in the case as it is now (None: it names an item or
    hypothesis the case no longer has)."""
    if j["target"] == "prior":
        return case.hypothesis_names
    ev = case.evidence.get(j["evidence"])
    if ev is None or j["hypothesis"] not in case.hypotheses:
        return None
    return list(ev.states)


def is_stale(j: Mapping[str, Any], case: Case) -> bool:
    """True when a judgement no longer covers exactly the case's hypotheses or states."""
    keys = _keys_now(j, case)
    return keys is None or set(j["values"]) != set(keys)


def validate_experts(value: Any, case: Case) -> dict[str, Any]:
    """Check the ``experts`` section (structure, names, numbers). A stale judgement (see
    :func:`is_stale`) is kept as it was entered; a new one is checked against the case
    as it is now by :func:`check_judgement`."""
    if not isinstance(value, Mapping) or set(value) - {"experts", "judgements", "calibration"}:
        raise CaseError(f"extras section '{EXPERTS}' must be an object with fields experts, "
                        "judgements, calibration")
    experts = value.get("experts", [])
    if not isinstance(experts, list):
        raise CaseError("the experts must be a list of {name, source, note}")
    ex_out, names = [], []
    for i, e in enumerate(experts):
        if not isinstance(e, Mapping) or set(e) - {"name", "source", "note"}:
            raise CaseError(f"expert #{i + 1} must be an object with fields name, source, note")
        nm = _err(check_name, "expert", e.get("name"))
        if nm in names:
            raise CaseError(f"expert '{nm}' is listed twice; expert names are unique")
        names.append(nm)
        ex_out.append({"name": nm, "source": _src(e.get("source"), f"source of expert '{nm}'"),
                       "note": _err(check_text, f"note of expert '{nm}'", e.get("note", ""))})
    judgements = value.get("judgements", [])
    if not isinstance(judgements, list):
        raise CaseError("the experts' judgements must be a list")
    j_out = []
    seen: set[tuple] = set()
    for i, j in enumerate(judgements):
        j_out.append(_judgement(i, j, names, case, False))
        key = (j_out[-1]["expert"], j_out[-1]["target"], j_out[-1].get("evidence"),
               j_out[-1].get("hypothesis"))
        if key in seen:
            raise CaseError(f"judgement #{i + 1} repeats expert '{key[0]}' on the same input; "
                            "each expert gives one judgement per input")
        seen.add(key)
    out: dict[str, Any] = {"experts": ex_out, "judgements": j_out}
    if value.get("calibration") is not None:
        out["calibration"] = _calibration(value["calibration"], names)
    return out


def _judgement(i: int, j: Any, names: list[str], case: Case, strict: bool) -> dict[str, Any]:
    what = "the new judgement" if strict else f"judgement #{i + 1}"
    if not isinstance(j, Mapping) or set(j) - _JUDGEMENT_KEYS:
        raise CaseError(f"{what} must be an object with fields {sorted(_JUDGEMENT_KEYS)}")
    ex = j.get("expert")
    if ex not in names:
        raise CaseError(f"{what} names expert {ex!r:.60}, who is not one of the case's experts "
                        f"{names}; add the expert first with bl.add_expert(case, {ex!r:.60}, "
                        "source=...)")
    target = j.get("target")
    if target not in TARGETS:
        raise CaseError(f"{what} has target {target!r:.40}; use 'prior' or 'likelihood'")
    out: dict[str, Any] = {"expert": ex, "target": target}
    if target == "likelihood":
        out["evidence"] = _err(check_name, "evidence", j.get("evidence"))
        out["hypothesis"] = _err(check_name, "hypothesis", j.get("hypothesis"))
    elif "evidence" in j or "hypothesis" in j:
        raise CaseError(f"{what} is a prior judgement; it names no evidence or hypothesis")
    label = (f"expert '{ex}''s prior" if target == "prior" else
             f"expert '{ex}''s P(state | '{out['hypothesis']}') of evidence '{out['evidence']}'")
    keys = None
    if strict:
        keys = _keys_now(out | {"values": {}}, case)
        if keys is None:
            raise CaseError(f"{label} names evidence or a hypothesis the case does not have; "
                            f"the items are {case.evidence_names[:12]} and the hypotheses "
                            f"{case.hypothesis_names[:12]}")
    out["values"] = check_distribution(label, j.get("values"), keys)
    out["source"] = _src(j.get("source"), f"source of {what}")
    out["note"] = _err(check_text, f"note of {what}", j.get("note", ""))
    return out


def check_judgement(j: Any, case: Case) -> dict[str, Any]:
    """One new judgement, checked against the case as it is now (every hypothesis, or
    every state of the item, given exactly once)."""
    return _judgement(0, j, expert_names(case), case, True)


def _calibration(c: Any, names: list[str]) -> dict[str, Any]:
    what = "the experts' calibration questions"
    if not isinstance(c, Mapping) or set(c) - {"quantiles", "questions", "assessments"}:
        raise CaseError(f"{what} must be an object with fields quantiles, questions, "
                        "assessments")
    qs = c.get("quantiles", [0.05, 0.5, 0.95])
    if not isinstance(qs, list) or len(qs) < 1 or any(
            isinstance(q, bool) or not isinstance(q, int | float) or not 0 < q < 1 for q in qs) \
            or any(b <= a for a, b in zip(qs, qs[1:], strict=False)):
        raise CaseError(f"{what}: quantiles {qs!r:.60} must be increasing probabilities "
                        "strictly between 0 and 1 (usually [0.05, 0.5, 0.95])")
    questions = c.get("questions")
    if not isinstance(questions, list) or not questions:
        raise CaseError(f"{what}: give a non-empty list of questions with their realizations")
    q_out, q_names = [], []
    for i, q in enumerate(questions):
        if not isinstance(q, Mapping) or set(q) - {"name", "realization", "scale", "note"}:
            raise CaseError(f"calibration question #{i + 1} must be an object with fields name, "
                            "realization, scale, note")
        nm = _err(check_name, "calibration question", q.get("name"))
        if nm in q_names:
            raise CaseError(f"calibration question '{nm}' is given twice")
        x = q.get("realization")
        if not _finite(x):
            raise CaseError(f"calibration question '{nm}': realization {x!r:.40} must be a "
                            "finite number (the true value, known to the analyst)")
        scale = q.get("scale", "uniform")
        if scale not in SCALES:
            raise CaseError(f"calibration question '{nm}': scale {scale!r:.30} is not one of "
                            f"{list(SCALES)}")
        if scale == "log" and x <= 0:
            raise CaseError(f"calibration question '{nm}' is on the log scale, so its "
                            f"realization must be above 0, got {x:g}")
        q_names.append(nm)
        q_out.append({"name": nm, "realization": float(x), "scale": scale,
                      "note": _err(check_text, "note", q.get("note", ""))})
    assess = c.get("assessments")
    if not isinstance(assess, Mapping) or not assess:
        raise CaseError(f"{what}: give each expert's assessments, expert -> {{question: "
                        f"[{', '.join(fmt_g(q) for q in qs)} quantiles]}}")
    a_out: dict[str, dict[str, list[float]]] = {}
    for ex, rows in assess.items():
        if ex not in names:
            raise CaseError(f"calibration assessments name expert {ex!r:.60}, who is not one of "
                            f"the case's experts {names}; add the expert first")
        if not isinstance(rows, Mapping) or set(rows) != set(q_names):
            got = sorted(rows) if isinstance(rows, Mapping) else rows
            raise CaseError(f"expert '{ex}' must assess every calibration question {q_names}; "
                            f"got {got!r:.80}")
        a_out[ex] = {}
        for qn in q_names:
            vals = rows[qn]
            scale = next(q["scale"] for q in q_out if q["name"] == qn)
            if (not isinstance(vals, list | tuple) or len(vals) != len(qs)
                    or not all(_finite(v) for v in vals)
                    or any(b <= a for a, b in zip(vals, vals[1:], strict=False))):
                raise CaseError(f"expert '{ex}' on calibration question '{qn}': {vals!r:.60} "
                                f"must be {len(qs)} increasing numbers (the "
                                f"{', '.join(fmt_g(q) for q in qs)} quantiles)")
            if scale == "log" and vals[0] <= 0:
                raise CaseError(f"expert '{ex}' on calibration question '{qn}' (log scale): "
                                "quantiles must be above 0")
            a_out[ex][qn] = [float(v) for v in vals]
    return {"quantiles": [float(q) for q in qs], "questions": q_out, "assessments": a_out}


def experts_hypotheses_changed(value: Any, case: Case, renamed: Mapping[str, str | None],
                               added: Mapping[str, Any]) -> dict[str, Any]:
    """Follow renamed hypotheses; removed or added ones leave judgements stale (kept)."""
    out = dict(value)
    js = []
    for j in value.get("judgements", []):
        j = dict(j)
        if j["target"] == "prior":
            j["values"] = {_followed(k, renamed): v for k, v in j["values"].items()}
        elif j.get("hypothesis") in renamed and renamed[j["hypothesis"]] is not None:
            j["hypothesis"] = renamed[j["hypothesis"]]
        js.append(j)
    out["judgements"] = js
    return validate_experts(out, case)


def _followed(name: str, renamed: Mapping[str, str | None]) -> str:
    """The new name of a renamed hypothesis; a removed one keeps its name (stale)."""
    new = renamed.get(name, name)
    return name if new is None else new


def experts_section(case: Case) -> dict[str, Any]:
    """The section as it is (an empty one when the case has no experts)."""
    sec = case.extras.get(EXPERTS)
    return {"experts": [], "judgements": []} if not sec else sec


def expert_names(case: Case) -> list[str]:
    return [e["name"] for e in experts_section(case)["experts"]]


def check_expert(case: Case, name: Any) -> str:
    """An expert of the case by name (an error listing them, with the fix, otherwise)."""
    names = expert_names(case)
    if name not in names:
        raise CaseError(f"no expert named {name!r:.60}; the case's experts are {names}; add one "
                        f"with bl.add_expert(case, {name!r:.60}, source=...)")
    return name


register_section(Section(EXPERTS, validate_experts, experts_hypotheses_changed))

__all__ = ["EXPERTS", "TARGETS", "validate_experts", "experts_section", "expert_names",
           "check_expert", "check_value", "check_distribution", "check_judgement", "is_stale"]

"""The serial form of a case: a JSON-ready dict, and back, validating every field.

``case_to_dict`` writes what :meth:`Case.to_dict` returns; ``parts_from_dict``
reads it back into members (hypotheses, evidence items, scenarios, joint
groups) and plain fields, ready for :meth:`Case.from_members`, which
validates the whole. Reading never evaluates anything: it checks types,
names and numbers field by field, and a bad field is an error that names
it. ``upgrade`` brings a dict written by an earlier schema version up to
the current one (the keys that were renamed), so nothing saved is lost.

Sums that are off 1 (a part-way edit that was saved) are accepted here and
reported by the ledger's flags.
"""

from __future__ import annotations

import copy
import math
from collections.abc import Mapping
from typing import Any

import numpy as np

from .._checks import check_name, check_probability, check_text
from ..errors import CaseFileError
from .artefacts import artefact_from_dict
from .members import (
    BASE_SCENARIO,
    SCENARIO_MEANINGS,
    UNCERTAIN_FORMS,
    Evidence,
    Hypothesis,
    JointGroup,
    Scenario,
    Source,
    UncertainObservation,
)
from .parsing import is_catch_all_name
from .uncertain import parse_weights

SCHEMA_VERSION = 3
"""Version of the serial form. 2: ``joint_groups`` (was ``groups``), an evidence
item's ``likelihood_evidence`` (was ``observed_only``), extras section
``loss_table`` (was ``decision``). 3: an evidence item's ``uncertain``
observation, a scenario's ``meaning`` and ``basis``, extras sections
``hypothesis_groups`` and ``experts`` (all new and optional: a version 2
file reads as it is)."""

CASE_KEYS = {"title", "question", "analyst", "notes", "exhaustive", "safety_related",
             "hypotheses", "evidence", "scenarios", "active_scenario", "assumptions", "extras",
             "joint_groups"}
HYPOTHESIS_KEYS = {"name", "prior", "description", "source", "catch_all"}
EVIDENCE_KEYS = {"name", "description", "states", "likelihoods", "observed",
                 "likelihood_evidence", "shared_source", "source", "entry_sources", "given",
                 "conditional_likelihoods", "artefacts", "uncertain"}
GROUP_KEYS = {"name", "members", "kind", "covariance", "joint", "source", "note"}
SCENARIO_KEYS = {"name", "priors", "source", "note", "meaning", "basis"}
UNCERTAIN_KEYS = {"form", "weights", "source", "note", "reported", "reliability"}


def case_to_dict(case: Any) -> dict[str, Any]:
    """A JSON-ready, lossless description of ``case`` (schema :data:`SCHEMA_VERSION`)."""
    groups = case.joint_groups
    return {
        "title": case.title,
        "question": case.question,
        "analyst": case.analyst,
        "notes": case.notes,
        "exhaustive": case.exhaustive,
        "safety_related": case.safety_related,
        "hypotheses": [h.to_dict() for h in case.hypotheses.values()],
        "evidence": [e.to_dict() for e in case.evidence.values()],
        "scenarios": [s.to_dict() for s in case.scenarios.values()],
        "active_scenario": case.active_scenario,
        "assumptions": [dict(a) for a in case.assumptions],
        "extras": copy.deepcopy(case.extras),
        **({"joint_groups": [g.to_dict() for g in groups.values()]} if groups else {}),
    }


def upgrade(data: Mapping[str, Any], version: int) -> dict[str, Any]:
    """A case dict of schema ``version`` in the current schema (renamed keys only)."""
    d = copy.deepcopy(dict(data))
    if version < 2:
        if "groups" in d:
            d["joint_groups"] = d.pop("groups")
        for e in d.get("evidence", []) if isinstance(d.get("evidence"), list) else []:
            if isinstance(e, dict) and "observed_only" in e:
                e["likelihood_evidence"] = e.pop("observed_only")
        extras = d.get("extras")
        if isinstance(extras, dict) and "decision" in extras:
            extras["loss_table"] = extras.pop("decision")
    return d


# --------------------------------------------------------------------------- field checks


def _req(d: Mapping, key: str, what: str) -> Any:
    if key not in d:
        raise CaseFileError(f"{what} is missing the field '{key}'")
    return d[key]


def _obj(value: Any, what: str) -> Mapping:
    if not isinstance(value, Mapping):
        raise CaseFileError(f"{what} must be a JSON object, got {type(value).__name__}")
    return value


def _arr(value: Any, what: str) -> list:
    if not isinstance(value, list):
        raise CaseFileError(f"{what} must be a JSON array, got {type(value).__name__}")
    return value


def _keys(d: Mapping, allowed: set[str], what: str) -> None:
    extra = set(d) - allowed
    if extra:
        raise CaseFileError(f"{what} has unknown field(s) {sorted(map(str, extra))}; "
                            f"allowed: {sorted(allowed)}")


def _same_hypotheses(mapping: Mapping, names: tuple[str, ...], what: str,
                     known: set[str] | None = None) -> None:
    """Refuse a per-hypothesis mapping that misses a hypothesis or names an unknown one
    (``known``: ``set(names)``, passed in by loops over many items)."""
    known = set(names) if known is None else known
    missing = [h for h in names if h not in mapping]
    extra = [h for h in mapping if h not in known]
    if missing or extra:
        raise CaseFileError(f"{what}: missing hypothesis(es) {missing}, "
                            f"unknown hypothesis(es) {extra}")


def _bool(value: Any, what: str) -> bool:
    if not isinstance(value, bool):
        raise CaseFileError(f"{what} must be true or false, got {value!r:.40}")
    return value


def _source(value: Any, what: str) -> Source:
    return Source.coerce(_obj(value, what), what=what)


# --------------------------------------------------------------------------- dict -> members


def parts_from_dict(data: Any) -> dict[str, Any]:
    """The keyword arguments of :meth:`Case.from_members` from a case dict (current schema).

    Every member is built directly from its fields; the extras sections come
    back as given (``Case.from_members`` validates them against the case).
    """
    d = _obj(data, "case")
    _keys(d, CASE_KEYS, "case")
    hyps = _hypotheses_from(_arr(_req(d, "hypotheses", "case"), "case 'hypotheses'"))
    names = tuple(h.name for h in hyps)
    name_set = set(names)  # membership tests stay O(1) for 10,000 hypotheses
    evidence: dict[str, Evidence] = {}
    for i, e in enumerate(_arr(d.get("evidence", []), "case 'evidence'")):
        ev = _evidence_from(e, f"evidence #{i + 1}", names, name_set)
        if ev.name in evidence:
            raise CaseFileError(f"evidence '{ev.name}' appears twice; names must be unique")
        evidence[ev.name] = ev
    groups: dict[str, JointGroup] = {}
    for i, g in enumerate(_arr(d.get("joint_groups", []), "case 'joint_groups'")):
        grp = _group_from_dict(g, f"joint group #{i + 1}", names, evidence)
        if grp.name in groups:
            raise CaseFileError(f"joint group '{grp.name}' appears twice; names must be unique")
        groups[grp.name] = grp
    scenarios: dict[str, Scenario] = {}
    for i, s in enumerate(_arr(d.get("scenarios", []), "case 'scenarios'")):
        sc = _scenario_from(s, f"scenario #{i + 1}", names, name_set)
        if sc.name == BASE_SCENARIO or sc.name in scenarios:
            raise CaseFileError(f"scenario name '{sc.name}' is reserved or appears twice")
        scenarios[sc.name] = sc
    active = d.get("active_scenario", BASE_SCENARIO)
    if not isinstance(active, str) or (active != BASE_SCENARIO and active not in scenarios):
        raise CaseFileError(f"active_scenario {active!r:.60} is not one of the case's scenarios "
                            f"{[BASE_SCENARIO, *scenarios]}")
    assumptions = []
    for i, a in enumerate(_arr(d.get("assumptions", []), "case 'assumptions'")):
        a = _obj(a, f"assumption #{i + 1}")
        _keys(a, {"kind", "target", "detail"}, f"assumption #{i + 1}")
        assumptions.append({k: check_text(f"assumption #{i + 1} '{k}'", a.get(k, ""))
                            for k in ("kind", "target", "detail")})
    extras = dict(_obj(d.get("extras", {}), "case 'extras'"))
    return {
        "title": _req(d, "title", "case"), "question": d.get("question", ""),
        "analyst": d.get("analyst", ""), "notes": d.get("notes", ""),
        "exhaustive": _bool(d.get("exhaustive", False), "case 'exhaustive'"),
        "safety_related": _bool(d.get("safety_related", False), "case 'safety_related'"),
        "hypotheses": hyps, "evidence": list(evidence.values()),
        "scenarios": list(scenarios.values()), "joint_groups": list(groups.values()),
        "active_scenario": active, "assumptions": assumptions, "extras": extras,
    }


def _hypotheses_from(rows: list) -> list[Hypothesis]:
    if not rows:
        raise CaseFileError("case 'hypotheses' is empty; a case needs at least one hypothesis")
    out: list[Hypothesis] = []
    seen: set[str] = set()
    for i, h in enumerate(rows):
        what = f"hypothesis #{i + 1}"
        h = _obj(h, what)
        _keys(h, HYPOTHESIS_KEYS, what)
        name = check_name("hypothesis", _req(h, "name", what))
        if name in seen:
            raise CaseFileError(f"hypothesis '{name}' appears twice; hypothesis names must be "
                                "unique")
        seen.add(name)
        prior = check_probability(f"prior of hypothesis {name!r:.60}", _req(h, "prior", what))
        src = _source(h["source"], f"source of {what}") if "source" in h else Source()
        ca = _bool(h["catch_all"], f"catch_all of {what}") if "catch_all" in h else \
            is_catch_all_name(name)
        out.append(Hypothesis(name, prior,
                              check_text(f"description of '{name}'", h.get("description", "")),
                              src, ca))
    return out


def _evidence_from(e: Any, what: str, names: tuple[str, ...], name_set: set[str]) -> Evidence:
    e = _obj(e, what)
    _keys(e, EVIDENCE_KEYS, what)
    name = check_name("evidence", _req(e, "name", what))
    what = f"evidence '{name}'"
    st = tuple(check_name(f"state of {what}", s)
               for s in _arr(_req(e, "states", what), f"states of {what}"))
    if not st:
        raise CaseFileError(f"{what} has no states")
    if len(set(st)) != len(st):
        raise CaseFileError(f"{what} lists a state twice: {list(st)}")
    lik = _obj(_req(e, "likelihoods", what), f"likelihoods of {what}")
    _same_hypotheses(lik, names, f"likelihoods of {what}", name_set)
    table = np.empty((len(st), len(names)))
    for j, h in enumerate(names):
        col = _arr(lik[h], f"likelihoods of {what} under '{h}'")
        if len(col) != len(st):
            raise CaseFileError(f"likelihoods of {what} under '{h}' have {len(col)} values "
                                f"for {len(st)} states")
        for k, v in enumerate(col):
            table[k, j] = check_probability(
                f"likelihood of state '{st[k]}' of {what} under '{h}'", v)
    observed = e.get("observed")
    if observed is not None and (not isinstance(observed, str) or observed not in st):
        raise CaseFileError(f"observed state {observed!r:.60} of {what} is not among its "
                            f"states {list(st)}")
    lik_ev = _bool(e.get("likelihood_evidence", False), f"likelihood_evidence of {what}")
    # a likelihood-evidence item set back to pending (observe(item, None)) keeps its one
    # state; refusing it here would make a saved case unloadable
    if lik_ev and (len(st) != 1 or observed not in (None, st[0])):
        raise CaseFileError(f"{what} is likelihood evidence: it must have one state, the "
                            "observed one")
    tag = e.get("shared_source")
    if tag is not None:
        tag = check_name(f"shared-source tag of {what}", tag)
    entry_sources = {}
    for k, es in enumerate(_arr(e.get("entry_sources", []), f"entry_sources of {what}")):
        es = _obj(es, f"entry source #{k + 1} of {what}")
        _keys(es, {"state", "hypothesis", "source"}, f"entry source #{k + 1} of {what}")
        s_, h_ = _req(es, "state", what), _req(es, "hypothesis", what)
        if not isinstance(s_, str) or not isinstance(h_, str) or s_ not in st or \
                h_ not in name_set:
            raise CaseFileError(f"entry source #{k + 1} of {what} names state {s_!r:.40} / "
                                f"hypothesis {h_!r:.40}, which the item does not have")
        entry_sources[(s_, h_)] = _source(es.get("source", {}), what)
    given, parent_states, cond = _conditional_from_dict(e, what, st, names)
    arts = tuple(artefact_from_dict(a, f"artefact #{k + 1} of {what}")
                 for k, a in enumerate(_arr(e.get("artefacts", []), f"artefacts of {what}")))
    unc = None
    if e.get("uncertain") is not None:
        if observed is not None or lik_ev:
            raise CaseFileError(f"{what} has an uncertain observation and also "
                                + ("an observed state" if observed is not None
                                   else "is likelihood evidence") + "; keep one")
        unc = _uncertain_from(e["uncertain"], what, name, st)
    return Evidence(name, st, names, table, observed=observed, uncertain=unc,
                    description=check_text(f"description of {what}", e.get("description", "")),
                    source=_source(e.get("source", {}), f"source of {what}"), shared_source=tag,
                    likelihood_evidence=lik_ev, entry_sources=entry_sources, given=given,
                    parent_states=parent_states, conditional=cond, artefacts=arts)


def _uncertain_from(u: Any, what: str, name: str, st: tuple[str, ...]) -> UncertainObservation:
    u = _obj(u, f"uncertain observation of {what}")
    _keys(u, UNCERTAIN_KEYS, f"uncertain observation of {what}")
    form = u.get("form")
    if form not in UNCERTAIN_FORMS:
        raise CaseFileError(f"uncertain observation of {what} has form {form!r:.40}; expected "
                            f"one of {list(UNCERTAIN_FORMS)}")
    weights = parse_weights(name, st,
                            _obj(_req(u, "weights", f"uncertain observation of {what}"),
                                 f"weights of the uncertain observation of {what}"), form)
    reported = u.get("reported")
    reliability = u.get("reliability")
    if reported is not None:
        if reported not in st:
            raise CaseFileError(f"uncertain observation of {what} reports state "
                                f"{reported!r:.40}, which is not one of {list(st)}")
        reliability = check_probability(f"reliability of the report on {what}", reliability)
    elif reliability is not None:
        raise CaseFileError(f"uncertain observation of {what} gives a reliability but no "
                            "reported state")
    return UncertainObservation(form, weights,
                                _source(u.get("source", {}), f"source of the observation of "
                                                              f"{what}"),
                                reported=reported, reliability=reliability,
                                note=check_text(f"note of the observation of {what}",
                                                u.get("note", "")))


def _scenario_from(s: Any, what: str, names: tuple[str, ...], name_set: set[str]) -> Scenario:
    s = _obj(s, what)
    _keys(s, SCENARIO_KEYS, what)
    nm = check_name("scenario", _req(s, "name", what))
    pri = _obj(_req(s, "priors", f"scenario '{nm}'"), f"priors of scenario '{nm}'")
    _same_hypotheses(pri, names, f"priors of scenario '{nm}'", name_set)
    vals = {h: check_probability(f"prior of '{h}' in scenario '{nm}'", pri[h]) for h in names}
    if abs(sum(vals.values()) - 1) > 1e-6:
        raise CaseFileError(f"priors of scenario '{nm}' sum to {sum(vals.values()):.6g}, not 1")
    meaning = s.get("meaning", "")
    if meaning not in SCENARIO_MEANINGS:
        raise CaseFileError(f"scenario '{nm}' has meaning {meaning!r:.40}; expected one of "
                            f"{[m for m in SCENARIO_MEANINGS if m]}")
    basis: tuple[str, ...] = ()
    if meaning == "data":
        basis = tuple(check_name(f"basis hypothesis of scenario '{nm}'", h)
                      for h in _arr(s.get("basis", list(names)), f"basis of scenario '{nm}'"))
    elif "basis" in s:
        raise CaseFileError(f"scenario '{nm}' has a basis but is not declared taken from data")
    return Scenario(nm, vals, _source(s.get("source", {}), f"source of {what}"),
                    check_text("note", s.get("note", "")), meaning, basis)


def _conditional_from_dict(e: Mapping, what: str, st: tuple[str, ...],
                           names: tuple[str, ...]) -> tuple[Any, tuple[str, ...], Any]:
    """The ``given`` / ``conditional_likelihoods`` fields of a conditional item."""
    if "given" not in e and "conditional_likelihoods" not in e:
        return None, (), None
    given = check_name(f"parent of {what}", _req(e, "given", what))
    tabs = _obj(_req(e, "conditional_likelihoods", what), f"conditional likelihoods of {what}")
    if not tabs:
        raise CaseFileError(f"conditional likelihoods of {what} are empty")
    parent_states = tuple(check_name(f"state of '{given}'", k) for k in tabs)
    cond = np.empty((len(parent_states), len(st), len(names)))
    for i, ps in enumerate(parent_states):
        lik = _obj(tabs[ps], f"likelihoods of {what} given '{given}' = '{ps}'")
        _same_hypotheses(lik, names, f"likelihoods of {what} given '{given}' = '{ps}'")
        for j, h in enumerate(names):
            col = _arr(lik[h], f"likelihoods of {what} given '{given}' = '{ps}' under '{h}'")
            if len(col) != len(st):
                raise CaseFileError(f"likelihoods of {what} given '{given}' = '{ps}' under '{h}' "
                                    f"have {len(col)} values for {len(st)} states")
            for k, v in enumerate(col):
                cond[i, k, j] = check_probability(
                    f"likelihood of state '{st[k]}' of {what} given '{given}' = '{ps}' under "
                    f"'{h}'", v)
    return given, parent_states, cond


def _group_from_dict(g: Any, what: str, names: tuple[str, ...],
                     evidence: Mapping[str, Evidence]) -> JointGroup:
    g = _obj(g, what)
    _keys(g, GROUP_KEYS, what)
    nm = check_name("joint group", _req(g, "name", what))
    what = f"joint group '{nm}'"
    members = tuple(check_name(f"member of {what}", m)
                    for m in _arr(_req(g, "members", what), f"members of {what}"))
    for m in members:
        if m not in evidence:
            raise CaseFileError(f"{what} names unknown evidence '{m}'")
    kind = _req(g, "kind", what)
    src = Source.coerce(_obj(g.get("source", {}), f"source of {what}"), what=f"source of {what}")
    note = check_text(f"note of {what}", g.get("note", ""))
    if kind == "covariance":
        if "joint" in g:
            raise CaseFileError(f"{what} is of covariance form but also has a 'joint' table")
        cov = _obj(_req(g, "covariance", what), f"covariance of {what}")
        _same_hypotheses(cov, names, f"covariance of {what}")
        vals = []
        for h in names:
            v = cov[h]
            if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v):
                raise CaseFileError(f"covariance of {what} under '{h}' is {v!r:.40}; "
                                    "it must be a finite number")
            vals.append(float(v))
        return JointGroup(nm, members, names, covariance=np.array(vals), source=src, note=note)
    if kind == "table":
        if "covariance" in g:
            raise CaseFileError(f"{what} is of table form but also has a 'covariance'")
        jt = _obj(_req(g, "joint", what), f"joint table of {what}")
        _same_hypotheses(jt, names, f"joint table of {what}")
        n = int(np.prod([len(evidence[m].states) for m in members]))
        arr = np.empty((n, len(names)))
        for j, h in enumerate(names):
            col = _arr(jt[h], f"joint table of {what} under '{h}'")
            if len(col) != n:
                raise CaseFileError(f"joint table of {what} under '{h}' has {len(col)} values "
                                    f"for {n} combined states")
            for k, v in enumerate(col):
                arr[k, j] = check_probability(f"joint likelihood #{k + 1} of {what} under "
                                               f"'{h}'", v)
        return JointGroup(nm, members, names, joint=arr, source=src, note=note)
    raise CaseFileError(f"{what} has kind {kind!r:.40}; expected 'covariance' or 'table'")


__all__ = ["case_to_dict", "parts_from_dict", "upgrade", "SCHEMA_VERSION"]

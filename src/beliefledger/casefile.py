"""JSON case files: a versioned envelope, atomic saves, validated loads.

A case file is UTF-8 JSON::

    {"format": "beliefledger-case", "schema_version": 1, "case": {...}}

Loading never evaluates or unpickles anything: it parses JSON (NaN and
Infinity refused) and rebuilds the case through its own validating
constructors, so a file can hold nothing a user could not have typed.
"""

from __future__ import annotations

import json
import math
import os
import tempfile
from collections.abc import Mapping
from dataclasses import replace
from pathlib import Path
from typing import Any

import numpy as np

from .case import (
    BASE_SCENARIO,
    Case,
    Evidence,
    JointGroup,
    Scenario,
    Source,
    _check_name,
    _check_probability,
    _check_text,
)
from .errors import CaseError, CaseFileError, CaseTypeError

FORMAT = "beliefledger-case"
SCHEMA_VERSION = 1
MAX_FILE_BYTES = 512 * 1024 * 1024

_CASE_KEYS = {"title", "question", "analyst", "notes", "exhaustive", "safety_related",
              "hypotheses", "evidence", "scenarios", "active_scenario", "assumptions", "extras",
              "groups"}
_EVIDENCE_KEYS = {"name", "description", "states", "likelihoods", "observed", "likelihood_evidence",
                  "shared_source", "source", "entry_sources", "given", "conditional_likelihoods"}
_GROUP_KEYS = {"name", "members", "kind", "covariance", "joint", "source", "note"}
_SCENARIO_KEYS = {"name", "priors", "source", "note"}


def envelope(case: Case) -> dict[str, Any]:
    """The case wrapped in its versioned envelope (what a case file holds)."""
    return {"format": FORMAT, "schema_version": SCHEMA_VERSION, "case": case.to_dict()}


def dumps(case: Case) -> str:
    """Canonical JSON text of a case file (sorted keys are not used: order is meaningful)."""
    return json.dumps(envelope(case), indent=1, ensure_ascii=False, allow_nan=False) + "\n"


def atomic_write_text(path: str | Path, text: str) -> Path:
    """Write ``text`` to ``path`` atomically: a temporary file in the same folder,
    flushed and fsynced, then renamed over the target. A crash at any moment
    leaves either the old file or the new one, never a half-written file."""
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise CaseFileError(f"cannot save to {str(target)!r}: folder {str(folder)!r} does not exist")
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        # mkstemp makes the file owner-only; keep an existing file's mode, else the
        # usual mode for a new file under the current umask
        try:
            mode = os.stat(target).st_mode & 0o777
        except FileNotFoundError:
            umask = os.umask(0)
            os.umask(umask)
            mode = 0o666 & ~umask
        os.chmod(tmp, mode)
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    try:  # make the rename itself durable
        dfd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(dfd)
        finally:
            os.close(dfd)
    except OSError:
        pass
    return target


def save_case(case: Case, path: str | Path) -> Path:
    """Save ``case`` to ``path`` atomically (JSON, schema version 1)."""
    return atomic_write_text(path, dumps(case))


def _refuse_constant(name: str) -> Any:
    raise CaseFileError(f"case file holds {name}, which is not a number JSON allows; "
                        "replace it with a probability between 0 and 1")


def loads(text: str | bytes, *, origin: str = "case file") -> Case:
    """Parse case-file JSON text and rebuild the case (validated)."""
    if isinstance(text, bytes):
        try:
            text = text.decode("utf-8")
        except UnicodeDecodeError as exc:
            raise CaseFileError(f"{origin} is not UTF-8 text (byte {exc.start}); "
                                "save it as UTF-8 JSON") from None
    try:
        data = json.loads(text, parse_constant=_refuse_constant)
    except RecursionError:
        raise CaseFileError(f"{origin} is nested too deeply to be a case file") from None
    except json.JSONDecodeError as exc:
        raise CaseFileError(f"{origin} is not valid JSON: {exc.msg} at line {exc.lineno}, "
                            f"column {exc.colno}; was it truncated or edited by hand?") from None
    except ValueError as exc:  # e.g. an integer longer than Python converts
        raise CaseFileError(f"{origin} is not valid JSON for a case file: {exc}") from None
    return from_envelope(data, origin=origin)


def from_envelope(data: Any, *, origin: str = "case file") -> Case:
    if not isinstance(data, Mapping):
        raise CaseFileError(f"{origin} must hold a JSON object, got {type(data).__name__}")
    fmt = data.get("format")
    if fmt != FORMAT:
        raise CaseFileError(f"{origin} has format {fmt!r}; expected {FORMAT!r} "
                            "(is this a beliefledger case file?)")
    ver = data.get("schema_version")
    if isinstance(ver, bool) or not isinstance(ver, int):
        raise CaseFileError(f"{origin} has schema_version {ver!r}; expected the integer "
                            f"{SCHEMA_VERSION}")
    if ver != SCHEMA_VERSION:
        hint = ("it was written by a newer beliefledger; upgrade to read it"
                if ver > SCHEMA_VERSION else "no reader for that version exists")
        raise CaseFileError(f"{origin} has schema_version {ver}, this beliefledger reads "
                            f"version {SCHEMA_VERSION}: {hint}")
    extra = set(data) - {"format", "schema_version", "case"}
    if extra:
        raise CaseFileError(f"{origin} has unknown top-level key(s) {sorted(extra)}")
    if "case" not in data:
        raise CaseFileError(f"{origin} has no 'case' object")
    try:
        return case_from_dict(data["case"])
    except CaseFileError:
        raise
    except (CaseError, CaseTypeError) as exc:
        raise CaseFileError(f"{origin}: {exc}") from None


def load_case(path: str | Path) -> Case:
    """Load and validate a case file written by :func:`save_case`."""
    p = Path(path)
    try:
        size = p.stat().st_size
    except FileNotFoundError:
        raise CaseFileError(f"no case file at {str(p)!r}") from None
    except OSError as exc:
        raise CaseFileError(f"cannot read case file {str(p)!r}: {exc.strerror}") from None
    if p.is_dir():
        raise CaseFileError(f"{str(p)!r} is a folder, not a case file")
    if size > MAX_FILE_BYTES:
        raise CaseFileError(f"case file {str(p)!r} is {size:,} bytes, over the "
                            f"{MAX_FILE_BYTES:,}-byte limit")
    return loads(p.read_bytes(), origin=f"case file {str(p)!r}")


# --------------------------------------------------------------------------- dict -> case


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


def case_from_dict(data: Any) -> Case:
    """Rebuild a case from :meth:`Case.to_dict` output, validating every field.

    Sums that are off 1 (a part-way edit that was saved) are accepted and
    reported by the ledger's flags, so that nothing saved is lost.
    """
    d = _obj(data, "case")
    _keys(d, _CASE_KEYS, "case")
    hyps = _arr(_req(d, "hypotheses", "case"), "case 'hypotheses'")
    if not hyps:
        raise CaseFileError("case 'hypotheses' is empty; a case needs at least one hypothesis")
    rows = []
    for i, h in enumerate(hyps):
        h = _obj(h, f"hypothesis #{i + 1}")
        _keys(h, {"name", "prior", "description", "source", "catch_all"}, f"hypothesis #{i + 1}")
        row = dict(h)
        if "source" in row:
            row["source"] = Source.coerce(_obj(row["source"], f"source of hypothesis #{i + 1}"),
                                          what=f"source of hypothesis #{i + 1}")
        if "catch_all" in row:
            row["catch_all"] = _bool(row["catch_all"], f"catch_all of hypothesis #{i + 1}")
        rows.append(row)
    exhaustive = _bool(d.get("exhaustive", False), "case 'exhaustive'")
    safety = _bool(d.get("safety_related", False), "case 'safety_related'")
    # Build with priors as given; tolerate an off sum (recorded by flags, not by us).
    total = 0.0
    for i, r in enumerate(rows):
        _req(r, "prior", f"hypothesis #{i + 1}")
        total += _check_probability(f"prior of hypothesis {r.get('name')!r:.60}", r["prior"])
    case = Case(_req(d, "title", "case"), [{**r, "prior": 1.0 / len(rows)} for r in rows],
                question=d.get("question", ""), analyst=d.get("analyst", ""),
                notes=d.get("notes", ""), exhaustive=exhaustive, safety_related=safety)
    # Now set the real priors in one go without the sum check.
    case._hyps = {n: replace(h, prior=float(r["prior"]))
                  for (n, h), r in zip(case._hyps.items(), rows, strict=True)}
    names = tuple(case._hyps)
    name_set = set(names)  # membership tests stay O(1) for 10,000 hypotheses

    for i, e in enumerate(_arr(d.get("evidence", []), "case 'evidence'")):
        what = f"evidence #{i + 1}"
        e = _obj(e, what)
        _keys(e, _EVIDENCE_KEYS, what)
        name = _check_name("evidence", _req(e, "name", what))
        what = f"evidence '{name}'"
        if name in case._evidence:
            raise CaseFileError(f"evidence '{name}' appears twice; names must be unique")
        states = _arr(_req(e, "states", what), f"states of {what}")
        st = tuple(_check_name(f"state of {what}", s) for s in states)
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
                table[k, j] = _check_probability(
                    f"likelihood of state '{st[k]}' of {what} under '{h}'", v)
        observed = e.get("observed")
        if observed is not None:
            if not isinstance(observed, str) or observed not in st:
                raise CaseFileError(f"observed state {observed!r:.60} of {what} is not among its "
                                    f"states {list(st)}")
        likelihood_evidence = _bool(e.get("likelihood_evidence", False), f"likelihood_evidence of {what}")
        # an likelihood evidence item set back to "not yet observed" (observe(item, None)) keeps
        # its one state; refusing it here would make a saved case unloadable
        if likelihood_evidence and (len(st) != 1 or observed not in (None, st[0])):
            raise CaseFileError(f"{what} is likelihood_evidence: it must have one state, the observed one")
        tag = e.get("shared_source")
        if tag is not None:
            tag = _check_name(f"shared-source tag of {what}", tag)
        src = Source.coerce(_obj(e.get("source", {}), f"source of {what}"),
                            what=f"source of {what}")
        entry_sources = {}
        for k, es in enumerate(_arr(e.get("entry_sources", []), f"entry_sources of {what}")):
            es = _obj(es, f"entry source #{k + 1} of {what}")
            _keys(es, {"state", "hypothesis", "source"}, f"entry source #{k + 1} of {what}")
            s_, h_ = _req(es, "state", what), _req(es, "hypothesis", what)
            if s_ not in st or h_ not in name_set:
                raise CaseFileError(f"entry source #{k + 1} of {what} names state {s_!r:.40} / "
                                    f"hypothesis {h_!r:.40}, which the item does not have")
            entry_sources[(s_, h_)] = Source.coerce(_obj(es.get("source", {}), what), what=what)
        given, parent_states, cond = _conditional_from_dict(e, what, st, names)
        case._evidence[name] = Evidence(
            name, st, names, table, observed=observed,
            description=_check_text(f"description of {what}", e.get("description", "")),
            source=src, shared_source=tag, likelihood_evidence=likelihood_evidence,
            entry_sources=entry_sources, given=given, parent_states=parent_states,
            conditional=cond)

    for i, g in enumerate(_arr(d.get("groups", []), "case 'groups'")):
        grp = _group_from_dict(g, f"joint group #{i + 1}", names, case)
        if grp.name in case._groups:
            raise CaseFileError(f"joint group '{grp.name}' appears twice; names must be unique")
        case._groups[grp.name] = grp

    for i, s in enumerate(_arr(d.get("scenarios", []), "case 'scenarios'")):
        what = f"scenario #{i + 1}"
        s = _obj(s, what)
        _keys(s, _SCENARIO_KEYS, what)
        nm = _check_name("scenario", _req(s, "name", what))
        if nm == BASE_SCENARIO or nm in case._scenarios:
            raise CaseFileError(f"scenario name '{nm}' is reserved or appears twice")
        pri = _obj(_req(s, "priors", f"scenario '{nm}'"), f"priors of scenario '{nm}'")
        _same_hypotheses(pri, names, f"priors of scenario '{nm}'", name_set)
        vals = {h: _check_probability(f"prior of '{h}' in scenario '{nm}'", pri[h]) for h in names}
        if abs(sum(vals.values()) - 1) > 1e-6:
            raise CaseFileError(f"priors of scenario '{nm}' sum to {sum(vals.values()):.6g}, not 1")
        case._scenarios[nm] = Scenario(nm, vals, Source.coerce(_obj(s.get("source", {}), what),
                                                                what=f"source of {what}"),
                                       _check_text("note", s.get("note", "")))
    active = d.get("active_scenario", BASE_SCENARIO)
    if not isinstance(active, str) or (active != BASE_SCENARIO and active not in case._scenarios):
        raise CaseFileError(f"active_scenario {active!r:.60} is not one of the case's scenarios "
                            f"{case.scenario_names}")
    case._active = active
    assumptions = []
    for i, a in enumerate(_arr(d.get("assumptions", []), "case 'assumptions'")):
        a = _obj(a, f"assumption #{i + 1}")
        _keys(a, {"kind", "target", "detail"}, f"assumption #{i + 1}")
        assumptions.append({k: _check_text(f"assumption #{i + 1} '{k}'", a.get(k, ""))
                            for k in ("kind", "target", "detail")})
    case.assumptions = assumptions
    case._refresh_conditionals()
    case._validate()  # evidence structure first: extras validators may rely on it
    extras = _obj(d.get("extras", {}), "case 'extras'")
    case.extras = {}
    for key, value in extras.items():
        case.extras[_check_name("extras key", key)] = validate_extra(key, value, case)
    case._validate()
    return case


def _conditional_from_dict(e: Mapping, what: str, st: tuple[str, ...],
                           names: tuple[str, ...]) -> tuple[Any, tuple[str, ...], Any]:
    """The ``given`` / ``conditional_likelihoods`` fields of a conditional item."""
    if "given" not in e and "conditional_likelihoods" not in e:
        return None, (), None
    given = _check_name(f"parent of {what}", _req(e, "given", what))
    tabs = _obj(_req(e, "conditional_likelihoods", what), f"conditional likelihoods of {what}")
    if not tabs:
        raise CaseFileError(f"conditional likelihoods of {what} are empty")
    parent_states = tuple(_check_name(f"state of '{given}'", k) for k in tabs)
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
                cond[i, k, j] = _check_probability(
                    f"likelihood of state '{st[k]}' of {what} given '{given}' = '{ps}' under "
                    f"'{h}'", v)
    return given, parent_states, cond


def _group_from_dict(g: Any, what: str, names: tuple[str, ...], case: Case) -> JointGroup:
    g = _obj(g, what)
    _keys(g, _GROUP_KEYS, what)
    nm = _check_name("joint group", _req(g, "name", what))
    what = f"joint group '{nm}'"
    members = tuple(_check_name(f"member of {what}", m)
                    for m in _arr(_req(g, "members", what), f"members of {what}"))
    for m in members:
        if m not in case._evidence:
            raise CaseFileError(f"{what} names unknown evidence '{m}'")
    kind = _req(g, "kind", what)
    src = Source.coerce(_obj(g.get("source", {}), f"source of {what}"), what=f"source of {what}")
    note = _check_text(f"note of {what}", g.get("note", ""))
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
        n = int(np.prod([len(case._evidence[m].states) for m in members]))
        arr = np.empty((n, len(names)))
        for j, h in enumerate(names):
            col = _arr(jt[h], f"joint table of {what} under '{h}'")
            if len(col) != n:
                raise CaseFileError(f"joint table of {what} under '{h}' has {len(col)} values "
                                    f"for {n} combined states")
            for k, v in enumerate(col):
                arr[k, j] = _check_probability(f"joint likelihood #{k + 1} of {what} under "
                                               f"'{h}'", v)
        return JointGroup(nm, members, names, joint=arr, source=src, note=note)
    raise CaseFileError(f"{what} has kind {kind!r:.40}; expected 'covariance' or 'table'")


EXTRA_VALIDATORS: dict[str, str] = {
    "uncertainty": "beliefledger.uncertainty:validate_uncertainty",
    "decision": "beliefledger.value:validate_decision",
}
"""extras key -> "module:function" validating that section: ``fn(value, case) -> value``
(JSON-ready, normalized) or raise CaseError naming the field. Modules that keep
inputs on the case register here (e.g. ``"uncertainty": "beliefledger.uncertainty:validate_uncertainty"``)."""


EXTRA_HYPOTHESIS_HOOKS: dict[str, str] = {
    "decision": "beliefledger.value:decision_hypotheses_changed",
}
"""extras key -> "module:function" that keeps a section keyed by hypothesis in step
when hypotheses are renamed, removed or added:
``fn(value, case, renamed, added) -> value``, where ``renamed`` maps old name ->
new name (``None``: removed) and ``added`` maps a new name -> the values the
caller gave for it (``None``: none given; the hook may raise CaseError)."""


def hypotheses_changed(key: str, value: Any, case: Case, renamed: Mapping[str, Any],
                       added: Mapping[str, Any]) -> Any:
    """Run the hypothesis hook registered for extras section ``key`` (if any)."""
    target = EXTRA_HYPOTHESIS_HOOKS.get(key)
    if not target:
        return value
    import importlib

    modname, fn = target.split(":")
    return getattr(importlib.import_module(modname), fn)(value, case, renamed, added)


def validate_extra(key: str, value: Any, case: Case) -> Any:
    """Check one extras section: JSON-ready, finite, and valid for its registered owner."""
    try:
        value = json.loads(json.dumps(value, allow_nan=False))
    except (TypeError, ValueError) as exc:
        raise CaseError(f"extras section '{key}' is not JSON-ready ({exc}); use plain dicts, "
                        "lists, strings and finite numbers") from None
    _check_json_value(value, f"extras section '{key}'", depth=0)
    target = EXTRA_VALIDATORS.get(key)
    if target:
        import importlib

        modname, fn = target.split(":")
        value = getattr(importlib.import_module(modname), fn)(value, case)
    return value


def _check_json_value(value: Any, what: str, depth: int) -> None:
    if depth > 32:
        raise CaseFileError(f"{what} is nested more than 32 levels deep")
    if isinstance(value, float) and not math.isfinite(value):
        raise CaseFileError(f"{what} holds a non-finite number")
    if isinstance(value, Mapping):
        for k, v in value.items():
            _check_json_value(v, f"{what}.{k}", depth + 1)
    elif isinstance(value, list):
        for k, v in enumerate(value):
            _check_json_value(v, f"{what}[{k}]", depth + 1)


__all__ = ["save_case", "load_case", "loads", "dumps", "envelope", "from_envelope",
           "case_from_dict", "atomic_write_text", "FORMAT", "SCHEMA_VERSION"]

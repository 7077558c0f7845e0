"""Sections that analyses keep on a case (``case.extras``), and what each may hold.

A case carries, beside its hypotheses and evidence, named JSON sections that
analyses read: the uncertainty on the inputs (``"uncertainty"``) and a loss
or payoff table (``"loss_table"``). Each known section has a validator (the
section's schema, checked on every edit and on load) and, when the section
is keyed by hypothesis, a hook that keeps it in step when hypotheses are
renamed, removed or added. The validators are data checks only: they look
at the case's structure (names, states, tables), never run an analysis, so
this module imports nothing above the case model. Other sections are kept
as JSON (finite numbers, at most 32 levels deep); :func:`register_section`
adds a validator for one.
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from .._checks import check_name, check_positive, check_text
from ..errors import CaseError, CaseTypeError
from .members import Source

if TYPE_CHECKING:
    from .model import Case

UNCERTAINTY = "uncertainty"
LOSS_TABLE = "loss_table"
UNCERTAINTY_KINDS = ("dirichlet", "concentration")
LOSS_KINDS = ("loss", "payoff")
RESERVED_ACTIONS = ("bayes_action", "measure", "active")

# --------------------------------------------------------------------------- uncertainty

_ENTRY_KEYS = {"evidence", "hypothesis", "kind", "alpha", "concentration", "fit", "tie",
               "method", "source"}
_PRIOR_KEYS = {"kind", "alpha", "concentration", "method", "source"}
_FIT_KEYS = {"state", "low", "best", "high", "level", "fitted_low", "fitted_high"}


def _num(what: str, value: Any, *, allow_zero: bool = False) -> float:
    try:
        return check_positive(what, value, allow_zero=allow_zero)
    except CaseTypeError as exc:
        raise CaseError(str(exc)) from None


def _text(what: str, value: Any) -> str:
    try:
        return check_text(what, value)
    except CaseTypeError as exc:
        raise CaseError(str(exc)) from None


def _source_dict(value: Any, what: str) -> dict[str, str]:
    try:
        return Source.coerce(value, what=what).to_dict()
    except CaseTypeError as exc:
        raise CaseError(str(exc)) from None


def _name(what: str, value: Any) -> str:
    if not isinstance(value, str) or not value.strip():
        raise CaseError(f"{what} must be a non-empty name, got {value!r:.60}")
    return value


def _alpha(what: str, alpha: Any, names: list[str] | None, kind: str,
           allow_zero: bool) -> dict[str, float]:
    """Parameters keyed by name; against ``names`` (in their order) when given."""
    if not isinstance(alpha, Mapping) or not alpha:
        raise CaseError(f"{what} of kind 'dirichlet' needs 'alpha': an object {kind} -> "
                        "parameter")
    if names is not None:
        missing = [n for n in names if n not in alpha]
        unknown = [n for n in alpha if n not in names]
        if missing or unknown:
            plural = "hypotheses" if kind == "hypothesis" else f"{kind}s"
            raise CaseError(f"{what}: alpha is missing {plural} {missing} and names unknown "
                            f"{plural} {unknown}; give one parameter per {kind} (the "
                            f"{plural} are {names[:12]})")
        keys = names
    else:
        keys = [_name(f"{what}: alpha key", k) for k in alpha]
    vals = {k: _num(f"{what}: alpha of '{k}'", alpha[k], allow_zero=allow_zero) for k in keys}
    if sum(vals.values()) <= 0:
        raise CaseError(f"{what}: every alpha is 0; give at least one positive parameter")
    return vals


def _validate_prior(p: Any, case: Case, strict: bool) -> dict[str, Any]:
    what = "uncertainty section 'prior'"
    if not isinstance(p, Mapping):
        raise CaseError(f"{what} must be an object, got {type(p).__name__}")
    extra = set(p) - _PRIOR_KEYS
    if extra:
        raise CaseError(f"{what} has unknown field(s) {sorted(map(str, extra))}; allowed: "
                        f"{sorted(_PRIOR_KEYS)}")
    kind = p.get("kind")
    out: dict[str, Any] = {"kind": kind}
    if kind == "dirichlet":
        names = case.hypothesis_names
        alpha = p.get("alpha")
        matches = isinstance(alpha, Mapping) and set(alpha) == set(names)
        out["alpha"] = _alpha(what, alpha, names if (strict or matches) else None,
                              "hypothesis", allow_zero=False)
    elif kind == "concentration":
        out["concentration"] = _num(f"{what} concentration", p.get("concentration"))
    else:
        raise CaseError(f"{what} has kind {kind!r}; use one of {list(UNCERTAINTY_KINDS)}")
    out["method"] = _text(f"{what} method", p.get("method", ""))
    out["source"] = _source_dict(p.get("source"), f"{what} source")
    return out


def _validate_entry(i: int, e: Any, case: Case, strict: bool) -> dict[str, Any]:
    what = f"uncertainty entry #{i + 1}"
    if not isinstance(e, Mapping):
        raise CaseError(f"{what} must be an object, got {type(e).__name__}")
    extra = set(e) - _ENTRY_KEYS
    if extra:
        raise CaseError(f"{what} has unknown field(s) {sorted(map(str, extra))}; allowed: "
                        f"{sorted(_ENTRY_KEYS)}")
    ev_name = _name(f"{what} 'evidence'", e.get("evidence"))
    h = _name(f"{what} 'hypothesis'", e.get("hypothesis"))
    ev = case.evidence.get(ev_name)
    if strict and ev is None:
        raise CaseError(f"{what} names evidence {ev_name!r:.60}, which the case does not have "
                        f"(its items are {case.evidence_names[:12]}); remove the entry with "
                        f"bl.clear_uncertainty(case, evidence={ev_name!r:.60})")
    if strict and h not in case.hypotheses:
        raise CaseError(f"{what} names hypothesis {h!r:.60}, which the case does not have; "
                        f"remove the entry with bl.clear_uncertainty(case, evidence="
                        f"{ev_name!r:.60}, hypothesis={h!r:.60})")
    known = ev is not None and h in case.hypotheses
    what = f"uncertainty of evidence '{ev_name}' under '{h}'"
    kind = e.get("kind")
    out: dict[str, Any] = {"evidence": ev_name, "hypothesis": h, "kind": kind}
    if kind == "dirichlet":
        if known and ev.likelihood_evidence:
            raise CaseError(f"{what}: evidence '{ev_name}' is likelihood evidence (the observed state only), "
                            "so it has no column to put a Dirichlet on; give a range or a "
                            "concentration instead")
        alpha = e.get("alpha")
        matches = known and isinstance(alpha, Mapping) and set(alpha) == set(ev.states)
        out["alpha"] = _alpha(what, alpha, list(ev.states) if (strict or matches) else None,
                              "state", allow_zero=True)
    elif kind == "concentration":
        out["concentration"] = _num(f"{what}: concentration", e.get("concentration"))
        fit = e.get("fit")
        if fit is not None:
            if not isinstance(fit, Mapping) or set(fit) - _FIT_KEYS:
                raise CaseError(f"{what}: 'fit' must be an object with fields "
                                f"{sorted(_FIT_KEYS)}")
            f = {}
            for k in _FIT_KEYS - {"state"}:
                if k in fit:
                    f[k] = _num(f"{what}: fit {k}", fit[k], allow_zero=True)
            f["state"] = _name(f"{what}: fit state", fit.get("state"))
            if (strict or known) and f["state"] not in ev.states:
                raise CaseError(f"{what}: fit state {f['state']!r:.40} is not among the "
                                f"states {list(ev.states)}")
            out["fit"] = {k: f[k] for k in sorted(f)}
    else:
        raise CaseError(f"{what} has kind {kind!r}; use one of {list(UNCERTAINTY_KINDS)}")
    tie = e.get("tie")
    if tie is not None and (not isinstance(tie, str) or not tie.strip()):
        raise CaseError(f"{what}: tie must be a non-empty name or null, got {tie!r:.40}")
    out["tie"] = tie
    out["method"] = _text(f"{what}: method", e.get("method", ""))
    out["source"] = _source_dict(e.get("source"), f"{what}: source")
    return out


def validate_uncertainty(value: Any, case: Case, *, strict: bool = False) -> dict[str, Any]:
    """Validate and normalize the ``uncertainty`` section of ``case.extras``.

    Runs on ``case.set_extra("uncertainty", ...)`` and when a case file is
    loaded; raises :class:`~beliefledger.errors.CaseError` naming the field.
    Structure, kinds and numbers are always checked. Entries that name an
    item, hypothesis or state the case no longer has (it was removed or
    renamed after the entry was set) are kept, so a saved file still loads;
    with ``strict=True`` (used by the helpers and before every analysis)
    they are refused with the call that removes them, and tied entries must
    agree.
    """
    if not isinstance(value, Mapping):
        raise CaseError(f"uncertainty section must be an object, got {type(value).__name__}")
    extra = set(value) - {"prior", "likelihoods"}
    if extra:
        raise CaseError(f"uncertainty section has unknown field(s) {sorted(map(str, extra))}; "
                        "allowed: ['likelihoods', 'prior']")
    out: dict[str, Any] = {}
    if value.get("prior") is not None:
        out["prior"] = _validate_prior(value["prior"], case, strict)
    entries = value.get("likelihoods", [])
    if not isinstance(entries, list):
        raise CaseError("uncertainty section 'likelihoods' must be a list of entries")
    seen: dict[tuple[str, str], int] = {}
    checked = []
    for i, e in enumerate(entries):
        ent = _validate_entry(i, e, case, strict)
        key = (ent["evidence"], ent["hypothesis"])
        if key in seen:
            raise CaseError(f"uncertainty of evidence '{key[0]}' under '{key[1]}' is given twice "
                            f"(entries #{seen[key] + 1} and #{i + 1}); keep one")
        seen[key] = i
        checked.append(ent)
    if strict:
        _check_ties(checked, case)
    out["likelihoods"] = checked
    return out


def _check_ties(entries: list[dict[str, Any]], case: Case) -> None:
    groups: dict[tuple[str, str], list[dict[str, Any]]] = {}
    for e in entries:
        if e["tie"] is not None:
            groups.setdefault((e["evidence"], e["tie"]), []).append(e)
    for (ev_name, tie), members in groups.items():
        first = members[0]
        ev = case.evidence[ev_name]
        for m in members[1:]:
            same = (m["kind"] == first["kind"] and m.get("alpha") == first.get("alpha")
                    and m.get("concentration") == first.get("concentration"))
            if first["kind"] == "concentration" and same:
                j0 = ev.hypotheses.index(first["hypothesis"])
                j1 = ev.hypotheses.index(m["hypothesis"])
                same = bool(np.allclose(ev.table[:, j0], ev.table[:, j1], rtol=0, atol=1e-12))
            if not same:
                raise CaseError(f"uncertainty entries of evidence '{ev_name}' tied as '{tie}' "
                                f"('{first['hypothesis']}' and '{m['hypothesis']}') differ; tied "
                                "entries share one draw, so they need the same distribution "
                                "(and, for a concentration, the same likelihood column)")



# --------------------------------------------------------------------------- loss tables


def _number(what: str, v: Any) -> float:
    from .._checks import check_number

    try:
        return check_number(what, v)
    except CaseError:
        raise CaseError(f"{what} is {v}; losses and payoffs must be finite numbers") from None


def check_loss_kind(kind: Any) -> str:
    if kind not in LOSS_KINDS:
        raise CaseError(f"kind {kind!r:.40} is not one of {list(LOSS_KINDS)}; say whether the table "
                        "holds losses (lower is better) or payoffs (higher is better)")
    return kind


def loss_rows(table: Any) -> dict[Any, Any]:
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


def check_loss_rows(rows: Mapping[Any, Any], case: Case, kind: str) -> dict[str, dict[str, float]]:
    hyps = case.hypothesis_names
    if not rows:
        raise CaseError("the loss table has no actions; give at least one row (usually two or "
                        "more actions to choose between)")
    out: dict[str, dict[str, float]] = {}
    for a, row in rows.items():
        act = check_name("action", a)
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


def validate_loss_table(value: Any, case: Case) -> dict[str, Any]:
    """Check the ``"loss_table"`` extras section: a loss or payoff table for ``case``.

    The section is ``{"kind": "loss" | "payoff", "table": {action: {hypothesis:
    value}}, "units": str, "source": {...}, "note": str}``; every action gives a
    finite value for every hypothesis. Runs on ``case.set_extra`` and on load.
    """
    if not isinstance(value, Mapping):
        raise CaseError(f"extras section '{LOSS_TABLE}' must be an object, got "
                        f"{type(value).__name__}")
    allowed = {"kind", "table", "units", "source", "note"}
    extra = set(value) - allowed
    if extra:
        raise CaseError(f"extras section '{LOSS_TABLE}' has unknown field(s) {sorted(extra)}; "
                        f"allowed: {sorted(allowed)}")
    if "table" not in value:
        raise CaseError(f"extras section '{LOSS_TABLE}' has no 'table'")
    kind = check_loss_kind(value.get("kind", "loss"))
    if not isinstance(value["table"], Mapping):
        raise CaseError(f"the 'table' of extras section '{LOSS_TABLE}' must map action -> "
                        "{hypothesis: value}")
    rows = check_loss_rows(value["table"], case, kind)
    src = Source.coerce(value.get("source"), what="source of the loss table")
    return {"kind": kind, "table": rows, "units": check_text("units", value.get("units", "")),
            "source": src.to_dict(), "note": check_text("note", value.get("note", ""))}


def loss_table_hypotheses_changed(value: Any, case: Case, renamed: Mapping[str, str | None],
                                added: Mapping[str, Any]) -> dict[str, Any]:
    """Keep the loss table in step with renamed, removed or added hypotheses.

    A new hypothesis needs a value for every action:
    ``case.add_hypothesis(..., extra_values={"loss_table": {action: value}})``.
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
        vals = given.get(LOSS_TABLE) if isinstance(given, Mapping) else None
        if not isinstance(vals, Mapping):
            raise CaseError(f"the case's {value['kind']} table needs a value for new hypothesis "
                            f"'{h}' under every action {list(table)}; pass "
                            f"extra_values={{'loss_table': {{action: value, ...}}}} to "
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
    return validate_loss_table({**value, "table": table}, case)


# --------------------------------------------------------------------------- the registry


@dataclass(frozen=True)
class Section:
    """A section analyses keep on a case: its key, its validator ``validate(value,
    case) -> value`` (JSON-ready, normalised; raises CaseError naming the field)
    and, for a section keyed by hypothesis, ``hypotheses_changed(value, case,
    renamed, added) -> value`` (``renamed``: old name -> new name, ``None`` when
    removed; ``added``: new name -> the values the caller gave for it)."""

    key: str
    validate: Callable[[Any, Any], Any]
    hypotheses_changed: Callable[[Any, Any, Mapping[str, Any], Mapping[str, Any]], Any] | None = None


SECTIONS: dict[str, Section] = {}


def register_section(section: Section) -> None:
    """Add (or replace) the validator of an extras section."""
    if not isinstance(section, Section):
        raise CaseTypeError(f"register_section takes a Section, got {type(section).__name__}")
    SECTIONS[check_name("extras key", section.key)] = section


REPLIES = "replies"
_COMMENT_ID = re.compile(r"^C[0-9]{1,4}\.[0-9]{1,5}$")


def validate_replies(value: Any, case: Any) -> dict[str, dict[str, str]]:
    """The analyst's replies to review comments: comment id (``C<sign-off>.<k>``) ->
    ``{"text", "who", "when"}``."""
    if not isinstance(value, Mapping):
        raise CaseError("extras section 'replies' must map a comment id to its reply")
    out = {}
    for cid, r in value.items():
        if not isinstance(cid, str) or not _COMMENT_ID.match(cid):
            raise CaseError(f"reply to {cid!r:.30}: a comment id looks like 'C1.3' (sign-off "
                            "1, comment 3), as the record and its comments file print it")
        if not isinstance(r, Mapping) or set(r) - {"text", "who", "when"}:
            raise CaseError(f"reply to {cid}: must be an object with text, who, when")
        out[cid] = {"text": _text(f"reply to {cid}", r.get("text", "")),
                    "who": _text(f"author of the reply to {cid}", r.get("who", "")),
                    "when": _text(f"time of the reply to {cid}", r.get("when", ""))}
        if not out[cid]["text"].strip():
            raise CaseError(f"reply to {cid} is empty; write the answer, or leave it out")
    return out


register_section(Section(UNCERTAINTY, validate_uncertainty))
register_section(Section(REPLIES, validate_replies))
register_section(Section(LOSS_TABLE, validate_loss_table, loss_table_hypotheses_changed))


def hypotheses_changed(key: str, value: Any, case: Case, renamed: Mapping[str, Any],
                       added: Mapping[str, Any]) -> Any:
    """Run the hypothesis hook registered for extras section ``key`` (if any)."""
    sec = SECTIONS.get(key)
    if sec is None or sec.hypotheses_changed is None:
        return value
    return sec.hypotheses_changed(value, case, renamed, added)


def validate_extra(key: str, value: Any, case: Case) -> Any:
    """Check one extras section: JSON-ready, finite, and valid for its registered owner."""
    try:
        value = json.loads(json.dumps(value, allow_nan=False))
    except (TypeError, ValueError) as exc:
        raise CaseError(f"extras section '{key}' is not JSON-ready ({exc}); use plain dicts, "
                        "lists, strings and finite numbers") from None
    _check_json_value(value, f"extras section '{key}'", depth=0)
    sec = SECTIONS.get(key)
    return value if sec is None else sec.validate(value, case)


def _check_json_value(value: Any, what: str, depth: int) -> None:
    if depth > 32:
        raise CaseError(f"{what} is nested more than 32 levels deep")
    if isinstance(value, float) and not math.isfinite(value):
        raise CaseError(f"{what} holds a non-finite number")
    if isinstance(value, Mapping):
        for k, v in value.items():
            _check_json_value(v, f"{what}.{k}", depth + 1)
    elif isinstance(value, list):
        for k, v in enumerate(value):
            _check_json_value(v, f"{what}[{k}]", depth + 1)


__all__ = ["REPLIES", "validate_replies", "Section", "SECTIONS", "register_section", "validate_extra", "hypotheses_changed",
           "validate_uncertainty", "validate_loss_table", "loss_table_hypotheses_changed",
           "loss_rows", "check_loss_rows", "check_loss_kind", "UNCERTAINTY", "LOSS_TABLE",
           "UNCERTAINTY_KINDS", "LOSS_KINDS", "RESERVED_ACTIONS"]

"""The review checklist: automatic checks on a sealed record and manual ones a reviewer ticks.

The checks are data (``templates/checks.json``: an id, a kind, the text and a
one-line rationale each). The automatic ones are computed from the record's
cases and cells; the manual ones are ticked by the reviewer (``--checklist
FILE``). A site adds its own manual checks with a site file (same layout;
``site=`` or the ``BELIEFLEDGER_SITE_CHECKS`` environment variable): a file
can hold only data, so it cannot add an automatic check.
"""

from __future__ import annotations

import csv
import io
import json
import os
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from ..display import esc
from ..errors import RecordError
from .canonical import META_KEY, cell_role, join_text

_DEFAULTS = Path(__file__).resolve().parent / "templates" / "checks.json"
SITE_ENV = "BELIEFLEDGER_SITE_CHECKS"
KINDS = ("automatic", "manual")
AUTO_OUTCOMES = ("pass", "fail", "n/a")
MANUAL_OUTCOMES = ("ticked", "not ticked", "n/a", "open")
_ID = re.compile(r"^[a-z0-9]+(-[a-z0-9]+)*$")
TORNADO_TOP = 3


@dataclass(frozen=True)
class Check:
    """One check: ``id`` (kebab-case), ``kind`` (automatic or manual), ``text`` and
    ``rationale``."""

    id: str
    kind: str
    text: str
    rationale: str
    origin: str = "beliefledger"


@dataclass(frozen=True)
class Outcome:
    """A check's outcome and the items behind it (the numbers or items that fail it)."""

    check: Check
    outcome: str
    items: tuple[str, ...] = ()
    note: str = ""

    def to_dict(self) -> dict[str, Any]:
        return {"id": self.check.id, "kind": self.check.kind, "text": self.check.text,
                "rationale": self.check.rationale, "outcome": self.outcome,
                "items": list(self.items), "note": self.note}


@dataclass
class Checklist:
    """The checklist of one record: automatic outcomes, manual ticks."""

    record: str
    outcomes: list[Outcome] = field(default_factory=list)

    def outcome(self, check_id: str) -> Outcome:
        for o in self.outcomes:
            if o.check.id == check_id:
                return o
        raise KeyError(check_id)

    @property
    def failed(self) -> list[Outcome]:
        return [o for o in self.outcomes if o.outcome in ("fail", "not ticked")]

    @property
    def open(self) -> list[Outcome]:
        return [o for o in self.outcomes if o.outcome == "open"]

    def signed_form(self) -> dict[str, Any]:
        """What a sign-off keeps: every outcome (automatic and manual) by id."""
        return {"automatic": {o.check.id: o.outcome for o in self.outcomes
                              if o.check.kind == "automatic"},
                "manual": {o.check.id: {"outcome": o.outcome, "note": o.note}
                           for o in self.outcomes if o.check.kind == "manual"}}

    def to_dict(self) -> dict[str, Any]:
        return {"record": self.record, "checks": [o.to_dict() for o in self.outcomes]}

    def text(self, *, items: int = 8) -> str:
        lines = [f"Review checklist for {self.record}", ""]
        for kind in KINDS:
            lines.append("Automatic checks:" if kind == "automatic" else
                         "Manual checks (tick with --checklist FILE when signing):")
            for o in self.outcomes:
                if o.check.kind != kind:
                    continue
                lines.append(f"  [{o.outcome:>10}] {o.check.id}: {o.check.text}")
                lines.append(f"               why: {o.check.rationale}")
                for it in o.items[:items]:
                    lines.append(f"               - {it}")
                if len(o.items) > items:
                    lines.append(f"               and {len(o.items) - items} more (--json "
                                 "lists them all)")
                if o.note:
                    lines.append(f"               note: {o.note}")
            lines.append("")
        n_fail = len(self.failed)
        lines.append(f"{n_fail} check(s) not met, {len(self.open)} manual check(s) open.")
        return "\n".join(lines)

    def html(self) -> str:
        rows = "".join(
            f"<tr><td>{esc(o.check.kind)}</td><td><code>{esc(o.check.id)}</code></td>"
            f"<td><b>{esc(o.outcome)}</b></td><td>{esc(o.check.text)}"
            + (f"<br><small>{esc('; '.join(o.items))}</small>" if o.items else "")
            + (f"<br><small>note: {esc(o.note)}</small>" if o.note else "")
            + f"</td><td><small>{esc(o.check.rationale)}</small></td></tr>"
            for o in self.outcomes)
        return ('<table class="bl-table bl-checklist"><thead><tr><th>kind</th><th>check</th>'
                "<th>outcome</th><th>what</th><th>why</th></tr></thead><tbody>"
                f"{rows}</tbody></table>")

    def _repr_html_(self) -> str:
        return self.html()

    def __repr__(self) -> str:
        return (f"Checklist({self.record!r}: {len(self.outcomes)} checks, {len(self.failed)} "
                f"not met, {len(self.open)} open)")


# --------------------------------------------------------------------------- the checks


def _read_checks(path: Path, origin: str) -> list[Check]:
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except OSError as exc:
        raise RecordError(f"cannot read the checklist file {str(path)!r}: {exc.strerror}") from None
    except json.JSONDecodeError as exc:
        raise RecordError(f"checklist file {path.name!r} is not JSON ({exc.msg} at line "
                          f"{exc.lineno}); see the README for the layout") from None
    items = data.get("checks") if isinstance(data, Mapping) else data
    if not isinstance(items, list):
        raise RecordError(f"checklist file {path.name!r} must hold a list of checks (or "
                          "{\"checks\": [...]})")
    out = []
    for k, it in enumerate(items):
        where = f"check {k + 1} of {path.name!r}"
        if not isinstance(it, Mapping):
            raise RecordError(f"{where} is not an object with id, kind, text, rationale")
        cid, kind = it.get("id"), it.get("kind", "manual")
        text, why = it.get("text"), it.get("rationale")
        if not isinstance(cid, str) or not _ID.match(cid):
            raise RecordError(f"{where}: id {cid!r:.40} must be a kebab-case word such as "
                              "'site-permit-checked'")
        if kind not in KINDS:
            raise RecordError(f"{where} ({cid}): kind {kind!r:.30} must be one of {KINDS}")
        for name, v in (("text", text), ("rationale", why)):
            if not isinstance(v, str) or not v.strip():
                raise RecordError(f"{where} ({cid}) needs a non-empty {name}")
        out.append(Check(cid, kind, text.strip(), why.strip(), origin))
    return out


def load_checks(site: str | Path | None = None) -> list[Check]:
    """The default checks, then a site's own manual checks (``site`` or the
    ``BELIEFLEDGER_SITE_CHECKS`` environment variable)."""
    checks = _read_checks(_DEFAULTS, "beliefledger")
    site = site if site is not None else (os.environ.get(SITE_ENV) or None)
    if site is not None:
        extra = _read_checks(Path(site), f"site file {Path(site).name}")
        auto = [c.id for c in extra if c.kind == "automatic"]
        if auto:
            raise RecordError(f"site file {Path(site).name!r} declares automatic checks {auto}; "
                              "a site file can add manual checks only (an automatic check is "
                              "code in beliefledger, and a file never runs code)")
        seen = {c.id for c in checks}
        dup = [c.id for c in extra if c.id in seen]
        if dup:
            raise RecordError(f"site file {Path(site).name!r} repeats the check id(s) {dup}; "
                              "choose ids of its own")
        checks += extra
    ids = [c.id for c in checks]
    if len(set(ids)) != len(ids):
        raise RecordError(f"the checklist names an id twice: {ids}")
    return checks


def _quoted(items: Sequence[str]) -> str:
    return ", ".join(f"'{x}'" for x in items)


def _all_sourced(case: Any, **_: Any) -> tuple[str, list[str]]:
    out = [f"base prior of '{h.name}'" for h in case.hypotheses.values()
           if not h.source.is_sourced]
    out += [f"priors of scenario '{sc.name}'" for sc in case.scenarios.values()
            if not sc.source.is_sourced]
    for ev in case.evidence.values():
        missing = [f"P('{s}' | '{h}')" for s in ev.states for h in ev.hypotheses
                   if not ev.source_of(s, h).is_sourced]
        if missing:
            out.append(f"'{ev.name}': " + (f"all {len(missing)} likelihoods" if len(missing) ==
                                           len(ev.states) * len(ev.hypotheses)
                                           else ", ".join(missing)))
    return ("fail" if out else "pass"), out


def _catch_all(case: Any, **_: Any) -> tuple[str, list[str]]:
    if any(h.catch_all for h in case.hypotheses.values()) or case.exhaustive:
        return "pass", []
    return "fail", [f"hypotheses {_quoted(case.hypothesis_names)}: none is a catch-all and "
                    "the set is not declared exhaustive"]


def _zero_prior_reason(case: Any, **_: Any) -> tuple[str, list[str]]:
    out = []
    for h in case.hypotheses.values():
        reason = (h.source.why or h.description or "").strip()
        if h.prior == 0 and not reason:
            out.append(f"'{h.name}' has a base prior of 0 and no reason (source 'why' or "
                       "description)")
        for sc in case.scenarios.values():
            if float(sc.priors[h.name]) == 0 and not (reason or sc.source.why.strip()):
                out.append(f"'{h.name}' has a prior of 0 in scenario '{sc.name}' and no reason")
    if not out and not any(h.prior == 0 for h in case.hypotheses.values()):
        return "pass", []
    return ("fail" if out else "pass"), out


def _dependence(case: Any, **_: Any) -> tuple[str, list[str]]:
    groups: dict[str, list[str]] = {}
    for ev in case.evidence.values():
        if ev.shared_source:
            groups.setdefault(ev.shared_source, []).append(ev.name)
    links = case.dependence_links()
    out = [f"items {_quoted(items)} share the source tag '{tag}' but are treated as "
           "independent" for tag, items in groups.items()
           if len(items) > 1 and not (links.get(items[0]) is not None
                                      and len({links.get(i) for i in items}) == 1)]
    return ("fail" if out else "pass"), out


def _two_scenarios(case: Any, **_: Any) -> tuple[str, list[str]]:
    n = len(case.scenario_names)
    return ("pass", []) if n >= 2 else ("fail", ["only the base priors: add a prior scenario "
                                                 "(e.g. a wider reference class or uniform)"])


def _sensitive_ranges(case: Any, **_: Any) -> tuple[str, list[str]]:
    from ..errors import CaseError
    from ..sensitivity import tornado

    try:
        frame = tornado(case)
    except CaseError as exc:
        return "n/a", [f"no tornado: {exc}"]
    top = frame.head(TORNADO_TOP)
    out = [f"{r['input']} (swing {r['swing']:.3g}) has no stated range" for _, r in top.iterrows()
           if str(r["range_from"]).startswith("±")]
    return ("fail" if out else "pass"), out


def _pending_valued(case: Any, *, calls: Mapping[str, Any], **_: Any) -> tuple[str, list[str]]:
    pending = [ev.name for ev in case.evidence.values() if not ev.is_observed]
    if not pending:
        return "n/a", []
    if "rank_next_evidence" in calls:
        return "pass", []
    return "fail", [f"pending {_quoted(pending)}: the notebook shows no ranking "
                    "(bl.rank_next_evidence(case) as a cell's last line); the record ranks "
                    "them, but the analyst has not"]


def _cautions(case: Any, *, cells: Sequence[Mapping[str, Any]], **_: Any) -> tuple[str, list[str]]:
    from .sections import CAUTION, SAFETY_CAUTION

    text = "".join(join_text(c.get("source", "")) for c in cells
                   if cell_role(c) and (c["metadata"][META_KEY].get("section") == "cautions"))
    out = []
    if CAUTION not in text:
        out.append("the general caution is missing")
    if case.safety_related and SAFETY_CAUTION not in text:
        out.append("the case is safety related but the safety caution is missing")
    return ("fail" if out else "pass"), out


AUTOMATIC = {"all-sourced": _all_sourced, "catch-all": _catch_all,
             "zero-prior-reason": _zero_prior_reason, "dependence-declared": _dependence,
             "two-scenarios": _two_scenarios, "sensitive-ranges": _sensitive_ranges,
             "pending-valued": _pending_valued, "cautions-present": _cautions}


def evaluate(nb: Mapping[str, Any], meta: Mapping[str, Any], *, label: str = "record",
             site: str | Path | None = None) -> Checklist:
    """The checklist of a sealed record: automatic outcomes computed, manual ones open."""
    from ..casefile import from_envelope
    from ..errors import CaseError
    from .collect import analysis_calls

    cells = nb.get("cells", [])
    calls = analysis_calls(cells)
    cases = []
    for e in meta.get("cases", []):
        try:
            cases.append(from_envelope(e["envelope"], origin=f"case {e.get('title')!r}"))
        except (CaseError, KeyError, TypeError) as exc:
            raise RecordError(f"{label}: case {e.get('title')!r} cannot be read ({exc})") from None
    out = Checklist(label)
    for check in load_checks(site):
        if check.kind == "manual":
            out.outcomes.append(Outcome(check, "open"))
            continue
        fn = AUTOMATIC.get(check.id)
        if fn is None:  # pragma: no cover - the default file and the table go together
            raise AssertionError(f"no code for automatic check {check.id!r}")
        results, items = [], []
        for case in cases:
            mine = {kind: sc for (title, kind), sc in calls.items() if title == case.title}
            res, its = fn(case, calls=mine, cells=cells)
            results.append(res)
            prefix = f"{case.title}: " if len(cases) > 1 else ""
            items += [prefix + it for it in its]
        outcome = ("fail" if "fail" in results else "pass" if "pass" in results else "n/a")
        out.outcomes.append(Outcome(check, outcome, tuple(items)))
    return out


# --------------------------------------------------------------------------- ticks


_TRUE = {"yes", "y", "true", "1", "ticked", "x", "done"}
_FALSE = {"no", "n", "false", "0", "not ticked", ""}


def _tick(value: Any, where: str) -> str:
    if value is True:
        return "ticked"
    if value is False or value is None:
        return "not ticked"
    text = str(value).strip().lower()
    if text in _TRUE:
        return "ticked"
    if text in _FALSE:
        return "not ticked"
    if text in ("n/a", "na", "not applicable"):
        return "n/a"
    raise RecordError(f"{where}: {value!r:.40} is not a tick; write yes, no or n/a")


def read_ticks(path: str | Path) -> dict[str, tuple[str, str]]:
    """Manual ticks from a file: JSON ``{id: true|false|"n/a"}`` or ``{id: {"ticked": ...,
    "note": ...}}``, or CSV with columns ``id, ticked[, note]``. -> id: (outcome, note)."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8-sig")
    except OSError as exc:
        raise RecordError(f"cannot read the checklist {str(p)!r}: {exc.strerror}") from None
    out: dict[str, tuple[str, str]] = {}
    if p.suffix.lower() == ".json":
        try:
            data = json.loads(text)
        except json.JSONDecodeError as exc:
            raise RecordError(f"checklist {p.name!r} is not JSON ({exc.msg}, line {exc.lineno})"
                              ) from None
        if not isinstance(data, Mapping):
            raise RecordError(f"checklist {p.name!r} must be an object: check id -> yes/no/n/a")
        for cid, v in data.items():
            note = ""
            if isinstance(v, Mapping):
                note, v = str(v.get("note", "") or ""), v.get("ticked", v.get("outcome"))
            out[str(cid)] = (_tick(v, f"{p.name}, check {cid!r}"), note)
        return out
    rows = list(csv.DictReader(io.StringIO(text)))
    if not rows or "id" not in rows[0] or "ticked" not in rows[0]:
        raise RecordError(f"checklist {p.name!r} needs the columns id, ticked (and optionally "
                          "note); or give a .json file")
    for k, r in enumerate(rows, start=2):
        cid = (r.get("id") or "").strip()
        out[cid] = (_tick(r.get("ticked"), f"{p.name}, line {k} ({cid})"),
                    (r.get("note") or "").strip())
    return out


def apply_ticks(checklist: Checklist, ticks: Mapping[str, tuple[str, str]]) -> Checklist:
    """The checklist with the reviewer's ticks; unknown ids and automatic ones refused."""
    known = {o.check.id: o for o in checklist.outcomes}
    unknown = [c for c in ticks if c not in known]
    if unknown:
        manual = [c for c, o in known.items() if o.check.kind == "manual"]
        raise RecordError(f"the checklist ticks unknown check(s) {unknown}; the manual checks "
                          f"are {manual}")
    auto = [c for c in ticks if known[c].check.kind == "automatic"]
    if auto:
        raise RecordError(f"check(s) {auto} are automatic: their outcome is computed from the "
                          "record, not ticked; remove them from the file")
    return Checklist(checklist.record, [replace(o, outcome=ticks[o.check.id][0],
                                                note=ticks[o.check.id][1])
                                        if o.check.id in ticks else o
                                        for o in checklist.outcomes])


__all__ = ["Check", "Outcome", "Checklist", "load_checks", "evaluate", "read_ticks",
           "apply_ticks", "AUTOMATIC", "SITE_ENV"]

"""What changed between two records or two case files.

Reads records as plain JSON (no nbformat). For each pair of cases (matched
by title; a single case on each side is paired whatever its title) it lists
hypotheses added, removed or renamed; priors (per scenario), likelihood
entries, observed states and sources changed (old -> new); evidence and
scenarios added or removed; flags that appeared or cleared; and the
posterior and MAP changes under each side's active scenario.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..display import esc, observed_text, visible
from .nbio import RecordError, read_json_file

POSTERIOR_TOL = 5e-5
"""Posterior changes smaller than this (half the last shown digit of 4) are not listed."""

SECTIONS = ("case", "hypotheses", "priors", "evidence", "likelihoods", "sources", "scenarios",
            "assumptions", "flags", "results")


@dataclass(frozen=True)
class Change:
    """One difference: ``section``, ``kind``, ``where`` and ``old`` -> ``new``."""

    section: str
    kind: str
    where: str
    old: Any = None
    new: Any = None

    def text(self) -> str:
        if self.kind in ("added", "appeared"):
            return f"{self.kind}: {self.where}" + (f" ({self.new})" if self.new not in (None, "")
                                                   else "")
        if self.kind in ("removed", "cleared"):
            return f"{self.kind}: {self.where}" + (f" ({self.old})" if self.old not in (None, "")
                                                   else "")
        return f"{self.kind}: {self.where}: {self.old} -> {self.new}"

    def to_dict(self) -> dict[str, Any]:
        return {"section": self.section, "kind": self.kind, "where": self.where,
                "old": self.old, "new": self.new}


@dataclass
class Response:
    """One review comment of the old record and the new version's answer to it: the
    analyst's reply (or none) and the changes in what the comment concerns."""

    comment: dict[str, Any]
    reviewer: str
    decision: str
    reply: dict[str, str] | None
    changes: list[Change]
    cell: str | None = None

    def lines(self) -> list[str]:
        from .comments import target_label

        c = self.comment
        out = [f"{c['id']} ({self.reviewer}, {self.decision}) on {target_label(c['target'])}: "
               f"{c['text']}"]
        out.append(f"    reply: {self.reply['text']} ({self.reply.get('who') or 'unknown'}, "
                   f"{self.reply.get('when')})" if self.reply else "    reply: none")
        if self.cell is not None:
            out.append(f"    in response: {self.cell}")
        elif self.changes:
            out += [f"    changed: {c.text()}" for c in self.changes]
        else:
            out.append("    unchanged: nothing it concerns differs in the new version")
        return out

    def to_dict(self) -> dict[str, Any]:
        return {"comment": self.comment, "reviewer": self.reviewer, "decision": self.decision,
                "reply": self.reply, "changes": [c.to_dict() for c in self.changes],
                "cell": self.cell}


@dataclass
class CaseDiff:
    """The differences between two sets of cases (and, between two records, the answer
    to each review comment of the old one)."""

    old_label: str
    new_label: str
    changes: list[Change] = field(default_factory=list)
    responses: list[Response] = field(default_factory=list)

    @property
    def empty(self) -> bool:
        return not self.changes and not self.responses

    def _response_lines(self) -> list[str]:
        if not self.responses:
            return []
        n = sum(1 for r in self.responses if r.reply)
        lines = [f"review comments ({len(self.responses)}, {n} answered):"]
        for r in self.responses:
            lines += ["  " + ln for ln in r.lines()]
        return lines

    def by_section(self) -> dict[str, list[Change]]:
        out: dict[str, list[Change]] = {}
        for c in self.changes:
            out.setdefault(c.section, []).append(c)
        return {s: out[s] for s in SECTIONS if s in out}

    def text(self) -> str:
        lines = [f"diff {visible(self.old_label)} -> {visible(self.new_label)}"]
        if self.empty:
            return lines[0] + "\nno differences in assumptions or results"
        for section, items in self.by_section().items():
            lines.append(f"{section}:")
            lines += [f"  {visible(c.text())}" for c in items]
        lines += [visible(ln) for ln in self._response_lines()]
        return "\n".join(lines)

    def markdown(self) -> str:
        def md(t: str) -> str:
            return visible(t).replace("|", "\\|").replace("*", "\\*").replace("_", "\\_")

        lines = [f"# Changes: {md(self.old_label)} -> {md(self.new_label)}", ""]
        if self.empty:
            return "\n".join(lines + ["No differences in assumptions or results.", ""])
        for section, items in self.by_section().items():
            lines += [f"## {section.capitalize()}", ""]
            lines += [f"- {md(c.text())}" for c in items]
            lines.append("")
        if self.responses:
            lines += ["## Review comments", ""]
            for r in self.responses:
                first, *rest = r.lines()
                lines.append(f"- {md(first)}")
                lines += [f"  - {md(x.strip())}" for x in rest]
            lines.append("")
        return "\n".join(lines)

    def html(self) -> str:
        body = [f"<h1>Changes: {esc(self.old_label)} &rarr; {esc(self.new_label)}</h1>"]
        if self.empty:
            body.append("<p>No differences in assumptions or results.</p>")
        for section, items in self.by_section().items():
            body.append(f"<h2>{esc(section.capitalize())}</h2><ul>")
            body += [f"<li>{esc(c.text())}</li>" for c in items]
            body.append("</ul>")
        if self.responses:
            body.append("<h2>Review comments</h2><ul>")
            for r in self.responses:
                first, *rest = r.lines()
                body.append(f"<li>{esc(first)}<ul>"
                            + "".join(f"<li>{esc(x.strip())}</li>" for x in rest) + "</ul></li>")
            body.append("</ul>")
        return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
                "<title>beliefledger diff</title><style>body{font-family:system-ui,sans-serif;"
                "max-width:60rem;margin:1rem auto;padding:0 1rem}li{margin:.2rem 0}</style>"
                "</head><body>" + "".join(body) + "</body></html>\n")

    def _repr_html_(self) -> str:
        return "".join(f"<h4>{esc(s)}</h4><ul>" + "".join(f"<li>{esc(c.text())}</li>"
                                                         for c in items) + "</ul>"
                       for s, items in self.by_section().items()) or "<p>No differences.</p>"

    def __repr__(self) -> str:
        return (f"CaseDiff({self.old_label!r} -> {self.new_label!r}: "
                f"{len(self.changes)} changes)")


# --------------------------------------------------------------------------- loading


def load_cases(path: str | Path) -> list[Any]:
    """The cases in a record (embedded), a notebook (its last display of each case) or a
    case file (.json)."""
    from ..casefile import from_envelope
    from ..errors import CaseError
    from .canonical import META_KEY
    from .collect import collect_envelopes
    from .nbio import check_notebook, record_meta

    p = Path(path)
    data = read_json_file(p, what="file")
    if "cells" in data:
        label = f"notebook {p.name!r}"
        check_notebook(data, label)
        if META_KEY in (data.get("metadata") or {}):
            envs = [(e.get("title"), e.get("envelope")) for e in record_meta(data, label)["cases"]
                    if isinstance(e, dict)]
        else:
            envs = [(e["title"], e["envelope"]) for e in collect_envelopes(data["cells"])]
        if not envs:
            raise RecordError(f"{label} shows no case to compare")
    elif data.get("format") == "beliefledger-case":
        envs = [(None, data)]
    else:
        raise RecordError(f"{p.name!r} is neither a sealed record, a notebook nor a beliefledger "
                          "case file")
    out = []
    for title, env in envs:
        try:
            out.append(from_envelope(env, origin=f"case {title!r} in {p.name!r}" if title
                                     else f"case file {p.name!r}"))
        except CaseError as exc:
            raise RecordError(str(exc)) from None
    return out


def load_record(path: str | Path) -> dict[str, Any]:
    """A sealed record's metadata and cases: ``{"header", "manifest", "signoffs", "cases"}``."""
    from .nbio import read_record

    _, meta = read_record(path)
    return {"header": meta["header"], "manifest": meta["manifest"],
            "signoffs": meta.get("signoffs", []), "cases": load_cases(path)}


# --------------------------------------------------------------------------- comparing


def _p(x: float) -> str:
    return f"{x:.6g}"


def _hyp_signature(case, name: str) -> tuple:
    cols = tuple(tuple(ev.likelihood_of(s)[name] for s in ev.states)
                 for ev in case.evidence.values())
    return (round(case.hypotheses[name].prior, 12), case.hypotheses[name].description, cols)


def _match_renames(old, new, removed: list[str], added: list[str]) -> dict[str, str]:
    """old name -> new name for hypotheses that look renamed (same prior, description and
    likelihoods; or the only removal and the only addition at the same position)."""
    pairs: dict[str, str] = {}
    sig_new = {a: _hyp_signature(new, a) for a in added}
    for r in removed:
        s = _hyp_signature(old, r)
        for a in added:
            if a not in pairs.values() and sig_new[a][:2] == s[:2] and (
                    sig_new[a][2] == s[2] or not old.evidence or not new.evidence):
                pairs[r] = a
                break
    left_r = [r for r in removed if r not in pairs]
    left_a = [a for a in added if a not in pairs.values()]
    if len(left_r) == 1 and len(left_a) == 1 and (
            old.hypothesis_names.index(left_r[0]) == new.hypothesis_names.index(left_a[0])):
        pairs[left_r[0]] = left_a[0]
    return pairs


def _observed(ev: Any) -> str:
    """What is known of an item's state, with the weights of an uncertain observation."""
    text = observed_text(ev)
    if ev.uncertain is not None:
        text += " (" + ", ".join(f"{s} {v:.6g}" for s, v in zip(ev.states, ev.uncertain.weights,
                                                                  strict=True)) + ")"
    return text


def diff_cases(old, new, *, label: str = "") -> list[Change]:
    """The changes from case ``old`` to case ``new``."""
    from ..engine import update

    pre = f"[{label}] " if label else ""
    ch: list[Change] = []

    def add(section, kind, where, a=None, b=None):
        ch.append(Change(section, kind, pre + where, a, b))

    for attr in ("title", "question", "analyst", "notes", "exhaustive", "safety_related",
                 "active_scenario"):
        a, b = getattr(old, attr), getattr(new, attr)
        if a != b:
            add("case", "changed", attr, a, b)
    oh, nh = old.hypothesis_names, new.hypothesis_names
    removed = [h for h in oh if h not in nh]
    added = [h for h in nh if h not in oh]
    renames = _match_renames(old, new, removed, added)
    for r, a in renames.items():
        add("hypotheses", "renamed", f"hypothesis '{r}'", r, a)
    for h in removed:
        if h not in renames:
            add("hypotheses", "removed", f"hypothesis '{h}'", f"prior {_p(old.hypotheses[h].prior)}")
    for h in added:
        if h not in renames.values():
            add("hypotheses", "added", f"hypothesis '{h}'", None,
                f"prior {_p(new.hypotheses[h].prior)}")
    hmap = {h: h for h in oh if h in nh} | renames  # old name -> new name
    for ho, hn in hmap.items():
        a, b = old.hypotheses[ho], new.hypotheses[hn]
        if a.prior != b.prior:
            add("priors", "changed", f"prior of '{hn}' (base)", _p(a.prior), _p(b.prior))
        if a.source != b.source:
            add("sources", "changed", f"source of prior '{hn}'", str(a.source), str(b.source))
        if a.catch_all != b.catch_all:
            add("hypotheses", "changed", f"catch-all flag of '{hn}'", a.catch_all, b.catch_all)
    # scenarios
    for s in old.scenarios:
        if s not in new.scenarios:
            add("scenarios", "removed", f"scenario '{s}'")
    for s in new.scenarios:
        if s not in old.scenarios:
            add("scenarios", "added", f"scenario '{s}'")
            continue
        so, sn = old.scenarios[s], new.scenarios[s]
        for ho, hn in hmap.items():
            a, b = float(so.priors[ho]), float(sn.priors[hn])
            if a != b:
                add("priors", "changed", f"prior of '{hn}' in scenario '{s}'", _p(a), _p(b))
        if so.source != sn.source:
            add("sources", "changed", f"source of scenario '{s}'", str(so.source), str(sn.source))
    # evidence
    for e in old.evidence_names:
        if e not in new.evidence_names:
            add("evidence", "removed", f"evidence '{e}'", old.evidence[e].observed)
    for e in new.evidence_names:
        if e not in old.evidence_names:
            ev = new.evidence[e]
            add("evidence", "added", f"evidence '{e}'", None,
                f"observed {ev.observed!r}" if ev.observed is not None else _observed(ev))
    for e in [x for x in old.evidence_names if x in new.evidence_names]:
        eo, en = old.evidence[e], new.evidence[e]
        if eo.observed != en.observed or eo.uncertain != en.uncertain:
            add("evidence", "changed", f"observed state of '{e}'", _observed(eo),
                _observed(en))
        if eo.shared_source != en.shared_source:
            add("evidence", "changed", f"shared-source tag of '{e}'", eo.shared_source,
                en.shared_source)
        for s in eo.states:
            if s not in en.states:
                add("evidence", "removed", f"state '{s}' of '{e}'")
        for s in en.states:
            if s not in eo.states:
                add("evidence", "added", f"state '{s}' of '{e}'")
        for s in [x for x in eo.states if x in en.states]:
            lo, ln = eo.likelihood_of(s), en.likelihood_of(s)
            for ho, hn in hmap.items():
                a, b = float(lo[ho]), float(ln[hn])
                if a != b:
                    add("likelihoods", "changed", f"P('{s}' | '{hn}') of '{e}'", _p(a), _p(b))
                sa, sb = eo.source_of(s, ho), en.source_of(s, hn)
                if sa != sb and not (sa == eo.source and sb == en.source):
                    add("sources", "changed", f"source of P('{s}' | '{hn}') of '{e}'", str(sa),
                        str(sb))
        if eo.source != en.source:
            add("sources", "changed", f"source of evidence '{e}'", str(eo.source), str(en.source))
        arts_o = {a.name: a for a in eo.artefacts}
        arts_n = {a.name: a for a in en.artefacts}
        for n, a in arts_o.items():
            if n not in arts_n:
                add("evidence", "removed", f"artefact '{n}' of '{e}'", str(a))
            elif arts_n[n].sha256 != a.sha256:
                add("evidence", "changed", f"SHA-256 of artefact '{n}' of '{e}'",
                    a.sha256[:16] + "...", arts_n[n].sha256[:16] + "...")
        for n, a in arts_n.items():
            if n not in arts_o:
                add("evidence", "added", f"artefact '{n}' of '{e}'", None, str(a))
    # assumptions and extras
    ao = [tuple(a.values()) for a in old.assumptions]
    an = [tuple(a.values()) for a in new.assumptions]
    for a in an:
        if a not in ao:
            add("assumptions", "added", f"{a[0]} ({a[1]})", None, a[2])
    for a in ao:
        if a not in an:
            add("assumptions", "removed", f"{a[0]} ({a[1]})", a[2])
    for k in sorted((set(old.extras) | set(new.extras)) - {"replies"}):  # replies: below
        if old.extras.get(k) != new.extras.get(k):
            kind = ("added" if k not in old.extras else "removed" if k not in new.extras
                    else "changed")
            add("assumptions", kind, f"inputs section '{k}'",
                "(was set)" if k in old.extras and kind == "changed" else None,
                "(now set)" if k in new.extras and kind == "changed" else None)
    # results
    to, tn = update(old), update(new)
    fo = {(f.code, f.where): f for f in to.flags}
    fn = {(f.code, f.where): f for f in tn.flags}
    for key, f in fn.items():
        if key not in fo:
            add("flags", "appeared", f"{f.severity} {f.code}", None, f.message)
    for key, f in fo.items():
        if key not in fn:
            add("flags", "cleared", f"{f.severity} {f.code}", f.message)
    if renames.get(to.map_hypothesis, to.map_hypothesis) != tn.map_hypothesis:
        add("results", "changed", "MAP hypothesis",
            f"{to.map_hypothesis} ({to.posterior[to.map_hypothesis]:.4f})",
            f"{tn.map_hypothesis} ({tn.posterior[tn.map_hypothesis]:.4f})")
    for ho, hn in hmap.items():
        a, b = float(to.posterior[ho]), float(tn.posterior[hn])
        if abs(a - b) >= POSTERIOR_TOL:
            add("results", "changed", f"posterior of '{hn}'", f"{a:.4f}", f"{b:.4f}")
    return ch


def _concerns(change: Change, t: dict[str, Any]) -> bool:
    """Whether ``change`` is a change in what a comment's target names (an input: results
    and flags follow from inputs, so they are not a response)."""
    if change.section in ("results", "flags"):
        return False
    kind = t.get("kind")
    if kind == "case":
        return True
    if kind == "likelihood":
        cell = f"P('{t['state']}' | '{t['hypothesis']}') of '{t['evidence']}'"
        return change.where in (cell, f"source of {cell}") or \
            change.where == f"evidence '{t['evidence']}'"
    if kind == "scenario":
        return f"scenario '{t['name']}'" in change.where
    return f"'{t['name']}'" in change.where


def _cell_response(old_nb: dict[str, Any] | None, new_nb: dict[str, Any] | None,
                   n: int) -> str:
    from .canonical import cell_content

    if old_nb is None or new_nb is None:
        return "cannot tell: compare two sealed records to follow a cell"
    cells = old_nb.get("cells") or []
    if not 1 <= n <= len(cells):
        return f"cell {n} is not in the old record"
    cid = cells[n - 1].get("id")
    match = [i for i, c in enumerate(new_nb.get("cells") or []) if c.get("id") == cid]
    if not match:
        return f"cell {n} (id {cid!r}) is no longer in the notebook"
    other = new_nb["cells"][match[0]]
    if cell_content(other) == cell_content(cells[n - 1]):
        return f"unchanged: cell {n} is the same in the new version (now cell {match[0] + 1})"
    old_src = "".join(cells[n - 1].get("source") or "")
    new_src = "".join(other.get("source") or "")
    what = "its source" if old_src != new_src else "its outputs"
    return f"changed: {what} (cell {n}, now cell {match[0] + 1})"


def responses(old: str | Path, new: str | Path, changes: list[Change],
              new_cases: list[Any]) -> list[Response]:
    """Each review comment of the record ``old`` with the reply and changes in ``new``."""
    from ..errors import RecordError as _RE
    from .nbio import read_record

    try:
        old_nb, meta = read_record(old)
    except _RE:
        return []  # not a record (a case file or a plain notebook): no comments to follow
    try:
        new_nb, _ = read_record(new)
    except _RE:
        new_nb = None
    replies: dict[str, Any] = {}
    by_title = {c.title: c for c in new_cases}
    out = []
    for s in meta.get("signoffs") or []:
        if not isinstance(s, dict):
            continue
        for c in s.get("comments") or []:
            case = by_title.get(c["target"].get("case")) or (new_cases[0] if len(new_cases) == 1
                                                              else None)
            replies = case.replies if case is not None else {}
            t = c["target"]
            if t.get("kind") == "cell":
                out.append(Response(c, str(s.get("reviewer")), str(s.get("decision")),
                                    replies.get(c["id"]), [],
                                    _cell_response(old_nb, new_nb, t["cell"])))
            else:
                out.append(Response(c, str(s.get("reviewer")), str(s.get("decision")),
                                    replies.get(c["id"]),
                                    [ch for ch in changes if _concerns(ch, t)]))
    return out


def diff(old: str | Path, new: str | Path) -> CaseDiff:
    """Compare two records, notebooks or case files (see the module docstring). Between
    two records, each review comment of the old one is followed into the new one."""
    co, cn = load_cases(old), load_cases(new)
    result = CaseDiff(Path(old).name, Path(new).name)
    if len(co) == 1 and len(cn) == 1:
        result.changes = diff_cases(co[0], cn[0])
        result.responses = responses(old, new, result.changes, cn)
        return result
    by_new = {c.title: c for c in cn}
    by_old = {c.title: c for c in co}
    for c in co:
        if c.title in by_new:
            result.changes += diff_cases(c, by_new[c.title], label=c.title)
        else:
            result.changes.append(Change("case", "removed", f"case '{c.title}'"))
    for c in cn:
        if c.title not in by_old:
            result.changes.append(Change("case", "added", f"case '{c.title}'"))
    result.responses = responses(old, new, result.changes, cn)
    return result


__all__ = ["diff", "diff_cases", "load_cases", "load_record", "CaseDiff", "Change", "Response",
           "responses",
           "POSTERIOR_TOL"]

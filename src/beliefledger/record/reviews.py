"""The review cells of a record: every sign-off with its decision, checklist outcome and
comments, shown beside what they concern.

Two cells, placed at sealing (empty until a reviewer signs): one in the
front, after the summary (who reviewed, when, the decision, the checklist,
whether each signature checks, the comments on cells), and one after the
assumption register (the comments on hypotheses, items, likelihoods and
scenarios, grouped in the register's order). Their content is derived from
the sign-offs in the record's metadata alone, so they are not hashed:
``verify`` derives them again and reports any difference.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from ..display import esc
from .canonical import META_KEY, REVIEW_ROLE, ROLE_KEY
from .comments import target_label

DECISION_WORDS = {"accept": "accepted", "conditions": "accepted with conditions",
                  "reject": "rejected"}
FRONT_SECTION, REGISTER_SECTION = "reviews", "register-comments"


def _cell(section: str, html_text: str, plain: str) -> dict[str, Any]:
    return {"cell_type": "code", "id": f"bl-{section}", "execution_count": None,
            "metadata": {META_KEY: {ROLE_KEY: REVIEW_ROLE, "section": section}},
            "source": f"# {section}: written by beliefledger sign from the sign-offs "
                      "(not code to run)",
            "outputs": [{"output_type": "display_data", "metadata": {},
                         "data": {"text/html": html_text, "text/plain": plain}}]}


def _status_text(s: Mapping[str, Any]) -> str:
    # sign refuses a record that is not intact or whose chain is broken, so every
    # sign-off was valid when this cell was written; verify checks each one again
    if "signature" in s:
        return (f"Ed25519, key {s.get('key_id')}: valid when written, over the root digest, "
                "the decision, checklist, comments and the sign-offs before it; "
                "beliefledger verify checks it again")
    return "unsigned: covers the digests and the sign-offs before it, proves no identity"


def _checklist_text(checklist: Mapping[str, Any]) -> str:
    # sorted: the same text whatever order the JSON keys come in (an HTML copy's embedded
    # record has its keys sorted)
    auto = dict(sorted((checklist.get("automatic") or {}).items()))
    manual = dict(sorted((checklist.get("manual") or {}).items()))
    if not auto and not manual:
        return "no checklist"
    failed = [k for k, v in auto.items() if v == "fail"]
    parts = [f"automatic: {sum(v == 'pass' for v in auto.values())} met, {len(failed)} not met"
             + (f" ({', '.join(failed)})" if failed else "")]
    if manual:
        ticked = [k for k, v in manual.items() if (v or {}).get("outcome") == "ticked"]
        other = [f"{k} {(v or {}).get('outcome')}" for k, v in manual.items()
                 if (v or {}).get("outcome") != "ticked"]
        parts.append(f"manual: ticked {', '.join(ticked) or 'none'}"
                     + (f"; {', '.join(other)}" if other else ""))
    return "; ".join(parts)


def _comment_li(c: Mapping[str, Any], s: Mapping[str, Any], *, with_target: bool) -> str:
    target = f"<i>{esc(target_label(c['target']))}</i>: " if with_target else ""
    return (f'<li class="bl-comment" id="comment-{esc(c["id"])}"><b>{esc(c["id"])}</b> '
            f"{target}{esc(c['text'])} <small>({esc(s.get('reviewer'))}, "
            f"{esc(DECISION_WORDS.get(s.get('decision'), s.get('decision')))})</small></li>")


def front_html(signoffs: Sequence[Any]) -> str:
    if not signoffs:
        return ("<p>No review yet. A reviewer runs <code>beliefledger review RECORD</code> for "
                "the checklist, then <code>beliefledger sign RECORD --reviewer NAME --decision "
                "accept|conditions|reject [--comments FILE] [--checklist FILE] [--key KEY]"
                "</code>.</p>")
    parts = []
    for i, s in enumerate(signoffs):
        if not isinstance(s, Mapping):
            parts.append(f"<p>Sign-off {i + 1}: not a sign-off entry.</p>")
            continue
        decision = DECISION_WORDS.get(s.get("decision"), "no decision recorded (an earlier "
                                                         "sign-off form)")
        comments = list(s.get("comments") or [])
        on_cells = [c for c in comments if c["target"].get("kind") == "cell"]
        elsewhere = len(comments) - len(on_cells)
        body = (f'<div class="bl-review"><p><b>Review {i + 1}: {esc(s.get("reviewer"))}</b>, '
                f"{esc(s.get('signed_at'))}: <b>{esc(decision)}</b>.</p><ul>"
                f"<li>Signature: {esc(_status_text(s))}.</li>"
                f"<li>Checklist: {esc(_checklist_text(s.get('checklist') or {}))}.</li>")
        if s.get("comment"):
            body += f"<li>Comment: {esc(s['comment'])}</li>"
        if elsewhere:
            body += (f'<li>{elsewhere} comment(s) on the assumptions: see <a href="#'
                     f'bl-{REGISTER_SECTION}">after the assumption register</a>.</li>')
        body += "</ul>"
        if on_cells:
            body += ("<p>Comments on cells:</p><ul>" + "".join(
                _comment_li(c, s, with_target=True).replace(
                    "<i>", f'<i><a href="#cell-{c["target"]["cell"]}">', 1).replace(
                    "</i>", "</a></i>", 1) for c in on_cells) + "</ul>")
        parts.append(body + "</div>")
    return "".join(parts)


def _register_order(case: Any) -> list[tuple[str, ...]]:
    keys: list[tuple[str, ...]] = [("case",)]
    keys += [("hypothesis", h) for h in case.hypothesis_names]
    keys += [("scenario", s) for s in case.scenario_names]
    for ev in case.evidence.values():
        keys.append(("evidence", ev.name))
        keys += [("likelihood", ev.name, s, h) for s in ev.states for h in ev.hypotheses]
    return keys


def _key(t: Mapping[str, Any]) -> tuple[str, ...]:
    kind = t.get("kind")
    if kind == "likelihood":
        return (kind, t["evidence"], t["state"], t["hypothesis"])
    if kind == "case":
        return ("case",)
    return (kind, t.get("name", ""))


def register_html(signoffs: Sequence[Any], cases: Mapping[str, Any]) -> str:
    """Comments on the assumptions, grouped by what they concern, in register order."""
    found: dict[tuple[str, ...], list[str]] = {}
    for s in signoffs:
        if not isinstance(s, Mapping):
            continue
        for c in s.get("comments") or []:
            t = c["target"]
            if t.get("kind") == "cell":
                continue
            found.setdefault((t.get("case", ""), *_key(t)), []).append(
                _comment_li(c, s, with_target=False))
    head = "<h4>Reviewer comments on the assumptions</h4>"
    if not found:
        return head + "<p>None yet.</p>"
    parts = [head]
    for title, case in cases.items():
        order = _register_order(case) if case is not None else []
        mine = [k for k in found if k[0] == title]
        mine.sort(key=lambda k: order.index(k[1:]) if k[1:] in order else len(order))
        for k in mine:
            t = dict(zip(("kind",), k[1:2], strict=True))
            t.update({"case": title})
            if k[1] == "likelihood":
                t.update(evidence=k[2], state=k[3], hypothesis=k[4])
            elif k[1] != "case":
                t["name"] = k[2]
            label = target_label(t)
            prefix = f"{esc(title)}: " if len(cases) > 1 else ""
            parts.append(f"<h5>{prefix}{esc(label)}</h5><ul>" + "".join(found[k]) + "</ul>")
    return '<div class="bl-review-comments">' + "".join(parts) + "</div>"


def review_cells(meta: Mapping[str, Any], cases: Mapping[str, Any] | None = None
                 ) -> tuple[dict[str, Any], dict[str, Any]]:
    """(front cell, register cell) for the sign-offs in ``meta``; ``cases``: title -> Case
    (for the register's order; read from ``meta`` when not given)."""
    signoffs = list(meta.get("signoffs") or [])
    if cases is None:
        cases = _cases(meta)
    n = len(signoffs)
    front = _cell(FRONT_SECTION, front_html(signoffs),
                  f"{n} review(s)" if n else "no review yet")
    register = _cell(REGISTER_SECTION, register_html(signoffs, cases),
                     "reviewer comments on the assumptions")
    return front, register


def _cases(meta: Mapping[str, Any]) -> dict[str, Any]:
    from ..casefile import from_envelope
    from ..errors import CaseError

    out: dict[str, Any] = {}
    for e in meta.get("cases") or []:
        if not isinstance(e, Mapping):
            continue
        try:
            out[str(e.get("title"))] = from_envelope(e["envelope"], origin="record")
        except (CaseError, KeyError, TypeError):
            out[str(e.get("title"))] = None
    return out


__all__ = ["review_cells", "front_html", "register_html", "DECISION_WORDS", "FRONT_SECTION",
           "REGISTER_SECTION"]

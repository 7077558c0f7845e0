"""The review round on a sealed record: the checklist, a signed decision with comments,
and the analyst's replies.

1. ``review(record)`` (``beliefledger review REC``): the checklist, automatic outcomes
   computed and the manual checks open.
2. ``sign(record, reviewer, decision=..., comments=FILE, checklist=FILE, key=KEY)``
   (``beliefledger sign``): a sign-off covering the record's root digest and the
   sign-offs before it, carrying the decision, the ticked checklist and comments
   anchored to hypotheses, items, likelihood cells, scenarios or cells. Written only on
   a record that verifies intact.
3. The analyst answers in the next version of the case (``case.reply(comment_id,
   text)``, or a ``reply`` column in the comments file: :func:`apply_replies`), and
   ``beliefledger diff OLD NEW`` shows, per comment, the reply and what changed in what it
   concerns.
"""

from __future__ import annotations

import copy
from pathlib import Path
from typing import Any

from ..errors import RecordError, RecordNotIntact
from .canonical import META_KEY, REVIEW_ROLE, cell_role
from .checklist import Checklist, apply_ticks, evaluate, read_ticks
from .comments import read_comments, read_replies
from .nbio import dumps_notebook, html_path_for, read_record, write_text
from .reviews import FRONT_SECTION, REGISTER_SECTION, review_cells
from .signing import check_chain, make_signoff
from .verifier import verify_notebook


def review(path: str | Path, *, site: str | Path | None = None) -> Checklist:
    """The review checklist of a sealed record (automatic checks computed, manual ones
    open). ``site``: a file of the site's own manual checks."""
    nb, meta = read_record(path)
    return evaluate(nb, meta, label=Path(path).name, site=site)


def _cases(meta: dict[str, Any]) -> dict[str, Any]:
    from ..casefile import from_envelope

    return {e["title"]: from_envelope(e["envelope"], origin=f"case {e['title']!r}")
            for e in meta.get("cases", [])}


def refresh_review_cells(nb: dict[str, Any]) -> None:
    """Rewrite the record's review cells from its sign-offs (in place)."""
    meta = nb["metadata"][META_KEY]
    front, register = review_cells(meta)
    for i, cell in enumerate(nb["cells"]):
        if cell_role(cell) != REVIEW_ROLE:
            continue
        sec = cell["metadata"][META_KEY].get("section")
        if sec == FRONT_SECTION:
            nb["cells"][i] = front
        elif sec == REGISTER_SECTION:
            nb["cells"][i] = register


def sign(path: str | Path, reviewer: str, comment: str = "", *,
         decision: str | None = "accept", comments: str | Path | None = None,
         checklist: str | Path | None = None, key: str | Path | None = None,
         site: str | Path | None = None, signed_at: str | None = None) -> dict[str, Any]:
    """Add a reviewer's sign-off to a sealed record (in place, atomically).

    Parameters
    ----------
    decision : {"accept", "conditions", "reject"}
        "conditions" and "reject" need comments (``comments`` or ``comment``).
    comments : path, optional
        CSV or JSON of comments (target, comment); see :mod:`.comments`.
    checklist : path, optional
        The reviewer's ticks of the manual checks (JSON or CSV, see
        :func:`.checklist.read_ticks`). The automatic outcomes are computed.
    key : path, optional
        Ed25519 private key (``beliefledger keygen``); without it the sign-off
        covers the digests but proves no identity.

    Refuses a record that is not intact (a sign-off must cover exactly what was
    sealed); a refused sign-off writes nothing. Returns the new entry.
    """
    p = Path(path)
    nb, meta = read_record(p)
    result = verify_notebook(nb, meta, path=str(p), reproduce_results=False)
    if not result.intact:
        raise RecordNotIntact(
            f"record {p.name!r} is not intact, so it cannot be signed:\n"
            + "\n".join(f"  - {q}" for q in result.problems))
    previous = list(meta.get("signoffs") or [])
    if any(s.status != "valid" for s in check_chain(previous, result.root)):
        raise RecordNotIntact(f"record {p.name!r} has a broken sign-off chain; it cannot be "
                              "signed again until that is resolved (see beliefledger verify)")
    checks = evaluate(nb, meta, label=p.name, site=site)
    if checklist is not None:
        checks = apply_ticks(checks, read_ticks(checklist))
    notes = []
    if comments is not None:
        notes = read_comments(comments, _cases(meta), len(nb["cells"]),
                              number=len(previous) + 1)
    entry = make_signoff(result.root, reviewer, comment, key_path=key, signed_at=signed_at,
                         decision=decision, checklist=checks.signed_form(), comments=notes,
                         previous=previous)
    new = copy.deepcopy(nb)
    new["metadata"][META_KEY].setdefault("signoffs", []).append(entry)
    if meta.get("record_version", 2) >= 3:
        refresh_review_cells(new)
    write_text(p, dumps_notebook(new))
    html_copy = html_path_for(p)
    if html_copy.exists():  # keep the reading copy's reviews current
        from .html import render_html

        write_text(html_copy, render_html(new))
    return entry


def comments_of(path: str | Path) -> list[dict[str, Any]]:
    """Every comment of every sign-off of a record, with its reviewer and decision."""
    _, meta = read_record(path)
    out = []
    for s in meta.get("signoffs") or []:
        for c in (s.get("comments") or []) if isinstance(s, dict) else []:
            out.append({**c, "reviewer": s.get("reviewer"), "decision": s.get("decision")})
    return out


def apply_replies(case: Any, path: str | Path, *, who: str | None = None) -> int:
    """Put the replies of a comments file (columns ``id, reply``) on the case, one
    ``case.reply`` each; returns how many. Nothing changes if any reply is refused."""
    replies = read_replies(path)
    if not replies:
        raise RecordError(f"{Path(path).name!r} holds no reply; fill the 'reply' column")
    trial = case.copy()
    for cid, text in replies.items():
        trial.reply(cid, text, who=who)
    for cid, text in replies.items():
        case.reply(cid, text, who=who)
    return len(replies)


__all__ = ["review", "sign", "apply_replies", "comments_of", "refresh_review_cells"]

"""Review comments anchored to what they concern, read from a CSV or JSON file.

A comment's ``target`` names one thing in the sealed record::

    case                                   the case as a whole
    hypothesis:NAME                        a hypothesis (its prior, its place in the set)
    evidence:NAME                          an evidence item
    likelihood:ITEM|STATE|HYPOTHESIS       one likelihood cell, P(STATE | HYPOTHESIS) of ITEM
    scenario:NAME                          a prior scenario
    cell:N                                 cell N of the record (as numbered in its HTML copy
                                           and by verify)

A CSV file has the columns ``target, comment`` and optionally ``case`` (the
case title, needed only when the record holds several cases), ``id`` and
``reply``; a JSON file holds a list of objects with the same keys (a JSON
target may also be an object: ``{"kind": "likelihood", "evidence": ...,
"state": ..., "hypothesis": ...}``, for names that contain ``|``). A target
that does not exist in the record is refused by name, with the names that do.
"""

from __future__ import annotations

import csv
import io
import json
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

from .._checks import short_list
from ..errors import RecordError

TARGET_KINDS = ("case", "hypothesis", "evidence", "likelihood", "scenario", "cell")
MAX_COMMENT = 20_000


def target_label(t: Mapping[str, Any]) -> str:
    """A target in words (what the record prints beside the comment)."""
    kind = t.get("kind")
    if kind == "likelihood":
        return f"P('{t['state']}' | '{t['hypothesis']}') of '{t['evidence']}'"
    if kind == "cell":
        return f"cell {t['cell']}"
    if kind == "case":
        return f"the case '{t['case']}'"
    return f"{kind} '{t['name']}'"


def target_key(t: Mapping[str, Any]) -> str:
    """A stable string form of a target (what a comments file would hold)."""
    kind = t.get("kind")
    if kind == "likelihood":
        return f"likelihood:{t['evidence']}|{t['state']}|{t['hypothesis']}"
    if kind == "cell":
        return f"cell:{t['cell']}"
    if kind == "case":
        return "case"
    return f"{kind}:{t['name']}"


def _split(text: str) -> dict[str, Any]:
    text = text.strip()
    if text == "case":
        return {"kind": "case"}
    kind, sep, rest = text.partition(":")
    kind = kind.strip().lower()
    if not sep or kind not in TARGET_KINDS:
        raise ValueError(f"target {text!r:.80} must start with one of "
                         f"{', '.join(k + ':' for k in TARGET_KINDS[1:])} or be 'case'")
    rest = rest.strip()
    if kind == "likelihood":
        parts = [x.strip() for x in rest.split("|")]
        if len(parts) != 3:
            raise ValueError(f"target {text!r:.80}: a likelihood is "
                             "likelihood:ITEM|STATE|HYPOTHESIS")
        return {"kind": kind, "evidence": parts[0], "state": parts[1], "hypothesis": parts[2]}
    if kind == "cell":
        try:
            return {"kind": kind, "cell": int(rest)}
        except ValueError:
            raise ValueError(f"target {text!r:.80}: a cell is cell:N with N a whole number "
                             "(the cell's number in the HTML copy)") from None
    return {"kind": kind, "name": rest}


def resolve_target(raw: Any, case_title: str | None, cases: Mapping[str, Any],
                   n_cells: int, where: str) -> dict[str, Any]:
    """A checked target: the case it belongs to and the thing it names, or an error."""
    try:
        t = dict(raw) if isinstance(raw, Mapping) else _split(str(raw))
    except ValueError as exc:
        raise RecordError(f"{where}: {exc}") from None
    kind = t.get("kind")
    if kind not in TARGET_KINDS:
        raise RecordError(f"{where}: target kind {kind!r:.30} is not one of {TARGET_KINDS}")
    titles = list(cases)
    if case_title:
        if case_title not in cases:
            raise RecordError(f"{where}: no case titled {case_title!r:.80} in the record; the "
                              f"cases are {short_list(titles)}")
        title = case_title
    elif kind == "cell" or len(titles) == 1:
        title = titles[0]
    else:
        found = [ti for ti in titles if _exists(t, cases[ti])]
        if len(found) != 1:
            raise RecordError(f"{where}: the record holds {len(titles)} cases; add a 'case' "
                              f"column naming one of {short_list(titles)}")
        title = found[0]
    case = cases[title]
    t["case"] = title
    if kind == "cell":
        n = t.get("cell")
        if isinstance(n, bool) or not isinstance(n, int) or not 1 <= n <= n_cells:
            raise RecordError(f"{where}: cell {n!r:.20} does not exist; the record has cells 1 "
                              f"to {n_cells} (numbered as in its HTML copy)")
        return {"kind": kind, "case": title, "cell": n}
    if kind == "case":
        return {"kind": kind, "case": title}
    if kind == "likelihood":
        ev = case.evidence.get(t.get("evidence"))
        if ev is None:
            raise RecordError(f"{where}: no evidence item {t.get('evidence')!r:.80} in case "
                              f"{title!r}; the items are {short_list(case.evidence_names)}")
        if t.get("state") not in ev.states:
            raise RecordError(f"{where}: '{ev.name}' has no state {t.get('state')!r:.60}; its "
                              f"states are {list(ev.states)}")
        if t.get("hypothesis") not in ev.hypotheses:
            raise RecordError(f"{where}: no hypothesis {t.get('hypothesis')!r:.80}; the "
                              f"hypotheses are {short_list(ev.hypotheses)}")
        return {"kind": kind, "case": title, "evidence": ev.name, "state": t["state"],
                "hypothesis": t["hypothesis"]}
    pool = {"hypothesis": case.hypothesis_names, "evidence": case.evidence_names,
            "scenario": case.scenario_names}[kind]
    if t.get("name") not in pool:
        raise RecordError(f"{where}: no {kind} {t.get('name')!r:.80} in case {title!r}; the "
                          f"{kind} names are {short_list(pool)}")
    return {"kind": kind, "case": title, "name": t["name"]}


def _exists(t: Mapping[str, Any], case: Any) -> bool:
    kind = t.get("kind")
    if kind == "case":
        return True
    if kind == "likelihood":
        return t.get("evidence") in case.evidence
    pool = {"hypothesis": case.hypothesis_names, "evidence": case.evidence_names,
            "scenario": case.scenario_names}.get(kind, [])
    return t.get("name") in pool


def _rows(path: Path) -> list[dict[str, Any]]:
    try:
        text = path.read_text(encoding="utf-8-sig")
    except OSError as exc:
        raise RecordError(f"cannot read the comments file {str(path)!r}: {exc.strerror}") from None
    if path.suffix.lower() == ".json":
        try:
            data = json.loads(text)
        except json.JSONDecodeError as exc:
            raise RecordError(f"comments file {path.name!r} is not JSON ({exc.msg}, line "
                              f"{exc.lineno})") from None
        if not isinstance(data, list) or not all(isinstance(r, Mapping) for r in data):
            raise RecordError(f"comments file {path.name!r} must hold a list of objects with "
                              "'target' and 'comment'")
        return [dict(r) for r in data]
    rows = list(csv.DictReader(io.StringIO(text)))
    if not rows:
        raise RecordError(f"comments file {path.name!r} has no rows; it needs the columns "
                          "target, comment")
    missing = [c for c in ("target", "comment") if c not in rows[0]]
    if missing:
        raise RecordError(f"comments file {path.name!r} lacks the column(s) {missing}; it has "
                          f"{list(rows[0])}")
    return rows


def read_comments(path: str | Path, cases: Mapping[str, Any], n_cells: int, *,
                  number: int) -> list[dict[str, Any]]:
    """Comments from a file, each with a checked target and an id ``C<number>.<k>``
    (``number``: the sign-off's number in the record)."""
    p = Path(path)
    out = []
    for k, row in enumerate(_rows(p), start=1):
        where = f"{p.name}, comment {k}"
        text = str(row.get("comment") or "").strip()
        if not text:
            raise RecordError(f"{where}: the comment is empty; write what should change, or "
                              "drop the row")
        if len(text) > MAX_COMMENT:
            raise RecordError(f"{where}: the comment is over {MAX_COMMENT:,} characters")
        target = resolve_target(row.get("target", ""), (row.get("case") or None), cases,
                                n_cells, where)
        out.append({"id": f"C{number}.{k}", "target": target, "text": text})
    return out


def read_replies(path: str | Path) -> dict[str, str]:
    """Replies from a comments file the analyst filled in: comment id -> reply (rows
    without a reply are skipped)."""
    p = Path(path)
    rows = _rows(p)
    if "id" not in rows[0] or "reply" not in rows[0]:
        raise RecordError(f"{p.name!r} needs the columns id and reply to carry replies "
                          "(write it with `beliefledger review SIGNED --comments-out FILE`)")
    return {str(r["id"]).strip(): str(r["reply"]).strip() for r in rows
            if str(r.get("reply") or "").strip()}


def comments_csv(signoffs: Sequence[Any]) -> str:
    """Every comment of every sign-off as a CSV the analyst answers in (``reply``)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["id", "reviewer", "decision", "case", "target", "comment", "reply"])
    for s in signoffs:
        if not isinstance(s, Mapping):
            continue
        for c in s.get("comments") or []:
            w.writerow([c["id"], s.get("reviewer", ""), s.get("decision", ""),
                        c["target"].get("case", ""), target_key(c["target"]), c["text"], ""])
    return buf.getvalue()


__all__ = ["read_comments", "read_replies", "resolve_target", "target_label", "target_key",
           "comments_csv", "TARGET_KINDS"]

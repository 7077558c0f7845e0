"""Tamper mutations of an HTML copy of a sealed record, made on the page's text.

:class:`CleanPage` maps a page as beliefledger writes it (the head, the
banner, the top-level sections, the data block that carries the record, the
text nodes, digits, table rows and start tags); :func:`mutate` draws one
edit a forger or a careless hand could make, from a changed digit in a
visible number to a re-drawn page over an edited record. :func:`location`
is the test's own idea of where the first difference lies (by the page's
known layout, not by the code under test), so a test can check that
``verify`` names it.
"""

from __future__ import annotations

import json
import random
import re
from typing import Any

from . import records

KINDS = (
    "digit-visible", "text-char", "text-node-deleted", "text-node-replaced", "row-dropped",
    "row-duplicated", "rows-swapped", "attribute-changed", "attribute-added",
    "attribute-removed", "section-removed", "sections-swapped", "section-duplicated",
    "element-injected", "script-injected", "comment-injected", "whitespace-between-tags",
    "entity-for-char", "style-sheet", "title", "banner", "json-digit", "json-char",
    "json-whitespace", "json-field-added", "json-field-renamed", "json-redrawn-prior", "json-redrawn-source", "truncated",
    "block-duplicated", "block-removed", "block-type", "block-moved", "line-endings",
    "renderer-and-digit", "byte-order-mark", "appended",
)
"""Every kind of mutation :func:`mutate` draws."""
EDITS_RECORD = frozenset({"json-digit", "json-char", "json-field-added", "json-field-renamed",
                          "json-redrawn-prior", "json-redrawn-source"})
"""Kinds that change the embedded record itself: the page verify compares with is then
drawn from the edited record, so the first difference is not where the edit was made."""

_SECTION = re.compile(r'<section class="bl-cell[^"]*" id="([^"]*)">')
_TAG = re.compile(r"<[^>]*>")
_START_TAG = re.compile(r"<([a-zA-Z][a-zA-Z0-9:-]*)((?:\s[^>]*)?)>")
_ATTR_VALUE = re.compile(r'\s[a-zA-Z:-]+="([^"]+)"')
_ROW = re.compile(r"<tr[ >].*?</tr>", re.DOTALL)


class CleanPage:
    """The parts of an untouched page, found once."""

    def __init__(self, text: str, record: dict[str, Any]) -> None:
        self.text = text
        self.record = record
        (_, _, self.block_start, self.block_end), = records.script_elements(text)
        self.block_body = text.index(">", self.block_start) + 1
        self.block_close = text.index("</script>", self.block_body)
        self.body = text.index("<body>") + len("<body>")
        self.main_end = text.index("</main>")
        self.style = (text.index("<style>") + len("<style>"), text.index("</style>"))
        self.banner = (text.index('<header class="bl-banner">'), text.index("</header>") + 9)
        starts = [(m.start(), m.group(1)) for m in _SECTION.finditer(text, 0, self.main_end)]
        self.sections = [(s, (starts[k + 1][0] if k + 1 < len(starts) else self.main_end), i)
                         for k, (s, i) in enumerate(starts)]
        visible = text[:self.main_end]
        self.text_nodes = []
        pos = self.body
        for m in _TAG.finditer(visible, self.body):
            if m.start() > pos and visible[pos:m.start()].strip():
                self.text_nodes.append((pos, m.start()))
            pos = m.end()
        self.digits = [i for a, b in self.text_nodes for i in range(a, b) if text[i].isdigit()]
        self.rows = [(m.start(), m.end()) for m in _ROW.finditer(visible, self.body)]
        self.start_tags = [(m.start(), m.end()) for m in _START_TAG.finditer(visible, self.body)
                           if m.group(1) not in ("main",)]
        self.tag_gaps = [m.end() for m in _TAG.finditer(visible, self.body)]
        self.json_digits = [i for i in range(self.block_body, self.block_close)
                            if text[i].isdigit()]
        self.json_commas = []  # after a structural "," or ":" (not inside a string)
        in_string = escaped = False
        for i in range(self.block_body, self.block_close):
            ch = text[i]
            if in_string:
                in_string = escaped or ch != '"'
                escaped = not escaped and ch == "\\"
            elif ch == '"':
                in_string = True
            elif ch in ",:":
                self.json_commas.append(i + 1)


def location(clean: CleanPage, mutated: str) -> str | None:
    """Where the first difference between the clean page and ``mutated`` lies, by the
    page's layout: a section's id (quoted), ``bl-banner``, ``head``, ``embedded record
    block``; None where the layout gives no single answer (after the content)."""
    a, b = clean.text, mutated
    i = next((k for k, (x, y) in enumerate(zip(a, b, strict=False)) if x != y), min(len(a), len(b)))
    if clean.block_start <= i < clean.block_end:
        return "embedded record block"
    for s, e, ident in clean.sections:
        if s <= i < e:
            return f"'{ident}'"
    if clean.banner[0] <= i < clean.banner[1]:
        return "bl-banner"
    if a.index("<head>") <= i < clean.body - len("<body>"):
        return "head"
    return None


def _redrawn(clean: CleanPage, edit) -> str:
    from beliefledger.record.html import render_html

    rec = json.loads(json.dumps(clean.record))
    edit(rec)
    return render_html(rec)


def _change_char(ch: str, rnd: random.Random) -> str:
    return rnd.choice([c for c in "aZ0 .,;-x" if c != ch])


def mutate(clean: CleanPage, rnd: random.Random, kind: str | None = None) -> tuple[str, str]:
    """One random edit of the clean page: (kind, mutated text). The text may equal the
    clean one for an unlucky draw (two equal rows swapped); callers draw again then."""
    t = clean.text
    kind = kind or rnd.choice(KINDS)
    if kind == "digit-visible":
        i = rnd.choice(clean.digits)
        return kind, t[:i] + rnd.choice([d for d in "0123456789" if d != t[i]]) + t[i + 1:]
    if kind == "text-char":
        a, b = rnd.choice(clean.text_nodes)
        i = rnd.randrange(a, b)
        how = rnd.choice(["replace", "insert", "delete"])
        if how == "insert":
            return kind, t[:i] + _change_char("", rnd) + t[i:]
        if how == "delete":
            return kind, t[:i] + t[i + 1:]
        return kind, t[:i] + _change_char(t[i], rnd) + t[i + 1:]
    if kind in ("text-node-deleted", "text-node-replaced"):
        a, b = rnd.choice(clean.text_nodes)
        other = "" if kind == "text-node-deleted" else t[slice(*rnd.choice(clean.text_nodes))]
        return kind, t[:a] + other + t[b:]
    if kind in ("row-dropped", "row-duplicated"):
        a, b = rnd.choice(clean.rows)
        return kind, t[:a] + (t[a:b] * 2 if kind == "row-duplicated" else "") + t[b:]
    if kind == "rows-swapped":
        (a, b), (c, d) = sorted(rnd.sample(clean.rows, 2))
        return kind, t[:a] + t[c:d] + t[b:c] + t[a:b] + t[d:]
    if kind in ("attribute-changed", "attribute-removed"):
        a, b = rnd.choice([s for s in clean.start_tags if _ATTR_VALUE.search(t, *s)])
        m = rnd.choice(list(_ATTR_VALUE.finditer(t, a, b)))
        if kind == "attribute-removed":
            return kind, t[:m.start()] + t[m.end():]
        i = rnd.randrange(m.start(1), m.end(1))
        return kind, t[:i] + _change_char(t[i], rnd) + t[i + 1:]
    if kind == "attribute-added":
        a, b = rnd.choice(clean.start_tags)
        extra = rnd.choice([" hidden", ' style="display:none"', ' class="reviewed"', ' title="ok"'])
        return kind, t[:b - 1] + extra + t[b - 1:]
    if kind in ("section-removed", "section-duplicated"):
        a, b, _ = rnd.choice(clean.sections)
        return kind, t[:a] + (t[a:b] * 2 if kind == "section-duplicated" else "") + t[b:]
    if kind == "sections-swapped":
        (a, b, _), (c, d, _) = sorted(rnd.sample(clean.sections, 2))
        return kind, t[:a] + t[c:d] + t[b:c] + t[a:b] + t[d:]
    if kind in ("element-injected", "script-injected", "comment-injected",
                "whitespace-between-tags"):
        i = rnd.choice(clean.tag_gaps)
        snippet = {"element-injected": rnd.choice(["<p>Reviewed and accepted.</p>",
                                                   "<li>Signed off: J. Doe</li>",
                                                   "<tr><td>extra</td></tr>"]),
                   "script-injected": rnd.choice(["<script>alert(1)</script>",
                                                  '<script src="https://example.org/x.js">'
                                                  "</script>"]),
                   "comment-injected": "<!-- checked -->",
                   "whitespace-between-tags": rnd.choice([" ", "\n", "\t"])}[kind]
        return kind, t[:i] + snippet + t[i:]
    if kind == "entity-for-char":  # draws the same glyph, different bytes
        a, b = rnd.choice(clean.text_nodes)
        i = rnd.choice([k for k in range(a, b) if t[k] not in "&;#"] or [a])
        return kind, t[:i] + f"&#{ord(t[i])};" + t[i + 1:]
    if kind == "style-sheet":
        i = rnd.randrange(*clean.style)
        return kind, t[:i] + _change_char(t[i], rnd) + t[i + 1:]
    if kind == "title":
        i = t.index("<title>") + len("<title>")
        return kind, t[:i] + "Approved: " + t[i:]
    if kind == "banner":
        spots = [k for k in range(*clean.banner) if t[k].isalnum()]
        i = rnd.choice(spots)
        return kind, t[:i] + _change_char(t[i], rnd) + t[i + 1:]
    if kind == "json-digit":
        i = rnd.choice(clean.json_digits)
        return kind, t[:i] + rnd.choice([d for d in "0123456789" if d != t[i]]) + t[i + 1:]
    if kind == "json-char":
        i = rnd.randrange(clean.block_body, clean.block_close)
        return kind, t[:i] + _change_char(t[i], rnd) + t[i + 1:]
    if kind == "json-whitespace":
        i = rnd.choice(clean.json_commas)
        return kind, t[:i] + rnd.choice([" ", "\n"]) + t[i:]
    if kind in ("json-field-added", "json-field-renamed"):  # the page itself left alone
        from beliefledger.record.html import record_json

        rec = json.loads(json.dumps(clean.record))
        cell = rnd.choice(rec["cells"])
        target = rnd.choice([cell, *cell.get("outputs", [])])
        if kind == "json-field-added":
            target[rnd.choice(["reviewed", "note", "trusted"])] = rnd.choice([True, "ok", 1])
        else:
            key = rnd.choice(sorted(target))
            target[key + "_"] = target.pop(key)
        return kind, (t[:clean.block_body] + record_json(rec) + t[clean.block_close:])
    if kind == "json-redrawn-prior":  # the record edited, the page drawn again from it
        def edit(rec):
            from beliefledger.record.canonical import META_KEY

            envelope = rec["metadata"][META_KEY]["cases"][0]["envelope"]
            h = rnd.choice(envelope["case"]["hypotheses"])
            h["prior"] = round(h["prior"] + rnd.choice([-0.05, 0.05]), 4)
        return kind, _redrawn(clean, edit)
    if kind == "json-redrawn-source":
        def edit(rec):
            from beliefledger.record.canonical import cell_role

            cells = [c for c in rec["cells"] if c["cell_type"] == "code" and c.get("source")
                     and cell_role(c) is None]
            c = rnd.choice(cells)
            src = c["source"] if isinstance(c["source"], str) else "".join(c["source"])
            c["source"] = src + "\n# reviewed"
        return kind, _redrawn(clean, edit)
    if kind == "truncated":
        return kind, t[:rnd.randrange(len(t))]
    if kind == "block-duplicated":
        block = t[clean.block_start:clean.block_end]
        i = rnd.choice([t.index("</head>"), clean.body, clean.block_start, clean.block_end])
        return kind, t[:i] + block + t[i:]
    if kind == "block-removed":
        return kind, t[:clean.block_start] + t[clean.block_end:]
    if kind == "block-type":
        new = rnd.choice(["text/javascript", "module", "application/ld+json", "text/plain"])
        return kind, t.replace('type="application/json"', f'type="{new}"', 1)
    if kind == "block-moved":
        block = t[clean.block_start:clean.block_end]
        rest = t[:clean.block_start] + t[clean.block_end:]
        i = rest.index("</head>")
        return kind, rest[:i] + block + rest[i:]
    if kind == "line-endings":
        if rnd.random() < 0.5:
            return kind, t.replace("\n", "\r\n")
        i = rnd.choice([k for k, ch in enumerate(t) if ch == "\n"])
        return kind, t[:i] + "\r" + t[i:]
    if kind == "renderer-and-digit":
        _, edited = mutate(clean, rnd, "digit-visible")
        return kind, edited.replace('data-renderer="beliefledger ', 'data-renderer="beliefledger 0.0.1-', 1)
    if kind == "byte-order-mark":
        return kind, "\ufeff" + t
    if kind == "appended":
        return kind, t + rnd.choice(["<p>Approved.</p>\n", "\n", "<!-- end -->"])
    raise AssertionError(kind)


__all__ = ["CleanPage", "KINDS", "EDITS_RECORD", "location", "mutate"]

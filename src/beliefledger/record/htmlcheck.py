"""Verify an HTML copy of a sealed record on its own: the record it carries, and the page.

The copy carries the sealed record as an inert JSON data block (see
:mod:`.html`). :func:`verify_html` reads the file as text (nothing in it is
executed, no browser is started), takes the record out of the block, runs
every check ``verify`` runs on the sealed notebook
(:func:`.verifier.verify_loaded`), then draws the page again from that record
with :func:`.html.render_html` and compares the two byte for byte. Any
difference (a changed number, a removed row, an edited comment, a moved
section, a script added, the record's JSON re-spaced) is a problem:

``page-differs``
    The page is not the page its embedded record draws. ``where`` names the
    section of the first difference (``page section 'cell-12'``, ``page
    section 'bl-assumption-register-content'``, ``page header.bl-banner``,
    ``embedded record block``); the detail quotes the record's text and the
    page's text there.
``page-other-version``
    The page says another version drew it (the data block's
    ``data-renderer``: beliefledger, mistune and Python versions) and it
    differs from what this version draws. An edit cannot be told from a
    change of layout between versions, so this is a problem, not a warning:
    the version label is part of the editable page, and a warning would let
    anyone pass an edited page by changing the label. Check the page with
    the version it names, or verify the sealed notebook itself. When the
    label differs but the page is exactly what this version draws, a
    warning with the same code says so.

``embedded-shape``
    The embedded record holds a field a notebook, cell or output does not
    have in nbformat 4 (or lacks one it requires). The notebook's digests
    leave such fields out on purpose, since Jupyter adds its own when it
    re-saves a notebook; nothing re-saves the record inside a page, so
    there such a field can only be an edit.

All three count against ``intact``. What this proves: the visible page is
the page of the record it carries, and that record is intact and
reproduces. It does not prove who made it: anyone who can edit the page can
also edit the embedded record and recompute every digest, so the
fingerprint quoted in the hand-over (``expect``) and the reviewers'
signatures (``public_keys``) are what tie the copy to the sealed original.
"""

from __future__ import annotations

import dataclasses
import html as _html
import json
import re
from html.parser import HTMLParser
from pathlib import Path
from typing import Any

from ..errors import RecordError
from .html import RECORD_BLOCK_ID, RECORD_BLOCK_TYPE, render_html, renderer_label
from .nbio import MAX_NOTEBOOK_BYTES, check_notebook, record_meta
from .verifier import Problem, VerifyResult, verify_loaded

MAX_HTML_BYTES = 2 * MAX_NOTEBOOK_BYTES
"""Largest HTML copy read (bytes): the page and the record it carries."""
PAGE_CODES = frozenset({"page-differs", "page-other-version"})
"""Problems of the page itself (``embedded-shape`` is one of the record it carries)."""
_CONTEXT = 24  # characters quoted on each side of a difference
_QUOTED = 72   # characters of the changed text quoted at most
_VOID = frozenset({"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta",
                   "param", "source", "track", "wbr"})
_BLOCK_END = re.compile(r"</script", re.IGNORECASE)


@dataclasses.dataclass(frozen=True)
class EmbeddedRecord:
    """The record an HTML copy carries: the notebook JSON, its record metadata, and the
    version label the page claims (None when the block names none)."""

    nb: dict[str, Any]
    meta: dict[str, Any]
    renderer: str | None


def read_html(path: str | Path) -> str:
    """The HTML copy's text, exactly as stored (no newline translation)."""
    p = Path(path)
    label = f"HTML copy {p.name!r}"
    try:
        with p.open("rb") as fh:  # read at most one byte over the limit
            raw = fh.read(MAX_HTML_BYTES + 1)
    except FileNotFoundError:
        raise RecordError(f"no HTML copy at {str(p)!r}; check the path") from None
    except IsADirectoryError:
        raise RecordError(f"{label} is a folder; give the path of an .html file") from None
    except OSError as exc:
        raise RecordError(f"cannot read {label}: {exc.strerror}") from None
    if len(raw) > MAX_HTML_BYTES:
        raise RecordError(f"{label} is over the {MAX_HTML_BYTES:,}-byte limit of an HTML copy")
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise RecordError(f"{label} is not UTF-8 text (bad byte at offset {exc.start}); "
                          "beliefledger writes its HTML copies as UTF-8, so this file was "
                          "re-encoded or is not one") from None


_SCRIPT_TAG = re.compile(r"<script(?=[\s/>])[^>]*>", re.IGNORECASE)
_STYLE_TEXT = re.compile(r"<style(?=[\s/>])[^>]*>.*?(?:</style|\Z)", re.IGNORECASE | re.DOTALL)
_ATTR = re.compile(r"""([^\s"'=<>/]+)(?:\s*=\s*(?:"([^"]*)"|'([^']*)'|([^\s"'=<>`]+)))?""")


def _script_tags(text: str) -> list[tuple[int, int, dict[str, str]]]:
    """The ``<script>`` start tags of a page: (start, end, attributes). A ``<script`` in a
    style sheet's text is not a tag, as for a browser. (A page is accepted only when it is
    byte for byte the page its record draws, so this scan needs to be exact only on pages
    beliefledger writes; on an edited one the comparison catches what it misreads.)"""
    styles = [(m.start(), m.end()) for m in _STYLE_TEXT.finditer(text)]
    found = []
    for m in _SCRIPT_TAG.finditer(text):
        if any(a < m.start() < b for a, b in styles):
            continue
        attrs = {}
        for a in _ATTR.finditer(m.group(0), len("<script")):
            value = next((v for v in a.group(2, 3, 4) if v is not None), "")
            attrs.setdefault(a.group(1).lower(), _html.unescape(value))
        found.append((m.start(), m.end(), attrs))
    return found


def extract_record(text: str, label: str) -> EmbeddedRecord:
    """Take the sealed record out of an HTML copy's data block.

    Raises
    ------
    RecordError
        No block, more than one, a block that is not closed, not JSON, or JSON
        that is not a sealed record; the message names ``label``.
    """
    blocks = [t for t in _script_tags(text) if t[2].get("id") == RECORD_BLOCK_ID]
    if not blocks:
        raise RecordError(
            f"{label} carries no embedded record (no <script type={RECORD_BLOCK_TYPE!r} "
            f"id={RECORD_BLOCK_ID!r}> element): it was written before HTML copies carried "
            "their record, or the block was removed; verify the sealed notebook instead")
    if len(blocks) > 1:
        raise RecordError(f"{label} carries {len(blocks)} embedded record blocks; a copy "
                          "beliefledger writes has exactly one, so the page was edited: verify "
                          "the sealed notebook instead")
    _, start, attrs = blocks[0]
    end = _BLOCK_END.search(text, start)
    if end is None:
        raise RecordError(f"{label}: the embedded record block is not closed (the file is cut "
                          "short?); verify the sealed notebook instead")

    def refuse(name: str) -> Any:
        raise ValueError(f"holds {name}, which JSON does not allow")

    try:
        nb = json.loads(text[start:end.start()], parse_constant=refuse)
    except RecursionError:
        raise RecordError(f"{label}: the embedded record is nested too deeply") from None
    except ValueError as exc:  # JSONDecodeError is one
        raise RecordError(f"{label}: the embedded record is not JSON ({exc}); the block was "
                          "edited or cut short") from None
    if not isinstance(nb, dict):
        raise RecordError(f"{label}: the embedded record is a JSON {type(nb).__name__}, not a "
                          "notebook object")
    check_notebook(nb, label)
    return EmbeddedRecord(nb=nb, meta=record_meta(nb, label), renderer=attrs.get("data-renderer"))


class _Outline(HTMLParser):
    """The elements open at the end of the text fed: (tag, id, class) from the outside in."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=False)
        self.stack: list[tuple[str, str | None, str | None]] = []
        self.last_closed: str | None = None  # id of the last element with one that closed

    def handle_starttag(self, tag, attrs):
        if tag not in _VOID:
            a = dict(attrs)
            self.stack.append((tag, a.get("id"), a.get("class")))

    def handle_startendtag(self, tag, attrs):
        return

    def handle_endtag(self, tag):
        for k in range(len(self.stack) - 1, -1, -1):
            if self.stack[k][0] == tag:
                if self.stack[k][1]:
                    self.last_closed = self.stack[k][1]
                del self.stack[k:]
                return


def _where(page: str, at: int) -> str:
    """The part of a page (as beliefledger draws it) that holds offset ``at``: the outermost
    element with an id (a record section), else the outermost elements by tag and class."""
    block = page.rfind(f'<script type="{RECORD_BLOCK_TYPE}" id="{RECORD_BLOCK_ID}"')
    if 0 <= block <= at < page.find("</script>", block) + len("</script>"):
        return "embedded record block"
    stop = at
    lt, gt = page.rfind("<", 0, at + 1), page.rfind(">", 0, at)
    if lt > gt and page[lt + 1:lt + 2] != "/" and page.find(">", at) != -1:
        stop = page.find(">", at) + 1  # at or inside a start tag: that element's difference
    outline = _Outline()
    outline.feed(page[:stop])
    elems = [e for e in outline.stack if e[0] not in ("html", "body", "main")]
    named = next((e for e in elems if e[1]), None)
    if named is not None:
        if named[1] == RECORD_BLOCK_ID:
            return "embedded record block"
        return f"page {named[0]} {named[1]!r}"
    if elems:
        return "page " + " > ".join(t + (f".{c.split()[0]}" if c and c.split() else "")
                                    for t, _, c in elems[:3])
    if at >= len(page):
        return "end of the page"
    return f"page, after {outline.last_closed!r}" if outline.last_closed else "page"


def _first_difference(a: str, b: str) -> int:
    """The first offset where ``a`` and ``b`` differ (the shorter length when one is a
    prefix of the other); halves the span, so long pages compare at C speed."""
    lo, hi = 0, min(len(a), len(b))
    while lo < hi:
        mid = (lo + hi + 1) // 2
        if a[lo:mid] == b[lo:mid]:
            lo = mid
        else:
            hi = mid - 1
    return lo


def _common_suffix(a: str, b: str, floor: int) -> int:
    """How many trailing characters ``a`` and ``b`` share, leaving ``floor`` leading ones."""
    lo, hi = 0, min(len(a), len(b)) - floor
    while lo < hi:
        mid = (lo + hi + 1) // 2
        if a[len(a) - mid:] == b[len(b) - mid:]:
            lo = mid
        else:
            hi = mid - 1
    return lo


def _quote(text: str, start: int, stop: int) -> str:
    """``text[start:stop]`` with some context, as a Python literal (control and bidi
    characters escaped, so the report is safe on a terminal)."""
    changed = text[start:stop]
    if len(changed) > _QUOTED:
        changed = changed[:_QUOTED] + "..."
    before = text[max(0, start - _CONTEXT):start]
    after = text[stop:stop + _CONTEXT]
    lead = "..." if start > _CONTEXT else ""
    tail = "..." if stop + _CONTEXT < len(text) else ""
    return lead + repr(before + changed + after)[1:-1] + tail if changed or before or after \
        else "(nothing)"


# Fields of a notebook, its cells and outputs in the nbformat 4 schema (which allows no
# others): (required, optional). A seal writes only these.
_NOTEBOOK_FIELDS = ({"cells", "metadata", "nbformat", "nbformat_minor"}, set())
_CELL_FIELDS = {
    "code": ({"cell_type", "metadata", "source", "outputs", "execution_count"}, {"id"}),
    "markdown": ({"cell_type", "metadata", "source"}, {"id", "attachments"}),
    "raw": ({"cell_type", "metadata", "source"}, {"id", "attachments"}),
}
_OUTPUT_FIELDS = {
    "stream": ({"output_type", "name", "text"}, set()),
    "display_data": ({"output_type", "data", "metadata"}, set()),
    "execute_result": ({"output_type", "data", "metadata", "execution_count"}, set()),
    "error": ({"output_type", "ename", "evalue", "traceback"}, set()),
}


def _fields(obj: Any, rule: tuple[set[str], set[str]] | None, where: str) -> list[Problem]:
    if not isinstance(obj, dict) or rule is None:
        return []  # not an object, or of a kind verify itself reports on
    required, optional = rule
    extra, missing = sorted(set(obj) - required - optional), sorted(required - set(obj))
    if not extra and not missing:
        return []
    what = "; ".join(([f"holds {', '.join(map(repr, extra))}"] if extra else [])
                     + ([f"lacks {', '.join(map(repr, missing))}"] if missing else []))
    return [Problem("embedded-shape", where,
                    f"{what}, which a sealed record never does (nbformat 4 fields only): the "
                    "embedded record was edited")]


def shape_problems(nb: dict[str, Any]) -> list[Problem]:
    """Fields of the embedded notebook, its cells and outputs that nbformat 4 does not
    have (or that it requires and are missing). The digests of a record leave such fields
    out on purpose (Jupyter adds its own when it re-saves a notebook), but no program
    re-saves the record inside an HTML copy: there, a field the digests do not cover can
    only be an edit."""
    problems = _fields(nb, _NOTEBOOK_FIELDS, "embedded record")
    for i, cell in enumerate(nb.get("cells") or []):
        kind = cell.get("cell_type") if isinstance(cell, dict) else None
        problems += _fields(cell, _CELL_FIELDS.get(kind), f"embedded record, cell {i + 1}")
        outputs = cell.get("outputs") if isinstance(cell, dict) else None
        for k, out in enumerate(outputs if isinstance(outputs, list) else []):
            rule = _OUTPUT_FIELDS.get(out.get("output_type")) if isinstance(out, dict) else None
            problems += _fields(out, rule, f"embedded record, cell {i + 1}, output {k + 1}")
    return problems


def compare_page(text: str, embedded: EmbeddedRecord, label: str
                 ) -> tuple[list[Problem], list[Problem]]:
    """(problems, warnings) of the page against the page its embedded record draws."""
    mine = renderer_label()
    claimed = embedded.renderer
    try:
        expected = render_html(embedded.nb, renderer=mine if claimed is None else claimed)
    except (KeyError, TypeError, AttributeError, ValueError, IndexError) as exc:
        raise RecordError(f"{label}: the embedded record cannot be drawn as a page "
                          f"({type(exc).__name__}: {exc}); it is malformed") from None
    same_version = claimed == mine
    if text == expected:
        if same_version:
            return [], []
        return [], [Problem("page-other-version", "page",
                            f"drawn by {claimed}; checked with {mine}, which draws exactly "
                            "this page from the embedded record")]
    at = _first_difference(expected, text)
    tail = _common_suffix(expected, text, at)
    where = _where(expected, at)
    if text.replace("\r\n", "\n") == expected:
        what = ("the only change is the line endings (LF became CRLF, as a text-mode "
                "transfer or a checkout that converts line endings does); restore the file as "
                "written or verify the sealed notebook")
    else:
        what = (f"the record draws '{_quote(expected, at, len(expected) - tail)}', "
                f"the page has '{_quote(text, at, len(text) - tail)}'")
    if same_version:
        return [Problem("page-differs", where,
                        "the page is not the page its embedded record draws: " + what)], []
    return [Problem("page-other-version", where,
                    f"the page says {claimed or 'nothing about which version'} drew it and "
                    f"this is {mine}; it differs from what this version draws from the "
                    "embedded record, so it cannot be compared byte for byte and an edit cannot "
                    "be ruled out (check it with the version it names, or verify the sealed "
                    "notebook): " + what)], []


def verify_html(path: str | Path, *, expect: str | None = None,
                public_keys: list[str | Path] | None = None,
                artefacts: str | Path | None = None) -> VerifyResult:
    """Verify an HTML copy of a sealed record on its own (see the module docstring).

    Parameters
    ----------
    path : path
        The HTML copy (``NAME.sealed.html``).
    expect, public_keys, artefacts
        As for :func:`beliefledger.record.verify`: the fingerprint quoted in the
        hand-over, reviewers' public keys one valid sign-off must match, and a
        folder of the evidence files.

    Returns
    -------
    VerifyResult
        The checks of the embedded record, with the page's problems first.

    Raises
    ------
    RecordError
        The file is unusable: unreadable, no embedded record or more than one,
        a block that is not JSON or not a sealed record.
    """
    label = f"HTML copy {Path(path).name!r}"
    text = read_html(path)
    embedded = extract_record(text, label)
    try:
        import mistune  # noqa: F401  (drawing the page's markdown needs it)
    except ImportError:
        raise RecordError(f"checking the page of {label} draws it again, which needs mistune; "
                          "install it with pip install 'beliefledger[notebook]'") from None
    result = verify_loaded(embedded.nb, embedded.meta, path=str(path), expect=expect,
                           public_keys=public_keys, artefacts=artefacts)
    problems, warnings = compare_page(text, embedded, label)
    problems += shape_problems(embedded.nb)
    return dataclasses.replace(result, problems=problems + result.problems,
                               warnings=warnings + result.warnings)


__all__ = ["verify_html", "read_html", "extract_record", "compare_page", "shape_problems",
           "EmbeddedRecord", "PAGE_CODES", "MAX_HTML_BYTES"]

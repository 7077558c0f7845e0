"""A self-contained HTML copy of a sealed record, carrying the record itself.

No external script, stylesheet, font or image: the style sheet is inlined,
charts are inline SVG (or data-URI images), widgets appear as the static
HTML or text of their final state, and no JavaScript is emitted at all, so
the page reads the same with scripts off and without a network. Output HTML
from the analyst's cells is sanitised: scripts, frames, embedded objects,
event handlers and references to anything outside the file are removed
(plain hyperlinks stay, as links).

The sealed record travels inside the page, so ``beliefledger verify
page.html`` can check it (:mod:`.htmlcheck`): one element at the end of the
body, ``<script type="application/json" id="beliefledger-record">``, holds
the record's JSON (keys sorted, no spaces, ASCII only, with ``<``, ``>``,
``&``, U+2028 and U+2029 written as ``\u003c`` and so on). Why a JSON data
block rather than a hidden ``<template>`` or ``<pre>``: the HTML standard
makes a script element whose type is not a JavaScript type a *data block*
that no browser runs, and its content is raw text that is never rendered,
printed, searched, copied with the page or read aloud; nothing but
``</script`` ends it, and the escaping leaves no ``<`` in it, so no text of
the record can close it or open markup. A ``<pre hidden>`` is shown by
readers that ignore the attribute (text browsers, reader modes, e-mail
clients, pages printed without styles) and its text joins the page's text;
a ``<template>``'s content is parsed as HTML, so the JSON would have to be
entity-escaped and would be re-parsed (and repaired) by every browser. The
cost of the data block: a tool that strips every script element (some mail
gateways) also strips the record, and verify then says the copy carries none.
The block's ``data-renderer`` attribute names the versions that drew the page
(beliefledger, mistune, Python), so verify can tell a page drawn by another
version from an edited one.
"""

from __future__ import annotations

import base64
import html as _html
import json
import platform
import re
from html.parser import HTMLParser
from pathlib import Path
from typing import Any
from xml.etree import ElementTree as ET

from .._version import __version__
from ..display import esc
from .canonical import META_KEY, join_text

_TEMPLATES = Path(__file__).resolve().parent / "templates"
_ANSI = re.compile(r"\x1b\[[0-9;?]*[A-Za-z]")
_DROP_ELEMENTS = {"script", "iframe", "frame", "frameset", "object", "embed", "applet", "link",
                  "meta", "base", "noscript", "template", "portal", "foreignobject"}
_VOID = {"area", "br", "col", "hr", "img", "input", "source", "track", "wbr", "param"}
_URL_ATTRS = {"src", "href", "xlink:href", "action", "formaction", "srcset", "poster",
              "background", "data", "cite", "longdesc", "ping", "lowsrc", "dynsrc", "manifest",
              "codebase", "icon", "usemap", "profile"}
_CSS_EXTERNAL = re.compile(r"@import|url\s*\(\s*['\"]?\s*(?!data:|#)", re.IGNORECASE)
SVG_NS = "http://www.w3.org/2000/svg"
XLINK_NS = "http://www.w3.org/1999/xlink"


def _local_url(value: str) -> bool:
    v = value.strip().lower()
    return v.startswith("#") or (v.startswith("data:") and not v.startswith("data:text/html"))


class _Sanitizer(HTMLParser):
    def __init__(self) -> None:
        super().__init__(convert_charrefs=False)
        self.out: list[str] = []
        self.skip = 0  # depth inside a dropped element
        self.in_style = False

    def handle_starttag(self, tag, attrs):
        self._start(tag, attrs, closed=False)

    def _start(self, tag, attrs, *, closed):
        void = closed or tag in _VOID or tag in ("link", "meta", "base", "embed")
        if self.skip:
            if not void:
                self.skip += 1
            return
        if tag in _DROP_ELEMENTS:
            if not void:
                self.skip = 1
            return
        kept = []
        for name, value in attrs:
            value = value or ""
            if name.startswith("on") or name in ("srcdoc", "formaction", "srcset"):
                continue
            if name in _URL_ATTRS:
                if tag == "a" and name == "href" and re.match(r"^(https?:|mailto:|#)", value.strip(),
                                                              re.IGNORECASE):
                    kept.append((name, value))
                elif _local_url(value):
                    kept.append((name, value))
                continue
            if name == "style" and _CSS_EXTERNAL.search(value):
                continue
            kept.append((name, value))
        if tag == "a":
            kept.append(("rel", "noreferrer"))
        if tag == "img" and not any(n == "src" for n, _ in kept):
            alt = dict(attrs).get("alt") or "image"
            self.out.append(f'<span class="bl-missing">[{esc(alt)}: external image not kept in '
                            "the record]</span>")
            return
        text = "".join(f' {n}="{_html.escape(v, quote=True)}"' for n, v in kept)
        self.out.append(f"<{tag}{text}>")
        if tag == "style":
            self.in_style = True

    def handle_startendtag(self, tag, attrs):
        before = len(self.out)
        self._start(tag, attrs, closed=True)
        if len(self.out) > before and tag not in _VOID and self.out[-1].startswith(f"<{tag}"):
            self.out.append(f"</{tag}>")

    def handle_endtag(self, tag):
        if self.skip:
            if tag not in _VOID and tag not in ("link", "meta", "base", "embed"):
                self.skip -= 1
            return
        if tag in _DROP_ELEMENTS or tag in _VOID:
            return
        self.in_style = False
        self.out.append(f"</{tag}>")

    def handle_data(self, data):
        if self.skip:
            return
        if self.in_style:
            data = _CSS_EXTERNAL.sub("/* external reference removed */ x(", data)
            self.out.append(data)
            return
        self.out.append(_html.escape(data, quote=False))

    def handle_entityref(self, name):
        if not self.skip:
            self.out.append(f"&{name};")

    def handle_charref(self, name):
        if not self.skip:
            self.out.append(f"&#{name};")

    def handle_comment(self, data):
        return

    def handle_decl(self, decl):
        return

    def unknown_decl(self, data):
        return


def clean_html(fragment: str) -> str:
    """Sanitise an HTML fragment for the offline record (see the module docstring)."""
    s = _Sanitizer()
    s.feed(fragment)
    s.close()
    return "".join(s.out)


def inline_svg(svg: str, alt: str = "chart") -> str:
    """An SVG image inline, with scripts, event handlers and external links removed;
    one that cannot be parsed is embedded as a data-URI image instead."""
    ET.register_namespace("", SVG_NS)
    ET.register_namespace("xlink", XLINK_NS)
    try:
        root = ET.fromstring(re.sub(r"^\s*<\?xml[^>]*>", "", svg))
    except ET.ParseError:
        b64 = base64.b64encode(svg.encode("utf-8")).decode("ascii")
        return f'<img alt="{esc(alt)}" src="data:image/svg+xml;base64,{b64}">'
    parents = {c: p for p in root.iter() for c in p}
    for el in list(root.iter()):
        local = el.tag.rsplit("}", 1)[-1].lower()
        if local in ("script", "foreignobject", "iframe"):
            parents[el].remove(el)
            continue
        for name in list(el.attrib):
            lname = name.rsplit("}", 1)[-1].lower()
            value = el.attrib[name]
            if lname.startswith("on"):
                del el.attrib[name]
            elif lname in ("href", "src") and not _local_url(value):
                del el.attrib[name]
            elif lname == "style" and _CSS_EXTERNAL.search(value):
                del el.attrib[name]
        if local == "style" and el.text and _CSS_EXTERNAL.search(el.text):
            el.text = _CSS_EXTERNAL.sub("/* external reference removed */ x(", el.text)
    root.set("role", "img")
    root.set("aria-label", alt)
    return ET.tostring(root, encoding="unicode")


def _plain(text: str) -> str:
    return esc(_ANSI.sub("", text))


def render_output(out: dict[str, Any]) -> str:
    kind = out.get("output_type")
    if kind == "stream":
        cls = "bl-stderr" if out.get("name") == "stderr" else "bl-stdout"
        return f'<pre class="{cls}">{_plain(join_text(out.get("text", "")))}</pre>'
    if kind == "error":
        tb = "\n".join(out.get("traceback", [])) or f"{out.get('ename')}: {out.get('evalue')}"
        return f'<pre class="bl-error">{_plain(tb)}</pre>'
    data = {k: join_text(v) for k, v in (out.get("data") or {}).items()}
    alt = str(data.get("text/plain", "output"))[:200]
    if "image/svg+xml" in data:
        return f'<div class="bl-figure">{inline_svg(data["image/svg+xml"], alt)}</div>'
    if "text/html" in data:
        return f'<div class="bl-html">{clean_html(data["text/html"])}</div>'
    for mime in ("image/png", "image/jpeg", "image/gif"):
        if mime in data:
            b64 = re.sub(r"\s", "", data[mime])
            return f'<div class="bl-figure"><img alt="{esc(alt)}" src="data:{mime};base64,{b64}"></div>'
    if "text/markdown" in data:
        return f'<div class="bl-md">{markdown_html(data["text/markdown"])}</div>'
    if "text/plain" in data:
        return f'<pre class="bl-text">{_plain(data["text/plain"])}</pre>'
    kinds = ", ".join(sorted(data)) or "nothing"
    return f'<p class="bl-missing">[output of type {esc(kinds)} not shown in the static copy]</p>'


_HEADING = re.compile(r"<h([1-6])>(.*?)</h\1>", re.DOTALL)
_TAGS = re.compile(r"<[^>]+>")


def _heading_ids(html_text: str) -> str:
    """Give each heading the anchor JupyterLab gives it (its text, spaces as hyphens), so
    a link such as ``[Ledger](#Ledger)`` works in the copy as in the notebook."""
    def add(m: re.Match) -> str:
        text = _html.unescape(_TAGS.sub("", m.group(2))).strip().replace(" ", "-")
        return f'<h{m.group(1)} id="{_html.escape(text, quote=True)}">{m.group(2)}</h{m.group(1)}>'
    return _HEADING.sub(add, html_text)


def markdown_html(text: str) -> str:
    """Markdown to HTML with raw HTML escaped and then sanitised (no external images);
    headings carry Jupyter's anchors."""
    import mistune

    md = mistune.create_markdown(escape=True, plugins=["table", "strikethrough"])
    return _heading_ids(clean_html(md(text)))


def _css() -> str:
    return (_TEMPLATES / "record.css").read_text(encoding="utf-8")


def _signoffs_html(signoffs: list[Any]) -> str:
    from .reviews import DECISION_WORDS

    if not signoffs:
        return "<p>No reviewer sign-off yet.</p>"
    items = []
    for s in signoffs:
        if not isinstance(s, dict):
            continue
        kind = (f"Ed25519-signed, key {s.get('key_id')}" if "signature" in s else "unsigned")
        decision = DECISION_WORDS.get(s.get("decision"), "no decision recorded")
        n = len(s.get("comments") or [])
        items.append(f"<li>{esc(s.get('reviewer'))}, {esc(s.get('signed_at'))}: "
                     f"<b>{esc(decision)}</b>, {n} comment(s) ({esc(kind)}; covers fingerprint "
                     f"{esc(s.get('fingerprint'))})</li>")
    return ('<p>Sign-offs as written in the record (see <a href="#Reviews">Reviews</a>; '
            "checked only by <code>beliefledger verify</code>):</p><ul>" + "".join(items)
            + "</ul>")


def _cell_comments(signoffs: list[Any]) -> dict[int, str]:
    """Cell number -> the reviewers' comments on it, as an aside shown after the cell."""
    from .reviews import DECISION_WORDS

    found: dict[int, list[str]] = {}
    for s in signoffs:
        if not isinstance(s, dict):
            continue
        for c in s.get("comments") or []:
            t = c.get("target") or {}
            if t.get("kind") == "cell" and isinstance(t.get("cell"), int):
                found.setdefault(t["cell"], []).append(
                    f"<li><b>{esc(c.get('id'))}</b> {esc(c.get('text'))} <small>"
                    f"({esc(s.get('reviewer'))}, "
                    f"{esc(DECISION_WORDS.get(s.get('decision'), ''))})</small></li>")
    return {n: ('<aside class="bl-review-aside"><p>Reviewer comments on this cell:</p><ul>'
                + "".join(v) + "</ul></aside>") for n, v in found.items()}


def render_html(nb: dict[str, Any], *, renderer: str | None = None) -> str:
    """The whole record as one self-contained HTML page, the record itself embedded.

    ``renderer`` is the label the data block gives the versions that drew the
    page (default :func:`renderer_label`, this installation's); verify passes
    the label a page claims, so that only the drawing is compared.
    """
    meta = (nb.get("metadata") or {}).get(META_KEY) or {}
    man = meta.get("manifest") or {}
    header = meta.get("header") or {}
    title = next((c["title"] for c in meta.get("cases", [])), "beliefledger record")
    parts = []
    asides = _cell_comments(meta.get("signoffs") or [])
    for i, cell in enumerate(nb.get("cells", [])):
        role = ((cell.get("metadata") or {}).get(META_KEY) or {}).get("role")
        cls = "bl-cell" + (" bl-generated" if role else "")
        src = join_text(cell.get("source", ""))
        if role:  # generated cells: ids from their own (bl-<section>-...)
            ident = re.sub(r"[^A-Za-z0-9_-]", "-", str(cell.get("id") or f"bl-{i + 1}"))
        else:  # the analyst's cells: "cell N" is the position in the record, as verify says
            ident = f"cell-{i + 1}"
        if cell.get("cell_type") == "markdown":
            parts.append(f'<section class="{cls} bl-markdown" id="{ident}">'
                         f"{markdown_html(src)}</section>")
        elif cell.get("cell_type") == "code":
            body = ""
            if not role:
                count = cell.get("execution_count")
                label = f"cell {i + 1}" + (f" · run {count}" if count is not None else "")
                body += (f'<div class="bl-label">{esc(label)}</div>'
                         f'<pre class="bl-src"><code>{esc(src)}</code></pre>')
            body += "".join(render_output(o) for o in cell.get("outputs", []))
            parts.append(f'<section class="{cls} bl-code" id="{ident}">{body}'
                         f"{asides.get(i + 1, '')}</section>")
        else:
            parts.append(f'<section class="{cls} bl-raw" id="{ident}"><pre>{esc(src)}</pre>'
                         "</section>")
    banner = (f'<header class="bl-banner"><p><b>Sealed record</b> · fingerprint '
              f'<code>{esc(man.get("fingerprint", "?"))}</code> · sealed '
              f'{esc(header.get("sealed_at", "?"))} · beliefledger '
              f'{esc(header.get("tool_version", "?"))}</p>'
              "<p>This page is a reading copy. The sealed notebook is the record: check it with "
              "<code>beliefledger verify</code> and compare the fingerprint with the one quoted "
              "in the hand-over.</p>" + _signoffs_html(meta.get("signoffs") or []) + "</header>")
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<title>{esc(title)}: sealed record</title>"
            f"<style>{_css()}</style></head><body><main>"
            + banner + "".join(parts) + "</main>" + record_block(nb, renderer=renderer) + "</body></html>\n")


RECORD_BLOCK_ID = "beliefledger-record"
"""The id of the data block that carries the record in the HTML copy."""
RECORD_BLOCK_TYPE = "application/json"
_JSON_ESCAPES = str.maketrans({"<": "\\u003c", ">": "\\u003e", "&": "\\u0026",
                               "\u2028": "\\u2028", "\u2029": "\\u2029"})


def renderer_label() -> str:
    """The versions that draw a page: beliefledger, mistune (markdown) and Python."""
    import mistune

    return (f"beliefledger {__version__}; mistune {getattr(mistune, '__version__', '?')}; "
            f"python {platform.python_version()}")


def record_json(nb: dict[str, Any]) -> str:
    """The record as the data block holds it: sorted keys, no spaces, ASCII, and no
    character that could end the block or open markup (they appear only in strings)."""
    text = json.dumps(nb, sort_keys=True, ensure_ascii=True, separators=(",", ":"),
                      allow_nan=False)
    return text.translate(_JSON_ESCAPES)


def record_block(nb: dict[str, Any], *, renderer: str | None = None) -> str:
    """The inert element that carries the sealed record in the page (see the module
    docstring); ``renderer`` defaults to :func:`renderer_label`."""
    label = renderer_label() if renderer is None else renderer
    return (f'<script type="{RECORD_BLOCK_TYPE}" id="{RECORD_BLOCK_ID}" '
            f'data-renderer="{_html.escape(label, quote=True)}">{record_json(nb)}</script>')


__all__ = ["render_html", "clean_html", "inline_svg", "markdown_html", "render_output",
           "record_block", "record_json", "renderer_label", "RECORD_BLOCK_ID", "RECORD_BLOCK_TYPE"]

"""A PDF of a sealed record, for organisations that file reports as PDF.

The PDF is the offline HTML copy (:func:`beliefledger.record.html.render_html`)
printed by a real browser engine: Playwright driving the system's chromium
(Debian's package; nothing is downloaded at run time, JavaScript is off and
every network request is refused). Each page carries the record's
fingerprint in its header and its page number in the footer; the print
style sheet keeps table rows, charts and headings from being split across
pages (``record.css``, ``@media print``).

The PDF is a reading copy like the HTML: the sealed notebook stays the
record, and ``beliefledger verify`` checks the notebook, not the PDF.
"""

from __future__ import annotations

import importlib.util
import os
import shutil
from pathlib import Path
from typing import Any

from ..display import esc
from .canonical import META_KEY
from .nbio import RecordError, read_record

CHROMIUM_ENV = "BELIEFLEDGER_CHROMIUM"
CHROMIUM_PATHS = ("/usr/lib/chromium/chromium", "/usr/bin/chromium")
"""Where Debian's chromium package puts the browser (the binary, then its wrapper)."""
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--no-first-run",
                 "--disable-background-networking", "--disable-component-update",
                 "--disable-sync", "--disable-dev-shm-usage", "--disable-extensions"]
PAGE_FORMAT = "A4"
MARGINS = {"top": "17mm", "bottom": "15mm", "left": "12mm", "right": "12mm"}
TIMEOUT_MS = 120_000

INSTALL_HINT = ("install Debian's chromium (apt-get install chromium) or point "
                f"{CHROMIUM_ENV} at a chromium binary; beliefledger never downloads a browser")


def find_chromium() -> str:
    """The chromium binary to print with: ``$BELIEFLEDGER_CHROMIUM``, else Debian's, else
    ``chromium`` on the PATH; a :class:`RecordError` saying how to install it if none."""
    env = os.environ.get(CHROMIUM_ENV)
    if env:
        if os.path.isfile(env) and os.access(env, os.X_OK):
            return env
        raise RecordError(f"{CHROMIUM_ENV}={env!r} is not an executable file; {INSTALL_HINT}")
    for path in CHROMIUM_PATHS:
        if os.path.isfile(path) and os.access(path, os.X_OK):
            return path
    found = shutil.which("chromium")
    if found:
        return found
    raise RecordError(f"a PDF needs a chromium browser and none was found (looked at "
                      f"{', '.join(CHROMIUM_PATHS)} and the PATH); {INSTALL_HINT}. Nothing "
                      "was written")


def require_pdf_tools(command: str = "pdf") -> str:
    """Refuse at once, before any work, when Playwright or chromium is missing; returns the
    chromium path."""
    if importlib.util.find_spec("playwright") is None:
        raise RecordError(f"{command} writes a PDF through Playwright, which is not installed; "
                          "install it with pip install 'beliefledger[pdf]' (never run "
                          "'playwright install': the browser comes from the system). Nothing "
                          "was written")
    return find_chromium()


def pdf_path_for(record_path: str | Path) -> Path:
    """``NAME.sealed.pdf`` beside ``NAME.sealed.ipynb``."""
    return Path(record_path).with_suffix(".pdf")


def _header_footer(nb: dict[str, Any]) -> tuple[str, str]:
    meta = (nb.get("metadata") or {}).get(META_KEY) or {}
    fp = (meta.get("manifest") or {}).get("fingerprint", "?")
    sealed_at = (meta.get("header") or {}).get("sealed_at", "?")
    titles = [c.get("title") for c in meta.get("cases", []) if isinstance(c, dict)]
    title = "; ".join(str(t) for t in titles if t) or "beliefledger record"
    if len(title) > 90:
        title = title[:87] + "..."
    style = ("font-family: 'DejaVu Sans', sans-serif; font-size: 7.5pt; color: #3b4a6b; "
             "width: 100%; margin: 0 12mm; display: flex; justify-content: space-between;")
    header = (f'<div style="{style}"><span>Sealed record: {esc(title)}</span>'
              f"<span>fingerprint <b>{esc(fp)}</b></span></div>")
    footer = (f'<div style="{style}"><span>Reading copy, sealed {esc(sealed_at)}; the sealed '
              "notebook is the record (beliefledger verify)</span><span>page "
              '<span class="pageNumber"></span> of <span class="totalPages"></span></span>'
              "</div>")
    return header, footer


def record_pdf(nb: dict[str, Any], *, chromium: str | None = None) -> bytes:
    """The PDF of a record (notebook JSON) as bytes."""
    from .html import render_html

    exe = chromium or require_pdf_tools()
    from playwright.sync_api import Error as PlaywrightError
    from playwright.sync_api import sync_playwright

    page_html = render_html(nb)
    header, footer = _header_footer(nb)
    try:
        with sync_playwright() as p:
            browser = p.chromium.launch(executable_path=exe, headless=True, args=CHROMIUM_ARGS)
            try:
                context = browser.new_context(java_script_enabled=False, offline=True)
                context.route("**/*", lambda route: route.continue_()
                              if route.request.url.startswith(("data:", "about:"))
                              else route.abort())
                page = context.new_page()
                page.set_default_timeout(TIMEOUT_MS)
                page.set_content(page_html, wait_until="load")
                page.emulate_media(media="print")
                return page.pdf(format=PAGE_FORMAT, print_background=True,
                                display_header_footer=True, header_template=header,
                                footer_template=footer, margin=MARGINS)
            finally:
                browser.close()
    except PlaywrightError as exc:
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise RecordError(f"chromium ({exe}) could not print the record: {first}; check that "
                          f"it starts (run '{exe} --version'), or {INSTALL_HINT}") from None


def write_pdf(nb: dict[str, Any], path: str | Path, *, chromium: str | None = None) -> Path:
    """Print the record ``nb`` to ``path`` (written atomically)."""
    from ..casefile import atomic_save_bytes

    return atomic_save_bytes(path, record_pdf(nb, chromium=chromium))


def pdf_from_sealed(record: str | Path, out: str | Path | None = None, *,
                    force: bool = False) -> Path:
    """Write the PDF of the sealed notebook ``record`` (default ``NAME.sealed.pdf`` beside
    it). A record whose digests no longer match is refused: its pages would carry a
    fingerprint its content does not have."""
    from .verifier import verify_notebook

    target = Path(out) if out is not None else pdf_path_for(record)
    if target.exists() and not force:
        raise RecordError(f"{str(target)!r} already exists; pass --force to overwrite it")
    nb, meta = read_record(record)
    try:
        check = verify_notebook(nb, meta, path=str(record), reproduce_results=False)
    except (KeyError, TypeError, AttributeError) as exc:
        raise RecordError(f"record {Path(record).name!r} is malformed ({type(exc).__name__}: "
                          f"{exc}); no PDF was written") from None
    if not check.intact:
        problems = "; ".join(str(p) for p in check.problems[:3])
        raise RecordError(f"record {Path(record).name!r} is NOT INTACT ({problems}); a PDF of "
                          "it would show a fingerprint its content does not have. Run "
                          "beliefledger verify for the whole report; no PDF was written")
    return write_pdf(nb, target, chromium=require_pdf_tools())


__all__ = ["record_pdf", "write_pdf", "pdf_from_sealed", "pdf_path_for", "find_chromium",
           "require_pdf_tools", "CHROMIUM_PATHS"]

"""The offline HTML copy in a real browser: JavaScript off, every network request logged."""

from __future__ import annotations

import os
import shutil

import pytest

import beliefledger as bl
from beliefledger.record.html import render_html
from beliefledger.record.sealer import build_record
from test_record import SEALED_AT, executed_notebook

CHROMIUM = os.environ.get("CHROMIUM", "/usr/lib/chromium/chromium")  # Debian's package

pytestmark = pytest.mark.browser


@pytest.mark.skipif(not (os.path.exists(CHROMIUM) or shutil.which("chromium")),
                    reason="needs Debian's chromium")
def test_html_record_renders_with_no_request_and_no_script(tmp_path):
    sync_api = pytest.importorskip("playwright.sync_api")
    rec = build_record(executed_notebook(bl.example_case()), notebook_name="t.ipynb",
                       sealed_at=SEALED_AT)
    page_path = tmp_path / "record.html"
    page_path.write_text(render_html(rec), encoding="utf-8")
    requests = []
    exe = CHROMIUM if os.path.exists(CHROMIUM) else shutil.which("chromium")
    with sync_api.sync_playwright() as p:
        browser = p.chromium.launch(executable_path=exe, headless=True,
                                    args=["--no-sandbox", "--disable-gpu",
                                          "--disable-background-networking",
                                          "--disable-component-update", "--no-first-run"])
        try:
            context = browser.new_context(java_script_enabled=False)
            page = context.new_page()
            page.on("request", lambda r: requests.append(r.url))
            page.goto(page_path.as_uri())
            text = page.inner_text("body")
            n_svg = page.locator("svg").count()
        finally:
            browser.close()
    assert [u for u in requests if not u.startswith("file://")] == []
    assert "Assumption register" in text and "Manifest" in text
    assert "Local codes, regulations" in text
    assert n_svg >= 2  # the charts, drawn inline

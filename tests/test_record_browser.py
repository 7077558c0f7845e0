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
            # with scripts on, the data block that carries the record runs nothing, shows
            # nothing and fetches nothing; it is readable as data
            live = browser.new_context(java_script_enabled=True).new_page()
            errors = []
            live.on("request", lambda r: requests.append(r.url))
            live.on("pageerror", lambda e: errors.append(str(e)))
            live.goto(page_path.as_uri())
            live_text = live.inner_text("body")
            carried = live.evaluate("JSON.parse(document.getElementById("
                                    "'beliefledger-record').textContent).metadata"
                                    ".beliefledger.manifest.fingerprint")
        finally:
            browser.close()
    assert errors == [] and live_text == text and '"cells"' not in text
    assert carried == rec["metadata"]["beliefledger"]["manifest"]["fingerprint"]
    assert [u for u in requests if not u.startswith("file://")] == []
    assert "Assumption register" in text and "Manifest" in text
    assert "Local codes, regulations" in text
    assert n_svg >= 2  # the charts, drawn inline


def _large_case() -> bl.Case:
    """Invented: 20 hypotheses x 30 three-state items."""
    import numpy as np

    rng = np.random.default_rng(5)
    hyps = {f"cause {i:02d}": 1 / 20 for i in range(20)}
    case = bl.Case("Large invented case", hypotheses=hyps)
    for k in range(30):
        t = rng.dirichlet(np.ones(3), size=20)
        case.add_evidence(f"item {k:02d}", states=["a", "b", "c"],
                          likelihoods={h: list(t[j]) for j, h in enumerate(hyps)},
                          observed="a", source=f"bench sheet {k} (invented)")
    return case


SCREEN = (1366, 768)
"""A common laptop screen (CSS pixels): the register is measured in its heights."""


@pytest.mark.skipif(not (os.path.exists(CHROMIUM) or shutil.which("chromium")),
                    reason="needs Debian's chromium")
def test_the_register_fits_two_screens_for_the_demo_and_a_few_for_a_large_case(tmp_path):
    sync_api = pytest.importorskip("playwright.sync_api")
    heights = {}
    exe = CHROMIUM if os.path.exists(CHROMIUM) else shutil.which("chromium")
    with sync_api.sync_playwright() as p:
        browser = p.chromium.launch(executable_path=exe, headless=True,
                                    args=["--no-sandbox", "--disable-gpu"])
        try:
            page = browser.new_context(java_script_enabled=False, viewport={
                "width": SCREEN[0], "height": SCREEN[1]}).new_page()
            for name, case in (("demo", bl.example_case()), ("large", _large_case())):
                rec = build_record(executed_notebook(case), notebook_name="t.ipynb",
                                   sealed_at=SEALED_AT)
                path = tmp_path / f"{name}.html"
                path.write_text(render_html(rec), encoding="utf-8")
                page.goto(path.as_uri())
                heights[name] = page.locator(".bl-register").first.bounding_box()["height"]
                if name == "demo":
                    summary = page.locator(".bl-summary").first.bounding_box()["height"]
        finally:
            browser.close()
    print(f"register heights at {SCREEN[0]}x{SCREEN[1]}: demo {heights['demo'] / SCREEN[1]:.2f} "
          f"screens, 20 x 30 case {heights['large'] / SCREEN[1]:.2f} screens; summary "
          f"{summary / SCREEN[1]:.2f}")
    assert heights["demo"] <= 2 * SCREEN[1]
    assert heights["large"] <= 6 * SCREEN[1]  # 30 items: about 5 screens, not 1,800 rows
    assert summary <= SCREEN[1]  # the summary of a case is one screen

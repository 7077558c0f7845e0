"""The browser test's gate: skip with a how-to on a workstation, fail under CI=true.

These run without a browser (they are not marked ``browser``)."""

from __future__ import annotations

import harness
import pytest
from test_workbench_browser import netns_problem, require_offline_browser


def test_missing_chromium_is_named(monkeypatch):
    monkeypatch.setattr(harness, "CHROMIUM", "/nonexistent/chromium")
    assert netns_problem() == "chromium not found at /nonexistent/chromium"


def test_workstation_skips_with_how_to_enable(monkeypatch):
    monkeypatch.delenv("CI", raising=False)
    with pytest.raises(pytest.skip.Exception, match="apt-get install -y chromium"):
        require_offline_browser("chromium not found")


def test_ci_fails_instead_of_skipping(monkeypatch):
    monkeypatch.setenv("CI", "true")
    with pytest.raises(pytest.fail.Exception, match="cannot run under CI=true"):
        require_offline_browser("chromium not found")


def test_no_problem_means_run():
    assert require_offline_browser(None) is None

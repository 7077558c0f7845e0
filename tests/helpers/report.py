"""Counts of the reliability tests: inputs tried, mutations caught, kills survived.

Each test adds its counts with :func:`add`; a module-scoped fixture made by
:func:`reporting_fixture` prints them on the terminal when the module ends
(whatever ``-s`` says) and merges them into ``tests/artifacts/reliability_counts.json``
so the figures can be quoted in the README.
"""

from __future__ import annotations

import contextlib
import json
import os
import time
from collections import defaultdict
from pathlib import Path

import pytest

ARTIFACTS = Path(__file__).resolve().parents[1] / "artifacts"
COUNTS_FILE = ARTIFACTS / "reliability_counts.json"

FULL = os.environ.get("BELIEFLEDGER_FUZZ") == "full"
MODE = "full" if FULL else "default"


def scaled(default: int, full: int) -> int:
    """The count for this run: ``full`` under BELIEFLEDGER_FUZZ=full, else ``default``."""
    return full if FULL else default


_counts: dict[str, dict[str, int]] = defaultdict(lambda: defaultdict(int))


def add(group: str, **counts: int) -> None:
    """Add ``counts`` (name -> number) to ``group`` (one line of the summary)."""
    for k, v in counts.items():
        _counts[group][k] += int(v)


def _flush(groups: list[str], reporter) -> None:
    if not groups:
        return
    from beliefledger.casefile import atomic_write_text

    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    try:
        stored = json.loads(COUNTS_FILE.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        stored = {}
    if not isinstance(stored, dict):
        stored = {}
    for g in groups:
        stored[g] = {"mode": MODE, "when": time.strftime("%Y-%m-%d %H:%M:%S UTC", time.gmtime()),
                     **dict(_counts[g])}
        line = ", ".join(f"{k} {v:,}" for k, v in _counts[g].items())
        if reporter is not None:
            reporter.write_line(f"reliability [{MODE}] {g}: {line}")
    atomic_write_text(COUNTS_FILE, json.dumps(stored, indent=1, sort_keys=True) + "\n")


def reporting_fixture(*groups: str):
    """A module-scoped autouse fixture that reports ``groups`` when the module ends."""

    @pytest.fixture(scope="module", autouse=True)
    def _reliability_report(request):
        for g in groups:
            _counts.pop(g, None)
        yield
        reporter = request.config.pluginmanager.get_plugin("terminalreporter")
        capman = request.config.pluginmanager.get_plugin("capturemanager")
        # output is captured during teardown; suspend capture so the line shows
        ctx = capman.global_and_fixture_disabled() if capman else contextlib.nullcontext()
        with ctx:
            if reporter is not None:
                reporter.write_line("")
            _flush([g for g in groups if g in _counts], reporter)

    return _reliability_report

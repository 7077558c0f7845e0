"""Tamper mutations of an HTML copy: ``verify page.html`` catches every one and says where.

A record is built once (``build_record`` on an executed notebook; no kernel)
and drawn once as its HTML copy. Each mutation edits the page's text
(tests/helpers/htmlmut.py: a digit in a visible number, a dropped or
swapped table row, an edited, replaced or deleted text node, an attribute
changed, added or removed, a section removed, duplicated or swapped, markup,
a script or a comment injected, whitespace between tags, a character written
as its entity, the style sheet, title or banner edited, the embedded JSON
edited, re-spaced, or changed and the page drawn again from it, the file
truncated, the data block duplicated, removed, moved or retyped, line
endings, another version named, a byte-order mark, text appended), and
``verify`` must refuse the file (exit 2) or report it not intact (exit 1),
never ok. Where the first difference lies in a known part of the page, a
problem must name that part (a section id, the banner, the head, the
embedded block).

Counts: ``make test`` runs 1,000 mutations; ``make fuzz`` runs 5,000.

Speed: verify draws the page again from the record it carries. Here the
drawing is computed once per distinct record (render_html is deterministic:
tests/test_record.py checks that the same record gives the same bytes), and
the installed-package versions once per run; every other step of verify runs
for every mutation.
"""

from __future__ import annotations

import functools
import json
import random

import pytest

from beliefledger import cli
from beliefledger.errors import RecordError
from beliefledger.record import htmlcheck, sections
from beliefledger.record.html import render_html
from beliefledger.record.verifier import verify
from helpers import htmlmut, records, report

_report = report.reporting_fixture("tamper-html")

N_MUTATIONS = report.scaled(1_000, 5_000)
CLI_EVERY = 25  # every 25th mutation also goes through the command line (exit code)


@pytest.fixture(scope="module")
def clean():
    rec = records.conveyor_record()
    return htmlmut.CleanPage(render_html(rec), rec)


@pytest.fixture(scope="module")
def fast_drawing():
    """Draw each distinct record once, and read the installed versions once."""
    mp = pytest.MonkeyPatch()
    real_render = htmlcheck.render_html

    @functools.lru_cache(maxsize=64)
    def drawn(key: str, renderer: str | None) -> str:
        return real_render(json.loads(key), renderer=renderer)

    def render(nb, *, renderer=None):
        return drawn(json.dumps(nb, sort_keys=True), renderer)

    mp.setattr(htmlcheck, "render_html", render)
    mp.setattr(sections, "environment", functools.cache(sections.environment))
    yield
    mp.undo()


@pytest.mark.fuzz
def test_every_html_mutation_is_caught_and_located(clean, fast_drawing, tmp_path, capsys):
    path = tmp_path / "review.sealed.html"
    path.write_text(clean.text, encoding="utf-8")
    assert verify(path).ok, verify(path).text()
    rnd = random.Random(20261202)
    caught: dict[str, int] = {}
    refused = located = 0
    for n in range(N_MUTATIONS):
        kind = htmlmut.KINDS[n % len(htmlmut.KINDS)] if n < 2 * len(htmlmut.KINDS) else None
        for _ in range(20):
            kind_drawn, text = htmlmut.mutate(clean, rnd, kind)
            if text != clean.text:
                break
        else:
            raise AssertionError(f"could not draw a mutation of kind {kind}")
        path.write_bytes(text.encode("utf-8"))
        label = f"mutation #{n} ({kind_drawn})"
        try:
            result = verify(path)
        except RecordError as exc:
            assert path.name in str(exc), f"{label}: the refusal does not name the file: {exc}"
            refused += 1
        else:
            assert not result.ok and not result.intact, f"{label} not caught:\n{result.text()}"
            assert all(p.where and p.detail for p in result.problems), label
            where = None if kind_drawn in htmlmut.EDITS_RECORD else htmlmut.location(clean, text)
            page = [p for p in result.problems if p.code in htmlcheck.PAGE_CODES]
            if where is not None and page:
                assert where in page[0].where, (
                    f"{label}: the page problem does not name {where}:\n{result.text()}")
                located += 1
        if n % CLI_EVERY == 0:
            code = cli.main(["verify", str(path)])
            capsys.readouterr()
            assert code in (1, 2), f"{label}: exit code {code}"
        caught[kind_drawn] = caught.get(kind_drawn, 0) + 1
    assert set(caught) == set(htmlmut.KINDS), set(htmlmut.KINDS) - set(caught)
    report.add("tamper-html", mutations_tried=N_MUTATIONS, mutations_caught=sum(caught.values()),
               refused_unusable=refused, located=located, kinds=len(caught))
    # the untouched copy still verifies after all that
    path.write_text(clean.text, encoding="utf-8")
    assert verify(path).ok

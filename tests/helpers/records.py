"""Sealed records for the tamper, escaping and crash tests, built without a kernel.

``executed_notebook(cases)`` writes the notebook JSON that running a small
analyst notebook would leave behind (each case displayed as its MIME bundle,
exactly what ``Case._repr_mimebundle_`` emits in a kernel);
``sealed_record`` turns it into a record with the record layer's own
``build_record``. The scenario (a conveyor stoppage) is invented test data.
"""

from __future__ import annotations

import copy
from typing import Any

import beliefledger as bl


def conveyor_case(title: str = "Conveyor stoppage") -> bl.Case:
    """Invented test data: three causes of a conveyor stoppage, two observed items."""
    case = bl.Case(title, hypotheses={
        "belt slip": {"prior": 0.45, "source": "maintenance log 2024-2026 (invented)"},
        "motor overload": {"prior": 0.35, "source": "maintenance log 2024-2026 (invented)"},
        "other cause": {"prior": 0.20, "source": "judgement (invented)"}})
    case.add_evidence("thermal tag", states=["tripped", "clear"],
                      likelihoods={"belt slip": [0.1, 0.9], "motor overload": [0.8, 0.2],
                                   "other cause": [0.3, 0.7]},
                      observed="tripped", source="relay maker's sheet (invented)")
    case.add_evidence("belt marks", states=["glazed", "normal"],
                      likelihoods={"belt slip": [0.7, 0.3], "motor overload": [0.2, 0.8],
                                   "other cause": [0.4, 0.6]},
                      observed="normal", source="inspection (invented)")
    case.add_scenario("fleet rates", {"belt slip": 0.3, "motor overload": 0.5,
                                      "other cause": 0.2}, source="fleet data (invented)")
    return case


MARKER = "NOTEBOOK_CODE_RAN"
"""A file the payload cell would create in the working folder if it were executed."""
PAYLOAD = (f"import pathlib; pathlib.Path({MARKER!r}).write_text('ran')\n"
           f"__import__('os').system('touch {MARKER}_2')")


def _bundle(obj: Any) -> dict[str, Any]:
    data = obj._repr_mimebundle_() if hasattr(obj, "_repr_mimebundle_") else {
        "text/plain": repr(obj), "text/html": obj._repr_html_()}
    return copy.deepcopy(data)


def executed_notebook(cases: list[bl.Case], *, heading: str = "Conveyor stoppage review"
                      ) -> dict[str, Any]:
    """Notebook JSON as a kernel run would leave it: one code cell per case."""
    cells: list[dict[str, Any]] = [
        {"cell_type": "markdown", "id": "intro", "metadata": {},
         "source": f"# {heading}\n\nInvented test case for the reliability tests."}]
    n = 0
    for k, case in enumerate(cases):
        n += 1
        cells.append({
            "cell_type": "code", "id": f"build-{k}", "metadata": {"tags": ["case"]},
            "execution_count": n,
            "source": f"case = build_case({k})  # prior of 'belt slip' is 0.45\ncase",
            "outputs": [{"output_type": "execute_result", "execution_count": n,
                         "metadata": {}, "data": _bundle(case)}]})
        n += 1
        ledger = case.update()
        cells.append({
            "cell_type": "code", "id": f"ledger-{k}", "metadata": {}, "execution_count": n,
            "source": "ledger = case.update()\nprint(ledger.map_hypothesis)\nledger",
            "outputs": [{"output_type": "stream", "name": "stdout",
                         "text": f"{ledger.map_hypothesis}\n"},
                        {"output_type": "execute_result", "execution_count": n,
                         "metadata": {}, "data": _bundle(ledger)}]})
    # code that must never run outside a seal: verify, diff and the loaders read it as text
    cells.append({"cell_type": "code", "id": "payload", "metadata": {}, "execution_count": n + 1,
                  "source": PAYLOAD, "outputs": []})
    cells.append({"cell_type": "markdown", "id": "close", "metadata": {},
                  "source": "Conclusion: see the record below (invented)."})
    return {"nbformat": 4, "nbformat_minor": 5,
            "metadata": {"kernelspec": {"name": "python3", "display_name": "Python 3",
                                        "language": "python"},
                         "language_info": {"name": "python"}},
            "cells": cells}


def sealed_record(cases: list[bl.Case], **kw: Any) -> dict[str, Any]:
    """A sealed record (notebook JSON) of ``cases``, sealed at a fixed time."""
    from beliefledger.record.sealer import build_record

    return build_record(executed_notebook(cases, **kw), notebook_name="review.ipynb",
                        sealed_at="2026-12-01T12:00:00Z")


_CACHE: dict[str, dict[str, Any]] = {}


def conveyor_record() -> dict[str, Any]:
    """The sealed record of :func:`conveyor_case`, built once per test session (a copy)."""
    if "conveyor" not in _CACHE:
        _CACHE["conveyor"] = sealed_record([conveyor_case()])
    return copy.deepcopy(_CACHE["conveyor"])


def dumps(record: dict[str, Any]) -> str:
    from beliefledger.record.nbio import dumps_notebook

    return dumps_notebook(record)


def analyst_index(nb: dict[str, Any], k: int) -> int:
    """Position in the record of the analyst's ``k``-th cell (0-based): the record puts
    its front matter and summary before the analyst's cells."""
    from beliefledger.record.canonical import cell_role

    return [i for i, c in enumerate(nb["cells"]) if cell_role(c) is None][k]


def leaves(obj: Any, path: tuple = ()):
    """(path, value) of every leaf of a JSON-like object (the mutation tests' targets)."""
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield from leaves(v, (*path, k))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from leaves(v, (*path, i))
    else:
        yield path, obj


def script_elements(page: str) -> list[tuple[dict[str, Any], str, int, int]]:
    """Every ``<script>`` element of an HTML page as a browser's tokenizer reads it:
    (attributes, raw text, offset of ``<script``, offset after ``</script>``)."""
    from html.parser import HTMLParser

    starts = [0]
    for line in page.splitlines(keepends=True):
        starts.append(starts[-1] + len(line))

    class Finder(HTMLParser):
        def __init__(self):
            super().__init__(convert_charrefs=False)
            self.found: list[list[Any]] = []
            self.open: list[Any] | None = None

        def _at(self) -> int:
            line, col = self.getpos()
            return starts[line - 1] + col

        def handle_starttag(self, tag, attrs):
            if tag == "script":
                self.open = [dict(attrs), "", self._at(), None]
                self.found.append(self.open)

        def handle_data(self, data):
            if self.open is not None:
                self.open[1] += data

        def handle_endtag(self, tag):
            if tag == "script" and self.open is not None:
                at = self._at()
                self.open[3] = page.index(">", at) + 1
                self.open = None

    f = Finder()
    f.feed(page)
    f.close()
    return [tuple(x) for x in f.found]


def without_record_block(page: str) -> str:
    """``page`` with the one data block that carries the record cut out; asserts that it
    is the page's only script element and an inert JSON block."""
    scripts = script_elements(page)
    assert len(scripts) == 1, f"{len(scripts)} script elements, want the one data block"
    attrs, body, start, end = scripts[0]
    assert attrs.get("type") == "application/json" and attrs.get("id") == "beliefledger-record"
    assert set(attrs) == {"type", "id", "data-renderer"}, attrs  # no src, no handler
    assert "<" not in body and ">" not in body and "&" not in body
    return page[:start] + page[end:]

"""Which cases a notebook worked on: the collection rule.

A case is collected from any cell output carrying the MIME entry
``application/vnd.beliefledger.case+json`` (what displaying a
:class:`~beliefledger.Case` emits; a Workbench emits the same, and
:func:`register` emits it explicitly). Outputs are read in cell order; for
each case title the **last** such output wins, and cases keep the order in
which their title first appeared. A notebook with no such output is refused.
"""

from __future__ import annotations

import copy
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from ..calls import ANALYSIS_MIMETYPE, Call
from ..case import CASE_MIMETYPE
from .canonical import cell_role, join_text
from .nbio import RecordError

NO_CASE_HELP = (
    "no case found in the notebook's outputs. Make a cell end with the case itself "
    "(a last line `case`), or call `beliefledger.record.register(case)`, so that the "
    "notebook shows the final state of every case it works on; then seal again")


def _analyst_code(cells: Sequence[Mapping[str, Any]], offset: int):
    """(index, cell) of the analyst's code cells (generated record cells skipped); the
    index is the cell's position in the record when the list is the analyst's cells
    alone and ``offset`` the number of generated cells before them."""
    for i, cell in enumerate(cells):
        if cell.get("cell_type") == "code" and cell_role(cell) is None:
            yield i + offset, cell


def case_outputs(cells: Sequence[Mapping[str, Any]], offset: int = 0) -> list[tuple[int, Any]]:
    """(cell index, envelope) for every case bundle in the outputs, in order."""
    found = []
    for i, cell in _analyst_code(cells, offset):
        for out in cell.get("outputs", []) or []:
            data = out.get("data") if isinstance(out, Mapping) else None
            if isinstance(data, Mapping) and CASE_MIMETYPE in data:
                found.append((i, data[CASE_MIMETYPE]))
    return found


def collect_envelopes(cells: Sequence[Mapping[str, Any]], offset: int = 0
                      ) -> list[dict[str, Any]]:
    """The final envelope of each case: ``[{"title", "envelope", "cell"}]`` (no validation)."""
    latest: dict[str, dict[str, Any]] = {}
    for i, env in case_outputs(cells, offset):
        title = None
        if isinstance(env, Mapping) and isinstance(env.get("case"), Mapping):
            title = env["case"].get("title")
        if not isinstance(title, str):
            raise RecordError(f"cell {i + 1} shows a case bundle with no title; it is not a "
                              "beliefledger case (was the output edited?)")
        if title in latest:
            latest[title].update(envelope=env, cell=i)
        else:
            latest[title] = {"title": title, "envelope": env, "cell": i}
    return list(latest.values())


@dataclass(frozen=True)
class ShownCall:
    """An analysis call a cell output shows: the call, the cell (0-based position in the
    record) and the output's HTML as shown (what a record quotes)."""

    call: Call
    cell: int
    html: str


def analysis_calls(cells: Sequence[Mapping[str, Any]], offset: int = 0
                   ) -> dict[tuple[str, str], ShownCall]:
    """(case title, kind) -> the last call of that kind shown for that case."""
    found: dict[tuple[str, str], ShownCall] = {}
    for i, cell in _analyst_code(cells, offset):
        for out in cell.get("outputs", []) or []:
            data = out.get("data") if isinstance(out, Mapping) else None
            if not isinstance(data, Mapping) or ANALYSIS_MIMETYPE not in data:
                continue
            call = Call.from_bundle(data[ANALYSIS_MIMETYPE])
            if call is not None:
                found[(call.title, call.kind)] = ShownCall(
                    call, i, join_text(data.get("text/html", "")) or
                    f"<pre>{join_text(data.get('text/plain', ''))}</pre>")
    return found


@dataclass(frozen=True)
class SealedCase:
    """One case as a record keeps it: its last display in the notebook (``envelope``,
    ``cell``), the case rebuilt from it, and every scenario's ledger computed once."""

    title: str
    envelope: Mapping[str, Any]
    cell: int
    case: Any
    ledgers: Mapping[str, Any]
    calls: Mapping[str, ShownCall] = field(default_factory=dict)
    """Analysis kind -> the analyst's last call of it for this case (see calls.py)."""

    @property
    def ledger(self) -> Any:
        """The ledger under the case's active scenario."""
        return self.ledgers[self.case.active_scenario]

    @property
    def results(self) -> dict[str, Any]:
        """Scenario -> the ledger as JSON ('base' first): what the record seals and
        ``verify`` recomputes."""
        return {name: ledger.to_dict() for name, ledger in self.ledgers.items()}

    def entry(self) -> dict[str, Any]:
        """The record metadata's entry for this case."""
        return {"title": self.title, "cell": self.cell, "envelope": copy.deepcopy(self.envelope),
                "results": self.results}


def collect_cases(cells: Sequence[Mapping[str, Any]], offset: int = 0) -> list[SealedCase]:
    """Collect, validate and compute every case the notebook shows; refuses none.
    ``offset``: the number of generated cells the record puts before these."""
    from ..casefile import from_envelope
    from ..engine import update_all
    from ..errors import CaseError

    items = collect_envelopes(cells, offset)
    if not items:
        raise RecordError(NO_CASE_HELP)
    shown = analysis_calls(cells, offset)
    out = []
    for item in items:
        try:
            case = from_envelope(item["envelope"], origin=f"case {item['title']!r} shown in "
                                                          f"cell {item['cell'] + 1}")
        except CaseError as exc:
            raise RecordError(str(exc)) from None
        calls = {kind: sc for (title, kind), sc in shown.items() if title == item["title"]}
        out.append(SealedCase(item["title"], item["envelope"], item["cell"], case,
                              update_all(case), calls))
    return out


def register(case: Any) -> None:
    """Show ``case`` in the notebook so that ``beliefledger seal`` collects it.

    Displaying a case (a cell ending in ``case``) does the same; call this
    where the case is built inside a function or a loop. The last display of
    a case (by title) is the state the record keeps.
    """
    from ..case import Case

    if not isinstance(case, Case):
        from ..errors import CaseTypeError

        raise CaseTypeError(f"register() takes a beliefledger Case, got {type(case).__name__}")
    try:
        from IPython.display import display
    except ImportError:  # outside IPython there is nothing to collect from
        return
    display(case)


__all__ = ["SealedCase", "ShownCall", "analysis_calls", "collect_cases", "collect_envelopes", "case_outputs", "register", "NO_CASE_HELP"]

"""Seal a notebook: execute it afresh, collect its cases, write the record.

The sealed notebook keeps the analyst's cells and their fresh outputs,
adds a generated record section (front matter, cautions, assumption
register, flags, ledger, charts, analyses, environment) and a manifest of
SHA-256 digests with one root digest over them all. A self-contained HTML
copy is written beside it. Volatile metadata (widget state, timings, kernel
ids) is stripped, so two seals of the same inputs differ only in the seal
time.
"""

from __future__ import annotations

import copy
import json
import sys
import time
from collections.abc import Callable
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from .canonical import (
    ALGORITHM,
    CANONICAL_JSON,
    KEPT_CELL_METADATA,
    META_KEY,
    RECORD_FORMAT,
    RECORD_ROLE,
    RECORD_VERSION,
    UNHASHED_ROLES,
    WIDGET_STATE_MIME,
    WIDGET_VIEW_MIME,
    canonical_bytes,
    case_digest,
    cell_digest,
    cell_role,
    fingerprint,
    hashed_cells,
    notebook_frame,
    root_digest,
)
from .nbio import (
    MAX_OUTPUT_BYTES,
    RecordError,
    default_out,
    dumps_notebook,
    html_path_for,
    load_notebook,
    write_text,
)

DEFAULT_CELL_TIMEOUT = 600
KEPT_NOTEBOOK_METADATA = ("kernelspec", "language_info", "title", "authors")


@dataclass(frozen=True)
class SealResult:
    """Where the record went and its root digest."""

    notebook: Path
    html: Path | None
    root: str
    fingerprint: str
    cases: tuple[str, ...]
    cells: int

    def __repr__(self) -> str:
        return (f"SealResult({self.notebook.name!r}: {len(self.cases)} case(s), {self.cells} "
                f"cells, fingerprint {self.fingerprint})")


def analyst_cells(nb: dict[str, Any]) -> list[dict[str, Any]]:
    """The notebook's own cells: generated record cells from an earlier seal removed."""
    return [c for c in nb["cells"] if cell_role(c) not in (RECORD_ROLE, *UNHASHED_ROLES)]


def prepare(nb: dict[str, Any]) -> dict[str, Any]:
    """A clean copy to execute: earlier record removed, outputs cleared, ids deterministic."""
    clean = copy.deepcopy(nb)
    clean["cells"] = analyst_cells(clean)
    meta = {k: v for k, v in (clean.get("metadata") or {}).items()
            if k in KEPT_NOTEBOOK_METADATA}
    clean["metadata"] = meta
    clean["nbformat"], clean["nbformat_minor"] = 4, max(5, int(clean.get("nbformat_minor", 5)))
    seen: set[str] = set()
    for i, cell in enumerate(clean["cells"]):
        cid = cell.get("id")
        if not isinstance(cid, str) or not cid or cid in seen:
            cid = f"cell-{i + 1}"
        seen.add(cid)
        cell["id"] = cid
        cell["metadata"] = {k: v for k, v in (cell.get("metadata") or {}).items()
                            if k in KEPT_CELL_METADATA and k != META_KEY}
        if cell["cell_type"] == "code":
            cell["outputs"] = []
            cell["execution_count"] = None
        else:
            cell.pop("outputs", None)
            cell.pop("execution_count", None)
    return clean


def strip_volatile(nb: dict[str, Any]) -> dict[str, Any]:
    """Remove widget state, timings and live-widget views; refuse huge outputs."""
    meta = nb.get("metadata") or {}
    meta.pop("widgets", None)
    nb["metadata"] = {k: v for k, v in meta.items() if k in KEPT_NOTEBOOK_METADATA}
    for i, cell in enumerate(nb["cells"]):
        cell["metadata"] = {k: v for k, v in (cell.get("metadata") or {}).items()
                            if k in KEPT_CELL_METADATA}
        if cell.get("cell_type") != "code":
            continue
        outputs = []
        for out in cell.get("outputs", []):
            out = dict(out)
            if "data" in out:
                data = {k: v for k, v in dict(out["data"]).items()
                        if k not in (WIDGET_VIEW_MIME, WIDGET_STATE_MIME)}
                if not data:
                    continue
                if set(data) == {"text/plain"} and WIDGET_VIEW_MIME in out["data"]:
                    data["text/plain"] = ("[a live widget was shown here; the record keeps "
                                          "its text form] " + "".join(data["text/plain"]))
                out["data"] = data
                out["metadata"] = {}
            out.pop("transient", None)
            size = len(canonical_bytes(out))
            if size > MAX_OUTPUT_BYTES:
                raise RecordError(f"cell {i + 1} produced an output of {size:,} bytes, over the "
                                  f"{MAX_OUTPUT_BYTES:,}-byte limit of a record; show a summary "
                                  "instead (e.g. df.head()) and seal again")
            outputs.append(out)
        cell["outputs"] = outputs
    return nb


def _first_heading(cells: list[dict[str, Any]]) -> str | None:
    for c in cells:
        if c.get("cell_type") == "markdown":
            src = c["source"] if isinstance(c["source"], str) else "".join(c["source"])
            for line in src.splitlines():
                if line.startswith("# "):
                    return line[2:].strip()
    return None


def _source_head(cell: dict[str, Any]) -> str:
    src = cell["source"] if isinstance(cell["source"], str) else "".join(cell["source"])
    first = next((ln for ln in src.splitlines() if ln.strip()), "")
    return first[:60] + ("..." if len(first) > 60 else "")


def execute(nb: dict[str, Any], *, cwd: Path, timeout: int = DEFAULT_CELL_TIMEOUT,
            kernel_name: str = "python3", progress: Callable[[str], None] | None = None
            ) -> dict[str, Any]:
    """Run every cell in order in a fresh kernel; a raising cell stops the run with a
    RecordError naming the cell and the error."""
    try:
        import nbformat
        from nbclient import NotebookClient
        from nbclient.exceptions import CellExecutionError, CellTimeoutError, DeadKernelError
    except ImportError as exc:
        raise RecordError(f"sealing needs {exc.name or 'nbclient'} to run the notebook; install "
                          "it with pip install 'beliefledger[notebook]'") from None

    node = nbformat.from_dict(nb)
    n = len(node.cells)
    state = {"index": None, "t0": 0.0}

    def on_start(cell, cell_index, **_):
        state["index"], state["t0"] = cell_index, time.perf_counter()

    def on_done(cell, cell_index, execute_reply=None, **_):
        if progress:
            dt = time.perf_counter() - state["t0"]
            progress(f"  cell {cell_index + 1}/{n} ok ({dt:.2f} s) {_source_head(cell)}")

    client = NotebookClient(node, timeout=timeout, kernel_name=kernel_name, allow_errors=False,
                            record_timing=False, store_widget_state=False,
                            resources={"metadata": {"path": str(cwd)}},
                            on_cell_start=on_start, on_cell_executed=on_done)
    try:
        client.execute()
    except CellExecutionError as exc:
        i = state["index"]
        where = f"cell {i + 1} ({_source_head(node.cells[i])!r})" if i is not None else "a cell"
        raise RecordError(f"{where} raised {exc.ename}: {exc.evalue}; fix the notebook and seal "
                          "again (nothing was written)") from None
    except CellTimeoutError:
        i = state["index"]
        raise RecordError(f"cell {(i or 0) + 1} ran longer than the {timeout} s per-cell limit; "
                          "speed it up or pass --timeout (nothing was written)") from None
    except DeadKernelError as exc:
        raise RecordError(f"the kernel died while running the notebook ({exc}); nothing was "
                          "written") from None
    except Exception as exc:
        if type(exc).__name__ == "NoSuchKernel":
            raise RecordError(f"no Jupyter kernel named {kernel_name!r} is installed; install "
                              "ipykernel in this environment (pip install "
                              "'beliefledger[notebook]')") from None
        raise
    return json.loads(nbformat.writes(node))


def build_record(nb: dict[str, Any], *, notebook_name: str, sealed_at: str | None = None
                 ) -> dict[str, Any]:
    """Turn an executed notebook (plain JSON) into a sealed record (plain JSON)."""
    from .._version import __version__
    from .collect import collect_cases
    from .sections import FRONT_CELLS, environment, manifest_cell, record_cells

    nb = strip_volatile(copy.deepcopy(nb))
    cells = analyst_cells(nb)
    # every scenario of every case computed once, here; cell numbers are positions in the
    # record, whose generated front cells come before the analyst's
    cases = collect_cases(cells, offset=FRONT_CELLS)
    if sealed_at is None:
        sealed_at = datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
    header = {"format": RECORD_FORMAT, "record_version": RECORD_VERSION,
              "sealed_at": sealed_at, "tool_version": __version__,
              "notebook": notebook_name, "analyst_cells": len(cells),
              "active_scenarios": {c.title: c.case.active_scenario for c in cases},
              "environment": environment()}
    title = _first_heading(cells) or cases[0].title
    front, back = record_cells(header, cases, title)
    all_cells = front + cells + back
    case_entries = [c.entry() for c in cases]
    case_digests = [case_digest(e) for e in case_entries]
    covered = hashed_cells(all_cells)
    cell_entries = [{"index": i, "cell_type": c["cell_type"], "sha256": cell_digest(c)}
                    for i, c in covered]
    root = root_digest(header, case_digests, [e["sha256"] for e in cell_entries],
                       notebook_frame(nb))
    manifest = {"algorithm": ALGORITHM, "canonical_json": CANONICAL_JSON,
                "cells": cell_entries,
                "cases": [{"title": e["title"], "sha256": d}
                          for e, d in zip(case_entries, case_digests, strict=True)],
                "root": root, "fingerprint": fingerprint(root)}
    all_cells.append(manifest_cell(manifest))
    nb["cells"] = all_cells
    nb["metadata"][META_KEY] = {"format": RECORD_FORMAT, "record_version": RECORD_VERSION,
                                "header": header, "cases": case_entries, "manifest": manifest,
                                "signoffs": []}
    return nb


def seal(notebook: str | Path, out: str | Path | None = None, *, force: bool = False,
         html: bool = True, timeout: int = DEFAULT_CELL_TIMEOUT, kernel_name: str = "python3",
         progress: Callable[[str], None] | None = None, sealed_at: str | None = None
         ) -> SealResult:
    """Execute ``notebook`` afresh and write a sealed record (and its offline HTML).

    Parameters
    ----------
    notebook : path
        The analyst's notebook (.ipynb).
    out : path, optional
        Where the sealed notebook goes; default ``<name>.sealed.ipynb`` beside it.
        The HTML copy goes beside it with the suffix ``.html``.
    force : bool
        Overwrite an existing record (refused otherwise).
    timeout : int
        Seconds allowed per cell.
    progress : callable, optional
        Receives one line per executed cell.

    Raises
    ------
    RecordError
        Unusable input, a cell that raised, no case in the outputs, or an
        existing record without ``force``; nothing is written then.
    """
    src = Path(notebook)
    nb = load_notebook(src)
    target = Path(out) if out is not None else default_out(src)
    html_target = html_path_for(target) if html else None
    if target.resolve() == src.resolve():
        raise RecordError(f"the record would overwrite the notebook {src.name!r} itself; "
                          "give another --out")
    for p in filter(None, (target, html_target)):
        if p.exists() and not force:
            raise RecordError(f"{str(p)!r} already exists; pass --force to overwrite it")
    if not target.parent.is_dir():
        raise RecordError(f"folder {str(target.parent)!r} does not exist; create it first")
    executed = execute(prepare(nb), cwd=src.resolve().parent, timeout=timeout,
                       kernel_name=kernel_name, progress=progress)
    record = build_record(executed, notebook_name=src.name, sealed_at=sealed_at)
    text = dumps_notebook(record)
    html_text = None
    if html_target is not None:
        from .html import render_html

        html_text = render_html(record)
    write_text(target, text)
    if html_target is not None:
        write_text(html_target, html_text)
    man = record["metadata"][META_KEY]["manifest"]
    return SealResult(notebook=target, html=html_target, root=man["root"],
                      fingerprint=man["fingerprint"],
                      cases=tuple(c["title"] for c in man["cases"]), cells=len(record["cells"]))


def _stderr(line: str) -> None:
    print(line, file=sys.stderr, flush=True)


__all__ = ["seal", "SealResult", "build_record", "prepare", "strip_volatile", "execute"]

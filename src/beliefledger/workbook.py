"""A case as an Excel workbook, and back: the layout the README documents.

Sheets (names matched without regard to case):

``case``
    Two columns, ``field`` and ``value``: title, question, analyst, notes,
    exhaustive, safety related, active scenario (optional; the title defaults
    to the file name).
``hypotheses``
    One row per hypothesis: ``hypothesis``, ``prior``, and optionally
    ``catch-all``, ``description``, ``where``, ``who``, ``when``, ``why``.
``scenarios``
    Optional. Column A holds labels: ``scenario`` (row 1, the scenario names
    across), then optional ``where`` / ``who`` / ``when`` / ``why`` / ``note``
    rows, then a row labelled ``hypothesis`` after which each row is a
    hypothesis with its prior in each scenario's column.
``evidence``
    Optional index, one row per item in update order: ``evidence``,
    ``sheet`` (the sheet holding its table), ``kind`` (``table``,
    ``likelihood evidence`` or ``conditional``), ``given``, ``observed``,
    ``shared source``, ``description``, ``where``, ``who``, ``when``,
    ``why``. Without it, every other sheet is an item named after its sheet.
one sheet per item
    ``state`` in A1 and the hypotheses across row 1; one row per state. A
    conditional item has ``given state`` in A1, ``state`` in B1.
``likelihoods``
    Instead of (or beside) the item sheets, one long table: ``evidence``,
    optional ``given state``, ``state``, ``hypothesis``, ``likelihood``.
``entry sources``, ``artefacts``, ``assumptions``
    Optional: sources of single entries, the files items rest on (name,
    bytes, SHA-256, who, when), and the recorded normalizations and rescales.
``more (JSON)``
    What the layout does not hold as tables (joint groups, analysis inputs),
    as JSON text in column A, so nothing is lost.
``register``
    Written for a reviewer to annotate; ignored on read.

Cells are read with openpyxl (values, not formulas: a formula counts with
the value the spreadsheet program saved) into pandas frames indexed by the
sheet's own row numbers and column letters, so every error names the
sheet, the cell in A1 notation and the fix. Numbers are written with every
digit (openpyxl's default keeps 16), so a round trip is exact. Control
characters, which a workbook cannot hold as such, are written in OOXML's
own ``_xHHHH_`` escape and read back. Columns whose header starts with
``#`` are ignored, for a reviewer's notes. Saves are atomic.

This module is longer than most: the reader and the writer of one layout
live side by side so that they change together.
"""

from __future__ import annotations

import io
import json
import re
import unicodedata
from collections.abc import Callable, Iterator, Mapping
from datetime import date, datetime, time
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from ._checks import SUM_TOL, check_name, check_probability, fmt_g
from .errors import CaseError, CaseTypeError, WorkbookError

FORMAT_NAME = "beliefledger case workbook"
LAYOUT_VERSION = 1
CASE, HYPOTHESES, SCENARIOS, EVIDENCE = "case", "hypotheses", "scenarios", "evidence"
LONG, ENTRY_SOURCES, ARTEFACTS = "likelihoods", "entry sources", "artefacts"
ASSUMPTIONS, MORE, REGISTER = "assumptions", "more (JSON)", "register"
SCENARIO_MORE = ("meaning", "basis")
EVIDENCE_MORE = ("uncertain",)
MORE_KEYS = {"joint_groups", "extras", "scenario_fields", "evidence_fields"}
RESERVED = (CASE, HYPOTHESES, SCENARIOS, EVIDENCE, LONG, ENTRY_SOURCES, ARTEFACTS, ASSUMPTIONS,
            MORE, REGISTER)
_RESERVED_KEYS = frozenset(n.casefold() for n in RESERVED)
KINDS = {"table": "table", "likelihoodevidence": "likelihood evidence",
         "conditional": "conditional"}
SOURCE_FIELDS = ("where", "who", "when", "why")
MAX_CELL = 32_767
"""Characters a cell holds (Excel's limit)."""
JSON_CHUNK = 30_000
SCENARIO_SUM_TOL = 1e-6
"""How far a scenario's priors may sum from 1 (as in case files)."""

_ESCAPED = re.compile(r"_x([0-9A-Fa-f]{4})_")
_ESCAPABLE = re.compile(r"_(?=x[0-9A-Fa-f]{4}_)")  # an underscore that would start an escape
_NOT_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\r\ud800-\udfff\ufffe\uffff]")
_BAD_TITLE = re.compile(r"[\\/*?:\[\]]")


# --------------------------------------------------------------------------- cell text


def escape_text(text: str) -> str:
    """Text as a workbook cell holds it: characters XML cannot carry in OOXML's
    ``_xHHHH_`` form, and a literal ``_xHHHH_`` protected as ``_x005F_xHHHH_``."""
    text = _ESCAPABLE.sub("_x005F_", text)
    return _NOT_XML.sub(lambda m: f"_x{ord(m.group(0)):04X}_", text)


def unescape_text(text: str) -> str:
    """The inverse of :func:`escape_text` (also what Excel writes for such characters)."""
    if "_x" not in text:
        return text
    return _ESCAPED.sub(lambda m: chr(int(m.group(1), 16)), text)


def _norm(label: Any) -> str:
    """A header or label compared loosely: lower case, letters and digits only."""
    return re.sub(r"[^0-9a-z]", "", str(label).lower()) if label is not None else ""


# --------------------------------------------------------------------------- reading


class _Sheet:
    """One worksheet's values as a frame indexed by row number and column letter."""

    def __init__(self, book: str, ws: Any) -> None:
        from openpyxl.utils import get_column_letter

        self.book = book
        self.title = ws.title
        rows = [list(r) for r in ws.iter_rows(values_only=True)]
        width = max((len(r) for r in rows), default=0)
        self.frame = pd.DataFrame([r + [None] * (width - len(r)) for r in rows],
                                  index=range(1, len(rows) + 1),
                                  columns=[get_column_letter(i + 1) for i in range(width)],
                                  dtype=object)

    def fail(self, ref: str | None, message: str) -> WorkbookError:
        where = f"workbook {self.book!r}, sheet {self.title!r}" + (f", cell {ref}" if ref else "")
        return WorkbookError(f"{where}: {message}", sheet=self.title, cell=ref)

    @property
    def empty(self) -> bool:
        return all(_blank(v) for v in self.frame.to_numpy().ravel())

    def value(self, row: int, col: str) -> Any:
        if row not in self.frame.index or col not in self.frame.columns:
            return None
        return self.frame.at[row, col]

    def next_col(self) -> str:
        from openpyxl.utils import get_column_letter

        return get_column_letter(len(self.frame.columns) + 1)

    def columns(self, fields: Mapping[str, str], required: tuple[str, ...] = (),
                header_row: int = 1, start_col: int = 0) -> dict[str, str]:
        """Field -> column letter from the header row (``fields``: normalized header ->
        field); unknown headers, repeated ones and missing required ones are errors."""
        found: dict[str, str] = {}
        for col in list(self.frame.columns)[start_col:]:
            head = self.value(header_row, col)
            if _blank(head):
                continue
            if isinstance(head, str) and head.strip().startswith("#"):
                continue  # a reviewer's or analyst's own column
            field = fields.get(_norm(head))
            if field is None:
                raise self.fail(f"{col}{header_row}",
                                f"unknown column {_show(head)}; the columns are "
                                f"{sorted(set(fields.values()))} (start a header with '#' "
                                "for a column beliefledger should ignore)")
            if field in found:
                raise self.fail(f"{col}{header_row}", f"column {field!r} appears twice "
                                f"(also in column {found[field]}); delete one")
            found[field] = col
        for field in required:
            if field not in found:
                raise self.fail(f"{self.next_col()}{header_row}",
                                f"no column headed {field!r}; add it to row {header_row}")
        return found

    def records(self, cols: Mapping[str, str], first: int = 2) -> Iterator[tuple[int, dict]]:
        """(row number, field -> value) for each row from ``first`` with any value."""
        for r in self.frame.index:
            if r < first:
                continue
            vals = {f: self.frame.at[r, c] for f, c in cols.items()}
            if all(_blank(v) for v in vals.values()):
                continue
            yield r, vals


def _blank(v: Any) -> bool:
    return v is None or (isinstance(v, str) and not v.strip())


def _show(v: Any) -> str:
    return repr(unescape_text(v) if isinstance(v, str) else v)[:80]


class _Reader:
    """Turns the sheets into a case dict (the serial form), checking each cell."""

    def __init__(self, path: Path, sheets: dict[str, _Sheet], strict: bool) -> None:
        self.path = path
        self.book = path.name
        self.sheets = sheets
        self.strict = strict
        self._used: list[dict[str, str]] = []  # item sheets the index refers to

    def sheet(self, name: str) -> _Sheet | None:
        return self.sheets.get(name.casefold())

    def need(self, name: str) -> _Sheet:
        sh = self.sheet(name)
        if sh is None:
            raise WorkbookError(f"workbook {self.book!r} has no sheet {name!r}; add a sheet "
                                f"named {name!r} with the columns 'hypothesis' and 'prior' "
                                f"(its sheets are {[s.title for s in self.sheets.values()]})",
                                sheet=name)
        return sh

    # cell converters ---------------------------------------------------------
    @staticmethod
    def text(sh: _Sheet, ref: str, v: Any, what: str) -> str:
        if v is None:
            return ""
        if isinstance(v, bool):
            raise sh.fail(ref, f"{what} is {v}; type text")
        if isinstance(v, str):
            out = unescape_text(v)
        elif isinstance(v, int):
            out = str(v)
        elif isinstance(v, float):
            out = str(int(v)) if v.is_integer() else repr(v)
        elif isinstance(v, datetime):
            out = v.date().isoformat() if v.time() == time() else v.isoformat()
        elif isinstance(v, date | time):
            out = v.isoformat()
        else:
            raise sh.fail(ref, f"{what} is {_show(v)}; type text")
        return out

    def name(self, sh: _Sheet, ref: str, v: Any, kind: str) -> str:
        if _blank(v):
            raise sh.fail(ref, f"the {kind} name is empty; type a name")
        try:
            return check_name(kind, self.text(sh, ref, v, f"the {kind} name"))
        except (CaseError, CaseTypeError) as exc:
            raise sh.fail(ref, str(exc)) from None

    @staticmethod
    def prob(sh: _Sheet, ref: str, v: Any, what: str) -> float:
        if _blank(v):
            raise sh.fail(ref, f"{what} is empty; type a probability between 0 and 1 (a "
                          "formula counts only with a value saved by a spreadsheet program)")
        if isinstance(v, str):
            s = unescape_text(v).strip()
            try:
                v = float(s[:-1]) / 100 if s.endswith("%") else float(s)
            except ValueError:
                raise sh.fail(ref, f"{what} is {_show(s)}, not a number; type a probability "
                              "between 0 and 1") from None
        if isinstance(v, bool) or not isinstance(v, int | float):
            raise sh.fail(ref, f"{what} is {_show(v)}, not a number; type a probability "
                          "between 0 and 1")
        try:
            return check_probability(what, v)
        except (CaseError, CaseTypeError) as exc:
            raise sh.fail(ref, str(exc)) from None

    @staticmethod
    def flag(sh: _Sheet, ref: str, v: Any, what: str, default: bool | None) -> bool | None:
        if _blank(v):
            return default
        if isinstance(v, bool):
            return v
        if isinstance(v, int | float) and v in (0, 1):
            return bool(v)
        if isinstance(v, str) and _norm(v) in ("yes", "y", "true", "no", "n", "false"):
            return _norm(v) in ("yes", "y", "true")
        raise sh.fail(ref, f"{what} is {_show(v)}; type yes or no (or TRUE / FALSE)")

    def source(self, sh: _Sheet, r: int, cols: Mapping[str, str], vals: Mapping) -> dict:
        return {f: self.text(sh, f"{cols[f]}{r}", vals[f], f"'{f}' of the source")
                for f in SOURCE_FIELDS if f in vals}

    # sheets ------------------------------------------------------------------
    def read(self) -> dict[str, Any]:
        d = self.case_fields()
        hyps = self.hypotheses()
        d["hypotheses"] = hyps
        names = [h["name"] for h in hyps]
        d["scenarios"] = self.scenarios(names)
        evidence = self.evidence(names)
        self.entry_sources(evidence, names)
        self.artefacts(evidence)
        d["evidence"] = list(evidence.values())
        d["assumptions"] = self.assumptions()
        more = self.more()
        for key, target in (("scenario_fields", d["scenarios"]), ("evidence_fields",
                                                                   d["evidence"])):
            fields = more.pop(key, {})
            by_name = {x["name"]: x for x in target}
            for name, extra in (fields.items() if isinstance(fields, dict) else []):
                if name not in by_name or not isinstance(extra, dict):
                    raise self.sheet(MORE).fail("A2", f"the JSON's {key} name {name!r:.60}, "
                                                "which no sheet defines; restore the sheet "
                                                "from the workbook beliefledger wrote")
                by_name[name].update(extra)
        d.update(more)
        return d

    def case_fields(self) -> dict[str, Any]:
        d: dict[str, Any] = {"title": self.path.stem or "case"}
        sh = self.sheet(CASE)
        if sh is None:
            return d
        fields = {"title": "title", "question": "question", "analyst": "analyst",
                  "notes": "notes", "exhaustive": "exhaustive",
                  "safetyrelated": "safety_related", "activescenario": "active_scenario",
                  "format": "format", "layoutversion": "layout_version", "field": "field"}
        for r in sh.frame.index:
            label, v = sh.value(r, "A"), sh.value(r, "B")
            if _blank(label) and _blank(v):
                continue
            key = fields.get(_norm(label))
            if key is None:
                raise sh.fail(f"A{r}", f"unknown field {_show(label)}; the fields are title, "
                              "question, analyst, notes, exhaustive, safety related, active "
                              "scenario")
            if key == "field":
                continue  # the header row
            if key == "format":
                if self.text(sh, f"B{r}", v, "format") != FORMAT_NAME:
                    raise sh.fail(f"B{r}", f"format is {_show(v)}; expected {FORMAT_NAME!r}")
            elif key == "layout_version":
                if v not in (LAYOUT_VERSION, str(LAYOUT_VERSION), float(LAYOUT_VERSION)):
                    raise sh.fail(f"B{r}", f"layout version {_show(v)} is not one this "
                                  f"beliefledger reads ({LAYOUT_VERSION}); upgrade beliefledger")
            elif key in ("exhaustive", "safety_related"):
                d[key] = self.flag(sh, f"B{r}", v, key.replace("_", " "), False)
            elif key in ("title", "active_scenario"):
                d[key] = self.name(sh, f"B{r}", v, key.replace("_", " "))
            else:
                d[key] = self.text(sh, f"B{r}", v, key)
        return d

    def hypotheses(self) -> list[dict[str, Any]]:
        sh = self.need(HYPOTHESES)
        cols = sh.columns({"hypothesis": "name", "name": "name", "prior": "prior",
                           "catchall": "catch_all", "description": "description",
                           **{f: f for f in SOURCE_FIELDS}}, required=("name", "prior"))
        out, rows = [], {}
        for r, vals in sh.records(cols):
            nm = self.name(sh, f"{cols['name']}{r}", vals["name"], "hypothesis")
            if nm in rows:
                raise sh.fail(f"{cols['name']}{r}", f"hypothesis {nm!r} is listed twice (also "
                              f"in row {rows[nm]}); names must be unique")
            rows[nm] = r
            h: dict[str, Any] = {"name": nm, "prior": self.prob(
                sh, f"{cols['prior']}{r}", vals["prior"], f"prior of hypothesis {nm!r}")}
            if "catch_all" in cols:
                ca = self.flag(sh, f"{cols['catch_all']}{r}", vals["catch_all"],
                               f"catch-all of {nm!r}", None)
                if ca is not None:
                    h["catch_all"] = ca
            if "description" in cols:
                h["description"] = self.text(sh, f"{cols['description']}{r}",
                                             vals["description"], f"description of {nm!r}")
            h["source"] = self.source(sh, r, cols, vals)
            out.append(h)
        if not out:
            raise sh.fail("A2", "no hypotheses; list one per row under the header")
        total = sum(h["prior"] for h in out)
        if self.strict and abs(total - 1) > SUM_TOL:
            col = cols["prior"]
            raise sh.fail(f"{col}{min(rows.values())}:{col}{max(rows.values())}",
                          f"the priors sum to {fmt_g(total)}, not 1 (within {SUM_TOL:g}); fix "
                          "them, or read with strict=False to keep them as typed (the ledger "
                          "flags the sum)")
        return out

    def _hyp_rows(self, sh: _Sheet, names: list[str], found: Mapping[str, Any], what: str,
                  ref: str) -> None:
        missing = [h for h in names if h not in found]
        if missing:
            raise sh.fail(ref, f"{what} has no entry for hypothesis(es) {missing[:6]}; give "
                          f"every hypothesis of sheet {HYPOTHESES!r}")

    def scenarios(self, names: list[str]) -> list[dict[str, Any]]:
        sh = self.sheet(SCENARIOS)
        if sh is None or sh.empty:
            return []
        if _norm(sh.value(1, "A")) != "scenario":
            raise sh.fail("A1", "expected the label 'scenario' (the scenario names go across "
                          "row 1)")
        cols = [c for c in list(sh.frame.columns)[1:] if not _blank(sh.value(1, c))]
        scen = {c: {"name": self.name(sh, f"{c}1", sh.value(1, c), "scenario"), "priors": {},
                    "source": {}} for c in cols}
        seen: dict[str, str] = {}
        for c, s in scen.items():
            if s["name"] in seen or s["name"] == "base":
                raise sh.fail(f"{c}1", f"scenario {s['name']!r} is reserved or appears twice "
                              "('base' is the hypotheses sheet's own priors)")
            seen[s["name"]] = c
        head = None
        for r in sh.frame.index:
            if r == 1:
                continue
            label = _norm(sh.value(r, "A"))
            if label == "hypothesis":
                head = r
                break
            if label in ("where", "who", "when", "why", "note"):
                for c, s in scen.items():
                    t = self.text(sh, f"{c}{r}", sh.value(r, c), f"{label} of {s['name']!r}")
                    if label == "note":
                        s["note"] = t
                    else:
                        s["source"][label] = t
            elif label:
                raise sh.fail(f"A{r}", f"unknown label {_show(sh.value(r, 'A'))}; above the "
                              "'hypothesis' row use where, who, when, why or note")
        if head is None:
            raise sh.fail(f"A{len(sh.frame.index) + 1}", "no row labelled 'hypothesis'; put it "
                          "above the rows of priors")
        known = set(names)
        rows: dict[str, int] = {}
        for r in sh.frame.index:
            if r <= head or all(_blank(sh.value(r, c)) for c in ["A", *cols]):
                continue
            h = self.name(sh, f"A{r}", sh.value(r, "A"), "hypothesis")
            if h not in known:
                raise sh.fail(f"A{r}", f"hypothesis {h!r} is not in sheet {HYPOTHESES!r}; "
                              "fix the name or add the hypothesis there")
            if h in rows:
                raise sh.fail(f"A{r}", f"hypothesis {h!r} is listed twice")
            rows[h] = r
            for c, s in scen.items():
                s["priors"][h] = self.prob(sh, f"{c}{r}", sh.value(r, c),
                                           f"prior of {h!r} in scenario {s['name']!r}")
        for c, s in scen.items():
            self._hyp_rows(sh, names, s["priors"], f"scenario {s['name']!r}", f"{c}{head}")
            total = sum(s["priors"].values())
            if abs(total - 1) > SCENARIO_SUM_TOL:
                raise sh.fail(f"{c}{min(rows.values())}:{c}{max(rows.values())}",
                              f"priors of scenario {s['name']!r} sum to {fmt_g(total)}, not 1; "
                              "fix them")
            s["priors"] = {h: s["priors"][h] for h in names}
        return list(scen.values())

    def evidence(self, names: list[str]) -> dict[str, dict[str, Any]]:
        index = self.sheet(EVIDENCE)
        long = self.long_tables(names)
        items: dict[str, dict[str, Any]] = {}
        if index is not None and not index.empty:
            cols = index.columns({"evidence": "name", "name": "name", "sheet": "sheet",
                                  "kind": "kind", "given": "given", "observed": "observed",
                                  "sharedsource": "shared_source",
                                  "description": "description",
                                  **{f: f for f in SOURCE_FIELDS}}, required=("name",))
            for r, vals in index.records(cols):
                ref = f"{cols['name']}{r}"
                nm = self.name(index, ref, vals["name"], "evidence")
                if nm in items:
                    raise index.fail(ref, f"evidence {nm!r} is listed twice")
                items[nm] = self.item_from_index(index, r, cols, vals, nm, names, long)
        else:
            for key, sh in self.sheets.items():
                if key in _RESERVED_KEYS or key.startswith("#") or sh.empty:
                    continue
                nm = self.name(sh, "A1", sh.title, "evidence")
                items[nm] = self.item(nm, {}, self.matrix(sh, nm, names, None))
            for nm, tab in long.items():
                if nm not in items:
                    items[nm] = self.item(nm, {}, tab)
            for nm, e in items.items():
                if "given" in e:
                    raise WorkbookError(f"workbook {self.book!r}: evidence {nm!r} is stated "
                                        "given another item ('given state' column); add a "
                                        f"sheet {EVIDENCE!r} naming its parent in 'given'",
                                        sheet=EVIDENCE)
            return items
        used = {m["sheet_key"] for m in self._used}
        for key, sh in self.sheets.items():
            if key in _RESERVED_KEYS or key.startswith("#") or key in used or sh.empty:
                continue
            raise sh.fail("A1", f"sheet {sh.title!r} is not named in the 'sheet' column of "
                          f"sheet {EVIDENCE!r}; add a row for its item, or start the sheet's "
                          "name with '#' to keep it out of the case")
        return items

    def item_from_index(self, index: _Sheet, r: int, cols: Mapping[str, str], vals: Mapping,
                        nm: str, names: list[str], long: Mapping[str, Any]) -> dict[str, Any]:
        kind_ref = f"{cols.get('kind', 'A')}{r}"
        kind = KINDS.get(_norm(vals.get("kind")) or "table")
        if kind is None:
            raise index.fail(kind_ref, f"kind {_show(vals.get('kind'))} of evidence {nm!r} "
                             f"is not one of {sorted(KINDS.values())}")
        given = None
        if not _blank(vals.get("given")):
            given = self.name(index, f"{cols['given']}{r}", vals["given"], "parent evidence")
            kind = "conditional"
        elif kind == "conditional":
            raise index.fail(kind_ref, f"evidence {nm!r} is conditional but names no item in "
                             "the 'given' column")
        sheet_name = self.text(index, f"{cols.get('sheet', 'A')}{r}", vals.get("sheet"), "sheet")
        if sheet_name and sheet_name.casefold() == LONG:
            if nm not in long:
                raise index.fail(f"{cols['sheet']}{r}", f"sheet {LONG!r} has no rows for "
                                 f"evidence {nm!r}")
            tab = long[nm]
        else:
            target = sheet_name or nm
            sh = self.sheet(target)
            if sh is None and not sheet_name and nm in long:
                tab = long[nm]
            elif sh is None:
                raise index.fail(f"{cols.get('sheet', cols['name'])}{r}",
                                 f"no sheet {target!r} holds the table of evidence {nm!r}; "
                                 f"add it, or name the sheet (or {LONG!r}) in the 'sheet' "
                                 "column")
            else:
                self._used.append({"sheet_key": sh.title.casefold()})
                tab = self.matrix(sh, nm, names, given)
        if (tab["given_states"] is not None) != (given is not None):
            raise index.fail(kind_ref, f"evidence {nm!r}: the index says "
                             f"{'given ' + repr(given) if given else 'not conditional'}, but "
                             f"its table {'has' if tab['given_states'] else 'has no'} "
                             "'given state' column; make them agree")
        meta = {k: vals.get(k) for k in vals}
        meta["_index"] = (index, r, cols, kind, given)
        return self.item(nm, meta, tab)

    def matrix(self, sh: _Sheet, nm: str, names: list[str], given: str | None
               ) -> dict[str, Any]:
        """An item's sheet: states down column A (after a 'given state' column for a
        conditional item), hypotheses across row 1."""
        first = _norm(sh.value(1, "A"))
        cond = first == "givenstate"
        if first not in ("state", "givenstate"):
            raise sh.fail("A1", f"expected 'state' (or 'given state' for a conditional item) "
                          f"heading the table of evidence {nm!r}, found {_show(sh.value(1, 'A'))}")
        state_col = "B" if cond else "A"
        if cond and _norm(sh.value(1, "B")) != "state":
            raise sh.fail("B1", "expected 'state' after 'given state'")
        known = set(names)
        hcols: dict[str, str] = {}
        for c in list(sh.frame.columns)[(2 if cond else 1):]:
            head = sh.value(1, c)
            if _blank(head) or (isinstance(head, str) and head.strip().startswith("#")
                                and unescape_text(head).strip() not in known):
                continue  # a '#' column of notes (unless a hypothesis is called so)
            h = self.name(sh, f"{c}1", head, "hypothesis")
            if h not in known:
                raise sh.fail(f"{c}1", f"hypothesis {h!r} is not in sheet {HYPOTHESES!r}; fix "
                              "the heading or add the hypothesis there")
            if h in hcols:
                raise sh.fail(f"{c}1", f"hypothesis {h!r} heads two columns ({hcols[h]} and "
                              f"{c}); delete one")
            hcols[h] = c
        self._hyp_rows(sh, names, hcols, f"the table of evidence {nm!r}", f"{sh.next_col()}1")
        cells: dict[tuple[str | None, str], dict[str, float]] = {}
        rows: dict[tuple[str | None, str], int] = {}
        for r in sh.frame.index:
            if r == 1 or all(_blank(sh.value(r, c)) for c in [state_col, *hcols.values()]):
                continue
            ps = self.name(sh, f"A{r}", sh.value(r, "A"), f"state of {given!r}") if cond \
                else None
            s = self.name(sh, f"{state_col}{r}", sh.value(r, state_col), f"state of {nm!r}")
            if (ps, s) in rows:
                raise sh.fail(f"{state_col}{r}", f"state {s!r} is listed twice"
                              + (f" for {given!r} = {ps!r}" if cond else "")
                              + f" (also in row {rows[(ps, s)]})")
            rows[(ps, s)] = r
            cells[(ps, s)] = {h: self.prob(sh, f"{c}{r}", sh.value(r, c),
                                           f"P({s!r} | {h!r}) of evidence {nm!r}")
                              for h, c in hcols.items()}
        if not cells:
            raise sh.fail("A2", f"the table of evidence {nm!r} has no states; one row per state")
        return self._table(nm, names, cells, rows, lambda h: hcols[h], sh)

    @staticmethod
    def _table(nm: str, names: list[str], cells: Mapping, rows: Mapping,
               col_of: Callable[[str], str], sh: _Sheet) -> dict[str, Any]:
        parents = list(dict.fromkeys(ps for ps, _ in cells))
        states = list(dict.fromkeys(s for _, s in cells))
        for ps in parents:
            for s in states:
                if (ps, s) not in cells:
                    raise sh.fail(f"A{max(rows.values()) + 1}",
                                  f"evidence {nm!r} has no row for state {s!r} given state "
                                  f"{ps!r}; add one (every pair of states needs a row)")
        cond = parents != [None]
        tables = {ps: {h: [cells[(ps, s)][h] for s in states] for h in names} for ps in parents}
        return {"states": states, "given_states": parents if cond else None, "tables": tables,
                "rows": rows, "col_of": col_of, "sheet": sh}

    def long_tables(self, names: list[str]) -> dict[str, dict[str, Any]]:
        sh = self.sheet(LONG)
        if sh is None or sh.empty:
            return {}
        cols = sh.columns({"evidence": "name", "givenstate": "given_state", "state": "state",
                           "hypothesis": "hypothesis", "likelihood": "p", "p": "p",
                           "probability": "p"}, required=("name", "state", "hypothesis", "p"))
        known = set(names)
        found: dict[str, dict] = {}
        for r, vals in sh.records(cols):
            nm = self.name(sh, f"{cols['name']}{r}", vals["name"], "evidence")
            ps = self.name(sh, f"{cols['given_state']}{r}", vals["given_state"], "given state") \
                if not _blank(vals.get("given_state")) else None
            s = self.name(sh, f"{cols['state']}{r}", vals["state"], "state")
            h = self.name(sh, f"{cols['hypothesis']}{r}", vals["hypothesis"], "hypothesis")
            if h not in known:
                raise sh.fail(f"{cols['hypothesis']}{r}", f"hypothesis {h!r} is not in sheet "
                              f"{HYPOTHESES!r}; fix the name or add the hypothesis there")
            entry = found.setdefault(nm, {"cells": {}, "rows": {}, "at": {}})
            if (ps, s, h) in entry["at"]:
                raise sh.fail(f"{cols['p']}{r}", f"P({s!r} | {h!r}) of evidence {nm!r} is "
                              f"given twice (also in row {entry['at'][(ps, s, h)]})")
            entry["at"][(ps, s, h)] = r
            entry["rows"].setdefault((ps, s), r)
            entry["cells"].setdefault((ps, s), {})[h] = self.prob(
                sh, f"{cols['p']}{r}", vals["p"], f"P({s!r} | {h!r}) of evidence {nm!r}")
        out = {}
        for nm, e in found.items():
            for key, row in e["cells"].items():
                miss = [h for h in names if h not in row]
                if miss:
                    raise sh.fail(f"{cols['hypothesis']}{e['rows'][key]}",
                                  f"evidence {nm!r}, state {key[1]!r}: no row for hypothesis(es) "
                                  f"{miss[:6]}; give one row per hypothesis")
            out[nm] = self._table(nm, names, e["cells"], e["rows"], lambda h: cols["p"], sh)
            out[nm]["cell_rows"] = e["at"]
        return out

    def item(self, nm: str, meta: Mapping[str, Any], tab: dict[str, Any]) -> dict[str, Any]:
        """The serial form of one item, its observed state and column sums checked."""
        states = tab["states"]
        index = meta.get("_index")
        kind = index[3] if index else "table"
        e: dict[str, Any] = {"name": nm, "states": states,
                             "likelihood_evidence": kind == "likelihood evidence"}
        if tab["given_states"] is None:
            e["likelihoods"] = tab["tables"][None]
        else:
            first = tab["tables"][tab["given_states"][0]]
            # the margin over the parent is recomputed from the parent's table on load
            e["likelihoods"] = {h: [0.0] * len(states) for h in first}
            e["given"] = index[4] if index else ""
            e["conditional_likelihoods"] = tab["tables"]
        if index:
            sh, r, cols, _, _ = index
            if not _blank(meta.get("observed")):
                ref = f"{cols['observed']}{r}"
                obs = self.name(sh, ref, meta["observed"], "observed state")
                if obs not in states:
                    raise sh.fail(ref, f"observed state {obs!r} of evidence {nm!r} is not among "
                                  f"its states {states[:8]}; type one of them or leave it empty")
                e["observed"] = obs
            if not _blank(meta.get("shared_source")):
                e["shared_source"] = self.name(sh, f"{cols['shared_source']}{r}",
                                               meta["shared_source"], "shared-source tag")
            if "description" in cols:
                e["description"] = self.text(sh, f"{cols['description']}{r}",
                                             meta.get("description"), f"description of {nm!r}")
            e["source"] = self.source(sh, r, cols, meta)
            if kind == "likelihood evidence" and (len(states) != 1 or
                                                  e.get("observed") not in (None, states[0])):
                raise sh.fail(f"{cols.get('kind', cols['name'])}{r}",
                              f"evidence {nm!r} is likelihood evidence: its table has one row, "
                              "the observed state, and that state goes in 'observed'")
        if self.strict and kind != "likelihood evidence":
            self._check_sums(nm, tab)
        return e

    @staticmethod
    def _check_sums(nm: str, tab: Mapping[str, Any]) -> None:
        sh, rows = tab["sheet"], tab["rows"]
        for ps, table in tab["tables"].items():
            for h, col in table.items():
                total = float(np.sum(col))
                if abs(total - 1) > SUM_TOL:
                    keys = [(ps, s) for s in tab["states"]]
                    c = tab["col_of"](h)
                    if "cell_rows" in tab:
                        refs = [f"{c}{tab['cell_rows'][(ps, s, h)]}" for s in tab["states"]]
                        ref = ", ".join(refs[:6]) + (", ..." if len(refs) > 6 else "")
                    else:
                        ref = f"{c}{min(rows[k] for k in keys)}:{c}{max(rows[k] for k in keys)}"
                    given = f" given state {ps!r}" if ps is not None else ""
                    raise sh.fail(ref, f"likelihoods of evidence {nm!r}{given} under hypothesis "
                                  f"{h!r} sum to {total:.6g} over its states, not 1 (within "
                                  f"{SUM_TOL:g}); fix the column, mark the item 'likelihood "
                                  "evidence' if only the ratios matter, or read with "
                                  "strict=False to keep it as typed (the ledger flags it)")

    def entry_sources(self, evidence: dict[str, dict[str, Any]], names: list[str]) -> None:
        sh = self.sheet(ENTRY_SOURCES)
        if sh is None or sh.empty:
            return
        cols = sh.columns({"evidence": "name", "state": "state", "hypothesis": "hypothesis",
                           **{f: f for f in SOURCE_FIELDS}},
                          required=("name", "state", "hypothesis"))
        for r, vals in sh.records(cols):
            nm = self.name(sh, f"{cols['name']}{r}", vals["name"], "evidence")
            if nm not in evidence:
                raise sh.fail(f"{cols['name']}{r}", f"evidence {nm!r} is not an item of this "
                              "workbook; fix the name")
            e = evidence[nm]
            s = self.name(sh, f"{cols['state']}{r}", vals["state"], "state")
            if s not in e["states"]:
                raise sh.fail(f"{cols['state']}{r}", f"evidence {nm!r} has no state {s!r}; its "
                              f"states are {e['states'][:8]}")
            h = self.name(sh, f"{cols['hypothesis']}{r}", vals["hypothesis"], "hypothesis")
            if h not in names:
                raise sh.fail(f"{cols['hypothesis']}{r}", f"hypothesis {h!r} is not in sheet "
                              f"{HYPOTHESES!r}")
            es = e.setdefault("entry_sources", [])
            if any(x["state"] == s and x["hypothesis"] == h for x in es):
                raise sh.fail(f"{cols['name']}{r}", f"the source of P({s!r} | {h!r}) of "
                              f"evidence {nm!r} is given twice")
            es.append({"state": s, "hypothesis": h, "source": self.source(sh, r, cols, vals)})

    def artefacts(self, evidence: dict[str, dict[str, Any]]) -> None:
        sh = self.sheet(ARTEFACTS)
        if sh is None or sh.empty:
            return
        cols = sh.columns({"evidence": "item", "file": "name", "bytes": "size",
                           "sha256": "sha256", "attachedby": "who", "who": "who",
                           "attachedat": "when", "attachedatutc": "when", "when": "when",
                           "note": "note", "copy": "copy"},
                          required=("item", "name", "size", "sha256", "who", "when"))
        from .case.artefacts import artefact_from_dict

        for r, vals in sh.records(cols):
            nm = self.name(sh, f"{cols['item']}{r}", vals["item"], "evidence")
            if nm not in evidence:
                raise sh.fail(f"{cols['item']}{r}", f"evidence {nm!r} is not an item of this "
                              "workbook; fix the name")
            size = vals["size"]
            if isinstance(size, float) and size.is_integer():
                size = int(size)
            elif isinstance(size, str) and size.strip().isdigit():
                size = int(size.strip())
            raw = {"name": self.text(sh, f"{cols['name']}{r}", vals["name"], "file"),
                   "size": size,
                   "sha256": self.text(sh, f"{cols['sha256']}{r}", vals["sha256"], "sha256"),
                   "who": self.text(sh, f"{cols['who']}{r}", vals["who"], "attached by"),
                   "when": self.text(sh, f"{cols['when']}{r}", vals["when"], "attached at")}
            for f in ("note", "copy"):
                if f in cols:
                    raw[f] = self.text(sh, f"{cols[f]}{r}", vals[f], f)
            try:
                art = artefact_from_dict(raw, f"artefact of evidence {nm!r}")
            except (CaseError, CaseTypeError) as exc:
                raise sh.fail(f"A{r}", f"{exc} (row {r})") from None
            evidence[nm].setdefault("artefacts", []).append(art.to_dict())

    def assumptions(self) -> list[dict[str, str]]:
        sh = self.sheet(ASSUMPTIONS)
        if sh is None or sh.empty:
            return []
        cols = sh.columns({"n": "n", "kind": "kind", "target": "target", "detail": "detail"},
                          required=("kind", "target", "detail"))
        return [{f: self.text(sh, f"{cols[f]}{r}", vals[f], f) for f in ("kind", "target",
                                                                          "detail")}
                for r, vals in sh.records(cols)]

    def more(self) -> dict[str, Any]:
        sh = self.sheet(MORE)
        if sh is None or sh.empty:
            return {}
        text = unescape_text("".join(str(sh.value(r, "A")) for r in sh.frame.index
                                     if r > 1 and sh.value(r, "A") is not None))

        def refuse(name: str) -> Any:
            raise sh.fail("A2", f"the JSON holds {name}, which is not a number; it was edited "
                          "by hand: restore it from the case file")

        try:
            data = json.loads(text, parse_constant=refuse) if text.strip() else {}
        except json.JSONDecodeError as exc:
            raise sh.fail("A2", f"the JSON text in column A is damaged ({exc.msg} at character "
                          f"{exc.pos}); restore the sheet from the workbook beliefledger wrote"
                          ) from None
        if not isinstance(data, dict) or set(data) - MORE_KEYS:
            raise sh.fail("A2", f"the JSON must be an object with some of {sorted(MORE_KEYS)}; "
                          "restore the sheet from the workbook beliefledger wrote")
        return data


def read_workbook(path: str | Path, *, strict: bool = True) -> Any:
    """The case a workbook holds (see the module docstring for the layout).

    Parameters
    ----------
    path : path
        An ``.xlsx`` workbook.
    strict : bool
        Refuse priors and likelihood columns that do not sum to 1 (the default:
        a workbook is a whole table typed at once). ``strict=False`` keeps them as
        typed, as a case file keeps a part-way edit, and the ledger flags them.

    Raises
    ------
    WorkbookError
        Naming the sheet, the cell (A1 notation) and the fix. Nothing is made
        when a read fails.
    """
    from .case import Case

    p = Path(path)
    try:
        from openpyxl import load_workbook
    except ImportError as exc:
        raise ImportError("reading a workbook needs openpyxl; install it with pip install "
                          "'beliefledger[excel]'") from exc
    if not p.is_file():
        raise WorkbookError(f"no workbook at {str(p)!r}")
    try:
        wb = load_workbook(p, data_only=True)
    except Exception as exc:  # zipfile, XML and openpyxl's own errors alike
        raise WorkbookError(f"{str(p)!r} cannot be read as an Excel workbook (.xlsx): "
                            f"{type(exc).__name__}: {exc}; save it from the spreadsheet "
                            "program as an Excel workbook") from None
    try:
        sheets: dict[str, _Sheet] = {ws.title.casefold(): _Sheet(p.name, ws)
                                     for ws in wb.worksheets}
    finally:
        wb.close()
    data = _Reader(p, sheets, strict).read()
    try:
        return Case.from_dict(data)
    except (CaseError, CaseTypeError) as exc:
        raise WorkbookError(f"workbook {p.name!r}: {exc}") from None


# --------------------------------------------------------------------------- writing


def _cell(ws: Any, row: int, col: int, value: Any) -> None:
    """Write one value: text escaped (and never taken for a formula), floats with every
    digit, booleans as TRUE / FALSE."""
    c = ws.cell(row=row, column=col)
    if value is None or value == "":
        return
    if isinstance(value, bool):
        c.value = value
    elif isinstance(value, int | float | np.integer | np.floating):
        num = float(value) if isinstance(value, float | np.floating) else int(value)
        c.value = repr(num)
        c.data_type = "n"  # openpyxl itself would round floats to 16 digits
    else:
        text = escape_text(str(value))
        if len(text) > MAX_CELL:
            raise CaseError(f"text of {len(text):,} characters (after escaping) does not fit "
                            f"a workbook cell ({MAX_CELL:,}); shorten it or save the case as "
                            "JSON")
        c.value = text
        c.data_type = "s"  # text that starts with '=' stays text


def _rows(ws: Any, header: list[str], rows: list[list[Any]]) -> None:
    from openpyxl.styles import Font

    for j, h in enumerate(header, start=1):
        _cell(ws, 1, j, h)
        ws.cell(row=1, column=j).font = Font(bold=True)
    for i, row in enumerate(rows, start=2):
        for j, v in enumerate(row, start=1):
            _cell(ws, i, j, v)
    ws.freeze_panes = "A2"
    for j, h in enumerate(header, start=1):
        from openpyxl.utils import get_column_letter

        ws.column_dimensions[get_column_letter(j)].width = max(10, min(40, len(h) + 4))


def _src(s: Mapping[str, str]) -> list[str]:
    return [s.get(f, "") for f in SOURCE_FIELDS]


def sheet_title(name: str, taken: set[str]) -> str:
    """A sheet title for an item: Excel's forbidden characters and control characters
    replaced, at most 31 characters, unique (case-insensitively) among ``taken``."""
    t = "".join("_" if (_BAD_TITLE.match(ch) or unicodedata.category(ch) in ("Cc", "Cf", "Cs",
                                                                              "Zl", "Zp"))
                else ch for ch in name).strip().strip("'").strip() or "item"
    base = t[:31]
    cand, n = base, 1
    while cand.casefold() in taken or cand.casefold() == "history":
        n += 1
        suffix = f" ({n})"
        cand = base[:31 - len(suffix)] + suffix
    taken.add(cand.casefold())
    return cand


def build_workbook(case: Any, *, layout: str = "sheets") -> bytes:
    """The workbook of ``case`` as ``.xlsx`` bytes (see :func:`write_workbook`)."""
    from openpyxl import Workbook
    from openpyxl.styles import Font, PatternFill

    if layout not in ("sheets", "long"):
        raise CaseError(f"layout {layout!r} is not 'sheets' (one sheet per evidence item) or "
                        "'long' (one table of every likelihood)")
    d = case.to_dict()
    names = [h["name"] for h in d["hypotheses"]]
    wb = Workbook()
    ws = wb.active
    ws.title = CASE
    fields = [("format", FORMAT_NAME), ("layout version", LAYOUT_VERSION),
              ("title", d["title"]), ("question", d["question"]), ("analyst", d["analyst"]),
              ("notes", d["notes"]), ("exhaustive", d["exhaustive"]),
              ("safety related", d["safety_related"]), ("active scenario", d["active_scenario"])]
    _rows(ws, ["field", "value"], [list(f) for f in fields])
    ws.column_dimensions["B"].width = 60

    _rows(wb.create_sheet(HYPOTHESES),
          ["hypothesis", "prior", "catch-all", "description", *SOURCE_FIELDS],
          [[h["name"], h["prior"], h["catch_all"], h["description"], *_src(h["source"])]
           for h in d["hypotheses"]])

    if d["scenarios"]:
        ws = wb.create_sheet(SCENARIOS)
        sc = d["scenarios"]
        grid = [["scenario", *[s["name"] for s in sc]],
                *[[f, *[s["source"].get(f, "") for s in sc]] for f in SOURCE_FIELDS],
                ["note", *[s["note"] for s in sc]], ["hypothesis", *["prior"] * len(sc)],
                *[[h, *[s["priors"][h] for s in sc]] for h in names]]
        for i, row in enumerate(grid, start=1):
            for j, v in enumerate(row, start=1):
                _cell(ws, i, j, v)
        for r in (1, 7):
            for j in range(1, len(sc) + 2):
                ws.cell(row=r, column=j).font = Font(bold=True)
        ws.freeze_panes = "B8"

    taken = {n.casefold() for n in RESERVED}
    index_rows, sheets_of = [], {}
    for e in d["evidence"]:
        kind = ("conditional" if "given" in e else
                "likelihood evidence" if e["likelihood_evidence"] else "table")
        sheets_of[e["name"]] = LONG if layout == "long" else sheet_title(e["name"], taken)
        index_rows.append([e["name"], sheets_of[e["name"]], kind, e.get("given", ""),
                           e["observed"], e["shared_source"], e["description"],
                           *_src(e["source"])])
    _rows(wb.create_sheet(EVIDENCE),
          ["evidence", "sheet", "kind", "given", "observed", "shared source", "description",
           *SOURCE_FIELDS], index_rows)
    long_rows = []
    for e in d["evidence"]:
        blocks = (e["conditional_likelihoods"].items() if "given" in e
                  else [(None, e["likelihoods"])])
        if layout == "long":
            long_rows += [[e["name"], ps, s, h, tab[h][k]] for ps, tab in blocks
                          for k, s in enumerate(e["states"]) for h in names]
            continue
        lead = ["given state", "state"] if "given" in e else ["state"]
        _rows(wb.create_sheet(sheets_of[e["name"]]), [*lead, *names],
              [[*([ps] if ps is not None else []), s, *[tab[h][k] for h in names]]
               for ps, tab in blocks for k, s in enumerate(e["states"])])
    if long_rows:
        has_given = any(r[1] is not None for r in long_rows)
        _rows(wb.create_sheet(LONG),
              ["evidence", *(["given state"] if has_given else []), "state", "hypothesis",
               "likelihood"],
              [[r[0], *([r[1]] if has_given else []), *r[2:]] for r in long_rows])

    entry = [[e["name"], x["state"], x["hypothesis"], *_src(x["source"])]
             for e in d["evidence"] for x in e["entry_sources"]]
    if entry:
        _rows(wb.create_sheet(ENTRY_SOURCES), ["evidence", "state", "hypothesis",
                                               *SOURCE_FIELDS], entry)
    arts = [[e["name"], a["name"], a["size"], a["sha256"], a["who"], a["when"], a["note"],
             a["copy"]] for e in d["evidence"] for a in e.get("artefacts", [])]
    if arts:
        _rows(wb.create_sheet(ARTEFACTS), ["evidence", "file", "bytes", "sha256",
                                           "attached by", "attached at (UTC)", "note", "copy"],
              arts)
    if d["assumptions"]:
        # the number keeps a row whose fields are all empty (it was recorded so)
        _rows(wb.create_sheet(ASSUMPTIONS), ["n", "kind", "target", "detail"],
              [[i, a["kind"], a["target"], a["detail"]]
               for i, a in enumerate(d["assumptions"], start=1)])
    more = {k: d[k] for k in ("joint_groups", "extras") if d.get(k)}
    # fields of scenarios and items the tables do not lay out (a scenario's declared
    # meaning, an uncertain observation), so the round trip stays lossless
    sc_fields = {sc["name"]: {k: sc[k] for k in SCENARIO_MORE if k in sc}
                 for sc in d["scenarios"] if any(k in sc for k in SCENARIO_MORE)}
    ev_fields = {e["name"]: {k: e[k] for k in EVIDENCE_MORE if k in e}
                 for e in d["evidence"] if any(k in e for k in EVIDENCE_MORE)}
    if sc_fields:
        more["scenario_fields"] = sc_fields
    if ev_fields:
        more["evidence_fields"] = ev_fields
    if more:
        ws = wb.create_sheet(MORE)
        _cell(ws, 1, 1, "JSON of the parts of the case this workbook does not lay out as "
                        "tables (joint groups, analysis inputs); kept so that nothing is "
                        "lost. Edit them in beliefledger, not here.")
        # ASCII JSON: control characters arrive as \u escapes; the cells are joined
        # before the one unescape on read, so a cut may fall anywhere
        text = escape_text(json.dumps(more, ensure_ascii=True, allow_nan=False))
        for i in range(0, len(text), JSON_CHUNK):
            c = ws.cell(row=2 + i // JSON_CHUNK, column=1)
            c.value = text[i:i + JSON_CHUNK]
            c.data_type = "s"
    reg = wb.create_sheet(REGISTER)
    _register(reg, d, names)
    reg.sheet_properties.tabColor = "C9A227"
    fill = PatternFill("solid", fgColor="FFF4C2")
    for row in reg.iter_rows(min_row=1, min_col=11, max_col=12):
        for c in row:
            c.fill = fill
    buf = io.BytesIO()
    wb.save(buf)
    return buf.getvalue()


def _register(ws: Any, d: Mapping[str, Any], names: list[str]) -> None:
    """The assumption register for a reviewer: every prior and likelihood with its
    source, and two empty columns to annotate (this sheet is not read back)."""
    rows = [["prior", "base", "", "", h["name"], h["prior"], *_src(h["source"]), "", ""]
            for h in d["hypotheses"]]
    for s in d["scenarios"]:
        rows += [["prior", s["name"], "", "", h, s["priors"][h], *_src(s["source"]), "", ""]
                 for h in names]
    for e in d["evidence"]:
        own = {(x["state"], x["hypothesis"]): x["source"] for x in e["entry_sources"]}
        for k, st in enumerate(e["states"]):
            for h in names:
                rows.append(["likelihood", "", e["name"], st, h, e["likelihoods"][h][k],
                             *_src(own.get((st, h), e["source"])), "", ""])
    rows += [[f"recorded: {a['kind']}", "", a["target"], "", "", "", "", "", "", a["detail"],
              "", ""] for a in d["assumptions"]]
    _rows(ws, ["entry", "scenario", "evidence", "state", "hypothesis", "value", *SOURCE_FIELDS,
               "reviewer comment", "reviewer"], rows)
    ws.column_dimensions["K"].width = 40


def write_workbook(case: Any, path: str | Path, *, layout: str = "sheets") -> Path:
    """Write ``case`` as an ``.xlsx`` workbook in the layout :func:`read_workbook` reads,
    atomically (a temporary file, then a rename), plus a ``register`` sheet for a
    reviewer to annotate. ``layout="long"`` puts every likelihood in one long sheet
    instead of one sheet per item (for cases with many items)."""
    from .casefile import atomic_save_bytes

    try:
        import openpyxl  # noqa: F401
    except ImportError as exc:
        raise ImportError("writing a workbook needs openpyxl; install it with pip install "
                          "'beliefledger[excel]'") from exc
    return atomic_save_bytes(path, build_workbook(case, layout=layout))


__all__ = ["read_workbook", "write_workbook", "build_workbook", "escape_text", "unescape_text",
           "sheet_title", "FORMAT_NAME", "LAYOUT_VERSION", "RESERVED"]

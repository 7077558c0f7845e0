"""Exception types. Every error a user can cause is a ``ValueError`` (or
``TypeError``) subclass whose message names the item, the value and the fix."""

from __future__ import annotations


class CaseError(ValueError):
    """A case, an edit or an analysis input is invalid; the case is unchanged."""


class CaseTypeError(TypeError):
    """An input has the wrong type (e.g. a string where a probability belongs)."""


class CaseFileError(CaseError):
    """A case file cannot be read: bad JSON, wrong schema version, bad field."""


class WorkbookError(CaseFileError):
    """A workbook cannot be read as a case; the message names the sheet, the cell (A1
    notation) and the fix. ``sheet`` and ``cell`` hold them (``None`` when the problem
    is the whole workbook)."""

    def __init__(self, message: str, *, sheet: str | None = None,
                 cell: str | None = None) -> None:
        super().__init__(message)
        self.sheet = sheet
        self.cell = cell


class RecordError(CaseError):
    """A notebook or record cannot be used: unreadable, malformed or not a record."""


class RecordNotIntact(Exception):
    """Signing was refused because the record fails its integrity check (exit code 1)."""


__all__ = ["CaseError", "CaseTypeError", "CaseFileError", "WorkbookError", "RecordError",
           "RecordNotIntact"]

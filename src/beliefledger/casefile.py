"""JSON case files: a versioned envelope, atomic saves, validated loads.

A case file is UTF-8 JSON::

    {"format": "beliefledger-case", "schema_version": 3, "case": {...}}

Loading never evaluates or unpickles anything: it parses JSON (NaN and
Infinity refused) and rebuilds the case through its own validating
constructors, so a file can hold nothing a user could not have typed.
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from ._files import atomic_write_bytes
from .case import Case
from .case.serial import SCHEMA_VERSION, upgrade
from .errors import CaseError, CaseFileError, CaseTypeError

FORMAT = "beliefledger-case"
READABLE_VERSIONS = (1, 2, 3)
"""Schema versions this reader takes (older ones are upgraded on load)."""
MAX_FILE_BYTES = 512 * 1024 * 1024


def envelope(case: Case) -> dict[str, Any]:
    """The case wrapped in its versioned envelope (what a case file holds)."""
    return {"format": FORMAT, "schema_version": SCHEMA_VERSION, "case": case.to_dict()}


def dumps(case: Case) -> str:
    """Canonical JSON text of a case file (sorted keys are not used: order is meaningful)."""
    return json.dumps(envelope(case), indent=1, ensure_ascii=False, allow_nan=False) + "\n"


def atomic_write_text(path: str | Path, text: str) -> Path:
    """Write ``text`` to ``path`` atomically as UTF-8: a temporary file in the same folder,
    flushed and fsynced, then renamed over the target. A crash at any moment leaves
    either the old file or the new one, never a half-written file."""
    return atomic_write_bytes(_existing_folder(path), text.encode("utf-8"))


def atomic_save_bytes(path: str | Path, data: bytes) -> Path:
    """:func:`atomic_write_text` for bytes (a workbook, a PDF)."""
    return atomic_write_bytes(_existing_folder(path), data)


def _existing_folder(path: str | Path) -> Path:
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise CaseFileError(f"cannot save to {str(target)!r}: folder {str(folder)!r} does not exist")
    return target


def save_case(case: Case, path: str | Path) -> Path:
    """Save ``case`` to ``path`` atomically (JSON, schema version 1)."""
    return atomic_write_text(path, dumps(case))


def _refuse_constant(name: str) -> Any:
    raise CaseFileError(f"case file holds {name}, which is not a number JSON allows; "
                        "replace it with a probability between 0 and 1")


def loads(text: str | bytes, *, origin: str = "case file") -> Case:
    """Parse case-file JSON text and rebuild the case (validated)."""
    if isinstance(text, bytes):
        try:
            text = text.decode("utf-8")
        except UnicodeDecodeError as exc:
            raise CaseFileError(f"{origin} is not UTF-8 text (byte {exc.start}); "
                                "save it as UTF-8 JSON") from None
    try:
        data = json.loads(text, parse_constant=_refuse_constant)
    except RecursionError:
        raise CaseFileError(f"{origin} is nested too deeply to be a case file") from None
    except json.JSONDecodeError as exc:
        raise CaseFileError(f"{origin} is not valid JSON: {exc.msg} at line {exc.lineno}, "
                            f"column {exc.colno}; was it truncated or edited by hand?") from None
    except ValueError as exc:  # e.g. an integer longer than Python converts
        raise CaseFileError(f"{origin} is not valid JSON for a case file: {exc}") from None
    return from_envelope(data, origin=origin)


def from_envelope(data: Any, *, origin: str = "case file") -> Case:
    if not isinstance(data, Mapping):
        raise CaseFileError(f"{origin} must hold a JSON object, got {type(data).__name__}")
    fmt = data.get("format")
    if fmt != FORMAT:
        raise CaseFileError(f"{origin} has format {fmt!r}; expected {FORMAT!r} "
                            "(is this a beliefledger case file?)")
    ver = data.get("schema_version")
    if isinstance(ver, bool) or not isinstance(ver, int):
        raise CaseFileError(f"{origin} has schema_version {ver!r}; expected the integer "
                            f"{SCHEMA_VERSION}")
    if ver not in READABLE_VERSIONS:
        hint = ("it was written by a newer beliefledger; upgrade to read it"
                if ver > SCHEMA_VERSION else "no reader for that version exists")
        raise CaseFileError(f"{origin} has schema_version {ver}, this beliefledger reads "
                            f"versions {list(READABLE_VERSIONS)}: {hint}")
    extra = set(data) - {"format", "schema_version", "case"}
    if extra:
        raise CaseFileError(f"{origin} has unknown top-level key(s) {sorted(extra)}")
    if "case" not in data:
        raise CaseFileError(f"{origin} has no 'case' object")
    body = data["case"]
    if ver < SCHEMA_VERSION and isinstance(body, Mapping):
        body = upgrade(body, ver)
    try:
        return Case.from_dict(body)
    except CaseFileError:
        raise
    except (CaseError, CaseTypeError) as exc:
        raise CaseFileError(f"{origin}: {exc}") from None


def load_case(path: str | Path) -> Case:
    """Load and validate a case file written by :func:`save_case`."""
    p = Path(path)
    try:
        size = p.stat().st_size
    except FileNotFoundError:
        raise CaseFileError(f"no case file at {str(p)!r}") from None
    except OSError as exc:
        raise CaseFileError(f"cannot read case file {str(p)!r}: {exc.strerror}") from None
    if p.is_dir():
        raise CaseFileError(f"{str(p)!r} is a folder, not a case file")
    if size > MAX_FILE_BYTES:
        raise CaseFileError(f"case file {str(p)!r} is {size:,} bytes, over the "
                            f"{MAX_FILE_BYTES:,}-byte limit")
    return loads(p.read_bytes(), origin=f"case file {str(p)!r}")


__all__ = ["save_case", "load_case", "loads", "dumps", "envelope", "from_envelope",
           "atomic_write_text", "atomic_save_bytes", "FORMAT", "SCHEMA_VERSION"]

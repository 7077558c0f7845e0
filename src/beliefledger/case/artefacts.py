"""Artefacts: the files evidence items rest on, known by name, size and SHA-256.

:meth:`Case.attach` records a file's digest with the evidence item it
supports (the chain of custody an investigator is asked for); the file stays
where it is unless a copy is asked for. :func:`check_files` compares the
files in a folder with the recorded digests, for ``beliefledger verify
--artefacts DIR``. Standard library only.
"""

from __future__ import annotations

import hashlib
import os
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from .._checks import check_name, check_text
from .._files import atomic_file
from ..errors import CaseError, CaseFileError
from .members import Artefact

CHUNK = 1 << 20
_HEX64 = re.compile(r"[0-9a-f]{64}")


def utc_now() -> str:
    """The current time in UTC as ISO 8601 to the second, e.g. ``2026-12-02T09:14:05Z``."""
    return datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def file_digest(path: str | Path) -> tuple[int, str]:
    """``(size in bytes, SHA-256 hex digest)`` of a file, read in chunks."""
    h = hashlib.sha256()
    size = 0
    with open(path, "rb") as fh:
        while chunk := fh.read(CHUNK):
            h.update(chunk)
            size += len(chunk)
    return size, h.hexdigest()


def _regular_file(path: Any, item: str) -> Path:
    if not isinstance(path, str | os.PathLike):
        raise CaseError(f"the artefact for evidence '{item}' must be given as a file path, got "
                        f"{type(path).__name__} {path!r:.60}")
    p = Path(path)
    if not p.exists():
        raise CaseError(f"no file at {str(p)!r} to attach to evidence '{item}'; check the path "
                        "(nothing was attached)")
    if not p.is_file():
        raise CaseError(f"{str(p)!r} is not a regular file (a folder?); attach each file of "
                        f"evidence '{item}' on its own")
    return p


def _copy_into(src: Path, folder: Any, item: str) -> tuple[int, str, Path, bool]:
    """Copy ``src`` into ``folder`` (temporary file, then rename: :mod:`.._files`) while hashing it;
    returns size, digest, the copy's path and whether a new file was made. A file of the
    same name already there is reused when identical and refused when not."""
    dest_dir = Path(folder)
    if not dest_dir.is_dir():
        raise CaseError(f"copy_to folder {str(dest_dir)!r} does not exist; create it first "
                        f"(nothing was attached to evidence '{item}')")
    dest = dest_dir / src.name
    if dest.exists():
        size, sha = file_digest(src)
        d_size, d_sha = file_digest(dest)
        if (d_size, d_sha) != (size, sha):
            raise CaseError(f"a different file named {src.name!r} is already in "
                            f"{str(dest_dir)!r}; rename one of them (nothing was attached to "
                            f"evidence '{item}')")
        return size, sha, dest, False
    h = hashlib.sha256()
    size = 0
    with atomic_file(dest) as out, open(src, "rb") as fh:
        while chunk := fh.read(CHUNK):
            h.update(chunk)
            size += len(chunk)
            out.write(chunk)
    return size, h.hexdigest(), dest, True


def make_artefact(path: Any, item: str, *, who: str, note: str = "",
                  copy_to: Any = None, when: str | None = None) -> tuple[Artefact, Path | None]:
    """Read (and, with ``copy_to``, copy) the file and describe it; returns the
    artefact and the path of a copy newly made (to undo it when the edit is refused)."""
    src = _regular_file(path, item)
    name = check_name("artefact file", src.name)
    made = None
    if copy_to is not None:
        size, sha, dest, new = _copy_into(src, copy_to, item)
        copy = str(dest)
        made = dest if new else None
    else:
        size, sha = file_digest(src)
        copy = ""
    art = Artefact(name=name, size=size, sha256=sha,
                   who=check_name(f"who attaches the artefact of evidence '{item}'", who),
                   when=when or utc_now(),
                   note=check_text(f"note of artefact {name!r}", note), copy=copy)
    return art, made


def artefact_from_dict(value: Any, what: str) -> Artefact:
    """An artefact from its serial form (every field checked; errors name ``what``)."""
    if not isinstance(value, Mapping):
        raise CaseFileError(f"{what} must be a JSON object, got {type(value).__name__}")
    extra = set(value) - set(Artefact.FIELDS)
    if extra:
        raise CaseFileError(f"{what} has unknown field(s) {sorted(map(str, extra))}; allowed: "
                            f"{list(Artefact.FIELDS)}")
    missing = [f for f in ("name", "size", "sha256", "who", "when") if f not in value]
    if missing:
        raise CaseFileError(f"{what} is missing the field(s) {missing}")
    name = check_name(f"file name of {what}", value["name"])
    if "/" in name or "\\" in name or name in (".", ".."):
        raise CaseFileError(f"{what}: file name {name!r} must be a bare file name, not a path")
    size = value["size"]
    if isinstance(size, bool) or not isinstance(size, int) or size < 0:
        raise CaseFileError(f"{what}: size {size!r:.40} must be a whole number of bytes")
    sha = value["sha256"]
    if not isinstance(sha, str) or not _HEX64.fullmatch(sha):
        raise CaseFileError(f"{what}: sha256 {sha!r:.80} must be 64 lower-case hex digits")
    when = check_text(f"time of {what}", value["when"])
    try:
        datetime.fromisoformat(when)
    except ValueError:
        raise CaseFileError(f"{what}: time {when!r:.60} is not ISO 8601 "
                            "(e.g. 2026-12-02T09:14:05Z)") from None
    return Artefact(name=name, size=size, sha256=sha,
                    who=check_text(f"who of {what}", value["who"]), when=when,
                    note=check_text(f"note of {what}", value.get("note", "")),
                    copy=check_text(f"copy of {what}", value.get("copy", "")))


@dataclass(frozen=True)
class FileCheck:
    """One artefact compared with the file of its name in a folder: ``status`` is
    ``"match"``, ``"missing"`` or ``"changed"`` (then ``size`` / ``sha256`` are the
    file's as found)."""

    item: str
    artefact: Artefact
    status: str
    size: int | None = None
    sha256: str | None = None


def check_files(artefacts: Iterable[tuple[str, Artefact]], folder: str | Path) -> list[FileCheck]:
    """Compare each ``(item, artefact)`` with ``folder / artefact.name``."""
    base = Path(folder)
    out = []
    for item, art in artefacts:
        p = base / art.name
        if not p.is_file():
            out.append(FileCheck(item, art, "missing"))
            continue
        size, sha = file_digest(p)
        status = "match" if (size, sha) == (art.size, art.sha256) else "changed"
        out.append(FileCheck(item, art, status, size, sha))
    return out


__all__ = ["utc_now", "file_digest", "make_artefact", "artefact_from_dict", "check_files",
           "FileCheck", "CHUNK"]

"""Canonical JSON, SHA-256 digests, the manifest and the fingerprint.

Standard library only: ``verify`` imports this without numpy, nbformat or a
kernel. A digest is SHA-256 over the UTF-8 bytes of a canonical JSON form
(sorted keys, no whitespace, non-ASCII kept as is, NaN refused).

What a digest proves: that the bytes hashed are the bytes sealed. It does
not prove who sealed them: anyone able to edit the file can recompute every
digest. The fingerprint (quoted outside the file) and an Ed25519 signature
(see :mod:`beliefledger.record.signing`) close that gap.
"""

from __future__ import annotations

import hashlib
import json
import re
from collections.abc import Iterable, Mapping
from typing import Any

RECORD_FORMAT = "beliefledger-record"
RECORD_VERSION = 3
"""2: results carry "flags" (were "findings"); cases are schema-2 case files.
3: the summary comes first; review cells (not hashed, re-derived from the sign-offs);
sign-offs are chained and carry a decision, a checklist and comments."""
READABLE_RECORD_VERSIONS = (2, 3)
"""Record versions verify reads (a version-2 record has unchained sign-offs)."""
META_KEY = "beliefledger"
"""Key of the record inside the notebook's top-level metadata."""

ROLE_KEY = "role"
MANIFEST_ROLE = "manifest"
RECORD_ROLE = "record"
REVIEW_ROLE = "review"
"""Cells showing the reviews: derived from the sign-offs, so not hashed (verify re-derives
them and reports any difference, as for the manifest cell)."""
UNHASHED_ROLES = (MANIFEST_ROLE, REVIEW_ROLE)

WIDGET_VIEW_MIME = "application/vnd.jupyter.widget-view+json"
WIDGET_STATE_MIME = "application/vnd.jupyter.widget-state+json"
# cell metadata that is part of the record; everything else (timings,
# collapsed/scrolled flags, editor state) is volatile and stripped
KEPT_CELL_METADATA = ("tags", META_KEY)
ALGORITHM = "sha256"
CANONICAL_JSON = "sort_keys, compact, UTF-8"
FINGERPRINT_HEX = 20  # 80 bits, five groups of four
_FP_RE = re.compile(r"^[0-9A-F]{4}(-[0-9A-F]{4})+$")


def canonical_bytes(obj: Any) -> bytes:
    """The canonical JSON form of ``obj`` as UTF-8 bytes."""
    return json.dumps(obj, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      allow_nan=False).encode("utf-8")


def digest(obj: Any) -> str:
    """SHA-256 (hex) of the canonical JSON form of ``obj``."""
    return hashlib.sha256(canonical_bytes(obj)).hexdigest()


def fingerprint(root: str) -> str:
    """A short, readable form of a root digest to quote in a hand-over.

    The first 80 bits in upper-case hex, in groups of four
    (``"3F2A-91C0-77DE-0B14-A9E5"``). Eighty bits make a forgery that
    matches a quoted fingerprint a search of about 2**80 tries.
    """
    if not isinstance(root, str) or not re.fullmatch(r"[0-9a-f]{64}", root):
        raise ValueError(f"root digest must be 64 lower-case hex digits, got {root!r:.80}")
    h = root[:FINGERPRINT_HEX].upper()
    return "-".join(h[i:i + 4] for i in range(0, FINGERPRINT_HEX, 4))


def normalize_fingerprint(text: str) -> str:
    """Accept a quoted fingerprint with any case, spaces or dashes; return the canonical form."""
    raw = re.sub(r"[\s\-:]", "", str(text)).upper()
    if not re.fullmatch(r"[0-9A-F]{8,64}", raw):
        raise ValueError(f"{text!r:.80} is not a fingerprint; expect hex groups like "
                         "3F2A-91C0-77DE-0B14-A9E5")
    raw = raw[:FINGERPRINT_HEX]
    return "-".join(raw[i:i + 4] for i in range(0, len(raw), 4))


def join_text(value: Any) -> Any:
    """Notebook JSON stores multi-line strings as lists of lines; join them."""
    if isinstance(value, list) and all(isinstance(v, str) for v in value):
        return "".join(value)
    return value


def normalize_output(output: Mapping[str, Any]) -> dict[str, Any]:
    """One output in canonical form: volatile metadata and live-widget views removed."""
    kind = output.get("output_type")
    out: dict[str, Any] = {"output_type": kind}
    if kind == "stream":
        out["name"] = output.get("name")
        out["text"] = join_text(output.get("text", ""))
    elif kind in ("display_data", "execute_result"):
        data = {k: join_text(v) for k, v in dict(output.get("data", {})).items()
                if k != WIDGET_VIEW_MIME}
        out["data"] = data
        out["metadata"] = output.get("metadata", {})
        if kind == "execute_result":
            out["execution_count"] = output.get("execution_count")
    elif kind == "error":
        out["ename"] = output.get("ename")
        out["evalue"] = output.get("evalue")
        out["traceback"] = list(output.get("traceback", []))
    else:
        out.update({k: v for k, v in output.items() if k != "metadata"})
    return out


def cell_content(cell: Mapping[str, Any]) -> dict[str, Any]:
    """The hashed content of a cell: type, source, kept metadata, outputs."""
    meta = cell.get("metadata") or {}
    content: dict[str, Any] = {
        "cell_type": cell.get("cell_type"),
        "id": cell.get("id"),
        "source": join_text(cell.get("source", "")),
        "metadata": {k: meta[k] for k in KEPT_CELL_METADATA if k in meta},
    }
    if cell.get("cell_type") == "code":
        content["execution_count"] = cell.get("execution_count")
        content["outputs"] = [normalize_output(o) for o in cell.get("outputs", [])]
    if cell.get("attachments"):
        content["attachments"] = cell["attachments"]
    return content


def cell_digest(cell: Mapping[str, Any]) -> str:
    return digest(cell_content(cell))


def cell_role(cell: Mapping[str, Any]) -> str | None:
    meta = cell.get("metadata") or {}
    bl = meta.get(META_KEY)
    return bl.get(ROLE_KEY) if isinstance(bl, Mapping) else None


def hashed_cells(cells: Iterable[Mapping[str, Any]]) -> list[tuple[int, Mapping[str, Any]]]:
    """(index, cell) of every cell the manifest covers: all but the manifest cell and the
    review cells (both derived from the metadata and checked against it)."""
    return [(i, c) for i, c in enumerate(cells) if cell_role(c) not in UNHASHED_ROLES]


def notebook_frame(nb: Mapping[str, Any]) -> dict[str, Any]:
    """The notebook-level fields the root covers: nbformat version and the notebook
    metadata (kernel, language), the record's own metadata excluded."""
    meta = {k: v for k, v in (nb.get("metadata") or {}).items() if k != META_KEY}
    return {"nbformat": nb.get("nbformat"), "nbformat_minor": nb.get("nbformat_minor"),
            "metadata": meta}


def root_digest(header: Mapping[str, Any], case_digests: list[str],
                cell_digests: list[str], frame: Mapping[str, Any]) -> str:
    """The root digest: over the record header (version, seal time, tool,
    environment), the notebook frame (:func:`notebook_frame`) and, in order,
    every case digest and every cell digest."""
    return digest({"header": dict(header), "notebook": dict(frame),
                   "cases": list(case_digests), "cells": list(cell_digests)})


def case_digest(entry: dict[str, Any]) -> str:
    return digest({"title": entry["title"], "envelope": entry["envelope"],
                   "results": entry["results"]})


def is_fingerprint(text: str) -> bool:
    return bool(_FP_RE.match(text))


__all__ = ["ALGORITHM", "CANONICAL_JSON", "case_digest", "canonical_bytes", "digest", "fingerprint", "normalize_fingerprint", "cell_content",
           "cell_digest", "normalize_output", "hashed_cells", "root_digest", "cell_role", "notebook_frame",
           "RECORD_FORMAT", "RECORD_VERSION", "READABLE_RECORD_VERSIONS", "META_KEY",
           "MANIFEST_ROLE", "RECORD_ROLE", "REVIEW_ROLE", "UNHASHED_ROLES"]

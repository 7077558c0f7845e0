"""Read notebooks and records as plain JSON (no nbformat: it costs seconds to import).

Every failure is a :class:`RecordError` (a ``CaseError``, so the command line
exits with code 2, "unusable input") naming the file and the fix.
"""

from __future__ import annotations

import json
import os
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from ..casefile import atomic_write_text
from ..errors import RecordError
from .canonical import META_KEY, READABLE_RECORD_VERSIONS, RECORD_FORMAT, RECORD_VERSION

MAX_NOTEBOOK_BYTES = 256 * 1024 * 1024
"""Largest notebook or record read (bytes)."""
MAX_OUTPUT_BYTES = 32 * 1024 * 1024
"""Largest single cell output a record keeps (bytes of its JSON)."""
SUPPORTED_NBFORMAT = 4




def _refuse_constant(name: str) -> Any:
    raise RecordError(f"holds {name}, which JSON does not allow")


def read_json_file(path: str | Path, *, what: str = "notebook") -> dict[str, Any]:
    """Read a UTF-8 JSON object from ``path`` with size and encoding checks."""
    p = Path(path)
    label = f"{what} {p.name!r}"
    try:
        if p.is_dir():
            raise RecordError(f"{label} is a folder; give the path of a .ipynb file")
        size = p.stat().st_size
    except FileNotFoundError:
        raise RecordError(f"no {what} at {str(p)!r}; check the path") from None
    except OSError as exc:
        raise RecordError(f"cannot read {label}: {exc.strerror}") from None
    if size > MAX_NOTEBOOK_BYTES:
        raise RecordError(f"{label} is {size:,} bytes, over the {MAX_NOTEBOOK_BYTES:,}-byte "
                          "limit; clear large outputs before sealing")
    raw = p.read_bytes()
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise RecordError(f"{label} is not UTF-8 text (bad byte at offset {exc.start}); "
                          "notebooks are UTF-8 JSON: re-save it from Jupyter") from None
    try:
        data = json.loads(text, parse_constant=_refuse_constant)
    except RecordError as exc:
        raise RecordError(f"{label} {exc}") from None
    except RecursionError:
        raise RecordError(f"{label} is nested too deeply to be a notebook") from None
    except json.JSONDecodeError as exc:
        raise RecordError(f"{label} is not JSON ({exc.msg} at line {exc.lineno}, column "
                          f"{exc.colno}); is it a notebook (.ipynb)?") from None
    if not isinstance(data, dict):
        raise RecordError(f"{label} holds a JSON {type(data).__name__}, not a notebook object")
    return data


def _major_version(nb: Mapping[str, Any], label: str, *, cells_key: str) -> int:
    """The notebook's major nbformat version; refuses non-notebooks and newer formats."""
    if cells_key not in nb or "nbformat" not in nb:
        raise RecordError(f"{label} is JSON but not a Jupyter notebook (no 'cells' or "
                          "'nbformat'); give a .ipynb file")
    major = nb.get("nbformat")
    if isinstance(major, bool) or not isinstance(major, int):
        raise RecordError(f"{label} has nbformat {major!r:.40}; expected an integer")
    if major > SUPPORTED_NBFORMAT:
        raise RecordError(f"{label} is nbformat {major}, newer than this tool reads "
                          f"({SUPPORTED_NBFORMAT}); upgrade beliefledger or save it as "
                          f"nbformat {SUPPORTED_NBFORMAT}")
    return major


def check_notebook(nb: Mapping[str, Any], label: str) -> None:
    """Refuse anything that is not an nbformat-4 notebook this tool can read."""
    major = _major_version(nb, label, cells_key="cells")
    if major < SUPPORTED_NBFORMAT:
        raise RecordError(f"{label} is nbformat {major}; open and re-save it in a current "
                          f"Jupyter to convert it to nbformat {SUPPORTED_NBFORMAT}")
    cells = nb.get("cells")
    if not isinstance(cells, list):
        raise RecordError(f"{label}: 'cells' is not a list")
    for i, cell in enumerate(cells):
        if not isinstance(cell, dict) or cell.get("cell_type") not in ("code", "markdown", "raw"):
            raise RecordError(f"{label}: cell {i + 1} is not a code, markdown or raw cell")
        if cell["cell_type"] == "code" and not isinstance(cell.get("outputs", []), list):
            raise RecordError(f"{label}: cell {i + 1} has outputs that are not a list")
    if not isinstance(nb.get("metadata", {}), dict):
        raise RecordError(f"{label}: notebook metadata is not an object")


def read_notebook(path: str | Path) -> dict[str, Any]:
    """Read a notebook as plain JSON (no nbformat) and shape-check it."""
    nb = read_json_file(path, what="notebook")
    check_notebook(nb, f"notebook {Path(path).name!r}")
    return nb


def _validation_text(exc: Exception) -> str:
    """One line from an nbformat/jsonschema validation error: where, and what."""
    msg = getattr(exc, "message", None) or str(exc).splitlines()[0]
    path = list(getattr(exc, "absolute_path", []) or getattr(exc, "path", []) or [])
    where = ""
    if len(path) >= 2 and path[0] == "cells" and isinstance(path[1], int):
        where = f"cell {path[1] + 1}"
        if len(path) > 2:
            where += " field " + ".".join(str(p) for p in path[2:])
        where += ": "
    elif path:
        where = ".".join(str(p) for p in path) + ": "
    return f"{where}{msg}"[:300]


def load_notebook(path: str | Path) -> dict[str, Any]:
    """Read a notebook the way Jupyter does, through nbformat, for sealing.

    Accepts what JupyterLab, Notebook 7, VS Code and ``nbformat.write`` save:
    nbformat 4.0 to 4.5 (and 3, converted), with or without cell ids, cell
    text as one string or as a list of lines, existing outputs, attachments,
    raw cells and any notebook metadata. The notebook is validated against
    its own schema version; anything nbformat cannot read or validate is a
    :class:`RecordError` naming the file and the problem. Returns plain JSON
    (dicts and lists) with every multi-line text joined into one string.
    """
    data = read_json_file(path, what="notebook")
    label = f"notebook {Path(path).name!r}"
    major = _major_version(data, label, cells_key="worksheets" if "worksheets" in data
                           else "cells")
    try:
        import nbformat
        from nbformat.validator import ValidationError
    except ImportError:
        raise RecordError("sealing needs nbformat to read the notebook; install it with "
                          "pip install 'beliefledger[notebook]'") from None
    if major < 3:
        raise RecordError(f"{label} is nbformat {major}; open and re-save it in a current "
                          f"Jupyter to convert it to nbformat {SUPPORTED_NBFORMAT}")
    import copy as _copy

    try:
        node = nbformat.from_dict(_copy.deepcopy(data))
        nbformat.validate(node)
    except ValidationError as exc:
        raise RecordError(f"{label} is not a valid nbformat {major}.{data.get('nbformat_minor')} "
                          f"notebook ({_validation_text(exc)}); open it in Jupyter, fix or "
                          "re-save it, and seal again") from None
    except (TypeError, ValueError, KeyError, AttributeError) as exc:
        raise RecordError(f"{label} cannot be read by nbformat ({type(exc).__name__}: "
                          f"{str(exc)[:200]}); re-save it from Jupyter") from None
    try:
        # nbformat's reader joins line lists into strings and converts v3 to v4;
        # it never renumbers cell ids (prepare gives missing ids stable names)
        node = nbformat.reads(json.dumps(data, ensure_ascii=False), as_version=SUPPORTED_NBFORMAT)
    except (ValidationError, ValueError, KeyError, AttributeError, TypeError) as exc:
        raise RecordError(f"{label} cannot be read by nbformat ({str(exc)[:200]}); re-save it "
                          "from Jupyter") from None
    nb = json.loads(json.dumps(node, ensure_ascii=False))
    for cell in nb.get("cells", []):  # attachments and outputs keep their own line lists
        if isinstance(cell.get("source"), list):
            cell["source"] = "".join(cell["source"])
    check_notebook(nb, label)
    return nb


def record_meta(nb: Mapping[str, Any], label: str) -> dict[str, Any]:
    """The record section of a sealed notebook's metadata, shape-checked."""
    meta = (nb.get("metadata") or {}).get(META_KEY)
    if meta is None:
        raise RecordError(f"{label} has no beliefledger record in its metadata: it was never "
                          "sealed (run `beliefledger seal` on the notebook) or the record was "
                          "removed")
    if not isinstance(meta, dict):
        raise RecordError(f"{label}: the record metadata is not an object (malformed record)")
    if meta.get("format") != RECORD_FORMAT:
        raise RecordError(f"{label}: record format is {meta.get('format')!r:.40}, expected "
                          f"{RECORD_FORMAT!r}")
    ver = meta.get("record_version")
    if isinstance(ver, bool) or not isinstance(ver, int):
        raise RecordError(f"{label}: record_version {ver!r:.40} is not an integer")
    if ver not in READABLE_RECORD_VERSIONS:
        hint = "upgrade beliefledger" if ver > RECORD_VERSION else "no reader for it exists"
        raise RecordError(f"{label} is record version {ver}; this tool reads versions "
                          f"{', '.join(map(str, READABLE_RECORD_VERSIONS))} ({hint})")
    man = meta.get("manifest")
    if not isinstance(man, dict):
        raise RecordError(f"{label}: the record has no manifest (malformed record)")
    problems = []
    if not isinstance(man.get("root"), str) or len(man.get("root", "")) != 64:
        problems.append("'root' is not a 64-digit hex digest")
    for key in ("cells", "cases"):
        items = man.get(key)
        if not isinstance(items, list) or not all(
                isinstance(x, dict) and isinstance(x.get("sha256"), str) for x in items):
            problems.append(f"'{key}' is not a list of entries with a 'sha256'")
    if not isinstance(meta.get("header"), dict):
        problems.append("the record header is missing")
    if not isinstance(meta.get("cases"), list):
        problems.append("the embedded cases are missing")
    if not isinstance(meta.get("signoffs", []), list):
        problems.append("'signoffs' is not a list")
    if problems:
        raise RecordError(f"{label}: malformed manifest: " + "; ".join(problems))
    return meta


def read_record(path: str | Path) -> tuple[dict[str, Any], dict[str, Any]]:
    """Read a sealed notebook: (notebook JSON, its record metadata)."""
    nb = read_json_file(path, what="record")
    label = f"record {Path(path).name!r}"
    check_notebook(nb, label)
    return nb, record_meta(nb, label)


# --------------------------------------------------------------------------- writing


def default_out(path: Path) -> Path:
    stem = path.name[:-len(".ipynb")] if path.name.endswith(".ipynb") else path.name
    if stem.endswith(".sealed"):
        stem = stem[:-len(".sealed")]
    return path.with_name(f"{stem}.sealed.ipynb")


def html_path_for(out: Path) -> Path:
    name = out.name[:-len(".ipynb")] if out.name.endswith(".ipynb") else out.name
    return out.with_name(name + ".html")


def dumps_notebook(nb: dict[str, Any]) -> str:
    return json.dumps(nb, indent=1, ensure_ascii=False, allow_nan=False) + "\n"


def write_text(path: Path, text: str) -> Path:
    """Atomic write, then the usual permissions for a shared document (umask applied)."""
    atomic_write_text(path, text)
    mask = os.umask(0)
    os.umask(mask)
    os.chmod(path, 0o666 & ~mask)
    return path


__all__ = ["write_text", "dumps_notebook", "default_out", "html_path_for", "RecordError", "read_json_file", "read_notebook", "load_notebook", "read_record", "check_notebook",
           "record_meta", "MAX_NOTEBOOK_BYTES", "MAX_OUTPUT_BYTES"]

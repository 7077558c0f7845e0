"""The review round: a reviewer's sign-off on a sealed record.

A sign-off is written only on a record that verifies intact, so it always
covers exactly what was sealed. (The checklist, comments, decisions and
chained sign-offs of a full review build on this module.)
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from ..errors import RecordNotIntact
from .canonical import META_KEY
from .nbio import dumps_notebook, html_path_for, read_record, write_text
from .signing import make_signoff
from .verifier import verify_notebook


def sign(path: str | Path, reviewer: str, comment: str = "", *, key: str | Path | None = None,
         signed_at: str | None = None) -> dict[str, Any]:
    """Add a reviewer's sign-off to a sealed record (in place, atomically).

    Refuses a record that is not intact: a sign-off must cover exactly what
    was sealed. Returns the new sign-off entry.
    """
    import copy


    nb, meta = read_record(path)
    result = verify_notebook(nb, meta, path=str(path), reproduce_results=False)
    if not result.intact:
        raise RecordNotIntact(
            f"record {Path(path).name!r} is not intact, so it cannot be signed:\n"
            + "\n".join(f"  - {p}" for p in result.problems))
    entry = make_signoff(result.root, reviewer, comment, key_path=key, signed_at=signed_at)
    new = copy.deepcopy(nb)
    new["metadata"][META_KEY].setdefault("signoffs", []).append(entry)
    write_text(Path(path), dumps_notebook(new))
    html_copy = html_path_for(Path(path))
    if html_copy.exists():  # keep the reading copy's list of sign-offs current
        from .html import render_html

        write_text(html_copy, render_html(new))
    return entry


__all__ = ["sign"]

"""Sealed audit records: seal, verify, diff, the review round (checklist, decisions,
comments, chained sign-offs, replies), offline HTML and PDF.

Loaded lazily: ``verify`` and ``diff`` read notebooks as plain JSON and
never import nbformat, nbclient or altair; only ``seal`` starts a kernel.
"""

from __future__ import annotations

import importlib
from typing import Any

_EXPORTS = {
    "seal": "sealer", "SealResult": "sealer", "build_record": "sealer",
    "verify": "verifier", "VerifyResult": "verifier", "Problem": "verifier", "RESULT_TOL": "verifier",
    "verify_html": "htmlcheck",
    "diff": "differ", "diff_cases": "differ", "CaseDiff": "differ", "load_cases": "differ",
    "register": "collect", "collect_cases": "collect",
    "keygen": "signing", "sign": "review", "make_signoff": "signing",
    "check_signoff": "signing", "check_chain": "signing", "chain_head": "signing",
    "review": "review", "apply_replies": "review", "comments_of": "review",
    "Checklist": "checklist", "load_checks": "checklist",
    "render_html": "html", "write_pdf": "pdf", "pdf_from_sealed": "pdf",
    "read_record": "nbio",
    "fingerprint": "canonical", "digest": "canonical",
    "load_record": "differ",
}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str) -> Any:
    if name in _EXPORTS:
        value = getattr(importlib.import_module(f".{_EXPORTS[name]}", __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'beliefledger.record' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(__all__)

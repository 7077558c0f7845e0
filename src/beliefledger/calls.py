"""What an analysis call shows so that a record can redo it with the analyst's settings.

A Monte Carlo run or a ranking of pending evidence depends on settings the
case does not hold (the seed and the number of draws; the cost of examining
each item). When such a result is displayed in a notebook it carries, beside
its HTML, a small JSON bundle under :data:`ANALYSIS_MIMETYPE`: which analysis,
which case (its title and a digest of its state at the time), and the
keyword arguments that reproduce it. ``beliefledger seal`` reads the last
bundle of each kind for each case and runs the record's own analysis with
those settings, so the record does not contradict the analyst's cell.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from .case import Case

ANALYSIS_MIMETYPE = "application/vnd.beliefledger.analysis+json"
KINDS = ("simulate", "rank_next_evidence")
"""The analyses whose calls are carried (the others take all they need from the case)."""


def state_digest(case: Case) -> str:
    """SHA-256 of the case's JSON form (sorted keys): equal digests, equal cases."""
    text = json.dumps(case.to_dict(), sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      allow_nan=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


@dataclass(frozen=True)
class Call:
    """One analysis call: ``kind`` (a name in :data:`KINDS`), the case ``title``, the digest
    of the case's state when it ran, and the JSON-ready keyword ``settings`` that redo it."""

    kind: str
    title: str
    state: str
    settings: Mapping[str, Any] = field(default_factory=dict)

    @classmethod
    def of(cls, kind: str, case: Case, settings: Mapping[str, Any]) -> Call:
        return cls(kind, case.title, state_digest(case), dict(settings))

    def bundle(self) -> dict[str, Any]:
        return {"kind": self.kind, "case": self.title, "case_state": self.state,
                "settings": dict(self.settings)}

    @classmethod
    def from_bundle(cls, data: Any) -> Call | None:
        """The call a bundle describes, or None when it is not one this version reads."""
        if not isinstance(data, Mapping):
            return None
        kind, title, state, settings = (data.get("kind"), data.get("case"),
                                        data.get("case_state"), data.get("settings"))
        if (kind not in KINDS or not isinstance(title, str) or not isinstance(state, str)
                or not isinstance(settings, Mapping)):
            return None
        return cls(kind, title, state, dict(settings))

    def describe(self) -> str:
        """The settings in words, for a record."""
        parts = []
        for key, value in self.settings.items():
            if value is None or value == {} or value == []:
                continue
            if isinstance(value, Mapping):
                value = ", ".join(f"{k}: {v:g}" if isinstance(v, float) else f"{k}: {v}"
                                  for k, v in value.items())
            elif key == "draws" and isinstance(value, int):
                value = f"{value:,}"
            parts.append(f"{key} {value}")
        return "; ".join(parts) or "default settings"


__all__ = ["ANALYSIS_MIMETYPE", "Call", "KINDS", "state_digest"]

"""The contract every input must meet, checked by the fuzz tests.

A case file either loads and computes (a ledger with no NaN anywhere, a
posterior that sums to 1 or a ``prior-sum`` error saying why not, and a save
that loads back to the same case), or it is refused with a beliefledger
``CaseError``/``CaseTypeError`` (``ValueError``/``TypeError`` subclasses)
whose message names the field. Any other exception is a bug. An edit either
succeeds (the same holds for the edited case) or is refused the same way and
leaves the case exactly as it was.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable
from typing import Any

import numpy as np

from beliefledger import casefile
from beliefledger.case import Case
from beliefledger.display import case_html, ledger_text
from beliefledger.errors import CaseError, CaseTypeError

ALLOWED = (CaseError, CaseTypeError)


class ContractBroken(AssertionError):
    pass


def names_field(message: str, tokens: Iterable[str]) -> bool:
    """True when ``message`` mentions one of ``tokens`` (as typed or as repr shows it)."""
    low = message.lower()
    for t in tokens:
        if not t:
            continue
        forms = {t, repr(t)[1:-1], t[:40], repr(t)[1:-1][:40], t.strip()}
        if any(f and f.lower() in low for f in forms):
            return True
    return False


def check_refusal(exc: BaseException, tokens: Iterable[str], what: str) -> None:
    if not isinstance(exc, ALLOWED):
        raise ContractBroken(f"{what}: raised {type(exc).__name__}: {exc!s:.300} "
                             "(want CaseError/CaseTypeError)") from exc
    msg = str(exc)
    if not msg.strip():
        raise ContractBroken(f"{what}: refused with an empty message")
    tokens = list(tokens)
    if tokens and not names_field(msg, tokens):
        raise ContractBroken(f"{what}: message does not name the field "
                             f"(want one of {sorted(tokens)!r:.300}): {msg!r:.400}")


def check_computes(case: Case, what: str) -> None:
    """The case computes: finite, NaN-free ledger; displays; survives a save and load."""
    ledger = case.update()
    steps = ledger.steps.to_numpy(dtype=float)
    if np.isnan(steps).any():
        raise ContractBroken(f"{what}: NaN in the ledger steps\n{ledger.steps}")
    if np.isnan(ledger.log_steps).any():
        raise ContractBroken(f"{what}: NaN in the log steps")
    post = ledger.posterior.to_numpy(dtype=float)
    total_prior = float(ledger.priors.sum())
    if total_prior > 0:
        if not math.isclose(post.sum(), 1.0, abs_tol=1e-9):
            raise ContractBroken(f"{what}: posterior sums to {post.sum()!r}")
    elif not any(f.code == "prior-sum" and f.severity == "error" for f in ledger.flags):
        raise ContractBroken(f"{what}: all priors zero but no prior-sum error flag")
    if ledger.map_hypothesis not in case.hypothesis_names:
        raise ContractBroken(f"{what}: MAP {ledger.map_hypothesis!r} is not a hypothesis")
    if np.isnan(ledger.evidence_probability.to_numpy(dtype=float)).any():
        raise ContractBroken(f"{what}: NaN evidence probability")
    for f in ledger.flags:
        if not isinstance(f.message, str) or not f.message:
            raise ContractBroken(f"{what}: flag {f.code} has no message")
    ledger_text(ledger)
    case_html(case)
    again = casefile.loads(casefile.dumps(case))
    if again.to_dict() != case.to_dict():
        raise ContractBroken(f"{what}: save and load changed the case")


def check_load(data: str | bytes, tokens: Iterable[str], what: str) -> str:
    """Load ``data`` under the contract; returns ``"loaded"`` or ``"refused"``."""
    try:
        case = casefile.loads(data)
    except BaseException as exc:  # noqa: BLE001 - the contract is about every exception
        if isinstance(exc, KeyboardInterrupt):
            raise
        check_refusal(exc, tokens, what)
        return "refused"
    check_computes(case, what)
    return "loaded"


def snapshot(case: Case) -> tuple[Any, int]:
    return case.to_dict(), case.version


def check_edit(case: Case, call: Callable[[], Any], tokens: Iterable[str], what: str,
               events: list) -> str:
    """Apply one edit under the contract; returns ``"applied"`` or ``"refused"``."""
    before, version = snapshot(case)
    n_events = len(events)
    try:
        call()
    except BaseException as exc:  # noqa: BLE001
        if isinstance(exc, KeyboardInterrupt):
            raise
        check_refusal(exc, tokens, what)
        after, v2 = snapshot(case)
        if after != before or v2 != version:
            raise ContractBroken(f"{what}: refused ({exc}) but the case changed") from exc
        if len(events) != n_events:
            raise ContractBroken(f"{what}: refused but listeners were told of a change") from exc
        return "refused"
    after, v2 = snapshot(case)
    if after != before and v2 != version + 1:
        raise ContractBroken(f"{what}: the case changed but its version went {version} -> {v2}")
    if len(events) - n_events > 1:
        raise ContractBroken(f"{what}: one edit notified listeners {len(events) - n_events} times")
    check_computes(case, what)
    return "applied"

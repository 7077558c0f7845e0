"""The shared validators: every check of a user's input that more than one module makes.

Standard library and numpy only. Each check returns the cleaned value or
raises :class:`~beliefledger.errors.CaseError` (a bad value) or
:class:`~beliefledger.errors.CaseTypeError` (a wrong type) with a message
that names the item, repeats the value and says what to do.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Iterable, Mapping
from typing import Any

import numpy as np

from .errors import CaseError, CaseTypeError

SUM_TOL = 1e-9
"""Tolerance for "sums to 1" (priors, likelihood columns)."""

MAX_NAME_LENGTH = 200
MAX_TEXT_LENGTH = 20_000


def check_text(field_name: str, value: Any, *, limit: int = MAX_TEXT_LENGTH) -> str:
    """Text (``None`` becomes ``""``) of at most ``limit`` characters."""
    if value is None:
        return ""
    if not isinstance(value, str):
        raise CaseTypeError(
            f"{field_name} must be text, got {type(value).__name__} {value!r:.80}; "
            "pass a string"
        )
    if len(value) > limit:
        raise CaseError(
            f"{field_name} is {len(value):,} characters long (limit {limit:,}); shorten it"
        )
    return value


def check_name(kind: str, value: Any) -> str:
    """A non-empty name (stripped) of at most ``MAX_NAME_LENGTH`` characters."""
    if not isinstance(value, str):
        raise CaseTypeError(
            f"{kind} name must be a string, got {type(value).__name__} {value!r:.80}"
        )
    name = value.strip()
    if not name:
        raise CaseError(f"{kind} name is empty ({value!r}); give it a short descriptive name")
    if len(name) > MAX_NAME_LENGTH:
        raise CaseError(
            f"{kind} name {name[:40]!r}... is {len(name):,} characters long "
            f"(limit {MAX_NAME_LENGTH}); shorten it and put detail in the description"
        )
    return name


def check_flag(what: str, value: Any) -> bool:
    """True or False (numpy booleans accepted; 'no' or 1 refused)."""
    if not isinstance(value, bool | np.bool_):
        raise CaseTypeError(f"{what} must be True or False, got {type(value).__name__} "
                            f"{value!r:.40}")
    return bool(value)


def check_probability(what: str, value: Any) -> float:
    """A real number in [0, 1]."""
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise CaseTypeError(
            f"{what} must be a number between 0 and 1, got {type(value).__name__} {value!r:.80}"
        )
    try:
        x = float(value)
    except OverflowError:
        raise CaseError(f"{what} is an integer too large for a number; enter a "
                        "probability between 0 and 1") from None
    if math.isnan(x):
        raise CaseError(f"{what} is NaN; enter a probability between 0 and 1")
    if math.isinf(x):
        raise CaseError(f"{what} is {x}; enter a probability between 0 and 1")
    if x < 0 or x > 1:
        raise CaseError(f"{what} is {x:g}, outside [0, 1]; enter a probability between 0 and 1")
    return x


def check_number(what: str, value: Any) -> float:
    """A finite real number."""
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise CaseTypeError(f"{what} must be a number, got {type(value).__name__} {value!r:.60}")
    x = float(value)
    if not math.isfinite(x):
        raise CaseError(f"{what} is {x}; give a finite number")
    return x


def check_count(what: str, value: Any) -> int:
    """A non-negative whole number (an int, or a float with no fractional part)."""
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise CaseTypeError(f"{what} must be a whole number of events, got "
                            f"{type(value).__name__} {value!r:.60}")
    x = float(value)
    if math.isnan(x) or math.isinf(x):
        raise CaseError(f"{what} is {x}; give a whole number of events (0, 1, 2, ...)")
    if x < 0:
        raise CaseError(f"{what} is {x:g}, a negative count; counts are 0 or more")
    if x != math.floor(x):
        raise CaseError(f"{what} is {x:g}, not a whole number; counts are whole numbers "
                        "(to express partial belief use pseudo-counts or a prior instead)")
    if x > 2**53:
        raise CaseError(f"{what} is {x:g}, too large to count exactly")
    return int(x)


def check_positive(what: str, value: Any, *, allow_zero: bool = False) -> float:
    """A finite positive (or, with ``allow_zero``, non-negative) number."""
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise CaseTypeError(f"{what} must be a number, got {type(value).__name__} {value!r:.60}")
    x = float(value)
    if math.isnan(x) or math.isinf(x):
        raise CaseError(f"{what} is {x}; give a finite number")
    if x < 0 or (x == 0 and not allow_zero):
        want = "0 or more" if allow_zero else "above 0"
        raise CaseError(f"{what} is {x:g}; it must be {want}")
    return x


def check_level(level: Any) -> float:
    """A credible level strictly between 0 and 1 (e.g. 0.9 for a 90 % interval)."""
    if isinstance(level, bool) or not isinstance(level, numbers.Real):
        raise CaseTypeError(f"interval level must be a number in (0, 1), got "
                            f"{type(level).__name__} {level!r:.60}")
    x = float(level)
    if not (0 < x < 1):
        raise CaseError(f"interval level is {x:g}; it must lie strictly between 0 and 1 "
                        "(e.g. 0.9 for a 90 % interval)")
    return x


def check_draws(n: Any, what: str = "number of draws") -> int:
    """A whole number of at least 1."""
    if isinstance(n, bool) or not isinstance(n, numbers.Integral):
        raise CaseTypeError(f"{what} must be a whole number, got {n!r:.40}")
    if n < 1:
        raise CaseError(f"{what} is {n}; it must be at least 1")
    return int(n)


def rng_from(rng: Any) -> np.random.Generator:
    """A numpy Generator from a Generator, an integer seed or None (a fresh seed)."""
    if isinstance(rng, np.random.Generator):
        return rng
    if rng is None or isinstance(rng, int | np.integer):
        return np.random.default_rng(rng)
    raise CaseTypeError(f"rng must be a numpy Generator or an integer seed, got "
                        f"{type(rng).__name__}")


def fmt_g(x: float) -> str:
    """A number in six significant figures (no float noise such as 0.09200000000000001)."""
    return f"{x:.6g}"


def short_list(names: Iterable[Any], limit: int = 12) -> str:
    """``['a', 'b', ...]``, cut after ``limit`` names with the total count."""
    names = list(names)
    if len(names) <= limit:
        return str(names)
    return str(names[:limit])[:-1] + f", ... ({len(names)} in all)]"


def lookup(kind: str, plural: str, mapping: Mapping[str, Any], name: Any,
           known: Iterable[str] | None = None) -> Any:
    """``mapping[name]``, or an error naming the kind, the bad name and the choices."""
    if not isinstance(name, str):
        raise CaseTypeError(f"{kind} name must be a string, got {type(name).__name__}")
    try:
        return mapping[name]
    except KeyError:
        choices = list(mapping) if known is None else list(known)
        raise CaseError(f"no {kind} named {name!r}; the {plural} are "
                        f"{short_list(choices)}") from None


def key_gaps(given: Iterable[Any], expected: Iterable[Any]) -> tuple[list[Any], list[Any]]:
    """(expected keys missing from ``given``, keys of ``given`` not expected), in order."""
    given, expected = list(given), list(expected)
    want, have = set(expected), set(given)
    return [k for k in expected if k not in have], [k for k in given if k not in want]


def check_keys(what: str, mapping: Mapping, expected: tuple[str, ...],
               kind: str = "likelihoods") -> None:
    """A mapping keyed by exactly the ``expected`` hypothesis names."""
    keys = list(mapping)
    bad_type = [k for k in keys if not isinstance(k, str)]
    if bad_type:
        raise CaseTypeError(f"{kind} of {what}: hypothesis names must be strings, got "
                            f"{bad_type[:3]!r}")
    missing = [h for h in expected if h not in mapping]
    if missing:
        raise CaseError(f"{kind} of {what} are missing hypothesis(es) {short_list(missing)}; "
                        "give a value for every hypothesis")
    known = set(expected)
    extra = [k for k in keys if k not in known]
    if extra:
        raise CaseError(f"{kind} of {what} name unknown hypothesis(es) {short_list(extra)}; "
                        f"the hypotheses are {short_list(expected)}")


__all__ = [
    "SUM_TOL", "MAX_NAME_LENGTH", "MAX_TEXT_LENGTH", "check_text", "check_name", "check_flag",
    "check_probability", "check_number", "check_count", "check_positive", "check_level",
    "check_draws", "rng_from", "fmt_g", "short_list", "lookup", "check_keys", "key_gaps",
]

"""The case model: hypotheses with sourced priors, evidence with likelihood
tables, prior scenarios, and validated edits.

Every edit validates before it changes anything: a rejected edit raises a
:class:`~beliefledger.errors.CaseError` (a ``ValueError``) or
:class:`~beliefledger.errors.CaseTypeError` and leaves the case exactly as it
was. Members (:class:`Hypothesis`, :class:`Evidence`, :class:`Scenario`) are
immutable; an edit builds new members and swaps them in only when the whole
new state is valid.

Sums are handled in two tiers. Whole tables given at once (``Case(...)``,
``add_evidence``, ``set_priors``, ``add_scenario``) must be coherent: priors
sum to 1 and each likelihood column sums to 1 within ``SUM_TOL`` unless
``normalize=True`` (recorded as an assumption). Single-cell edits
(``set_prior``, ``set_likelihood(..., state=...)``) may leave a sum off while
the analyst is part-way through typing; the trace then carries a
``prior-sum`` or ``column-sum`` finding of severity ``error`` until it is
fixed. Loaded files follow the second rule so that nothing saved is lost.
"""

from __future__ import annotations

import contextlib
import copy
import math
import numbers
import re
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from .errors import CaseError, CaseTypeError

SUM_TOL = 1e-9
"""Tolerance for "sums to 1" (priors, likelihood columns)."""

MAX_NAME_LENGTH = 200
MAX_TEXT_LENGTH = 20_000
BASE_SCENARIO = "base"
"""Name of the implicit scenario made of the hypothesis table's own priors."""

CASE_MIMETYPE = "application/vnd.beliefledger.case+json"
"""MIME type of the machine-readable case a displayed case emits (for the sealer)."""

_CATCH_ALL_RE = re.compile(
    r"^\s*(other\b|others\b|catch[- ]?all|unknown\b|none of the above|something else|unexplained)",
    re.IGNORECASE,
)


# --------------------------------------------------------------------------- checks


def _check_text(field_name: str, value: Any, *, limit: int = MAX_TEXT_LENGTH) -> str:
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


def _check_name(kind: str, value: Any) -> str:
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


def _check_probability(what: str, value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise CaseTypeError(
            f"{what} must be a number between 0 and 1, got {type(value).__name__} {value!r:.80}"
        )
    x = float(value)
    if math.isnan(x):
        raise CaseError(f"{what} is NaN; enter a probability between 0 and 1")
    if math.isinf(x):
        raise CaseError(f"{what} is {x}; enter a probability between 0 and 1")
    if x < 0 or x > 1:
        raise CaseError(f"{what} is {x:g}, outside [0, 1]; enter a probability between 0 and 1")
    return x


def _fmt(x: float) -> str:
    return f"{x:.6g}"


# --------------------------------------------------------------------------- members


@dataclass(frozen=True)
class Source:
    """Where a number came from, who set it, when, and why.

    ``Source()`` with an empty ``where`` is the "unsourced" default: allowed,
    but reported by the ``unsourced`` finding and listed in the record.
    """

    where: str = ""
    who: str = ""
    when: str = ""
    why: str = ""

    _FIELDS = ("where", "who", "when", "why")

    def __post_init__(self) -> None:
        for f in self._FIELDS:
            object.__setattr__(self, f, _check_text(f"source field '{f}'", getattr(self, f)))

    @property
    def is_sourced(self) -> bool:
        return bool(self.where.strip())

    @classmethod
    def coerce(cls, value: Any, *, what: str = "source") -> Source:
        """Accept a Source, None (unsourced), a string (``where``) or a mapping."""
        if value is None:
            return UNSOURCED
        if isinstance(value, Source):
            return value
        if isinstance(value, str):
            return cls(where=value)
        if isinstance(value, Mapping):
            unknown = set(value) - set(cls._FIELDS)
            if unknown:
                raise CaseError(
                    f"{what} has unknown field(s) {sorted(map(str, unknown))}; "
                    f"use only {list(cls._FIELDS)}"
                )
            return cls(**{k: value[k] for k in cls._FIELDS if k in value})
        raise CaseTypeError(
            f"{what} must be a Source, a string or a dict with {list(cls._FIELDS)}, "
            f"got {type(value).__name__}"
        )

    def to_dict(self) -> dict[str, str]:
        return {f: getattr(self, f) for f in self._FIELDS}

    def __str__(self) -> str:
        if not self.is_sourced:
            return "unsourced"
        parts = [self.where]
        if self.who:
            parts.append(f"set by {self.who}")
        if self.when:
            parts.append(self.when)
        text = ", ".join(parts)
        return f"{text} ({self.why})" if self.why else text


UNSOURCED = Source()


@dataclass(frozen=True)
class Hypothesis:
    """One of a set of mutually exclusive explanations, with its prior."""

    name: str
    prior: float
    description: str = ""
    source: Source = UNSOURCED
    catch_all: bool = False

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "prior": self.prior,
            "description": self.description,
            "source": self.source.to_dict(),
            "catch_all": self.catch_all,
        }


@dataclass(frozen=True)
class Scenario:
    """A named alternative set of priors (e.g. "industry base rates")."""

    name: str
    priors: Mapping[str, float]
    source: Source = UNSOURCED
    note: str = ""

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "priors": dict(self.priors),
            "source": self.source.to_dict(),
            "note": self.note,
        }


class Evidence:
    """One piece of evidence: its states and P(state | hypothesis).

    ``likelihoods`` is a DataFrame with the states as rows and the case's
    hypotheses as columns. With ``observed_only=True`` the table has a single
    row, the observed state, and its entries need not sum to 1 (a likelihood
    vector). Instances are immutable; the case replaces them on edit.
    """

    __slots__ = (
        "name", "states", "hypotheses", "_table", "observed", "description",
        "source", "shared_source", "observed_only", "entry_sources",
    )

    def __init__(
        self,
        name: str,
        states: tuple[str, ...],
        hypotheses: tuple[str, ...],
        table: np.ndarray,
        observed: str | None = None,
        description: str = "",
        source: Source = UNSOURCED,
        shared_source: str | None = None,
        observed_only: bool = False,
        entry_sources: Mapping[tuple[str, str], Source] | None = None,
    ) -> None:
        self.name = name
        self.states = tuple(states)
        self.hypotheses = tuple(hypotheses)
        table = np.array(table, dtype=float)
        table.setflags(write=False)
        self._table = table
        self.observed = observed
        self.description = description
        self.source = source
        self.shared_source = shared_source
        self.observed_only = observed_only
        self.entry_sources = dict(entry_sources or {})

    # read-only views -----------------------------------------------------
    @property
    def likelihoods(self) -> pd.DataFrame:
        """P(state | hypothesis): states as rows, hypotheses as columns (a copy)."""
        return pd.DataFrame(
            np.array(self._table),
            index=pd.Index(self.states, name="state"),
            columns=pd.Index(self.hypotheses, name="hypothesis"),
        )

    @property
    def table(self) -> np.ndarray:
        """The likelihood table as a read-only array (states x hypotheses)."""
        return self._table

    def likelihood_of(self, state: str) -> pd.Series:
        i = self._state_index(state)
        return pd.Series(np.array(self._table[i]), index=list(self.hypotheses), name=state)

    def column_sums(self) -> pd.Series:
        return pd.Series(self._table.sum(axis=0), index=list(self.hypotheses), name="sum")

    def source_of(self, state: str, hypothesis: str) -> Source:
        return self.entry_sources.get((state, hypothesis), self.source)

    @property
    def is_observed(self) -> bool:
        return self.observed is not None

    def _state_index(self, state: str) -> int:
        try:
            return self.states.index(state)
        except ValueError:
            raise CaseError(
                f"evidence '{self.name}' has no state {state!r}; "
                f"its states are {list(self.states)}"
            ) from None

    def _replace(self, **changes: Any) -> Evidence:
        kw = {k: getattr(self, k) for k in self.__slots__ if k != "_table"}
        kw["table"] = changes.pop("table", self._table)
        kw.update(changes)
        return Evidence(**kw)

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "description": self.description,
            "states": list(self.states),
            "likelihoods": {
                h: [float(v) for v in self._table[:, j]] for j, h in enumerate(self.hypotheses)
            },
            "observed": self.observed,
            "observed_only": self.observed_only,
            "shared_source": self.shared_source,
            "source": self.source.to_dict(),
            "entry_sources": [
                {"state": s, "hypothesis": h, "source": src.to_dict()}
                for (s, h), src in self.entry_sources.items()
            ],
        }

    def __repr__(self) -> str:
        obs = f"observed {self.observed!r}" if self.observed is not None else "not yet observed"
        kind = "likelihood vector" if self.observed_only else f"{len(self.states)} states"
        return f"Evidence({self.name!r}: {kind}, {obs})"


# --------------------------------------------------------------------------- the case


def _is_catch_all_name(name: str) -> bool:
    return bool(_CATCH_ALL_RE.match(name))


class Case:
    """An investigation: hypotheses, priors, evidence and prior scenarios.

    Parameters
    ----------
    title : str
        Short title of the case.
    hypotheses : mapping, list, Series or DataFrame
        ``{"H1": 0.5, ...}``; or ``{"H1": {"prior": 0.5, "source": ..., "description": ...,
        "catch_all": ...}}``; or a list of such dicts with a ``name`` key, or of
        :class:`Hypothesis`; or a Series of priors; or a DataFrame with a
        ``name`` column (or names as index), a ``prior`` column and optional
        ``description``, ``catch_all``, ``where``, ``who``, ``when``, ``why``.
    question, analyst, notes : str
        The question the case answers, who works it, free notes.
    normalize : bool
        Rescale priors that do not sum to 1; recorded as an assumption.
    exhaustive : bool
        Declare the hypothesis set provably exhaustive (silences the
        ``no-catch-all`` finding; say why in ``notes``).
    source : Source, str or dict, optional
        Default Source for priors given without one.
    safety_related : bool
        The case touches health or safety: records carry the extra caution.

    Examples
    --------
    >>> import beliefledger as bl
    >>> case = bl.Case("Pump trip", hypotheses={"bearing": 0.6, "Other": 0.4})
    >>> case
    Case('Pump trip': 2 hypotheses, priors sum to 1; 0 evidence items, 0 observed; scenario 'base')
    """

    def __init__(
        self,
        title: str,
        hypotheses: Any,
        *,
        question: str = "",
        analyst: str = "",
        notes: str = "",
        normalize: bool = False,
        exhaustive: bool = False,
        source: Any = None,
        safety_related: bool = False,
    ) -> None:
        self.title = _check_name("case title", title)
        self.question = _check_text("question", question)
        self.analyst = _check_text("analyst", analyst)
        self.notes = _check_text("notes", notes)
        self.exhaustive = bool(exhaustive)
        self.safety_related = bool(safety_related)
        self._hyps: dict[str, Hypothesis] = {}
        self._evidence: dict[str, Evidence] = {}
        self._scenarios: dict[str, Scenario] = {}
        self._active = BASE_SCENARIO
        self.assumptions: list[dict[str, str]] = []
        self.extras: dict[str, Any] = {}
        self._listeners: list[Callable[[Case, str], None]] = []
        self._version = 0
        default_source = Source.coerce(source, what="case source")
        hyps = _parse_hypotheses(hypotheses, default_source)
        self._hyps = {h.name: h for h in hyps}
        total = sum(h.prior for h in hyps)
        if abs(total - 1.0) > SUM_TOL:
            if not normalize:
                raise CaseError(
                    f"priors sum to {_fmt(total)}, not 1 (within {SUM_TOL:g}); "
                    "fix them or pass normalize=True to rescale them (recorded as an assumption)"
                )
            self._hyps = _rescaled(self._hyps, total)
            self._record("normalize-priors", BASE_SCENARIO,
                         f"priors entered summed to {_fmt(total)}; rescaled to sum to 1")

    # ------------------------------------------------------------------ views
    @property
    def hypotheses(self) -> dict[str, Hypothesis]:
        """Hypotheses in order, name -> :class:`Hypothesis` (a copy of the mapping)."""
        return dict(self._hyps)

    @property
    def hypothesis_names(self) -> list[str]:
        return list(self._hyps)

    @property
    def evidence(self) -> dict[str, Evidence]:
        """Evidence items in order, name -> :class:`Evidence` (a copy of the mapping)."""
        return dict(self._evidence)

    @property
    def evidence_names(self) -> list[str]:
        return list(self._evidence)

    @property
    def base_priors(self) -> pd.Series:
        """The hypothesis table's own priors (the 'base' scenario)."""
        return pd.Series({n: h.prior for n, h in self._hyps.items()}, name="prior", dtype=float)

    @property
    def scenarios(self) -> dict[str, Scenario]:
        """Named prior scenarios added with :meth:`add_scenario` (not 'base')."""
        return dict(self._scenarios)

    @property
    def scenario_names(self) -> list[str]:
        """'base' followed by the named scenarios, in the order added."""
        return [BASE_SCENARIO, *self._scenarios]

    @property
    def active_scenario(self) -> str:
        return self._active

    @property
    def priors(self) -> pd.Series:
        """Priors of the active scenario (the ones :meth:`update` uses)."""
        return self.scenario_priors(self._active)

    def scenario_priors(self, name: str) -> pd.Series:
        if name == BASE_SCENARIO:
            return self.base_priors
        sc = self._get_scenario(name)
        return pd.Series([sc.priors[h] for h in self._hyps], index=list(self._hyps),
                         name="prior", dtype=float)

    @property
    def observed_evidence(self) -> list[Evidence]:
        return [e for e in self._evidence.values() if e.observed is not None]

    @property
    def version(self) -> int:
        """Increases by one with every successful edit (views use it to refresh)."""
        return self._version

    # ------------------------------------------------------------------ compute
    def update(self):
        """Run the sequential Bayesian update; returns a :class:`~beliefledger.engine.Trace`."""
        from .engine import update

        return update(self)

    def observed_steps(self) -> list[tuple[str, tuple[str, ...], np.ndarray]]:
        """The update steps in order: ``(step name, member items, P(observed | H) vector)``.

        One step per observed evidence item; the engine consumes this list.
        """
        return [
            (e.name, (e.name,), e.table[e.states.index(e.observed)])
            for e in self._evidence.values()
            if e.observed is not None
        ]

    # ------------------------------------------------------------------ listeners
    def on_change(self, callback: Callable[[Case, str], None]) -> Callable[[], None]:
        """Call ``callback(case, what)`` after every successful edit; returns an unsubscribe."""
        self._listeners.append(callback)

        def unsubscribe() -> None:
            with contextlib.suppress(ValueError):
                self._listeners.remove(callback)

        return unsubscribe

    @contextlib.contextmanager
    def _edit(self, what: str):
        """Apply an edit atomically: on any exception restore the previous state."""
        snapshot = (dict(self._hyps), dict(self._evidence), dict(self._scenarios),
                    self._active, list(self.assumptions), self.title, self.question,
                    self.analyst, self.notes, self.exhaustive, self.safety_related,
                    copy.deepcopy(self.extras))
        try:
            yield
            self._validate()
        except BaseException:
            (self._hyps, self._evidence, self._scenarios, self._active, self.assumptions,
             self.title, self.question, self.analyst, self.notes, self.exhaustive,
             self.safety_related, self.extras) = snapshot
            raise
        self._version += 1
        for cb in list(self._listeners):
            cb(self, what)

    def _validate(self) -> None:
        if not self._hyps:
            raise CaseError("the case has no hypotheses; add at least two")
        names = tuple(self._hyps)
        for e in self._evidence.values():
            if e.hypotheses != names:
                raise CaseError(f"internal: evidence '{e.name}' columns out of step with hypotheses")
        for sc in self._scenarios.values():
            if set(sc.priors) != set(names):
                raise CaseError(f"internal: scenario '{sc.name}' out of step with hypotheses")

    def _record(self, kind: str, target: str, detail: str) -> None:
        self.assumptions.append({"kind": kind, "target": target, "detail": detail})

    # ------------------------------------------------------------------ text fields
    def set_details(self, *, title: str | None = None, question: str | None = None,
                    analyst: str | None = None, notes: str | None = None,
                    exhaustive: bool | None = None, safety_related: bool | None = None) -> None:
        """Change the case's descriptive fields."""
        with self._edit("details"):
            if title is not None:
                self.title = _check_name("case title", title)
            if question is not None:
                self.question = _check_text("question", question)
            if analyst is not None:
                self.analyst = _check_text("analyst", analyst)
            if notes is not None:
                self.notes = _check_text("notes", notes)
            if exhaustive is not None:
                self.exhaustive = bool(exhaustive)
            if safety_related is not None:
                self.safety_related = bool(safety_related)

    def set_extra(self, key: str, value: Any) -> None:
        """Store a JSON-ready section in ``case.extras`` (used by analysis modules for
        their inputs, e.g. uncertainty ranges or a loss table); ``None`` removes it.
        The section is validated by the validator registered for ``key`` in
        :data:`beliefledger.casefile.EXTRA_VALIDATORS`, when there is one."""
        k = _check_name("extras key", key)
        from .casefile import validate_extra

        new = None if value is None else validate_extra(k, value, self)
        with self._edit("extras"):
            if new is None:
                self.extras.pop(k, None)
            else:
                self.extras[k] = new

    # ------------------------------------------------------------------ priors
    def set_prior(self, hypothesis: str, prior: float, *, source: Any = None,
                  rebalance: bool = False) -> None:
        """Set one hypothesis' base prior.

        With ``rebalance=True`` the other priors are rescaled in proportion so
        the sum stays 1 (recorded as an assumption); otherwise the sum may be
        left off 1, which the trace reports as a ``prior-sum`` error until fixed.
        """
        h = self._get_hyp(hypothesis)
        p = _check_probability(f"prior of hypothesis '{h.name}'", prior)
        src = h.source if source is None else Source.coerce(source, what=f"source of prior '{h.name}'")
        with self._edit("prior"):
            if rebalance:
                rest = sum(x.prior for n, x in self._hyps.items() if n != h.name)
                if rest <= 0 and p < 1:
                    raise CaseError(
                        f"cannot rebalance: the other hypotheses' priors sum to 0, so they "
                        f"cannot absorb the change of '{h.name}' to {_fmt(p)}; set them explicitly"
                    )
                scale = (1 - p) / rest if rest > 0 else 0.0
                self._hyps = {n: (replace(x, prior=p, source=src) if n == h.name
                                  else replace(x, prior=x.prior * scale))
                              for n, x in self._hyps.items()}
                self._record("rebalance-priors", BASE_SCENARIO,
                             f"prior of '{h.name}' set to {_fmt(p)}; the others rescaled by "
                             f"{_fmt(scale)} to keep the sum at 1")
            else:
                self._hyps[h.name] = replace(h, prior=p, source=src)

    def set_priors(self, priors: Mapping[str, float], *, source: Any = None,
                   normalize: bool = False) -> None:
        """Set all base priors at once; they must sum to 1 unless ``normalize=True``."""
        values = self._complete_priors(priors, "priors")
        total = sum(values.values())
        with self._edit("priors"):
            if abs(total - 1) > SUM_TOL:
                if not normalize:
                    raise CaseError(
                        f"priors sum to {_fmt(total)}, not 1; fix them or pass normalize=True"
                    )
                values = {k: v / total for k, v in values.items()}
                self._record("normalize-priors", BASE_SCENARIO,
                             f"priors entered summed to {_fmt(total)}; rescaled to sum to 1")
            new = {}
            for n, h in self._hyps.items():
                src = h.source if source is None else Source.coerce(source, what="priors source")
                new[n] = replace(h, prior=values[n], source=src)
            self._hyps = new

    def normalize_priors(self) -> None:
        """Rescale the base priors to sum to 1 (an explicit choice, recorded)."""
        total = float(self.base_priors.sum())
        if total <= 0:
            raise CaseError("priors sum to 0; set at least one positive prior before normalising")
        with self._edit("priors"):
            if abs(total - 1) > 0:
                self._hyps = _rescaled(self._hyps, total)
                self._record("normalize-priors", BASE_SCENARIO,
                             f"priors summed to {_fmt(total)}; rescaled to sum to 1")

    def set_hypothesis(self, name: str, *, description: str | None = None,
                       source: Any = None, catch_all: bool | None = None) -> None:
        """Change a hypothesis' description, prior source or catch-all flag."""
        h = self._get_hyp(name)
        changes: dict[str, Any] = {}
        if description is not None:
            changes["description"] = _check_text(f"description of '{h.name}'", description)
        if source is not None:
            changes["source"] = Source.coerce(source, what=f"source of prior '{h.name}'")
        if catch_all is not None:
            changes["catch_all"] = bool(catch_all)
        with self._edit("hypothesis"):
            self._hyps[h.name] = replace(h, **changes)

    # ------------------------------------------------------------------ hypotheses
    def add_hypothesis(self, name: str, prior: float, *, likelihoods: Mapping[str, Any] | None = None,
                       description: str = "", source: Any = None, catch_all: bool | None = None,
                       scenario_priors: Mapping[str, float] | None = None) -> None:
        """Add a hypothesis; the other priors are rescaled by ``1 - prior`` (recorded).

        ``likelihoods`` maps every existing evidence item to this hypothesis'
        column (a list over the item's states, a dict state -> p, or a number
        for an observed-only item). ``scenario_priors`` gives its prior in
        each named scenario (default: the same ``prior``).
        """
        nm = _check_name("hypothesis", name)
        if nm in self._hyps:
            raise CaseError(f"hypothesis '{nm}' already exists; choose another name or edit it")
        p = _check_probability(f"prior of hypothesis '{nm}'", prior)
        if p >= 1 and self._hyps:
            raise CaseError(f"prior of new hypothesis '{nm}' is {p:g}; it must be below 1 "
                            "so the others keep some belief")
        likelihoods = dict(likelihoods or {})
        missing = [e for e in self._evidence if e not in likelihoods]
        if missing:
            raise CaseError(
                f"new hypothesis '{nm}' needs a likelihood column for evidence {missing}; "
                "pass likelihoods={evidence: [P(state | new hypothesis), ...]}"
            )
        unknown = [e for e in likelihoods if e not in self._evidence]
        if unknown:
            raise CaseError(f"likelihoods given for unknown evidence {unknown}; "
                            f"the case's evidence is {list(self._evidence)}")
        hyp = Hypothesis(nm, p, _check_text("description", description),
                         Source.coerce(source, what=f"source of prior '{nm}'"),
                         _is_catch_all_name(nm) if catch_all is None else bool(catch_all))
        sc_p = {}
        for sname in self._scenarios:
            v = (scenario_priors or {}).get(sname, p)
            sc_p[sname] = _check_probability(f"prior of '{nm}' in scenario '{sname}'", v)
        if scenario_priors:
            bad = [s for s in scenario_priors if s not in self._scenarios]
            if bad:
                raise CaseError(f"scenario_priors names unknown scenario(s) {bad}")
        new_cols = {}
        for ename, ev in self._evidence.items():
            new_cols[ename] = _parse_column(ev, nm, likelihoods[ename])
        with self._edit("hypotheses"):
            scale = 1 - p
            self._hyps = {n: replace(h, prior=h.prior * scale) for n, h in self._hyps.items()}
            self._hyps[nm] = hyp
            if self._hyps and scale != 1:
                self._record("rebalance-priors", BASE_SCENARIO,
                             f"hypothesis '{nm}' added with prior {_fmt(p)}; the others "
                             f"rescaled by {_fmt(scale)}")
            for sname, sc in self._scenarios.items():
                q = sc_p[sname]
                pri = {k: v * (1 - q) for k, v in sc.priors.items()}
                pri[nm] = q
                self._scenarios[sname] = replace(sc, priors=pri)
                self._record("rebalance-priors", sname,
                             f"hypothesis '{nm}' added with prior {_fmt(q)}; the others rescaled")
            names = tuple(self._hyps)
            for ename, ev in self._evidence.items():
                table = np.column_stack([ev.table, new_cols[ename]])
                self._evidence[ename] = ev._replace(table=table, hypotheses=names)

    def remove_hypothesis(self, name: str) -> None:
        """Remove a hypothesis; the remaining priors are rescaled to sum to 1 (recorded)."""
        h = self._get_hyp(name)
        if len(self._hyps) <= 1:
            raise CaseError(f"cannot remove '{h.name}': it is the only hypothesis")
        rest = 1 - h.prior
        if sum(x.prior for n, x in self._hyps.items() if n != h.name) <= 0:
            raise CaseError(f"cannot remove '{h.name}': the other hypotheses all have prior 0")
        with self._edit("hypotheses"):
            del self._hyps[h.name]
            total = sum(x.prior for x in self._hyps.values())
            self._hyps = _rescaled(self._hyps, total)
            self._record("rebalance-priors", BASE_SCENARIO,
                         f"hypothesis '{h.name}' (prior {_fmt(h.prior)}) removed; the others "
                         f"rescaled by {_fmt(1 / rest) if rest > 0 else 'n/a'}")
            for sname, sc in self._scenarios.items():
                pri = {k: v for k, v in sc.priors.items() if k != h.name}
                t = sum(pri.values())
                if t <= 0:
                    raise CaseError(f"cannot remove '{h.name}': in scenario '{sname}' the other "
                                    "hypotheses all have prior 0")
                self._scenarios[sname] = replace(sc, priors={k: v / t for k, v in pri.items()})
            names = tuple(self._hyps)
            for ename, ev in self._evidence.items():
                j = ev.hypotheses.index(h.name)
                self._evidence[ename] = ev._replace(
                    table=np.delete(ev.table, j, axis=1), hypotheses=names,
                    entry_sources={k: v for k, v in ev.entry_sources.items() if k[1] != h.name})

    def rename_hypothesis(self, old: str, new: str) -> None:
        """Rename a hypothesis everywhere (evidence tables, scenarios)."""
        h = self._get_hyp(old)
        nm = _check_name("hypothesis", new)
        if nm == h.name:
            return
        if nm in self._hyps:
            raise CaseError(f"cannot rename '{h.name}' to '{nm}': that name is taken")
        with self._edit("hypotheses"):
            self._hyps = {(nm if n == h.name else n): (replace(x, name=nm) if n == h.name else x)
                          for n, x in self._hyps.items()}
            for sname, sc in self._scenarios.items():
                self._scenarios[sname] = replace(
                    sc, priors={(nm if k == h.name else k): v for k, v in sc.priors.items()})
            names = tuple(self._hyps)
            for ename, ev in self._evidence.items():
                self._evidence[ename] = ev._replace(
                    hypotheses=names,
                    entry_sources={(s, nm if hh == h.name else hh): v
                                   for (s, hh), v in ev.entry_sources.items()})

    # ------------------------------------------------------------------ evidence
    def add_evidence(self, name: str, *, likelihoods: Any, states: Iterable[str] | None = None,
                     observed: str | None = None, source: Any = None, description: str = "",
                     shared_source: str | None = None, observed_only: bool = False,
                     normalize: bool = False) -> Evidence:
        """Add an evidence item with its likelihood table P(state | hypothesis).

        ``likelihoods`` may be a dict hypothesis -> list over ``states``, a dict
        hypothesis -> {state: p}, a DataFrame (states as rows, hypotheses as
        columns) or the path of a CSV file in that layout (first column: the
        states). With ``observed_only=True``, give P(observed state | H) per
        hypothesis (dict hypothesis -> number); ``observed`` names the state and
        the numbers need not sum to 1.
        """
        ev = self._build_evidence(name, likelihoods=likelihoods, states=states, observed=observed,
                                  source=source, description=description,
                                  shared_source=shared_source, observed_only=observed_only,
                                  normalize=normalize)
        with self._edit("evidence"):
            if normalize and not observed_only:
                self._record("normalize-likelihoods", ev.name,
                             "likelihood columns rescaled to sum to 1 over the states")
            self._evidence[ev.name] = ev
        return ev

    def _build_evidence(self, name, *, likelihoods, states, observed, source, description,
                        shared_source, observed_only, normalize) -> Evidence:
        nm = _check_name("evidence", name)
        if nm in self._evidence:
            raise CaseError(f"evidence '{nm}' already exists; choose another name or edit it")
        hyps = tuple(self._hyps)
        if observed_only:
            if observed is None:
                raise CaseError(f"evidence '{nm}' is observed_only, so name its observed state "
                                "with observed='...'")
            obs = _check_name(f"observed state of '{nm}'", observed)
            if states is not None and list(states) not in ([obs], []):
                raise CaseError(f"evidence '{nm}' is observed_only: give only the observed state")
            if isinstance(likelihoods, pd.Series):
                likelihoods = likelihoods.to_dict()
            if not isinstance(likelihoods, Mapping):
                raise CaseTypeError(f"likelihoods of observed-only evidence '{nm}' must map each "
                                    "hypothesis to P(observed | hypothesis)")
            _check_keys(nm, likelihoods, hyps)
            row = []
            for h in hyps:
                v = likelihoods[h]
                if isinstance(v, list | tuple) and len(v) == 1:
                    v = v[0]
                row.append(_check_probability(f"likelihood of '{obs}' for evidence '{nm}' "
                                              f"under hypothesis '{h}'", v))
            table = np.array([row])
            st = (obs,)
        else:
            st, table = _parse_table(nm, likelihoods, states, hyps)
            sums = table.sum(axis=0)
            for j, h in enumerate(hyps):
                if abs(sums[j] - 1) > SUM_TOL:
                    if normalize and sums[j] > 0:
                        continue
                    raise CaseError(
                        f"likelihoods of evidence '{nm}' for hypothesis '{h}' sum to "
                        f"{sums[j]:.4g} over its states (want 1 within {SUM_TOL:g}); fix the "
                        "column, pass normalize=True, or declare the evidence with observed_only=True"
                    )
            if normalize:
                table = table / sums
            if observed is not None:
                obs = observed if isinstance(observed, str) else observed
                if obs not in st:
                    raise CaseError(f"observed state {obs!r} of evidence '{nm}' is not among its "
                                    f"states {list(st)}")
        tag = None
        if shared_source is not None:
            tag = _check_name(f"shared-source tag of '{nm}'", shared_source)
        return Evidence(nm, st, hyps, table, observed=observed,
                        description=_check_text("description", description),
                        source=Source.coerce(source, what=f"source of evidence '{nm}'"),
                        shared_source=tag, observed_only=bool(observed_only))

    def remove_evidence(self, name: str) -> None:
        ev = self._get_ev(name)
        with self._edit("evidence"):
            del self._evidence[ev.name]

    def rename_evidence(self, old: str, new: str) -> None:
        ev = self._get_ev(old)
        nm = _check_name("evidence", new)
        if nm == ev.name:
            return
        if nm in self._evidence:
            raise CaseError(f"cannot rename evidence '{ev.name}' to '{nm}': that name is taken")
        with self._edit("evidence"):
            self._evidence = {(nm if k == ev.name else k): (v._replace(name=nm) if k == ev.name
                                                             else v)
                              for k, v in self._evidence.items()}

    def set_evidence(self, name: str, *, description: str | None = None, source: Any = None,
                     shared_source: str | None | bool = False) -> None:
        """Change an item's description, source, or shared-source tag (``None`` clears it)."""
        ev = self._get_ev(name)
        changes: dict[str, Any] = {}
        if description is not None:
            changes["description"] = _check_text(f"description of '{ev.name}'", description)
        if source is not None:
            changes["source"] = Source.coerce(source, what=f"source of evidence '{ev.name}'")
        if shared_source is not False:
            changes["shared_source"] = (None if shared_source is None else
                                        _check_name(f"shared-source tag of '{ev.name}'",
                                                    shared_source))
        with self._edit("evidence"):
            self._evidence[ev.name] = ev._replace(**changes)

    def observe(self, evidence: str, state: str | None) -> None:
        """Record the observed state of an evidence item (``None``: not yet observed)."""
        ev = self._get_ev(evidence)
        if state is not None:
            if not isinstance(state, str):
                raise CaseTypeError(f"observed state of '{ev.name}' must be a string, got "
                                    f"{type(state).__name__} {state!r:.60}")
            if state not in ev.states:
                raise CaseError(f"observed state {state!r} of evidence '{ev.name}' is not among "
                                f"its states {list(ev.states)}; pick one of them or None")
        with self._edit("observed"):
            self._evidence[ev.name] = ev._replace(observed=state)

    def set_likelihood(self, evidence: str, hypothesis: str, value: Any, *,
                       state: str | None = None, source: Any = None,
                       normalize: bool = False) -> None:
        """Set likelihoods of one hypothesis for an evidence item.

        With ``state`` given, ``value`` is the single entry P(state | hypothesis);
        the column may then no longer sum to 1 (a ``column-sum`` error finding
        until it is fixed). Without ``state``, ``value`` is the whole column (a
        list over the states or a dict state -> p) and must sum to 1 unless
        ``normalize=True`` or the item is observed-only.
        """
        ev = self._get_ev(evidence)
        h = self._get_hyp(hypothesis)
        j = ev.hypotheses.index(h.name)
        table = np.array(ev.table)
        entry_sources = dict(ev.entry_sources)
        src = None if source is None else Source.coerce(
            source, what=f"source of likelihood of '{ev.name}' under '{h.name}'")
        if state is not None:
            i = ev._state_index(state)
            table[i, j] = _check_probability(
                f"likelihood of state {state!r} of evidence '{ev.name}' under hypothesis "
                f"'{h.name}'", value)
            if src is not None:
                entry_sources[(state, h.name)] = src
        else:
            col = _parse_column(ev, h.name, value)
            s = col.sum()
            if not ev.observed_only and abs(s - 1) > SUM_TOL:
                if not normalize or s <= 0:
                    raise CaseError(
                        f"likelihoods of evidence '{ev.name}' for hypothesis '{h.name}' sum to "
                        f"{s:.4g} over its states (want 1 within {SUM_TOL:g}); fix the column "
                        "or pass normalize=True")
                col = col / s
            table[:, j] = col
            if src is not None:
                for st in ev.states:
                    entry_sources[(st, h.name)] = src
        with self._edit("likelihood"):
            if state is None and normalize and not ev.observed_only:
                self._record("normalize-likelihoods", ev.name,
                             f"column of '{h.name}' rescaled to sum to 1")
            self._evidence[ev.name] = ev._replace(table=table, entry_sources=entry_sources)

    def set_likelihoods(self, evidence: str, likelihoods: Any, *, source: Any = None,
                        normalize: bool = False) -> None:
        """Replace an item's whole likelihood table (same states; e.g. imported from CSV)."""
        ev = self._get_ev(evidence)
        if ev.observed_only:
            new = self._build_evidence("\x00tmp", likelihoods=likelihoods, states=None,
                                       observed=ev.observed, source=None, description="",
                                       shared_source=None, observed_only=True, normalize=False)
        else:
            new = self._build_evidence("\x00tmp", likelihoods=likelihoods, states=None,
                                       observed=None, source=None, description="",
                                       shared_source=None, observed_only=False,
                                       normalize=normalize)
        if new.states != ev.states:
            if set(new.states) == set(ev.states):
                order = [new.states.index(s) for s in ev.states]
                new = new._replace(table=new.table[order], states=ev.states)
            else:
                raise CaseError(f"new table for evidence '{ev.name}' has states "
                                f"{list(new.states)}; the item's states are {list(ev.states)}")
        with self._edit("likelihood"):
            if normalize:
                self._record("normalize-likelihoods", ev.name,
                             "imported columns rescaled to sum to 1")
            changes: dict[str, Any] = {"table": new.table, "entry_sources": {}}
            if source is not None:
                changes["source"] = Source.coerce(source, what=f"source of evidence '{ev.name}'")
            self._evidence[ev.name] = ev._replace(**changes)

    # ------------------------------------------------------------------ scenarios
    def add_scenario(self, name: str, priors: Mapping[str, float], *, source: Any = None,
                     note: str = "", normalize: bool = False, replace_existing: bool = False) -> None:
        """Add a named set of priors (must cover every hypothesis and sum to 1)."""
        nm = _check_name("scenario", name)
        if nm == BASE_SCENARIO:
            raise CaseError(f"'{BASE_SCENARIO}' is the hypothesis table's own priors; "
                            "edit those with set_priors, or choose another scenario name")
        if nm in self._scenarios and not replace_existing:
            raise CaseError(f"scenario '{nm}' already exists; pass replace_existing=True to "
                            "overwrite it")
        values = self._complete_priors(priors, f"scenario '{nm}'")
        total = sum(values.values())
        sc_src = Source.coerce(source, what=f"source of scenario '{nm}'")
        with self._edit("scenarios"):
            if abs(total - 1) > SUM_TOL:
                if not normalize:
                    raise CaseError(f"priors of scenario '{nm}' sum to {_fmt(total)}, not 1; "
                                    "fix them or pass normalize=True")
                values = {k: v / total for k, v in values.items()}
                self._record("normalize-priors", nm,
                             f"scenario priors summed to {_fmt(total)}; rescaled to 1")
            self._scenarios[nm] = Scenario(nm, values, sc_src, _check_text("note", note))

    def remove_scenario(self, name: str) -> None:
        sc = self._get_scenario(name)
        with self._edit("scenarios"):
            del self._scenarios[sc.name]
            if self._active == sc.name:
                self._active = BASE_SCENARIO

    def use_scenario(self, name: str | None) -> None:
        """Make ``name`` the active scenario (``None`` or 'base': the table's own priors)."""
        nm = BASE_SCENARIO if name is None else name
        if nm != BASE_SCENARIO:
            self._get_scenario(nm)
        with self._edit("scenario"):
            self._active = nm

    @contextlib.contextmanager
    def scenario(self, name: str):
        """Temporarily use scenario ``name`` (restored afterwards, no listeners fired)."""
        if name != BASE_SCENARIO:
            self._get_scenario(name)
        old = self._active
        self._active = name
        try:
            yield self
        finally:
            self._active = old

    # ------------------------------------------------------------------ lookup helpers
    def _get_hyp(self, name: Any) -> Hypothesis:
        if not isinstance(name, str):
            raise CaseTypeError(f"hypothesis name must be a string, got {type(name).__name__}")
        try:
            return self._hyps[name]
        except KeyError:
            raise CaseError(f"no hypothesis named {name!r}; the hypotheses are "
                            f"{_short_list(self._hyps)}") from None

    def _get_ev(self, name: Any) -> Evidence:
        if not isinstance(name, str):
            raise CaseTypeError(f"evidence name must be a string, got {type(name).__name__}")
        try:
            return self._evidence[name]
        except KeyError:
            raise CaseError(f"no evidence named {name!r}; the evidence items are "
                            f"{_short_list(self._evidence)}") from None

    def _get_scenario(self, name: Any) -> Scenario:
        if not isinstance(name, str):
            raise CaseTypeError(f"scenario name must be a string, got {type(name).__name__}")
        try:
            return self._scenarios[name]
        except KeyError:
            raise CaseError(f"no scenario named {name!r}; the scenarios are "
                            f"{self.scenario_names}") from None

    def _complete_priors(self, priors: Any, what: str) -> dict[str, float]:
        if isinstance(priors, pd.Series):
            priors = priors.to_dict()
        if not isinstance(priors, Mapping):
            raise CaseTypeError(f"{what} must map each hypothesis name to its prior, got "
                                f"{type(priors).__name__}")
        _check_keys(what, priors, tuple(self._hyps), kind="priors")
        return {h: _check_probability(f"prior of '{h}' in {what}", priors[h]) for h in self._hyps}

    # ------------------------------------------------------------------ persistence
    def to_dict(self) -> dict[str, Any]:
        """A JSON-ready, lossless description of the case (see casefile for the envelope)."""
        return {
            "title": self.title,
            "question": self.question,
            "analyst": self.analyst,
            "notes": self.notes,
            "exhaustive": self.exhaustive,
            "safety_related": self.safety_related,
            "hypotheses": [h.to_dict() for h in self._hyps.values()],
            "evidence": [e.to_dict() for e in self._evidence.values()],
            "scenarios": [s.to_dict() for s in self._scenarios.values()],
            "active_scenario": self._active,
            "assumptions": [dict(a) for a in self.assumptions],
            "extras": copy.deepcopy(self.extras),
        }

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> Case:
        """Rebuild a case from :meth:`to_dict` output (validated; see casefile)."""
        from .casefile import case_from_dict

        return case_from_dict(data)

    @classmethod
    def from_csv(cls, title: str, path: str | Path, **kwargs: Any) -> Case:
        """Build a case from a CSV of hypotheses (columns name, prior, and optional
        description, catch_all, where, who, when, why)."""
        try:
            frame = pd.read_csv(path, dtype={"name": str})
        except (OSError, UnicodeDecodeError, pd.errors.ParserError) as exc:
            raise CaseError(f"cannot read hypotheses CSV {str(path)!r}: {exc}") from exc
        return cls(title, frame, **kwargs)

    def save(self, path: str | Path) -> Path:
        """Write the case to a JSON case file atomically; returns the path."""
        from .casefile import save_case

        return save_case(self, path)

    def copy(self) -> Case:
        """An independent copy (listeners are not copied)."""
        from .casefile import case_from_dict

        return case_from_dict(self.to_dict())

    # ------------------------------------------------------------------ display
    def __repr__(self) -> str:
        total = sum(h.prior for h in self._hyps.values())
        sums = "priors sum to 1" if abs(total - 1) <= SUM_TOL else f"priors sum to {_fmt(total)}"
        n_obs = sum(1 for e in self._evidence.values() if e.observed is not None)
        return (f"Case({self.title!r}: {len(self._hyps)} hypotheses, {sums}; "
                f"{len(self._evidence)} evidence items, {n_obs} observed; "
                f"scenario {self._active!r})")

    def _repr_html_(self) -> str:
        from .display import case_html

        return case_html(self)

    def _repr_mimebundle_(self, include=None, exclude=None) -> dict[str, Any]:
        from .casefile import envelope

        return {
            "text/plain": repr(self),
            "text/html": self._repr_html_(),
            CASE_MIMETYPE: envelope(self),
        }


# --------------------------------------------------------------------------- parsing helpers


def _short_list(names: Iterable[str], limit: int = 12) -> str:
    names = list(names)
    if len(names) <= limit:
        return str(names)
    return str(names[:limit])[:-1] + f", ... ({len(names)} in all)]"


def _check_keys(what: str, mapping: Mapping, expected: tuple[str, ...], kind: str = "likelihoods") -> None:
    keys = list(mapping)
    bad_type = [k for k in keys if not isinstance(k, str)]
    if bad_type:
        raise CaseTypeError(f"{kind} of {what}: hypothesis names must be strings, got {bad_type[:3]!r}")
    missing = [h for h in expected if h not in mapping]
    if missing:
        raise CaseError(f"{kind} of {what} are missing hypothesis(es) {_short_list(missing)}; "
                        "give a value for every hypothesis")
    extra = [k for k in keys if k not in expected]
    if extra:
        raise CaseError(f"{kind} of {what} name unknown hypothesis(es) {_short_list(extra)}; "
                        f"the hypotheses are {_short_list(expected)}")


def _rescaled(hyps: dict[str, Hypothesis], total: float) -> dict[str, Hypothesis]:
    return {n: replace(h, prior=h.prior / total) for n, h in hyps.items()}


def _parse_hypotheses(spec: Any, default_source: Source) -> list[Hypothesis]:
    rows: list[dict[str, Any]] = []
    if isinstance(spec, pd.DataFrame):
        frame = spec
        if "name" not in frame.columns:
            frame = frame.reset_index().rename(columns={frame.index.name or "index": "name"})
        if "prior" not in frame.columns:
            raise CaseError(f"hypothesis table needs a 'prior' column; it has {list(spec.columns)}")
        src_cols = [c for c in ("where", "who", "when", "why") if c in frame.columns]
        for rec in frame.to_dict(orient="records"):
            row = {k: rec[k] for k in ("name", "prior", "description", "catch_all") if k in rec}
            if "description" in row and (row["description"] is None or
                                         (isinstance(row["description"], float)
                                          and math.isnan(row["description"]))):
                row["description"] = ""
            if "catch_all" in row and not isinstance(row["catch_all"], bool | np.bool_):
                v = row["catch_all"]
                row["catch_all"] = (None if v is None or (isinstance(v, float) and math.isnan(v))
                                    else str(v).strip().lower() in ("1", "true", "yes", "y"))
            if src_cols:
                row["source"] = {c: ("" if rec[c] is None or (isinstance(rec[c], float) and
                                                           math.isnan(rec[c])) else str(rec[c]))
                                 for c in src_cols}
            rows.append(row)
    elif isinstance(spec, pd.Series):
        rows = [{"name": k, "prior": v} for k, v in spec.items()]
    elif isinstance(spec, Mapping):
        for k, v in spec.items():
            if isinstance(v, Mapping):
                if "name" in v and v["name"] != k:
                    raise CaseError(f"hypothesis key {k!r} and its 'name' {v['name']!r} differ")
                rows.append({"name": k, **{kk: vv for kk, vv in v.items() if kk != "name"}})
            elif isinstance(v, Hypothesis):
                rows.append({"name": k, "prior": v.prior, "description": v.description,
                             "source": v.source, "catch_all": v.catch_all})
            else:
                rows.append({"name": k, "prior": v})
    elif isinstance(spec, list | tuple):
        for item in spec:
            if isinstance(item, Hypothesis):
                rows.append({"name": item.name, "prior": item.prior,
                             "description": item.description, "source": item.source,
                             "catch_all": item.catch_all})
            elif isinstance(item, Mapping):
                rows.append(dict(item))
            else:
                raise CaseTypeError("each hypothesis in a list must be a Hypothesis or a dict "
                                    f"with 'name' and 'prior', got {type(item).__name__}")
    else:
        raise CaseTypeError(
            "hypotheses must be a dict of name -> prior, a list of dicts, a Series or a "
            f"DataFrame, got {type(spec).__name__}")
    if not rows:
        raise CaseError("the hypothesis set is empty; give at least two mutually exclusive "
                        "hypotheses (and usually an 'Other cause' catch-all)")
    allowed = {"name", "prior", "description", "source", "catch_all"}
    out: list[Hypothesis] = []
    seen: set[str] = set()
    for row in rows:
        unknown = set(row) - allowed
        if unknown:
            raise CaseError(f"hypothesis {row.get('name')!r} has unknown field(s) "
                            f"{sorted(map(str, unknown))}; use only {sorted(allowed)}")
        if "name" not in row:
            raise CaseError(f"a hypothesis has no 'name': {row!r:.120}")
        name = _check_name("hypothesis", row["name"])
        if name in seen:
            raise CaseError(f"hypothesis '{name}' appears twice; hypothesis names must be unique")
        seen.add(name)
        if "prior" not in row:
            raise CaseError(f"hypothesis '{name}' has no prior; give 'prior': a number in [0, 1]")
        prior = _check_probability(f"prior of hypothesis '{name}'", row["prior"])
        src = row.get("source")
        src = default_source if src is None else Source.coerce(src, what=f"source of prior '{name}'")
        ca = row.get("catch_all")
        out.append(Hypothesis(
            name=name, prior=prior,
            description=_check_text(f"description of '{name}'", row.get("description", "")),
            source=src,
            catch_all=_is_catch_all_name(name) if ca is None else bool(ca),
        ))
    return out


def _parse_table(name: str, spec: Any, states: Iterable[str] | None,
                 hyps: tuple[str, ...]) -> tuple[tuple[str, ...], np.ndarray]:
    if isinstance(spec, str | Path):
        try:
            spec = pd.read_csv(spec, index_col=0)
        except (OSError, UnicodeDecodeError, pd.errors.ParserError, ValueError) as exc:
            raise CaseError(f"cannot read likelihood CSV {str(spec)!r} for evidence '{name}': "
                            f"{exc}") from exc
        spec.index = spec.index.map(str)
    if isinstance(spec, pd.DataFrame):
        st_from_frame = tuple(str(s) for s in spec.index)
        if states is not None:
            st = tuple(states)
            if set(st) != set(st_from_frame):
                raise CaseError(f"likelihood table of evidence '{name}' has rows "
                                f"{list(st_from_frame)} but states {list(st)} were given")
            spec = spec.loc[list(st)]
        else:
            st = st_from_frame
        spec = {str(c): [spec[c].iloc[i] for i in range(len(st))] for c in spec.columns}
    if not isinstance(spec, Mapping):
        raise CaseTypeError(f"likelihoods of evidence '{name}' must be a dict hypothesis -> "
                            f"list over states, a DataFrame or a CSV path, got {type(spec).__name__}")
    _check_keys(f"evidence '{name}'", spec, hyps)
    if states is None:
        first = spec[hyps[0]]
        if isinstance(first, Mapping):
            states = list(first)
        else:
            raise CaseError(f"evidence '{name}': pass states=[...] naming the rows of the "
                            "likelihood lists")
    if isinstance(states, str):
        raise CaseTypeError(f"states of evidence '{name}' must be a list of names, not one string")
    st = tuple(_check_name(f"state of evidence '{name}'", s) for s in states)
    if len(st) < 1:
        raise CaseError(f"evidence '{name}' has no states; give at least two")
    if len(set(st)) != len(st):
        dup = sorted({s for s in st if st.count(s) > 1})
        raise CaseError(f"evidence '{name}' lists state(s) {dup} twice; state names must be unique")
    table = np.empty((len(st), len(hyps)))
    for j, h in enumerate(hyps):
        col = spec[h]
        if isinstance(col, Mapping):
            miss = [s for s in st if s not in col]
            extra = [s for s in col if s not in st]
            if miss or extra:
                raise CaseError(f"likelihoods of evidence '{name}' for hypothesis '{h}': "
                                f"missing state(s) {miss}, unknown state(s) {extra}; "
                                f"the states are {list(st)}")
            vals = [col[s] for s in st]
        elif isinstance(col, list | tuple | np.ndarray | pd.Series):
            vals = list(col)
            if len(vals) != len(st):
                raise CaseError(f"likelihoods of evidence '{name}' for hypothesis '{h}' have "
                                f"{len(vals)} values but there are {len(st)} states {list(st)}")
        else:
            raise CaseTypeError(f"likelihoods of evidence '{name}' for hypothesis '{h}' must be a "
                                f"list over the states or a dict state -> p, got "
                                f"{type(col).__name__}")
        for i, v in enumerate(vals):
            if isinstance(v, np.generic):
                v = v.item()
            table[i, j] = _check_probability(
                f"likelihood of state '{st[i]}' of evidence '{name}' under hypothesis '{h}'", v)
    return st, table


def _parse_column(ev: Evidence, hyp: str, value: Any) -> np.ndarray:
    what = f"likelihoods of evidence '{ev.name}' for hypothesis '{hyp}'"
    if ev.observed_only and not isinstance(value, list | tuple | Mapping | np.ndarray):
        return np.array([_check_probability(what, value)])
    if isinstance(value, pd.Series):
        value = value.to_dict()
    if isinstance(value, Mapping):
        miss = [s for s in ev.states if s not in value]
        extra = [s for s in value if s not in ev.states]
        if miss or extra:
            raise CaseError(f"{what}: missing state(s) {miss}, unknown state(s) {extra}; the "
                            f"states are {list(ev.states)}")
        vals = [value[s] for s in ev.states]
    elif isinstance(value, list | tuple | np.ndarray):
        vals = list(value)
        if len(vals) != len(ev.states):
            raise CaseError(f"{what} have {len(vals)} values but there are {len(ev.states)} states "
                            f"{list(ev.states)}")
    else:
        raise CaseTypeError(f"{what} must be a list over the states or a dict state -> p, got "
                            f"{type(value).__name__}")
    return np.array([_check_probability(f"{what}, state '{s}'",
                                        v.item() if isinstance(v, np.generic) else v)
                     for s, v in zip(ev.states, vals, strict=True)])


__all__ = [
    "Case", "Hypothesis", "Evidence", "Source", "Scenario", "UNSOURCED",
    "SUM_TOL", "BASE_SCENARIO", "CASE_MIMETYPE",
]

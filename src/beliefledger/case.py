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
the analyst is part-way through typing; the ledger then carries a
``prior-sum`` or ``column-sum`` flag of severity ``error`` until it is
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


def _check_flag(what: str, value: Any) -> bool:
    if not isinstance(value, bool | np.bool_):
        raise CaseTypeError(f"{what} must be True or False, got {type(value).__name__} "
                            f"{value!r:.40}")
    return bool(value)


def _check_probability(what: str, value: Any) -> float:
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


def _fmt(x: float) -> str:
    return f"{x:.6g}"


# --------------------------------------------------------------------------- members


@dataclass(frozen=True)
class Source:
    """Where a number came from, who set it, when, and why.

    ``Source()`` with an empty ``where`` is the "unsourced" default: allowed,
    but reported by the ``unsourced`` flag and listed in the record.
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
    hypotheses as columns. With ``likelihood_evidence=True`` the table has a single
    row, the observed state, and its entries need not sum to 1 (a likelihood
    vector). Instances are immutable; the case replaces them on edit.
    """

    __slots__ = (
        "name", "states", "hypotheses", "_table", "observed", "description",
        "source", "shared_source", "likelihood_evidence", "entry_sources", "given",
        "parent_states", "_conditional",
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
        likelihood_evidence: bool = False,
        entry_sources: Mapping[tuple[str, str], Source] | None = None,
        given: str | None = None,
        parent_states: tuple[str, ...] = (),
        conditional: np.ndarray | None = None,
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
        self.likelihood_evidence = likelihood_evidence
        self.entry_sources = dict(entry_sources or {})
        # A conditional item: P(state | parent state, H) as a read-only array
        # (parent states x states x hypotheses); ``table`` is then the item's
        # marginal P(state | H), derived by the case from the parent's table.
        self.given = given
        self.parent_states = tuple(parent_states)
        if conditional is not None:
            conditional = np.array(conditional, dtype=float)
            conditional.setflags(write=False)
        self._conditional = conditional

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

    @property
    def is_conditional(self) -> bool:
        """True when the item's likelihood is stated given the state of an earlier item."""
        return self.given is not None

    @property
    def conditional(self) -> np.ndarray | None:
        """P(state | parent state, H) as a read-only array (parent states x states x
        hypotheses), or ``None`` for an item stated without a parent."""
        return self._conditional

    @property
    def conditional_likelihoods(self) -> pd.DataFrame | None:
        """P(state | parent state, hypothesis): rows (parent state, state), columns the
        hypotheses (a copy); ``None`` unless the item is conditional."""
        if self._conditional is None:
            return None
        n_p, n_s, n_h = self._conditional.shape
        idx = pd.MultiIndex.from_product([self.parent_states, self.states],
                                         names=[f"{self.given} state", "state"])
        return pd.DataFrame(np.array(self._conditional).reshape(n_p * n_s, n_h), index=idx,
                            columns=pd.Index(self.hypotheses, name="hypothesis"))

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
        kw = {k: getattr(self, k) for k in self.__slots__ if k not in ("_table", "_conditional")}
        kw["table"] = changes.pop("table", self._table)
        kw["conditional"] = changes.pop("conditional", self._conditional)
        kw.update(changes)
        return Evidence(**kw)

    def to_dict(self) -> dict[str, Any]:
        out = {
            "name": self.name,
            "description": self.description,
            "states": list(self.states),
            "likelihoods": {
                h: [float(v) for v in self._table[:, j]] for j, h in enumerate(self.hypotheses)
            },
            "observed": self.observed,
            "likelihood_evidence": self.likelihood_evidence,
            "shared_source": self.shared_source,
            "source": self.source.to_dict(),
            "entry_sources": [
                {"state": s, "hypothesis": h, "source": src.to_dict()}
                for (s, h), src in self.entry_sources.items()
            ],
        }
        if self.given is not None:  # only conditional items carry these keys
            out["given"] = self.given
            out["conditional_likelihoods"] = {
                ps: {h: [float(v) for v in self._conditional[i, :, j]]
                     for j, h in enumerate(self.hypotheses)}
                for i, ps in enumerate(self.parent_states)
            }
        return out

    def __repr__(self) -> str:
        obs = f"observed {self.observed!r}" if self.observed is not None else "not yet observed"
        kind = "likelihood evidence" if self.likelihood_evidence else f"{len(self.states)} states"
        given = f", given {self.given!r}" if self.given is not None else ""
        return f"Evidence({self.name!r}: {kind}{given}, {obs})"


class JointGroup:
    """Evidence items whose combined states share one joint likelihood table per
    hypothesis, so that their dependence within each hypothesis is modelled
    instead of assumed away.

    Two forms:

    * **covariance form** (two items of two states each): P(first state of A,
      first state of B | H) = P(a1 | H)·P(b1 | H) + cov_H, and the other three
      cells follow so that both items keep their own tables as margins. A
      covariance of 0 is conditional independence.
    * **table form** (two or more items of any states): the joint table is given
      whole; its margins must equal the items' own tables.

    Combined states are ordered row-major over the members (the last member's
    state varies fastest). Instances are immutable; the case replaces them.
    """

    __slots__ = ("name", "members", "hypotheses", "_covariance", "_joint", "source", "note")

    def __init__(self, name: str, members: tuple[str, ...], hypotheses: tuple[str, ...], *,
                 covariance: np.ndarray | None = None, joint: np.ndarray | None = None,
                 source: Source = UNSOURCED, note: str = "") -> None:
        if (covariance is None) == (joint is None):
            raise CaseError(f"internal: joint group '{name}' needs exactly one of covariance "
                            "or joint table")
        self.name = name
        self.members = tuple(members)
        self.hypotheses = tuple(hypotheses)
        if covariance is not None:
            covariance = np.array(covariance, dtype=float)
            covariance.setflags(write=False)
        if joint is not None:
            joint = np.array(joint, dtype=float)
            joint.setflags(write=False)
        self._covariance = covariance
        self._joint = joint
        self.source = source
        self.note = note

    @property
    def kind(self) -> str:
        """``"covariance"`` or ``"table"``."""
        return "covariance" if self._covariance is not None else "table"

    @property
    def covariance(self) -> pd.Series | None:
        """Within-hypothesis covariance of the two items' first-state indicators."""
        if self._covariance is None:
            return None
        return pd.Series(np.array(self._covariance), index=list(self.hypotheses),
                         name="covariance")

    def joint_array(self, evidence: Mapping[str, Evidence]) -> np.ndarray:
        """The joint table as an array of shape (states of each member..., hypotheses)."""
        if self._joint is not None:
            shape = tuple(len(evidence[m].states) for m in self.members)
            return self._joint.reshape(*shape, len(self.hypotheses))
        a = evidence[self.members[0]].table
        b = evidence[self.members[1]].table
        sign = np.array([[1.0, -1.0], [-1.0, 1.0]])
        cells = a[:, None, :] * b[None, :, :] + sign[:, :, None] * self._covariance[None, None, :]
        # at a feasible bound one cell is 0 in exact arithmetic; rounding can leave -1e-18
        return np.maximum(cells, 0.0)

    def _replace(self, **changes: Any) -> JointGroup:
        kw = {"name": self.name, "members": self.members, "hypotheses": self.hypotheses,
              "covariance": self._covariance, "joint": self._joint, "source": self.source,
              "note": self.note}
        kw.update(changes)
        return JointGroup(**kw)

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"name": self.name, "members": list(self.members),
                               "kind": self.kind}
        if self._covariance is not None:
            out["covariance"] = {h: float(v) for h, v in zip(self.hypotheses, self._covariance,
                                                              strict=True)}
        else:
            out["joint"] = {h: [float(v) for v in self._joint[:, j]]
                            for j, h in enumerate(self.hypotheses)}
        out["source"] = self.source.to_dict()
        out["note"] = self.note
        return out

    def __repr__(self) -> str:
        return (f"JointGroup({self.name!r}: {len(self.members)} items "
                f"{list(self.members)}, {self.kind} form)")


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
        ``no-catch-all`` flag; say why in ``notes``).
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
        self.exhaustive = _check_flag("exhaustive", exhaustive)
        self.safety_related = _check_flag("safety_related", safety_related)
        self._hyps: dict[str, Hypothesis] = {}
        self._evidence: dict[str, Evidence] = {}
        self._scenarios: dict[str, Scenario] = {}
        self._groups: dict[str, JointGroup] = {}
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
        """Run the sequential Bayesian update; returns a :class:`~beliefledger.engine.Ledger`."""
        from .engine import update

        return update(self)

    def observed_steps(self) -> list[tuple[str, tuple[str, ...], np.ndarray]]:
        """The update steps in order: ``(step name, member items, P(observed | H) vector)``.

        One step per observed evidence item, except that:

        * the observed members of a joint group make one step, named after the
          group and placed at its first observed member; its vector is the
          joint table at the observed states, summed over members not yet
          observed;
        * a conditional item contributes P(its state | the evidence before it,
          H): the row of its table for the parent's observed state or, when the
          parent is not observed, the parent's state summed out given what is
          known of its chain.

        The engine consumes this list.
        """
        if not self._groups and not any(e.given is not None for e in self._evidence.values()):
            return [
                (e.name, (e.name,), e.table[e.states.index(e.observed)])
                for e in self._evidence.values()
                if e.observed is not None
            ]
        group_of = self._group_of()
        roots = self._chain_roots()
        steps: list[tuple[str, tuple[str, ...], np.ndarray]] = []
        done: set[str] = set()
        known: dict[str, dict[str, int]] = {}  # chain root -> {applied item: state index}
        for e in self._evidence.values():
            if e.observed is None:
                continue
            g = group_of.get(e.name)
            if g is not None:
                if g not in done:
                    done.add(g)
                    grp = self._groups[g]
                    members = tuple(m for m in grp.members
                                    if self._evidence[m].observed is not None)
                    steps.append((g, members, self._group_vector(grp, None)))
                continue
            k = e.states.index(e.observed)
            if e.name in roots:
                seen = known.setdefault(roots[e.name], {})
                if e.given is None:  # head of its chain: nothing of the chain came before
                    vec = e.table[k]
                elif e.given in seen:
                    vec = e.conditional[seen[e.given], k]
                else:
                    before = self._chain_probability(roots[e.name], seen)
                    after = self._chain_probability(roots[e.name], {**seen, e.name: k})
                    vec = _safe_ratio(after, before)
                seen[e.name] = k
                steps.append((e.name, (e.name,), vec))
                continue
            steps.append((e.name, (e.name,), e.table[k]))
        return steps

    def predictive_likelihoods(self, name: str) -> pd.DataFrame:
        """P(state | hypothesis, the other observed evidence) for one item.

        For an item with no stated dependence this is its own table. For a
        member of a joint group it is conditioned on the group's other observed
        members; for an item in a conditional chain, on the chain's other
        observed items. Value-of-information analysis uses it for pending items.
        """
        ev = self._get_ev(name)
        return pd.DataFrame(self._predictive_array(ev.name),
                            index=pd.Index(ev.states, name="state"),
                            columns=pd.Index(self.hypothesis_names, name="hypothesis"))

    def _predictive_array(self, name: str) -> np.ndarray:
        ev = self._evidence[name]
        if not self._groups and ev.given is None and not self._has_children(name):
            return ev.table
        g = self._group_of().get(name)
        if g is not None:
            return self._group_vector(self._groups[g], name)
        roots = self._chain_roots()
        if name not in roots:
            return ev.table
        root = roots[name]
        chain = [n for n in self._evidence if roots.get(n) == root]
        seen = {n: self._evidence[n].states.index(self._evidence[n].observed)
                for n in chain if n != name and self._evidence[n].observed is not None}
        below = {n for n in seen if name in self._ancestors(n)}
        if not below:
            if ev.given is None:
                return ev.table
            if ev.given in seen:
                return ev.conditional[seen[ev.given]]
        before = self._chain_probability(root, seen)
        rows = [_safe_ratio(self._chain_probability(root, {**seen, name: k}), before)
                for k in range(len(ev.states))]
        out = np.vstack(rows)
        dead = before <= 0  # the other evidence rules this hypothesis out: use the table
        if dead.any():
            out[:, dead] = ev.table[:, dead]
        return out

    # ------------------------------------------------------------------ dependence helpers
    def _group_of(self) -> dict[str, str]:
        return {m: g.name for g in self._groups.values() for m in g.members}

    def _has_children(self, name: str) -> bool:
        return any(e.given == name for e in self._evidence.values())

    def _chain_roots(self) -> dict[str, str]:
        """Item -> head of its conditional chain, for items in a chain (parents first)."""
        roots: dict[str, str] = {}
        for e in self._evidence.values():
            if e.given is not None:
                r = roots.setdefault(e.given, e.given)
                roots[e.name] = r
        return roots

    def _ancestors(self, name: str) -> list[str]:
        out = []
        cur = self._evidence[name].given
        while cur is not None and cur not in out:
            out.append(cur)
            cur = self._evidence[cur].given if cur in self._evidence else None
        return out

    def _chain_probability(self, root: str, seen: Mapping[str, int]) -> np.ndarray:
        """P(the items in ``seen`` take their states | H) for one conditional chain
        (a tree: every item has at most one parent), summing out the rest."""
        n_h = len(self._hyps)
        if not seen:
            return np.ones(n_h)
        relevant: set[str] = set()
        for n in seen:
            relevant.add(n)
            relevant.update(self._ancestors(n))
        beta: dict[str, np.ndarray] = {}
        for n in reversed([n for n in self._evidence if n in relevant]):
            ev = self._evidence[n]
            b = beta.pop(n, None)
            if b is None:
                b = np.ones((len(ev.states), n_h))
            if n in seen:
                keep = np.zeros_like(b)
                keep[seen[n]] = b[seen[n]]
                b = keep
            if ev.given is None:
                return (ev.table * b).sum(axis=0)
            msg = np.einsum("psh,sh->ph", ev.conditional, b)
            beta[ev.given] = beta[ev.given] * msg if ev.given in beta else msg
        raise CaseError(f"internal: conditional chain from '{root}' has no head")

    def _group_vector(self, grp: JointGroup, free: str | None) -> np.ndarray:
        """Joint table at the members' observed states, summed over the unobserved
        ones; with ``free`` an item name: P(free's state | observed members, H)."""
        arr = grp.joint_array(self._evidence)
        idx: list[Any] = []
        for m in grp.members:
            ev = self._evidence[m]
            if m != free and ev.observed is not None:
                idx.append(ev.states.index(ev.observed))
            else:
                idx.append(slice(None))
        sub = arr[tuple(idx)]
        if free is None:
            axes = tuple(range(sub.ndim - 1))
            return sub.sum(axis=axes) if axes else sub
        kept = [m for m in grp.members if m == free or self._evidence[m].observed is None]
        pos = kept.index(free)
        other = tuple(i for i in range(sub.ndim - 1) if i != pos)
        joint_free = sub.sum(axis=other) if other else sub
        total = joint_free.sum(axis=0)
        out = np.array(self._evidence[free].table, dtype=float)
        ok = total > 0
        out[:, ok] = joint_free[:, ok] / total[ok]
        return out

    def dependence_links(self) -> dict[str, str]:
        """Item -> the stated dependence it takes part in (``"joint group 'G'"`` or
        ``"conditional chain from 'A'"``), for items that have one."""
        out = {m: f"joint group '{g}'" for m, g in self._group_of().items()}
        for n, r in self._chain_roots().items():
            out[n] = f"conditional chain from '{r}'"
        return out

    def _refresh_conditionals(self) -> None:
        """Recompute each conditional item's marginal table from its parent's table."""
        for n, ev in list(self._evidence.items()):
            if ev.given is None:
                continue
            parent = self._evidence.get(ev.given)
            if (parent is None or parent.likelihood_evidence or ev.conditional is None
                    or parent.states != ev.parent_states
                    or ev.conditional.shape[2] != parent.table.shape[1]):
                continue  # _validate_dependence reports it
            marg = np.einsum("psh,ph->sh", ev.conditional, parent.table)
            if marg.shape != ev.table.shape or not np.array_equal(marg, ev.table):
                self._evidence[n] = ev._replace(table=marg)

    def _validate_dependence(self) -> None:
        names = tuple(self._hyps)
        order = {n: i for i, n in enumerate(self._evidence)}
        group_of: dict[str, str] = {}
        for g in self._groups.values():
            if g.hypotheses != names:
                raise CaseError(f"internal: joint group '{g.name}' out of step with hypotheses")
            if g.name in self._evidence or g.name == "prior":
                raise CaseError(f"joint group '{g.name}' has the name of an evidence item or "
                                "of the prior step; steps need distinct names, so rename it")
            if len(g.members) < 2:
                raise CaseError(f"joint group '{g.name}' has {len(g.members)} member(s); "
                                "a group joins at least two evidence items")
            if len(set(g.members)) != len(g.members):
                raise CaseError(f"joint group '{g.name}' lists an item twice: {list(g.members)}")
            for m in g.members:
                if m not in self._evidence:
                    raise CaseError(f"joint group '{g.name}' names unknown evidence '{m}'; the "
                                    f"evidence items are {_short_list(self._evidence)}")
                if m in group_of:
                    raise CaseError(f"evidence '{m}' is in joint groups '{group_of[m]}' and "
                                    f"'{g.name}'; an item belongs to one group at most (merge "
                                    "the groups into one with a joint table)")
                group_of[m] = g.name
                ev = self._evidence[m]
                if ev.likelihood_evidence:
                    raise CaseError(f"evidence '{m}' in joint group '{g.name}' is likelihood evidence; "
                                    "a joint table needs each member's full table over its states")
        for ev in self._evidence.values():
            if ev.given is None:
                continue
            what = f"conditional evidence '{ev.name}'"
            parent = self._evidence.get(ev.given)
            if parent is None:
                raise CaseError(f"{what} is stated given '{ev.given}', which is not an evidence "
                                f"item; the items are {_short_list(self._evidence)}")
            if order[parent.name] >= order[ev.name]:
                raise CaseError(f"{what} is stated given '{parent.name}', which comes after it "
                                "(or is itself); a likelihood may only be stated given an "
                                "earlier item")
            if parent.likelihood_evidence:
                raise CaseError(f"{what} is stated given '{parent.name}', which is likelihood evidence; "
                                "the parent needs a full table over its states")
            if parent.states != ev.parent_states:
                raise CaseError(f"{what} has tables for states {list(ev.parent_states)} of "
                                f"'{parent.name}', whose states are {list(parent.states)}")
            if ev.conditional is None or ev.conditional.shape != (
                    len(parent.states), len(ev.states), len(names)):
                raise CaseError(f"internal: tables of {what} out of step")
            for a, b in ((ev.name, parent.name), (parent.name, ev.name)):
                if a in group_of:
                    if b in group_of and group_of[a] == group_of[b]:
                        raise CaseError(
                            f"dependency cycle: {what} is stated given '{parent.name}' and both "
                            f"are in joint group '{group_of[a]}', which already models their "
                            "dependence; drop the conditional tables or the group")
                    raise CaseError(
                        f"evidence '{a}' is in joint group '{group_of[a]}' and in a conditional "
                        f"link ('{ev.name}' given '{parent.name}'); use one way of stating the "
                        f"dependence: put both items in the group, or drop the group")
        for g in self._groups.values():
            _check_group_numbers(g, self._evidence)

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
                    copy.deepcopy(self.extras), dict(self._groups))
        try:
            yield
            self._refresh_conditionals()
            self._validate()
        except BaseException:
            (self._hyps, self._evidence, self._scenarios, self._active, self.assumptions,
             self.title, self.question, self.analyst, self.notes, self.exhaustive,
             self.safety_related, self.extras, self._groups) = snapshot
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
        self._validate_dependence()

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
                self.exhaustive = _check_flag("exhaustive", exhaustive)
            if safety_related is not None:
                self.safety_related = _check_flag("safety_related", safety_related)

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
                  rescale: bool = False) -> None:
        """Set one hypothesis' base prior.

        With ``rescale=True`` the other priors are rescaled in proportion so
        the sum stays 1 (recorded as an assumption); otherwise the sum may be
        left off 1, which the ledger reports as a ``prior-sum`` error until fixed.
        """
        h = self._get_hyp(hypothesis)
        p = _check_probability(f"prior of hypothesis '{h.name}'", prior)
        src = h.source if source is None else Source.coerce(source, what=f"source of prior '{h.name}'")
        with self._edit("prior"):
            if rescale:
                rest = sum(x.prior for n, x in self._hyps.items() if n != h.name)
                if rest <= 0 and p < 1:
                    raise CaseError(
                        f"cannot rescale: the other hypotheses' priors sum to 0, so they "
                        f"cannot absorb the change of '{h.name}' to {_fmt(p)}; set them explicitly"
                    )
                scale = (1 - p) / rest if rest > 0 else 0.0
                self._hyps = {n: (replace(x, prior=p, source=src) if n == h.name
                                  else replace(x, prior=x.prior * scale))
                              for n, x in self._hyps.items()}
                self._record("rescale-priors", BASE_SCENARIO,
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
            raise CaseError("priors sum to 0; set at least one positive prior before normalizing")
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
                       scenario_priors: Mapping[str, float] | None = None,
                       extra_values: Mapping[str, Any] | None = None) -> None:
        """Add a hypothesis; the other priors are rescaled by ``1 - prior`` (recorded).

        ``likelihoods`` maps every existing evidence item to this hypothesis'
        column (a list over the item's states, a dict state -> p, or a number
        for an likelihood evidence item; for a conditional item, a dict parent state
        -> column). ``scenario_priors`` gives its prior in each named scenario
        (default: the same ``prior``). ``extra_values`` gives the new
        hypothesis' entries of extras sections keyed by hypothesis (e.g.
        ``{"decision": {action: loss}}`` when the case has a loss table).
        Joint groups assume the new hypothesis keeps its items independent
        (covariance 0, or the product of the members' columns); that is
        recorded as an assumption.
        """
        nm = _check_name("hypothesis", name)
        if nm in self._hyps:
            raise CaseError(f"hypothesis '{nm}' already exists; choose another name or edit it")
        p = _check_probability(f"prior of hypothesis '{nm}'", prior)
        if p >= 1 and self._hyps:
            raise CaseError(f"prior of new hypothesis '{nm}' is {p:g}; it must be below 1 "
                            "so the others keep some belief")
        for arg, value in (("likelihoods", likelihoods), ("scenario_priors", scenario_priors)):
            if value is not None and not isinstance(value, Mapping):
                raise CaseTypeError(f"{arg} of new hypothesis '{nm}' must be a dict (evidence or "
                                    f"scenario name -> value), got {type(value).__name__}")
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
        new_cond = {}
        for ename, ev in self._evidence.items():
            if ev.given is not None:
                spec = likelihoods[ename]
                if not isinstance(spec, Mapping) or set(spec) != set(ev.parent_states):
                    raise CaseError(f"new hypothesis '{nm}': conditional evidence '{ename}' needs "
                                    f"a column for each state of '{ev.given}' "
                                    f"{list(ev.parent_states)}, as a dict parent state -> column")
                cols = []
                for ps in ev.parent_states:
                    col = _parse_column(ev, nm, spec[ps])
                    if abs(col.sum() - 1) > SUM_TOL:
                        raise CaseError(f"likelihoods of evidence '{ename}' given '{ev.given}' = "
                                        f"'{ps}' for new hypothesis '{nm}' sum to {col.sum():.4g}"
                                        "; fix the column")
                    cols.append(col)
                new_cond[ename] = np.stack(cols)
                new_cols[ename] = np.zeros(len(ev.states))  # the margin is recomputed
            else:
                new_cols[ename] = _parse_column(ev, nm, likelihoods[ename])
        with self._edit("hypotheses"):
            scale = 1 - p
            self._hyps = {n: replace(h, prior=h.prior * scale) for n, h in self._hyps.items()}
            self._hyps[nm] = hyp
            if self._hyps and scale != 1:
                self._record("rescale-priors", BASE_SCENARIO,
                             f"hypothesis '{nm}' added with prior {_fmt(p)}; the others "
                             f"rescaled by {_fmt(scale)}")
            for sname, sc in self._scenarios.items():
                q = sc_p[sname]
                pri = {k: v * (1 - q) for k, v in sc.priors.items()}
                pri[nm] = q
                self._scenarios[sname] = replace(sc, priors=pri)
                self._record("rescale-priors", sname,
                             f"hypothesis '{nm}' added with prior {_fmt(q)}; the others rescaled")
            names = tuple(self._hyps)
            for ename, ev in self._evidence.items():
                table = np.column_stack([ev.table, new_cols[ename]])
                changes: dict[str, Any] = {"table": table, "hypotheses": names}
                if ename in new_cond:
                    changes["conditional"] = np.concatenate(
                        [ev.conditional, new_cond[ename][:, :, None]], axis=2)
                self._evidence[ename] = ev._replace(**changes)
            self._refresh_conditionals()
            for gname, g in self._groups.items():
                if g.kind == "covariance":
                    self._groups[gname] = g._replace(
                        hypotheses=names, covariance=np.append(g._covariance, 0.0))
                else:
                    col = np.ones(1)
                    for m in g.members:
                        col = np.multiply.outer(col, self._evidence[m].table[:, -1])
                    self._groups[gname] = g._replace(
                        hypotheses=names, joint=np.column_stack([g._joint, col.reshape(-1)]))
                self._record("group-independence", gname,
                             f"hypothesis '{nm}' added: the items of joint group '{gname}' are "
                             "taken as independent under it; state their dependence if known")
            self._sync_extras({}, {nm: dict(extra_values) if extra_values else None})

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
            self._record("rescale-priors", BASE_SCENARIO,
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
                    entry_sources={k: v for k, v in ev.entry_sources.items() if k[1] != h.name},
                    conditional=(None if ev.conditional is None
                                 else np.delete(ev.conditional, j, axis=2)))
            for gname, g in self._groups.items():
                j = g.hypotheses.index(h.name)
                self._groups[gname] = g._replace(
                    hypotheses=names,
                    covariance=None if g._covariance is None else np.delete(g._covariance, j),
                    joint=None if g._joint is None else np.delete(g._joint, j, axis=1))
            self._sync_extras({h.name: None}, {})

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
            for gname, g in self._groups.items():
                self._groups[gname] = g._replace(hypotheses=names)
            self._sync_extras({h.name: nm}, {})

    # ------------------------------------------------------------------ evidence
    def add_evidence(self, name: str, *, likelihoods: Any, states: Iterable[str] | None = None,
                     observed: str | None = None, source: Any = None, description: str = "",
                     shared_source: str | None = None, likelihood_evidence: bool = False,
                     normalize: bool = False) -> Evidence:
        """Add an evidence item with its likelihood table P(state | hypothesis).

        ``likelihoods`` may be a dict hypothesis -> list over ``states``, a dict
        hypothesis -> {state: p}, a DataFrame (states as rows, hypotheses as
        columns) or the path of a CSV file in that layout (first column: the
        states). With ``likelihood_evidence=True``, give P(observed state | H) per
        hypothesis (dict hypothesis -> number); ``observed`` names the state and
        the numbers need not sum to 1.
        """
        if isinstance(name, str) and name.strip() in self._groups:
            raise CaseError(f"'{name.strip()}' is the name of a joint group; evidence and groups "
                            "share the step names, so choose another name")
        ev = self._build_evidence(name, likelihoods=likelihoods, states=states, observed=observed,
                                  source=source, description=description,
                                  shared_source=shared_source, likelihood_evidence=likelihood_evidence,
                                  normalize=normalize)
        with self._edit("evidence"):
            if normalize and not likelihood_evidence:
                self._record("normalize-likelihoods", ev.name,
                             "likelihood columns rescaled to sum to 1 over the states")
            self._evidence[ev.name] = ev
        return ev

    def _build_evidence(self, name, *, likelihoods, states, observed, source, description,
                        shared_source, likelihood_evidence, normalize,
                        replacing: bool = False) -> Evidence:
        nm = _check_name("evidence", name)
        if nm in self._evidence and not replacing:
            raise CaseError(f"evidence '{nm}' already exists; choose another name or edit it")
        hyps = tuple(self._hyps)
        if likelihood_evidence:
            if observed is None:
                raise CaseError(f"evidence '{nm}' is likelihood_evidence, so name its observed state "
                                "with observed='...'")
            obs = _check_name(f"observed state of '{nm}'", observed)
            if states is not None and list(states) not in ([obs], []):
                raise CaseError(f"evidence '{nm}' is likelihood_evidence: give only the observed state")
            if isinstance(likelihoods, pd.Series):
                likelihoods = likelihoods.to_dict()
            if not isinstance(likelihoods, Mapping):
                raise CaseTypeError(f"likelihoods of likelihood evidence evidence '{nm}' must map each "
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
                        "column, pass normalize=True, or declare the evidence with likelihood_evidence=True"
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
                        shared_source=tag, likelihood_evidence=bool(likelihood_evidence))

    def remove_evidence(self, name: str) -> None:
        ev = self._get_ev(name)
        g = self._group_of().get(ev.name)
        if g is not None:
            raise CaseError(f"evidence '{ev.name}' is in joint group '{g}'; remove the group "
                            "first (remove_joint_group)")
        kids = [e.name for e in self._evidence.values() if e.given == ev.name]
        if kids:
            raise CaseError(f"evidence {_short_list(kids)} is stated given '{ev.name}'; remove "
                            "that conditional evidence first")
        with self._edit("evidence"):
            del self._evidence[ev.name]

    def rename_evidence(self, old: str, new: str) -> None:
        ev = self._get_ev(old)
        nm = _check_name("evidence", new)
        if nm == ev.name:
            return
        if nm in self._evidence or nm in self._groups:
            raise CaseError(f"cannot rename evidence '{ev.name}' to '{nm}': that name is taken")
        with self._edit("evidence"):
            self._evidence = {(nm if k == ev.name else k): (v._replace(name=nm) if k == ev.name
                                                             else v)
                              for k, v in self._evidence.items()}
            for k, v in self._evidence.items():
                if v.given == ev.name:
                    self._evidence[k] = v._replace(given=nm)
            for gname, g in self._groups.items():
                if ev.name in g.members:
                    self._groups[gname] = g._replace(
                        members=tuple(nm if m == ev.name else m for m in g.members))

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
        the column may then no longer sum to 1 (a ``column-sum`` error flag
        until it is fixed). Without ``state``, ``value`` is the whole column (a
        list over the states or a dict state -> p) and must sum to 1 unless
        ``normalize=True`` or the item is likelihood evidence.
        """
        ev = self._get_ev(evidence)
        h = self._get_hyp(hypothesis)
        _refuse_conditional_edit(ev)
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
            if not ev.likelihood_evidence and abs(s - 1) > SUM_TOL:
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
            if state is None and normalize and not ev.likelihood_evidence:
                self._record("normalize-likelihoods", ev.name,
                             f"column of '{h.name}' rescaled to sum to 1")
            self._evidence[ev.name] = ev._replace(table=table, entry_sources=entry_sources)

    def set_likelihoods(self, evidence: str, likelihoods: Any, *, source: Any = None,
                        normalize: bool = False) -> None:
        """Replace an item's whole likelihood table (same states; e.g. imported from CSV)."""
        ev = self._get_ev(evidence)
        _refuse_conditional_edit(ev)
        if ev.likelihood_evidence:
            new = self._build_evidence(ev.name, replacing=True, likelihoods=likelihoods, states=None,
                                       observed=ev.observed, source=None, description="",
                                       shared_source=None, likelihood_evidence=True, normalize=False)
        else:
            new = self._build_evidence(ev.name, replacing=True, likelihoods=likelihoods, states=None,
                                       observed=None, source=None, description="",
                                       shared_source=None, likelihood_evidence=False,
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

    # ------------------------------------------------------------------ dependent evidence
    @property
    def joint_groups(self) -> dict[str, JointGroup]:
        """Joint evidence groups in order, name -> :class:`JointGroup` (a copy of the mapping)."""
        return dict(self._groups)

    def add_joint_group(self, name: str, members: Iterable[str], *, covariance: Any = None,
                        correlation: Any = None, joint: Any = None, source: Any = None,
                        note: str = "") -> JointGroup:
        """Join evidence items whose states are not independent given the hypothesis.

        The observed members then enter the update as one step (named ``name``)
        whose likelihood is the joint table at their observed states.

        Parameters
        ----------
        name : str
            Name of the group (and of its update step); distinct from every
            evidence item's name.
        members : list of str
            Existing evidence items with full tables (not likelihood evidence).
        covariance : float or mapping hypothesis -> float, optional
            For two items of two states each: Cov(1[A = a1], 1[B = b1] | H),
            where a1 and b1 are each item's *first* state, so that
            P(a1, b1 | H) = P(a1 | H)·P(b1 | H) + cov. One number applies to
            every hypothesis. It must lie in
            [-min(P(a1)P(b1), P(a2)P(b2)), min(P(a1)P(b2), P(a2)P(b1))] under
            each hypothesis (all four cells non-negative).
        correlation : float or mapping, optional
            The same as a correlation coefficient rho in [-1, 1]:
            cov = rho·sqrt(P(a1)P(a2)P(b1)P(b2)) (the phi coefficient of the
            two indicators).
        joint : DataFrame or mapping, optional
            The whole joint table: a DataFrame whose rows are the combined states
            (a MultiIndex, one level per member, or tuples) and whose columns are
            the hypotheses; or a mapping hypothesis -> {tuple of states: p} or
            hypothesis -> list of p in row-major order of the combined states
            (last member fastest). Each column sums to 1 and its margins equal
            the members' tables.
        source : Source, str or dict, optional
            Where the dependence figures came from.
        note : str
            Why the items are dependent.

        References
        ----------
        The covariance form of two dependent binary tests: Gardner, Stryhn,
        Lind & Collins (2000), "Conditional dependence between tests affects
        the diagnosis and surveillance of animal diseases", *Preventive
        Veterinary Medicine* 45, 107-122 (recalled from memory).
        """
        nm = _check_name("joint group", name)
        if nm in self._groups:
            raise CaseError(f"joint group '{nm}' already exists; remove it first or choose "
                            "another name")
        if isinstance(members, str) or not isinstance(members, Iterable):
            raise CaseTypeError(f"members of joint group '{nm}' must be a list of evidence "
                                f"names, got {type(members).__name__} {members!r:.60}")
        mem = tuple(self._get_ev(m).name for m in members)
        given = [x is not None for x in (covariance, correlation, joint)]
        if sum(given) != 1:
            raise CaseError(f"joint group '{nm}': give exactly one of covariance=, "
                            "correlation= or joint= (a covariance of 0 means independence)")
        hyps = tuple(self._hyps)
        cov = jt = None
        if joint is not None:
            jt = _parse_joint(nm, joint, [self._evidence[m] for m in mem], hyps)
        else:
            if len(mem) != 2:
                raise CaseError(f"joint group '{nm}' has {len(mem)} items; a covariance or "
                                "correlation joins exactly two two-state items (give a joint "
                                "table for more)")
            raw = covariance if covariance is not None else correlation
            label = "covariance" if covariance is not None else "correlation"
            vals = _per_hypothesis(f"{label} of joint group '{nm}'", raw, hyps)
            if label == "correlation":
                a, b = (self._evidence[m] for m in mem)
                for ev in (a, b):
                    if len(ev.states) != 2:
                        raise CaseError(f"joint group '{nm}': a correlation needs two-state "
                                        f"items; '{ev.name}' has states {list(ev.states)}")
                for j, h in enumerate(hyps):
                    if not -1 <= vals[j] <= 1:
                        raise CaseError(f"correlation {vals[j]:g} of joint group '{nm}' under "
                                        f"'{h}' is outside [-1, 1]")
                vals = vals * np.sqrt(a.table[0] * a.table[1] * b.table[0] * b.table[1])
            cov = vals
        grp = JointGroup(nm, mem, hyps, covariance=cov, joint=jt,
                         source=Source.coerce(source, what=f"source of joint group '{nm}'"),
                         note=_check_text(f"note of joint group '{nm}'", note))
        with self._edit("groups"):
            self._groups[nm] = grp
        return grp

    def remove_joint_group(self, name: str) -> None:
        """Remove a joint group; its members go back to being independent items."""
        g = self._get_group(name)
        with self._edit("groups"):
            del self._groups[g.name]

    def joint_table(self, name: str) -> pd.DataFrame:
        """The joint likelihood table of a group: rows the combined states (one index
        level per member), columns the hypotheses."""
        g = self._get_group(name)
        arr = g.joint_array(self._evidence)
        idx = pd.MultiIndex.from_product([self._evidence[m].states for m in g.members],
                                         names=list(g.members))
        return pd.DataFrame(arr.reshape(-1, len(g.hypotheses)), index=idx,
                            columns=pd.Index(g.hypotheses, name="hypothesis"))

    def add_conditional_evidence(self, name: str, *, given: str, likelihoods: Mapping[str, Any],
                                 states: Iterable[str] | None = None, observed: str | None = None,
                                 source: Any = None, description: str = "",
                                 shared_source: str | None = None) -> Evidence:
        """Add an item whose likelihood is stated given the state of an earlier item.

        ``likelihoods`` maps each state of the parent item ``given`` to a table
        P(state | parent state, hypothesis) in any form :meth:`add_evidence`
        accepts. The item's own table (``Evidence.table``) becomes its margin
        over the parent, sum_s P(state | s, H)·P(s | H), kept in step with the
        parent's table. In the update, the item contributes the row for the
        parent's observed state; when the parent is not observed, the parent's
        state is summed out.
        """
        nm = _check_name("evidence", name)
        if nm in self._evidence or nm in self._groups:
            raise CaseError(f"evidence '{nm}' already exists; choose another name or edit it")
        parent = self._get_ev(given)
        st, cond = self._parse_conditional(nm, parent, likelihoods, states)
        if observed is not None and observed not in st:
            raise CaseError(f"observed state {observed!r} of evidence '{nm}' is not among its "
                            f"states {list(st)}")
        tag = None if shared_source is None else _check_name(f"shared-source tag of '{nm}'",
                                                             shared_source)
        ev = Evidence(nm, st, tuple(self._hyps), np.einsum("psh,ph->sh", cond, parent.table),
                      observed=observed, description=_check_text("description", description),
                      source=Source.coerce(source, what=f"source of evidence '{nm}'"),
                      shared_source=tag, given=parent.name, parent_states=parent.states,
                      conditional=cond)
        with self._edit("evidence"):
            self._evidence[nm] = ev
        return ev

    def set_conditional_likelihoods(self, evidence: str, likelihoods: Mapping[str, Any], *,
                                    source: Any = None) -> None:
        """Replace all the tables of a conditional item (one per parent state)."""
        ev = self._get_ev(evidence)
        if ev.given is None:
            raise CaseError(f"evidence '{ev.name}' is not conditional; edit its table with "
                            "set_likelihoods, or add it with add_conditional_evidence")
        st, cond = self._parse_conditional(ev.name, self._evidence[ev.given], likelihoods,
                                           ev.states)
        changes: dict[str, Any] = {"conditional": cond}
        if source is not None:
            changes["source"] = Source.coerce(source, what=f"source of evidence '{ev.name}'")
        with self._edit("likelihood"):
            self._evidence[ev.name] = ev._replace(**changes)

    def _parse_conditional(self, nm: str, parent: Evidence, likelihoods: Any,
                           states: Iterable[str] | None) -> tuple[tuple[str, ...], np.ndarray]:
        if parent.likelihood_evidence:
            raise CaseError(f"evidence '{nm}' cannot be stated given '{parent.name}': that item "
                            "is likelihood evidence, and a parent needs a full table over its states")
        if not isinstance(likelihoods, Mapping):
            raise CaseTypeError(f"likelihoods of conditional evidence '{nm}' must map each state "
                                f"of '{parent.name}' {list(parent.states)} to a table, got "
                                f"{type(likelihoods).__name__}")
        miss = [s for s in parent.states if s not in likelihoods]
        extra = [s for s in likelihoods if s not in parent.states]
        if miss or extra:
            raise CaseError(f"likelihoods of conditional evidence '{nm}': missing state(s) "
                            f"{miss} and unknown state(s) {extra} of '{parent.name}'; give one "
                            f"table for each of {list(parent.states)}")
        hyps = tuple(self._hyps)
        st = None if states is None else tuple(states)
        tables = []
        for ps in parent.states:
            label = f"{nm} | {parent.name} = {ps}"
            st_i, tab = _parse_table(label, likelihoods[ps], st, hyps)
            if st is None:
                st = st_i
            elif st_i != st:
                raise CaseError(f"tables of conditional evidence '{nm}' list different states: "
                                f"{list(st)} and {list(st_i)}")
            sums = tab.sum(axis=0)
            for j, h in enumerate(hyps):
                if abs(sums[j] - 1) > SUM_TOL:
                    raise CaseError(
                        f"likelihoods of evidence '{label}' for hypothesis '{h}' sum to "
                        f"{sums[j]:.4g} over its states (want 1 within {SUM_TOL:g}); fix the "
                        "column")
            tables.append(tab)
        return st, np.stack(tables)

    def _get_group(self, name: Any) -> JointGroup:
        return _lookup("joint group", "groups", self._groups, name)

    def _sync_extras(self, renamed: Mapping[str, str | None],
                     added: Mapping[str, Mapping[str, Any] | None]) -> None:
        """Keep extras sections that are keyed by hypothesis in step with a change of the
        hypothesis set (hooks registered in casefile.EXTRA_HYPOTHESIS_HOOKS)."""
        from .casefile import hypotheses_changed

        for key in list(self.extras):
            self.extras[key] = hypotheses_changed(key, self.extras[key], self, renamed, added)

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
        return _lookup("hypothesis", "hypotheses", self._hyps, name)

    def _get_ev(self, name: Any) -> Evidence:
        return _lookup("evidence", "evidence items", self._evidence, name)

    def _get_scenario(self, name: Any) -> Scenario:
        return _lookup("scenario", "scenarios", self._scenarios, name,
                       known=self.scenario_names)

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
            **({"groups": [g.to_dict() for g in self._groups.values()]} if self._groups else {}),
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


def _refuse_conditional_edit(ev: Evidence) -> None:
    if ev.given is not None:
        raise CaseError(f"evidence '{ev.name}' is stated given '{ev.given}': its table is the "
                        "margin of its conditional tables; edit those with "
                        "set_conditional_likelihoods")


def _safe_ratio(num: np.ndarray, den: np.ndarray) -> np.ndarray:
    """num / den with 0 where den is 0 (a hypothesis already ruled out)."""
    out = np.zeros_like(np.asarray(num, dtype=float))
    np.divide(num, den, out=out, where=den > 0)
    return out


GROUP_MARGIN_TOL = 1e-6
"""How far a joint table's margins may sit from the members' own tables."""


def _check_group_numbers(g: JointGroup, evidence: Mapping[str, Evidence]) -> None:
    """Feasible covariances and coherent joint tables, with messages that give the fix."""
    hyps = g.hypotheses
    if g.kind == "covariance":
        a, b = (evidence[m] for m in g.members)
        for ev in (a, b):
            if len(ev.states) != 2:
                raise CaseError(f"joint group '{g.name}' states a covariance, which needs two "
                                f"items of two states each; '{ev.name}' has {len(ev.states)} "
                                f"states {list(ev.states)}; give the group a joint table instead")
        cov = g._covariance
        lo = -np.minimum(a.table[0] * b.table[0], a.table[1] * b.table[1])
        hi = np.minimum(a.table[0] * b.table[1], a.table[1] * b.table[0])
        for j, h in enumerate(hyps):
            if not (lo[j] - 1e-12 <= cov[j] <= hi[j] + 1e-12):
                raise CaseError(
                    f"covariance {cov[j]:.6g} of joint group '{g.name}' under hypothesis '{h}' is "
                    f"outside its feasible range [{lo[j]:.6g}, {hi[j]:.6g}] (given "
                    f"P('{a.states[0]}' of '{a.name}' | {h}) = {a.table[0, j]:.6g} and "
                    f"P('{b.states[0]}' of '{b.name}' | {h}) = {b.table[0, j]:.6g}); "
                    "choose a covariance in that range")
        return
    shape = tuple(len(evidence[m].states) for m in g.members)
    n = int(np.prod(shape))
    if g._joint.shape != (n, len(hyps)):
        raise CaseError(f"joint table of group '{g.name}' has {g._joint.shape[0]} rows; its "
                        f"members' states combine into {n}")
    arr = g._joint.reshape(*shape, len(hyps))
    sums = g._joint.sum(axis=0)
    for j, h in enumerate(hyps):
        if abs(sums[j] - 1) > SUM_TOL:
            raise CaseError(f"joint table of group '{g.name}' under hypothesis '{h}' sums to "
                            f"{sums[j]:.6g} over the combined states (want 1 within "
                            f"{SUM_TOL:g}); fix the column")
    for k, m in enumerate(g.members):
        ev = evidence[m]
        other = tuple(i for i in range(len(shape)) if i != k)
        margin = arr.sum(axis=other)
        bad = np.abs(margin - ev.table) > GROUP_MARGIN_TOL
        if bad.any():
            i, j = (int(x[0]) for x in np.nonzero(bad))
            raise CaseError(
                f"joint table of group '{g.name}' gives P('{ev.states[i]}' of '{m}' | "
                f"{hyps[j]}) = {margin[i, j]:.6g}, but the item's own table says "
                f"{ev.table[i, j]:.6g}; a joint table's margins must equal its members' "
                "tables (fix the joint table or the item's likelihoods)")


def _per_hypothesis(what: str, value: Any, hyps: tuple[str, ...]) -> np.ndarray:
    """One finite number per hypothesis from a number or a mapping hypothesis -> number."""
    if isinstance(value, pd.Series):
        value = value.to_dict()
    if isinstance(value, Mapping):
        _check_keys(what, value, hyps, kind="values")
        raw = [value[h] for h in hyps]
    else:
        raw = [value] * len(hyps)
    out = []
    for h, v in zip(hyps, raw, strict=True):
        if isinstance(v, np.generic):
            v = v.item()
        if isinstance(v, bool) or not isinstance(v, numbers.Real):
            raise CaseTypeError(f"{what} under '{h}' must be a number, got "
                                f"{type(v).__name__} {v!r:.60}")
        if not math.isfinite(float(v)):
            raise CaseError(f"{what} under '{h}' is {v}; give a finite number")
        out.append(float(v))
    return np.array(out)


def _parse_joint(name: str, spec: Any, members: list[Evidence],
                 hyps: tuple[str, ...]) -> np.ndarray:
    """A joint table (combined states row-major x hypotheses) from a DataFrame or mapping."""
    import itertools

    combos = list(itertools.product(*[m.states for m in members]))
    if len(combos) > 100_000:
        raise CaseError(f"joint group '{name}' would have {len(combos):,} combined states; "
                        "join fewer items")
    pos = {c: i for i, c in enumerate(combos)}
    if isinstance(spec, pd.DataFrame):
        spec = {str(c): {tuple(r) if isinstance(r, tuple) else (r,): spec[c].iloc[i]
                         for i, r in enumerate(spec.index)} for c in spec.columns}
    if not isinstance(spec, Mapping):
        raise CaseTypeError(f"joint table of group '{name}' must be a DataFrame or a mapping "
                            f"hypothesis -> values, got {type(spec).__name__}")
    _check_keys(f"joint group '{name}'", spec, hyps, kind="joint table")
    out = np.empty((len(combos), len(hyps)))
    for j, h in enumerate(hyps):
        col = spec[h]
        if isinstance(col, pd.Series):
            col = {tuple(k) if isinstance(k, tuple) else (k,): v for k, v in col.items()}
        if isinstance(col, Mapping):
            keys = [tuple(k) if isinstance(k, list | tuple) else (k,) for k in col]
            miss = [c for c in combos if c not in keys]
            extra = [k for k in keys if k not in pos]
            if miss or extra:
                raise CaseError(f"joint table of group '{name}' under '{h}': missing combined "
                                f"state(s) {miss[:4]}, unknown {extra[:4]}; rows are tuples of "
                                f"the states of {[m.name for m in members]}")
            vals = [0.0] * len(combos)
            for k, v in zip(keys, col.values(), strict=True):
                vals[pos[k]] = v
        elif isinstance(col, list | tuple | np.ndarray):
            vals = list(col)
            if len(vals) != len(combos):
                raise CaseError(f"joint table of group '{name}' under '{h}' has {len(vals)} "
                                f"values for {len(combos)} combined states")
        else:
            raise CaseTypeError(f"joint table of group '{name}' under '{h}' must be a list or "
                                f"a mapping, got {type(col).__name__}")
        for i, v in enumerate(vals):
            out[i, j] = _check_probability(
                f"joint likelihood of {combos[i]} in group '{name}' under '{h}'",
                v.item() if isinstance(v, np.generic) else v)
    return out


def _lookup(kind: str, plural: str, mapping: Mapping[str, Any], name: Any,
            known: Iterable[str] | None = None) -> Any:
    """``mapping[name]``, or an error naming the kind, the bad name and the choices."""
    if not isinstance(name, str):
        raise CaseTypeError(f"{kind} name must be a string, got {type(name).__name__}")
    try:
        return mapping[name]
    except KeyError:
        choices = list(mapping) if known is None else list(known)
        raise CaseError(f"no {kind} named {name!r}; the {plural} are "
                        f"{_short_list(choices)}") from None


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
    known = set(expected)
    extra = [k for k in keys if k not in known]
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
        states = st
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
    columns = []
    for h in hyps:
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
        columns.append(vals)
    table = _probability_table(
        columns, lambda i, j: (f"likelihood of state '{st[i]}' of evidence '{name}' under "
                               f"hypothesis '{hyps[j]}'"))
    return st, table


def _probability_table(columns: list[list[Any]], describe: Callable[[int, int], str]) -> np.ndarray:
    """Check a table given as columns of values and return it as states x hypotheses.

    Plain numbers are checked in one vectorised pass; anything else (strings,
    booleans, objects) goes through :func:`_check_probability` entry by entry,
    so the error names the first bad entry either way.
    """
    try:
        arr = np.asarray(columns)
    except (ValueError, TypeError):
        arr = None
    if (arr is not None and arr.ndim == 2 and arr.dtype.kind in "fiu"
            and not any(isinstance(v, bool | np.bool_) for col in columns for v in col)):
        with np.errstate(invalid="ignore"):
            a = arr.astype(float)
            ok = np.isfinite(a) & (a >= 0) & (a <= 1)
        if ok.all():
            return np.ascontiguousarray(a.T)
    n_states = len(columns[0]) if columns else 0
    table = np.empty((n_states, len(columns)))
    for j, vals in enumerate(columns):
        for i, v in enumerate(vals):
            if isinstance(v, np.generic):
                v = v.item()
            table[i, j] = _check_probability(describe(i, j), v)
    return table


def _parse_column(ev: Evidence, hyp: str, value: Any) -> np.ndarray:
    what = f"likelihoods of evidence '{ev.name}' for hypothesis '{hyp}'"
    if ev.likelihood_evidence and not isinstance(value, list | tuple | Mapping | np.ndarray):
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
    "Case", "Hypothesis", "Evidence", "JointGroup", "Source", "Scenario", "UNSOURCED",
    "SUM_TOL", "BASE_SCENARIO", "CASE_MIMETYPE",
]

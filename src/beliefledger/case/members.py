"""The members of a case: sources, hypotheses, prior scenarios, evidence items, joint groups,
and the artefacts (files) an evidence item rests on.

Every member is immutable: an edit of the case builds new members and swaps
them in only when the whole new state is valid (see :mod:`.model`).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from .._checks import SUM_TOL, check_text
from .._logmath import log_of
from ..errors import CaseError, CaseTypeError

BASE_SCENARIO = "base"
"""Name of the implicit scenario made of the hypothesis table's own priors."""

CASE_MIMETYPE = "application/vnd.beliefledger.case+json"
"""MIME type of the machine-readable case a displayed case emits (for the sealer)."""


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
            object.__setattr__(self, f, check_text(f"source field '{f}'", getattr(self, f)))

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


SCENARIO_MEANINGS = ("", "equal", "data")
"""What a scenario declares its priors to be: ``""`` the numbers as stated, ``"equal"``
equal priors over whatever hypotheses the case has (kept equal when they change),
``"data"`` taken from a named data set for the hypotheses in ``basis``."""


@dataclass(frozen=True)
class Artefact:
    """A file an evidence item rests on (a photograph, a log extract, a laboratory
    report), known by its name, size and SHA-256 digest: who attached it, when (UTC,
    ISO 8601) and why. The file itself is not kept in the case; ``copy`` is where a
    copy was put when it was attached ("" when none was made)."""

    name: str
    size: int
    sha256: str
    who: str
    when: str
    note: str = ""
    copy: str = ""

    FIELDS = ("name", "size", "sha256", "who", "when", "note", "copy")

    def to_dict(self) -> dict[str, Any]:
        return {f: getattr(self, f) for f in self.FIELDS}

    def __str__(self) -> str:
        return (f"{self.name} ({self.size:,} bytes, SHA-256 {self.sha256[:16]}...; attached by "
                f"{self.who} at {self.when})")


@dataclass(frozen=True)
class Scenario:
    """A named alternative set of priors (e.g. "industry base rates").

    ``meaning`` says what the priors are meant to be (see
    :data:`SCENARIO_MEANINGS`); for ``"data"``, ``basis`` lists the hypotheses
    the data set covered, so the ``scenario-stale`` flag can say when the
    hypothesis set has moved on since.
    """

    name: str
    priors: Mapping[str, float]
    source: Source = UNSOURCED
    note: str = ""
    meaning: str = ""
    basis: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        out = {
            "name": self.name,
            "priors": dict(self.priors),
            "source": self.source.to_dict(),
            "note": self.note,
        }
        if self.meaning:  # only declared scenarios carry these keys
            out["meaning"] = self.meaning
            if self.meaning == "data":
                out["basis"] = list(self.basis)
        return out


LIKELIHOOD_FORM = "likelihood"
"""An uncertain observation given as relative weights P(report | state) (virtual evidence)."""
PROBABILITY_FORM = "probability"
"""An uncertain observation given as the probability of each state after it (Jeffrey's rule)."""
UNCERTAIN_FORMS = (LIKELIHOOD_FORM, PROBABILITY_FORM)


@dataclass(frozen=True)
class UncertainObservation:
    """What is known of an item's state when it was not seen for certain.

    ``form`` is ``"likelihood"``: ``weights`` are the relative chances of the
    report given each true state (virtual evidence; only their ratios
    matter), or ``"probability"``: ``weights`` are the analyst's probability
    of each state after the observation (Jeffrey's rule; they sum to 1). One
    weight per state of the item, in its state order. ``source`` says who gave
    the report, when, and why it is weighted so; ``reported`` and
    ``reliability`` are set when the weights come from a witness or instrument
    right with probability ``reliability`` (see
    :func:`beliefledger.case.uncertain.report_weights`).

    References
    ----------
    Pearl, J. (1988). *Probabilistic Reasoning in Intelligent Systems*,
    Morgan Kaufmann, section 2.2.2 (virtual evidence).
    Jeffrey, R. C. (1965). *The Logic of Decision*, McGraw-Hill (probability
    kinematics). Both recalled from memory.
    """

    form: str
    weights: tuple[float, ...]
    source: Source = UNSOURCED
    reported: str | None = None
    reliability: float | None = None
    note: str = ""

    def __post_init__(self) -> None:
        if self.form not in UNCERTAIN_FORMS:
            raise AssertionError(f"uncertain observation form {self.form!r}")
        object.__setattr__(self, "weights", tuple(float(w) for w in self.weights))

    @property
    def relative(self) -> np.ndarray:
        """The weights scaled so the largest is 1 (read-only)."""
        w = np.array(self.weights, dtype=float)
        top = w.max() if w.size else 0.0
        out = w / top if top > 0 else w
        out.setflags(write=False)
        return out

    def weights_of(self, states: tuple[str, ...]) -> dict[str, float]:
        return dict(zip(states, self.weights, strict=True))

    def to_dict(self, states: tuple[str, ...]) -> dict[str, Any]:
        out: dict[str, Any] = {"form": self.form, "weights": self.weights_of(states),
                               "source": self.source.to_dict(), "note": self.note}
        if self.reported is not None:
            out["reported"] = self.reported
            out["reliability"] = self.reliability
        return out


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
        "parent_states", "_conditional", "_log", "observed_index", "_sums", "_bad", "_shifted", "_obs_log",
        "artefacts",
        "uncertain",
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
        artefacts: tuple[Artefact, ...] = (),
        uncertain: UncertainObservation | None = None,
    ) -> None:
        if uncertain is not None and observed is not None:
            raise AssertionError(f"evidence '{name}' is both observed and uncertain")
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
        #: the files the item rests on, in the order attached (see :meth:`Case.attach`)
        self.artefacts = tuple(artefacts)
        self._log: np.ndarray | None = None
        self._sums: np.ndarray | None = None
        self._bad: tuple[int, ...] | None = None
        self._shifted: tuple[np.ndarray, np.ndarray] | None = None
        self._obs_log: tuple[np.ndarray, np.ndarray, float] | None = None
        #: what is known of the state when it was not seen for certain (None otherwise)
        self.uncertain = uncertain
        #: position of the observed state among the states (None while pending)
        self.observed_index = None if observed is None else self.state_index(observed)

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
    def log_table(self) -> np.ndarray:
        """ln of the likelihood table (exact zeros as ``-inf``), computed once and kept:
        members are immutable, so the engine reuses it on every update."""
        if self._log is None:
            lg = log_of(self._table)
            lg.setflags(write=False)
            self._log = lg
        return self._log

    @property
    def shifted_log_table(self) -> tuple[np.ndarray, np.ndarray]:
        """``(log table minus each row's largest finite entry, those maxima)``, computed
        once: the engine's running sum of shifted rows never needs a maximum per step."""
        if self._shifted is None:
            lg = self.log_table
            with np.errstate(invalid="ignore"):
                m = np.max(lg, axis=1) if lg.shape[1] else np.zeros(lg.shape[0])
            m = np.where(np.isfinite(m), m, 0.0)
            sh = lg - m[:, None]
            sh.setflags(write=False)
            m.setflags(write=False)
            self._shifted = (sh, m)
        return self._shifted

    @property
    def observed_log_row(self) -> tuple[np.ndarray, np.ndarray, float]:
        """ln P(observed state | H), the same row shifted to maximum 0, and the shift
        (read-only; kept once computed). Only for an observed item, or one with an
        uncertain observation in the likelihood form (its row is ln of the weighted
        sum of the table's rows, the weights scaled to a largest of 1)."""
        if self._obs_log is None:
            unc = self.uncertain
            if unc is not None and unc.form == LIKELIHOOD_FORM:
                row = log_of(unc.relative @ self._table)
                row.setflags(write=False)
                m = float(np.max(row)) if row.size else 0.0
                m = m if np.isfinite(m) else 0.0
                sh = row - m
                sh.setflags(write=False)
                self._obs_log = (row, sh, m)
                return self._obs_log
            if self.observed_index is None:
                raise CaseError(f"evidence '{self.name}' is pending; it has no observed row")
            sh, m = self.shifted_log_table
            k = self.observed_index
            self._obs_log = (self.log_table[k], sh[k], float(m[k]))
        return self._obs_log

    @property
    def column_totals(self) -> np.ndarray:
        """Each hypothesis' column summed over the states (read-only, computed once)."""
        if self._sums is None:
            sums = self._table.sum(axis=0)
            sums.setflags(write=False)
            self._sums = sums
        return self._sums

    @property
    def bad_columns(self) -> tuple[int, ...]:
        """Positions of the hypotheses whose column does not sum to 1 within ``SUM_TOL``
        (none for likelihood evidence, whose entries are relative weights)."""
        if self._bad is None:
            if self.likelihood_evidence:
                self._bad = ()
            else:
                self._bad = tuple(int(j) for j in
                                  np.flatnonzero(np.abs(self.column_totals - 1) > SUM_TOL))
        return self._bad

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
        i = self.state_index(state)
        return pd.Series(np.array(self._table[i]), index=list(self.hypotheses), name=state)

    def column_sums(self) -> pd.Series:
        return pd.Series(self._table.sum(axis=0), index=list(self.hypotheses), name="sum")

    def source_of(self, state: str, hypothesis: str) -> Source:
        return self.entry_sources.get((state, hypothesis), self.source)

    @property
    def is_observed(self) -> bool:
        """True when the item enters the update: a state seen, or an uncertain observation."""
        return self.observed is not None or self.uncertain is not None

    def state_index(self, state: str) -> int:
        """Position of ``state`` among the item's states (an error naming them if absent)."""
        try:
            return self.states.index(state)
        except ValueError:
            raise CaseError(
                f"evidence '{self.name}' has no state {state!r}; "
                f"its states are {list(self.states)}"
            ) from None

    def replace(self, **changes: Any) -> Evidence:
        """A copy with ``changes`` (field name -> new value); the original is untouched."""
        kw = {k: getattr(self, k) for k in self.__slots__
              if k not in ("_table", "_conditional", "_log", "observed_index", "_sums", "_bad", "_shifted", "_obs_log")}
        kw["table"] = changes.pop("table", self._table)
        kw["conditional"] = changes.pop("conditional", self._conditional)
        if "observed" in changes and "uncertain" not in changes:
            kw["uncertain"] = None  # a state seen (or pending) replaces an uncertain observation
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
        if self.uncertain is not None:  # only items observed with uncertainty carry it
            out["uncertain"] = self.uncertain.to_dict(self.states)
        if self.given is not None:  # only conditional items carry these keys
            out["given"] = self.given
            out["conditional_likelihoods"] = {
                ps: {h: [float(v) for v in self._conditional[i, :, j]]
                     for j, h in enumerate(self.hypotheses)}
                for i, ps in enumerate(self.parent_states)
            }
        if self.artefacts:  # only items with artefacts carry the key: older files are unchanged
            out["artefacts"] = [a.to_dict() for a in self.artefacts]
        return out

    def __repr__(self) -> str:
        obs = f"observed {self.observed!r}" if self.observed is not None else "pending"
        if self.uncertain is not None:
            obs = f"uncertain observation ({self.uncertain.form} form)"
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
            raise AssertionError(f"joint group '{name}' needs exactly one of covariance "
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

    @property
    def covariance_values(self) -> np.ndarray | None:
        """The covariance per hypothesis as a read-only array (covariance form only)."""
        return self._covariance

    @property
    def joint_values(self) -> np.ndarray | None:
        """The joint table as a read-only array, combined states (row-major over the
        members, last fastest) x hypotheses (table form only)."""
        return self._joint

    def joint_array(self, evidence: Mapping[str, Evidence]) -> np.ndarray:
        """The joint table as an array of shape (states of each member..., hypotheses)."""
        if self._joint is not None:
            shape = tuple(len(evidence[m].states) for m in self.members)
            return self._joint.reshape(*shape, len(self.hypotheses))
        a = evidence[self.members[0]].table
        b = evidence[self.members[1]].table
        sign = np.array([[1.0, -1.0], [-1.0, 1.0]])
        cov = self._covariance
        cells = a[:, None, :] * b[None, :, :] + sign[:, :, None] * cov[None, None, :]
        # At a feasible bound one cell is exactly 0 in exact arithmetic; rounding leaves
        # about +-1e-17, which would make impossible evidence merely unlikely. Put the
        # bound's cell at exact zero (the bounds are those _check_group_numbers enforces).
        lo = -np.minimum(a[0] * b[0], a[1] * b[1])
        hi = np.minimum(a[0] * b[1], a[1] * b[0])
        tol = 1e-12
        at_lo = np.abs(cov - lo) <= tol
        at_hi = np.abs(cov - hi) <= tol
        if at_lo.any() or at_hi.any():
            for j in np.flatnonzero(at_lo):  # one of the diagonal cells vanishes
                k = 0 if a[0, j] * b[0, j] <= a[1, j] * b[1, j] else 1
                cells[k, k, j] = 0.0
            for j in np.flatnonzero(at_hi):  # one of the off-diagonal cells vanishes
                if a[0, j] * b[1, j] <= a[1, j] * b[0, j]:
                    cells[0, 1, j] = 0.0
                else:
                    cells[1, 0, j] = 0.0
        return np.maximum(cells, 0.0)

    def replace(self, **changes: Any) -> JointGroup:
        """A copy with ``changes`` (field name -> new value); the original is untouched."""
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


"""Sequential Bayesian updating in log space: a case in, a :class:`Ledger` out.

The ledger is the step-by-step account of an update: the prior, one step per
observed evidence item (or joint group), and the posterior. All arithmetic
is in natural-log space so thousands of items never underflow; a zero prior
or zero likelihood is ``-inf`` and stays exactly zero in the posterior
(never smoothed). The work is numpy only: the log of each likelihood table
is kept with the (immutable) evidence item, so an update is a gather of the
observed rows, a running sum, and one exponential pass. The pandas views of
a ledger (``steps``, ``posterior`` ...) are built on first access, and its
review flags are computed on the arrays when the ledger is made.

A ledger is immutable: its arrays are read-only, its frames are views on
them, and its flags are filled once, at construction.

Uncertain observations enter as steps like any other. A likelihood-form one
(virtual evidence) has a fixed row. A probability-form one (Jeffrey's rule)
has a row that depends on the belief just before it: :func:`resolve_steps`
fills it in under each scenario's priors, from the predictive over the
item's states at that step, and the ledger keeps where each sits and what
the MAP would be had it been placed first or last (Jeffrey updates do not
commute; the ``order-sensitive`` flag reads this).
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from ._logmath import log_normalizer, log_of
from .case.dependence import LogSteps, shift_row
from .case.uncertain import jeffrey_weights
from .flags import diagnose

if TYPE_CHECKING:
    from .case import Case

PRIOR_STEP = "prior"

_LAZY = ("_steps", "_posterior", "_priors", "_log_steps", "_ll_frame", "_ev_prob", "_total_s",
         "_total_ll", "_cache")


def _readonly(a: np.ndarray) -> np.ndarray:
    a.setflags(write=False)
    return a


class Ledger:
    """The result of an update: every step from prior to posterior, and its review flags.

    Attributes
    ----------
    title, scenario : str
        The case's title; the prior scenario used.
    hypotheses : list of str
    steps : DataFrame
        One row per step (``"prior"``, then each applied evidence step in
        order), one column per hypothesis; each row sums to 1.
    posterior : Series
        The last row of ``steps``. When the update stopped at impossible
        evidence, its name says so.
    probabilities : ndarray
        ``steps`` as a read-only array (steps x hypotheses).
    map_hypothesis, ml_hypothesis : str or None
        Maximum a posteriori hypothesis; maximum-likelihood hypothesis (the
        largest total likelihood of the applied evidence, ignoring priors;
        ``None`` when nothing is observed).
    log_likelihoods : DataFrame
        ln P(observed state | hypothesis), one row per applied step.
    evidence_probability : Series
        P(e_k | e_1..e_{k-1}) for each applied step.
    log_steps : ndarray
        Natural-log probabilities of ``steps`` (exact ``-inf`` for zeros).
    stopped_at : str or None
        The evidence step that was impossible under every live hypothesis;
        the update stops before it (its row and later rows are absent).
    skipped : list of str
        The steps not applied (the impossible one and those after it).
    members : dict
        Step name -> the evidence items it combines (one unless grouped).
    uncertain : dict
        Step name -> what is known of each uncertain observation applied or
        skipped: ``form`` (``"likelihood"`` or ``"probability"``), ``position``
        and ``of`` (its place among the observed steps, from 1), ``weights``
        (state -> the likelihood weights used, largest 1) and, for the
        probability form, ``stated`` (state -> the probability given),
        ``predictive`` (state -> P(state | the steps before it)),
        ``unreachable`` (states given a probability that the evidence before
        rules out), ``map_if_first`` / ``map_if_last`` and
        ``p_map_if_first`` / ``p_map_if_last`` (the MAP, and its posterior,
        had the step been placed first or last; ``None`` when the update
        would be impossible).
    hypothesis_groups : dict
        Group name -> its member hypotheses (``case.hypothesis_groups`` when
        the ledger was made); read at group level with :attr:`group_posterior`
        and :attr:`group_steps`.
    flags : tuple of Flag
        What a reviewer should look at (errors first).
    """

    __slots__ = ("title", "scenario", "hypotheses", "prior_values", "step_names",
                 "map_hypothesis", "stopped_at", "skipped", "members", "flags",
                 "uncertain", "hypothesis_groups",
                 "_cum", "_weights", "_sums", "_lognorm", "_z", "_rows", "_post",
                 "_frozen", "_probs", *_LAZY)

    def __init__(self, *, title: str, scenario: str, hypotheses: list[str],
                 prior_values: np.ndarray, cum: np.ndarray, weights: np.ndarray,
                 sums: np.ndarray, lognorm: np.ndarray, z: np.ndarray, rows: list[np.ndarray],
                 step_names: list[str], members: dict[str, tuple[str, ...]],
                 stopped_at: str | None, skipped: list[str], case: Case | None = None,
                 with_flags: bool = True, uncertain: dict[str, dict[str, Any]] | None = None,
                 hypothesis_groups: dict[str, tuple[str, ...]] | None = None) -> None:
        put = object.__setattr__
        put(self, "_frozen", False)
        put(self, "uncertain", dict(uncertain or {}))
        put(self, "hypothesis_groups", dict(hypothesis_groups or {}))
        put(self, "title", title)
        put(self, "scenario", scenario)
        put(self, "hypotheses", list(hypotheses))
        put(self, "prior_values", _readonly(prior_values))
        put(self, "step_names", list(step_names))
        put(self, "members", dict(members))
        put(self, "stopped_at", stopped_at)
        put(self, "skipped", list(skipped))
        # applied rows: cum is a shifted running log sum, weights its exponential (each
        # row scaled by 1 / sums), lognorm = ln(sums), z the true log normalizers
        put(self, "_cum", _readonly(cum))
        put(self, "_weights", _readonly(weights))
        put(self, "_sums", sums)
        put(self, "_lognorm", lognorm)
        put(self, "_z", z)
        put(self, "_rows", rows)  # ln P(observed | H) of every observed step, applied or not
        for name in (*_LAZY, "_probs"):
            put(self, name, None)
        put(self, "_cache", {})
        last = weights[-1] / sums[-1] if sums[-1] > 0 else np.zeros(len(hypotheses))
        if len(step_names) == 1:
            last = self._prior_row()
        put(self, "_post", _readonly(last))
        put(self, "map_hypothesis",
            self.hypotheses[int(np.argmax(last))] if last.any() else self.hypotheses[0])
        put(self, "flags", tuple(diagnose(case, self)) if (with_flags and case is not None)
            else ())
        put(self, "_frozen", True)

    def __setattr__(self, name: str, value: Any) -> None:
        if getattr(self, "_frozen", False):
            raise AttributeError(f"a Ledger is immutable: cannot set {name!r}; compute a new "
                                 "one with case.update()")
        object.__setattr__(self, name, value)

    def _lazy(self, name: str, build: Any) -> Any:
        value = object.__getattribute__(self, name)
        if value is None:
            value = build()
            object.__setattr__(self, name, value)
        return value

    def _prior_row(self) -> np.ndarray:
        p = self.prior_values
        total = p.sum()
        return p / total if total > 0 else np.zeros(len(p))

    # ------------------------------------------------------------------ views
    @property
    def probabilities(self) -> np.ndarray:
        """Each step's probabilities (steps x hypotheses, rows sum to 1), read-only."""
        def build() -> np.ndarray:
            with np.errstate(invalid="ignore", divide="ignore"):
                out = self._weights / self._sums[:, None]
            out[0] = self._prior_row()  # the prior row exactly as entered
            out[-1] = self._post
            return _readonly(out)
        return self._lazy("_probs", build)

    @property
    def posterior_values(self) -> np.ndarray:
        """The posterior as a read-only array in hypothesis order."""
        return self._post

    @property
    def step_weights_unnormalized(self) -> np.ndarray:
        """Each step's probabilities up to a positive factor per row (read-only): what
        ratios within a step need, without the division pass."""
        return self._weights
    @property
    def applied(self) -> int:
        """How many evidence steps were applied."""
        return len(self.step_names) - 1

    @property
    def steps(self) -> pd.DataFrame:
        return self._lazy("_steps", lambda: pd.DataFrame(
            self.probabilities, index=pd.Index(self.step_names, name="step"),
            columns=pd.Index(self.hypotheses, name="hypothesis"), copy=False))

    @property
    def posterior(self) -> pd.Series:
        def build() -> pd.Series:
            name = "posterior"
            if self.stopped_at is not None:
                name = (f"posterior before '{self.stopped_at}' (update stopped: that evidence "
                        "is impossible under every hypothesis)")
            return pd.Series(self._post, index=self.hypotheses, name=name, copy=False)
        return self._lazy("_posterior", build)

    @property
    def priors(self) -> pd.Series:
        return self._lazy("_priors", lambda: pd.Series(self.prior_values, index=self.hypotheses,
                                                       name="prior", copy=False))

    @property
    def log_steps(self) -> np.ndarray:
        """ln of each step's probabilities (``-inf`` for exact zeros), read-only."""
        def build() -> np.ndarray:
            with np.errstate(invalid="ignore"):
                out = self._cum - self._lognorm[:, None]
            if not np.isfinite(self._z[0]):  # no usable prior: all -inf
                out = np.full_like(out, -np.inf)
            return _readonly(out)
        return self._lazy("_log_steps", build)

    @property
    def log_likelihoods(self) -> pd.DataFrame:
        return self._lazy("_ll_frame", lambda: pd.DataFrame(
            self.log_likelihood_values, index=pd.Index(self.step_names[1:], name="step"),
            columns=pd.Index(self.hypotheses, name="hypothesis"), copy=False))

    @property
    def log_likelihood_values(self) -> np.ndarray:
        """ln P(observed | H) of the applied steps (steps x hypotheses), read-only."""
        def build() -> np.ndarray:
            n = self.applied
            out = (np.stack(self._rows[:n]) if n else np.zeros((0, len(self.hypotheses))))
            return _readonly(out)
        return self.memo("log_likelihood_values", build)

    @property
    def evidence_probability(self) -> pd.Series:
        def build() -> pd.Series:
            n = len(self.step_names)
            with np.errstate(invalid="ignore"):
                vals = np.exp(np.diff(self._z[:n]))
            return pd.Series(vals, index=pd.Index(self.step_names[1:], name="step"),
                             name="evidence_probability", dtype=float)
        return self._lazy("_ev_prob", build)

    @property
    def total_log_likelihood(self) -> pd.Series:
        return self._lazy("_total_s", lambda: pd.Series(
            self.total_log_likelihood_values, index=self.hypotheses, name="log_likelihood",
            copy=False))

    @property
    def total_log_likelihood_values(self) -> np.ndarray:
        """Summed ln P(observed | H) over every observed step (read-only)."""
        def build() -> np.ndarray:
            rows = self._rows
            if len(rows) * len(self.hypotheses) <= SMALL_CELLS:
                total = np.add.reduce(np.array(rows), axis=0) if rows else \
                    np.zeros(len(self.hypotheses))
            else:
                total = np.zeros(len(self.hypotheses))
                for r in rows:  # row by row: no stacked copy of a large table
                    np.add(total, r, out=total)
            return _readonly(total)
        return self._lazy("_total_ll", build)

    @property
    def ml_hypothesis(self) -> str | None:
        """The maximum-likelihood hypothesis: the largest total likelihood of the observed
        evidence, ignoring priors (the first listed on a tie; ``None`` when nothing is
        observed or the evidence is impossible under every hypothesis)."""
        def build() -> Any:
            total = self.total_log_likelihood_values
            if not self._rows or not np.isfinite(np.max(total)):
                return ""
            return self.hypotheses[int(np.argmax(total))]
        return self.memo("ml_hypothesis", build) or None

    @property
    def evidence_steps(self) -> list[str]:
        return self.step_names[1:]

    # ------------------------------------------------------------------ group level
    def focus_columns(self, focus: str) -> list[int]:
        """Column positions a focus stands for: one hypothesis, or a hypothesis group's
        members (an error naming both kinds when ``focus`` is neither)."""
        if focus in self.hypothesis_groups:
            return [self.hypotheses.index(m) for m in self.hypothesis_groups[focus]]
        if isinstance(focus, str) and focus in self.hypotheses:
            return [self.hypotheses.index(focus)]
        from .errors import CaseError

        groups = f" or hypothesis group {list(self.hypothesis_groups)}" if \
            self.hypothesis_groups else ""
        raise CaseError(f"no hypothesis named {focus!r}; the hypotheses are "
                        f"{self.hypotheses}{groups}")

    def _group_columns(self) -> list[tuple[str, list[int]]]:
        grouped = {m for ms in self.hypothesis_groups.values() for m in ms}
        out = [(g, [self.hypotheses.index(m) for m in ms])
               for g, ms in self.hypothesis_groups.items()]
        out += [(h, [j]) for j, h in enumerate(self.hypotheses) if h not in grouped]
        return out

    @property
    def group_posterior(self) -> pd.Series:
        """The posterior at group level: each hypothesis group (the sum of its members'
        posteriors, correctly rounded with ``math.fsum``), then each hypothesis in no
        group on its own. Sums to 1."""
        import math

        def build() -> pd.Series:
            post = self._post
            cols = self._group_columns()
            vals = [math.fsum(float(post[j]) for j in js) for _, js in cols]
            return pd.Series(vals, index=pd.Index([c for c, _ in cols], name="group"),
                             name="posterior")
        return self.memo("group_posterior", build).copy()

    @property
    def group_steps(self) -> pd.DataFrame:
        """:attr:`steps` at group level: one column per hypothesis group (its members
        summed), then each hypothesis in no group."""
        def build() -> pd.DataFrame:
            probs = self.probabilities
            cols = self._group_columns()
            data = np.column_stack([probs[:, js].sum(axis=1) for _, js in cols]) if cols \
                else np.zeros((len(probs), 0))
            return pd.DataFrame(data, index=pd.Index(self.step_names, name="step"),
                                columns=pd.Index([c for c, _ in cols], name="group"))
        return self.memo("group_steps", build).copy()

    @property
    def group_map(self) -> str:
        """The group (or ungrouped hypothesis) with the highest group-level posterior."""
        gp = self.group_posterior
        return str(gp.index[int(np.argmax(gp.to_numpy()))])

    @property
    def log_evidence(self) -> float:
        """ln P(all applied evidence) under the priors."""
        n = len(self.step_names)
        return float(self._z[n - 1] - self._z[0]) if n > 1 else 0.0

    @property
    def eliminated(self) -> list[str]:
        """Hypotheses with a positive prior and a posterior of exactly zero."""
        idx = np.flatnonzero((self.prior_values > 0) & (self._post == 0))
        return [self.hypotheses[i] for i in idx]

    @property
    def ok(self) -> bool:
        """False when any flag has severity ``error``."""
        return not any(f.severity == "error" for f in self.flags)

    def flags_frame(self) -> pd.DataFrame:
        return pd.DataFrame([f.to_dict() for f in self.flags],
                            columns=["code", "severity", "message", "where"])

    def memo(self, key: str, build: Any) -> Any:
        """A value derived from this ledger, computed once (used by the flags and charts)."""
        cache = object.__getattribute__(self, "_cache")
        if key not in cache:
            cache[key] = build()
        return cache[key]

    def to_dict(self) -> dict:
        """JSON-ready summary (used by the CLI's --json and by records)."""
        hyps = self.hypotheses
        return {
            "title": self.title,
            "scenario": self.scenario,
            "hypotheses": list(hyps),
            "steps": [
                {"step": s, "members": list(self.members.get(s, ())),
                 "probabilities": dict(zip(hyps, row, strict=True))}
                for s, row in zip(self.step_names, self.probabilities.tolist(), strict=True)
            ],
            "posterior": dict(zip(hyps, self._post.tolist(), strict=True)),
            "map_hypothesis": self.map_hypothesis,
            "ml_hypothesis": self.ml_hypothesis,
            "evidence_probability": {k: float(v) for k, v in self.evidence_probability.items()},
            "stopped_at": self.stopped_at,
            "flags": [f.to_dict() for f in self.flags],
            **({"uncertain": _json_ready(self.uncertain)} if self.uncertain else {}),
        }

    def __repr__(self) -> str:
        p = float(self._post[self.hypotheses.index(self.map_hypothesis)])
        errors = sum(f.severity == "error" for f in self.flags)
        warnings = sum(f.severity == "warning" for f in self.flags)
        stop = (f"STOPPED before '{self.stopped_at}' (impossible under every hypothesis; the "
                "posterior is the one before it); " if self.stopped_at is not None else "")
        return (f"Ledger({self.title!r}: {stop}{self.applied} evidence steps, MAP "
                f"{self.map_hypothesis!r} at {p:.4f}; {errors} errors, {warnings} warnings)")

    def _repr_html_(self) -> str:
        from .display import ledger_html

        return ledger_html(self)


def _prior_values(case: Case, scenario: str) -> np.ndarray:
    return np.asarray(case.prior_array(scenario), dtype=float)


def _json_ready(value: Any) -> Any:
    if isinstance(value, dict):
        return {str(k): _json_ready(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_json_ready(v) for v in value]
    if isinstance(value, np.generic):
        return value.item()
    return value


def _log_prior(p: np.ndarray) -> np.ndarray:
    total = p.sum()
    return log_of(p / total) if total > 0 else np.full(len(p), -np.inf)


def _jeffrey_row(table: np.ndarray, q: np.ndarray, run: np.ndarray
                 ) -> tuple[np.ndarray, np.ndarray, np.ndarray, list[int]]:
    """The log row of a Jeffrey step given the running log weights ``run`` before it:
    (row, weights, predictive, unreachable state positions)."""
    top = float(np.max(run)) if run.size else -np.inf
    if not np.isfinite(top):  # nothing before it is possible: the update stops earlier
        return np.zeros(len(run)), np.zeros(len(q)), np.full(len(q), np.nan), []
    lam, pred, unreachable = jeffrey_weights(table, q, np.exp(run - top))
    return log_of(lam @ table), lam, pred, unreachable


def _final_log(log_prior: np.ndarray, rows: list[np.ndarray],
               jeffrey: dict[int, tuple[np.ndarray, np.ndarray]], order: list[int]) -> np.ndarray:
    """The log weights after every step taken in ``order`` (Jeffrey steps resolved
    where they sit); used to ask where a Jeffrey step's place matters."""
    run = np.array(log_prior, dtype=float)
    fixed: list[np.ndarray] = []
    for i in order:
        if i not in jeffrey:
            fixed.append(rows[i])
            continue
        if fixed:
            run = run + np.add.reduce(np.array(fixed), axis=0)
            fixed = []
        table, q = jeffrey[i]
        run = run + _jeffrey_row(table, q, run)[0]
    if fixed:
        run = run + np.add.reduce(np.array(fixed), axis=0)
    return run


def resolve_steps(p: np.ndarray, steps: LogSteps, *, hypotheses: list[str] | None = None,
                  states: dict[str, tuple[str, ...]] | None = None
                  ) -> tuple[LogSteps, dict[str, dict[str, Any]]]:
    """The observed steps with every Jeffrey (probability-form) row filled in under the
    priors ``p``, and what the ledger keeps of each uncertain step.

    Each Jeffrey row is ln Σ_s λ(s)·P(s | H) with λ(s) ∝ q(s) / P(s | the steps
    before it) (Chan & Darwiche 2005): applied there, the update gives
    P'(H) = Σ_s q(s)·P(H | s, the steps before). With ``hypotheses`` given,
    the MAP had each Jeffrey step been placed first or last is computed too.
    """
    info: dict[str, dict[str, Any]] = {}
    n = len(steps.names)
    for k, name in enumerate(steps.names):
        if name in steps.forms:
            info[name] = {"form": steps.forms[name], "position": k + 1, "of": n}
    if not steps.jeffrey:
        return steps, info
    log_prior = _log_prior(np.asarray(p, dtype=float))
    rows = list(steps.rows)
    shifted = list(steps.shifted)
    shifts = np.array(steps.shifts, dtype=float)
    run = log_prior.copy()
    done = 0
    for k in sorted(steps.jeffrey):
        if k > done:
            run = run + np.add.reduce(np.array(rows[done:k]), axis=0)
        table, q = steps.jeffrey[k]
        row, lam, pred, unreachable = _jeffrey_row(table, q, run)
        row.setflags(write=False)
        rows[k] = row
        sh, m = shift_row(row)
        shifted[k] = sh
        shifts[k] = m
        run = run + row
        done = k + 1
        st = (states or {}).get(steps.names[k]) or tuple(str(i) for i in range(len(q)))
        info[steps.names[k]].update(
            weights=dict(zip(st, lam.tolist(), strict=True)),
            stated=dict(zip(st, np.asarray(q, dtype=float).tolist(), strict=True)),
            predictive=dict(zip(st, pred.tolist(), strict=True)),
            unreachable=[st[i] for i in unreachable])
    resolved = steps._replace(rows=rows, shifted=shifted, shifts=shifts)
    if hypotheses is not None:
        for k in steps.jeffrey:
            rest = [i for i in range(n) if i != k]
            for where, order in (("first", [k, *rest]), ("last", [*rest, k])):
                final = _final_log(log_prior, steps.rows, steps.jeffrey, order)
                z = float(log_normalizer(final))
                if np.isfinite(z):
                    j = int(np.argmax(final))
                    best, p_best = hypotheses[j], float(np.exp(final[j] - z))
                else:
                    best, p_best = None, None
                info[steps.names[k]][f"map_if_{where}"] = best
                info[steps.names[k]][f"p_map_if_{where}"] = p_best
    return resolved, info


def _likelihood_info(case: Case, info: dict[str, dict[str, Any]]) -> None:
    """The weights of each likelihood-form step, as the ledger keeps them."""
    evidence = case.evidence
    for name, entry in info.items():
        ev = evidence.get(name)
        if entry["form"] == "likelihood" and ev is not None and ev.uncertain is not None:
            entry["weights"] = dict(zip(ev.states, ev.uncertain.relative.tolist(), strict=True))


SMALL_CELLS = 1 << 15
"""Below this many steps x hypotheses the running sum is one vectorised pass."""
RECENTRE = 16
"""Rows between two re-centrings of the running log sum."""
DRIFTED = 1e-20
"""A step whose largest weight is below this is recomputed from its own maximum."""


def _run(case: Case, scenario: str, p: np.ndarray, steps: Any, with_flags: bool) -> Ledger:
    uncertain: dict[str, dict[str, Any]] = {}
    if steps.forms:
        evidence = case.evidence
        steps, uncertain = resolve_steps(
            p, steps, hypotheses=case.hypothesis_names,
            states={n: evidence[n].states for n in steps.forms if n in evidence})
        _likelihood_info(case, uncertain)
    return _run_resolved(case, scenario, p, steps, with_flags, uncertain)


def _run_resolved(case: Case, scenario: str, p: np.ndarray, steps: Any, with_flags: bool,
                  uncertain: dict[str, dict[str, Any]]) -> Ledger:
    """One update from prior values ``p`` and the observed steps (a ``LogSteps``).

    Row 0 of the running sum is the shifted log prior; each step adds the
    shifted log-likelihood row (its maximum is 0), so the running sum stays
    near 0 and one exponential pass gives every step's weights. A step whose
    weights underflow is redone with its own maximum; the first step under
    which every hypothesis has probability 0 stops the update before it.
    """
    n_h = len(p)
    total_p = p.sum()
    # Priors off 1 (a part-way edit) are used as relative weights; the prior-sum flag
    # says so. A zero total cannot be used at all.
    log_prior = log_of(p / total_p) if total_p > 0 else np.full(n_h, -np.inf)
    names = steps.names
    n = len(names)
    cum = np.empty((n + 1, n_h))
    m0 = float(np.max(log_prior)) if n_h else 0.0
    m0 = m0 if np.isfinite(m0) else 0.0
    np.subtract(log_prior, m0, out=cum[0])
    shift = np.empty(n + 1)
    shift[0] = m0
    np.cumsum(steps.shifts, out=shift[1:])
    shift[1:] += m0
    if n and n * n_h <= SMALL_CELLS:
        # small: whole-array passes cost less than a Python loop; every row is put back
        # at maximum 0, so no step can underflow
        np.cumsum(np.array(steps.shifted), axis=0, out=cum[1:])
        cum[1:] += cum[0]
        top = cum.max(axis=1)  # -inf for a row of -inf (impossible), without a warning
        top[np.isneginf(top)] = 0.0
        cum -= top[:, None]
        shift += top
    elif n:
        # Each shifted row has maximum 0, but the hypothesis at that maximum changes from
        # step to step, so the running sum drifts below 0; every RECENTRE rows it is put
        # back at maximum 0 (the amount is kept in the row shifts).
        adj = np.zeros(n + 1)
        for i, r in enumerate(steps.shifted, 1):
            row = cum[i]
            np.add(cum[i - 1], r, out=row)
            if i % RECENTRE == 0:
                top = row.max()
                if np.isfinite(top) and top != 0.0:
                    row -= top
                    adj[i] = top
        shift += np.cumsum(adj)
    weights = np.exp(cum)
    sums = weights.sum(axis=1)
    # a row whose largest weight is far below 1 drifted between two re-centrings: its
    # smallest entries may have underflowed, so it is redone from its own maximum. The
    # sum tells without another pass: the largest weight is at least sum / n_h.
    low = np.flatnonzero(sums < DRIFTED * max(n_h, 1))
    stop = None
    n_ok = n + 1
    for i in low:  # underflow, or impossible evidence (every entry -inf)
        top = float(np.max(cum[i]))
        if not np.isfinite(top):
            n_ok = int(i)
            break
        cum[i] -= top
        shift[i] += top
        np.exp(cum[i], out=weights[i])
        sums[i] = weights[i].sum()
    if total_p <= 0:
        n_ok = 1  # no usable prior: report the zero row, apply nothing
    elif n_ok <= n:
        if n_ok == 0:
            n_ok = 1
        else:
            stop = names[n_ok - 1]
    cum, weights, sums, shift = cum[:n_ok], weights[:n_ok], sums[:n_ok], shift[:n_ok]
    if total_p <= 0:
        lognorm = np.full(1, -np.inf)
        z = lognorm
    else:
        lognorm = np.log(sums)  # every applied row has a positive sum
        z = shift + lognorm
    skipped = names[n_ok - 1:] if stop else (list(names) if total_p <= 0 else [])
    return Ledger(title=case.title, scenario=scenario, hypotheses=case.hypothesis_names,
                  prior_values=np.array(p, dtype=float), cum=cum, weights=weights, sums=sums,
                  lognorm=lognorm, z=z, rows=steps.rows,
                  step_names=[PRIOR_STEP, *names[: n_ok - 1]], members=steps.members,
                  stopped_at=stop, skipped=skipped, case=case, with_flags=with_flags,
                  uncertain=uncertain, hypothesis_groups=case.hypothesis_groups)


def update(case: Case, *, scenario: str | None = None, with_flags: bool = True) -> Ledger:
    """Run the sequential update of ``case`` under its active (or the named) scenario."""
    sc = case.active_scenario if scenario is None else scenario
    return _run(case, sc, _prior_values(case, sc), case.observed_log_steps(), with_flags)


def update_all(case: Case, *, with_flags: bool = True) -> dict[str, Ledger]:
    """Every scenario's ledger, computed once: scenario name -> :class:`Ledger`.

    The observed evidence is gathered once; only the priors differ between
    scenarios. The workbench, the sealer, ``verify``, ``diff`` and the
    sensitivity code read these instead of re-running the update.
    """
    steps = case.observed_log_steps()
    return {sc: _run(case, sc, _prior_values(case, sc), steps, with_flags)
            for sc in case.scenario_names}


def resolved_log_steps(case: Case, scenario: str | None = None) -> LogSteps:
    """The case's observed steps in log space with Jeffrey rows filled in under the priors
    of ``scenario`` (default: the active one): the likelihood rows an analysis that
    holds the steps fixed (a sweep, the Monte Carlo) reads."""
    sc = case.active_scenario if scenario is None else scenario
    steps = case.observed_log_steps()
    if not steps.jeffrey:
        return steps
    return resolve_steps(_prior_values(case, sc), steps)[0]


__all__ = ["Ledger", "update", "update_all", "resolve_steps", "resolved_log_steps",
           "PRIOR_STEP"]

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
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from ._logmath import log_of
from .flags import Flag, diagnose

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
    flags : tuple of Flag
        What a reviewer should look at (errors first).
    """

    __slots__ = ("title", "scenario", "hypotheses", "prior_values", "probabilities",
                 "step_names", "map_hypothesis", "ml_hypothesis", "stopped_at", "skipped",
                 "members", "flags", "_cum", "_z", "_loglik", "_total", "_frozen", *_LAZY)

    def __init__(self, *, title: str, scenario: str, hypotheses: list[str],
                 prior_values: np.ndarray, probabilities: np.ndarray, cum: np.ndarray,
                 z: np.ndarray, loglik: np.ndarray, step_names: list[str],
                 members: dict[str, tuple[str, ...]], stopped_at: str | None,
                 skipped: list[str], case: Case | None = None, with_flags: bool = True) -> None:
        put = object.__setattr__
        put(self, "_frozen", False)
        self.title = title
        self.scenario = scenario
        self.hypotheses = list(hypotheses)
        self.prior_values = _readonly(prior_values)
        self.probabilities = _readonly(probabilities)
        self.step_names = list(step_names)
        self.members = dict(members)
        self.stopped_at = stopped_at
        self.skipped = list(skipped)
        self._cum = _readonly(cum)
        self._z = z
        self._loglik = _readonly(loglik)  # all observed steps, applied or not
        total = loglik.sum(axis=0)
        self._total = _readonly(total)
        for name in _LAZY:
            put(self, name, None)
        put(self, "_cache", {})
        last = probabilities[-1]
        self.map_hypothesis = self.hypotheses[int(np.argmax(last))] if last.any() else \
            self.hypotheses[0]
        self.ml_hypothesis = None
        if len(loglik) and np.isfinite(np.max(total)):
            self.ml_hypothesis = self.hypotheses[int(np.argmax(total))]
        self.flags: tuple[Flag, ...] = tuple(diagnose(case, self)) if (
            with_flags and case is not None) else ()
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

    # ------------------------------------------------------------------ views
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
            return pd.Series(self.probabilities[-1], index=self.hypotheses, name=name, copy=False)
        return self._lazy("_posterior", build)

    @property
    def priors(self) -> pd.Series:
        return self._lazy("_priors", lambda: pd.Series(self.prior_values, index=self.hypotheses,
                                                       name="prior", copy=False))

    @property
    def log_steps(self) -> np.ndarray:
        """ln of each step's probabilities (``-inf`` for exact zeros), read-only."""
        def build() -> np.ndarray:
            n = len(self.step_names)
            with np.errstate(invalid="ignore"):
                out = self._cum[:n] - self._z[:n, None]
            if not np.isfinite(self._z[0]):  # no usable prior: all -inf
                out = np.full_like(out, -np.inf)
            return _readonly(out)
        return self._lazy("_log_steps", build)

    @property
    def log_likelihoods(self) -> pd.DataFrame:
        n = self.applied
        return self._lazy("_ll_frame", lambda: pd.DataFrame(
            self._loglik[:n], index=pd.Index(self.step_names[1:], name="step"),
            columns=pd.Index(self.hypotheses, name="hypothesis"), copy=False))

    @property
    def log_likelihood_values(self) -> np.ndarray:
        """ln P(observed | H) of the applied steps (steps x hypotheses), read-only."""
        return self._loglik[: self.applied]

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
        return self._lazy("_total_s", lambda: pd.Series(self._total, index=self.hypotheses,
                                                        name="log_likelihood", copy=False))

    @property
    def total_log_likelihood_values(self) -> np.ndarray:
        """Summed ln P(observed | H) over every observed step (read-only)."""
        return self._total

    @property
    def evidence_steps(self) -> list[str]:
        return self.step_names[1:]

    @property
    def log_evidence(self) -> float:
        """ln P(all applied evidence) under the priors."""
        n = len(self.step_names)
        return float(self._z[n - 1] - self._z[0]) if n > 1 else 0.0

    @property
    def eliminated(self) -> list[str]:
        """Hypotheses with a positive prior and a posterior of exactly zero."""
        last = self.probabilities[-1]
        idx = np.flatnonzero((self.prior_values > 0) & (last == 0))
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
            "posterior": dict(zip(hyps, self.probabilities[-1].tolist(), strict=True)),
            "map_hypothesis": self.map_hypothesis,
            "ml_hypothesis": self.ml_hypothesis,
            "evidence_probability": {k: float(v) for k, v in self.evidence_probability.items()},
            "stopped_at": self.stopped_at,
            "flags": [f.to_dict() for f in self.flags],
        }

    def __repr__(self) -> str:
        p = float(self.probabilities[-1][self.hypotheses.index(self.map_hypothesis)])
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


def _run(case: Case, scenario: str, p: np.ndarray, names: list[str],
         members: dict[str, tuple[str, ...]], loglik: np.ndarray, with_flags: bool) -> Ledger:
    """One update from prior values ``p`` and the observed log-likelihood rows."""
    n_h = len(p)
    total = p.sum()
    # Priors off 1 (a part-way edit) are used as relative weights; the prior-sum flag
    # says so. A zero total cannot be used at all.
    log_prior = log_of(p / total) if total > 0 else np.full(n_h, -np.inf)
    n = len(names)
    cum = np.empty((n + 1, n_h))
    cum[0] = log_prior
    if n:
        np.cumsum(loglik, axis=0, out=cum[1:])
        cum[1:] += log_prior
    top = cum.max(axis=1)
    stop = None
    n_ok = n + 1
    if total > 0:
        dead = np.flatnonzero(np.isneginf(top))
        if dead.size:
            n_ok = int(dead[0])
            stop = names[n_ok - 1]
        probs = np.subtract(cum[:n_ok], top[:n_ok, None])
        np.exp(probs, out=probs)
        sums = probs.sum(axis=1)
        probs /= sums[:, None]
        z = top[:n_ok] + np.log(sums)
        probs[0] = p / total  # the prior row exactly as entered, not via exp(log)
    else:
        n_ok = 1  # no usable prior: report the zero row, apply nothing
        probs = np.zeros((1, n_h))
        z = np.full(1, -np.inf)
    skipped = names[n_ok - 1:] if stop else (list(names) if total <= 0 else [])
    return Ledger(title=case.title, scenario=scenario, hypotheses=case.hypothesis_names,
                  prior_values=np.array(p, dtype=float), probabilities=probs, cum=cum, z=z,
                  loglik=loglik, step_names=[PRIOR_STEP, *names[: n_ok - 1]], members=members,
                  stopped_at=stop, skipped=skipped, case=case, with_flags=with_flags)


def update(case: Case, *, scenario: str | None = None, with_flags: bool = True) -> Ledger:
    """Run the sequential update of ``case`` under its active (or the named) scenario."""
    sc = case.active_scenario if scenario is None else scenario
    p = _prior_values(case, sc)
    names, members, loglik = case.observed_log_steps()
    return _run(case, sc, p, names, members, loglik, with_flags)


def update_all(case: Case, *, with_flags: bool = True) -> dict[str, Ledger]:
    """Every scenario's ledger, computed once: scenario name -> :class:`Ledger`.

    The observed evidence is gathered once; only the priors differ between
    scenarios. The workbench, the sealer, ``verify``, ``diff`` and the
    sensitivity code read these instead of re-running the update.
    """
    names, members, loglik = case.observed_log_steps()
    return {sc: _run(case, sc, _prior_values(case, sc), names, members, loglik, with_flags)
            for sc in case.scenario_names}


__all__ = ["Ledger", "update", "update_all", "PRIOR_STEP"]

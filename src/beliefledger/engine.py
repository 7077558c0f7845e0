"""Sequential Bayesian updating in log space.

The engine turns a :class:`~beliefledger.case.Case` into a :class:`Ledger`:
the prior, one step per observed evidence item, and the posterior. All
arithmetic is in natural-log space so thousands of items never underflow;
a zero prior or zero likelihood is ``-inf`` and stays exactly zero in the
posterior (never smoothed). Only numpy, scipy.special and pandas are used.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from ._logmath import log_normalizer, log_odds_path, log_of, normalize_log, posterior_from_logs
from .flags import Flag, diagnose

if TYPE_CHECKING:
    from .case import Case

PRIOR_STEP = "prior"


@dataclass
class Ledger:
    """The result of an update: every step from prior to posterior.

    Attributes
    ----------
    steps : DataFrame
        One row per step (``"prior"``, then each observed evidence step in
        order), one column per hypothesis; each row sums to 1.
    posterior : Series
        The last row of ``steps``.
    map_hypothesis, ml_hypothesis : str or None
        Maximum a posteriori hypothesis; maximum-likelihood hypothesis (the
        largest total likelihood of the observed evidence, ignoring priors;
        ``None`` when nothing is observed).
    log_likelihoods : DataFrame
        ln P(observed state | hypothesis), one row per evidence step.
    evidence_probability : Series
        P(e_k | e_1..e_{k-1}) for each evidence step (the predictive
        probability of what was observed, given everything before it).
    log_steps : ndarray
        Natural-log probabilities of ``steps`` (exact ``-inf`` for zeros).
    stopped_at : str or None
        The evidence step that was impossible under every live hypothesis;
        the update stops before it (its row and later rows are absent).
    members : dict
        Step name -> the evidence items it combines (one unless grouped).
    flags : list of Flag
    """

    title: str
    scenario: str
    hypotheses: list[str]
    priors: pd.Series
    steps: pd.DataFrame
    log_steps: np.ndarray
    log_likelihoods: pd.DataFrame
    evidence_probability: pd.Series
    map_hypothesis: str
    ml_hypothesis: str | None
    stopped_at: str | None
    skipped: list[str]
    members: dict[str, tuple[str, ...]]
    total_log_likelihood: pd.Series
    flags: list[Flag] = field(default_factory=list)

    @property
    def posterior(self) -> pd.Series:
        s = self.steps.iloc[-1].copy()
        s.name = "posterior"
        return s

    @property
    def step_names(self) -> list[str]:
        return list(self.steps.index)

    @property
    def evidence_steps(self) -> list[str]:
        return list(self.steps.index[1:])

    @property
    def log_evidence(self) -> float:
        """ln P(all applied evidence) under the priors."""
        return float(np.sum(np.log(self.evidence_probability.to_numpy()))) if len(
            self.evidence_probability) else 0.0

    @property
    def eliminated(self) -> list[str]:
        """Hypotheses with a positive prior and a posterior of exactly zero."""
        pri = self.priors.to_numpy()
        post = self.steps.iloc[-1].to_numpy()
        return [h for h, a, b in zip(self.hypotheses, pri, post, strict=True) if a > 0 and b == 0]

    @property
    def ok(self) -> bool:
        """False when any flag has severity ``error``."""
        return not any(f.severity == "error" for f in self.flags)

    def flags_frame(self) -> pd.DataFrame:
        return pd.DataFrame([f.to_dict() for f in self.flags],
                            columns=["code", "severity", "message", "where"])

    def to_dict(self) -> dict:
        """JSON-ready summary (used by the CLI's --json and by records)."""
        return {
            "title": self.title,
            "scenario": self.scenario,
            "hypotheses": list(self.hypotheses),
            "steps": [
                {"step": s, "members": list(self.members.get(s, ())),
                 "probabilities": {h: float(v) for h, v in row.items()}}
                for s, row in self.steps.iterrows()
            ],
            "posterior": {h: float(v) for h, v in self.posterior.items()},
            "map_hypothesis": self.map_hypothesis,
            "ml_hypothesis": self.ml_hypothesis,
            "evidence_probability": {k: float(v) for k, v in self.evidence_probability.items()},
            "stopped_at": self.stopped_at,
            "flags": [f.to_dict() for f in self.flags],
        }

    def __repr__(self) -> str:
        n = len(self.steps) - 1
        p = float(self.posterior[self.map_hypothesis])
        errors = sum(f.severity == "error" for f in self.flags)
        warnings = sum(f.severity == "warning" for f in self.flags)
        return (f"Ledger({self.title!r}: {n} evidence steps, MAP {self.map_hypothesis!r} at "
                f"{p:.4f}; {errors} errors, {warnings} warnings)")

    def _repr_html_(self) -> str:
        from .display import ledger_html

        return ledger_html(self)


def update(case: Case, *, scenario: str | None = None, with_flags: bool = True) -> Ledger:
    """Run the sequential update of ``case`` under its active (or the named) scenario."""
    if scenario is not None and scenario != case.active_scenario:
        with case.scenario(scenario):
            return update(case, with_flags=with_flags)
    hyps = case.hypothesis_names
    priors = case.priors
    p = priors.to_numpy(dtype=float)
    total = p.sum()
    # Priors off 1 (a part-way edit) are used as relative weights; the
    # prior-sum flag says so. A zero total cannot be used at all.
    log_prior = log_of(p / total) if total > 0 else np.full(len(p), -np.inf)
    steps_in = case.observed_steps()
    names = [s[0] for s in steps_in]
    members = {s[0]: tuple(s[1]) for s in steps_in}
    n_h = len(hyps)
    # One buffer: row 0 the log prior, then ln P(observed | H) per step, computed in
    # place; the running sum down the rows is the unnormalized log posterior.
    buf = np.empty((len(steps_in) + 1, n_h))
    buf[0] = log_prior
    loglik = buf[1:]
    if steps_in:
        np.stack([s[2] for s in steps_in], out=loglik)
        with np.errstate(divide="ignore"):
            np.log(loglik, out=loglik)
    # running sum down the rows; a row-by-row add is about twice as fast as
    # np.cumsum(axis=0) on a C-ordered array (contiguous inner loops), same sums
    cum = np.empty_like(buf)
    cum[0] = buf[0]
    for i in range(1, len(buf)):
        np.add(cum[i - 1], buf[i], out=cum[i])
    # log-sum-exp per row, fused with the probabilities (one exp per entry). Once a
    # row is all -inf every later row is too: the update stops before that step.
    top = cum.max(axis=1)
    stop = None
    n_ok = len(cum)
    if total > 0:
        dead = np.flatnonzero(np.isneginf(top))
        if dead.size:
            n_ok = int(dead[0])
            stop = names[n_ok - 1]
        live = cum[:n_ok]
        probs = np.subtract(live, top[:n_ok, None])
        np.exp(probs, out=probs)
        sums = probs.sum(axis=1)
        probs /= sums[:, None]
        z = top[:n_ok] + np.log(sums)
        log_steps = np.subtract(live, z[:, None])
        probs[0] = p / total  # the prior row exactly as entered, not via exp(log)
    else:
        n_ok = 1  # no usable prior: report the zero row, apply nothing
        log_steps = cum[:1]
        probs = np.zeros((1, n_h))
        z = np.full(1, -np.inf)
    step_index = pd.Index([PRIOR_STEP, *names[: n_ok - 1]], name="step")
    # the arrays are fresh and not shared, so the frames may hold them without a copy
    steps = pd.DataFrame(probs, index=step_index, columns=pd.Index(hyps, name="hypothesis"),
                         copy=False)
    ll = pd.DataFrame(loglik[: n_ok - 1], index=step_index[1:],
                      columns=pd.Index(hyps, name="hypothesis"), copy=False)
    ev_prob = pd.Series(np.exp(np.diff(z[:n_ok])), index=step_index[1:],
                        name="evidence_probability", dtype=float)
    map_h = hyps[int(np.argmax(probs[-1]))] if total > 0 else hyps[0]
    total_ll = loglik.sum(axis=0)
    ml_h = None
    if len(names) and np.isfinite(np.max(total_ll)):
        ml_h = hyps[int(np.argmax(total_ll))]
    ledger = Ledger(
        title=case.title,
        scenario=case.active_scenario,
        hypotheses=list(hyps),
        priors=pd.Series(p, index=hyps, name="prior"),
        steps=steps,
        log_steps=log_steps,
        log_likelihoods=ll,
        evidence_probability=ev_prob,
        map_hypothesis=map_h,
        ml_hypothesis=ml_h,
        stopped_at=stop,
        skipped=names[n_ok - 1:] if stop else (names if total <= 0 else []),
        members=members,
        total_log_likelihood=pd.Series(total_ll, index=hyps, name="log_likelihood"),
    )
    if with_flags:
        ledger.flags = diagnose(case, ledger)
    return ledger


__all__ = ["Ledger", "update", "log_of", "log_odds_path", "log_normalizer", "normalize_log",
           "posterior_from_logs", "PRIOR_STEP"]

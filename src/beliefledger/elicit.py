"""Priors, probabilities, rates and likelihoods estimated from data.

Each function returns an *estimate* (:mod:`beliefledger.estimates`): a small
object holding the fitted distribution (Dirichlet, Beta or Gamma), its summaries, a ready-to-use form
for the case (``est.priors()``, ``est.likelihoods()``), a
:class:`~beliefledger.case.Source` filled in from the data and the method
(``est.source``) and any :class:`~beliefledger.flags.Flag` the
estimate raises (``est.flags``, e.g. a hypothesis with zero historical
count that only has its pseudo-count).

All intervals are equal-tailed and come from the exact marginal
distributions (``scipy.stats``, imported inside the functions so that
``import beliefledger`` stays fast).

References
----------
Dezfuli, H., Kelly, D., Smith, C., Vedros, K. & Galyean, W. (2009).
*Bayesian Inference for NASA Probabilistic Risk and Reliability Analysis*,
NASA/SP-2009-569, section 4.2 (beta-binomial and gamma-Poisson conjugate
updating; the Jeffreys priors Beta(0.5, 0.5) and Gamma(0.5, 0)).
Gelman, A. et al. (2013). *Bayesian Data Analysis*, 3rd ed., section 3.4
(the Dirichlet-multinomial model and the marginals of a Dirichlet).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from ._checks import (
    check_count,
    check_name,
    check_positive,
    check_probability,
    check_text,
)
from .case import Source
from .errors import CaseError, CaseTypeError
from .estimates import BetaEstimate, DirichletEstimate, GammaEstimate
from .flags import Flag

if TYPE_CHECKING:
    from .case import Case, Evidence

JEFFREYS = "jeffreys"
UNIFORM = "uniform"


def _g(x: float) -> str:
    return f"{x:.6g}"


def _make_source(where: str, why: str, data: str, who: str, when: str) -> Source:
    data = check_text("data description", data)
    text = f"{data.strip()}: {where}" if data.strip() else where
    limit = 20_000
    return Source(where=text[:limit], who=who, when=when, why=why[:limit])


def _beta_prior(prior: Any, what: str) -> tuple[float, float, str]:
    if isinstance(prior, str):
        key = prior.strip().lower()
        if key == JEFFREYS:
            return 0.5, 0.5, "Jeffreys prior Beta(0.5, 0.5)"
        if key == UNIFORM:
            return 1.0, 1.0, "uniform prior Beta(1, 1)"
        raise CaseError(f"{what} prior {prior!r} is not known; use 'jeffreys', 'uniform' or an "
                        "explicit (a, b) pair")
    if isinstance(prior, Sequence) and len(prior) == 2:
        a = check_positive(f"{what} prior parameter a", prior[0])
        b = check_positive(f"{what} prior parameter b", prior[1])
        return a, b, f"prior Beta({_g(a)}, {_g(b)})"
    raise CaseTypeError(f"{what} prior must be 'jeffreys', 'uniform' or a pair (a, b), got "
                        f"{prior!r:.60}")



def _count_mapping(counts: Any, what: str) -> dict[str, int]:
    if isinstance(counts, pd.Series):
        counts = counts.to_dict()
    if not isinstance(counts, Mapping):
        raise CaseTypeError(f"{what} must map each name to its count (a dict or a Series), got "
                            f"{type(counts).__name__}")
    out: dict[str, int] = {}
    for k, v in counts.items():
        name = check_name(f"category in {what}", k)
        if name in out:
            raise CaseError(f"{what} names '{name}' twice")
        out[name] = check_count(f"count of '{name}' in {what}",
                                v.item() if isinstance(v, np.generic) else v)
    return out


def prior_from_counts(counts: Any, pseudo: float = 1.0, *, data: str = "", who: str = "",
                      when: str = "") -> DirichletEstimate:
    """Priors from historical counts per hypothesis: a Dirichlet estimate.

    Parameters
    ----------
    counts : dict or Series
        Hypothesis name -> number of past incidents explained by it (whole
        numbers, 0 or more).
    pseudo : float
        Pseudo-count added to every hypothesis (1 gives the uniform
        Dirichlet(1, ..., 1) prior; 0.5 the Jeffreys prior). ``pseudo=0``
        with a zero count is refused: it would create a zero prior.
    data, who, when : str
        Where the counts come from, who compiled them and when; they fill in
        the estimate's :class:`Source`.

    Returns
    -------
    DirichletEstimate
        ``alpha = counts + pseudo``; ``.mean`` are the priors.

    References
    ----------
    Gelman et al. (2013), *Bayesian Data Analysis*, 3rd ed., section 3.4.

    Examples
    --------
    >>> import beliefledger as bl
    >>> est = bl.prior_from_counts({"seal": 6, "valve": 3, "other": 0})
    >>> est.priors()
    {'seal': 0.5833333333333334, 'valve': 0.3333333333333333, 'other': 0.08333333333333333}
    """
    c = _count_mapping(counts, "counts")
    if len(c) < 2:
        raise CaseError(f"counts name {len(c)} hypothesis; give counts for at least two "
                        "mutually exclusive hypotheses")
    pseudo = check_positive("pseudo-count", pseudo, allow_zero=True)
    zeros = [k for k, v in c.items() if v == 0]
    if pseudo == 0 and zeros:
        raise CaseError(f"count of {zeros[0]!r} is 0 and pseudo=0, which would give it a prior "
                        "of exactly 0 that no evidence can revise (Cromwell's rule); use a "
                        "positive pseudo-count (e.g. pseudo=0.5 or 1)")
    counts_s = pd.Series(c, dtype=np.int64)
    alpha = counts_s.astype(float) + pseudo
    flags = [Flag("zero-count", "info",
                        f"Hypothesis '{k}' has no past occurrence in the counts; its prior rests "
                        f"on the pseudo-count {_g(pseudo)} alone ({_g(alpha[k] / alpha.sum())}).",
                        f"hypothesis '{k}'") for k in zeros]
    total = int(counts_s.sum())
    if total == 0:
        flags.append(Flag("no-data", "warning",
                                "All counts are zero, so the priors come from the pseudo-counts "
                                "alone (equal priors).", "counts"))
    listed = ", ".join(f"{k}: {v}" for k, v in c.items())
    src = _make_source(f"counts {{{listed}}} (N = {total})",
                       f"Dirichlet posterior mean, alpha = count + pseudo-count {_g(pseudo)} "
                       f"per hypothesis (concentration {_g(float(alpha.sum()))})",
                       data, who, when)
    return DirichletEstimate(alpha, counts_s, pseudo, src, flags)



def _beta_posterior(successes: int, trials: int, prior: Any, what: str, data: str, who: str,
                    when: str, unit: str) -> BetaEstimate:
    a0, b0, label = _beta_prior(prior, what)
    a, b = a0 + successes, b0 + trials - successes
    flags = []
    if trials == 0:
        flags.append(Flag("no-data", "warning",
                                f"No {unit} recorded, so the {what} is the prior alone "
                                f"({label}).", what))
    elif successes == 0:
        flags.append(Flag("zero-count", "info",
                                f"No events in {trials} {unit}; the {what} rests on the "
                                f"{label} for its size.", what))
    src = _make_source(f"{successes} in {trials} {unit}",
                       f"Beta-binomial update of the {label}: posterior Beta({_g(a)}, {_g(b)}), "
                       f"mean {a / (a + b):.4g}", data, who, when)
    return BetaEstimate(a, b, a0, b0, successes, trials, label, src, flags, what)


def probability_from_demands(failures: int, demands: int, prior: Any = JEFFREYS, *,
                             data: str = "", who: str = "", when: str = "") -> BetaEstimate:
    """Probability of failure on demand from ``failures`` in ``demands``.

    Parameters
    ----------
    failures, demands : int
        Whole numbers with ``0 <= failures <= demands``.
    prior : 'jeffreys', 'uniform' or (a, b)
        Beta prior; the Jeffreys prior is Beta(0.5, 0.5), so the posterior
        mean is ``(failures + 0.5) / (demands + 1)``.

    Returns
    -------
    BetaEstimate
        Posterior ``Beta(a + failures, b + demands - failures)``.

    References
    ----------
    NASA/SP-2009-569 (2009), section 4.2.1 (binomial model, conjugate Beta
    prior, Jeffreys prior).
    """
    x = check_count("failures", failures)
    n = check_count("demands", demands)
    if x > n:
        raise CaseError(f"failures ({x}) exceed demands ({n}); each failure is one of the demands")
    return _beta_posterior(x, n, prior, "failure probability", data, who, when, "demands")




def rate_from_events(events: int, exposure: float, prior: Any = JEFFREYS, *, unit: str = "",
                     data: str = "", who: str = "", when: str = "") -> GammaEstimate:
    """Event rate from ``events`` observed over ``exposure`` (hours, years, ...).

    Parameters
    ----------
    events : int
        Whole number of events, 0 or more.
    exposure : float
        Total exposure time (or length, or count of units x time), above 0.
    prior : 'jeffreys' or (shape, rate)
        Gamma prior; the Jeffreys prior for a Poisson rate is the improper
        Gamma(0.5, 0), giving the posterior Gamma(events + 0.5, exposure).
    unit : str
        Unit of the exposure (for display: the rate is "per unit").

    Returns
    -------
    GammaEstimate
        Posterior ``Gamma(shape + events, rate + exposure)``.

    References
    ----------
    NASA/SP-2009-569 (2009), section 4.2.2 (Poisson model, conjugate Gamma
    prior, Jeffreys prior).
    """
    x = check_count("events", events)
    t = check_positive("exposure", exposure, allow_zero=True)
    if isinstance(prior, str):
        if prior.strip().lower() != JEFFREYS:
            raise CaseError(f"rate prior {prior!r} is not known; use 'jeffreys' or an explicit "
                            "(shape, rate) pair")
        s0, r0, label = 0.5, 0.0, "Jeffreys prior Gamma(0.5, 0)"
    elif isinstance(prior, Sequence) and len(prior) == 2:
        s0 = check_positive("rate prior shape", prior[0])
        r0 = check_positive("rate prior rate", prior[1], allow_zero=True)
        label = f"prior Gamma({_g(s0)}, {_g(r0)})"
    else:
        raise CaseTypeError(f"rate prior must be 'jeffreys' or a pair (shape, rate), got "
                            f"{prior!r:.60}")
    if r0 + t <= 0:
        raise CaseError("exposure is 0 and the prior's rate parameter is 0, so the posterior is "
                        "improper; give a positive exposure or a proper Gamma prior")
    unit = check_text("unit", unit)
    shape, rate = s0 + x, r0 + t
    flags = []
    if t == 0:
        flags.append(Flag("no-data", "warning", "No exposure recorded, so the rate is the "
                                f"prior alone ({label}).", "rate"))
    elif x == 0:
        flags.append(Flag("zero-count", "info", f"No events in {_g(t)} {unit}".rstrip()
                                + f"; the rate rests on the {label} for its size.", "rate"))
    src = _make_source(f"{x} events in {_g(t)} {unit}".rstrip(),
                       f"Gamma-Poisson update of the {label}: posterior Gamma({_g(shape)}, "
                       f"{_g(rate)}), mean {shape / rate:.4g} per {unit or 'unit'}",
                       data, who, when)
    return GammaEstimate(shape, rate, s0, r0, x, t, unit, label, src, flags)


# --------------------------------------------------------------------------- likelihoods


class LikelihoodEstimate:
    """A likelihood table P(state | hypothesis) derived from a test's characteristics.

    The target hypothesis' column is ``[sensitivity, 1 - sensitivity]``; every
    other hypothesis gets ``[1 - specificity, specificity]`` (the test is
    assumed to false-alarm at the same rate whatever the other cause).

    Attributes
    ----------
    table : DataFrame
        States as rows, hypotheses as columns.
    sensitivity_estimate, specificity_estimate : BetaEstimate or None
        Beta uncertainty when built from confusion counts.
    """

    def __init__(self, table: pd.DataFrame, target: str, sensitivity: float,
                 specificity: float, source: Source, flags: list[Flag],
                 sensitivity_estimate: BetaEstimate | None = None,
                 specificity_estimate: BetaEstimate | None = None) -> None:
        self.table = table
        self.target = target
        self.sensitivity = float(sensitivity)
        self.specificity = float(specificity)
        self.source = source
        self.flags = list(flags)
        self.sensitivity_estimate = sensitivity_estimate
        self.specificity_estimate = specificity_estimate

    @property
    def states(self) -> list[str]:
        return list(self.table.index)

    @property
    def positive_likelihood_ratio(self) -> float:
        """LR+ = sensitivity / (1 - specificity) (``inf`` for a perfect specificity)."""
        fp = 1 - self.specificity
        return math.inf if fp == 0 else self.sensitivity / fp

    @property
    def negative_likelihood_ratio(self) -> float:
        """LR- = (1 - sensitivity) / specificity."""
        return math.inf if self.specificity == 0 else (1 - self.sensitivity) / self.specificity

    def likelihoods(self) -> dict[str, list[float]]:
        """``{hypothesis: [P(state | hypothesis) ...]}`` for ``case.add_evidence``."""
        return {str(h): [float(v) for v in self.table[h]] for h in self.table.columns}

    def add_to(self, case: Case, name: str, *, observed: str | None = None,
               description: str = "", shared_source: str | None = None,
               uncertainty: bool = True) -> Evidence:
        """Add this table to ``case`` as evidence ``name`` with its source; when the
        estimate came from counts and ``uncertainty`` is true, also record the Beta
        uncertainty of each column (the non-target columns share one draw)."""
        ev = case.add_evidence(name, states=self.states, likelihoods=self.likelihoods(),
                               observed=observed, source=self.source, description=description,
                               shared_source=shared_source)
        if uncertainty and self.sensitivity_estimate is not None:
            from .uncertainty import set_likelihood_uncertainty

            sens, spec = self.sensitivity_estimate, self.specificity_estimate
            assert spec is not None
            pos, neg = self.states
            try:
                set_likelihood_uncertainty(
                    case, ev.name, self.target, alpha={pos: sens.a, neg: sens.b},
                    method=f"Beta posterior of the sensitivity ({sens.source.why})",
                    source=self.source)
                for h in self.table.columns:
                    if h != self.target:
                        set_likelihood_uncertainty(
                            case, ev.name, h, alpha={pos: spec.b, neg: spec.a},
                            tie="specificity",
                            method=f"Beta posterior of the specificity ({spec.source.why}); "
                                   "one draw shared by every non-target hypothesis",
                            source=self.source)
            except Exception:
                from .uncertainty import clear_uncertainty

                clear_uncertainty(case, evidence=ev.name)
                case.remove_evidence(ev.name)
                raise
        return ev

    def to_dict(self) -> dict[str, Any]:
        out = {"target": self.target, "sensitivity": self.sensitivity,
               "specificity": self.specificity, "likelihoods": self.likelihoods(),
               "states": self.states, "source": self.source.to_dict(),
               "flags": [f.to_dict() for f in self.flags]}
        if self.sensitivity_estimate is not None:
            out["sensitivity_estimate"] = self.sensitivity_estimate.to_dict()
            out["specificity_estimate"] = self.specificity_estimate.to_dict()
        return out

    def __repr__(self) -> str:
        return (f"LikelihoodEstimate(target {self.target!r}: sensitivity "
                f"{self.sensitivity:.4g}, specificity {self.specificity:.4g}, "
                f"{len(self.table.columns)} hypotheses)")


def _hypothesis_names(hypotheses: Any, target: Any) -> tuple[list[str], str]:
    from .case import Case

    if isinstance(hypotheses, Case):
        names = hypotheses.hypothesis_names
    elif isinstance(hypotheses, str) or not isinstance(hypotheses, Sequence | pd.Index):
        raise CaseTypeError("hypotheses must be a Case or a list of hypothesis names, got "
                            f"{type(hypotheses).__name__}")
    else:
        names = [check_name("hypothesis", h) for h in hypotheses]
    if len(set(names)) != len(names):
        raise CaseError(f"hypotheses {names} name one hypothesis twice")
    if len(names) < 2:
        raise CaseError("a test separates a target hypothesis from at least one other; "
                        f"got hypotheses {names}")
    if not isinstance(target, str) or target not in names:
        raise CaseError(f"target {target!r} is not one of the hypotheses {names}; name the "
                        "hypothesis the test is designed to detect")
    return names, target


def _states(states: Any) -> tuple[str, str]:
    if isinstance(states, str) or not isinstance(states, Sequence) or len(states) != 2:
        raise CaseError(f"states must be two names (positive result first), got {states!r:.60}")
    st = (check_name("state", states[0]), check_name("state", states[1]))
    if st[0] == st[1]:
        raise CaseError(f"states {list(st)} are the same; name the positive and negative result")
    return st


def _test_table(sens: float, spec: float, names: list[str], target: str,
                st: tuple[str, str]) -> tuple[pd.DataFrame, list[Flag]]:
    cols = {h: ([sens, 1 - sens] if h == target else [1 - spec, spec]) for h in names}
    table = pd.DataFrame(cols, index=pd.Index(list(st), name="state"))
    table.columns.name = "hypothesis"
    flags = []
    for label, v in (("sensitivity", sens), ("specificity", spec)):
        if v in (0.0, 1.0):
            flags.append(Flag("zero-likelihood", "warning",
                                    f"A {label} of exactly {v:g} makes one result impossible "
                                    "under some hypothesis, so that result would eliminate it "
                                    "(Cromwell's rule); use a value just inside (0, 1) unless "
                                    "it is truly impossible.", label))
    if sens + spec <= 1:
        flags.append(Flag("uninformative-test", "warning",
                                f"Sensitivity {sens:.4g} + specificity {spec:.4g} is not above 1: "
                                "a positive result does not favour the target.", "test"))
    return table, flags


def likelihood_from_test(sensitivity: float, specificity: float, *, target: str,
                         hypotheses: Any, states: Sequence[str] = ("positive", "negative"),
                         data: str = "", who: str = "", when: str = "") -> LikelihoodEstimate:
    """A two-state likelihood table from a test's sensitivity and specificity.

    Parameters
    ----------
    sensitivity : float
        P(positive | target hypothesis).
    specificity : float
        P(negative | any other hypothesis).
    target : str
        The hypothesis the test is designed to detect.
    hypotheses : Case or list of str
        All hypotheses (a table needs a column for each).
    states : pair of str
        Names of the positive and the negative result, in that order.

    Returns
    -------
    LikelihoodEstimate
    """
    names, target = _hypothesis_names(hypotheses, target)
    sens = check_probability("sensitivity", sensitivity)
    spec = check_probability("specificity", specificity)
    st = _states(states)
    table, flags = _test_table(sens, spec, names, target, st)
    src = _make_source(f"test with sensitivity {sens:.6g}, specificity {spec:.6g} for '{target}'",
                       f"P({st[0]} | {target}) = sensitivity; P({st[1]} | other) = specificity "
                       "(false-alarm rate assumed the same under every other hypothesis)",
                       data, who, when)
    return LikelihoodEstimate(table, target, sens, spec, src, flags)


def likelihood_from_counts(true_positives: int, false_positives: int, false_negatives: int,
                           true_negatives: int, *, target: str, hypotheses: Any,
                           states: Sequence[str] = ("positive", "negative"),
                           prior: Any = JEFFREYS, data: str = "", who: str = "",
                           when: str = "") -> LikelihoodEstimate:
    """A two-state likelihood table from a test's confusion counts, with Beta
    uncertainty on its sensitivity and specificity.

    Sensitivity ~ Beta(a + TP, b + FN) and specificity ~ Beta(a + TN, b + FP)
    under the chosen Beta prior (Jeffreys Beta(0.5, 0.5) by default); the
    table uses their posterior means. :meth:`LikelihoodEstimate.add_to` also
    records the two Beta distributions as the item's uncertainty for
    :func:`beliefledger.simulate`.

    References
    ----------
    NASA/SP-2009-569 (2009), section 4.2.1 (binomial model with a Beta prior).
    """
    tp = check_count("true positives", true_positives)
    fp = check_count("false positives", false_positives)
    fn = check_count("false negatives", false_negatives)
    tn = check_count("true negatives", true_negatives)
    names, target = _hypothesis_names(hypotheses, target)
    st = _states(states)
    if tp + fn == 0:
        raise CaseError("true positives + false negatives is 0: the counts hold no case of "
                        f"'{target}', so they say nothing about the sensitivity")
    if tn + fp == 0:
        raise CaseError("true negatives + false positives is 0: the counts hold no case without "
                        f"'{target}', so they say nothing about the specificity")
    sens_e = _beta_posterior(tp, tp + fn, prior, "sensitivity", data, who, when,
                             f"cases of '{target}' (true positives)")
    spec_e = _beta_posterior(tn, tn + fp, prior, "specificity", data, who, when,
                             f"cases without '{target}' (true negatives)")
    sens, spec = sens_e.mean, spec_e.mean
    table, flags = _test_table(sens, spec, names, target, st)
    flags = sens_e.flags + spec_e.flags + flags
    src = _make_source(f"confusion counts TP {tp}, FP {fp}, FN {fn}, TN {tn} for '{target}'",
                       f"posterior means under the {sens_e.prior_label}: sensitivity "
                       f"{sens:.4g} (Beta({_g(sens_e.a)}, {_g(sens_e.b)})), specificity "
                       f"{spec:.4g} (Beta({_g(spec_e.a)}, {_g(spec_e.b)})); false-alarm rate "
                       "assumed the same under every other hypothesis", data, who, when)
    return LikelihoodEstimate(table, target, sens, spec, src, flags, sens_e, spec_e)


__all__ = [
    "prior_from_counts", "probability_from_demands", "rate_from_events",
    "likelihood_from_test", "likelihood_from_counts",
    "LikelihoodEstimate", "JEFFREYS", "UNIFORM",
]

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

Several experts' numbers are combined here too (:func:`pool`, with
performance weights from calibration questions by
:func:`beliefledger.calibration.classical_model`); keeping each expert's
input with the case, and reading the conclusion under each expert alone, is
:mod:`beliefledger.experts`. The module runs a little over 800 lines for that:
the pools belong with the other ways of turning judgement and data into
numbers, and each part is short.

References
----------
Dezfuli, H., Kelly, D., Smith, C., Vedros, K. & Galyean, W. (2009).
*Bayesian Inference for NASA Probabilistic Risk and Reliability Analysis*,
NASA/SP-2009-569, section 4.2 (beta-binomial and gamma-Poisson conjugate
updating; the Jeffreys priors Beta(0.5, 0.5) and Gamma(0.5, 0)).
Gelman, A. et al. (2013). *Bayesian Data Analysis*, 3rd ed., section 3.4
(the Dirichlet-multinomial model and the marginals of a Dirichlet).

Clemen, R. T. & Winkler, R. L. (1999). Combining probability distributions
from experts in risk analysis. *Risk Analysis* 19(2), 187-203 (linear and
logarithmic opinion pools, weights).
Cooke, R. M. (1991). *Experts in Uncertainty*, Oxford University Press,
(the classical model: calibration and information scores,
performance weights). Both recalled from memory.
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


# --------------------------------------------------------------------------- expert pools

POOL_METHODS = ("linear", "log")


def _pool_weights(experts: list[str], weights: Any) -> dict[str, float]:
    """Normalized weights per expert from None / "equal" or a mapping expert -> weight."""
    if weights is None or (isinstance(weights, str) and weights == "equal"):
        return {e: 1.0 / len(experts) for e in experts}
    if isinstance(weights, pd.Series):
        weights = weights.to_dict()
    if not isinstance(weights, Mapping):
        raise CaseTypeError(f"weights must be 'equal', 'performance' or a mapping expert -> "
                            f"weight, got {type(weights).__name__} {weights!r:.60}")
    unknown = [k for k in weights if k not in experts]
    missing = [e for e in experts if e not in weights]
    if unknown or missing:
        raise CaseError(f"weights name unknown expert(s) {unknown} and miss {missing}; give one "
                        f"weight for each expert {experts}")
    vals = {}
    for e in experts:
        w = weights[e]
        try:
            finite = (not isinstance(w, bool) and isinstance(w, int | float | np.floating
                                                             | np.integer)
                      and math.isfinite(float(w)))
        except OverflowError:
            finite = False
        if not finite:
            raise CaseError(f"weight of expert '{e}' is {w!r:.40}; give a finite number of 0 "
                            "or more")
        if w < 0:
            raise CaseError(f"weight of expert '{e}' is {float(w):g}, below zero; weights are 0 "
                            "or more (0 leaves the expert out)")
        vals[e] = float(w)
    total = math.fsum(vals.values())
    if total <= 0:
        raise CaseError(f"the weights of experts {experts} are all 0; give at least one "
                        "positive weight")
    return {e: v / total for e, v in vals.items()}


def pool_distributions(dists: Mapping[str, Mapping[str, float]], *, method: str = "linear",
                       weights: Any = None) -> dict[str, float]:
    """Combine several experts' distributions over the same keys into one.

    ``linear``: p(k) = Σ_i w_i·p_i(k). ``log``: p(k) ∝ Π_i p_i(k)^w_i,
    normalized over the keys (a key any weighted expert gives 0 gets 0).
    ``weights``: ``None`` (equal) or expert -> weight (0 or more, not all 0;
    normalized to sum to 1).

    References
    ----------
    Clemen & Winkler (1999), *Risk Analysis* 19(2), 187-203, section 3
    (the linear and logarithmic opinion pools; recalled from memory, formulas
    checked by hand in the tests).
    """
    if method not in POOL_METHODS:
        raise CaseError(f"pool method {method!r:.40} is not one of {list(POOL_METHODS)}")
    experts = list(dists)
    if not experts:
        raise CaseError("no expert's distribution to pool; give at least one")
    keys = list(dists[experts[0]])
    for e in experts:
        if set(dists[e]) != set(keys):
            raise CaseError(f"expert '{e}' gives values for {sorted(dists[e])}, but expert "
                            f"'{experts[0]}' for {sorted(keys)}; pool distributions over the same "
                            "states or hypotheses")
        total = math.fsum(float(dists[e][k]) for k in keys)
        if abs(total - 1) > 1e-6:
            raise CaseError(f"expert '{e}''s values sum to {_g(total)}, not 1; each expert's "
                            "numbers for one input form a distribution")
    w = _pool_weights(experts, weights)
    p = np.array([[float(dists[e][k]) for k in keys] for e in experts])
    wv = np.array([w[e] for e in experts])
    if method == "linear":
        out = wv @ p
    else:
        live = wv > 0
        with np.errstate(divide="ignore"):
            lg = (wv[live, None] * np.log(p[live])).sum(axis=0)
        lg = np.where(np.isnan(lg), -np.inf, lg)
        top = lg.max()
        if not np.isfinite(top):
            raise CaseError("the logarithmic pool is undefined here: every state or hypothesis "
                            "is given 0 by some weighted expert; use the linear pool, or revisit "
                            "the zeros")
        out = np.exp(lg - top)
    out = out / out.sum()
    return dict(zip(keys, out.tolist(), strict=True))


def _pooled_range(ranges: list[tuple[float, float, float]], w: list[float], method: str,
                  level: float) -> tuple[float, float] | None:
    """The pooled low / high of one probability from each expert's (low, best, high),
    each read as a Beta with mean ``best`` fitted to the range (see
    :func:`beliefledger.uncertainty.fit_concentration`): the ``level`` interval of their
    mixture (linear pool) or of their normalized weighted geometric mean, which for
    Betas is Beta(Σ w_i a_i, Σ w_i b_i) (log pool; derived here from the densities).
    ``None`` when an expert's range cannot be fitted (an end at the best value)."""
    from scipy import optimize, stats

    from .uncertainty import fit_concentration

    ab = []
    for lo, best, hi in ranges:
        if not (0 < lo < best < hi < 1):
            return None
        k, _, _ = fit_concentration(best, lo, hi, level)
        ab.append((best * k, (1 - best) * k))
    tails = ((1 - level) / 2, (1 + level) / 2)
    if method == "log":
        a = sum(wi * x for wi, (x, _) in zip(w, ab, strict=True))
        b = sum(wi * y for wi, (_, y) in zip(w, ab, strict=True))
        lo, hi = (float(v) for v in stats.beta.ppf(tails, a, b))
        return lo, hi

    def cdf(x: float) -> float:
        return sum(wi * stats.beta.cdf(x, a, b) for wi, (a, b) in zip(w, ab, strict=True))
    out = []
    for q in tails:
        out.append(float(optimize.brentq(lambda x, q=q: cdf(x) - q, 0.0, 1.0, xtol=1e-12)))
    return out[0], out[1]


class PooledJudgement:
    """Several experts' numbers for one input, combined.

    Attributes
    ----------
    target : str
        ``"prior"`` or ``"likelihood"``; ``evidence`` and ``hypothesis`` name a
        likelihood column.
    values : Series
        The pooled best value of each hypothesis (prior) or state (likelihood).
    ranges : DataFrame
        ``low``, ``best``, ``high`` per key; ``low`` / ``high`` are NaN where not
        every expert gave a range.
    weights : Series
        The normalized weight of each expert.
    by_expert : DataFrame
        Each expert's best values (experts as rows).
    method, weighting, level : str, str, float
    source : Source
        Where the pooled numbers came from (the experts, the pool, the weights).
    """

    def __init__(self, *, target: str, evidence: str | None, hypothesis: str | None,
                 values: pd.Series, ranges: pd.DataFrame, weights: pd.Series,
                 by_expert: pd.DataFrame, method: str, weighting: str, level: float,
                 source: Source, notes: list[str]) -> None:
        self.target, self.evidence, self.hypothesis = target, evidence, hypothesis
        self.values, self.ranges, self.weights = values, ranges, weights
        self.by_expert, self.method, self.weighting, self.level = by_expert, method, weighting, level
        self.source, self.notes = source, list(notes)

    @property
    def label(self) -> str:
        return ("priors" if self.target == "prior" else
                f"P(state | '{self.hypothesis}') of evidence '{self.evidence}'")

    @property
    def spread(self) -> pd.DataFrame:
        """Per key: the lowest and highest best value across the experts, and the pooled."""
        return pd.DataFrame({"lowest": self.by_expert.min(axis=0),
                             "highest": self.by_expert.max(axis=0), "pooled": self.values})

    def to_frame(self) -> pd.DataFrame:
        """Keys as rows; each expert's best, then the pooled low / best / high."""
        frame = self.by_expert.T.copy()
        for c in ("low", "best", "high"):
            frame[f"pooled {c}"] = self.ranges[c]
        return frame

    def to_dict(self) -> dict[str, Any]:
        def clean(x: float) -> float | None:
            return None if not math.isfinite(x) else float(x)
        return {"target": self.target, "evidence": self.evidence, "hypothesis": self.hypothesis,
                "method": self.method, "weighting": self.weighting, "level": self.level,
                "weights": {k: float(v) for k, v in self.weights.items()},
                "values": {k: float(v) for k, v in self.values.items()},
                "ranges": {k: {c: clean(float(r[c])) for c in ("low", "best", "high")}
                           for k, r in self.ranges.iterrows()},
                "source": self.source.to_dict(), "notes": list(self.notes)}

    def __repr__(self) -> str:
        vals = ", ".join(f"{k}: {v:.4g}" for k, v in self.values.items())
        return (f"PooledJudgement({self.label}: {self.method} pool of {len(self.weights)} "
                f"experts, {self.weighting} weights; {vals})")

    def _repr_html_(self) -> str:
        from .display import pool_html

        return pool_html(self)


def _as_values(v: Any) -> dict[str, float]:
    from .case.experts import check_value

    return check_value("a judged value", v)


def pool(case: Any, target: Any = "prior", *, method: str = "linear", weights: Any = "equal",
         level: float = 0.9, cutoff: float = 0.0) -> PooledJudgement:
    """Combine several experts' numbers for one input by an opinion pool.

    Parameters
    ----------
    case : Case or mapping
        A case whose experts gave judgements (:func:`beliefledger.set_expert_prior`,
        :func:`beliefledger.set_expert_likelihood`), or the judgements
        themselves: expert -> {key: value}, each value a number or a (low,
        best, high) range.
    target : "prior" or (evidence, hypothesis)
        Which input of the case to pool (ignored for a mapping).
    method : {"linear", "log"}
        The linear pool Σ w_i·p_i, or the logarithmic pool ∝ Π p_i^w_i.
    weights : "equal", "performance" or mapping
        Equal weights; performance weights from the case's calibration
        questions by the classical model (:func:`classical_model`, with
        ``cutoff``); or stated weights, expert -> weight (0 or more, not all
        0).
    level : float
        The level at which ranges are read (default 0.9: a low / high range is
        a 90 % interval) and the pooled range is given.

    Returns
    -------
    PooledJudgement
        The pooled values, ranges where every expert gave one, each expert's
        numbers, the weights and a Source. :func:`beliefledger.apply_pool`
        puts them into the case (the numbers and, for the Monte Carlo, the
        ranges); nothing here changes the case.

    References
    ----------
    Clemen & Winkler (1999), *Risk Analysis* 19(2); Cooke (1991), *Experts in
    Uncertainty* (performance weights; both recalled from memory).
    """
    from .case.experts import check_expert, experts_section, is_stale

    lv = _level(level)
    notes: list[str] = []
    evidence = hypothesis = None
    if isinstance(case, Mapping):
        judged = {str(e): {str(k): _as_values(v) for k, v in d.items()} if isinstance(d, Mapping)
                  else _bad_judgement(e) for e, d in case.items()}
        tgt, who = "given", {}
    else:
        sec = experts_section(case)
        if isinstance(target, str) and target == "prior":
            tgt = "prior"
        elif isinstance(target, tuple | list) and len(target) == 2:
            tgt = "likelihood"
            evidence = case.evidence_item(target[0]).name
            hypothesis = case.hypothesis(target[1]).name
        else:
            raise CaseError(f"target {target!r:.60} is not 'prior' or an (evidence, hypothesis) "
                            "pair")
        rows = [j for j in sec["judgements"] if j["target"] == tgt and
                (tgt == "prior" or (j["evidence"] == evidence and j["hypothesis"] == hypothesis))]
        if not rows:
            raise CaseError(f"no expert has judged the {'priors' if tgt == 'prior' else f'likelihoods of {evidence!r} under {hypothesis!r}'}; "
                            "enter them with bl.set_expert_prior / bl.set_expert_likelihood")
        stale = [j["expert"] for j in rows if is_stale(j, case)]
        if stale:
            raise CaseError(f"the judgement(s) of {stale} were entered for an earlier hypothesis "
                            "set (or states) and no longer cover the case's; enter them again "
                            "before pooling")
        judged = {j["expert"]: j["values"] for j in rows}
        who = {e["name"]: e for e in sec["experts"]}
        for e in judged:
            check_expert(case, e)
    experts = list(judged)
    if isinstance(weights, str) and weights == "performance":
        if isinstance(case, Mapping):
            raise CaseError("performance weights come from the case's calibration questions; "
                            "pass the case, or give stated weights")
        from .calibration import calibration_scores

        scores = calibration_scores(case, cutoff=cutoff)
        missing = [e for e in experts if e not in scores.weights.index]
        if missing:
            raise CaseError(f"expert(s) {missing} answered no calibration question, so they have "
                            "no performance weight; add their assessments with "
                            "bl.set_calibration, or give stated weights")
        w = _pool_weights(experts, scores.weights[experts].to_dict())
        weighting = f"performance (classical model, cutoff {_g(cutoff)})"
    elif isinstance(weights, str) and weights != "equal":
        raise CaseError(f"weights {weights!r:.40} is not 'equal', 'performance' or a mapping "
                        "expert -> weight")
    else:
        w = _pool_weights(experts, None if isinstance(weights, str) else weights)
        weighting = "equal" if isinstance(weights, str) else "stated"
    best = {e: {k: v["best"] for k, v in d.items()} for e, d in judged.items()}
    keys = list(best[experts[0]])
    values = pool_distributions(best, method=method, weights=w)
    lows, highs = {}, {}
    for k in keys:
        rg = [(d[k].get("low"), d[k]["best"], d[k].get("high")) for d in judged.values()]
        live = [(r, w[e]) for r, e in zip(rg, experts, strict=True) if w[e] > 0]
        if all(r[0] is not None for r, _ in live):
            got = _pooled_range([r for r, _ in live], [x for _, x in live], method, lv)
            if got is None:
                notes.append(f"no pooled range for '{k}': a range with an end at its best "
                             "value cannot be read as a distribution")
                continue
            lo, hi = got
            if not lo < values[k] < hi:
                notes.append(f"the pooled range for '{k}' ({_g(lo)} to {_g(hi)}) was widened to "
                             f"hold the pooled value {_g(values[k])}")
                lo, hi = min(lo, values[k]), max(hi, values[k])
            lows[k], highs[k] = lo, hi
    ranges = pd.DataFrame({"low": [lows.get(k, np.nan) for k in keys],
                           "best": [values[k] for k in keys],
                           "high": [highs.get(k, np.nan) for k in keys]},
                          index=pd.Index(keys, name="key"))
    names = ", ".join(f"{e} ({_g(w[e])})" for e in experts)
    whys = "; ".join(f"{e}: {who[e]['source'].get('where') or 'unsourced'}"
                     for e in experts if e in who)
    src = Source(where=f"{method} opinion pool of {len(experts)} experts' judgements: {names}"
                       + (f" [{whys}]" if whys else ""),
                 why=f"{weighting} weights (Clemen & Winkler 1999"
                     + ("; Cooke 1991 classical model" if weighting.startswith("performance")
                        else "") + ")")
    return PooledJudgement(
        target=tgt, evidence=evidence, hypothesis=hypothesis,
        values=pd.Series(values, name="pooled"), ranges=ranges,
        weights=pd.Series(w, name="weight"),
        by_expert=pd.DataFrame(best).T.reindex(columns=keys), method=method, weighting=weighting,
        level=lv, source=src, notes=notes)


def _bad_judgement(e: Any) -> Any:
    raise CaseTypeError(f"the judgement of expert {e!r:.60} must map each state or hypothesis "
                        "to a value (a number or a low / best / high range)")


def _level(level: Any) -> float:
    from ._checks import check_level

    return check_level(level)


__all__ = [
    "prior_from_counts", "probability_from_demands", "rate_from_events",
    "likelihood_from_test", "likelihood_from_counts",
    "LikelihoodEstimate", "JEFFREYS", "UNIFORM",
    "pool", "pool_distributions", "PooledJudgement", "POOL_METHODS",
]

"""Does the conclusion survive other choices? Prior scenarios, one-way sweeps,
break-even priors and tornado tables (the Monte Carlo over uncertain inputs
is :mod:`beliefledger.montecarlo`).

Every function reads the case and leaves it unchanged. Sweeps and tornado
tables are computed in one vectorised pass through the engine's log-space
helpers, not by re-running the update per point.

Conventions
-----------
- Moving one prior rescales the other hypotheses' priors in proportion, so
  they keep their ratios and the sum stays 1 (common practice in one-way
  sensitivity analysis of a discrete prior).
- Moving one likelihood P(state | H) rescales the other states of that
  column in proportion, so the column still sums to 1. Only the observed
  state's entry affects the posterior.
- "±50 % in odds" multiplies the odds p / (1 - p) by 0.5 and by 1.5.

References
----------
Clemen, R. T. & Reilly, T. (2001). *Making Hard Decisions*, 2nd ed.,
chapter 5 (one-way sensitivity analysis, tornado diagrams), cited from
memory for the general method.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Iterable, Mapping
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from ._checks import check_level
from ._logmath import log_of, posterior_from_logs
from .errors import CaseError, CaseTypeError
from .uncertainty import current_uncertainty

if TYPE_CHECKING:
    from .case import Case

DEFAULT_POINTS = 200
ODDS_FACTORS = (0.5, 1.5)


# --------------------------------------------------------------------------- shared pieces


def _scenario(case: Case, scenario: str | None) -> str:
    sc = case.active_scenario if scenario is None else scenario
    if not isinstance(sc, str):
        raise CaseTypeError(f"scenario name must be a string, got {type(sc).__name__}")
    if sc not in case.scenario_names:
        raise CaseError(f"no scenario named {sc!r}; the scenarios are {case.scenario_names}")
    return sc


def _priors(case: Case, scenario: str) -> np.ndarray:
    p = case.scenario_priors(scenario).to_numpy(dtype=float)
    total = p.sum()
    if total <= 0:
        raise CaseError(f"all priors of scenario '{scenario}' are zero; give positive priors")
    return p / total


def _loglik(case: Case, scenario: str | None = None) -> tuple[list[str], np.ndarray]:
    """Observed step names and ln P(observed | H) per step (steps x hypotheses); a Jeffrey
    step's row is the one under ``scenario``'s priors."""
    return case.observed_log_likelihoods(scenario)


def _refuse_jeffrey(case: Case, what: str) -> None:
    """Analyses that hold every step's likelihood fixed while the priors move do not
    apply to a Jeffrey update, whose likelihood weights follow the priors."""
    jeff = [e.name for e in case.evidence.values()
            if e.uncertain is not None and e.uncertain.form == "probability"]
    if jeff:
        raise CaseError(f"{what} holds each item's likelihood fixed while the priors move, but "
                        f"the probability-form (Jeffrey) observation of {jeff} re-derives its "
                        "likelihood weights from the belief before it, so the closed form does "
                        "not apply; compare prior scenarios with bl.robustness (each is run in "
                        "full), or give the report as likelihood weights")


def _uncertain_steps(case: Case) -> set[str]:
    return {e.name for e in case.evidence.values() if e.uncertain is not None}


def _check_defined(log_prior: np.ndarray, total: np.ndarray, what: str) -> None:
    if not np.any(np.isfinite(log_prior + total)):
        raise CaseError(f"{what}: the observed evidence is impossible under every hypothesis "
                        "with a positive prior, so the posterior is undefined; fix the "
                        "likelihoods (see the ledger's flags)")


def _values(values: Any, points: Any, what: str) -> np.ndarray:
    if values is None:
        if isinstance(points, bool) or not isinstance(points, numbers.Integral) or points < 2:
            raise CaseError(f"points is {points!r:.40}; give a whole number of at least 2")
        return np.linspace(0.0, 1.0, int(points))
    try:
        v = np.asarray(values, dtype=float).ravel()
    except (TypeError, ValueError):
        raise CaseTypeError(f"{what} values must be numbers between 0 and 1") from None
    if v.size == 0:
        raise CaseError(f"{what} values are empty; give at least one value")
    bad = v[~np.isfinite(v) | (v < 0) | (v > 1)]
    if bad.size:
        raise CaseError(f"{what} value {bad[0]:g} is outside [0, 1]; sweep probabilities only")
    return v


def _rescaled_priors(p: np.ndarray, j: int, x: np.ndarray, name: str) -> np.ndarray:
    """Rows of priors with hypothesis ``j`` set to ``x`` and the others rescaled."""
    rest = 1.0 - p[j]
    if rest <= 0:
        raise CaseError(f"the other hypotheses' priors sum to 0, so they cannot absorb a change "
                        f"in the prior of '{name}'; give them positive priors first")
    out = np.outer(1.0 - x, p / rest)
    out[:, j] = x
    return out


def _odds_range(p: float) -> tuple[float, float]:
    if p <= 0 or p >= 1:
        return p, p
    o = p / (1 - p)
    lo, hi = o * ODDS_FACTORS[0], o * ODDS_FACTORS[1]
    return lo / (1 + lo), hi / (1 + hi)


# --------------------------------------------------------------------------- scenarios


class Robustness:
    """Posterior and MAP under each prior scenario, with a plain verdict.

    ``to_frame()`` gives one row per scenario (a column per hypothesis and
    ``map``); ``verdict`` says whether the MAP is the same under all of them.
    """

    def __init__(self, title: str, reference: str, frame: pd.DataFrame) -> None:
        self.title = title
        self.reference = reference
        self._frame = frame

    @property
    def maps(self) -> pd.Series:
        return self._frame["map"].copy()

    @property
    def stable(self) -> bool:
        """True when every scenario gives the same MAP."""
        return self._frame["map"].nunique() == 1

    @property
    def changed_under(self) -> list[str]:
        """Scenarios whose MAP differs from the reference scenario's."""
        ref = self._frame.loc[self.reference, "map"]
        return [s for s, m in self._frame["map"].items() if m != ref]

    @property
    def verdict(self) -> str:
        n = len(self._frame)
        ref = self._frame.loc[self.reference, "map"]
        if n == 1:
            return (f"the MAP is '{ref}' under the only scenario ('{self.reference}'); add prior "
                    "scenarios with case.add_scenario to test the priors")
        if self.stable:
            return f"the MAP is '{ref}' under all {n} scenarios"
        changed = self.changed_under
        parts = ", ".join(f"'{s}' (to '{self._frame.loc[s, 'map']}')" for s in changed)
        return f"the MAP is '{ref}' under '{self.reference}' but changes under {parts}"

    summary = verdict

    def to_frame(self) -> pd.DataFrame:
        return self._frame.copy()

    def to_dict(self) -> dict[str, Any]:
        hyps = [c for c in self._frame.columns if c != "map"]
        return {"title": self.title, "reference": self.reference, "stable": self.stable,
                "verdict": self.verdict,
                "scenarios": [{"scenario": s, "map": row["map"],
                               "posterior": {h: float(row[h]) for h in hyps}}
                              for s, row in self._frame.iterrows()]}

    def __repr__(self) -> str:
        return f"Robustness({self.title!r}: {len(self._frame)} scenarios; {self.verdict})"

    def _repr_html_(self) -> str:
        from .display import robustness_html

        return robustness_html(self)


def robustness(case: Case, scenarios: Iterable[str] | None = None, *,
               ledgers: Mapping[str, Any] | None = None) -> Robustness:
    """Posterior of every hypothesis and the MAP under each prior scenario.

    Parameters
    ----------
    scenarios : list of str, optional
        Scenario names to compare (default: all, 'base' first). The active
        scenario is the reference the verdict compares against (or the
        first one listed when the active one is not among them).
    ledgers : mapping, optional
        Scenario -> ledger already computed (``engine.update_all(case)``), so a
        caller that has them (the workbench, the sealer) does not recompute.

    Returns
    -------
    Robustness
        ``.to_frame()``, ``.verdict`` (e.g. "the MAP is 'X' under all 3
        scenarios"), ``.stable``, ``.to_dict()``.
    """
    from .engine import update_all

    names = case.scenario_names if scenarios is None else [_scenario(case, s)
                                                           for s in scenarios]
    if not names:
        raise CaseError("no scenarios to compare; give at least one scenario name")
    if len(set(names)) != len(names):
        raise CaseError(f"scenarios {names} list one scenario twice")
    if ledgers is None or not set(names) <= set(ledgers):
        ledgers = update_all(case, with_flags=False)
    rows = [ledgers[s].posterior_values for s in names]
    maps = [ledgers[s].map_hypothesis for s in names]
    frame = pd.DataFrame(rows, index=pd.Index(names, name="scenario"),
                         columns=case.hypothesis_names)
    frame["map"] = maps
    ref = case.active_scenario if case.active_scenario in names else names[0]
    return Robustness(case.title, ref, frame)


# --------------------------------------------------------------------------- sweeps


def sweep_prior(case: Case, hypothesis: str, values: Any = None, *,
                points: int = DEFAULT_POINTS, scenario: str | None = None) -> pd.DataFrame:
    """Posterior of every hypothesis as the prior of ``hypothesis`` moves.

    The other priors are rescaled in proportion (their ratios are kept).

    Parameters
    ----------
    values : array-like, optional
        Prior values in [0, 1] (default: ``points`` evenly spaced from 0 to 1).
    scenario : str, optional
        Scenario whose priors are the starting point (default: active).

    Returns
    -------
    DataFrame
        Index: the swept prior (named ``prior of '<hypothesis>'``); one
        column per hypothesis. ``attrs`` hold the hypothesis, scenario and
        base prior.
    """
    h = case.hypothesis(hypothesis).name
    sc = _scenario(case, scenario)
    x = _values(values, points, f"prior sweep of '{h}'")
    p = _priors(case, sc)
    names = case.hypothesis_names
    j = names.index(h)
    _, ll = _loglik(case, sc)
    total = ll.sum(axis=0)
    pri = _rescaled_priors(p, j, x, h)
    _check_defined(log_of(p), total, f"prior sweep of '{h}'")
    steps = case.observed_log_steps()
    if steps.jeffrey:  # each point re-derives the Jeffrey weights from its own priors
        from .engine import resolve_steps

        totals = np.array([np.add.reduce(np.array(resolve_steps(row, steps)[0].rows), axis=0)
                           if steps.rows else np.zeros(len(names)) for row in pri])
        with np.errstate(invalid="ignore"):
            post = posterior_from_logs(log_of(pri), totals)
    else:
        post = posterior_from_logs(log_of(pri), total[None, :])
    frame = pd.DataFrame(post, index=pd.Index(x, name=f"prior of '{h}'"),
                         columns=pd.Index(names, name="hypothesis"))
    frame.attrs.update(kind="prior", hypothesis=h, scenario=sc, base=float(p[j]))
    return frame


def sweep_likelihood(case: Case, evidence: str, hypothesis: str, values: Any = None, *,
                     state: str | None = None, points: int = DEFAULT_POINTS,
                     scenario: str | None = None) -> pd.DataFrame:
    """Posterior of every hypothesis as one likelihood P(state | hypothesis) moves.

    ``state`` defaults to the item's observed state; the other states of the
    column are rescaled in proportion so the column keeps summing to 1 (an
    likelihood evidence item has just the one entry).

    Returns
    -------
    DataFrame
        Index: the swept likelihood (named ``P(<state> | <hypothesis>)``); one
        column per hypothesis.
    """
    ev = case.evidence_item(evidence)
    h = case.hypothesis(hypothesis).name
    _refuse_jeffrey(case, "a likelihood sweep")
    if ev.uncertain is not None:
        raise CaseError(f"evidence '{ev.name}' is an uncertain observation: no single entry "
                        "P(observed | H) moves its step, so sweep another item, or observe a "
                        "state of it on a copy of the case")
    if ev.observed is None:
        raise CaseError(f"evidence '{ev.name}' is pending (not observed yet), so its likelihoods do not affect "
                        "the posterior; observe it first (case.observe) or sweep another item")
    st = ev.observed if state is None else state
    i = ev.state_index(st)
    obs = ev.states.index(ev.observed)
    sc = _scenario(case, scenario)
    x = _values(values, points, f"likelihood sweep of '{ev.name}' under '{h}'")
    names = case.hypothesis_names
    j = names.index(h)
    col = ev.table[:, j]
    if i == obs:
        new_obs = x
    else:
        rest = 1.0 - col[i]
        if rest <= 0:
            raise CaseError(f"P({st} | {h}) is 1 for evidence '{ev.name}', so the other states "
                            "have nothing to rescale; sweep the observed state instead")
        new_obs = col[obs] * (1.0 - x) / rest
    steps, ll = _loglik(case)
    k = steps.index(ev.name)
    total = np.delete(ll, k, axis=0).sum(axis=0)
    p = _priors(case, sc)
    tot = np.broadcast_to(total, (len(x), len(names))).copy()
    tot += log_of(ev.table[obs])[None, :]
    tot[:, j] = total[j] + log_of(new_obs)
    _check_defined(log_of(p), total + log_of(ev.table[obs]), f"likelihood sweep of '{ev.name}'")
    post = posterior_from_logs(log_of(p)[None, :], tot)
    frame = pd.DataFrame(post, index=pd.Index(x, name=f"P({st} | {h})"),
                         columns=pd.Index(names, name="hypothesis"))
    frame.attrs.update(kind="likelihood", evidence=ev.name, hypothesis=h, state=st,
                       scenario=sc, base=float(col[i]))
    return frame


# --------------------------------------------------------------------------- break-even


class BreakEven:
    """The prior at which a hypothesis and its rival have equal posteriors."""

    def __init__(self, *, hypothesis: str, against: str, prior: float, current_prior: float,
                 log_bayes_factor: float, scenario: str, scenario_range: tuple[float, float],
                 reason: str = "") -> None:
        self.hypothesis = hypothesis
        self.against = against
        self.prior = prior
        self.current_prior = current_prior
        self.log_bayes_factor = log_bayes_factor
        self.scenario = scenario
        self.scenario_range = scenario_range
        self.reason = reason

    @property
    def bayes_factor(self) -> float:
        """P(evidence | hypothesis) / P(evidence | rival)."""
        with np.errstate(over="ignore"):
            return float(np.exp(self.log_bayes_factor))

    @property
    def exists(self) -> bool:
        return not math.isnan(self.prior)

    @property
    def inside_scenario_range(self) -> bool | None:
        """Whether the break-even prior lies within the range of this hypothesis'
        prior across the case's scenarios (None when there is no break-even)."""
        if not self.exists:
            return None
        lo, hi = self.scenario_range
        return bool(lo <= self.prior <= hi)

    @property
    def summary(self) -> str:
        h, r = self.hypothesis, self.against
        if not self.exists:
            return f"no break-even prior for '{h}' against '{r}': {self.reason}"
        side = "above" if self.current_prior > self.prior else "below"
        lo, hi = self.scenario_range
        where = ("inside" if self.inside_scenario_range else "outside")
        return (f"'{h}' and '{r}' have equal posteriors when the prior of '{h}' is "
                f"{self.prior:.4g} (the others rescaled in proportion); the prior in use, "
                f"{self.current_prior:.4g}, is {side} it; the break-even lies {where} the range "
                f"the scenarios span ({lo:.4g} to {hi:.4g})")

    def to_dict(self) -> dict[str, Any]:
        return {"hypothesis": self.hypothesis, "against": self.against,
                "prior": None if not self.exists else self.prior,
                "current_prior": self.current_prior,
                "log_bayes_factor": (None if not math.isfinite(self.log_bayes_factor)
                                     else self.log_bayes_factor),
                "scenario": self.scenario, "scenario_range": list(self.scenario_range),
                "inside_scenario_range": self.inside_scenario_range, "summary": self.summary}

    def __repr__(self) -> str:
        p = f"{self.prior:.6g}" if self.exists else "none"
        return f"BreakEven('{self.hypothesis}' vs '{self.against}': prior {p})"


def break_even_prior(case: Case, hypothesis: str, against: str | None = None, *,
                     scenario: str | None = None) -> BreakEven:
    """Prior of ``hypothesis`` at which it and ``against`` have equal posteriors.

    The other priors are rescaled in proportion, so with prior ``x`` for
    ``hypothesis`` (prior ``p`` in use) and ``r`` for the rival, the
    posterior odds are ``x / (r (1 - x) / (1 - p)) * B`` with ``B`` the Bayes
    factor of the evidence. They equal 1 at ``x = c / (1 + c)`` with
    ``c = r / ((1 - p) B)``, computed in log space.

    ``against`` defaults to the hypothesis' strongest rival (the largest
    posterior among the others, which stays the largest as ``x`` moves,
    since the others keep their ratios): the break-even is then the prior
    above which ``hypothesis`` is the MAP.

    References
    ----------
    Pauker, S. G. & Kassirer, J. P. (1980). The threshold approach to
    clinical decision making. *NEJM* 302, 1109-1117 (threshold probabilities;
    cited from memory for the general idea).
    """
    h = case.hypothesis(hypothesis).name
    sc = _scenario(case, scenario)
    _refuse_jeffrey(case, "the break-even prior")
    names = case.hypothesis_names
    j = names.index(h)
    p = _priors(case, sc)
    _, ll = _loglik(case)
    total = ll.sum(axis=0)
    if against is None:
        others = [i for i in range(len(names)) if i != j]
        if not others:
            raise CaseError(f"'{h}' is the only hypothesis; there is no rival")
        score = log_of(p[others]) + total[others]
        r = others[int(np.argmax(score))]
    else:
        r = names.index(case.hypothesis(against).name)
        if r == j:
            raise CaseError(f"against is '{h}' itself; name a different hypothesis")
    rival = names[r]
    across = [float(case.scenario_priors(s)[h]) for s in case.scenario_names]
    rng = (min(across), max(across))
    with np.errstate(invalid="ignore"):
        lbf = float(total[j] - total[r])
    common = dict(hypothesis=h, against=rival, current_prior=float(p[j]),
                  log_bayes_factor=lbf, scenario=sc, scenario_range=rng)
    if p[j] >= 1:
        raise CaseError(f"the prior of '{h}' is 1, so the others cannot be rescaled; give the "
                        "others positive priors")
    reason = ""
    if p[r] == 0:
        reason = f"'{rival}' has a prior of 0 in scenario '{sc}' and stays at 0"
    elif not np.isfinite(total[j]) and not np.isfinite(total[r]):
        reason = "the evidence is impossible under both"
    elif not np.isfinite(total[j]):
        reason = f"the evidence is impossible under '{h}' (it is eliminated)"
    elif not np.isfinite(total[r]):
        reason = f"the evidence is impossible under '{rival}' (it is eliminated)"
    if reason:
        return BreakEven(prior=math.nan, reason=reason, **common)
    log_c = math.log(p[r]) - math.log1p(-p[j]) - lbf
    x = 1.0 / (1.0 + math.exp(-log_c)) if log_c > -700 else math.exp(log_c)
    return BreakEven(prior=float(x), **common)


# --------------------------------------------------------------------------- tornado


def _range_key(key: Any) -> tuple[str, str]:
    if isinstance(key, tuple) and len(key) == 2 and all(isinstance(k, str) for k in key):
        return key
    raise CaseTypeError(f"ranges keys must be ('prior', hypothesis) or (evidence, hypothesis) "
                        f"tuples, got {key!r:.60}")


def _check_range(what: str, rg: Any, base: float) -> tuple[float, float]:
    if not isinstance(rg, tuple | list) or len(rg) != 2:
        raise CaseError(f"range for {what} must be a pair (low, high), got {rg!r:.60}")
    lo, hi = (float(v) for v in rg)
    if not (0 <= lo <= hi <= 1) or math.isnan(lo) or math.isnan(hi):
        raise CaseError(f"range for {what} is ({lo:g}, {hi:g}); give 0 <= low <= high <= 1")
    if not (lo <= base <= hi):
        raise CaseError(f"range for {what} ({lo:g}, {hi:g}) does not contain the value in use "
                        f"{base:g}; widen it or change the value first")
    return lo, hi


def tornado(case: Case, focus: str | None = None, *, ranges: Mapping[Any, Any] | None = None,
            scenario: str | None = None, level: float = 0.9) -> pd.DataFrame:
    """Each input moved over its range, ranked by the swing in the focus posterior.

    Inputs are every prior and every observed likelihood P(observed | H)
    (an uncertain observation in the likelihood form has no single entry and
    is held at its weights; a probability-form one is refused, as its weights
    follow the priors). Each moves alone over, in order of preference:

    1. the range given in ``ranges`` (keys ``("prior", hypothesis)`` or
       ``(evidence, hypothesis)``, values ``(low, high)``);
    2. for a prior, the span of its values across the case's scenarios;
       for a likelihood, its stated low / high range (uncertainty section);
    3. the ``level`` interval of its distribution in the uncertainty section;
    4. otherwise ±50 % in odds (the odds times 0.5 and 1.5).

    Parameters
    ----------
    focus : str, optional
        Hypothesis whose posterior is tracked (default: the MAP).

    Returns
    -------
    DataFrame
        One row per input, largest swing first: ``input``, ``kind``,
        ``evidence``, ``hypothesis``, ``state``, ``low``, ``base``, ``high``,
        ``range_from``, ``focus_at_low``, ``focus_at_high``, ``swing``.
        ``attrs`` hold the focus, its base posterior and the scenario.
    """
    from scipy import stats

    from .engine import update

    sc = _scenario(case, scenario)
    lv = check_level(level)
    _refuse_jeffrey(case, "the tornado table")
    names = case.hypothesis_names
    ledger = update(case, scenario=sc, with_flags=False)
    f = ledger.map_hypothesis if focus is None else case.hypothesis(focus).name
    fj = names.index(f)
    p = _priors(case, sc)
    steps, ll = _loglik(case)
    total = ll.sum(axis=0)
    _check_defined(log_of(p), total, "tornado")
    given = {_range_key(k): v for k, v in (ranges or {}).items()}
    for key in given:
        if key[0] == "prior":
            case.hypothesis(key[1])
        else:
            ev = case.evidence_item(key[0])
            case.hypothesis(key[1])
            if ev.uncertain is not None:
                raise CaseError(f"ranges names evidence '{ev.name}', an uncertain observation: "
                                "no single entry P(observed | H) moves its step")
            if ev.observed is None:
                raise CaseError(f"ranges names evidence '{ev.name}', which is pending and "
                                "so does not move the posterior")
    unc = current_uncertainty(case)
    by_key = {(e["evidence"], e["hypothesis"]): e for e in unc["likelihoods"]}
    tails = ((1 - lv) / 2, (1 + lv) / 2)
    rows: list[dict[str, Any]] = []
    # priors
    prior_unc = unc.get("prior")
    spans = {h: [float(case.scenario_priors(s)[h]) for s in case.scenario_names] for h in names}
    for j, h in enumerate(names):
        base = float(p[j])
        if ("prior", h) in given:
            lo, hi = _check_range(f"the prior of '{h}'", given[("prior", h)], base)
            origin = "given"
        elif max(spans[h]) > min(spans[h]):
            lo, hi, origin = min(spans[h]), max(spans[h]), "scenarios"
        elif prior_unc is not None:
            al = (np.array([prior_unc["alpha"][x] for x in names])
                  if prior_unc["kind"] == "dirichlet" else prior_unc["concentration"] * p)
            if al[j] > 0:
                lo, hi = (float(v) for v in stats.beta.ppf(tails, al[j], al.sum() - al[j]))
            else:
                lo = hi = 0.0
            lo, hi = min(lo, base), max(hi, base)
            origin = f"prior uncertainty ({lv:.0%} interval)"
        else:
            lo, hi = _odds_range(base)
            origin = "±50% in odds"
        rows.append({"input": f"prior of '{h}'", "kind": "prior", "evidence": "",
                     "hypothesis": h, "state": "", "low": lo, "base": base, "high": hi,
                     "range_from": origin})
    # observed likelihoods
    evidence = case.evidence
    held = _uncertain_steps(case)
    for name in steps:
        if name in held:  # an uncertain observation has no single entry to move
            continue
        ev = evidence[name]
        obs = ev.states.index(ev.observed)
        for j, h in enumerate(names):
            base = float(ev.table[obs, j])
            e = by_key.get((name, h))
            if (name, h) in given:
                lo, hi = _check_range(f"P({ev.observed} | {h}) of '{name}'",
                                      given[(name, h)], base)
                origin = "given"
            elif e is not None and e.get("fit") and e["fit"]["state"] == ev.observed:
                lo, hi, origin = e["fit"]["low"], e["fit"]["high"], "stated range"
            elif e is not None:
                if e["kind"] == "dirichlet":
                    al = np.array([e["alpha"][s] for s in ev.states])
                    a, b = al[obs], al.sum() - al[obs]
                else:
                    a, b = e["concentration"] * base, e["concentration"] * (1 - base)
                if a > 0 and b > 0:
                    lo, hi = (float(v) for v in stats.beta.ppf(tails, a, b))
                else:
                    lo = hi = float(a > 0)
                lo, hi = min(lo, base), max(hi, base)
                origin = f"uncertainty ({lv:.0%} interval)"
            else:
                lo, hi = _odds_range(base)
                origin = "±50% in odds"
            rows.append({"input": f"P({ev.observed} | {h}) of '{name}'", "kind": "likelihood",
                         "evidence": name, "hypothesis": h, "state": ev.observed, "low": lo,
                         "base": base, "high": hi, "range_from": origin})
    # one vectorised pass: two variants (low, high) per input
    n = len(rows)
    k = len(names)
    log_pri = np.broadcast_to(log_of(p), (2 * n, k)).copy()
    tot = np.broadcast_to(total, (2 * n, k)).copy()
    step_index = {s: i for i, s in enumerate(steps)}
    for r, row in enumerate(rows):
        j = names.index(row["hypothesis"])
        for v, end in ((row["low"], 0), (row["high"], 1)):
            idx = 2 * r + end
            if row["kind"] == "prior":
                log_pri[idx] = log_of(_rescaled_priors(p, j, np.array([v]), row["hypothesis"])[0])
            else:
                i = step_index[row["evidence"]]
                tot[idx, j] = total[j] - ll[i, j] + log_of(v) if np.isfinite(ll[i, j]) else (
                    np.delete(ll[:, j], i).sum() + log_of(v))
    with np.errstate(invalid="ignore"):
        post = posterior_from_logs(log_pri, tot)[:, fj]
    frame = pd.DataFrame(rows, columns=["input", "kind", "evidence", "hypothesis", "state", "low",
                                        "base", "high", "range_from"])
    frame["focus_at_low"] = post[0::2]
    frame["focus_at_high"] = post[1::2]
    frame["swing"] = np.abs(frame["focus_at_high"] - frame["focus_at_low"])
    frame = frame.sort_values("swing", ascending=False, kind="stable").reset_index(drop=True)
    frame.attrs.update(focus=f, base_posterior=float(ledger.posterior[f]), scenario=sc,
                       level=lv)
    return frame


__all__ = ["robustness", "Robustness", "sweep_prior", "sweep_likelihood", "break_even_prior",
           "BreakEven", "tornado"]

"""Uncertainty on a case's inputs and Monte Carlo propagation to the posterior.

The inputs' uncertainty lives on the case as the JSON section
``case.extras["uncertainty"]`` (validated by :func:`validate_uncertainty` on
every edit and on load). Analysts set it through the helpers
:func:`set_prior_uncertainty`, :func:`set_likelihood_uncertainty` and
:func:`clear_uncertainty`, never by hand. The section's layout::

    {"prior": {"kind": "dirichlet", "alpha": {hypothesis: a, ...},
               "method": "...", "source": {...}}
           or {"kind": "concentration", "concentration": k, "method": ..., "source": ...},
     "likelihoods": [
        {"evidence": "E", "hypothesis": "H", "kind": "dirichlet",
         "alpha": {state: a, ...}, "tie": null, "method": "...", "source": {...}},
        {"evidence": "E", "hypothesis": "H", "kind": "concentration",
         "concentration": k, "fit": {"state": s, "low": l, "best": b, "high": h,
         "level": 0.9, "fitted_low": ..., "fitted_high": ...},
         "tie": null, "method": "...", "source": {...}}]}

``dirichlet`` gives the distribution's parameters outright (from counts plus
pseudo-counts); ``concentration`` centres a Dirichlet on the case's current
numbers (the active scenario's priors, or the item's likelihood column) with
total weight ``k``, so the Monte Carlo always varies the numbers the engine
uses. A low / best / high range is turned into a concentration by fitting
(see :func:`fit_concentration`); the fit is recorded. Entries of one item
that share a ``tie`` name share one draw (e.g. a test's false-alarm rate,
the same under every non-target hypothesis). Exact zeros stay exact: a zero
prior or likelihood is zero in every draw.

The section's schema is checked by
:func:`beliefledger.case.extras.validate_uncertainty`; the Monte Carlo that
propagates it to the posterior is :func:`beliefledger.montecarlo.simulate`.

References
----------
Gelman, A. et al. (2013). *Bayesian Data Analysis*, 3rd ed., section 3.4 and
appendix A (Dirichlet marginals are Beta; a Dirichlet draw is a normalized
vector of independent Gamma draws).
"""

from __future__ import annotations

import copy
import math
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from ._checks import check_count, check_level, check_positive
from .case import Source
from .case.extras import UNCERTAINTY, validate_uncertainty
from .errors import CaseError, CaseTypeError
from .estimates import BetaEstimate, DirichletEstimate

if TYPE_CHECKING:
    from .case import Case

SECTION = UNCERTAINTY


# --------------------------------------------------------------------------- fitting


def fit_concentration(best: float, low: float, high: float, level: float = 0.9
                      ) -> tuple[float, float, float]:
    """Concentration ``k`` of ``Beta(best * k, (1 - best) * k)`` whose equal-tailed
    ``level`` interval comes closest to ``(low, high)``.

    The mean is held at ``best`` (the number the case uses); ``k`` minimises
    the squared distance between the fitted and the stated interval ends on
    the log-odds scale. An asymmetric range cannot be matched exactly with a
    fixed mean; the fitted ends are returned so the record shows the fit.

    Returns
    -------
    k, fitted_low, fitted_high : float
    """
    from scipy import optimize, special

    level = check_level(level)
    for nm, v in (("low", low), ("best", best), ("high", high)):
        if isinstance(v, bool) or not isinstance(v, int | float | np.floating | np.integer):
            raise CaseTypeError(f"range {nm} must be a number in (0, 1), got {v!r:.40}")
        if not (0 < float(v) < 1):
            raise CaseError(f"range {nm} is {float(v):g}; a range's low, best and high must lie "
                            "strictly between 0 and 1 (an exact 0 or 1 has no uncertainty)")
    low, best, high = float(low), float(best), float(high)
    if not (low < best < high):
        raise CaseError(f"range low {low:g} / best {best:g} / high {high:g} is not in order; "
                        "give low < best < high")
    q = np.array([(1 - level) / 2, (1 + level) / 2])
    target = np.log([low / (1 - low), high / (1 - high)])

    def loss(logk: float) -> float:
        k = math.exp(logk)
        f = special.betaincinv(best * k, (1 - best) * k, q)  # Beta quantiles
        f = np.clip(f, 1e-300, 1 - 1e-16)
        return float(np.sum((np.log(f / (1 - f)) - target) ** 2))

    res = optimize.minimize_scalar(loss, bounds=(math.log(1e-2), math.log(1e8)),
                                   method="bounded", options={"xatol": 1e-8})
    k = float(math.exp(res.x))
    fl, fh = special.betaincinv(best * k, (1 - best) * k, q)
    return k, float(fl), float(fh)



# --------------------------------------------------------------------------- helpers


def _section(case: Case) -> dict[str, Any]:
    sec = case.extras.get(SECTION)
    return copy.deepcopy(sec) if sec else {"likelihoods": []}


def _store(case: Case, sec: dict[str, Any], *, strict: bool = True) -> None:
    empty = not sec.get("likelihoods") and sec.get("prior") is None
    if not empty and strict:
        validate_uncertainty(sec, case, strict=True)
    case.set_extra(SECTION, None if empty else sec)


def _one_of(what: str, **given: Any) -> str:
    named = [k for k, v in given.items() if v is not None]
    if len(named) != 1:
        raise CaseError(f"{what}: give exactly one of {', '.join(given)} (got "
                        f"{named or 'none'})")
    return named[0]


def set_prior_uncertainty(case: Case, estimate: DirichletEstimate | None = None, *,
                          concentration: float | None = None,
                          alpha: Mapping[str, float] | None = None, method: str | None = None,
                          source: Any = None) -> None:
    """Put a Dirichlet distribution on the case's priors.

    Give exactly one of

    - ``estimate``: a :func:`~beliefledger.prior_from_counts` estimate (its
      alpha, method and source are recorded);
    - ``concentration``: a Dirichlet centred on the priors in use (the
      active scenario's, or the one simulated) with total weight ``k``
      (about the number of past cases the priors are worth);
    - ``alpha``: the parameters outright, one per hypothesis.

    The case is unchanged when the input is refused.
    """
    which = _one_of("prior uncertainty", estimate=estimate, concentration=concentration,
                    alpha=alpha)
    if which == "estimate":
        if not isinstance(estimate, DirichletEstimate):
            raise CaseTypeError("estimate must be a DirichletEstimate from bl.prior_from_counts, "
                                f"got {type(estimate).__name__}")
        entry = {"kind": "dirichlet", "alpha": {str(k): float(v) for k, v in
                                                 estimate.alpha.items()},
                 "method": method or estimate.source.why,
                 "source": (estimate.source if source is None else
                            Source.coerce(source)).to_dict()}
    elif which == "concentration":
        k = check_positive("prior concentration", concentration)
        entry = {"kind": "concentration", "concentration": k,
                 "method": method or f"Dirichlet centred on the priors in use, concentration "
                                     f"{k:.6g} (stated)",
                 "source": Source.coerce(source).to_dict()}
    else:
        if isinstance(alpha, pd.Series):
            alpha = alpha.to_dict()
        if not isinstance(alpha, Mapping):
            raise CaseTypeError(f"alpha must map each hypothesis to its parameter, got "
                                f"{type(alpha).__name__}")
        entry = {"kind": "dirichlet", "alpha": dict(alpha),
                 "method": method or "Dirichlet parameters stated outright",
                 "source": Source.coerce(source).to_dict()}
    sec = _section(case)
    sec["prior"] = entry
    _store(case, sec)


def set_likelihood_uncertainty(case: Case, evidence: str | list[str],
                               hypothesis: str | list[str], *,
                               low: float | None = None, high: float | None = None,
                               best: float | None = None, state: str | None = None,
                               level: float = 0.9, concentration: float | None = None,
                               counts: Mapping[str, int] | None = None, pseudo: float = 0.5,
                               alpha: Mapping[str, float] | None = None,
                               estimate: BetaEstimate | None = None, tie: str | None = None,
                               method: str | None = None, source: Any = None) -> None:
    """Put a Beta/Dirichlet distribution on one likelihood column P(state | hypothesis).

    Give exactly one of

    - ``low`` and ``high`` (a range for P(``state`` | ``hypothesis``); ``state``
      defaults to the observed state, ``best`` to the case's entry and must
      equal it): fitted to a Dirichlet centred on the column by
      :func:`fit_concentration`, the ``level`` interval matching the range;
    - ``concentration``: a Dirichlet centred on the column with weight ``k``;
    - ``counts``: observed counts per state (whole numbers), plus ``pseudo``
      per state (0.5, the Jeffreys prior, by default);
    - ``alpha``: the Dirichlet parameters outright, one per state;
    - ``estimate``: a :class:`~beliefledger.elicit.BetaEstimate` for a
      two-state item (its ``a`` goes to ``state`` or the first state).

    ``evidence`` and ``hypothesis`` may also be lists: the same specification
    is then applied to every pair (a range is fitted to each column's own
    entry) in one edit, much faster than one call per column on a large case.
    Entries of one item with the same ``tie`` name share one draw. The case
    is unchanged when the input is refused.
    """
    evs = [evidence] if isinstance(evidence, str) else list(evidence)
    hs = [hypothesis] if isinstance(hypothesis, str) else list(hypothesis)
    if not evs or not hs:
        raise CaseError("give at least one evidence item and one hypothesis")
    spec = dict(low=low, high=high, best=best, state=state, level=level,
                concentration=concentration, counts=counts, pseudo=pseudo, alpha=alpha,
                estimate=estimate, tie=tie, method=method, source=source)
    new = {}
    for e in evs:
        for hh in hs:
            ent = _likelihood_entry(case, e, hh, **spec)
            new[(ent["evidence"], ent["hypothesis"])] = ent
    sec = _section(case)
    sec["likelihoods"] = [e for e in sec.get("likelihoods", [])
                          if (e["evidence"], e["hypothesis"]) not in new] + list(new.values())
    _store(case, sec)


def _likelihood_entry(case: Case, evidence: Any, hypothesis: Any, *, low, high, best, state,
                      level, concentration, counts, pseudo, alpha, estimate, tie, method,
                      source) -> dict[str, Any]:
    ev = case.evidence_item(evidence)
    h = case.hypothesis(hypothesis)
    j = ev.hypotheses.index(h.name)
    ranged = low is not None or high is not None
    which = _one_of(f"uncertainty of evidence '{ev.name}' under '{h.name}'",
                    range=True if ranged else None, concentration=concentration,
                    counts=counts, alpha=alpha, estimate=estimate)
    src = Source.coerce(source).to_dict()
    entry: dict[str, Any] = {"evidence": ev.name, "hypothesis": h.name, "tie": tie}
    if which == "range":
        if low is None or high is None:
            raise CaseError(f"range for evidence '{ev.name}' under '{h.name}' needs both low and "
                            f"high (got low={low}, high={high})")
        st = state if state is not None else (ev.observed or ev.states[0])
        i = ev.state_index(st)
        entry_value = float(ev.table[i, j])
        if best is not None and abs(float(best) - entry_value) > 1e-9:
            raise CaseError(f"best {float(best):g} differs from the case's P({st} | {h.name}) = "
                            f"{entry_value:g} for evidence '{ev.name}'; set the likelihood first "
                            "(case.set_likelihood) or omit best")
        k, fl, fh = fit_concentration(entry_value, low, high, level)
        lv = check_level(level)
        entry.update(kind="concentration", concentration=k,
                     fit={"state": st, "low": float(low), "best": entry_value,
                          "high": float(high), "level": lv, "fitted_low": fl, "fitted_high": fh})
        entry["method"] = method or (
            f"range {float(low):g} / {entry_value:g} / {float(high):g} for P({st} | {h.name}) "
            f"read as a {lv:.0%} interval; Dirichlet centred on the column, concentration "
            f"{k:.4g} fitted by least squares on the log-odds scale (fitted interval "
            f"{fl:.4g} to {fh:.4g})")
    elif which == "concentration":
        k = check_positive("concentration", concentration)
        entry.update(kind="concentration", concentration=k,
                     method=method or f"Dirichlet centred on the column, concentration {k:.6g} "
                                      "(stated)")
    elif which == "counts":
        if isinstance(counts, pd.Series):
            counts = counts.to_dict()
        if not isinstance(counts, Mapping):
            raise CaseTypeError("counts must map each state to a whole number, got "
                                f"{type(counts).__name__}")
        c = {s: check_count(f"count of state '{s}' for evidence '{ev.name}' under '{h.name}'", v)
             for s, v in counts.items()}
        ps = check_positive("pseudo-count", pseudo, allow_zero=True)
        listed = ", ".join(f"{s}: {n}" for s, n in c.items())
        entry.update(kind="dirichlet", alpha={s: n + ps for s, n in c.items()},
                     method=method or f"Dirichlet from counts {{{listed}}} plus pseudo-count "
                                      f"{ps:g} per state")
    elif which == "alpha":
        if isinstance(alpha, pd.Series):
            alpha = alpha.to_dict()
        if not isinstance(alpha, Mapping):
            raise CaseTypeError("alpha must map each state to its parameter, got "
                                f"{type(alpha).__name__}")
        entry.update(kind="dirichlet", alpha=dict(alpha),
                     method=method or "Dirichlet parameters stated outright")
    else:
        if not isinstance(estimate, BetaEstimate):
            raise CaseTypeError("estimate must be a BetaEstimate, got "
                                f"{type(estimate).__name__}")
        if len(ev.states) != 2:
            raise CaseError(f"a Beta estimate fits a two-state item; evidence '{ev.name}' has "
                            f"states {list(ev.states)}: give counts or alpha per state")
        st = state if state is not None else ev.states[0]
        i = ev.state_index(st)
        other = ev.states[1 - i]
        entry.update(kind="dirichlet", alpha={st: estimate.a, other: estimate.b},
                     method=method or estimate.source.why)
        if source is None:
            src = estimate.source.to_dict()
    entry["source"] = src
    return entry


def clear_uncertainty(case: Case, *, prior: bool | None = None, evidence: str | None = None,
                      hypothesis: str | None = None) -> None:
    """Remove uncertainty: with no arguments, all of it; ``prior=True`` the priors';
    ``evidence=`` (and optionally ``hypothesis=``) that item's entries. Names of
    items the case no longer has are accepted, so stale entries can be removed;
    nothing else is dropped."""
    if prior is None and evidence is None and hypothesis is None:
        if SECTION in case.extras:
            case.set_extra(SECTION, None)
        return
    if hypothesis is not None and evidence is None:
        raise CaseError("clear_uncertainty(hypothesis=...) also needs evidence=...; to drop "
                        "every entry of a hypothesis, clear each item or everything")
    sec = _section(case)
    if prior:
        sec.pop("prior", None)
    if evidence is not None:
        sec["likelihoods"] = [e for e in sec.get("likelihoods", [])
                              if not (e["evidence"] == evidence and
                                      (hypothesis is None or e["hypothesis"] == hypothesis))]
    _store(case, sec, strict=False)  # other stale entries stay, reported when used


def current_uncertainty(case: Case) -> dict[str, Any]:
    """The case's uncertainty section, re-validated against the case as it is now.

    Raises a CaseError naming a stale entry (an item or hypothesis removed or
    renamed after the entry was set) and how to remove it.
    """
    sec = case.extras.get(SECTION)
    if not sec:
        return {"likelihoods": []}
    return validate_uncertainty(sec, case, strict=True)


def _params_text(kind: str, e: Mapping[str, Any]) -> str:
    if kind == "dirichlet":
        return "alpha " + ", ".join(f"{k}: {v:.6g}" for k, v in e["alpha"].items())
    return f"concentration {e['concentration']:.6g}"


def uncertainty_register(case: Case) -> pd.DataFrame:
    """Every uncertain input with its distribution, method and source (for the
    assumption register): columns ``input``, ``evidence``, ``hypothesis``,
    ``kind``, ``parameters``, ``range``, ``tie``, ``method``, ``source``."""
    cols = ["input", "evidence", "hypothesis", "kind", "parameters", "range", "tie", "method",
            "source"]
    sec = current_uncertainty(case)
    rows = []
    p = sec.get("prior")
    if p is not None:
        rows.append({"input": "priors", "evidence": "", "hypothesis": "", "kind": p["kind"],
                     "parameters": _params_text(p["kind"], p), "range": "", "tie": "",
                     "method": p["method"], "source": str(Source(**p["source"]))})
    for e in sec["likelihoods"]:
        fit = e.get("fit")
        rng = (f"{fit['low']:.4g} / {fit['best']:.4g} / {fit['high']:.4g} for '{fit['state']}' "
               f"({fit['level']:.0%})" if fit else "")
        rows.append({"input": f"likelihood of '{e['evidence']}' under '{e['hypothesis']}'",
                     "evidence": e["evidence"], "hypothesis": e["hypothesis"],
                     "kind": e["kind"], "parameters": _params_text(e["kind"], e), "range": rng,
                     "tie": e["tie"] or "", "method": e["method"],
                     "source": str(Source(**e["source"]))})
    return pd.DataFrame(rows, columns=cols)


__all__ = [
    "set_prior_uncertainty", "set_likelihood_uncertainty", "clear_uncertainty",
    "current_uncertainty", "uncertainty_register", "fit_concentration", "SECTION",
]

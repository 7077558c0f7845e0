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

:func:`simulate` draws only what moves the posterior: the priors (a
Dirichlet, as normalized Gamma draws) and, for each hypothesis, the total
log-likelihood of the observed states. By default the independent uncertain
entries of one hypothesis are drawn together from the exact distribution of
their sum (:class:`LogBetaSum`), so the cost per draw does not grow with the
number of evidence items; ``method="direct"`` draws every entry instead.

References
----------
Gelman, A. et al. (2013). *Bayesian Data Analysis*, 3rd ed., section 3.4 and
appendix A (Dirichlet marginals are Beta; a Dirichlet draw is a normalized
vector of independent Gamma draws).
"""

from __future__ import annotations

import copy
import math
import os
import time
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from ._logmath import log_of
from .case import Source, _check_text
from .elicit import (
    BetaEstimate,
    DirichletEstimate,
    _draws,
    check_count,
    check_level,
    check_positive,
)
from .errors import CaseError, CaseTypeError

if TYPE_CHECKING:
    from .case import Case

SECTION = "uncertainty"
METHODS = ("auto", "direct")
KINDS = ("dirichlet", "concentration")
DEFAULT_CHUNK = 16_384
"""Draws per chunk: fixed, so a seed reproduces the same draws on every machine."""
MAX_SAMPLE_CELLS = 200_000_000
PROGRESS_AFTER = 1.0
"""Seconds: an automatic progress bar appears when a run is expected to take longer."""

_ENTRY_KEYS = {"evidence", "hypothesis", "kind", "alpha", "concentration", "fit", "tie",
               "method", "source"}
_PRIOR_KEYS = {"kind", "alpha", "concentration", "method", "source"}
_FIT_KEYS = {"state", "low", "best", "high", "level", "fitted_low", "fitted_high"}


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


# --------------------------------------------------------------------------- validation


def _num(what: str, value: Any, *, allow_zero: bool = False) -> float:
    try:
        return check_positive(what, value, allow_zero=allow_zero)
    except CaseTypeError as exc:
        raise CaseError(str(exc)) from None


def _text(what: str, value: Any) -> str:
    try:
        return _check_text(what, value)
    except CaseTypeError as exc:
        raise CaseError(str(exc)) from None


def _source_dict(value: Any, what: str) -> dict[str, str]:
    try:
        return Source.coerce(value, what=what).to_dict()
    except CaseTypeError as exc:
        raise CaseError(str(exc)) from None


def _name(what: str, value: Any) -> str:
    if not isinstance(value, str) or not value.strip():
        raise CaseError(f"{what} must be a non-empty name, got {value!r:.60}")
    return value


def _alpha(what: str, alpha: Any, names: list[str] | None, kind: str,
           allow_zero: bool) -> dict[str, float]:
    """Parameters keyed by name; against ``names`` (in their order) when given."""
    if not isinstance(alpha, Mapping) or not alpha:
        raise CaseError(f"{what} of kind 'dirichlet' needs 'alpha': an object {kind} -> "
                        "parameter")
    if names is not None:
        missing = [n for n in names if n not in alpha]
        unknown = [n for n in alpha if n not in names]
        if missing or unknown:
            plural = "hypotheses" if kind == "hypothesis" else f"{kind}s"
            raise CaseError(f"{what}: alpha is missing {plural} {missing} and names unknown "
                            f"{plural} {unknown}; give one parameter per {kind} (the "
                            f"{plural} are {names[:12]})")
        keys = names
    else:
        keys = [_name(f"{what}: alpha key", k) for k in alpha]
    vals = {k: _num(f"{what}: alpha of '{k}'", alpha[k], allow_zero=allow_zero) for k in keys}
    if sum(vals.values()) <= 0:
        raise CaseError(f"{what}: every alpha is 0; give at least one positive parameter")
    return vals


def _validate_prior(p: Any, case: Case, strict: bool) -> dict[str, Any]:
    what = "uncertainty section 'prior'"
    if not isinstance(p, Mapping):
        raise CaseError(f"{what} must be an object, got {type(p).__name__}")
    extra = set(p) - _PRIOR_KEYS
    if extra:
        raise CaseError(f"{what} has unknown field(s) {sorted(map(str, extra))}; allowed: "
                        f"{sorted(_PRIOR_KEYS)}")
    kind = p.get("kind")
    out: dict[str, Any] = {"kind": kind}
    if kind == "dirichlet":
        names = case.hypothesis_names
        alpha = p.get("alpha")
        matches = isinstance(alpha, Mapping) and set(alpha) == set(names)
        out["alpha"] = _alpha(what, alpha, names if (strict or matches) else None,
                              "hypothesis", allow_zero=False)
    elif kind == "concentration":
        out["concentration"] = _num(f"{what} concentration", p.get("concentration"))
    else:
        raise CaseError(f"{what} has kind {kind!r}; use one of {list(KINDS)}")
    out["method"] = _text(f"{what} method", p.get("method", ""))
    out["source"] = _source_dict(p.get("source"), f"{what} source")
    return out


def _validate_entry(i: int, e: Any, case: Case, strict: bool) -> dict[str, Any]:
    what = f"uncertainty entry #{i + 1}"
    if not isinstance(e, Mapping):
        raise CaseError(f"{what} must be an object, got {type(e).__name__}")
    extra = set(e) - _ENTRY_KEYS
    if extra:
        raise CaseError(f"{what} has unknown field(s) {sorted(map(str, extra))}; allowed: "
                        f"{sorted(_ENTRY_KEYS)}")
    ev_name = _name(f"{what} 'evidence'", e.get("evidence"))
    h = _name(f"{what} 'hypothesis'", e.get("hypothesis"))
    ev = case.evidence.get(ev_name)
    if strict and ev is None:
        raise CaseError(f"{what} names evidence {ev_name!r:.60}, which the case does not have "
                        f"(its items are {case.evidence_names[:12]}); remove the entry with "
                        f"bl.clear_uncertainty(case, evidence={ev_name!r:.60})")
    if strict and h not in case.hypotheses:
        raise CaseError(f"{what} names hypothesis {h!r:.60}, which the case does not have; "
                        f"remove the entry with bl.clear_uncertainty(case, evidence="
                        f"{ev_name!r:.60}, hypothesis={h!r:.60})")
    known = ev is not None and h in case.hypotheses
    what = f"uncertainty of evidence '{ev_name}' under '{h}'"
    kind = e.get("kind")
    out: dict[str, Any] = {"evidence": ev_name, "hypothesis": h, "kind": kind}
    if kind == "dirichlet":
        if known and ev.likelihood_evidence:
            raise CaseError(f"{what}: evidence '{ev_name}' is likelihood evidence (the observed state only), "
                            "so it has no column to put a Dirichlet on; give a range or a "
                            "concentration instead")
        alpha = e.get("alpha")
        matches = known and isinstance(alpha, Mapping) and set(alpha) == set(ev.states)
        out["alpha"] = _alpha(what, alpha, list(ev.states) if (strict or matches) else None,
                              "state", allow_zero=True)
    elif kind == "concentration":
        out["concentration"] = _num(f"{what}: concentration", e.get("concentration"))
        fit = e.get("fit")
        if fit is not None:
            if not isinstance(fit, Mapping) or set(fit) - _FIT_KEYS:
                raise CaseError(f"{what}: 'fit' must be an object with fields "
                                f"{sorted(_FIT_KEYS)}")
            f = {}
            for k in _FIT_KEYS - {"state"}:
                if k in fit:
                    f[k] = _num(f"{what}: fit {k}", fit[k], allow_zero=True)
            f["state"] = _name(f"{what}: fit state", fit.get("state"))
            if (strict or known) and f["state"] not in ev.states:
                raise CaseError(f"{what}: fit state {f['state']!r:.40} is not among the "
                                f"states {list(ev.states)}")
            out["fit"] = {k: f[k] for k in sorted(f)}
    else:
        raise CaseError(f"{what} has kind {kind!r}; use one of {list(KINDS)}")
    tie = e.get("tie")
    if tie is not None and (not isinstance(tie, str) or not tie.strip()):
        raise CaseError(f"{what}: tie must be a non-empty name or null, got {tie!r:.40}")
    out["tie"] = tie
    out["method"] = _text(f"{what}: method", e.get("method", ""))
    out["source"] = _source_dict(e.get("source"), f"{what}: source")
    return out


def validate_uncertainty(value: Any, case: Case, *, strict: bool = False) -> dict[str, Any]:
    """Validate and normalize the ``uncertainty`` section of ``case.extras``.

    Runs on ``case.set_extra("uncertainty", ...)`` and when a case file is
    loaded; raises :class:`~beliefledger.errors.CaseError` naming the field.
    Structure, kinds and numbers are always checked. Entries that name an
    item, hypothesis or state the case no longer has (it was removed or
    renamed after the entry was set) are kept, so a saved file still loads;
    with ``strict=True`` (used by the helpers and before every analysis)
    they are refused with the call that removes them, and tied entries must
    agree.
    """
    if not isinstance(value, Mapping):
        raise CaseError(f"uncertainty section must be an object, got {type(value).__name__}")
    extra = set(value) - {"prior", "likelihoods"}
    if extra:
        raise CaseError(f"uncertainty section has unknown field(s) {sorted(map(str, extra))}; "
                        "allowed: ['likelihoods', 'prior']")
    out: dict[str, Any] = {}
    if value.get("prior") is not None:
        out["prior"] = _validate_prior(value["prior"], case, strict)
    entries = value.get("likelihoods", [])
    if not isinstance(entries, list):
        raise CaseError("uncertainty section 'likelihoods' must be a list of entries")
    seen: dict[tuple[str, str], int] = {}
    checked = []
    for i, e in enumerate(entries):
        ent = _validate_entry(i, e, case, strict)
        key = (ent["evidence"], ent["hypothesis"])
        if key in seen:
            raise CaseError(f"uncertainty of evidence '{key[0]}' under '{key[1]}' is given twice "
                            f"(entries #{seen[key] + 1} and #{i + 1}); keep one")
        seen[key] = i
        checked.append(ent)
    if strict:
        _check_ties(checked, case)
    out["likelihoods"] = checked
    return out


def _check_ties(entries: list[dict[str, Any]], case: Case) -> None:
    groups: dict[tuple[str, str], list[dict[str, Any]]] = {}
    for e in entries:
        if e["tie"] is not None:
            groups.setdefault((e["evidence"], e["tie"]), []).append(e)
    for (ev_name, tie), members in groups.items():
        first = members[0]
        ev = case.evidence[ev_name]
        for m in members[1:]:
            same = (m["kind"] == first["kind"] and m.get("alpha") == first.get("alpha")
                    and m.get("concentration") == first.get("concentration"))
            if first["kind"] == "concentration" and same:
                j0 = ev.hypotheses.index(first["hypothesis"])
                j1 = ev.hypotheses.index(m["hypothesis"])
                same = bool(np.allclose(ev.table[:, j0], ev.table[:, j1], rtol=0, atol=1e-12))
            if not same:
                raise CaseError(f"uncertainty entries of evidence '{ev_name}' tied as '{tie}' "
                                f"('{first['hypothesis']}' and '{m['hypothesis']}') differ; tied "
                                "entries share one draw, so they need the same distribution "
                                "(and, for a concentration, the same likelihood column)")


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
    ev = case._get_ev(evidence)
    h = case._get_hyp(hypothesis)
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
        i = ev._state_index(st)
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
        i = ev._state_index(st)
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


# --------------------------------------------------------------------------- Monte Carlo


class LogBetaSum:
    """The exact distribution of ``S = sum_e log B_e`` for independent
    ``B_e ~ Beta(a_e, b_e)``, tabulated for inverse-CDF sampling.

    The characteristic function of ``log B`` is known in closed form,
    ``E[exp(i t log B)] = B(a + i t, b) / B(a, b)``, so that of the sum is
    the product over the terms. Its Fourier series on a window holding all
    but ``TAIL`` of the mass (found with Chernoff bounds from the cumulant
    generating function) is integrated term by term into the CDF, evaluated
    on a fine grid by one FFT. Checks: the tabulated CDF must be monotone and
    reproduce the exact mean and variance (digamma / trigamma sums); when a
    check fails, :attr:`ok` is false and the caller draws the terms directly.

    References
    ----------
    Abate, J. & Whitt, W. (1992). The Fourier-series method for inverting
    transforms of probability distributions. *Queueing Systems* 10, 5-87.
    Johnson, N. L., Kotz, S. & Balakrishnan, N. (1995). *Continuous Univariate
    Distributions*, vol. 2, 2nd ed., chapter 25 (moments of the Beta
    distribution, E[B^s] = B(a + s, b) / B(a, b)).
    """

    TAIL = 1e-14
    MAX_HARMONICS = 8192
    POINTS_PER_SD = 512
    MAX_GRID = 1 << 20

    def __init__(self, a: np.ndarray, b: np.ndarray) -> None:
        from scipy import special

        a = np.asarray(a, dtype=float)
        b = np.asarray(b, dtype=float)
        ab = a + b
        self.mean = float(np.sum(special.digamma(a) - special.digamma(ab)))
        self.var = float(np.sum(special.polygamma(1, a) - special.polygamma(1, ab)))
        sd = math.sqrt(max(self.var, 0.0))
        self.ok = False
        self.reason = ""
        if not sd > 0:
            self.reason = "no spread"
            return
        const = special.gammaln(ab) - special.gammaln(a)

        def cgf(sv: np.ndarray) -> np.ndarray:  # log E[exp(s S)], s > -min(a)
            sv = np.asarray(sv, dtype=float)[:, None]
            return np.sum(special.gammaln(a + sv) - special.gammaln(ab + sv) + const, axis=1)

        log_eps = math.log(self.TAIL)
        s_lo = float(a.min()) * np.array([0.01, 0.03, 0.1, 0.2, 0.35, 0.5, 0.65, 0.8, 0.9,
                                          0.97, 0.995])
        lo = float(np.max((log_eps - cgf(-s_lo)) / s_lo))
        s_hi = np.geomspace(1e-3, 1e4, 80) / sd
        hi = min(0.0, float(np.min((cgf(s_hi) - log_eps) / s_hi)))
        period = hi - lo
        if not (np.isfinite(period) and period > 0):
            self.reason = "no window"
            return

        def log_cf(t: np.ndarray) -> np.ndarray:
            z = 1j * np.asarray(t, dtype=float)[:, None]
            return np.sum(special.loggamma(a + z) - special.loggamma(ab + z) + const, axis=1)

        m = 32
        while m < self.MAX_HARMONICS and np.real(log_cf(np.array([2 * math.pi * m / period]))[0]
                                                  ) > math.log(1e-13):
            m *= 2
        if np.real(log_cf(np.array([2 * math.pi * m / period]))[0]) > math.log(1e-13):
            self.reason = "slowly decaying characteristic function"
            return
        k = np.arange(1, m + 1)
        t = 2 * math.pi * k / period
        w = np.exp(log_cf(t) - 1j * t * lo) / (-1j * t)
        # at least POINTS_PER_SD grid points per standard deviation (linear
        # interpolation between them is then good to about 1e-7 in probability)
        g = 1 << max(12, math.ceil(math.log2(max(4 * m, self.POINTS_PER_SD * period / sd))))
        if g > self.MAX_GRID:
            self.reason = "grid too fine"
            return
        padded = np.zeros(g, dtype=complex)
        padded[1:m + 1] = w
        series = np.fft.fft(padded)[: g]
        cdf = np.arange(g) / g + (2 / period) * np.real(series - w.sum())
        cdf = np.append(cdf, 1.0)
        x = lo + period * np.arange(g + 1) / g
        if np.min(np.diff(cdf)) < -1e-9 or cdf.min() < -1e-9 or cdf.max() > 1 + 1e-9:
            self.reason = "tabulated CDF not monotone"
            return
        cdf = np.maximum.accumulate(np.clip(cdf, 0.0, 1.0))
        dp = np.diff(cdf)
        mid = (x[:-1] + x[1:]) / 2
        mean = float(np.sum(mid * dp))
        var = float(np.sum((mid - mean) ** 2 * dp)) - (period / g) ** 2 / 12
        if abs(mean - self.mean) > 1e-4 * sd or abs(var / self.var - 1) > 1e-3:
            self.reason = "tabulated moments off"
            return
        self.x, self.cdf = x, cdf
        self.harmonics = m
        # quantile table on a uniform grid of probabilities, for O(1) look-ups in the body
        self._q = np.interp(np.linspace(0.0, 1.0, self.QUANTILES + 1), cdf, x)
        self._dq = np.diff(self._q)
        self.ok = True

    QUANTILES = 65_536
    BODY = 1e-3
    """Draws with u below BODY or above 1 - BODY are inverted on the full grid."""

    def draw(self, u: np.ndarray) -> np.ndarray:
        """Values of S at the uniform draws ``u`` (inverse CDF, linear between grid points)."""
        pos = u * self.QUANTILES
        i = pos.astype(np.intp)
        np.minimum(i, self.QUANTILES - 1, out=i)
        out = self._q[i] + (pos - i) * self._dq[i]
        tails = (u < self.BODY) | (u > 1 - self.BODY)
        if tails.any():
            out[tails] = np.interp(u[tails], self.cdf, self.x)
        return out


class _Plan:
    """What one simulation draws: the prior's Dirichlet parameters (or fixed log
    priors) and, per observed item, Beta marginals of the observed entries."""

    def __init__(self, case: Case, scenario: str, method: str = "sum") -> None:
        sec = current_uncertainty(case)
        self.hypotheses = case.hypothesis_names
        k = len(self.hypotheses)
        pri = case.scenario_priors(scenario).to_numpy(dtype=float)
        total = pri.sum()
        if total <= 0:
            raise CaseError(f"all priors of scenario '{scenario}' are zero; nothing to simulate")
        pri = pri / total
        self.log_prior = log_of(pri)
        self.prior_alpha: np.ndarray | None = None
        self.inputs: list[str] = []
        self.notes: list[str] = []
        p = sec.get("prior")
        if p is not None:
            if p["kind"] == "dirichlet":
                self.prior_alpha = np.array([p["alpha"][h] for h in self.hypotheses])
            else:
                self.prior_alpha = p["concentration"] * pri
            self.inputs.append("priors")
            a0 = self.prior_alpha.sum()
            for j, h in enumerate(self.hypotheses):
                mean = self.prior_alpha[j] / a0
                sd = math.sqrt(mean * (1 - mean) / (a0 + 1))
                if abs(mean - pri[j]) > max(sd, 1e-12):
                    self.notes.append(
                        f"the prior distribution of '{h}' has mean {mean:.4g} but scenario "
                        f"'{scenario}' uses {pri[j]:.4g} (more than one standard deviation, "
                        f"{sd:.2g}, apart); the draws are centred on the distribution")
        by_key = {(e["evidence"], e["hypothesis"]): e for e in sec["likelihoods"]}
        const = np.zeros(k)
        # cells: (a, b, column indices) of the Beta marginal of the observed entry
        cells: list[tuple[float, float, list[int]]] = []
        evidence = case.evidence
        for name, _members, lik in case.observed_steps():
            ev = evidence[name]
            obs = ev.states.index(ev.observed)
            groups: dict[str, tuple[float, float, list[int]]] = {}
            for j, h in enumerate(self.hypotheses):
                e = by_key.get((name, h))
                if e is None:
                    const[j] += log_of(lik[j])
                    continue
                if e["kind"] == "dirichlet":
                    al = np.array([e["alpha"][s] for s in ev.states])
                    a, b = float(al[obs]), float(al.sum() - al[obs])
                    mean = a / (a + b)
                    sd = math.sqrt(a * b / ((a + b) ** 2 * (a + b + 1)))
                    if abs(mean - lik[j]) > sd:
                        self.notes.append(
                            f"the distribution of P({ev.observed} | {h}) for '{name}' has mean "
                            f"{mean:.4g} but the case uses {lik[j]:.4g} (more than one standard "
                            f"deviation, {sd:.2g}, apart); the draws are centred on the "
                            "distribution, the base posterior on the case's value")
                else:
                    m = float(ev.table[obs, j])
                    a, b = e["concentration"] * m, e["concentration"] * (1 - m)
                self.inputs.append(f"likelihood of '{name}' under '{h}'")
                if a == 0 or b == 0:  # a degenerate Beta: an exact 0 or 1 in every draw
                    const[j] += -np.inf if a == 0 else 0.0
                    continue
                if e["tie"] is not None:
                    if e["tie"] in groups:
                        groups[e["tie"]][2].append(j)
                    else:
                        groups[e["tie"]] = (a, b, [j])
                        cells.append(groups[e["tie"]])
                else:
                    cells.append((a, b, [j]))
        self.const = const
        self.cells = cells
        self.method = method
        self.sums: dict[int, LogBetaSum] = {}
        self.methods = {h: "fixed" for h in self.hypotheses}
        if method == "sum":
            by_col: dict[int, list[int]] = {}
            for i, (_a, _b, cols) in enumerate(cells):
                if len(cols) == 1:
                    by_col.setdefault(cols[0], []).append(i)
            moved: set[int] = set()
            for j, idx in by_col.items():
                sampler = LogBetaSum(np.array([cells[i][0] for i in idx]),
                                     np.array([cells[i][1] for i in idx]))
                if sampler.ok:
                    self.sums[j] = sampler
                    moved.update(idx)
            self.cells = [c for i, c in enumerate(cells) if i not in moved]
        for _a, _b, cols in self.cells:
            for j in cols:
                self.methods[self.hypotheses[j]] = "direct"
        for j in self.sums:
            self.methods[self.hypotheses[j]] = ("sum+direct"
                                                if self.methods[self.hypotheses[j]] == "direct"
                                                else "sum")

    @property
    def uncertain(self) -> bool:
        return self.prior_alpha is not None or bool(self.cells) or bool(self.sums)

    def run_chunk(self, n: int, seed: np.random.SeedSequence) -> np.ndarray:
        """Posterior probabilities of ``n`` draws (hypotheses x draws)."""
        rng = np.random.default_rng(seed)
        k = len(self.hypotheses)
        # hypotheses x draws, so each hypothesis' running sum is contiguous
        s = np.repeat(self.const[:, None], n, axis=1)
        g1, g2 = np.empty(n), np.empty(n)
        if self.sums:
            u = rng.random((len(self.sums), n))
            for r, (j, sampler) in enumerate(self.sums.items()):
                s[j] += sampler.draw(u[r])
        for a, b, cols in self.cells:
            rng.standard_gamma(a, out=g1)
            rng.standard_gamma(b, out=g2)
            np.add(g1, g2, out=g2)
            np.divide(g1, g2, out=g2)  # a Beta(a, b) draw of P(observed | H)
            with np.errstate(divide="ignore"):
                np.log(g2, out=g2)
            for j in cols:
                s[j] += g2
        if self.prior_alpha is None:
            s += self.log_prior[:, None]
        else:
            # a Dirichlet draw is g / sum(g); the sum cancels in the posterior
            g = np.zeros((k, n))
            for j, a in enumerate(self.prior_alpha):
                if a > 0:
                    rng.standard_gamma(a, out=g[j])
            with np.errstate(divide="ignore"):
                s += np.log(g)
        # normalize over hypotheses (axis 0) with one exp; a draw in which every
        # hypothesis is impossible (all -inf) gives NaN, as normalize_log does
        top = s.max(axis=0)
        s -= np.where(np.isfinite(top), top, 0.0)
        np.exp(s, out=s)
        with np.errstate(invalid="ignore"):
            s /= s.sum(axis=0)
        return s


def _argmax_rows(x: np.ndarray) -> np.ndarray:
    """``np.argmax(x, axis=1)`` (first maximum wins) in one pass per column,
    fast for the column-major sample arrays."""
    best = x[:, 0].copy()
    idx = np.zeros(len(x), dtype=np.intp)
    for j in range(1, x.shape[1]):
        col = x[:, j]
        better = col > best
        best[better] = col[better]
        idx[better] = j
    return idx


class SimulationResult:
    """Posterior samples from :func:`simulate` and their summaries.

    Attributes
    ----------
    samples : ndarray
        Posterior probabilities, one row per draw (draws x hypotheses;
        rows of NaN for draws in which the evidence is impossible under every
        hypothesis, counted in ``undefined``).
    base_posterior : Series
        The posterior with the inputs at their stated values.
    base_map : str
        Its MAP hypothesis (the conclusion).
    notes : list of str
        Inputs whose distribution is not centred on the value the case uses
        (e.g. counts that disagree with a typed likelihood).
    """

    def __init__(self, *, title: str, scenario: str, hypotheses: list[str], samples: np.ndarray,
                 base_posterior: pd.Series, base_map: str, seed: int, draws: int, level: float,
                 inputs: list[str], seconds: float,
                 methods: dict[str, str] | None = None,
                 notes: list[str] | None = None) -> None:
        self.title = title
        self.scenario = scenario
        self.hypotheses = hypotheses
        samples.setflags(write=False)
        self.samples = samples
        self.base_posterior = base_posterior
        self.base_map = base_map
        self.seed = seed
        self.draws = draws
        self.level = level
        self.inputs = inputs
        self.seconds = seconds
        self.methods = dict(methods or {})
        self.notes = list(notes or [])
        defined = ~np.isnan(samples[:, 0])
        self.undefined = int(np.sum(~defined))
        ok = samples if self.undefined == 0 else samples[defined]
        self._ok = ok
        self._frame: pd.DataFrame | None = None
        if len(ok):
            winners = _argmax_rows(ok)
            share = np.bincount(winners, minlength=len(hypotheses)) / len(ok)
        else:
            share = np.full(len(hypotheses), np.nan)
        self.map_probability = pd.Series(share, index=hypotheses, name="p_map")

    @property
    def changed_share(self) -> float:
        """Share of (defined) draws whose MAP differs from the base MAP."""
        return float(1 - self.map_probability[self.base_map])

    def interval(self, level: float | None = None) -> pd.DataFrame:
        """Equal-tailed interval of each hypothesis' posterior over the draws."""
        lv = self.level if level is None else check_level(level)
        lo, hi = (1 - lv) / 2, (1 + lv) / 2
        if not len(self._ok):
            q = np.full((2, len(self.hypotheses)), np.nan)
        else:
            q = np.quantile(self._ok, [lo, hi], axis=0)
        return pd.DataFrame({"low": q[0], "high": q[1]}, index=self.hypotheses)

    def to_frame(self) -> pd.DataFrame:
        """One row per hypothesis: ``base`` posterior, ``mean``, ``median``, ``low``,
        ``high`` (the ``level`` interval) and ``p_map``."""
        if self._frame is None:
            kk = len(self.hypotheses)
            if len(self._ok):
                lo, hi = (1 - self.level) / 2, (1 + self.level) / 2
                q = np.quantile(self._ok, [lo, 0.5, hi], axis=0)  # one sort for all three
                mean = self._ok.mean(axis=0)
            else:
                q, mean = np.full((3, kk), np.nan), np.full(kk, np.nan)
            self._frame = pd.DataFrame({"base": self.base_posterior.to_numpy(), "mean": mean,
                                        "median": q[1], "low": q[0], "high": q[2],
                                        "p_map": self.map_probability.to_numpy()},
                                       index=pd.Index(self.hypotheses, name="hypothesis"))
        return self._frame.copy()

    @property
    def summary(self) -> str:
        if not self.inputs:
            return (f"no input carries uncertainty, so every draw gives the base posterior; "
                    f"the MAP is '{self.base_map}'")
        p = float(self.map_probability[self.base_map])
        text = (f"'{self.base_map}' is the MAP in {p:.1%} of {self.draws - self.undefined:,} "
                f"draws; the conclusion changes in {self.changed_share:.1%}")
        if self.undefined:
            text += f" ({self.undefined:,} draws undefined: evidence impossible under every "
            text += "hypothesis)"
        return text

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready summary (no samples, no timing) for records."""
        frame = self.to_frame()
        return {"title": self.title, "scenario": self.scenario, "draws": self.draws,
                "seed": self.seed, "level": self.level, "base_map": self.base_map,
                "changed_share": self.changed_share, "undefined": self.undefined,
                "inputs": list(self.inputs), "methods": dict(self.methods),
                "notes": list(self.notes),
                "hypotheses": {h: {c: (None if np.isnan(v) else float(v))
                                   for c, v in row.items()} for h, row in frame.iterrows()},
                "summary": self.summary}

    def __repr__(self) -> str:
        return (f"SimulationResult({self.title!r}: {self.draws:,} draws, seed {self.seed}, "
                f"{len(self.inputs)} uncertain inputs; {self.summary})")

    def _repr_html_(self) -> str:
        from .display import esc

        frame = self.to_frame()
        head = "".join(f"<th>{esc(c)}</th>" for c in ["hypothesis", *frame.columns])
        body = "".join("<tr><td>" + esc(h) + "</td>" + "".join(f"<td>{v:.4g}</td>" for v in row)
                       + "</tr>" for h, row in frame.iterrows())
        return (f'<div class="bl-simulation"><p>{esc(self.summary)} (seed {self.seed}, '
                f'{self.level:.0%} intervals)</p><table class="bl-table"><thead><tr>{head}'
                f"</tr></thead><tbody>{body}</tbody></table></div>")


def _seed(seed: Any) -> int:
    if seed is None:
        return int(np.random.SeedSequence().entropy % (2**63))
    if isinstance(seed, bool) or not isinstance(seed, int | np.integer) or seed < 0:
        raise CaseError(f"seed must be a non-negative whole number (or None for a fresh one), "
                        f"got {seed!r:.40}")
    return int(seed)


def _workers(workers: Any) -> int:
    if workers is None:
        return max(1, min(4, os.cpu_count() or 1))
    if isinstance(workers, bool) or not isinstance(workers, int | np.integer) or workers < 1:
        raise CaseError(f"workers must be a whole number of at least 1, got {workers!r:.40}")
    return int(workers)


def simulate(case: Case, draws: int = 100_000, seed: int | None = None, *, level: float = 0.9,
             scenario: str | None = None, progress: bool | None = None,
             chunk: int = DEFAULT_CHUNK, workers: int | None = None,
             method: str = "auto") -> SimulationResult:
    """Propagate the uncertainty on the inputs to the posterior by Monte Carlo.

    Each draw takes the priors from their Dirichlet (when set) and each
    uncertain likelihood from its Dirichlet, whose marginal for the observed
    state is a Beta; only observed entries affect the posterior, so only they
    are drawn. Work is vectorised over the draws (chunks of ``chunk`` draws,
    each with its own child of ``numpy.random.SeedSequence(seed)``), so the
    same seed, draws and chunk give the same result on any machine.

    Parameters
    ----------
    draws : int
        Number of draws (at least 1).
    seed : int or None
        Seed; ``None`` picks a fresh one, recorded in the result.
    level : float
        Level of the reported intervals, in (0, 1).
    scenario : str, optional
        Prior scenario (default: the active one).
    progress : bool or None
        Show a progress bar; ``None`` shows one when the run is expected to
        take longer than a second.
    chunk : int
        Draws per chunk (part of what the seed reproduces; keep the default).
    workers : int, optional
        Threads drawing chunks in parallel (default: up to 4, at most the
        number of CPUs); the result is the same for any number.
    method : {'auto', 'direct'}
        ``'direct'`` draws every uncertain likelihood of every draw (two
        Gamma variates each). ``'auto'`` (default) draws, for each
        hypothesis, the total log-likelihood of its independent uncertain
        entries at once from its exact distribution (:class:`LogBetaSum`,
        checked on construction; a hypothesis whose check fails is drawn
        directly); the draws follow the same distribution, at a cost that
        does not grow with the number of evidence items. Tied entries and
        the priors are always drawn directly. ``result.methods`` says which
        way each hypothesis was drawn.

    Returns
    -------
    SimulationResult

    References
    ----------
    Gelman et al. (2013), *Bayesian Data Analysis*, 3rd ed., appendix A
    (Dirichlet draws from Gamma draws).
    """
    from .engine import update

    n = _draws(draws)
    lv = check_level(level)
    chunk = _draws(chunk)
    sd = _seed(seed)
    sc = case.active_scenario if scenario is None else scenario
    if sc not in case.scenario_names:
        raise CaseError(f"no scenario named {sc!r}; the scenarios are {case.scenario_names}")
    ledger = update(case, scenario=sc, with_flags=False)
    if ledger.stopped_at is not None:
        raise CaseError(f"evidence '{ledger.stopped_at}' is impossible under every hypothesis "
                        "still in play, so the posterior is undefined; fix its likelihoods "
                        "before simulating")
    if method not in METHODS:
        raise CaseError(f"method {method!r:.40} is not known; use one of {list(METHODS)}")
    plan = _Plan(case, sc, "direct" if method == "direct" else "sum")
    k = len(plan.hypotheses)
    if n * k > MAX_SAMPLE_CELLS:
        raise CaseError(f"{n:,} draws x {k} hypotheses would hold {n * k:,} numbers (limit "
                        f"{MAX_SAMPLE_CELLS:,}); use fewer draws")
    n_chunks = -(-n // chunk)
    children = np.random.SeedSequence(sd).spawn(n_chunks)
    out = np.empty((k, n))  # hypotheses x draws; the result holds its transpose
    nw = _workers(workers)

    def fill(c: int) -> int:
        lo, hi = c * chunk, min(n, (c + 1) * chunk)
        out[:, lo:hi] = plan.run_chunk(hi - lo, children[c])
        return hi - lo

    t0 = time.perf_counter()
    done = fill(0)
    bar = None
    if n_chunks > 1 and progress is not False:
        expected = (time.perf_counter() - t0) * n_chunks / min(nw, n_chunks - 1)
        if progress or expected > PROGRESS_AFTER:
            from tqdm.auto import tqdm

            bar = tqdm(total=n, initial=done, unit="draw", desc="simulate", leave=False)
    try:
        if nw == 1 or n_chunks <= 2:
            for c in range(1, n_chunks):
                m = fill(c)
                if bar is not None:
                    bar.update(m)
        else:
            from concurrent.futures import ThreadPoolExecutor, as_completed

            # numpy's generators release the GIL, so chunks run in parallel;
            # each chunk has its own seed, so the result does not depend on nw
            with ThreadPoolExecutor(max_workers=nw) as pool:
                for fut in as_completed([pool.submit(fill, c) for c in range(1, n_chunks)]):
                    m = fut.result()
                    if bar is not None:
                        bar.update(m)
    finally:
        if bar is not None:
            bar.close()
    return SimulationResult(title=case.title, scenario=sc, hypotheses=plan.hypotheses,
                            methods=plan.methods, notes=plan.notes,
                            samples=out.T, base_posterior=ledger.posterior,
                            base_map=ledger.map_hypothesis, seed=sd, draws=n, level=lv,
                            inputs=plan.inputs, seconds=time.perf_counter() - t0)


__all__ = [
    "validate_uncertainty", "set_prior_uncertainty", "set_likelihood_uncertainty",
    "clear_uncertainty", "current_uncertainty", "uncertainty_register", "fit_concentration",
    "simulate", "SimulationResult", "DEFAULT_CHUNK", "LogBetaSum",
]

"""Review flags on a case and its ledger: what a reviewer should look at.

Each :class:`Flag` has a short kebab-case ``code``, a ``severity``
(``error``, ``warning`` or ``info``, always lower case), a plain-sentence
``message`` and a ``where`` naming the item. Valid but doubtful input
becomes a flag, not an exception. The checks read the ledger's arrays
(``prior_values``, ``probabilities``, ``step_names``) and the case's members;
none builds a pandas object, so flagging costs little beside the update.

To add a flag: write a ``_check_<name>(case, ledger)`` generator below and
add it to ``CHECKS`` (see DEVELOPERS.md). The engine calls :func:`diagnose`
while it builds a ledger; this module never imports the engine.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from ._logmath import log_normalizer
from .case import BASE_SCENARIO, SUM_TOL

if TYPE_CHECKING:
    from .case import Case
    from .engine import Ledger

SEVERITIES = ("error", "warning", "info")
NEAR_CERTAIN = 1e-6
DOMINANT_SHARE = 0.5
"""An item is flagged as dominant when it carries more than this share of the total
weight of evidence for the MAP hypothesis."""
DECIBANS_PER_NAT = 10 / np.log(10)


@dataclass(frozen=True)
class Flag:
    """One review flag: ``code``, ``severity``, ``message`` and ``where``."""

    code: str
    severity: str
    message: str
    where: str = ""

    def __post_init__(self) -> None:
        if self.severity not in SEVERITIES:
            raise ValueError(f"flag severity {self.severity!r} is not one of {SEVERITIES}")

    def to_dict(self) -> dict[str, str]:
        return {"code": self.code, "severity": self.severity, "message": self.message,
                "where": self.where}

    def __str__(self) -> str:
        return f"[{self.severity}] {self.code}: {self.message}"


def _names(items: list[str], limit: int = 8) -> str:
    shown = ", ".join(f"'{x}'" for x in items[:limit])
    return shown + (f" and {len(items) - limit} more" if len(items) > limit else "")


def map_step_decibans(ledger: Ledger) -> np.ndarray:
    """Weight (decibans) of each applied step for the MAP hypothesis against the rest.

    The rest is the mixture of the other hypotheses at each step, so the
    weights add up to the change from prior to posterior log-odds. Computed
    once per ledger from its step weights (whose largest entry per step is 1);
    a step where the rest is too small for that to be exact is redone in log
    space.
    """
    def build() -> np.ndarray:
        w = ledger.step_weights_unnormalized  # ratios within a step are all we need
        if len(w) < 2 or w.shape[1] < 2:  # no step, or no rest to weigh against
            return np.zeros(max(len(w) - 1, 0))
        j = ledger.hypotheses.index(ledger.map_hypothesis)
        wj = w[:, j]
        rest = w.sum(axis=1) - wj
        exact = rest > 1e-8 * (rest + wj)  # else the subtraction lost the rest's digits
        with np.errstate(divide="ignore", invalid="ignore"):
            lo = np.log(wj) - np.log(rest)
        if not exact.all():
            ls = ledger.log_steps
            mask = np.ones(w.shape[1], dtype=bool)
            mask[j] = False
            rows = np.flatnonzero(~exact)
            with np.errstate(invalid="ignore"):
                lo[rows] = ls[rows, j] - log_normalizer(ls[rows][:, mask], axis=1)
        with np.errstate(invalid="ignore"):
            return np.diff(lo) * DECIBANS_PER_NAT
    return ledger.memo("map_step_decibans", build)


# --------------------------------------------------------------------------- checks


def _check_prior_sum(case: Case, ledger: Ledger) -> Iterator[Flag]:
    total = float(ledger.prior_values.sum())
    sc = ledger.scenario
    if total <= 0:
        yield Flag("prior-sum", "error",
                   f"All priors of scenario '{sc}' are zero, so no posterior can be computed; "
                   "give the hypotheses positive priors that sum to 1.", f"scenario '{sc}'")
    elif abs(total - 1) > SUM_TOL:
        yield Flag("prior-sum", "error",
                   f"The priors of scenario '{sc}' sum to {total:.6g}, not 1. This ledger treats "
                   "them as relative weights; fix them, or normalize explicitly with "
                   "case.normalize_priors() (recorded as an assumption).", f"scenario '{sc}'")


def _check_zero_prior(case: Case, ledger: Ledger) -> Iterator[Flag]:
    for j in np.flatnonzero(ledger.prior_values == 0):
        h = ledger.hypotheses[j]
        yield Flag("zero-prior", "warning",
                   f"Hypothesis '{h}' has a prior of exactly 0 (scenario '{ledger.scenario}'): "
                   "this hypothesis can never gain belief, whatever the evidence (Cromwell's "
                   "rule). Give it a small positive prior unless it is logically impossible.",
                   f"hypothesis '{h}'")


def _check_near_certain(case: Case, ledger: Ledger) -> Iterator[Flag]:
    pv = ledger.prior_values
    total = float(pv.sum()) or 1.0
    p = pv / total
    positive = p[p > 0]
    if positive.size and (positive.min() < NEAR_CERTAIN or p.max() > 1 - NEAR_CERTAIN):
        for j in np.flatnonzero(((p > 0) & (p < NEAR_CERTAIN))
                                | ((p < 1) & (p > 1 - NEAR_CERTAIN))):
            h, x = ledger.hypotheses[j], float(p[j])
            yield Flag("near-certain", "warning",
                       f"The prior of '{h}' is {x:.3g}, within {NEAR_CERTAIN:g} of "
                       f"{'0' if x < 0.5 else '1'}: evidence will barely move it. Check that "
                       "such certainty is justified.", f"hypothesis '{h}'")
    post = ledger.posterior_values
    if ledger.applied and post.max() > 1 - NEAR_CERTAIN:
        top = [ledger.hypotheses[j]
               for j in np.flatnonzero((post > 1 - NEAR_CERTAIN) & (post < 1))]
        if top:
            yield Flag("near-certain", "info",
                       f"The posterior of {_names(top)} is within {NEAR_CERTAIN:g} of 1. Such "
                       "certainty rests on the hypothesis set being complete and the evidence "
                       "items being independent; check both.", f"hypothesis '{top[0]}'")


def _check_column_sums(case: Case, ledger: Ledger) -> Iterator[Flag]:
    for ev in case.evidence.values():
        for j in ev.bad_columns:
            h, s = ev.hypotheses[j], float(ev.column_totals[j])
            yield Flag("column-sum", "error",
                       f"The likelihoods of evidence '{ev.name}' under hypothesis '{h}' sum to "
                       f"{s:.6g} over its states, not 1. Each column is a distribution over the "
                       "states; fix the entries (or declare the item as likelihood evidence if "
                       "only the relative weights of the observation are known).",
                       f"evidence '{ev.name}' / hypothesis '{h}'")


def _check_impossible(case: Case, ledger: Ledger) -> Iterator[Flag]:
    if ledger.stopped_at is None:
        return
    step = ledger.stopped_at
    last = ledger.posterior_values
    live = [ledger.hypotheses[j] for j in np.flatnonzero(last > 0)]
    evidence = case.evidence
    states = [f"'{evidence[m].observed}'" for m in ledger.members.get(step, (step,))
              if m in evidence and evidence[m].observed is not None]
    what = f"the observed state {', '.join(states)} of " if states else ""
    if step in ledger.uncertain:
        what = f"the uncertain observation ({ledger.uncertain[step]['form']} form) of "
    later = (f" Later steps not applied: {_names(ledger.skipped[1:])}."
             if len(ledger.skipped) > 1 else "")
    yield Flag("impossible-evidence", "error",
               f"Under every hypothesis still in play ({_names(live)}), {what}evidence "
               f"'{step}' has probability 0, so the evidence contradicts the whole model. "
               f"The update stops at the step before it, and the posterior shown is that "
               f"step's.{later} Check the observation, the likelihoods, and whether the "
               "catch-all hypothesis is missing.", f"evidence '{step}'")


def _check_eliminated(case: Case, ledger: Ledger) -> Iterator[Flag]:
    last = ledger.posterior_values
    gone = np.flatnonzero((ledger.prior_values > 0) & (last == 0))
    if not gone.size:
        return
    dead = np.isneginf(ledger.log_likelihood_values[:, gone])
    for c, j in enumerate(gone):
        h = ledger.hypotheses[j]
        hit = np.flatnonzero(dead[:, c])
        step = ledger.step_names[int(hit[0]) + 1] if hit.size else ledger.step_names[0]
        yield Flag("eliminated", "warning",
                   f"Hypothesis '{h}' was eliminated by evidence '{step}': its observed state "
                   f"has probability 0 under '{h}', so no later evidence can revive it. Keep "
                   "the 0 only if that observation is logically impossible under this "
                   "hypothesis; otherwise use a small positive likelihood.",
                   f"hypothesis '{h}' / evidence '{step}'")


def _check_catch_all(case: Case, ledger: Ledger) -> Iterator[Flag]:
    if case.exhaustive or any(h.catch_all for h in case.hypotheses.values()):
        return
    yield Flag("no-catch-all", "info",
               "No hypothesis is marked as a catch-all ('other cause'). Unless the set is "
               "provably exhaustive (declare exhaustive=True and say why in the notes), add "
               "one so that evidence none of the named causes explains has somewhere to go.",
               "hypotheses")


def _check_dominant(case: Case, ledger: Ledger) -> Iterator[Flag]:
    w = map_step_decibans(ledger)
    if len(w) < 2:
        return
    a = np.abs(w)
    finite = np.isfinite(a)
    if finite.sum() < 2:
        return
    total = a[finite].sum()
    if total <= 0:
        return
    k = int(np.argmax(np.where(finite, a, -1)))
    share = a[k] / total
    if share > DOMINANT_SHARE:
        step = ledger.evidence_steps[k]
        yield Flag("dominant-evidence", "warning",
                   f"Evidence '{step}' carries {share:.0%} of the total weight of evidence for "
                   f"the MAP hypothesis '{ledger.map_hypothesis}' ({w[k]:+.1f} decibans of "
                   f"{total:.1f}; this flag is raised above {DOMINANT_SHARE:.0%}, so it can "
                   "come and go between prior scenarios near that share). The conclusion leans "
                   "on this one item: check its likelihoods and source with particular care.",
                   f"evidence '{step}'")


def _check_unsourced(case: Case, ledger: Ledger) -> Iterator[Flag]:
    hyps = [h.name for h in case.hypotheses.values() if not h.source.is_sourced]
    if hyps and ledger.scenario == BASE_SCENARIO:
        yield Flag("unsourced", "warning",
                   f"The prior(s) of {_names(hyps)} have no source. Say where each number "
                   "came from (historical counts, a standard's table, expert judgement), who "
                   "set it, when and why.", "priors")
    if ledger.scenario != BASE_SCENARIO:
        sc = case.scenarios.get(ledger.scenario)
        if sc is not None and not sc.source.is_sourced:
            yield Flag("unsourced", "warning",
                       f"Scenario '{sc.name}' has no source for its priors; say where they "
                       "came from.", f"scenario '{sc.name}'")
    bare: list[str] = []
    for ev in case.evidence.values():
        if ev.source.is_sourced:
            continue
        if not ev.entry_sources:
            bare.append(ev.name)
            continue
        missing = [h for h in ev.hypotheses
                   if not all(ev.source_of(s, h).is_sourced for s in ev.states)]
        if missing:
            yield Flag("unsourced", "warning",
                       f"The likelihoods of evidence '{ev.name}' have no source for "
                       f"{_names(missing)}. Say where the numbers came from.",
                       f"evidence '{ev.name}'")
    if bare:
        yield Flag("unsourced", "warning",
                   f"The likelihoods of evidence {_names(bare)} have no source. Say where "
                   "the numbers came from (a data sheet, test records, expert judgement), "
                   "who set them, when and why.",
                   f"evidence '{bare[0]}'" if len(bare) == 1 else "evidence")
    reports = [ev.name for ev in case.evidence.values()
               if ev.uncertain is not None and not ev.uncertain.source.is_sourced]
    if reports:
        yield Flag("unsourced", "warning",
                   f"The uncertain observation of {_names(reports)} has no source. Say who gave "
                   "the report, when, how reliable it is and why it is weighted so: the "
                   "weights are numbers like any other.",
                   f"evidence '{reports[0]}'" if len(reports) == 1 else "evidence")
    unc = case.extras.get("uncertainty") or {}
    prior = unc.get("prior")
    if prior is not None and not str((prior.get("source") or {}).get("where", "")).strip():
        yield Flag("unsourced", "warning",
                   "The uncertainty on the priors has no source. Say where its spread came "
                   "from (counts, a range an expert gave, a standard).", "prior uncertainty")
    ranges = [f"'{e['evidence']}' under '{e['hypothesis']}'" for e in unc.get("likelihoods", [])
              if not str((e.get("source") or {}).get("where", "")).strip()]
    if ranges:
        yield Flag("unsourced", "warning",
                   f"The uncertainty ranges of the likelihoods of {_names(ranges)} have no "
                   "source. A range is a number like any other: say where it came from, who "
                   "gave it, when and why.", "likelihood uncertainty")


def _check_shared_source(case: Case, ledger: Ledger) -> Iterator[Flag]:
    groups: dict[str, list[str]] = {}
    for ev in case.evidence.values():
        if ev.shared_source and ev.is_observed:
            groups.setdefault(ev.shared_source, []).append(ev.name)
    if not any(len(v) > 1 for v in groups.values()):
        return
    applied = set(ledger.evidence_steps)
    w = map_step_decibans(ledger)
    steps = ledger.evidence_steps
    step_of = {m: s for s, ms in ledger.members.items() for m in ms}  # a grouped item -> step
    links = case.dependence_links()
    for tag, items in groups.items():
        if len(items) < 2:
            continue
        if links.get(items[0]) is not None and len({links.get(i) for i in items}) == 1:
            continue  # one joint group or one conditional chain already states the dependence
        idx = sorted({steps.index(step_of.get(s, s)) for s in items
                      if step_of.get(s, s) in applied})
        together = float(np.sum(w[idx])) if idx else 0.0
        yield Flag("shared-source", "warning",
                   f"Evidence {_names(items)} share the source tag '{tag}'. If they stem from "
                   "one underlying fact, the update counts it more than once. Together they "
                   f"move the log-odds of '{ledger.map_hypothesis}' against the rest by "
                   f"{together:+.1f} decibans. Consider a joint evidence group or a "
                   "conditional likelihood.", f"shared source '{tag}'")


def _check_no_evidence(case: Case, ledger: Ledger) -> Iterator[Flag]:
    if not any(e.is_observed for e in case.evidence.values()):
        yield Flag("no-evidence", "info",
                   "No evidence is observed yet: the posterior equals the prior.", "evidence")


def _check_map_vs_ml(case: Case, ledger: Ledger) -> Iterator[Flag]:
    post = ledger.posterior_values
    if len(post) > 1:
        i0 = int(np.argmax(post))
        best = post[i0]
        near = np.flatnonzero(post >= best - 1e-12)
        if best > 0 and len(near) > 1:
            a, b = ledger.hypotheses[near[0]], ledger.hypotheses[near[1]]
            yield Flag("map-tie", "info",
                       f"'{a}' and '{b}' are tied for the highest posterior ({best:.4g}); the "
                       "MAP shown is the first listed.", f"hypothesis '{a}'")
    ml, mp = ledger.ml_hypothesis, ledger.map_hypothesis
    if ml and ml != mp and not ledger.stopped_at:
        yield Flag("map-differs-from-ml", "info",
                   f"The MAP hypothesis '{mp}' is not the one the evidence alone favours most "
                   f"('{ml}'): the priors decide the ranking, so check them with particular "
                   "care.", f"hypothesis '{mp}'")


def _check_loss_unit(case: Case, ledger: Ledger) -> Iterator[Flag]:
    sec = case.extras.get("loss_table")
    if sec is not None and not str(sec.get("units") or "").strip():
        yield Flag("loss-unit-missing", "info",
                   "The loss table has no unit, so its figures (and any value of information "
                   "in its terms) cannot be read as money, hours or anything else. Set one with "
                   "bl.set_loss_table(case, table, units='kEUR') (or the unit it is in).",
                   "loss table")


def _check_order(case: Case, ledger: Ledger) -> Iterator[Flag]:
    """Jeffrey (probability-form) updates do not commute: say where moving one to the
    first or the last step would change the MAP hypothesis, and where a stated
    probability falls on a state the evidence before it rules out."""
    mp = ledger.map_hypothesis
    for step, info in ledger.uncertain.items():
        if info["form"] != "probability":
            continue
        where = f"evidence '{step}'"
        if info.get("unreachable"):
            states = _names(list(info["unreachable"]))
            yield Flag("jeffrey-unreachable", "error",
                       f"The probability-form observation of '{step}' gives state(s) {states} a "
                       "positive probability, but the evidence before it rules them out under "
                       "every hypothesis still in play, so Jeffrey's rule cannot put belief on "
                       "them: the update uses the other states only and the stated "
                       "probabilities are not what is applied. Check the earlier evidence, or "
                       "give the report as likelihood weights.", where)
        if step in ledger.skipped:
            continue
        moved = []
        for end in ("first", "last"):
            other = info.get(f"map_if_{end}")
            p = info.get(f"p_map_if_{end}")
            if other is not None and other != mp:
                moved.append(f"placed {end} the MAP would be '{other}' (P={p:.3g})")
        if moved:
            yield Flag("order-sensitive", "warning",
                       f"Evidence '{step}' is a probability-form (Jeffrey) observation at step "
                       f"{info['position']} of {info['of']}, and such updates do not commute: "
                       f"the MAP here is '{mp}', but {' and '.join(moved)}. The conclusion "
                       "depends on where it sits; say in the notes why it belongs at that "
                       "step, or give the report as likelihood weights (virtual evidence), "
                       "which do not depend on the order.", where)


def _check_scenario_stale(case: Case, ledger: Ledger) -> Iterator[Flag]:
    """A scenario whose declared meaning no longer holds (equal priors that are not equal,
    priors from a data set for hypotheses the data did not cover)."""
    if ledger.scenario == BASE_SCENARIO:
        scenarios = list(case.scenarios.values())
    else:
        sc = case.scenarios.get(ledger.scenario)
        scenarios = [] if sc is None else [sc]
    names = case.hypothesis_names
    for sc in scenarios:
        where = f"scenario '{sc.name}'"
        if sc.meaning == "equal":
            vals = [sc.priors[h] for h in names]
            if vals and max(vals) - min(vals) > SUM_TOL:
                yield Flag("scenario-stale", "warning",
                           f"Scenario '{sc.name}' is declared equal priors, but its priors run "
                           f"from {min(vals):.4g} to {max(vals):.4g}. Re-add it with "
                           "meaning='equal' (it then stays equal when hypotheses change), or "
                           "declare what it now means.", where)
        elif sc.meaning == "data":
            added = [h for h in names if h not in sc.basis]
            gone = [h for h in sc.basis if h not in names]
            if added or gone:
                parts = []
                if added:
                    parts.append(f"{_names(added)} added")
                if gone:
                    parts.append(f"{_names(gone)} removed or split")
                yield Flag("scenario-stale", "warning",
                           f"Scenario '{sc.name}' was taken from a data set ({sc.source}) for "
                           f"the hypotheses of that time; since then {' and '.join(parts)}, so "
                           "its priors no longer come from that data alone. Refit it from the "
                           "data (e.g. est.add_scenario(case, name, replace_existing=True)) or "
                           "re-add it with the meaning its numbers now have.", where)


CHECKS = [
    _check_prior_sum,
    _check_impossible,
    _check_column_sums,
    _check_zero_prior,
    _check_eliminated,
    _check_near_certain,
    _check_dominant,
    _check_shared_source,
    _check_unsourced,
    _check_catch_all,
    _check_no_evidence,
    _check_map_vs_ml,
    _check_loss_unit,
    _check_order,
    _check_scenario_stale,
]

_RANK = {s: i for i, s in enumerate(SEVERITIES)}


def diagnose(case: Case, ledger: Ledger) -> list[Flag]:
    """All review flags for ``case`` and its ``ledger``, errors first."""
    out: list[Flag] = []
    for check in CHECKS:
        out.extend(check(case, ledger))
    return sorted(out, key=lambda f: _RANK[f.severity])


__all__ = ["Flag", "diagnose", "map_step_decibans", "CHECKS", "SEVERITIES", "DOMINANT_SHARE"]

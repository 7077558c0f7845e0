"""Diagnostics on a case and its ledger: what a reviewer should look at.

Each :class:`Flag` has a short kebab-case ``code``, a ``severity``
(``error``, ``warning`` or ``info``), a plain-sentence ``message`` and a
``where`` naming the item. Valid but doubtful input becomes a flag, not
an exception. To add a flag: write a ``_check_<name>(case, ledger)``
generator below and add it to ``CHECKS`` (see DEVELOPERS.md).
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from ._logmath import log_odds_path
from .case import BASE_SCENARIO, SUM_TOL

if TYPE_CHECKING:
    from .case import Case
    from .engine import Ledger

SEVERITIES = ("error", "warning", "info")
NEAR_CERTAIN = 1e-6
DOMINANT_SHARE = 0.5
DECIBANS_PER_NAT = 10 / np.log(10)


@dataclass(frozen=True)
class Flag:
    """One diagnostic: ``code``, ``severity``, ``message`` and ``where``."""

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


def _check_prior_sum(case: Case, ledger: Ledger) -> Iterator[Flag]:
    total = float(ledger.priors.sum())
    if total <= 0:
        yield Flag("prior-sum", "error",
                      f"All priors of scenario '{ledger.scenario}' are zero, so no posterior can "
                      "be computed; give the hypotheses positive priors that sum to 1.",
                      f"scenario '{ledger.scenario}'")
    elif abs(total - 1) > SUM_TOL:
        yield Flag("prior-sum", "error",
                      f"The priors of scenario '{ledger.scenario}' sum to {total:.6g}, not 1. "
                      "This ledger treats them as relative weights; fix them, or normalize "
                      "explicitly with case.normalize_priors() (recorded as an assumption).",
                      f"scenario '{ledger.scenario}'")


def _check_zero_prior(case: Case, ledger: Ledger) -> Iterator[Flag]:
    for h, p in ledger.priors.items():
        if p == 0:
            yield Flag("zero-prior", "warning",
                          f"Hypothesis '{h}' has a prior of exactly 0 (scenario "
                          f"'{ledger.scenario}'): this hypothesis can never gain belief, whatever "
                          "the evidence (Cromwell's rule). Give it a small positive prior unless "
                          "it is logically impossible.", f"hypothesis '{h}'")


def _check_near_certain(case: Case, ledger: Ledger) -> Iterator[Flag]:
    total = float(ledger.priors.sum()) or 1.0
    for h, p in (ledger.priors / total).items():
        if 0 < p < NEAR_CERTAIN or (p < 1 and p > 1 - NEAR_CERTAIN):
            yield Flag("near-certain", "warning",
                          f"The prior of '{h}' is {p:.3g}, within {NEAR_CERTAIN:g} of "
                          f"{'0' if p < 0.5 else '1'}: evidence will barely move it. Check that "
                          "such certainty is justified.", f"hypothesis '{h}'")
    post = ledger.posterior
    top = [h for h, p in post.items() if 1 - NEAR_CERTAIN < p < 1]
    if top and len(ledger.evidence_steps):
        yield Flag("near-certain", "info",
                      f"The posterior of {_names(top)} is within {NEAR_CERTAIN:g} of 1. Such "
                      "certainty rests on the hypothesis set being complete and the evidence "
                      "items being independent; check both.", f"hypothesis '{top[0]}'")


def _check_column_sums(case: Case, ledger: Ledger) -> Iterator[Flag]:
    for ev in case.evidence.values():
        if ev.likelihood_evidence:
            continue
        sums = ev.table.sum(axis=0)
        for j in np.flatnonzero(np.abs(sums - 1) > SUM_TOL):
            h, s = ev.hypotheses[j], sums[j]
            yield Flag("column-sum", "error",
                          f"The likelihoods of evidence '{ev.name}' under hypothesis '{h}' "
                          f"sum to {s:.6g} over its states, not 1. Each column is a "
                          "distribution over the states; fix the entries (or declare the "
                          "item likelihood evidence if only the observed state is known).",
                          f"evidence '{ev.name}' / hypothesis '{h}'")


def _check_impossible(case: Case, ledger: Ledger) -> Iterator[Flag]:
    if ledger.stopped_at is None:
        return
    step = ledger.stopped_at
    live = [h for h, p in ledger.posterior.items() if p > 0]
    members = ledger.members.get(step, (step,))
    states = []
    for m in members:
        ev = case.evidence.get(m)
        if ev is not None and ev.observed is not None:
            states.append(f"'{ev.observed}'")
    what = f"the observed state {', '.join(states)} of " if states else ""
    later = f" Later steps not applied: {_names(ledger.skipped[1:])}." if len(ledger.skipped) > 1 else ""
    yield Flag("impossible-evidence", "error",
                  f"Under every hypothesis still in play ({_names(live)}), {what}evidence "
                  f"'{step}' has probability 0, so the evidence contradicts the whole model. "
                  f"The update stops at the step before it.{later} Check the observation, "
                  "the likelihoods, and whether the catch-all hypothesis is missing.",
                  f"evidence '{step}'")


def _check_eliminated(case: Case, ledger: Ledger) -> Iterator[Flag]:
    ls = ledger.log_steps
    for j, h in enumerate(ledger.hypotheses):
        if ledger.priors.iloc[j] <= 0 or np.isfinite(ls[-1, j]):
            continue
        k = int(np.flatnonzero(~np.isfinite(ls[:, j]))[0])
        step = ledger.step_names[k]
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


def _step_decibans(ledger: Ledger) -> np.ndarray:
    """Weight (decibans) of each evidence step for the MAP hypothesis against the rest
    (computed once per ledger; several checks use it)."""
    cached = ledger.__dict__.get("_map_step_decibans")
    if cached is not None:
        return cached
    if len(ledger.steps) < 2:
        out = np.zeros(0)
    else:
        j = ledger.hypotheses.index(ledger.map_hypothesis)
        lo = log_odds_path(ledger.log_steps, j)
        with np.errstate(invalid="ignore"):
            out = np.diff(lo) * DECIBANS_PER_NAT
    ledger.__dict__["_map_step_decibans"] = out
    return out


def _check_dominant(case: Case, ledger: Ledger) -> Iterator[Flag]:
    w = _step_decibans(ledger)
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
                      f"Evidence '{step}' carries {share:.0%} of the total weight of evidence "
                      f"for the MAP hypothesis '{ledger.map_hypothesis}' ({w[k]:+.1f} decibans of "
                      f"{total:.1f}). The conclusion leans on this one item: check its "
                      "likelihoods and source with particular care.", f"evidence '{step}'")


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


def _check_shared_source(case: Case, ledger: Ledger) -> Iterator[Flag]:
    groups: dict[str, list[str]] = {}
    applied = set(ledger.evidence_steps)
    for ev in case.evidence.values():
        if ev.shared_source and ev.observed is not None:
            groups.setdefault(ev.shared_source, []).append(ev.name)
    w = _step_decibans(ledger)
    steps = ledger.evidence_steps
    step_of = {m: s for s, ms in ledger.members.items() for m in ms}  # a grouped item -> its step
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
    if not case.observed_evidence:
        yield Flag("no-evidence", "info",
                      "No evidence is observed yet: the posterior equals the prior.", "evidence")


def _check_map_vs_ml(case: Case, ledger: Ledger) -> Iterator[Flag]:
    post = ledger.posterior.to_numpy()
    order = np.argsort(-post, kind="stable")
    if len(order) > 1 and post[order[0]] > 0 and abs(post[order[0]] - post[order[1]]) <= 1e-12:
        a, b = ledger.hypotheses[order[0]], ledger.hypotheses[order[1]]
        yield Flag("map-tie", "info",
                      f"'{a}' and '{b}' are tied for the highest posterior "
                      f"({post[order[0]]:.4g}); the MAP shown is the first listed.",
                      f"hypothesis '{a}'")
    if ledger.ml_hypothesis and ledger.ml_hypothesis != ledger.map_hypothesis and not ledger.stopped_at:
        yield Flag("map-differs-from-ml", "info",
                      f"The MAP hypothesis '{ledger.map_hypothesis}' is not the one the evidence "
                      f"alone favours most ('{ledger.ml_hypothesis}'): the priors decide the "
                      "ranking, so check them with particular care.",
                      f"hypothesis '{ledger.map_hypothesis}'")


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
]


def diagnose(case: Case, ledger: Ledger) -> list[Flag]:
    """All flags for ``case`` and its ``ledger``, errors first."""
    out: list[Flag] = []
    for check in CHECKS:
        out.extend(check(case, ledger))
    rank = {s: i for i, s in enumerate(SEVERITIES)}
    return sorted(out, key=lambda f: rank[f.severity])


__all__ = ["Flag", "diagnose", "CHECKS", "SEVERITIES"]

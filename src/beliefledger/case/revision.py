"""Revising the hypothesis set: where a new hypothesis' prior comes from, and its columns.

Pure functions over a case's members (hypotheses, scenarios, evidence items,
joint groups) that :class:`~beliefledger.case.model.Case` calls inside one
edit. They build new members and never touch the old ones, so a refused
edit leaves the case as it was.

A new cause is usually carved out of the catch-all ("other cause"): its
prior is taken from that one hypothesis in every scenario and the others
keep theirs (:func:`carved_priors`). Rescaling every other prior in
proportion is the other convention, kept as an explicit choice
(:func:`rescaled_priors`); each is recorded as an assumption by the caller.
A scenario declared ``"equal"`` stays equal over the new set
(:func:`equal_priors`).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import replace
from typing import Any, NamedTuple

import numpy as np

from .._checks import SUM_TOL, check_probability, fmt_g
from ..errors import CaseError, CaseTypeError
from .members import Evidence, Hypothesis, JointGroup, Scenario
from .parsing import parse_column

Column = tuple[np.ndarray, np.ndarray | None]
"""A new hypothesis' column of one item: P(state | H) and, for a conditional item, its
tables given each parent state (parent states x states)."""


def equal_priors(names: list[str]) -> dict[str, float]:
    """Equal priors over ``names`` (an ``"equal"`` scenario's meaning)."""
    return {h: 1.0 / len(names) for h in names}


def parse_new_columns(evidence: Mapping[str, Evidence], nm: str,
                      likelihoods: Mapping[str, Any]) -> dict[str, Column]:
    """The new hypothesis ``nm``'s column for every item (each checked), from a mapping
    item -> column (a conditional item: parent state -> column)."""
    missing = [e for e in evidence if e not in likelihoods]
    if missing:
        raise CaseError(
            f"new hypothesis '{nm}' needs a likelihood column for evidence {missing}; "
            "pass likelihoods={evidence: [P(state | new hypothesis), ...]}")
    unknown = [e for e in likelihoods if e not in evidence]
    if unknown:
        raise CaseError(f"likelihoods given for unknown evidence {unknown}; "
                        f"the case's evidence is {list(evidence)}")
    out: dict[str, Column] = {}
    for ename, ev in evidence.items():
        if ev.given is None:
            out[ename] = (parse_column(ev, nm, likelihoods[ename]), None)
            continue
        spec = likelihoods[ename]
        if not isinstance(spec, Mapping) or set(spec) != set(ev.parent_states):
            raise CaseError(f"new hypothesis '{nm}': conditional evidence '{ename}' needs a "
                            f"column for each state of '{ev.given}' {list(ev.parent_states)}, "
                            "as a dict parent state -> column")
        cols = []
        for ps in ev.parent_states:
            col = parse_column(ev, nm, spec[ps])
            if abs(col.sum() - 1) > SUM_TOL:
                raise CaseError(f"likelihoods of evidence '{ename}' given '{ev.given}' = "
                                f"'{ps}' for new hypothesis '{nm}' sum to {col.sum():.4g}; "
                                "fix the column")
            cols.append(col)
        out[ename] = (np.zeros(len(ev.states)), np.stack(cols))  # the margin is recomputed
    return out


def with_columns(evidence: Mapping[str, Evidence], groups: Mapping[str, JointGroup],
                 order: tuple[str, ...], sources: Mapping[str, Any]
                 ) -> tuple[dict[str, Evidence], dict[str, JointGroup], list[str]]:
    """Every item and joint group over the hypotheses ``order``.

    ``sources`` maps each hypothesis of ``order`` to where its column comes
    from: the name of a current hypothesis (its column is copied, entry
    sources, conditional tables and group dependence included) or a mapping
    item -> :data:`Column` (a new column). Hypotheses left out of ``order``
    are dropped. Returns the new items, the new groups and the names of the
    groups in which a new column is taken as independent (to record).
    """
    new_ev: dict[str, Evidence] = {}
    for ename, ev in evidence.items():
        cols, conds, entry = [], [], {}
        for h in order:
            src = sources[h]
            if isinstance(src, str):
                j = ev.hypotheses.index(src)
                cols.append(ev.table[:, j])
                if ev.conditional is not None:
                    conds.append(ev.conditional[:, :, j])
                for (s, hh), v in ev.entry_sources.items():
                    if hh == src:
                        entry[(s, h)] = v
            else:
                col, cond = src[ename]
                cols.append(col)
                if ev.conditional is not None:
                    conds.append(cond)
        table = np.column_stack(cols) if cols else np.zeros((len(ev.states), 0))
        changes: dict[str, Any] = {"table": table, "hypotheses": order, "entry_sources": entry}
        if ev.conditional is not None:
            changes["conditional"] = np.stack(conds, axis=2)
        new_ev[ename] = ev.replace(**changes)
    new_groups: dict[str, JointGroup] = {}
    independent: list[str] = []
    for gname, g in groups.items():
        fresh = [h for h in order if not isinstance(sources[h], str)]
        if g.kind == "covariance":
            cov = [g.covariance_values[g.hypotheses.index(sources[h])]
                   if isinstance(sources[h], str) else 0.0 for h in order]
            new_groups[gname] = g.replace(hypotheses=order, covariance=np.array(cov))
        else:
            cols = []
            for j, h in enumerate(order):
                if isinstance(sources[h], str):
                    cols.append(g.joint_values[:, g.hypotheses.index(sources[h])])
                    continue
                col = np.ones(1)
                for m in g.members:
                    col = np.multiply.outer(col, new_ev[m].table[:, j])
                cols.append(col.reshape(-1))
            new_groups[gname] = g.replace(hypotheses=order, joint=np.column_stack(cols))
        if fresh:
            independent.append(gname)
    return new_ev, new_groups, independent


class Carve(NamedTuple):
    """A carved prior: the new hypothesis' base prior and the donor's, the same per
    scenario, and the (target, detail) notes to record as assumptions."""

    prior: float
    donor_prior: float
    scenario_priors: dict[str, float]
    donor_scenario_priors: dict[str, float]
    notes: list[tuple[str, str]]


def _donor_prior(what: str, donor: str, have: float, want: float, where: str) -> None:
    if want > have + SUM_TOL:
        raise CaseError(f"cannot carve a prior of {fmt_g(want)} for {what} out of '{donor}': "
                        f"its prior {where} is {fmt_g(have)}; give a smaller prior, a share= "
                        "of the donor's prior instead, or take it from another hypothesis")


def carved_priors(hyps: Mapping[str, Hypothesis], scenarios: Mapping[str, Scenario], nm: str,
                  donor: str, *, prior: float | None, share: float | None,
                  scenario_priors: Mapping[str, float] | None) -> Carve:
    """Priors for a new hypothesis ``nm`` carved out of ``donor`` in every scenario.

    With ``prior`` the new hypothesis gets that amount (or the scenario's
    entry of ``scenario_priors``) and the donor loses it; with ``share`` it
    gets that fraction of the donor's prior in each scenario. Every other
    prior is unchanged.
    """
    if (prior is None) == (share is None):
        raise CaseError(f"new hypothesis '{nm}' carved out of '{donor}': give exactly one of "
                        "prior= (an amount) or share= (a fraction of the donor's prior)")
    if share is not None:
        s = check_probability(f"share of '{donor}' given to new hypothesis '{nm}'", share)
    if scenario_priors is not None and share is not None:
        raise CaseError("scenario_priors= gives amounts; with share= every scenario gives the "
                        "same fraction of its donor's prior, so leave scenario_priors out")
    have = hyps[donor].prior
    if share is not None:
        p = s * have
    else:
        p = check_probability(f"prior of hypothesis '{nm}'", prior)
        _donor_prior(f"'{nm}'", donor, have, p, "in the hypothesis table")
    notes = [("base", f"hypothesis '{nm}' added with prior {fmt_g(p)} carved out of '{donor}' "
                      f"({fmt_g(have)} -> {fmt_g(max(have - p, 0.0))}); the other priors "
                      "unchanged")]
    new_sc: dict[str, float] = {}
    donor_sc: dict[str, float] = {}
    for sname, sc in scenarios.items():
        d = sc.priors[donor]
        if share is not None:
            q = s * d
        else:
            q = check_probability(f"prior of '{nm}' in scenario '{sname}'",
                                  (scenario_priors or {}).get(sname, p))
            _donor_prior(f"'{nm}'", donor, d, q, f"in scenario '{sname}'")
        new_sc[sname] = q
        donor_sc[sname] = max(d - q, 0.0)
        if sc.meaning != "equal":
            notes.append((sname, f"hypothesis '{nm}' added with prior {fmt_g(q)} carved out of "
                                 f"'{donor}' ({fmt_g(d)} -> {fmt_g(max(d - q, 0.0))}); the "
                                 "other priors unchanged"))
    return Carve(p, max(have - p, 0.0), new_sc, donor_sc, notes)


def check_split(name: str, into: Any) -> dict[str, float]:
    """The parts of a split: new name -> share of the old prior (shares sum to 1)."""
    if not isinstance(into, Mapping) or not into:
        raise CaseTypeError(f"into= of the split of '{name}' must map each new hypothesis to its "
                            f"share of the prior of '{name}' (shares summing to 1), got "
                            f"{type(into).__name__} {into!r:.60}")
    shares = {}
    for k, v in into.items():
        shares[k] = check_probability(f"share of new hypothesis {k!r:.60} in the split of "
                                      f"'{name}'", v)
    total = sum(shares.values())
    if abs(total - 1) > SUM_TOL:
        raise CaseError(f"the shares of the split of '{name}' sum to {fmt_g(total)}, not 1; each "
                        f"part gets its share of the prior of '{name}' in every scenario, so "
                        "give shares that sum to 1 (include the old name to keep a part of it)")
    return shares


def scenarios_over(scenarios: Mapping[str, Scenario], order: tuple[str, ...],
                   priors_of: Any) -> tuple[dict[str, Scenario], list[str]]:
    """Each scenario over the hypotheses ``order``: ``priors_of(scenario)`` gives its new
    priors; an ``"equal"`` scenario is made equal again (its name is returned to record)."""
    out: dict[str, Scenario] = {}
    kept_equal: list[str] = []
    for sname, sc in scenarios.items():
        if sc.meaning == "equal":
            out[sname] = replace(sc, priors=equal_priors(list(order)))
            kept_equal.append(sname)
        else:
            out[sname] = replace(sc, priors=priors_of(sc))
    return out, kept_equal


__all__ = ["equal_priors", "parse_new_columns", "with_columns", "carved_priors", "check_split",
           "scenarios_over", "Column", "Carve"]

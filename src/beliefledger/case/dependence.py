"""Stated dependence between evidence items: joint groups and conditional chains.

Pure functions over a case's evidence items (name -> :class:`Evidence`, in
order) and joint groups (name -> :class:`JointGroup`). They turn the
observed items into update steps (one likelihood vector per step) and give
the predictive table of a pending item given what else is observed; the
engine and value-of-information analysis read them through the case.

A joint group's observed members make one step whose vector is the joint
table at their observed states (pending members summed out). A
conditional item contributes P(its state | the evidence before it, H): the
row of its table for the parent's observed state or, when the parent is
pending, the parent's state summed out given what is known of its chain
(each item has at most one parent, so a chain is a tree and the sums are
exact).

An item with an uncertain observation (see :mod:`.uncertain`) is a step of
its own: in the likelihood form its vector is the weighted sum of its
table's rows; in the probability form (Jeffrey's rule) the vector depends on
the belief just before it, so the step carries the table and the stated
probabilities and the engine fills its row in (``LogSteps.jeffrey``).
Uncertain observations are not combined with joint groups or conditional
chains (refused, with the fix, by :func:`validate_dependence`).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, NamedTuple

import numpy as np

from .._checks import SUM_TOL, short_list
from .._logmath import log_of
from ..errors import CaseError
from .members import PROBABILITY_FORM, Evidence, JointGroup
from .uncertain import likelihood_vector

GROUP_MARGIN_TOL = 1e-6
"""How far a joint table's margins may sit from the members' own tables."""

Step = tuple[str, tuple[str, ...], np.ndarray]


def has_dependence(evidence: Mapping[str, Evidence], groups: Mapping[str, JointGroup]) -> bool:
    """True when some items are grouped or stated given another item."""
    return bool(groups) or any(e.given is not None for e in evidence.values())


def group_of(groups: Mapping[str, JointGroup]) -> dict[str, str]:
    """Item -> the joint group it belongs to."""
    return {m: g.name for g in groups.values() for m in g.members}


def chain_roots(evidence: Mapping[str, Evidence]) -> dict[str, str]:
    """Item -> head of its conditional chain, for items in a chain (parents first)."""
    roots: dict[str, str] = {}
    for e in evidence.values():
        if e.given is not None:
            r = roots.setdefault(e.given, e.given)
            roots[e.name] = r
    return roots


def ancestors(evidence: Mapping[str, Evidence], name: str) -> list[str]:
    out = []
    cur = evidence[name].given
    while cur is not None and cur not in out:
        out.append(cur)
        cur = evidence[cur].given if cur in evidence else None
    return out


def dependence_links(evidence: Mapping[str, Evidence],
                     groups: Mapping[str, JointGroup]) -> dict[str, str]:
    """Item -> the stated dependence it takes part in (``"joint group 'G'"`` or
    ``"conditional chain from 'A'"``), for items that have one."""
    out = {m: f"joint group '{g}'" for m, g in group_of(groups).items()}
    for n, r in chain_roots(evidence).items():
        out[n] = f"conditional chain from '{r}'"
    return out


def safe_ratio(num: np.ndarray, den: np.ndarray) -> np.ndarray:
    """num / den with 0 where den is 0 (a hypothesis already ruled out)."""
    out = np.zeros_like(np.asarray(num, dtype=float))
    np.divide(num, den, out=out, where=den > 0)
    return out


def chain_probability(evidence: Mapping[str, Evidence], n_h: int,
                      seen: Mapping[str, int]) -> np.ndarray:
    """P(the items in ``seen`` take their states | H) for one conditional chain,
    summing out the rest of the chain."""
    if not seen:
        return np.ones(n_h)
    relevant: set[str] = set()
    for n in seen:
        relevant.add(n)
        relevant.update(ancestors(evidence, n))
    beta: dict[str, np.ndarray] = {}
    for n in reversed([n for n in evidence if n in relevant]):
        ev = evidence[n]
        b = beta.pop(n, None)
        if b is None:
            b = np.ones((len(ev.states), n_h))
        if n in seen:
            keep = np.zeros_like(b)
            keep[seen[n]] = b[seen[n]]
            b = keep
        if ev.given is None:
            return (ev.table * b).sum(axis=0)
        msg = np.einsum("psh,sh->ph", ev.conditional, b)
        beta[ev.given] = beta[ev.given] * msg if ev.given in beta else msg
    raise AssertionError(f"conditional chain of {sorted(seen)} has no head")


def group_vector(evidence: Mapping[str, Evidence], grp: JointGroup,
                 free: str | None) -> np.ndarray:
    """Joint table at the members' observed states, summed over the pending ones; with
    ``free`` an item name: P(free's state | the group's observed members, H)."""
    arr = grp.joint_array(evidence)
    idx: list[Any] = []
    for m in grp.members:
        ev = evidence[m]
        if m != free and ev.observed is not None:
            idx.append(ev.observed_index)
        else:
            idx.append(slice(None))
    sub = arr[tuple(idx)]
    if free is None:
        axes = tuple(range(sub.ndim - 1))
        return sub.sum(axis=axes) if axes else sub
    kept = [m for m in grp.members if m == free or evidence[m].observed is None]
    pos = kept.index(free)
    other = tuple(i for i in range(sub.ndim - 1) if i != pos)
    joint_free = sub.sum(axis=other) if other else sub
    total = joint_free.sum(axis=0)
    out = np.array(evidence[free].table, dtype=float)
    ok = total > 0
    out[:, ok] = joint_free[:, ok] / total[ok]
    return out


def observed_steps(evidence: Mapping[str, Evidence], groups: Mapping[str, JointGroup],
                   n_h: int) -> list[Step]:
    """The update steps in order: ``(step name, member items, P(observed | H) vector)``.

    A probability-form (Jeffrey) step has a vector of ones here: its vector
    depends on the priors, and the engine fills it in (see :class:`LogSteps`).
    """
    if not has_dependence(evidence, groups):
        return [(e.name, (e.name,), _own_vector(e, n_h))
                for e in evidence.values() if e.is_observed]
    gof = group_of(groups)
    roots = chain_roots(evidence)
    steps: list[Step] = []
    done: set[str] = set()
    known: dict[str, dict[str, int]] = {}  # chain root -> {applied item: state index}
    for e in evidence.values():
        if e.uncertain is not None:  # never grouped or chained (validate_dependence)
            steps.append((e.name, (e.name,), _own_vector(e, n_h)))
            continue
        if e.observed is None:
            continue
        g = gof.get(e.name)
        if g is not None:
            if g not in done:
                done.add(g)
                grp = groups[g]
                members = tuple(m for m in grp.members if evidence[m].observed is not None)
                steps.append((g, members, group_vector(evidence, grp, None)))
            continue
        k = e.observed_index
        if e.name in roots:
            seen = known.setdefault(roots[e.name], {})
            if e.given is None:  # head of its chain: nothing of the chain came before
                vec = e.table[k]
            elif e.given in seen:
                vec = e.conditional[seen[e.given], k]
            else:
                before = chain_probability(evidence, n_h, seen)
                after = chain_probability(evidence, n_h, {**seen, e.name: k})
                vec = safe_ratio(after, before)
            seen[e.name] = k
            steps.append((e.name, (e.name,), vec))
            continue
        steps.append((e.name, (e.name,), e.table[k]))
    return steps


def _own_vector(e: Evidence, n_h: int) -> np.ndarray:
    """An independent item's step vector: its observed row, or the weighted rows of an
    uncertain observation (ones for the probability form, filled in by the engine)."""
    unc = e.uncertain
    if unc is None:
        return e.table[e.observed_index]
    if unc.form == PROBABILITY_FORM:
        return np.ones(n_h)
    return likelihood_vector(e.table, unc.weights)


class LogSteps(NamedTuple):
    """The observed steps in log space, as the engine reads them.

    ``rows[k]`` is ln P(observed | H) of step ``k`` (read-only, often a view of
    the item's kept log table); ``shifted[k]`` is the same row minus its
    largest finite entry ``shifts[k]`` (so its maximum is 0), which lets the
    engine exponentiate a running sum without subtracting a maximum per row.
    ``forms`` names the steps that are uncertain observations (step -> form);
    ``jeffrey`` maps the position of each probability-form step to its item's
    table and stated probabilities: its row here is a placeholder of zeros
    that the engine replaces, under each scenario's priors, before use.
    """

    names: list[str]
    members: dict[str, tuple[str, ...]]
    rows: list[np.ndarray]
    shifted: list[np.ndarray]
    shifts: np.ndarray
    forms: dict[str, str] = {}
    jeffrey: dict[int, tuple[np.ndarray, np.ndarray]] = {}

    def stacked(self, n: int | None = None) -> np.ndarray:
        """The first ``n`` rows (default all) as one steps x hypotheses array."""
        rows = self.rows if n is None else self.rows[:n]
        if not rows:
            return np.zeros((0, len(self.shifted[0]) if self.shifted else 0))
        return np.array(rows)


def shift_row(row: np.ndarray) -> tuple[np.ndarray, float]:
    """``row - max(row)`` and the max (0 and the row itself when every entry is -inf)."""
    m = float(np.max(row)) if row.size else 0.0
    if not np.isfinite(m):
        return row, 0.0
    return row - m, m


def observed_log_steps(evidence: Mapping[str, Evidence], groups: Mapping[str, JointGroup],
                       n_h: int) -> LogSteps:
    """The update steps in log space (see :class:`LogSteps`).

    Independent items read their row of the log tables each item keeps (so an
    update takes no logarithm of an unchanged table); grouped and chained
    steps take the log of their vector.
    """
    forms: dict[str, str] = {}
    jeffrey: dict[int, tuple[np.ndarray, np.ndarray]] = {}
    if not has_dependence(evidence, groups):
        obs = [e for e in evidence.values() if e.is_observed]
        names = [e.name for e in obs]
        rows, shifted, shifts = [], [], np.empty(len(obs))
        for i, e in enumerate(obs):
            if e.uncertain is not None:
                forms[e.name] = e.uncertain.form
                if e.uncertain.form == PROBABILITY_FORM:
                    jeffrey[i] = (e.table, np.array(e.uncertain.weights))
                    z = _placeholder(n_h)
                    rows.append(z)
                    shifted.append(z)
                    shifts[i] = 0.0
                    continue
            row, sh, m = e.observed_log_row
            rows.append(row)
            shifted.append(sh)
            shifts[i] = m
        return LogSteps(names, {n: (n,) for n in names}, rows, shifted, shifts, forms, jeffrey)
    steps = observed_steps(evidence, groups, n_h)
    rows, shifted, shifts = [], [], np.empty(len(steps))
    for i, (name, _, vec) in enumerate(steps):
        ev = evidence.get(name)
        if ev is not None and ev.uncertain is not None:
            forms[name] = ev.uncertain.form
            if ev.uncertain.form == PROBABILITY_FORM:
                jeffrey[i] = (ev.table, np.array(ev.uncertain.weights))
        lg = log_of(vec)
        lg.setflags(write=False)
        rows.append(lg)
        sh, m = shift_row(lg)
        shifted.append(sh)
        shifts[i] = m
    return LogSteps([s[0] for s in steps], {s[0]: tuple(s[1]) for s in steps}, rows, shifted,
                    shifts, forms, jeffrey)


def _placeholder(n_h: int) -> np.ndarray:
    z = np.zeros(n_h)
    z.setflags(write=False)
    return z


def predictive_table(evidence: Mapping[str, Evidence], groups: Mapping[str, JointGroup],
                     name: str, n_h: int) -> np.ndarray:
    """P(state | hypothesis, the other observed evidence) for one item (states x H)."""
    ev = evidence[name]
    if not groups and ev.given is None and not any(e.given == name for e in evidence.values()):
        return ev.table
    g = group_of(groups).get(name)
    if g is not None:
        return group_vector(evidence, groups[g], name)
    roots = chain_roots(evidence)
    if name not in roots:
        return ev.table
    root = roots[name]
    chain = [n for n in evidence if roots.get(n) == root]
    seen = {n: evidence[n].observed_index
            for n in chain if n != name and evidence[n].observed is not None}
    below = {n for n in seen if name in ancestors(evidence, n)}
    if not below:
        if ev.given is None:
            return ev.table
        if ev.given in seen:
            return ev.conditional[seen[ev.given]]
    before = chain_probability(evidence, n_h, seen)
    rows = [safe_ratio(chain_probability(evidence, n_h, {**seen, name: k}), before)
            for k in range(len(ev.states))]
    out = np.vstack(rows)
    dead = before <= 0  # the other evidence rules this hypothesis out: use the table
    if dead.any():
        out[:, dead] = ev.table[:, dead]
    return out


def refreshed_conditionals(evidence: dict[str, Evidence]) -> None:
    """Recompute (in place) each conditional item's marginal table from its parent's."""
    for n, ev in list(evidence.items()):
        if ev.given is None:
            continue
        parent = evidence.get(ev.given)
        if (parent is None or parent.likelihood_evidence or ev.conditional is None
                or parent.states != ev.parent_states
                or ev.conditional.shape[2] != parent.table.shape[1]):
            continue  # validate_dependence reports it
        marg = np.einsum("psh,ph->sh", ev.conditional, parent.table)
        if marg.shape != ev.table.shape or not np.array_equal(marg, ev.table):
            evidence[n] = ev.replace(table=marg)


def validate_dependence(evidence: Mapping[str, Evidence], groups: Mapping[str, JointGroup],
                        names: tuple[str, ...]) -> None:
    """Refuse groups and chains that cannot be used, naming the item and the fix."""
    order = {n: i for i, n in enumerate(evidence)}
    gof: dict[str, str] = {}
    for g in groups.values():
        if g.hypotheses != names:
            raise AssertionError(f"joint group '{g.name}' out of step with hypotheses")
        if g.name in evidence or g.name == "prior":
            raise CaseError(f"joint group '{g.name}' has the name of an evidence item or "
                            "of the prior step; steps need distinct names, so rename it")
        if len(g.members) < 2:
            raise CaseError(f"joint group '{g.name}' has {len(g.members)} member(s); "
                            "a group joins at least two evidence items")
        if len(set(g.members)) != len(g.members):
            raise CaseError(f"joint group '{g.name}' lists an item twice: {list(g.members)}")
        for m in g.members:
            if m not in evidence:
                raise CaseError(f"joint group '{g.name}' names unknown evidence '{m}'; the "
                                f"evidence items are {short_list(evidence)}")
            if m in gof:
                raise CaseError(f"evidence '{m}' is in joint groups '{gof[m]}' and "
                                f"'{g.name}'; an item belongs to one group at most (merge "
                                "the groups into one with a joint table)")
            gof[m] = g.name
            if evidence[m].likelihood_evidence:
                raise CaseError(f"evidence '{m}' in joint group '{g.name}' is likelihood "
                                "evidence; a joint table needs each member's full table over "
                                "its states")
            if evidence[m].uncertain is not None:
                raise CaseError(f"evidence '{m}' in joint group '{g.name}' has an uncertain "
                                "observation; a joint group combines states seen for certain: "
                                f"observe '{m}' as a state (or pending), or drop the group")
    for ev in evidence.values():
        if ev.given is None:
            continue
        what = f"conditional evidence '{ev.name}'"
        parent = evidence.get(ev.given)
        if parent is None:
            raise CaseError(f"{what} is stated given '{ev.given}', which is not an evidence "
                            f"item; the items are {short_list(evidence)}")
        if order[parent.name] >= order[ev.name]:
            raise CaseError(f"{what} is stated given '{parent.name}', which comes after it "
                            "(or is itself); a likelihood may only be stated given an "
                            "earlier item")
        if parent.likelihood_evidence:
            raise CaseError(f"{what} is stated given '{parent.name}', which is likelihood "
                            "evidence; the parent needs a full table over its states")
        for e in (ev, parent):
            if e.uncertain is not None:
                raise CaseError(f"evidence '{e.name}' has an uncertain observation and is in a "
                                f"conditional link ('{ev.name}' given '{parent.name}'); a "
                                f"conditional chain needs states seen for certain: observe "
                                f"'{e.name}' as a state (or pending), or state it without the "
                                "link")
        if parent.states != ev.parent_states:
            raise CaseError(f"{what} has tables for states {list(ev.parent_states)} of "
                            f"'{parent.name}', whose states are {list(parent.states)}")
        if ev.conditional is None or ev.conditional.shape != (
                len(parent.states), len(ev.states), len(names)):
            raise AssertionError(f"tables of {what} out of step")
        for a, b in ((ev.name, parent.name), (parent.name, ev.name)):
            if a in gof:
                if b in gof and gof[a] == gof[b]:
                    raise CaseError(
                        f"dependency cycle: {what} is stated given '{parent.name}' and both "
                        f"are in joint group '{gof[a]}', which already models their "
                        "dependence; drop the conditional tables or the group")
                raise CaseError(
                    f"evidence '{a}' is in joint group '{gof[a]}' and in a conditional "
                    f"link ('{ev.name}' given '{parent.name}'); use one way of stating the "
                    f"dependence: put both items in the group, or drop the group")
    for g in groups.values():
        check_group_numbers(g, evidence)


def check_group_numbers(g: JointGroup, evidence: Mapping[str, Evidence]) -> None:
    """Feasible covariances and coherent joint tables, with messages that give the fix."""
    hyps = g.hypotheses
    if g.kind == "covariance":
        a, b = (evidence[m] for m in g.members)
        for ev in (a, b):
            if len(ev.states) != 2:
                raise CaseError(f"joint group '{g.name}' states a covariance, which needs two "
                                f"items of two states each; '{ev.name}' has {len(ev.states)} "
                                f"states {list(ev.states)}; give the group a joint table instead")
        cov = g.covariance_values
        lo = -np.minimum(a.table[0] * b.table[0], a.table[1] * b.table[1])
        hi = np.minimum(a.table[0] * b.table[1], a.table[1] * b.table[0])
        for j, h in enumerate(hyps):
            if not (lo[j] - 1e-12 <= cov[j] <= hi[j] + 1e-12):
                raise CaseError(
                    f"covariance {cov[j]:.6g} of joint group '{g.name}' under hypothesis '{h}' is "
                    f"outside its feasible range [{lo[j]:.6g}, {hi[j]:.6g}] (given "
                    f"P('{a.states[0]}' of '{a.name}' | {h}) = {a.table[0, j]:.6g} and "
                    f"P('{b.states[0]}' of '{b.name}' | {h}) = {b.table[0, j]:.6g}); "
                    "choose a covariance in that range")
        return
    shape = tuple(len(evidence[m].states) for m in g.members)
    n = int(np.prod(shape))
    joint = g.joint_values
    if joint.shape != (n, len(hyps)):
        raise CaseError(f"joint table of group '{g.name}' has {joint.shape[0]} rows; its "
                        f"members' states combine into {n}")
    arr = joint.reshape(*shape, len(hyps))
    sums = joint.sum(axis=0)
    for j, h in enumerate(hyps):
        if abs(sums[j] - 1) > SUM_TOL:
            raise CaseError(f"joint table of group '{g.name}' under hypothesis '{h}' sums to "
                            f"{sums[j]:.6g} over the combined states (want 1 within "
                            f"{SUM_TOL:g}); fix the column")
    for k, m in enumerate(g.members):
        ev = evidence[m]
        other = tuple(i for i in range(len(shape)) if i != k)
        margin = arr.sum(axis=other)
        bad = np.abs(margin - ev.table) > GROUP_MARGIN_TOL
        if bad.any():
            i, j = (int(x[0]) for x in np.nonzero(bad))
            raise CaseError(
                f"joint table of group '{g.name}' gives P('{ev.states[i]}' of '{m}' | "
                f"{hyps[j]}) = {margin[i, j]:.6g}, but the item's own table says "
                f"{ev.table[i, j]:.6g}; a joint table's margins must equal its members' "
                "tables (fix the joint table or the item's likelihoods)")


__all__ = ["observed_steps", "observed_log_steps", "LogSteps", "shift_row", "predictive_table", "group_of",
           "chain_roots", "ancestors", "dependence_links", "chain_probability", "group_vector",
           "refreshed_conditionals", "validate_dependence", "check_group_numbers",
           "has_dependence", "safe_ratio", "GROUP_MARGIN_TOL"]

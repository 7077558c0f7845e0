"""Hypothesis groups: named roll-ups of hypotheses ("mechanical" vs "human").

A group changes no number: the hypotheses stay mutually exclusive and are
updated one by one, and a group's probability is the sum of its members'.
That is why groups are the way to read belief at a coarser level: merging
two hypotheses' likelihood tables into one would need each item's
likelihood under the merged hypothesis, P(e | A or B) = (P(e | A)·P(A) +
P(e | B)·P(B)) / (P(A) + P(B)), whose weights are the *current* beliefs in
A and B; they change with every item, so no fixed table reproduces the
update (the sum of the members' posteriors does, exactly).

The groups live in the extras section ``"hypothesis_groups"``::

    {"groups": [{"name": "mechanical", "members": ["bearing wear", "seal leak"],
                 "note": "..."}, ...]}

validated here on every edit and on load, and kept in step when hypotheses
are renamed, removed, added (``extra_values={"hypothesis_groups": group}``)
or split (the parts stay in the group).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

from .._checks import check_name, check_text
from ..errors import CaseError
from .extras import Section, register_section

if TYPE_CHECKING:
    from .model import Case

HYPOTHESIS_GROUPS = "hypothesis_groups"


def validate_groups(value: Any, case: Case) -> dict[str, Any]:
    """Check the ``hypothesis_groups`` section: each group names existing hypotheses, no
    hypothesis is in two groups, and no group is named like a hypothesis."""
    if not isinstance(value, Mapping) or set(value) - {"groups"}:
        raise CaseError(f"extras section '{HYPOTHESIS_GROUPS}' must be an object with one field "
                        "'groups' (a list of {name, members, note})")
    groups = value.get("groups", [])
    if not isinstance(groups, list):
        raise CaseError(f"'groups' of extras section '{HYPOTHESIS_GROUPS}' must be a list")
    hyps = set(case.hypothesis_names)
    seen: dict[str, str] = {}
    names: set[str] = set()
    out = []
    for i, g in enumerate(groups):
        what = f"hypothesis group #{i + 1}"
        if not isinstance(g, Mapping) or set(g) - {"name", "members", "note"}:
            raise CaseError(f"{what} must be an object with fields name, members, note")
        try:
            name = check_name("hypothesis group", g.get("name"))
            note = check_text(f"note of hypothesis group '{name}'", g.get("note", ""))
        except TypeError as exc:
            raise CaseError(str(exc)) from None
        if name in names:
            raise CaseError(f"hypothesis group '{name}' is given twice; group names are unique")
        if name in hyps:
            raise CaseError(f"hypothesis group '{name}' has the name of a hypothesis; a group "
                            "and a hypothesis are read side by side, so choose another name")
        names.add(name)
        members = g.get("members")
        if not isinstance(members, list) or not members:
            raise CaseError(f"hypothesis group '{name}' needs a non-empty list of members")
        for m in members:
            if m not in hyps:
                raise CaseError(f"hypothesis group '{name}' names {m!r:.60}, which is not a "
                                f"hypothesis of the case; the hypotheses are "
                                f"{case.hypothesis_names[:12]}")
            if m in seen:
                raise CaseError(f"hypothesis '{m}' is in groups '{seen[m]}' and '{name}'; a "
                                "hypothesis belongs to one group at most (groups are a "
                                "partition, so their probabilities add up)")
            seen[m] = name
        if len(set(members)) != len(members):
            raise CaseError(f"hypothesis group '{name}' lists a member twice: {members}")
        out.append({"name": name, "members": list(members), "note": note})
    return {"groups": out}


def groups_hypotheses_changed(value: Any, case: Case, renamed: Mapping[str, str | None],
                              added: Mapping[str, Any]) -> dict[str, Any] | None:
    """Keep the groups in step: renamed members follow, removed ones leave (a group left
    empty goes), new hypotheses join the group named in their extra values."""
    groups = []
    for g in value["groups"]:
        members = [renamed.get(m, m) for m in g["members"]]
        members = [m for m in members if m is not None]
        groups.append({**g, "members": members})
    by_name = {g["name"]: g for g in groups}
    for h, given in added.items():
        target = given.get(HYPOTHESIS_GROUPS) if isinstance(given, Mapping) else None
        if target is None:
            continue
        if target not in by_name:
            raise CaseError(f"new hypothesis '{h}' is to join hypothesis group {target!r:.60}, "
                            f"which the case does not have; its groups are {list(by_name)}")
        by_name[target]["members"].append(h)
    groups = [g for g in groups if g["members"]]
    return validate_groups({"groups": groups}, case) if groups else None


def group_members(case: Case) -> dict[str, tuple[str, ...]]:
    """Group name -> its members, in the order the groups were made."""
    sec = case.extras.get(HYPOTHESIS_GROUPS)
    if not sec:
        return {}
    return {g["name"]: tuple(g["members"]) for g in sec["groups"]}


register_section(Section(HYPOTHESIS_GROUPS, validate_groups, groups_hypotheses_changed))

__all__ = ["HYPOTHESIS_GROUPS", "validate_groups", "groups_hypotheses_changed", "group_members"]

"""Reading what an analyst types: hypothesis tables, likelihood tables, joint tables.

Each parser accepts the forms people keep their numbers in (dicts, lists,
Series, DataFrames, CSV files) and returns plain arrays and members, or
raises an error naming the item, the value and the fix.
"""

from __future__ import annotations

import itertools
import math
import re
from collections.abc import Callable, Iterable, Mapping
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from .._checks import check_keys, check_name, check_number, check_probability, check_text
from ..errors import CaseError, CaseTypeError
from .members import Evidence, Hypothesis, Source

CATCH_ALL_RE = re.compile(
    r"^\s*(other\b|others\b|catch[- ]?all|unknown\b|none of the above|something else|unexplained)",
    re.IGNORECASE,
)



def is_catch_all_name(name: str) -> bool:
    return bool(CATCH_ALL_RE.match(name))



def per_hypothesis(what: str, value: Any, hyps: tuple[str, ...]) -> np.ndarray:
    """One finite number per hypothesis from a number or a mapping hypothesis -> number."""
    if isinstance(value, pd.Series):
        value = value.to_dict()
    if isinstance(value, Mapping):
        check_keys(what, value, hyps, kind="values")
        raw = [value[h] for h in hyps]
    else:
        raw = [value] * len(hyps)
    return np.array([check_number(f"{what} under '{h}'", v)
                     for h, v in zip(hyps, raw, strict=True)])


def joint_order(members: list[Evidence]) -> str:
    """How the combined states of a joint table are ordered, in words (for every message)."""
    names = [m.name for m in members]
    return (f"combined states are tuples of the states of {names} in that order, the last "
            f"item's state varying fastest (e.g. {tuple(m.states[0] for m in members)} first)")


def _frame_columns(name: str, frame: pd.DataFrame, members: list[Evidence]) -> dict[str, Any]:
    """hypothesis -> {combined state tuple: value} from a frame whose rows are the combined
    states: a MultiIndex named after the members (in any order) or in member order."""
    names = [m.name for m in members]
    index = frame.index
    if isinstance(index, pd.MultiIndex):
        levels = list(index.names)
        if set(levels) == set(names) and levels != names:
            frame = frame.reorder_levels(names)
            index = frame.index
        elif any(lv is not None for lv in levels) and levels != names:
            raise CaseError(f"joint table of group '{name}' is indexed by {levels}; name the "
                            f"index levels after the group's items {names} (or leave them "
                            f"unnamed, in that order); {joint_order(members)}")
        if index.nlevels != len(names):
            raise CaseError(f"joint table of group '{name}' has {index.nlevels} index levels "
                            f"for {len(names)} items; {joint_order(members)}")
    rows = [tuple(r) if isinstance(r, tuple) else (r,) for r in index]
    return {str(c): {r: frame[c].iloc[i] for i, r in enumerate(rows)} for c in frame.columns}


def parse_joint(name: str, spec: Any, members: list[Evidence],
                hyps: tuple[str, ...]) -> np.ndarray:
    """A joint table (combined states row-major x hypotheses) from a DataFrame or mapping.

    A DataFrame's rows are the combined states: best a MultiIndex whose levels
    are named after the members (any order; they are put in member order); a
    mapping gives hypothesis -> {tuple of states: p} or hypothesis -> a flat
    list in member order, the last member's state varying fastest.
    """
    combos = list(itertools.product(*[m.states for m in members]))
    if len(combos) > 100_000:
        raise CaseError(f"joint group '{name}' would have {len(combos):,} combined states; "
                        "join fewer items")
    pos = {c: i for i, c in enumerate(combos)}
    order = joint_order(members)
    if isinstance(spec, pd.DataFrame):
        spec = _frame_columns(name, spec, members)
    if not isinstance(spec, Mapping):
        raise CaseTypeError(f"joint table of group '{name}' must be a DataFrame or a mapping "
                            f"hypothesis -> values, got {type(spec).__name__}")
    check_keys(f"joint group '{name}'", spec, hyps, kind="joint table")
    out = np.empty((len(combos), len(hyps)))
    for j, h in enumerate(hyps):
        col = spec[h]
        if isinstance(col, pd.Series):
            col = {tuple(k) if isinstance(k, tuple) else (k,): v for k, v in col.items()}
        if isinstance(col, Mapping):
            keys = [tuple(k) if isinstance(k, list | tuple) else (k,) for k in col]
            miss = [c for c in combos if c not in keys]
            extra = [k for k in keys if k not in pos]
            if miss or extra:
                raise CaseError(f"joint table of group '{name}' under '{h}': missing combined "
                                f"state(s) {miss[:4]}, unknown {extra[:4]}; {order}")
            vals = [0.0] * len(combos)
            for k, v in zip(keys, col.values(), strict=True):
                vals[pos[k]] = v
        elif isinstance(col, list | tuple | np.ndarray):
            vals = list(col)
            if len(vals) != len(combos):
                raise CaseError(f"joint table of group '{name}' under '{h}' has {len(vals)} "
                                f"values for {len(combos)} combined states; {order}")
        else:
            raise CaseTypeError(f"joint table of group '{name}' under '{h}' must be a list or "
                                f"a mapping, got {type(col).__name__}; {order}")
        for i, v in enumerate(vals):
            out[i, j] = check_probability(
                f"joint likelihood of {combos[i]} in group '{name}' under '{h}'", v)
    return out


def parse_hypotheses(spec: Any, default_source: Source) -> list[Hypothesis]:
    rows: list[dict[str, Any]] = []
    if isinstance(spec, pd.DataFrame):
        frame = spec
        if "name" not in frame.columns:
            frame = frame.reset_index().rename(columns={frame.index.name or "index": "name"})
        if "prior" not in frame.columns:
            raise CaseError(f"hypothesis table needs a 'prior' column; it has {list(spec.columns)}")
        src_cols = [c for c in ("where", "who", "when", "why") if c in frame.columns]
        for rec in frame.to_dict(orient="records"):
            row = {k: rec[k] for k in ("name", "prior", "description", "catch_all") if k in rec}
            if "description" in row and (row["description"] is None or
                                         (isinstance(row["description"], float)
                                          and math.isnan(row["description"]))):
                row["description"] = ""
            if "catch_all" in row and not isinstance(row["catch_all"], bool | np.bool_):
                v = row["catch_all"]
                row["catch_all"] = (None if v is None or (isinstance(v, float) and math.isnan(v))
                                    else str(v).strip().lower() in ("1", "true", "yes", "y"))
            if src_cols:
                row["source"] = {c: ("" if rec[c] is None or (isinstance(rec[c], float) and
                                                           math.isnan(rec[c])) else str(rec[c]))
                                 for c in src_cols}
            rows.append(row)
    elif isinstance(spec, pd.Series):
        rows = [{"name": k, "prior": v} for k, v in spec.items()]
    elif isinstance(spec, Mapping):
        for k, v in spec.items():
            if isinstance(v, Mapping):
                if "name" in v and v["name"] != k:
                    raise CaseError(f"hypothesis key {k!r} and its 'name' {v['name']!r} differ")
                rows.append({"name": k, **{kk: vv for kk, vv in v.items() if kk != "name"}})
            elif isinstance(v, Hypothesis):
                rows.append({"name": k, "prior": v.prior, "description": v.description,
                             "source": v.source, "catch_all": v.catch_all})
            else:
                rows.append({"name": k, "prior": v})
    elif isinstance(spec, list | tuple):
        for item in spec:
            if isinstance(item, Hypothesis):
                rows.append({"name": item.name, "prior": item.prior,
                             "description": item.description, "source": item.source,
                             "catch_all": item.catch_all})
            elif isinstance(item, Mapping):
                rows.append(dict(item))
            else:
                raise CaseTypeError("each hypothesis in a list must be a Hypothesis or a dict "
                                    f"with 'name' and 'prior', got {type(item).__name__}")
    else:
        raise CaseTypeError(
            "hypotheses must be a dict of name -> prior, a list of dicts, a Series or a "
            f"DataFrame, got {type(spec).__name__}")
    if not rows:
        raise CaseError("the hypothesis set is empty; give at least two mutually exclusive "
                        "hypotheses (and usually an 'Other cause' catch-all)")
    allowed = {"name", "prior", "description", "source", "catch_all"}
    out: list[Hypothesis] = []
    seen: set[str] = set()
    for row in rows:
        unknown = set(row) - allowed
        if unknown:
            raise CaseError(f"hypothesis {row.get('name')!r} has unknown field(s) "
                            f"{sorted(map(str, unknown))}; use only {sorted(allowed)}")
        if "name" not in row:
            raise CaseError(f"a hypothesis has no 'name': {row!r:.120}")
        name = check_name("hypothesis", row["name"])
        if name in seen:
            raise CaseError(f"hypothesis '{name}' appears twice; hypothesis names must be unique")
        seen.add(name)
        if "prior" not in row:
            raise CaseError(f"hypothesis '{name}' has no prior; give 'prior': a number in [0, 1]")
        prior = check_probability(f"prior of hypothesis '{name}'", row["prior"])
        src = row.get("source")
        src = default_source if src is None else Source.coerce(src, what=f"source of prior '{name}'")
        ca = row.get("catch_all")
        out.append(Hypothesis(
            name=name, prior=prior,
            description=check_text(f"description of '{name}'", row.get("description", "")),
            source=src,
            catch_all=is_catch_all_name(name) if ca is None else bool(ca),
        ))
    return out


def parse_table(name: str, spec: Any, states: Iterable[str] | None,
                 hyps: tuple[str, ...]) -> tuple[tuple[str, ...], np.ndarray]:
    if isinstance(spec, str | Path):
        try:
            spec = pd.read_csv(spec, index_col=0)
        except (OSError, UnicodeDecodeError, pd.errors.ParserError, ValueError) as exc:
            raise CaseError(f"cannot read likelihood CSV {str(spec)!r} for evidence '{name}': "
                            f"{exc}") from exc
        spec.index = spec.index.map(str)
    if isinstance(spec, pd.DataFrame):
        st_from_frame = tuple(str(s) for s in spec.index)
        if states is not None:
            st = tuple(states)
            if set(st) != set(st_from_frame):
                raise CaseError(f"likelihood table of evidence '{name}' has rows "
                                f"{list(st_from_frame)} but states {list(st)} were given")
            spec = spec.loc[list(st)]
        else:
            st = st_from_frame
        states = st
        spec = {str(c): [spec[c].iloc[i] for i in range(len(st))] for c in spec.columns}
    if not isinstance(spec, Mapping):
        raise CaseTypeError(f"likelihoods of evidence '{name}' must be a dict hypothesis -> "
                            f"list over states, a DataFrame or a CSV path, got {type(spec).__name__}")
    check_keys(f"evidence '{name}'", spec, hyps)
    if states is None:
        first = spec[hyps[0]]
        if isinstance(first, Mapping):
            states = list(first)
        else:
            raise CaseError(f"evidence '{name}': pass states=[...] naming the rows of the "
                            "likelihood lists")
    if isinstance(states, str):
        raise CaseTypeError(f"states of evidence '{name}' must be a list of names, not one string")
    st = tuple(check_name(f"state of evidence '{name}'", s) for s in states)
    if len(st) < 1:
        raise CaseError(f"evidence '{name}' has no states; give at least two")
    if len(set(st)) != len(st):
        dup = sorted({s for s in st if st.count(s) > 1})
        raise CaseError(f"evidence '{name}' lists state(s) {dup} twice; state names must be unique")
    columns = []
    for h in hyps:
        col = spec[h]
        if isinstance(col, Mapping):
            miss = [s for s in st if s not in col]
            extra = [s for s in col if s not in st]
            if miss or extra:
                raise CaseError(f"likelihoods of evidence '{name}' for hypothesis '{h}': "
                                f"missing state(s) {miss}, unknown state(s) {extra}; "
                                f"the states are {list(st)}")
            vals = [col[s] for s in st]
        elif isinstance(col, list | tuple | np.ndarray | pd.Series):
            vals = list(col)
            if len(vals) != len(st):
                raise CaseError(f"likelihoods of evidence '{name}' for hypothesis '{h}' have "
                                f"{len(vals)} values but there are {len(st)} states {list(st)}")
        else:
            raise CaseTypeError(f"likelihoods of evidence '{name}' for hypothesis '{h}' must be a "
                                f"list over the states or a dict state -> p, got "
                                f"{type(col).__name__}")
        columns.append(vals)
    table = probability_table(
        columns, lambda i, j: (f"likelihood of state '{st[i]}' of evidence '{name}' under "
                               f"hypothesis '{hyps[j]}'"))
    return st, table


def probability_table(columns: list[list[Any]], describe: Callable[[int, int], str]) -> np.ndarray:
    """Check a table given as columns of values and return it as states x hypotheses.

    Plain numbers are checked in one vectorised pass; anything else (strings,
    booleans, objects) goes through :func:`check_probability` entry by entry,
    so the error names the first bad entry either way.
    """
    try:
        arr = np.asarray(columns)
    except (ValueError, TypeError):
        arr = None
    if (arr is not None and arr.ndim == 2 and arr.dtype.kind in "fiu"
            and not any(isinstance(v, bool | np.bool_) for col in columns for v in col)):
        with np.errstate(invalid="ignore"):
            a = arr.astype(float)
            ok = np.isfinite(a) & (a >= 0) & (a <= 1)
        if ok.all():
            return np.ascontiguousarray(a.T)
    n_states = len(columns[0]) if columns else 0
    table = np.empty((n_states, len(columns)))
    for j, vals in enumerate(columns):
        for i, v in enumerate(vals):
            if isinstance(v, np.generic):
                v = v.item()
            table[i, j] = check_probability(describe(i, j), v)
    return table


def parse_column(ev: Evidence, hyp: str, value: Any) -> np.ndarray:
    what = f"likelihoods of evidence '{ev.name}' for hypothesis '{hyp}'"
    if ev.likelihood_evidence and not isinstance(value, list | tuple | Mapping | np.ndarray):
        return np.array([check_probability(what, value)])
    if isinstance(value, pd.Series):
        value = value.to_dict()
    if isinstance(value, Mapping):
        miss = [s for s in ev.states if s not in value]
        extra = [s for s in value if s not in ev.states]
        if miss or extra:
            raise CaseError(f"{what}: missing state(s) {miss}, unknown state(s) {extra}; the "
                            f"states are {list(ev.states)}")
        vals = [value[s] for s in ev.states]
    elif isinstance(value, list | tuple | np.ndarray):
        vals = list(value)
        if len(vals) != len(ev.states):
            raise CaseError(f"{what} have {len(vals)} values but there are {len(ev.states)} states "
                            f"{list(ev.states)}")
    else:
        raise CaseTypeError(f"{what} must be a list over the states or a dict state -> p, got "
                            f"{type(value).__name__}")
    return np.array([check_probability(f"{what}, state '{s}'",
                                        v.item() if isinstance(v, np.generic) else v)
                     for s, v in zip(ev.states, vals, strict=True)])


__all__ = ["parse_hypotheses", "parse_table", "probability_table", "parse_column", "parse_joint",
           "per_hypothesis", "joint_order", "is_catch_all_name", "CATCH_ALL_RE"]

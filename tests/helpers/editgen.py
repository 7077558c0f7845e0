"""Editing calls, valid and broken, drawn against the current state of a case.

``draw_edit(data, case)`` draws one call of a :class:`~beliefledger.Case`
editing method with arguments that are sometimes right (existing names,
probabilities, coherent columns) and often wrong (wrong types, NaN,
infinities, out-of-range numbers, unknown or empty names, unknown states,
huge strings, deep nesting, missing or extra keys). It returns a label, a
zero-argument callable and the words an error message may use to name the
field.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np
from hypothesis import strategies as st

from beliefledger.case import Case
from helpers.casegen import distributions, names, sources, texts

BAD_NUMBERS = [math.nan, math.inf, -math.inf, -0.1, 1.5, 2, -1e-300, 1 + 1e-12, "0.5", None, True,
               [0.5], {"p": 0.5}, 10**400, np.float64(math.nan), np.float32(0.5), 1e308]
BAD_NAMES = [None, 5, 0.5, "", "   ", "\n", ["a"], {"a": 1}, "x" * 300, b"bytes"]
BAD_TEXTS = [5, ["x"], {"x": 1}, "x" * 30_000, b"bytes"]
BAD_SOURCES = [5, ["where"], {"where": 5}, {"zz": "x"}, {"who": "x" * 30_000}, 0.5]


def _deep(n: int) -> Any:
    v: Any = "x"
    for _ in range(n):
        v = {"k": [v]}
    return v


def one_of_names(existing: list[str]):
    opts = [names, st.sampled_from(BAD_NAMES)]
    if existing:
        opts = [st.sampled_from(existing)] * 3 + opts
    return st.one_of(*opts)


probs = st.one_of(st.floats(0, 1), st.floats(0, 1), st.sampled_from([0.0, 1.0]),
                  st.sampled_from(BAD_NUMBERS))
maybe_text = st.one_of(texts, st.sampled_from(BAD_TEXTS))
maybe_source = st.one_of(st.none(), texts, sources(), st.sampled_from(BAD_SOURCES))


@st.composite
def columns(draw, states: tuple[str, ...]):
    """A likelihood column over ``states``: coherent, off, or malformed."""
    n = len(states)
    kind = draw(st.sampled_from(["list", "list", "dict", "off", "bad-value", "length", "type"]))
    col = draw(distributions(n)) if n else []
    if kind == "list":
        return col
    if kind == "dict":
        return dict(zip(states, col, strict=True))
    if kind == "off":
        return [x * draw(st.floats(0.5, 1.5)) for x in col]
    if kind == "bad-value" and n:
        col[draw(st.integers(0, n - 1))] = draw(st.sampled_from(BAD_NUMBERS))
        return col
    if kind == "length":
        return col + [0.0] if draw(st.booleans()) else col[:-1]
    return draw(st.sampled_from([None, "0.5", 0.5, {"no such state": 1.0}, _deep(40)]))


@st.composite
def tables(draw, hyps: list[str], states: tuple[str, ...]):
    table = {h: draw(columns(states)) for h in hyps}
    kind = draw(st.sampled_from(["ok", "ok", "missing", "extra", "type"]))
    if kind == "missing" and table:
        table.pop(draw(st.sampled_from(sorted(table))))
    elif kind == "extra":
        table[draw(names)] = draw(columns(states))
    elif kind == "type":
        return draw(st.sampled_from([None, [0.5, 0.5], "table.csv", 5]))
    return table


@st.composite
def prior_maps(draw, hyps: list[str]):
    vals = draw(distributions(len(hyps))) if hyps else []
    m: Any = dict(zip(hyps, vals, strict=True))
    kind = draw(st.sampled_from(["ok", "ok", "off", "missing", "extra", "bad", "type"]))
    if kind == "off":
        m = {k: v * 0.9 for k, v in m.items()}
    elif kind == "missing" and m:
        m.pop(draw(st.sampled_from(hyps)))
    elif kind == "extra":
        m[draw(names)] = 0.0
    elif kind == "bad" and m:
        m[draw(st.sampled_from(hyps))] = draw(st.sampled_from(BAD_NUMBERS))
    elif kind == "type":
        m = draw(st.sampled_from([None, vals, 0.5, "priors"]))
    return m


def state_list(existing: tuple[str, ...] = ()):
    good = st.lists(names, min_size=1, max_size=4, unique=True).map(tuple)
    bad = st.sampled_from([(), ("a", "a"), ("",), "present", (5, 6), None, ("x" * 300,)])
    return st.one_of(good, good, bad) if not existing else st.one_of(st.just(existing), good, bad)


def _words(*extra: Any) -> set[str]:
    return {x for x in extra if isinstance(x, str) and x}


METHODS = ("set_details", "set_extra", "set_prior", "set_priors", "normalize_priors",
           "set_hypothesis", "add_hypothesis", "remove_hypothesis", "rename_hypothesis",
           "add_evidence", "remove_evidence", "rename_evidence", "set_evidence", "observe",
           "set_likelihood", "set_likelihoods", "add_scenario", "remove_scenario",
           "use_scenario", "add_joint_group", "add_conditional_evidence",
           "observe_uncertain", "observe_report", "split_hypothesis", "group_hypotheses")


def draw_edit(data, case: Case) -> tuple[str, Callable[[], Any], set[str]]:
    """One editing call on ``case`` (see the module docstring)."""
    d = data.draw
    method = d(st.sampled_from(METHODS), label="method")
    hyps = case.hypothesis_names
    evs = case.evidence_names
    h = d(one_of_names(hyps), label="hypothesis")
    e = d(one_of_names(evs), label="evidence")
    ev = case.evidence.get(e) if isinstance(e, str) else None
    ev_states = ev.states if ev is not None else ("a", "b")
    src = d(maybe_source, label="source")
    words = _words(h, e, "hypothesis", "evidence", "source", "where", "who", "when", "why")
    kw: dict[str, Any]

    if method == "set_details":
        field = d(st.sampled_from(["title", "question", "analyst", "notes", "exhaustive",
                                   "safety_related"]))
        value = d(st.one_of(names, maybe_text, st.booleans()))
        kw = {field: value}
        return (f"set_details({field}={value!r:.60})", lambda: case.set_details(**kw),
                {field, "title", "text", "name"})
    if method == "set_extra":
        key = d(st.one_of(names, st.sampled_from(["uncertainty", "decision", *BAD_NAMES])))
        value = d(st.one_of(st.none(), st.dictionaries(names, texts, max_size=2),
                            st.sampled_from([math.nan, [math.inf], _deep(40), {"a": object()},
                                             {1: 2}, "x"]))) if d(st.booleans()) else {}
        return (f"set_extra({key!r:.40}, {value!r:.60})", lambda: case.set_extra(key, value),
                _words(key, "extras", "section"))
    if method == "set_prior":
        p = d(probs)
        reb = d(st.booleans())
        return (f"set_prior({h!r:.40}, {p!r:.30}, rescale={reb})",
                lambda: case.set_prior(h, p, source=src, rescale=reb),
                words | {"prior", "rescale"})
    if method == "set_priors":
        m = d(prior_maps(hyps))
        norm = d(st.booleans())
        return (f"set_priors({m!r:.80}, normalize={norm})",
                lambda: case.set_priors(m, source=src, normalize=norm), words | {"prior"}
                | _words(*(m if isinstance(m, dict) else [])))
    if method == "normalize_priors":
        return "normalize_priors()", case.normalize_priors, {"prior"}
    if method == "set_hypothesis":
        desc = d(st.one_of(st.none(), maybe_text))
        ca = d(st.sampled_from([None, True, False]))
        return (f"set_hypothesis({h!r:.40})",
                lambda: case.set_hypothesis(h, description=desc, source=src, catch_all=ca),
                words | {"description"})
    if method == "add_hypothesis":
        p = d(probs)
        lik: Any = {}
        for name, item in case.evidence.items():
            if item.likelihood_evidence:
                lik[name] = d(probs)
            else:
                lik[name] = d(columns(item.states))
        if d(st.integers(0, 4)) == 0 and lik:
            lik.pop(d(st.sampled_from(sorted(lik))))
        if d(st.integers(0, 6)) == 0:
            lik = d(st.sampled_from([None, 5, ["x"], {"no such item": [1.0]}]))
        scen = None
        if case.scenarios and d(st.booleans()):
            scen = {s: d(probs) for s in case.scenarios}
        if d(st.integers(0, 8)) == 0:
            scen = d(st.sampled_from([["x"], 5, {"no such scenario": 0.1}]))
        mode = d(st.sampled_from(["carve", "carve", "share", "rescale", "neither", "both"]))
        how: dict[str, Any] = {}
        if mode in ("carve", "share", "both"):
            how["take_prior_from"] = d(one_of_names(hyps))
        if mode == "share":
            how["share"] = d(probs)
        if mode in ("rescale", "both"):
            how["rescale"] = d(st.sampled_from([True, True, "yes"]))
        prior = None if mode == "share" else p
        return (f"add_hypothesis({h!r:.40}, {prior!r:.30}, likelihoods={lik!r:.80}, "
                f"scenario_priors={scen!r:.40}, {how!r:.60})",
                lambda: case.add_hypothesis(h, prior, likelihoods=lik, source=src,
                                            scenario_priors=scen, **how),
                words | {"prior", "likelihood", "scenario", "share", "rescale", "carve",
                         "take_prior_from"} | set(evs) | set(case.scenarios)
                | _words(how.get("take_prior_from")))
    if method == "split_hypothesis":
        key = h if isinstance(h, str) else str(h)
        into: Any = {key: d(st.floats(0, 1))}
        into[d(names)] = 1 - into[key]
        if d(st.integers(0, 4)) == 0:
            into = d(st.sampled_from([{}, None, [0.5], {"x": 0.3, "y": 0.3}, {"x": math.nan}]))
        return (f"split_hypothesis({h!r:.40}, {into!r:.60})",
                lambda: case.split_hypothesis(h, into, source=src),
                words | {"split", "share", "prior", "name", "taken"} | _words(
                    *(into if isinstance(into, dict) else [])))
    if method == "group_hypotheses":
        name = d(one_of_names(hyps))
        members = d(st.sampled_from([[h], hyps[:2], [h, h], h, None, ["no such"]]))
        return (f"group_hypotheses({name!r:.40}, {members!r:.60})",
                lambda: case.group_hypotheses(name, members),
                words | _words(name) | {"group", "members", "hypothesis"})
    if method == "remove_hypothesis":
        return f"remove_hypothesis({h!r:.40})", lambda: case.remove_hypothesis(h), words | {
            "prior", "only"} | set(case.scenarios)
    if method == "rename_hypothesis":
        new = d(one_of_names(hyps))
        return (f"rename_hypothesis({h!r:.40}, {new!r:.40})",
                lambda: case.rename_hypothesis(h, new), words | _words(new) | {"name"})
    if method in ("add_evidence", "add_conditional_evidence"):
        name = d(one_of_names(evs))
        states = d(state_list())
        only = d(st.integers(0, 4)) == 0 and method == "add_evidence"
        st_ok = states if isinstance(states, tuple) and states and all(
            isinstance(s, str) for s in states) else ("a", "b")
        observed = d(st.one_of(st.none(), st.sampled_from(st_ok), names,
                               st.sampled_from(BAD_NAMES)))
        tag = d(st.one_of(st.none(), st.sampled_from(["panel", "lab"]), st.sampled_from(BAD_NAMES)))
        norm = d(st.booleans())
        desc = d(maybe_text)
        w = words | _words(name, tag, observed, *st_ok) | {"likelihood", "state", "observed",
                                                           "description", "shared-source",
                                                           "name", "table"}
        if only:
            lik = {hh: d(probs) for hh in hyps}
            if d(st.booleans()):
                lik = d(prior_maps(hyps))
            return (f"add_evidence({name!r:.40}, likelihood_evidence, {lik!r:.80}, observed={observed!r:.30})",
                    lambda: case.add_evidence(name, likelihoods=lik, observed=observed,
                                              likelihood_evidence=True, source=src, description=desc),
                    w)
        if method == "add_conditional_evidence":
            parent = e
            pstates = ev_states
            lik = {ps: d(tables(hyps, st_ok)) for ps in pstates}
            if d(st.integers(0, 4)) == 0:
                lik = d(st.sampled_from([None, [1], {"no such state": {}}]))
            return (f"add_conditional_evidence({name!r:.40}, given={parent!r:.30}, "
                    f"states={states!r:.60})",
                    lambda: case.add_conditional_evidence(name, given=parent, likelihoods=lik,
                                                          states=states, observed=observed,
                                                          source=src, description=desc,
                                                          shared_source=tag),
                    w | _words(parent, *pstates) | {"given", "parent"})
        lik = d(tables(hyps, st_ok))
        return (f"add_evidence({name!r:.40}, states={states!r:.60}, likelihoods={lik!r:.100}, "
                f"observed={observed!r:.30}, normalize={norm})",
                lambda: case.add_evidence(name, likelihoods=lik, states=states, observed=observed,
                                          source=src, description=desc, shared_source=tag,
                                          normalize=norm),
                w)
    if method == "remove_evidence":
        return f"remove_evidence({e!r:.40})", lambda: case.remove_evidence(e), words | {
            "group", "given", "depend"}
    if method == "rename_evidence":
        new = d(one_of_names(evs))
        return (f"rename_evidence({e!r:.40}, {new!r:.40})", lambda: case.rename_evidence(e, new),
                words | _words(new) | {"name"})
    if method == "set_evidence":
        desc = d(st.one_of(st.none(), maybe_text))
        tag = d(st.one_of(st.just(False), st.none(), st.sampled_from(["panel", *BAD_NAMES])))
        return (f"set_evidence({e!r:.40}, shared_source={tag!r:.30})",
                lambda: case.set_evidence(e, description=desc, source=src, shared_source=tag),
                words | {"description", "shared-source"})
    if method == "observe":
        state = d(st.one_of(st.none(), st.sampled_from(ev_states), names,
                            st.sampled_from(BAD_NAMES)))
        return (f"observe({e!r:.40}, {state!r:.40})", lambda: case.observe(e, state),
                words | _words(state) | {"observed", "state"})
    if method == "observe_uncertain":
        form = d(st.sampled_from(["likelihood", "probability"]))
        vals = d(distributions(len(ev_states))) if ev_states else []
        w: Any = dict(zip(ev_states, vals, strict=True))
        kind = d(st.sampled_from(["ok", "ok", "scaled", "zero", "bad", "missing", "extra",
                                  "type"]))
        if kind == "scaled":
            w = {k: v * d(st.floats(0.1, 10)) for k, v in w.items()}
        elif kind == "zero":
            w = {k: 0.0 for k in w}
        elif kind == "bad" and w:
            w[d(st.sampled_from(list(w)))] = d(st.sampled_from(BAD_NUMBERS))
        elif kind == "missing" and w:
            w.pop(d(st.sampled_from(list(w))))
        elif kind == "extra":
            w[d(names)] = 0.1
        elif kind == "type":
            w = d(st.sampled_from([None, [0.5, 0.5], 0.5, "weights"]))
        return (f"observe({e!r:.40}, {form}={w!r:.80})",
                lambda: case.observe(e, **{form: w}, source=src),
                words | _words(*ev_states) | {"weight", "probabilit", "state", "likelihood",
                                              "observation", "depend", "sum"})
    if method == "observe_report":
        rep = d(st.one_of(st.sampled_from(ev_states), names, st.sampled_from(BAD_NAMES)))
        rel = d(probs)
        return (f"observe_report({e!r:.40}, {rep!r:.40}, {rel!r:.30})",
                lambda: case.observe_report(e, rep, rel, source=src),
                words | _words(rep, *ev_states) | {"report", "reliability", "state",
                                                   "likelihood", "depend"})
    if method == "set_likelihood":
        use_state = d(st.booleans())
        if use_state:
            state = d(st.one_of(st.sampled_from(ev_states), names, st.sampled_from(BAD_NAMES)))
            value = d(probs)
            return (f"set_likelihood({e!r:.40}, {h!r:.40}, {value!r:.30}, state={state!r:.30})",
                    lambda: case.set_likelihood(e, h, value, state=state, source=src),
                    words | _words(state) | {"likelihood", "state"})
        value = d(st.one_of(columns(ev_states), probs))
        norm = d(st.booleans())
        return (f"set_likelihood({e!r:.40}, {h!r:.40}, {value!r:.80}, normalize={norm})",
                lambda: case.set_likelihood(e, h, value, source=src, normalize=norm),
                words | {"likelihood", "state"})
    if method == "set_likelihoods":
        lik = d(tables(hyps, ev_states)) if ev is None or not ev.likelihood_evidence else {
            hh: d(probs) for hh in hyps}
        norm = d(st.booleans())
        return (f"set_likelihoods({e!r:.40}, {lik!r:.100}, normalize={norm})",
                lambda: case.set_likelihoods(e, lik, source=src, normalize=norm),
                words | _words(*ev_states) | {"likelihood", "state", "table"})
    if method == "add_scenario":
        scen = list(case.scenarios)
        name = d(st.one_of(one_of_names(scen), st.just("base")))
        m = d(prior_maps(hyps))
        norm = d(st.booleans())
        rep = d(st.booleans())
        note = d(maybe_text)
        return (f"add_scenario({name!r:.40}, {m!r:.80}, normalize={norm}, replace={rep})",
                lambda: case.add_scenario(name, m, source=src, note=note, normalize=norm,
                                          replace_existing=rep),
                words | _words(name) | {"scenario", "prior", "note"}
                | _words(*(m if isinstance(m, dict) else [])))
    if method in ("remove_scenario", "use_scenario"):
        name = d(st.one_of(one_of_names(list(case.scenarios)), st.just("base"), st.none()))
        fn = getattr(case, method)
        return f"{method}({name!r:.40})", lambda: fn(name), _words(name) | {"scenario"}
    if method == "add_joint_group":
        name = d(one_of_names(evs))
        e2 = d(one_of_names(evs))
        members = d(st.sampled_from([[e, e2], [e], [e, e], (e, e2), e, None]))
        how = d(st.sampled_from(["covariance", "correlation"]))
        value = d(st.one_of(st.floats(-0.3, 0.3), st.floats(-1, 1),
                            st.sampled_from(BAD_NUMBERS)))
        return (f"add_joint_group({name!r:.40}, {members!r:.60}, {how}={value!r:.30})",
                lambda: case.add_joint_group(name, members, **{how: value}, source=src),
                words | _words(name, e2) | {how, "joint group", "members", "state"})
    raise AssertionError(method)

"""Generators of case files, valid and broken, for the fuzz tests.

``case_dicts()`` is a Hypothesis strategy for valid ``case`` objects (the
``"case"`` member of a case file); ``mutated_files()`` draws a valid file and
breaks it in one to three places, returning the text (or bytes) to load and
the words an error message may use to name what was broken. ``break_text``
applies byte-level damage (truncation, inserted garbage) with a seeded
``random.Random``. All names and numbers are invented test data.
"""

from __future__ import annotations

import functools
import json
import math
import random
from dataclasses import dataclass, field
from typing import Any

from hypothesis import strategies as st

# Text that must stay inert wherever it lands: markup, quotes, template
# syntax, terminal escapes, bidi overrides, line separators.
HOSTILE = [
    "<script>alert(1)</script>",
    "<img src=x onerror=alert(1)>",
    '"><svg onload=alert(1)>',
    "' onmouseover='alert(1)",
    "</td></tr></table><iframe src=javascript:alert(1)>",
    "&lt;b&gt;already escaped&lt;/b&gt;",
    "{{7*7}} ${alert(1)} <%= 7 %>",
    "\u202eevil\u202c right-to-left",
    "\x1b[2J\x1b[31mred\x1b[0m",
    "line\u2028sep\u2029para",
    "tab\tnew\nline",
    "zero\u200bwidth\ufeffbom",
    "nul\x00byte",
    "a.b[0]['c']",
    "datum.x || alert(1)",
    "\\u0041 backslash",
    "емкость 容器 🧪",
]

_CHARS = st.characters(exclude_categories=("Cs",))  # any code point JSON can hold


def _clean_name(s: str) -> bool:
    return bool(s) and s == s.strip() and len(s) <= 200


names = st.one_of(
    st.text(_CHARS, min_size=1, max_size=12).filter(_clean_name),
    st.sampled_from([h.strip() for h in HOSTILE]),
    st.from_regex(r"[A-Za-z][A-Za-z0-9 _-]{0,10}[A-Za-z0-9]", fullmatch=True),
)
texts = st.one_of(st.just(""), st.text(_CHARS, max_size=40), st.sampled_from(HOSTILE))


@functools.cache
def _unique(n_min: int, n_max: int, exclude: tuple[str, ...] = ()):
    # strategies are built once and reused: building them is most of the cost
    pool = names.filter(lambda s: s not in exclude) if exclude else names
    return st.lists(pool, min_size=n_min, max_size=n_max, unique=True)


_SOURCE_KEYS = st.lists(st.sampled_from(["where", "who", "when", "why"]), unique=True)


@st.composite
def _sources(draw) -> dict[str, str]:
    return {k: draw(texts) for k in draw(_SOURCE_KEYS)}


_SOURCES = _sources()


def sources():
    """A Source as a dict with some of where/who/when/why."""
    return _SOURCES


_WEIGHT = st.one_of(st.floats(0.0, 1.0), st.sampled_from([0.0, 1e-300, 1.0]))


@functools.cache
def _weights(n: int):
    return st.lists(_WEIGHT, min_size=n, max_size=n)


def _normalized(w: list[float]) -> list[float]:
    if sum(w) <= 0:
        w = [1.0] + w[1:]
    total = math.fsum(w)
    return [x / total for x in w]


@functools.cache
def distributions(n: int):
    """``n`` non-negative numbers summing to 1 (some exact zeros)."""
    return _weights(n).map(_normalized)


json_leaf = st.one_of(st.none(), st.booleans(), st.integers(-10**6, 10**6),
                      st.floats(allow_nan=False, allow_infinity=False), texts)
json_values = st.recursive(json_leaf, lambda inner: st.one_of(
    st.lists(inner, max_size=3), st.dictionaries(names, inner, max_size=3)), max_leaves=8)

_PROB = st.floats(0, 1)
_SMALL = st.integers(0, 3)
_ASSUMPTIONS = st.lists(st.fixed_dictionaries({"kind": texts, "target": texts, "detail": texts}),
                        max_size=2)

# extras keys owned by analysis modules carry their own schemas; keep generated
# sections out of their way
RESERVED_EXTRAS = ("uncertainty", "decision")


_EXTRAS = st.dictionaries(names.filter(lambda s: s not in RESERVED_EXTRAS), json_values,
                          max_size=2)


_FILE_NAMES = names.filter(lambda s: "/" not in s and "\\" not in s and s not in (".", ".."))
_ARTEFACT = st.fixed_dictionaries(
    {"name": _FILE_NAMES, "size": st.integers(0, 2**40),
     "sha256": st.text("0123456789abcdef", min_size=64, max_size=64), "who": texts,
     "when": st.datetimes().map(lambda t: t.replace(microsecond=0).isoformat() + "Z")},
    optional={"note": texts, "copy": texts})


@st.composite
def case_dicts(draw, max_hypotheses: int = 6, max_evidence: int = 5,
               max_scenarios: int = 2) -> dict[str, Any]:
    """A valid case object as :meth:`Case.to_dict` writes it (invented test data)."""
    hyp = draw(_unique(1, max_hypotheses))
    priors = draw(distributions(len(hyp)))
    d: dict[str, Any] = {"title": draw(names)}
    for k in ("question", "analyst", "notes"):
        if draw(st.booleans()):
            d[k] = draw(texts)
    for k in ("exhaustive", "safety_related"):
        if draw(st.booleans()):
            d[k] = draw(st.booleans())
    hyps = []
    for name, p in zip(hyp, priors, strict=True):
        h: dict[str, Any] = {"name": name, "prior": p}
        if draw(st.booleans()):
            h["description"] = draw(texts)
        if draw(st.booleans()):
            h["source"] = draw(sources())
        if draw(st.booleans()):
            h["catch_all"] = draw(st.booleans())
        hyps.append(h)
    d["hypotheses"] = hyps
    evidence = []
    for ename in draw(_unique(0, max_evidence)):
        only = draw(st.integers(0, 4)) == 0
        if only:
            states = draw(_unique(1, 1))
            lik = {h: [draw(_PROB)] for h in hyp}
            observed = states[0]
        else:
            states = draw(_unique(1, 4))
            lik = {h: draw(distributions(len(states))) for h in hyp}
            observed = draw(st.one_of(st.none(), st.sampled_from(states)))
        e: dict[str, Any] = {"name": ename, "states": states, "likelihoods": lik,
                             "observed": observed}
        if not only and observed is None and draw(st.integers(0, 2)) == 0:
            form = draw(st.sampled_from(["likelihood", "probability"]))
            w = draw(distributions(len(states)))
            if form == "likelihood":
                w = [x * draw(st.sampled_from([1.0, 3.0, 0.25])) for x in w]
                if max(w) <= 0:
                    w[0] = 1.0
            e["uncertain"] = {"form": form, "weights": dict(zip(states, w, strict=True))}
            if draw(st.booleans()):
                e["uncertain"]["source"] = draw(sources())
        if only or draw(st.booleans()):
            e["likelihood_evidence"] = only
        if draw(st.booleans()):
            e["shared_source"] = draw(st.sampled_from(["panel A", "lab B", "witness"]))
        if draw(st.booleans()):
            e["description"] = draw(texts)
        if draw(st.booleans()):
            e["source"] = draw(sources())
        if draw(st.booleans()):
            pairs = {(states[draw(st.integers(0, len(states) - 1))],
                      hyp[draw(st.integers(0, len(hyp) - 1))]) for _ in range(draw(_SMALL))}
            e["entry_sources"] = [{"state": s, "hypothesis": h, "source": draw(sources())}
                                  for s, h in sorted(pairs)]
        if draw(st.integers(0, 3)) == 0:
            e["artefacts"] = draw(st.lists(_ARTEFACT, min_size=1, max_size=2))
        evidence.append(e)
    if evidence or draw(st.booleans()):
        d["evidence"] = evidence
    scen = []
    for sname in draw(_unique(0, max_scenarios, exclude=("base",))):
        sc: dict[str, Any] = {"name": sname,
                              "priors": dict(zip(hyp, draw(distributions(len(hyp))), strict=True))}
        if draw(st.booleans()):
            sc["source"] = draw(sources())
        if draw(st.booleans()):
            sc["note"] = draw(texts)
        if draw(st.integers(0, 3)) == 0:
            sc["meaning"] = draw(st.sampled_from(["equal", "data"]))
            if sc["meaning"] == "data" and draw(st.booleans()):
                sc["basis"] = list(hyp)
        scen.append(sc)
    if scen or draw(st.booleans()):
        d["scenarios"] = scen
    if scen and draw(st.booleans()):
        d["active_scenario"] = draw(st.sampled_from(["base", *[s["name"] for s in scen]]))
    if draw(st.booleans()):
        d["assumptions"] = draw(_ASSUMPTIONS)
    if draw(st.booleans()):
        d["extras"] = draw(_EXTRAS)
    return d


def file_object(case: dict[str, Any]) -> dict[str, Any]:
    return {"format": "beliefledger-case", "schema_version": 1, "case": case}


# --------------------------------------------------------------------------- mutations

MUTATIONS = ("type", "nan", "range", "delete", "extra", "duplicate", "empty", "unknown-name",
             "deep", "huge", "rename-key", "schema", "format", "truncate", "garbage",
             "long-digits", "not-utf8")

_WRONG_TYPES = [None, True, False, 0, 1, 2, -1, 0.5, "0.5", "text", [], {}, [0.5], {"a": 1},
                [[0.5]]]
_BAD_NUMBERS = [-0.1, -1e-300, 1.0000001, 2, 1e308, -1e308, 10**30, 10**400, -0.0]


@dataclass
class Broken:
    """A broken case file: what to load and the words that name what was broken."""

    data: str | bytes
    kinds: list[str] = field(default_factory=list)
    tokens: set[str] = field(default_factory=set)

    def describe(self) -> str:
        d = self.data
        shown = repr(d) if len(d) < 600 else f"{d[:300]!r} ... {d[-200:]!r}"
        return f"mutations {self.kinds}, tokens {sorted(self.tokens)!r:.300}, input {shown}"


def _paths(obj: Any, max_depth: int = 12) -> list[tuple]:
    """Every place in a JSON tree down to ``max_depth`` (deep nesting is not walked)."""
    out: list[tuple] = []
    stack: list[tuple[tuple, Any]] = [((), obj)]
    while stack:
        prefix, node = stack.pop()
        out.append(prefix)
        if len(prefix) >= max_depth:
            continue
        if isinstance(node, dict):
            stack.extend(((*prefix, k), v) for k, v in node.items())
        elif isinstance(node, list):
            stack.extend(((*prefix, i), v) for i, v in enumerate(node))
    out.sort(key=lambda p: [str(x) for x in p])
    return out


def _get(obj: Any, path: tuple) -> Any:
    for k in path:
        obj = obj[k]
    return obj


def _tokens_for(root: Any, path: tuple) -> set[str]:
    """Words naming the place ``path`` in a case file: its key, its parent's key, and
    the name (or 1-based number) of the nearest item that has a name."""
    tokens: set[str] = set()
    keys = [k for k in path if isinstance(k, str)]
    for k in keys[-2:]:
        tokens.add(k)
    if not keys or keys == ["case"]:
        tokens.add("case")
    # nearest enclosing named item (and any enclosing list index)
    node = root
    named: list[str] = []
    for i, k in enumerate(path):
        node = node[k]
        if isinstance(k, int):
            tokens.add(f"#{k + 1}")
        if isinstance(node, dict) and isinstance(node.get("name"), str) and i < len(path):
            named.append(node["name"])
    if named:
        tokens.add(named[-1])
        if len(named) > 1:
            tokens.add(named[-2])
    # a hypothesis name used as a key (likelihood columns, scenario priors)
    return {t for t in tokens if t}


def _singular(tokens: set[str]) -> set[str]:
    extra = set()
    for t in tokens:
        for plural, one in (("hypotheses", "hypothes"), ("likelihoods", "likelihood"),
                            ("states", "state"), ("scenarios", "scenario"),
                            ("assumptions", "assumption"), ("entry_sources", "entry source"),
                            ("shared_source", "shared-source"), ("active_scenario", "scenario"),
                            ("likelihood_evidence", "observed")):
            if t == plural:
                extra.add(one)
    return tokens | extra


def _deep(depth: int, kind: str) -> Any:
    v: Any = 0.5
    for _ in range(depth):
        v = [v] if kind == "list" else {"k": v}
    return v


@st.composite
def mutated_files(draw) -> Broken:
    """A case file broken in one to three places (sometimes still valid)."""
    root = file_object(draw(case_dicts()))
    kinds = draw(st.lists(st.sampled_from(MUTATIONS), min_size=1, max_size=3))
    tokens: set[str] = set()
    text_damage: list[str] = []
    for kind in kinds:
        if kind in ("truncate", "garbage", "long-digits", "not-utf8"):
            text_damage.append(kind)
            continue
        if kind == "schema":
            root["schema_version"] = draw(st.sampled_from([0, 2, -1, "1", 1.5, True, None,
                                                           10**20, [1]]))
            tokens.add("schema_version")
            continue
        if kind == "format":
            if draw(st.booleans()):
                root.pop("format", None)
            else:
                root["format"] = draw(st.sampled_from(["beliefledger-record", "", 1, None]))
            tokens.add("format")
            continue
        paths = _paths(root)
        path = paths[draw(st.integers(0, len(paths) - 1))]
        parent_path, last = path[:-1], (path[-1] if path else None)
        target = _get(root, path)
        tokens |= _tokens_for(root, path)
        if isinstance(target, dict) and target.get("name") and isinstance(target["name"], str):
            tokens.add(target["name"])
        if isinstance(target, str) and target and parent_path:
            tokens.add(target)  # a state or a name mentioned in the message
        if not path:
            continue  # the root itself: nothing to replace
        parent = _get(root, parent_path)
        if kind == "type":
            parent[last] = draw(st.sampled_from(_WRONG_TYPES))
        elif kind == "nan":
            parent[last] = draw(st.sampled_from([math.nan, math.inf, -math.inf]))
            tokens |= {"NaN", "Infinity", "number", "non-finite"}
        elif kind == "range":
            parent[last] = draw(st.sampled_from(_BAD_NUMBERS))
        elif kind == "delete":
            del parent[last]
        elif kind == "extra":
            if isinstance(target, dict):
                key = draw(st.sampled_from(["zz_extra", "__proto__", "prior ", "Name", "eval"]))
                target[key] = draw(st.sampled_from(_WRONG_TYPES))
                tokens.add(key)
            elif isinstance(target, list):
                target.append(draw(st.sampled_from(_WRONG_TYPES)))
        elif kind == "duplicate":
            if isinstance(parent, list):
                parent.insert(last, json.loads(json.dumps(target)))
        elif kind == "empty":
            parent[last] = draw(st.sampled_from(["", " ", "\t\n", "\u3000"]))
        elif kind == "unknown-name":
            if isinstance(target, str) or target is None:
                parent[last] = "no such " + draw(st.sampled_from(["state", "hypothesis", "item"]))
            elif isinstance(parent, dict):
                parent["no such key"] = parent.pop(last)
                tokens.add("no such key")
        elif kind == "deep":
            depth = draw(st.sampled_from([33, 200, 900, 3000]))
            parent[last] = _deep(depth, draw(st.sampled_from(["list", "dict"])))
            tokens |= {"nested", "deep"}
        elif kind == "huge":
            n = draw(st.sampled_from([201, 20_001, 60_000]))
            parent[last] = draw(st.sampled_from(["x", "<", "\u202e"])) * n
            tokens |= {"characters long", "long"}
        elif kind == "rename-key":
            if isinstance(parent, dict):
                new = draw(names)
                if new not in parent:
                    parent[new] = parent.pop(last)
                    tokens.add(new)
    try:
        indent = None if "deep" in kinds else 1  # indenting deep nesting costs O(depth**2)
        text = json.dumps(root, ensure_ascii=draw(st.booleans()), allow_nan=True, indent=indent)
    except (RecursionError, ValueError):
        # json.dumps itself cannot nest that deep; write the nesting by hand
        text = _dumps_deep(root)
    data: str | bytes = text
    if text_damage:
        # damage to the text can land in any key or name: any of them may be named
        tokens |= all_names(root)
    for kind in text_damage:
        data, t = _damage(data, kind, draw(st.randoms(use_true_random=False)))
        tokens |= t
    return Broken(data, kinds, _singular(tokens))


def all_names(obj: Any) -> set[str]:
    """Every key and string value in a JSON tree (short ones only)."""
    out: set[str] = set()
    stack = [obj]
    while stack:
        x = stack.pop()
        if isinstance(x, dict):
            out.update(k for k in x if len(k) < 200)
            stack.extend(x.values())
        elif isinstance(x, list):
            stack.extend(x)
        elif isinstance(x, str) and x and len(x) < 200:
            out.add(x)
    return out | {"JSON", "UTF-8", "schema_version", "format", "case"}


def _dumps_deep(obj: Any) -> str:
    parts: list[str] = []
    stack: list[Any] = [obj]
    while stack:
        item = stack.pop()
        if isinstance(item, _Raw):
            parts.append(item.text)
        elif isinstance(item, dict):
            stack.append(_Raw("}"))
            for i, (k, v) in reversed(list(enumerate(item.items()))):
                stack.append(v)
                stack.append(_Raw(("," if i else "") + json.dumps(k) + ":"))
            parts.append("{")
        elif isinstance(item, list):
            stack.append(_Raw("]"))
            for i, v in reversed(list(enumerate(item))):
                stack.append(v)
                if i:
                    stack.append(_Raw(","))
            parts.append("[")
        else:
            parts.append(json.dumps(item, allow_nan=True))
    return "".join(parts)


@dataclass
class _Raw:
    text: str


def _damage(data: str | bytes, kind: str, rnd: random.Random) -> tuple[str | bytes, set[str]]:
    if kind == "truncate":
        cut = rnd.randrange(0, max(len(data), 1))
        return data[:cut], {"JSON", "truncat", "format", "object"}
    if kind == "garbage":
        if isinstance(data, bytes):
            data = data.decode("utf-8", "replace") if rnd.random() < 0.5 else data
        pos = rnd.randrange(0, max(len(data), 1))
        junk = rnd.choice(["}", "]", ",", ":", '"', "\\", "//", "#", "\x00", "NaN", "-", "1e999"])
        if isinstance(data, bytes):
            return data[:pos] + junk.encode() + data[pos:], {"JSON", "UTF-8"}
        return data[:pos] + junk + data[pos:], {"JSON"}
    if kind == "long-digits":
        s = data if isinstance(data, str) else data.decode("utf-8", "replace")
        return s.replace('"schema_version": 1', '"schema_version": ' + "1" * 5000, 1), {
            "JSON", "digits", "schema_version", "number"}
    if kind == "not-utf8":
        b = data if isinstance(data, bytes) else data.encode("utf-8")
        pos = rnd.randrange(0, max(len(b), 1))
        return b[:pos] + rnd.choice([b"\xff", b"\xc3", b"\xed\xa0\x80", b"\x80"]) + b[pos:], {
            "UTF-8", "JSON"}
    raise AssertionError(kind)


def break_text(text: str, rnd: random.Random) -> tuple[str | bytes, set[str]]:
    """Byte-level damage to a saved file: cut it, drop or insert characters."""
    kind = rnd.choice(["truncate", "garbage", "not-utf8", "drop", "swap"])
    if kind == "drop":
        i = rnd.randrange(len(text))
        j = min(len(text), i + rnd.randint(1, 40))
        return text[:i] + text[j:], {"JSON"}
    if kind == "swap":
        i = rnd.randrange(len(text))
        return text[:i] + rnd.choice("0123456789.-e\"{}[],:") + text[i + 1:], {"JSON"}
    return _damage(text, kind, rnd)

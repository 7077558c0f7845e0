"""Tamper mutations of signed records: every edit of a review is caught.

A record of the invented conveyor case is signed three times (an Ed25519 sign-off with a
decision, a ticked checklist and comments on a hypothesis, a likelihood cell and a
notebook cell; an unsigned one; a signed rejection), then mutated at random: a digit of
a visible number flipped (in a review cell, the summary or the register), a comment
dropped, edited or re-anchored, two sign-offs swapped, one deleted, a decision or a
checklist outcome changed, any field of a sign-off edited. ``verify`` must report each
one. The count is printed (and kept in tests/artifacts/reliability_counts.json).
"""

from __future__ import annotations

import copy
import json
import random
import re

import pytest

from beliefledger.cli import main
from beliefledger.record.canonical import META_KEY, cell_role
from beliefledger.record.nbio import dumps_notebook
from beliefledger.record.review import sign
from beliefledger.record.verifier import verify_notebook
from helpers import records, report
from helpers.records import leaves

_report = report.reporting_fixture("tamper of reviews")

N_MUTATIONS = report.scaled(1_000, 5_000)


@pytest.fixture(scope="module")
def signed(tmp_path_factory):
    folder = tmp_path_factory.mktemp("signed")
    path = folder / "conveyor.sealed.ipynb"
    path.write_text(records.dumps(records.conveyor_record()), encoding="utf-8")
    comments = folder / "comments.json"
    comments.write_text(json.dumps([
        {"target": "hypothesis:belt slip", "comment": "The 0.45 prior needs the 2025 log too."},
        {"target": "likelihood:thermal tag|tripped|motor overload",
         "comment": "0.8 looks high for this relay model."},
        {"target": "cell:9", "comment": "Print the relay's setting here."}]), encoding="utf-8")
    ticks = folder / "ticks.json"
    ticks.write_text(json.dumps({"exhaustive-set": "yes", "reference-class": "no",
                                 "loss-priorities": "n/a"}), encoding="utf-8")
    main(["keygen", str(folder / "rev")])
    sign(path, "P. Reviewer", decision="conditions", comments=comments, checklist=ticks,
         key=folder / "rev.key", signed_at="2026-12-02T09:00:00Z")
    sign(path, "Q. Second", decision="accept", signed_at="2026-12-02T10:00:00Z")
    sign(path, "R. Third", decision="reject", comment="the fleet rates are not this site's",
         key=folder / "rev.key", signed_at="2026-12-02T11:00:00Z")
    return json.loads(path.read_text(encoding="utf-8"))


def _meta(nb):
    return nb["metadata"][META_KEY]


def _set(obj, path, value):
    for step in path[:-1]:
        obj = obj[step]
    obj[path[-1]] = value


def _flip_digit(text: str, rnd: random.Random) -> str | None:
    spots = [m.start() for m in re.finditer(r"\d", text)]
    if not spots:
        return None
    i = rnd.choice(spots)
    return text[:i] + rnd.choice([d for d in "0123456789" if d != text[i]]) + text[i + 1:]


def _visible_number(nb, rnd, roles):
    cells = [c for c in nb["cells"] if cell_role(c) in roles and c.get("outputs")]
    cell = rnd.choice(cells)
    out = rnd.choice(cell["outputs"])
    if "text/html" not in out.get("data", {}):  # a chart (SVG): flip a digit there instead
        svg = out["data"].get("image/svg+xml")
        if not svg:
            return None
        new = _flip_digit("".join(svg), rnd)
        if new is None:
            return None
        out["data"]["image/svg+xml"] = new
        return f"digit in a {cell_role(cell)} chart"
    html = "".join(out["data"]["text/html"])
    new = _flip_digit(html, rnd)
    if new is None:
        return None
    out["data"]["text/html"] = new
    return f"digit in a {cell_role(cell)} cell"


def _mutate(nb, rnd) -> str | None:
    so = _meta(nb)["signoffs"]
    kind = rnd.choice(["review-digit", "record-digit", "drop-comment", "edit-comment",
                       "re-anchor", "swap", "delete", "decision", "checklist", "leaf",
                       "review-text"])
    if kind == "review-digit":
        return _visible_number(nb, rnd, {"review"})
    if kind == "record-digit":
        return _visible_number(nb, rnd, {"record"})
    if kind == "drop-comment":
        s = so[0]
        s["comments"].pop(rnd.randrange(len(s["comments"])))
        return kind
    if kind == "edit-comment":
        c = rnd.choice(so[0]["comments"])
        c["text"] = c["text"][:-1] + rnd.choice([x for x in "!?.x" if x != c["text"][-1]])
        return kind
    if kind == "re-anchor":
        c = rnd.choice(so[0]["comments"])
        c["target"] = {"kind": "hypothesis", "case": c["target"]["case"], "name": "motor overload"}
        return kind
    if kind == "swap":
        i, j = rnd.sample(range(len(so)), 2)
        so[i], so[j] = so[j], so[i]
        return kind
    if kind == "delete":
        so.pop(rnd.randrange(len(so)))
        return kind
    if kind == "decision":
        s = rnd.choice(so)
        s["decision"] = rnd.choice([d for d in ("accept", "conditions", "reject")
                                    if d != s["decision"]])
        return kind
    if kind == "checklist":
        auto = so[0]["checklist"]["automatic"]
        k = rnd.choice(sorted(auto))
        auto[k] = "pass" if auto[k] != "pass" else "fail"
        return kind
    if kind == "review-text":
        cells = [c for c in nb["cells"] if cell_role(c) == "review"]
        out = rnd.choice(cells)["outputs"][0]["data"]
        html = "".join(out["text/html"])
        i = rnd.randrange(len(html))
        out["text/html"] = html[:i] + html[i + 1:]
        return kind
    found = list(leaves(so))
    path, value = rnd.choice(found)
    if isinstance(value, bool):
        new = not value
    elif isinstance(value, int | float):
        new = value + 1
    elif isinstance(value, str):
        new = value + "x" if not value or rnd.random() < 0.5 else value[:-1]
    else:
        new = "x"
    _set(so, path, new)
    return "leaf " + "/".join(map(str, path[:2]))


def test_the_signed_record_verifies(signed):
    res = verify_notebook(copy.deepcopy(signed), _meta(signed), reproduce_results=False)
    assert res.ok, res.text()
    assert [s.status for s in res.signoffs] == ["valid"] * 3


def test_every_mutation_of_a_signed_record_is_caught(signed, rng):
    rnd = random.Random(int(rng.integers(1 << 30)))
    caught: dict[str, int] = {}
    tried = 0
    while tried < N_MUTATIONS:
        nb = copy.deepcopy(signed)
        what = _mutate(nb, rnd)
        if what is None:
            continue
        tried += 1
        nb = json.loads(dumps_notebook(nb))  # as written to disk
        res = verify_notebook(nb, _meta(nb), reproduce_results=False)
        assert not res.ok, f"mutation {what!r} passed verify"
        caught[what.split()[0]] = caught.get(what.split()[0], 0) + 1
    print(f"\n{tried} mutations of a signed record, all caught: {dict(sorted(caught.items()))}")
    report.add("tamper of reviews", mutations_tried=tried, mutations_caught=tried)

"""Tamper mutations of a sealed record: ``verify`` catches every one and says where.

A record is built once (the record layer's own ``build_record`` on an
executed notebook; no kernel needed), then mutated at random: a digit in a
prior (embedded, displayed or typed), a character in any cell's source or
output, an output removed, cells reordered, removed or added, notebook, cell
or header metadata edited, the manifest edited (a cell digest, the root, the
fingerprint, the visible manifest cell), and a cell edited with its digest
recomputed but the root left alone. The unmutated record still verifies.

Counts: ``make test`` runs 120 mutations; ``make fuzz`` runs 1,200.
"""

from __future__ import annotations

import copy
import json
import random
import re

import pytest

from beliefledger import cli
from beliefledger.case import CASE_MIMETYPE
from beliefledger.errors import RecordError
from beliefledger.record import verify
from beliefledger.record.canonical import META_KEY, cell_digest, cell_role, hashed_cells
from helpers import records, report

_report = report.reporting_fixture("tamper")

N_MUTATIONS = report.scaled(120, 1_200)


@pytest.fixture(scope="module")
def sealed():
    return records.conveyor_record()


def _digit_change(text: str, rnd: random.Random, pattern: str = r"\d") -> str | None:
    spots = [m.start() for m in re.finditer(pattern, text)]
    if not spots:
        return None
    i = rnd.choice(spots)
    new = rnd.choice([d for d in "0123456789" if d != text[i]])
    return text[:i] + new + text[i + 1:]


def _char_change(text: str, rnd: random.Random) -> str:
    i = rnd.randrange(len(text) + 1)
    how = rnd.choice(["replace", "insert", "delete"]) if text else "insert"
    ch = rnd.choice("aZ0 .,;\n<>\u202e")
    if how == "insert" or i >= len(text):
        return text[:i] + ch + text[i:]
    if how == "delete":
        return text[:i] + text[i + 1:]
    return text[:i] + (ch if ch != text[i] else "q") + text[i + 1:]


def _src(cell) -> str:
    s = cell.get("source", "")
    return s if isinstance(s, str) else "".join(s)


def _cell_where(i: int) -> set[str]:
    return {f"cell {i + 1} ", f"cell {i + 1}(", f"sealed cell {i + 1}", "manifest"}


def _hashed(rec):
    return [i for i, _ in hashed_cells(rec["cells"])]


def mutate(rec, rnd: random.Random) -> tuple[str, set[str]]:
    """Apply one random mutation to ``rec`` in place; returns (kind, where-words)."""
    meta = rec["metadata"][META_KEY]
    cells = rec["cells"]
    kind = rnd.choice([
        "prior-embedded", "prior-displayed", "prior-typed", "source-char", "output-removed",
        "output-char", "reorder", "cell-removed", "cell-added", "notebook-metadata",
        "cell-metadata", "header", "manifest-digest", "manifest-root", "manifest-fingerprint",
        "manifest-visible", "rehashed-cell", "sealed-results", "execution-count",
        "case-cell-pointer"])
    entry = meta["cases"][0]
    title = entry["title"]
    if kind == "prior-embedded":
        h = rnd.choice(entry["envelope"]["case"]["hypotheses"])
        h["prior"] = float(_digit_change(repr(h["prior"]), rnd))
        return kind, {f"case {title!r}"}
    if kind == "prior-displayed":
        i = entry["cell"]
        env = next(o["data"][CASE_MIMETYPE] for o in cells[i]["outputs"]
                   if CASE_MIMETYPE in o.get("data", {}))
        h = rnd.choice(env["case"]["hypotheses"])
        h["prior"] = float(_digit_change(repr(h["prior"]), rnd))
        return kind, _cell_where(i) | {f"case {title!r}"}
    if kind == "prior-typed":
        i = next(k for k, c in enumerate(cells) if "0.45" in _src(c) and c["cell_type"] == "code")
        cells[i]["source"] = _src(cells[i]).replace("0.45", _digit_change("0.45", rnd), 1)
        return kind, _cell_where(i)
    if kind in ("source-char", "cell-metadata"):
        i = rnd.choice(_hashed(rec))
        if kind == "source-char":
            cells[i]["source"] = _char_change(_src(cells[i]), rnd)
        else:
            cells[i].setdefault("metadata", {}).setdefault("tags", []).append("edited")
        return kind, _cell_where(i)
    if kind in ("output-removed", "output-char", "execution-count"):
        with_out = [i for i in _hashed(rec) if cells[i].get("outputs")]
        i = rnd.choice(with_out)
        outs = cells[i]["outputs"]
        if kind == "output-removed":
            del outs[rnd.randrange(len(outs))]
        elif kind == "execution-count":
            cells[i]["execution_count"] = (cells[i].get("execution_count") or 0) + rnd.randint(1, 9)
        else:
            o = rnd.choice(outs)
            if "text" in o:
                o["text"] = _char_change("".join(o["text"]) if isinstance(o["text"], list)
                                         else o["text"], rnd)
            else:
                mime = rnd.choice(sorted(k for k, v in o["data"].items()
                                         if isinstance(v, str | list)))
                v = o["data"][mime]
                o["data"][mime] = _char_change("".join(v) if isinstance(v, list) else v, rnd)
        return kind, _cell_where(i)
    if kind == "reorder":
        idx = _hashed(rec)
        a, b = rnd.sample(idx, 2)
        cells[a], cells[b] = cells[b], cells[a]
        return kind, _cell_where(a) | _cell_where(b)
    if kind == "cell-removed":
        i = rnd.choice(_hashed(rec))
        del cells[i]
        return kind, _cell_where(i)
    if kind == "cell-added":
        i = rnd.randrange(len(cells) + 1)
        cells.insert(i, {"cell_type": "markdown", "id": f"new-{i}", "metadata": {},
                         "source": rnd.choice(["Reviewed: fine.", "", "# Appendix"])})
        return kind, _cell_where(i)
    if kind == "notebook-metadata":
        m = rec["metadata"]
        what = rnd.choice(["kernel", "language", "authors", "title"])
        if what == "kernel":
            m["kernelspec"]["display_name"] += " (edited)"
        elif what == "language":
            m["language_info"]["name"] = "python-edited"
        elif what == "authors":
            m["authors"] = [{"name": "someone else"}]
        else:
            m["title"] = "edited title"
        return kind, {"record header", "manifest"}
    if kind == "header":
        hd = meta["header"]
        key = rnd.choice(["sealed_at", "tool_version", "notebook", "environment",
                          "analyst_cells"])
        if key == "environment":
            env = hd["environment"]
            k = rnd.choice(sorted(env))
            env[k] = f"{env[k]}-edited" if not isinstance(env[k], dict | list) else "edited"
        elif key == "analyst_cells":
            hd[key] += 1
        else:
            hd[key] = _char_change(str(hd[key]), rnd) or "x"
        return kind, {"record header", "manifest"}
    man = meta["manifest"]
    if kind == "manifest-digest":
        e = rnd.choice(man["cells"] + man["cases"])
        e["sha256"] = _digit_change(e["sha256"], rnd, r"[0-9a-f]").replace(
            e["sha256"][0], e["sha256"][0], 1)
        return kind, {"manifest", "cell ", "case "}
    if kind == "manifest-root":
        man["root"] = _digit_change(man["root"], rnd, r"[0-9a-f]")
        return kind, {"manifest", "record header"}
    if kind == "manifest-fingerprint":
        man["fingerprint"] = _digit_change(man["fingerprint"], rnd, r"[0-9]") or "0000"
        return kind, {"manifest"}
    if kind == "manifest-visible":
        i = next(k for k, c in enumerate(cells) if cell_role(c) == "manifest")
        c = cells[i]
        if c.get("outputs") and rnd.random() < 0.5:
            o = c["outputs"][0]
            if "text" in o:
                o["text"] = _char_change("".join(o["text"]) if isinstance(o["text"], list)
                                         else o["text"], rnd)
            else:
                mime = sorted(o["data"])[0]
                v = o["data"][mime]
                o["data"][mime] = _char_change("".join(v) if isinstance(v, list) else v, rnd)
        else:
            c["source"] = _char_change(_src(c), rnd)
        return kind, {"manifest"} | _cell_where(i)
    if kind == "rehashed-cell":
        # edit a cell, put its new digest in the manifest and rewrite the visible
        # manifest to match; only the root is left stale
        from beliefledger.record.sections import manifest_cell

        pos = rnd.randrange(len(man["cells"]))
        e = man["cells"][pos]
        c = cells[e["index"]]
        c["source"] = _char_change(_src(c), rnd)
        e["sha256"] = cell_digest(c)
        i = next(k for k, cc in enumerate(cells) if cell_role(cc) == "manifest")
        cells[i] = manifest_cell(man)
        return kind, {"record header", "manifest", "root"} | _cell_where(e["index"])
    if kind == "sealed-results":
        res = entry["results"]
        sc = rnd.choice(sorted(res))
        post = res[sc]["posterior"]
        h = rnd.choice(sorted(post))
        post[h] = float(_digit_change(repr(post[h]), rnd) or 0.5)
        return kind, {f"case {title!r}"}
    if kind == "case-cell-pointer":
        entry["cell"] = entry["cell"] + rnd.choice([-1, 1, 2])
        return kind, {f"case {title!r}"}
    raise AssertionError(kind)


def _verify_text(path):
    try:
        return verify(path), None
    except RecordError as exc:
        return None, exc


@pytest.mark.fuzz
def test_every_mutation_is_caught_and_located(sealed, tmp_path):
    path = tmp_path / "review.sealed.ipynb"
    clean_text = records.dumps(sealed)
    path.write_text(clean_text, encoding="utf-8")
    clean = verify(path)
    assert clean.ok, clean.text()
    rnd = random.Random(20261201)
    caught: dict[str, int] = {}
    for n in range(N_MUTATIONS):
        rec = copy.deepcopy(sealed)
        for _ in range(20):
            try:
                kind, where = mutate(rec, rnd)
            except (ValueError, TypeError, StopIteration):
                rec = copy.deepcopy(sealed)  # the draw did not fit this record; draw again
                continue
            if records.dumps(rec) != clean_text:
                break
            rec = copy.deepcopy(sealed)
        else:
            raise AssertionError("could not draw a mutation")
        path.write_text(records.dumps(rec), encoding="utf-8")
        result, error = _verify_text(path)
        label = f"mutation #{n} ({kind})"
        if error is not None:
            assert str(error), label  # refused as unreadable, with a reason
        else:
            assert not result.ok and not result.intact, f"{label} not caught:\n{result.text()}"
            assert all(p.where for p in result.problems), label
            assert any(w in p.where or w in p.detail for p in result.problems for w in where), (
                f"{label}: no problem names {sorted(where)}:\n{result.text()}")
        caught[kind] = caught.get(kind, 0) + 1
    assert len(caught) >= 18, caught  # every kind was drawn
    report.add("tamper", mutations_tried=N_MUTATIONS, mutations_caught=sum(caught.values()),
               kinds=len(caught))
    # the untouched record still verifies after all that
    path.write_text(clean_text, encoding="utf-8")
    assert verify(path).ok


def test_truncated_or_garbled_records_are_refused(sealed, tmp_path):
    text = records.dumps(sealed)
    rnd = random.Random(7)
    path = tmp_path / "r.ipynb"
    for cut in [0, 1, len(text) // 3, len(text) - 3]:
        path.write_text(text[:cut], encoding="utf-8")
        with pytest.raises(RecordError):
            verify(path)
    for _ in range(10):
        i = rnd.randrange(len(text))
        path.write_text(text[:i] + "\x00}{" + text[i:], encoding="utf-8")
        result, error = _verify_text(path)
        assert error is not None or not result.ok
    report.add("tamper", mutations_tried=14, mutations_caught=14)


def test_cli_verify_exit_codes(sealed, tmp_path, capsys):
    path = tmp_path / "r.ipynb"
    path.write_text(records.dumps(sealed), encoding="utf-8")
    assert cli.main(["verify", str(path)]) == 0
    rec = copy.deepcopy(sealed)
    rec["metadata"][META_KEY]["cases"][0]["envelope"]["case"]["hypotheses"][0]["prior"] = 0.46
    path.write_text(records.dumps(rec), encoding="utf-8")
    assert cli.main(["verify", str(path)]) == 1
    out = capsys.readouterr().out
    assert "NOT INTACT" in out and "Conveyor stoppage" in out
    path.write_text("{not json", encoding="utf-8")
    assert cli.main(["verify", str(path)]) == 2


def test_a_case_edited_consistently_everywhere_is_still_caught(sealed, tmp_path):
    """Edit a prior in the typed source, the displayed case and the embedded copy
    together: the cells' digests and the case digest no longer match."""
    rec = copy.deepcopy(sealed)
    meta = rec["metadata"][META_KEY]
    entry = meta["cases"][0]
    for env in [entry["envelope"]] + [o["data"][CASE_MIMETYPE]
                                      for o in rec["cells"][entry["cell"]]["outputs"]
                                      if CASE_MIMETYPE in o.get("data", {})]:
        env["case"]["hypotheses"][0]["prior"] = 0.55
        env["case"]["hypotheses"][1]["prior"] = 0.25
    path = tmp_path / "r.ipynb"
    path.write_text(json.dumps(rec), encoding="utf-8")
    result = verify(path)
    assert not result.ok
    kinds = {p.code for p in result.problems}
    assert "case-changed" in kinds and "cell-changed" in kinds, result.text()
    assert "results-differ" in kinds or "case-changed" in kinds

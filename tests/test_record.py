"""Sealed records without a kernel: build, manifest, register, HTML, tamper detection.

The notebooks here are "executed" by hand: each output is what IPython would
record for the displayed object (a case's MIME bundle, a stream). That keeps
these tests fast; tests/test_record_seal.py runs real kernels.
"""

from __future__ import annotations

import copy
import importlib.util
import json
import re
from html.parser import HTMLParser

import pytest

import beliefledger as bl
from beliefledger.case import CASE_MIMETYPE
from beliefledger.errors import RecordError
from beliefledger.record import canonical
from beliefledger.record.html import clean_html, inline_svg, render_html
from beliefledger.record.sealer import build_record, case_digest, dumps_notebook
from beliefledger.record.sections import FRONT_CELLS as F
from beliefledger.record.verifier import RESULT_TOL, verify, verify_notebook
from helpers import records
from helpers.records import leaves

SEALED_AT = "2026-11-30T08:00:00Z"


def _display(obj) -> dict:
    """The output a kernel records for ``obj``: IPython's own formatter, so every form
    (``_repr_mimebundle_`` and the ``_repr_*_`` methods) is there as in a notebook."""
    from IPython.core.formatters import DisplayFormatter

    data, _ = DisplayFormatter().format(obj)
    return {"output_type": "display_data", "metadata": {}, "data": json.loads(json.dumps(data))}


def executed_notebook(*cases, extra_cells=()) -> dict:
    """A notebook as nbclient would leave it: every case displayed, counts 1..N."""
    cells = [{"cell_type": "markdown", "id": "m1", "metadata": {},
              "source": "# Test investigation\n\nInvented numbers for a test."}]
    n = 0
    for case in cases:
        n += 1
        cells.append({"cell_type": "code", "id": f"c{n}", "execution_count": n,
                      "metadata": {"execution": {"iopub.execute_input": "2026-11-30T07:59:00Z"},
                                   "scrolled": True},
                      "source": f"case{n} = build()\ncase{n}",
                      "outputs": [{**_display(case), "output_type": "execute_result",
                                   "execution_count": n}]})
    for src, outputs in extra_cells:
        n += 1
        cells.append({"cell_type": "code", "id": f"c{n}", "execution_count": n, "metadata": {},
                      "source": src, "outputs": outputs})
    return {"cells": cells, "metadata": {"kernelspec": {"name": "python3",
                                                        "display_name": "Python 3",
                                                        "language": "python"},
                                         "widgets": {"application/vnd.jupyter.widget-state+json":
                                                     {"state": {"abc": {}}}}},
            "nbformat": 4, "nbformat_minor": 5}


@pytest.fixture(scope="module")
def record() -> dict:
    case = bl.example_case()
    widget_out = {"output_type": "display_data", "metadata": {},
                  "data": {"application/vnd.jupyter.widget-view+json":
                           {"model_id": "f00d", "version_major": 2, "version_minor": 0},
                           "text/plain": "Workbench(...)"}}
    nb = executed_notebook(case, extra_cells=[
        ("print('hello')", [{"output_type": "stream", "name": "stdout", "text": ["hello\n"]}]),
        ("wb", [widget_out]),
    ])
    return build_record(nb, notebook_name="test.ipynb", sealed_at=SEALED_AT)


@pytest.fixture
def record_path(tmp_path, record):
    p = tmp_path / "r.sealed.ipynb"
    p.write_text(dumps_notebook(record), encoding="utf-8")
    return p


def meta_of(nb):
    return nb["metadata"][canonical.META_KEY]


def kinds(result):
    return sorted({p.code for p in result.problems})


def reseal_hashes(nb: dict) -> dict:
    """What a forger with the tool's source would do: recompute every digest and the root
    so that the manifest matches the edited content."""
    from beliefledger.record.sections import manifest_cell

    nb = copy.deepcopy(nb)
    meta = meta_of(nb)
    nb["cells"] = [c for c in nb["cells"] if canonical.cell_role(c) != canonical.MANIFEST_ROLE]
    cells = canonical.hashed_cells(nb["cells"])
    entries = [{"index": i, "cell_type": c["cell_type"], "sha256": canonical.cell_digest(c)}
               for i, c in cells]
    cds = [case_digest(e) for e in meta["cases"]]
    root = canonical.root_digest(meta["header"], cds, [e["sha256"] for e in entries],
                                 canonical.notebook_frame(nb))
    man = {**meta["manifest"], "cells": entries, "root": root,
           "fingerprint": canonical.fingerprint(root),
           "cases": [{"title": e["title"], "sha256": d} for e, d in zip(meta["cases"], cds, strict=True)]}
    meta["manifest"] = man
    nb["cells"].append(manifest_cell(man))
    return nb


# --------------------------------------------------------------------------- canonical form


def test_digest_ignores_key_order_but_not_list_order():
    assert canonical.digest({"a": 1, "b": [1, 2]}) == canonical.digest({"b": [1, 2], "a": 1})
    assert canonical.digest({"a": [1, 2]}) != canonical.digest({"a": [2, 1]})
    # SHA-256 of the canonical bytes, checked against hashlib directly
    import hashlib

    assert canonical.digest({"é": 1}) == hashlib.sha256('{"é":1}'.encode()).hexdigest()
    with pytest.raises(ValueError):
        canonical.digest({"x": float("nan")})


def test_fingerprint_is_short_readable_and_matches_the_sanitizer():
    root = "ab" * 32
    fp = canonical.fingerprint(root)
    assert fp == "ABAB-ABAB-ABAB-ABAB-ABAB"
    assert canonical.normalize_fingerprint("abab abab-abababab abab") == fp
    cfg = open("tests/nbval_sanitize.cfg", encoding="utf-8").read()
    pattern = re.search(r"\[short fingerprints\]\nregex: (.+)", cfg).group(1)
    assert re.fullmatch(pattern, fp)
    with pytest.raises(ValueError, match="not a fingerprint"):
        canonical.normalize_fingerprint("not-hex")


def test_cell_digest_ignores_volatile_metadata_only():
    cell = {"cell_type": "code", "source": "x = 1", "execution_count": 1, "metadata": {},
            "outputs": [{"output_type": "stream", "name": "stdout", "text": "1\n"}]}
    base = canonical.cell_digest(cell)
    noisy = copy.deepcopy(cell)
    noisy["metadata"] = {"execution": {"shell.execute_reply": "2026-11-30T00:00:00Z"},
                         "collapsed": True}
    noisy["outputs"][0]["text"] = ["1\n"]  # a list of lines is the same text
    assert canonical.cell_digest(noisy) == base
    for edit in (lambda c: c.update(source="x = 2"),
                 lambda c: c["outputs"][0].update(text="2\n"),
                 lambda c: c.update(execution_count=2),
                 lambda c: c["metadata"].update(tags=["hidden"])):
        changed = copy.deepcopy(cell)
        edit(changed)
        assert canonical.cell_digest(changed) != base


# --------------------------------------------------------------------------- building


def test_record_keeps_cells_and_adds_every_section(record):
    sections = [c["metadata"]["beliefledger"]["section"] for c in record["cells"]
                if canonical.cell_role(c)]
    for name in ("front-matter", "cautions", "assumption-register", "flags", "ledger",
                 "charts", "environment", "manifest"):
        assert name in sections
    assert canonical.cell_role(record["cells"][-1]) == canonical.MANIFEST_ROLE
    front = "".join(record["cells"][0]["source"])
    assert "Sealed at:** 2026-11-30T08:00:00Z" in front
    assert f"beliefledger {bl.__version__}" in front
    assert "R. Okafor" in front
    assert sections[:F] == ["front-matter", "summary", "summary", "cautions", "reviews",
                            "reviews", "notebook"]
    summary = record["cells"][2]["outputs"][0]["data"]["text/html"]
    assert "Which failure best explains" in summary
    text = json.dumps(record)
    assert "does not replace it" in text
    assert "Local codes, regulations and the judgement of licensed professionals prevail" in text


def test_assumption_register_lists_every_prior_and_likelihood_with_its_source(record):
    """Compact: one priors table (hypotheses x scenarios) and one matrix per item (states x
    hypotheses); each source once, and every number present."""
    case = bl.example_case()
    reg = next(c for c in record["cells"] if canonical.cell_role(c)
               and c["metadata"]["beliefledger"]["section"] == "assumption-register"
               and c["cell_type"] == "code")
    html_text = reg["outputs"][0]["data"]["text/html"]
    tables = html_text.split("<table")[1:]
    priors = tables[0].split("</table>")[0]
    assert priors.count("<tr>") - 1 == len(case.hypothesis_names)
    for sc in case.scenarios.values():
        assert sc.name in priors
        for h in case.hypothesis_names:
            assert f"<td>{float(sc.priors[h]):.6g}</td>" in priors
    for k, ev in enumerate(case.evidence.values()):
        mat = tables[1 + k].split("</table>")[0]
        assert mat.count("<tr") - 1 == len(ev.states), ev.name
        for i in range(len(ev.states)):
            for j in range(len(ev.hypotheses)):
                assert f"{float(ev.table[i, j]):.6g}" in mat
    assert html_text.count("tell-tale disc maker") == 1  # the item's source, stated once
    assert "J. Varga" in html_text and "trade association incident summary" in html_text


def test_volatile_metadata_and_live_widgets_are_stripped(record):
    assert "widgets" not in record["metadata"]
    text = json.dumps(record)
    assert "widget-view+json" not in text and "iopub.execute_input" not in text
    assert "scrolled" not in text
    assert "[a live widget was shown here" in text


def test_two_builds_differ_only_in_the_seal_time():
    def build(at):
        return dumps_notebook(build_record(executed_notebook(bl.example_case()),
                                           notebook_name="t.ipynb", sealed_at=at))

    a, b = build("2026-11-30T08:00:00Z"), build("2026-12-01T09:30:00Z")
    assert a != b
    scrub = re.compile(r"[0-9a-f]{64}|[0-9A-F]{4}(-[0-9A-F]{4}){4}|2026-1\d-\d\dT\d\d:\d\d:00Z")
    assert scrub.sub("X", a) == scrub.sub("X", b)  # charts included: the SVG is stable too


@pytest.fixture
def no_charts(monkeypatch):
    """Skip chart drawing where a test is about something else (it costs seconds)."""
    from beliefledger.record import sections

    monkeypatch.setattr(sections, "chart_svgs", lambda ledger, case: ([], "skipped in a test"))


def test_last_display_of_each_case_wins(no_charts):
    early = bl.example_case()
    late = bl.example_case()
    late.observe("suction pressure trend", "steady")
    other = bl.Case("Second case", hypotheses={"A": 0.6, "Other": 0.4})
    nb = executed_notebook(early, other, late)
    rec = build_record(nb, notebook_name="t.ipynb", sealed_at=SEALED_AT)
    entries = meta_of(rec)["cases"]
    assert [e["title"] for e in entries] == [early.title, "Second case"]
    ev = {e["name"]: e for e in entries[0]["envelope"]["case"]["evidence"]}
    assert ev["suction pressure trend"]["observed"] == "steady"
    assert entries[0]["cell"] == F + 3  # a position in the record, whose front comes first


def test_a_notebook_with_no_case_is_refused_with_the_fix(no_charts):
    nb = executed_notebook(extra_cells=[("1 + 1", [])])
    with pytest.raises(RecordError, match=r"register\(case\)"):
        build_record(nb, notebook_name="t.ipynb")


def test_huge_output_is_refused(monkeypatch, no_charts):
    from beliefledger.record import sealer

    monkeypatch.setattr(sealer, "MAX_OUTPUT_BYTES", 50_000)
    nb = executed_notebook(bl.example_case(), extra_cells=[
        ("print('x' * 60_000)", [{"output_type": "stream", "name": "stdout", "text": "x" * 60_000}])])
    with pytest.raises(RecordError, match=r"cell 3 produced an output of .* bytes"):
        build_record(nb, notebook_name="t.ipynb")


def test_register_displays_the_bundle(monkeypatch):
    shown = []
    import IPython.display

    monkeypatch.setattr(IPython.display, "display", lambda obj: shown.append(obj))
    case = bl.example_case()
    bl.record.register(case)
    assert shown == [case]
    assert CASE_MIMETYPE in shown[0]._repr_mimebundle_()
    with pytest.raises(bl.CaseTypeError):
        bl.record.register({"not": "a case"})


# --------------------------------------------------------------------------- verify


def test_intact_record_verifies(record_path):
    res = verify(record_path)
    assert res.ok and res.intact and res.reproducible, res.text()
    assert res.root == res.sealed_root
    assert "INTACT and reproducible" in res.text()
    assert verify(record_path, expect=res.fingerprint).ok
    assert verify(record_path, expect=res.fingerprint.lower().replace("-", " ")).ok


def test_verify_imports_neither_nbclient_nor_altair(record_path):
    import subprocess
    import sys

    code = ("import sys; from beliefledger.cli import main; rc = main(['verify', sys.argv[1]]);"
            "bad = sorted(m for m in sys.modules if m.split('.')[0] in "
            "('nbclient', 'altair', 'nbformat', 'ipywidgets', 'jupyter_client'));"
            "print('HEAVY', bad); sys.exit(rc)")
    out = subprocess.run([sys.executable, "-c", code, str(record_path)], capture_output=True,
                         text=True, timeout=60)
    assert out.returncode == 0, out.stdout + out.stderr
    assert "HEAVY []" in out.stdout


@pytest.mark.parametrize("edit, kind, where", [
    (lambda nb: nb["cells"][F + 1].update(source="case1 = build()\ncase1  # edited"),
     "cell-changed", f"cell {F + 2}"),
    (lambda nb: nb["cells"][F + 2]["outputs"][0].update(text=["goodbye\n"]), "cell-changed",
     f"cell {F + 3}"),
    (lambda nb: nb["cells"].pop(F + 2), "cell-removed", f"sealed cell {F + 3}"),
    (lambda nb: nb["cells"].insert(F + 3, {"cell_type": "markdown", "metadata": {},
                                           "source": "added later"}), "cell-added",
     f"cell {F + 4}"),
    (lambda nb: nb["cells"].insert(F + 2, nb["cells"].pop(F + 3)), "cell-moved", "cell"),
    (lambda nb: nb["cells"][2]["outputs"][0]["data"].update({"text/html": "<p>MAP: other</p>"}),
     "cell-changed", "cell 3"),
    (lambda nb: meta_of(nb)["header"].update(sealed_at="2026-12-24T00:00:00Z"),
     "header-changed", "record header"),
])
def test_each_kind_of_edit_is_reported_where_it_happened(record, edit, kind, where):
    nb = copy.deepcopy(record)
    edit(nb)
    res = verify_notebook(nb, meta_of(nb))
    assert not res.ok and not res.intact
    hits = [p for p in res.problems if p.code == kind]
    assert hits, res.text()
    assert hits[0].where.startswith(where), hits[0]


def test_swapped_cells_are_reported_as_moved_not_changed(record):
    nb = copy.deepcopy(record)
    nb["cells"][F + 2], nb["cells"][F + 3] = nb["cells"][F + 3], nb["cells"][F + 2]
    res = verify_notebook(nb, meta_of(nb))
    assert kinds(res) == ["cell-moved"], res.text()


def test_edited_embedded_case_is_caught_three_ways(record):
    nb = copy.deepcopy(record)
    hyps = meta_of(nb)["cases"][0]["envelope"]["case"]["hypotheses"]
    hyps[0]["prior"], hyps[1]["prior"] = 0.45, 0.10
    res = verify_notebook(nb, meta_of(nb))
    assert {"case-changed", "case-not-as-shown", "results-differ"} <= set(kinds(res)), res.text()


def test_forged_record_with_recomputed_digests_fails_the_fingerprint(record):
    """Hashes alone cannot stop someone who recomputes them; the quoted fingerprint does."""
    original_fp = meta_of(record)["manifest"]["fingerprint"]
    nb = copy.deepcopy(record)
    nb["cells"][F + 2]["outputs"][0]["text"] = ["a different story\n"]
    forged = reseal_hashes(nb)
    res = verify_notebook(forged, meta_of(forged))
    assert res.ok, res.text()  # digests alone are satisfied: say so plainly
    res = verify_notebook(forged, meta_of(forged), expect=original_fp)
    assert kinds(res) == ["fingerprint-mismatch"]


def test_tampered_results_fail_reproduction_with_the_tolerance_stated(record):
    nb = copy.deepcopy(record)
    steps = meta_of(nb)["cases"][0]["results"]["base"]["steps"]
    h = next(iter(steps[-1]["probabilities"]))
    steps[-1]["probabilities"][h] += 1e-6
    forged = reseal_hashes(nb)
    res = verify_notebook(forged, meta_of(forged))
    assert res.intact and not res.reproducible
    (p,) = res.problems
    assert p.code == "results-differ" and f"tolerance {RESULT_TOL:g}" in p.detail
    # a difference inside the tolerance passes
    nb = copy.deepcopy(record)
    meta_of(nb)["cases"][0]["results"]["base"]["steps"][-1]["probabilities"][h] += 1e-12
    forged = reseal_hashes(nb)
    assert verify_notebook(forged, meta_of(forged)).ok


def test_visible_manifest_must_match_the_metadata(record):
    nb = copy.deepcopy(record)
    out = nb["cells"][-1]["outputs"][0]["data"]
    out["text/html"] = out["text/html"].replace(meta_of(nb)["manifest"]["fingerprint"],
                                                "0000-0000-0000-0000-0000")
    res = verify_notebook(nb, meta_of(nb))
    assert kinds(res) == ["manifest-cell"]


def test_environment_differences_are_warnings_not_failures(record):
    nb = copy.deepcopy(record)
    meta_of(nb)["header"]["environment"]["packages"]["numpy"] = "0.0.1"
    forged = reseal_hashes(nb)
    res = verify_notebook(forged, meta_of(forged))
    assert res.ok
    assert any(w.where == "numpy" and "0.0.1" in w.detail for w in res.warnings)


@pytest.mark.parametrize("content, match", [
    (b"\xff\xfe not utf-8", "not UTF-8"),
    (b"[1, 2, 3]", "not a notebook object"),
    (b'{"cells": [], "nbformat": 5, "nbformat_minor": 0, "metadata": {}}', "nbformat 5"),
    (b'{"a": 1}', "not a Jupyter notebook"),
    (b'{"cells": [], "nbformat": 4, "nbformat_minor": 5, "metadata": {}}', "never sealed"),
    (b"{not json", "not JSON"),
])
def test_unusable_files_are_refused_clearly(tmp_path, content, match):
    p = tmp_path / "bad.ipynb"
    p.write_bytes(content)
    with pytest.raises(RecordError, match=match):
        verify(p)


def test_malformed_manifest_is_refused(record, tmp_path):
    for breakage in (lambda m: m.pop("manifest"),
                     lambda m: m["manifest"].update(root=12),
                     lambda m: m["manifest"].update(cells="x"),
                     lambda m: m.update(record_version=99)):
        nb = copy.deepcopy(record)
        breakage(meta_of(nb))
        p = tmp_path / "m.ipynb"
        p.write_text(json.dumps(nb), encoding="utf-8")
        with pytest.raises(RecordError, match="manifest|record version|record has no"):
            verify(p)


# --------------------------------------------------------------------------- offline HTML


class _Refs(HTMLParser):
    """Every reference a browser would fetch, plus scripts and event handlers."""

    def __init__(self):
        super().__init__()
        self.external, self.scripts, self.handlers, self.svgs, self.styles = [], 0, [], 0, []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "script":
            self.scripts += 1
        if tag == "svg":
            self.svgs += 1
        if tag == "link":
            self.external.append(("link", a.get("href")))
        for name, value in attrs:
            value = (value or "").strip()
            if name.startswith("on"):
                self.handlers.append((tag, name))
            if name in ("src", "href", "xlink:href", "srcset", "poster", "data", "action",
                        "background"):
                if tag == "a" and name == "href":
                    continue  # a hyperlink fetches nothing until a reader follows it
                if not (value.startswith("data:") or value.startswith("#")):
                    self.external.append((tag, value))
            if name == "style" and re.search(r"url\(|@import", value):
                self.external.append((tag, value))

    def handle_data(self, data):
        if re.search(r"@import|url\(\s*['\"]?(?!data:|#)", data):
            self.styles.append(data[:80])


def test_html_copy_is_self_contained_and_script_free(record):
    page = render_html(record)
    # the one script element is the inert JSON block that carries the record, whole
    (attrs, body, _, _), = records.script_elements(page)
    assert json.loads(body) == record
    assert render_html(copy.deepcopy(record)) == page  # same record, same bytes
    visible = records.without_record_block(page)
    refs = _Refs()
    refs.feed(visible)
    assert refs.external == [] and refs.styles == []
    assert refs.scripts == 0 and refs.handlers == []
    assert "Assumption register" in page and meta_of(record)["manifest"]["fingerprint"] in page
    assert "hello" in page
    try:
        import beliefledger.charts  # noqa: F401
    except ImportError:
        pytest.skip("chart layer not installed: no SVG to check")
    assert refs.svgs >= 2


def test_sanitizer_removes_scripts_handlers_and_external_loads():
    dirty = ('<div onclick="x()">ok<script src="https://cdn.example/x.js">alert(1)</script>'
             '<img src="http://example.com/a.png" alt="logo"><img src="data:image/png;base64,AA">'
             '<img alt="s" src="data:image/png;base64,AA" srcset="data:image/png;base64,AA 1x, '
             'http://example.com/b.png 2x"><a href="https://example.org/doc">doc</a><a href="javascript:alert(1)">bad</a>'
             '<iframe src="https://example.com"></iframe><style>@import url(http://x/y.css);</style>'
             '<link rel="stylesheet" href="https://cdn.example/s.css"><p style="background:'
             'url(http://x/y.png)">styled</p></div>')
    clean = clean_html(dirty)
    refs = _Refs()
    refs.feed(clean)
    assert refs.external == [] and refs.scripts == 0 and refs.handlers == [] and not refs.styles
    assert "alert(1)" not in clean.replace('href="javascript', "")
    assert '<a href="https://example.org/doc" rel="noreferrer">doc</a>' in clean
    assert "external image not kept" in clean and "data:image/png;base64,AA" in clean
    assert "ok" in clean and "styled" in clean


def test_inline_svg_keeps_case_sensitive_attributes_and_drops_scripts():
    svg = ('<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink" '
           'viewBox="0 0 10 10"><script>alert(1)</script><rect width="5" height="5" '
           'onload="x()"/><image xlink:href="http://example.com/a.png"/></svg>')
    out = inline_svg(svg, "test chart")
    assert 'viewBox="0 0 10 10"' in out
    assert "script" not in out and "onload" not in out and "example.com" not in out
    assert 'aria-label="test chart"' in out


def test_a_plain_case_gets_the_general_caution_only(no_charts):
    case = bl.Case("Printer jam", hypotheses={"worn roller": 0.6, "Other cause": 0.4})
    rec = build_record(executed_notebook(case), notebook_name="t.ipynb", sealed_at=SEALED_AT)
    text = json.dumps(rec)
    assert "does not replace it" in text
    assert "licensed professionals prevail" not in text
    assert "No evidence items." in text
    assert verify_notebook(rec, meta_of(rec)).ok


def test_analyses_are_included_when_the_case_has_their_inputs(record):
    text = json.dumps(record)
    if importlib.util.find_spec("beliefledger.sensitivity"):
        assert "Robustness across prior scenarios" in text
    if importlib.util.find_spec("beliefledger.value"):
        assert "Value of information: which pending item to examine next" in text
        assert "suction pressure trend" in text


def test_a_failing_analysis_is_noted_not_fatal(monkeypatch, no_charts):
    from beliefledger.record import analyses

    def boom(case, **kw):
        raise RuntimeError("solver diverged")

    monkeypatch.setattr(analyses.value, "rank_next_evidence", boom)
    rec = build_record(executed_notebook(bl.example_case()), notebook_name="t.ipynb",
                       sealed_at=SEALED_AT)
    assert "Not computed: RuntimeError: solver diverged" in json.dumps(rec)


def test_uncertainty_and_simulation_sections_are_seeded_and_stable(no_charts):
    uncertainty = pytest.importorskip("beliefledger.uncertainty")
    case = bl.example_case()
    est = bl.prior_from_counts(dict(zip(case.hypothesis_names, [7, 4, 5, 2, 0], strict=True)),
                               pseudo=1.0, data="invented counts for a test")
    uncertainty.set_prior_uncertainty(case, est)
    a = build_record(executed_notebook(case), notebook_name="t.ipynb", sealed_at=SEALED_AT)
    b = build_record(executed_notebook(case), notebook_name="t.ipynb", sealed_at=SEALED_AT)
    text = json.dumps(a)
    assert "Uncertainty on the inputs" in text and "Monte Carlo over uncertain inputs" in text
    assert "seed 20261201" in text
    assert dumps_notebook(a) == dumps_notebook(b)
    assert verify_notebook(a, meta_of(a)).ok


def _mutated(value, rng):
    if isinstance(value, bool):
        return not value
    if isinstance(value, int):
        return value + int(rng.integers(1, 5))
    if isinstance(value, float):
        return value * (1 + float(rng.uniform(1e-6, 0.5)))
    if isinstance(value, str):
        return value + "x" if value == "" or rng.random() < 0.5 else value[:-1]
    return 0  # None -> a number


def test_random_single_value_edits_never_pass_unnoticed(record, tmp_path, rng):
    """Change one value anywhere in the record: verify must report it (exit 1) or refuse
    the file (exit 2); it must never say intact, and never crash."""
    found = list(leaves(record))
    picks = rng.choice(len(found), size=120, replace=False)
    path = tmp_path / "m.ipynb"
    for k in picks:
        where, value = found[int(k)]
        nb = copy.deepcopy(record)
        target = nb
        for step in where[:-1]:
            target = target[step]
        target[where[-1]] = _mutated(value, rng)
        path.write_text(json.dumps(nb, ensure_ascii=False), encoding="utf-8")
        try:
            res = verify(path)
        except RecordError:
            continue
        assert not res.ok, f"edit at {where!r} ({value!r:.60}) passed verify"


def test_a_workbench_output_is_kept_as_static_html_and_its_case_collected(no_charts):
    case = bl.example_case()
    case.observe("suction pressure trend", "step drop")
    bundle = {"application/vnd.jupyter.widget-view+json": {"model_id": "beef", "version_major": 2,
                                                           "version_minor": 0},
              "text/plain": "Workbench(...)", "text/html": "<div class='wb'>static view</div>",
              CASE_MIMETYPE: bl.casefile.envelope(case)}
    nb = executed_notebook(bl.example_case(), extra_cells=[
        ("bl.Workbench(case)", [{"output_type": "display_data", "metadata": {}, "data": bundle}])])
    rec = build_record(nb, notebook_name="t.ipynb", sealed_at=SEALED_AT)
    out = rec["cells"][F + 2]["outputs"][0]["data"]
    assert "application/vnd.jupyter.widget-view+json" not in out
    assert out["text/html"] == "<div class='wb'>static view</div>"
    (entry,) = meta_of(rec)["cases"]
    assert entry["cell"] == F + 2  # the workbench's display is the last one of the case
    assert "static view" in render_html(rec)

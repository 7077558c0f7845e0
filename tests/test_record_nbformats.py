"""Sealing the notebooks users actually have, not only the ones this tool writes.

JupyterLab, Notebook 7, VS Code and ``nbformat.write`` store cell text as a
list of lines; older files are nbformat 4.0-4.4 without cell ids; real
notebooks carry outputs, attachments, raw cells and widget state. Each must
seal and verify INTACT. The shipped templates and example notebooks are
sealed here too (copies, so the repository is untouched).
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import nbformat
import pytest

from beliefledger.errors import RecordError
from beliefledger.record.collect import analysis_calls
from beliefledger.record.nbio import load_notebook
from beliefledger.record.review import review, sign
from beliefledger.record.sealer import prepare, seal
from beliefledger.record.verifier import verify

ROOT = Path(__file__).resolve().parent.parent

CASE_SOURCE = [
    "import beliefledger as bl\n",
    'case = bl.Case("Fan bearing noise", hypotheses={"bearing wear": 0.6, "Other cause": 0.4},\n',
    '               source="invented test data")\n',
    'case.add_evidence("vibration", states=["high", "normal"],\n',
    '                  likelihoods={"bearing wear": [0.8, 0.2], "Other cause": [0.3, 0.7]},\n',
    '                  observed="high", source="invented test data")\n',
    "case",
]
PNG_1PX = ("iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAYAAAAfFcSJAAAADUlEQVR42mP8z8BQDwAEhQGAhKmMIQ"
           "AAAABJRU5ErkJggg==")


def saved_by_jupyter(minor: int, *, ids: bool) -> dict:
    """A notebook as a Jupyter front end leaves it: list-of-lines text, stale outputs,
    an attachment, a raw cell, widget state and editor metadata (invented content)."""
    cells = [
        {"cell_type": "markdown", "metadata": {},
         "source": ["# Fan noise review\n", "\n", "![sketch](attachment:sketch.png)"],
         "attachments": {"sketch.png": {"image/png": PNG_1PX}}},
        {"cell_type": "code", "execution_count": 3,
         "metadata": {"collapsed": False, "scrolled": True, "tags": ["setup"]},
         "outputs": [{"output_type": "stream", "name": "stdout", "text": ["stale\n", "lines\n"]},
                     {"output_type": "execute_result", "execution_count": 3, "metadata": {},
                      "data": {"text/plain": ["old", " value"]}}],
         "source": CASE_SOURCE},
        {"cell_type": "raw", "metadata": {"format": "text/restructuredtext"},
         "source": ["raw text ", "kept as is"]},
        {"cell_type": "code", "execution_count": None, "metadata": {}, "outputs": [],
         "source": ["ledger = case.update()\n", "print(ledger.map_hypothesis)"]},
    ]
    if ids:
        for i, c in enumerate(cells):
            c["id"] = f"f{i}a9c2e"
    return {"cells": cells, "nbformat": 4, "nbformat_minor": minor,
            "metadata": {"kernelspec": {"name": "python3", "display_name": "Python 3",
                                        "language": "python"},
                         "language_info": {"name": "python", "version": "3.11.7"},
                         "signature": "sha256:0f3d",  # an old trust signature
                         "widgets": {"application/vnd.jupyter.widget-state+json": {
                             "state": {}, "version_major": 2, "version_minor": 0}}}}


@pytest.mark.parametrize("minor,ids", [(0, False), (2, False), (4, False), (5, True)])
def test_jupyter_saved_notebooks_load_with_joined_text_and_stable_ids(tmp_path, minor, ids):
    path = tmp_path / f"nb{minor}.ipynb"
    path.write_text(json.dumps(saved_by_jupyter(minor, ids=ids), indent=1), encoding="utf-8")
    nb = load_notebook(path)
    assert all(isinstance(c["source"], str) for c in nb["cells"])
    assert nb["cells"][1]["source"] == "".join(CASE_SOURCE)
    assert nb["cells"][0]["attachments"]["sketch.png"]["image/png"] == PNG_1PX
    clean = prepare(nb)
    assert clean["nbformat_minor"] == 5
    ids_now = [c["id"] for c in clean["cells"]]
    assert len(set(ids_now)) == 4
    if not ids:  # stable, not random: two seals of one file name their cells alike
        assert ids_now == ["cell-1", "cell-2", "cell-3", "cell-4"]
    assert clean["cells"][1]["outputs"] == [] and clean["cells"][1]["metadata"] == {
        "tags": ["setup"]}
    assert "widgets" not in clean["metadata"] and "signature" not in clean["metadata"]
    nbformat.validate(nbformat.from_dict(clean))


def test_an_nbformat3_notebook_is_converted(tmp_path):
    v3 = {"nbformat": 3, "nbformat_minor": 0, "metadata": {"name": ""},
          "worksheets": [{"cells": [
              {"cell_type": "heading", "level": 1, "metadata": {}, "source": "Old notebook"},
              {"cell_type": "code", "language": "python", "input": ["x = 1\n", "x"],
               "metadata": {}, "outputs": [], "prompt_number": 1}], "metadata": {}}]}
    path = tmp_path / "old.ipynb"
    path.write_text(json.dumps(v3), encoding="utf-8")
    nb = load_notebook(path)
    assert nb["nbformat"] == 4
    assert [c["cell_type"] for c in nb["cells"]] == ["markdown", "code"]
    assert nb["cells"][1]["source"] == "x = 1\nx"


@pytest.mark.parametrize("mutate,match", [
    (lambda nb: nb["cells"][1].pop("outputs"), r"'bad\.ipynb' is not a valid nbformat 4\.4 "
                                               r"notebook \(cell 2.*'outputs'"),
    (lambda nb: nb["cells"][0].update(cell_type="picture"), r"'bad\.ipynb' is not a valid"),
    (lambda nb: nb.update(nbformat=5), r"'bad\.ipynb' is nbformat 5, newer than"),
    (lambda nb: nb.pop("cells"), r"'bad\.ipynb' is JSON but not a Jupyter notebook"),
])
def test_a_notebook_nbformat_cannot_read_is_refused_by_name(tmp_path, mutate, match):
    nb = saved_by_jupyter(4, ids=False)
    mutate(nb)
    path = tmp_path / "bad.ipynb"
    path.write_text(json.dumps(nb), encoding="utf-8")
    with pytest.raises(RecordError, match=match):
        load_notebook(path)


def test_truncated_json_is_refused_by_name(tmp_path):
    path = tmp_path / "cut.ipynb"
    path.write_text(json.dumps(saved_by_jupyter(4, ids=False))[:300], encoding="utf-8")
    with pytest.raises(RecordError, match=r"'cut\.ipynb' is not JSON .* line 1"):
        load_notebook(path)


def test_cli_reports_an_unreadable_notebook_without_a_traceback(tmp_path, capsys):
    from beliefledger.cli import main

    nb = saved_by_jupyter(4, ids=False)
    nb["cells"][1].pop("outputs")
    path = tmp_path / "bad.ipynb"
    path.write_text(json.dumps(nb), encoding="utf-8")
    assert main(["seal", str(path)]) == 2
    err = capsys.readouterr().err
    assert "bad.ipynb" in err and "is not a valid nbformat" in err and "Traceback" not in err


def test_seal_a_jupyter_saved_notebook_and_verify_it(tmp_path):
    path = tmp_path / "fan.ipynb"
    path.write_text(json.dumps(saved_by_jupyter(2, ids=False), indent=1), encoding="utf-8")
    res = seal(path, sealed_at="2026-12-02T10:00:00Z")
    v = verify(res.notebook, expect=res.fingerprint)
    assert v.ok, v.text()
    assert verify(res.html, expect=res.fingerprint).ok  # the HTML copy, on its own
    sealed = json.loads(res.notebook.read_text(encoding="utf-8"))
    analyst = [c for c in sealed["cells"] if "beliefledger" not in c["metadata"]]
    assert [c["cell_type"] for c in analyst] == ["markdown", "code", "raw", "code"]
    assert "stale" not in json.dumps(analyst)
    assert analyst[0]["attachments"]["sketch.png"]["image/png"] == PNG_1PX
    assert "".join(analyst[3]["outputs"][0]["text"]) == "bearing wear\n"
    nbformat.validate(nbformat.read(res.notebook, as_version=4))


def test_seal_a_notebook_written_by_nbformat(tmp_path):
    nb = nbformat.v4.new_notebook()
    nb.cells = [nbformat.v4.new_markdown_cell("# Written by nbformat"),
                nbformat.v4.new_code_cell("".join(CASE_SOURCE))]
    path = tmp_path / "written.ipynb"
    nbformat.write(nb, path)
    assert isinstance(json.loads(path.read_text())["cells"][1]["source"], list)  # as Jupyter
    res = seal(path)
    v = verify(res.notebook, expect=res.fingerprint)
    assert v.ok, v.text()


def _shipped() -> list[Path]:
    return sorted([*(ROOT / "templates_nb").glob("*.ipynb"),
                   *(ROOT / "example_cases").glob("*.ipynb")])


@pytest.fixture(scope="module")
def shipped_copy(tmp_path_factory) -> Path:
    """The two notebook folders copied side by side (their relative paths still work)."""
    root = tmp_path_factory.mktemp("shipped")
    for folder in ("templates_nb", "example_cases"):
        shutil.copytree(ROOT / folder, root / folder,
                        ignore=shutil.ignore_patterns("*.sealed.*", ".ipynb_checkpoints"))
    return root


@pytest.mark.parametrize("notebook", _shipped(), ids=lambda p: f"{p.parent.name}/{p.name}")
def test_every_shipped_notebook_seals_and_verifies(shipped_copy, notebook):
    path = shipped_copy / notebook.parent.name / notebook.name
    res = seal(path, timeout=300)
    v = verify(res.notebook, expect=res.fingerprint)
    assert v.ok, v.text()
    assert res.cases
    page = verify(res.html, expect=res.fingerprint)  # the HTML copy verifies on its own
    assert page.ok, page.text()
    # the record's analyses use the settings of the analyst's displayed calls
    rec = json.loads(res.notebook.read_text(encoding="utf-8"))
    for i, c in enumerate(rec["cells"]):  # nothing shown twice (a chart displayed and returned)
        outs = [json.dumps(o.get("data"), sort_keys=True) for o in c.get("outputs", [])
                if o.get("data")]
        assert len(outs) == len(set(outs)), f"{notebook.name}: cell {i + 1} shows an output twice"
    ana = "".join(o["data"].get("text/html", "") for c in rec["cells"]
                  if (c["metadata"].get("beliefledger") or {}).get("section") == "analyses"
                  for o in c.get("outputs", []))
    final = {e["title"]: e for e in rec["metadata"]["beliefledger"]["cases"]}
    for (title, kind), shown in analysis_calls(rec["cells"]).items():
        pending = any(ev.get("observed") is None
                      for ev in final[title]["envelope"]["case"]["evidence"])
        if kind == "simulate":
            assert f"seed {shown.call.settings['seed']}" in ana, notebook.name
        if kind == "simulate" or pending:
            assert f"call in cell {shown.cell + 1}" in ana, (notebook.name, kind)
    # a review round on every shipped record: the checklist, a signed decision with comments
    # on a hypothesis, a likelihood and a cell, then verify
    checks = review(res.notebook)
    assert {o.check.id for o in checks.outcomes} >= {"all-sourced", "exhaustive-set"}
    entry = final[next(iter(final))]["envelope"]["case"]
    ev = entry["evidence"][0] if entry["evidence"] else None
    rows = [{"target": f"hypothesis:{entry['hypotheses'][0]['name']}", "comment": "Source?"},
            {"target": "cell:1", "comment": "Say who ran this notebook."}]
    if ev is not None:
        rows.append({"target": f"likelihood:{ev['name']}|{ev['states'][0]}|"
                               f"{entry['hypotheses'][0]['name']}", "comment": "Why this value?"})
    cfile = res.notebook.with_suffix(".comments.json")
    cfile.write_text(json.dumps(rows), encoding="utf-8")
    signed = sign(res.notebook, "P. Reviewer (test)", decision="conditions", comments=cfile)
    assert len(signed["comments"]) == len(rows)
    v = verify(res.notebook, expect=res.fingerprint)
    assert v.ok and [s.status for s in v.signoffs] == ["valid"], v.text()

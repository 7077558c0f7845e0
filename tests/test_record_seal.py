"""Sealing with a real kernel: fresh execution, progress, refusals, nothing half-written."""

from __future__ import annotations

import json
import re

import pytest

from beliefledger.errors import RecordError
from beliefledger.record.sealer import seal
from beliefledger.record.verifier import verify

CASE_CELL = """import beliefledger as bl
case = bl.Case("Kernel test", hypotheses={"pump": 0.7, "Other cause": 0.3}, analyst="T. Tester",
               question="Which cause? (invented test case)")
case.add_evidence("vibration", states=["high", "normal"],
                  likelihoods={"pump": [0.8, 0.2], "Other cause": [0.3, 0.7]},
                  observed="high", source="invented for a test")
case"""


def notebook(*sources: str) -> str:
    cells = [{"cell_type": "markdown", "metadata": {}, "source": "# Kernel test notebook"}]
    for i, src in enumerate(sources):
        cells.append({"cell_type": "code", "metadata": {}, "execution_count": 7 * i,
                      "outputs": [{"output_type": "stream", "name": "stdout", "text": "stale\n"}],
                      "source": src})
    return json.dumps({"cells": cells, "metadata": {}, "nbformat": 4, "nbformat_minor": 4})


@pytest.fixture(scope="module")
def sealed(tmp_path_factory):
    folder = tmp_path_factory.mktemp("seal")
    src = folder / "analysis.ipynb"
    src.write_text(notebook(CASE_CELL, "print('step two')"), encoding="utf-8")
    lines: list[str] = []
    res = seal(src, progress=lines.append, sealed_at="2026-11-30T08:00:00Z")
    return src, res, lines


def test_seal_executes_afresh_in_order_and_writes_both_files(sealed):
    src, res, lines = sealed
    assert res.notebook == src.with_name("analysis.sealed.ipynb")
    assert res.html == src.with_name("analysis.sealed.html") and res.html.exists()
    nb = json.loads(res.notebook.read_text(encoding="utf-8"))
    code = [c for c in nb["cells"] if c["cell_type"] == "code" and "beliefledger" not in
            c["metadata"]]
    assert [c["execution_count"] for c in code] == [1, 2]
    assert "stale" not in json.dumps(code)
    assert "".join(code[1]["outputs"][0]["text"]) == "step two\n"
    assert len(lines) == 2 and re.match(r"\s*cell 2/3 ok \(\d+\.\d\d s\) import beliefledger",
                                        lines[0])
    assert res.cases == ("Kernel test",)
    assert re.fullmatch(r"[0-9A-F]{4}(-[0-9A-F]{4}){4}", res.fingerprint)
    v = verify(res.notebook, expect=res.fingerprint)
    assert v.ok, v.text()
    import nbformat  # the record opens in any Jupyter: it is a valid nbformat-4 notebook

    nbformat.validate(nbformat.read(res.notebook, as_version=4))


def test_seal_never_overwrites_without_force(sealed):
    src, res, _ = sealed
    before = res.notebook.read_bytes()
    with pytest.raises(RecordError, match="already exists; pass --force"):
        seal(src)
    assert res.notebook.read_bytes() == before


def test_two_seals_differ_only_in_the_seal_time(sealed, tmp_path):
    src, res, _ = sealed
    again = seal(src, tmp_path / "again.ipynb", sealed_at="2026-12-01T09:15:00Z")
    a = res.notebook.read_text(encoding="utf-8")
    b = again.notebook.read_text(encoding="utf-8")
    scrub = re.compile(r"[0-9a-f]{64}|[0-9A-F]{4}(-[0-9A-F]{4}){4}|2026-1\d-\d\dT\d\d:\d\d:00Z")
    assert a != b and scrub.sub("X", a) == scrub.sub("X", b)


def test_a_raising_cell_stops_the_seal_and_writes_nothing(tmp_path):
    src = tmp_path / "broken.ipynb"
    src.write_text(notebook(CASE_CELL, "x = 1\nraise ValueError('bad reading')"),
                   encoding="utf-8")
    with pytest.raises(RecordError, match=r"cell 3 \('x = 1'\) raised ValueError: bad reading"):
        seal(src)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["broken.ipynb"]


def test_a_notebook_without_a_case_is_refused(tmp_path):
    src = tmp_path / "nocase.ipynb"
    src.write_text(notebook("1 + 1"), encoding="utf-8")
    with pytest.raises(RecordError, match=r"no case found.*register\(case\)"):
        seal(src)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["nocase.ipynb"]


def test_not_a_notebook_is_refused_before_any_kernel_starts(tmp_path):
    src = tmp_path / "case.json"
    src.write_text('{"format": "beliefledger-case"}', encoding="utf-8")
    with pytest.raises(RecordError, match="not a Jupyter notebook"):
        seal(src, tmp_path / "out.ipynb")

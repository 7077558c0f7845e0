"""No code from data: loaders never evaluate or unpickle, ``verify`` and ``diff``
never execute notebook code, and ``seal`` executes only the notebook named
(and its help says so).

A fresh interpreter with a Python audit hook (PEP 578) loads a case file
full of code-like strings, verifies and diffs records whose cells would
create a marker file if run, and renders them; the hook reports any
compilation of that code, any process started and any unpickling. A static
scan of the package finds no eval, exec, pickle or marshal at all, and
dynamic imports only from the package's own registries.
"""

from __future__ import annotations

import ast
import json
import os
import pickle
import subprocess
import sys
from pathlib import Path

import pytest

import beliefledger as bl
from beliefledger import casefile, cli
from beliefledger.errors import CaseFileError
from helpers import records, report

_report = report.reporting_fixture("no code from data")

SRC = Path(bl.__file__).resolve().parent
HERE = Path(__file__).resolve().parent.parent  # tests/


def _calls(tree: ast.AST):
    for node in ast.walk(tree):
        if isinstance(node, ast.Call):
            f = node.func
            if isinstance(f, ast.Name):  # a builtin called by name: eval(...), exec(...)
                yield f.id, node
            elif isinstance(f, ast.Attribute):  # x.import_module(...), np.load(...)
                yield ("." + f.attr), node


def test_package_source_has_no_eval_exec_or_unpickling():
    forbidden_calls = {"eval", "exec", "compile", "__import__", "loads_pickle", "read_pickle",
                       "execfile"}
    forbidden_modules = {"pickle", "cPickle", "marshal", "shelve", "dill", "cloudpickle",
                         "joblib", "yaml"}
    found = []
    files = sorted(SRC.rglob("*.py"))
    assert len(files) > 10
    for path in files:
        tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
        rel = path.relative_to(SRC)
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                found += [f"{rel}: import {a.name}" for a in node.names
                          if a.name.split(".")[0] in forbidden_modules]
            elif isinstance(node, ast.ImportFrom) and node.module:
                if node.module.split(".")[0] in forbidden_modules:
                    found.append(f"{rel}: from {node.module} import")
        for name, call in _calls(tree):
            if name in forbidden_calls:
                found.append(f"{rel}:{call.lineno}: {name}()")
            if name in (".eval", ".exec", ".read_pickle"):
                found.append(f"{rel}:{call.lineno}: {name}()")
            if name == ".load" and any(k.arg == "allow_pickle" for k in call.keywords):
                found.append(f"{rel}:{call.lineno}: load(allow_pickle=...)")
    assert not found, found
    report.add("no code from data", source_files_scanned=len(files))


def test_dynamic_imports_come_only_from_the_package_registries():
    """importlib.import_module appears only where the module name is built from the
    package's own tables (lazy exports, CLI command modules, extras validators)."""
    allowed = {"__init__.py", "cli.py", "casefile.py", "record/__init__.py",
               "record/sections.py"}
    sites = set()
    for path in SRC.rglob("*.py"):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for name, _call in _calls(tree):
            if name == ".import_module":
                sites.add(str(path.relative_to(SRC)))
    assert sites <= allowed, sites - allowed
    # an extras key that names a module is data, not a command
    obj = json.loads(casefile.dumps(bl.example_case()))
    obj["case"]["extras"] = {"os:system": {"cmd": "touch x"}, "subprocess": [1]}
    before = set(sys.modules)
    case = casefile.loads(json.dumps(obj))
    assert set(case.extras) == {"os:system", "subprocess"}
    assert not {m for m in set(sys.modules) - before if m in ("subprocess", "os.system")}


def test_loaders_refuse_pickles_and_keep_code_as_text(tmp_path):
    blob = pickle.dumps({"format": "beliefledger-case", "schema_version": 1})
    p = tmp_path / "case.json"
    p.write_bytes(blob)
    with pytest.raises(CaseFileError):
        bl.load_case(p)
    from beliefledger.errors import RecordError
    from beliefledger.record import verify

    nb = tmp_path / "r.ipynb"
    nb.write_bytes(blob)
    with pytest.raises(RecordError):
        verify(nb)
    obj = json.loads(casefile.dumps(bl.example_case()))
    code = "__import__('os').system('touch pwned')"
    obj["case"]["notes"] = code
    obj["case"]["hypotheses"][0]["description"] = "{{ ''.__class__ }}"
    case = casefile.loads(json.dumps(obj))
    assert case.notes == code
    assert not (Path.cwd() / "pwned").exists()


def test_verify_and_diff_execute_no_notebook_code(tmp_path):
    case_obj = json.loads(casefile.dumps(bl.example_case()))
    case_obj["case"]["notes"] = records.PAYLOAD
    case_obj["case"]["hypotheses"][0]["description"] = records.PAYLOAD
    case_file = tmp_path / "case.json"
    case_file.write_text(json.dumps(case_obj), encoding="utf-8")
    rec = records.conveyor_record()
    assert any(records.MARKER in "".join(c.get("source", "")) for c in rec["cells"])
    record = tmp_path / "review.sealed.ipynb"
    record.write_text(records.dumps(rec), encoding="utf-8")
    other = copy_with_edit(rec, tmp_path / "other.sealed.ipynb")
    work = tmp_path / "cwd"
    work.mkdir()
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(
        [str(SRC.parent), os.environ.get("PYTHONPATH", "")])}
    proc = subprocess.run([sys.executable, str(HERE / "helpers" / "nocode_probe.py"),
                           str(case_file), str(record), str(other), records.MARKER],
                          cwd=work, env=env, capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0, proc.stderr[-3000:]
    out = json.loads(proc.stdout.strip().splitlines()[-1])
    assert out["events"] == [], out["events"]
    assert out["verify_ok"], out["verify_text"]
    assert sorted(os.listdir(work)) == [], "notebook code ran: it left files behind"
    report.add("no code from data", probe_runs=1, audit_events_flagged=len(out["events"]))


def copy_with_edit(rec, path: Path) -> Path:
    import copy

    other = copy.deepcopy(rec)
    meta = other["metadata"]["beliefledger"]
    meta["cases"][0]["envelope"]["case"]["notes"] = records.PAYLOAD
    path.write_text(records.dumps(other), encoding="utf-8")
    return path


def test_seal_help_says_it_executes_the_named_notebook(capsys):
    with pytest.raises(SystemExit):
        cli.main(["seal", "--help"])
    text = " ".join(capsys.readouterr().out.split())
    assert "Execute NOTEBOOK, and only that notebook" in text
    for cmd in ("verify", "diff"):
        with pytest.raises(SystemExit):
            cli.main([cmd, "--help"])
        assert "no notebook code is executed" in " ".join(capsys.readouterr().out.split())


@pytest.mark.slow
@pytest.mark.skipif(not report.FULL, reason="starts a kernel: runs in make fuzz")
def test_seal_executes_only_the_named_notebook(tmp_path):
    """Seal a notebook beside another notebook and an old record of it: only the
    named notebook's code runs (its own marker appears, nobody else's)."""
    from beliefledger.record import seal, verify

    def nb(cells):
        return {"nbformat": 4, "nbformat_minor": 5,
                "metadata": {"kernelspec": {"name": "python3", "display_name": "Python 3",
                                            "language": "python"}},
                "cells": [{"cell_type": "code", "id": f"c{i}", "metadata": {},
                           "execution_count": None, "outputs": [], "source": s}
                          for i, s in enumerate(cells)]}

    named = nb(["import pathlib; pathlib.Path('NAMED_RAN').write_text('x')",
                "import beliefledger as bl\ncase = bl.Case('Seal probe (invented)', "
                "hypotheses={'a': 0.5, 'other': 0.5})\ncase"])
    (tmp_path / "named.ipynb").write_text(json.dumps(named), encoding="utf-8")
    (tmp_path / "neighbour.ipynb").write_text(json.dumps(nb(
        [f"import pathlib; pathlib.Path({records.MARKER!r}).write_text('x')"])),
        encoding="utf-8")
    res = seal(tmp_path / "named.ipynb", html=False)
    assert (tmp_path / "NAMED_RAN").exists()
    assert not (tmp_path / records.MARKER).exists()
    assert verify(res.notebook).ok

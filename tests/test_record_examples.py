"""The example cases: files up to date with their builder, sourced, each with its notebook."""

from __future__ import annotations

import importlib.util
import json
from pathlib import Path

import pytest

import beliefledger as bl

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = ROOT / "example_cases"
TEMPLATES = ROOT / "templates_nb"


def _builder():
    spec = importlib.util.spec_from_file_location("make_cases", EXAMPLES / "make_cases.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


BUILDER = _builder()


@pytest.mark.parametrize("name", sorted(BUILDER.CASES))
def test_case_file_matches_its_builder(name):
    built = BUILDER.CASES[name]()
    saved = bl.load_case(EXAMPLES / name)
    assert saved.to_dict() == built.to_dict(), (
        f"{name} is out of date: run python example_cases/make_cases.py")


@pytest.mark.parametrize("name", sorted(BUILDER.CASES))
def test_every_number_is_sourced_and_something_is_pending(name):
    case = bl.load_case(EXAMPLES / name)
    codes = {f.code for f in case.update().flags}
    assert "unsourced" not in codes
    assert {"prior-sum", "column-sum"}.isdisjoint(codes)
    assert any(not ev.is_observed for ev in case.evidence.values())
    text = json.dumps(case.to_dict())
    assert "invented" in text  # the sources say the numbers are invented


def test_at_least_three_trades_each_with_a_notebook_that_loads_it():
    notebooks = sorted(EXAMPLES.glob("*.ipynb"))
    assert len(notebooks) >= 3
    for nb_path in notebooks:
        assert (EXAMPLES / f"{nb_path.stem}.json").exists()
        src = "".join("".join(c["source"]) for c in json.loads(nb_path.read_text())["cells"])
        assert f'bl.load_case("{nb_path.stem}.json")' in src


def test_templates_exist_and_carry_the_caution():
    names = {p.name for p in TEMPLATES.glob("*.ipynb")}
    assert {"blank_investigation.ipynb", "screening_test.ipynb", "reliability_priors.ipynb",
            "reviewer.ipynb"} <= names
    for name in ("blank_investigation.ipynb", "screening_test.ipynb",
                 "reliability_priors.ipynb", "reviewer.ipynb"):
        text = (TEMPLATES / name).read_text(encoding="utf-8")
        assert "does not replace it" in text and "licensed practice prevail" in text


def test_notebooks_keep_checked_outputs_for_nbval():
    """nbval compares only cells that have stored outputs and an execution count."""
    for nb_path in [*EXAMPLES.glob("*.ipynb"), *TEMPLATES.glob("*.ipynb")]:
        if nb_path.name == "workbench.ipynb":
            continue
        cells = json.loads(nb_path.read_text(encoding="utf-8"))["cells"]
        checked = [c for c in cells if "nbval-check-output" in c.get("metadata", {}).get("tags", [])]
        assert checked, f"{nb_path.name} has no checked cell"
        for c in checked:
            assert c["execution_count"] and c["outputs"], f"{nb_path.name}: unexecuted check"

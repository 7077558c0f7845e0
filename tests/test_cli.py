"""The `update` command and the CLI's exit codes (record commands are tested with the record)."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

import beliefledger as bl
from beliefledger.cli import main

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "example_cases" / "ammonia_cold_store.json"


def test_bundled_example_file_matches_the_built_in_case():
    assert bl.load_case(EXAMPLE).to_dict() == bl.example_case().to_dict()


def test_update_prints_ledger_and_flags(capsys):
    assert main(["show", str(EXAMPLE)]) == 0
    out = capsys.readouterr().out
    assert "Case: Ammonia odour at the Eastgate cold store" in out
    assert "night operator's account" in out
    assert "MAP: compressor seal leak" in out
    assert "[warning] shared-source" in out


def test_update_json_matches_the_engine(capsys):
    assert main(["show", str(EXAMPLE), "--json", "--scenario", "uniform"]) == 0
    data = json.loads(capsys.readouterr().out)
    case = bl.load_case(EXAMPLE)
    case.use_scenario("uniform")
    ledger = case.update()
    assert data["scenario"] == "uniform"
    assert data["map_hypothesis"] == ledger.map_hypothesis
    assert data["posterior"] == {k: float(v) for k, v in ledger.posterior.items()}


def test_update_strict_exits_1_on_error_flags(tmp_path, capsys):
    case = bl.example_case()
    case.set_prior("other cause", 0.5)  # priors now sum to 1.4
    path = case.save(tmp_path / "c.json")
    assert main(["show", str(path)]) == 0
    assert main(["show", str(path), "--strict"]) == 1


def test_unusable_input_exits_2_with_a_message(tmp_path, capsys):
    bad = tmp_path / "bad.json"
    bad.write_text("{not json")
    assert main(["show", str(bad)]) == 2
    err = capsys.readouterr().err
    assert "not valid JSON" in err and "bad.json" in err
    assert main(["show", str(tmp_path / "missing.json")]) == 2
    assert main(["show", str(EXAMPLE), "--scenario", "nope"]) == 2


def test_console_script_runs():
    exe = Path(sys.executable).with_name("beliefledger")
    out = subprocess.run([str(exe), "show", str(EXAMPLE)], capture_output=True, text=True,
                         timeout=120)
    assert out.returncode == 0, out.stderr
    assert "MAP: compressor seal leak" in out.stdout


def test_show_reads_several_files_and_changes_none(tmp_path, capsys):
    a = tmp_path / "a.json"
    b = tmp_path / "b.json"
    bl.example_case().save(a)
    other = bl.example_case()
    other.observe("suction pressure trend", "step drop")
    other.save(b)
    before = (a.read_bytes(), b.read_bytes())
    assert main(["show", str(a), str(b)]) == 0
    out = capsys.readouterr().out
    assert f"== {a}" in out and f"== {b}" in out and out.count("Review flags") == 2
    assert main(["show", str(a), str(b), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert [d["file"] for d in data] == [str(a), str(b)]
    assert data[0]["posterior"] != data[1]["posterior"]
    assert (a.read_bytes(), b.read_bytes()) == before  # "show" writes nothing


def test_show_refuses_an_unknown_scenario_naming_the_file(tmp_path, capsys):
    a = tmp_path / "a.json"
    bl.example_case().save(a)
    assert main(["show", str(a), "--scenario", "nope"]) == 2
    err = capsys.readouterr().err
    assert "a.json" in err and "no scenario named 'nope'" in err


def test_old_command_name_is_gone():
    with pytest.raises(SystemExit):
        main(["update", str(EXAMPLE)])

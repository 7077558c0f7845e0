"""Case files: lossless round trips, atomic saves, refusals that name the problem."""

from __future__ import annotations

import json
import os

import pytest
from hypothesis import given
from hypothesis import strategies as st

import beliefledger as bl
from beliefledger import casefile
from beliefledger.errors import CaseFileError


def test_round_trip_is_lossless(tmp_path, demo_case):
    demo_case.set_likelihood("oil residue on compressor", "other cause", 0.25, state="present",
                             source={"where": "second opinion", "who": "QA", "why": "check"})
    demo_case.use_scenario("industry base rates")
    demo_case.set_extra("reviewer", {"checked": ["priors"], "rounds": 2})
    path = demo_case.save(tmp_path / "case.json")
    again = bl.load_case(path)
    assert again.to_dict() == demo_case.to_dict()
    assert casefile.dumps(again) == casefile.dumps(demo_case)  # text round trip too
    assert again.active_scenario == "industry base rates"
    src = again.evidence["oil residue on compressor"].source_of("present", "other cause")
    assert (src.where, src.who, src.why) == ("second opinion", "QA", "check")
    assert again.update().posterior.equals(demo_case.update().posterior)


def test_saved_part_way_edits_load_back(tmp_path, small_case):
    small_case.set_prior("H1", 0.9)  # sum now 1.4: an error flag, but nothing is lost
    again = bl.load_case(small_case.save(tmp_path / "c.json"))
    assert again.base_priors["H1"] == 0.9
    assert "prior-sum" in [f.code for f in again.update().flags]


def test_save_is_atomic_and_leaves_no_temporary_file(tmp_path, small_case):
    path = tmp_path / "c.json"
    small_case.save(path)
    first = path.read_text()
    small_case.observe("E3", "yes")
    small_case.save(path)
    assert path.read_text() != first
    assert sorted(os.listdir(tmp_path)) == ["c.json"]


def test_failed_save_keeps_the_previous_file(tmp_path, small_case, monkeypatch):
    path = tmp_path / "c.json"
    small_case.save(path)
    before = path.read_bytes()

    def boom(*a, **k):
        raise OSError("disk full")

    monkeypatch.setattr(os, "replace", boom)
    small_case.observe("E3", "yes")
    with pytest.raises(OSError, match="disk full"):
        small_case.save(path)
    assert path.read_bytes() == before
    assert sorted(os.listdir(tmp_path)) == ["c.json"]


def test_save_into_missing_folder_is_a_clear_error(tmp_path, small_case):
    with pytest.raises(CaseFileError, match="does not exist"):
        small_case.save(tmp_path / "nope" / "c.json")


def envelope_text(case, mutate):
    data = casefile.envelope(case)
    mutate(data)
    return json.dumps(data)


@pytest.mark.parametrize("mutate, match", [
    (lambda d: d.update(schema_version=4), "schema_version 4.*newer beliefledger"),
    (lambda d: d.update(schema_version=0), "schema_version 0.*no reader"),
    (lambda d: d.update(schema_version="3"), "expected the integer 3"),
    (lambda d: d.update(format="other"), "expected 'beliefledger-case'"),
    (lambda d: d.update(extra=1), r"unknown top-level key\(s\) \['extra'\]"),
    (lambda d: d.pop("case"), "no 'case' object"),
    (lambda d: d["case"].update(surprise=1), r"unknown field\(s\) \['surprise'\]"),
    (lambda d: d["case"]["hypotheses"][0].update(prior=1.5), "outside"),
    (lambda d: d["case"]["hypotheses"][0].pop("prior"), "missing the field 'prior'"),
    (lambda d: d["case"]["hypotheses"].append(dict(d["case"]["hypotheses"][0])),
     "appears twice"),
    (lambda d: d["case"]["evidence"][0].update(observed="sideways"), "not among its states"),
    (lambda d: d["case"]["evidence"][0]["likelihoods"].pop("H2"), r"missing hypothesis\(es\)"),
    (lambda d: d["case"]["evidence"][0]["likelihoods"].update(H1=[0.5]), "1 values for 2 states"),
    (lambda d: d["case"].update(active_scenario="ghost"), "not one of the case's scenarios"),
    (lambda d: d["case"].update(hypotheses=[]), "is empty"),
    (lambda d: d["case"].update(evidence={}), "must be a JSON array"),
])
def test_bad_files_are_refused_naming_the_field(small_case, mutate, match):
    with pytest.raises(CaseFileError, match=match):
        casefile.loads(envelope_text(small_case, mutate))


def test_nan_truncation_bytes_and_nesting_are_refused(small_case, tmp_path):
    text = casefile.dumps(small_case)
    with pytest.raises(CaseFileError, match="NaN"):
        casefile.loads(text.replace('"prior": 0.5', '"prior": NaN'))
    with pytest.raises(CaseFileError, match="not valid JSON.*truncated"):
        casefile.loads(text[: len(text) // 2])
    with pytest.raises(CaseFileError, match="not UTF-8"):
        casefile.loads(b"\xff\xfe" + text.encode())
    with pytest.raises(CaseFileError, match="nested too deeply"):
        casefile.loads("[" * 100_000 + "]" * 100_000)
    with pytest.raises(CaseFileError, match="no case file"):
        bl.load_case(tmp_path / "missing.json")
    with pytest.raises(CaseFileError, match="is a folder"):
        bl.load_case(tmp_path)


def test_loader_never_evaluates_content(small_case):
    # a file is data: strings that look like code stay strings
    data = casefile.envelope(small_case)
    data["case"]["notes"] = "__import__('os').system('echo pwned')"
    case = casefile.loads(json.dumps(data))
    assert case.notes.startswith("__import__")


text_st = st.text(alphabet=st.characters(blacklist_categories=("Cs",)), max_size=30)


@given(title=text_st.filter(lambda s: s.strip()), notes=text_st, where=text_st,
       p=st.floats(0.0, 1.0), q=st.floats(0.0, 1.0))
def test_round_trip_property(title, notes, where, p, q):
    case = bl.Case(title, {"A": p, "Other": 1 - p}, notes=notes, source={"where": where})
    case.add_evidence("E", states=["x", "y"], likelihoods={"A": [q, 1 - q], "Other": [0.5, 0.5]},
                      observed="x")
    again = casefile.loads(casefile.dumps(case))
    assert again.to_dict() == case.to_dict()


def test_saved_files_get_the_usual_mode_and_keep_an_existing_one(tmp_path, small_case):
    old = os.umask(0o022)
    try:
        path = small_case.save(tmp_path / "c.json")
        assert path.stat().st_mode & 0o777 == 0o644
        path.chmod(0o640)
        small_case.save(path)
        assert path.stat().st_mode & 0o777 == 0o640
    finally:
        os.umask(old)


def test_a_schema_1_file_loads_with_its_renamed_keys(tmp_path):
    """Files written before the keys were renamed (schema 1: 'groups', 'observed_only',
    extras 'decision') load unchanged in meaning; saving writes the current schema."""
    import json

    case = bl.example_case()
    case.add_evidence("witness note", likelihoods={h: 0.5 for h in case.hypothesis_names},
                      observed="seen", likelihood_evidence=True, source="invented test note")
    new = case.to_dict()
    old = json.loads(json.dumps(new))
    old["extras"]["decision"] = old["extras"].pop("loss_table")
    for e in old["evidence"]:
        e["observed_only"] = e.pop("likelihood_evidence")
    path = tmp_path / "old.json"
    path.write_text(json.dumps({"format": "beliefledger-case", "schema_version": 1,
                                "case": old}), encoding="utf-8")
    loaded = bl.load_case(path)
    assert loaded.to_dict() == new
    assert loaded.evidence["witness note"].likelihood_evidence
    loaded.save(path)
    assert json.loads(path.read_text())["schema_version"] == 3


def test_a_schema_2_file_reads_as_it_is(tmp_path):
    """Schema 3 only added optional fields: a file written before them loads unchanged."""
    import json

    case = bl.example_case()
    case.use_scenario(None)
    old = case.to_dict()
    for sc in old["scenarios"]:  # what a schema-2 writer wrote: no meaning, no basis
        sc.pop("meaning", None)
        sc.pop("basis", None)
    path = tmp_path / "v2.json"
    path.write_text(json.dumps({"format": "beliefledger-case", "schema_version": 2,
                                "case": old}), encoding="utf-8")
    loaded = bl.load_case(path)
    assert loaded.to_dict() == old
    assert loaded.scenarios["uniform"].meaning == ""
    assert loaded.update().posterior.to_dict() == case.update().posterior.to_dict()

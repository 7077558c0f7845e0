"""Generated case files, valid and broken: each loads and computes, or is refused
with a CaseError/CaseTypeError naming the field; never another exception,
never a NaN posterior.

Counts: ``make test`` runs a sample; ``make fuzz`` (BELIEFLEDGER_FUZZ=full)
runs at least 10,000 generated files plus 5,000 byte-damaged saved files.
"""

from __future__ import annotations

import json
import math
import random

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import beliefledger as bl
from beliefledger import casefile
from beliefledger.errors import CaseFileError
from helpers import report
from helpers.casegen import (
    HOSTILE,
    Broken,
    all_names,
    break_text,
    case_dicts,
    file_object,
    mutated_files,
)
from helpers.contract import check_computes, check_load, check_refusal

_report = report.reporting_fixture("case files")

N_GENERATED = report.scaled(300, 10_500)
N_VALID = report.scaled(80, 2_000)
N_LARGE = report.scaled(2_000, 10_000)
N_BYTES = report.scaled(300, 5_000)


def _text(case_obj) -> str:
    return json.dumps(file_object(case_obj), ensure_ascii=False, allow_nan=False, indent=1)


@pytest.mark.fuzz
@settings(max_examples=N_VALID)
@given(case_dicts())
def test_valid_generated_files_load_compute_and_round_trip(case_obj):
    case = casefile.loads(_text(case_obj))
    check_computes(case, "generated valid file")
    # the file's content survives: what was written is what is read back
    again = case.to_dict()
    assert [h["name"] for h in again["hypotheses"]] == [h["name"] for h in case_obj["hypotheses"]]
    assert [h["prior"] for h in again["hypotheses"]] == [h["prior"] for h in case_obj["hypotheses"]]
    for e_in, e_out in zip(case_obj.get("evidence", []), again["evidence"], strict=True):
        assert e_out["likelihoods"] == e_in["likelihoods"]
        assert e_out["observed"] == e_in["observed"]
    assert casefile.dumps(casefile.loads(casefile.dumps(case))) == casefile.dumps(case)
    report.add("case files", valid_files_loaded=1)


@pytest.mark.fuzz
@settings(max_examples=N_GENERATED)
@given(mutated_files())
def test_broken_generated_files_are_refused_clearly(broken: Broken):
    outcome = check_load(broken.data, broken.tokens, broken.describe())
    report.add("case files", broken_files_tried=1, **{f"broken_files_{outcome}": 1})


@pytest.mark.fuzz
def test_byte_damaged_saved_files():
    """Saved files cut short or with characters dropped, swapped or inserted."""
    rnd = random.Random(20261201)
    bases = [casefile.dumps(bl.example_case())]
    hostile = bl.Case(HOSTILE[0], hypotheses={h: 1 / 4 for h in HOSTILE[1:5]})
    hostile.add_evidence(HOSTILE[5], states=HOSTILE[6:9],
                         likelihoods={h: [0.2, 0.3, 0.5] for h in HOSTILE[1:5]},
                         observed=HOSTILE[7])
    bases.append(casefile.dumps(hostile))
    outcomes = {"loaded": 0, "refused": 0}
    for i in range(N_BYTES):
        base = bases[i % len(bases)]
        data, _ = break_text(base, rnd)
        tokens = all_names(json.loads(base))
        outcomes[check_load(data, tokens, f"damaged file #{i}: {data!r:.200}")] += 1
    assert outcomes["refused"] > N_BYTES // 2  # most damage must be noticed, not absorbed
    report.add("case files", damaged_files_tried=N_BYTES,
               damaged_files_refused=outcomes["refused"])


# --------------------------------------------------------------------------- each kind, by hand


def _example_obj():
    return json.loads(casefile.dumps(bl.example_case()))


def _refused(obj_or_text, *must_mention: str) -> str:
    data = obj_or_text if isinstance(obj_or_text, str | bytes) else json.dumps(obj_or_text)
    with pytest.raises(CaseFileError) as info:
        casefile.loads(data)
    msg = str(info.value)
    for word in must_mention:
        assert word.lower() in msg.lower(), msg
    return msg


def _set(path, value):
    obj = _example_obj()
    node = obj
    for k in path[:-1]:
        node = node[k]
    node[path[-1]] = value
    return obj


@pytest.mark.parametrize("value, word", [
    ("0.3", "prior"), (None, "prior"), (True, "prior"), ([0.3], "prior"),
    (-0.1, "outside [0, 1]"), (1.5, "outside [0, 1]"), (10**400, "prior"),
])
def test_bad_prior_named(value, word):
    msg = _refused(_set(["case", "hypotheses", 1, "prior"], value), word)
    assert "relief valve lifted" in msg


@pytest.mark.parametrize("literal", ["NaN", "Infinity", "-Infinity", "1e999"])
def test_non_finite_numbers_refused(literal):
    text = casefile.dumps(bl.example_case()).replace('"prior": 0.35', f'"prior": {literal}', 1)
    assert literal in text
    msg = _refused(text)
    assert any(w in msg for w in ("NaN", "Infinity", "inf", "not a number")), msg


def test_likelihood_out_of_range_names_item_state_and_hypothesis():
    obj = _set(["case", "evidence", 2, "likelihoods", "relief valve lifted", 0], 1.2)
    _refused(obj, "oil residue on compressor", "present", "relief valve lifted")


def test_missing_and_extra_keys_named():
    obj = _example_obj()
    del obj["case"]["evidence"][0]["states"]
    _refused(obj, "states", "detector alarm order")
    obj = _example_obj()
    obj["case"]["hypotheses"][0]["prior_source"] = "x"
    _refused(obj, "prior_source")
    obj = _example_obj()
    obj["case"]["evidence"][1]["likelihoods"]["no such cause"] = [0.5, 0.5]
    _refused(obj, "no such cause")
    obj = _example_obj()
    obj["signature"] = "x"
    _refused(obj, "signature")


def test_duplicate_and_empty_names_named():
    obj = _example_obj()
    obj["case"]["hypotheses"].append(dict(obj["case"]["hypotheses"][0]))
    _refused(obj, "compressor seal leak", "twice")
    obj = _example_obj()
    obj["case"]["evidence"].append(dict(obj["case"]["evidence"][3]))
    _refused(obj, "permit-to-work log", "twice")
    _refused(_set(["case", "hypotheses", 2, "name"], "   "), "empty")
    _refused(_set(["case", "evidence", 1, "states"], ["burst", "burst"]), "twice")


def test_unknown_states_named():
    _refused(_set(["case", "evidence", 1, "observed"], "melted"), "melted",
             "relief valve tell-tale")
    _refused(_set(["case", "active_scenario"], "worst case"), "worst case")
    _refused(_set(["case", "active_scenario"], ["industry base rates"]), "active_scenario")


@pytest.mark.parametrize("depth", [40, 5_000, 200_000])
def test_deep_nesting_refused(depth):
    text = casefile.dumps(bl.example_case()).replace(
        '"notes": "Demonstration case. All numbers are invented."',
        '"notes": ' + "[" * depth + "]" * depth, 1)
    _refused(text, "notes" if depth < 1000 else "nested")


def test_huge_strings_refused_with_the_limit():
    _refused(_set(["case", "hypotheses", 0, "name"], "x" * 1_000), "hypothesis name", "limit")
    _refused(_set(["case", "notes"], "x" * 50_000), "notes", "limit")


@pytest.mark.parametrize("version", [0, 4, "3", 3.0, True, None, [1]])
def test_wrong_schema_versions(version):
    _refused(_set(["schema_version"], version), "schema_version")


def test_integer_with_too_many_digits_is_a_json_error_not_a_crash():
    text = casefile.dumps(bl.example_case()).replace(
        f'"schema_version": {casefile.SCHEMA_VERSION}', '"schema_version": ' + "1" * 5000)
    _refused(text, "JSON")


@pytest.mark.parametrize("cut", [0, 1, 50, 500, -2])
def test_truncated_json(cut):
    text = casefile.dumps(bl.example_case())
    _refused(text[:cut], "JSON")


def test_not_utf8_and_not_json():
    _refused(b"\xff\xfe{}", "UTF-8")
    _refused(b"\x80\x04\x95\x10\x00\x00\x00\x00\x00\x00\x00}\x94.", "UTF-8")  # a pickle
    _refused("[]", "JSON object")


def test_loaded_but_odd_files_compute():
    """Sums off 1 are accepted on load (nothing saved is lost) and reported."""
    obj = _set(["case", "hypotheses", 0, "prior"], 0.9)
    case = casefile.loads(json.dumps(obj))
    check_computes(case, "prior sum 1.55")
    assert any(f.code == "prior-sum" for f in case.update().flags)
    obj = _example_obj()
    for h in obj["case"]["hypotheses"]:
        h["prior"] = 0
    case = casefile.loads(json.dumps(obj))
    ledger = case.update()
    assert not math.isnan(ledger.posterior.sum())
    assert any(f.code == "prior-sum" and f.severity == "error" for f in ledger.flags)


def test_load_case_from_disk(tmp_path):
    p = tmp_path / "c.json"
    p.write_bytes(b'{"format": "beliefledger-case", "schema_version": 1, "case": ')
    with pytest.raises(CaseFileError, match="not valid JSON"):
        bl.load_case(p)
    with pytest.raises(CaseFileError, match="no case file"):
        bl.load_case(tmp_path / "missing.json")
    with pytest.raises(CaseFileError, match="folder"):
        bl.load_case(tmp_path)


# --------------------------------------------------------------------------- large inputs


def large_case_text(n_hyp: int, n_ev: int) -> str:
    """Invented test data: a wide or a long case file, written directly."""
    hyps = [f"cause {i:05d}" for i in range(n_hyp)]
    cols = {h: [0.25, 0.75] if i % 2 else [0.6, 0.4] for i, h in enumerate(hyps)}
    case = {
        "title": "large (invented test data)",
        "hypotheses": [{"name": h, "prior": 1 / n_hyp} for h in hyps],
        "evidence": [{"name": f"item {k:05d}", "states": ["seen", "not seen"],
                      "likelihoods": cols, "observed": "seen" if k % 3 else "not seen"}
                     for k in range(n_ev)],
    }
    return json.dumps(file_object(case))


@pytest.mark.parametrize("n_hyp, n_ev", [(N_LARGE, 3), (4, N_LARGE)])
def test_large_case_files_load_compute_and_page(tmp_path, n_hyp, n_ev):
    path = tmp_path / "large.json"
    path.write_text(large_case_text(n_hyp, n_ev), encoding="utf-8")
    loaded = bl.load_case(path)
    assert len(loaded.hypothesis_names) == n_hyp and len(loaded.evidence_names) == n_ev
    assert casefile.loads(casefile.dumps(loaded)).to_dict() == loaded.to_dict()
    ledger = loaded.update()
    assert abs(ledger.posterior.sum() - 1) < 1e-9
    _assert_views_page(loaded)
    html = bl.display.case_html(loaded)
    assert f"Showing the first 50 of {max(n_hyp, n_ev):,}" in html  # paged, not 10,000 rows
    assert html.count("<tr>") <= 2 * 51
    report.add("case files", large_files_loaded=1)


def _count_widgets(w, seen=None) -> int:
    seen = set() if seen is None else seen
    if id(w) in seen:
        return 0
    seen.add(id(w))
    return 1 + sum(_count_widgets(c, seen) for c in (getattr(w, "children", ()) or ()))


def _assert_views_page(case) -> None:
    """The editors show one page of a huge case, not a widget per row."""
    try:
        from beliefledger.widgets import EvidenceEditor, HypothesisEditor
    except ImportError:
        return
    for cls in (HypothesisEditor, EvidenceEditor):
        n = _count_widgets(cls(case))
        assert n < 1_000, f"{cls.__name__} built {n} widgets for a large case"


def test_registered_extras_sections_have_callable_validators():
    from beliefledger.case.extras import LOSS_TABLE, SECTIONS, UNCERTAINTY

    assert {UNCERTAINTY, LOSS_TABLE} <= set(SECTIONS)
    for key, sec in SECTIONS.items():
        assert sec.key == key and callable(sec.validate)


@settings(max_examples=report.scaled(30, 500))
@given(case_dicts(), st.sampled_from(["uncertainty", "loss_table"]),
       st.sampled_from([None, 1, "x", [], {}, {"zz": 1}, [{"a": 1}]]))
def test_registered_extras_sections_refused_clearly(case_obj, key, value):
    case_obj = dict(case_obj, extras={key: value})
    try:
        case = casefile.loads(json.dumps(file_object(case_obj)))
    except BaseException as exc:  # noqa: BLE001
        check_refusal(exc, [key, "extras"], f"extras {key}={value!r}")
    else:
        check_computes(case, f"extras {key}={value!r}")

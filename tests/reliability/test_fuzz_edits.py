"""Generated editing calls, valid and broken, on generated cases.

Every call either succeeds (the case still computes with no NaN, saves and
loads back unchanged, and listeners hear of it once) or is refused with a
CaseError/CaseTypeError naming the field and leaves the case exactly as it
was (same content, same version, no listener called).

Counts: ``make test`` runs a sample; ``make fuzz`` runs over 10,000 calls.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import beliefledger as bl
from beliefledger import casefile
from helpers import report
from helpers.casegen import HOSTILE, case_dicts, file_object
from helpers.contract import check_edit, check_refusal
from helpers.editgen import BAD_NAMES, BAD_NUMBERS, draw_edit

_report = report.reporting_fixture("edits")

N_SEQUENCES = report.scaled(80, 1_100)
EDITS_PER_SEQUENCE = 10


def _start(case_obj) -> bl.Case:
    import json

    return casefile.loads(json.dumps(file_object(case_obj)))


@pytest.mark.fuzz
@settings(max_examples=N_SEQUENCES)
@given(st.one_of(case_dicts(), st.just(None)), st.data())
def test_generated_edit_sequences_keep_the_contract(case_obj, data):
    case = bl.example_case() if case_obj is None else _start(case_obj)
    events: list[str] = []
    case.on_change(lambda c, what: events.append(what))
    applied = refused = 0
    for _ in range(EDITS_PER_SEQUENCE):
        label, call, tokens = draw_edit(data, case)
        outcome = check_edit(case, call, tokens, label, events)
        if outcome == "applied":
            applied += 1
        else:
            refused += 1
    report.add("edits", calls_tried=applied + refused, calls_applied=applied,
               calls_refused=refused)


@pytest.mark.parametrize("bad", [b for b in BAD_NUMBERS if not isinstance(b, np.float32)],
                         ids=repr)
def test_bad_probabilities_refused_everywhere(small_case, bad):
    """Each probability-taking edit refuses each bad number and changes nothing."""
    events: list[str] = []
    small_case.on_change(lambda c, what: events.append(what))
    calls = {
        "set_prior": lambda: small_case.set_prior("H1", bad),
        "set_prior rescale": lambda: small_case.set_prior("H1", bad, rescale=True),
        "set_priors": lambda: small_case.set_priors({"H1": bad, "H2": 0.3, "Other": 0.2}),
        "set_likelihood cell": lambda: small_case.set_likelihood("E1", "H2", bad,
                                                                 state="present"),
        "set_likelihood column": lambda: small_case.set_likelihood("E1", "H2", [bad, 0.5]),
        "add_hypothesis": lambda: small_case.add_hypothesis(
            "H3", bad, likelihoods={"E1": [0.5, 0.5], "E2": [0.5, 0.5], "E3": [0.5, 0.5]}),
        "add_scenario": lambda: small_case.add_scenario("alt", {"H1": bad, "H2": 0.5,
                                                                "Other": 0.5}),
        "add_evidence": lambda: small_case.add_evidence(
            "E4", states=["a", "b"], likelihoods={"H1": [bad, 0.5], "H2": [0.5, 0.5],
                                                   "Other": [0.5, 0.5]}),
    }
    for label, call in calls.items():
        outcome = check_edit(small_case, call, {"prior", "likelihood", "H1", "H2"}, label, events)
        assert outcome == "refused", f"{label} accepted {bad!r}"
    report.add("edits", calls_tried=len(calls), calls_refused=len(calls))


@pytest.mark.parametrize("bad", BAD_NAMES, ids=repr)
def test_bad_names_refused(small_case, bad):
    events: list[str] = []
    calls = {
        "rename_hypothesis": lambda: small_case.rename_hypothesis("H1", bad),
        "rename_evidence": lambda: small_case.rename_evidence("E1", bad),
        "add_scenario": lambda: small_case.add_scenario(bad, {"H1": 0.5, "H2": 0.3, "Other": 0.2}),
        "observe": lambda: small_case.observe("E1", bad),
        "set_prior": lambda: small_case.set_prior(bad, 0.5),
    }
    for label, call in calls.items():
        if bad is None and label == "observe":
            continue  # observe(item, None) marks it not yet observed: valid
        outcome = check_edit(small_case, call,
                             {"name", "hypothesis", "evidence", "scenario", "state", "observed"},
                             label, events)
        assert outcome == "refused", f"{label} accepted {bad!r}"


def test_unobserving_an_likelihood_evidence_item_keeps_the_file_loadable(small_case, tmp_path):
    small_case.add_evidence("lab", likelihoods={"H1": 0.9, "H2": 0.2, "Other": 0.4},
                            observed="positive", likelihood_evidence=True)
    events: list[str] = []
    outcome = check_edit(small_case, lambda: small_case.observe("lab", None),
                         {"lab", "observed"}, "observe(lab, None)", events)
    path = small_case.save(tmp_path / "c.json")
    assert bl.load_case(path).to_dict() == small_case.to_dict()
    assert outcome in ("applied", "refused")


def test_failed_listener_free_edit_leaves_hostile_names_intact(small_case):
    """Hostile text is data: stored verbatim, never interpreted."""
    for i, text in enumerate(HOSTILE):
        name = text.strip()
        small_case.add_scenario(f"s{i} {name}"[:200], {"H1": 0.2, "H2": 0.3, "Other": 0.5},
                                note=text)
    notes = [s.note for s in small_case.scenarios.values()]
    assert notes == HOSTILE
    again = casefile.loads(casefile.dumps(small_case))
    assert [s.note for s in again.scenarios.values()] == HOSTILE


def test_nan_never_reaches_the_posterior_through_tiny_numbers(small_case):
    small_case.set_prior("H1", 5e-324)
    small_case.set_likelihood("E1", "H1", 5e-324, state="present")
    ledger = small_case.update()
    assert not math.isnan(ledger.posterior.sum())
    assert abs(ledger.posterior.sum() - 1) < 1e-12


def test_constructor_refuses_bad_tables_clearly():
    for hyps, token in [({"A": math.nan, "B": 0.5}, "A"), ({"A": 0.5, "": 0.5}, "empty"),
                        ({"A": 1.2, "B": -0.2}, "A"), ([{"name": "A"}], "prior"),
                        ([{"name": "A", "prior": 1, "colour": "red"}], "colour"),
                        ({}, "empty"), ("A", "hypotheses"), (None, "hypotheses"),
                        ({"A": 0.5, "B": 0.4}, "sum")]:
        try:
            bl.Case("t", hypotheses=hyps)
        except BaseException as exc:  # noqa: BLE001
            check_refusal(exc, [token], f"Case(hypotheses={hyps!r})")
        else:
            raise AssertionError(f"Case accepted {hyps!r}")


def test_the_contract_itself_catches_violations(small_case):
    """The checker fails on each kind of violation (so the fuzz tests can fail)."""
    from beliefledger.errors import CaseError
    from helpers.contract import ContractBroken, check_load

    events: list[str] = []

    def half_done():
        small_case._hyps.pop("H2")  # changes the case, then refuses
        raise CaseError("prior of 'H2' refused")

    def crashes():
        raise KeyError("H1")

    def vague():
        raise CaseError("something went wrong")

    for call, tokens in [(half_done, {"prior"}), (crashes, {"H1"}), (vague, {"prior", "H1"})]:
        case_before = small_case.to_dict()
        with pytest.raises(ContractBroken):
            check_edit(small_case, call, tokens, call.__name__, events)
        small_case = bl.Case.from_dict(case_before)
    with pytest.raises(ContractBroken):
        check_load(b"\xff", {"no such word"}, "wrong words")

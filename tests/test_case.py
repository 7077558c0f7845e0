"""The case model: construction from many shapes, validated edits, scenarios."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

import beliefledger as bl
from beliefledger.errors import CaseError, CaseTypeError


def snapshot(case: bl.Case) -> dict:
    return case.to_dict()


# --- construction ------------------------------------------------------------------


def test_design_interface_example():
    case = bl.Case("Title", hypotheses={"H1": 0.5, "H2": 0.3, "Other": 0.2})
    case.add_evidence("E1", states=["present", "absent"],
                      likelihoods={"H1": [0.9, 0.1], "H2": [0.2, 0.8], "Other": [0.5, 0.5]},
                      observed="present")
    ledger = case.update()
    assert isinstance(ledger.posterior, pd.Series)
    assert ledger.posterior.sum() == pytest.approx(1)
    assert list(ledger.steps.index) == ["prior", "E1"]
    assert list(ledger.steps.columns) == ["H1", "H2", "Other"]
    # 0.45 / (0.45 + 0.06 + 0.10)
    assert ledger.posterior["H1"] == pytest.approx(0.45 / 0.61)
    assert ledger.map_hypothesis == "H1"
    assert ledger.ml_hypothesis == "H1"
    assert all(isinstance(f, bl.Flag) for f in ledger.flags)


def test_hypotheses_from_dicts_lists_series_frames_and_csv(tmp_path):
    as_dict = bl.Case("a", {"A": {"prior": 0.6, "source": "plant log", "description": "d"},
                            "Other": {"prior": 0.4}})
    as_list = bl.Case("b", [{"name": "A", "prior": 0.6, "source": {"where": "plant log"}},
                            {"name": "Other", "prior": 0.4}])
    as_series = bl.Case("c", pd.Series({"A": 0.6, "Other": 0.4}))
    frame = pd.DataFrame({"name": ["A", "Other"], "prior": [0.6, 0.4],
                          "where": ["plant log", None], "who": ["RO", None]})
    as_frame = bl.Case("d", frame)
    path = tmp_path / "h.csv"
    frame.to_csv(path, index=False)
    as_csv = bl.Case.from_csv("e", path)
    for case in (as_dict, as_list, as_series, as_frame, as_csv):
        assert case.base_priors.to_dict() == {"A": 0.6, "Other": 0.4}
    assert as_dict.hypotheses["A"].source.where == "plant log"
    assert as_frame.hypotheses["A"].source.who == "RO"
    assert as_csv.hypotheses["A"].source.where == "plant log"
    assert not as_csv.hypotheses["Other"].source.is_sourced


def test_catch_all_detected_by_name_or_flag():
    case = bl.Case("c", {"A": 0.5, "Other cause": 0.3, "B": {"prior": 0.2, "catch_all": True}})
    flags = {n: h.catch_all for n, h in case.hypotheses.items()}
    assert flags == {"A": False, "Other cause": True, "B": True}


def test_evidence_from_dataframe_and_csv(tmp_path):
    case = bl.Case("c", {"A": 0.5, "B": 0.5}, exhaustive=True)
    frame = pd.DataFrame({"A": [0.9, 0.1], "B": [0.3, 0.7]}, index=["on", "off"])
    case.add_evidence("frame", likelihoods=frame, observed="on")
    path = tmp_path / "lik.csv"
    frame.to_csv(path)
    case.add_evidence("csv", likelihoods=str(path), observed="off")
    case.add_evidence("dicts", likelihoods={"A": {"on": 0.9, "off": 0.1},
                                            "B": {"on": 0.3, "off": 0.7}})
    for name in ("frame", "csv", "dicts"):
        ev = case.evidence[name]
        assert ev.states == ("on", "off")
        pd.testing.assert_frame_equal(ev.likelihoods, frame.rename_axis(index="state",
                                                                        columns="hypothesis"))


@pytest.mark.parametrize("bad, match", [
    ({"A": -0.1, "B": 1.1}, r"prior of hypothesis 'A' is -0.1, outside \[0, 1\]"),
    ({"A": float("nan"), "B": 0.5}, r"prior of hypothesis 'A' is NaN"),
    ({"A": math.inf, "B": 0.5}, r"prior of hypothesis 'A' is inf"),
    ({"A": 0.5, "B": 0.4}, r"priors sum to 0.9, not 1.*normalize=True"),
    ({}, r"hypothesis set is empty"),
    ({"A": 0.5, " ": 0.5}, r"hypothesis name is empty"),
])
def test_bad_priors_are_refused_with_the_value_and_the_fix(bad, match):
    with pytest.raises(CaseError, match=match):
        bl.Case("bad", bad)


def test_wrong_types_raise_type_errors():
    with pytest.raises(CaseTypeError, match=r"prior of hypothesis 'A' must be a number"):
        bl.Case("bad", {"A": "0.5", "B": 0.5})
    with pytest.raises(CaseTypeError, match="must be a number"):
        bl.Case("bad", {"A": True, "B": 0.0})
    with pytest.raises(CaseTypeError, match="hypotheses must be"):
        bl.Case("bad", 42)


def test_duplicate_hypothesis_names_are_refused():
    with pytest.raises(CaseError, match="'A' appears twice"):
        bl.Case("dup", [{"name": "A", "prior": 0.5}, {"name": "A ", "prior": 0.5}])


def test_normalize_is_recorded_as_an_assumption():
    case = bl.Case("n", {"A": 2.0 / 10, "B": 0.6}, normalize=True)
    assert case.base_priors.sum() == pytest.approx(1)
    assert case.base_priors["A"] == pytest.approx(0.25)
    assert case.assumptions[0]["kind"] == "normalize-priors"
    assert "0.8" in case.assumptions[0]["detail"]


def test_column_sum_error_message_follows_the_style_guide():
    case = bl.Case("c", {"seal failure": 0.5, "Other": 0.5})
    with pytest.raises(CaseError, match=(r"likelihoods of evidence 'valve residue' for hypothesis "
                                         r"'seal failure' sum to 1.4 over its states \(want 1 "
                                         r"within 1e-09\).*likelihood_evidence=True")):
        case.add_evidence("valve residue", states=["yes", "no"],
                          likelihoods={"seal failure": [0.9, 0.5], "Other": [0.5, 0.5]})
    assert case.evidence == {}


@pytest.mark.parametrize("kwargs, match", [
    (dict(states=["x", "y"], likelihoods={"A": [0.5, 0.5]}), r"missing hypothesis\(es\) \['B'\]"),
    (dict(states=["x", "y"], likelihoods={"A": [0.5, 0.5], "B": [1, 0], "C": [1, 0]}),
     r"unknown hypothesis\(es\) \['C'\]"),
    (dict(states=["x", "y"], likelihoods={"A": [0.5, 0.5], "B": [1.0]}), "1 values but there are 2"),
    (dict(states=["x", "y"], likelihoods={"A": [0.5, 0.5], "B": [1, 0]}, observed="z"),
     r"observed state 'z' of evidence 'E' is not among its states \['x', 'y'\]"),
    (dict(states=["x", "x"], likelihoods={"A": [0.5, 0.5], "B": [1, 0]}), r"state\(s\) \['x'\] twice"),
    (dict(states=["x", "y"], likelihoods={"A": {"x": 1.0}, "B": [1, 0]}), r"missing state\(s\) \['y'\]"),
    (dict(states=["x", "y"], likelihoods={"A": [float("nan"), 0.5], "B": [1, 0]}), "is NaN"),
])
def test_bad_evidence_is_refused_and_case_unchanged(kwargs, match):
    case = bl.Case("c", {"A": 0.5, "B": 0.5})
    before = snapshot(case)
    with pytest.raises(CaseError, match=match):
        case.add_evidence("E", **kwargs)
    assert snapshot(case) == before


# --- edits ---------------------------------------------------------------------------


def test_rejected_edits_leave_the_case_exactly_as_it_was(demo_case):
    before = snapshot(demo_case)
    version = demo_case.version
    attempts = [
        lambda: demo_case.set_prior("compressor seal leak", 1.5),
        lambda: demo_case.set_prior("no such", 0.1),
        lambda: demo_case.set_priors({"compressor seal leak": 1.0}),
        lambda: demo_case.observe("detector alarm order", "nonsense"),
        lambda: demo_case.observe("no such", "x"),
        lambda: demo_case.set_likelihood("oil residue on compressor", "other cause", [0.9, 0.9]),
        lambda: demo_case.set_likelihood("oil residue on compressor", "other cause", -1,
                                         state="present"),
        lambda: demo_case.add_hypothesis("new", 0.1),  # needs likelihood columns
        lambda: demo_case.add_hypothesis("other cause", 0.1),
        lambda: demo_case.rename_hypothesis("other cause", "relief valve lifted"),
        lambda: demo_case.rename_evidence("permit-to-work log", "relief valve tell-tale"),
        lambda: demo_case.add_scenario("bad", {"compressor seal leak": 1.0}),
        lambda: demo_case.add_scenario("base", demo_case.priors.to_dict()),
        lambda: demo_case.use_scenario("nope"),
        lambda: demo_case.set_hypothesis("other cause", source={"bogus": 1}),
        lambda: demo_case.set_details(title=""),
    ]
    for attempt in attempts:
        with pytest.raises((CaseError, CaseTypeError)):
            attempt()
        assert snapshot(demo_case) == before
    assert demo_case.version == version


def test_single_prior_edit_may_leave_the_sum_off_and_is_reported():
    case = bl.Case("c", {"A": 0.5, "B": 0.3, "Other": 0.2})
    case.set_prior("A", 0.6, source="revised log count")
    assert case.base_priors.sum() == pytest.approx(1.1)
    ledger = case.update()
    assert [f.code for f in ledger.flags if f.severity == "error"] == ["prior-sum"]
    assert ledger.posterior.sum() == pytest.approx(1)
    assert case.hypotheses["A"].source.where == "revised log count"
    case.normalize_priors()
    assert case.base_priors.sum() == pytest.approx(1)
    assert case.assumptions[-1]["kind"] == "normalize-priors"
    assert case.update().ok


def test_prior_edit_with_rescale_keeps_the_sum_and_records_it():
    case = bl.Case("c", {"A": 0.5, "B": 0.3, "Other": 0.2})
    case.set_prior("A", 0.6, rescale=True)
    assert case.base_priors.to_dict() == pytest.approx({"A": 0.6, "B": 0.24, "Other": 0.16})
    assert case.assumptions[-1]["kind"] == "rescale-priors"


def test_single_likelihood_cell_edit_flags_the_column(small_case):
    small_case.set_likelihood("E1", "H1", 0.7, state="present", source="bench test 4")
    codes = [f.code for f in small_case.update().flags]
    assert "column-sum" in codes
    assert small_case.evidence["E1"].source_of("present", "H1").where == "bench test 4"
    small_case.set_likelihood("E1", "H1", 0.3, state="absent")
    assert "column-sum" not in [f.code for f in small_case.update().flags]


def test_whole_column_edit_and_table_import(small_case):
    small_case.set_likelihood("E1", "H2", {"present": 0.4, "absent": 0.6})
    assert small_case.evidence["E1"].likelihood_of("present")["H2"] == 0.4
    frame = pd.DataFrame({"H1": [0.2, 0.8], "H2": [0.5, 0.5], "Other": [0.1, 0.9]},
                         index=["low", "high"])  # rows in another order: matched by name
    small_case.set_likelihoods("E2", frame, source="lab sheet")
    ev = small_case.evidence["E2"]
    assert ev.states == ("high", "low")
    assert ev.likelihood_of("high").to_dict() == {"H1": 0.8, "H2": 0.5, "Other": 0.9}
    assert ev.source.where == "lab sheet"


def test_add_remove_rename_hypotheses_keep_everything_in_step(small_case):
    small_case.add_scenario("flat", {"H1": 1 / 3, "H2": 1 / 3, "Other": 1 / 3}, source="check")
    small_case.add_hypothesis("H3", 0.1, likelihoods={"E1": [0.5, 0.5], "E2": [0.2, 0.8],
                                                      "E3": [0.4, 0.6]}, source="new lead",
                              rescale=True)
    assert small_case.base_priors.to_dict() == pytest.approx(
        {"H1": 0.45, "H2": 0.27, "Other": 0.18, "H3": 0.1})
    assert small_case.scenario_priors("flat").sum() == pytest.approx(1)
    assert small_case.evidence["E1"].hypotheses == ("H1", "H2", "Other", "H3")
    small_case.rename_hypothesis("H3", "pump cavitation")
    assert "pump cavitation" in small_case.scenario_priors("flat")
    assert small_case.evidence["E2"].likelihood_of("low")["pump cavitation"] == 0.8
    small_case.remove_hypothesis("H2")
    assert small_case.hypothesis_names == ["H1", "Other", "pump cavitation"]
    assert small_case.base_priors.sum() == pytest.approx(1)
    assert small_case.scenario_priors("flat").sum() == pytest.approx(1)
    assert small_case.evidence["E1"].table.shape == (2, 3)
    kinds = [a["kind"] for a in small_case.assumptions]
    assert kinds.count("rescale-priors") >= 3
    assert small_case.update().posterior.sum() == pytest.approx(1)


def test_rename_and_remove_evidence(small_case):
    small_case.rename_evidence("E1", "alarm")
    assert small_case.evidence_names == ["alarm", "E2", "E3"]
    small_case.remove_evidence("E2")
    assert small_case.update().evidence_steps == ["alarm"]


def test_scenarios_switch_the_priors_the_update_uses(small_case):
    small_case.add_scenario("industry", {"H1": 0.2, "H2": 0.6, "Other": 0.2},
                            source={"where": "industry survey", "who": "JV"})
    assert small_case.scenario_names == ["base", "industry"]
    base = small_case.update()
    small_case.use_scenario("industry")
    assert small_case.active_scenario == "industry"
    assert small_case.priors.to_dict() == {"H1": 0.2, "H2": 0.6, "Other": 0.2}
    other = small_case.update()
    assert other.scenario == "industry"
    assert base.posterior["H1"] != other.posterior["H1"]
    with small_case.scenario("base"):
        assert small_case.update().posterior["H1"] == base.posterior["H1"]
    assert small_case.active_scenario == "industry"
    small_case.remove_scenario("industry")
    assert small_case.active_scenario == "base"


def test_listeners_fire_once_per_successful_edit(small_case):
    calls = []
    unsubscribe = small_case.on_change(lambda case, what: calls.append(what))
    small_case.observe("E3", "yes")
    with pytest.raises(CaseError):
        small_case.observe("E3", "maybe")
    small_case.set_prior("H1", 0.4, rescale=True)
    assert calls == ["observed", "prior"]
    unsubscribe()
    small_case.observe("E3", None)
    assert len(calls) == 2


def test_likelihood_evidence_evidence_needs_no_column_sum():
    case = bl.Case("c", {"A": 0.5, "Other": 0.5})
    case.add_evidence("witness", likelihood_evidence=True, observed="saw smoke",
                      likelihoods={"A": 0.9, "Other": 0.3})
    assert case.evidence["witness"].states == ("saw smoke",)
    assert "column-sum" not in [f.code for f in case.update().flags]
    with pytest.raises(CaseError, match="likelihood_evidence, so name its observed state"):
        case.add_evidence("w2", likelihood_evidence=True, likelihoods={"A": 0.9, "Other": 0.3})


def test_evidence_normalize_is_recorded():
    case = bl.Case("c", {"A": 0.5, "Other": 0.5})
    case.add_evidence("E", states=["x", "y"], likelihoods={"A": [0.4, 0.4], "Other": [0.2, 0.6]},
                      normalize=True)
    assert case.evidence["E"].likelihood_of("x").to_dict() == {"A": 0.5, "Other": 0.25}
    assert case.assumptions[-1] == {"kind": "normalize-likelihoods", "target": "E",
                                    "detail": "likelihood columns rescaled to sum to 1 over the "
                                              "states"}


def test_reprs_are_deterministic(demo_case):
    assert repr(demo_case) == (
        "Case('Ammonia odour at the Eastgate cold store': 5 hypotheses, priors sum to 1; "
        "6 evidence items, 5 observed; scenario 'base')")
    assert repr(demo_case.evidence["suction pressure trend"]) == (
        "Evidence('suction pressure trend': 3 states, pending)")
    assert repr(demo_case.update()).startswith("Ledger('Ammonia odour at the Eastgate cold store': "
                                               "5 evidence steps, MAP 'compressor seal leak'")


def test_display_bundle_carries_the_machine_readable_case(demo_case):
    from beliefledger.case import CASE_MIMETYPE

    bundle = demo_case._repr_mimebundle_()
    assert bundle["text/plain"] == repr(demo_case)
    assert "<table" in bundle["text/html"]
    rebuilt = bl.casefile.from_envelope(bundle[CASE_MIMETYPE])
    assert rebuilt.to_dict() == demo_case.to_dict()


def test_evidence_tables_are_read_only(small_case):
    ev = small_case.evidence["E1"]
    with pytest.raises(ValueError):
        ev.table[0, 0] = 0.0
    frame = ev.likelihoods
    frame.iloc[0, 0] = 0.0  # a copy: the case is untouched
    assert small_case.evidence["E1"].table[0, 0] == 0.9
    assert np.isclose(small_case.update().posterior.sum(), 1)


def test_flags_must_be_booleans(small_case):
    before = snapshot(small_case)
    with pytest.raises(CaseTypeError, match="exhaustive must be True or False, got str 'no'"):
        small_case.set_details(exhaustive="no")
    assert snapshot(small_case) == before
    with pytest.raises(CaseTypeError, match="safety_related must be True or False"):
        bl.Case("c", {"A": 1.0}, safety_related=1)


# --------------------------------------------------------------------------- bulk construction


def test_from_tables_builds_the_same_case_as_item_by_item(rng):
    names = [f"cause {i}" for i in range(6)] + ["other cause"]
    priors = pd.Series(rng.dirichlet(np.ones(7)), index=names)
    tables, observed = {}, {}
    for k in range(40):
        states = [f"s{j}" for j in range(int(rng.integers(2, 5)))]
        tables[f"item {k}"] = pd.DataFrame(rng.dirichlet(np.ones(len(states)), size=7).T,
                                           index=states, columns=names)
        if k % 3:
            observed[f"item {k}"] = states[int(rng.integers(len(states)))]
    src = {"where": "invented test tables"}
    bulk = bl.Case.from_tables("bulk", priors, tables, observed=observed, sources=src,
                               normalize=True)
    one = bl.Case("bulk", priors, normalize=True)
    for name, frame in tables.items():
        one.add_evidence(name, likelihoods=frame, observed=observed.get(name), source=src)
    assert bulk.to_dict() == one.to_dict()
    np.testing.assert_allclose(bulk.update().probabilities, one.update().probabilities)


def test_from_tables_names_the_bad_item_and_keeps_nothing():
    frame = pd.DataFrame({"A": [0.9, 0.2], "Other": [0.5, 0.5]}, index=["yes", "no"])
    with pytest.raises(CaseError, match="evidence 'bad one' for hypothesis 'A' sum to 1.1"):
        bl.Case.from_tables("t", {"A": 0.5, "Other": 0.5}, {"good": frame.assign(A=[0.9, 0.1]),
                                                            "bad one": frame})
    with pytest.raises(CaseError, match=r"observed names evidence \['ghost'\]"):
        bl.Case.from_tables("t", {"A": 0.5, "Other": 0.5}, {"good": frame.assign(A=[0.9, 0.1])},
                            observed={"ghost": "yes"})

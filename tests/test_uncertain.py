"""Uncertain observations (case/uncertain.py and their path through the engine).

The scenario (a kiln shutdown at a brickworks) and every number are invented
test data.
"""

from __future__ import annotations

import json
import os
import subprocess
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

import beliefledger as bl
from beliefledger.case.uncertain import jeffrey_weights, report_matrix, report_weights
from beliefledger.errors import CaseError, CaseTypeError

ROOT = Path(__file__).resolve().parent.parent
PGMPY_VENV = ROOT / "tests" / "benchmarks" / ".venv-pgmpy"


def kiln() -> bl.Case:
    case = bl.Case("Kiln shutdown", hypotheses={
        "burner fault": {"prior": 0.4, "source": "plant log (invented)"},
        "thermocouple drift": {"prior": 0.35, "source": "plant log (invented)"},
        "other cause": {"prior": 0.25, "source": "judgement (invented)"}})
    case.add_evidence("flame colour", states=["blue", "yellow", "orange"],
                      likelihoods={"burner fault": [0.2, 0.5, 0.3],
                                   "thermocouple drift": [0.6, 0.3, 0.1],
                                   "other cause": [0.4, 0.3, 0.3]},
                      source="burner maker's note (invented)")
    case.add_evidence("alarm log", states=["tripped", "clear"],
                      likelihoods={"burner fault": [0.7, 0.3],
                                   "thermocouple drift": [0.9, 0.1],
                                   "other cause": [0.5, 0.5]},
                      observed="tripped", source="alarm history (invented)")
    return case


OPERATOR = {"where": "kiln operator's statement, shift log 14 (invented)",
            "who": "shift lead", "why": "saw the flame through the port for a few seconds"}


# --------------------------------------------------------------------------- likelihood form

def test_virtual_evidence_against_hand_computation():
    # By hand: P(report | H) = 0.2 P(blue | H) + 0.7 P(yellow | H) + 0.1 P(orange | H)
    #   burner 0.42, thermocouple 0.34, other 0.32; times alarm 0.7 / 0.9 / 0.5 and the
    #   priors 0.4 / 0.35 / 0.25: 0.1176, 0.1071, 0.04, which sum to 0.2647.
    case = kiln()
    case.observe("flame colour", likelihood={"blue": 0.2, "yellow": 0.7, "orange": 0.1},
                 source=OPERATOR)
    post = case.update().posterior
    np.testing.assert_allclose(post.to_numpy(), np.array([1176, 1071, 400]) / 2647, rtol=1e-12)


def test_only_the_ratios_of_the_weights_matter():
    a, b = kiln(), kiln()
    a.observe("flame colour", likelihood={"blue": 0.2, "yellow": 0.7, "orange": 0.1})
    b.observe("flame colour", likelihood={"blue": 2, "yellow": 7, "orange": 1})
    np.testing.assert_allclose(a.update().posterior, b.update().posterior, rtol=1e-13)


def _random_case(seed: int, n_h: int, n_s: int) -> bl.Case:
    rng = np.random.default_rng(seed)
    hyps = {f"H{j}": float(p) for j, p in enumerate(rng.dirichlet(np.ones(n_h)))}
    case = bl.Case("random (invented)", hypotheses=hyps, normalize=True)
    for k in range(3):
        tab = rng.dirichlet(np.ones(n_s), size=n_h)
        case.add_evidence(f"E{k}", states=[f"s{i}" for i in range(n_s)],
                          likelihoods={h: tab[j].tolist() for j, h in enumerate(hyps)},
                          observed=f"s{int(rng.integers(n_s))}" if k < 2 else None,
                          normalize=True)
    return case


@given(seed=st.integers(0, 10_000), n_h=st.integers(2, 6), n_s=st.integers(2, 5),
       pick=st.integers(0, 4))
def test_certain_weights_equal_the_plain_observation(seed, n_h, n_s, pick):
    case = _random_case(seed, n_h, n_s)
    s = f"s{pick % n_s}"
    plain = case.copy()
    plain.observe("E2", s)
    case.observe("E2", likelihood={f"s{i}": float(f"s{i}" == s) for i in range(n_s)})
    np.testing.assert_array_equal(case.update().posterior_values, plain.update().posterior_values)


def test_report_helper_states_its_likelihood_form():
    w = report_weights(["blue", "yellow", "orange"], "yellow", 0.8)
    assert w == pytest.approx({"blue": 0.1, "yellow": 0.8, "orange": 0.1})
    np.testing.assert_allclose(report_matrix(3, 0.8),
                               [[0.8, 0.1, 0.1], [0.1, 0.8, 0.1], [0.1, 0.1, 0.8]])
    a, b = kiln(), kiln()
    a.observe_report("flame colour", "yellow", 0.8, source=OPERATOR)
    b.observe("flame colour", likelihood=w, source=OPERATOR)
    np.testing.assert_allclose(a.update().posterior, b.update().posterior, rtol=1e-13)
    unc = a.evidence["flame colour"].uncertain
    assert (unc.reported, unc.reliability, unc.form) == ("yellow", 0.8, "likelihood")
    assert "right with probability 0.8" in a.assumptions[-1]["detail"]
    assert "only their ratios matter" in a.assumptions[-1]["detail"]
    # r = 1 is a certain observation; r = 1 / k carries no information
    c, d = kiln(), kiln()
    c.observe_report("flame colour", "yellow", 1.0)
    d.observe("flame colour", "yellow")
    np.testing.assert_allclose(c.update().posterior, d.update().posterior, rtol=1e-13)
    e, f = kiln(), kiln()
    e.observe_report("flame colour", "yellow", 1 / 3)
    np.testing.assert_allclose(e.update().posterior, f.update().posterior, rtol=1e-13)


# --------------------------------------------------------------------------- probability form

def test_jeffrey_last_is_the_mixture_of_the_certain_updates():
    # Jeffrey's rule: P'(H) = sum_s q(s) P(H | before, s); here computed from each certain
    # observation's posterior, by hand in numpy (no engine) and through the engine.
    case = kiln()
    q = {"blue": 0.1, "yellow": 0.8, "orange": 0.1}
    case.evidence_item("flame colour")
    # the item comes first in the case; put it last by re-adding it after the alarm
    case.remove_evidence("flame colour")
    ref = kiln()
    case.add_evidence("flame colour", states=list(q),
                      likelihoods=ref.evidence["flame colour"].likelihoods,
                      source="burner maker's note (invented)")
    case.observe("flame colour", probability=q, source=OPERATOR)
    led = case.update()
    prior = np.array([0.4, 0.35, 0.25])
    alarm = np.array([0.7, 0.9, 0.5])
    table = ref.evidence["flame colour"].table
    mix = np.zeros(3)
    for i, qs in enumerate(q.values()):
        u = prior * alarm * table[i]
        mix += qs * u / u.sum()
    np.testing.assert_allclose(led.posterior_values, mix, rtol=1e-12)
    info = led.uncertain["flame colour"]
    assert (info["form"], info["position"], info["of"]) == ("probability", 2, 2)
    before = prior * alarm / (prior * alarm).sum()
    np.testing.assert_allclose(list(info["predictive"].values()), table @ before, rtol=1e-12)
    lam = np.array(list(q.values())) / (table @ before)
    np.testing.assert_allclose(list(info["weights"].values()), lam / lam.max(), rtol=1e-12)


@given(seed=st.integers(0, 10_000), n_h=st.integers(2, 6), n_s=st.integers(2, 5))
def test_jeffrey_with_the_current_predictive_leaves_belief_unchanged(seed, n_h, n_s):
    case = _random_case(seed, n_h, n_s)
    led = case.update()
    pred = case.evidence["E2"].table @ led.posterior_values
    pred = pred / pred.sum()
    case.observe("E2", probability={f"s{i}": float(p) for i, p in enumerate(pred)})
    np.testing.assert_allclose(case.update().posterior_values, led.posterior_values,
                               rtol=1e-9, atol=1e-15)


@given(seed=st.integers(0, 10_000), n_h=st.integers(2, 5), n_s=st.integers(2, 4))
def test_a_certain_jeffrey_update_equals_the_plain_observation(seed, n_h, n_s):
    case = _random_case(seed, n_h, n_s)
    plain = case.copy()
    plain.observe("E2", "s0")
    case.observe("E2", probability={f"s{i}": float(i == 0) for i in range(n_s)})
    np.testing.assert_allclose(case.update().posterior_values, plain.update().posterior_values,
                               rtol=1e-12, atol=1e-300)


def flip_case() -> bl.Case:
    """Two causes; a Jeffrey report for 'A' first, then strong evidence for 'B' (invented)."""
    case = bl.Case("order test (invented)", hypotheses={"A": 0.5, "B": 0.5}, exhaustive=True)
    case.add_evidence("report", states=["x1", "x2"], likelihoods={"A": [0.9, 0.1],
                                                                 "B": [0.1, 0.9]},
                      source="invented")
    case.add_evidence("meter", states=["y", "n"], likelihoods={"A": [0.15, 0.85],
                                                               "B": [0.85, 0.15]},
                      observed="y", source="invented")
    case.observe("report", probability={"x1": 0.9, "x2": 0.1}, source=OPERATOR)
    return case


def test_jeffrey_updates_do_not_commute_and_the_flag_says_where_it_matters():
    # By hand. First: before = (0.5, 0.5), P(x1) = 0.5, weights 1.8 / 0.2, so A 0.82, B 0.18;
    # then the meter: 0.123 vs 0.153, MAP 'B'. Last: after the meter P(A) = 0.15, and
    # P'(A) = 0.9 P(A | x1, y) + 0.1 P(A | x2, y) = 0.9 * 0.135/0.22 + 0.1 * 0.015/0.78,
    # about 0.554: MAP 'A'.
    led = flip_case().update()
    assert led.map_hypothesis == "B"
    np.testing.assert_allclose(led.posterior["B"], 0.153 / 0.276, rtol=1e-12)
    info = led.uncertain["report"]
    assert info["map_if_first"] == "B" and info["map_if_last"] == "A"
    np.testing.assert_allclose(info["p_map_if_last"], 0.9 * 0.135 / 0.22 + 0.1 * 0.015 / 0.78,
                               rtol=1e-12)
    flag = next(f for f in led.flags if f.code == "order-sensitive")
    assert flag.severity == "warning" and flag.where == "evidence 'report'"
    assert "step 1 of 2" in flag.message and "placed last the MAP would be 'A'" in flag.message
    # the same report as likelihood weights has no order, so no flag
    case = flip_case()
    case.observe("report", likelihood={"x1": 0.9, "x2": 0.1})
    assert "order-sensitive" not in {f.code for f in case.update().flags}


def test_order_flag_stays_quiet_when_the_place_does_not_matter():
    case = kiln()
    case.observe("flame colour", probability={"blue": 0.1, "yellow": 0.8, "orange": 0.1})
    led = case.update()
    assert led.uncertain["flame colour"]["map_if_last"] == led.map_hypothesis
    assert "order-sensitive" not in {f.code for f in led.flags}


def test_jeffrey_on_a_state_the_evidence_before_rules_out_is_an_error_flag():
    case = bl.Case("unreachable (invented)", hypotheses={"A": 0.5, "B": 0.5}, exhaustive=True)
    case.add_evidence("gate", states=["open", "shut"], likelihoods={"A": [1.0, 0.0],
                                                                     "B": [0.5, 0.5]},
                      observed="shut", source="invented")
    case.add_evidence("panel", states=["lit", "dark"], likelihoods={"A": [1.0, 0.0],
                                                                     "B": [0.0, 1.0]},
                      source="invented")
    case.observe("panel", probability={"lit": 0.3, "dark": 0.7})
    led = case.update()
    assert led.uncertain["panel"]["unreachable"] == ["lit"]
    flag = next(f for f in led.flags if f.code == "jeffrey-unreachable")
    assert flag.severity == "error" and "'lit'" in flag.message
    assert led.posterior.to_dict() == {"A": 0.0, "B": 1.0}


def test_each_scenario_derives_its_own_jeffrey_weights():
    case = kiln()
    case.add_scenario("fleet rates", {"burner fault": 0.2, "thermocouple drift": 0.5,
                                      "other cause": 0.3}, source="fleet data (invented)")
    case.observe("flame colour", probability={"blue": 0.1, "yellow": 0.8, "orange": 0.1})
    ledgers = bl.update_all(case)
    for sc, led in ledgers.items():
        case.use_scenario(sc)
        np.testing.assert_array_equal(case.update().posterior_values, led.posterior_values)
    assert ledgers["base"].uncertain["flame colour"]["weights"] != \
        ledgers["fleet rates"].uncertain["flame colour"]["weights"]
    # the first step's weights: q / P(s | prior), prior of each scenario
    table = case.evidence["flame colour"].table
    for sc, led in ledgers.items():
        p = case.prior_array(sc)
        lam = np.array([0.1, 0.8, 0.1]) / (table @ p)
        np.testing.assert_allclose(list(led.uncertain["flame colour"]["weights"].values()),
                                   lam / lam.max(), rtol=1e-12)


def test_jeffrey_weights_helper():
    table = np.array([[0.9, 0.1], [0.1, 0.9]])
    lam, pred, dead = jeffrey_weights(table, [0.9, 0.1], np.array([1.0, 1.0]))
    np.testing.assert_allclose(pred, [0.5, 0.5])
    np.testing.assert_allclose(lam, [1.0, 1 / 9])
    assert dead == []


# --------------------------------------------------------------------------- refusals

@pytest.mark.parametrize("kwargs, match", [
    ({"likelihood": {"blue": -0.1, "yellow": 0.7, "orange": 0.1}}, "weight of state 'blue' is -0.1"),
    ({"likelihood": {"blue": 0, "yellow": 0, "orange": 0}}, "all 0"),
    ({"likelihood": {"blue": 0.2, "yellow": 0.7}}, r"miss state\(s\) \['orange'\]"),
    ({"likelihood": {"blue": 0.2, "yellow": 0.7, "orange": 0.1, "green": 0.1}},
     r"unknown state\(s\) \['green'\]"),
    ({"likelihood": {"blue": float("nan"), "yellow": 0.7, "orange": 0.1}}, "finite"),
    ({"probability": {"blue": 0.2, "yellow": 0.7, "orange": 0.2}}, "sum to 1.1, not 1"),
    ({"probability": {"blue": 1.2, "yellow": -0.2, "orange": 0}}, "outside"),
    ({"likelihood": {"blue": 1, "yellow": 0, "orange": 0},
      "probability": {"blue": 1, "yellow": 0, "orange": 0}}, "not likelihood and probability"),
    ({"state": "blue", "likelihood": {"blue": 1, "yellow": 0, "orange": 0}}, "not state and"),
])
def test_bad_uncertain_observations_are_refused_and_change_nothing(kwargs, match):
    case = kiln()
    before = case.to_dict()
    state = kwargs.pop("state", None)
    with pytest.raises(CaseError, match=match):
        case.observe("flame colour", state, **kwargs)
    assert case.to_dict() == before


def test_uncertain_observations_refused_where_they_cannot_apply():
    case = kiln()
    case.add_evidence("note", likelihoods={h: 0.5 for h in case.hypothesis_names},
                      observed="seen", likelihood_evidence=True, source="invented")
    case.add_evidence("second port", states=["blue", "yellow"],
                      likelihoods={h: [0.5, 0.5] for h in case.hypothesis_names},
                      observed="blue", source="invented")
    case.add_evidence("third port", states=["blue", "yellow"],
                      likelihoods={h: [0.5, 0.5] for h in case.hypothesis_names},
                      observed="blue", source="invented")
    case.add_joint_group("ports", ["second port", "third port"], covariance=0.0)
    before = case.to_dict()
    with pytest.raises(CaseError, match="likelihood evidence"):
        case.observe("note", likelihood={"seen": 1.0})
    with pytest.raises(CaseError, match="joint group 'ports'"):
        case.observe("second port", likelihood={"blue": 0.6, "yellow": 0.4})
    with pytest.raises(CaseError, match="not one of the item's states"):
        case.observe_report("flame colour", "green", 0.8)
    with pytest.raises(CaseError, match="reliability of the report is 0"):
        case.observe_report("flame colour", "blue", 0.0)
    with pytest.raises(CaseTypeError, match="must map each state"):
        case.observe("flame colour", likelihood=[0.2, 0.7, 0.1])
    assert case.to_dict() == before
    case.observe("flame colour", likelihood={"blue": 0.2, "yellow": 0.7, "orange": 0.1})
    with pytest.raises(CaseError, match="has an uncertain observation"):
        case.add_joint_group("colour and port", ["flame colour", "second port"],
                             joint={h: [0.1, 0.1, 0.2, 0.2, 0.2, 0.2]
                                    for h in case.hypothesis_names})


# --------------------------------------------------------------------------- records, files

def test_uncertain_observations_round_trip_and_are_recorded():
    case = kiln()
    case.observe_report("flame colour", "yellow", 0.8, source=OPERATOR, note="port smeared")
    text = bl.casefile.dumps(case)
    back = bl.casefile.loads(text)
    assert bl.casefile.dumps(back) == text
    unc = back.evidence["flame colour"].uncertain
    assert unc.source.who == "shift lead" and unc.note == "port smeared"
    np.testing.assert_array_equal(back.update().posterior_values, case.update().posterior_values)
    data = json.loads(text)
    item = next(e for e in data["case"]["evidence"] if e["name"] == "flame colour")
    assert item["observed"] is None
    assert item["uncertain"]["weights"] == pytest.approx({"blue": 0.1, "yellow": 0.8,
                                                          "orange": 0.1})
    case.observe("flame colour", probability={"blue": 0.1, "yellow": 0.8, "orange": 0.1})
    back = bl.casefile.loads(bl.casefile.dumps(case))
    assert back.evidence["flame colour"].uncertain.form == "probability"
    np.testing.assert_array_equal(back.update().posterior_values, case.update().posterior_values)
    kinds = [a["kind"] for a in case.assumptions]
    assert kinds.count("uncertain-observation") == 2
    assert "Jeffrey's rule" in case.assumptions[-1]["detail"]
    # a plain observation replaces the uncertain one
    case.observe("flame colour", "blue")
    assert case.evidence["flame colour"].uncertain is None


@pytest.mark.parametrize("bad, match", [
    ({"form": "vague", "weights": {}}, "form 'vague'"),
    ({"form": "likelihood", "weights": {"blue": 1}}, "miss state"),
    ({"form": "probability", "weights": {"blue": 0.5, "yellow": 0.2, "orange": 0.2}}, "sum to"),
    ({"form": "likelihood", "weights": {"blue": 1, "yellow": 0, "orange": 0},
      "reported": "green", "reliability": 0.8}, "reports state 'green'"),
    ({"form": "likelihood", "weights": {"blue": 1, "yellow": 0, "orange": 0}, "x": 1},
     "unknown field"),
])
def test_bad_uncertain_fields_in_a_file_are_refused(bad, match):
    data = json.loads(bl.casefile.dumps(kiln()))
    data["case"]["evidence"][0]["uncertain"] = bad
    with pytest.raises(bl.CaseFileError, match=match):
        bl.casefile.loads(json.dumps(data))


def test_an_observed_state_and_an_uncertain_observation_together_are_refused():
    case = kiln()
    case.observe("flame colour", likelihood={"blue": 1, "yellow": 1, "orange": 0})
    data = json.loads(bl.casefile.dumps(case))
    data["case"]["evidence"][0]["observed"] = "blue"
    with pytest.raises(bl.CaseFileError, match="also an observed state"):
        bl.casefile.loads(json.dumps(data))


def test_ledger_keeps_what_each_uncertain_step_was():
    case = kiln()
    case.observe("flame colour", likelihood={"blue": 0.2, "yellow": 0.7, "orange": 0.1})
    led = case.update()
    info = led.uncertain["flame colour"]
    assert info["form"] == "likelihood" and info["position"] == 1
    assert info["weights"] == pytest.approx({"blue": 2 / 7, "yellow": 1.0, "orange": 1 / 7})
    d = led.to_dict()
    assert d["uncertain"]["flame colour"]["form"] == "likelihood"
    json.dumps(d, allow_nan=False)
    assert "uncertain" not in kiln().update().to_dict()
    # the likelihood ratio of the step reads its weighted row
    lr = bl.likelihood_ratio(case, "flame colour", "burner fault", "thermocouple drift")
    assert lr == pytest.approx(0.42 / 0.34)


# --------------------------------------------------------------------------- outside engine

def _pgmpy_python() -> Path | None:
    env = os.environ.get("BELIEFLEDGER_PGMPY_PYTHON")
    if env:
        return Path(env)
    py = PGMPY_VENV / "bin" / "python"
    return py if py.exists() else None


def _pgmpy(net: dict, tmp_path: Path) -> dict:
    py = _pgmpy_python()
    if py is None:
        pytest.skip("pgmpy's own venv (tests/benchmarks/.venv-pgmpy, made by make bench) is "
                    "absent; the outside check of virtual evidence needs it")
    path = tmp_path / "net.json"
    path.write_text(json.dumps(net), encoding="utf-8")
    out = subprocess.run([str(py), str(ROOT / "tests" / "helpers" / "pgmpy_reference.py"),
                          str(path)], capture_output=True, text=True, timeout=300)
    assert out.returncode == 0, out.stderr
    return json.loads(out.stdout)


# Outside check: pgmpy's variable elimination with its virtual_evidence argument (pgmpy,
# a general-purpose graphical-model library, run out of process in its own venv).
def test_virtual_evidence_matches_pgmpy(tmp_path):
    case = kiln()
    case.add_evidence("fuel pressure", states=["low", "normal", "high"],
                      likelihoods={"burner fault": [0.3, 0.6, 0.1],
                                   "thermocouple drift": [0.1, 0.8, 0.1],
                                   "other cause": [0.2, 0.5, 0.3]}, source="invented")
    case.observe("flame colour", likelihood={"blue": 0.2, "yellow": 0.7, "orange": 0.1})
    case.observe_report("fuel pressure", "low", 0.75)
    evs = case.evidence
    net = {"prior": case.prior_array().tolist(),
           "items": [{"table": evs["flame colour"].table.tolist(), "weights": [0.2, 0.7, 0.1]},
                     {"table": evs["alarm log"].table.tolist(), "observed": 0},
                     {"table": evs["fuel pressure"].table.tolist(),
                      "weights": [0.75, 0.125, 0.125]}]}
    ref = _pgmpy(net, tmp_path)
    np.testing.assert_allclose(case.update().posterior_values, ref["posterior"], rtol=1e-10)


# Outside check of Jeffrey's rule by its definition, P'(H) = sum_s q(s) P(H | before, s),
# with the conditional posteriors from pgmpy's variable elimination.
def test_jeffrey_matches_its_definition_with_pgmpy(tmp_path):
    case = kiln()
    case.remove_evidence("flame colour")
    ref_case = kiln()
    case.add_evidence("flame colour", states=["blue", "yellow", "orange"],
                      likelihoods=ref_case.evidence["flame colour"].likelihoods, source="invented")
    q = [0.15, 0.7, 0.15]
    case.observe("flame colour", probability=dict(zip(["blue", "yellow", "orange"], q,
                                                      strict=True)))
    evs = case.evidence
    net = {"prior": case.prior_array().tolist(),
           "items": [{"table": evs["alarm log"].table.tolist(), "observed": 0},
                     {"table": evs["flame colour"].table.tolist()}],
           "condition_on": [1]}
    ref = _pgmpy(net, tmp_path)
    mix = np.array(q) @ np.array(ref["given"]["1"])
    np.testing.assert_allclose(case.update().posterior_values, mix, rtol=1e-10)


def test_a_sealed_record_with_both_forms_verifies_and_catches_a_changed_weight(tmp_path):
    import copy as _copy

    from beliefledger.record import canonical
    from beliefledger.record.verifier import verify, verify_notebook
    from helpers.records import dumps, sealed_record

    case = kiln()
    case.add_scenario("fleet rates", {"burner fault": 0.2, "thermocouple drift": 0.5,
                                      "other cause": 0.3}, source="fleet data (invented)")
    case.add_evidence("fuel pressure", states=["low", "normal", "high"],
                      likelihoods={"burner fault": [0.3, 0.6, 0.1],
                                   "thermocouple drift": [0.1, 0.8, 0.1],
                                   "other cause": [0.2, 0.5, 0.3]}, source="invented")
    case.observe_report("flame colour", "yellow", 0.8, source=OPERATOR)
    case.observe("fuel pressure", probability={"low": 0.6, "normal": 0.3, "high": 0.1},
                 source={"where": "gauge read by torchlight (invented)", "who": "fitter"})
    nb = sealed_record([case])
    path = tmp_path / "review.sealed.ipynb"
    path.write_text(dumps(nb), encoding="utf-8")
    res = verify(path)
    assert res.ok, [p.to_dict() for p in res.problems]
    sealed = nb["metadata"][canonical.META_KEY]["cases"][0]
    assert set(sealed["results"]) == {"base", "fleet rates"}
    assert sealed["results"]["base"]["uncertain"]["fuel pressure"]["form"] == "probability"
    # a changed weight in the embedded case is caught (digest and reproduction)
    forged = _copy.deepcopy(nb)
    env = forged["metadata"][canonical.META_KEY]["cases"][0]["envelope"]
    item = next(e for e in env["case"]["evidence"] if e["name"] == "fuel pressure")
    item["uncertain"]["weights"] = {"low": 0.1, "normal": 0.3, "high": 0.6}
    bad = verify_notebook(forged, forged["metadata"][canonical.META_KEY])
    assert not bad.ok


def test_an_integer_too_long_for_a_float_is_refused_not_a_crash():
    case = kiln()
    with pytest.raises(CaseError, match="finite"):
        case.observe("flame colour", likelihood={"blue": 10**400, "yellow": 1, "orange": 1})

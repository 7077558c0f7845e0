"""The record's summary page, compact register and analyses (record/summary.py,
record/analyses.py, record/sections.py): what a reviewer reads first, checked against
the library's own functions computed separately, and the analyst's settings reused."""

from __future__ import annotations

import copy
import json
import re

import numpy as np
import pytest

import beliefledger as bl
from beliefledger.calls import ANALYSIS_MIMETYPE, state_digest
from beliefledger.display import fmt_number, fmt_probability
from beliefledger.flags import map_step_decibans
from beliefledger.record.sealer import build_record
from beliefledger.record.sections import FRONT_CELLS
from beliefledger.record.verifier import verify_notebook
from test_record import SEALED_AT, _display, executed_notebook, meta_of


def section_html(rec: dict, section: str) -> str:
    cells = [c for c in rec["cells"] if c["cell_type"] == "code"
             and (c["metadata"].get("beliefledger") or {}).get("section") == section]
    return "".join(o["data"]["text/html"] for c in cells for o in c["outputs"])


def seal(*cases, extra=()) -> dict:
    return build_record(executed_notebook(*cases, extra_cells=extra), notebook_name="t.ipynb",
                        sealed_at=SEALED_AT)


def text_of(html_text: str) -> str:
    import html

    return html.unescape(re.sub(r"<[^>]+>", "", html_text))


@pytest.fixture(scope="module")
def demo_record():
    return seal(bl.example_case())


def test_the_record_opens_with_the_summary_before_the_analysts_cells(demo_record):
    sections = [(c["metadata"].get("beliefledger") or {}).get("section")
                for c in demo_record["cells"]]
    assert sections[:FRONT_CELLS] == ["front-matter", "summary", "summary", "cautions",
                                      "reviews", "reviews", "notebook"]
    assert sections[FRONT_CELLS] is None  # the analyst's first cell follows
    front = "".join(demo_record["cells"][0]["source"])
    for heading in ("Summary", "Cautions", "Assumption register", "Ledger", "Manifest"):
        assert f"[{heading}](#{heading.replace(' ', '-')})" in front
    assert verify_notebook(demo_record, meta_of(demo_record)).ok


def test_summary_figures_equal_the_librarys_own_results(demo_record):
    """Each figure of the summary against the function that computes it, called apart."""
    case = bl.example_case()
    ledger = case.update()
    text = text_of(section_html(demo_record, "summary"))
    m = ledger.map_hypothesis
    assert case.question in text
    assert f"the MAP hypothesis is {m} with posterior probability " \
           f"{fmt_probability(ledger.posterior[m])}" in text
    for name in case.scenario_names:
        t = bl.update(case, scenario=name)
        assert f"{name}: {t.map_hypothesis} {fmt_probability(t.posterior[t.map_hypothesis])}" \
            in text
    be = bl.break_even_prior(case, m)
    assert f"when the prior of '{m}' is {fmt_probability(be.prior)}" in text
    # with and without the two items that share the gas-detection panel
    shared = [ev.name for ev in case.evidence.values() if ev.shared_source]
    assert len(shared) == 2
    trial = case.copy()
    for name in shared:
        trial.observe(name, None)
    other = trial.update()
    assert (f"without them {other.map_hypothesis} "
            f"{fmt_probability(other.posterior[other.map_hypothesis])}") in text
    # the three items that moved belief most, by |decibans| for the MAP against the rest
    w = map_step_decibans(ledger)
    top = [ledger.evidence_steps[i] for i in np.argsort(-np.abs(w), kind="stable")[:3]]
    movers = text.split("Moved belief most:")[1].split("Review flags")[0]
    assert [s for s in re.findall(r"'([^']+)': [+-]\d", movers)] == top
    # the best action under the loss table, with its unit
    dec = bl.decision_summary(case)
    best = dec.loc[case.active_scenario, "bayes_action"]
    assert f"{best} has the lowest loss" in text
    assert f"{fmt_number(dec.loc[case.active_scenario, best])} kEUR" in text
    assert "0 zero priors, 0 eliminated hypotheses, 0 impossible evidence" in text
    assert "shared-source ×1" in text


def test_summary_lists_pending_items_with_their_value_and_flags_zero_priors():
    case = bl.example_case()
    case.observe("suction pressure trend", None)
    case.set_prior("maintenance venting", 0.0, rescale=True)
    rec = seal(case)
    text = text_of(section_html(rec, "summary"))
    rank = bl.rank_next_evidence(case)
    r = rank.iloc[0]
    assert f"'suction pressure trend' (EVSI {fmt_number(r['evsi'])} kEUR" in text
    assert "1 zero priors" in text or "1 zero prior" in text


def test_the_register_is_one_matrix_per_item_and_marks_a_cell_with_its_own_source():
    case = bl.example_case()
    ev = next(iter(case.evidence.values()))
    state, hyp = ev.states[1], ev.hypotheses[2]
    case.set_likelihood(ev.name, hyp, list(ev.table[:, 2]),
                        source={"where": "bench test 14 (invented)", "who": "T. Ng"})
    rec = seal(case)
    reg = section_html(rec, "assumption-register")
    block = reg.split(f">{ev.name}</b>")[1].split("bl-item-name")[0]
    # the item's source once, the differing cells numbered and listed beneath the matrix
    assert block.count("Source:") == 1
    assert "bench test 14 (invented); T. Ng" in block
    notes = re.findall(r"<li>P\(([^|]+) \| ([^)]+)\): bench test 14", block)
    assert (state, hyp) in [(s.strip(), h.strip()) for s, h in notes]
    assert "<sup>1</sup>" in block


def test_a_large_case_register_stays_compact_and_nothing_is_cut_off():
    """20 hypotheses x 30 items: one priors table and 30 small matrices (about 125 rows,
    not 1,800), with no table ending in an ellipsis."""
    rng = np.random.default_rng(5)
    hyps = {f"cause {i:02d}": 1 / 20 for i in range(20)}
    case = bl.Case("Large invented case", hypotheses=hyps)
    for k in range(30):
        t = rng.dirichlet(np.ones(3), size=20)
        case.add_evidence(f"item {k:02d}", states=["a", "b", "c"],
                          likelihoods={h: list(t[j]) for j, h in enumerate(hyps)},
                          observed="a" if k < 25 else None, source=f"source {k} (invented)")
    rec = seal(case)
    reg = section_html(rec, "assumption-register")
    assert reg.count("<tr") <= 20 + 1 + 30 * 4 + 10
    assert "…" not in reg and "..." not in text_of(reg)
    for k in range(30):
        assert reg.count(f"source {k} (invented)") == 1
    led = section_html(rec, "ledger")
    assert all(f"cause {i:02d}" in led for i in range(20))  # every hypothesis a column
    assert "…" not in json.dumps(rec)


def test_a_long_ledger_folds_its_rows_in_details_without_dropping_any():
    hyps = {"a": 0.5, "b": 0.3, "Other": 0.2}
    case = bl.Case("Long ledger (invented)", hypotheses=hyps)
    for k in range(60):
        case.add_evidence(f"reading {k:02d}", states=["hi", "lo"],
                          likelihoods={"a": [0.55, 0.45], "b": [0.5, 0.5], "Other": [0.5, 0.5]},
                          observed="hi")
    led = section_html(seal(case), "ledger")
    assert "<details>" in led
    for k in range(60):
        assert f"<td>reading {k:02d}</td>" in led


# --------------------------------------------------------------------------- analyst settings


def _ranking_case():
    case = bl.example_case()
    case.observe("suction pressure trend", None)
    return case


def _numbers(html_text: str) -> list[str]:
    return re.findall(r"<td>([-0-9.,e]+)</td>", html_text)


def test_the_records_ranking_uses_the_analysts_costs_and_matches_the_cell():
    case = _ranking_case()
    cost = {"suction pressure trend": 2.5}
    ranking = bl.rank_next_evidence(case, cost=cost)
    out = {**_display(ranking), "output_type": "execute_result", "execution_count": 2}
    assert ANALYSIS_MIMETYPE in out["data"] and "text/html" in out["data"]
    rec = seal(case, extra=[("bl.rank_next_evidence(case, cost=cost)", [out])])
    ana = section_html(rec, "analyses")
    part = ana.split("Value of information")[1].split("<h3>")[0]
    r = ranking.iloc[0]
    assert f"<td>{fmt_number(r['cost'])}</td>" in part and fmt_number(r["cost"]) == "2.5"
    assert f"<td>{fmt_number(r['net_value'])}</td>" in part
    assert "cost suction pressure trend: 2.5" in part
    assert f"cell {FRONT_CELLS + 3}" in part and "on the same state of the case" in part


def test_the_records_simulation_uses_the_analysts_seed_and_draws():
    case = bl.example_case()
    est = bl.prior_from_counts(dict(zip(case.hypothesis_names, [7, 4, 5, 2, 1], strict=True)),
                               pseudo=1.0, data="invented counts for a test")
    bl.set_prior_uncertainty(case, est)
    sim = bl.simulate(case, draws=3_000, seed=77, progress=False)
    out = {**_display(sim), "output_type": "execute_result", "execution_count": 2}
    rec = seal(case, extra=[("bl.simulate(case, draws=3_000, seed=77)", [out])])
    ana = section_html(rec, "analyses")
    assert "seed 77" in ana and "3,000 draws" in ana
    assert "seed 20261201" not in ana
    # the same numbers as the analyst's cell: the record's table is the cell's table
    cell_table = out["data"]["text/html"]
    assert _numbers(cell_table) and _numbers(cell_table) == _numbers(
        ana.split("Monte Carlo")[1].split("<h3>")[0])
    summary = text_of(section_html(rec, "summary"))
    iv = sim.interval()
    m = sim.base_map
    assert (f"between {fmt_probability(iv.loc[m, 'low'])} and "
            f"{fmt_probability(iv.loc[m, 'high'])}") in summary


def test_a_call_on_an_earlier_state_is_rerun_with_its_settings_and_says_so():
    case = _ranking_case()
    early = bl.rank_next_evidence(case, cost={"suction pressure trend": 1.0})
    out = {**_display(early), "output_type": "execute_result", "execution_count": 2}
    later = copy.deepcopy(case)
    later.set_prior("relief valve lifted", 0.25, rescale=True)
    assert state_digest(later) != early.call.state
    rec = seal(later, extra=[("ranking", [out])])
    ana = text_of(section_html(rec, "analyses"))
    assert "ran on an earlier state of the case" in ana
    expected = bl.rank_next_evidence(later, cost={"suction pressure trend": 1.0})
    assert fmt_number(expected.iloc[0]["net_value"]) in ana


def test_a_call_the_record_cannot_repeat_is_quoted_not_replaced():
    case = _ranking_case()
    early = bl.rank_next_evidence(case, evidence=["suction pressure trend"])
    out = {**_display(early), "output_type": "execute_result", "execution_count": 2}
    final = case.copy()
    final.observe("suction pressure trend", "slow decline")
    final.add_evidence("vibration survey", states=["high", "normal"],
                       likelihoods={h: [0.5, 0.5] for h in final.hypothesis_names})
    rec = seal(final, extra=[("ranking", [out])])
    ana = section_html(rec, "analyses")
    assert "(quoted)" in ana and "could not repeat the analyst's call" in text_of(ana)
    assert out["data"]["text/html"] in ana


# --------------------------------------------------------------------------- numbers


def test_a_loss_table_without_a_unit_is_asked_for_flagged_and_shown_as_such():
    case = bl.Case("Pump trip (invented)", hypotheses={"bearing": 0.6, "Other": 0.4})
    with pytest.warns(UserWarning, match="no unit"):
        bl.set_loss_table(case, {"replace bearing": {"bearing": 1, "Other": 5},
                                 "run on": {"bearing": 20, "Other": 0}})
    assert "loss-unit-missing" in [f.code for f in case.update().flags]
    rec = seal(case)
    reg = section_html(rec, "assumption-register")
    assert "unit not given" in reg and "<td>replace bearing</td>" in reg
    assert '{"' not in text_of(reg)  # a table, never raw JSON


@pytest.mark.parametrize("x, text", [(0.1 + 0.2, "0.3"), (1234.5678, "1,235"),
                                     (16.3249, "16.32"), (0.09200000000000001, "0.092"),
                                     (-2500.0, "-2,500"), (123456.7, "123,457"),
                                     (999.96, "1,000"), (-0.0, "0"), (float("nan"), "n/a")])
def test_amounts_read_as_people_write_them(x, text):
    assert fmt_number(x) == text


def test_no_float_noise_anywhere_in_the_record():
    case = bl.example_case()
    case.set_prior("relief valve lifted", 0.3 - 0.208, rescale=True)  # 0.09200000000000001
    rec = json.dumps(seal(case))
    html_parts = re.findall(r'"text/html": "(.*?)(?<!\\)"', rec)
    assert not any(re.search(r"\d\.\d*0000000\d", h) or re.search(r"\d\.\d*9999999\d", h)
                   for h in html_parts)


def test_the_register_lists_each_artefact_beside_its_item(tmp_path):
    photo = tmp_path / "IMG_0412.jpg"
    photo.write_bytes(b"invented test bytes, not a photograph")
    case = bl.example_case()
    case.attach("relief valve tell-tale", photo, note="disc photographed on site", who="T. Ng")
    reg = section_html(seal(case), "assumption-register")
    import hashlib

    assert "IMG_0412.jpg" in reg and hashlib.sha256(photo.read_bytes()).hexdigest() in reg
    assert "relief valve tell-tale" in reg.split("IMG_0412.jpg")[0].rsplit("<tr>", 1)[-1]

"""Notebook views without a browser: set ``.value``, call ``.click()``, then assert
on the case and the ledger (the tests play the front end)."""

from __future__ import annotations

import json

import ipywidgets as W
import numpy as np
import pandas as pd
import pytest

import beliefledger as bl
from beliefledger import engine
from beliefledger.case import CASE_MIMETYPE
from beliefledger.casefile import envelope
from beliefledger.widgets import EvidenceEditor, HypothesisEditor, ScenarioPicker, Workbench
from beliefledger.widgets._base import LedgerFeed
from beliefledger.widgets.evidence import NOT_OBSERVED
from beliefledger.widgets.scenarios import ChartPanel, FlagsPanel, LedgerTable


class EngineCounter:
    """Counts the feed's engine runs (one update_all: every scenario once)."""

    def __init__(self, monkeypatch):
        self.calls = 0
        import beliefledger.widgets._base as base

        real = base.update_all

        def counting(case, **kw):
            self.calls += 1
            return real(case, **kw)

        monkeypatch.setattr(base, "update_all", counting)


def _snapshot(case: bl.Case) -> str:
    return json.dumps(case.to_dict(), sort_keys=True)


def _descendants(widget: W.Widget):
    yield widget
    for child in getattr(widget, "children", ()):
        yield from _descendants(child)


@pytest.fixture
def wb(demo_case) -> Workbench:
    return Workbench(demo_case)


# --------------------------------------------------------------------------- workbench


def test_scenario_change_recomputes_once_and_matches_the_engine(wb, demo_case, monkeypatch):
    counter = EngineCounter(monkeypatch)
    before = wb.recomputes
    paints = wb.charts.paints
    wb.scenarios.dropdown.value = "uniform"
    # a scenario switch changes no number: the feed reuses the scenario ledgers it
    # already holds (no engine run; each ledger carries its flags from the start)
    assert counter.calls == 0
    assert wb.recomputes == before + 1
    assert wb.charts.paints == paints + 1
    assert demo_case.active_scenario == "uniform"
    ref = engine.update(demo_case, scenario="uniform")
    pd.testing.assert_series_equal(wb.ledger.posterior, ref.posterior)
    assert wb.ledger.flags == ref.flags
    pd.testing.assert_frame_equal(wb.ledger.steps, ref.steps)
    assert wb.ledger.scenario == "uniform"
    assert f">{ref.map_hypothesis}<" in wb.scenarios.summary.value
    assert "| scenario uniform" in wb.charts.waterfall.value
    assert wb.status.kind == "ok" and "uniform" in wb.status.message


def test_scenario_switch_after_an_edit_uses_fresh_numbers(wb, demo_case):
    wb.scenarios.dropdown.value = "uniform"
    wb.hypotheses.rescale.value = True
    wb.hypotheses.row_for("other cause").prior.value = 0.3  # edits the base priors
    wb.scenarios.dropdown.value = "base"
    ref = engine.update(demo_case)
    pd.testing.assert_series_equal(wb.ledger.posterior, ref.posterior)
    assert wb.ledger.flags == ref.flags
    assert wb.feed.scenario_ledgers["uniform"].posterior.equals(
        engine.update(demo_case, scenario="uniform").posterior)


def test_observed_state_change_recomputes_once(wb, demo_case, monkeypatch):
    counter = EngineCounter(monkeypatch)
    wb.evidence.select("suction pressure trend")
    assert counter.calls == 0  # choosing an item to edit is no edit
    assert wb.evidence.observed.value == NOT_OBSERVED
    steps = len(wb.ledger.steps)
    wb.evidence.observed.value = "step drop"
    assert counter.calls == 1
    assert demo_case.evidence["suction pressure trend"].observed == "step drop"
    assert len(wb.ledger.steps) == steps + 1
    assert wb.ledger.evidence_steps[-1] == "suction pressure trend"
    pd.testing.assert_series_equal(wb.ledger.posterior, engine.update(demo_case).posterior)
    wb.evidence.observed.value = NOT_OBSERVED
    assert counter.calls == 2
    assert demo_case.evidence["suction pressure trend"].observed is None


def test_edits_made_in_code_refresh_the_workbench(wb, demo_case):
    before = wb.recomputes
    demo_case.observe("suction pressure trend", "slow decline")
    assert wb.recomputes == before + 1
    assert wb.ledger.evidence_steps[-1] == "suction pressure trend"
    wb.evidence.select("suction pressure trend")
    assert wb.evidence.observed.value == "slow decline"


def test_robustness_line_agrees_with_a_loop_over_scenarios(wb, demo_case):
    ref = wb.ledger.map_hypothesis
    maps = {n: engine.update(demo_case, scenario=n).map_hypothesis
            for n in demo_case.scenario_names}
    same = sum(m == ref for m in maps.values())
    line = wb.feed.robustness_line()
    assert line.startswith(f"MAP '{ref}' unchanged under {same} of {len(maps)} prior scenarios")
    assert line in wb.scenarios.summary.value.replace("&#x27;", "'")


def test_robustness_line_names_a_scenario_that_changes_the_map():
    case = bl.Case("flip", hypotheses={"A": 0.7, "B": 0.2, "Other": 0.1})
    case.add_evidence("E", states=["s", "t"], likelihoods={"A": [0.3, 0.7], "B": [0.9, 0.1],
                                                           "Other": [0.5, 0.5]}, observed="s")
    case.add_scenario("B favoured", {"A": 0.2, "B": 0.7, "Other": 0.1}, source="invented")
    picker = ScenarioPicker(case)
    assert picker.ledger.map_hypothesis == "A"
    assert picker.feed.robustness_line() == (
        "MAP 'A' unchanged under 1 of 2 prior scenarios; 'B favoured' gives 'B'")
    # the same MAPs as the sensitivity module's own scenario comparison
    rob = bl.robustness(case)
    assert rob.to_frame()["map"].to_dict() == picker.feed.scenario_maps
    assert rob.changed_under == ["B favoured"]


def test_robustness_line_with_no_scenarios(small_case):
    assert ScenarioPicker(small_case).feed.robustness_line() == (
        "MAP 'H1' under the only prior scenario; add scenarios with case.add_scenario(...) "
        "to test the priors")


def test_workbench_display_carries_the_case_for_the_sealer(wb, demo_case):
    bundle = wb._repr_mimebundle_()
    assert bundle[CASE_MIMETYPE] == envelope(demo_case)
    json.dumps(bundle[CASE_MIMETYPE], allow_nan=False)
    assert "application/vnd.jupyter.widget-view+json" in bundle
    assert bundle["text/plain"] == repr(wb)
    assert "<svg" in bundle["text/html"] and demo_case.title in bundle["text/html"]
    assert "local codes, regulations and licensed practice prevail" in bundle["text/html"]


def test_reprs_are_deterministic_and_informative(demo_case):
    a, b = Workbench(demo_case), Workbench(demo_case)
    assert repr(a) == repr(b)
    assert repr(a) == ("Workbench('Ammonia odour at the Eastgate cold store': 5 hypotheses, "
                       "5 of 6 evidence items applied; scenario 'base'; MAP "
                       f"'compressor seal leak' at {a.ledger.posterior['compressor seal leak']:.4f};"
                       f" {sum(f.severity == 'error' for f in a.ledger.flags)} errors, "
                       f"{sum(f.severity == 'warning' for f in a.ledger.flags)} warnings)")
    assert repr(a.hypotheses).startswith("HypothesisEditor('Ammonia odour at the Eastgate cold "
                                         "store': 5 hypotheses, priors sum to 1; page 1 of 1")
    assert repr(a.evidence).endswith("editing 'detector alarm order', observed "
                                     "'machine room first')")
    assert "0x" not in repr(a) + repr(a.scenarios) + repr(a.charts) + repr(a.ledger_table)


def test_static_html_escapes_user_text():
    nasty = "<script>alert(1)</script>"
    case = bl.Case(nasty, hypotheses={nasty: 0.6, "Other": 0.4})
    case.add_evidence(f"E {nasty}", states=[nasty, "b"],
                      likelihoods={nasty: [0.7, 0.3], "Other": [0.4, 0.6]}, observed=nasty)
    wb = Workbench(case)
    html = wb._repr_html_() + wb.evidence._repr_html_() + wb.scenarios._repr_html_()
    assert "<script>" not in html
    assert "&lt;script&gt;" in html
    for w in _descendants(wb):
        if isinstance(w, W.HTML) and not w.value.startswith("<style>"):
            assert "<script>" not in w.value


def test_a_view_that_fails_to_refresh_shows_the_error(wb, demo_case, monkeypatch):
    def broken(ledger):
        raise RuntimeError("boom")

    monkeypatch.setattr(wb.ledger_table, "_render", broken)
    wb.scenarios.dropdown.value = "uniform"
    assert demo_case.active_scenario == "uniform"
    assert wb.feed.last_error == "RuntimeError: boom"
    assert wb.status.kind == "error" and "boom" in wb.status.message
    assert "boom" in wb.status.value


def test_controls_observe_value_only(wb):
    seen = set()
    for w in _descendants(wb):
        if not type(w).__module__.startswith("ipywidgets"):
            continue
        fresh = type(w)()
        extra = set(w._trait_notifiers) - set(fresh._trait_notifiers)
        seen |= extra
        fresh.close()
    assert seen == {"value"}


# --------------------------------------------------------------------------- hypothesis editor


def test_refused_prior_shows_the_error_and_leaves_the_case_unchanged(demo_case):
    ed = HypothesisEditor(demo_case)
    before, version, recomputes = _snapshot(demo_case), demo_case.version, ed.feed.recomputes
    row = ed.row_for("other cause")
    row.prior.value = 1.5
    assert ed.status.kind == "error"
    assert "outside [0, 1]" in ed.status.message and "other cause" in ed.status.message
    assert "Edit refused" in ed.status.value
    assert _snapshot(demo_case) == before and demo_case.version == version
    assert ed.feed.recomputes == recomputes
    assert row.prior.value == pytest.approx(0.10)  # the control shows the case again


def test_prior_edit_sum_banner_and_explicit_normalize(demo_case):
    ed = HypothesisEditor(demo_case)
    row = ed.row_for("maintenance venting")
    row.prior.value = 0.0
    assert demo_case.base_priors["maintenance venting"] == 0.0
    assert "can never gain belief" in row.banner.value
    assert "0.9" in ed.sum_label.value and "bl-sum-bad" in ed.sum_label.value
    assert not ed.normalize_button.disabled
    n_assumptions = len(demo_case.assumptions)
    ed.normalize_button.click()
    assert demo_case.base_priors.sum() == pytest.approx(1.0)
    assert demo_case.assumptions[n_assumptions]["kind"] == "normalize-priors"
    assert ed.normalize_button.disabled
    assert "bl-sum-ok" in ed.sum_label.value


def test_prior_edit_with_rescale_keeps_the_sum(demo_case):
    ed = HypothesisEditor(demo_case)
    ed.rescale.value = True
    ed.row_for("relief valve lifted").prior.value = 0.4
    assert demo_case.base_priors["relief valve lifted"] == pytest.approx(0.4)
    assert demo_case.base_priors.sum() == pytest.approx(1.0)
    assert ed.row_for("other cause").prior.value == pytest.approx(
        demo_case.base_priors["other cause"])


def test_rename_every_source_field_and_catch_all(demo_case):
    ed = HypothesisEditor(demo_case)
    row = ed.row_for("maintenance venting")
    row.name.value = "planned venting"
    assert "planned venting" in demo_case.hypothesis_names
    assert row.hypothesis == "planned venting"
    assert list(row.source) == ["where", "who", "when", "why"]  # the same four everywhere
    row.source["where"].value = "permit records 2024"
    row.source["why"].value = "closest reference class"
    src = demo_case.hypotheses["planned venting"].source
    assert (src.where, src.why) == ("permit records 2024", "closest reference class")
    assert src.who == "R. Okafor (process safety)"  # untouched fields are kept
    row.source["who"].value = "T. Ibsen"
    row.source["when"].value = "2026-12-02"
    src = demo_case.hypotheses["planned venting"].source
    assert (src.who, src.when) == ("T. Ibsen", "2026-12-02")
    row.catch_all.value = True
    assert demo_case.hypotheses["planned venting"].catch_all
    before = _snapshot(demo_case)
    row.name.value = "other cause"  # taken
    assert ed.status.kind == "error" and "taken" in ed.status.message
    assert _snapshot(demo_case) == before and row.name.value == "planned venting"


def test_unsourced_prior_gets_a_banner(demo_case):
    ed = HypothesisEditor(demo_case)
    row = ed.row_for("other cause")
    assert "no source" not in row.banner.value
    row.source["where"].value = ""
    assert any(f.code == "unsourced" for f in ed.ledger.flags)
    assert "prior has no source" in row.banner.value
    assert "prior has no source" not in ed.row_for("relief valve lifted").banner.value


def test_remove_needs_a_second_click(demo_case):
    ed = HypothesisEditor(demo_case)
    row = ed.row_for("relief valve lifted")
    row.remove.click()
    assert "relief valve lifted" in demo_case.hypothesis_names
    assert row.remove.description == "confirm"
    row.remove.click()
    assert "relief valve lifted" not in demo_case.hypothesis_names
    assert demo_case.base_priors.sum() == pytest.approx(1.0)
    assert len(demo_case.hypothesis_names) == 4


def test_add_hypothesis_is_refused_visibly_while_a_loss_table_needs_its_values(demo_case):
    before = demo_case.to_dict()
    ed = HypothesisEditor(demo_case)
    ed.new_name.value = "refrigerant pipe fatigue"
    ed.new_prior.value = 0.05
    ed.add_button.click()
    assert demo_case.to_dict() == before
    assert "loss table needs a value for new hypothesis" in repr(ed.status)


def test_add_hypothesis_gets_neutral_columns(demo_case):
    bl.set_loss_table(demo_case, None)  # a loss table would need the new column's losses
    ed = HypothesisEditor(demo_case)
    ed.new_name.value = "refrigerant pipe fatigue"
    ed.new_prior.value = 0.05
    ed.add_button.click()
    assert demo_case.hypothesis_names[-1] == "refrigerant pipe fatigue"
    assert demo_case.base_priors["refrigerant pipe fatigue"] == pytest.approx(0.05)
    assert demo_case.base_priors.sum() == pytest.approx(1.0)
    ev = demo_case.evidence["detector alarm order"]
    np.testing.assert_allclose(ev.likelihoods["refrigerant pipe fatigue"], 1 / 3)
    assert "neutral" in ed.status.message
    assert ed.new_name.value == ""
    before = _snapshot(demo_case)
    ed.add("", 0.1)
    assert ed.status.kind == "error" and "empty" in ed.status.message
    assert _snapshot(demo_case) == before


def test_large_case_is_paged(rng):
    n_h, n_e = 200, 500
    names = [f"cause {i:03d}" for i in range(n_h)]
    case = bl.Case("large invented case", hypotheses=dict(zip(
        names, rng.dirichlet(np.ones(n_h)).tolist(), strict=True)), normalize=True)
    for k in range(n_e):
        tab = rng.dirichlet(np.ones(3), size=n_h)
        case.add_evidence(f"item {k:03d}", states=["a", "b", "c"],
                          likelihoods={h: tab[i].tolist() for i, h in enumerate(names)},
                          observed="abc"[k % 3] if k % 2 == 0 else None, normalize=True)
    wb = Workbench(case, page_size=12)
    controls = [w for w in _descendants(wb) if isinstance(w, W.FloatText | W.Text)]
    assert len(controls) < 120  # not thousands of boxes
    assert len(wb.evidence.cells) == 3 * wb.evidence.columns_per_page
    wb.hypotheses.show_page(16)
    assert wb.hypotheses.rows[0].hypothesis == "cause 192"
    assert wb.hypotheses.rows[7].hypothesis == "cause 199"
    assert wb.hypotheses.rows[8].box.layout.display == "none"
    wb.evidence.select("item 499")
    wb.evidence.observed.value = "b"
    assert wb.ledger.evidence_steps[-1] == "item 499"
    assert wb.ledger_table.page_count == int(np.ceil(len(wb.ledger.steps) / 20))


# --------------------------------------------------------------------------- evidence editor


def test_likelihood_cell_edit_flags_the_column_sum(demo_case):
    ed = EvidenceEditor(demo_case)
    ed.select("oil residue on compressor")
    cell = ed.cells[("present", "relief valve lifted")]
    cell.value = 0.25
    assert demo_case.evidence["oil residue on compressor"].likelihoods.loc[
        "present", "relief valve lifted"] == 0.25
    assert "not 1" in ed.sums["relief valve lifted"].value
    assert "not 1" not in ed.sums["compressor seal leak"].value
    assert any(f.code == "column-sum" for f in ed.ledger.flags)
    ed.cells[("absent", "relief valve lifted")].value = 0.75
    assert "not 1" not in ed.sums["relief valve lifted"].value
    before = _snapshot(demo_case)
    cell.value = -0.2
    assert ed.status.kind == "error" and _snapshot(demo_case) == before
    assert cell.value == 0.25


def test_evidence_grid_pages_hypothesis_columns(demo_case):
    ed = EvidenceEditor(demo_case, columns_per_page=2)
    assert {h for _, h in ed.cells} == {"compressor seal leak", "relief valve lifted"}
    ed.next_cols.click()
    assert {h for _, h in ed.cells} == {"evaporator coil corrosion", "maintenance venting"}
    ed.next_cols.click()
    assert {h for _, h in ed.cells} == {"other cause"}
    assert ed.next_cols.disabled


def test_import_table_from_csv_and_frame(demo_case, tmp_path):
    ed = EvidenceEditor(demo_case)
    ed.select("relief valve tell-tale")
    hyps = demo_case.hypothesis_names
    frame = pd.DataFrame({h: [0.1, 0.9] for h in hyps}, index=["burst", "intact"])
    path = tmp_path / "tell-tale.csv"
    frame.to_csv(path)
    ed.csv_path.value = str(path)
    ed.import_button.click()
    assert ed.status.kind == "ok"
    np.testing.assert_allclose(demo_case.evidence["relief valve tell-tale"].table,
                               frame.to_numpy())
    assert ed.cells[("burst", hyps[0])].value == pytest.approx(0.1)
    assert ed.import_table(frame.iloc[::-1] * 1.0)  # row order follows the item's states
    bad = frame.copy()
    bad.loc["burst", hyps[0]] = 0.5
    before = _snapshot(demo_case)
    assert not ed.import_table(bad)
    assert ed.status.kind == "error" and "sum to" in ed.status.message
    assert _snapshot(demo_case) == before
    ed.csv_path.value = str(tmp_path / "missing.csv")
    ed.import_button.click()
    assert ed.status.kind == "error" and "cannot read" in ed.status.message


def test_evidence_source_is_saved(demo_case):
    ed = EvidenceEditor(demo_case)
    ed.select("permit-to-work log")
    ed.src_where.value = "permit system export, Nov 2026 (invented)"
    ed.src_who.value = "J. Varga"
    ed.save_source.click()
    src = demo_case.evidence["permit-to-work log"].source
    assert src.where == "permit system export, Nov 2026 (invented)" and src.who == "J. Varga"


def test_standalone_views_have_their_own_status_and_feed(demo_case):
    for cls in (HypothesisEditor, EvidenceEditor, ScenarioPicker):
        view = cls(demo_case)
        assert view.status in view.children
        assert isinstance(view.feed, LedgerFeed)
        view.close()
    for cls in (FlagsPanel, LedgerTable, ChartPanel):
        view = cls(demo_case)
        assert view._repr_html_()
        view.close()
    with pytest.raises(bl.CaseTypeError, match="needs a beliefledger Case"):
        Workbench({"not": "a case"})


def test_chart_panel_focus_and_reference_charts(wb, demo_case):
    wb.charts.focus.value = "relief valve lifted"
    assert "Weight of evidence for &#x27;relief valve lifted&#x27;" in wb.charts.waterfall.value
    data = wb.charts.chart_data(wb.ledger)
    assert data["focus"] == "relief valve lifted"
    charts = wb.altair_charts()
    assert set(charts) == {"waterfall", "path", "prior_posterior"}
    assert charts["waterfall"].to_dict()["title"]["text"].endswith("'relief valve lifted'")


# --------------------------------------------------------------------------- the template


def test_workbench_template_executes_and_emits_the_case(tmp_path):
    """The template run by nbclient (as the sealer re-runs it): the workbench output
    carries the case's JSON, the static chart is SVG, and nothing needs a script."""
    from pathlib import Path

    import nbformat
    from nbclient import NotebookClient

    path = Path(__file__).resolve().parents[1] / "templates_nb" / "workbench.ipynb"
    nb = nbformat.read(path, as_version=4)
    NotebookClient(nb, kernel_name="python3", timeout=300,
                   resources={"metadata": {"path": str(tmp_path)}}).execute()
    outputs = [(c.source, o) for c in nb.cells if c.cell_type == "code" for o in c.outputs]
    errors = [o for _, o in outputs if o.output_type == "error"]
    assert not errors, errors
    wb_out = [o for src, o in outputs if src.startswith("wb = bl.Workbench(case)")]
    assert len(wb_out) == 1
    data = wb_out[0]["data"]
    assert data[CASE_MIMETYPE] == envelope(bl.example_case())
    assert "application/vnd.jupyter.widget-view+json" in data
    assert data["text/plain"].startswith("Workbench('Ammonia odour at the Eastgate cold store'")
    assert any("image/svg+xml" in o.get("data", {}) for _, o in outputs)
    last = [o for src, o in outputs if src.rstrip().endswith("\ncase")]
    assert last and last[-1]["data"][CASE_MIMETYPE]["case"]["title"] == bl.example_case().title
    for _, o in outputs:
        for mime, value in o.get("data", {}).items():
            if mime in ("text/html", "image/svg+xml"):
                assert "<script" not in value


ACTIONS = {
    "prior": lambda wb: setattr(wb.hypotheses.row_for("other cause").prior, "value", 0.2),
    "rename": lambda wb: setattr(wb.hypotheses.row_for("other cause").name, "value", "else"),
    "source": lambda wb: setattr(wb.hypotheses.row_for("other cause").source["where"], "value",
                                 "log"),
    "catch-all": lambda wb: setattr(wb.hypotheses.row_for("relief valve lifted").catch_all,
                                    "value", True),
    "normalize": lambda wb: (wb.case.set_prior("other cause", 0.3),
                             wb.hypotheses.normalize_button.click()),
    "cell": lambda wb: setattr(wb.evidence.cells[("machine room first",
                                                  "other cause")], "value", 0.3),
    "observed": lambda wb: setattr(wb.evidence.observed, "value", "cold room first"),
    "evidence source": lambda wb: (setattr(wb.evidence.src_where, "value", "x"),
                                   wb.evidence.save_source.click()),
    "scenario": lambda wb: setattr(wb.scenarios.dropdown, "value", "uniform"),
}


@pytest.mark.parametrize("action", list(ACTIONS))
def test_each_user_action_causes_exactly_one_recompute(wb, demo_case, action):
    edits = []
    demo_case.on_change(lambda case, what: edits.append(what))
    setup = 1 if action == "normalize" else 0  # that action makes one edit in code first
    before = wb.recomputes
    ACTIONS[action](wb)
    assert wb.status.kind == "ok", wb.status.message
    assert len(edits) == 1 + setup
    assert wb.recomputes == before + 1 + setup
    pd.testing.assert_series_equal(wb.ledger.posterior, engine.update(demo_case).posterior)


def test_rerunning_the_cell_replaces_the_workbench(demo_case, monkeypatch):
    first = Workbench(demo_case)
    second = Workbench(demo_case)  # what re-running `wb = bl.Workbench(case)` does
    counter = EngineCounter(monkeypatch)
    paints = first.charts.paints
    second.evidence.select("suction pressure trend")
    second.evidence.observed.value = "steady"
    assert counter.calls == 1
    assert first.charts.paints == paints  # the replaced workbench no longer refreshes
    assert second.ledger.evidence_steps[-1] == "suction pressure trend"


def test_views_of_one_case_share_one_recompute(demo_case, monkeypatch):
    wb = Workbench(demo_case)
    other = Workbench(demo_case, keep_previous=True)
    editor = HypothesisEditor(demo_case)
    assert wb.feed is other.feed is editor.feed
    counter = EngineCounter(monkeypatch)
    editor.row_for("other cause").prior.value = 0.12
    assert counter.calls == 1
    assert wb.ledger is other.ledger is editor.ledger
    assert wb.hypotheses.row_for("other cause").prior.value == pytest.approx(0.12)
    assert editor.status.kind == "ok" and wb.status.kind == ""  # each view its own status
    for view in (wb, other, editor):
        view.close()
    assert demo_case._listeners == []  # the last view closed lets go of the case


def test_rescaled_priors_show_without_float_noise(demo_case):
    ed = HypothesisEditor(demo_case)
    ed.rescale.value = True
    # the others (0.65 in all) are rescaled by 0.988 / 0.65 = 1.52; 0.1 * that in binary
    # floating point is 0.15200000000000002
    ed.row_for("compressor seal leak").prior.value = 0.012
    exact = demo_case.hypotheses["maintenance venting"].prior
    assert exact != 0.152 and exact == pytest.approx(0.152, abs=1e-15)
    assert ed.row_for("maintenance venting").prior.value == 0.152  # shown without the noise
    assert ed.row_for("relief valve lifted").prior.value == 0.304
    assert demo_case.hypotheses["maintenance venting"].prior == exact  # showing changed nothing


def test_widgets_show_probabilities_as_the_record_does():
    """One formatter: four significant figures, no float noise, tiny values in exponent."""
    from beliefledger.display import fmt_probability
    from beliefledger.widgets._base import fmt_p

    for p in (0.09200000000000001, 0.0006742, 0.98113, 1e-7, 0.0, 1.0):
        assert fmt_p(p) == fmt_probability(p)
    assert fmt_p(0.09200000000000001) == "0.092" and fmt_p(0.0006742) == "0.0006742"

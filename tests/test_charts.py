"""Chart builders: the data they draw, their encodings, and static SVG output.

Numbers are checked against the engine's trace and, for log-odds, against
``scipy.special.logit`` (a reference implementation of ln(p / (1 - p))).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy.special import logit

import beliefledger as bl
from beliefledger import charts
from beliefledger.errors import CaseError
from beliefledger.measures import step_weights

DB_PER_NAT = 10 / math.log(10)


def _eliminating_case() -> bl.Case:
    """'A' is eliminated by E1 (invented numbers)."""
    case = bl.Case("elimination", hypotheses={"A": 0.5, "B": 0.3, "Other": 0.2})
    case.add_evidence("E1", states=["x", "y"],
                      likelihoods={"A": [1.0, 0.0], "B": [0.5, 0.5], "Other": [0.5, 0.5]},
                      observed="y")
    case.add_evidence("E2", states=["x", "y"],
                      likelihoods={"A": [0.2, 0.8], "B": [0.9, 0.1], "Other": [0.5, 0.5]},
                      observed="x")
    return case


# --------------------------------------------------------------------------- waterfall


def test_waterfall_order_is_explicit_and_follows_the_trace(demo_case):
    trace = demo_case.update()
    spec = charts.waterfall(trace).to_dict()
    expected = ["prior", *trace.evidence_steps, "posterior"]
    assert expected != sorted(expected)  # the demo order is not alphabetical
    bar = spec["layer"][0]
    assert bar["mark"]["type"] == "bar"
    assert bar["encoding"]["x"]["sort"] == expected
    assert [r["step"] for r in next(iter(spec["datasets"].values()))] == expected


def test_waterfall_bars_chain_and_match_the_weights(demo_case):
    trace = demo_case.update()
    focus = "relief valve lifted"
    data = charts.waterfall_data(trace, focus)
    w = step_weights(trace, focus)
    mid = data.iloc[1:-1]
    np.testing.assert_allclose(mid["decibans"], w["decibans"])
    assert list(mid["verbal"]) == list(w["verbal"])
    # each bar starts where the previous one ended
    np.testing.assert_allclose(data["start_db"].iloc[1:-1].to_numpy(),
                               data["end_db"].iloc[:-2].to_numpy())
    # prior and posterior ends are the log-odds of the focus against the rest,
    # checked against scipy.special.logit of the trace's probabilities
    p0, p1 = trace.steps[focus].iloc[0], trace.posterior[focus]
    assert data["end_db"].iloc[0] == pytest.approx(logit(p0) * DB_PER_NAT)
    assert data["end_db"].iloc[-1] == pytest.approx(logit(p1) * DB_PER_NAT)
    # and the steps add up from one to the other
    assert data["end_db"].iloc[0] + mid["decibans"].sum() == pytest.approx(data["end_db"].iloc[-1])
    assert list(data["kind"].iloc[1:-1]) == ["for" if d > 0 else "against" if d < 0 else "neutral"
                                             for d in w["decibans"]]
    np.testing.assert_allclose(data["probability"].iloc[:-1], trace.steps[focus].to_numpy())
    assert data["probability"].iloc[-1] == trace.posterior[focus]


def test_waterfall_labels_carry_decibans_and_verbal_strength(demo_case):
    trace = demo_case.update()
    data = charts.waterfall_data(trace)
    row = data.iloc[1]
    assert f"{row['decibans']:+.1f} dB" in row["label"]
    first_word = row["verbal"].split()[0]
    assert first_word in row["label"]
    assert all(label.count("\n") == charts.LABEL_LINES - 1 for label in data["label"])


def test_waterfall_colours_are_the_tool_palette(demo_case):
    spec = charts.waterfall(demo_case.update(), "relief valve lifted").to_dict()
    scale = spec["layer"][0]["encoding"]["color"]["scale"]
    colours = dict(zip(scale["domain"], scale["range"], strict=True))
    assert colours["for"] == charts.SUPPORT_COLOUR == charts.OKABE_ITO[0]
    assert colours["against"] == charts.AGAINST_COLOUR
    assert charts.AGAINST_COLOUR in charts.OKABE_ITO
    right = spec["layer"][3]["encoding"]["y"]["axis"]
    assert right["orient"] == "right" and "pow(10" in right["labelExpr"]


def test_waterfall_default_focus_is_map_and_bad_focus_is_refused(demo_case):
    trace = demo_case.update()
    assert charts.waterfall(trace).to_dict()["title"]["text"].endswith(
        f"'{trace.map_hypothesis}'")
    with pytest.raises(CaseError, match="no hypothesis named 'nope'"):
        charts.waterfall(trace, focus="nope")


def test_waterfall_draws_infinite_log_odds_at_the_edge():
    trace = _eliminating_case().update()
    data = charts.waterfall_data(trace, "A")
    assert math.isinf(data["decibans"].iloc[1]) and data["decibans"].iloc[1] < 0
    assert data["clipped"].iloc[1] and data["clipped"].iloc[-1]
    assert np.isfinite(data[["start_db", "end_db"]].to_numpy()).all()
    assert "-inf dB" in data["label"].iloc[1]
    assert data["end_db"].iloc[-1] < data["end_db"].iloc[0]


def test_waterfall_step_named_like_an_endpoint_does_not_collide():
    case = bl.Case("names", hypotheses={"A": 0.6, "Other": 0.4})
    case.add_evidence("prior", states=["s", "t"], likelihoods={"A": [0.8, 0.2],
                                                               "Other": [0.3, 0.7]},
                      observed="s")
    data = charts.waterfall_data(case.update())
    assert list(data["step"]) == ["prior", "prior (evidence)", "posterior"]


# --------------------------------------------------------------------------- probability path


def test_probability_path_data_is_the_trace(demo_case):
    trace = demo_case.update()
    data = charts.probability_path_data(trace)
    assert len(data) == trace.steps.size
    wide = data.pivot(index="order", columns="hypothesis", values="probability")
    np.testing.assert_allclose(wide[trace.hypotheses].to_numpy(), trace.steps.to_numpy())
    spec = charts.probability_path(trace).to_dict()
    line = next(layer for layer in spec["layer"] if layer["mark"]["type"] == "line"
                and "color" in layer["encoding"])
    assert line["encoding"]["x"]["sort"] == ["prior", *trace.evidence_steps]
    assert line["encoding"]["color"]["scale"]["range"][:3] == list(charts.OKABE_ITO[:3])


def test_probability_path_marks_eliminated_hypotheses():
    trace = _eliminating_case().update()
    assert trace.eliminated == ["A"]
    data = charts.probability_path_data(trace)
    a = data[data["hypothesis"] == "A"].set_index("step")
    assert list(a["eliminated"]) == [False, True, True]
    assert list(a["eliminated_here"]) == [False, True, False]
    assert not data[data["hypothesis"] != "A"]["eliminated"].any()
    spec = charts.probability_path(trace).to_dict()
    marks = [layer["mark"] for layer in spec["layer"]]
    assert any(m.get("shape") == "cross" for m in marks)
    assert any(layer["encoding"].get("text", {}).get("value") == "eliminated"
               for layer in spec["layer"])


def test_probability_path_folds_small_hypotheses_into_others(rng):
    names = [f"H{i:02d}" for i in range(20)]
    prior = rng.dirichlet(np.ones(20))
    case = bl.Case("many", hypotheses=dict(zip(names, prior.tolist(), strict=True)),
                   normalize=True)
    lik = rng.dirichlet(np.ones(2), size=20)
    case.add_evidence("E", states=["a", "b"],
                      likelihoods={h: lik[i].tolist() for i, h in enumerate(names)},
                      observed="a")
    trace = case.update()
    data = charts.probability_path_data(trace, max_lines=5)
    assert data["hypothesis"].nunique() == 5
    assert "(16 others)" in set(data["hypothesis"])
    np.testing.assert_allclose(data.groupby("order")["probability"].sum(), 1.0)
    peak = trace.steps.max(axis=0).sort_values(ascending=False, kind="stable")
    assert set(peak.index[:4]) <= set(data["hypothesis"])
    spec = charts.probability_path(trace, max_lines=5).to_dict()
    line = next(layer for layer in spec["layer"] if layer["mark"]["type"] == "line"
                and "color" in layer["encoding"])
    scale = line["encoding"]["color"]["scale"]
    styles = dict(zip(scale["domain"], scale["range"], strict=True))
    assert styles["(16 others)"] == charts.NEUTRAL_COLOUR  # the folded line is grey
    named = [styles[h] for h in scale["domain"] if h != "(16 others)"]
    assert named == list(charts.OKABE_ITO[:4])
    assert charts.OKABE_ITO[-1] == "#F0E442"  # yellow, weak on paper, is used last


# --------------------------------------------------------------------------- prior vs posterior


def test_prior_posterior_marks_map_and_overlays_scenarios(demo_case):
    trace = demo_case.update()
    scen = {n: bl.update(demo_case, scenario=n) for n in demo_case.scenario_names}
    data = charts.prior_posterior_data(trace, scen)
    post = data[data["series"] == "posterior"].set_index("hypothesis")["probability"]
    pd.testing.assert_series_equal(post, trace.posterior, check_names=False)
    prior = data[data["series"] == "prior"].set_index("hypothesis")["probability"]
    np.testing.assert_allclose(prior[trace.hypotheses], demo_case.base_priors[trace.hypotheses])
    maps = data[(data["series"] == "posterior") & data["is_map"]]
    assert list(maps["hypothesis"]) == [trace.map_hypothesis]
    assert maps["label"].iloc[0].endswith("MAP")
    u = data[data["series"] == "scenario: uniform"].set_index("hypothesis")["probability"]
    np.testing.assert_allclose(u[trace.hypotheses], scen["uniform"].posterior[trace.hypotheses])
    spec = charts.prior_posterior(trace, scen).to_dict()
    shape = spec["layer"][-1]["encoding"]["shape"]
    assert shape["scale"]["domain"] == [f"scenario: {n}" for n in demo_case.scenario_names]
    assert spec["layer"][0]["encoding"]["y"]["sort"] == trace.hypotheses


def test_prior_posterior_without_scenarios_and_with_a_foreign_trace(demo_case, small_case):
    spec = charts.prior_posterior(demo_case.update()).to_dict()
    assert all("shape" not in layer["encoding"] for layer in spec["layer"])
    with pytest.raises(CaseError, match="scenario trace 'x'"):
        charts.prior_posterior(demo_case.update(), {"x": small_case.update()})


def test_prior_posterior_max_bars_keeps_the_map(small_case):
    trace = small_case.update()
    data = charts.prior_posterior_data(trace, max_bars=1)
    assert set(data["hypothesis"]) >= {trace.map_hypothesis}
    assert data["hypothesis"].nunique() <= 2


# --------------------------------------------------------------------------- static output


def test_to_svg_and_show_render_offline(demo_case):
    trace = demo_case.update()
    svg = charts.to_svg(charts.waterfall(trace))
    assert svg.lstrip().startswith("<svg") and svg.rstrip().endswith("</svg>")
    assert "Weight of evidence for" in svg
    assert "http" not in svg.replace("http://www.w3.org", "")  # no external references
    # records compare re-rendered charts: the same trace gives the same bytes
    assert charts.to_svg(charts.waterfall(bl.example_case().update())) == svg
    static = charts.StaticChart(charts.prior_posterior(trace))
    bundle = static._repr_mimebundle_()
    assert set(bundle) == {"image/svg+xml", "text/plain"}
    assert repr(static).startswith('StaticChart("Prior and posterior (MAP:')
    shown = []
    import IPython.display

    orig = IPython.display.display
    IPython.display.display = lambda obj: shown.append(obj)
    try:
        out = charts.show(charts.probability_path(trace))
    finally:
        IPython.display.display = orig
    assert shown == [out] and "<svg" in out._repr_svg_()


def test_offline_renderer_is_altairs_svg_renderer():
    import altair as alt

    before = alt.renderers.active
    try:
        charts.use_offline_renderer()
        assert alt.renderers.active == "svg"
    finally:
        alt.renderers.enable(before)

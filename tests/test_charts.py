"""Chart builders: the data they draw, their encodings, and static SVG output.

Numbers are checked against the engine's ledger and, for log-odds, against
``scipy.special.logit`` (a reference implementation of ln(p / (1 - p))).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

import beliefledger as bl
from beliefledger import chartdata, charts
from beliefledger.errors import CaseError

DB_PER_NAT = 10 / math.log(10)




# --------------------------------------------------------------------------- waterfall


def test_waterfall_order_is_explicit_and_follows_the_ledger(demo_case):
    ledger = demo_case.update()
    spec = charts.waterfall(ledger).to_dict()
    expected = ["prior", *ledger.evidence_steps, "posterior"]
    assert expected != sorted(expected)  # the demo order is not alphabetical
    shafts, heads, levels = spec["layer"][:3]
    assert shafts["mark"]["type"] == "bar" and heads["mark"]["type"] == "point"
    assert levels["mark"]["type"] == "tick"  # prior and posterior are level marks
    assert shafts["encoding"]["x"]["sort"] == expected
    assert [r["step"] for r in next(iter(spec["datasets"].values()))] == expected


def test_waterfall_colours_are_the_tool_palette(demo_case):
    spec = charts.waterfall(demo_case.update(), "relief valve lifted").to_dict()
    scale = spec["layer"][0]["encoding"]["color"]["scale"]
    colours = dict(zip(scale["domain"], scale["range"], strict=True))
    assert colours["for"] == chartdata.SUPPORT_COLOUR == chartdata.OKABE_ITO[0]
    assert colours["against"] == chartdata.AGAINST_COLOUR
    assert chartdata.AGAINST_COLOUR in chartdata.OKABE_ITO
    assert chartdata.SUPPORT_COLOUR not in (colours["prior"], colours["posterior"])
    right = spec["layer"][-1]["encoding"]["y"]["axis"]
    assert right["orient"] == "right" and "pow(10" in right["labelExpr"]


def test_waterfall_default_focus_is_map_and_bad_focus_is_refused(demo_case):
    ledger = demo_case.update()
    assert charts.waterfall(ledger).to_dict()["title"]["text"].endswith(
        f"'{ledger.map_hypothesis}'")
    with pytest.raises(CaseError, match="no hypothesis named 'nope'"):
        charts.waterfall(ledger, focus="nope")


# --------------------------------------------------------------------------- probability path


def test_probability_path_data_is_the_ledger(demo_case):
    ledger = demo_case.update()
    data = chartdata.probability_path_data(ledger)
    assert len(data) == ledger.steps.size
    wide = data.pivot(index="order", columns="hypothesis", values="probability")
    np.testing.assert_allclose(wide[ledger.hypotheses].to_numpy(), ledger.steps.to_numpy())
    spec = charts.probability_path(ledger).to_dict()
    line = next(layer for layer in spec["layer"] if layer["mark"]["type"] == "line"
                and "color" in layer["encoding"])
    assert line["encoding"]["x"]["sort"] == ["prior", *ledger.evidence_steps]
    assert line["encoding"]["color"]["scale"]["range"][:3] == list(chartdata.OKABE_ITO[:3])


def test_probability_path_marks_eliminated_hypotheses(eliminating_case):
    ledger = eliminating_case.update()
    assert ledger.eliminated == ["A"]
    data = chartdata.probability_path_data(ledger)
    a = data[data["hypothesis"] == "A"].set_index("step")
    assert list(a["eliminated"]) == [False, True, True]
    assert list(a["eliminated_here"]) == [False, True, False]
    assert not data[data["hypothesis"] != "A"]["eliminated"].any()
    spec = charts.probability_path(ledger).to_dict()
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
    ledger = case.update()
    data = chartdata.probability_path_data(ledger, max_lines=5)
    assert data["hypothesis"].nunique() == 5
    assert "(16 others)" in set(data["hypothesis"])
    np.testing.assert_allclose(data.groupby("order")["probability"].sum(), 1.0)
    peak = ledger.steps.max(axis=0).sort_values(ascending=False, kind="stable")
    assert set(peak.index[:4]) <= set(data["hypothesis"])
    spec = charts.probability_path(ledger, max_lines=5).to_dict()
    line = next(layer for layer in spec["layer"] if layer["mark"]["type"] == "line"
                and "color" in layer["encoding"])
    scale = line["encoding"]["color"]["scale"]
    styles = dict(zip(scale["domain"], scale["range"], strict=True))
    assert styles["(16 others)"] == chartdata.NEUTRAL_COLOUR  # the folded line is grey
    named = [styles[h] for h in scale["domain"] if h != "(16 others)"]
    assert named == list(chartdata.OKABE_ITO[:4])
    assert chartdata.OKABE_ITO[-1] == "#F0E442"  # yellow, weak on paper, is used last


# --------------------------------------------------------------------------- prior vs posterior


def test_prior_posterior_marks_map_and_overlays_scenarios(demo_case):
    ledger = demo_case.update()
    scen = {n: bl.update(demo_case, scenario=n) for n in demo_case.scenario_names}
    data = chartdata.prior_posterior_data(ledger, scen)
    post = data[data["series"] == "posterior"].set_index("hypothesis")["probability"]
    pd.testing.assert_series_equal(post, ledger.posterior, check_names=False)
    prior = data[data["series"] == "prior"].set_index("hypothesis")["probability"]
    np.testing.assert_allclose(prior[ledger.hypotheses], demo_case.base_priors[ledger.hypotheses])
    maps = data[(data["series"] == "posterior") & data["is_map"]]
    assert list(maps["hypothesis"]) == [ledger.map_hypothesis]
    assert maps["label"].iloc[0].endswith("MAP")
    u = data[data["series"] == "scenario: uniform"].set_index("hypothesis")["probability"]
    np.testing.assert_allclose(u[ledger.hypotheses], scen["uniform"].posterior[ledger.hypotheses])
    spec = charts.prior_posterior(ledger, scen).to_dict()
    shape = spec["layer"][-1]["encoding"]["shape"]
    assert shape["scale"]["domain"] == [f"scenario: {n}" for n in demo_case.scenario_names]
    assert spec["layer"][0]["encoding"]["y"]["sort"] == ledger.hypotheses


def test_prior_posterior_without_scenarios_and_with_a_foreign_ledger(demo_case, small_case):
    spec = charts.prior_posterior(demo_case.update()).to_dict()
    assert all("shape" not in layer["encoding"] for layer in spec["layer"])
    with pytest.raises(CaseError, match="scenario ledger 'x'"):
        charts.prior_posterior(demo_case.update(), {"x": small_case.update()})


# --------------------------------------------------------------------------- static output


def test_to_svg_and_show_render_offline(demo_case):
    ledger = demo_case.update()
    svg = charts.to_svg(charts.waterfall(ledger))
    assert svg.lstrip().startswith("<svg") and svg.rstrip().endswith("</svg>")
    assert "Weight of evidence for" in svg
    assert "http" not in svg.replace("http://www.w3.org", "")  # no external references
    # records compare re-rendered charts: the same ledger gives the same bytes
    assert charts.to_svg(charts.waterfall(bl.example_case().update())) == svg
    static = charts.static_figure(charts.prior_posterior(ledger))
    bundle = static._repr_mimebundle_()
    assert set(bundle) == {"image/svg+xml", "text/plain"}
    assert repr(static).startswith("Figure(altair chart: Prior and posterior (MAP:")
    shown = []
    import IPython.display

    orig = IPython.display.display
    IPython.display.display = lambda obj: shown.append(obj)
    try:
        out = charts.show(charts.probability_path(ledger))
    finally:
        IPython.display.display = orig
    assert out is None  # a cell ending in show(...) shows the chart once
    assert len(shown) == 1 and "<svg" in shown[0]._repr_svg_()


def test_charts_without_altair_say_how_to_install_it(demo_case, monkeypatch):
    import builtins

    real = builtins.__import__

    def no_altair(name, *a, **k):
        if name == "altair" or name.startswith("altair."):
            raise ModuleNotFoundError("No module named 'altair'", name="altair")
        return real(name, *a, **k)

    monkeypatch.setattr(builtins, "__import__", no_altair)
    with pytest.raises(ImportError, match=r"pip install 'beliefledger\[notebook\]'"):
        charts.waterfall(demo_case.update())


def test_offline_renderer_is_altairs_svg_renderer():
    import altair as alt

    before = alt.renderers.active
    try:
        charts.use_offline_renderer()
        assert alt.renderers.active == "svg"
    finally:
        alt.renderers.enable(before)

"""Figures: the SVG pictures the workbench, the templates and the records show.

Positions are checked against the tidy tables (themselves checked against
the engine in test_chartdata.py); the SVG must be well-formed XML whatever
the names hold.
"""

from __future__ import annotations

import re
import subprocess
import sys
import xml.etree.ElementTree as ET

import pytest

import beliefledger as bl
from beliefledger import chartdata, figures

SVG_NS = "{http://www.w3.org/2000/svg}"


def _parse_svg(text: str):
    root = ET.fromstring(text)  # well-formed XML, or this raises
    assert root.tag == f"{SVG_NS}svg"
    return root


def _by_class(root, tag: str, cls: str) -> list:
    return [e for e in root.iter(f"{SVG_NS}{tag}") if cls in e.get("class", "").split()]


def _path_ys(d: str) -> list[float]:
    return [float(y) for y in re.findall(r"[ML][\d.\-]+,([\d.\-]+)", d)]


def test_waterfall_levels_and_arrows(demo_case):
    ledger = demo_case.update()
    focus = "relief valve lifted"
    data = chartdata.waterfall_data(ledger, focus)
    root = _parse_svg(figures.waterfall_svg(data, focus=focus))
    levels = _by_class(root, "rect", "bl-level")
    arrows = _by_class(root, "path", "bl-bar")
    assert [lv.get("class").split()[-1] for lv in levels] == ["bl-prior", "bl-posterior"]
    assert len(arrows) == len(data) - 2  # every item of the demo moves the focus
    colour = {"for": chartdata.SUPPORT_COLOUR, "against": chartdata.AGAINST_COLOUR}
    for arrow, (_, row) in zip(arrows, data.iloc[1:-1].iterrows(), strict=True):
        assert arrow.get("fill") == colour[row["kind"]]
        ys = _path_ys(arrow.get("d"))
        tip = ys[3] if len(ys) > 3 else ys[2]  # the tip is the arrow's far end
        base = ys[0]
        # SVG y grows downwards: support points up, counter-evidence down
        assert (tip < base) == (row["kind"] == "for")
    titles = [a.find(f"{SVG_NS}title").text for a in arrows]
    assert titles[0].startswith(f"{ledger.evidence_steps[0]}: {data['decibans'].iloc[1]:+.1f} "
                                "decibans")
    text = "".join(root.itertext())
    assert "dB" not in text and "decibans" in text
    assert "LR " in text  # the likelihood ratio beside its weight


def test_waterfall_neutral_item_is_a_tick_not_an_arrow():
    case = bl.Case("neutral", hypotheses={"A": 0.5, "Other": 0.5})
    case.add_evidence("same under both", states=["x", "y"],
                      likelihoods={"A": [0.4, 0.6], "Other": [0.4, 0.6]}, observed="x")
    root = _parse_svg(figures.waterfall_figure(case.update(), "A").svg)
    assert _by_class(root, "path", "bl-bar") == []
    ticks = _by_class(root, "rect", "bl-neutral")
    assert len(ticks) == 1 and float(ticks[0].get("height")) < 2


def test_prior_posterior_uses_no_support_blue(demo_case):
    ledger = demo_case.update()
    root = _parse_svg(figures.prior_posterior_figure(ledger).svg)
    fills = {r.get("fill") for r in _by_class(root, "rect", "bl-posterior")}
    assert fills == {chartdata.POSTERIOR_COLOUR} and chartdata.SUPPORT_COLOUR not in fills


def test_figures_escape_user_text_and_mark_eliminations():
    nasty = 'A <b>&"x"'
    case = bl.Case("esc", hypotheses={nasty: 0.5, "B": 0.3, "Other": 0.2})
    case.add_evidence("E1 <i>", states=["x", "y"],
                      likelihoods={nasty: [1.0, 0.0], "B": [0.5, 0.5], "Other": [0.5, 0.5]},
                      observed="y")
    ledger = case.update()
    path = _parse_svg(figures.path_svg(chartdata.probability_path_data(ledger)))
    groups = _by_class(path, "g", "bl-path")
    assert [g.get("data-hypothesis") for g in groups] == [nasty, "B", "Other"]
    assert len(_by_class(path, "path", "bl-eliminated")) == 1
    wf = _parse_svg(figures.waterfall_svg(chartdata.waterfall_data(ledger, nasty), focus=nasty))
    assert any(t.text == "E1 <i>" for t in wf.iter(f"{SVG_NS}text"))
    pp = _parse_svg(figures.prior_posterior_svg(
        chartdata.prior_posterior_data(ledger), map_hypothesis=ledger.map_hypothesis))
    assert len(_by_class(pp, "rect", "bl-posterior")) == 3
    bold = [t.text for t in pp.iter(f"{SVG_NS}text") if t.get("font-weight") == "bold"]
    assert "B" in bold


def test_figures_stay_well_formed_with_control_characters():
    odd = "A\x00\x1b[31m\u202e"
    case = bl.Case("ctl\x07", hypotheses={odd: 0.5, "Other": 0.5})
    case.add_evidence("E\x1b", states=["s", "t"],
                      likelihoods={odd: [0.6, 0.4], "Other": [0.5, 0.5]}, observed="s")
    ledger = case.update()
    for fig in (figures.waterfall_figure(ledger, odd), figures.path_figure(ledger),
                figures.prior_posterior_figure(ledger)):
        root = _parse_svg(fig.svg)  # XML forbids raw control characters: shown as \uXXXX
        assert "\\u001b" in "".join(root.itertext()) + fig.svg


def test_figure_shows_once_as_an_image_with_a_stable_repr(demo_case):
    ledger = demo_case.update()
    fig = figures.waterfall_figure(ledger)
    bundle = fig._repr_mimebundle_()
    assert set(bundle) == {"image/svg+xml", "text/plain"}
    assert bundle["text/plain"] == (f"Figure(waterfall: weight of evidence for "
                                    f"{ledger.map_hypothesis!r})")
    assert fig.svg == figures.waterfall_figure(ledger).svg  # deterministic


def test_show_displays_once_and_returns_nothing(demo_case, monkeypatch):
    from beliefledger import charts

    shown = []
    import IPython.display

    monkeypatch.setattr(IPython.display, "display", lambda obj: shown.append(obj))
    fig = figures.path_figure(demo_case.update())
    assert charts.show(fig) is None
    assert shown == [fig]


def test_figures_need_neither_altair_nor_ipywidgets():
    code = ("import sys, beliefledger as bl\n"
            "from beliefledger import figures\n"
            "lg = bl.example_case().update()\n"
            "figures.waterfall_figure(lg); figures.path_figure(lg)\n"
            "figures.prior_posterior_figure(lg)\n"
            "bad = [m for m in ('altair', 'ipywidgets', 'vl_convert', 'nbformat') "
            "if m in sys.modules]\n"
            "print(bad)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True)
    assert out.stdout.strip() == "[]"


@pytest.mark.parametrize("lo,hi,n,expected", [
    (-5.7, 18.2, 6, [-5.0, 0.0, 5.0, 10.0, 15.0]),
    (0, 1, 5, [0.0, 0.2, 0.4, 0.6, 0.8, 1.0]),
    (3, 3, 6, [3]),
])
def test_nice_ticks(lo, hi, n, expected):
    assert figures.nice_ticks(lo, hi, n) == expected


def test_waterfall_marks_an_uncertain_observation():
    case = bl.example_case()
    name = next(n for n, e in case.evidence.items() if e.observed is not None
                and not e.likelihood_evidence and not case.dependence_links().get(n))
    ev = case.evidence[name]
    case.observe(name, likelihood={s: (0.7 if s == ev.observed else 0.3) for s in ev.states},
                 source="a witness (invented)")
    led = case.update()
    data = chartdata.waterfall_data(led)
    assert data.loc[data["step"] == name, "uncertain"].tolist() == ["likelihood"]
    assert set(data["uncertain"]) == {"", "likelihood"}
    root = _parse_svg(figures.waterfall_figure(led).svg)
    marked = _by_class(root, "path", "bl-uncertain") + _by_class(root, "rect", "bl-uncertain")
    assert len(marked) == 1
    assert "uncertain observation, likelihood weights" in marked[0].find(f"{SVG_NS}title").text
    assert marked[0].get("stroke-dasharray") in ("3,2", None)
    texts = [t.text or "" for t in root.iter(f"{SVG_NS}text")]
    assert any("dashed: uncertain observation" in t for t in texts)
    assert any(t.endswith("(uncertain)") for t in texts)

"""altair charts of a ledger, for an analyst who wants to restyle one.

The tool draws its own pictures with :mod:`beliefledger.figures` (SVG in a
millisecond or two: the workbench, the templates and sealed records use
them). The builders here bind the same tidy tables of
:mod:`beliefledger.chartdata` to altair charts in the same visual language,
so a restyled chart starts from the picture the record shows. Each returns
an altair chart whose ``.data`` is that table, with the step order given
explicitly.

Showing charts offline
----------------------
altair's default renderer fetches its scripts from a CDN, so offline it
draws nothing. :func:`show` displays a :class:`~beliefledger.figures.Figure`
as is, and renders an altair chart to SVG in the kernel with vl-convert:
no script, no network. :func:`use_offline_renderer` switches altair's own
renderer to that SVG path, so a bare altair chart as the last line of a
cell also shows offline.
"""

from __future__ import annotations

import math
import re
from typing import TYPE_CHECKING, Any

from .chartdata import (
    FONT,
    KIND_COLOURS,
    KINDS,
    LABEL_LINES,
    LEVEL_COLOUR,
    LINE_HEIGHT,
    NEUTRAL_COLOUR,
    POSTERIOR_COLOUR,
    PRIOR_COLOUR,
    PRIOR_LABEL,
    PROBABILITY_TICKS,
    SCENARIO_SHAPES,
    STEP_HEIGHT,
    WIDTH,
    line_styles,
    prior_posterior_data,
    probability_path_data,
    short,
    unique_step_labels,
    waterfall_data,
)

if TYPE_CHECKING:  # pragma: no cover
    import altair as alt

    from .engine import Ledger

INSTALL_HINT = "pip install 'beliefledger[notebook]'"


def _alt():
    try:
        import altair as alt
    except ModuleNotFoundError as exc:
        raise ImportError(f"beliefledger.charts draws altair charts and needs the optional "
                          f"package 'altair'; install it with {INSTALL_HINT} (the SVG figures "
                          "of beliefledger.figures need nothing extra)") from exc
    return alt


def _config(chart):
    """Apply the shared look: fonts, sizes, quiet grid, no chart border."""
    return (chart
            .configure(font=FONT)
            .configure_view(strokeWidth=0)
            .configure_axis(labelFontSize=11, titleFontSize=12, gridColor="#e6e6e6",
                            domainColor="#888888", tickColor="#888888")
            .configure_legend(labelFontSize=11, titleFontSize=12, labelLimit=260)
            .configure_title(fontSize=14, anchor="start", fontWeight="bold"))


# --------------------------------------------------------------------------- waterfall


def waterfall(ledger: Ledger, focus: str | None = None) -> alt.LayerChart:
    """The waterfall of the log-odds of ``focus`` (default: the MAP) against the rest.

    The prior and the posterior are level marks (dark ticks across the
    column); each observed item is an arrow from the level before it to the
    level after it (up, blue: for the focus; down, vermillion: against it),
    labelled with its weight in decibans and its likelihood ratio with the
    verbal strength. The left axis is in decibans; the right axis shows the
    same positions as P(focus). An infinite log-odds (an eliminated or
    certain focus) is drawn at the edge of the plot and labelled ``inf``.

    Returns
    -------
    altair.LayerChart
        ``.data`` is :func:`beliefledger.chartdata.waterfall_data`'s table.
    """
    alt = _alt()
    focus = ledger.map_hypothesis if focus is None else focus
    data = waterfall_data(ledger, focus)
    order = list(data["step"])
    x = alt.X("step:N", sort=order, title=None,
              axis=alt.Axis(labelAngle=-35, labelLimit=180, labelOverlap=False))
    lo, hi = float(data["bottom_db"].min()), float(data["top_db"].max())
    pad = max(3.0, 0.12 * (hi - lo))
    domain = [min(lo, 0.0) - pad, max(hi, 0.0) + 3.2 * pad]
    y_scale = alt.Scale(domain=domain, nice=False)
    colour = alt.Color("kind:N", scale=alt.Scale(domain=list(KINDS),
                                                 range=[KIND_COLOURS[k] for k in KINDS]),
                       legend=alt.Legend(title=None, orient="top", values=["for", "against"],
                                         labelExpr="datum.value == 'for' ? 'supports it' : "
                                                   "'counts against it'"))
    tooltip = [alt.Tooltip("step:N"), alt.Tooltip("decibans:Q", format="+.2f"),
               alt.Tooltip("bayes_factor:Q", format=".4g", title="likelihood ratio"),
               alt.Tooltip("verbal:N"), alt.Tooltip("probability:Q", format=".4f")]
    base = alt.Chart().encode(x=x)
    steps = "datum.kind != 'prior' && datum.kind != 'posterior'"
    shafts = base.transform_filter(steps).mark_bar(size=10).encode(
        y=alt.Y("start_db:Q", scale=y_scale,
                title=f"log-odds of '{short(focus)}' vs the rest (decibans)"),
        y2="end_db:Q", color=colour, tooltip=tooltip)
    heads = base.transform_filter(steps).transform_calculate(
        head="datum.end_db >= datum.start_db ? 'triangle-up' : 'triangle-down'").mark_point(
        filled=True, size=160, opacity=1).encode(
        y=alt.Y("end_db:Q", scale=y_scale, axis=None),
        shape=alt.Shape("head:N", scale=alt.Scale(domain=["triangle-up", "triangle-down"],
                                                  range=["triangle-up", "triangle-down"]),
                        legend=None),
        color=alt.Color("kind:N", scale=alt.Scale(domain=list(KINDS),
                                                  range=[KIND_COLOURS[k] for k in KINDS]),
                        legend=None), tooltip=tooltip)
    levels = base.transform_filter("!(" + steps + ")").mark_tick(
        thickness=4, size=46, color=LEVEL_COLOUR).encode(
        y=alt.Y("end_db:Q", scale=y_scale, axis=None), tooltip=tooltip)
    zero = alt.Chart().mark_rule(color="#777777", strokeDash=[3, 3]).encode(
        y=alt.datum(0, scale=y_scale, axis=None))
    text = base.mark_text(dy=-6 - (LABEL_LINES - 1) * LINE_HEIGHT, fontSize=10,
                          lineHeight=LINE_HEIGHT, color="#222222", baseline="bottom",
                          lineBreak="\n").encode(
        y=alt.Y("top_db:Q", scale=y_scale, axis=None), text="label:N")
    # the same positions read as P(focus): a change of unit, decibans -> probability
    ticks = [p for p in PROBABILITY_TICKS
             if domain[0] <= 10 * math.log10(p / (1 - p)) <= domain[1]]
    prob_axis = alt.Chart().mark_rule(opacity=0).encode(
        y=alt.Y("end_db:Q", scale=y_scale, title=f"P('{short(focus)}')",
                axis=alt.Axis(orient="right", grid=False,
                              values=[10 * math.log10(p / (1 - p)) for p in ticks],
                              labelExpr="format(1 / (1 + pow(10, -datum.value / 10)), '.4~g')")))
    chart = alt.layer(shafts, heads, levels, zero, text, prob_axis, data=data).resolve_axis(
        y="independent").resolve_scale(shape="independent")
    chart = chart.properties(
        width=max(WIDTH, 110 * len(order)), height=320,
        title=alt.TitleParams(f"Weight of evidence for '{short(focus)}'",
                              subtitle=f"{ledger.title} | scenario {ledger.scenario}"))
    return _config(chart)


# --------------------------------------------------------------------------- probability path


def probability_path(ledger: Ledger, *, max_lines: int = 8) -> alt.LayerChart:
    """Every hypothesis' probability across the steps (prior, then each item).

    Lines with a point per step, one colour per hypothesis (Okabe-Ito, then
    dashes when there are more than eight). An eliminated hypothesis' line is
    dashed grey from the eliminating step on and the step is marked with a
    cross and the word "eliminated".

    Returns
    -------
    altair.LayerChart
        ``.data`` is :func:`probability_path_data`'s table.
    """
    alt = _alt()
    data = probability_path_data(ledger, max_lines=max_lines)
    order = [PRIOR_LABEL, *unique_step_labels(ledger.evidence_steps)]
    hyp_order = list(dict.fromkeys(data["hypothesis"]))
    colours, dashes = line_styles(hyp_order)
    x = alt.X("step:N", sort=order, title=None,
              axis=alt.Axis(labelAngle=-35, labelLimit=180, labelOverlap=False))
    colour = alt.Color("hypothesis:N", sort=hyp_order,
                       scale=alt.Scale(domain=hyp_order, range=colours),
                       legend=alt.Legend(title="hypothesis", orient="right"))
    y = alt.Y("probability:Q", scale=alt.Scale(domain=[0, 1]), title="probability",
              axis=alt.Axis(format=".1f"))
    live = alt.Chart().transform_filter("!datum.eliminated || datum.eliminated_here").encode(
        x=x, y=y, color=colour,
        strokeDash=alt.StrokeDash("hypothesis:N", sort=hyp_order,
                                  scale=alt.Scale(domain=hyp_order, range=dashes), legend=None),
        detail="hypothesis:N",
        tooltip=[alt.Tooltip("hypothesis:N"), alt.Tooltip("step:N"),
                 alt.Tooltip("probability:Q", format=".4f")])
    lines = live.mark_line(strokeWidth=2)
    points = live.mark_point(filled=True, size=28)
    dead = alt.Chart().transform_filter("datum.eliminated").mark_line(
        strokeDash=[2, 3], color=NEUTRAL_COLOUR, strokeWidth=1.5).encode(
        x=x, y=y, detail="hypothesis:N")
    marks = alt.Chart().transform_filter("datum.eliminated_here")
    cross = marks.mark_point(shape="cross", size=110, filled=True, angle=45).encode(
        x=x, y=y, color=alt.Color("hypothesis:N", sort=hyp_order,
                                  scale=alt.Scale(domain=hyp_order, range=colours), legend=None))
    note = marks.mark_text(dx=8, dy=-8, align="left", fontSize=10, color="#222222").encode(
        x=x, y=y, text=alt.value("eliminated"))
    chart = alt.layer(dead, lines, points, cross, note, data=data).properties(
        width=max(WIDTH, 44 * len(order)), height=280,
        title=alt.TitleParams("Probability of each hypothesis, step by step",
                              subtitle=f"{ledger.title} | scenario {ledger.scenario}"))
    return _config(chart)


# --------------------------------------------------------------------------- prior vs posterior


def prior_posterior(ledger: Ledger, scenarios: dict[str, Ledger] | None = None, *,
                    max_bars: int | None = None) -> alt.LayerChart:
    """Prior and posterior of every hypothesis as paired horizontal bars.

    The MAP hypothesis' bars are outlined in black and its label reads
    "MAP". ``scenarios`` (scenario name -> the ledger under that scenario)
    adds one marker per scenario at its posterior, shaped per scenario, so a
    reader sees at once whether the ranking holds.

    Returns
    -------
    altair.LayerChart
        ``.data`` is :func:`prior_posterior_data`'s table.
    """
    alt = _alt()
    data = prior_posterior_data(ledger, scenarios, max_bars=max_bars)
    hyp_order = list(dict.fromkeys(data["hypothesis"]))
    bars_data = "datum.series == 'prior' || datum.series == 'posterior'"
    y = alt.Y("hypothesis:N", sort=hyp_order, title=None, axis=alt.Axis(labelLimit=220))
    x = alt.X("probability:Q", scale=alt.Scale(domain=[0, 1]), title="probability",
              axis=alt.Axis(format=".1f"))
    series_colour = alt.Color("series:N", scale=alt.Scale(domain=["prior", "posterior"],
                                                          range=[PRIOR_COLOUR, POSTERIOR_COLOUR]),
                              legend=alt.Legend(title=None, orient="top"))
    bars = alt.Chart().transform_filter(bars_data).mark_bar(height=8).encode(
        y=y, x=x, yOffset=alt.YOffset("series:N", sort=["prior", "posterior"]),
        color=series_colour,
        stroke=alt.condition("datum.is_map", alt.value("#000000"), alt.value(None)),
        strokeWidth=alt.condition("datum.is_map", alt.value(1.5), alt.value(0)),
        tooltip=[alt.Tooltip("hypothesis:N"), alt.Tooltip("series:N"),
                 alt.Tooltip("probability:Q", format=".4f")])
    labels = alt.Chart().transform_filter("datum.series == 'posterior'").mark_text(
        align="left", dx=4, fontSize=10, color="#222222").encode(
        y=y, x=x, yOffset=alt.YOffset("series:N", sort=["prior", "posterior"]),
        text="label:N",
        )
    layers = [bars, labels]
    names = list(scenarios or {})
    if names:
        series = [f"scenario: {n}" for n in names]
        shapes = [SCENARIO_SHAPES[i % len(SCENARIO_SHAPES)] for i in range(len(series))]
        layers.append(alt.Chart().transform_filter("datum.series != 'prior' && "
                                                   "datum.series != 'posterior'").mark_point(
            size=60, filled=True, color="#000000", opacity=0.8).encode(
            y=y, x=x,
            shape=alt.Shape("series:N", scale=alt.Scale(domain=series, range=shapes),
                            legend=alt.Legend(title="posterior under", orient="bottom")),
            tooltip=[alt.Tooltip("hypothesis:N"), alt.Tooltip("series:N"),
                     alt.Tooltip("probability:Q", format=".4f")]))
    chart = alt.layer(*layers, data=data).resolve_scale(color="independent").properties(
        width=WIDTH - 120, height=max(120, 2 * STEP_HEIGHT * len(hyp_order)),
        title=alt.TitleParams(f"Prior and posterior (MAP: '{short(ledger.map_hypothesis)}')",
                              subtitle=f"{ledger.title} | scenario {ledger.scenario}"))
    return _config(chart)


# --------------------------------------------------------------------------- static output


def _vl_version() -> str:
    import altair as alt

    return ".".join(alt.SCHEMA_VERSION.lstrip("v").split(".")[:2])


def to_svg(chart: Any) -> str:
    """Render an altair chart to a standalone SVG document (vl-convert; no network)."""
    import vl_convert as vlc

    spec = chart.to_dict() if hasattr(chart, "to_dict") else chart
    return vlc.vegalite_to_svg(_printable(spec), vl_version=_vl_version())


_CONTROL_RE = re.compile(r"[\x00-\x09\x0b-\x1f\x7f-\x9f\u2028\u2029]")


def _printable(obj: Any) -> Any:
    """The spec with control characters in its strings shown as ``\\uXXXX`` (line
    breaks kept for multi-line labels): an ESC or NUL in a name aborts vl-convert's
    renderer (the whole process, not an exception), and U+2028 breaks its parser."""
    if isinstance(obj, str):
        return _CONTROL_RE.sub(lambda m: f"\\u{ord(m.group()):04x}", obj)
    if isinstance(obj, list):
        return [_printable(x) for x in obj]
    if isinstance(obj, dict):
        return {_printable(k): _printable(v) for k, v in obj.items()}
    return obj


def static_figure(chart: Any) -> Any:
    """An altair chart rendered to SVG by vl-convert, as a
    :class:`~beliefledger.figures.Figure` (shown offline as an image)."""
    from .figures import Figure

    title = getattr(chart, "title", None)
    text = getattr(title, "text", title)
    return Figure(to_svg(chart), str(text) if isinstance(text, str) else "chart", "altair chart")


def show(chart: Any) -> None:
    """Display a figure (as it is) or an altair chart (rendered to SVG) in the notebook.

    Returns nothing, so ``charts.show(...)`` as a cell's last line shows the
    picture once. A :class:`~beliefledger.figures.Figure` needs no call at all:
    end the cell with it.
    """
    from IPython.display import display

    from .figures import Figure

    display(chart if isinstance(chart, Figure) else static_figure(chart))


def use_offline_renderer() -> None:
    """Make altair draw every chart as SVG in the kernel (no CDN scripts needed)."""
    import altair as alt

    alt.renderers.enable("svg")


__all__ = [
    "waterfall", "probability_path", "prior_posterior", "to_svg", "show", "static_figure",
    "use_offline_renderer",
]

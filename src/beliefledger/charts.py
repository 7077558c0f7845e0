"""Chart builders: pure functions, a trace in, an altair chart out.

Every builder shapes data that the engine and :mod:`beliefledger.measures`
already computed into a tidy table and binds it to an altair chart; no
posterior or weight is computed here. Each returns an altair chart whose
``.data`` is that tidy table (so tests and records can read what is drawn)
and whose step order is given explicitly (an ordinal axis left to sort
itself would be alphabetical and draw false dips).

Showing charts offline
----------------------
altair's default renderer fetches its scripts from a CDN, so offline it
draws nothing. :func:`show` renders a chart to SVG in the kernel with
vl-convert and displays the image: no script, no network, and the same
picture a sealed record stores. :func:`use_offline_renderer` switches
altair's own renderer to that SVG path, so a bare chart as the last line of
a cell also shows offline. The live workbench repaints on every edit, faster
than vl-convert can render, so it draws the same tidy tables with the small
SVG painters of :mod:`beliefledger.widgets.livecharts` (same palette and
layout); records and :func:`show` use these altair charts.

Visual language
---------------
One palette for the whole tool, chosen to stay apart for the common forms
of colour-vision deficiency and in greyscale print: the eight colours of
Okabe and Ito (2008). Evidence *for* the focus hypothesis is blue, evidence
*against* it is vermillion, prior and posterior are dark grey; every bar
also carries its signed value as text, so nothing depends on colour alone.
Eliminated hypotheses are drawn dashed and marked with a cross.

References
----------
.. [1] Okabe, M. and Ito, K. (2008). "Color Universal Design (CUD): how to
   make figures and presentations that are friendly to colorblind people."
   J*FLY data depository.
"""

from __future__ import annotations

import functools
import math
import re
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from .measures import DECIBANS_PER_NAT, step_weights

if TYPE_CHECKING:  # pragma: no cover
    import altair as alt

    from .engine import Trace

# --------------------------------------------------------------------------- visual language

OKABE_ITO = ("#0072B2", "#E69F00", "#009E73", "#CC79A7", "#56B4E9", "#D55E00", "#000000",
             "#F0E442")
"""Okabe-Ito colour-blind-safe palette, reordered so the yellow (weak on white
paper) comes last."""

SUPPORT_COLOUR = "#0072B2"   # blue: evidence for the focus hypothesis
AGAINST_COLOUR = "#D55E00"   # vermillion: evidence against it
NEUTRAL_COLOUR = "#999999"
ENDPOINT_COLOUR = "#3b3b3b"  # prior and posterior bars
PRIOR_COLOUR = "#9ecae1"     # light blue for prior bars (pairs with the blue posterior)
FONT = "DejaVu Sans"         # installed in CI; vl-convert falls back when missing
DASHES = ([1, 0], [6, 3], [2, 2], [8, 3, 2, 3])
SCENARIO_SHAPES = ("diamond", "triangle-up", "square", "cross", "triangle-down", "circle")

WIDTH = 520
STEP_HEIGHT = 18        # per bar in horizontal bar charts
MAX_INF_PAD_DB = 20.0   # how far past the finite range an infinite log-odds is drawn

PROBABILITY_TICKS = (0.001, 0.01, 0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95, 0.99, 0.999)

PRIOR_LABEL = "prior"
POSTERIOR_LABEL = "posterior"


def _alt():
    import altair as alt

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


def line_styles(names: list[str]) -> tuple[list[str], list[list[int]]]:
    """Colour and dash pattern of each line of the probability path, in order.

    Named hypotheses cycle through the palette, then through dash patterns;
    the folded "(N others)" line is always neutral grey and dotted.
    """
    colours, dashes, k = [], [], 0
    for name in names:
        if _is_folded(name):
            colours.append(NEUTRAL_COLOUR)
            dashes.append([1, 2])
            continue
        colours.append(OKABE_ITO[k % len(OKABE_ITO)])
        dashes.append(DASHES[(k // len(OKABE_ITO)) % len(DASHES)])
        k += 1
    return colours, dashes


def _folded_name(n: int) -> str:
    return f"({n} others)"


def _is_folded(name: str) -> bool:
    return name.startswith("(") and name.endswith(" others)") and name[1:-8].isdigit()


def _unique_step_labels(steps: list[str]) -> list[str]:
    """Axis labels for evidence steps that can never collide with 'prior'/'posterior'."""
    out = []
    for s in steps:
        label = str(s)
        if label in (PRIOR_LABEL, POSTERIOR_LABEL):
            label = f"{label} (evidence)"
        out.append(label)
    return out


def _fmt_db(x: float) -> str:
    if math.isinf(x):
        return "+inf dB" if x > 0 else "-inf dB"
    return f"{x:+.1f} dB"


LABEL_LINES = 3
LINE_HEIGHT = 11


@functools.lru_cache(maxsize=256)
def _wrap(text: str, width: int = 21) -> tuple[str, ...]:
    """Break a label into at most two lines of about ``width`` characters."""
    import textwrap

    return tuple(textwrap.wrap(text, width=width, max_lines=LABEL_LINES - 1,
                               placeholder="..."))


def _lines(*parts: str) -> str:
    """Exactly LABEL_LINES lines, padded at the top, so every label ends just above its bar."""
    lines = list(parts)[:LABEL_LINES]
    return "\n".join([""] * (LABEL_LINES - len(lines)) + lines)


def _fmt_p(p: float) -> str:
    if p == 0:
        return "P=0"
    if p == 1:
        return "P=1"
    if p < 0.001 or p > 0.999:
        return f"P={p:.2e}" if p < 0.5 else f"P=1-{1 - p:.1e}"
    return f"P={p:.3f}"


# --------------------------------------------------------------------------- waterfall


def waterfall_data(trace: Trace, focus: str | None = None) -> pd.DataFrame:
    """The tidy table :func:`waterfall` draws (one row per bar, in drawing order).

    Columns: ``order``, ``step`` (axis label), ``kind`` (``prior``, ``for``,
    ``against``, ``neutral``, ``posterior``), ``start_db``, ``end_db`` (log-odds
    of the focus against the rest in decibans, infinities clipped for
    drawing), ``decibans`` (the step's weight, may be infinite), ``verbal``,
    ``probability`` (P(focus) after the bar), ``label`` and ``clipped``.
    """
    focus = trace.map_hypothesis if focus is None else focus
    w = step_weights(trace, focus)  # validates focus
    p_focus = trace.steps[focus].to_numpy(dtype=float)
    lo_db = np.empty(len(trace.steps))
    lo_db[0] = (w["log_odds_before"].iloc[0] if len(w) else _prior_log_odds(trace, focus))
    if len(w):
        lo_db[1:] = w["log_odds_after"].to_numpy()
    lo_db = lo_db * DECIBANS_PER_NAT
    finite = lo_db[np.isfinite(lo_db)]
    span = float(np.max(np.abs(finite))) if finite.size else 10.0
    cap = max(span, 10.0) + MAX_INF_PAD_DB

    labels = _unique_step_labels(list(w.index))
    n = len(labels)
    kinds = ["prior"] + [d if d in ("for", "against") else "neutral"
                         for d in w["direction"].tolist()] + ["posterior"]
    db = w["decibans"].to_numpy(dtype=float)
    verbal = [str(v) for v in w["verbal"].tolist()]
    start = np.concatenate([[0.0], lo_db[:-1], [0.0]])
    end = np.concatenate([lo_db, [lo_db[-1]]])
    clipped = np.concatenate([[np.isinf(lo_db[0])],
                              np.isinf(lo_db[1:]) | np.isinf(lo_db[:-1]),
                              [np.isinf(lo_db[-1])]])
    start_c = np.where(np.isinf(start), np.clip(start, -cap, cap), start)
    end_c = np.where(np.isinf(end), np.clip(end, -cap, cap), end)
    frame = pd.DataFrame({
        "order": np.arange(n + 2),
        "step": [PRIOR_LABEL, *labels, POSTERIOR_LABEL],
        "kind": kinds,
        "start_db": start_c,
        "end_db": end_c,
        "decibans": np.concatenate([[lo_db[0]], db, [lo_db[-1]]]),
        "verbal": ["", *verbal, ""],
        "probability": np.concatenate([p_focus, [p_focus[-1]]]),
        "label": ([_lines("", _fmt_db(lo_db[0]), _fmt_p(p_focus[0]))]
                  + [_lines(_fmt_db(d), *_wrap(v)) for d, v in zip(db, verbal, strict=True)]
                  + [_lines("", _fmt_db(lo_db[-1]), _fmt_p(p_focus[-1]))]),
        "clipped": clipped.astype(bool),
        "top_db": np.maximum(start_c, end_c),
        "bottom_db": np.minimum(start_c, end_c),
    })
    return frame


def _prior_log_odds(trace: Trace, focus: str) -> float:
    from ._logmath import log_odds_path

    j = trace.hypotheses.index(focus)
    return float(log_odds_path(trace.log_steps[:1], j)[0])


def waterfall(trace: Trace, focus: str | None = None) -> alt.LayerChart:
    """Waterfall of the log-odds of ``focus`` (default: the MAP) against the rest.

    The first bar is the prior log-odds, then one floating bar per observed
    evidence item in the order applied (up: for the focus, blue; down:
    against it, vermillion), each labelled with its weight in decibans and
    its verbal strength, and last the posterior log-odds. The left axis is in
    decibans; the right axis shows the same positions as P(focus). An
    infinite log-odds (an eliminated or certain focus) is drawn at the edge
    of the plot and labelled ``inf``.

    Returns
    -------
    altair.LayerChart
        ``.data`` is :func:`waterfall_data`'s table.

    References
    ----------
    .. [1] Good, I. J. (1985). "Weight of evidence: a brief survey." Bayesian
       Statistics 2, 249-270 (decibans as the unit of weight of evidence).
    """
    alt = _alt()
    focus = trace.map_hypothesis if focus is None else focus
    data = waterfall_data(trace, focus)
    order = list(data["step"])
    kinds = ["prior", "for", "against", "neutral", "posterior"]
    colours = [ENDPOINT_COLOUR, SUPPORT_COLOUR, AGAINST_COLOUR, NEUTRAL_COLOUR, ENDPOINT_COLOUR]
    x = alt.X("step:N", sort=order, title=None,
              axis=alt.Axis(labelAngle=-35, labelLimit=180, labelOverlap=False))
    lo, hi = float(data["bottom_db"].min()), float(data["top_db"].max())
    pad = max(3.0, 0.12 * (hi - lo))
    domain = [min(lo, 0.0) - pad, max(hi, 0.0) + 2.5 * pad]
    y_scale = alt.Scale(domain=domain, nice=False)
    base = alt.Chart().encode(x=x)
    bars = base.mark_bar(size=26, stroke="#222222", strokeWidth=0.5).encode(
        y=alt.Y("start_db:Q", scale=y_scale,
                title=f"log-odds of '{_short(focus)}' vs the rest (decibans)"),
        y2="end_db:Q",
        color=alt.Color("kind:N", scale=alt.Scale(domain=kinds, range=colours),
                        legend=alt.Legend(title=None, orient="top",
                                          values=["for", "against"],
                                          labelExpr="datum.value == 'for' ? 'for the focus' : "
                                                    "'against the focus'")),
        tooltip=[alt.Tooltip("step:N"), alt.Tooltip("decibans:Q", format="+.2f"),
                 alt.Tooltip("verbal:N"), alt.Tooltip("probability:Q", format=".4f")],
    )
    zero = alt.Chart().mark_rule(color="#666666", strokeDash=[3, 3]).encode(
        y=alt.datum(0, scale=y_scale, axis=None))
    # Two-line labels above each bar: the weight, then the verbal strength (wrapped).
    text = base.mark_text(dy=-4 - (LABEL_LINES - 1) * LINE_HEIGHT, fontSize=10,
                          lineHeight=LINE_HEIGHT, color="#222222", baseline="bottom",
                          lineBreak="\n").encode(
        y=alt.Y("top_db:Q", scale=y_scale, axis=None), text="label:N")
    # Second axis: the same positions read as P(focus) (a unit change, decibans -> P).
    ticks = [p for p in PROBABILITY_TICKS
             if domain[0] <= 10 * math.log10(p / (1 - p)) <= domain[1]]
    prob_axis = alt.Chart().mark_rule(opacity=0).encode(
        y=alt.Y("end_db:Q", scale=y_scale, title=f"P('{_short(focus)}')",
                axis=alt.Axis(orient="right", grid=False,
                              values=[10 * math.log10(p / (1 - p)) for p in ticks],
                              labelExpr="format(1 / (1 + pow(10, -datum.value / 10)), '.4~g')")))
    chart = alt.layer(bars, zero, text, prob_axis, data=data).resolve_axis(y="independent")
    chart = chart.properties(
        width=max(WIDTH, 110 * len(order)), height=320,
        title=alt.TitleParams(f"Weight of evidence for '{_short(focus)}'",
                              subtitle=f"{trace.title} | scenario {trace.scenario}"))
    return _config(chart)


def _short(name: str, limit: int = 48) -> str:
    name = " ".join(str(name).split())  # one line: a raw line break breaks vega-lite's tooltips
    return name if len(name) <= limit else name[: limit - 1] + "\u2026"


# --------------------------------------------------------------------------- probability path


def probability_path_data(trace: Trace, *, max_lines: int = 8) -> pd.DataFrame:
    """The long table :func:`probability_path` draws.

    Columns: ``order``, ``step``, ``hypothesis``, ``probability``,
    ``eliminated`` (the hypothesis is at exactly 0 from this step on after a
    positive prior), ``eliminated_here`` (the step that eliminated it). With
    more than ``max_lines`` hypotheses, those with the highest probability at
    any step are kept and the rest are summed into one line
    ``"(N others)"`` (never eliminated-marked).
    """
    steps = trace.steps
    labels = [PRIOR_LABEL, *_unique_step_labels(trace.evidence_steps)]
    probs = steps.to_numpy(dtype=float)
    hyps = list(trace.hypotheses)
    keep = hyps
    rest: list[str] = []
    if len(hyps) > max_lines:
        peak = probs.max(axis=0)
        idx = sorted(np.argsort(-peak, kind="stable")[: max_lines - 1])
        keep = [hyps[i] for i in idx]
        kept = set(keep)
        rest = [h for h in hyps if h not in kept]
    elim = set(trace.eliminated)
    n = len(labels)
    cols: dict[str, list] = {"order": [], "step": [], "hypothesis": [], "probability": [],
                             "eliminated": [], "eliminated_here": []}

    def add(name: str, values: np.ndarray, first_zero: int | None) -> None:
        k = np.arange(n)
        cols["order"] += k.tolist()
        cols["step"] += labels
        cols["hypothesis"] += [name] * n
        cols["probability"] += values.tolist()
        if first_zero is None:
            cols["eliminated"] += [False] * n
            cols["eliminated_here"] += [False] * n
        else:
            cols["eliminated"] += (k >= first_zero).tolist()
            cols["eliminated_here"] += (k == first_zero).tolist()

    keep_set = set(keep)
    for j, h in enumerate(hyps):
        if h not in keep_set:
            continue
        col = probs[:, j]
        first_zero = None
        if h in elim:
            nz = np.flatnonzero(col > 0)
            first_zero = int(nz[-1]) + 1 if nz.size else 0
        add(h, col, first_zero)
    if rest:
        rest_idx = [hyps.index(h) for h in rest]
        add(_folded_name(len(rest)), np.minimum(1.0, probs[:, rest_idx].sum(axis=1)), None)
    return pd.DataFrame(cols, columns=["order", "step", "hypothesis", "probability",
                                       "eliminated", "eliminated_here"])


def probability_path(trace: Trace, *, max_lines: int = 8) -> alt.LayerChart:
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
    data = probability_path_data(trace, max_lines=max_lines)
    order = [PRIOR_LABEL, *_unique_step_labels(trace.evidence_steps)]
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
                              subtitle=f"{trace.title} | scenario {trace.scenario}"))
    return _config(chart)


# --------------------------------------------------------------------------- prior vs posterior


def prior_posterior_data(trace: Trace, scenarios: dict[str, Trace] | None = None, *,
                         max_bars: int | None = None) -> pd.DataFrame:
    """The long table :func:`prior_posterior` draws.

    Columns: ``hypothesis``, ``order`` (case order), ``series`` (``prior``,
    ``posterior`` or ``scenario: <name>``), ``probability``, ``is_map``
    (the hypothesis is the trace's MAP) and ``label``. With ``max_bars``, only
    the hypotheses with the largest prior or posterior are kept (the MAP
    always).
    """
    all_hyps = list(trace.hypotheses)
    table = trace.steps.to_numpy(dtype=float)
    prior, post = table[0], table[-1]
    idx = np.arange(len(all_hyps))
    if max_bars is not None and len(all_hyps) > max_bars:
        score = np.maximum(prior, post)
        keep = set(np.argsort(-score, kind="stable")[:max_bars].tolist())
        keep.add(all_hyps.index(trace.map_hypothesis))
        idx = np.array(sorted(keep))
    hyps = [all_hyps[i] for i in idx]
    n = len(hyps)
    is_map = [h == trace.map_hypothesis for h in hyps]
    cols: dict[str, list] = {
        "hypothesis": hyps * 2, "order": list(range(n)) * 2,
        "series": ["prior"] * n + ["posterior"] * n,
        "probability": prior[idx].tolist() + post[idx].tolist(), "is_map": is_map * 2,
        "label": [f"{p:.3f}" for p in prior[idx]]
        + [f"{p:.3f}" + ("  MAP" if m else "") for p, m in zip(post[idx], is_map, strict=True)],
    }
    for name, tr in (scenarios or {}).items():
        if list(tr.hypotheses) != all_hyps:
            from .errors import CaseError

            raise CaseError(f"scenario trace {name!r} has hypotheses {tr.hypotheses[:5]}..., "
                            "not those of the main trace; pass traces of the same case")
        sp = tr.steps.to_numpy(dtype=float)[-1]
        cols["hypothesis"] += hyps
        cols["order"] += list(range(n))
        cols["series"] += [f"scenario: {name}"] * n
        cols["probability"] += sp[idx].tolist()
        cols["is_map"] += [h == tr.map_hypothesis for h in hyps]
        cols["label"] += [""] * n
    return pd.DataFrame(cols, columns=["hypothesis", "order", "series", "probability",
                                       "is_map", "label"])


def prior_posterior(trace: Trace, scenarios: dict[str, Trace] | None = None, *,
                    max_bars: int | None = None) -> alt.LayerChart:
    """Prior and posterior of every hypothesis as paired horizontal bars.

    The MAP hypothesis' bars are outlined in black and its label reads
    "MAP". ``scenarios`` (scenario name -> the trace under that scenario)
    adds one marker per scenario at its posterior, shaped per scenario, so a
    reader sees at once whether the ranking holds.

    Returns
    -------
    altair.LayerChart
        ``.data`` is :func:`prior_posterior_data`'s table.
    """
    alt = _alt()
    data = prior_posterior_data(trace, scenarios, max_bars=max_bars)
    hyp_order = list(dict.fromkeys(data["hypothesis"]))
    bars_data = "datum.series == 'prior' || datum.series == 'posterior'"
    y = alt.Y("hypothesis:N", sort=hyp_order, title=None, axis=alt.Axis(labelLimit=220))
    x = alt.X("probability:Q", scale=alt.Scale(domain=[0, 1]), title="probability",
              axis=alt.Axis(format=".1f"))
    series_colour = alt.Color("series:N", scale=alt.Scale(domain=["prior", "posterior"],
                                                          range=[PRIOR_COLOUR, SUPPORT_COLOUR]),
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
        title=alt.TitleParams(f"Prior and posterior (MAP: '{_short(trace.map_hypothesis)}')",
                              subtitle=f"{trace.title} | scenario {trace.scenario}"))
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


class StaticChart:
    """A chart rendered to SVG, shown by IPython as an image (works offline).

    ``repr`` names the chart's title; ``_repr_svg_`` returns the SVG, and
    ``_repr_html_`` the same SVG inline (for HTML exports that prefer HTML).
    """

    def __init__(self, chart: Any) -> None:
        self.chart = chart
        self.svg = to_svg(chart)

    def _title(self) -> str:
        t = getattr(self.chart, "title", None)
        text = getattr(t, "text", t)
        return str(text) if isinstance(text, str) else "chart"

    def __repr__(self) -> str:
        return f"StaticChart({self._title()!r}, {len(self.svg):,} bytes of SVG)"

    def _repr_svg_(self) -> str:
        return self.svg

    def _repr_mimebundle_(self, include=None, exclude=None) -> dict[str, str]:
        return {"image/svg+xml": self.svg, "text/plain": repr(self)}


def show(chart: Any) -> StaticChart:
    """Display ``chart`` in the notebook as a static SVG (offline) and return it."""
    from IPython.display import display

    static = StaticChart(chart)
    display(static)
    return static


def use_offline_renderer() -> None:
    """Make altair draw every chart as SVG in the kernel (no CDN scripts needed)."""
    import altair as alt

    alt.renderers.enable("svg")


__all__ = [
    "waterfall", "waterfall_data", "probability_path", "probability_path_data",
    "prior_posterior", "prior_posterior_data", "to_svg", "show", "StaticChart",
    "use_offline_renderer", "OKABE_ITO", "SUPPORT_COLOUR", "AGAINST_COLOUR",
]

"""Figures: the tool's charts drawn straight to SVG, in a millisecond or two.

The workbench repaints on every edit, ``charts.show`` and the notebook
templates show them, and sealed records store them, so every place shows
the same picture. Each painter draws one tidy table of
:mod:`beliefledger.chartdata` (the same tables the altair charts of
:mod:`beliefledger.charts` bind, for an analyst who wants to restyle one).
Everything is static markup: no script, no external reference, every piece
of user text escaped, and each mark carries a ``<title>`` so a browser shows
its value on hover. Only numpy and pandas are imported.

:func:`waterfall_figure`, :func:`path_figure` and
:func:`prior_posterior_figure` take a ledger and return a :class:`Figure`,
which a notebook shows as an image (once, as a cell's last line).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from . import chartdata as C
from .display import esc

if TYPE_CHECKING:  # pragma: no cover
    from .engine import Ledger

FONT = f"{C.FONT}, Verdana, sans-serif"


def _t(text: object) -> str:
    return esc(text)  # escaped, control and bidi characters made visible


def _short(text: object, limit: int) -> str:
    s = str(text)
    return s if len(s) <= limit else s[: limit - 1] + "\u2026"


def _svg(width: float, height: float, body: list[str], label: str) -> str:
    return (f'<svg xmlns="http://www.w3.org/2000/svg" class="bl-live-chart" role="img" '
            f'aria-label="{_t(label)}" width="{width:.0f}" height="{height:.0f}" '
            f'viewBox="0 0 {width:.0f} {height:.0f}" font-family="{_t(FONT)}" font-size="11">'
            + "".join(body) + "</svg>")


def _title(x: float, y: float, title: str, subtitle: str) -> list[str]:
    return [f'<text x="{x}" y="{y}" font-size="14" font-weight="bold">{_t(title)}</text>',
            f'<text x="{x}" y="{y + 16}" font-size="11" fill="#444">{_t(subtitle)}</text>']


def nice_ticks(lo: float, hi: float, target: int = 6) -> list[float]:
    """Round tick values covering [lo, hi] (steps of 1, 2 or 5 times a power of ten)."""
    span = hi - lo
    if not np.isfinite(span) or span <= 0:
        return [lo]
    raw = span / max(target, 1)
    mag = 10 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1, 2, 5, 10) if m * mag >= raw)
    first = math.ceil(lo / step) * step
    n = int(math.floor((hi - first) / step + 1e-9)) + 1
    return [round(first + i * step, 10) for i in range(n)]


# --------------------------------------------------------------------------- waterfall


def _arrow(cx: float, y0: float, y1: float, half: float, head: float) -> str:
    """Path of an arrow from level ``y0`` to level ``y1`` (SVG y grows downwards): a
    shaft of half-width ``half`` and a head of length ``head`` ending exactly at ``y1``."""
    up = y1 < y0
    length = abs(y1 - y0)
    h = min(head, length)
    neck = y1 + h if up else y1 - h
    wide = half * 1.9
    if length - h < 0.5:  # short step: the head alone
        return (f"M{cx - wide:.1f},{y0:.1f}L{cx + wide:.1f},{y0:.1f}L{cx:.1f},{y1:.1f}Z")
    return (f"M{cx - half:.1f},{y0:.1f}L{cx - half:.1f},{neck:.1f}L{cx - wide:.1f},{neck:.1f}"
            f"L{cx:.1f},{y1:.1f}L{cx + wide:.1f},{neck:.1f}L{cx + half:.1f},{neck:.1f}"
            f"L{cx + half:.1f},{y0:.1f}Z")


def waterfall_svg(data: pd.DataFrame, *, focus: str, subtitle: str = "",
                  plot_width: float = 800) -> str:
    """Draw :func:`beliefledger.chartdata.waterfall_data` output as SVG text.

    The prior and the posterior are level marks (a dark bar across the column
    with its value); each evidence item is an arrow from the level before it
    to the level after it, up (blue) for the focus, down (vermillion) against."""
    n = len(data)
    slot = min(112.0, max(14.0, plot_width / max(n, 1)))
    left, right, top, plot_h = 64.0, 70.0, 74.0, 230.0
    label_h = 120.0
    width = left + slot * n + right
    height = top + plot_h + label_h
    lo, hi = float(np.min(data["bottom_db"].to_numpy())), float(np.max(data["top_db"].to_numpy()))
    pad = max(3.0, 0.12 * (hi - lo))
    d0, d1 = min(lo, 0.0) - pad, max(hi, 0.0) + 3.2 * pad

    def y(v: float) -> float:
        return top + plot_h * (d1 - v) / (d1 - d0)

    body = _title(8, 18, f"Weight of evidence for '{_short(focus, 60)}'", subtitle)
    body.append(f'<g font-size="11"><path d="M{left + 5},50L{left + 5},43L{left + 2},43L{left + 6},'
                f'38L{left + 10},43L{left + 7},43L{left + 7},50Z" fill="{C.SUPPORT_COLOUR}"/>'
                f'<text x="{left + 16}" y="49">supports it</text>'
                f'<path d="M{left + 105},38L{left + 105},45L{left + 102},45L{left + 106},50'
                f'L{left + 110},45L{left + 107},45L{left + 107},38Z" fill="{C.AGAINST_COLOUR}"/>'
                f'<text x="{left + 116}" y="49">counts against it</text>'
                f'<rect x="{left + 232}" y="42" width="14" height="3" fill="{C.LEVEL_COLOUR}"/>'
                f'<text x="{left + 252}" y="49">prior and posterior level</text></g>')
    if "uncertain" in data and data["uncertain"].astype(bool).any():
        body.append(f'<g font-size="11" class="bl-legend-uncertain"><rect x="{left + 400}" y="39" '
                    f'width="10" height="10" fill="#bbbbbb" fill-opacity="0.55" stroke="#222" '
                    f'stroke-dasharray="3,2"/><text x="{left + 416}" y="49">dashed: '
                    f'{C.UNCERTAIN_MARK}</text></g>')
    x_end = left + slot * n
    for v in nice_ticks(d0, d1):
        yy = y(v)
        body.append(f'<line x1="{left}" x2="{x_end}" y1="{yy:.1f}" y2="{yy:.1f}" '
                    f'stroke="#ececec"/><text x="{left - 6}" y="{yy + 4:.1f}" '
                    f'text-anchor="end">{v:g}</text>')
    for p in C.PROBABILITY_TICKS:
        v = 10 * math.log10(p / (1 - p))
        if d0 <= v <= d1:
            yy = y(v)
            body.append(f'<line x1="{x_end}" x2="{x_end + 4}" y1="{yy:.1f}" y2="{yy:.1f}" '
                        f'stroke="#888"/><text x="{x_end + 7}" y="{yy + 4:.1f}">{p:g}</text>')
    body.append(f'<line x1="{left}" x2="{left}" y1="{top}" y2="{top + plot_h}" stroke="#888"/>'
                f'<line x1="{x_end}" x2="{x_end}" y1="{top}" y2="{top + plot_h}" stroke="#888"/>')
    body.append(f'<text transform="translate(14,{top + plot_h / 2:.0f}) rotate(-90)" '
                f'text-anchor="middle" font-weight="bold">log-odds vs the rest (decibans)</text>')
    body.append(f'<text transform="translate({width - 8:.0f},{top + plot_h / 2:.0f}) rotate(90)" '
                f'text-anchor="middle" font-weight="bold">P({_t(_short(focus, 30))})</text>')
    body.append(f'<line x1="{left}" x2="{x_end}" y1="{y(0):.1f}" y2="{y(0):.1f}" stroke="#777" '
                f'stroke-dasharray="3,3"/><text x="{left + 4}" y="{y(0) - 3:.1f}" font-size="9" '
                f'fill="#555">even odds</text>')
    half = max(2.0, min(9.0, slot * 0.18))
    every = max(1, math.ceil(12 / slot))
    cols = {c: data[c].tolist() for c in ("step", "kind", "start_db", "end_db", "top_db",
                                          "decibans", "verbal", "probability", "label")}
    cols["uncertain"] = (data["uncertain"].tolist() if "uncertain" in data
                         else [""] * n)
    for k in range(n):
        step, kind, label = cols["step"][k], cols["kind"][k], cols["label"][k]
        verbal, db, prob = cols["verbal"][k], cols["decibans"][k], cols["probability"][k]
        cx = left + slot * (k + 0.5)
        y_top = y(cols["top_db"][k])
        colour = C.KIND_COLOURS[kind]
        if kind in ("prior", "posterior"):
            tip = f"{step}: log-odds {C.fmt_decibans(db)}; P(focus) = {prob:.4g}"
            yl = y(cols["end_db"][k])
            body.append(f'<rect class="bl-level bl-{_t(kind)}" x="{cx - slot * 0.36:.1f}" '
                        f'y="{yl - 2:.1f}" width="{slot * 0.72:.1f}" height="4" '
                        f'fill="{colour}"><title>{_t(tip)}</title></rect>')
        else:
            form = cols["uncertain"][k]
            how = (f" ({C.UNCERTAIN_MARK}, {C.UNCERTAIN_FORM_TEXT.get(form, form)})"
                   if form else "")
            tip = (f"{step}{how}: {C.fmt_decibans(db)}" + (f", {verbal}" if verbal else "")
                   + f"; P(focus) after = {prob:.4g}")
            y0, y1 = y(cols["start_db"][k]), y(cols["end_db"][k])
            cls = f"bl-bar bl-{_t(kind)}" + (" bl-uncertain" if form else "")
            # an uncertain observation: dashed outline, lighter fill (same colour meaning)
            look = ('fill-opacity="0.55" stroke="#222" stroke-width="1" stroke-dasharray="3,2"'
                    if form else 'stroke="#222" stroke-width="0.4"')
            if abs(y1 - y0) < 1.0:  # no weight: a thin neutral tick at the level
                body.append(f'<rect class="{cls}" x="{cx - half:.1f}" '
                            f'y="{y0 - 0.75:.1f}" width="{2 * half:.1f}" height="1.5" '
                            f'fill="{colour}"><title>{_t(tip)}</title></rect>')
            else:
                body.append(f'<path class="{cls}" d="{_arrow(cx, y0, y1, half, 9.0)}" '
                            f'fill="{colour}" {look}>'
                            f"<title>{_t(tip)}</title></path>")
        lines = label.split("\n")
        if slot < 100:
            lines = [ln for ln in lines if "deciban" in ln or "P=" in ln] if slot >= 30 else []
        lines = [ln for ln in lines if ln]
        for i, ln in enumerate(reversed(lines)):
            size = 10 if ("deciban" in ln or "P=" in ln) else 9  # the likelihood ratio smaller
            body.append(f'<text x="{cx:.1f}" y="{y_top - 5 - 11 * i:.1f}" text-anchor="middle" '
                        f'font-size="{size}">{_t(ln)}</text>')
        if k % every == 0 or k == n - 1:
            ly = top + plot_h + 12
            mark = " (uncertain)" if cols["uncertain"][k] else ""
            body.append(f'<text transform="translate({cx:.1f},{ly:.1f}) rotate(-35)" '
                        f'text-anchor="end">{_t(_short(step, 28 - len(mark)) + mark)}</text>')
    return _svg(width, height, body, f"waterfall for {focus}")


# --------------------------------------------------------------------------- probability path


def path_svg(data: pd.DataFrame, *, subtitle: str = "", plot_width: float = 560) -> str:
    """Draw :func:`beliefledger.chartdata.probability_path_data` output as SVG text."""
    cols = {c: data[c].tolist() for c in ("hypothesis", "order", "probability", "eliminated",
                                          "eliminated_here", "step")}
    steps = list(dict.fromkeys(cols["step"]))
    hyps = list(dict.fromkeys(cols["hypothesis"]))
    n = len(steps)
    slot = min(96.0, max(8.0, plot_width / max(n, 1)))
    left, top, plot_h, label_h, legend_w = 48.0, 40.0, 220.0, 110.0, 230.0
    x_end = left + slot * n
    width = x_end + legend_w
    height = top + plot_h + label_h

    def x(k: int) -> float:
        return left + slot * (k + 0.5)

    def y(p: float) -> float:
        return top + plot_h * (1 - p)

    body = _title(8, 18, "Probability of each hypothesis, step by step", subtitle)
    for v in (0, 0.2, 0.4, 0.6, 0.8, 1.0):
        body.append(f'<line x1="{left}" x2="{x_end}" y1="{y(v):.1f}" y2="{y(v):.1f}" '
                    f'stroke="#e6e6e6"/><text x="{left - 6}" y="{y(v) + 4:.1f}" '
                    f'text-anchor="end">{v:.1f}</text>')
    body.append(f'<line x1="{left}" x2="{left}" y1="{top}" y2="{top + plot_h}" stroke="#888"/>')
    every = max(1, math.ceil(12 / slot))
    for k, s in enumerate(steps):
        if k % every == 0 or k == n - 1:
            body.append(f'<text transform="translate({x(k):.1f},{top + plot_h + 12:.1f}) '
                        f'rotate(-35)" text-anchor="end">{_t(_short(s, 28))}</text>')
    groups: dict[str, list[tuple]] = {h: [] for h in hyps}
    for row in zip(cols["hypothesis"], cols["order"], cols["probability"], cols["eliminated"],
                   cols["eliminated_here"], cols["step"], strict=True):
        groups[row[0]].append(row[1:])
    for rows in groups.values():
        rows.sort(key=lambda r: r[0])
    colours, dashes = C.line_styles(hyps)
    for i, h in enumerate(hyps):
        colour, dash = colours[i], dashes[i]
        dash_attr = "" if dash == [1, 0] else f' stroke-dasharray="{",".join(map(str, dash))}"'
        rows = groups[h]
        live = [r for r in rows if not r[2] or r[3]]
        dead = [r for r in rows if r[2]]
        pts = " ".join(f"{x(o):.1f},{y(p):.1f}" for o, p, *_ in live)
        body.append(f'<g class="bl-path" data-hypothesis="{_t(h)}"><title>{_t(h)}</title>'
                    f'<polyline points="{pts}" fill="none" stroke="{colour}" stroke-width="2"'
                    f"{dash_attr}/>")
        if slot >= 14:
            for o, p, _e, _eh, s in live:
                body.append(f'<circle cx="{x(o):.1f}" cy="{y(p):.1f}" r="2.5" '
                            f'fill="{colour}"><title>{_t(h)} after {_t(s)}: {p:.4f}</title>'
                            "</circle>")
        if len(dead) > 1:
            dpts = " ".join(f"{x(r[0]):.1f},{y(0):.1f}" for r in dead)
            body.append(f'<polyline points="{dpts}" fill="none" stroke="{C.NEUTRAL_COLOUR}" '
                        f'stroke-width="1.5" stroke-dasharray="2,3"/>')
        for o in [r[0] for r in rows if r[3]]:
            cx, cy = x(o), y(0)
            body.append(f'<path class="bl-eliminated" d="M{cx - 5:.1f},{cy - 5:.1f}L{cx + 5:.1f},'
                        f'{cy + 5:.1f}M{cx - 5:.1f},{cy + 5:.1f}L{cx + 5:.1f},{cy - 5:.1f}" '
                        f'stroke="{colour}" stroke-width="2.5"/><text x="{cx + 8:.1f}" '
                        f'y="{cy - 8:.1f}" font-size="10">eliminated</text>')
        body.append("</g>")
        ly = top + 14 * i
        body.append(f'<line x1="{x_end + 16}" x2="{x_end + 36}" y1="{ly:.1f}" y2="{ly:.1f}" '
                    f'stroke="{colour}" stroke-width="3"{dash_attr}/><text x="{x_end + 42}" '
                    f'y="{ly + 4:.1f}">{_t(_short(h, 30))}</text>')
    return _svg(width, max(height, top + 14 * len(hyps) + 10), body, "probability path")


# --------------------------------------------------------------------------- prior vs posterior

_SHAPES = {
    "diamond": "M0,-5L5,0L0,5L-5,0Z", "triangle-up": "M0,-5L5,4L-5,4Z",
    "square": "M-4,-4L4,-4L4,4L-4,4Z", "cross": "M-5,-1.5H-1.5V-5H1.5V-1.5H5V1.5H1.5V5H-1.5V1.5H-5Z",
    "triangle-down": "M0,5L5,-4L-5,-4Z", "circle": "M-4,0A4,4 0 1,0 4,0A4,4 0 1,0 -4,0",
}


def prior_posterior_svg(data: pd.DataFrame, *, map_hypothesis: str, subtitle: str = "") -> str:
    """Draw :func:`beliefledger.chartdata.prior_posterior_data` output as SVG text."""
    cols = {c: data[c].tolist() for c in ("hypothesis", "series", "probability", "label")}
    hyps = list(dict.fromkeys(cols["hypothesis"]))
    scen = [s for s in dict.fromkeys(cols["series"]) if s.startswith("scenario: ")]
    left, top, plot_w, row_h = 200.0, 62.0, 300.0, 26.0
    width = left + plot_w + 90
    height = top + row_h * len(hyps) + 40 + (18 * len(scen) + 10 if scen else 0)
    by = {(h, sr): (p, lab) for h, sr, p, lab in zip(cols["hypothesis"], cols["series"],
                                                     cols["probability"], cols["label"],
                                                     strict=True)}

    def x(p: float) -> float:
        return left + plot_w * p

    body = _title(8, 18, f"Prior and posterior (MAP: '{_short(map_hypothesis, 50)}')", subtitle)
    body.append(f'<rect x="{left}" y="40" width="10" height="10" fill="{C.PRIOR_COLOUR}"/>'
                f'<text x="{left + 14}" y="49">prior</text><rect x="{left + 60}" y="40" '
                f'width="10" height="10" fill="{C.POSTERIOR_COLOUR}"/>'
                f'<text x="{left + 74}" y="49">posterior</text>')
    bottom = top + row_h * len(hyps)
    for v in (0, 0.2, 0.4, 0.6, 0.8, 1.0):
        body.append(f'<line x1="{x(v):.1f}" x2="{x(v):.1f}" y1="{top}" y2="{bottom}" '
                    f'stroke="#e6e6e6"/><text x="{x(v):.1f}" y="{bottom + 14}" '
                    f'text-anchor="middle">{v:.1f}</text>')
    for i, h in enumerate(hyps):
        y0 = top + row_h * i
        is_map = h == map_hypothesis
        weight = ' font-weight="bold"' if is_map else ""
        body.append(f'<text x="{left - 8}" y="{y0 + row_h / 2 + 4:.1f}" text-anchor="end"'
                    f"{weight}>{_t(_short(h, 32))}</text>")
        outline = ' stroke="#000" stroke-width="1.5"' if is_map else ""
        for j, (series, colour) in enumerate((("prior", C.PRIOR_COLOUR),
                                              ("posterior", C.POSTERIOR_COLOUR))):
            r = by.get((h, series))
            if r is None:
                continue
            prob, label = r
            yy = y0 + 4 + 9 * j
            body.append(f'<rect class="bl-{series}" x="{left}" y="{yy:.1f}" '
                        f'width="{max(0.5, plot_w * prob):.1f}" height="8" '
                        f'fill="{colour}"{outline}><title>{_t(h)}: {series} '
                        f"{prob:.4f}</title></rect>")
            if series == "posterior":
                body.append(f'<text x="{x(prob) + 4:.1f}" y="{yy + 8:.1f}" '
                            f'font-size="10"{weight}>{_t(label)}</text>')
        for k, s in enumerate(scen):
            r = by.get((h, s))
            if r is not None:
                shape = _SHAPES[C.SCENARIO_SHAPES[k % len(C.SCENARIO_SHAPES)]]
                body.append(f'<path d="{shape}" transform="translate({x(r[0]):.1f},'
                            f'{y0 + row_h / 2:.1f})" fill="#000" opacity="0.8"><title>'
                            f"{_t(h)}: posterior under {_t(s[10:])} {r[0]:.4f}"
                            "</title></path>")
    for k, s in enumerate(scen):
        shape = _SHAPES[C.SCENARIO_SHAPES[k % len(C.SCENARIO_SHAPES)]]
        ly = bottom + 34 + 18 * k
        body.append(f'<path d="{shape}" transform="translate({left + 6},{ly})" fill="#000"/>'
                    f'<text x="{left + 16}" y="{ly + 4}">posterior under {_t(s[10:])}</text>')
    return _svg(width, height, body, "prior and posterior")


class Figure:
    """A chart drawn as SVG: shown by IPython as an image, kept by records as is.

    ``svg`` is the standalone SVG text; ``title`` names the chart in its repr
    (deterministic, so notebooks validate under nbval).
    """

    __slots__ = ("svg", "title", "kind")

    def __init__(self, svg: str, title: str, kind: str) -> None:
        self.svg = svg
        self.title = title
        self.kind = kind

    def __repr__(self) -> str:
        return f"Figure({self.kind}: {self.title})"

    def _repr_svg_(self) -> str:
        return self.svg

    def _repr_mimebundle_(self, include: Any = None, exclude: Any = None) -> dict[str, str]:
        return {"image/svg+xml": self.svg, "text/plain": repr(self)}


def _subtitle(ledger: Ledger) -> str:
    return f"{ledger.title} | scenario {ledger.scenario}"


def waterfall_figure(ledger: Ledger, focus: str | None = None) -> Figure:
    """The waterfall of the log-odds of ``focus`` (default: the MAP) against the rest.

    ``focus`` may be a hypothesis group (``case.group_hypotheses``): its members
    together against the rest. Steps that are uncertain observations are drawn
    with a dashed outline and marked "(uncertain)"."""
    focus = ledger.map_hypothesis if focus is None else focus
    svg = waterfall_svg(C.waterfall_data(ledger, focus), focus=focus, subtitle=_subtitle(ledger))
    return Figure(svg, f"weight of evidence for {focus!r}", "waterfall")


def path_figure(ledger: Ledger, *, max_lines: int = 8) -> Figure:
    """Every hypothesis' probability after each step."""
    svg = path_svg(C.probability_path_data(ledger, max_lines=max_lines),
                   subtitle=_subtitle(ledger))
    return Figure(svg, f"probability path of {ledger.title!r}", "probability path")


def prior_posterior_figure(ledger: Ledger, scenarios: dict[str, Ledger] | None = None, *,
                           max_bars: int | None = 15) -> Figure:
    """Prior and posterior of each hypothesis, with one marker per other scenario."""
    data = C.prior_posterior_data(ledger, scenarios, max_bars=max_bars)
    svg = prior_posterior_svg(data, map_hypothesis=ledger.map_hypothesis,
                              subtitle=_subtitle(ledger))
    return Figure(svg, f"prior and posterior of {ledger.title!r}", "prior and posterior")


__all__ = ["waterfall_svg", "path_svg", "prior_posterior_svg", "nice_ticks", "Figure",
           "waterfall_figure", "path_figure", "prior_posterior_figure"]

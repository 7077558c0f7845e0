"""The prior-scenario dropdown and the read-only panels: posterior, findings, trace, charts."""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import ipywidgets as W
import numpy as np

from .. import charts as C
from ..display import esc, findings_html
from . import livecharts
from ._base import CaseView, fmt_p, set_if_changed

if TYPE_CHECKING:  # pragma: no cover
    from ..engine import Trace


def posterior_html(trace: Trace, robustness: str = "", *, top: int = 10) -> str:
    """MAP line and the leading posterior probabilities (escaped static HTML)."""
    post = trace.steps.to_numpy(dtype=float)[-1]
    order = np.argsort(-post, kind="stable")
    rows = "".join(f"<tr><td>{esc(trace.hypotheses[i])}</td><td>{fmt_p(float(post[i]))}</td></tr>"
                   for i in order[:top])
    more = (f"<tr><td>... {len(post) - top} more</td><td></td></tr>" if len(post) > top else "")
    m = trace.map_hypothesis
    stop = (f"<p class='bl-banner'><span class='bl-error'>update stopped at "
            f"'{esc(trace.stopped_at)}' (impossible under every hypothesis)</span></p>"
            if trace.stopped_at else "")
    rob = f'<p class="bl-robustness">{esc(robustness)}</p>' if robustness else ""
    return (f'<div class="bl-posterior" data-map="{esc(m)}">'
            f"<p>MAP under scenario '{esc(trace.scenario)}': <b class='bl-map'>{esc(m)}</b> "
            f"<span class='bl-map-p'>P = {fmt_p(float(post[trace.hypotheses.index(m)]))}"
            "</span></p>"
            f"{rob}{stop}<table class='bl-table'><thead><tr><th>hypothesis</th><th>posterior"
            f"</th></tr></thead><tbody>{rows}{more}</tbody></table></div>")


class ScenarioPicker(CaseView):
    """Switch between the case's prior scenarios; shows the MAP and a robustness line.

    Choosing a scenario calls ``case.use_scenario``; every view sharing the
    feed (posterior, charts, findings) follows at once. The robustness line
    counts the scenarios under which the MAP stays the same, e.g. "MAP
    'seal leak' unchanged under 2 of 3 prior scenarios; 'uniform' gives
    'corrosion'".
    """

    def __init__(self, case, *, feed=None, status=None, show_posterior: bool = True,
                 **kwargs: Any) -> None:
        super().__init__(case, feed=feed, status=status, **kwargs)
        self.dropdown = W.Dropdown(description="prior scenario", layout=W.Layout(width="420px"),
                                   style={"description_width": "initial"})
        self.dropdown.observe(self._guarded(lambda ch: self._choose(ch["new"])), names="value")
        self.summary = W.HTML()
        self.summary.add_class("bl-summary")
        self.show_posterior = show_posterior
        self.children = [self.dropdown, self.summary] + ([self.status] if self._own_feed else [])
        self.sync()

    def choose(self, name: str) -> None:
        """What selecting ``name`` in the dropdown does."""
        self.dropdown.value = name

    def _choose(self, name: str) -> None:
        if name is None or name == self.case.active_scenario:
            return
        self._apply(f"prior scenario '{name}' in use", self.case.use_scenario, name)

    def _render(self, trace: Trace) -> None:
        names = self.case.scenario_names
        if list(self.dropdown.options) != names:
            self.dropdown.options = names
        set_if_changed(self.dropdown, value=self.case.active_scenario)
        rob = self.feed.robustness_line()
        if self.show_posterior:
            self.summary.value = posterior_html(trace, rob)
        else:
            self.summary.value = f'<p class="bl-robustness">{esc(rob)}</p>'

    def __repr__(self) -> str:
        names = self.case.scenario_names
        return (f"ScenarioPicker({self.case.title!r}: scenario {self.case.active_scenario!r} of "
                f"{len(names)}; {self.feed.robustness_line()})")

    def _repr_html_(self) -> str:
        return (f'<div class="bl-static"><p>Prior scenario: <b>{esc(self.case.active_scenario)}'
                f"</b> (of {esc(', '.join(self.case.scenario_names))})</p>"
                + posterior_html(self.trace, self.feed.robustness_line()) + "</div>")


class FindingsPanel(CaseView):
    """The trace's findings, errors first (escaped HTML, refreshed with the trace)."""

    def __init__(self, case, *, feed=None, status=None, **kwargs: Any) -> None:
        super().__init__(case, feed=feed, status=status, **kwargs)
        self.html = W.HTML()
        self.html.add_class("bl-findings-panel")
        self.children = [self.html]
        self.sync()

    def _render(self, trace: Trace) -> None:
        n_err = sum(f.severity == "error" for f in trace.findings)
        n_warn = sum(f.severity == "warning" for f in trace.findings)
        head = (f"<b>Findings</b>: {n_err} error{'s' * (n_err != 1)}, {n_warn} "
                f"warning{'s' * (n_warn != 1)}, {len(trace.findings) - n_err - n_warn} info")
        set_if_changed(self.html, value=head + findings_html(trace.findings))

    def __repr__(self) -> str:
        return f"FindingsPanel({self.case.title!r}: {len(self.trace.findings)} findings)"

    def _repr_html_(self) -> str:
        return self.html.value


class TraceTable(CaseView):
    """The step-by-step trace, paged by steps; columns: the leading hypotheses."""

    def __init__(self, case, *, rows_per_page: int = 20, max_columns: int = 8, feed=None,
                 status=None, **kwargs: Any) -> None:
        super().__init__(case, feed=feed, status=status, **kwargs)
        self.rows_per_page = rows_per_page
        self.max_columns = max_columns
        self.page = 0
        self.html = W.HTML()
        self.html.add_class("bl-trace-table")
        self.prev_button = W.Button(description="\u25c0 steps", layout=W.Layout(width="100px"))
        self.next_button = W.Button(description="steps \u25b6", layout=W.Layout(width="100px"))
        self.page_label = W.HTML()
        self.prev_button.on_click(lambda _b: self.show_page(self.page - 1))
        self.next_button.on_click(lambda _b: self.show_page(self.page + 1))
        self.children = [self.html, W.HBox([self.prev_button, self.page_label,
                                            self.next_button])]
        self.sync()

    @property
    def page_count(self) -> int:
        return max(1, math.ceil(len(self.trace.steps) / self.rows_per_page))

    def show_page(self, page: int) -> None:
        self.page = min(max(0, int(page)), self.page_count - 1)
        self.sync()

    def table_html(self, trace: Trace) -> str:
        table = trace.steps.to_numpy(dtype=float)
        idx = np.argsort(-table[-1], kind="stable")[: self.max_columns]
        cols = [trace.hypotheses[i] for i in idx]
        self.page = min(self.page, self.page_count - 1)
        start = self.page * self.rows_per_page
        names = trace.step_names[start:start + self.rows_per_page]
        part = table[start:start + self.rows_per_page][:, idx]
        head = "".join(f"<th>{esc(c)}</th>" for c in cols)
        body = "".join(f"<tr><td>{esc(s)}</td>" + "".join(f"<td>{fmt_p(v)}</td>"
                                                         for v in row) + "</tr>"
                       for s, row in zip(names, part.tolist(), strict=True))
        more = (f"<p class='bl-banner'>showing the {len(cols)} leading of "
                f"{len(trace.hypotheses)} hypotheses</p>" if len(trace.hypotheses) > len(cols)
                else "")
        return (f"<b>Trace</b> (scenario '{esc(trace.scenario)}')<table class='bl-table'><thead>"
                f"<tr><th>step</th>{head}</tr></thead><tbody>{body}</tbody></table>{more}")

    def _render(self, trace: Trace) -> None:
        set_if_changed(self.html, value=self.table_html(trace))
        n = len(trace.steps)
        start = self.page * self.rows_per_page
        self.page_label.value = (f"&nbsp;steps {start + 1}\u2013"
                                 f"{min(n, start + self.rows_per_page)} of {n}&nbsp;")
        self.prev_button.disabled = self.page == 0
        self.next_button.disabled = self.page >= self.page_count - 1

    def __repr__(self) -> str:
        return (f"TraceTable({self.case.title!r}: {len(self.trace.steps)} steps; page "
                f"{self.page + 1} of {self.page_count})")

    def _repr_html_(self) -> str:
        return self.html.value


class ChartPanel(CaseView):
    """The three charts of the current trace, repainted on every change.

    Live charts are drawn by :mod:`beliefledger.widgets.livecharts` (SVG
    text in a core HTML widget: offline, no script, a millisecond or two).
    :meth:`altair_charts` returns the reference altair charts of the same
    trace (for :func:`beliefledger.charts.show` or a record).
    """

    FOCUS_MAP = "(MAP)"

    def __init__(self, case, *, feed=None, status=None, **kwargs: Any) -> None:
        super().__init__(case, feed=feed, status=status, **kwargs)
        self.focus = W.Dropdown(description="waterfall focus", layout=W.Layout(width="420px"),
                                style={"description_width": "initial"})
        self.focus.observe(self._guarded(lambda ch: self.sync()), names="value")
        self.waterfall = W.HTML()
        self.path = W.HTML()
        self.prior_posterior = W.HTML()
        for w, cls in ((self.waterfall, "bl-chart-waterfall"), (self.path, "bl-chart-path"),
                       (self.prior_posterior, "bl-chart-prior-posterior")):
            w.add_class(cls)
            w.layout = W.Layout(overflow="auto", max_width="100%")
        self.paints = 0
        self._memo: dict[tuple, tuple] = {}
        self.children = [self.focus, W.HBox([self.waterfall, self.prior_posterior],
                                            layout=W.Layout(flex_flow="row wrap")), self.path]
        self.sync()

    def focus_hypothesis(self, trace: Trace) -> str:
        f = self.focus.value
        return trace.map_hypothesis if f in (None, self.FOCUS_MAP) or f not in trace.hypotheses \
            else f

    def chart_data(self, trace: Trace) -> dict[str, Any]:
        """The tidy tables the three charts draw for ``trace``.

        Tables are kept for the traces the feed currently holds, so flipping
        back to a scenario already shown repaints without rebuilding them.
        """
        focus = self.focus_hypothesis(trace)
        held = self.feed.scenario_traces
        key = (id(trace), focus, tuple(id(t) for t in held.values()))
        hit = self._memo.get(key)
        if hit is not None and hit[0] is trace:
            return hit[1]
        data = self._chart_data(trace, focus)
        live = {id(t) for t in held.values()}
        self._memo = {k: v for k, v in self._memo.items() if k[0] in live and k[2] == key[2]}
        self._memo[key] = (trace, data)
        return data

    def _chart_data(self, trace: Trace, focus: str) -> dict[str, Any]:
        scen = self.feed.scenario_traces if len(self.feed.scenario_traces) > 1 else None
        return {
            "focus": focus,
            "waterfall": C.waterfall_data(trace, focus),
            "path": C.probability_path_data(trace),
            "prior_posterior": C.prior_posterior_data(trace, scen, max_bars=15),
        }

    def _render(self, trace: Trace) -> None:
        opts = [self.FOCUS_MAP, *trace.hypotheses]
        if list(self.focus.options) != opts:
            keep = self.focus.value if self.focus.value in opts else self.FOCUS_MAP
            self.focus.options = opts
            self.focus.value = keep
        d = self.chart_data(trace)
        sub = f"{trace.title} | scenario {trace.scenario}"
        self.waterfall.value = livecharts.waterfall_svg(d["waterfall"], focus=d["focus"],
                                                        subtitle=sub)
        self.path.value = livecharts.path_svg(d["path"], subtitle=sub)
        self.prior_posterior.value = livecharts.prior_posterior_svg(
            d["prior_posterior"], map_hypothesis=trace.map_hypothesis, subtitle=sub)
        self.paints += 1

    def altair_charts(self) -> dict[str, Any]:
        """The reference altair charts of the current trace (waterfall, path, prior/posterior)."""
        trace = self.trace
        scen = self.feed.scenario_traces if len(self.feed.scenario_traces) > 1 else None
        return {"waterfall": C.waterfall(trace, self.focus_hypothesis(trace)),
                "path": C.probability_path(trace),
                "prior_posterior": C.prior_posterior(trace, scen, max_bars=15)}

    def __repr__(self) -> str:
        return (f"ChartPanel({self.case.title!r}: focus {self.focus_hypothesis(self.trace)!r}, "
                f"{len(self.trace.evidence_steps)} evidence steps)")

    def _repr_html_(self) -> str:
        return (f'<div class="bl-static">{self.waterfall.value}{self.prior_posterior.value}'
                f"{self.path.value}</div>")


__all__ = ["ScenarioPicker", "FindingsPanel", "TraceTable", "ChartPanel", "posterior_html"]

"""The prior-scenario dropdown and the read-only panels: posterior, flags, ledger, charts."""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import ipywidgets as W
import numpy as np

from .. import chartdata as C
from .. import figures
from ..display import esc, flags_html
from ._base import CaseView, fmt_p, set_if_changed

if TYPE_CHECKING:  # pragma: no cover
    from ..engine import Ledger


def posterior_html(ledger: Ledger, robustness: str = "", *, top: int = 10) -> str:
    """MAP line and the leading posterior probabilities (escaped static HTML)."""
    post = ledger.steps.to_numpy(dtype=float)[-1]
    order = np.argsort(-post, kind="stable")
    rows = "".join(f"<tr><td>{esc(ledger.hypotheses[i])}</td><td>{fmt_p(float(post[i]))}</td></tr>"
                   for i in order[:top])
    more = (f"<tr><td>... {len(post) - top} more</td><td></td></tr>" if len(post) > top else "")
    m = ledger.map_hypothesis
    stop = (f"<p class='bl-banner'><span class='bl-error'>update stopped at "
            f"'{esc(ledger.stopped_at)}' (impossible under every hypothesis)</span></p>"
            if ledger.stopped_at else "")
    rob = f'<p class="bl-robustness">{esc(robustness)}</p>' if robustness else ""
    return (f'<div class="bl-posterior" data-map="{esc(m)}">'
            f"<p>MAP under scenario '{esc(ledger.scenario)}': <b class='bl-map'>{esc(m)}</b> "
            f"<span class='bl-map-p'>P = {fmt_p(float(post[ledger.hypotheses.index(m)]))}"
            "</span></p>"
            f"{rob}{stop}<table class='bl-table'><thead><tr><th>hypothesis</th><th>posterior"
            f"</th></tr></thead><tbody>{rows}{more}</tbody></table></div>")


class ScenarioPicker(CaseView):
    """Switch between the case's prior scenarios; shows the MAP and a robustness line.

    Choosing a scenario calls ``case.use_scenario``; every view sharing the
    feed (posterior, charts, flags) follows at once. The robustness line
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

    def _render(self, ledger: Ledger) -> None:
        names = self.case.scenario_names
        if list(self.dropdown.options) != names:
            self.dropdown.options = names
        set_if_changed(self.dropdown, value=self.case.active_scenario)
        rob = self.feed.robustness_line()
        if self.show_posterior:
            self.summary.value = posterior_html(ledger, rob)
        else:
            self.summary.value = f'<p class="bl-robustness">{esc(rob)}</p>'

    def __repr__(self) -> str:
        names = self.case.scenario_names
        return (f"ScenarioPicker({self.case.title!r}: scenario {self.case.active_scenario!r} of "
                f"{len(names)}; {self.feed.robustness_line()})")

    def _repr_html_(self) -> str:
        return (f'<div class="bl-static"><p>Prior scenario: <b>{esc(self.case.active_scenario)}'
                f"</b> (of {esc(', '.join(self.case.scenario_names))})</p>"
                + posterior_html(self.ledger, self.feed.robustness_line()) + "</div>")


class FlagsPanel(CaseView):
    """The ledger's flags, errors first (escaped HTML, refreshed with the ledger)."""

    def __init__(self, case, *, feed=None, status=None, **kwargs: Any) -> None:
        super().__init__(case, feed=feed, status=status, **kwargs)
        self.html = W.HTML()
        self.html.add_class("bl-flags-panel")
        self.children = [self.html]
        self.sync()

    def _render(self, ledger: Ledger) -> None:
        n_err = sum(f.severity == "error" for f in ledger.flags)
        n_warn = sum(f.severity == "warning" for f in ledger.flags)
        head = (f"<b>Review flags</b>: {n_err} error{'s' * (n_err != 1)}, {n_warn} "
                f"warning{'s' * (n_warn != 1)}, {len(ledger.flags) - n_err - n_warn} info")
        set_if_changed(self.html, value=head + flags_html(ledger.flags))

    def __repr__(self) -> str:
        return f"FlagsPanel({self.case.title!r}: {len(self.ledger.flags)} flags)"

    def _repr_html_(self) -> str:
        return self.html.value


class LedgerTable(CaseView):
    """The step-by-step ledger, paged by steps; columns: the leading hypotheses."""

    def __init__(self, case, *, rows_per_page: int = 20, max_columns: int = 8, feed=None,
                 status=None, **kwargs: Any) -> None:
        super().__init__(case, feed=feed, status=status, **kwargs)
        self.rows_per_page = rows_per_page
        self.max_columns = max_columns
        self.page = 0
        self.html = W.HTML()
        self.html.add_class("bl-ledger-table")
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
        return max(1, math.ceil(len(self.ledger.steps) / self.rows_per_page))

    def show_page(self, page: int) -> None:
        self.page = min(max(0, int(page)), self.page_count - 1)
        self.sync()

    def table_html(self, ledger: Ledger) -> str:
        table = ledger.steps.to_numpy(dtype=float)
        idx = np.argsort(-table[-1], kind="stable")[: self.max_columns]
        cols = [ledger.hypotheses[i] for i in idx]
        self.page = min(self.page, self.page_count - 1)
        start = self.page * self.rows_per_page
        names = ledger.step_names[start:start + self.rows_per_page]
        part = table[start:start + self.rows_per_page][:, idx]
        head = "".join(f"<th>{esc(c)}</th>" for c in cols)
        body = "".join(f"<tr><td>{esc(s)}</td>" + "".join(f"<td>{fmt_p(v)}</td>"
                                                         for v in row) + "</tr>"
                       for s, row in zip(names, part.tolist(), strict=True))
        more = (f"<p class='bl-banner'>showing the {len(cols)} leading of "
                f"{len(ledger.hypotheses)} hypotheses</p>" if len(ledger.hypotheses) > len(cols)
                else "")
        return (f"<b>Ledger</b> (scenario '{esc(ledger.scenario)}')<table class='bl-table'><thead>"
                f"<tr><th>step</th>{head}</tr></thead><tbody>{body}</tbody></table>{more}")

    def _render(self, ledger: Ledger) -> None:
        set_if_changed(self.html, value=self.table_html(ledger))
        n = len(ledger.steps)
        start = self.page * self.rows_per_page
        self.page_label.value = (f"&nbsp;steps {start + 1}\u2013"
                                 f"{min(n, start + self.rows_per_page)} of {n}&nbsp;")
        self.prev_button.disabled = self.page == 0
        self.next_button.disabled = self.page >= self.page_count - 1

    def __repr__(self) -> str:
        return (f"LedgerTable({self.case.title!r}: {len(self.ledger.steps)} steps; page "
                f"{self.page + 1} of {self.page_count})")

    def _repr_html_(self) -> str:
        return self.html.value


class ChartPanel(CaseView):
    """The three charts of the current ledger, repainted on every change.

    Charts are drawn by :mod:`beliefledger.figures` (SVG text in a core HTML
    widget: offline, no script, a millisecond or two), the same pictures
    ``charts.show`` and sealed records show.
    :meth:`altair_charts` returns the reference altair charts of the same
    ledger (for :func:`beliefledger.charts.show` or a record).
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

    def focus_hypothesis(self, ledger: Ledger) -> str:
        f = self.focus.value
        return ledger.map_hypothesis if f in (None, self.FOCUS_MAP) or f not in ledger.hypotheses \
            else f

    def chart_data(self, ledger: Ledger) -> dict[str, Any]:
        """The tidy tables the three charts draw for ``ledger``.

        Tables are kept for the ledgers the feed currently holds, so flipping
        back to a scenario already shown repaints without rebuilding them.
        """
        focus = self.focus_hypothesis(ledger)
        held = self.feed.scenario_ledgers
        key = (id(ledger), focus, tuple(id(t) for t in held.values()))
        hit = self._memo.get(key)
        if hit is not None and hit[0] is ledger:
            return hit[1]
        data = self._chart_data(ledger, focus)
        live = {id(t) for t in held.values()}
        self._memo = {k: v for k, v in self._memo.items() if k[0] in live and k[2] == key[2]}
        self._memo[key] = (ledger, data)
        return data

    def _chart_data(self, ledger: Ledger, focus: str) -> dict[str, Any]:
        scen = self.feed.scenario_ledgers if len(self.feed.scenario_ledgers) > 1 else None
        return {
            "focus": focus,
            "waterfall": C.waterfall_data(ledger, focus),
            "path": C.probability_path_data(ledger),
            "prior_posterior": C.prior_posterior_data(ledger, scen, max_bars=15),
        }

    def _render(self, ledger: Ledger) -> None:
        opts = [self.FOCUS_MAP, *ledger.hypotheses]
        if list(self.focus.options) != opts:
            keep = self.focus.value if self.focus.value in opts else self.FOCUS_MAP
            self.focus.options = opts
            self.focus.value = keep
        d = self.chart_data(ledger)
        sub = f"{ledger.title} | scenario {ledger.scenario}"
        self.waterfall.value = figures.waterfall_svg(d["waterfall"], focus=d["focus"],
                                                        subtitle=sub)
        self.path.value = figures.path_svg(d["path"], subtitle=sub)
        self.prior_posterior.value = figures.prior_posterior_svg(
            d["prior_posterior"], map_hypothesis=ledger.map_hypothesis, subtitle=sub)
        self.paints += 1

    def altair_charts(self) -> dict[str, Any]:
        """The reference altair charts of the current ledger (waterfall, path, prior/posterior)."""
        ledger = self.ledger
        scen = self.feed.scenario_ledgers if len(self.feed.scenario_ledgers) > 1 else None
        from .. import charts

        return {"waterfall": charts.waterfall(ledger, self.focus_hypothesis(ledger)),
                "path": charts.probability_path(ledger),
                "prior_posterior": charts.prior_posterior(ledger, scen, max_bars=15)}

    def __repr__(self) -> str:
        return (f"ChartPanel({self.case.title!r}: focus {self.focus_hypothesis(self.ledger)!r}, "
                f"{len(self.ledger.evidence_steps)} evidence steps)")

    def _repr_html_(self) -> str:
        return (f'<div class="bl-static">{self.waterfall.value}{self.prior_posterior.value}'
                f"{self.path.value}</div>")


__all__ = ["ScenarioPicker", "FlagsPanel", "LedgerTable", "ChartPanel", "posterior_html"]

"""The evidence editor: one item at a time, its likelihood grid, source and observation."""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import ipywidgets as W
import numpy as np

from ..case import SUM_TOL
from ..display import esc, observed_text
from ._base import CaseView, set_if_changed

if TYPE_CHECKING:  # pragma: no cover
    import pandas as pd

    from ..engine import Ledger

NOT_OBSERVED = ""  # dropdown value for "pending" (state names are never empty)
NOT_OBSERVED_LABEL = "(pending)"


class EvidenceEditor(CaseView):
    """Edit one evidence item at a time, picked from a dropdown.

    Shows the item's states, its likelihood table P(state | hypothesis) as a
    compact grid (states as rows, hypotheses as columns, as in
    ``Evidence.likelihoods`` and the CSV layout) with each column's sum
    flagged when it is not 1, its source, and the observed state (a dropdown
    with "(pending)"). Columns are paged (``columns_per_page`` at a
    time) so wide cases stay light. A table can be imported from a CSV file
    (first column: the states) or a DataFrame with :meth:`import_table`.
    """

    def __init__(self, case, *, columns_per_page: int = 6, feed=None, status=None,
                 **kwargs: Any) -> None:
        super().__init__(case, feed=feed, status=status, **kwargs)
        if not isinstance(columns_per_page, int) or columns_per_page < 1:
            raise ValueError(f"columns_per_page must be a positive integer, got "
                             f"{columns_per_page!r}")
        self.columns_per_page = columns_per_page
        self.column_page = 0
        self.picker = W.Dropdown(description="evidence", layout=W.Layout(width="420px"))
        self.picker.observe(self._guarded(lambda ch: self._pick(ch["new"])), names="value")
        self.info = W.HTML()
        self.observed = W.Dropdown(description="observed", layout=W.Layout(width="420px"))
        self.observed.observe(self._guarded(lambda ch: self._observe(ch["new"])), names="value")
        self.grid = W.GridBox()
        self.cells: dict[tuple[str, str], W.FloatText] = {}
        self.sums: dict[str, W.HTML] = {}
        self._grid_key: tuple | None = None
        self.prev_cols = W.Button(description="\u25c0 hypotheses", layout=W.Layout(width="120px"))
        self.next_cols = W.Button(description="hypotheses \u25b6", layout=W.Layout(width="120px"))
        self.cols_label = W.HTML()
        self.prev_cols.on_click(lambda _b: self.show_columns(self.column_page - 1))
        self.next_cols.on_click(lambda _b: self.show_columns(self.column_page + 1))
        lay = W.Layout(width="320px")
        self.src_where = W.Text(description="source", placeholder="where the numbers came from",
                                layout=lay)
        self.src_who = W.Text(description="set by", layout=lay)
        self.src_when = W.Text(description="when", layout=lay)
        self.src_why = W.Text(description="why", layout=lay)
        self.save_source = W.Button(description="save source")
        self.save_source.on_click(lambda _b: self._save_source())
        self.csv_path = W.Text(placeholder="likelihoods.csv (first column: the states)",
                               description="CSV", layout=W.Layout(width="420px"))
        self.import_button = W.Button(description="import CSV")
        self.import_button.on_click(lambda _b: self.import_table(self.csv_path.value))
        self.children = [
            self.picker, self.info, self.observed, self.grid,
            W.HBox([self.prev_cols, self.cols_label, self.next_cols]),
            W.HBox([W.VBox([self.src_where, self.src_who]), W.VBox([self.src_when, self.src_why]),
                    self.save_source]),
            W.HBox([self.csv_path, self.import_button]),
        ]
        if self._own_feed:
            self.children = [*self.children, self.status]
        self.sync()

    # selection -----------------------------------------------------------------
    @property
    def current(self) -> str | None:
        """Name of the evidence item being edited (None when the case has none)."""
        v = self.picker.value
        return v if v in self.case.evidence else None

    def select(self, name: str) -> None:
        """Edit the item ``name`` (what choosing it in the picker does)."""
        if name not in self.case.evidence:
            from ..errors import CaseError

            raise CaseError(f"no evidence named {name!r}; the evidence items are "
                            f"{self.case.evidence_names[:12]}")
        self.picker.value = name

    def _pick(self, name: str | None) -> None:
        self.column_page = 0
        self.sync()

    def show_columns(self, page: int) -> None:
        n = max(1, math.ceil(len(self.case.hypothesis_names) / self.columns_per_page))
        self.column_page = min(max(0, int(page)), n - 1)
        self.sync()

    # edits -----------------------------------------------------------------------
    def _observe(self, value: str) -> None:
        ev = self.current
        if ev is None:
            return
        state = None if value == NOT_OBSERVED else value
        what = (f"'{ev}' observed as '{state}'" if state is not None
                else f"'{ev}' set to pending")
        self._apply(what, self.case.observe, ev, state)

    def _set_cell(self, state: str, hypothesis: str, value: float) -> None:
        ev = self.current
        if ev is None:
            return
        self._apply(f"P('{state}' | '{hypothesis}') of '{ev}' set to {value:g}",
                    self.case.set_likelihood, ev, hypothesis, value, state=state)

    def _save_source(self) -> None:
        ev = self.current
        if ev is None:
            return
        src = {"where": self.src_where.value, "who": self.src_who.value,
               "when": self.src_when.value, "why": self.src_why.value}
        self._apply(f"source of '{ev}' saved", self.case.set_evidence, ev, source=src)

    def import_table(self, table: str | pd.DataFrame, *, normalize: bool = False) -> bool:
        """Replace the current item's likelihood table from a CSV path or a DataFrame.

        The layout is the item's own: states as rows (the CSV's first column),
        hypotheses as columns. The case validates it; a refused table leaves
        the item unchanged and the reason is shown in the status area.
        """
        ev = self.current
        if ev is None:
            self.status.show("no evidence item to import into; add one with "
                             "case.add_evidence(...)", "error")
            return False
        if isinstance(table, str):
            if not table.strip():
                self.status.show("give the path of a CSV file to import", "error")
                return False
            what = f"likelihoods of '{ev}' imported from {table!r}"
        else:
            what = f"likelihoods of '{ev}' imported from a table"
        return self._apply(what, self.case.set_likelihoods, ev, table, normalize=normalize)

    # rendering ------------------------------------------------------------------------
    def _render(self, ledger: Ledger) -> None:
        case = self.case
        names = case.evidence_names
        options = list(names)
        if list(self.picker.options) != options:
            keep = self.picker.value if self.picker.value in options else (
                options[0] if options else None)
            self.picker.options = options
            self.picker.value = keep
        ev = case.evidence.get(self.picker.value) if self.picker.value is not None else None
        if ev is None:
            self.info.value = "<i>This case has no evidence yet; add items with " \
                              "case.add_evidence(...).</i>"
            self.grid.children = []
            self.observed.options = []
            return
        desc = f"<br><i>{esc(ev.description)}</i>" if ev.description else ""
        tag = (f"<br>shared-source tag: <b>{esc(ev.shared_source)}</b>"
               if ev.shared_source else "")
        kind = ("likelihood evidence (the observed state only; only the ratios matter)"
                if ev.likelihood_evidence else f"{len(ev.states)} states")
        self.info.value = (f"<b>{esc(ev.name)}</b>: {esc(kind)}{desc}{tag}")
        opts = [(NOT_OBSERVED_LABEL, NOT_OBSERVED)] + [(s, s) for s in ev.states]
        if ev.likelihood_evidence:
            opts = [(s, s) for s in ev.states]
        if list(self.observed.options) != opts:
            self.observed.options = opts
        set_if_changed(self.observed, value=NOT_OBSERVED if ev.observed is None else ev.observed)
        self._render_grid(ev)
        src = ev.source
        set_if_changed(self.src_where, value=src.where)
        set_if_changed(self.src_who, value=src.who)
        set_if_changed(self.src_when, value=src.when)
        set_if_changed(self.src_why, value=src.why)

    def _render_grid(self, ev) -> None:
        hyps = list(ev.hypotheses)
        n_pages = max(1, math.ceil(len(hyps) / self.columns_per_page))
        self.column_page = min(self.column_page, n_pages - 1)
        start = self.column_page * self.columns_per_page
        cols = hyps[start:start + self.columns_per_page]
        key = (ev.name, tuple(ev.states), tuple(cols))
        if key != self._grid_key:
            self._build_grid(ev, cols)
            self._grid_key = key
        table = ev.table
        sums = table.sum(axis=0)
        for j, h in enumerate(cols):
            jj = start + j
            for i, s in enumerate(ev.states):
                set_if_changed(self.cells[(s, h)], value=float(table[i, jj]))
            ok = ev.likelihood_evidence or abs(sums[jj] - 1) <= SUM_TOL
            text = f"{sums[jj]:.6g}" if np.isfinite(sums[jj]) else "n/a"
            cls = "bl-sum-ok" if ok else "bl-sum-bad"
            flag = "" if ok else " \u2716 not 1"
            set_if_changed(self.sums[h], value=f'<span class="{cls}">sum {text}{flag}</span>')
        for i, s in enumerate(ev.states):
            lab = self._state_labels[i]
            mark = " \u25c0 observed" if s == ev.observed else ""
            set_if_changed(lab, value=(f"<b>{esc(s)}</b>{mark}" if mark else esc(s)))
        self.cols_label.value = (f"&nbsp;hypotheses {start + 1}\u2013{start + len(cols)} of "
                                 f"{len(hyps)}&nbsp;")
        self.prev_cols.disabled = self.column_page == 0
        self.next_cols.disabled = self.column_page >= n_pages - 1

    def _build_grid(self, ev, cols: list[str]) -> None:
        self.cells = {}
        self.sums = {}
        children: list[W.Widget] = [W.HTML('<span class="bl-head">state \\ hypothesis</span>')]
        children += [W.HTML(f'<span class="bl-head" title="{esc(h)}">{esc(h)}</span>')
                     for h in cols]
        self._state_labels = []
        for s in ev.states:
            lab = W.HTML(esc(s))
            self._state_labels.append(lab)
            children.append(lab)
            for h in cols:
                cell = W.FloatText(step=0.01, layout=W.Layout(width="auto"))
                cell.observe(self._guarded(lambda ch, s=s, h=h: self._set_cell(s, h, ch["new"])),
                             names="value")
                self.cells[(s, h)] = cell
                children.append(cell)
        children.append(W.HTML('<span class="bl-head">sum over states</span>'))
        for h in cols:
            self.sums[h] = W.HTML()
            children.append(self.sums[h])
        self.grid.layout = W.Layout(
            grid_template_columns=f"minmax(140px, 1.5fr) repeat({len(cols)}, minmax(90px, 1fr))",
            grid_gap="2px 6px", width="100%", align_items="center")
        self.grid.children = children

    # display --------------------------------------------------------------------------
    def __repr__(self) -> str:
        ev = self.current
        n = len(self.case.evidence_names)
        if ev is None:
            return f"EvidenceEditor({self.case.title!r}: no evidence)"
        item = self.case.evidence[ev]
        obs = (f"observed {item.observed!r}" if item.observed is not None
               else observed_text(item))
        return f"EvidenceEditor({self.case.title!r}: {n} items; editing {ev!r}, {obs})"

    def _repr_html_(self) -> str:
        ev = self.current
        if ev is None:
            return "<p>No evidence.</p>"
        item = self.case.evidence[ev]
        lik = item.likelihoods
        head = "".join(f"<th>{esc(h)}</th>" for h in lik.columns)
        body = "".join(
            f"<tr><td>{esc(s)}{' (observed)' if s == item.observed else ''}</td>"
            + "".join(f"<td>{v:.4g}</td>" for v in row) + "</tr>"
            for s, row in zip(lik.index, lik.to_numpy(), strict=True))
        sums = "".join(f"<td>{v:.6g}</td>" for v in item.column_sums())
        return (f'<div class="bl-static"><h5>{esc(ev)}</h5><p>source: {esc(item.source)}</p>'
                f'<table class="bl-table"><thead><tr><th>state</th>{head}</tr></thead><tbody>'
                f"{body}<tr><td>sum</td>{sums}</tr></tbody></table></div>")


__all__ = ["EvidenceEditor", "NOT_OBSERVED", "NOT_OBSERVED_LABEL"]

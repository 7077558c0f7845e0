"""The hypothesis table editor: names, priors with their sources, the catch-all flag.

Rows are paged (``page_size`` at a time, the row widgets are reused), so a
case with hundreds of hypotheses shows a few dozen controls, not thousands.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import ipywidgets as W

from ..case import SUM_TOL, Source
from ..display import esc
from ._base import CaseView, set_if_changed

if TYPE_CHECKING:  # pragma: no cover
    from ..engine import Ledger
    from ..flags import Flag

#: short banner text per flag code shown beside a hypothesis row
BANNER_TEXT = {
    "zero-prior": "prior is 0: this hypothesis can never gain belief",
    "eliminated": "eliminated by {detail}",
    "near-certain": "near-certain prior: evidence will barely move it",
    "unsourced": "prior has no source: say where it came from",
}

_COLS = ("minmax(150px, 2fr) 90px minmax(140px, 3fr) minmax(90px, 1fr) minmax(90px, 1fr) "
         "minmax(140px, 3fr) 70px 90px minmax(140px, 2fr)")
SOURCE_FIELDS = ("where", "who", "when", "why")
"""The four fields of every source, in the order every editor shows them."""


def shown_number(x: float) -> float:
    """A number as the editor shows it: twelve significant figures, so a rescaled prior
    reads 0.092, not 0.09200000000000001 (the case keeps the exact value)."""
    return float(f"{float(x):.12g}")


def _row_layout() -> W.Layout:
    return W.Layout(grid_template_columns=_COLS, grid_gap="2px 6px", width="100%",
                    align_items="center")


class _Row:
    """The controls of one visible row (reused across pages)."""

    def __init__(self, editor: HypothesisEditor) -> None:
        lay = W.Layout(width="auto")
        self.name = W.Text(continuous_update=False, layout=lay,
                           tooltip="hypothesis name (press Enter to rename)")
        self.prior = W.FloatText(step=0.01, layout=lay)
        hints = {"where": "where the prior came from", "who": "who set it",
                 "when": "when (date)", "why": "why this reference class"}
        self.source = {f: W.Text(continuous_update=False, layout=lay, placeholder=hints[f])
                       for f in SOURCE_FIELDS}
        self.catch_all = W.Checkbox(description="", indent=False, layout=W.Layout(width="auto"))
        self.remove = W.Button(description="remove", layout=W.Layout(width="88px"),
                               tooltip="remove this hypothesis (click twice)")
        self.banner = W.HTML(layout=W.Layout(width="auto"))
        self.banner.add_class("bl-banner")
        self.hypothesis: str | None = None
        self.box = W.GridBox([self.name, self.prior, *self.source.values(), self.catch_all,
                              self.remove, self.banner], layout=_row_layout())
        g = editor._guarded
        self.name.observe(g(lambda ch: editor._rename(self, ch["new"])), names="value")
        self.prior.observe(g(lambda ch: editor._set_prior(self, ch["new"])), names="value")
        for field, box in self.source.items():
            box.observe(g(lambda ch, f=field: editor._set_source(self, f, ch["new"])),
                        names="value")
        self.catch_all.observe(g(lambda ch: editor._set_catch_all(self, ch["new"])),
                               names="value")
        self.remove.on_click(lambda _b: editor._remove(self))


class HypothesisEditor(CaseView):
    """Edit a case's hypotheses: add, remove, rename, priors with source and rationale.

    Shows the running sum of the base priors with a one-click explicit
    normalize (recorded by the case as an assumption), a catch-all toggle
    per row, and inline banners for the flags about each hypothesis
    (a zero prior reads "this hypothesis can never gain belief").

    Parameters
    ----------
    case : Case
    page_size : int
        Rows shown at a time.
    feed, status : optional
        Share a :class:`~beliefledger.widgets._base.LedgerFeed` and status area with
        other views (the :class:`Workbench` does).
    """

    def __init__(self, case, *, page_size: int = 12, feed=None, status=None,
                 **kwargs: Any) -> None:
        super().__init__(case, feed=feed, status=status, **kwargs)
        if not isinstance(page_size, int) or page_size < 1:
            raise ValueError(f"page_size must be a positive integer, got {page_size!r}")
        self.page_size = page_size
        self.page = 0
        self._armed: str | None = None  # hypothesis whose remove button awaits the 2nd click
        heads = ["hypothesis", "prior", "where (source)", "who", "when", "why", "catch-all", "",
                 ""]
        header = W.GridBox([W.HTML(f'<span class="bl-head">{esc(h)}</span>') for h in heads],
                           layout=_row_layout())
        self.rows = [_Row(self) for _ in range(page_size)]
        self.sum_label = W.HTML()
        self.normalize_button = W.Button(description="normalize priors",
                                         tooltip="rescale the base priors to sum to 1 "
                                                 "(recorded as an assumption)")
        self.normalize_button.on_click(lambda _b: self.normalize())
        self.rescale = W.Checkbox(value=False, indent=False,
                                    description="rescale the others to keep the sum at 1")
        self.scenario_note = W.HTML()
        self.prev_button = W.Button(description="\u25c0 previous", layout=W.Layout(width="110px"))
        self.next_button = W.Button(description="next \u25b6", layout=W.Layout(width="110px"))
        self.page_label = W.HTML()
        self.prev_button.on_click(lambda _b: self.show_page(self.page - 1))
        self.next_button.on_click(lambda _b: self.show_page(self.page + 1))
        self.new_name = W.Text(placeholder="new hypothesis name", layout=W.Layout(width="240px"))
        self.new_prior = W.FloatText(value=0.05, step=0.01, description="prior",
                                     layout=W.Layout(width="170px"))
        self.add_button = W.Button(description="add hypothesis", button_style="")
        self.add_button.on_click(lambda _b: self.add(self.new_name.value, self.new_prior.value))
        self.children = [
            self.scenario_note, header, *[r.box for r in self.rows],
            W.HBox([self.prev_button, self.page_label, self.next_button]),
            W.HBox([self.sum_label, self.normalize_button, self.rescale]),
            W.HBox([self.new_name, self.new_prior, self.add_button]),
        ]
        if self._own_feed:
            self.children = [*self.children, self.status]
        self.sync()

    # paging ------------------------------------------------------------------
    @property
    def page_count(self) -> int:
        return max(1, math.ceil(len(self.case.hypothesis_names) / self.page_size))

    def show_page(self, page: int) -> None:
        """Show page ``page`` (0-based; clipped to the available pages)."""
        self.page = min(max(0, int(page)), self.page_count - 1)
        self._armed = None
        self.sync()

    def row_for(self, hypothesis: str) -> _Row:
        """The visible row of ``hypothesis``, turning to its page if needed."""
        names = self.case.hypothesis_names
        if hypothesis not in names:
            from ..errors import CaseError

            raise CaseError(f"no hypothesis named {hypothesis!r}; the hypotheses are "
                            f"{names[:12]}")
        self.show_page(names.index(hypothesis) // self.page_size)
        return next(r for r in self.rows if r.hypothesis == hypothesis)

    # edits (all through the case's own methods) -----------------------------
    def _rename(self, row: _Row, new: str) -> None:
        old = row.hypothesis
        if old is None or new == old:
            return
        self._apply(f"renamed '{old}' to '{new.strip()}'", self.case.rename_hypothesis, old, new)

    def _set_prior(self, row: _Row, value: float) -> None:
        h = row.hypothesis
        if h is None:
            return
        if self.rescale.value:
            self._apply(f"prior of '{h}' set to {value:g}; the others rescaled (recorded)",
                        self.case.set_prior, h, value, rescale=True)
        else:
            self._apply(f"prior of '{h}' set to {value:g}", self.case.set_prior, h, value)

    def _set_source(self, row: _Row, field: str, text: str) -> None:
        h = row.hypothesis
        if h is None:
            return
        src = self.case.hypotheses[h].source.to_dict()
        src[field] = text
        self._apply(f"source field '{field}' of the prior of '{h}' updated",
                    self.case.set_hypothesis, h, source=Source(**src))

    def _set_catch_all(self, row: _Row, value: bool) -> None:
        h = row.hypothesis
        if h is None:
            return
        self._apply(f"'{h}' {'marked' if value else 'no longer marked'} as the catch-all",
                    self.case.set_hypothesis, h, catch_all=bool(value))

    def _remove(self, row: _Row) -> None:
        h = row.hypothesis
        if h is None:
            return
        if self._armed != h:
            self._armed = h
            self.status.show(f"click 'confirm' to remove '{h}' (the other priors will be "
                             "rescaled, recorded as an assumption)", "info")
            self.sync()
            return
        self._armed = None
        self._apply(f"removed '{h}'; the other priors rescaled (recorded)",
                    self.case.remove_hypothesis, h)

    def normalize(self) -> bool:
        """Rescale the base priors to sum to 1 (the case records it as an assumption)."""
        total = float(self.case.base_priors.sum())
        return self._apply(f"priors summed to {total:.6g}; rescaled to 1 (recorded as an "
                           "assumption)", self.case.normalize_priors)

    def add(self, name: str, prior: float) -> bool:
        """Add a hypothesis with ``prior``, carved out of the catch-all when there is one.

        With a catch-all hypothesis whose prior covers ``prior``, the new prior
        is taken from it (in every scenario; the other priors stay as they
        are); otherwise every other prior is rescaled (an explicit choice the
        case records). When the case already has evidence, the new hypothesis
        gets a neutral likelihood column (equal over the states) for every
        item, so that it neither gains nor loses from existing evidence until
        the analyst enters real numbers; the status line says so. Likelihood
        evidence items have no neutral value, so a case with any of them
        refuses the add from here (use ``case.add_hypothesis(...,
        likelihoods=...)``).
        """
        evidence = self.case.evidence
        vec = [e.name for e in evidence.values() if e.likelihood_evidence]
        if vec:
            self.status.show(f"cannot add '{name}' here: the likelihood evidence {vec[:5]} needs "
                             "a likelihood for it; use case.add_hypothesis(name, prior, "
                             "likelihoods={...}, take_prior_from=...) in code", "error")
            return False
        cols = {e.name: [1.0 / len(e.states)] * len(e.states) for e in evidence.values()}
        note = (f"; its likelihood for each of the {len(cols)} evidence items is neutral (equal "
                "over the states): enter real numbers in the evidence editor") if cols else ""
        donor = self._donor(prior)
        how = {"take_prior_from": donor} if donor else {"rescale": True}
        said = (f"its prior taken from '{donor}' (the others unchanged; recorded)" if donor
                else "the other priors rescaled (recorded)")
        ok = self._apply(f"added '{str(name).strip()}' with prior {prior:g}; {said}{note}",
                         self.case.add_hypothesis, name, prior, likelihoods=cols, **how)
        if ok:
            self._syncing = True
            self.new_name.value = ""
            self._syncing = False
            self.show_page(self.page_count - 1)
        return ok

    def _donor(self, prior: float) -> str | None:
        """The catch-all a new prior can be carved out of (in every scenario), if any."""
        case = self.case
        if isinstance(prior, bool) or not isinstance(prior, int | float):
            return None  # the case refuses it with its own message
        for h in case.hypotheses.values():
            if h.catch_all and all(float(case.scenario_priors(s)[h.name]) >= prior
                                   for s in case.scenario_names):
                return h.name
        return None

    # rendering ----------------------------------------------------------------
    def _banners(self, ledger: Ledger) -> dict[str, list[Flag]]:
        out: dict[str, list[Flag]] = {}
        for f in ledger.flags:
            if f.where.startswith("hypothesis '"):
                name = f.where[len("hypothesis '"):].split("'")[0]
                out.setdefault(name, []).append(f)
            elif f.code == "unsourced" and f.where == "priors":
                # one flag lists every unsourced prior; show it beside each of them
                for h in self.case.hypotheses.values():
                    if not h.source.is_sourced:
                        out.setdefault(h.name, []).append(f)
        return out

    def _render(self, ledger: Ledger) -> None:
        case = self.case
        names = case.hypothesis_names
        self.page = min(self.page, self.page_count - 1)
        hyps = case.hypotheses
        banners = self._banners(ledger)
        start = self.page * self.page_size
        shown = names[start:start + self.page_size]
        for i, row in enumerate(self.rows):
            if i >= len(shown):
                row.hypothesis = None
                row.box.layout.display = "none"
                continue
            h = hyps[shown[i]]
            row.hypothesis = h.name
            row.box.layout.display = None
            set_if_changed(row.name, value=h.name)
            set_if_changed(row.prior, value=shown_number(h.prior))
            for field, box in row.source.items():
                set_if_changed(box, value=getattr(h.source, field))
            set_if_changed(row.catch_all, value=bool(h.catch_all))
            armed = self._armed == h.name
            set_if_changed(row.remove, description="confirm" if armed else "remove",
                           button_style="danger" if armed else "")
            set_if_changed(row.banner, value=self._banner_html(banners.get(h.name, [])))
        total = float(case.base_priors.sum())
        ok = abs(total - 1) <= SUM_TOL
        self.sum_label.value = (
            f'<span class="{"bl-sum-ok" if ok else "bl-sum-bad"}">sum of priors: {total:.6g}'
            + ("" if ok else " (must be 1: fix a prior or normalize)") + "</span>")
        self.normalize_button.disabled = ok or total <= 0
        first, last = start + 1, min(start + self.page_size, len(names))
        self.page_label.value = (f"&nbsp;hypotheses {first}\u2013{last} of {len(names)} "
                                 f"(page {self.page + 1} of {self.page_count})&nbsp;")
        self.prev_button.disabled = self.page == 0
        self.next_button.disabled = self.page >= self.page_count - 1
        active = case.active_scenario
        self.scenario_note.value = (
            "" if active == "base" else
            f'<span class="bl-banner">Editing the base priors; the active scenario '
            f"'{esc(active)}' uses its own priors.</span>")

    @staticmethod
    def _banner_html(flags: list[Flag]) -> str:
        parts = []
        for f in flags:
            text = BANNER_TEXT.get(f.code)
            if text is None:
                continue
            detail = f.where.split("/ ", 1)[1] if "/ " in f.where else ""
            text = text.format(detail=detail or f.code)
            parts.append(f'<span class="bl-{esc(f.severity)}" title="{esc(f.message)}">'
                         f"{esc(text)}</span>")
        return "<br>".join(parts)

    # display --------------------------------------------------------------------
    def __repr__(self) -> str:
        total = float(self.case.base_priors.sum())
        sums = "priors sum to 1" if abs(total - 1) <= SUM_TOL else f"priors sum to {total:.6g}"
        return (f"HypothesisEditor({self.case.title!r}: {len(self.case.hypothesis_names)} "
                f"hypotheses, {sums}; page {self.page + 1} of {self.page_count})")

    def _repr_html_(self) -> str:
        banners = self._banners(self.ledger)
        rows = []
        for h in self.case.hypotheses.values():
            notes = "; ".join(BANNER_TEXT.get(f.code, f.code).format(detail=f.where)
                              for f in banners.get(h.name, []))
            src = h.source
            rows.append(f"<tr><td>{esc(h.name)}</td><td>{h.prior:.6g}</td>"
                        f"<td>{esc(src.where or 'unsourced')}</td><td>{esc(src.who)}</td>"
                        f"<td>{esc(src.when)}</td><td>{esc(src.why)}</td>"
                        f"<td>{'yes' if h.catch_all else ''}</td><td>{esc(notes)}</td></tr>")
        total = float(self.case.base_priors.sum())
        return ('<div class="bl-static"><table class="bl-table"><thead><tr><th>hypothesis</th>'
                "<th>prior</th><th>where (source)</th><th>who</th><th>when</th><th>why</th>"
                "<th>catch-all</th><th>flags</th>"
                f"</tr></thead><tbody>{''.join(rows)}</tbody></table>"
                f"<p>sum of priors: {total:.6g}</p></div>")


__all__ = ["HypothesisEditor", "BANNER_TEXT", "SOURCE_FIELDS", "shown_number"]

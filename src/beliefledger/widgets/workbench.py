"""The investigation workbench: every view of one case, sharing one ledger feed."""

from __future__ import annotations

import weakref
from typing import TYPE_CHECKING, Any

import ipywidgets as W

from ..case import CASE_MIMETYPE
from ..display import esc
from ._base import CaseView, LedgerFeed, StatusArea, check_case, fmt_p, style_widget
from .evidence import EvidenceEditor
from .hypotheses import HypothesisEditor
from .scenarios import ChartPanel, FlagsPanel, LedgerTable, ScenarioPicker, posterior_html

if TYPE_CHECKING:  # pragma: no cover
    from ..engine import Ledger

CAUTION = ("beliefledger supports a person's judgement; it does not replace it. Check every "
           "prior and likelihood against its source.")
SAFETY_CAUTION = ("This case touches health or safety: local codes, regulations and licensed "
                  "practice prevail over any number shown here.")


_LIVE: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()  # case -> its workbench


class Workbench(CaseView):
    """One composite view of a case: scenario picker and posterior, flags, the
    hypothesis and evidence editors, the charts and the ledger table.

    Every piece is also usable alone (:class:`ScenarioPicker`,
    :class:`HypothesisEditor`, :class:`EvidenceEditor`, ...); here they share
    one :class:`LedgerFeed` and one status area, so an edit anywhere causes a
    single recompute and every piece shows the same ledger.

    Displaying a workbench also emits the case's machine-readable JSON
    (``beliefledger.case.CASE_MIMETYPE``, the ``casefile.envelope`` of the
    case as it is at display time) so a sealer can collect the case from the
    notebook's outputs. Later edits are not re-emitted: display the case
    again (``case`` as the last line of a cell) to record its final state.

    All views of one case share one :class:`LedgerFeed`, so an edit is
    recomputed once however many views show the case. Building a new
    workbench for a case closes the previous one (what re-running the cell
    means); pass ``keep_previous=True`` to keep both live.

    Examples
    --------
    >>> import beliefledger as bl
    >>> wb = bl.Workbench(bl.example_case())   # doctest: +SKIP
    >>> wb.ledger.map_hypothesis                # doctest: +SKIP
    'compressor seal leak'
    """

    def __init__(self, case, *, page_size: int = 12, keep_previous: bool = False,
                 **kwargs: Any) -> None:
        check_case(case, "Workbench")
        previous = _LIVE.get(case)
        if previous is not None and not keep_previous:
            previous.close()  # a re-run cell replaces its workbench
        status = StatusArea()
        feed = LedgerFeed.shared(case)
        super().__init__(case, feed=feed, status=status, **kwargs)
        _LIVE[case] = self
        self.header = W.HTML()
        self.scenarios = ScenarioPicker(case, feed=feed, status=status)
        self.flags = FlagsPanel(case, feed=feed, status=status)
        self.hypotheses = HypothesisEditor(case, feed=feed, status=status, page_size=page_size)
        self.evidence = EvidenceEditor(case, feed=feed, status=status)
        self.charts = ChartPanel(case, feed=feed, status=status)
        self.ledger_table = LedgerTable(case, feed=feed, status=status)
        self.editors = W.Tab(children=[self.hypotheses, self.evidence],
                             titles=["hypotheses and priors", "evidence"])
        top = W.HBox([self.scenarios, self.flags], layout=W.Layout(flex_flow="row wrap"))
        self.scenarios.layout = W.Layout(flex="1 1 420px", margin="0 12px 0 0")
        self.flags.layout = W.Layout(flex="1 1 420px")
        self.children = [style_widget(), self.header, top, self.status, self.editors,
                         self.charts, self.ledger_table]
        self.add_class("bl-workbench")
        self.sync()

    @property
    def ledger(self) -> Ledger:
        """The ledger the workbench currently shows."""
        return self.feed.ledger

    @property
    def recomputes(self) -> int:
        """How many times the case was recomputed since the workbench was built."""
        return self.feed.recomputes

    def altair_charts(self) -> dict[str, Any]:
        """The reference altair charts of the ledger shown (see :mod:`beliefledger.charts`)."""
        return self.charts.altair_charts()

    def _render(self, ledger: Ledger) -> None:
        case = self.case
        q = f"<br><i>{esc(case.question)}</i>" if case.question else ""
        caution = CAUTION + (" " + SAFETY_CAUTION if case.safety_related else "")
        self.header.value = (f"<h3 style='margin:4px 0'>{esc(case.title)}</h3>{q}"
                             f"<p class='bl-caution'>{esc(caution)}</p>")

    def close(self) -> None:
        case = getattr(self, "case", None)
        if case is not None and _LIVE.get(case) is self:
            del _LIVE[case]
        for name in ("scenarios", "flags", "hypotheses", "evidence", "charts", "ledger_table"):
            view = getattr(self, name, None)
            if view is not None:
                view.close()
        super().close()

    # display ------------------------------------------------------------------------
    def __repr__(self) -> str:
        t = self.ledger
        p = float(t.posterior[t.map_hypothesis])
        errors = sum(f.severity == "error" for f in t.flags)
        warnings = sum(f.severity == "warning" for f in t.flags)
        return (f"Workbench({self.case.title!r}: {len(t.hypotheses)} hypotheses, "
                f"{len(t.evidence_steps)} of {len(self.case.evidence_names)} evidence items "
                f"applied; scenario {t.scenario!r}; MAP {t.map_hypothesis!r} at {fmt_p(p)}; "
                f"{errors} errors, {warnings} warnings)")

    def _repr_html_(self) -> str:
        case = self.case
        caution = CAUTION + (" " + SAFETY_CAUTION if case.safety_related else "")
        return (f'<div class="bl-static bl-workbench-static"><h3>{esc(case.title)}</h3>'
                f"<p>{esc(caution)}</p>"
                + posterior_html(self.ledger, self.feed.robustness_line())
                + self.flags._repr_html_() + self.hypotheses._repr_html_()
                + self.ledger_table._repr_html_() + self.charts._repr_html_() + "</div>")

    def _repr_mimebundle_(self, **kwargs: Any) -> dict[str, Any]:
        from ..casefile import envelope

        data = super()._repr_mimebundle_(**kwargs)
        data[CASE_MIMETYPE] = envelope(self.case)
        return data


__all__ = ["Workbench", "CAUTION", "SAFETY_CAUTION"]

"""Shared pieces of the notebook views: the ledger feed, the status area, styles.

A :class:`LedgerFeed` is the one place where a case is recomputed. It
listens to ``case.on_change`` once, runs ``case.update()`` once per
successful edit (plus each scenario's ledger for the robustness line and the
chart overlay; a mere switch of scenario reuses those), and hands the new
ledger to every view that subscribed. All views of one case share one feed
(:meth:`LedgerFeed.shared`), and views never call the engine themselves, so
one user action costs exactly one recompute however many views are on
screen; ``feed.recomputes`` counts them.

Views edit the case only through its own methods, inside
:meth:`CaseView._apply`, which catches a rejected edit
(:class:`~beliefledger.errors.CaseError` or ``CaseTypeError``), shows its
message in the visible :class:`StatusArea` and re-syncs the view from the
unchanged case.
"""

from __future__ import annotations

import time
import traceback
import weakref
from collections.abc import Callable
from typing import TYPE_CHECKING, Any

import ipywidgets as W

from ..display import esc
from ..engine import update_all
from ..errors import CaseError, CaseTypeError

if TYPE_CHECKING:  # pragma: no cover
    from ..case import Case
    from ..engine import Ledger

STYLE = """<style>
.bl-w { font-family: "DejaVu Sans", Verdana, sans-serif; font-size: 13px; }
.bl-status { min-height: 1.6em; }
.bl-status .bl-msg { padding: 3px 8px; border-radius: 3px; display: inline-block; }
.bl-status .bl-msg-error { background: #fde3d8; color: #7a2600; border-left: 4px solid #D55E00; }
.bl-status .bl-msg-ok { background: #e2f0fa; color: #00395c; border-left: 4px solid #0072B2; }
.bl-status .bl-msg-info { color: #444; }
.bl-banner { font-size: 12px; line-height: 1.25; }
.bl-banner .bl-error { color: #7a2600; font-weight: bold; }
.bl-banner .bl-warning { color: #8a4b00; }
.bl-sum-bad { color: #7a2600; font-weight: bold; }
.bl-sum-ok { color: #00395c; }
.bl-head { font-weight: bold; color: #333; }
.bl-table { border-collapse: collapse; font-size: 12px; }
.bl-table th, .bl-table td { padding: 2px 6px; border-bottom: 1px solid #ddd; text-align: right; }
.bl-table th:first-child, .bl-table td:first-child { text-align: left; }
.bl-flags { margin: 2px 0; padding-left: 1.2em; font-size: 12px; }
.bl-flag.bl-error { color: #7a2600; }
.bl-flag.bl-warning { color: #6b3b00; }
.bl-caution { font-size: 12px; color: #444; border-left: 4px solid #999; padding-left: 6px; }
.bl-posterior b { font-size: 14px; }
.bl-robustness { font-size: 12px; }
</style>"""


def style_widget() -> W.HTML:
    """The shared stylesheet as an HTML widget (CSS only, no script)."""
    return W.HTML(STYLE, layout=W.Layout(height="0px", margin="0", padding="0"))


class StatusArea(W.HTML):
    """The visible place where an edit's outcome (or a refused edit's error) is shown."""

    def __init__(self, **kwargs: Any) -> None:
        super().__init__(value="", **kwargs)
        self.add_class("bl-status")
        self.message = ""
        self.kind = ""

    def show(self, message: str, kind: str = "info") -> None:
        self.message, self.kind = message, kind
        prefix = {"error": "Edit refused: ", "ok": "", "info": ""}[kind]
        self.value = f'<span class="bl-msg bl-msg-{kind}">{esc(prefix + message)}</span>'

    def clear(self) -> None:
        self.message, self.kind = "", ""
        self.value = ""

    def __repr__(self) -> str:
        return f"StatusArea({self.kind or 'empty'}: {self.message!r})"


def check_case(case: Any, who: str) -> None:
    """Refuse anything but a Case with a message that says how to get one."""
    from ..case import Case

    if not isinstance(case, Case):
        raise CaseTypeError(f"{who} needs a beliefledger Case, got {type(case).__name__}; "
                            "build one with bl.Case(...) or bl.load_case(path)")


class LedgerFeed:
    """Recomputes a case's ledger once per successful edit and tells the views.

    Parameters
    ----------
    case : Case
        The case to follow.
    status : StatusArea, optional
        Where an unexpected error while refreshing a view is shown.

    Attributes
    ----------
    ledger : Ledger
        The ledger of the case as it is now (under its active scenario).
    scenario_maps : dict
        Scenario name -> MAP hypothesis under it, for the robustness line.
    recomputes : int
        How many times the case has been recomputed (one per edit).
    last_seconds : float
        Wall time of the last recompute and view refresh.
    """

    def __init__(self, case: Case, status: StatusArea | None = None) -> None:
        check_case(case, "LedgerFeed")
        self.case = case
        self.status = status if status is not None else StatusArea()
        self._shared = False
        self._subscribers: list[tuple[Callable[[Ledger], None], StatusArea | None]] = []
        self.recomputes = 0
        self.last_seconds = 0.0
        self.last_error: str | None = None
        self.ledger: Ledger = None  # type: ignore[assignment]
        self.scenario_maps: dict[str, str] = {}
        self.scenario_ledgers: dict[str, Ledger] = {}
        self._compute()
        self._unsubscribe = case.on_change(self._on_change)

    @classmethod
    def shared(cls, case: Case) -> LedgerFeed:
        """The one feed of ``case`` that every view shares (created on first use).

        However many views show a case (a workbench, a standalone editor, a
        cell run twice), an edit is then recomputed once. The feed lets go of
        the case when its last view is closed.
        """
        check_case(case, "LedgerFeed")
        feed = _SHARED.get(case)
        if feed is None:
            feed = cls(case)
            feed._shared = True
            _SHARED[case] = feed
        return feed

    def subscribe(self, callback: Callable[[Ledger], None],
                  status: StatusArea | None = None) -> Callable[[], None]:
        """Call ``callback(ledger)`` after each recompute; returns an unsubscribe.

        ``status`` (the view's status area) also shows an unexpected error
        raised while refreshing any view.
        """
        entry = (callback, status)
        self._subscribers.append(entry)

        def unsubscribe() -> None:
            if entry in self._subscribers:
                self._subscribers.remove(entry)
            if self._shared and not self._subscribers:
                self.close()

        return unsubscribe

    @property
    def statuses(self) -> list[StatusArea]:
        """The distinct status areas of the feed and its views."""
        out = [self.status]
        for _, st in self._subscribers:
            if st is not None and all(st is not o for o in out):
                out.append(st)
        return out

    def _compute(self, what: str | None = None) -> None:
        """Recompute every scenario's ledger once (:func:`beliefledger.engine.update_all`).

        Switching the active scenario changes no number in the case, so on a
        ``what == "scenario"`` edit the ledgers already computed are reused and
        the new active ledger is the stored one for that scenario.
        """
        case = self.case
        names = case.scenario_names
        active = case.active_scenario
        cached = self.scenario_ledgers
        if not (what == "scenario" and set(cached) == set(names) and active in cached):
            cached = update_all(case)
        self.scenario_ledgers = {n: cached[n] for n in names}
        self.ledger = self.scenario_ledgers[active]
        self.scenario_maps = {n: t.map_hypothesis for n, t in self.scenario_ledgers.items()}
        self.recomputes += 1

    def _on_change(self, case: Case, what: str) -> None:
        t0 = time.perf_counter()
        try:
            self._compute(what)
            for cb, _ in list(self._subscribers):
                cb(self.ledger)
            self.last_error = None
        except Exception as exc:  # a bug in a view must be seen, never swallowed
            self.last_error = "".join(traceback.format_exception_only(type(exc), exc)).strip()
            for status in self.statuses:
                status.show(f"internal error while refreshing the view ({self.last_error}); "
                            "the case itself was updated", "error")
        self.last_seconds = time.perf_counter() - t0

    def robustness_line(self) -> str:
        """'MAP unchanged under k of n scenarios', naming the scenarios that differ."""
        ref = self.ledger.map_hypothesis
        maps = self.scenario_maps
        if len(maps) < 2:
            return (f"MAP '{ref}' under the only prior scenario; add scenarios with "
                    "case.add_scenario(...) to test the priors")
        same = [n for n, m in maps.items() if m == ref]
        differ = [f"'{n}' gives '{m}'" for n, m in maps.items() if m != ref]
        line = (f"MAP '{ref}' unchanged under {len(same)} of {len(maps)} prior scenarios")
        return line + ("; " + "; ".join(differ) if differ else "")

    def close(self) -> None:
        """Stop following the case (views of this feed stop refreshing)."""
        self._unsubscribe()
        self._subscribers.clear()
        if self._shared and _SHARED.get(self.case) is self:
            del _SHARED[self.case]

    def __repr__(self) -> str:
        return (f"LedgerFeed({self.case.title!r}: {self.recomputes} recomputes, "
                f"{len(self._subscribers)} views)")


_SHARED: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


class CaseView(W.VBox):
    """Base of every beliefledger view: a VBox bound to a case through a feed."""

    def __init__(self, case: Case, *, feed: LedgerFeed | None = None,
                 status: StatusArea | None = None, **kwargs: Any) -> None:
        check_case(case, type(self).__name__)
        super().__init__(**kwargs)
        self.case = case
        self._own_feed = feed is None  # standalone: shows its own status area
        self.status = status if status is not None else StatusArea()
        self.feed = feed if feed is not None else LedgerFeed.shared(case)
        self._syncing = False
        self.add_class("bl-w")
        self._unsubscribe = self.feed.subscribe(self._on_ledger, self.status)

    @property
    def ledger(self) -> Ledger:
        """The ledger this view currently shows."""
        return self.feed.ledger

    # editing ------------------------------------------------------------
    def _apply(self, what: str, fn: Callable[..., Any], *args: Any, **kwargs: Any) -> bool:
        """Run one case edit; show the outcome; on refusal re-sync from the unchanged case."""
        try:
            fn(*args, **kwargs)
        except (CaseError, CaseTypeError) as exc:
            self.status.show(str(exc), "error")
            self.sync()
            return False
        if self.feed.last_error is None:
            self.status.show(what, "ok")
        return True

    def _guarded(self, handler: Callable[[dict], None]) -> Callable[[dict], None]:
        """Wrap a ``names='value'`` observer so programmatic syncs do not edit the case."""
        def observer(change: dict) -> None:
            if self._syncing:
                return
            handler(change)
        return observer

    def sync(self) -> None:
        """Refresh every control from the case (no edit, no recompute)."""
        self._syncing = True
        try:
            with self.hold_sync():
                self._render(self.feed.ledger)
        finally:
            self._syncing = False

    def _on_ledger(self, ledger: Ledger) -> None:
        self.sync()

    def _render(self, ledger: Ledger) -> None:  # pragma: no cover - abstract
        raise NotImplementedError

    def close(self) -> None:
        unsubscribe = getattr(self, "_unsubscribe", None)
        if unsubscribe is not None:
            unsubscribe()
            self._unsubscribe = None
        super().close()

    # display --------------------------------------------------------------
    def _repr_mimebundle_(self, **kwargs: Any) -> dict[str, Any]:
        data = super()._repr_mimebundle_(**kwargs) or {}
        data["text/plain"] = repr(self)
        data["text/html"] = self._repr_html_()
        return data

    def _repr_html_(self) -> str:  # pragma: no cover - overridden
        return f"<pre>{esc(repr(self))}</pre>"


def set_if_changed(widget: W.Widget, **values: Any) -> None:
    """Assign traits only when they differ (saves front-end messages on refresh)."""
    for k, v in values.items():
        if getattr(widget, k) != v:
            setattr(widget, k, v)


def fmt_p(p: float) -> str:
    """A probability for display: the same four significant figures as the record
    (:func:`beliefledger.display.fmt_probability`)."""
    from ..display import fmt_probability

    return fmt_probability(p)


__all__ = ["LedgerFeed", "StatusArea", "CaseView", "STYLE", "style_widget", "set_if_changed",
           "fmt_p", "check_case"]

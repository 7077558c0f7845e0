"""The summary page a record opens with: one screen a reviewer reads first.

For each case: the question; the conclusion (MAP and its probability, the
maximum-likelihood hypothesis when it differs); how robust it is (each prior
scenario, the break-even prior against the strongest rival, the Monte Carlo
interval where inputs carry uncertainty); the conclusion with and without
each group of items that share a source; the items that moved belief most;
the flag counts; the best action under the loss table; what is still pending
and what it is worth. The cautions follow it, in their own cell. Every figure comes from :mod:`.analyses`, which the
analyses section shows in full, so the two cannot disagree.
"""

from __future__ import annotations

from ..display import esc, fmt_number, fmt_probability
from .analyses import CaseAnalyses, movers_text

COUNTED = ("zero priors", "eliminated hypotheses", "impossible evidence", "unsourced numbers")


def _li(label: str, body: str) -> str:
    return f"<li><b>{esc(label)}:</b> {body}</li>"


def _conclusion(a: CaseAnalyses) -> str:
    ledger = a.item.ledger
    m = ledger.map_hypothesis
    text = (f"the MAP hypothesis is <b>{esc(m)}</b> with posterior probability "
            f"<b>{fmt_probability(ledger.posterior[m])}</b> (prior scenario "
            f"'{esc(ledger.scenario)}')")
    if ledger.stopped_at is not None:
        text += (f"; the update STOPPED before '{esc(ledger.stopped_at)}', which is impossible "
                 "under every hypothesis, so this is the posterior before it")
    ml = ledger.ml_hypothesis
    if ml and ml != m:
        text += (f". The evidence alone favours <b>{esc(ml)}</b> (maximum likelihood); the "
                 "priors make the difference")
    return text + "."


def _robust(a: CaseAnalyses) -> list[str]:
    out = []
    if a.robustness is not None:
        frame = a.robustness.to_frame()
        cells = [f"{esc(s)}: {esc(r['map'])} {fmt_probability(r[r['map']])}"
                 for s, r in frame.iterrows()]
        out.append(_li("Prior scenarios", f"{esc(a.robustness.verdict)} ("
                       + "; ".join(cells) + ")."))
    else:
        out.append(_li("Prior scenarios", "only the base priors are stated; the conclusion is "
                       "not tested under another prior scenario."))
    if a.break_even is not None:
        b = a.break_even
        if b.exists:
            side = "above" if b.current_prior > b.prior else "below"
            out.append(_li("Break-even prior", f"'{esc(b.hypothesis)}' and '{esc(b.against)}' "
                           f"are equally probable when the prior of '{esc(b.hypothesis)}' is "
                           f"{fmt_probability(b.prior)}; the prior in use is "
                           f"{fmt_probability(b.current_prior)} ({side} the break-even), and "
                           "the scenarios span "
                           f"{fmt_probability(b.scenario_range[0])} to "
                           f"{fmt_probability(b.scenario_range[1])}."))
        else:
            out.append(_li("Break-even prior", esc(b.summary) + "."))
    sim = a.simulation
    if sim is not None:
        m = sim.base_map
        iv = sim.interval()
        out.append(_li("Uncertain inputs", f"over {sim.draws:,} Monte Carlo draws (seed "
                       f"{sim.seed}) the posterior of '{esc(m)}' lies between "
                       f"{fmt_probability(iv.loc[m, 'low'])} and "
                       f"{fmt_probability(iv.loc[m, 'high'])} ({sim.level:.0%} interval), and "
                       f"'{esc(m)}' stays the MAP in "
                       f"{fmt_probability(sim.map_probability[m])} of them."))
    elif a.simulation_quoted:
        out.append(_li("Uncertain inputs", "the analyst's Monte Carlo run is quoted in the "
                       "analyses section (it could not be repeated on the sealed state)."))
    elif "uncertainty" not in a.item.case.extras:
        out.append(_li("Uncertain inputs", "no ranges are stated on the inputs, so no Monte "
                       "Carlo interval."))
    return out


def _without(a: CaseAnalyses) -> list[str]:
    if not a.without:
        return [_li("Shared sources", "no two observed items carry the same shared-source "
                    "tag.")]
    rows = []
    for w in a.without:
        verdict = "the MAP changes" if w.changes else "the MAP holds"
        rows.append(f"'{esc(w.group)}' ({esc(', '.join(w.items))}): with them "
                    f"{esc(w.map_with)} {fmt_probability(w.p_with)}, without them "
                    f"{esc(w.map_without)} {fmt_probability(w.p_without)}: {verdict}")
    return [_li("With and without items that share a source", "; ".join(rows) + ".")]


def _flags(a: CaseAnalyses) -> str:
    c = a.counts
    parts = [f"{c[k]} {k}" for k in COUNTED if k != "unsourced numbers"]
    parts.append(f"{c['unsourced numbers']} unsourced of {c['numbers']} numbers")
    ledger = a.item.ledger
    sev = {s: sum(1 for f in ledger.flags if f.severity == s) for s in ("error", "warning",
                                                                          "info")}
    codes = ", ".join(f"{k[5:]} ×{n}" for k, n in c.items() if k.startswith("flag "))
    counted = ", ".join(_plural(sev[k], w) for k, w in (("error", "error"),
                                                         ("warning", "warning"),
                                                         ("info", "note")))
    return _li("Review flags", f"{counted} ({esc(codes) or 'none'}); {', '.join(parts)}.")


def _plural(n: int, word: str) -> str:
    return f"{n} {word}" + ("" if n == 1 else "s")


def _action(a: CaseAnalyses) -> str | None:
    if a.decision is None:
        return None
    frame = a.decision
    active = frame[frame["active"]].iloc[0]
    units = a.units or "unit not given"
    best = active["bayes_action"]
    others = sorted({str(x) for x in frame["bayes_action"]} - {best})
    text = (f"<b>{esc(best)}</b> has the lowest {esc(active['measure']).replace('expected ', '')}"
            if active["measure"] == "expected loss" else f"<b>{esc(best)}</b> has the highest "
            "payoff")
    text += (f" under the active scenario ({esc(active['measure'])} "
             f"{fmt_number(active[best])} {esc(units)})")
    text += (f"; under other scenarios the best action would be {esc(', '.join(others))}"
             if others else "; the same under every scenario")
    return _li("Best action under the loss table", text + ". People decide; the figures "
               "support the decision.")


def _pending(a: CaseAnalyses) -> str:
    case = a.item.case
    pending = [ev.name for ev in case.evidence.values() if not ev.is_observed]
    if not pending:
        return _li("Pending evidence", "none: every item is observed.")
    if a.ranking is None:
        return _li("Pending evidence", esc(", ".join(pending)) + " (not ranked; see the "
                   "analyses section).")
    units = a.units or "unit not given"
    items = []
    for name, r in a.ranking.iterrows():
        worth = (f"EVSI {fmt_number(r['evsi'])} {esc(units)}" if "evsi" in r
                 else f"{fmt_number(r['expected_entropy_reduction'], 3)} bits expected")
        items.append(f"'{esc(name)}' ({worth}; P(MAP changes) "
                     f"{fmt_probability(r['p_map_changes'])})")
    return _li("Pending evidence", f"{len(pending)} item(s), best first: " + "; ".join(items)
               + ".")


def summary_html(a: CaseAnalyses) -> str:
    """The summary of one case as static HTML."""
    case = a.item.case
    lines = []
    if case.question:
        lines.append(_li("Question", esc(case.question)))
    lines.append(_li("Conclusion", _conclusion(a)))
    lines += _robust(a)
    lines += _without(a)
    movers = movers_text(a)
    if movers:
        lines.append(_li("Moved belief most", "; ".join(esc(m) for m in movers) + "."))
    lines.append(_flags(a))
    act = _action(a)
    if act:
        lines.append(act)
    lines.append(_pending(a))
    return (f'<div class="bl-summary"><h3>{esc(case.title)}</h3><ul>' + "".join(lines)
            + "</ul></div>")


def summary_text(a: CaseAnalyses) -> str:
    """A one-line plain-text summary (the text/plain form beside the HTML)."""
    ledger = a.item.ledger
    m = ledger.map_hypothesis
    return (f"{a.item.case.title}: MAP {m} {fmt_probability(ledger.posterior[m])} "
            f"(scenario {ledger.scenario})")


__all__ = ["summary_html", "summary_text"]

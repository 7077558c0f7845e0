"""Static HTML and text views of cases and ledgers (escaped; no JavaScript).

These are the fallbacks a notebook shows without live widgets, and the
building blocks of records. Everything a user typed passes through
:func:`esc` before it reaches HTML.
"""

from __future__ import annotations

import html
import unicodedata
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .case import Case
    from .engine import Ledger



def esc(text: object) -> str:
    """HTML-escape text, quotes included, and make control and bidi characters visible."""
    return html.escape(visible(str(text)), quote=True)


def visible(text: str) -> str:
    """Replace control and bidirectional-override characters by ``\\uXXXX`` so they
    cannot reorder or hide text on a terminal or a page."""
    out = []
    for ch in text:
        cat = unicodedata.category(ch)
        if (cat in ("Cc", "Cf") and ch not in "\n\t") or cat in ("Zl", "Zp"):
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    return "".join(out)


LONG_TABLE = 40
"""Rows a static table shows open; the rest sit in a <details> block (readable without
JavaScript; nothing is cut off)."""


def table_html(header: list[str], rows: list[list[object]], cls: str = "bl-table", *,
               fold_after: int | None = LONG_TABLE, what: str = "rows") -> str:
    """An escaped HTML table. A table longer than ``fold_after`` rows shows its first
    rows and puts the rest, complete, in a ``<details>`` block (no row is dropped)."""
    head = "<thead><tr>" + "".join(f"<th>{esc(h)}</th>" for h in header) + "</tr></thead>"

    def body(rs) -> str:
        return "".join("<tr>" + "".join(f"<td>{esc(c)}</td>" for c in r) + "</tr>" for r in rs)

    rows = list(rows)
    if fold_after is None or len(rows) <= fold_after + 5:
        return f'<div class="bl-scroll"><table class="{cls}">{head}<tbody>{body(rows)}</tbody></table></div>'
    return (f'<div class="bl-scroll"><table class="{cls}">{head}<tbody>{body(rows[:fold_after])}'
            f"</tbody></table><details><summary>the other {len(rows) - fold_after:,} {esc(what)} "
            f'(of {len(rows):,})</summary><table class="{cls}">{head}<tbody>'
            f"{body(rows[fold_after:])}</tbody></table></details></div>")


_table = table_html


def case_html(case: Case, max_rows: int = 50) -> str:
    """A case as static HTML for the notebook: the first ``max_rows`` hypotheses and
    items, and a line saying how many there are and where to see them all (a sealed
    record's assumption register lists every one)."""
    hyps = list(case.hypotheses.values())
    pri = case.priors
    rows = [[h.name, fmt_probability(pri[h.name]), "yes" if h.catch_all else "", str(h.source)]
            for h in hyps[:max_rows]]
    evs = list(case.evidence.values())
    erows = [[e.name, ", ".join(e.states), observed_text(e),
              str(e.source)] for e in evs[:max_rows]]

    def more(n: int, what: str, where: str) -> str:
        if n <= max_rows:
            return ""
        return (f"<p>Showing the first {max_rows} of {n:,} {what} "
                f"(<code>{where}</code> holds them all; a sealed record lists every one).</p>")

    return (
        f'<div class="bl-case"><h4>{esc(case.title)}</h4>'
        + (f"<p><b>Question:</b> {esc(case.question)}</p>" if case.question else "")
        + f"<p>Scenario: {esc(case.active_scenario)}</p>"
        + table_html(["hypothesis", "prior", "catch-all", "source"], rows, fold_after=None)
        + more(len(hyps), "hypotheses", "case.priors")
        + table_html(["evidence", "states", "observed", "source"], erows, fold_after=None)
        + more(len(evs), "evidence items", "case.evidence")
        + "</div>"
    )


def observed_text(ev) -> str:
    """What is known of an item's state, in a few words: the state, "pending", or the
    form of its uncertain observation."""
    if ev.observed is not None:
        return ev.observed
    unc = getattr(ev, "uncertain", None)
    if unc is None:
        return "pending"
    if unc.reported is not None:
        return f"reported '{unc.reported}' (right with probability {unc.reliability:.4g})"
    return ("uncertain: likelihood weights" if unc.form == "likelihood"
            else "uncertain: probabilities (Jeffrey's rule)")


def _uncertain_line(info) -> str:
    form = ("uncertain observation, likelihood weights (only their ratios matter)"
            if info["form"] == "likelihood" else
            "uncertain observation, probabilities after it (Jeffrey's rule; depends on where "
            "it sits)")
    return f"{form}, step {info['position']} of {info['of']}"


def _weights_text(states, values) -> str:
    return ", ".join(f"{s} {fmt_probability(v) if 0 <= v <= 1 else f'{v:.4g}'}"
                     for s, v in zip(states, values, strict=True))


def observation_note_html(case: Case, ledger: Ledger | None = None) -> str:
    """The assumption-register note on every uncertain observation of ``case`` (empty
    text when there is none): who gave the report, how reliable and why (its source),
    the weights, that only their ratios matter (likelihood form), and for a Jeffrey
    update where it sits in the sequence, the predictive before it, the equivalent
    likelihood weights, and the MAP had it been placed first or last. ``ledger``
    defaults to ``case.update()``."""
    items = [e for e in case.evidence.values() if getattr(e, "uncertain", None) is not None]
    if not items:
        return ""
    led = case.update() if ledger is None else ledger
    rows = []
    notes = []
    for ev in items:
        unc = ev.uncertain
        info = led.uncertain.get(ev.name, {})
        src = unc.source
        where = f"step {info['position']} of {info['of']}" if info else "not applied"
        if ev.name in getattr(led, "skipped", []):
            where += " (not applied: the update stopped before it)"
        if unc.form == "likelihood":
            form = "likelihood weights (virtual evidence)"
            meaning = "relative chance of the report given each true state; only the ratios matter"
            if unc.reported is not None:
                meaning = (f"report '{unc.reported}' right with probability "
                           f"{unc.reliability:.4g}, errors spread evenly over the other states; "
                           + meaning)
            extra = ""
        else:
            form = "probabilities after the observation (Jeffrey's rule)"
            meaning = "the probability of each state after the observation"
            pred = info.get("predictive", {})
            lam = info.get("weights", {})
            extra = ""
            if pred:
                extra = (f"P(state | the steps before it): {_weights_text(list(pred), pred.values())}; "
                         f"equivalent likelihood weights: {_weights_text(list(lam), lam.values())}")
            moved = []
            for end in ("first", "last"):
                m = info.get(f"map_if_{end}")
                here = info.get("position") == (1 if end == "first" else info.get("of"))
                if m is not None and not here:
                    moved.append(f"placed {end}: MAP '{m}' ({fmt_probability(info[f'p_map_if_{end}'])})")
            if moved:
                extra += ("; " if extra else "") + "; ".join(moved)
            if info.get("unreachable"):
                extra += (f"; states ruled out before it, so not reachable: "
                          f"{', '.join(info['unreachable'])}")
        rows.append([ev.name, form, _weights_text(ev.states, unc.weights), meaning, where,
                     src.where or "unsourced", src.who, src.when, src.why, unc.note, extra])
    if any(e.uncertain.form == "likelihood" for e in items):
        notes.append("Likelihood weights give the relative chance of the report under each true "
                     "state; only their ratios matter, so 0.8 / 0.2 and 4 / 1 are the same report "
                     "(Pearl 1988, section 2.2.2).")
    if any(e.uncertain.form == "probability" for e in items):
        notes.append("A probability-form observation is applied at its place in the sequence "
                     "through the likelihood weights q(state) / P(state | the steps before it) "
                     "(Jeffrey 1965; Chan & Darwiche 2005). Such updates do not commute: placed "
                     "elsewhere the same report moves belief differently, so where it sits is "
                     "part of the assumption.")
    return ('<div class="bl-uncertain-observations"><h4>Uncertain observations</h4>'
            + _table(["evidence", "form", "as given", "meaning", "where it sits", "where",
                      "who", "when", "why", "note", "at its step"], rows)
            + "".join(f"<p>{esc(n)}</p>" for n in notes) + "</div>")


def groups_html(ledger: Ledger) -> str:
    """Hypothesis groups of a ledger (empty text when there are none): each group's
    members, its prior and posterior (the sums of its members'), and why groups are
    read instead of merged hypotheses."""
    groups = getattr(ledger, "hypothesis_groups", {})
    if not groups:
        return ""
    gp = ledger.group_posterior
    prior = ledger.group_steps.iloc[0]
    rows = [[g, ", ".join(m), fmt_probability(prior[g]), fmt_probability(gp[g]),
             "yes" if g == ledger.group_map else ""] for g, m in groups.items()]
    rest = [h for h in gp.index if h not in groups]
    rows += [[h, "(in no group)", fmt_probability(prior[h]), fmt_probability(gp[h]),
              "yes" if h == ledger.group_map else ""] for h in rest]
    return ('<div class="bl-groups"><h4>Hypothesis groups</h4>'
            + _table(["group", "members", "prior", "posterior", "highest"], rows)
            + "<p>A group's probability is the sum of its members' at every step; the "
              "members are updated separately. Merging the members into one hypothesis with "
              "one likelihood table would not be exact: its likelihood would have to be the "
              "members' likelihoods weighted by their current beliefs, which change with every "
              "item.</p></div>")


def experts_html(review) -> str:
    """The experts' part of the register (:func:`beliefledger.expert_review`): who each
    expert is and why they were asked, the conclusion under each expert's numbers alone
    with the verdict ("MAP 'X' unchanged under 3 of 4 experts"), the spread of every
    judged number (each expert's best, the lowest, the highest, the case's own), and any
    judgement entered for an earlier hypothesis set."""
    who = {e["name"]: e for e in review.experts}
    rows = []
    for ex, r in review.frame.iterrows():
        src = who.get(ex, {}).get("source", {})
        rows.append([ex, src.get("where") or "unsourced", src.get("who", ""),
                     src.get("why", ""), int(r["inputs"]), r["map"],
                     fmt_probability(r["p_map"]), "yes" if r["changed"] else ""])
    experts = [c for c in review.spread.columns
               if c not in ("input", "key", "lowest", "highest", "case")]
    srows = [[r["input"], r["key"],
              *[fmt_probability(r[e]) if r[e] == r[e] else "" for e in experts],
              fmt_probability(r["lowest"]), fmt_probability(r["highest"]),
              fmt_probability(r["case"])] for _, r in review.spread.iterrows()]
    parts = [f'<div class="bl-experts"><h4>Experts</h4><p>{esc(review.verdict)}</p>']
    if rows:
        parts.append(_table(["expert", "where", "who", "why", "judgements", "MAP alone",
                             "its posterior", "MAP changes"], rows))
    if srows:
        parts.append("<p>Spread of each judged number (best values):</p>")
        parts.append(_table(["input", "hypothesis or state", *experts, "lowest", "highest",
                             "in the case"], srows))
    if review.stale:
        parts.append("<p>Entered for an earlier hypothesis set (kept, not used): "
                     f"{esc('; '.join(review.stale))}</p>")
    parts.append("</div>")
    return "".join(parts)


def pool_html(pooled) -> str:
    """A pooled judgement (:func:`beliefledger.pool`): each expert's numbers, the weights,
    and the pooled value and range of each hypothesis or state."""
    frame = pooled.to_frame()
    experts = list(pooled.by_expert.index)
    rows = [[k, *[fmt_probability(r[e]) for e in experts],
             *[fmt_probability(r[f"pooled {c}"]) for c in ("low", "best", "high")]]
            for k, r in frame.iterrows()]
    weights = ", ".join(f"{e} {fmt_probability(w)}" for e, w in pooled.weights.items())
    return (f'<div class="bl-pool"><p>{esc(pooled.label)}: {esc(pooled.method)} opinion pool, '
            f"{esc(pooled.weighting)} weights ({esc(weights)}); ranges at "
            f"{pooled.level:.0%}.</p>"
            + _table(["", *experts, "pooled low", "pooled best", "pooled high"], rows)
            + "".join(f"<p>{esc(n)}</p>" for n in pooled.notes) + "</div>")


def flags_html(flags) -> str:
    if not flags:
        return '<p class="bl-flags-none">No review flags.</p>'
    items = "".join(
        f'<li class="bl-flag bl-{esc(f.severity)}"><b>{esc(f.severity)}</b> '
        f"<code>{esc(f.code)}</code> {esc(f.message)}</li>" for f in flags)
    return f'<ul class="bl-flags">{items}</ul>'


def ledger_html(ledger: Ledger, max_cols: int | None = 30, *, with_flags: bool = True) -> str:
    """The ledger as a static table (probabilities to four significant figures). With
    ``max_cols=None`` every hypothesis is a column (records); otherwise the first
    ``max_cols`` and a line saying how many more there are."""
    cols = ledger.hypotheses if max_cols is None else ledger.hypotheses[:max_cols]
    header = ["step", *cols]
    rows = [[s, *[fmt_probability(v) for v in row[cols]]] for s, row in ledger.steps.iterrows()]
    more = ""
    if len(cols) < len(ledger.hypotheses):
        more = (f"<p>{len(ledger.hypotheses) - len(cols)} more hypotheses are not shown here; "
                "<code>ledger.steps</code> holds them all.</p>")
    return (
        f'<div class="bl-ledger"><h4>{esc(ledger.title)}: ledger under scenario '
        f"{esc(ledger.scenario)}</h4>"
        + table_html(header, rows, what="steps") + more
        + "".join(f"<p>{esc(s)}: one step combining {esc(', '.join(m))}</p>"
                  for s, m in ledger.members.items() if len(m) > 1 or m != (s,))
        + "".join(f"<p>{esc(s)}: {esc(_uncertain_line(info))}</p>"
                  for s, info in getattr(ledger, "uncertain", {}).items())
        + groups_html(ledger)
        + f"<p>MAP: <b>{esc(ledger.map_hypothesis)}</b> "
        f"({fmt_probability(ledger.posterior[ledger.map_hypothesis])}); maximum likelihood: "
        f"{esc(ledger.ml_hypothesis or 'n/a')}</p>"
        + (flags_html(ledger.flags) if with_flags else "") + "</div>"
    )


def ledger_text(ledger: Ledger, max_cols: int = 12) -> str:
    """A plain-text ledger table and flags for the terminal; more than ``max_cols``
    hypotheses are printed in blocks of ``max_cols`` columns (none is left out)."""
    lines = [f"Case: {visible(ledger.title)}   (scenario: {visible(ledger.scenario)})", ""]
    if ledger.stopped_at is not None:
        lines.insert(0, f"UPDATE STOPPED before '{visible(ledger.stopped_at)}': that evidence is "
                        "impossible under every hypothesis; the posterior below is the one "
                        "before it")
    name_w = max([len(visible(s)) for s in ledger.step_names] + [4])
    hyps = list(ledger.hypotheses)
    for start in range(0, len(hyps), max_cols):
        cols = hyps[start:start + max_cols]
        if start:
            lines.append("")
        col_w = [max(len(visible(c)), 8) for c in cols]
        lines.append("step".ljust(name_w) + "  " + "  ".join(
            visible(c).rjust(w) for c, w in zip(cols, col_w, strict=True)))
        for step, row in ledger.steps.iterrows():
            lines.append(visible(step).ljust(name_w) + "  " + "  ".join(
                f"{row[c]:.4f}".rjust(w) for c, w in zip(cols, col_w, strict=True)))
    grouped = [(s, m) for s, m in ledger.members.items() if len(m) > 1 or m != (s,)]
    for step, members in grouped:
        lines.append(f"  {visible(step)}: one step combining {', '.join(map(visible, members))}")
    for step, info in getattr(ledger, "uncertain", {}).items():
        lines.append(f"  {visible(step)}: {_uncertain_line(info)}")
    lines.append("")
    lines.append(f"MAP: {visible(ledger.map_hypothesis)} "
                 f"({fmt_probability(ledger.posterior[ledger.map_hypothesis])})   maximum "
                 f"likelihood: {visible(ledger.ml_hypothesis or 'n/a')}")
    lines.append("")
    lines.append(f"Review flags ({len(ledger.flags)}):")
    for f in ledger.flags:
        lines.append(f"  [{f.severity}] {f.code}: {visible(f.message)}")
    return "\n".join(lines)


def artefacts_html(case: Case) -> str:
    """Every artefact of the case listed beside its evidence item (file, size, SHA-256,
    who attached it, when, note, copy), and the items that rest on no file."""
    rows, bare = [], []
    for ev in case.evidence.values():
        if not ev.artefacts:
            bare.append(ev.name)
        for a in ev.artefacts:
            rows.append([ev.name, a.name, f"{a.size:,}", a.sha256, a.who, a.when, a.note,
                         a.copy or "not copied"])
    head = '<div class="bl-artefacts"><h4>Evidence artefacts</h4>'
    if not rows:
        return (head + "<p>No evidence artefacts attached (no file is tied to any evidence "
                "item by its digest).</p></div>")
    out = head + _table(["evidence", "file", "bytes", "SHA-256", "attached by",
                         "attached (UTC)", "note", "copy kept at"], rows)
    out += ("<p>Check the files against these digests with <code>beliefledger verify RECORD "
            "--artefacts FOLDER</code>.</p>")
    if bare:
        out += f"<p>Evidence items with no artefact: {esc(', '.join(bare))}.</p>"
    return out + "</div>"


def robustness_html(result) -> str:
    """A robustness result (:func:`beliefledger.robustness`) as a table with its verdict."""
    frame = result.to_frame()
    hyps = [c for c in frame.columns if c != "map"]
    rows = [[s, *[fmt_probability(row[h]) for h in hyps], row["map"]]
            for s, row in frame.iterrows()]
    return (f'<div class="bl-robustness"><p>{esc(result.verdict)}</p>'
            + _table(["scenario", *hyps, "MAP"], rows) + "</div>")


def simulation_html(result) -> str:
    """A Monte Carlo result (:func:`beliefledger.simulate`) as a table with its summary."""
    frame = result.to_frame()
    rows = [[h, *[fmt_probability(v) for v in row]] for h, row in frame.iterrows()]
    return (f'<div class="bl-simulation"><p>{esc(result.summary)} (seed {result.seed}, '
            f"{result.draws:,} draws, {result.level:.0%} intervals)</p>"
            + _table(["hypothesis", *frame.columns], rows) + "</div>")


def fmt_number(x: float, digits: int = 4) -> str:
    """An amount for people: ``digits`` significant figures, thousands separated, no float
    noise (1234.5 reads 1,235; 0.1 + 0.2 reads 0.3)."""
    v = float(x)
    if v != v:
        return "n/a"
    if v in (float("inf"), float("-inf")):
        return "inf" if v > 0 else "-inf"
    if abs(v) >= 10 ** digits:
        return f"{v:,.0f}"
    text = f"{v:.{digits}g}"
    if "e" not in text and abs(float(text)) >= 1000:
        r = float(text)
        text = f"{r:,.{max(digits - len(str(int(abs(r)))), 0)}f}"
    return "0" if text in ("-0", "0") else text


def fmt_input(x: float) -> str:
    """A number someone entered, for a register: as typed when it has at most six
    significant figures (0.0125, 0.99995), else four (0.2857 for 2/7); no float noise."""
    v = float(x)
    short = f"{v:.6g}"
    return short if float(short) == v else f"{v:.4g}"


def fmt_probability(p: float) -> str:
    """A probability for people: four significant figures, exact 0 and 1 as such, tiny
    values in exponent form, never float noise (0.09200000000000001 reads 0.092)."""
    x = float(p)
    if x != x:  # NaN
        return "n/a"
    if x in (0.0, 1.0):
        return f"{x:g}"
    if x < 1e-4 or x > 1 - 1e-4:
        return f"{x:.3e}"
    return f"{x:.4g}"


__all__ = ["robustness_html", "simulation_html", "fmt_probability", "fmt_number", "fmt_input",
           "table_html", "esc", "visible", "case_html", "ledger_html", "ledger_text",
           "flags_html", "artefacts_html", "observation_note_html", "groups_html",
           "observed_text", "experts_html", "pool_html"]

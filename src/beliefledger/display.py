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
    erows = [[e.name, ", ".join(e.states), e.observed if e.observed is not None else "pending",
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
           "flags_html", "artefacts_html"]

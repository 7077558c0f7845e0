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


def _table(header: list[str], rows: list[list[object]], cls: str = "bl-table") -> str:
    head = "".join(f"<th>{esc(h)}</th>" for h in header)
    body = "".join("<tr>" + "".join(f"<td>{esc(c)}</td>" for c in r) + "</tr>" for r in rows)
    return f'<table class="{cls}"><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>'


def case_html(case: Case, max_rows: int = 50) -> str:
    hyps = list(case.hypotheses.values())
    pri = case.priors
    rows = [[h.name, f"{pri[h.name]:.4g}", "yes" if h.catch_all else "", str(h.source)]
            for h in hyps[:max_rows]]
    more = (f"<p>... and {len(hyps) - max_rows} more hypotheses</p>"
            if len(hyps) > max_rows else "")
    evs = list(case.evidence.values())
    erows = [[e.name, ", ".join(e.states), e.observed if e.observed is not None else "pending",
              str(e.source)] for e in evs[:max_rows]]
    emore = f"<p>... and {len(evs) - max_rows} more items</p>" if len(evs) > max_rows else ""
    return (
        f'<div class="bl-case"><h4>{esc(case.title)}</h4>'
        + (f"<p><b>Question:</b> {esc(case.question)}</p>" if case.question else "")
        + f"<p>Scenario: {esc(case.active_scenario)}</p>"
        + _table(["hypothesis", "prior", "catch-all", "source"], rows) + more
        + _table(["evidence", "states", "observed", "source"], erows) + emore
        + "</div>"
    )


def flags_html(flags) -> str:
    if not flags:
        return '<p class="bl-flags-none">No review flags.</p>'
    items = "".join(
        f'<li class="bl-flag bl-{esc(f.severity)}"><b>{esc(f.severity)}</b> '
        f"<code>{esc(f.code)}</code> {esc(f.message)}</li>" for f in flags)
    return f'<ul class="bl-flags">{items}</ul>'


def ledger_html(ledger: Ledger, max_cols: int = 30) -> str:
    cols = ledger.hypotheses[:max_cols]
    header = ["step", *cols]
    rows = [[s, *[f"{v:.4f}" for v in row[cols]]] for s, row in ledger.steps.iterrows()]
    return (
        f'<div class="bl-ledger"><h4>{esc(ledger.title)}: ledger under scenario '
        f"{esc(ledger.scenario)}</h4>"
        + _table(header, rows)
        + "".join(f"<p>{esc(s)}: one step combining {esc(', '.join(m))}</p>"
                  for s, m in ledger.members.items() if len(m) > 1 or m != (s,))
        + f"<p>MAP: <b>{esc(ledger.map_hypothesis)}</b> "
        f"({ledger.posterior[ledger.map_hypothesis]:.4f}); maximum likelihood: "
        f"{esc(ledger.ml_hypothesis or 'n/a')}</p>"
        + flags_html(ledger.flags) + "</div>"
    )


def ledger_text(ledger: Ledger, max_cols: int = 12) -> str:
    """A plain-text ledger table and flags for the terminal."""
    cols = ledger.hypotheses[:max_cols]
    name_w = max([len(visible(s)) for s in ledger.step_names] + [4])
    col_w = [max(len(visible(c)), 8) for c in cols]
    lines = [f"Case: {visible(ledger.title)}   (scenario: {visible(ledger.scenario)})", ""]
    if ledger.stopped_at is not None:
        lines.insert(0, f"UPDATE STOPPED before '{visible(ledger.stopped_at)}': that evidence is "
                        "impossible under every hypothesis; the posterior below is the one "
                        "before it")
    lines.append("step".ljust(name_w) + "  " + "  ".join(visible(c).rjust(w)
                                                          for c, w in zip(cols, col_w, strict=True)))
    for step, row in ledger.steps.iterrows():
        lines.append(visible(step).ljust(name_w) + "  " + "  ".join(
            f"{row[c]:.4f}".rjust(w) for c, w in zip(cols, col_w, strict=True)))
    if len(ledger.hypotheses) > max_cols:
        lines.append(f"... {len(ledger.hypotheses) - max_cols} more hypotheses not shown")
    grouped = [(s, m) for s, m in ledger.members.items() if len(m) > 1 or m != (s,)]
    for step, members in grouped:
        lines.append(f"  {visible(step)}: one step combining {', '.join(map(visible, members))}")
    lines.append("")
    lines.append(f"MAP: {visible(ledger.map_hypothesis)} "
                 f"({ledger.posterior[ledger.map_hypothesis]:.4f})   maximum likelihood: "
                 f"{visible(ledger.ml_hypothesis or 'n/a')}")
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


__all__ = ["robustness_html", "simulation_html", "fmt_probability", "esc", "visible", "case_html",
           "ledger_html", "ledger_text", "flags_html", "artefacts_html"]

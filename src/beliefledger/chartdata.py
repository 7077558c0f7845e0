"""What the charts draw: the tool's visual language and the tidy tables behind each chart.

Pure pandas and numpy. Two kinds of picture read these tables: the fast SVG
figures of :mod:`beliefledger.figures` (the workbench, ``charts.show`` and
sealed records) and the altair charts of :mod:`beliefledger.charts` (for an
analyst who wants to restyle one). No posterior or weight is computed here;
the numbers come from the ledger and :func:`beliefledger.measures.step_weights`.
Step orders are given explicitly (an ordinal axis left to sort itself is
alphabetical and draws false dips).

Visual language
---------------
One palette for the whole tool, chosen to stay apart for the common forms
of colour-vision deficiency and in greyscale print: the eight colours of
Okabe and Ito (2008). Blue means *supports* and nothing else: evidence for
the focus hypothesis is a blue arrow pointing up the log-odds axis,
evidence against it a vermillion arrow pointing down. The prior and the
posterior are level marks on the same axis (a dark bar across the column,
never a bar from zero): they are positions, not amounts. Every arrow also
carries its weight in decibans and its likelihood ratio as text, so
nothing depends on colour alone. Eliminated hypotheses are drawn dashed and
marked with a cross.

References
----------
.. [1] Okabe, M. and Ito, K. (2008). "Color Universal Design (CUD): how to
   make figures and presentations that are friendly to colorblind people."
   J*FLY data depository.
.. [2] Good, I. J. (1985). "Weight of evidence: a brief survey." Bayesian
   Statistics 2, 249-270 (decibans as the unit of weight of evidence).
"""

from __future__ import annotations

import functools
import math
import textwrap
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from .measures import DECIBANS_PER_NAT, format_lr, step_weights

if TYPE_CHECKING:  # pragma: no cover
    from .engine import Ledger

# --------------------------------------------------------------------------- visual language

OKABE_ITO = ("#0072B2", "#E69F00", "#009E73", "#CC79A7", "#56B4E9", "#D55E00", "#000000",
             "#F0E442")
"""Okabe-Ito colour-blind-safe palette, reordered so the yellow (weak on white
paper) comes last."""

SUPPORT_COLOUR = "#0072B2"   # blue: evidence for the focus hypothesis, and only that
AGAINST_COLOUR = "#D55E00"   # vermillion: evidence against it
NEUTRAL_COLOUR = "#999999"
LEVEL_COLOUR = "#222222"     # the prior and posterior level marks
PRIOR_COLOUR = "#c8c8c8"     # prior bars of the prior/posterior chart (light grey)
POSTERIOR_COLOUR = "#3b3b3b"  # posterior bars (dark grey: a position, not support)
FONT = "DejaVu Sans"         # installed in CI; renderers fall back when missing
DASHES = ([1, 0], [6, 3], [2, 2], [8, 3, 2, 3])
SCENARIO_SHAPES = ("diamond", "triangle-up", "square", "cross", "triangle-down", "circle")

WIDTH = 520
STEP_HEIGHT = 18        # per bar in horizontal bar charts
MAX_INF_PAD_DB = 20.0   # how far past the finite range an infinite log-odds is drawn

PROBABILITY_TICKS = (0.001, 0.01, 0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95, 0.99, 0.999)

UNCERTAIN_MARK = "uncertain observation"
"""What the waterfall writes beside a step that is an uncertain observation (its arrow is
drawn with a dashed outline and a lighter fill; the colour still says for / against)."""
UNCERTAIN_FORM_TEXT = {"likelihood": "likelihood weights", "probability": "Jeffrey's rule"}

PRIOR_LABEL = "prior"
POSTERIOR_LABEL = "posterior"
KINDS = ("prior", "for", "against", "neutral", "posterior")
KIND_COLOURS = {"prior": LEVEL_COLOUR, "posterior": LEVEL_COLOUR, "for": SUPPORT_COLOUR,
                "against": AGAINST_COLOUR, "neutral": NEUTRAL_COLOUR}
LABEL_LINES = 4
LINE_HEIGHT = 11


def line_styles(names: list[str]) -> tuple[list[str], list[list[int]]]:
    """Colour and dash pattern of each line of the probability path, in order.

    Named hypotheses cycle through the palette, then through dash patterns;
    the folded "(N others)" line is always neutral grey and dotted.
    """
    colours, dashes, k = [], [], 0
    for name in names:
        if is_folded(name):
            colours.append(NEUTRAL_COLOUR)
            dashes.append([1, 2])
            continue
        colours.append(OKABE_ITO[k % len(OKABE_ITO)])
        dashes.append(DASHES[(k // len(OKABE_ITO)) % len(DASHES)])
        k += 1
    return colours, dashes


def folded_name(n: int) -> str:
    return f"({n} others)"


def is_folded(name: str) -> bool:
    return name.startswith("(") and name.endswith(" others)") and name[1:-8].isdigit()


def unique_step_labels(steps: list[str]) -> list[str]:
    """Axis labels for evidence steps that can never collide with 'prior'/'posterior'."""
    out = []
    for s in steps:
        label = str(s)
        if label in (PRIOR_LABEL, POSTERIOR_LABEL):
            label = f"{label} (evidence)"
        out.append(label)
    return out


def fmt_decibans(x: float) -> str:
    """A weight of evidence as text: ``"+3.0 decibans"`` (never "dB": decibans are
    not decibels)."""
    if math.isinf(x):
        return "+inf decibans" if x > 0 else "-inf decibans"
    return f"{x:+.1f} decibans"


def fmt_probability(p: float) -> str:
    """``P=0.568``; very small or large values in exponent form; exact 0 and 1 as such."""
    if p == 0:
        return "P=0"
    if p == 1:
        return "P=1"
    if p < 0.001 or p > 0.999:
        return f"P={p:.2e}" if p < 0.5 else f"P=1-{1 - p:.1e}"
    return f"P={p:.3f}"


@functools.lru_cache(maxsize=256)
def wrap(text: str, width: int = 22) -> tuple[str, ...]:
    """Break a label into at most ``LABEL_LINES - 1`` lines of about ``width`` characters."""
    return tuple(textwrap.wrap(text, width=width, max_lines=LABEL_LINES - 1,
                               placeholder="..."))


def _lines(*parts: str) -> str:
    """Exactly LABEL_LINES lines, padded at the top, so every label ends just above its mark."""
    lines = list(parts)[:LABEL_LINES]
    return "\n".join([""] * (LABEL_LINES - len(lines)) + lines)


def short(name: object, limit: int = 48) -> str:
    """One line of at most ``limit`` characters (a raw line break breaks chart tooltips)."""
    text = " ".join(str(name).split())
    return text if len(text) <= limit else text[: limit - 1] + "\u2026"


# --------------------------------------------------------------------------- waterfall


def waterfall_data(ledger: Ledger, focus: str | None = None) -> pd.DataFrame:
    """The tidy table of the waterfall (one row per mark, in drawing order).

    Columns: ``order``, ``step`` (axis label), ``kind`` (``prior``, ``for``,
    ``against``, ``neutral``, ``posterior``), ``start_db`` and ``end_db`` (the
    log-odds of the focus against the rest, in decibans, before and after the
    mark; equal for the prior and posterior level marks; infinities clipped
    for drawing), ``decibans`` (the step's weight, or the level for the two
    ends; may be infinite), ``bayes_factor`` (the step's likelihood ratio for
    the focus against the rest), ``verbal``, ``probability`` (P(focus) after
    the mark), ``label`` (three lines), ``clipped``, ``top_db``, ``bottom_db``,
    ``uncertain`` (``"likelihood"`` or ``"probability"`` for a step that is an
    uncertain observation, else ``""``).

    ``focus`` may be a hypothesis or a hypothesis group (its members together
    against the rest; the group's probability is the sum of theirs).
    """
    focus = ledger.map_hypothesis if focus is None else focus
    w = step_weights(ledger, focus)  # validates focus
    p_focus = ledger.probabilities[:, ledger.focus_columns(focus)].sum(axis=1)
    lo_db = np.empty(len(ledger.steps))
    lo_db[0] = (w["log_odds_before"].iloc[0] if len(w) else _prior_log_odds(ledger, focus))
    if len(w):
        lo_db[1:] = w["log_odds_after"].to_numpy()
    lo_db = lo_db * DECIBANS_PER_NAT
    finite = lo_db[np.isfinite(lo_db)]
    span = float(np.max(np.abs(finite))) if finite.size else 10.0
    cap = max(span, 10.0) + MAX_INF_PAD_DB

    labels = unique_step_labels(list(w.index))
    n = len(labels)
    kinds = ["prior"] + [d if d in ("for", "against") else "neutral"
                         for d in w["direction"].tolist()] + ["posterior"]
    db = w["decibans"].to_numpy(dtype=float)
    bf = w["bayes_factor"].to_numpy(dtype=float)
    verbal = [str(v) for v in w["verbal"].tolist()]
    start = np.concatenate([[lo_db[0]], lo_db[:-1], [lo_db[-1]]])
    end = np.concatenate([lo_db, [lo_db[-1]]])
    clipped = np.isinf(start) | np.isinf(end)
    start_c = np.where(np.isinf(start), np.clip(start, -cap, cap), start)
    end_c = np.where(np.isinf(end), np.clip(end, -cap, cap), end)
    step_labels = [_lines(fmt_decibans(d), *wrap(f"{format_lr(f)} \u2014 {v}"))
                   for d, f, v in zip(db, bf, verbal, strict=True)]
    return pd.DataFrame({
        "order": np.arange(n + 2),
        "step": [PRIOR_LABEL, *labels, POSTERIOR_LABEL],
        "kind": kinds,
        "start_db": start_c,
        "end_db": end_c,
        "decibans": np.concatenate([[lo_db[0]], db, [lo_db[-1]]]),
        "bayes_factor": np.concatenate([[np.nan], bf, [np.nan]]),
        "verbal": ["", *verbal, ""],
        "probability": np.concatenate([p_focus, [p_focus[-1]]]),
        "label": ([_lines("", fmt_decibans(lo_db[0]), fmt_probability(p_focus[0]))]
                  + step_labels
                  + [_lines("", fmt_decibans(lo_db[-1]), fmt_probability(p_focus[-1]))]),
        "clipped": clipped.astype(bool),
        "top_db": np.maximum(start_c, end_c),
        "bottom_db": np.minimum(start_c, end_c),
        "uncertain": ["", *[ledger.uncertain.get(s, {}).get("form", "") for s in w.index],
                      ""],
    })


def _prior_log_odds(ledger: Ledger, focus: str) -> float:
    from ._logmath import log_odds_of_set

    return float(log_odds_of_set(ledger.log_steps[:1], ledger.focus_columns(focus))[0])


# --------------------------------------------------------------------------- probability path


def probability_path_data(ledger: Ledger, *, max_lines: int = 8) -> pd.DataFrame:
    """The long table of the probability path.

    Columns: ``order``, ``step``, ``hypothesis``, ``probability``,
    ``eliminated`` (the hypothesis is at exactly 0 from this step on after a
    positive prior), ``eliminated_here`` (the step that eliminated it). With
    more than ``max_lines`` hypotheses, those with the highest probability at
    any step are kept and the rest are summed into one line
    ``"(N others)"`` (never eliminated-marked).
    """
    labels = [PRIOR_LABEL, *unique_step_labels(ledger.evidence_steps)]
    probs = ledger.steps.to_numpy(dtype=float)
    hyps = list(ledger.hypotheses)
    keep = hyps
    rest: list[str] = []
    if len(hyps) > max_lines:
        peak = probs.max(axis=0)
        idx = sorted(np.argsort(-peak, kind="stable")[: max_lines - 1])
        keep = [hyps[i] for i in idx]
        kept = set(keep)
        rest = [h for h in hyps if h not in kept]
    elim = set(ledger.eliminated)
    n = len(labels)
    cols: dict[str, list] = {"order": [], "step": [], "hypothesis": [], "probability": [],
                             "eliminated": [], "eliminated_here": []}

    def add(name: str, values: np.ndarray, first_zero: int | None) -> None:
        k = np.arange(n)
        cols["order"] += k.tolist()
        cols["step"] += labels
        cols["hypothesis"] += [name] * n
        cols["probability"] += values.tolist()
        if first_zero is None:
            cols["eliminated"] += [False] * n
            cols["eliminated_here"] += [False] * n
        else:
            cols["eliminated"] += (k >= first_zero).tolist()
            cols["eliminated_here"] += (k == first_zero).tolist()

    keep_set = set(keep)
    for j, h in enumerate(hyps):
        if h not in keep_set:
            continue
        col = probs[:, j]
        first_zero = None
        if h in elim:
            nz = np.flatnonzero(col > 0)
            first_zero = int(nz[-1]) + 1 if nz.size else 0
        add(h, col, first_zero)
    if rest:
        rest_idx = [hyps.index(h) for h in rest]
        add(folded_name(len(rest)), np.minimum(1.0, probs[:, rest_idx].sum(axis=1)), None)
    return pd.DataFrame(cols, columns=["order", "step", "hypothesis", "probability",
                                       "eliminated", "eliminated_here"])


# --------------------------------------------------------------------------- prior vs posterior


def prior_posterior_data(ledger: Ledger, scenarios: dict[str, Ledger] | None = None, *,
                         max_bars: int | None = None) -> pd.DataFrame:
    """The long table of the prior/posterior chart.

    Columns: ``hypothesis``, ``order`` (case order), ``series`` (``prior``,
    ``posterior`` or ``scenario: <name>``), ``probability``, ``is_map``
    (the hypothesis is the ledger's MAP) and ``label``. With ``max_bars``,
    only the hypotheses with the largest prior or posterior are kept (the
    MAP always).
    """
    all_hyps = list(ledger.hypotheses)
    table = ledger.steps.to_numpy(dtype=float)
    prior, post = table[0], table[-1]
    idx = np.arange(len(all_hyps))
    if max_bars is not None and len(all_hyps) > max_bars:
        score = np.maximum(prior, post)
        keep = set(np.argsort(-score, kind="stable")[:max_bars].tolist())
        keep.add(all_hyps.index(ledger.map_hypothesis))
        idx = np.array(sorted(keep))
    hyps = [all_hyps[i] for i in idx]
    n = len(hyps)
    is_map = [h == ledger.map_hypothesis for h in hyps]
    cols: dict[str, list] = {
        "hypothesis": hyps * 2, "order": list(range(n)) * 2,
        "series": ["prior"] * n + ["posterior"] * n,
        "probability": prior[idx].tolist() + post[idx].tolist(), "is_map": is_map * 2,
        "label": [f"{p:.3f}" for p in prior[idx]]
        + [f"{p:.3f}" + ("  MAP" if m else "") for p, m in zip(post[idx], is_map, strict=True)],
    }
    for name, other in (scenarios or {}).items():
        if list(other.hypotheses) != all_hyps:
            from .errors import CaseError

            raise CaseError(f"scenario ledger {name!r} has hypotheses {other.hypotheses[:5]}..., "
                            "not those of the main ledger; pass ledgers of the same case")
        sp = other.steps.to_numpy(dtype=float)[-1]
        cols["hypothesis"] += hyps
        cols["order"] += list(range(n))
        cols["series"] += [f"scenario: {name}"] * n
        cols["probability"] += sp[idx].tolist()
        cols["is_map"] += [h == other.map_hypothesis for h in hyps]
        cols["label"] += [""] * n
    return pd.DataFrame(cols, columns=["hypothesis", "order", "series", "probability",
                                       "is_map", "label"])


__all__ = [
    "waterfall_data", "probability_path_data", "prior_posterior_data", "line_styles",
    "fmt_decibans", "fmt_probability", "folded_name", "is_folded", "unique_step_labels",
    "wrap", "short", "OKABE_ITO", "SUPPORT_COLOUR", "AGAINST_COLOUR", "NEUTRAL_COLOUR",
    "LEVEL_COLOUR", "PRIOR_COLOUR", "POSTERIOR_COLOUR", "FONT", "KINDS", "KIND_COLOURS",
    "PROBABILITY_TICKS", "LABEL_LINES", "LINE_HEIGHT", "SCENARIO_SHAPES", "DASHES",
    "UNCERTAIN_MARK", "UNCERTAIN_FORM_TEXT",
]

"""The analyses a record adds, computed once per case at sealing.

The summary page and the analyses section read the same results, so they
cannot disagree. Where the notebook shows an analysis call (a Monte Carlo
run, a ranking of pending evidence: see :mod:`beliefledger.calls`), the
record runs it again with the analyst's settings (seed, draws, costs,
criterion) on the sealed state of the case and says so; where that call
cannot be run on the sealed state, the record quotes the analyst's output
instead of computing something different. Without such a call it uses the
record's defaults and states them.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from .. import decision, montecarlo, sensitivity, value
from ..calls import state_digest
from ..case.extras import LOSS_TABLE
from ..display import esc, fmt_number, fmt_probability, table_html
from ..engine import update
from ..errors import CaseError
from ..flags import map_step_decibans
from ..measures import format_lr
from .collect import SealedCase, ShownCall

SIMULATION_DRAWS = 20_000
SEED = 20261201
"""Seed and draws of a record's Monte Carlo run when the notebook shows none."""
TOP_MOVERS = 3


@dataclass(frozen=True)
class Part:
    """One analysis as the record shows it: a heading, its HTML, and where its settings
    came from (``origin``, one sentence)."""

    key: str
    heading: str
    html: str
    origin: str = ""


@dataclass(frozen=True)
class Without:
    """The conclusion with and without one group of items that share a source."""

    group: str
    items: tuple[str, ...]
    map_with: str
    p_with: float
    map_without: str
    p_without: float

    @property
    def changes(self) -> bool:
        return self.map_with != self.map_without


@dataclass
class CaseAnalyses:
    """Everything the record computes about one case beyond its ledgers."""

    item: SealedCase
    robustness: Any = None
    break_even: Any = None
    simulation: Any = None
    simulation_quoted: bool = False
    ranking: Any = None
    ranking_quoted: bool = False
    decision: Any = None
    without: list[Without] = field(default_factory=list)
    movers: list[tuple[str, float]] = field(default_factory=list)
    counts: dict[str, int] = field(default_factory=dict)
    parts: list[Part] = field(default_factory=list)

    @property
    def units(self) -> str:
        sec = self.item.case.extras.get(LOSS_TABLE) or {}
        return str(sec.get("units") or "").strip()


def _not_computed(exc: Exception) -> str:
    return f'<p class="bl-error">Not computed: {esc(exc)}</p>'


def _call_origin(shown: ShownCall, case: Any) -> tuple[str, bool]:
    """(sentence, same state) for a call taken from the notebook."""
    same = shown.call.state == state_digest(case)
    where = f"cell {shown.cell + 1}"
    if same:
        return (f"Run with the settings of the analyst's call in {where} "
                f"({shown.call.describe()}), on the same state of the case, so the figures "
                "are the ones that cell shows.", True)
    return (f"Run with the settings of the analyst's call in {where} "
            f"({shown.call.describe()}). That call ran on an earlier state of the case (the "
            "case changed after it), so its figures may differ from these, which are for "
            "the sealed state.", False)


def _quote(shown: ShownCall, exc: Exception) -> str:
    return (f"The record could not repeat the analyst's call in cell {shown.cell + 1} on the "
            f"sealed state of the case ({exc}); it quotes that cell's result instead of "
            "computing a different one.")


# --------------------------------------------------------------------------- each analysis


def _robustness(a: CaseAnalyses) -> None:
    item = a.item
    if len(item.ledgers) < 2:
        return
    a.robustness = sensitivity.robustness(item.case, ledgers=item.ledgers)
    frame = a.robustness.to_frame()
    hyps = [c for c in frame.columns if c != "map"]
    rows = [[s, row["map"], *[fmt_probability(row[h]) for h in hyps]]
            for s, row in frame.iterrows()]
    a.parts.append(Part("robustness", "Robustness across prior scenarios",
                        f"<p>{esc(a.robustness.verdict)}.</p>"
                        + table_html(["scenario", "MAP", *hyps], rows)))


def _break_even(a: CaseAnalyses) -> None:
    case, ledger = a.item.case, a.item.ledger
    if len(case.hypotheses) < 2 or ledger.stopped_at is not None:
        return
    try:
        a.break_even = sensitivity.break_even_prior(case, ledger.map_hypothesis)
    except CaseError as exc:
        a.parts.append(Part("break-even", "Break-even prior", _not_computed(exc)))
        return
    a.parts.append(Part("break-even", "Break-even prior of the MAP hypothesis against its "
                        "strongest rival", f"<p>{esc(a.break_even.summary)}.</p>"))


def _simulation(a: CaseAnalyses) -> None:
    case = a.item.case
    if "uncertainty" not in case.extras:
        return
    shown = a.item.calls.get("simulate")
    if shown is None:
        settings: dict[str, Any] = {"draws": SIMULATION_DRAWS, "seed": SEED}
        origin = (f"The notebook shows no simulation of this case, so the record ran one with "
                  f"its defaults: seed {SEED}, {SIMULATION_DRAWS:,} draws.")
    else:
        settings = dict(shown.call.settings)
        origin, _ = _call_origin(shown, case)
    try:
        a.simulation = montecarlo.simulate(case, progress=False, **settings)
    except (CaseError, TypeError) as exc:
        if shown is None:
            a.parts.append(Part("simulation", "Monte Carlo over uncertain inputs",
                                _not_computed(exc)))
            return
        a.simulation_quoted = True
        a.parts.append(Part("simulation", "Monte Carlo over uncertain inputs (quoted)",
                            shown.html, _quote(shown, exc)))
        return
    a.parts.append(Part("simulation", "Monte Carlo over uncertain inputs",
                        a.simulation._repr_html_(), origin))


def _ranking_table(frame: Any, units: str) -> str:
    unit = f" ({units})" if units else " (unit not given)"
    money = "evsi" in frame.columns
    header = ["rank", "evidence", "expected information (bits)", "P(MAP changes)",
              "most likely state"]
    if money:
        header += [f"EVSI{unit}", f"cost{unit}", f"net value{unit}"]
    header.append("why")
    rows = []
    for name, r in frame.iterrows():
        row = [int(r["rank"]), name, fmt_number(r["expected_entropy_reduction"], 3),
               fmt_probability(r["p_map_changes"]),
               f"{r['most_likely_state']} ({fmt_probability(r['p_most_likely'])})"]
        if money:
            row += [fmt_number(r["evsi"]), fmt_number(r["cost"]), fmt_number(r["net_value"])]
        row.append(r["reason"])
        rows.append(row)
    return table_html(header, rows)


def _ranking(a: CaseAnalyses) -> None:
    case = a.item.case
    if not any(not ev.is_observed for ev in case.evidence.values()):
        return
    shown = a.item.calls.get("rank_next_evidence")
    if shown is None:
        settings: dict[str, Any] = {}
        origin = ("The notebook shows no ranking of this case, so the record ranked every "
                  "pending item by its defaults (EVSI with the case's loss table, else "
                  "expected information), with no cost of examining an item.")
    else:
        settings = dict(shown.call.settings)
        origin, _ = _call_origin(shown, case)
    try:
        a.ranking = value.rank_next_evidence(case, **settings)
    except (CaseError, TypeError) as exc:
        if shown is None:
            a.parts.append(Part("ranking", "Value of information", _not_computed(exc)))
            return
        a.ranking_quoted = True
        a.parts.append(Part("ranking", "Value of information (quoted)", shown.html,
                            _quote(shown, exc)))
        return
    a.parts.append(Part("ranking", "Value of information: which pending item to examine next",
                        _ranking_table(a.ranking, a.units), origin))


def decision_table_html(frame: Any, units: str) -> str:
    """The decision summary (one row per scenario) with its unit in every header."""
    unit = f" ({units})" if units else " (unit not given)"
    actions = [c for c in frame.columns if c not in ("bayes_action", "measure", "active")]
    measure = frame["measure"].iloc[0] if len(frame) else "expected loss"
    rows = [[s + (" (active)" if r["active"] else ""), *[fmt_number(r[x]) for x in actions],
             r["bayes_action"]] for s, r in frame.iterrows()]
    return (f"<p>{esc(measure).capitalize()} of each action{esc(unit)} under the posterior of "
            "each prior scenario; the best action minimises expected loss (maximises expected "
            "payoff).</p>" + table_html(["scenario", *actions, "best action"], rows))


def loss_table_html(case: Any) -> str:
    """The stored loss (or payoff) table as a table: actions x hypotheses, with its unit and
    source."""
    sec = case.extras.get(LOSS_TABLE)
    if not sec:
        return ""
    hyps = case.hypothesis_names
    units = str(sec.get("units") or "").strip() or "unit not given"
    rows = [[a, *[fmt_number(v.get(h, float("nan"))) for h in hyps]]
            for a, v in sec["table"].items()]
    src = sec.get("source") or {}
    where = src.get("where") or "UNSOURCED"
    text = (f"<p>{esc(sec.get('kind', 'loss')).capitalize()} of each action if each hypothesis "
            f"is true, in {esc(units)}. Source: {esc(where)}"
            + "".join(f"; {k} {esc(src[k])}" for k in ("who", "when", "why") if src.get(k))
            + "." + (f" {esc(sec['note'])}" if sec.get("note") else "") + "</p>")
    return text + table_html(["action", *hyps], rows)


def _decision(a: CaseAnalyses) -> None:
    case = a.item.case
    if LOSS_TABLE not in case.extras:
        return
    try:
        a.decision = decision.decision_summary(case, ledgers=a.item.ledgers)
    except CaseError as exc:
        a.parts.append(Part("decision", "Decision summary", _not_computed(exc)))
        return
    a.parts.append(Part("decision", "Decision summary (expected loss of each action)",
                        decision_table_html(a.decision, a.units)))


def _without(a: CaseAnalyses) -> None:
    case, ledger = a.item.case, a.item.ledger
    groups: dict[str, list[str]] = {}
    for ev in case.evidence.values():
        if ev.shared_source and ev.is_observed:
            groups.setdefault(ev.shared_source, []).append(ev.name)
    p_with = float(ledger.posterior[ledger.map_hypothesis])
    for tag, items in groups.items():
        if len(items) < 2:
            continue
        trial = case.copy()
        for name in items:
            trial.observe(name, None)
        other = update(trial, with_flags=False)
        a.without.append(Without(tag, tuple(items), ledger.map_hypothesis, p_with,
                                 other.map_hypothesis,
                                 float(other.posterior[other.map_hypothesis])))


def _movers(a: CaseAnalyses) -> None:
    ledger = a.item.ledger
    weights = map_step_decibans(ledger)
    steps = list(ledger.evidence_steps)[:len(weights)]
    order = sorted(range(len(steps)), key=lambda i: -abs(float(weights[i])))
    a.movers = [(steps[i], float(weights[i])) for i in order[:TOP_MOVERS]]


def _counts(a: CaseAnalyses) -> None:
    case, ledger = a.item.case, a.item.ledger
    prior, post = case.prior_array(), ledger.posterior_values
    n_numbers = len(case.hypotheses)
    unsourced = sum(1 for h in case.hypotheses.values() if not h.source.is_sourced)
    for ev in case.evidence.values():
        for s in ev.states:
            for h in ev.hypotheses:
                n_numbers += 1
                unsourced += not ev.source_of(s, h).is_sourced
    for sc in case.scenarios.values():
        n_numbers += len(case.hypotheses)
        unsourced += 0 if sc.source.is_sourced else len(case.hypotheses)
    a.counts = {"zero priors": int((prior == 0).sum()),
                "eliminated hypotheses": int(((prior > 0) & (post == 0)).sum()),
                "impossible evidence": int(ledger.stopped_at is not None),
                "unsourced numbers": unsourced, "numbers": n_numbers}
    a.counts.update({f"flag {code}": n for code, n in
                     Counter(f.code for f in ledger.flags).items()})


def analyse(item: SealedCase) -> CaseAnalyses:
    """Run every analysis the record shows for one sealed case."""
    a = CaseAnalyses(item)
    for step in (_robustness, _break_even, _simulation, _ranking, _decision, _without,
                 _movers, _counts):
        try:
            step(a)
        except Exception as exc:  # noted in the record, not fatal: the rest of it stands
            a.parts.append(Part(step.__name__.strip("_"), f"{step.__name__.strip('_')} "
                                "(not computed)", f'<p class="bl-error">Not computed: '
                                f"{esc(type(exc).__name__)}: {esc(exc)}</p>"))
    return a


def movers_text(a: CaseAnalyses) -> list[str]:
    """One line per item that moved belief most: its weight for or against the MAP."""
    out = []
    target = a.item.ledger.map_hypothesis
    for step, db in a.movers:
        word = "for" if db > 0 else "against"
        out.append(f"'{step}': {db:+.1f} decibans ({format_lr(10 ** (db / 10))}) {word} "
                   f"'{target}' against the rest")
    return out


def as_mapping(a: CaseAnalyses) -> Mapping[str, Any]:
    """The figures of the summary as plain values (for tests and the text view)."""
    ledger = a.item.ledger
    return {"map": ledger.map_hypothesis,
            "p_map": float(ledger.posterior[ledger.map_hypothesis]),
            "ml": ledger.ml_hypothesis, "movers": list(a.movers), "counts": dict(a.counts),
            "without": [w.__dict__ for w in a.without]}


__all__ = ["analyse", "CaseAnalyses", "Part", "Without", "movers_text", "decision_table_html",
           "loss_table_html", "SEED", "SIMULATION_DRAWS"]

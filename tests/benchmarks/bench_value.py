"""Benchmarks for value of information and decisions (issue 4).

The case is random and invented for timing only: 20 hypotheses, 10 observed
and 30 pending evidence items of three states, and a loss table of 5
actions. ``rank_next_evidence`` is timed end to end (it runs the update,
stacks the pending tables and scores every item at once); the same run times
a plain per-item Python loop over the same arrays for a ratio, and the
vectorised kernel alone.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from _timing import best_time

import beliefledger as bl
from beliefledger import decision, value

N_HYP, N_OBS, N_PENDING, N_STATES, N_ACTIONS = 20, 10, 30, 3, 5


def make_case(seed: int = 11, dependent: bool = False) -> tuple[bl.Case, pd.DataFrame]:
    """A random case (invented numbers) and a random loss table."""
    rng = np.random.default_rng(seed)
    hyps = [f"H{i:02d}" for i in range(N_HYP - 1)] + ["Other"]
    case = bl.Case("benchmark (random, invented)", hypotheses=dict(zip(
        hyps, rng.dirichlet(np.full(N_HYP, 5.0)), strict=True)), normalize=True)
    states = [f"s{k}" for k in range(N_STATES)]
    for e in range(N_OBS + N_PENDING):
        cols = rng.dirichlet(np.full(N_STATES, 2.0), size=N_HYP)
        obs = states[int(rng.integers(N_STATES))] if e < N_OBS else None
        case.add_evidence(f"E{e:02d}", states=states,
                          likelihoods={h: list(cols[j]) for j, h in enumerate(hyps)},
                          observed=obs)
    if dependent:  # every pending item conditional on an observed one
        for e in range(N_PENDING):
            parent = case.evidence[f"E{e % N_OBS:02d}"]
            tabs = {ps: {h: list(rng.dirichlet(np.full(N_STATES, 2.0))) for h in hyps}
                    for ps in parent.states}
            case.add_conditional_evidence(f"C{e:02d}", given=parent.name, states=states,
                                          likelihoods=tabs)
    loss = pd.DataFrame(rng.uniform(0, 100, size=(N_ACTIONS, N_HYP)),
                        index=[f"action {a}" for a in range(N_ACTIONS)], columns=hyps)
    return case, loss




def _loop(case: bl.Case, loss: pd.DataFrame) -> None:
    """The same scores item by item, state by state, in plain Python and numpy."""
    p = case.update().posterior.to_numpy()
    L = loss.to_numpy()
    now = float(np.min(L @ p))
    for ev in case.evidence.values():
        if ev.observed is not None:
            continue
        after, info = 0.0, 0.0
        for k in range(len(ev.states)):
            joint = ev.table[k] * p
            px = joint.sum()
            post = joint / px
            after += float(np.min(L @ joint))
            nz = post > 0
            info -= px * float(-np.sum(post[nz] * np.log2(post[nz])))
        _ = (now - after, info)


def bench_rank_next_evidence() -> list[dict]:
    case, loss = make_case()
    value.rank_next_evidence(case, loss=loss)  # warm up lazy imports
    t_rank = best_time(lambda: value.rank_next_evidence(case, loss=loss), 30)
    t_info = best_time(lambda: value.rank_next_evidence(case), 30)
    t_loop = best_time(lambda: _loop(case, loss), 30)
    t_update = best_time(lambda: case.update(), 30)
    names = [e.name for e in case.evidence.values() if e.observed is None]
    lik = value._stack(case, names)
    p = case.update().posterior.to_numpy()
    L = loss.to_numpy()
    t_kernel = best_time(lambda: value._voi(lik, p, L), 200)
    dep, dloss = make_case(dependent=True)
    t_dep = best_time(lambda: value.rank_next_evidence(dep, loss=dloss), 10)
    return [
        {"name": "rank_next_evidence, 30 pending items x 20 hyp, loss table of 5 actions",
         "value": t_rank * 1e3, "unit": "ms", "target": "< 20 ms", "ok": t_rank < 0.020,
         "note": f"of which the update with flags {t_update * 1e3:.2f} ms; per-item loop "
                 f"{t_loop * 1e3:.2f} ms ({t_loop / t_rank:.1f}x the whole ranking)"},
        {"name": "rank_next_evidence, same case, no loss table", "value": t_info * 1e3,
         "unit": "ms", "target": "< 20 ms", "ok": t_info < 0.020, "note": ""},
        {"name": "VOI kernel alone (30 x 3 x 20 array, 5 actions)", "value": t_kernel * 1e6,
         "unit": "us", "target": None, "ok": None, "note": "one array pass for all items"},
        {"name": "rank_next_evidence, 30 pending conditional items (parents observed)",
         "value": t_dep * 1e3, "unit": "ms", "target": None, "ok": None,
         "note": "figure only; each item's table is conditioned on its parent"},
    ]


def bench_decisions() -> list[dict]:
    case, loss = make_case()
    decision.set_loss_table(case, loss)
    t_sum = best_time(lambda: decision.decision_summary(case), 20)
    t_thr = best_time(lambda: decision.decision_threshold(case), 20)
    return [
        {"name": "decision_summary, 20 hyp, 5 actions, 1 scenario", "value": t_sum * 1e3,
         "unit": "ms", "target": None, "ok": None, "note": ""},
        {"name": "decision_threshold, 5 actions", "value": t_thr * 1e3, "unit": "ms",
         "target": None, "ok": None, "note": ""},
    ]

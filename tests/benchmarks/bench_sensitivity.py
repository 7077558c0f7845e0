"""Benchmarks for sensitivity analysis and Monte Carlo (issue 3).

The case is random and invented for timing only: 20 hypotheses, 30 observed
three-state evidence items. Monte Carlo is timed with a Dirichlet on the
priors and on (a) every observed likelihood column (600), (b) the catch-all's
column of each item (30), (c) no column; each timing includes the summary
table (``to_frame()``). For (a) the same run also times ``method='direct'``
(every entry drawn) and numpy drawing its 1.2e8 Gamma variates alone.
"""

from __future__ import annotations

import time

import numpy as np
from _timing import best_time

import beliefledger as bl

N_HYP, N_EV, N_STATES = 20, 30, 3


def make_case(seed: int = 7, columns: str = "all") -> bl.Case:
    """A random case of N_HYP hypotheses and N_EV observed items (invented numbers).

    ``columns``: which observed likelihood columns carry a Dirichlet ("all":
    600; "catch-all": the catch-all's column of each item, 30; "none"). The
    priors carry a Dirichlet unless ``columns`` is "certain".
    """
    rng = np.random.default_rng(seed)
    hyps = [f"H{i:02d}" for i in range(N_HYP - 1)] + ["Other"]
    case = bl.Case("benchmark (random, invented)", hypotheses=dict(zip(
        hyps, rng.dirichlet(np.full(N_HYP, 5.0)), strict=True)), normalize=True)
    states = [f"s{k}" for k in range(N_STATES)]
    for e in range(N_EV):
        cols = rng.dirichlet(np.full(N_STATES, 2.0), size=N_HYP)
        cols = np.clip(cols, 0.01, None)
        cols = cols / cols.sum(axis=1, keepdims=True)
        case.add_evidence(f"E{e:02d}", states=states,
                          likelihoods={h: list(cols[j]) for j, h in enumerate(hyps)},
                          observed=states[int(rng.integers(N_STATES))])
    if columns == "certain":
        return case
    bl.set_prior_uncertainty(case, concentration=30.0)
    chosen = {"all": hyps, "catch-all": ["Other"], "none": []}[columns]
    sec = {"prior": case.extras["uncertainty"]["prior"], "likelihoods": [
        {"evidence": f"E{e:02d}", "hypothesis": h, "kind": "concentration",
         "concentration": float(10 + (e + j) % 40), "method": "benchmark (invented)"}
        for e in range(N_EV) for j, h in enumerate(hyps) if h in chosen]}
    case.set_extra("uncertainty", sec)
    return case




def _gamma_floor(n: int, cells: int) -> float:
    """Seconds numpy needs just to draw the 2 Gamma variates per cell and draw."""
    rng = np.random.default_rng(0)
    buf = np.empty(n)
    t0 = time.perf_counter()
    for i in range(2 * cells):
        rng.standard_gamma(5.0 + i % 7, out=buf)
    return time.perf_counter() - t0


def bench_simulate() -> list[dict]:
    draws = 100_000
    rows = []
    full = make_case(columns="all")
    bl.simulate(full, draws=2_000, seed=1, progress=False)  # warm up imports
    sec = best_time(lambda: bl.simulate(full, draws=draws, seed=1, progress=False).to_frame(), 3)
    res = bl.simulate(full, draws=draws, seed=1, progress=False)
    rows.append({"name": "simulate 100k draws, 20 hyp x 30 items, priors + all 600 observed "
                         "columns uncertain", "value": sec, "unit": "s", "target": "< 1 s",
                 "ok": sec < 1.0,
                 "note": f"default method; hypotheses drawn by {sorted(set(res.methods.values()))}"
                         "; best of 3"})
    sec_d = best_time(lambda: bl.simulate(full, draws=draws, seed=1, progress=False,
                                      method="direct").to_frame(), 1)
    floor = _gamma_floor(draws, N_HYP * N_EV)
    rows.append({"name": "simulate 100k draws, same case, method='direct'", "value": sec_d,
                 "unit": "s", "target": "", "ok": None,
                 "note": f"every entry drawn (1.2e8 Gamma variates); numpy drawing those "
                         f"variates alone takes {floor:.2f} s here (ratio {sec_d / floor:.2f}); "
                         f"default is {sec_d / sec:.1f}x faster"})
    some = make_case(columns="catch-all")
    sec = best_time(lambda: bl.simulate(some, draws=draws, seed=1, progress=False).to_frame(), 3)
    rows.append({"name": "simulate 100k draws, 20 hyp x 30 items, priors + 30 columns "
                         "uncertain", "value": sec, "unit": "s", "target": "< 1 s",
                 "ok": sec < 1.0, "note": "the catch-all's column of every item; best of 3"})
    pri = make_case(columns="none")
    sec = best_time(lambda: bl.simulate(pri, draws=draws, seed=1, progress=False).to_frame(), 3)
    rows.append({"name": "simulate 100k draws, 20 hyp x 30 items, priors uncertain",
                 "value": sec, "unit": "s", "target": "< 1 s", "ok": sec < 1.0,
                 "note": "Dirichlet on the priors only; best of 3"})
    return rows


def bench_sweep() -> list[dict]:
    case = make_case(columns="certain")
    bl.sweep_prior(case, "H03", points=200)
    sec = best_time(lambda: bl.sweep_prior(case, "H03", points=200), 20)
    sec_l = best_time(lambda: bl.sweep_likelihood(case, "E05", "H03", points=200), 20)
    sec_t = best_time(lambda: bl.tornado(case), 5)
    return [
        {"name": "sweep_prior 200 points, 20 hyp x 30 items", "value": sec * 1e3, "unit": "ms",
         "target": "< 50 ms", "ok": sec < 0.05, "note": "best of 20"},
        {"name": "sweep_likelihood 200 points, 20 hyp x 30 items", "value": sec_l * 1e3,
         "unit": "ms", "target": "< 50 ms", "ok": sec_l < 0.05, "note": "best of 20"},
        {"name": "tornado, 20 hyp x 30 items (620 inputs)", "value": sec_t * 1e3, "unit": "ms",
         "target": "", "ok": None, "note": "best of 5; figure only"},
    ]

"""Benchmarks for sensitivity analysis and Monte Carlo (issue 3).

The case is random and invented for timing only: 20 hypotheses, 30 observed
three-state evidence items, a Dirichlet on the priors and on every observed
likelihood column (600 uncertain columns).
"""

from __future__ import annotations

import time

import numpy as np

import beliefledger as bl

N_HYP, N_EV, N_STATES = 20, 30, 3


def make_case(seed: int = 7, uncertain: bool = True) -> bl.Case:
    """A random case of N_HYP hypotheses and N_EV observed items (invented numbers)."""
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
    if uncertain:
        bl.set_prior_uncertainty(case, concentration=30.0)
        sec = {"prior": case.extras["uncertainty"]["prior"], "likelihoods": [
            {"evidence": f"E{e:02d}", "hypothesis": h, "kind": "concentration",
             "concentration": float(10 + (e + j) % 40), "method": "benchmark (invented)"}
            for e in range(N_EV) for j, h in enumerate(hyps)]}
        case.set_extra("uncertainty", sec)
    return case


def _best(fn, repeat: int) -> float:
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def bench_simulate() -> list[dict]:
    case = make_case()
    bl.simulate(case, draws=2_000, seed=1, progress=False)  # warm up imports
    sec = _best(lambda: bl.simulate(case, draws=100_000, seed=1, progress=False), 2)
    prior_only = make_case(uncertain=False)
    bl.set_prior_uncertainty(prior_only, concentration=30.0)
    sec_p = _best(lambda: bl.simulate(prior_only, draws=100_000, seed=1, progress=False), 3)
    return [
        {"name": "simulate 100k draws, 20 hyp x 30 items, all 600 observed columns + priors "
                 "uncertain", "value": sec, "unit": "s", "target": "< 1 s", "ok": sec < 1.0,
         "note": f"{sec / 100_000 * 1e6:.1f} us per draw; 1.2e8 exact Gamma variates"},
        {"name": "simulate 100k draws, 20 hyp x 30 items, priors uncertain only",
         "value": sec_p, "unit": "s", "target": "< 1 s", "ok": sec_p < 1.0,
         "note": "same case, Dirichlet on the priors only"},
    ]


def bench_sweep() -> list[dict]:
    case = make_case(uncertain=False)
    bl.sweep_prior(case, "H03", points=200)
    sec = _best(lambda: bl.sweep_prior(case, "H03", points=200), 20)
    sec_l = _best(lambda: bl.sweep_likelihood(case, "E05", "H03", points=200), 20)
    return [
        {"name": "sweep_prior 200 points, 20 hyp x 30 items", "value": sec * 1e3, "unit": "ms",
         "target": "< 50 ms", "ok": sec < 0.05, "note": "best of 20"},
        {"name": "sweep_likelihood 200 points, 20 hyp x 30 items", "value": sec_l * 1e3,
         "unit": "ms", "target": "< 50 ms", "ok": sec_l < 0.05, "note": "best of 20"},
    ]

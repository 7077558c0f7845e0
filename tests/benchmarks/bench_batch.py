"""Batch scoring speed and memory (issue 7).

The model and the observation rows are random and invented for timing only: 10
hypotheses, 30 three-state evidence items, each cell of the observation table
one of the three states or missing (a quarter of the cells). Observation
columns are categorical (pandas' dtype for labelled states); a figure for
plain string columns is given beside it.

The per-row baselines are timed on a sample of rows and scaled to the full
table, in the same run:

- the single-case API a user would reach for without ``score_rows``: per row,
  ``case.observe(...)`` for each item, then ``case.update()``;
- a hand-written per-row loop over precomputed log tables (numpy adds, one
  log-sum-exp per row): the fastest plain Python loop we could write, so the
  ratio against it is the honest floor of the speed-up.

The memory figure runs in a child process (so its peak RSS is its own):
10,000,000 observation rows scored in chunks by one ``score_rows`` call; the
input and the result table themselves take about 1.4 GB of it.
"""

from __future__ import annotations

import json
import math
import os
import subprocess
import sys
import time

import numpy as np
import pandas as pd
from _timing import median_time

import beliefledger as bl
from beliefledger.batch import score_rows

N_HYP, N_EV, N_STATES = 10, 30, 3
N_ROWS = 1_000_000
N_MEMORY = 10_000_000
STATES = ["low", "mid", "high"]


def make_model(seed: int = 5) -> bl.Case:
    rng = np.random.default_rng(seed)
    hyps = [f"H{i}" for i in range(N_HYP - 1)] + ["Other"]
    case = bl.Case("batch benchmark (random, invented)",
                   hypotheses=dict(zip(hyps, rng.dirichlet(np.full(N_HYP, 3.0)), strict=True)),
                   normalize=True)
    for k in range(N_EV):
        t = rng.dirichlet(np.full(N_STATES, 2.0), size=N_HYP)  # rows: hypotheses
        case.add_evidence(f"E{k:02d}", states=STATES,
                          likelihoods={h: list(t[j]) for j, h in enumerate(hyps)})
    return case


def make_frame(n: int, seed: int = 6) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    cols = {}
    for k in range(N_EV):
        codes = rng.integers(-1, N_STATES, size=n, dtype=np.int8)  # -1: not observed
        cols[f"E{k:02d}"] = pd.Categorical.from_codes(codes, categories=STATES)
    return pd.DataFrame(cols, copy=False)




def _api_loop(case: bl.Case, frame: pd.DataFrame) -> list[pd.Series]:
    work = case.copy()
    names = list(frame.columns)
    out = []
    for row in frame.itertuples(index=False):
        for name, v in zip(names, row, strict=True):
            work.observe(name, None if pd.isna(v) else v)
        out.append(work.update().posterior)
    return out


def _numpy_loop(case: bl.Case, frame: pd.DataFrame) -> np.ndarray:
    hyps = case.hypothesis_names
    log_prior = np.log(case.priors.to_numpy())
    tables = {name: {s: np.log(ev.table[i]) for i, s in enumerate(ev.states)}
              for name, ev in case.evidence.items()}
    names = list(frame.columns)
    out = np.empty((len(frame), len(hyps)))
    for r, row in enumerate(frame.itertuples(index=False)):
        w = log_prior.copy()
        for name, v in zip(names, row, strict=True):
            if isinstance(v, str):
                w += tables[name][v]
        m = w.max()
        e = np.exp(w - m)
        out[r] = e / e.sum()
    return out


def bench_batch() -> list[dict]:
    case = make_model()
    frame = make_frame(N_ROWS)
    score_rows(case, frame.iloc[:1000])  # warm up
    c0 = time.process_time()
    t = median_time(lambda: score_rows(case, frame), 5)
    cpu = (time.process_time() - c0) / 5  # all threads together
    load = os.getloadavg()[0]
    result = score_rows(case, frame)
    # the baselines, on samples, checked against the batch result before timing counts
    api_n, loop_n = 100, 20_000
    t0 = time.perf_counter()
    api = _api_loop(case, frame.iloc[:api_n])
    api_row = (time.perf_counter() - t0) / api_n
    t0 = time.perf_counter()
    loop = _numpy_loop(case, frame.iloc[:loop_n])
    loop_row = (time.perf_counter() - t0) / loop_n
    hyps = case.hypothesis_names
    np.testing.assert_allclose(np.vstack([s.to_numpy() for s in api]),
                               result[hyps].to_numpy()[:api_n], rtol=1e-12)
    np.testing.assert_allclose(loop, result[hyps].to_numpy()[:loop_n], rtol=1e-9)
    api_ratio = api_row * N_ROWS / t
    loop_ratio = loop_row * N_ROWS / t
    as_str = frame.iloc[:200_000].astype(object)
    t_str = median_time(lambda: score_rows(case, as_str), 3) * N_ROWS / len(as_str)
    return [
        {"name": "batch 1M cases x 30 evidence x 10 hyp", "value": t, "unit": "s",
         "target": "< 1 s", "ok": t < 1.0,
         "note": f"categorical columns, {N_ROWS / t / 1e6:.2f} M cases/s; median of 5; "
                 f"CPU {cpu:.2f} s over all threads; load average {load:.1f} on "
                 f"{os.cpu_count()} CPUs"},
        {"name": "batch speed-up vs per-row case.update() loop", "value": api_ratio,
         "unit": "x", "target": ">= 1000x", "ok": api_ratio >= 1000,
         "note": f"loop timed on {api_n} rows ({api_row * 1e3:.2f} ms/row) and scaled to "
                 f"{N_ROWS:,}: {api_row * N_ROWS / 60:.0f} min"},
        {"name": "batch speed-up vs hand-written per-row numpy loop", "value": loop_ratio,
         "unit": "x", "target": "", "ok": None,
         "note": f"precomputed log tables, one log-sum-exp per row; timed on {loop_n:,} rows "
                 f"({loop_row * 1e6:.1f} us/row); the floor of the speed-up, figure only"},
        {"name": "batch 1M x 30 x 10, string columns", "value": t_str, "unit": "s",
         "target": "", "ok": None,
         "note": "object columns of labels (hash look-ups per cell); timed on 200,000 rows "
                 "and scaled; convert to categorical for the fast path"},
    ]


def bench_batch_memory() -> list[dict]:
    out = subprocess.run([sys.executable, __file__, "--memory-child", str(N_MEMORY)],
                         capture_output=True, text=True, timeout=900)
    if out.returncode != 0:
        raise RuntimeError(out.stderr[-2000:])
    r = json.loads(out.stdout.strip().splitlines()[-1])
    peak_gb = r["peak_kb"] / 2**20
    return [
        {"name": "batch memory, 10M cases x 30 x 10", "value": peak_gb, "unit": "GB",
         "target": "peak RSS < 2 GB", "ok": peak_gb < 2.0,
         "note": f"child process peak RSS; input {r['input_bytes'] / 2**30:.2f} GB + result "
                 f"{r['output_bytes'] / 2**30:.2f} GB; RSS before scoring "
                 f"{r['before_kb'] / 2**20:.2f} GB; scored in {r['seconds']:.1f} s"},
    ]


def _memory_child(n: int) -> None:
    import resource

    case = make_model()
    frame = make_frame(n)
    before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    t0 = time.perf_counter()
    res = score_rows(case, frame)
    sec = time.perf_counter() - t0
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss  # KB on Linux
    assert len(res) == n and math.isfinite(float(res["log_evidence"].sum()))
    print(json.dumps({"peak_kb": peak, "before_kb": before, "seconds": sec,
                      "input_bytes": int(frame.memory_usage(deep=True).sum()),
                      "output_bytes": int(res.memory_usage(deep=True).sum())}))


if __name__ == "__main__" and len(sys.argv) == 3 and sys.argv[1] == "--memory-child":
    _memory_child(int(sys.argv[2]))

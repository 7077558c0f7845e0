"""Engine speed against the memory-bandwidth limit (issue 7).

The case is random and invented for timing only: 1,000 hypotheses, 1,000
observed two-state evidence items. The reference is the time numpy takes to
copy the same bytes once: the 1,000 x 1,000 float64 matrix of observed
likelihoods (8 MB). Two engine figures are reported: the numeric core
(``update(case, with_flags=False)``: log-likelihoods, running sums,
normalization, the Ledger frames) and the whole ``case.update()`` including the
flags. A third figure, one ``np.log`` plus one ``np.exp`` over the same
array, is the floor any log-space engine pays for its two transcendental passes.
"""

from __future__ import annotations

import statistics

import numpy as np
from _timing import median_time

import beliefledger as bl
from beliefledger.engine import update

N_HYP = N_EV = 1000


def make_case(seed: int = 11) -> bl.Case:
    """The random case: one item built through the API, the rest cloned from its
    dict form with fresh numbers (``Case.from_dict`` validates the whole case once,
    much faster than 1,000 separate edits of a 1,000-hypothesis case)."""
    rng = np.random.default_rng(seed)
    hyps = [f"H{i:04d}" for i in range(N_HYP - 1)] + ["Other"]
    seed_case = bl.Case("engine benchmark (random, invented)",
                        hypotheses=dict(zip(hyps, rng.dirichlet(np.ones(N_HYP)), strict=True)),
                        normalize=True)
    seed_case.add_evidence("E0000", states=["seen", "not seen"],
                           likelihoods={h: [0.5, 0.5] for h in hyps}, observed="seen")
    data = seed_case.to_dict()
    template = data["evidence"][0]
    items = []
    for k in range(N_EV):
        a = rng.uniform(0.05, 0.95, size=N_HYP)
        items.append({**template, "name": f"E{k:04d}",
                      "likelihoods": {h: [float(x), 1 - float(x)]
                                      for h, x in zip(hyps, a, strict=True)}})
    data["evidence"] = items
    return bl.Case.from_dict(data)




def bench_engine() -> list[dict]:
    case = make_case()
    lik = np.vstack([s[2] for s in case.observed_steps()])
    assert lik.shape == (N_EV, N_HYP)
    update(case, with_flags=False)  # warm up
    # interleave the figures so a busy machine slows all of them alike
    copy_t, core_t, floor_t = [], [], []
    for _ in range(9):
        copy_t.append(median_time(lambda: lik.copy(), 5))
        core_t.append(median_time(lambda: update(case, with_flags=False), 1))
        floor_t.append(median_time(lambda: np.exp(np.log(lik)), 1))
    full = median_time(case.update, 3)
    c, core, floor = (statistics.median(x) for x in (copy_t, core_t, floor_t))
    return [
        {"name": "engine core 1000 hyp x 1000 evidence", "value": core * 1e3, "unit": "ms",
         "target": "<= 3x numpy copy of the 8 MB", "ok": core <= 3 * c,
         "note": f"ratio {core / c:.1f}x copy ({c * 1e3:.2f} ms); {core / floor:.2f}x one log "
                 f"+ one exp over the same array ({floor * 1e3:.1f} ms = {floor / c:.1f}x copy); "
                 "update(with_flags=False), median of 9"},
        {"name": "engine full case.update() 1000 x 1000", "value": full * 1e3, "unit": "ms",
         "target": "<= 3x numpy copy of the 8 MB", "ok": full <= 3 * c,
         "note": f"ratio {full / c:.1f}x copy; includes the flags "
                 f"({(full - core) * 1e3:.0f} ms); median of 3"},
    ]


def bench_engine_interactive() -> list[dict]:
    case = bl.example_case()
    case.update()
    t = median_time(case.update, 51)
    # Nielsen (1993), Usability Engineering, ch. 5: 0.1 s is about the limit for a
    # response to feel instantaneous.
    return [{"name": "example case update (with flags)", "value": t * 1e3, "unit": "ms",
             "target": "< 100 ms", "ok": t < 0.1,
             "note": "the built-in example case; median of 51; what each edit in a notebook "
                     "view recomputes"}]

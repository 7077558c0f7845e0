"""Workbench responsiveness: one dropdown change in the kernel, and the chart repaint in a
real browser.

Kernel figures are measured without a browser by setting widget values, as a
user's change arrives from the front end. The browser figure runs the
offline browser harness (tests/browser/harness.py) in a loopback-only
network namespace and times, in the page, the change event of the
prior-scenario dropdown to the replacement of the waterfall chart's SVG.
The benchmark cases are invented random cases (seeded), for timing only.
"""

from __future__ import annotations

import json
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

import beliefledger as bl

ROOT = Path(__file__).resolve().parents[2]


def synthetic_case(n_h: int = 20, n_e: int = 30, n_scenarios: int = 3, seed: int = 7) -> bl.Case:
    """A random case with ``n_h`` hypotheses, ``n_e`` observed 3-state items and scenarios."""
    rng = np.random.default_rng(seed)
    names = [f"cause {i:03d}" for i in range(n_h - 1)] + ["other cause"]
    case = bl.Case(f"benchmark {n_h}x{n_e} (invented)",
                   hypotheses=dict(zip(names, rng.dirichlet(np.ones(n_h) * 2).tolist(),
                                       strict=True)),
                   normalize=True, source="invented for the benchmark")
    for k in range(n_e):
        tab = rng.dirichlet(np.ones(3), size=n_h)
        case.add_evidence(f"item {k:03d}", states=["low", "mid", "high"],
                          likelihoods={h: tab[i].tolist() for i, h in enumerate(names)},
                          observed=["low", "mid", "high"][k % 3], normalize=True,
                          source="invented for the benchmark")
    for s in range(n_scenarios):
        case.add_scenario(f"scenario {s}", dict(zip(names, rng.dirichlet(
            np.ones(n_h)).tolist(), strict=True)), normalize=True, source="invented")
    return case


CPU = {}


def _median_ms(fn, n: int) -> tuple[float, float]:
    """Median and worst wall time in ms; the median CPU time goes to CPU[fn.__name__]."""
    times, cpu = [], []
    for i in range(n):
        t0, c0 = time.perf_counter(), time.process_time()
        fn(i)
        times.append((time.perf_counter() - t0) * 1000)
        cpu.append((time.process_time() - c0) * 1000)
    CPU[fn.__name__] = statistics.median(cpu)
    return statistics.median(times), max(times)


def _load() -> str:
    try:
        return f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs"
    except OSError:
        return "load unknown"


def bench_kernel_dropdown_change():
    """20 x 30 case: a scenario or observed-state change -> ledger, chart data, views."""
    case = synthetic_case()
    wb = bl.Workbench(case)
    names = case.scenario_names
    recomputes = wb.recomputes

    def scenario_change(i):
        now = names.index(case.active_scenario)
        wb.scenarios.dropdown.value = names[(now + 1) % len(names)]

    scenario_change(0)  # warm
    full, worst = _median_ms(scenario_change, 40)
    assert wb.recomputes == recomputes + 41, "one change must cause exactly one recompute"

    # the part the target names: recomputed ledger plus refreshed chart data, measured
    # on a bare feed whose one subscriber rebuilds the three charts' tables
    from beliefledger import chartdata
    from beliefledger.widgets._base import LedgerFeed

    bare = synthetic_case()
    feed = LedgerFeed(bare)

    def tables(ledger):
        chartdata.waterfall_data(ledger)
        chartdata.probability_path_data(ledger)
        chartdata.prior_posterior_data(ledger, feed.scenario_ledgers, max_bars=15)

    feed.subscribe(tables)
    bare_names = bare.scenario_names

    def ledger_and_data(i):
        now = bare_names.index(bare.active_scenario)
        bare.use_scenario(bare_names[(now + 1) % len(bare_names)])

    ledger_and_data(0)
    core, _ = _median_ms(ledger_and_data, 40)
    states = ["low", "mid", "high", None]

    def observe_data(i):
        bare.observe("item 029", states[i % 4])

    core_obs, _ = _median_ms(observe_data, 20)
    wb.evidence.select("item 029")
    states = ["low", "mid", "high", ""]  # "" is the editor's "not yet observed"

    def observe_change(i):
        wb.evidence.observed.value = states[i % 4]

    obs, _ = _median_ms(observe_change, 40)
    return [
        {"name": "kernel: scenario dropdown -> ledger + chart data (20x30)", "value": core,
         "unit": "ms", "target": "< 30 ms median", "ok": core < 30,
         "note": f"CPU {CPU['ledger_and_data']:.1f} ms ({_load()}); flags for the new "
                 "scenario and the three charts' tables; an edit that changes numbers (engine "
                 f"run per scenario + tables) takes {core_obs:.1f} ms, CPU "
                 f"{CPU['observe_data']:.1f} ms"},
        {"name": "kernel: scenario dropdown -> every view refreshed (20x30)", "value": full,
         "unit": "ms", "target": "figure", "ok": None,
         "note": f"CPU {CPU['scenario_change']:.1f} ms; live SVG charts, tables, editors; "
                 f"worst {worst:.0f} ms"},
        {"name": "kernel: observed-state dropdown -> every view refreshed (20x30)", "value": obs,
         "unit": "ms", "target": "figure", "ok": None,
         "note": f"CPU {CPU['observe_change']:.1f} ms; one engine run per scenario"},
    ]


def bench_kernel_large_case():
    """200 hypotheses x 500 evidence items: build the workbench, one change."""
    t0 = time.perf_counter()
    case = synthetic_case(200, 500, 2)
    built = time.perf_counter()
    wb = bl.Workbench(case)
    shown = time.perf_counter()
    names = case.scenario_names

    def change(i):
        now = names.index(case.active_scenario)
        wb.scenarios.dropdown.value = names[(now + 1) % len(names)]

    med, _ = _median_ms(change, 5)
    return [
        {"name": "kernel: workbench build (200x500)", "value": (shown - built) * 1000,
         "unit": "ms", "target": "figure", "ok": None,
         "note": f"case construction {(built - t0):.1f} s not included"},
        {"name": "kernel: scenario change, every view refreshed (200x500)", "value": med,
         "unit": "ms", "target": "figure", "ok": None, "note": "paged tables, 8-line path"},
    ]


def bench_browser_repaint():
    """Real JupyterLab + chromium offline: scenario change -> waterfall SVG replaced."""
    sys.path.insert(0, str(ROOT / "tests" / "browser"))
    try:
        from test_workbench_browser import netns_problem, run_offline
    finally:
        sys.path.pop(0)
    problem = netns_problem()
    if problem:
        return [{"name": "browser: chart repaint after a dropdown change", "value": None,
                 "unit": "ms", "target": "< 300 ms median", "ok": None,
                 "note": f"not run: {problem}"}]
    with tempfile.TemporaryDirectory() as tmp:
        r = run_offline(Path(tmp) / "r.json", repaints=9, timeout=240, case="bench")
    if not r.get("ok"):
        return [{"name": "browser: chart repaint after a dropdown change", "value": None,
                 "unit": "ms", "target": "< 300 ms median", "ok": False,
                 "note": f"harness failed: {r.get('error')}"}]
    times = r["repaint_ms"][1:]  # the first repaint warms the page
    med = statistics.median(times)
    return [{"name": "browser: chart repaint after a dropdown change (20x30)", "value": med,
             "unit": "ms", "target": "< 300 ms median", "ok": med < 300,
             "note": f"20x30 invented case, {len(times)} scenario changes after one warm-up, "
                     f"worst {max(times):.0f} ms; JupyterLab + chromium, loopback only"}]


if __name__ == "__main__":
    for f in (bench_kernel_dropdown_change, bench_kernel_large_case):
        print(json.dumps(f(), indent=1))
    if os.environ.get("BL_BENCH_BROWSER"):
        print(json.dumps(bench_browser_repaint(), indent=1))

"""Import cost of beliefledger against its own scientific stack (issue 7).

Each figure is timed inside fresh interpreters (the interpreter's own start-up
excluded), median of several runs, the measurements interleaved so that a
busy machine slows them alike. The target is judged on the process's CPU
time, which waiting for a shared CPU does not inflate; the wall-clock ratio
is given beside it. "Ready to compute" means the import plus the first use of
the core (case model, engine, flags, measures), which is what a notebook's
first cell pays.
"""

from __future__ import annotations

import json
import statistics
import subprocess
import sys

RUNS = 7
HEAVY = ("altair", "ipywidgets", "nbformat", "nbclient", "vl_convert", "scipy.stats",
         "IPython", "dask", "distributed")

BASELINE = "import numpy, pandas, scipy.special"
READY = "import beliefledger as bl; bl.Case; bl.update; bl.diagnose; bl.decibans"


def _timed(code: str) -> tuple[float, float, list[str]]:
    script = (
        "import sys, time, json\n"
        "t0, c0 = time.perf_counter(), time.process_time()\n"
        f"{code}\n"
        "dt, dc = time.perf_counter() - t0, time.process_time() - c0\n"
        f"print(json.dumps([dt, dc, [m for m in {list(HEAVY)!r} if m in sys.modules]]))\n"
    )
    out = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                         timeout=120, check=True)
    dt, dc, heavy = json.loads(out.stdout.strip().splitlines()[-1])
    return dt, dc, heavy


def bench_import() -> list[dict]:
    runs: dict[str, list[tuple[float, float]]] = {"base": [], "ready": [], "bare": []}
    heavy_seen: set[str] = set()
    _timed(BASELINE)  # warm the file cache once
    for _ in range(RUNS):
        for key, code in (("base", BASELINE), ("ready", READY), ("bare", "import beliefledger")):
            dt, dc, heavy = _timed(code)
            runs[key].append((dt, dc))
            heavy_seen.update(heavy)
    wall = {k: statistics.median(x[0] for x in v) for k, v in runs.items()}
    cpu = {k: statistics.median(x[1] for x in v) for k, v in runs.items()}
    ratio = cpu["ready"] / cpu["base"]
    return [
        {"name": "import beliefledger, ready to compute", "value": cpu["ready"] * 1e3,
         "unit": "ms CPU", "target": "<= 1.1x numpy+pandas+scipy.special", "ok": ratio <= 1.1,
         "note": f"CPU ratio {ratio:.2f}x (baseline {cpu['base'] * 1e3:.0f} ms); wall "
                 f"{wall['ready'] * 1e3:.0f} vs {wall['base'] * 1e3:.0f} ms = "
                 f"{wall['ready'] / wall['base']:.2f}x; median of {RUNS} fresh interpreters each"},
        {"name": "import beliefledger (lazy, nothing used)", "value": cpu["bare"] * 1e3,
         "unit": "ms CPU", "target": "", "ok": None,
         "note": f"median of {RUNS}; modules load on first use"},
        {"name": "heavy modules loaded by import and core use", "value": float(len(heavy_seen)),
         "unit": "modules", "target": "0 (no altair, ipywidgets, nbformat, scipy.stats ...)",
         "ok": not heavy_seen,
         "note": ", ".join(sorted(heavy_seen)) or f"none of {', '.join(HEAVY)}"},
    ]

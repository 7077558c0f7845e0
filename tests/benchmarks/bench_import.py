"""Import cost of beliefledger against its own scientific stack (issue 7).

Each figure is timed inside fresh interpreters (the interpreter's own start-up
excluded), median of several runs, the two measurements interleaved so that a
busy machine slows both alike. "Ready to compute" means the import plus the
first use of the core (case model, engine, findings, measures), which is what
a notebook's first cell pays.
"""

from __future__ import annotations

import json
import statistics
import subprocess
import sys

RUNS = 9
HEAVY = ("altair", "ipywidgets", "nbformat", "nbclient", "vl_convert", "scipy.stats",
         "IPython", "dask", "distributed")

BASELINE = "import numpy, pandas, scipy.special"
READY = "import beliefledger as bl; bl.Case; bl.update; bl.diagnose; bl.decibans"


def _timed(code: str) -> tuple[float, list[str]]:
    script = (
        "import sys, time, json\n"
        "t0 = time.perf_counter()\n"
        f"{code}\n"
        "dt = time.perf_counter() - t0\n"
        f"print(json.dumps([dt, [m for m in {list(HEAVY)!r} if m in sys.modules]]))\n"
    )
    out = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                         timeout=120, check=True)
    dt, heavy = json.loads(out.stdout.strip().splitlines()[-1])
    return dt, heavy


def bench_import() -> list[dict]:
    base, ready, bare = [], [], []
    heavy_seen: set[str] = set()
    _timed(BASELINE)  # warm the file cache once
    for _ in range(RUNS):
        base.append(_timed(BASELINE)[0])
        dt, heavy = _timed(READY)
        ready.append(dt)
        heavy_seen.update(heavy)
        dt, heavy = _timed("import beliefledger")
        bare.append(dt)
        heavy_seen.update(heavy)
    b, r, z = (statistics.median(x) for x in (base, ready, bare))
    ratio = r / b
    return [
        {"name": "import beliefledger, ready to compute", "value": r * 1e3, "unit": "ms",
         "target": "<= 1.1x numpy+pandas+scipy.special", "ok": ratio <= 1.1,
         "note": f"ratio {ratio:.2f}x (baseline {b * 1e3:.0f} ms); median of {RUNS} fresh "
                 "interpreters each"},
        {"name": "import beliefledger (lazy, nothing used)", "value": z * 1e3, "unit": "ms",
         "target": "", "ok": None, "note": f"median of {RUNS}; modules load on first use"},
        {"name": "heavy modules loaded by import and core use", "value": float(len(heavy_seen)),
         "unit": "modules", "target": "0 (no altair, ipywidgets, nbformat, scipy.stats ...)",
         "ok": not heavy_seen,
         "note": ", ".join(sorted(heavy_seen)) or f"none of {', '.join(HEAVY)}"},
    ]

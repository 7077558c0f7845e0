"""Benchmarks of the record layer: sealing cost against a plain execution, verify wall time
(of the sealed notebook and of its HTML copy).

Each figure is measured in fresh processes (interpreter start and imports
included), side by side in one run, alternating the two commands so that a
busy machine slows both alike; the median of the repetitions is reported.
"""

from __future__ import annotations

import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPEATS = 3
VERIFY_REPEATS = 5
BIN = Path(sys.executable).parent

PLAIN = """
import sys, nbformat
from nbclient import NotebookClient
src, out, cwd = sys.argv[1:4]
nb = nbformat.read(src, as_version=4)
NotebookClient(nb, timeout=600, kernel_name="python3", resources={"metadata": {"path": cwd}}).execute()
nbformat.write(nb, out)
"""


def _timed(cmd: list[str]) -> float:
    t0 = time.perf_counter()
    subprocess.run(cmd, check=True, capture_output=True, timeout=900)
    return time.perf_counter() - t0


def _demo_copy(folder: Path) -> Path:
    from beliefledger.record.commands import demo_notebook_path

    nb = folder / "demo_investigation.ipynb"
    shutil.copyfile(demo_notebook_path(), nb)
    return nb


def bench_seal_vs_plain_execution() -> list[dict]:
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        nb = _demo_copy(folder)
        plain, sealing = [], []
        for _ in range(REPEATS):
            plain.append(_timed([sys.executable, "-c", PLAIN, str(nb), str(folder / "plain.ipynb"),
                                 str(folder)]))
            sealing.append(_timed([str(BIN / "beliefledger"), "seal", str(nb), "--out",
                                   str(folder / "sealed.ipynb"), "--force"]))
    p, s = statistics.median(plain), statistics.median(sealing)
    ratio = s / p
    return [
        {"name": "plain nbclient execution of the demo", "value": p, "unit": "s",
         "target": None, "ok": None, "note": f"median of {REPEATS}, fresh process"},
        {"name": "seal of the demo (execute, record, HTML)", "value": s, "unit": "s",
         "target": "<= 1.25x plain execution", "ok": ratio <= 1.25,
         "note": f"ratio {ratio:.2f}x (median of {REPEATS}, same run)"},
    ]


FIRST_CHART = """
import time, json
t0 = time.perf_counter()
import beliefledger as bl
case = bl.example_case()
ledger = case.update()
t1 = time.perf_counter()
from beliefledger import figures
svg = figures.waterfall_figure(ledger)._repr_svg_()
t2 = time.perf_counter()
warm = []
for _ in range(20):
    a = time.perf_counter()
    figures.path_figure(ledger)._repr_svg_()
    warm.append(time.perf_counter() - a)
warm.sort()
print(json.dumps({"setup": t1 - t0, "first": t2 - t1, "warm": warm[len(warm) // 2],
                  "bytes": len(svg)}))
"""


def bench_first_chart_in_a_fresh_process() -> list[dict]:
    """The first static chart after ``import beliefledger`` in a fresh interpreter (what the
    first chart cell of a fresh kernel pays), and a chart once warm."""
    import json

    runs = []
    for _ in range(REPEATS):
        out = subprocess.run([sys.executable, "-c", FIRST_CHART], check=True, capture_output=True,
                             text=True, timeout=300)
        runs.append(json.loads(out.stdout.strip().splitlines()[-1]))
    first = statistics.median(r["first"] for r in runs)
    warm = statistics.median(r["warm"] for r in runs)
    return [
        {"name": "first chart in a fresh process (figures import + waterfall SVG)",
         "value": first, "unit": "s", "target": "<= 1 s", "ok": first <= 1.0,
         "note": f"median of {REPEATS}; import beliefledger + example case before it took "
                 f"{statistics.median(r['setup'] for r in runs):.2f} s"},
        {"name": "a static chart once warm (probability path SVG)", "value": warm * 1000,
         "unit": "ms", "target": "<= 100 ms", "ok": warm <= 0.1,
         "note": f"median of 20 per process, median of {REPEATS} processes"},
    ]


def bench_verify_demo_record() -> list[dict]:
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        nb = _demo_copy(folder)
        rec = folder / "sealed.ipynb"
        page = folder / "sealed.html"  # the HTML copy seal writes beside the record
        subprocess.run([str(BIN / "beliefledger"), "seal", str(nb), "--out", str(rec)],
                       check=True, capture_output=True, timeout=900)
        walls, html_walls, floor = [], [], []
        for _ in range(VERIFY_REPEATS):  # alternate with the bare engine import
            walls.append(_timed([str(BIN / "beliefledger"), "verify", str(rec)]))
            html_walls.append(_timed([str(BIN / "beliefledger"), "verify", str(page)]))
            floor.append(_timed([sys.executable, "-c",
                                 "import beliefledger.engine, beliefledger.casefile"]))
        heavy = set()
        for target in (rec, page):
            out = subprocess.run([sys.executable, "-X", "importtime", "-m", "beliefledger.cli",
                                  "verify", str(target)], capture_output=True, text=True,
                                 timeout=300)
            heavy |= {line.split("|")[-1].strip().split(".")[0] for line in out.stderr.splitlines()
                      if line.startswith("import time:")} & {"nbclient", "altair", "nbformat",
                                                              "ipywidgets", "jupyter_client"}
        kb = page.stat().st_size / 1024
    heavy = sorted(heavy)
    wall, html_wall, base = (statistics.median(walls), statistics.median(html_walls),
                             statistics.median(floor))
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    return [
        {"name": "verify of the demo record (wall, interpreter start included)", "value": wall,
         "unit": "s", "target": "< 2 s", "ok": wall < 2.0,
         "note": f"median of {VERIFY_REPEATS}; min {min(walls):.2f} s; load average {load:.1f} "
                 f"on {os.cpu_count()} CPUs"},
        {"name": "verify of the demo HTML copy (record + page redrawn and compared; wall)",
         "value": html_wall, "unit": "s", "target": "<= 2 s", "ok": html_wall <= 2.0,
         "note": f"median of {VERIFY_REPEATS}, alternating with the notebook; min "
                 f"{min(html_walls):.2f} s; {html_wall - wall:+.2f} s on the notebook's verify; "
                 f"page {kb:.0f} KB"},
        {"name": "python -c 'import beliefledger.engine' (the floor verify cannot go below)",
         "value": base, "unit": "s", "target": None, "ok": None,
         "note": f"same run; verify's own work is {max(wall - base, 0):.2f} s on top"},
        {"name": "verify imports nbclient / altair / nbformat", "value": float(len(heavy)),
         "unit": "modules", "target": "0", "ok": not heavy,
         "note": (", ".join(heavy) or "none") + " (python -X importtime; notebook and HTML copy)"},
    ]

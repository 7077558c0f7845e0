"""Benchmarks of the record layer: sealing cost against a plain execution, verify wall time.

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
         "target": "<= 1.5x plain execution", "ok": ratio <= 1.5,
         "note": f"ratio {ratio:.2f}x (median of {REPEATS}, same run)"},
    ]


def bench_verify_demo_record() -> list[dict]:
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        nb = _demo_copy(folder)
        rec = folder / "sealed.ipynb"
        subprocess.run([str(BIN / "beliefledger"), "seal", str(nb), "--out", str(rec)],
                       check=True, capture_output=True, timeout=900)
        walls, floor = [], []
        for _ in range(VERIFY_REPEATS):  # alternate with the bare engine import
            walls.append(_timed([str(BIN / "beliefledger"), "verify", str(rec)]))
            floor.append(_timed([sys.executable, "-c",
                                 "import beliefledger.engine, beliefledger.casefile"]))
        out = subprocess.run([sys.executable, "-X", "importtime", "-m", "beliefledger.cli",
                              "verify", str(rec)], capture_output=True, text=True, timeout=300)
    heavy = sorted({line.split("|")[-1].strip().split(".")[0] for line in out.stderr.splitlines()
                    if line.startswith("import time:")} & {"nbclient", "altair", "nbformat",
                                                            "ipywidgets", "jupyter_client"})
    wall, base = statistics.median(walls), statistics.median(floor)
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    return [
        {"name": "verify of the demo record (wall, interpreter start included)", "value": wall,
         "unit": "s", "target": "< 2 s", "ok": wall < 2.0,
         "note": f"median of {VERIFY_REPEATS}; min {min(walls):.2f} s; load average {load:.1f} "
                 f"on {os.cpu_count()} CPUs"},
        {"name": "python -c 'import beliefledger.engine' (the floor verify cannot go below)",
         "value": base, "unit": "s", "target": None, "ok": None,
         "note": f"same run; verify's own work is {max(wall - base, 0):.2f} s on top"},
        {"name": "verify imports nbclient / altair / nbformat", "value": float(len(heavy)),
         "unit": "modules", "target": "0", "ok": not heavy,
         "note": ", ".join(heavy) or "none (python -X importtime)"},
    ]

"""Run every benchmark in this folder and write the results.

Each ``bench_*.py`` module defines functions named ``bench_*`` that take no
arguments and return a list of result dicts::

    {"name": "engine 1000x1000", "value": 4.2, "unit": "ms",
     "target": "<= 3x numpy copy", "ok": True, "note": "ratio 1.8x"}

``ok`` is True/False when the result has a target, None when it is a figure
only. Results go to ``tests/benchmarks/RESULTS.md`` (quoted in the README)
and ``tests/benchmarks/results.json``. Usage::

    python tests/benchmarks/run.py [-k SUBSTRING]

With ``-k`` only the matching benchmarks run; their rows replace the same rows
of the last full run in the results files.
"""

from __future__ import annotations

import argparse
import importlib.util
import json
import os
import platform
import sys
import time
import traceback
from pathlib import Path

HERE = Path(__file__).resolve().parent


def _load(path: Path):
    spec = importlib.util.spec_from_file_location(path.stem, path)
    mod = importlib.util.module_from_spec(spec)
    sys.modules[path.stem] = mod
    spec.loader.exec_module(mod)
    return mod


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("-k", default="", help="run only benchmarks whose name contains this")
    args = ap.parse_args(argv)
    sys.path.insert(0, str(HERE))
    results = []
    started = time.strftime("%Y-%m-%d %H:%M:%S UTC", time.gmtime())
    for path in sorted(HERE.glob("bench_*.py")):
        mod = _load(path)
        for fname in sorted(n for n in dir(mod) if n.startswith("bench_")):
            if args.k and args.k not in f"{path.stem}.{fname}":
                continue
            fn = getattr(mod, fname)
            if not callable(fn):
                continue
            print(f"-- {path.stem}.{fname}", flush=True)
            t0 = time.perf_counter()
            try:
                rows = fn()
            except Exception:  # a broken benchmark is reported, the others still run
                traceback.print_exc()
                rows = [{"name": f"{path.stem}.{fname}", "value": None, "unit": "",
                         "target": "runs", "ok": False, "note": "raised; see output"}]
            for r in rows:
                r.setdefault("note", "")
                r["module"] = path.stem
                r["bench"] = f"{path.stem}.{fname}"
                results.append(r)
                flag = {True: "ok", False: "MISSED", None: "-"}[r.get("ok")]
                val = "n/a" if r["value"] is None else f"{r['value']:.4g}"
                print(f"   {r['name']}: {val} {r['unit']}  target {r.get('target', '-')}  "
                      f"[{flag}] {r['note']}", flush=True)
            print(f"   ({time.perf_counter() - t0:.1f} s)", flush=True)
    if args.k and (HERE / "results.json").exists():
        # a partial run replaces only its own rows; the others keep their last figures
        ran = {r["bench"] for r in results}
        old = json.loads((HERE / "results.json").read_text()).get("results", [])
        results = [r for r in old if r.get("bench") not in ran] + results
    env = {"python": platform.python_version(), "machine": platform.machine(),
           "cpus": os.cpu_count(), "started": started}
    (HERE / "results.json").write_text(json.dumps({"environment": env, "results": results},
                                                  indent=1) + "\n")
    lines = ["# Benchmark results", "",
             f"Written by `make bench` on {started}: Python {env['python']}, {env['machine']}, "
             f"{env['cpus']} CPUs. Ratios are measured in the same run.", "",
             "| benchmark | figure | target | met | note |", "|---|---|---|---|---|"]
    for r in results:
        val = "n/a" if r["value"] is None else f"{r['value']:.4g} {r['unit']}"
        met = {True: "yes", False: "**no**", None: "-"}[r.get("ok")]
        lines.append(f"| {r['name']} | {val} | {r.get('target', '-')} | {met} | {r['note']} |")
    (HERE / "RESULTS.md").write_text("\n".join(lines) + "\n")
    missed = [r["name"] for r in results if r.get("ok") is False]
    print(f"\n{len(results)} figures, {len(missed)} targets missed"
          + (f": {', '.join(missed)}" if missed else ""))
    return 0


if __name__ == "__main__":
    sys.exit(main())

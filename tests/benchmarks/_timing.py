"""Timing helpers shared by the benchmarks (run.py puts this folder on sys.path)."""

from __future__ import annotations

import statistics
import time
from collections.abc import Callable


def timings(fn: Callable[[], object], repeat: int) -> list[float]:
    """Wall-clock seconds of ``repeat`` calls of ``fn``."""
    out = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        out.append(time.perf_counter() - t0)
    return out


def median_time(fn: Callable[[], object], repeat: int = 3) -> float:
    """Median wall-clock seconds of ``repeat`` calls (robust to a noisy shared machine)."""
    return statistics.median(timings(fn, repeat))


def best_time(fn: Callable[[], object], repeat: int) -> float:
    """Fastest of ``repeat`` calls, in seconds (the least disturbed run)."""
    return min(timings(fn, repeat))

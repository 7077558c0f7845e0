"""Small shared helpers of the statistical tests (no fixtures)."""

from __future__ import annotations

import math


def dkw(n: int, delta: float = 1e-6) -> float:
    """Dvoretzky-Kiefer-Wolfowitz bound: sup |F_n - F| <= this with prob 1 - delta."""
    return math.sqrt(math.log(2 / delta) / (2 * n))


def snapshot(case):
    """What a refused edit must leave unchanged: the case's content, version and scenario."""
    return case.to_dict(), case.version, case.active_scenario

"""Shared fixtures. Seeded generators only: a failing test reproduces."""

from __future__ import annotations

import os

import numpy as np
import pytest
from hypothesis import HealthCheck, settings

import beliefledger as bl

settings.register_profile("default", max_examples=60, deadline=None,
                          suppress_health_check=[HealthCheck.too_slow])
settings.register_profile("full", max_examples=2000, deadline=None,
                          suppress_health_check=[HealthCheck.too_slow])
settings.load_profile("full" if os.environ.get("BELIEFLEDGER_FUZZ") == "full" else "default")


@pytest.fixture
def rng() -> np.random.Generator:
    return np.random.default_rng(20261201)


@pytest.fixture
def demo_case() -> bl.Case:
    return bl.example_case()


@pytest.fixture
def small_case() -> bl.Case:
    """Three hypotheses, two observed items, one pending (numbers invented)."""
    case = bl.Case("small", hypotheses={"H1": 0.5, "H2": 0.3, "Other": 0.2})
    case.add_evidence("E1", states=["present", "absent"],
                      likelihoods={"H1": [0.9, 0.1], "H2": [0.2, 0.8], "Other": [0.5, 0.5]},
                      observed="present")
    case.add_evidence("E2", states=["high", "low"],
                      likelihoods={"H1": [0.3, 0.7], "H2": [0.6, 0.4], "Other": [0.5, 0.5]},
                      observed="low")
    case.add_evidence("E3", states=["yes", "no"],
                      likelihoods={"H1": [0.7, 0.3], "H2": [0.1, 0.9], "Other": [0.5, 0.5]})
    return case


@pytest.fixture
def eliminating_case() -> bl.Case:
    """'A' is eliminated by E1 (invented numbers)."""
    case = bl.Case("elimination", hypotheses={"A": 0.5, "B": 0.3, "Other": 0.2})
    case.add_evidence("E1", states=["x", "y"],
                      likelihoods={"A": [1.0, 0.0], "B": [0.5, 0.5], "Other": [0.5, 0.5]},
                      observed="y")
    case.add_evidence("E2", states=["x", "y"],
                      likelihoods={"A": [0.2, 0.8], "B": [0.9, 0.1], "Other": [0.5, 0.5]},
                      observed="x")
    return case

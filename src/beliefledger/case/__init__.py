"""The case model: members, parsing, dependence, serial form, extras and the Case.

``from beliefledger.case import Case, Evidence, ...`` is the public face;
the modules beside this one hold the parts (see each module's docstring).
"""

from __future__ import annotations

from .._checks import SUM_TOL
from . import experts, rollups  # noqa: F401  (they register their extras sections)
from .members import (
    BASE_SCENARIO,
    CASE_MIMETYPE,
    UNSOURCED,
    Artefact,
    Evidence,
    Hypothesis,
    JointGroup,
    Scenario,
    Source,
    UncertainObservation,
)
from .model import Case
from .serial import SCHEMA_VERSION
from .uncertain import report_weights

__all__ = ["Case", "Artefact", "Hypothesis", "Evidence", "JointGroup", "Source", "Scenario",
           "UNSOURCED", "SUM_TOL", "BASE_SCENARIO", "CASE_MIMETYPE", "SCHEMA_VERSION",
           "UncertainObservation", "report_weights"]

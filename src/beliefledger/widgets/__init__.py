"""Notebook views of a case: editors, the prior-scenario picker and the workbench.

ipywidgets 8 core widgets only (no custom JavaScript), so the views work in
JupyterLab 4, Notebook 7 and VS Code. A view edits the case only through
the case's own methods and re-renders from a fresh ledger; no view computes a
posterior. Every view also has a deterministic ``repr`` and a static
``_repr_html_`` for notebooks shown without live widgets.
"""

from __future__ import annotations

from .evidence import EvidenceEditor
from .hypotheses import HypothesisEditor
from .scenarios import ScenarioPicker
from .workbench import Workbench

__all__ = ["Workbench", "HypothesisEditor", "EvidenceEditor", "ScenarioPicker"]

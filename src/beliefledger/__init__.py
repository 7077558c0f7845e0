"""beliefledger: an evidence-updating workbench and audit trail for notebooks.

The public face: everything here is a re-export. Modules load on first use,
so ``import beliefledger`` costs little more than numpy and pandas, and the
optional notebook parts (widgets, charts, records) are only imported when
asked for. A missing optional dependency raises an ImportError that names
the pip command to install it.
"""

from __future__ import annotations

import importlib
from typing import Any

from ._version import __version__

# public name -> module that defines it
_EXPORTS: dict[str, str] = {
    # model
    "Case": "case", "Hypothesis": "case", "Evidence": "case", "Source": "case",
    "Scenario": "case", "UNSOURCED": "case", "BASE_SCENARIO": "case",
    "JointGroup": "case", "Artefact": "case", "UncertainObservation": "case",
    "report_weights": "case",
    "CaseError": "errors", "CaseTypeError": "errors", "CaseFileError": "errors",
    "RecordError": "errors", "WorkbookError": "errors",
    # engine and review flags
    "Ledger": "engine", "update": "engine", "update_all": "engine",
    "Flag": "flags", "diagnose": "flags",
    # measures
    "odds": "measures", "probability_from_odds": "measures", "log_odds": "measures",
    "decibans": "measures", "bits": "measures", "nats": "measures",
    "likelihood_ratio": "measures", "bayes_factor": "measures", "step_weights": "measures",
    "enfsi_label": "measures", "kass_raftery_label": "measures",
    "jeffreys_label": "measures", "verbal": "measures", "update_probability": "measures",
    "format_lr": "measures",
    # case files
    "load_case": "casefile", "save_case": "casefile",
    # examples
    "example_case": "examples",
    # priors and likelihoods from data
    "prior_from_counts": "elicit", "probability_from_demands": "elicit",
    "rate_from_events": "elicit", "likelihood_from_test": "elicit",
    "likelihood_from_counts": "elicit",
    # several experts
    "pool": "elicit", "pool_distributions": "elicit", "PooledJudgement": "elicit",
    "classical_model": "calibration", "calibration_scores": "calibration",
    "add_expert": "experts", "remove_expert": "experts", "set_expert_prior": "experts",
    "set_expert_likelihood": "experts", "set_calibration": "experts",
    "expert_judgements": "experts", "apply_pool": "experts", "expert_review": "experts",
    "DirichletEstimate": "estimates", "BetaEstimate": "estimates",
    "GammaEstimate": "estimates",
    # sensitivity and uncertainty
    "robustness": "sensitivity", "sweep_prior": "sensitivity",
    "sweep_likelihood": "sensitivity", "break_even_prior": "sensitivity",
    "tornado": "sensitivity", "simulate": "montecarlo",
    "set_prior_uncertainty": "uncertainty", "set_likelihood_uncertainty": "uncertainty",
    "clear_uncertainty": "uncertainty", "uncertainty_register": "uncertainty",
    # value of information and decisions
    "rank_next_evidence": "value", "evpi": "value", "evsi": "value",
    "predictive": "value", "preposterior": "value",
    "expected_loss": "decision", "bayes_action": "decision",
    "set_loss_table": "decision", "loss_table": "decision", "decision_summary": "decision",
    "decision_threshold": "decision",
    # batch scoring
    "score_rows": "batch",
    # notebook views (optional dependencies)
    "Workbench": "widgets", "HypothesisEditor": "widgets", "EvidenceEditor": "widgets",
    "ScenarioPicker": "widgets",
}

_SUBMODULES = {"charts", "chartdata", "figures", "widgets", "record", "engine", "case", "flags",
               "measures", "casefile", "elicit", "estimates", "sensitivity", "uncertainty",
               "montecarlo", "value", "decision", "batch", "display", "examples", "experts",
               "calibration"}

_INSTALL_HINT = {
    "ipywidgets": "notebook", "altair": "notebook", "vl_convert": "notebook",
    "nbformat": "notebook", "nbclient": "notebook", "nbconvert": "notebook",
    "cryptography": "notebook", "dask": "dask", "distributed": "dask",
    "openpyxl": "excel", "playwright": "pdf",
}

__all__ = sorted(_EXPORTS) + ["__version__"]


def __getattr__(name: str) -> Any:
    if name in _EXPORTS:
        module = _import(_EXPORTS[name])
        value = getattr(module, name)
        globals()[name] = value
        return value
    if name in _SUBMODULES:
        module = _import(name)
        globals()[name] = module
        return module
    raise AttributeError(f"module 'beliefledger' has no attribute {name!r}")


def _import(module: str):
    try:
        return importlib.import_module(f".{module}", __name__)
    except ModuleNotFoundError as exc:
        missing = (exc.name or "").split(".")[0]
        extra = _INSTALL_HINT.get(missing)
        if extra:
            raise ImportError(
                f"beliefledger.{module} needs the optional package '{missing}'; install it with "
                f"pip install 'beliefledger[{extra}]'") from exc
        raise


def __dir__() -> list[str]:
    return sorted(set(__all__) | _SUBMODULES)

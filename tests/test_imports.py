"""A minimal install imports fast and computes: no widgets, charts or notebook machinery."""

from __future__ import annotations

import subprocess
import sys

HEAVY = ["ipywidgets", "altair", "nbformat", "nbclient", "vl_convert", "scipy.stats",
         "IPython", "matplotlib"]


def run(code: str) -> str:
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    return out.stdout


def test_import_and_update_load_no_heavy_modules():
    code = (
        "import sys, beliefledger as bl\n"
        "c = bl.example_case(); t = c.update(); c.to_dict(); bl.step_weights(t)\n"
        f"print([m for m in {HEAVY!r} if m in sys.modules])\n"
    )
    assert run(code).strip() == "[]"


def test_public_names_resolve():
    code = (
        "import beliefledger as bl\n"
        "core = ['Case','Hypothesis','Evidence','Source','Ledger','Flag','load_case',"
        "'save_case','update','likelihood_ratio','bayes_factor','decibans','example_case']\n"
        "print(all(callable(getattr(bl, n)) for n in core))\n"
    )
    assert run(code).strip() == "True"


def test_missing_optional_dependency_names_the_install_command():
    code = (
        "import sys\n"
        "sys.modules['ipywidgets'] = None\n"  # simulate a minimal install
        "import beliefledger as bl\n"
        "try:\n"
        "    bl.Workbench\n"
        "except ImportError as e:\n"
        "    print(e)\n"
    )
    out = run(code)
    assert "pip install 'beliefledger[notebook]'" in out

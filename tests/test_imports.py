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


# --------------------------------------------------------------------------- the layers

import ast  # noqa: E402
from pathlib import Path  # noqa: E402

SRC = Path(__file__).resolve().parent.parent / "src" / "beliefledger"

# Imports run downward only. A module may import modules of a lower or equal
# level; a package's modules are ordered among themselves by the fraction.
LAYERS = {
    "errors": 0, "_version": 0, "_checks": 0.1, "_logmath": 0.1, "_files": 0.1, "display": 0.2,
    "case.members": 1.0, "case.uncertain": 1.05, "case.artefacts": 1.1, "case.parsing": 1.1,
    "case.extras": 1.1, "case.dependence": 1.1, "case.rollups": 1.15, "case.experts": 1.15,
    "case.revision": 1.2,
    "case.serial": 1.2, "case.model": 1.3, "case": 1.4,
    "flags": 2, "casefile": 3, "workbook": 3.1, "engine": 3, "calls": 3.5,
    "measures": 4, "estimates": 5, "uncertainty": 6, "decision": 6,
    "calibration": 6, "elicit": 7, "experts": 7.5, "montecarlo": 7, "sensitivity": 7, "value": 7, "batch": 7, "examples": 7,
    "chartdata": 8, "figures": 9, "charts": 10,
    "widgets._base": 11.0, "widgets.evidence": 11.1, "widgets.hypotheses": 11.1,
    "widgets.scenarios": 11.1, "widgets.workbench": 11.2, "widgets": 11.3,
    "record.canonical": 11.0, "record.nbio": 11.1, "record.collect": 11.2,
    "record.signing": 11.15, "record.comments": 11.16,
    "record.analyses": 11.25, "record.summary": 11.28, "record.reviews": 11.29,
    "record.checklist": 11.45,
    "record.sections": 11.3, "record.html": 11.3, "record.sealer": 11.4,
    "record.verifier": 11.5, "record.pdf": 11.55, "record.htmlcheck": 11.55,
    "record.differ": 11.6,
    "record.review": 11.7, "record.commands": 11.9, "record": 11.95,
    "cli": 12, "": 13,
}
# the case's lazy convenience methods (update, save, reprs) may reach upward
ALLOWED_UPWARD = {("case.model", "engine"), ("case.model", "casefile"),
                  ("case.model", "display"), ("case.model", "workbook"),
                  # verify(path) hands an HTML copy to htmlcheck, which builds on verifier
                  ("record.verifier", "record.htmlcheck")}


def _module_name(path: Path) -> str:
    rel = path.relative_to(SRC).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def _imports(path: Path) -> list[tuple[str, list[str], int, bool]]:
    """(target module, imported names, line, inside TYPE_CHECKING) for relative imports."""
    me = _module_name(path)
    package = me.split(".") if path.name == "__init__.py" else me.split(".")[:-1]
    tree = ast.parse(path.read_text(encoding="utf-8"))
    typing_only: set[int] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.If) and "TYPE_CHECKING" in ast.unparse(node.test):
            for sub in ast.walk(node):
                typing_only.add(id(sub))
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.level:
            base = package[: len(package) - (node.level - 1)] if node.level > 1 else package
            target = ".".join([*base, *(node.module.split(".") if node.module else [])])
            names = [a.name for a in node.names]
            if node.module is None:  # from . import x: a submodule, or a name of the package
                for n in names:
                    sub = SRC.joinpath(*base, n)
                    if sub.with_suffix(".py").exists() or sub.is_dir():
                        out.append((".".join([*base, n]), [], node.lineno,
                                    id(node) in typing_only))
                    else:
                        out.append((".".join(base), [n], node.lineno, id(node) in typing_only))
            else:
                out.append((target, names, node.lineno, id(node) in typing_only))
    return out


def _level(name: str) -> float:
    while name not in LAYERS and "." in name:
        name = name.rsplit(".", 1)[0]
    assert name in LAYERS, f"module {name!r} has no layer in tests/test_imports.py: add it"
    return LAYERS[name]


def test_every_module_has_a_layer():
    for path in SRC.rglob("*.py"):
        _level(_module_name(path))


def test_imports_run_downward_only():
    wrong = []
    for path in sorted(SRC.rglob("*.py")):
        me = _module_name(path)
        for target, _, line, typing_only in _imports(path):
            if typing_only or (me, target) in ALLOWED_UPWARD:
                continue
            if _level(target) > _level(me):
                wrong.append(f"{me} (line {line}) imports {target}")
    assert not wrong, "upward imports:\n" + "\n".join(wrong)


def test_record_never_imports_widgets():
    for path in (SRC / "record").rglob("*.py"):
        for target, _, line, _ in _imports(path):
            assert not target.startswith("widgets"), f"{path.name}:{line} imports {target}"


def test_no_private_names_cross_modules():
    wrong = []
    for path in sorted(SRC.rglob("*.py")):
        me = _module_name(path)
        for target, names, line, _ in _imports(path):
            private = [n for n in names if n.startswith("_") and not n.startswith("__")]
            if private and target != me:
                wrong.append(f"{me} (line {line}) imports {private} from {target}")
    assert not wrong, "private imports across modules:\n" + "\n".join(wrong)

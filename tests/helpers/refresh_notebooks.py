"""Re-run the shipped notebooks and store their outputs (what ``make notebooks`` does).

nbval compares the cells tagged ``nbval-check-output`` with the outputs stored
in each notebook, so after a change of wording or numbers the stored outputs
are refreshed here, never by hand. Each notebook runs top to bottom in a fresh
kernel in its own folder; execution timings are not stored and cell ids are
kept, so the diff shows only what the change did.

Usage: ``python tests/helpers/refresh_notebooks.py [NOTEBOOK ...]`` (default:
every notebook in ``templates_nb/`` and ``example_cases/``; the bundled demo keeps
no outputs: ``beliefledger demo`` seals it afresh).
"""

from __future__ import annotations

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
DEFAULT = sorted([*(ROOT / "templates_nb").glob("*.ipynb"),
                  *(ROOT / "example_cases").glob("*.ipynb")])


def refresh(path: Path) -> None:
    import nbformat
    from nbclient import NotebookClient

    nb = nbformat.read(path, as_version=4)
    for i, cell in enumerate(nb.cells):
        cell.setdefault("id", f"cell-{i + 1}")
    NotebookClient(nb, kernel_name="python3", timeout=600, record_timing=False,
                   resources={"metadata": {"path": str(path.parent)}}).execute()
    nb.metadata.pop("widgets", None)
    nbformat.write(nb, path)


def main(argv: list[str]) -> int:
    paths = [Path(a).resolve() for a in argv] or DEFAULT
    for path in paths:
        print(f"refreshing {path.relative_to(ROOT)}", flush=True)
        refresh(path)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))

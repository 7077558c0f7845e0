"""Large inputs: case files of 10,000 hypotheses or 10,000 evidence items load
in under 2 s, and the notebook views page them instead of freezing.

The cases are invented test data written directly as case-file JSON.
"""

from __future__ import annotations

import json

from _timing import median_time

TARGET_S = 2.0


def _case_text(n_hyp: int, n_ev: int) -> str:
    hyps = [f"cause {i:05d}" for i in range(n_hyp)]
    cols = {h: [0.25, 0.75] if i % 2 else [0.6, 0.4] for i, h in enumerate(hyps)}
    case = {
        "title": "large (invented test data)",
        "hypotheses": [{"name": h, "prior": 1 / n_hyp, "source": {"where": "invented"}}
                       for h in hyps],
        "evidence": [{"name": f"item {k:05d}", "states": ["seen", "not seen"],
                      "likelihoods": cols, "observed": "seen" if k % 3 else "not seen",
                      "source": {"where": "invented"}}
                     for k in range(n_ev)],
    }
    return json.dumps({"format": "beliefledger-case", "schema_version": 1, "case": case})




def bench_large_case_files() -> list[dict]:
    import tempfile
    from pathlib import Path

    from beliefledger import casefile, load_case

    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for label, n_hyp, n_ev in [("10,000 hypotheses x 3 items", 10_000, 3),
                                   ("4 hypotheses x 10,000 items", 4, 10_000)]:
            path = Path(tmp) / "large.json"
            path.write_text(_case_text(n_hyp, n_ev), encoding="utf-8")
            size_mb = path.stat().st_size / 1e6
            t_parse = median_time(lambda p=path: json.loads(p.read_text(encoding="utf-8")))
            t_load = median_time(lambda p=path: load_case(p))
            case = load_case(path)
            t_update = median_time(case.update)
            t_save = median_time(lambda c=case, p=path: casefile.save_case(c, p))
            rows.append({"name": f"load case file, {label}", "value": t_load, "unit": "s",
                         "target": f"< {TARGET_S:g} s", "ok": t_load < TARGET_S,
                         "note": f"{size_mb:.1f} MB; json.loads alone {t_parse:.2f} s "
                                 f"({t_load / t_parse:.1f}x)"})
            rows.append({"name": f"update + flags, {label}", "value": t_update, "unit": "s",
                         "target": "-", "ok": None, "note": ""})
            rows.append({"name": f"save case file, {label}", "value": t_save, "unit": "s",
                         "target": "-", "ok": None, "note": "atomic write with fsync"})
    return rows


def bench_large_case_views() -> list[dict]:
    try:
        import ipywidgets  # noqa: F401
    except ImportError:
        return [{"name": "widgets on a 10,000-hypothesis case", "value": None, "unit": "",
                 "target": "pages", "ok": None, "note": "ipywidgets not installed"}]
    from beliefledger import casefile
    from beliefledger.display import case_html
    from beliefledger.widgets import EvidenceEditor, HypothesisEditor, Workbench

    rows = []
    for label, n_hyp, n_ev in [("10,000 hypotheses", 10_000, 3), ("10,000 items", 4, 10_000)]:
        case = casefile.loads(_case_text(n_hyp, n_ev))
        for cls in (HypothesisEditor, EvidenceEditor, Workbench):
            t = median_time(lambda c=case, k=cls: k(c), repeat=1)
            rows.append({"name": f"{cls.__name__} on {label}", "value": t, "unit": "s",
                         "target": f"< {TARGET_S:g} s", "ok": t < TARGET_S,
                         "note": "builds one page of rows"})
        t = median_time(lambda c=case: case_html(c))
        rows.append({"name": f"static case HTML on {label}", "value": t, "unit": "s",
                     "target": "-", "ok": None, "note": "first 50 rows, then a count"})
    return rows

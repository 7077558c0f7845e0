"""Outside reference for uncertain observations, run inside the pgmpy venv.

Reads a network (a hypothesis node with its prior, one child node per
evidence item with P(state | hypothesis); hard observations by state index,
virtual evidence as likelihood weights per state) and prints JSON: the
posterior of the hypothesis node from pgmpy's variable elimination with its
``virtual_evidence`` argument, and, for each item in ``condition_on``, the
posterior given each of that item's states (hard), which a Jeffrey update
mixes. pgmpy is a general-purpose library for probabilistic graphical
models, used only as an outside check, never by beliefledger.

Usage: ``python pgmpy_reference.py NETWORK.json``
"""

from __future__ import annotations

import json
import sys
import warnings

warnings.filterwarnings("ignore")


def main(path: str) -> None:
    import numpy as np
    from pgmpy.factors.discrete import TabularCPD
    from pgmpy.inference import VariableElimination
    from pgmpy.models import DiscreteBayesianNetwork

    net = json.loads(open(path, encoding="utf-8").read())
    n_h = len(net["prior"])
    items = net["items"]
    model = DiscreteBayesianNetwork([("H", f"E{k}") for k in range(len(items))])
    cpds = [TabularCPD("H", n_h, np.array(net["prior"]).reshape(n_h, 1))]
    for k, item in enumerate(items):
        table = np.array(item["table"])  # states x hypotheses
        cpds.append(TabularCPD(f"E{k}", table.shape[0], table, evidence=["H"],
                               evidence_card=[n_h]))
    model.add_cpds(*cpds)
    model.check_model()
    ve = VariableElimination(model)
    hard = {f"E{k}": it["observed"] for k, it in enumerate(items) if "observed" in it}
    virtual = [TabularCPD(f"E{k}", len(it["weights"]), np.array(it["weights"]).reshape(-1, 1))
               for k, it in enumerate(items) if "weights" in it]
    post = ve.query(["H"], evidence=hard or None, virtual_evidence=virtual or None,
                    show_progress=False).values
    given = {}
    for k in net.get("condition_on", []):
        rows = []
        for s in range(len(items[k]["table"])):
            ev = {**hard, f"E{k}": s}
            rows.append([float(x) for x in ve.query(["H"], evidence=ev,
                                                    virtual_evidence=virtual or None,
                                                    show_progress=False).values])
        given[str(k)] = rows
    print(json.dumps({"posterior": [float(x) for x in post], "given": given}))


if __name__ == "__main__":
    main(sys.argv[1])

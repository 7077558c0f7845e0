"""The reference query for the engine benchmark, run inside its own venv with pgmpy.

Reads a network written by ``bench_engine.py`` (a hypothesis node with a prior,
one child node per evidence item with P(state | hypothesis), the observed
states), answers P(hypothesis | evidence) with pgmpy's variable elimination,
and prints JSON: the posterior and the query times. pgmpy is a general-purpose
library for probabilistic graphical models; it is used here only as an
outside reference for speed and for the numbers, never by beliefledger.

Usage: ``python pgmpy_ve.py NETWORK.json REPEATS``
"""

from __future__ import annotations

import json
import sys
import time
import warnings

warnings.filterwarnings("ignore")


def main(path: str, repeats: int) -> None:
    import numpy as np
    from pgmpy.factors.discrete import TabularCPD
    from pgmpy.inference import VariableElimination
    from pgmpy.models import DiscreteBayesianNetwork

    net = json.loads(open(path, encoding="utf-8").read())
    n_h = len(net["prior"])
    model = DiscreteBayesianNetwork([("H", f"E{k}") for k in range(len(net["items"]))])
    cpds = [TabularCPD("H", n_h, np.array(net["prior"]).reshape(n_h, 1))]
    evidence = {}
    for k, item in enumerate(net["items"]):
        table = np.array(item["table"])  # states x hypotheses
        cpds.append(TabularCPD(f"E{k}", table.shape[0], table, evidence=["H"],
                               evidence_card=[n_h]))
        evidence[f"E{k}"] = item["observed"]
    model.add_cpds(*cpds)
    model.check_model()
    ve = VariableElimination(model)
    post = ve.query(["H"], evidence=evidence, show_progress=False).values
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        ve.query(["H"], evidence=evidence, show_progress=False)
        times.append(time.perf_counter() - t0)
    import pgmpy

    print(json.dumps({"posterior": [float(x) for x in post], "times": times,
                      "version": pgmpy.__version__}))


if __name__ == "__main__":
    main(sys.argv[1], int(sys.argv[2]))

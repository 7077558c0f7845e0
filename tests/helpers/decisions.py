"""Small invented decision cases shared by the value-of-information and decision tests."""

from __future__ import annotations

import pandas as pd

import beliefledger as bl
from beliefledger import decision

PROSPECT_PAYOFF = {"drill": {"good": 600.0, "bad": -200.0},
                   "do not drill": {"good": 0.0, "bad": 0.0}}


def prospect_case() -> bl.Case:
    """Samuelson & Marks, *Managerial Economics*, chapter "The Value of Information":
    payoff +600k if the prospect is good, -200k if not, P(good) = 0.4; a test that
    is favourable with probability 0.5, with P(good | favourable) = 0.6 and
    P(good | unfavourable) = 0.2 (CHECKS.md item 11, read in the text). The
    likelihoods follow by Bayes' rule: P(fav | good) = 0.6*0.5/0.4 = 0.75 and
    P(fav | bad) = 0.4*0.5/0.6 = 1/3."""
    case = bl.Case("prospect", hypotheses={"good": 0.4, "bad": 0.6}, exhaustive=True)
    case.add_evidence("seismic test", states=["favourable", "unfavourable"],
                      likelihoods={"good": [0.75, 0.25], "bad": [1 / 3, 2 / 3]})
    decision.set_loss_table(case, PROSPECT_PAYOFF, kind="payoff", units="k$",
                         source="Samuelson & Marks, Managerial Economics")
    return case


def three_cause_case() -> bl.Case:
    """Invented: a pump fault with three causes and one pending test."""
    case = bl.Case("pump", hypotheses={"A": 0.5, "B": 0.3, "C": 0.2}, exhaustive=True)
    case.add_evidence("T", states=["yes", "no"],
                      likelihoods={"A": [0.2, 0.8], "B": [0.9, 0.1], "C": [0.5, 0.5]})
    return case


LOSS3 = pd.DataFrame({"A": [0.0, 8.0], "B": [10.0, 0.0], "C": [4.0, 4.0]},
                     index=["a1", "a2"])

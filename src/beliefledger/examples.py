"""The built-in worked example: an invented ammonia-odour investigation.

Every number here is invented for demonstration; the sources say so. Use it
to learn the tool, never as data about real refrigeration plant.
"""

from __future__ import annotations

from .case import Case

DEMO_NOTE = "invented for the beliefledger demo; not real plant data"


def example_case() -> Case:
    """An ammonia odour at a cold store: five causes, six evidence items, two scenarios
    and a loss table of three courses of action.

    Five evidence items are observed and one (the suction-pressure trend) is
    still pending, so value-of-information analysis has something to rank.
    Two items read the same gas-detection panel and carry a shared-source tag.
    """
    history = {"where": f"site incident log 2018-2025, 20 odour reports ({DEMO_NOTE})",
               "who": "R. Okafor (process safety)", "when": "2026-11-20",
               "why": "site history is the closest reference class"}
    judgement = {"where": f"engineering judgement ({DEMO_NOTE})", "who": "R. Okafor",
                 "when": "2026-11-20", "why": "no site record of this failure mode"}
    case = Case(
        "Ammonia odour at the Eastgate cold store",
        hypotheses={
            "compressor seal leak": {"prior": 0.35, "source": history,
                                     "description": "shaft seal on compressor C2 weeping"},
            "relief valve lifted": {"prior": 0.20, "source": history,
                                    "description": "a relief valve on the high-pressure side "
                                                   "lifted and reseated"},
            "evaporator coil corrosion": {"prior": 0.25, "source": history,
                                          "description": "pinhole in a cold-room evaporator coil"},
            "maintenance venting": {"prior": 0.10, "source": history,
                                    "description": "planned purge or oil drain vented to room"},
            "other cause": {"prior": 0.10, "source": judgement, "catch_all": True,
                            "description": "anything not listed (e.g. a third-party release)"},
        },
        question="Which failure best explains the odour reported at 02:40 on 2026-11-18?",
        analyst="R. Okafor",
        notes="Demonstration case. All numbers are invented.",
        safety_related=True,
    )
    panel = {"where": f"detector vendor data sheet and site tests ({DEMO_NOTE})",
             "who": "R. Okafor", "when": "2026-11-21",
             "why": "alarm order follows where the gas is released"}
    case.add_evidence(
        "detector alarm order",
        states=["machine room first", "cold room first", "both within a minute"],
        likelihoods={
            "compressor seal leak": [0.70, 0.10, 0.20],
            "relief valve lifted": [0.30, 0.10, 0.60],
            "evaporator coil corrosion": [0.10, 0.75, 0.15],
            "maintenance venting": [0.50, 0.10, 0.40],
            "other cause": [0.34, 0.33, 0.33],
        },
        observed="machine room first", source=panel, shared_source="gas detection panel",
        description="which gas detector alarmed first, from the panel's event log",
    )
    case.add_evidence(
        "relief valve tell-tale",
        states=["burst", "intact"],
        likelihoods={
            "compressor seal leak": [0.02, 0.98],
            "relief valve lifted": [0.90, 0.10],
            "evaporator coil corrosion": [0.02, 0.98],
            "maintenance venting": [0.05, 0.95],
            "other cause": [0.10, 0.90],
        },
        observed="intact",
        source={"where": f"tell-tale disc maker's rating ({DEMO_NOTE})", "who": "R. Okafor",
                "when": "2026-11-21", "why": "a lift breaks the disc in most cases"},
        description="burst-disc tell-tale upstream of the relief valves",
    )
    case.add_evidence(
        "oil residue on compressor",
        states=["present", "absent"],
        likelihoods={
            "compressor seal leak": [0.80, 0.20],
            "relief valve lifted": [0.15, 0.85],
            "evaporator coil corrosion": [0.10, 0.90],
            "maintenance venting": [0.30, 0.70],
            "other cause": [0.20, 0.80],
        },
        observed="present",
        source={"where": f"maintenance team estimate ({DEMO_NOTE})", "who": "J. Varga",
                "when": "2026-11-21", "why": "seal leaks carry oil mist"},
        description="fresh oil film around the C2 shaft seal at first inspection",
    )
    case.add_evidence(
        "permit-to-work log",
        states=["venting task open", "no venting task"],
        likelihoods={
            "compressor seal leak": [0.05, 0.95],
            "relief valve lifted": [0.05, 0.95],
            "evaporator coil corrosion": [0.05, 0.95],
            "maintenance venting": [0.95, 0.05],
            "other cause": [0.10, 0.90],
        },
        observed="no venting task",
        source={"where": f"permit system audit 2025 ({DEMO_NOTE})", "who": "R. Okafor",
                "when": "2026-11-21", "why": "venting without a permit is rare but happens"},
    )
    case.add_evidence(
        "night operator's account",
        states=["smell strongest in machine room", "smell strongest elsewhere"],
        likelihoods={
            "compressor seal leak": [0.75, 0.25],
            "relief valve lifted": [0.55, 0.45],
            "evaporator coil corrosion": [0.20, 0.80],
            "maintenance venting": [0.60, 0.40],
            "other cause": [0.50, 0.50],
        },
        observed="smell strongest in machine room",
        source={"where": f"interview notes ({DEMO_NOTE})", "who": "R. Okafor",
                "when": "2026-11-19", "why": "the operator walked toward the alarming detector"},
        shared_source="gas detection panel",
        description="operator followed the panel's first alarm, so this partly repeats it",
    )
    case.add_evidence(
        "suction pressure trend",
        states=["slow decline", "step drop", "steady"],
        likelihoods={
            "compressor seal leak": [0.50, 0.10, 0.40],
            "relief valve lifted": [0.10, 0.70, 0.20],
            "evaporator coil corrosion": [0.60, 0.10, 0.30],
            "maintenance venting": [0.20, 0.30, 0.50],
            "other cause": [0.33, 0.33, 0.34],
        },
        observed=None,
        source={"where": f"process engineer's estimate ({DEMO_NOTE})", "who": "J. Varga",
                "when": "2026-11-21", "why": "historian data not yet retrieved"},
        description="plant historian trend for the 6 h before the alarm (pending)",
    )
    case.add_scenario(
        "industry base rates",
        {"compressor seal leak": 0.25, "relief valve lifted": 0.15,
         "evaporator coil corrosion": 0.35, "maintenance venting": 0.15, "other cause": 0.10},
        source={"where": f"trade association incident summary ({DEMO_NOTE})",
                "who": "R. Okafor", "when": "2026-11-20",
                "why": "a wider reference class than one site"},
    )
    case.add_scenario(
        "uniform",
        {h: 0.2 for h in case.hypothesis_names},
        source={"where": "equal priors (a reviewer's check, not a belief)", "who": "R. Okafor",
                "when": "2026-11-20", "why": "shows what the evidence alone says"},
        meaning="equal",
    )
    from .decision import set_loss_table

    set_loss_table(
        case,
        {
            "replace C2 seal and restart": {
                "compressor seal leak": 15, "relief valve lifted": 90,
                "evaporator coil corrosion": 120, "maintenance venting": 20, "other cause": 80},
            "keep the plant shut and inspect everything": {
                "compressor seal leak": 60, "relief valve lifted": 60,
                "evaporator coil corrosion": 60, "maintenance venting": 60, "other cause": 60},
            "restart under extra patrols": {
                "compressor seal leak": 150, "relief valve lifted": 40,
                "evaporator coil corrosion": 150, "maintenance venting": 5, "other cause": 70},
        },
        kind="loss", units="kEUR",
        source={"where": f"site manager's cost estimates ({DEMO_NOTE})", "who": "M. Lindqvist",
                "when": "2026-11-21",
                "why": "downtime, repair and the cost of a repeat release if the cause is missed"},
        note="expected cost of each course of action if the hypothesis is true",
    )
    return case


__all__ = ["example_case", "DEMO_NOTE"]

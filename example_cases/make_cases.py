"""Write the example case files in this folder.

Every scenario, name, date and number here is invented to show how
beliefledger is used in different trades; none of it describes a real
incident, site, product or person. The numbers are chosen to be plausible
in size (the kind of base rate or test performance a practitioner might
meet), and each source says that it is invented.

Run from the repository root::

    python example_cases/make_cases.py
"""

from __future__ import annotations

from pathlib import Path

import beliefledger as bl

HERE = Path(__file__).resolve().parent
INVENTED = "invented for the beliefledger examples"


def src(where: str, who: str, when: str, why: str) -> dict[str, str]:
    return {"where": f"{where} ({INVENTED})", "who": who, "when": when, "why": why}


def checkout_outage() -> bl.Case:
    """IT operations: 503 errors from a checkout service after a release."""
    log = src("post-incident review archive 2023-2026: 41 checkout incidents (12 pool, "
              "13 release, 6 provider, 4 load-balancer config, 6 other)", "M. Lindqvist (SRE)",
              "2026-10-15", "the service's own incident history is the closest reference class")
    hyps = {
        "database connection pool exhausted": {"prior": 12 / 41, "source": log,
                                               "description": "application servers wait for "
                                                              "free connections"},
        "faulty release 4.18.2": {"prior": 13 / 41, "source": log,
                                  "description": "the release deployed at 13:58 UTC"},
        "payment provider degraded": {"prior": 6 / 41, "source": log},
        "load-balancer configuration change": {"prior": 4 / 41, "source": log},
        "other cause": {"prior": 6 / 41, "source": log, "catch_all": True},
    }
    case = bl.Case("Checkout 503 errors on 2026-10-14", hyps,
                   question="What caused the 47 minutes of 503 errors from checkout "
                            "(14:05-14:52 UTC)?",
                   analyst="M. Lindqvist", notes="Example case; all numbers invented.")
    case.add_evidence(
        "release shortly before onset", states=["yes", "no"],
        likelihoods={"database connection pool exhausted": [0.15, 0.85],
                     "faulty release 4.18.2": [0.95, 0.05],
                     "payment provider degraded": [0.15, 0.85],
                     "load-balancer configuration change": [0.30, 0.70],
                     "other cause": [0.15, 0.85]},
        observed="yes",
        source=src("deployment calendar: a release lands in about 15 % of 15-minute windows",
                   "M. Lindqvist", "2026-10-15", "coincidence rate for causes unrelated to "
                                                 "the release"),
        description="release 4.18.2 finished deploying 7 minutes before the first error")
    case.add_evidence(
        "effect of rolling back", states=["recovered within 10 min", "no change"],
        likelihoods={"database connection pool exhausted": [0.20, 0.80],
                     "faulty release 4.18.2": [0.85, 0.15],
                     "payment provider degraded": [0.10, 0.90],
                     "load-balancer configuration change": [0.15, 0.85],
                     "other cause": [0.20, 0.80]},
        observed="no change",
        source=src("runbook statistics on rollbacks, 2024-2026", "A. Osei (release manager)",
                   "2026-10-15", "a rollback fixes most release faults within minutes"))
    case.add_evidence(
        "database connection wait (p99)", states=["above 2 s", "normal"],
        likelihoods={"database connection pool exhausted": [0.90, 0.10],
                     "faulty release 4.18.2": [0.30, 0.70],
                     "payment provider degraded": [0.10, 0.90],
                     "load-balancer configuration change": [0.05, 0.95],
                     "other cause": [0.20, 0.80]},
        observed="above 2 s",
        source=src("metrics from the last 12 pool incidents", "M. Lindqvist", "2026-10-15",
                   "a slow query from a release can also hold connections"))
    case.add_evidence(
        "payment provider status page", states=["incident posted", "all operational"],
        likelihoods={"database connection pool exhausted": [0.03, 0.97],
                     "faulty release 4.18.2": [0.03, 0.97],
                     "payment provider degraded": [0.60, 0.40],
                     "load-balancer configuration change": [0.03, 0.97],
                     "other cause": [0.05, 0.95]},
        observed="all operational",
        source=src("provider's own reporting record, 6 past degradations, 4 posted",
                   "M. Lindqvist", "2026-10-15", "providers often post late or not at all"))
    case.add_evidence(
        "replica pool saturation metric", states=["saturated", "normal"],
        likelihoods={"database connection pool exhausted": [0.85, 0.15],
                     "faulty release 4.18.2": [0.35, 0.65],
                     "payment provider degraded": [0.10, 0.90],
                     "load-balancer configuration change": [0.05, 0.95],
                     "other cause": [0.20, 0.80]},
        observed=None,
        source=src("estimate before the metrics export is restored", "M. Lindqvist",
                   "2026-10-15", "export job failed during the incident"),
        description="pending: the metrics export for the replica is being restored")
    case.add_scenario(
        "industry survey", {"database connection pool exhausted": 0.20,
                            "faulty release 4.18.2": 0.40, "payment provider degraded": 0.15,
                            "load-balancer configuration change": 0.10, "other cause": 0.15},
        source=src("a published survey of e-commerce outage causes", "M. Lindqvist",
                   "2026-10-15", "a wider reference class than one service"))
    return case


def bottling_coliform() -> bl.Case:
    """Food and drink quality: a coliform-positive routine sample on a bottling line."""
    qa = src("plant QA records 2019-2026: 20 positive routine samples", "S. Brennan (QA)",
             "2026-09-03", "the line's own history")
    case = bl.Case(
        "Coliform-positive routine sample, bottling line 2",
        {"sampling or laboratory contamination": {"prior": 0.40, "source": qa},
         "biofilm in filler valves": {"prior": 0.20, "source": qa},
         "cartridge filter breakthrough": {"prior": 0.15, "source": qa},
         "source water contamination": {"prior": 0.10, "source": qa},
         "other cause": {"prior": 0.15, "source": qa, "catch_all": True}},
        question="Why did the routine sample from filler 2 on 2026-09-01 test positive for "
                 "total coliforms?",
        analyst="S. Brennan", safety_related=True,
        notes="Example case; all numbers invented. Product on hold under the site's recall "
              "procedure regardless of this analysis.")
    lab = src("laboratory proficiency data and resampling history", "S. Brennan", "2026-09-03",
              "a true contamination usually persists for a day")
    case.add_evidence(
        "resample of the same point within 24 h", states=["positive", "negative"],
        likelihoods={"sampling or laboratory contamination": [0.05, 0.95],
                     "biofilm in filler valves": [0.70, 0.30],
                     "cartridge filter breakthrough": [0.80, 0.20],
                     "source water contamination": [0.85, 0.15], "other cause": [0.50, 0.50]},
        observed="positive", source=lab)
    case.add_evidence(
        "well-head coliform test", states=["positive", "negative"],
        likelihoods={"sampling or laboratory contamination": [0.02, 0.98],
                     "biofilm in filler valves": [0.02, 0.98],
                     "cartridge filter breakthrough": [0.05, 0.95],
                     "source water contamination": [0.90, 0.10], "other cause": [0.10, 0.90]},
        observed="negative",
        source=src("utility supply testing record", "S. Brennan", "2026-09-03",
                   "the well is tested weekly; background positives are rare"))
    case.add_evidence(
        "filter differential pressure", states=["sudden drop", "normal trend"],
        likelihoods={"sampling or laboratory contamination": [0.05, 0.95],
                     "biofilm in filler valves": [0.05, 0.95],
                     "cartridge filter breakthrough": [0.70, 0.30],
                     "source water contamination": [0.05, 0.95], "other cause": [0.10, 0.90]},
        observed="normal trend",
        source=src("filter maker's guidance on breakthrough signatures", "K. Dufresne "
                   "(maintenance)", "2026-09-02", "a torn cartridge usually shows as a drop"))
    case.add_evidence(
        "ATP swab of filler nozzles", states=["above action limit", "below action limit"],
        likelihoods={"sampling or laboratory contamination": [0.10, 0.90],
                     "biofilm in filler valves": [0.80, 0.20],
                     "cartridge filter breakthrough": [0.20, 0.80],
                     "source water contamination": [0.20, 0.80], "other cause": [0.20, 0.80]},
        observed="above action limit",
        source=src("hygiene monitoring records", "S. Brennan", "2026-09-02",
                   "ATP tracks organic soil, not coliforms specifically"))
    case.add_evidence(
        "identification of the isolate", states=["environmental species", "faecal indicator"],
        likelihoods={"sampling or laboratory contamination": [0.60, 0.40],
                     "biofilm in filler valves": [0.85, 0.15],
                     "cartridge filter breakthrough": [0.50, 0.50],
                     "source water contamination": [0.30, 0.70], "other cause": [0.50, 0.50]},
        observed=None,
        source=src("microbiologist's estimate", "Dr. P. Anand (contract lab)", "2026-09-03",
                   "result expected in 48 h"),
        description="pending: species identification from the contract laboratory")
    case.add_scenario(
        "sector base rates", {"sampling or laboratory contamination": 0.30,
                              "biofilm in filler valves": 0.30,
                              "cartridge filter breakthrough": 0.15,
                              "source water contamination": 0.10, "other cause": 0.15},
        source=src("trade body's summary of bottled-water non-conformities", "S. Brennan",
                   "2026-09-03", "wider reference class"))
    return case


def nozzle_indication() -> bl.Case:
    """Plant integrity: an ultrasonic indication at a pressure-vessel nozzle weld."""
    hist = src("fleet inspection database: 60 comparable nozzle indications 2005-2025",
               "T. Haugen (integrity engineer)", "2026-08-11",
               "same vessel class, same inspection technique")
    case = bl.Case(
        "Ultrasonic indication at nozzle N3 weld, vessel V-201",
        {"original fabrication flaw": {"prior": 0.35, "source": hist},
         "service fatigue crack": {"prior": 0.20, "source": hist},
         "stress-corrosion cracking": {"prior": 0.10, "source": hist},
         "geometric reflector, no flaw": {"prior": 0.30, "source": hist},
         "other cause": {"prior": 0.05, "source": hist, "catch_all": True}},
        question="What is the 14 mm indication found at the N3 nozzle weld on 2026-08-09?",
        analyst="T. Haugen", safety_related=True,
        notes="Example case; all numbers invented. Fitness-for-service and any return to "
              "service are decided under the applicable pressure-equipment code by the "
              "competent person, not by this analysis.")
    case.add_evidence(
        "visible on 1998 fabrication radiographs", states=["yes", "no", "film unreadable"],
        likelihoods={"original fabrication flaw": [0.60, 0.20, 0.20],
                     "service fatigue crack": [0.02, 0.78, 0.20],
                     "stress-corrosion cracking": [0.02, 0.78, 0.20],
                     "geometric reflector, no flaw": [0.10, 0.70, 0.20],
                     "other cause": [0.10, 0.70, 0.20]},
        observed="no",
        source=src("radiography detection rates for planar flaws", "T. Haugen", "2026-08-11",
                   "radiography misses many tight planar flaws"))
    case.add_evidence(
        "growth since the 2022 inspection", states=["grew", "unchanged"],
        likelihoods={"original fabrication flaw": [0.10, 0.90],
                     "service fatigue crack": [0.70, 0.30],
                     "stress-corrosion cracking": [0.60, 0.40],
                     "geometric reflector, no flaw": [0.05, 0.95], "other cause": [0.30, 0.70]},
        observed="grew",
        source=src("sizing repeatability study, +/-2 mm", "T. Haugen", "2026-08-11",
                   "apparent growth below 2 mm is noise"))
    case.add_evidence(
        "phased-array characterisation", states=["planar, surface-breaking", "planar, embedded",
                                                 "non-planar or geometric"],
        likelihoods={"original fabrication flaw": [0.20, 0.60, 0.20],
                     "service fatigue crack": [0.80, 0.10, 0.10],
                     "stress-corrosion cracking": [0.80, 0.10, 0.10],
                     "geometric reflector, no flaw": [0.05, 0.05, 0.90],
                     "other cause": [0.30, 0.30, 0.40]},
        observed="planar, surface-breaking",
        source=src("inspection contractor's qualification trials", "L. Moreau (NDT level 3)",
                   "2026-08-10", "characterisation accuracy on test blocks"))
    case.add_evidence(
        "pressure cycling history", states=["frequent cycling", "steady operation"],
        likelihoods={"original fabrication flaw": [0.30, 0.70],
                     "service fatigue crack": [0.70, 0.30],
                     "stress-corrosion cracking": [0.30, 0.70],
                     "geometric reflector, no flaw": [0.30, 0.70], "other cause": [0.30, 0.70]},
        observed="frequent cycling",
        source=src("plant historian, batch operation since 2019", "T. Haugen", "2026-08-11",
                   "30 % of the fleet cycles frequently"))
    case.add_evidence(
        "magnetic particle test after grinding", states=["branched crack", "single straight crack",
                                                         "no indication"],
        likelihoods={"original fabrication flaw": [0.05, 0.75, 0.20],
                     "service fatigue crack": [0.05, 0.90, 0.05],
                     "stress-corrosion cracking": [0.85, 0.10, 0.05],
                     "geometric reflector, no flaw": [0.02, 0.08, 0.90],
                     "other cause": [0.30, 0.30, 0.40]},
        observed=None,
        source=src("NDT level 3 estimate", "L. Moreau", "2026-08-10",
                   "branching is the usual mark of stress corrosion"),
        description="pending: needs a shutdown to grind and test")
    case.add_scenario(
        "published fleet survey", {"original fabrication flaw": 0.45,
                                   "service fatigue crack": 0.15,
                                   "stress-corrosion cracking": 0.10,
                                   "geometric reflector, no flaw": 0.25, "other cause": 0.05},
        source=src("a published survey of in-service nozzle indications", "T. Haugen",
                   "2026-08-11", "a wider reference class than one fleet"))
    return case


CASES = {
    "ammonia_cold_store.json": bl.example_case,
    "checkout_outage.json": checkout_outage,
    "bottling_coliform.json": bottling_coliform,
    "nozzle_indication.json": nozzle_indication,
}


def main() -> None:
    for name, build in CASES.items():
        path = build().save(HERE / name)
        print(f"wrote {path.name}")


if __name__ == "__main__":
    main()

"""Excel in and out: Case.from_excel / case.to_excel.

Round trips are checked with generated cases (helpers/casegen.py) and with
workbooks made by hand cell by cell with openpyxl, the way an analyst's
spreadsheet arrives, never by our own writer. All numbers are invented.
"""

from __future__ import annotations

import zipfile
from datetime import datetime

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import beliefledger as bl
from beliefledger import workbook as wbmod
from beliefledger.errors import CaseFileError, WorkbookError
from helpers.casegen import HOSTILE, case_dicts

openpyxl = pytest.importorskip("openpyxl")


def round_trip(case: bl.Case, tmp_path, name="c.xlsx", **kw) -> bl.Case:
    path = case.to_excel(tmp_path / name, layout=kw.pop("layout", "sheets"))
    return bl.Case.from_excel(path, **kw)


# --------------------------------------------------------------------------- round trips


@settings(max_examples=40)
@given(data=case_dicts(), layout=st.sampled_from(["sheets", "long"]))
def test_a_round_trip_is_lossless_for_generated_cases(tmp_path_factory, data, layout):
    case = bl.Case.from_dict(data)
    back = round_trip(case, tmp_path_factory.mktemp("rt"), layout=layout, strict=False)
    assert back.to_dict() == case.to_dict()


def _dependent_case() -> bl.Case:
    """Two tests on one sample (a joint group) and a witness stated given another (invented)."""
    case = bl.Case("valve weep", hypotheses={"weep": 0.3, "dry": 0.6, "other cause": 0.1})
    case.add_evidence("dye test", states=["pos", "neg"],
                      likelihoods={"weep": [0.9, 0.1], "dry": [0.2, 0.8],
                                   "other cause": [0.5, 0.5]}, observed="pos")
    case.add_evidence("sniffer", states=["pos", "neg"],
                      likelihoods={"weep": [0.8, 0.2], "dry": [0.3, 0.7],
                                   "other cause": [0.5, 0.5]}, observed="pos")
    case.add_joint_group("same sample", ["dye test", "sniffer"],
                         covariance={"weep": 0.05, "dry": 0.1, "other cause": 0.0},
                         source="lab note 7 (invented)", note="one swab")
    case.add_evidence("first witness", states=["smelt it", "did not"],
                      likelihoods={"weep": [0.7, 0.3], "dry": [0.1, 0.9],
                                   "other cause": [0.4, 0.6]}, observed="smelt it")
    case.add_conditional_evidence(
        "second witness", given="first witness", observed="smelt it", states=["smelt it", "did not"],
        likelihoods={"smelt it": {"weep": [0.9, 0.1], "dry": [0.5, 0.5],
                                  "other cause": [0.6, 0.4]},
                     "did not": {"weep": [0.3, 0.7], "dry": [0.05, 0.95],
                                 "other cause": [0.2, 0.8]}},
        source="interview notes (invented)", shared_source="night shift")
    case.add_scenario("flat", {"weep": 1 / 3, "dry": 1 / 3, "other cause": 1 / 3},
                      source={"where": "no history", "who": "A. Lind"}, note="ignorance")
    case.use_scenario("flat")
    case.set_likelihood("dye test", "dry", [0.2, 0.8], source="maker's sheet (invented)")
    bl.set_loss_table(case, {"repair": {"weep": 1, "dry": 5, "other cause": 3},
                             "wait": {"weep": 9, "dry": 0, "other cause": 4}}, kind="loss", units="h")
    return case


@pytest.mark.parametrize("layout", ["sheets", "long"])
def test_dependence_scenarios_extras_and_sources_survive_a_round_trip(tmp_path, layout):
    case = _dependent_case()
    back = round_trip(case, tmp_path, layout=layout)
    assert back.to_dict() == case.to_dict()
    assert back.update().posterior.equals(case.update().posterior)


def test_hostile_text_and_formula_like_text_stay_text(tmp_path):
    case = bl.Case(HOSTILE[8].strip(), hypotheses={h.strip(): 1 / 4 for h in HOSTILE[:4]},
                   notes="=HYPERLINK(\"http://example.invalid\")")
    for i, text in enumerate(HOSTILE):
        case.set_hypothesis(HOSTILE[i % 4].strip(), description=f"{text} _x0041_ =1+1")
    case.add_evidence("=SUM(A1:A9)", states=["+1", "-1", "@x"],
                      likelihoods={h.strip(): [0.5, 0.25, 0.25] for h in HOSTILE[:4]},
                      observed="@x", description="\x00\x1b\r\n\t\u2028 end ")
    path = case.to_excel(tmp_path / "h.xlsx")
    wb = openpyxl.load_workbook(path)
    assert all(c.data_type != "f" for ws in wb.worksheets for row in ws.iter_rows()
               for c in row)  # nothing became a formula
    assert bl.Case.from_excel(path).to_dict() == case.to_dict()


def test_numbers_keep_every_digit(tmp_path):
    p = 0.1 + 0.2  # 0.30000000000000004: 16 digits would read back as 0.3
    case = bl.Case("digits", hypotheses={"A": p, "B": 1 - p})
    case.add_evidence("E", states=["x", "y"], likelihoods={"A": [1e-300, 1 - 1e-300],
                                                           "B": [p, 1 - p]})
    path = case.to_excel(tmp_path / "d.xlsx")
    with zipfile.ZipFile(path) as z:
        sheet = next(n for n in z.namelist() if n.startswith("xl/worksheets/sheet2"))
        assert b"<v>0.30000000000000004</v>" in z.read(sheet)
    back = bl.Case.from_excel(path)
    assert back.base_priors["A"] == p and back.evidence["E"].table[0, 0] == 1e-300


def test_a_part_way_sum_is_refused_by_default_and_kept_when_asked(tmp_path, small_case):
    small_case.set_likelihood("E2", "H2", 0.9, state="high")  # the column sums to 1.3
    small_case.set_prior("H1", 0.6)  # the priors sum to 1.1
    path = small_case.to_excel(tmp_path / "p.xlsx")
    with pytest.raises(WorkbookError, match=r"sheet 'hypotheses', cell B2:B4: the priors sum "
                                            r"to 1\.1, not 1") as err:
        bl.Case.from_excel(path)
    assert "strict=False" in str(err.value)
    kept = bl.Case.from_excel(path, strict=False)
    assert kept.to_dict() == small_case.to_dict()
    assert {"prior-sum", "column-sum"} <= {f.code for f in kept.update().flags}


def test_the_register_sheet_is_for_the_reviewer_and_not_read_back(tmp_path, demo_case):
    path = demo_case.to_excel(tmp_path / "r.xlsx")
    wb = openpyxl.load_workbook(path)
    reg = wb["register"]
    header = [c.value for c in reg[1]]
    assert header[-2:] == ["reviewer comment", "reviewer"]
    rows = list(reg.iter_rows(min_row=2, values_only=True))
    n_priors = len(demo_case.hypotheses) * (1 + len(demo_case.scenarios))
    n_lik = sum(len(e.states) * len(demo_case.hypotheses) for e in demo_case.evidence.values())
    assert sum(r[0] == "prior" for r in rows) == n_priors
    assert sum(r[0] == "likelihood" for r in rows) == n_lik
    assert sum(str(r[0]).startswith("recorded") for r in rows) == len(demo_case.assumptions)
    first_lik = next(r for r in rows if r[0] == "likelihood")
    ev = demo_case.evidence[first_lik[2]]
    assert float(first_lik[5]) == ev.likelihoods.loc[first_lik[3], first_lik[4]]
    assert first_lik[6] == ev.source_of(first_lik[3], first_lik[4]).where
    # the reviewer writes in it; the case read back is the same
    reg.cell(row=2, column=11, value="where is the 2019 log?")
    reg.cell(row=2, column=12, value="T. Varga")
    wb.save(path)
    assert bl.Case.from_excel(path).to_dict() == demo_case.to_dict()


# --------------------------------------------------------------------------- made by hand


def _sheet(wb, title, rows):
    ws = wb.create_sheet(title)
    for r in rows:
        ws.append(list(r))
    return ws


def hand_made(path, *, bad=None):
    """A workbook an analyst typed: columns in their own order, a comment column, yes/no,
    a percentage, a date, one item on its own sheet and one in a long sheet (invented)."""
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    _sheet(wb, "Case", [("field", "value"), ("Title", "Forklift battery fire"),
                        ("Analyst", "J. Mwangi"), ("Safety related", "yes")])
    _sheet(wb, "Hypotheses", [
        ("Hypothesis", "# my notes", "Where", "Prior", "Catch-all", "When"),
        ("charger fault", "check the relay", "site log 2020-2025", 0.5, None,
         datetime(2026, 3, 4)),
        ("cell damage", None, "site log 2020-2025", "30%", "no", None),
        ("other cause", None, "judgement", 0.2, "yes", None)])
    _sheet(wb, "Evidence", [
        ("Evidence", "Sheet", "Observed", "Where", "Shared source"),
        ("charger display", "display", "error E4", "charger manual p. 12", None),
        ("smoke colour", "likelihoods", "white", "fire-service notes", "crew A")])
    _sheet(wb, "display", [("state", "other cause", "charger fault", "cell damage"),
                           ("error E4", 0.1, 0.7, 0.2),
                           ("no error", 0.9, 0.3, 0.8)])
    _sheet(wb, "likelihoods", [("evidence", "state", "hypothesis", "likelihood")]
           + [("smoke colour", s, h, p) for s, ps in
              (("white", (0.6, 0.2, 0.5)), ("black", (0.4, 0.8, 0.5)))
              for h, p in zip(("charger fault", "cell damage", "other cause"), ps,
                              strict=True)])
    if bad:
        bad(wb)
    wb.save(path)
    return path


def expected_hand_made() -> bl.Case:
    case = bl.Case("Forklift battery fire", analyst="J. Mwangi", safety_related=True,
                   hypotheses={
                       "charger fault": {"prior": 0.5, "source": {"where": "site log 2020-2025",
                                                                  "when": "2026-03-04"}},
                       "cell damage": {"prior": 0.3, "source": "site log 2020-2025",
                                       "catch_all": False},
                       "other cause": {"prior": 0.2, "source": "judgement", "catch_all": True}})
    case.add_evidence("charger display", states=["error E4", "no error"],
                      likelihoods={"charger fault": [0.7, 0.3], "cell damage": [0.2, 0.8],
                                   "other cause": [0.1, 0.9]},
                      observed="error E4", source="charger manual p. 12")
    case.add_evidence("smoke colour", states=["white", "black"],
                      likelihoods={"charger fault": [0.6, 0.4], "cell damage": [0.2, 0.8],
                                   "other cause": [0.5, 0.5]},
                      observed="white", source="fire-service notes", shared_source="crew A")
    return case


def test_a_workbook_made_by_hand_reads_as_the_same_case(tmp_path):
    got = bl.Case.from_excel(hand_made(tmp_path / "hand.xlsx"))
    want = expected_hand_made()
    assert got.to_dict() == want.to_dict()
    assert got.update().map_hypothesis == want.update().map_hypothesis == "charger fault"


def test_without_an_index_every_other_sheet_is_an_item(tmp_path):
    def drop_index(wb):
        del wb["Evidence"]
        del wb["likelihoods"]
    got = bl.Case.from_excel(hand_made(tmp_path / "plain.xlsx", bad=drop_index))
    assert got.evidence_names == ["display"]
    assert got.evidence["display"].observed is None


def test_a_formula_counts_with_the_value_the_spreadsheet_saved(tmp_path):
    """openpyxl saves no computed values, so its formula reads as empty: say so."""
    def formula(wb):
        wb["Hypotheses"]["D4"] = "=1-D2-D3"
    with pytest.raises(WorkbookError, match=r"cell D4: prior of hypothesis 'other cause' is "
                                            r"empty.*formula counts only with a value saved"):
        bl.Case.from_excel(hand_made(tmp_path / "f.xlsx", bad=formula))


# --------------------------------------------------------------------------- bad workbooks


def _set(sheet, ref, value):
    def change(wb):
        wb[sheet][ref] = value
    return change


BAD = {
    "missing sheet": (lambda wb: wb.remove(wb["Hypotheses"]), "hypotheses", None,
                      "has no sheet 'hypotheses'; add a sheet named 'hypotheses'"),
    "prior not a number": (_set("Hypotheses", "D3", "high"), "Hypotheses", "D3",
                           "prior of hypothesis 'cell damage' is 'high', not a number; type "
                           "a probability between 0 and 1"),
    "column sum": (_set("display", "C2", 0.8), "display", "C2:C3",
                   "likelihoods of evidence 'charger display' under hypothesis 'charger fault' "
                   "sum to 1.1 over its states, not 1"),
    "unknown hypothesis in an item sheet": (_set("display", "D1", "cell swelling"), "display",
                                            "D1", "hypothesis 'cell swelling' is not in sheet "
                                            "'hypotheses'; fix the heading"),
    "unknown hypothesis in the long sheet": (_set("likelihoods", "C3", "gremlins"),
                                             "likelihoods", "C3", "hypothesis 'gremlins' is "
                                             "not in sheet 'hypotheses'"),
    "observed not a state": (_set("Evidence", "C2", "error E5"), "Evidence", "C2",
                             "observed state 'error E5' of evidence 'charger display' is not "
                             "among its states"),
    "unknown column": (_set("Hypotheses", "G1", "confidence"), "Hypotheses", "G1",
                       "unknown column 'confidence'"),
    "probability out of range": (_set("display", "B2", 1.5), "display", "B2",
                                 "outside [0, 1]"),
    "duplicate hypothesis": (_set("Hypotheses", "A4", "cell damage"), "Hypotheses", "A4",
                             "hypothesis 'cell damage' is listed twice"),
    "sheet the index forgot": (lambda wb: _sheet(wb, "stray", [("state", "a")]), "stray", "A1",
                               "is not named in the 'sheet' column"),
}


@pytest.mark.parametrize("kind", sorted(BAD))
def test_a_bad_workbook_names_the_sheet_the_cell_and_the_fix(tmp_path, kind):
    change, sheet, cell, words = BAD[kind]
    path = hand_made(tmp_path / "bad.xlsx", bad=change)
    before = path.read_bytes()
    listing = sorted(p.name for p in tmp_path.iterdir())
    with pytest.raises(WorkbookError) as err:
        bl.Case.from_excel(path)
    msg = str(err.value)
    assert isinstance(err.value, CaseFileError)  # a CaseError: the CLI and loaders treat it so
    assert words in msg, msg
    assert err.value.sheet == sheet
    assert err.value.cell == cell
    if cell:
        assert f"workbook 'bad.xlsx', sheet '{sheet}', cell {cell}: " in msg
    # a failed read touches nothing and leaves nothing behind
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == listing


def test_files_that_are_not_workbooks_are_refused(tmp_path):
    (tmp_path / "x.xlsx").write_text("name,prior\nA,1\n")
    with pytest.raises(WorkbookError, match="cannot be read as an Excel workbook"):
        bl.Case.from_excel(tmp_path / "x.xlsx")
    with pytest.raises(WorkbookError, match="no workbook at"):
        bl.Case.from_excel(tmp_path / "missing.xlsx")


def test_a_refused_write_keeps_the_old_workbook(tmp_path, small_case):
    path = small_case.to_excel(tmp_path / "w.xlsx")
    before = path.read_bytes()
    small_case.set_details(notes="\x01" * 20_000)  # 140,000 characters once escaped
    with pytest.raises(bl.CaseError, match="does not fit a workbook cell"):
        small_case.to_excel(path)
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["w.xlsx"]
    with pytest.raises(bl.CaseError, match="layout 'wide'"):
        small_case.to_excel(path, layout="wide")


def test_item_sheet_titles_are_valid_and_unique():
    taken = {n.casefold() for n in wbmod.RESERVED}
    titles = [wbmod.sheet_title(n, taken) for n in
              ["a/b:c*d?e[f]g\\h", "x" * 40, "X" * 40, "Evidence", "'quoted'", "history", "\x1b"]]
    assert titles[0] == "a_b_c_d_e_f_g_h"
    assert len(titles[1]) == 31 and titles[2] == "X" * 27 + " (2)"
    assert titles[3] == "Evidence (2)" and titles[4] == "quoted"
    assert titles[5] == "history (2)" and titles[6] == "_"
    assert len({t.casefold() for t in titles}) == len(titles)


def test_escaping_follows_the_ooxml_rule_both_ways():
    for text in [*HOSTILE, "_x0041_", "_x005F_x0041_", "a_xZZZZ_b", "\ud800 lone"]:
        esc = wbmod.escape_text(text)
        assert not any(ord(ch) < 32 and ch not in "\t\n" for ch in esc)
        assert wbmod.unescape_text(esc) == text
    assert wbmod.unescape_text("bell_x0007_") == "bell\x07"  # as Excel writes it

"""The review round (record/checklist.py, comments.py, reviews.py, review.py, signing.py):
the checklist, a decision with comments anchored to numbers, chained sign-offs, and the
analyst's replies followed by diff."""

from __future__ import annotations

import copy
import json

import pytest

import beliefledger as bl
from beliefledger.cli import main
from beliefledger.errors import RecordError, RecordNotIntact
from beliefledger.record.checklist import apply_ticks, evaluate, load_checks
from beliefledger.record.comments import comments_csv
from beliefledger.record.differ import diff
from beliefledger.record.html import render_html
from beliefledger.record.nbio import dumps_notebook, read_record
from beliefledger.record.review import apply_replies, review, sign
from beliefledger.record.sealer import build_record
from beliefledger.record.sections import FRONT_CELLS as F
from beliefledger.record.verifier import verify
from test_record import SEALED_AT, _display, executed_notebook


def write_record(path, *cases, extra=()):
    rec = build_record(executed_notebook(*cases, extra_cells=extra), notebook_name="t.ipynb",
                       sealed_at=SEALED_AT)
    path.write_text(dumps_notebook(rec), encoding="utf-8")
    return path


@pytest.fixture
def rec(tmp_path):
    return write_record(tmp_path / "case.sealed.ipynb", bl.example_case())


def outcomes(checklist):
    return {o.check.id: o for o in checklist.outcomes}


# --------------------------------------------------------------------------- checklist


def test_checklist_of_the_demo_case_names_the_items_behind_each_outcome(rec):
    got = outcomes(review(rec))
    assert [c.id for c in load_checks()] == list(got)
    assert got["all-sourced"].outcome == "pass"
    assert got["catch-all"].outcome == "pass"
    assert got["two-scenarios"].outcome == "pass"
    assert got["cautions-present"].outcome == "pass"
    dep = got["dependence-declared"]
    assert dep.outcome == "fail"
    assert "'detector alarm order', 'night operator's account'" in dep.items[0]
    assert got["pending-valued"].outcome == "fail"  # one item pending, no ranking shown
    assert all(got[c].outcome == "open" for c in ("exhaustive-set", "reference-class",
                                                 "loss-priorities"))
    assert all(o.check.rationale for o in got.values())


def test_pending_valued_passes_when_the_notebook_shows_a_ranking(tmp_path):
    case = bl.example_case()
    out = {**_display(bl.rank_next_evidence(case)), "output_type": "execute_result",
           "execution_count": 2}
    path = write_record(tmp_path / "r.ipynb", case, extra=[("bl.rank_next_evidence(case)",
                                                            [out])])
    assert outcomes(review(path))["pending-valued"].outcome == "pass"


def test_unsourced_numbers_zero_priors_without_reason_and_no_catch_all_fail(tmp_path):
    case = bl.Case("Valve chatter (invented)", hypotheses={"worn seat": 0.7, "debris": 0.3,
                                                            "sensor fault": 0.0})
    case.add_evidence("noise band", states=["low", "high"],
                      likelihoods={"worn seat": [0.3, 0.7], "debris": [0.6, 0.4],
                                   "sensor fault": [0.5, 0.5]}, observed="high")
    got = outcomes(review(write_record(tmp_path / "r.ipynb", case)))
    assert got["all-sourced"].outcome == "fail"
    assert any("'noise band': all 6 likelihoods" in i for i in got["all-sourced"].items)
    assert got["catch-all"].outcome == "fail"
    assert got["zero-prior-reason"].outcome == "fail"
    assert "'sensor fault'" in got["zero-prior-reason"].items[0]
    assert got["two-scenarios"].outcome == "fail"


def test_a_site_file_adds_manual_checks_only(tmp_path, rec, monkeypatch):
    site = tmp_path / "site.json"
    site.write_text(json.dumps({"checks": [{"id": "permit-log-read", "kind": "manual",
                                            "text": "The permit-to-work log was read.",
                                            "rationale": "Site rule 14 (invented)."}]}))
    assert "permit-log-read" in outcomes(review(rec, site=site))
    monkeypatch.setenv("BELIEFLEDGER_SITE_CHECKS", str(site))
    assert "permit-log-read" in outcomes(review(rec))
    site.write_text(json.dumps([{"id": "x-check", "kind": "automatic", "text": "t",
                                 "rationale": "r"}]))
    with pytest.raises(RecordError, match="manual checks only"):
        review(rec, site=site)
    site.write_text(json.dumps([{"id": "catch-all", "kind": "manual", "text": "t",
                                 "rationale": "r"}]))
    with pytest.raises(RecordError, match="repeats the check id"):
        review(rec, site=site)


def test_ticks_apply_to_manual_checks_and_refuse_the_rest(rec):
    nb, meta = read_record(rec)
    base = evaluate(nb, meta)
    ticked = apply_ticks(base, {"exhaustive-set": ("ticked", "walked the plant")})
    assert outcomes(ticked)["exhaustive-set"].outcome == "ticked"
    with pytest.raises(RecordError, match=r"unknown check\(s\) \['no-such-check'\]"):
        apply_ticks(base, {"no-such-check": ("ticked", "")})
    with pytest.raises(RecordError, match="automatic"):
        apply_ticks(base, {"catch-all": ("ticked", "")})


# --------------------------------------------------------------------------- signing


COMMENTS = [
    {"target": "hypothesis:maintenance venting", "comment": "Read the permit log first."},
    {"target": "likelihood:detector alarm order|machine room first|compressor seal leak",
     "comment": "Is the vendor's 0.7 right for this room layout?"},
    {"target": "evidence:night operator's account", "comment": "Group it with the alarm order."},
    {"target": "scenario:uniform", "comment": "Fine as a check, not a belief."},
    {"target": f"cell:{F + 2}", "comment": "Say which panel export this is."},
]


def test_sign_with_decision_checklist_and_comments_then_verify(rec, tmp_path):
    cfile = tmp_path / "comments.json"
    cfile.write_text(json.dumps(COMMENTS))
    ticks = tmp_path / "ticks.csv"
    ticks.write_text("id,ticked,note\nexhaustive-set,yes,walked the plant\n"
                     "reference-class,no,site log too short\nloss-priorities,n/a,\n")
    (tmp_path / "rev").parent.mkdir(exist_ok=True)
    main(["keygen", str(tmp_path / "rev")])
    entry = sign(rec, "P. Reviewer", decision="conditions", comments=cfile, checklist=ticks,
                 key=tmp_path / "rev.key")
    assert entry["decision"] == "conditions" and entry["previous"] is None
    assert [c["id"] for c in entry["comments"]] == ["C1.1", "C1.2", "C1.3", "C1.4", "C1.5"]
    assert entry["checklist"]["manual"]["reference-class"] == {"outcome": "not ticked",
                                                              "note": "site log too short"}
    assert entry["checklist"]["automatic"]["dependence-declared"] == "fail"
    res = verify(rec)
    assert res.ok, res.text()
    (st,) = res.signoffs
    assert st.status == "valid" and st.key_id == entry["key_id"]
    # the record shows the review, the comments beside what they concern
    nb, _ = read_record(rec)
    texts = {c["metadata"]["beliefledger"]["section"]: c["outputs"][0]["data"]["text/html"]
             for c in nb["cells"] if c["metadata"].get("beliefledger", {}).get("role") == "review"}
    assert "accepted with conditions" in texts["reviews"] and "P. Reviewer" in texts["reviews"]
    assert "hypothesis &#x27;maintenance venting&#x27;" in texts["register-comments"]
    assert "Is the vendor&#x27;s 0.7 right" in texts["register-comments"]
    page = render_html(nb)
    cell = page.split(f'id="cell-{F + 2}"')[1].split("</section>")[0]
    assert "Say which panel export this is." in cell  # the aside beside the cell


@pytest.mark.parametrize("target, match", [
    ("hypothesis:ghost", r"no hypothesis 'ghost'.*the hypothesis names are"),
    ("evidence:ghost", r"no evidence 'ghost'"),
    ("likelihood:detector alarm order|nowhere|compressor seal leak", r"has no state 'nowhere'"),
    ("likelihood:ghost|a|b", r"no evidence item 'ghost'"),
    ("scenario:ghost", r"no scenario 'ghost'"),
    ("cell:999", r"cell 999 does not exist; the record has cells 1 to"),
    ("shape:circle", r"must start with one of"),
])
def test_a_comment_on_something_that_does_not_exist_is_refused_by_name(rec, tmp_path,
                                                                      target, match):
    cfile = tmp_path / "c.csv"
    cfile.write_text(f"target,comment\n\"{target}\",why\n")
    before = rec.read_bytes()
    with pytest.raises(RecordError, match=match):
        sign(rec, "P. Reviewer", decision="conditions", comments=cfile)
    assert rec.read_bytes() == before  # nothing written


def test_conditions_and_rejections_need_reasons(rec):
    with pytest.raises(RecordError, match="needs the reasons"):
        sign(rec, "P. Reviewer", decision="reject")
    with pytest.raises(RecordError, match="is not one of accept, conditions, reject"):
        sign(rec, "P. Reviewer", decision="maybe")
    assert sign(rec, "P. Reviewer", decision="reject", comment="wrong reference class")


# --------------------------------------------------------------------------- the chain


def _three_signoffs(rec, tmp_path):
    main(["keygen", str(tmp_path / "k")])
    sign(rec, "A. First", decision="accept", key=tmp_path / "k.key")
    sign(rec, "B. Second", decision="accept")
    sign(rec, "C. Third", decision="conditions", comment="one condition",
         key=tmp_path / "k.key")
    return json.loads(rec.read_text(encoding="utf-8"))


def _check(nb, tmp_path):
    p = tmp_path / "m.ipynb"
    p.write_text(json.dumps(nb), encoding="utf-8")
    return verify(p)


@pytest.mark.parametrize("edit, code, who", [
    (lambda so: so.pop(0), "sign-off-missing", "sign-off 1 (B. Second)"),
    (lambda so: so.pop(1), "sign-off-missing", "sign-off 2 (C. Third"),
    (lambda so: so.insert(0, so.pop(1)), "sign-off-missing", "sign-off 1 (B. Second)"),
    (lambda so: so[0].update(decision="reject"), "sign-off-broken", "sign-off 1 (A. First"),
    (lambda so: so[1].update(reviewer="Z. Someone"), "sign-off-broken", "sign-off 2"),
])
def test_removing_reordering_or_editing_an_earlier_sign_off_breaks_the_chain(
        rec, tmp_path, edit, code, who):
    nb = _three_signoffs(rec, tmp_path)
    assert verify(rec).ok
    edit(nb["metadata"]["beliefledger"]["signoffs"])
    res = _check(nb, tmp_path)
    assert not res.ok and not res.intact
    hits = [p for p in res.problems if p.code == code]
    assert hits and hits[0].where.startswith(who), res.text()


def test_removing_the_last_sign_off_shows_in_the_reviews_and_the_chain_head(rec, tmp_path):
    from beliefledger.record.review import refresh_review_cells

    nb = _three_signoffs(rec, tmp_path)
    head = verify(rec).chain_head
    assert verify(rec, expect_chain=head).ok
    nb["metadata"]["beliefledger"]["signoffs"].pop()
    res = _check(nb, tmp_path)
    assert [p.code for p in res.problems] == ["review-cell"]
    # a forger who also redraws the review cells leaves a valid, shorter chain: only the
    # quoted chain head catches it
    refresh_review_cells(nb)
    p = tmp_path / "forged.ipynb"
    p.write_text(json.dumps(nb), encoding="utf-8")
    assert verify(p).ok
    res = verify(p, expect_chain=head)
    assert [q.code for q in res.problems] == ["chain-head-mismatch"]
    assert main(["verify", str(p), "--expect-chain", head]) == 1


def test_a_broken_chain_cannot_be_signed_again(rec, tmp_path):
    nb = _three_signoffs(rec, tmp_path)
    nb["metadata"]["beliefledger"]["signoffs"].pop(0)
    from beliefledger.record.review import refresh_review_cells

    refresh_review_cells(nb)
    rec.write_text(json.dumps(nb), encoding="utf-8")
    with pytest.raises(RecordNotIntact, match=r"(?s)not intact.*sign-off-missing"):
        sign(rec, "D. Fourth", decision="accept")


# --------------------------------------------------------------------------- replies and diff


def test_the_analysts_replies_and_changes_are_followed_per_comment(rec, tmp_path, capsys):
    cfile = tmp_path / "comments.json"
    cfile.write_text(json.dumps(COMMENTS))
    sign(rec, "P. Reviewer", decision="conditions", comments=cfile)
    # the analyst takes the comments file, answers two, changes one number
    assert main(["review", str(rec), "--comments-out", str(tmp_path / "answers.csv")]) == 0
    rows = (tmp_path / "answers.csv").read_text().splitlines()
    assert rows[0] == "id,reviewer,decision,case,target,comment,reply" and len(rows) == 6
    answered = [rows[0]] + [r + "the vendor's closed-room figure 0.6 is used now" if
                            r.startswith("C1.2,") else r for r in rows[1:]]
    (tmp_path / "answers.csv").write_text("\n".join(answered) + "\n")
    case = bl.example_case()
    assert apply_replies(case, tmp_path / "answers.csv") == 1
    case.reply("C1.1", "permit log read: no venting that night", who="R. Okafor")
    ev = case.evidence["detector alarm order"]
    col = list(ev.table[:, ev.hypotheses.index("compressor seal leak")])
    col[0], col[1] = 0.6, col[1] + 0.1
    case.set_likelihood("detector alarm order", "compressor seal leak", col,
                        source="vendor closed-room figure (invented)")
    new = write_record(tmp_path / "v2.sealed.ipynb", case)
    d = diff(rec, new)
    by_id = {r.comment["id"]: r for r in d.responses}
    assert by_id["C1.2"].reply["text"] == "the vendor's closed-room figure 0.6 is used now"
    assert any(c.where == "P('machine room first' | 'compressor seal leak') of "
               "'detector alarm order'" for c in by_id["C1.2"].changes)
    assert by_id["C1.1"].reply["who"] == "R. Okafor" and by_id["C1.1"].changes == []
    assert by_id["C1.4"].reply is None and by_id["C1.4"].changes == []
    assert by_id["C1.5"].cell.startswith("changed: its outputs")  # the case shown changed
    text = d.text()
    assert "review comments (5, 2 answered)" in text
    assert "unchanged: nothing it concerns differs" in text
    assert main(["diff", str(rec), str(new)]) == 1
    assert "C1.2 (P. Reviewer, conditions)" in capsys.readouterr().out


def test_a_reply_to_a_malformed_id_is_refused_and_the_case_unchanged():
    case = bl.example_case()
    before = case.to_dict()
    with pytest.raises(bl.CaseError, match="looks like 'C1.3'"):
        case.reply("comment one", "done")
    assert case.to_dict() == before


def test_cli_review_prints_the_checklist_and_json(rec, capsys):
    assert main(["review", str(rec)]) == 0
    out = capsys.readouterr().out
    assert "[      fail] dependence-declared" in out and "Manual checks" in out
    assert main(["review", str(rec), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert {c["id"] for c in data["checks"]} >= {"all-sourced", "exhaustive-set"}


def test_comments_csv_round_trips_every_comment(rec, tmp_path):
    cfile = tmp_path / "comments.json"
    cfile.write_text(json.dumps(COMMENTS))
    sign(rec, "P. Reviewer", decision="conditions", comments=cfile)
    _, meta = read_record(rec)
    text = comments_csv(meta["signoffs"])
    again = tmp_path / "again.csv"
    again.write_text(text)
    sign(rec, "Q. Second", decision="conditions", comments=again)
    _, meta = read_record(rec)
    first, second = meta["signoffs"]
    assert [c["target"] for c in first["comments"]] == [c["target"] for c in second["comments"]]
    assert [c["id"] for c in second["comments"]][0] == "C2.1"
    assert copy.deepcopy(second["previous"]) is not None

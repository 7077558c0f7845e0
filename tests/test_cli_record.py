"""The record commands on the command line: exit codes, reports, sign-off, keys, demo."""

from __future__ import annotations

import json
import os
import stat

import pytest

import beliefledger as bl
from beliefledger.cli import main
from beliefledger.record.sealer import build_record, dumps_notebook
from beliefledger.record.sections import FRONT_CELLS as F
from helpers import records
from test_record import executed_notebook, meta_of, reseal_hashes


@pytest.fixture(scope="module")
def base_record():
    from beliefledger.record import sections

    saved = sections.chart_svgs
    sections.chart_svgs = lambda ledger, case: ([], "skipped in a test")
    try:
        return build_record(executed_notebook(bl.example_case()), notebook_name="t.ipynb",
                            sealed_at="2026-11-30T08:00:00Z")
    finally:
        sections.chart_svgs = saved


@pytest.fixture
def rec(tmp_path, base_record):
    p = tmp_path / "case.sealed.ipynb"
    p.write_text(dumps_notebook(base_record), encoding="utf-8")
    return p


def edit_file(path, fn):
    nb = json.loads(path.read_text(encoding="utf-8"))
    fn(nb)
    path.write_text(json.dumps(nb), encoding="utf-8")


def test_verify_exit_codes(rec, tmp_path, capsys):
    assert main(["verify", str(rec)]) == 0
    assert "INTACT and reproducible" in capsys.readouterr().out
    edit_file(rec, lambda nb: nb["cells"][F + 1].update(source="tampered"))
    assert main(["verify", str(rec)]) == 1
    out = capsys.readouterr().out
    assert "NOT INTACT" in out and f"cell {F + 2} (code, 'tampered')" in out
    bad = tmp_path / "bad.ipynb"
    bad.write_bytes(b"\x89PNG\r\n")
    assert main(["verify", str(bad)]) == 2
    assert "not UTF-8" in capsys.readouterr().err
    assert main(["verify", str(tmp_path / "missing.ipynb")]) == 2


def test_verify_json_report_lists_each_problem_with_where(rec, capsys):
    edit_file(rec, lambda nb: nb["cells"].pop(F + 1))
    assert main(["verify", str(rec), "--json"]) == 1
    report = json.loads(capsys.readouterr().out)
    assert report["ok"] is False and report["intact"] is False
    assert report["tolerance"] == 1e-9
    assert {"code": "cell-removed", "where": f"sealed cell {F + 2} (code)",
            "detail": "is missing from the notebook"} in report["problems"]


def test_verify_expect_fingerprint(rec, base_record, capsys):
    fp = meta_of(base_record)["manifest"]["fingerprint"]
    assert main(["verify", str(rec), "--expect", fp]) == 0
    assert main(["verify", str(rec), "--expect", "0000-0000-0000-0000-0000"]) == 1
    assert "expected 0000-0000-0000-0000-0000" in capsys.readouterr().out
    assert main(["verify", str(rec), "--expect", "zz"]) == 2


def test_unsigned_signoff_covers_the_root_and_breaks_on_change(rec, capsys):
    html_copy = rec.with_name("case.sealed.html")
    html_copy.write_text("old copy", encoding="utf-8")
    assert main(["sign", str(rec), "--reviewer", "P. Reviewer", "--decision", "accept",
                 "--comment", "checked"]) == 0
    assert "unsigned" in capsys.readouterr().out
    assert "P. Reviewer" in html_copy.read_text(encoding="utf-8")  # the reading copy follows
    assert main(["verify", str(rec)]) == 0
    out = capsys.readouterr().out
    assert "sign-off 1 by P. Reviewer" in out and "valid" in out
    edit_file(rec, lambda nb: nb["cells"][0].update(source="# Retitled after sign-off"))
    assert main(["verify", str(rec)]) == 1
    assert "changed after this sign-off" in capsys.readouterr().out
    # a record that is not intact cannot be signed
    assert main(["sign", str(rec), "--reviewer", "Q. Second", "--decision", "accept"]) == 1
    assert "not intact" in capsys.readouterr().err


def test_keygen_writes_a_private_key_only_its_owner_can_read(tmp_path, capsys):
    prefix = tmp_path / "reviewer"
    assert main(["keygen", str(prefix)]) == 0
    priv, pub = tmp_path / "reviewer.key", tmp_path / "reviewer.pub"
    assert stat.S_IMODE(os.stat(priv).st_mode) == 0o600
    assert b"PRIVATE KEY" in priv.read_bytes() and b"PUBLIC KEY" in pub.read_bytes()
    before = priv.read_bytes()
    assert main(["keygen", str(prefix)]) == 2
    assert "already exists" in capsys.readouterr().err
    assert priv.read_bytes() == before
    assert main(["keygen", str(prefix), "--force"]) == 0
    assert priv.read_bytes() != before


def test_signature_defeats_a_forger_who_recomputes_the_digests(rec, tmp_path, capsys):
    prefix = tmp_path / "rev"
    main(["keygen", str(prefix)])
    assert main(["sign", str(rec), "--reviewer", "P. Reviewer", "--decision", "accept",
                 "--key", str(tmp_path / "rev.key")]) == 0
    pub = str(tmp_path / "rev.pub")
    assert main(["verify", str(rec), "--public-key", pub]) == 0
    assert "Ed25519 signature over the current root digest checks" in capsys.readouterr().out
    # the forger edits an output, recomputes every digest, keeps the old sign-off
    nb = json.loads(rec.read_text(encoding="utf-8"))
    nb["cells"][F + 1]["outputs"][0]["data"]["text/plain"] = "a different case"
    forged = reseal_hashes(nb)
    rec.write_text(dumps_notebook(forged), encoding="utf-8")
    assert main(["verify", str(rec), "--json", "--public-key", pub]) == 1
    report = json.loads(capsys.readouterr().out)
    assert [p["code"] for p in report["problems"]] == ["sign-off-broken", "key-not-trusted"]
    # re-signing with the forger's own key is caught by pinning the reviewer's public key
    rec.write_text(dumps_notebook(forged), encoding="utf-8")
    from beliefledger.record.review import refresh_review_cells

    # the forger drops the sign-off and the reviews shown with it (else sign refuses)
    edit_file(rec, lambda nb: (meta_of(nb).update(signoffs=[]), refresh_review_cells(nb)))
    main(["keygen", str(tmp_path / "forger")])
    main(["sign", str(rec), "--reviewer", "P. Reviewer", "--decision", "accept", "--key",
          str(tmp_path / "forger.key")])
    capsys.readouterr()
    assert main(["verify", str(rec)]) == 0  # a valid signature, but by whom?
    assert main(["verify", str(rec), "--public-key", pub]) == 1
    assert "no valid signature by the given public key" in capsys.readouterr().out


def test_tampered_signature_is_broken(rec, tmp_path, capsys):
    main(["keygen", str(tmp_path / "k")])
    main(["sign", str(rec), "--reviewer", "A", "--decision", "reject", "--key",
          str(tmp_path / "k.key"), "--comment", "the priors are from the wrong fleet"])
    original = rec.read_text(encoding="utf-8")

    def flip(nb):
        s = meta_of(nb)["signoffs"][0]
        s["decision"], s["comment"] = "accept", "approved without reservations"

    edit_file(rec, flip)
    capsys.readouterr()
    assert main(["verify", str(rec)]) == 1
    assert "was edited after signing" in capsys.readouterr().out
    # a forger who also recomputes the entry's own digest still fails the signature
    from beliefledger.record import signing

    rec.write_text(original, encoding="utf-8")

    def forge(nb):
        flip(nb)
        s = meta_of(nb)["signoffs"][0]
        s["entry_sha256"] = signing._own_digest(s)

    edit_file(rec, forge)
    assert main(["verify", str(rec)]) == 1
    assert "signature does not match" in capsys.readouterr().out


def test_diff_of_case_files_and_records(tmp_path, rec, capsys):
    a = bl.example_case()
    a.save(tmp_path / "a.json")
    b = a.copy()
    b.rename_hypothesis("other cause", "something else")
    b.set_priors({"compressor seal leak": 0.25, "relief valve lifted": 0.30,
                  "evaporator coil corrosion": 0.25, "maintenance venting": 0.10,
                  "something else": 0.10}, source="revised site log")
    b.observe("relief valve tell-tale", "burst")
    b.save(tmp_path / "b.json")
    assert main(["diff", str(tmp_path / "a.json"), str(tmp_path / "b.json")]) == 1
    out = capsys.readouterr().out
    assert "renamed: hypothesis 'other cause': other cause -> something else" in out
    assert "prior of 'relief valve lifted' (base): 0.2 -> 0.3" in out
    assert "observed state of 'relief valve tell-tale': intact -> burst" in out
    assert "MAP hypothesis: compressor seal leak" in out and "-> relief valve lifted" in out
    assert "source of prior 'relief valve lifted'" in out
    assert main(["diff", str(tmp_path / "a.json"), str(tmp_path / "a.json")]) == 0
    assert "no differences" in capsys.readouterr().out
    # a record against a case file; markdown and html to a file
    assert main(["diff", str(tmp_path / "a.json"), str(rec), "--format", "markdown"]) == 0
    out_html = tmp_path / "d.html"
    assert main(["diff", str(tmp_path / "a.json"), str(tmp_path / "b.json"), "--format", "html",
                 "--out", str(out_html)]) == 1
    page = out_html.read_text(encoding="utf-8")
    assert page.startswith("<!DOCTYPE html>") and "<script" not in page
    assert "relief valve lifted" in page
    (tmp_path / "x.txt").write_text("hello", encoding="utf-8")
    assert main(["diff", str(tmp_path / "x.txt"), str(rec)]) == 2


def test_flags_that_appear_and_clear_are_listed(tmp_path):
    from beliefledger.record.differ import diff

    a = bl.Case("F", hypotheses={"A": 0.5, "B": 0.5}, exhaustive=True)
    a.add_evidence("E", states=["x", "y"], likelihoods={"A": [0.5, 0.5], "B": [0.5, 0.5]},
                   observed="x", source="s")
    a.save(tmp_path / "a.json")
    b = a.copy()
    b.set_prior("A", 0.0)
    b.set_prior("B", 1.0)
    b.save(tmp_path / "b.json")
    d = diff(tmp_path / "a.json", tmp_path / "b.json")
    appeared = [c for c in d.changes if c.kind == "appeared"]
    assert any("zero-prior" in c.where for c in appeared), d.text()
    back = diff(tmp_path / "b.json", tmp_path / "a.json")
    assert any(c.kind == "cleared" and "zero-prior" in c.where for c in back.changes)


def test_seal_of_a_non_notebook_exits_2(tmp_path, capsys):
    p = tmp_path / "x.ipynb"
    p.write_text('{"cells": [], "nbformat": 9, "nbformat_minor": 0, "metadata": {}}',
                 encoding="utf-8")
    assert main(["seal", str(p)]) == 2
    assert "nbformat 9, newer than this tool reads" in capsys.readouterr().err


def test_demo_end_to_end(tmp_path, capsys):
    out = tmp_path / "demo"
    assert main(["demo", "--out", str(out)]) == 0
    text = capsys.readouterr().out
    sealed = out / "demo_investigation.sealed.ipynb"
    html = out / "demo_investigation.sealed.html"
    assert sealed.exists() and html.exists()
    assert "INTACT and reproducible" in text and str(html) in text
    nb = json.loads(sealed.read_text(encoding="utf-8"))
    fp = meta_of(nb)["manifest"]["fingerprint"]
    assert f"--expect {fp}" in text
    assert main(["verify", str(sealed), "--expect", fp]) == 0
    # the sealed case is the final state: the pending item was observed in the last cell
    env = meta_of(nb)["cases"][0]["envelope"]["case"]
    assert {e["name"]: e["observed"] for e in env["evidence"]}["suction pressure trend"] == \
        "slow decline"
    page = html.read_text(encoding="utf-8")
    visible = records.without_record_block(page)  # the one script: the record, as data
    assert "<script" not in visible and "Local codes, regulations" in visible
    assert main(["verify", str(html), "--expect", fp]) == 0  # the copy verifies on its own


def test_demo_on_a_minimal_install_says_what_is_missing_before_starting(tmp_path, monkeypatch,
                                                                         capsys):
    """Without the notebook extra, demo stops at once with the install command: no
    'sealing ...' line first and no output folder."""
    import importlib.util

    from beliefledger.cli import main

    real = importlib.util.find_spec
    monkeypatch.setattr(importlib.util, "find_spec",
                        lambda name, *a: None if name == "nbclient" else real(name, *a))
    out = tmp_path / "demo"
    assert main(["demo", "--out", str(out)]) == 2
    captured = capsys.readouterr()
    assert "pip install 'beliefledger[notebook]'" in captured.err and "nbclient" in captured.err
    assert "sealing" not in captured.err + captured.out
    assert not out.exists()

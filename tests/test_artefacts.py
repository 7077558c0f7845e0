"""Evidence artefacts: attach records a file's name, size and SHA-256 with its item; verify
checks a folder of the files against them. File contents here are invented test data."""

from __future__ import annotations

import hashlib
import json
from datetime import UTC, datetime, timedelta
from xml.etree import ElementTree as ET

import pytest

import beliefledger as bl
from beliefledger.case import artefacts as arts
from beliefledger.cli import main
from beliefledger.display import artefacts_html
from beliefledger.record.sealer import build_record, dumps_notebook
from helpers.casegen import HOSTILE
from helpers.records import conveyor_case, executed_notebook

# FIPS 180-2 (2002), Appendix B.1: SHA-256("abc"). Read in the standard's text.
ABC_SHA256 = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"


@pytest.fixture
def evidence_files(tmp_path):
    folder = tmp_path / "evidence"
    folder.mkdir()
    (folder / "tag-photo.jpg").write_bytes(b"abc")
    (folder / "relay-log.txt").write_text("02:41 relay 3 tripped\n02:43 reset\n")
    return folder


@pytest.fixture
def case():
    c = conveyor_case()
    c.set_details(analyst="M. Duarte")
    return c


def test_attach_records_name_size_digest_who_and_when(case, evidence_files):
    before = sorted(p.name for p in evidence_files.parent.rglob("*"))
    t0 = datetime.now(UTC).replace(microsecond=0)
    art = case.attach("thermal tag", evidence_files / "tag-photo.jpg",
                      note="photo of the relay's thermal tag", who="K. Osei")
    assert (art.name, art.size, art.sha256) == ("tag-photo.jpg", 3, ABC_SHA256)
    assert art.who == "K. Osei" and art.note == "photo of the relay's thermal tag"
    assert art.when.endswith("Z")
    when = datetime.fromisoformat(art.when)
    assert when.utcoffset() == timedelta(0) and t0 <= when <= datetime.now(UTC)
    assert art.copy == ""
    assert sorted(p.name for p in evidence_files.parent.rglob("*")) == before  # nothing copied
    assert case.evidence["thermal tag"].artefacts == (art,)
    # the case's analyst attaches when no one else is named
    log = case.attach("belt marks", evidence_files / "relay-log.txt")
    assert log.who == "M. Duarte"
    assert log.sha256 == hashlib.sha256((evidence_files / "relay-log.txt").read_bytes()).hexdigest()
    frame = case.artefacts
    assert list(frame["evidence"]) == ["thermal tag", "belt marks"]
    assert list(frame["file"]) == ["tag-photo.jpg", "relay-log.txt"]
    assert list(frame["bytes"]) == [3, log.size]


def test_digest_of_a_file_larger_than_one_read(tmp_path):
    p = tmp_path / "big.bin"
    data = bytes(range(256)) * (arts.CHUNK // 256 * 2 + 7)
    p.write_bytes(data)
    assert arts.file_digest(p) == (len(data), hashlib.sha256(data).hexdigest())


def test_copy_to_copies_the_file_and_keeps_its_digest(case, evidence_files, tmp_path):
    store = tmp_path / "case-store"
    store.mkdir()
    art = case.attach("thermal tag", evidence_files / "tag-photo.jpg", who="K. Osei",
                      copy_to=store)
    assert (store / "tag-photo.jpg").read_bytes() == b"abc"
    assert art.copy == str(store / "tag-photo.jpg")
    assert [p.name for p in store.iterdir()] == ["tag-photo.jpg"]  # no temporary file left
    # the same file again, for another item: the identical copy is reused
    again = case.attach("belt marks", evidence_files / "tag-photo.jpg", who="K. Osei",
                        copy_to=store)
    assert again.sha256 == art.sha256


def _refused(case, match, *args, **kwargs):
    before = case.to_dict()
    version = case.version
    with pytest.raises(bl.CaseError, match=match):
        case.attach(*args, **kwargs)
    assert case.to_dict() == before and case.version == version


def test_a_refused_attach_leaves_the_case_and_the_folders_unchanged(case, evidence_files,
                                                                     tmp_path):
    photo = evidence_files / "tag-photo.jpg"
    _refused(case, "no evidence named 'thermal flag'", "thermal flag", photo, who="K. Osei")
    _refused(case, "no file at .*missing.jpg.*nothing was attached", "thermal tag",
             evidence_files / "missing.jpg", who="K. Osei")
    _refused(case, "not a regular file", "thermal tag", evidence_files, who="K. Osei")
    _refused(case, "copy_to folder .* does not exist", "thermal tag", photo, who="K. Osei",
             copy_to=tmp_path / "nowhere")
    nobody = conveyor_case()
    _refused(nobody, "say who attaches", "thermal tag", photo)
    case.attach("thermal tag", photo, who="K. Osei")
    _refused(case, "already attached to evidence 'thermal tag'", "thermal tag", photo,
             who="K. Osei")
    # a different file of the same name cannot be told apart in one folder
    other = tmp_path / "other"
    other.mkdir()
    (other / "tag-photo.jpg").write_bytes(b"abd")
    _refused(case, "different file named 'tag-photo.jpg' is already attached", "belt marks",
             other / "tag-photo.jpg", who="K. Osei")
    # ... nor copied over another
    store = tmp_path / "store"
    store.mkdir()
    (store / "tag-photo.jpg").write_bytes(b"abd")
    _refused(case, "different file named 'tag-photo.jpg' is already in", "belt marks", photo,
             who="K. Osei", copy_to=store)
    assert (store / "tag-photo.jpg").read_bytes() == b"abd"


def test_a_copy_is_removed_when_the_attach_is_refused_after_copying(case, evidence_files,
                                                                   tmp_path):
    case.attach("thermal tag", evidence_files / "tag-photo.jpg", who="K. Osei")
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    (elsewhere / "tag-photo.jpg").write_bytes(b"xyz")  # same name, other content
    store = tmp_path / "store"
    store.mkdir()
    with pytest.raises(bl.CaseError, match="different file named"):
        case.attach("belt marks", elsewhere / "tag-photo.jpg", who="K. Osei", copy_to=store)
    assert list(store.iterdir()) == []


def test_artefacts_travel_with_the_case_file_and_older_files_still_load(case, evidence_files,
                                                                        tmp_path):
    plain = case.to_dict()
    assert all("artefacts" not in e for e in plain["evidence"])  # files without them unchanged
    case.attach("thermal tag", evidence_files / "tag-photo.jpg", who="K. Osei", note="n")
    path = case.save(tmp_path / "c.json")
    loaded = bl.load_case(path)
    assert loaded.to_dict() == case.to_dict()
    assert loaded.evidence["thermal tag"].artefacts == case.evidence["thermal tag"].artefacts
    # a schema-1 file written before artefacts existed
    old = {"format": "beliefledger-case", "schema_version": 1,
           "case": {"title": "old", "hypotheses": [{"name": "A", "prior": 0.6},
                                                   {"name": "B", "prior": 0.4}],
                    "evidence": [{"name": "E", "states": ["x", "y"],
                                  "likelihoods": {"A": [0.5, 0.5], "B": [0.1, 0.9]},
                                  "observed": "x", "observed_only": False}]}}
    (tmp_path / "old.json").write_text(json.dumps(old))
    assert bl.load_case(tmp_path / "old.json").evidence["E"].artefacts == ()


@pytest.mark.parametrize("field, value, match", [
    ("sha256", "ABC", "64 lower-case hex digits"),
    ("size", -1, "whole number of bytes"),
    ("size", True, "whole number of bytes"),
    ("name", "../etc/passwd", "bare file name"),
    ("when", "yesterday", "not ISO 8601"),
    ("colour", "red", "unknown field"),
])
def test_a_broken_artefact_entry_in_a_file_is_refused_by_name(case, evidence_files, field,
                                                              value, match):
    case.attach("thermal tag", evidence_files / "tag-photo.jpg", who="K. Osei")
    d = case.to_dict()
    d["evidence"][0]["artefacts"][0][field] = value
    env = {"format": "beliefledger-case", "schema_version": 2, "case": d}
    with pytest.raises(bl.CaseFileError, match=match) as err:
        bl.casefile.loads(json.dumps(env))
    assert "artefact #1 of evidence 'thermal tag'" in str(err.value)


def test_rename_keeps_and_detach_removes_an_artefact(case, evidence_files):
    art = case.attach("thermal tag", evidence_files / "tag-photo.jpg", who="K. Osei")
    case.rename_evidence("thermal tag", "relay thermal tag")
    case.add_hypothesis("conveyor jam", 0.1, likelihoods={"relay thermal tag": [0.5, 0.5],
                                                          "belt marks": [0.5, 0.5]},
                        rescale=True)
    assert case.evidence["relay thermal tag"].artefacts == (art,)
    before = case.to_dict()
    with pytest.raises(bl.CaseError, match="has no artefact 'photo.jpg'"):
        case.detach("relay thermal tag", "photo.jpg")
    assert case.to_dict() == before
    case.detach("relay thermal tag", "tag-photo.jpg")
    assert case.evidence["relay thermal tag"].artefacts == ()


def test_artefacts_html_lists_each_artefact_beside_its_item_escaped(case, evidence_files):
    assert "No evidence artefacts attached" in artefacts_html(case)
    hostile = HOSTILE[1]
    case.set_details(analyst=hostile)
    case.attach("thermal tag", evidence_files / "tag-photo.jpg", note=HOSTILE[0])
    html = artefacts_html(case)
    root = ET.fromstring(html)  # well-formed, and the user's text stayed text
    assert not root.findall(".//script") and not root.findall(".//img")
    rows = [[("".join(td.itertext())) for td in tr.findall("td")]
            for tr in root.findall(".//tbody/tr")]
    assert rows == [["thermal tag", "tag-photo.jpg", "3", ABC_SHA256, hostile,
                     case.evidence["thermal tag"].artefacts[0].when, HOSTILE[0], "not copied"]]
    assert "Evidence items with no artefact: belt marks" in html


# --------------------------------------------------------------------------- verify --artefacts


@pytest.fixture
def sealed(case, evidence_files, tmp_path):
    """A record of a case whose two items rest on files (charts left out: speed)."""
    from beliefledger.record import sections

    case.attach("thermal tag", evidence_files / "tag-photo.jpg", who="K. Osei")
    case.attach("belt marks", evidence_files / "relay-log.txt", who="K. Osei")
    saved = sections.chart_svgs
    sections.chart_svgs = lambda ledger, ledgers: ([], "skipped in a test")
    try:
        rec = build_record(executed_notebook([case]), notebook_name="t.ipynb",
                           sealed_at="2026-12-02T08:00:00Z")
    finally:
        sections.chart_svgs = saved
    p = tmp_path / "t.sealed.ipynb"
    p.write_text(dumps_notebook(rec), encoding="utf-8")
    return p


def test_verify_artefacts_passes_when_every_file_matches(sealed, evidence_files, capsys):
    assert main(["verify", str(sealed), "--artefacts", str(evidence_files)]) == 0
    out = capsys.readouterr().out
    assert "INTACT and reproducible" in out
    assert f"artefacts: 2 checked in {evidence_files}, 2 match" in out


def test_verify_without_the_folder_says_how_to_check_the_files(sealed, capsys):
    assert main(["verify", str(sealed)]) == 0
    assert "lists 2 artefact(s); pass --artefacts FOLDER" in capsys.readouterr().out


def test_verify_artefacts_catches_a_changed_and_a_missing_file(sealed, evidence_files, capsys):
    (evidence_files / "relay-log.txt").write_text("02:41 relay 3 tripped\n02:44 reset\n")
    (evidence_files / "tag-photo.jpg").unlink()
    assert main(["verify", str(sealed), "--artefacts", str(evidence_files), "--json"]) == 1
    report = json.loads(capsys.readouterr().out)
    assert report["intact"] is True and report["reproducible"] is True
    assert report["artefacts_match"] is False and report["artefacts_checked"] == 2
    probs = {p["code"]: p for p in report["problems"]}
    assert set(probs) == {"artefact-changed", "artefact-missing"}
    assert probs["artefact-changed"]["where"] == ("case 'Conveyor stoppage', evidence "
                                                  "'belt marks', artefact 'relay-log.txt'")
    assert "attached by K. Osei" in probs["artefact-changed"]["detail"]
    assert probs["artefact-missing"]["where"].endswith("evidence 'thermal tag', artefact "
                                                       "'tag-photo.jpg'")
    assert main(["verify", str(sealed), "--artefacts", str(evidence_files)]) == 1
    assert "intact and reproducible, but ARTEFACTS DIFFER" in capsys.readouterr().out


def test_verify_artefacts_needs_a_folder(sealed, tmp_path, capsys):
    assert main(["verify", str(sealed), "--artefacts", str(tmp_path / "nowhere")]) == 2
    assert "is not a folder" in capsys.readouterr().err


def test_diff_lists_an_artefact_added_and_one_changed(case, evidence_files, tmp_path):
    from beliefledger.record.differ import diff

    case.attach("thermal tag", evidence_files / "tag-photo.jpg", who="K. Osei")
    old = case.save(tmp_path / "old.json")
    case.detach("thermal tag", "tag-photo.jpg")
    (evidence_files / "tag-photo.jpg").write_bytes(b"abd")
    case.attach("thermal tag", evidence_files / "tag-photo.jpg", who="K. Osei")
    case.attach("belt marks", evidence_files / "relay-log.txt", who="K. Osei")
    new = case.save(tmp_path / "new.json")
    text = diff(old, new).text()
    assert "SHA-256 of artefact 'tag-photo.jpg' of 'thermal tag'" in text
    assert "added: artefact 'relay-log.txt' of 'belt marks'" in text

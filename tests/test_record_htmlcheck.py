"""Verifying an HTML copy on its own: the record it carries, and that the page is its page.

Most records here are built without a kernel (tests/helpers/records.py, an
invented conveyor stoppage); one is a real seal of the bundled demo. The
long run of random page edits is tests/reliability/test_tamper_html.py.
"""

from __future__ import annotations

import copy
import json
import random
import re
import shutil

import pytest

import beliefledger as bl
from beliefledger.cli import main
from beliefledger.errors import RecordError
from beliefledger.record import html as record_html
from beliefledger.record.canonical import META_KEY
from beliefledger.record.html import render_html, renderer_label
from beliefledger.record.htmlcheck import verify_html
from beliefledger.record.nbio import read_record
from beliefledger.record.sealer import build_record
from beliefledger.record.sections import FRONT_CELLS
from beliefledger.record.verifier import verify
from helpers import htmlmut, records
from test_record import reseal_hashes


@pytest.fixture(scope="module")
def rec():
    return records.conveyor_record()


@pytest.fixture(scope="module")
def page(rec):
    return render_html(rec)


def write(tmp_path, text: str, name: str = "review.sealed.html"):
    p = tmp_path / name
    p.write_bytes(text.encode("utf-8"))
    return p


def codes(result) -> list[str]:
    return [p.code for p in result.problems]


def flip_digit(text: str, at: int) -> str:
    """``text`` with the first digit at or after ``at`` changed."""
    i = next(k for k in range(at, len(text)) if text[k].isdigit())
    return text[:i] + ("7" if text[i] != "7" else "3") + text[i + 1:]


def test_an_intact_copy_verifies_exactly_as_its_notebook(rec, page, tmp_path):
    html = write(tmp_path, page)
    nb = tmp_path / "review.sealed.ipynb"
    nb.write_text(records.dumps(rec), encoding="utf-8")
    a, b = verify(html), verify(nb)
    assert a.ok, a.text()
    assert a.path == str(html) and a.text().startswith("review.sealed.html: INTACT")
    assert {**a.to_dict(), "path": None} == {**b.to_dict(), "path": None}
    assert bl.record.verify_html is verify_html and verify_html(html, expect=a.fingerprint).ok
    assert verify(write(tmp_path, page, "COPY.HTM")).ok  # any case of the suffix


def test_cli_verify_of_a_copy_exit_codes_json_expect_and_keys(rec, page, tmp_path, capsys):
    html = write(tmp_path, page)
    fp = rec["metadata"][META_KEY]["manifest"]["fingerprint"]
    assert main(["verify", str(html), "--expect", fp]) == 0
    assert "INTACT and reproducible" in capsys.readouterr().out
    assert main(["verify", str(html), "--json"]) == 0
    report = json.loads(capsys.readouterr().out)
    assert report["ok"] and report["path"].endswith(".html") and report["fingerprint"] == fp
    assert main(["verify", str(html), "--expect", "0000-0000"]) == 1
    assert "fingerprint-mismatch" in capsys.readouterr().out
    pytest.importorskip("cryptography")
    from beliefledger.record.signing import keygen

    _, pub, _ = keygen(tmp_path / "reviewer")
    assert main(["verify", str(html), "--public-key", str(pub)]) == 1  # nobody signed yet
    assert "key-not-trusted" in capsys.readouterr().out
    edited = write(tmp_path, flip_digit(page, page.index('id="bl-ledger-content"')), "e.html")
    assert main(["verify", str(edited), "--json"]) == 1
    out = json.loads(capsys.readouterr().out)
    assert not out["ok"] and not out["intact"] and out["problems"][0]["code"] == "page-differs"
    broken = write(tmp_path, page.replace('"nbformat":4', '"nbformat":4,,', 1), "b.html")
    assert main(["verify", str(broken)]) == 2
    assert "'b.html'" in capsys.readouterr().err


def test_a_changed_number_in_the_register_is_named_with_both_texts(page, tmp_path):
    start = page.index('id="bl-assumption-register-content"')
    cell = re.compile(r"<td>(0\.\d+)</td>").search(page, start)
    old = cell.group(1)
    new = old[:-1] + ("1" if old[-1] != "1" else "2")
    res = verify(write(tmp_path, page[:cell.start(1)] + new + page[cell.end(1):]))
    assert codes(res) == ["page-differs"], res.text()
    (p,) = res.problems
    assert p.where == "page section 'bl-assumption-register-content'"
    assert f"<td>{old}</td>" in p.detail and f"<td>{new}</td>" in p.detail
    assert not res.intact and res.reproducible  # the record itself is untouched


def test_each_part_of_the_page_is_named(rec, page, tmp_path):
    ledger = page.index('id="bl-ledger-content"')
    row = re.compile(r"<tr[ >].*?</tr>", re.DOTALL).search(page, ledger)
    analyst = page.index(f'id="cell-{FRONT_CELLS + 2}"')  # the analyst's first code cell
    text_at = page.index("</code>", analyst) - 3
    block = page.index('id="beliefledger-record"')
    comma = page.index(",", page.index(">", block))
    cases = {
        "page head > title": page.replace("<title>", "<title>Approved: ", 1),
        "page head > style": page.replace("<style>", "<style>main{display:none}", 1),
        "page header.bl-banner": page.replace("Sealed record", "Sealed recorded", 1),
        "page section 'bl-ledger-content'": page[:row.start()] + page[row.end():],
        f"page section 'cell-{FRONT_CELLS + 2}'": page[:text_at] + "X" + page[text_at + 1:],
        "embedded record block": page[:comma + 1] + " " + page[comma + 1:],
        "end of the page": page + "<p>Approved.</p>",
    }
    for where, text in cases.items():
        res = verify(write(tmp_path, text))
        assert codes(res) == ["page-differs"], (where, res.text())
        assert res.problems[0].where.startswith(where), (where, res.problems[0])
    # a section hidden by an added attribute: the element itself is named
    hidden = page.replace('id="bl-flags-content"', 'id="bl-flags-content" hidden', 1)
    assert verify(write(tmp_path, hidden)).problems[0].where == "page section 'bl-flags-content'"


def test_edits_a_browser_would_draw_the_same_are_caught(page, tmp_path):
    at = page.index('id="bl-ledger-content"')
    i = next(k for k in range(at, len(page)) if page[k].isdigit())
    for text in (page[:i] + f"&#{ord(page[i])};" + page[i + 1:],  # an entity for the digit
                 page.replace("</section><section", "</section>\n<section", 1),
                 "\ufeff" + page):
        assert codes(verify(write(tmp_path, text))) == ["page-differs"]
    crlf = verify(write(tmp_path, page.replace("\n", "\r\n")))
    assert codes(crlf) == ["page-differs"] and "line endings" in crlf.problems[0].detail


def test_a_forger_who_edits_the_record_and_redraws_the_page(rec, tmp_path):
    """What the copy proves and what it does not: a record edited and its page drawn again
    is caught by the digests; with the digests recomputed too, only the fingerprint quoted
    in the hand-over (or a pinned reviewer's key) catches it."""
    forged = copy.deepcopy(rec)
    envelope = forged["metadata"][META_KEY]["cases"][0]["envelope"]
    envelope["case"]["hypotheses"][0]["prior"] = 0.55
    envelope["case"]["hypotheses"][1]["prior"] = 0.25
    res = verify(write(tmp_path, render_html(forged)))
    assert not res.ok and "case-changed" in codes(res), res.text()
    assert not [c for c in codes(res) if c.startswith("page-")]  # the page is that record's
    # a consistent forgery: the analyst's conclusion re-worded, every digest recomputed
    reworded = copy.deepcopy(rec)
    close = next(c for c in reworded["cells"] if c.get("id") == "close")
    close["source"] = "Conclusion: motor overload ruled out by the reviewer (forged)."
    resealed = reseal_hashes(reworded)
    quoted = rec["metadata"][META_KEY]["manifest"]["fingerprint"]
    path = write(tmp_path, render_html(resealed))
    assert verify(path).ok  # digests alone cannot stop someone who recomputes them
    caught = verify(path, expect=quoted)
    assert codes(caught) == ["fingerprint-mismatch"], caught.text()


def test_a_field_the_digests_leave_out_is_still_an_edit_of_the_copy(rec, page, tmp_path):
    """Digests cover what a notebook means, not fields Jupyter adds on a re-save; nothing
    re-saves the record inside a page, so there an unknown or missing field is an edit."""
    from beliefledger.record.html import record_json

    (_, _, start, _), = records.script_elements(page)
    body, close = page.index(">", start) + 1, page.index("</script>", start)
    payload = next(i for i, c in enumerate(rec["cells"]) if c.get("id") == "payload")
    for edit, word in ((lambda c: c.update(outxuts=c.pop("outputs")), "'outxuts'"),
                       (lambda c: c.update(trusted=True), "'trusted'"),
                       (lambda c: c.pop("outputs"), "lacks 'outputs'")):
        forged = copy.deepcopy(rec)
        edit(forged["cells"][payload])
        res = verify(write(tmp_path, page[:body] + record_json(forged) + page[close:]))
        assert codes(res) == ["embedded-shape"], res.text()
        assert res.problems[0].where == f"embedded record, cell {payload + 1}"
        assert word in res.problems[0].detail and not res.intact
        ipynb = tmp_path / "f.ipynb"  # the notebook itself tolerates it (Jupyter adds fields)
        ipynb.write_text(records.dumps(forged), encoding="utf-8")
        assert "embedded-shape" not in codes(verify(ipynb))


def test_unusable_copies_are_refused_naming_the_file(page, tmp_path):
    scripts = records.script_elements(page)
    (_, _, start, end), = scripts
    block = page[start:end]
    body_at = page.index(">", start) + 1
    cases = [
        (page[:start] + page[end:], "carries no embedded record"),
        (page.replace("</main>", "</main>" + block, 1), "2 embedded record blocks"),
        (page[:body_at] + "{not json" + page[page.index("</script>", start):], "not JSON"),
        (page[:body_at] + "[1, 2]" + page[page.index("</script>", start):], "JSON list"),
        (page[:body_at] + '{"cells": [], "metadata": {}, "nbformat": 4, "nbformat_minor": 5}'
         + page[page.index("</script>", start):], "no beliefledger record"),
        (page[:body_at] + page[body_at:body_at + 200], "not closed"),
        (page[:body_at + 200] + "</script></body></html>", "not JSON"),
        (page[:body_at] + '{"a": NaN}' + page[page.index("</script>", start):], "NaN"),
    ]
    for k, (text, match) in enumerate(cases):
        path = write(tmp_path, text, f"copy{k}.html")
        with pytest.raises(RecordError, match=match) as info:
            verify(path)
        assert f"'copy{k}.html'" in str(info.value)
        assert main(["verify", str(path)]) == 2
    (tmp_path / "latin.html").write_bytes(page.encode("utf-8").replace(b"Sealed", b"Sealed\xe9"))
    with pytest.raises(RecordError, match="not UTF-8"):
        verify(tmp_path / "latin.html")
    with pytest.raises(RecordError, match="no HTML copy at"):
        verify(tmp_path / "missing.html")
    (tmp_path / "folder.html").mkdir()
    with pytest.raises(RecordError, match="is a folder"):
        verify(tmp_path / "folder.html")


def test_text_that_looks_like_the_block_stays_text(tmp_path):
    """A style sheet in an output that mentions the block, a markdown cell quoting
    ``</script>`` and line separators: the page still carries one block, verifies intact,
    and the block holds no character that could end it."""
    nb = records.executed_notebook([records.conveyor_case()])
    nb["cells"].insert(1, {"cell_type": "markdown", "id": "quote", "metadata": {},
                           "source": "Quoted: </script><!-- <script> \u2028 \u2029 & done"})
    nb["cells"].insert(2, {
        "cell_type": "code", "id": "styled", "metadata": {}, "execution_count": 9,
        "source": "show_note()",
        "outputs": [{"output_type": "display_data", "metadata": {}, "data": {
            "text/plain": "note",
            "text/html": '<style>/* <script type="application/json" id="beliefledger-record">'
                         '{}</script> */ .n {color: red}</style><p class="n">note</p>'}}]})
    rec = build_record(nb, notebook_name="review.ipynb", sealed_at="2026-12-01T12:00:00Z")
    page = render_html(rec)
    _, body, _, _ = records.script_elements(page)[-1]
    assert "<" not in body and "\u2028" not in body and json.loads(body) == rec
    res = verify(write(tmp_path, page))
    assert res.ok, res.text()


def test_a_page_drawn_by_another_version(rec, page, tmp_path, monkeypatch):
    mine = renderer_label()
    other = "beliefledger 0.0.9; mistune 2.0.0; python 3.11.0"
    # only the label differs: the drawing is this version's, so a warning says so
    relabelled = render_html(rec, renderer=other)
    res = verify(write(tmp_path, relabelled))
    assert res.ok and [w.code for w in res.warnings][:1] == ["page-other-version"]
    assert other in res.warnings[0].detail and mine in res.warnings[0].detail
    # another version drew it differently: it cannot be compared, and an edit cannot be
    # ruled out, so it fails (the label is part of the editable page)
    css = record_html._css()
    monkeypatch.setattr(record_html, "_css", lambda: css.replace("}", ";}", 1))
    older, same_label = render_html(rec, renderer=other), render_html(rec)
    monkeypatch.undo()
    res = verify(write(tmp_path, older))
    assert codes(res) == ["page-other-version"] and not res.intact, res.text()
    (p,) = res.problems
    assert p.where == "page head > style"
    assert other in p.detail and mine in p.detail and "byte for byte" in p.detail
    # the same label with another drawing is an edit
    assert codes(verify(write(tmp_path, same_label))) == ["page-differs"]


@pytest.fixture(scope="module")
def demo_seal(tmp_path_factory):
    for name in ("nbformat", "nbclient", "ipykernel"):
        pytest.importorskip(name)
    from beliefledger.record.commands import demo_notebook_path
    from beliefledger.record.sealer import seal

    folder = tmp_path_factory.mktemp("demo")
    src = folder / "demo_investigation.ipynb"
    shutil.copyfile(demo_notebook_path(), src)
    return seal(src, sealed_at="2026-12-01T12:00:00Z")


def test_the_copy_a_real_seal_writes_verifies_and_every_edit_is_caught(demo_seal, tmp_path):
    res = demo_seal
    check = verify(res.html, expect=res.fingerprint)
    assert check.ok, check.text()
    assert check.to_dict() == {**verify(res.notebook).to_dict(), "path": str(res.html)}
    nb, _ = read_record(res.notebook)
    text = res.html.read_bytes().decode("utf-8")
    assert text == render_html(nb)  # seal writes exactly the page the record draws
    clean = htmlmut.CleanPage(text, nb)
    rnd = random.Random(11)
    path = tmp_path / "demo.html"
    for n, kind in enumerate(htmlmut.KINDS):  # each kind once, on the real page
        _, edited = htmlmut.mutate(clean, rnd, kind)
        path.write_bytes(edited.encode("utf-8"))
        try:
            result = verify(path)
        except RecordError:
            continue
        assert not result.ok and not result.intact, f"#{n} {kind}:\n{result.text()}"


def test_a_sign_off_rewrites_the_copy_and_it_still_verifies(demo_seal, tmp_path):
    from beliefledger.record.nbio import html_path_for
    from beliefledger.record.review import sign

    rec = tmp_path / "signed.sealed.ipynb"
    shutil.copyfile(demo_seal.notebook, rec)
    copy_path = html_path_for(rec)
    shutil.copyfile(demo_seal.html, copy_path)
    sign(rec, "R. Reviewer", "register checked", signed_at="2026-12-02T09:00:00Z")
    res = verify(copy_path, expect=demo_seal.fingerprint)
    assert res.ok, res.text()
    assert [s.reviewer for s in res.signoffs] == ["R. Reviewer"]

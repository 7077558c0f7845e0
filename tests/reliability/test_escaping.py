"""Escaping: markup, quotes, template syntax, terminal escapes and bidi or
control characters typed into names, sources and notes stay text everywhere
they are shown: the case's static HTML, the widgets' HTML, the sealed
record's HTML, the charts' SVG and the terminal output.

The HTML checks parse the output and compare its inventory of elements and
attributes with the output for a twin case whose texts are plain words: any
element or attribute that hostile text adds is an injection. Every text of
the case is invented test data.
"""

from __future__ import annotations

import json
import unicodedata
import xml.etree.ElementTree as ET
from collections import Counter
from html.parser import HTMLParser

import pytest

import beliefledger as bl
from beliefledger.display import case_html, ledger_html, ledger_text
from helpers import records, report
from helpers.casegen import HOSTILE

_report = report.reporting_fixture("escaping")

FORBIDDEN_TAGS = {"script", "iframe", "object", "embed", "foreignobject", "frame", "frameset",
                  "base", "form", "input", "textarea", "template"}
URL_ATTRS = {"href", "src", "xlink:href", "action", "formaction", "data", "srcdoc", "style"}


def hostile_texts() -> list[str]:
    base = [h.strip() for h in HOSTILE]
    return [f"{t} #{i}" for i, t in enumerate(base * 3)]  # unique, still hostile


def plain_texts() -> list[str]:
    return [f"word{i:03d}" for i in range(len(hostile_texts()))]


def build_case(texts: list[str]) -> bl.Case:
    """The same case shape, every typed text taken from ``texts`` in order."""
    t = iter(texts)
    hyps = [next(t) for _ in range(4)]
    case = bl.Case(next(t), hypotheses={
        h: {"prior": p, "description": next(t),
            "source": {"where": next(t), "who": next(t), "when": next(t), "why": next(t)}}
        for h, p in zip(hyps, [0.4, 0.3, 0.2, 0.1], strict=True)},
        question=next(t), analyst=next(t), notes=next(t))
    for k in range(3):
        name = next(t)
        states = [next(t), next(t)]
        case.add_evidence(name, states=states,
                          likelihoods={h: [0.2 + 0.2 * j, 0.8 - 0.2 * j]
                                       for j, h in enumerate(hyps)},
                          observed=states[k % 2], source={"where": next(t), "why": next(t)},
                          description=next(t), shared_source=next(t) if k < 2 else None)
    case.add_scenario(next(t), {h: 0.25 for h in hyps}, source=next(t), note=next(t))
    case.set_prior(hyps[0], 0.5)  # off the sum: a flag quotes the scenario's name
    return case


class Inventory(HTMLParser):
    """Counts of elements and (element, attribute) pairs; records dangerous ones."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: Counter = Counter()
        self.attrs: Counter = Counter()
        self.bad: list[str] = []
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags[tag] += 1
        if tag in FORBIDDEN_TAGS:
            self.bad.append(f"<{tag}>")
        for name, value in attrs:
            self.attrs[(tag, name)] += 1
            if name.startswith("on"):
                self.bad.append(f"{tag} {name}=")
            if name in URL_ATTRS and value and "javascript:" in value.replace(" ", "").lower():
                self.bad.append(f"{tag} {name}={value!r}")

    handle_startendtag = handle_starttag

    def handle_data(self, data):
        self.text.append(data)


def inventory(html: str) -> Inventory:
    inv = Inventory()
    inv.feed(html)
    inv.close()
    return inv


def assert_no_injection(hostile_html: str, plain_html: str, what: str,
                        shows_text: bool = True) -> None:
    bad = inventory(hostile_html)
    good = inventory(plain_html)
    assert not bad.bad, f"{what}: dangerous markup {bad.bad[:5]}"
    assert bad.tags == good.tags, (
        f"{what}: elements differ from the plain twin: +{bad.tags - good.tags} "
        f"-{good.tags - bad.tags}")
    assert bad.attrs == good.attrs, (
        f"{what}: attributes differ from the plain twin: +{bad.attrs - good.attrs}")
    text = "".join(bad.text)
    assert not shows_text or "alert(1)" in text, (
        f"{what}: the hostile text is not shown as text at all")
    report.add("escaping", html_outputs_checked=1)


def assert_terminal_safe(text: str, what: str) -> None:
    bad = [f"U+{ord(ch):04X}" for ch in text
           if (unicodedata.category(ch) in ("Cc", "Cf", "Zl", "Zp") and ch not in "\n\t")]
    assert not bad, f"{what}: raw control or bidi characters {sorted(set(bad))[:8]}"
    report.add("escaping", terminal_outputs_checked=1)


@pytest.fixture(scope="module")
def twins():
    return build_case(hostile_texts()), build_case(plain_texts())


def test_case_and_ledger_html(twins):
    hostile, plain = twins
    assert_no_injection(case_html(hostile), case_html(plain), "case_html")
    assert_no_injection(hostile._repr_html_(), plain._repr_html_(), "Case._repr_html_")
    assert_no_injection(ledger_html(hostile.update()), ledger_html(plain.update()), "ledger_html")
    bundle = hostile._repr_mimebundle_()
    assert_no_injection(bundle["text/html"], plain._repr_mimebundle_()["text/html"],
                        "case MIME bundle")


def test_terminal_output(twins, tmp_path, capsys):
    from beliefledger import cli

    hostile, _ = twins
    assert_terminal_safe(ledger_text(hostile.update()), "ledger_text")
    path = hostile.save(tmp_path / "hostile.json")
    assert cli.main(["show", str(path)]) == 0
    out = capsys.readouterr()
    assert "alert(1)" in out.out
    assert_terminal_safe(out.out, "beliefledger show")
    # an error message quoting a hostile name goes to the terminal too
    text = path.read_text(encoding="utf-8")
    first = hostile.hypothesis_names[0]
    import json

    data = json.loads(text)
    data["case"]["hypotheses"].append(dict(data["case"]["hypotheses"][0]))
    bad = tmp_path / "dup.json"
    bad.write_text(json.dumps(data, ensure_ascii=False), encoding="utf-8")
    assert cli.main(["show", str(bad)]) == 2
    err = capsys.readouterr().err
    assert "twice" in err and first.split("#")[-1] in err
    assert_terminal_safe(err, "beliefledger show error message")
    # and a name holding terminal escapes and a bidi override
    evil = bl.Case("t", hypotheses={"\x1b[2Jwiped\u202e": 0.5, "b": 0.5})
    data = json.loads(evil.save(tmp_path / "evil.json").read_text(encoding="utf-8"))
    data["case"]["hypotheses"].append(dict(data["case"]["hypotheses"][0]))
    bad.write_text(json.dumps(data), encoding="utf-8")
    assert cli.main(["show", str(bad)]) == 2
    err = capsys.readouterr().err
    assert "wiped" in err and "twice" in err
    assert_terminal_safe(err, "beliefledger show error quoting an escape sequence")


def _widget_html(widget) -> str:
    """The HTML of every HTML widget in a widget tree, in order."""
    import ipywidgets as W

    parts: list[str] = []
    seen: set[int] = set()

    def walk(w):
        if id(w) in seen:
            return
        seen.add(id(w))
        if isinstance(w, W.HTML | W.HTMLMath):
            parts.append(f"<div>{w.value}</div>")
        if getattr(w, "description_allow_html", False):
            parts.append(f"<div>{w.description}</div>")
        for child in getattr(w, "children", ()) or ():
            walk(child)
        for name in ("header", "status", "info", "html", "summary"):
            sub = getattr(w, name, None)
            if isinstance(sub, W.Widget):
                walk(sub)

    walk(widget)
    return "\n".join(parts)


def test_widget_html(twins):
    pytest.importorskip("ipywidgets")
    from beliefledger import widgets

    hostile, plain = twins
    for cls in ("Workbench", "HypothesisEditor", "EvidenceEditor", "ScenarioPicker"):
        make = getattr(widgets, cls)
        wh, wp = make(hostile.copy()), make(plain.copy())
        # names may sit in text boxes (plain text by design) rather than in HTML
        assert_no_injection(_widget_html(wh), _widget_html(wp), f"{cls} widgets",
                            shows_text=cls != "HypothesisEditor")
        assert_no_injection(wh._repr_html_(), wp._repr_html_(), f"{cls}._repr_html_")
        assert "<script" not in repr(wh)


def _svg_check(svg: str, what: str) -> None:
    root = ET.fromstring(svg)  # well-formed XML: nothing broke out of a text node
    for el in root.iter():
        tag = el.tag.rsplit("}", 1)[-1].lower()
        assert tag not in FORBIDDEN_TAGS | {"img", "a"}, f"{what}: <{tag}> in the SVG"
        for name, value in el.attrib.items():
            local = name.rsplit("}", 1)[-1].lower()
            assert not local.startswith("on"), f"{what}: {local}= in the SVG"
            if local in URL_ATTRS:
                assert "javascript:" not in value.lower(), f"{what}: javascript: URL"
    texts = "".join(root.itertext())
    assert "<script" not in svg and "<img" not in svg and "<iframe" not in svg
    report.add("escaping", svg_charts_checked=1)
    return texts


def test_chart_svg(twins):
    pytest.importorskip("altair")
    pytest.importorskip("vl_convert")
    from beliefledger import charts

    hostile, _ = twins
    ledger = hostile.update()
    scen = {s: hostile.update() for s in hostile.scenario_names}
    shown = ""
    for name, chart in [("waterfall", charts.waterfall(ledger)),
                        ("probability_path", charts.probability_path(ledger)),
                        ("prior_posterior", charts.prior_posterior(ledger, scen))]:
        shown += _svg_check(charts.to_svg(chart), name)
    # the names are drawn as text, dotted and bracketed ones included
    assert "a.b[0]" in shown or "alert(1)" in shown


def test_record_html(tmp_path):
    pytest.importorskip("nbformat")
    from beliefledger.record.html import render_html

    hostile = records.sealed_record([build_case(hostile_texts())], heading=HOSTILE[0])
    plain = records.sealed_record([build_case(plain_texts())], heading="word")
    h_page, p_page = render_html(hostile), render_html(plain)
    # the record rides along as one inert JSON block that no hostile text can close
    (_, body, _, _), = records.script_elements(h_page)
    assert json.loads(body) == hostile
    h_html, p_html = records.without_record_block(h_page), records.without_record_block(p_page)
    bad = inventory(h_html)
    assert not bad.bad, bad.bad[:5]
    assert "alert(1)" in "".join(bad.text)
    # the hostile record has no element or attribute the plain one lacks (the
    # charts' SVG may wrap long labels into more text spans: compare without them)
    good = inventory(p_html)
    skip = {"tspan", "text"}
    extra_tags = Counter({k: v for k, v in (bad.tags - good.tags).items() if k not in skip})
    extra_attrs = Counter({k: v for k, v in (bad.attrs - good.attrs).items()
                           if k[0] not in skip})
    assert not extra_tags, f"record HTML: extra elements {extra_tags}"
    assert not extra_attrs, f"record HTML: extra attributes {extra_attrs}"
    report.add("escaping", html_outputs_checked=1)
    # verify's and diff's terminal text quote the names safely
    from beliefledger.record import diff, verify

    a, b = tmp_path / "a.ipynb", tmp_path / "b.ipynb"
    a.write_text(records.dumps(hostile), encoding="utf-8")
    b.write_text(records.dumps(plain), encoding="utf-8")
    assert_terminal_safe(verify(a).text(), "verify text")
    # verify of the HTML copy, intact and with a hostile edit of the page, quotes it safely
    page = tmp_path / "a.html"
    page.write_text(h_page, encoding="utf-8")
    assert verify(page).ok
    at = h_page.index("</main>")
    page.write_text(h_page[:at] + "<p>\u202e\x1b[2Jedited</p>" + h_page[at:], encoding="utf-8")
    edited = verify(page)
    assert [p.code for p in edited.problems] == ["page-differs"], edited.text()
    assert_terminal_safe(edited.text(), "verify text of an edited HTML copy")
    assert_terminal_safe(diff(a, b).text(), "diff text")

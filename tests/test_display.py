"""Static HTML views added for issue 16 (display.py): the register notes the record shows.

Cases are invented test data (see test_uncertain, test_rollups, test_experts).
"""

from __future__ import annotations

from html.parser import HTMLParser

from beliefledger import display
from test_uncertain import OPERATOR, flip_case, kiln


class _Tags(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.tags: list[str] = []

    def handle_starttag(self, tag, attrs) -> None:
        self.tags.append(tag)


def _tags(html: str) -> set[str]:
    p = _Tags()
    p.feed(html)
    return set(p.tags)


def test_observation_note_says_who_how_reliable_why_and_only_ratios():
    case = kiln()
    case.observe_report("flame colour", "yellow", 0.8, source=OPERATOR)
    html = display.observation_note_html(case)
    for text in ("report &#x27;yellow&#x27; right with probability 0.8", "only the ratios matter",
                 "shift lead", "saw the flame through the port", "step 1 of 2"):
        assert text in html
    assert display.observation_note_html(kiln()) == ""
    assert display.observed_text(case.evidence["flame colour"]).startswith("reported 'yellow'")


def test_observation_note_of_a_jeffrey_update_says_where_it_sits():
    case = flip_case()
    html = display.observation_note_html(case)
    assert "Jeffrey&#x27;s rule" in html and "do not commute" in html
    assert "placed last: MAP &#x27;A&#x27;" in html
    assert "placed first" not in html  # it is first already
    assert "x1 0.5, x2 0.5" in html  # the predictive before it


def test_user_text_in_the_notes_stays_text():
    case = kiln()
    case.observe("flame colour", likelihood={"blue": 1, "yellow": 1, "orange": 0},
                 source={"where": "<script>alert(1)</script>", "who": "<b>x</b>"},
                 note="<img src=x onerror=alert(1)>")
    html = display.observation_note_html(case)
    assert {"script", "img", "b"}.isdisjoint(_tags(html))
    assert "&lt;script&gt;" in html

"""A report displays itself in a notebook as escaped, script-free HTML.

Well-formedness is read with the standard library's HTML parser (html.parser, which
follows the HTML tokenisation of the WHATWG HTML standard); the void elements are those
the standard lists (WHATWG HTML, section 13.1.2, "Void elements").
"""

from __future__ import annotations

from html.parser import HTMLParser

import handcheck

_VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "track", "wbr"}

_SHEET = """
[worksheet]
format = 1
title = "Gate <script>alert(1)</script> & bias \\u001b[8m"

[parts]
Vs = { voltage = "10 V", frequency = "1 kHz", nodes = ["a", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["a", "b"] }
C1 = { capacitor = "1 uF", nodes = ["b", "gnd"] }

[[step]]
name = "XC"
quantity = "reactance(C1)"
formula = "-1/(2*pi*f*C1)"
claim = "-159.2 ohm"

[[step]]
name = "XCwrong"
quantity = "reactance(C1)"
formula = "-1/(f*C1)"
claim = "-1000 ohm"
"""


class _Tags(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.open: list[str] = []
        self.seen: list[str] = []
        self.unbalanced: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.seen.append(tag)
        if tag not in _VOID:
            self.open.append(tag)

    def handle_endtag(self, tag):
        if not self.open or self.open.pop() != tag:
            self.unbalanced.append(tag)


def test_report_shows_itself_as_balanced_escaped_html():
    report = handcheck.check_text(_SHEET, name="gate.toml")
    html = report._repr_html_()
    tags = _Tags()
    tags.feed(html)
    tags.close()
    assert tags.open == [] and tags.unbalanced == []
    assert "script" not in tags.seen  # the title's <script> is text, not an element
    assert "&lt;script&gt;alert(1)&lt;/script&gt; &amp; bias \\x1b[8m" in html
    assert "\x1b" not in html


def test_report_html_carries_verdicts_and_the_diagnosis():
    # X_C = -1/(2 pi f C) (Hayt, Kemmerly and Durbin, Engineering Circuit Analysis,
    # 8th ed., ch. 10, from memory): -159.15 ohm at 1 kHz and 1 uF
    report = handcheck.check_text(_SHEET, name="gate.toml")
    html = report._repr_html_()
    assert [s.verdict for s in report.steps] == ["agrees", "formula"]
    assert 'class="verdict v-agrees">agrees' in html and 'class="verdict v-formula">formula' in html
    assert "likely mistake (hertz-as-angular)" in html
    assert "NOT OK" in html and "first divergence: XCwrong" in html

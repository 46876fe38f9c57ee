"""Worksheet text cannot spoof the terminal or the records (hardening).

A title, reference or author is untrusted text. Escape sequences (ECMA-48, 5th ed.,
1991: ESC and the C1 control CSI start control sequences such as SGR 8, "concealed"),
the bell, and the right-to-left override of the Unicode bidirectional algorithm
(UAX #9, U+202E) must reach the reader as visible escapes, never as effects.
"""

from __future__ import annotations

import unicodedata
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from handcheck.record.visible import visible
from handcheck.testing import run_command

_SHEET = """
[worksheet]
format = 1
title = "Fan speed divider OK \\u001b[8m concealed \\u001b[0m \\u202eKO TON\\u202c \\u0007"
reference = "note \\u009b31m red"
author = "A\\u001b]0;retitled\\u0007B"

[parts]
Vs = { voltage = "12 V", nodes = ["a", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["a", "b"] }
R2 = { resistor = "2 kohm", nodes = ["b", "gnd"] }

[[step]]
name = "Vb"
quantity = "voltage(b)"
formula = "Vs*R2/(R1 + R2)"
claim = "8 V"
"""

#: What may never appear raw: ESC, BEL, CSI (C1), RLO and PDF.
_RAW = ("\x1b", "\x07", "\x9b", "\u202e", "\u202c")


@pytest.fixture
def sheet(tmp_path: Path) -> Path:
    path = tmp_path / "divider.toml"
    path.write_text(_SHEET, encoding="utf-8")
    return path


def test_check_output_shows_escapes_not_effects(capsys, sheet):
    code, out, err = run_command(capsys, "check", str(sheet))
    assert code == 0, err
    assert not any(ch in out + err for ch in _RAW)
    assert "\\x1b[8m concealed" in out and "\\u202eKO TON\\u202c" in out and "\\x9b31m" in out


def test_file_names_are_escaped_too(capsys, tmp_path):
    # a repository can hold a file whose name carries an escape sequence
    path = tmp_path / "a\x1b[2Jb.toml"
    path.write_text(_SHEET, encoding="utf-8")
    code, out, err = run_command(capsys, "check", str(path), str(path.with_name("missing.toml")))
    assert code == 2  # one of the two is missing
    assert "\x1b" not in out + err
    assert "a\\x1b[2Jb.toml" in out


def test_markdown_record_escapes_worksheet_text(capsys, sheet, tmp_path):
    out_file = tmp_path / "divider.md"
    code, _, err = run_command(capsys, "record", str(sheet), "-o", str(out_file))
    assert code == 0, err
    head = out_file.read_text(encoding="utf-8").split("## ")[0]  # the header, before the worksheet verbatim
    assert not any(ch in head for ch in _RAW)
    assert "x1b" in head


@given(st.text())
def test_visible_leaves_nothing_that_acts_on_a_terminal(text):
    shown = visible(text)
    hidden = {"Cc", "Cf", "Zl", "Zp", "Cs", "Co", "Cn"}
    assert not any(unicodedata.category(ch) in hidden for ch in shown)
    assert all(ch == " " or unicodedata.category(ch) != "Zs" for ch in shown)


@given(st.text(alphabet=st.characters(blacklist_categories=("Cc", "Cf", "Zl", "Zp", "Cs", "Co", "Cn", "Zs"))))
def test_visible_keeps_ordinary_text(text):
    assert visible(text) == text

"""Untrusted input limits of the worksheet loader and the command line (issue 12).

Each test fails on the code before issue 12: the digits were read as numbers, the ohm
sign refused, the byte-order mark refused, /dev/zero read without end, and so on.
"""

from __future__ import annotations

import json
import os
import unicodedata
from pathlib import Path

import pytest

from handcheck.cli import main
from handcheck.errors import LimitError, ParseError, WorksheetError
from handcheck.worksheet.evaluate import evaluate_text
from handcheck.worksheet.load import MAX_BYTES, MAX_ITEMS, MAX_NESTING, MAX_TEXT, load, loads

SHEET = """[worksheet]
format = 1
title = "limits"

[parts]
V1 = {{ voltage = "10 V", nodes = ["a", "gnd"] }}
R1 = {{ resistor = "{value}", nodes = ["a", "gnd"] }}

[[step]]
name = "I"
quantity = "current(R1)"
claim = "{claim}"
"""


def sheet(value: str = "1 kohm", claim: str = "10 mA") -> str:
    return SHEET.format(value=value, claim=claim)


def check(tmp_path: Path, capsys: pytest.CaptureFixture[str], data: bytes, *options: str) -> tuple[int, str, str]:
    path = tmp_path / "ws.toml"
    path.write_bytes(data)
    status = main(["check", str(path), *options])
    captured = capsys.readouterr()
    return status, captured.out, captured.err


# -- digits of other scripts --------------------------------------------------------
# Code points and names from the Unicode standard, UnicodeData.txt (general category
# Nd); checked here against Python's unicodedata, which ships that file.
FOREIGN_DIGITS = {
    "\u0661": "ARABIC-INDIC DIGIT ONE",
    "\u06f1": "EXTENDED ARABIC-INDIC DIGIT ONE",
    "\u0967": "DEVANAGARI DIGIT ONE",
    "\uff11": "FULLWIDTH DIGIT ONE",
}


@pytest.mark.parametrize("digit", sorted(FOREIGN_DIGITS))
def test_a_digit_of_another_script_is_refused_by_name(digit):
    assert unicodedata.name(digit) == FOREIGN_DIGITS[digit]
    assert unicodedata.category(digit) == "Nd"
    with pytest.raises(ParseError) as info:
        evaluate_text(f"{digit}0 kohm")
    message = str(info.value)
    assert f"U+{ord(digit):04X} {FOREIGN_DIGITS[digit]}" in message
    assert "digits 0-9" in message


def test_a_foreign_digit_in_a_part_value_exits_2_with_its_line(tmp_path, capsys):
    status, out, err = check(tmp_path, capsys, sheet(value="\uff11 kohm").encode())
    assert status == 2 and out == ""
    assert "ws.toml:7:" in err and "FULLWIDTH DIGIT ONE" in err


def test_a_foreign_digit_inside_a_number_is_not_read_as_part_of_it():
    # "1١" (ASCII one, then ARABIC-INDIC DIGIT ONE) must not be 11 nor 1.
    with pytest.raises(ParseError) as info:
        evaluate_text("1\u0661 V")
    assert "ARABIC-INDIC DIGIT ONE" in str(info.value) and "column 2" in str(info.value)


def test_a_foreign_digit_in_an_audit_tolerance_is_refused(tmp_path):
    # Python's Fraction("٥") is 5: the percentage reader must not rely on it.
    text = sheet() + '\n[audit]\n\n[[formula]]\nname = "Z"\nexpression = "R1"\n'
    text = text.replace(
        'nodes = ["a", "gnd"] }\n\n[[step]]', 'nodes = ["a", "gnd"], tolerance = "\u0665%" }\n\n[[step]]'
    )
    with pytest.raises(WorksheetError) as info:
        loads(text, "ws.toml")
    assert "ARABIC-INDIC DIGIT FIVE" in str(info.value)


# -- the ohm sign ------------------------------------------------------------------
def test_ohm_sign_and_greek_omega_read_as_the_same_unit():
    # Unicode standard, UnicodeData.txt: U+2126 OHM SIGN has the canonical
    # decomposition U+03A9 GREEK CAPITAL LETTER OMEGA, so NFC makes them equal.
    assert unicodedata.normalize("NFC", "\u2126") == "\u03a9"
    ohm_sign = evaluate_text("4.7 k\u2126")
    omega = evaluate_text("4.7 k\u03a9")
    word = evaluate_text("4.7 kohm")
    assert ohm_sign == omega == word
    assert ohm_sign.expr == 4700


def test_ohm_sign_in_a_worksheet_checks(tmp_path, capsys):
    status, _, err = check(tmp_path, capsys, sheet(value="1 k\u2126").encode())
    assert status == 0, err


# -- the bytes of the file --------------------------------------------------------
def test_a_utf8_byte_order_mark_is_accepted(tmp_path, capsys):
    # Unicode standard, section 23.8: U+FEFF at the start of a UTF-8 file is a signature.
    status, out, err = check(tmp_path, capsys, b"\xef\xbb\xbf" + sheet().encode(), "--json")
    assert status == 0, err
    assert json.loads(out)["ok"] is True


@pytest.mark.parametrize(
    "bad",
    [
        b"\xff",  # never valid in UTF-8 (RFC 3629 section 1)
        b"\xc0\xaf",  # an overlong form of "/" (RFC 3629 section 10)
        b"\xed\xa0\x80",  # a UTF-16 surrogate, U+D800 (RFC 3629 section 3)
        b"\xf4\x90\x80\x80",  # above U+10FFFF (RFC 3629 section 3)
    ],
)
def test_invalid_utf8_is_refused_with_its_byte_offset(tmp_path, capsys, bad):
    head = b'[worksheet]\nformat = 1\ntitle = "'
    status, out, err = check(tmp_path, capsys, head + bad + b'"\n')
    assert status == 2 and out == ""
    assert f"byte 0x{bad[0]:02x} at byte offset {len(head)}" in err
    assert "ws.toml:3:" in err


@pytest.mark.skipif(not os.path.exists("/dev/zero"), reason="needs /dev/zero")
def test_a_device_that_reports_size_0_is_read_only_up_to_the_limit():
    with pytest.raises(LimitError) as info:
        load("/dev/zero")
    assert f"more than {MAX_BYTES:,} bytes" in str(info.value)
    assert "reported as 0" in str(info.value)


# -- TOML nesting, arrays and strings ---------------------------------------------
def test_deep_toml_nesting_is_refused_with_its_line(tmp_path, capsys):
    # TOML 1.0 allows arrays of any depth; the limit is handcheck's.
    deep = "[" * 5000 + "]" * 5000
    text = sheet().replace('nodes = ["a", "gnd"] }\n\n[[step]]', f"nodes = {deep} }}\n\n[[step]]")
    status, out, err = check(tmp_path, capsys, text.encode())
    assert status == 2 and out == ""
    assert "ws.toml:7:" in err and f"more than {MAX_NESTING} levels" in err


def test_brackets_in_strings_and_comments_do_not_count_as_nesting():
    brackets = "[" * (MAX_NESTING + 5)
    text = sheet().replace('title = "limits"', f"title = \"{brackets}\" # {brackets}\nreference = '{brackets}'")
    assert loads(text, "ws.toml").title == brackets


def test_a_long_array_is_refused(tmp_path, capsys):
    nodes = ", ".join(['"a"'] * (MAX_ITEMS + 1))
    text = sheet().replace('nodes = ["a", "gnd"] }\n\n[[step]]', f"nodes = [{nodes}] }}\n\n[[step]]")
    status, _, err = check(tmp_path, capsys, text.encode())
    assert status == 2
    assert "ws.toml:7:" in err and f"holds {MAX_ITEMS + 1:,} items" in err


def test_a_claim_padded_with_spaces_is_refused_before_trimming(tmp_path, capsys):
    status, _, err = check(tmp_path, capsys, sheet(claim="10 mA" + " " * 100_000).encode())
    assert status == 2
    assert "ws.toml:12:" in err and '"step.0.claim" is 100,005 characters long' in err
    assert f"at most {MAX_TEXT:,} characters" in err


# -- --json on exit 2 -------------------------------------------------------------
def test_json_on_exit_2_keeps_stdout_empty_and_a_batch_holds_the_error_object(tmp_path, capsys):
    # Check output format 1 callers read stdout only on exit 0 and 1: a single bad
    # worksheet prints its one line on stderr and nothing on stdout (common practice);
    # in a batch the array holds the error object for it.
    from handcheck.batch import refused_data

    status, out, err = check(tmp_path, capsys, b"[worksheet\n", "--json")
    assert (status, out) == (2, "")
    message = err.removeprefix("handcheck: ").rstrip("\n")
    other = tmp_path / "missing.toml"
    status = main(["check", str(tmp_path / "ws.toml"), str(other), "--json"])
    array = json.loads(capsys.readouterr().out)
    assert status == 2
    assert array[0] == refused_data(str(tmp_path / "ws.toml"), message)
    assert array[1]["error"].endswith("no such file")


# -- outputs over the input --------------------------------------------------------
@pytest.mark.parametrize(
    "command",
    [
        ["check", "{ws}", "--plot", "{ws}"],
        ["check", "{ws}", "--junit", "{ws}"],
        ["record", "{ws}", "-o", "{ws}"],
        ["check", "{ws}", "--junit", "{link}"],
    ],
)
def test_an_output_over_the_worksheet_is_refused(tmp_path, capsys, command):
    ws = tmp_path / "ws.svg" if "--plot" in command else tmp_path / "ws.toml"
    if "-o" in command:
        ws = tmp_path / "ws.md"
    ws.write_text(sheet(), encoding="utf-8")
    link = tmp_path / "link.toml"
    link.symlink_to(ws)
    before = ws.read_bytes()
    status = main([part.format(ws=ws, link=link) for part in command])
    err = capsys.readouterr().err
    assert status == 2
    assert "is the worksheet itself; write the output to another file" in err
    assert ws.read_bytes() == before

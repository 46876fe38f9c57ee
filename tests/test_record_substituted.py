"""The record's "With the author's numbers" row puts a number in place of every input.

The rows are typeset by sympy's own LaTeX and MathML printers; the values are the
worksheet's (invented demo numbers). X_L = 2*pi*f*L (any circuits textbook, e.g. Hayt,
Kemmerly and Durbin, Engineering Circuit Analysis, 8th ed., ch. 10; from memory).
"""

from __future__ import annotations

import json
import re

import pytest

from handcheck.pipeline import record_inputs
from handcheck.record.write import make_record
from handcheck.worksheet.load import loads

SHEET = """
[worksheet]
format = 1
title = "Coil on a 50 Hz supply"
phasors = "rms"
{frequency}
[parts]
Vs = {{ voltage = "230 V rms", {source}, phase = "30 deg", nodes = ["line", "gnd"] }}
Lc = {{ inductor = "120 mH", nodes = ["line", "m"] }}
Rc = {{ resistor = "33 ohm", nodes = ["m", "gnd"] }}
[[step]]
name = "XL"
quantity = "reactance(Lc)"
formula = "2*pi*f*Lc"
claim = "37.70 ohm"
[[step]]
name = "XLw"
formula = "w*Lc"
claim = "37.70 ohm"
[[step]]
name = "I"
quantity = "current(Lc)"
formula = "Vs/(Rc + j*XL)"
claim = "4.6 A /_ -18.8 deg"
"""


def _rows(frequency: str, source: str) -> dict[str, str]:
    sheet = loads(SHEET.format(frequency=frequency, source=source), "<coil>")
    data, _ = make_record(record_inputs(sheet, evidence=False, curves=False), ".json")
    record = json.loads(data.decode("utf-8"))
    return {step["name"]: step["substituted_typeset"]["latex"] for step in record["steps"]}


def _names(latex: str) -> set[str]:
    return set(re.findall(r"(?<![\\A-Za-z])([A-Za-z]+)(?![A-Za-z])", latex))


@pytest.mark.parametrize(
    ("frequency", "source"),
    [("", 'frequency = "50 Hz"'), ('frequency = "314.159 rad/s"', 'frequency = "314.159 rad/s"')],
    ids=["hertz", "rad-per-s"],
)
def test_every_input_is_a_number(frequency: str, source: str) -> None:
    rows = _rows(frequency, source)
    units = {"Hz", "mH", "rad", "s", "V", "deg", "j", "cdot", "frac", "angle", "left", "right", "pi"}
    for name, latex in rows.items():
        assert _names(latex) <= units, (name, latex)
        assert not {"f", "w", "Lc", "Vs", "Rc", "XL"} & _names(latex)


def test_the_frequency_and_the_source_phasor_as_written() -> None:
    rows = _rows("", 'frequency = "50 Hz"')
    assert rows["XL"] == "2 \\cdot \\pi \\cdot 50 \\cdot Hz \\cdot 120 \\cdot mH"
    # w is 2*pi*f, kept exact as the author would substitute it
    assert rows["XLw"].startswith("2 \\cdot \\pi \\cdot 50 \\cdot Hz")
    # Vs is the rms phasor (the worksheet's convention), 230 V at 30 deg
    assert "230 \\cdot V \\angle 30 \\cdot deg" in rows["I"]
    # an earlier claim stands for its step
    assert "37.70" in rows["I"]


def test_an_angular_frequency_shows_its_hertz_value() -> None:
    rows = _rows('frequency = "314.159 rad/s"', 'frequency = "314.159 rad/s"')
    # f = 314.159/(2*pi) = 49.99999... Hz, six digits; w as written
    assert "50 \\cdot Hz" in rows["XL"]
    assert rows["XLw"].startswith("314.159")

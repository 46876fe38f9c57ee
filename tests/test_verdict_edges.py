"""Edge cases of the verdicts, found in review."""

from __future__ import annotations

import pytest

import handcheck
from handcheck.errors import ParseError

HEAD = '[worksheet]\nformat = 1\ntitle = "t"\n'


def step(report: handcheck.Report, name: str) -> handcheck.StepFinding:
    return next(s for s in report.steps if s.name == name)


def test_a_coarse_input_that_agrees_carries_its_interval_forward():
    # R = 1.4 kohm claimed as "1 kohm" agrees within its one digit (+-0.5 kohm); P =
    # V^2/R from it is 100 mW against 71.43 mW (Ohm's and Joule's laws, from memory).
    # The written "1 kohm" stands for 0.5 to 1.5 kohm, so V^2/R for 10 V spans 66.67 mW
    # to 200 mW: the true value lies inside, rounding explains it, and the note says so
    # (never "carried" from a step that agrees).
    text = (
        HEAD
        + """
[parts]
V1 = { voltage = "10 V", nodes = ["in", "gnd"] }
R1 = { resistor = "1.4 kohm", nodes = ["in", "gnd"] }
[[step]]
name = "R"
quantity = "resistance(R1)"
claim = "1 kohm"
[[step]]
name = "P"
quantity = "power(R1)"
formula = "V1^2/R"
claim = "100 mW"
tolerance = "1%"
"""
    )
    report = handcheck.check_text(text)
    assert step(report, "R").verdict == "agrees"
    p = step(report, "P")
    assert (p.verdict, p.caused_by) == ("agrees", None)
    assert p.message is not None and p.message.startswith("follows from the rounded values of earlier steps")
    assert "66.67 mW to 200 mW" in p.message and "71.43 mW lies inside" in p.message
    assert report.ok


def test_a_negative_real_claim_reads_as_a_reversed_phasor():
    # The source's current enters its + terminal: about -10 mA (a 1 kohm load, the
    # capacitor's 1.6 ohm reactance at 1 kHz hardly matters): common practice to write -10 mA.
    text = (
        HEAD
        + """
[parts]
V1 = { voltage = "10 V", frequency = "1 kHz", nodes = ["in", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["in", "out"] }
C1 = { capacitor = "100 uF", nodes = ["out", "gnd"] }
[[step]]
name = "I"
quantity = "current(V1)"
claim = "-10.00 mA"
"""
    )
    assert step(handcheck.check_text(text), "I").verdict == "agrees"


def test_a_right_claim_from_a_wrong_formula_is_remarked():
    text = (
        HEAD
        + """
frequency = "1 kHz"
[parts]
V1 = { voltage = "1 V", frequency = "1 kHz", nodes = ["a", "gnd"] }
L1 = { inductor = "10 mH", nodes = ["a", "gnd"] }
[[step]]
name = "XL"
quantity = "reactance(L1)"
formula = "2*pi*f*L1*1000"
claim = "62.83 ohm"
"""
    )
    finding = step(handcheck.check_text(text), "XL")
    assert finding.verdict == "agrees"
    assert finding.message == "the claim is right, but the formula as written gives 62832 ohm"


def test_a_time_function_step_cannot_feed_a_formula():
    text = (
        HEAD
        + """
[parts]
V1 = { voltage = "10 V", nodes = ["in", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["in", "out"] }
C1 = { capacitor = "1 uF", nodes = ["out", "gnd"] }
[[step]]
name = "v"
quantity = "voltage(out)"
claim = "10*(1 - exp(-t/(1 ms))) V"
[[step]]
name = "v2"
formula = "v/2"
claim = "5 V"
"""
    )
    with pytest.raises(handcheck.WorksheetError) as info:
        handcheck.check_text(text, "w.toml")
    assert str(info.value) == (
        'w.toml:15: step "v2": the formula uses "v", whose claim is a function of time; '
        "a formula may use only steps with a single value"
    )


def test_a_purely_imaginary_claim_allows_a_rounded_real_part():
    # "-1592j ohm" is read as 0 - 1592j to the last digit written (common practice):
    # a true real part of 0.3 ohm rounds to 0.
    from handcheck.verify.claims import Tolerance, agrees, read_claim

    claim = read_claim("-1592j ohm")
    assert agrees(claim, complex(0.3, -1592.2), Tolerance())
    assert not agrees(claim, complex(0.7, -1592.2), Tolerance())


DIVIDER = (
    HEAD
    + """
[parts]
V1 = { voltage = "1 V", nodes = ["in", "gnd"] }
R1 = { resistor = "2 kohm", nodes = ["in", "out"] }
R2 = { resistor = "1 kohm", nodes = ["out", "gnd"] }
[[step]]
name = "V"
quantity = "voltage(out)"
claim = "CLAIM"
"""
)


@pytest.mark.parametrize(
    ("claim", "verdict"),
    [
        # v = 1 V * 1/(1 + 2) = 1/3 V exactly (voltage divider, from memory). Written to 14
        # digits, 0.33333333333333 V is within half a unit of its last digit (5e-15 V);
        # one wrong in its 14th digit is not (half a unit in the last digit written:
        # common practice), however small the difference.
        ("0.33333333333333 V", "agrees"),
        ("0.33333333333334 V", "differs"),
        ("0.33333333333332 V", "differs"),
    ],
)
def test_a_claim_wrong_in_its_14th_digit_differs(claim, verdict):
    report = handcheck.check_text(DIVIDER.replace("CLAIM", claim))
    assert step(report, "V").verdict == verdict


RC = (
    HEAD
    + """
[parts]
V1 = { voltage = "1 V", frequency = "1 kHz", nodes = ["in", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["in", "out"] }
C1 = { capacitor = "159.15494 nF", nodes = ["out", "gnd"] }
[[step]]
name = "V"
quantity = "voltage(out)"
claim = "CLAIM"
"""
)


def test_an_angle_that_checks_nothing_is_refused():
    # R = |Xc| at 1 kHz: the output is 1/sqrt(2) V at -45 deg (RC low-pass at its corner,
    # from memory). "1e20 deg" is read to 0.5e20 deg, more than any phase can differ.
    with pytest.raises(ParseError) as info:
        handcheck.check_text(RC.replace("CLAIM", "0.7071 V /_ 1e20 deg"))
    assert 'the angle "1e20 deg" is read to within 5e+19 deg' in str(info.value)


@pytest.mark.parametrize(("angle", "verdict"), [("-45.0", "agrees"), ("-4e1", "agrees"), ("-44.0", "differs")])
def test_an_angle_within_a_quarter_turn_is_judged_by_its_digits(angle, verdict):
    # "-4e1 deg" is read from its mantissa: -40 deg within 5 deg, which -45 deg is.
    report = handcheck.check_text(RC.replace("CLAIM", f"0.7071 V /_ {angle} deg"))
    assert step(report, "V").verdict == verdict


@pytest.mark.parametrize(
    ("angle", "verdict"),
    [
        ("-45 deg", "agrees"),
        ("315 deg", "agrees"),  # the same phasor within one turn
        ("-0.7854 rad", "agrees"),
        ("-45 rad", "differs"),  # read to 0.5 rad, and -45 rad lies 0.23 rad from -pi/4 seven turns on
        ("-405 deg", "differs"),  # beyond a full turn: taken as written
    ],
)
def test_an_angle_beyond_a_full_turn_is_not_wrapped(angle, verdict):
    # Phasor angles are defined modulo 2*pi (common practice); a written angle past a full
    # turn is taken as written, since its digits cannot tell the turns apart.
    report = handcheck.check_text(RC.replace("CLAIM", f"0.7071 V /_ {angle}"))
    assert step(report, "V").verdict == verdict


def test_a_formula_naming_an_op_amp_says_to_write_its_gain():
    # Common practice: an inverting stage's closed-loop gain with a finite open-loop gain A
    # is -Rf/Ri / (1 + (1 + Rf/Ri)/A); the op-amp itself is no number in a formula.
    sheet = """
[worksheet]
format = 1
title = "inverting stage"
[parts]
Vin = { voltage = "1 V", nodes = ["in", "gnd"] }
Ri = { resistor = "10 kohm", nodes = ["in", "m"] }
Rf = { resistor = "22 kohm", nodes = ["m", "out"] }
U1 = { opamp = "100000", nodes = ["out", "gnd", "m"] }
[[step]]
name = "G"
formula = "-Rf/Ri/(1 + (1 + Rf/Ri)/U1)"
claim = "-2.2"
"""
    with pytest.raises(handcheck.HandcheckError, match="U1 is an op-amp, which has no value a formula can use"):
        handcheck.check_text(sheet)

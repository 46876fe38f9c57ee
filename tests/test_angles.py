"""degrees-as-radians and radians-as-degrees for a phase claimed as a plain number.

Series R-C from a 50 Hz source, R = 100 ohm, C = 10 uF: the capacitor's voltage lags
the source by atan(w R C) = atan(0.1 pi) = 0.30440 rad = 17.441 deg (the R-C voltage
divider, V(a)/Vs = 1/(1 + j w R C); Nilsson & Riedel, Electric Circuits, 10th ed.,
ch. 9; from memory). The slips are the degree figure written with no unit or with rad,
and the radian figure labelled deg (common practice).
"""

from __future__ import annotations

import math

import pytest

import handcheck

PHASE = math.atan(0.1 * math.pi)  # rad


def sheet(claim: str) -> str:
    return f"""[worksheet]
format = 1
title = "phase of an R-C divider"

[parts]
Vs = {{ voltage = "10 V", frequency = "50 Hz", nodes = ["in", "gnd"] }}
R1 = {{ resistor = "100 ohm", nodes = ["in", "a"] }}
C1 = {{ capacitor = "10 uF", nodes = ["a", "gnd"] }}

[[step]]
name = "ph"
quantity = "phase(voltage(a))"
claim = "{claim}"
"""


def only_step(claim: str) -> handcheck.StepFinding:
    return handcheck.check_text(sheet(claim)).steps[0]


@pytest.mark.parametrize(
    ("claim", "code", "write"),
    [
        (f"{-math.degrees(PHASE):.2f}", "degrees-as-radians", f'write "{-math.degrees(PHASE):.2f} deg"'),
        (f"{-math.degrees(PHASE):.2f} rad", "degrees-as-radians", f'write "{-math.degrees(PHASE):.2f} deg"'),
        (f"{-PHASE:.4f} deg", "radians-as-degrees", f'write "{-PHASE:.4f} rad"'),
    ],
)
def test_a_phase_in_the_other_angle_unit_is_named_with_the_text_to_write(claim, code, write):
    finding = only_step(claim)
    assert finding.verdict == "differs"
    assert [d.mistake for d in finding.diagnosis] == [code]
    assert finding.diagnosis[0].detail.endswith(write)


@pytest.mark.parametrize("claim", [f"{-PHASE:.4f}", f"{-PHASE:.4f} rad", f"{-math.degrees(PHASE):.2f} deg"])
def test_a_right_phase_names_nothing(claim):
    finding = only_step(claim)
    assert (finding.verdict, finding.diagnosis) == ("agrees", ())


@pytest.mark.parametrize("claim", ["-20.00", "-0.5000 deg", "0"])
def test_an_unrelated_or_zero_phase_names_no_angle_mode(claim):
    codes = {d.mistake for d in only_step(claim).diagnosis}
    assert not codes & {"degrees-as-radians", "radians-as-degrees"}


# -- a tolerance wide enough to cover the truth and the mistaken value names nothing ----
# Two equal resistors halve a 10 V peak source: V(a) = 5 V peak (the voltage divider,
# from memory); the rms-for-peak slip gives 5*sqrt(2) = 7.07 V (peak = sqrt(2) rms for
# a sinusoid, from memory).


def divider(claim: str, tolerance: str) -> str:
    return f"""[worksheet]
format = 1
title = "divider"

[parts]
Vs = {{ voltage = "10 V", frequency = "50 Hz", nodes = ["in", "gnd"] }}
R1 = {{ resistor = "1 kohm", nodes = ["in", "a"] }}
R2 = {{ resistor = "1 kohm", nodes = ["a", "gnd"] }}

[[step]]
name = "Va"
quantity = "voltage(a)"
claim = "{claim}"
tolerance = "{tolerance}"
"""


def test_a_tolerance_covering_truth_and_mistake_names_nothing():
    # 45 %: 7.3 V is 46 % off 5 V (differs), within 45 % of 7.07 V, but 7.07 V is itself
    # within 45 % of 5 V: the slip cannot be told from the truth at this tolerance.
    wide = handcheck.check_text(divider("7.3 V", "45%")).steps[0]
    assert (wide.verdict, wide.diagnosis) == ("differs", ())
    narrow = handcheck.check_text(divider("7.07 V", "1%")).steps[0]
    assert narrow.verdict == "differs"
    assert "peak-as-rms" in [d.mistake for d in narrow.diagnosis]

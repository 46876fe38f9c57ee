"""Mistakes the catalogue missed or named misleadingly: R + X in a formula for |Z|, a
degree angle labelled rad or given to cos, a harmonic step taken at the analysis
frequency.

Each true value follows from a textbook closed form (named beside it), computed below
in plain float arithmetic (math, cmath, numpy); the claim is the number a person gets
with the mistake; a right claim never gets the code.
"""

from __future__ import annotations

import cmath
import math

import numpy as np

import handcheck

HEAD = '[worksheet]\nformat = 1\ntitle = "catalogue, user reports"\n'


def sig(x: float, digits: int = 4) -> str:
    return f"{x:.{digits}g}"


def finding(report: handcheck.Report, name: str) -> handcheck.StepFinding:
    return next(s for s in report.steps if s.name == name)


def codes(report: handcheck.Report, name: str) -> list[str]:
    return [d.mistake for d in finding(report, name).diagnosis]


def detail(report: handcheck.Report, name: str) -> str:
    return " ".join(d.detail for d in finding(report, name).diagnosis)


# -- magnitude-as-phasor: R + X for |Z| ---------------------------------------------------
# Series R-L: XL = w L, |Z| = sqrt(R^2 + XL^2), |I| = |V|/|Z| (the impedance triangle;
# Nilsson & Riedel, Electric Circuits, 10th ed., ch. 9, from memory). 8 ohm and 25 mH at
# 60 Hz: XL = 9.4248 ohm, |Z| = 12.362 ohm; R + XL = 17.42 ohm.
W60 = 2 * math.pi * 60
XL = W60 * 0.025
ZMAG = math.hypot(8, XL)


def motor(z_quantity: str, z_formula: str | None, z_claim: str, i_claim: str) -> str:
    z_line = f'formula = "{z_formula}"\n' if z_formula else ""
    return (
        HEAD
        + f"""
[parts]
Vs = {{ voltage = "40 V", frequency = "60 Hz", nodes = ["L", "gnd"] }}
Rm = {{ resistor = "8 ohm", nodes = ["L", "m"] }}
Lm = {{ inductor = "25 mH", nodes = ["m", "gnd"] }}

[[step]]
name = "XL"
quantity = "reactance(Lm)"
formula = "2*pi*f*Lm"
claim = "{sig(XL, 5)} ohm"

[[step]]
name = "Zmag"
quantity = "{z_quantity}"
{z_line}claim = "{z_claim}"

[[step]]
name = "Imag"
quantity = "magnitude(current(Rm))"
formula = "abs(Vs)/(Rm + XL)"
claim = "{i_claim}"
"""
    )


def test_r_plus_x_in_the_formula_of_a_magnitude():
    wrong_z, wrong_i = 8 + XL, 40 / (8 + XL)
    for quantity in ("magnitude(without(impedance(L), Vs))", "without(impedance(L), Vs)"):
        report = handcheck.check_text(motor(quantity, "Rm + XL", sig(wrong_z, 5) + " ohm", sig(wrong_i) + " A"))
        assert finding(report, "Zmag").verdict == "formula", quantity
        assert codes(report, "Zmag") == ["magnitude-as-phasor"], quantity
        assert "Rm + j*XL" in detail(report, "Zmag")
        assert codes(report, "Imag") == ["magnitude-as-phasor"]


def test_r_plus_x_claimed_for_a_magnitude_without_a_formula():
    report = handcheck.check_text(
        motor("magnitude(without(impedance(L), Vs))", None, sig(8 + XL, 5) + " ohm", sig(40 / ZMAG) + " A")
    )
    assert finding(report, "Zmag").verdict == "differs"
    assert codes(report, "Zmag") == ["magnitude-as-phasor"]


def test_right_magnitudes_and_a_plain_sum_of_resistances_get_no_code():
    right = handcheck.check_text(
        motor("magnitude(without(impedance(L), Vs))", "abs(Rm + j*XL)", sig(ZMAG, 5) + " ohm", sig(40 / ZMAG) + " A")
    )
    assert finding(right, "Zmag").verdict == "agrees" and not finding(right, "Zmag").diagnosis
    assert finding(right, "Imag").verdict == "agrees"
    # Rm + Rm is 16 ohm: a wrong formula, but j put in gives no true value.
    report = handcheck.check_text(motor("magnitude(without(impedance(L), Vs))", "Rm + Rm", "16 ohm", "2.5 A"))
    assert finding(report, "Zmag").verdict == "formula"
    assert "magnitude-as-phasor" not in codes(report, "Zmag")


# -- degrees-as-radians: a polar angle labelled rad, cos of a degree figure ------------------
# Unity-gain low-pass of two sections with a follower: H(s) = 1/(s^2 R1 R2 C1 C2 +
# s C2 (R1 + R2) + 1) (Horowitz & Hill, The Art of Electronics, 3rd ed., sec. 6.3,
# from memory); 4.7 kohm, 4.7 kohm, 47 nF, 10 nF at 2 kHz.
def lowpass_h() -> complex:
    s = 2j * math.pi * 2000
    r1 = r2 = 4700.0
    c1, c2 = 47e-9, 10e-9
    return complex(1 / np.polyval([r1 * r2 * c1 * c2, c2 * (r1 + r2), 1], s))


def lowpass(claim: str) -> str:
    return (
        HEAD
        + f"""
[parts]
Vin = {{ voltage = "1 V", frequency = "2 kHz", nodes = ["in", "gnd"] }}
R1 = {{ resistor = "4.7 kohm", nodes = ["in", "a"] }}
R2 = {{ resistor = "4.7 kohm", nodes = ["a", "b"] }}
C2 = {{ capacitor = "10 nF", nodes = ["b", "gnd"] }}
C1 = {{ capacitor = "47 nF", nodes = ["a", "out"] }}
U1 = {{ opamp = "ideal", nodes = ["out", "b", "out"] }}

[[step]]
name = "H"
quantity = "transfer(voltage(out), voltage(in))"
claim = "{claim}"
"""
    )


def test_polar_angle_in_degrees_labelled_rad():
    h = lowpass_h()
    degrees = math.degrees(cmath.phase(h))
    assert abs(degrees) > 2 * 180 / math.pi  # beyond a turn in radians: the wrapped angle tells nothing
    report = handcheck.check_text(lowpass(f"{sig(abs(h), 3)} /_ {degrees:.1f} rad"))
    assert finding(report, "H").verdict == "differs"
    assert codes(report, "H") == ["degrees-as-radians"]
    right = handcheck.check_text(lowpass(f"{sig(abs(h), 3)} /_ {degrees:.1f} deg"))
    assert finding(right, "H").verdict == "agrees" and not finding(right, "H").diagnosis


# C-R high-pass: |H| = w R C / sqrt(1 + (w R C)^2) = cos(phi), phi = atan(1/(w R C)) the
# lead of the output (first-order high-pass; Nilsson & Riedel, 10th ed., sec. 14.3, from
# memory). 220 nF and 4.7 kohm at 120 Hz.
WRC = 2 * math.pi * 120 * 4700 * 220e-9
PHI_DEG = math.degrees(math.atan(1 / WRC))


def highpass(gain_formula: str, gain_claim: str) -> str:
    return (
        HEAD
        + f"""
[parts]
Vm = {{ voltage = "20 mV", frequency = "120 Hz", nodes = ["m", "gnd"] }}
Cc = {{ capacitor = "220 nF", nodes = ["m", "in"] }}
Rin = {{ resistor = "4.7 kohm", nodes = ["in", "gnd"] }}

[[step]]
name = "phi"
formula = "atan(1/(w*Rin*Cc))*180/pi"
claim = "{PHI_DEG:.2f}"

[[step]]
name = "gain"
quantity = "magnitude(transfer(voltage(in), voltage(m)))"
formula = "{gain_formula}"
claim = "{gain_claim}"
"""
    )


def test_cos_of_a_degree_figure_in_radian_mode():
    in_radians = sig(math.cos(round(PHI_DEG, 2)))
    for formula in ("cos(phi)", f"cos({PHI_DEG:.2f})"):
        report = handcheck.check_text(highpass(formula, in_radians))
        assert finding(report, "gain").verdict == "formula", formula
        assert codes(report, "gain") == ["degrees-as-radians"], formula
    right = handcheck.check_text(highpass("cos(phi*pi/180)", sig(WRC / math.hypot(1, WRC))))
    assert finding(right, "gain").verdict == "agrees" and not finding(right, "gain").diagnosis
    # cos of the figure, but a wrong figure: no mode explains it
    other = handcheck.check_text(highpass("cos(phi)", sig(math.cos(1.0))))
    assert "degrees-as-radians" not in codes(other, "gain")


# -- other-frequency: a harmonic step taken at the fundamental --------------------------------
# XL = 2 pi f L at each harmonic (from memory): 6.8 mH is 2.1363 ohm at 50 Hz, 6.4088 ohm at
# 150 Hz; the series R-L impedance is R + jXL.
def harmonics(x_claim: str, z_claim: str, formula: str | None = None) -> str:
    formula_line = f'formula = "{formula}"\n' if formula else ""
    return (
        HEAD
        + f"""
frequency = "50 Hz"

[parts]
Vh = {{ voltage = "12*cos(2*pi*50 Hz*t) + 2*cos(2*pi*150 Hz*t) V", nodes = ["h", "gnd"] }}
Rh = {{ resistor = "4 ohm", nodes = ["h", "k"] }}
Lh = {{ inductor = "6.8 mH", nodes = ["k", "gnd"] }}

[[step]]
name = "X3"
quantity = 'at_frequency(reactance(Lh), "150 Hz")'
{formula_line}claim = "{x_claim}"

[[step]]
name = "Z3"
quantity = 'magnitude(at_frequency(without(impedance(h), Vh), "150 Hz"))'
claim = "{z_claim}"
"""
    )


def test_harmonic_step_taken_at_the_analysis_frequency():
    x50, x150 = 2 * math.pi * 50 * 6.8e-3, 2 * math.pi * 150 * 6.8e-3
    report = handcheck.check_text(harmonics(sig(x50, 5) + " ohm", sig(math.hypot(4, x50), 5) + " ohm"))
    for name in ("X3", "Z3"):
        assert finding(report, name).verdict == "differs"
        assert codes(report, name) == ["other-frequency"], name
        assert "150 Hz" in detail(report, name) and "50 Hz" in detail(report, name)
    with_formula = handcheck.check_text(harmonics(sig(x50, 5) + " ohm", "1 ohm", formula="2*pi*f*Lh"))
    assert finding(with_formula, "X3").verdict == "formula"
    assert codes(with_formula, "X3") == ["other-frequency"]
    right = handcheck.check_text(harmonics(sig(x150, 5) + " ohm", sig(math.hypot(4, x150), 5) + " ohm"))
    assert all(s.verdict == "agrees" and not s.diagnosis for s in right.steps)


def test_amplitudes_of_two_frequencies_added_are_not_said_to_be_at_right_angles():
    # The rms of a sum of sinusoids of different frequencies is the root of the sum of
    # their mean squares (Parseval; from memory): sqrt((12^2 + 2^2)/2) = 8.602 V, not
    # (12 + 2)/sqrt(2) = 9.899 V. The j*2 V "correction" gives the number, but the two are
    # not at right angles: no magnitude-as-phasor for voltages.
    text = harmonics("6.409 ohm", "7.537 ohm").replace(
        '[[step]]\nname = "X3"',
        '[[step]]\nname = "Vrms"\nquantity = "rms(voltage(h))"\nformula = "(12 V + 2 V)/sqrt(2)"\n'
        f'claim = "{sig(14 / math.sqrt(2))} V"\n\n[[step]]\nname = "X3"',
    )
    report = handcheck.check_text(text)
    assert finding(report, "Vrms").verdict == "formula"
    assert "magnitude-as-phasor" not in codes(report, "Vrms")

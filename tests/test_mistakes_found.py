"""Mistakes the catalogue missed or named misleadingly: R + X in a formula for |Z|, a
degree angle labelled rad or given to cos, a harmonic step taken at the analysis
frequency, and the sign slip of a quantity in a circuit driven by one source.

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


# -- reversed-nodes: the quantity's own sign, and a source an earlier step confirms ----------
# Bridge of two dividers on 10 V: V(a) = 10*Rb/(Ra + Rb), V(b) = 10*Rt/(Rc + Rt), I(Rt) =
# V(b)/Rt (voltage divider; any introductory text, from memory).
VA, VB = 10 * 2.2 / 3.2, 10 * 2.7 / 3.7


def bridge(vab: str, it: str) -> str:
    return (
        HEAD
        + f"""
[parts]
Vr = {{ voltage = "10 V", nodes = ["top", "gnd"] }}
Ra = {{ resistor = "1 kohm", nodes = ["top", "a"] }}
Rb = {{ resistor = "2.2 kohm", nodes = ["a", "gnd"] }}
Rc = {{ resistor = "1 kohm", nodes = ["top", "b"] }}
Rt = {{ resistor = "2.7 kohm", nodes = ["b", "gnd"] }}

[[step]]
name = "Vab"
quantity = "voltage(a, b)"
claim = "{vab}"

[[step]]
name = "It"
quantity = "current(Rt)"
claim = "{it}"
"""
    )


def test_sign_slip_names_the_quantity_direction_first():
    report = handcheck.check_text(bridge(sig(VB - VA) + " V", sig(-VB / 2.7) + " mA"))
    assert codes(report, "Vab") == ["reversed-nodes"]
    text = detail(report, "Vab")
    assert text.startswith("the number is the quantity with its sign reversed: the quantity's nodes")
    assert "voltage(b, a)" in text and text.index("voltage(b, a)") < text.index("Vr")
    assert codes(report, "It") == ["reversed-nodes"]
    assert "current's direction" in detail(report, "It") and "from b to gnd" in detail(report, "It")


def test_an_earlier_step_that_agrees_rules_its_source_out():
    # Vab agrees with its sign, so Vr was taken as connected: It's sign slip is the
    # current's direction alone, and no source reversal is offered for it.
    report = handcheck.check_text(bridge(sig(VA - VB) + " V", sig(-VB / 2.7) + " mA"))
    assert finding(report, "Vab").verdict == "agrees"
    assert finding(report, "It").verdict == "differs"
    assert "reversed-nodes" not in codes(report, "It")


# Two coupled coils, secondary loaded: the load current from s through Rb is
# j w M I1/(Rb + j w L2), M = k sqrt(L1 L2), dots at the ungrounded ends (coupled-coil
# mesh equations; Nilsson & Riedel, 10th ed., sec. 6.4 and 9.10, from memory); numpy
# solves the two mesh equations.
def coupled_currents() -> tuple[complex, complex]:
    w = 2 * math.pi * 50e3
    l1, l2, k, rd, rb = 22e-6, 47e-6, 0.7, 4.0, 15.0
    m = k * math.sqrt(l1 * l2)
    z = np.array([[rd + 1j * w * l1, -1j * w * m], [-1j * w * m, rb + 1j * w * l2]])
    i1, loop2 = np.linalg.solve(z, np.array([2.0, 0.0]))
    return complex(i1), complex(loop2)  # the second mesh current runs from s through Rb to gnd


def coupler(i1: complex, i2: complex) -> str:
    def polar(z: complex) -> str:
        return f"{sig(abs(z))} A /_ {math.degrees(cmath.phase(z)):.2f} deg"

    return (
        HEAD
        + f"""
[parts]
Vd = {{ voltage = "2 V", frequency = "50 kHz", nodes = ["d", "gnd"] }}
Rd = {{ resistor = "4 ohm", nodes = ["d", "p"] }}
L1 = {{ inductor = "22 uH", nodes = ["p", "gnd"] }}
L2 = {{ inductor = "47 uH", nodes = ["s", "gnd"] }}
kc = {{ coupling = "0.7", inductors = ["L1", "L2"] }}
Rb = {{ resistor = "15 ohm", nodes = ["s", "gnd"] }}

[[step]]
name = "I1"
quantity = "current(L1)"
claim = "{polar(i1)}"

[[step]]
name = "I2"
quantity = "current(Rb)"
claim = "{polar(i2)}"
"""
    )


def test_coupled_secondary_sign_after_a_primary_that_agrees():
    i1, i2 = coupled_currents()
    right = handcheck.check_text(coupler(i1, i2))
    assert all(s.verdict == "agrees" for s in right.steps)
    report = handcheck.check_text(coupler(i1, -i2))
    assert finding(report, "I1").verdict == "agrees"
    assert finding(report, "I2").verdict == "differs"
    assert "reversed-nodes" not in codes(report, "I2")
    # with the primary's sign slipped too, nothing confirms Vd: reversal is offered again
    both = handcheck.check_text(coupler(-i1, -i2))
    assert codes(both, "I2") == ["reversed-nodes"]


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

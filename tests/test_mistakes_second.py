"""The mistake codes of check output format 1, second edition (DESIGN.md):
``magnitude-as-phasor``, ``sign-convention``, ``reversed-nodes``, ``other-frequency``.

Each test takes a circuit whose true values follow from a textbook closed form (named
beside it), writes the number a person gets with the mistake (plain float arithmetic
below), and asserts the code; then that a right claim never gets it, and that a claim
wrong in an unrelated way does not either.
"""

from __future__ import annotations

import cmath
import math

from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

import handcheck
from handcheck.verify.mistakes import CODES

TESTED = {"magnitude-as-phasor", "sign-convention", "reversed-nodes", "other-frequency"}

HEAD = '[worksheet]\nformat = 1\ntitle = "second-edition catalogue"\n'


def sig(x: float, digits: int = 4) -> str:
    return f"{x:.{digits}g}"


def polar(z: complex, unit: str, digits: int = 4) -> str:
    return f"{sig(abs(z), digits)} {unit} /_ {sig(math.degrees(cmath.phase(z)), digits)} deg"


def codes(report: handcheck.Report, name: str) -> list[str]:
    return [d.mistake for d in next(s for s in report.steps if s.name == name).diagnosis]


def finding(report: handcheck.Report, name: str) -> handcheck.StepFinding:
    return next(s for s in report.steps if s.name == name)


def test_the_second_edition_codes_are_catalogued():
    assert set(CODES) >= TESTED


# -- magnitude-as-phasor ---------------------------------------------------------------
# A series R-C on 50 V peak with R = 30 ohm and XC = -40 ohm: |Z| = sqrt(30^2 + 40^2) =
# 50 ohm, I = 1 A at +53.13 deg, VR = 30 V at 53.13 deg, VC = 40 V at -36.87 deg (the
# 3-4-5 impedance triangle of introductory texts, e.g. Nilsson & Riedel, Electric
# Circuits, 10th ed., ch. 9; from memory). KVL with magnitudes gives VR = 50 - 40 = 10 V
# and |Z| = 30 + 40 = 70 ohm.
W = 2 * math.pi * 50
C_F = 1 / (W * 40)
Z = complex(30, -40)
I_SERIES = 50 / Z
VC = I_SERIES * complex(0, -40)
VR = I_SERIES * 30


def rc(vc: str, vr: str, vr_formula: str | None = "Vs - VC", z: str = "50.00 ohm", z_formula: str | None = None) -> str:
    vr_line = f'formula = "{vr_formula}"\n' if vr_formula else ""
    z_line = f'formula = "{z_formula}"\n' if z_formula else ""
    return (
        HEAD
        + f"""
[parts]
Vs = {{ voltage = "50 V", frequency = "50 Hz", nodes = ["in", "gnd"] }}
R1 = {{ resistor = "30 ohm", nodes = ["in", "a"] }}
C1 = {{ capacitor = "{C_F * 1e6:.12f} uF", nodes = ["a", "gnd"] }}

[[step]]
name = "Z"
quantity = "transfer(voltage(in), current(R1))"
{z_line}claim = "{z}"

[[step]]
name = "VC"
quantity = "voltage(a)"
claim = "{vc}"

[[step]]
name = "VR"
quantity = "voltage(in, a)"
{vr_line}claim = "{vr}"
"""
    )


def test_kvl_with_magnitudes_after_a_plain_magnitude_is_a_wrong_formula():
    # The author wrote VC as its size only (agrees: judged on magnitude), then VR = Vs - VC
    # as numbers: 50 - 40 = 10 V. The arithmetic follows from the author's numbers, so
    # without the code this read "carried from VC", a step that agrees.
    report = handcheck.check_text(rc(vc=sig(abs(VC)) + " V", vr=sig(50 - abs(VC)) + " V"))
    assert finding(report, "VC").verdict == "agrees"
    assert finding(report, "VR").verdict == "formula"
    assert finding(report, "VR").caused_by is None
    assert codes(report, "VR") == ["magnitude-as-phasor"]
    assert report.first_divergence == "VR"


def test_kvl_with_magnitudes_of_polar_claims():
    # VC written as a phasor; VR still worked out as |Vs| - |VC|.
    report = handcheck.check_text(rc(vc=polar(VC, "V"), vr=sig(50 - abs(VC)) + " V"))
    assert finding(report, "VR").verdict == "arithmetic"
    assert "magnitude-as-phasor" in codes(report, "VR")


def test_kvl_with_magnitudes_without_a_formula():
    # No formula: |V(in)| - |V(a)| reproduces the claim.
    report = handcheck.check_text(rc(vc=polar(VC, "V"), vr=sig(50 - abs(VC)) + " V", vr_formula=None))
    assert finding(report, "VR").verdict == "differs"
    assert codes(report, "VR")[0] == "magnitude-as-phasor"


def test_impedance_size_as_r_plus_x():
    # |Z| claimed as R + |X| = 70 ohm, with the formula and without.
    report = handcheck.check_text(rc(vc=polar(VC, "V"), vr=polar(VR, "V"), z="70 ohm", z_formula="R1 + 1/(j*w*C1)"))
    assert finding(report, "Z").verdict == "arithmetic"
    assert codes(report, "Z") == ["magnitude-as-phasor"]
    report = handcheck.check_text(rc(vc=polar(VC, "V"), vr=polar(VR, "V"), z="70 ohm"))
    assert finding(report, "Z").verdict == "differs"
    assert codes(report, "Z") == ["magnitude-as-phasor"]


def test_right_claims_and_unrelated_slips_get_no_magnitude_as_phasor():
    right = handcheck.check_text(
        rc(vc=polar(VC, "V"), vr=polar(VR, "V"), z="50.00 ohm", z_formula="abs(R1 + 1/(j*w*C1))")
    )
    assert all(s.verdict == "agrees" and not s.diagnosis for s in right.steps)
    # An unrelated slip: |Z| claimed as 30*40/70 (a parallel combination of the sizes).
    wrong = handcheck.check_text(rc(vc=polar(VC, "V"), vr=polar(VR, "V"), z=sig(30 * 40 / 70) + " ohm"))
    assert "magnitude-as-phasor" not in codes(wrong, "Z")
    # Real operands of one sign: R1 + R1 is the sum of sizes too, and nothing is wrong.
    sums = handcheck.check_text(rc(vc=polar(VC, "V"), vr=polar(VR, "V"), z="60 ohm", z_formula="R1 + R1"))
    assert finding(sums, "Z").verdict == "formula"
    assert "magnitude-as-phasor" not in codes(sums, "Z")


# -- sign-convention -------------------------------------------------------------------
# A 120 V rms, 60 Hz supply across 4 ohm + j3 ohm: I = 24 A rms at -36.87 deg, the load
# absorbs P = 2304 W and Q = 1728 var, the supply absorbs -2304 W (it delivers 2304 W);
# a 100 uF capacitor on 230 V rms at 50 Hz absorbs Q = -V^2*w*C = -1661.9 var (supplies
# 1661.9 var, its rating). Power triangle and the passive sign convention: Nilsson &
# Riedel, Electric Circuits, 10th ed., sec. 1.5 and 10.3-10.5 (from memory).
L_H = 3 / (2 * math.pi * 60)
I_LOAD = 120 / complex(4, 3)


def supply(p: str, q: str, i: str) -> str:
    return (
        HEAD
        + f"""
phasors = "rms"

[parts]
Vs = {{ voltage = "120 V rms", frequency = "60 Hz", nodes = ["a", "gnd"] }}
R = {{ resistor = "4 ohm", nodes = ["a", "b"] }}
X = {{ inductor = "{L_H * 1000:.12f} mH", nodes = ["b", "gnd"] }}

[[step]]
name = "P"
quantity = "power(Vs)"
claim = "{p}"

[[step]]
name = "Q"
quantity = "reactive_power(Vs)"
claim = "{q}"

[[step]]
name = "I"
quantity = "current(Vs)"
claim = "{i}"
"""
    )


def capacitor(q: str, quantity: str = "reactive_power(C1)") -> str:
    return (
        HEAD
        + f"""
phasors = "rms"

[parts]
Vs = {{ voltage = "230 V rms", frequency = "50 Hz", nodes = ["a", "gnd"] }}
C1 = {{ capacitor = "100 uF", nodes = ["a", "gnd"] }}

[[step]]
name = "Qc"
quantity = "{quantity}"
claim = "{q}"
"""
    )


QC = 230**2 * 2 * math.pi * 50 * 100e-6  # the rating, var supplied


def test_supply_power_and_current_with_the_delivered_sign():
    # The author writes what the supply delivers: +2304 W, +1728 var, and the current
    # leaving its plus terminal, 24 A at -36.87 deg.
    report = handcheck.check_text(supply("2304 W", "1728 var", polar(I_LOAD, "A")))
    for name in ("P", "Q", "I"):
        assert finding(report, name).verdict == "differs"
        assert codes(report, name) == ["sign-convention"], name


def test_capacitor_var_as_a_positive_rating_is_not_a_reactance_sign():
    report = handcheck.check_text(capacitor(sig(QC, 5) + " var"))
    assert codes(report, "Qc") == ["sign-convention"]
    detail = finding(report, "Qc").diagnosis[0].detail
    assert "delivered_reactive_power(C1)" in detail and f"-{sig(QC, 5)} var" in detail


def test_delivered_quantity_with_the_absorbed_sign():
    report = handcheck.check_text(capacitor(f"-{sig(QC, 5)} var", "delivered_reactive_power(C1)"))
    assert codes(report, "Qc") == ["sign-convention"]


def test_right_signs_and_unrelated_slips_get_no_sign_convention():
    right = handcheck.check_text(supply("-2304 W", "-1728 var", polar(-I_LOAD, "A")))
    assert all(s.verdict == "agrees" and not s.diagnosis for s in right.steps)
    rating = handcheck.check_text(capacitor(sig(QC, 5) + " var", "delivered_reactive_power(C1)"))
    assert all(s.verdict == "agrees" and not s.diagnosis for s in rating.steps)
    # |V| |I| = 2880 VA written as the power (the power factor forgotten): wrong, not a sign.
    wrong = handcheck.check_text(supply("-2880 W", "-2880 var", polar(-I_LOAD / 2, "A")))
    for name in ("P", "Q", "I"):
        assert "sign-convention" not in codes(wrong, name)


# -- reversed-nodes --------------------------------------------------------------------
# Millman's theorem (any introductory text; Hayt, Kemmerly & Durbin, Engineering Circuit
# Analysis, 8th ed., superposition chapter; from memory): a node m fed from V1 through
# R1 and a current I1 into m, with R3 to ground, sits at (V1/R1 + I1)/(1/R1 + 1/R3).
# 10 V, 1 kohm, 2 mA, 1 kohm: 6 V; with I1 drawn out of m instead: 4 V. With a second
# voltage source V2 = 5 V through R2 = 1 kohm: (10 + 5)/3 = 5 V, V2 reversed 5/3 V.


def millman(claim: str, i1_nodes: str = '["gnd", "m"]', quantity: str = "voltage(m)") -> str:
    return (
        HEAD
        + f"""
[parts]
V1 = {{ voltage = "10 V", nodes = ["a", "gnd"] }}
R1 = {{ resistor = "1 kohm", nodes = ["a", "m"] }}
R3 = {{ resistor = "1 kohm", nodes = ["m", "gnd"] }}
I1 = {{ current = "2 mA", nodes = {i1_nodes} }}

[[step]]
name = "Vm"
quantity = "{quantity}"
claim = "{claim}"
"""
    )


def two_supplies(claim: str) -> str:
    return (
        HEAD
        + f"""
[parts]
V1 = {{ voltage = "10 V", frequency = "50 Hz", nodes = ["a", "gnd"] }}
V2 = {{ voltage = "5 V", frequency = "50 Hz", nodes = ["b", "gnd"] }}
R1 = {{ resistor = "1 kohm", nodes = ["a", "m"] }}
R2 = {{ resistor = "1 kohm", nodes = ["b", "m"] }}
R3 = {{ resistor = "1 kohm", nodes = ["m", "gnd"] }}

[[step]]
name = "Vm"
quantity = "voltage(m)"
claim = "{claim}"
"""
    )


def test_current_source_the_other_way_round():
    report = handcheck.check_text(millman("4.000 V"))
    assert finding(report, "Vm").verdict == "differs"
    assert codes(report, "Vm") == ["reversed-nodes"]
    assert "I1" in finding(report, "Vm").diagnosis[0].detail


def test_one_supply_of_two_reversed():
    report = handcheck.check_text(two_supplies(sig(5 / 3) + " V"))
    assert codes(report, "Vm") == ["reversed-nodes"]
    assert "V2" in finding(report, "Vm").diagnosis[0].detail


def test_right_claims_and_unrelated_slips_get_no_reversed_nodes():
    assert not finding(handcheck.check_text(millman("6.000 V")), "Vm").diagnosis
    assert not finding(handcheck.check_text(two_supplies("5.000 V")), "Vm").diagnosis
    # The current source forgotten (10/2 = 5 V): wrong, but no source reversed gives it.
    assert "reversed-nodes" not in codes(handcheck.check_text(millman("5.000 V")), "Vm")
    # A power is unchanged by reversing the only source: a sign slip there is the
    # sign convention, never reversed nodes.
    report = handcheck.check_text(capacitor(sig(QC, 5) + " var"))
    assert "reversed-nodes" not in codes(report, "Qc")


# -- other-frequency -------------------------------------------------------------------
# A 5th-harmonic analysis (250 Hz) of a supply with a 50 Hz fundamental: XL = 2*pi*f*L
# scales with frequency (any introductory text, from memory); 10 mH gives 3.1416 ohm
# at 50 Hz and 15.708 ohm at 250 Hz.


def harmonic(claim: str, formula: str | None = None, quantity: str = "reactance(L1)") -> str:
    formula_line = f'formula = "{formula}"\n' if formula else ""
    return (
        HEAD
        + f"""
frequency = "250 Hz"

[parts]
V1 = {{ voltage = "325 V", frequency = "50 Hz", nodes = ["a", "gnd"] }}
V5 = {{ voltage = "16 V", frequency = "250 Hz", nodes = ["a", "b"] }}
L1 = {{ inductor = "10 mH", nodes = ["b", "c"] }}
R1 = {{ resistor = "2 ohm", nodes = ["c", "gnd"] }}

[[step]]
name = "X"
quantity = "{quantity}"
{formula_line}claim = "{claim}"
"""
    )


def test_reactance_at_the_fundamental_in_a_harmonic_analysis():
    report = handcheck.check_text(harmonic(sig(2 * math.pi * 50 * 0.01, 5) + " ohm"))
    assert finding(report, "X").verdict == "differs"
    assert codes(report, "X") == ["other-frequency"]
    report = handcheck.check_text(harmonic(sig(2 * math.pi * 50 * 0.01, 5) + " ohm", formula="2*pi*f*L1"))
    assert finding(report, "X").verdict == "arithmetic"
    assert codes(report, "X") == ["other-frequency"]


def test_impedance_at_the_fundamental():
    z50 = complex(2, 2 * math.pi * 50 * 0.01)
    report = handcheck.check_text(harmonic(polar(z50, "ohm", 5), quantity="transfer(voltage(b), current(L1))"))
    assert "other-frequency" in codes(report, "X")


def test_right_claims_and_unrelated_slips_get_no_other_frequency():
    right = handcheck.check_text(harmonic(sig(2 * math.pi * 250 * 0.01, 5) + " ohm", formula="2*pi*f*L1"))
    assert all(s.verdict == "agrees" and not s.diagnosis for s in right.steps)
    # 2*pi forgotten at the right frequency: hertz-as-angular, not another frequency.
    report = handcheck.check_text(harmonic(sig(250 * 0.01, 5) + " ohm", formula="2*pi*f*L1"))
    assert "other-frequency" not in codes(report, "X")
    assert "hertz-as-angular" in codes(report, "X")


# -- property: a planted magnitude-for-phasor slip is found at its step -----------------
# Series R-C on a real source: VR and VC are at right angles, |VR|^2 + |VC|^2 = |Vs|^2
# (the voltage triangle; any introductory text, from memory), so |Vs| - |VC| is never
# |VR| unless VC is 0; the slip is planted wherever it shows in the claim's 4 digits.


def planted(r: int, c_uf: int, v: int, vr: str, vc: str, z: complex) -> str:
    text = rc(vc=vc, vr=vr, z=sig(abs(z)) + " ohm").replace('"30 ohm"', f'"{r} ohm"').replace('"50 V"', f'"{v} V"')
    return text.replace(f'"{C_F * 1e6:.12f} uF"', f'"{c_uf} uF"')


@settings(max_examples=12, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(1, 500), st.integers(1, 200), st.integers(1, 400), st.booleans())
def test_planted_magnitude_slip_is_found_at_its_step(r, c_uf, v, vc_as_magnitude):
    w = 2 * math.pi * 50
    z = complex(r, -1 / (w * c_uf * 1e-6))
    i = v / z
    vc, vr = i / (1j * w * c_uf * 1e-6), i * r
    slip = v - abs(vc)
    assume(abs(slip - abs(vr)) > 2e-3 * abs(vr))  # the slip shows in 4 digits
    vc_text = sig(abs(vc)) + " V" if vc_as_magnitude else polar(vc, "V")
    report = handcheck.check_text(planted(r, c_uf, v, sig(slip) + " V", vc_text, z))
    assert report.first_divergence == "VR"
    assert finding(report, "VC").verdict == "agrees"
    assert finding(report, "VR").verdict in ("formula", "arithmetic")
    assert "magnitude-as-phasor" in codes(report, "VR")
    # The right phasor, from the same numbers, never gets the code.
    right = handcheck.check_text(planted(r, c_uf, v, polar(vr, "V"), vc_text, z))
    assert right.first_divergence is None and not any(s.diagnosis for s in right.steps)


def test_a_claim_of_zero_names_no_mistake():
    # The resistance of a 3 ohm resistor is 3 ohm (Re Z of a resistor, by definition); a
    # claim of 0 ohm is wrong, but the prefix slip (3 mohm) and the reciprocal (0.33)
    # both round to "0": no catalogued mistake is named.
    text = (
        HEAD
        + """
[parts]
Vs = { voltage = "5 V", frequency = "1 kHz", nodes = ["in", "gnd"] }
R1 = { resistor = "3 ohm", nodes = ["in", "a"] }
C1 = { capacitor = "1 uF", nodes = ["a", "gnd"] }

[[step]]
name = "R"
quantity = "resistance(R1)"
claim = "0 ohm"
"""
    )
    report = handcheck.check_text(text)
    assert finding(report, "R").verdict == "differs"
    assert codes(report, "R") == []


def test_reactance_at_a_frequency_another_step_names():
    # One 50 Hz source; a later step asks for the 3rd harmonic (150 Hz) response, and
    # the author's XL step took 2*pi*150 Hz*L = 9.4248 ohm (XL = w*L, from memory).
    text = (
        HEAD
        + """
[parts]
V1 = { voltage = "10 V", frequency = "50 Hz", nodes = ["a", "gnd"] }
L1 = { inductor = "10 mH", nodes = ["a", "b"] }
R1 = { resistor = "2 ohm", nodes = ["b", "gnd"] }

[[step]]
name = "XL"
quantity = "reactance(L1)"
claim = "9.4248 ohm"

[[step]]
name = "X3"
quantity = 'at_frequency(reactance(L1), "150 Hz")'
claim = "9.4248 ohm"
"""
    )
    report = handcheck.check_text(text)
    assert finding(report, "X3").verdict == "agrees"
    assert codes(report, "XL") == ["other-frequency"]
    assert "150 Hz" in finding(report, "XL").diagnosis[0].detail


def test_parallel_as_series_with_a_node_named_inside_the_quantity_word():
    # R1 (30 ohm) and C1 (XC = -40 ohm) in series from a through node m to ground,
    # Rs = 10 ohm from the source: looking into a, Z = Rs || (R1 + jXC) (series and
    # parallel impedances, from memory). The slip: R1 and C1 taken in parallel. The node
    # "m" is a letter of "impedance": the rewiring must still be tried.
    xc = complex(0, -40)
    par = lambda a, b: a * b / (a + b)  # noqa: E731
    wrong = par(10, par(30, xc))
    text = (
        HEAD
        + f"""
[parts]
Vs = {{ voltage = "5 V", frequency = "50 Hz", nodes = ["in", "gnd"] }}
Rs = {{ resistor = "10 ohm", nodes = ["in", "a"] }}
R1 = {{ resistor = "30 ohm", nodes = ["a", "m"] }}
C1 = {{ capacitor = "{C_F * 1e6:.12f} uF", nodes = ["m", "gnd"] }}

[[step]]
name = "Z"
quantity = "impedance(a, gnd)"
claim = "{polar(wrong, "ohm")}"
"""
    )
    report = handcheck.check_text(text)
    assert finding(report, "Z").verdict == "differs"
    assert "parallel-as-series" in codes(report, "Z")

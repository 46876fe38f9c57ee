"""Design-note slips that used to get no diagnosis: an inverting gain without its minus
sign, an extra 2*pi inside a claimed H(s), a later step blamed for a formula-only step's
error, a millihenry written "mh", and the evidence lines wrapped in plain words.

Every worksheet is invented. Each true value comes from an independent numpy nodal
solution or a textbook closed form named beside it; the claims are the numbers a person
gets with the slip, computed below in plain float arithmetic.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from test_mistakes_found import codes, detail, finding, sig

import handcheck
from handcheck.pipeline import run
from handcheck.record.text import render

HEAD = '[worksheet]\nformat = 1\ntitle = "design-note slips"\n'


# -- 1. an inverting gain without its minus sign ------------------------------------------
# Inverting stage: Vin (0.1 V, 1 kHz) -> Rin 2.2 kohm -> node n (inverting input),
# Rf 33 kohm from n to out, + input grounded, RL 10 kohm load. The gain is -Rf/Rin = -15
# (Sedra & Smith, Microelectronic Circuits, 7th ed., sec. 2.2, from memory); here it
# comes from a numpy modified nodal solve with the ideal op-amp as v(n) = v(+) = 0.
RIN, RF, RL, VIN = 2200.0, 33000.0, 10000.0, 0.1


def inverting_solve() -> float:
    """v(out)/v(in) of the stage by nodal analysis: unknowns v_in, v_n, v_out, the
    source's current and the op-amp's output current."""
    g_in, g_f, g_l = 1 / RIN, 1 / RF, 1 / RL
    a = np.array(
        [
            [g_in, -g_in, 0, 1, 0],  # KCL at in (source current leaves the node)
            [-g_in, g_in + g_f, -g_f, 0, 0],  # KCL at n: no op-amp input current
            [0, -g_f, g_f + g_l, 0, -1],  # KCL at out: the op-amp drives current in
            [1, 0, 0, 0, 0],  # v(in) = VIN
            [0, 1, 0, 0, 0],  # v(n) = v(+) = 0
        ]
    )
    b = np.array([0, 0, 0, VIN, 0])
    x = np.linalg.solve(a, b)
    return float(x[2] / x[0])


GAIN = inverting_solve()


def inverting(steps: str, opamp_nodes: str = '["out", "gnd", "n"]') -> str:
    return (
        HEAD
        + f"""
[parts]
Vin = {{ voltage = "0.1 V", frequency = "1 kHz", nodes = ["in", "gnd"] }}
Rin = {{ resistor = "2.2 kohm", nodes = ["in", "n"] }}
Rf = {{ resistor = "33 kohm", nodes = ["n", "out"] }}
RL = {{ resistor = "10 kohm", nodes = ["out", "gnd"] }}
U1 = {{ opamp = "ideal", nodes = {opamp_nodes} }}
"""
        + steps
    )


def gain_step(name: str, claim: str, formula: str | None = None, quantity: str | None = None) -> str:
    q = quantity or "transfer(voltage(out), voltage(in))"
    f = f'formula = "{formula}"\n' if formula else ""
    return f'\n[[step]]\nname = "{name}"\nquantity = "{q}"\n{f}claim = "{claim}"\n'


def test_the_reference_gain_is_minus_rf_over_rin():
    assert pytest.approx(-RF / RIN, rel=1e-12) == GAIN


def test_a_gain_written_as_rf_over_rin_is_the_gain_without_its_minus_sign():
    size = sig(abs(GAIN))
    report = handcheck.check_text(inverting(gain_step("A", size, "Rf/Rin")))
    assert finding(report, "A").verdict == "formula"
    assert codes(report, "A") == ["sign-convention"]
    text = detail(report, "A")
    assert "without its minus sign" in text and "-Rf/Rin" in text and "U1" in text
    assert f"write {GAIN:.6g}" in text
    assert report.first_divergence == "A"


def test_a_plain_gain_claim_and_a_polar_one_at_zero_degrees_get_the_same_diagnosis():
    size = sig(abs(GAIN))
    sheet = inverting(gain_step("A", size) + gain_step("Ap", f"{size} /_ 0 deg"))
    report = handcheck.check_text(sheet)
    for name in ("A", "Ap"):
        assert finding(report, name).verdict == "differs"
        assert codes(report, name) == ["sign-convention"], name


def test_an_output_voltage_without_the_minus_sign_names_the_stage_not_a_reversed_source():
    v_out = GAIN * VIN  # -1.5 V
    report = handcheck.check_text(inverting(gain_step("Vo", f"{sig(-v_out)} V", quantity="voltage(out)")))
    assert finding(report, "Vo").verdict == "differs"
    assert codes(report, "Vo") == ["sign-convention"]
    assert "inverting stage U1" in detail(report, "Vo")


def test_the_right_gain_and_its_magnitude_agree_with_no_diagnosis():
    sheet = inverting(
        gain_step("A", sig(GAIN))
        + gain_step("Am", sig(abs(GAIN)), quantity="magnitude(transfer(voltage(out), voltage(in)))")
    )
    report = handcheck.check_text(sheet)
    for name in ("A", "Am"):
        assert finding(report, name).verdict == "agrees" and not finding(report, name).diagnosis


def test_a_wrong_size_is_not_a_dropped_minus():
    report = handcheck.check_text(inverting(gain_step("A", "12")))  # neither 15 nor -15
    assert finding(report, "A").verdict == "differs"
    assert "sign-convention" not in codes(report, "A")


def test_an_op_amp_without_feedback_to_its_inverting_input_gets_no_inverting_wording():
    # With the inputs swapped (+ at n, - grounded) no part runs from the inverting input
    # to the output: no inverting stage is named, whatever the claim's sign.
    sheet = inverting(gain_step("A", "15"), opamp_nodes='["out", "n", "gnd"]')
    try:
        report = handcheck.check_text(sheet)
    except handcheck.HandcheckError:
        return  # refused as a circuit: nothing to diagnose
    assert "inverting stage" not in detail(report, "A")


# -- 2. an extra 2*pi inside a claimed network function -----------------------------------
# R-C low-pass: H(s) = 1/(1 + s R C), s in rad/s (first-order low-pass; Nilsson & Riedel,
# Electric Circuits, 10th ed., sec. 14.2, from memory). 4.7 kohm and 22 nF: RC = 103.4 us.
RC = 4700 * 22e-9


def lowpass(claim: str) -> str:
    return (
        HEAD
        + f"""
[parts]
Vin = {{ voltage = "1 V", frequency = "1 kHz", nodes = ["in", "gnd"] }}
R1 = {{ resistor = "4.7 kohm", nodes = ["in", "out"] }}
C1 = {{ capacitor = "22 nF", nodes = ["out", "gnd"] }}

[[step]]
name = "H"
quantity = "network_function(voltage(out), voltage(in))"
claim = "{claim}"
"""
    )


def test_the_claimed_functions_are_h_at_two_pi_s_and_at_s_over_two_pi():
    # the claims below, evaluated with numpy, are the true H at 2*pi*s and at s/(2*pi)
    w = np.logspace(2, 6, 50)
    true = lambda s: 1 / (1 + s * RC)  # noqa: E731
    times = float(sig(2 * math.pi * RC))
    over = float(sig(RC / (2 * math.pi)))
    assert np.allclose(1 / (1 + 1j * w * times), true(2j * math.pi * w), rtol=1e-3)
    assert np.allclose(1 / (1 + 1j * w * over), true(1j * w / (2 * math.pi)), rtol=1e-3)


@pytest.mark.parametrize(
    ("claim", "code"),
    [
        ("1/(1 + 2*pi*s*103.4e-6)", "hertz-as-angular"),
        (f"1/(1 + {sig(2 * math.pi * RC)}*s)", "hertz-as-angular"),
        (f"1/(1 + {sig(RC / (2 * math.pi))}*s)", "angular-as-hertz"),
    ],
)
def test_s_scaled_by_two_pi_in_a_claimed_network_function(claim, code):
    report = handcheck.check_text(lowpass(claim))
    assert finding(report, "H").verdict == "differs"
    assert codes(report, "H") == [code]
    assert "2*pi" in detail(report, "H") and "write " in detail(report, "H")


def test_a_right_network_function_or_another_wrong_one_names_no_frequency_slip():
    right = handcheck.check_text(lowpass("1/(1 + 103.4e-6*s)"))
    assert finding(right, "H").verdict == "agrees" and not finding(right, "H").diagnosis
    other = handcheck.check_text(lowpass(f"1/(1 + {sig(3 * RC)}*s)"))
    assert finding(other, "H").verdict == "differs" and not finding(other, "H").diagnosis


# -- 3. a formula-only step's error landing on a later step --------------------------------
# Series R-L-C trap on 10 V peak, 1 kHz: XL = w L, XC = -1/(w C) (Nilsson & Riedel, 10th
# ed., sec. 9.4, from memory); the note writes XC as +1/(w C) in a step with no quantity,
# so only its own formula checks it, and the later circuit-checked steps carry its sign.
W = 2 * math.pi * 1000
L1, C1, R1 = 10e-3, 1e-6, 100.0
XL, XC_WRONG = W * L1, 1 / (W * C1)


def trap(xc_formula: str, xc_claim: float) -> str:
    return (
        HEAD
        + f"""
[parts]
Vs = {{ voltage = "10 V", frequency = "1 kHz", nodes = ["in", "gnd"] }}
R1 = {{ resistor = "100 ohm", nodes = ["in", "a"] }}
L1 = {{ inductor = "10 mH", nodes = ["a", "b"] }}
C1 = {{ capacitor = "1 uF", nodes = ["b", "gnd"] }}

[[step]]
name = "XL"
quantity = "reactance(L1)"
formula = "2*pi*f*L1"
claim = "{sig(XL)} ohm"

[[step]]
name = "XC"
formula = "{xc_formula}"
claim = "{sig(xc_claim)} ohm"

[[step]]
name = "X"
quantity = "without(reactance(a, gnd), R1)"
formula = "XL + XC"
claim = "{sig(XL + xc_claim)} ohm"

[[step]]
name = "Imag"
quantity = "magnitude(current(R1))"
formula = "Vs/sqrt(R1^2 + (XL + XC)^2)"
claim = "{sig(10 / math.hypot(R1, XL + xc_claim) * 1000)} mA"
"""
    )


def test_a_later_step_points_at_the_formula_only_step_it_uses():
    report = handcheck.check_text(trap("1/(2*pi*f*C1)", XC_WRONG))
    xc = finding(report, "XC")
    assert xc.verdict == "agrees" and xc.basis == "formula"
    for name in ("X", "Imag"):
        step = finding(report, name)
        assert step.verdict == "formula" and step.basis == "circuit", name
        assert any("it uses XC, checked against its own formula only" in n for n in step.notes), name
    # the first divergence stays the earliest step that neither agrees nor is carried
    assert report.first_divergence == "X"
    text = render(report, "test", width=100)
    assert "the slip is likely in XC" in " ".join(text.split())


def test_a_right_formula_only_step_gives_no_such_note():
    report = handcheck.check_text(trap("-1/(2*pi*f*C1)", -XC_WRONG))
    assert report.ok
    assert not any("checked against its own formula only, not" in n for n in finding(report, "X").notes)


# -- 4. "mh" read as millihours -------------------------------------------------------------
def choke(value: str, claim: str = "2 mH") -> str:
    return (
        HEAD
        + f"""
[parts]
Vs = {{ voltage = "10 V", frequency = "50 Hz", nodes = ["in", "gnd"] }}
L1 = {{ inductor = "{value}", nodes = ["in", "gnd"] }}

[[step]]
name = "L"
formula = "L1"
claim = "{claim}"
"""
    )


@pytest.mark.parametrize(("written", "meant"), [("2 mh", "mH"), ("470 uh", "uH"), ("1.5 h", "H")])
def test_an_inductor_in_lower_case_h_asks_for_henry(written, meant):
    with pytest.raises(handcheck.HandcheckError) as caught:
        handcheck.check_text(choke(written))
    assert f'did you mean "{meant}"?' in str(caught.value)


def test_a_claim_in_mh_asks_for_henry_and_a_real_time_unit_gets_no_guess():
    report = handcheck.check_text(choke("2 mH", "2 mh"))
    assert finding(report, "L").verdict == "unit"
    assert 'did you mean "mH"?' in (finding(report, "L").message or "")
    with pytest.raises(handcheck.HandcheckError) as caught:
        handcheck.check_text(choke("2 ms"))
    assert "did you mean" not in str(caught.value)


# -- 5. the evidence in the terminal ---------------------------------------------------------
def test_evidence_lines_are_wrapped_and_in_plain_words(tmp_path):
    path = tmp_path / "trap.toml"
    path.write_text(trap("-1/(2*pi*f*C1)", -XC_WRONG))
    result = run(path, evidence=True)
    assert result.report is not None
    text = render(result.report, "test", evidence=result.evidence, width=72)
    block = text[text.index("numerical evidence") :].split("\n\n")[0]
    assert all(len(line) <= 72 for line in block.splitlines())
    assert "descriptor" not in text
    assert "follows from the states at each instant" in " ".join(block.split())

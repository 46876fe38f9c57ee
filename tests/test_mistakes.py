"""Derivation checking: the first divergence, carried steps, and the mistake catalogue.

Each catalogue test starts from a correct worksheet of our own and makes one mistake
by hand, computing the wrong number the way a person would (plain float arithmetic
below, written out step by step), then asserts that handcheck finds the step, the
steps that only carry it, and the mistake's code.
"""

from __future__ import annotations

import cmath
import math

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import handcheck
from handcheck.verify.mistakes import CODES


def sig(x: float, digits: int = 5) -> str:
    return f"{x:.{digits}g}"


def polar(z: complex, unit: str, digits: int = 5) -> str:
    return f"{sig(abs(z), digits)} {unit} /_ {sig(math.degrees(cmath.phase(z)), digits)} deg"


def rect(z: complex, unit: str, digits: int = 5) -> str:
    sign = "-" if z.imag < 0 else "+"
    return f"{sig(z.real, digits)} {sign} {sig(abs(z.imag), digits)}j {unit}"


# A series R-L-C on a 10 V peak, 50 Hz source; peak phasors.
F, R, L, C, V = 50.0, 10.0, 0.05, 200e-6, 10.0
W = 2 * math.pi * F
XL, XC = W * L, -1 / (W * C)
Z = complex(R, XL + XC)
I_LOAD = V / Z
P = 0.5 * (V * I_LOAD.conjugate()).real


def series_rlc(
    xl: str = sig(XL),
    xc: str = sig(XC),
    z: str = rect(Z, "ohm"),
    i: str = polar(I_LOAD, "A"),
    p: str = sig(P),
    *,
    phasors: str = "peak",
    source: str = "10 V",
    xc_formula: str = "-1/(2*pi*f*C1)",
    z_formula: str = "R1 + j*(XL + XC)",
    p_formula: str = "re(Vs*conj(I))/2",
) -> str:
    return f"""
[worksheet]
format = 1
title = "Series RLC, catalogue test"
phasors = "{phasors}"

[parts]
Vs = {{ voltage = "{source}", frequency = "50 Hz", nodes = ["in", "gnd"] }}
R1 = {{ resistor = "10 ohm", nodes = ["in", "a"] }}
L1 = {{ inductor = "50 mH", nodes = ["a", "b"] }}
C1 = {{ capacitor = "200 uF", nodes = ["b", "gnd"] }}

[[step]]
name = "XL"
quantity = "reactance(L1)"
formula = "2*pi*f*L1"
claim = "{xl} ohm"

[[step]]
name = "XC"
quantity = "reactance(C1)"
formula = "{xc_formula}"
claim = "{xc} ohm"

[[step]]
name = "Z"
quantity = "transfer(voltage(in), current(R1))"
formula = "{z_formula}"
claim = "{z}"

[[step]]
name = "I"
quantity = "current(R1)"
formula = "Vs/Z"
claim = "{i}"

[[step]]
name = "P"
quantity = "power(R1)"
formula = "{p_formula}"
claim = "{p} W"
"""


def verdicts(report: handcheck.Report) -> dict[str, str]:
    return {step.name: step.verdict for step in report.steps}


def step(report: handcheck.Report, name: str) -> handcheck.StepFinding:
    return next(s for s in report.steps if s.name == name)


def codes(report: handcheck.Report, name: str) -> list[str]:
    return [d.mistake for d in step(report, name).diagnosis]


def test_correct_worksheet_agrees_without_diagnosis():
    report = handcheck.check_text(series_rlc())
    assert verdicts(report) == dict.fromkeys(["XL", "XC", "Z", "I", "P"], "agrees")
    assert all(not s.diagnosis for s in report.steps)
    assert report.ok and report.first_divergence is None


def test_hertz_as_angular_is_found_and_carried():
    xl = F * L  # f used where w belongs
    z = complex(R, xl + XC)
    i = V / z
    p = 0.5 * (V * i.conjugate()).real
    report = handcheck.check_text(series_rlc(xl=sig(xl), z=rect(z, "ohm"), i=polar(i, "A"), p=sig(p)))
    assert verdicts(report) == {"XL": "arithmetic", "XC": "agrees", "Z": "carried", "I": "carried", "P": "carried"}
    assert report.first_divergence == "XL"
    assert [step(report, n).caused_by for n in ("Z", "I", "P")] == ["XL", "XL", "XL"]
    assert codes(report, "XL")[0] == "hertz-as-angular"
    assert all(not step(report, n).diagnosis for n in ("Z", "I", "P"))


def test_angular_as_hertz():
    xl = 2 * math.pi * W * L  # w used where f belongs
    report = handcheck.check_text(series_rlc(xl=sig(xl)))
    assert report.first_divergence == "XL"
    assert "angular-as-hertz" in codes(report, "XL")


def test_reactance_sign_in_the_formula():
    xc = 1 / (W * C)  # capacitor reactance taken positive
    z = complex(R, XL + xc)
    i = V / z
    text = series_rlc(
        xc=sig(xc), xc_formula="1/(2*pi*f*C1)", z=rect(z, "ohm"), i=polar(i, "A"), p=sig(0.5 * (V * i.conjugate()).real)
    )
    report = handcheck.check_text(text)
    assert verdicts(report)["XC"] == "formula"
    assert report.first_divergence == "XC"
    assert "reactance-sign" in codes(report, "XC")
    assert step(report, "I").caused_by == "XC"


def test_parallel_as_series_slip():
    x = XL + XC
    z = (R * 1j * x) / (R + 1j * x)  # worked out in parallel although the formula says series
    report = handcheck.check_text(series_rlc(z=rect(z, "ohm")))
    assert verdicts(report)["Z"] == "arithmetic"
    assert "parallel-as-series" in codes(report, "Z")
    assert verdicts(report)["I"] == "agrees" or step(report, "I").caused_by == "Z"


def test_power_half():
    report = handcheck.check_text(series_rlc(p=sig(2 * P), p_formula="re(Vs*conj(I))"))
    assert verdicts(report)["P"] == "formula"
    assert codes(report, "P") == ["power-half"]


def test_rms_as_peak():
    # Peak phasors; the author used the rms value 10/sqrt(2) V as the phasor.
    i = (V / math.sqrt(2)) / Z
    report = handcheck.check_text(series_rlc(i=polar(i, "A"), p=sig(0.5 * (V * i.conjugate()).real)))
    assert report.first_divergence == "I"
    assert "rms-as-peak" in codes(report, "I")


def test_peak_as_rms():
    # Rms phasors and a 10 V rms source; the author used the peak 10*sqrt(2) V.
    i = (V * math.sqrt(2)) / Z
    p_true = (V * (V / Z).conjugate()).real
    text = series_rlc(i=polar(i, "A"), p=sig(p_true), phasors="rms", source="10 V rms", p_formula="re(Vs*conj(I))")
    report = handcheck.check_text(text)
    assert report.first_divergence == "I"
    assert "peak-as-rms" in codes(report, "I")


def test_sine_reference():
    i = I_LOAD * cmath.exp(-1j * math.pi / 2)  # cosine result read against a sine reference
    report = handcheck.check_text(series_rlc(i=polar(i, "A")))
    assert verdicts(report)["I"] == "arithmetic"
    assert "sine-reference" in codes(report, "I")


def test_phase_sign():
    report = handcheck.check_text(series_rlc(i=polar(I_LOAD.conjugate(), "A")))
    assert "phase-sign" in codes(report, "I")


def test_prefix():
    report = handcheck.check_text(series_rlc(xl=sig(XL * 1000)))
    assert report.first_divergence == "XL"
    assert codes(report, "XL") == ["prefix"]


def test_radians_as_degrees_label():
    # The author wrote the angle in radians but labelled it degrees.
    text = series_rlc(i=f"{sig(abs(I_LOAD))} A /_ {sig(cmath.phase(I_LOAD))} deg")
    report = handcheck.check_text(text)
    assert "radians-as-degrees" in codes(report, "I")


HEAD = '[worksheet]\nformat = 1\ntitle = "t"\n'


def test_degrees_as_radians_in_a_formula():
    # cos(30) evaluated in radian mode where 30 degrees was meant: 10*cos(30 rad).
    text = (
        HEAD
        + f"""
[parts]
V1 = {{ voltage = "10 V", frequency = "50 Hz", phase = "30 deg", nodes = ["a", "gnd"] }}
R1 = {{ resistor = "1 ohm", nodes = ["a", "gnd"] }}
[[step]]
name = "Vre"
quantity = "resistance(R1)"
formula = "1 ohm*cos(30 deg)"
claim = "{sig(math.cos(30))} ohm"
"""
    )
    report = handcheck.check_text(text)
    assert report.first_divergence == "Vre"
    assert "degrees-as-radians" in codes(report, "Vre")


def test_radians_as_degrees_in_a_formula():
    text = (
        HEAD
        + f"""
[parts]
R1 = {{ resistor = "1 ohm", nodes = ["a", "gnd"] }}
I1 = {{ current = "1 A", nodes = ["gnd", "a"] }}
[[step]]
name = "k"
formula = "sin(0.5)"
claim = "{sig(math.sin(math.radians(0.5)))}"
"""
    )
    report = handcheck.check_text(text)
    assert "radians-as-degrees" in codes(report, "k")


PARALLEL = (
    HEAD
    + """
[parts]
Vs = {{ voltage = "5 V", frequency = "1 kHz", nodes = ["in", "gnd"] }}
Rs = {{ resistor = "50 ohm", nodes = ["in", "p"] }}
R2 = {{ resistor = "220 ohm", nodes = ["p", "gnd"] }}
C2 = {{ capacitor = "1 uF", nodes = ["p", "gnd"] }}
[[step]]
name = "XC"
quantity = "reactance(C2)"
formula = "-1/(2*pi*f*C2)"
claim = "{xc}"
[[step]]
name = "Zp"
quantity = "transfer(voltage(p), current(Rs))"
formula = "{formula}"
claim = "{zp}"
"""
)


def test_series_as_parallel_in_the_formula():
    xc = -1 / (2 * math.pi * 1000 * 1e-6)
    zp = complex(220, xc)  # added in series, but R2 and C2 are in parallel
    report = handcheck.check_text(PARALLEL.format(xc=sig(xc) + " ohm", formula="R2 + j*XC", zp=rect(zp, "ohm")))
    assert verdicts(report) == {"XC": "agrees", "Zp": "formula"}
    assert codes(report, "Zp") == ["series-as-parallel"]


def test_impedance_as_admittance():
    text = (
        HEAD
        + f"""
[parts]
Vs = {{ voltage = "5 V", frequency = "1 kHz", nodes = ["in", "gnd"] }}
C2 = {{ capacitor = "1 uF", nodes = ["in", "gnd"] }}
[[step]]
name = "Y"
quantity = "admittance(C2)"
claim = "{sig(1 / (2 * math.pi * 1000 * 1e-6))} S"
"""
    )
    report = handcheck.check_text(text)
    assert verdicts(report) == {"Y": "differs"}
    assert codes(report, "Y") == ["impedance-as-admittance"]


def test_every_code_has_a_test_above():
    tested = {
        "hertz-as-angular",
        "angular-as-hertz",
        "degrees-as-radians",
        "radians-as-degrees",
        "peak-as-rms",
        "rms-as-peak",
        "power-half",
        "reactance-sign",
        "sine-reference",
        "phase-sign",
        "series-as-parallel",
        "parallel-as-series",
        "impedance-as-admittance",
        "prefix",
    }
    # the second edition's codes are tested in tests/test_mistakes_second.py
    second = {"magnitude-as-phasor", "other-frequency", "sign-convention", "reversed-nodes"}
    assert tested == set(CODES) - second


def test_textbook_power_triangle():
    # A 120 V rms, 60 Hz source across a 4 + j3 ohm load: |Z| = 5 ohm, I = 24 A rms at
    # -36.87 deg, P = 2304 W, Q = 1728 var, S = 2880 VA, pf = 0.8 lagging. The 3-4-5
    # impedance triangle is a staple of introductory texts (e.g. Nilsson & Riedel,
    # Electric Circuits, ch. 10); these numbers are from memory and follow by hand.
    L = 3 / (2 * math.pi * 60)
    text = (
        HEAD
        + f"""
phasors = "rms"
[parts]
Vs = {{ voltage = "120 V rms", frequency = "60 Hz", nodes = ["a", "gnd"] }}
R = {{ resistor = "4 ohm", nodes = ["a", "b"] }}
X = {{ inductor = "{L * 1000:.12f} mH", nodes = ["b", "gnd"] }}
[[step]]
name = "Z"
quantity = "transfer(voltage(a), current(R))"
claim = "5.000 ohm /_ 36.87 deg"
[[step]]
name = "I"
quantity = "current(R)"
formula = "Vs/Z"
claim = "24.00 A /_ -36.87 deg"
[[step]]
name = "P"
quantity = "power(R)"
formula = "abs(I)^2*R"
claim = "2304 W"
[[step]]
name = "Q"
quantity = "reactive_power(X)"
claim = "1728 var"
[[step]]
name = "S"
quantity = "apparent_power(Vs)"
claim = "2880 VA"
[[step]]
name = "pf"
quantity = "power_factor(Vs)"
formula = "P/S"
claim = "0.8000"
"""
    )
    report = handcheck.check_text(text.replace('title = "t"\n\nphasors', 'title = "t"\nphasors'))
    assert verdicts(report) == dict.fromkeys(["Z", "I", "P", "Q", "S", "pf"], "agrees")
    # The same worksheet with the classic slip: P = |V| |I| (the power factor forgotten).
    wrong = text.replace('formula = "abs(I)^2*R"\nclaim = "2304 W"', 'formula = "abs(Vs)*abs(I)"\nclaim = "2880 W"')
    wrong = wrong.replace('claim = "0.8000"', 'claim = "1.000"')
    report = handcheck.check_text(wrong.replace('title = "t"\n\nphasors', 'title = "t"\nphasors'))
    assert verdicts(report)["P"] == "formula"
    assert report.first_divergence == "P"
    assert step(report, "pf").verdict == "carried" and step(report, "pf").caused_by == "P"


# -- properties ------------------------------------------------------------------------

values = st.tuples(
    st.integers(1, 99),  # R in ohm
    st.integers(1, 99),  # L in mH
    st.integers(1, 99),  # C in uF
    st.integers(1, 50),  # V peak
)


def custom_rlc(r: int, l_mh: int, c_uf: int, v: int, claims: dict[str, str]) -> str:
    text = series_rlc(**claims).replace('"10 ohm"', f'"{r} ohm"').replace('"50 mH"', f'"{l_mh} mH"')
    return text.replace('"200 uF"', f'"{c_uf} uF"').replace('"10 V"', f'"{v} V"')


def true_claims(r: int, l_mh: int, c_uf: int, v: int) -> tuple[dict[str, str], dict[str, float | complex]]:
    w = 2 * math.pi * 50
    xl, xc = w * l_mh * 1e-3, -1 / (w * c_uf * 1e-6)
    z = complex(r, xl + xc)
    i = v / z
    p = 0.5 * (v * i.conjugate()).real
    nums = {"xl": xl, "xc": xc, "z": z, "i": i, "p": p}
    return {"xl": sig(xl, 6), "xc": sig(xc, 6), "z": rect(z, "ohm", 6), "i": polar(i, "A", 6), "p": sig(p, 6)}, nums


@pytest.mark.slow
@settings(max_examples=25, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(values)
def test_random_correct_derivations_never_diverge(parts):
    claims, _ = true_claims(*parts)
    report = handcheck.check_text(custom_rlc(*parts, claims))
    assert report.first_divergence is None, [(s.name, s.verdict, s.claimed, s.expected) for s in report.steps]
    assert all(not s.diagnosis for s in report.steps)


MISTAKES = {
    # step: (code, how the number changes)
    "xl": ("prefix", lambda n: sig(n["xl"] * 1000, 6)),
    "i": ("phase-sign", lambda n: polar(n["i"].conjugate(), "A", 6)),
    "p": ("power-half", lambda n: sig(2 * n["p"], 6)),
}


@pytest.mark.slow
@settings(max_examples=25, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(values, st.sampled_from(sorted(MISTAKES)))
def test_one_random_mistake_is_found_at_its_step(parts, where):
    claims, nums = true_claims(*parts)
    code, make = MISTAKES[where]
    if where == "i" and abs(nums["i"].imag) < 1e-3 * abs(nums["i"]):
        return  # a real phasor has no lead or lag to swap
    claims[where] = make(nums)
    report = handcheck.check_text(custom_rlc(*parts, claims))
    name = {"xl": "XL", "i": "I", "p": "P"}[where]
    assert report.first_divergence == name
    assert code in codes(report, name)
    # Every mistake reported reproduces the number: never a diagnosis for an agreeing step.
    assert all(not s.diagnosis for s in report.steps if s.verdict == "agrees")


@pytest.mark.parametrize("code", CODES)
def test_codes_are_those_of_the_output_contract(code):
    # Check output format 1 (DESIGN.md) lists these 14 codes and its second edition 4 more.
    assert code in {
        "hertz-as-angular",
        "angular-as-hertz",
        "degrees-as-radians",
        "radians-as-degrees",
        "peak-as-rms",
        "rms-as-peak",
        "power-half",
        "reactance-sign",
        "sine-reference",
        "phase-sign",
        "series-as-parallel",
        "parallel-as-series",
        "impedance-as-admittance",
        "prefix",
        # second edition
        "magnitude-as-phasor",
        "other-frequency",
        "sign-convention",
        "reversed-nodes",
    }


def test_series_as_parallel_without_a_formula():
    # No formula: the circuit behind the quantity is solved again with R2 and C2 in
    # series; Z = R + 1/(jwC) for a series RC (textbook closed form).
    xc = -1 / (2 * math.pi * 1000 * 1e-6)
    text = PARALLEL.format(xc=sig(xc) + " ohm", formula="R2 || (j*XC)", zp="0 ohm").replace(
        'formula = "R2 || (j*XC)"\nclaim = "0 ohm"', f'claim = "{rect(complex(220, xc), "ohm")}"'
    )
    report = handcheck.check_text(text)
    assert verdicts(report)["Zp"] == "differs"
    assert codes(report, "Zp") == ["series-as-parallel"]

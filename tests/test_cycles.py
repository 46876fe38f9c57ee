"""A frequency claimed in hertz or in radians per second means what its unit says.

Sources: f = w/(2*pi), the hertz is the unit of frequency and the radian per second of
angular frequency, and both are 1/s in SI (SI Brochure, 9th edition, 2019, section 2.3.4
and Table 4, from memory); the natural frequency of a series RLC circuit w0 = 1/sqrt(LC)
and the cutoff of an RC low-pass wc = 1/(RC) (Alexander & Sadiku, Fundamentals of Electric
Circuits, 5th edition, sections 8.5 and 14.4, from memory); the poles of the series RLC
transfer function from scipy.signal.tf2zpk.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import signal

import handcheck

R, L, C = 10.0, 10e-3, 100e-6  # w0 = 1000 rad/s, zeta = 0.5

RLC = {
    "Vs": {"voltage": "1 V", "frequency": "50 Hz", "nodes": ["a", "gnd"]},
    "R1": {"resistor": "10 ohm", "nodes": ["a", "b"]},
    "L1": {"inductor": "10 mH", "nodes": ["b", "c"]},
    "C1": {"capacitor": "100 uF", "nodes": ["c", "gnd"]},
}
RC = {
    "Vs": {"voltage": "1 V", "frequency": "50 Hz", "nodes": ["in", "gnd"]},
    "R1": {"resistor": "1 kohm", "nodes": ["in", "out"]},
    "C1": {"capacitor": "1 uF", "nodes": ["out", "gnd"]},
}


def steps_of(make_worksheet, parts, quantity: str, claims: dict[str, str]) -> dict:
    text = make_worksheet(parts, [{"name": n, "quantity": quantity, "claim": c} for n, c in claims.items()])
    if "natural_frequency" in quantity:
        text += '[transient]\nstart = "rest"\n'
    report = handcheck.check_text(text, name="cycles.toml")
    return {s.name: s for s in report.steps}


def test_a_natural_frequency_in_hertz_is_w0_over_2pi(make_worksheet):
    w0 = 1 / math.sqrt(L * C)
    steps = steps_of(
        make_worksheet,
        RLC,
        "natural_frequency",
        {"w0": f"{w0:.5g} rad/s", "f0": f"{w0 / (2 * math.pi):.5g} Hz", "wrong": f"{w0:.5g} Hz"},
    )
    assert steps["w0"].verdict == "agrees"
    assert steps["f0"].verdict == "agrees"
    assert steps["f0"].expected_si[0] == pytest.approx(w0, rel=1e-12)  # SI: the quantity, in rad/s
    assert steps["wrong"].verdict == "differs"
    assert [d.mistake for d in steps["wrong"].diagnosis] == ["angular-as-hertz"]


def test_a_cutoff_in_radians_per_second_is_1_over_rc(make_worksheet):
    wc = 1 / (1e3 * 1e-6)
    steps = steps_of(
        make_worksheet,
        RC,
        "cutoff_frequency(transfer(voltage(out), voltage(in)))",
        {"f0": f"{wc / (2 * math.pi):.5g} Hz", "w0": f"{wc:.5g} rad/s", "wrong": f"{wc / (2 * math.pi):.5g} rad/s"},
    )
    assert steps["f0"].verdict == steps["w0"].verdict == "agrees"
    assert steps["w0"].expected == "1000 rad/s"
    assert steps["wrong"].verdict == "differs"
    assert "hertz-as-angular" in [d.mistake for d in steps["wrong"].diagnosis]


def test_poles_claimed_in_hertz_are_the_scipy_poles_over_2pi(make_worksheet):
    _, poles, _ = signal.tf2zpk([1 / (L * C)], [1, R / L, 1 / (L * C)])
    in_hz = sorted(poles / (2 * np.pi), key=lambda p: p.imag)

    def listed(values, unit: str) -> str:
        return ", ".join(f"{p.real:.5g} {'+' if p.imag >= 0 else '-'} {abs(p.imag):.5g}j" for p in values) + f" {unit}"

    steps = steps_of(
        make_worksheet,
        RLC,
        "poles(network_function(voltage(c), voltage(a)))",
        {"hz": listed(in_hz, "Hz"), "rad": listed(poles, "rad/s"), "wrong": listed(poles, "Hz")},
    )
    assert steps["hz"].verdict == steps["rad"].verdict == "agrees"
    assert steps["wrong"].verdict == "differs"


def test_prefixed_units_keep_their_measure(make_worksheet):
    steps = steps_of(make_worksheet, RLC, "natural_frequency", {"w0": "1000 rad/s", "f0": "0.15915 kHz"})
    assert steps["w0"].verdict == steps["f0"].verdict == "agrees"
    assert steps["f0"].expected == "0.159155 kHz"


def test_expected_si_stays_the_quantity_in_its_own_measure(make_worksheet):
    # DESIGN (second edition, readings the tests rely on): expected_si is always the
    # quantity in coherent SI units, whatever unit the claim is written in.
    w0 = 1 / math.sqrt(L * C)
    steps = steps_of(make_worksheet, RLC, "natural_frequency", {"w0": "1000 rad/s", "f0": "159.15 Hz"})
    assert steps["w0"].expected_si[0] == pytest.approx(w0, rel=1e-12)
    assert steps["f0"].expected_si[0] == pytest.approx(w0, rel=1e-12)
    cutoff = steps_of(make_worksheet, RC, "cutoff_frequency(transfer(voltage(out), voltage(in)))", {"w0": "1000 rad/s"})
    assert cutoff["w0"].expected_si[0] == pytest.approx(1000 / (2 * math.pi), rel=1e-12)
    _, poles, _ = signal.tf2zpk([1 / (L * C)], [1, R / L, 1 / (L * C)])
    listed = steps_of(
        make_worksheet,
        RLC,
        "poles(network_function(voltage(c), voltage(a)))",
        {"p": "-79.577 + 137.83j, -79.577 - 137.83j Hz"},
    )
    assert listed["p"].verdict == "agrees"
    assert abs(complex(*listed["p"].expected_si)) == pytest.approx(abs(poles[0]), rel=1e-12)

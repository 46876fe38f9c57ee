"""A frequency claimed with the other measure's unit: compared as written, and said so.

Worksheet format 1 compares a claim's number with the quantity in its own measure
(natural_frequency in rad/s, cutoff_frequency in Hz), whatever the claim's unit word;
the step shows both measures and a note.

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


def test_a_natural_frequency_in_hertz_is_the_hertz_as_angular_slip(make_worksheet):
    w0 = 1 / math.sqrt(L * C)
    steps = steps_of(
        make_worksheet,
        RLC,
        "natural_frequency",
        {"w0": f"{w0:.5g} rad/s", "f0": f"{w0 / (2 * math.pi):.5g} Hz", "labelled": f"{w0:.5g} Hz"},
    )
    assert steps["w0"].verdict == "agrees" and not steps["w0"].notes
    assert steps["f0"].verdict == "differs"
    assert [d.mistake for d in steps["f0"].diagnosis] == ["hertz-as-angular"]
    assert steps["f0"].expected == "1000 rad/s (= 159.155 Hz)"
    assert steps["f0"].expected_si[0] == pytest.approx(w0, rel=1e-12)
    assert steps["labelled"].verdict == "agrees"  # the number is w0, as written
    assert any("natural_frequency is in rad/s" in n for n in steps["labelled"].notes)


def test_a_cutoff_in_radians_per_second_is_the_angular_as_hertz_slip(make_worksheet):
    wc = 1 / (1e3 * 1e-6)
    steps = steps_of(
        make_worksheet,
        RC,
        "cutoff_frequency(transfer(voltage(out), voltage(in)))",
        {"f0": f"{wc / (2 * math.pi):.5g} Hz", "w0": f"{wc:.5g} rad/s"},
    )
    assert steps["f0"].verdict == "agrees" and not steps["f0"].notes
    assert steps["w0"].verdict == "differs"
    assert "angular-as-hertz" in [d.mistake for d in steps["w0"].diagnosis]
    assert steps["w0"].expected == "159.155 Hz (= 1000 rad/s)"
    assert any("cutoff_frequency is in Hz" in n for n in steps["w0"].notes)


def test_poles_are_compared_in_radians_per_second(make_worksheet):
    _, poles, _ = signal.tf2zpk([1 / (L * C)], [1, R / L, 1 / (L * C)])

    def listed(values, unit: str) -> str:
        return ", ".join(f"{p.real:.5g} {'+' if p.imag >= 0 else '-'} {abs(p.imag):.5g}j" for p in values) + f" {unit}"

    steps = steps_of(
        make_worksheet,
        RLC,
        "poles(network_function(voltage(c), voltage(a)))",
        {"rad": listed(poles, "rad/s"), "hz": listed(poles / (2 * np.pi), "Hz")},
    )
    assert steps["rad"].verdict == "agrees"
    assert steps["hz"].verdict == "differs"
    assert any("poles is in rad/s" in n for n in steps["hz"].notes)

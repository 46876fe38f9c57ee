"""``sign-convention`` for an inverting stage built on a real op-amp: a finite open-loop
gain, or one pole from a gain-bandwidth product (``gbw``).

The truth is the closed-loop gain of the inverting amplifier with a finite open-loop
gain A, -(Rf/Rin)/(1 + (1 + Rf/Rin)/A), and with the one-pole open loop
A(jw) = A0/(1 + jw*A0/(2*pi*gbw)) put for A (Sedra & Smith, Microelectronic Circuits,
7th ed., sec. 2.2 and 2.8, from memory), worked out below in plain complex arithmetic.
With a pole the truth is near 180 deg but not exactly real, so a claim that reproduces
it negated (the size of "Rf/Rin", the angle of the lag) is the gain without its minus
sign. Every worksheet is invented.
"""

from __future__ import annotations

import cmath
import math

import pytest
from test_mistakes_found import codes, detail, finding

import handcheck

RIN, RF, F = 2200.0, 33000.0, 1000.0  # ohm, ohm, Hz


def closed_loop(a0: float, gbw_hz: float | None = None) -> complex:
    """-(Rf/Rin)/(1 + (1 + Rf/Rin)/A) with A the op-amp's open-loop gain at F."""
    a = complex(a0) if gbw_hz is None else a0 / (1 + 1j * 2 * math.pi * F * a0 / (2 * math.pi * gbw_hz))
    k = RF / RIN
    return -k / (1 + (1 + k) / a)


def sheet(opamp: str, claim: str, extra: str = "") -> str:
    return f"""[worksheet]
format = 1
title = "inverting stage on a real op-amp"

[parts]
Vin = {{ voltage = "0.1 V", frequency = "1 kHz", nodes = ["in", "gnd"] }}
Rin = {{ resistor = "2.2 kohm", nodes = ["in", "n"] }}
Rf = {{ resistor = "33 kohm", nodes = ["n", "out"] }}
RL = {{ resistor = "10 kohm", nodes = ["out", "gnd"] }}
U1 = {{ opamp = {opamp}, nodes = ["out", "gnd", "n"] }}

[[step]]
name = "A"
quantity = "transfer(voltage(out), voltage(in))"
claim = "{claim}"
{extra}"""


def polar(z: complex, digits: int = 5) -> str:
    return f"{abs(z):.{digits}g} /_ {math.degrees(cmath.phase(z)):.{digits - 2}g} deg"


def rect(z: complex) -> str:
    sign = "-" if z.imag < 0 else "+"
    return f"{z.real:.5g} {sign} {abs(z.imag):.3g}j"


GBW_CASES = [("1 MHz", 1e6), ("100 kHz", 1e5)]


def test_the_reference_gains_lie_near_180_deg_and_not_on_the_real_axis():
    for _, hz in GBW_CASES:
        g = closed_loop(100_000, hz)
        assert g.real < 0 and abs(g.imag) > 1e-3 * abs(g)
    assert closed_loop(1000).imag == 0


def test_a_finite_gain_stage_claimed_without_its_minus_sign_names_the_finite_gain_form():
    truth = closed_loop(1000).real  # -14.764
    report = handcheck.check_text(sheet('"1000"', f"{-truth:.4g}"))
    assert finding(report, "A").verdict == "differs"
    assert codes(report, "A") == ["sign-convention"]
    text = detail(report, "A")
    assert "-(Rf/Rin)/(1 + (1 + Rf/Rin)/A)" in text and "A = 1000" in text
    assert f"write {truth:.5g}" in text


@pytest.mark.parametrize(("gbw", "hz"), GBW_CASES)
@pytest.mark.parametrize("form", [polar, rect])
def test_a_one_pole_stage_claimed_negated_is_the_gain_without_its_minus_sign(gbw, hz, form):
    truth = closed_loop(100_000, hz)
    report = handcheck.check_text(sheet(f'"100000", gbw = "{gbw}"', form(-truth)))
    assert finding(report, "A").verdict == "differs"
    assert codes(report, "A") == ["sign-convention"]
    text = detail(report, "A")
    assert "inverting stage U1" in text and "A = 100000" in text
    assert f"{math.degrees(cmath.phase(truth)):.4g} deg from the input" in text


def test_a_zero_degree_claim_of_a_stage_whose_lag_it_does_not_cover_names_nothing():
    # 14.81 at 0 deg for 14.81 at 170.9 deg: the negated truth is at -9.1 deg, beyond
    # the half degree that "0 deg" allows: not the sign alone, no diagnosis.
    truth = closed_loop(100_000, 1e5)
    report = handcheck.check_text(sheet('"100000", gbw = "100 kHz"', f"{abs(truth):.4g} /_ 0 deg"))
    assert finding(report, "A").verdict == "differs"
    assert "sign-convention" not in codes(report, "A")


@pytest.mark.parametrize(("gbw", "hz"), GBW_CASES)
def test_the_right_claims_and_a_zero_claim_get_no_sign_convention(gbw, hz):
    truth = closed_loop(100_000, hz)
    opamp = f'"100000", gbw = "{gbw}"'
    for claim in (polar(truth), rect(truth), f"{abs(truth):.4g}"):  # a plain number claims the size
        report = handcheck.check_text(sheet(opamp, claim))
        assert finding(report, "A").verdict == "agrees" and not finding(report, "A").diagnosis, claim
    zero = handcheck.check_text(sheet(opamp, "0"))
    assert finding(zero, "A").verdict == "differs" and not finding(zero, "A").diagnosis

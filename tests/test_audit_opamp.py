"""The formula audit with a real op-amp's finite gain and gain-bandwidth product as symbols.

The symbols: an op-amp's id for its open-loop DC gain (``U1``, varied by the part's
``tolerance`` or ``range``), and ``U1_gbw`` for its gain-bandwidth product in Hz
(varied by ``gbw_tolerance`` or ``gbw_range``). References, each worked out below in
plain float arithmetic: the inverting amplifier's closed-loop gain with a finite
open-loop gain A, -(Rf/Rin)/(1 + (1 + Rf/Rin)/A), so that the ideal formula -Rf/Rin is
off by exactly (1 + Rf/Rin)/A; the one-pole open loop A(s) = A0/(1 + s*A0/(2*pi*GBW))
closed with A/(1 + A*beta), whose -3 dB frequency is (GBW/A0)*(1 + A0*beta) and tends to
GBW*beta (the rule of thumb GBW/(noise gain)) as A0 grows (Sedra & Smith,
Microelectronic Circuits, 7th ed., sec. 2.2 and 2.8, from memory). Component values
are invented.
"""

from __future__ import annotations

import json
import math

import pytest
from numpy.testing import assert_allclose

import handcheck
from handcheck.cli import main
from handcheck.pipeline import run_text

HEAD = '[worksheet]\nformat = 1\ntitle = "op-amp audit"\n'
A0, GBW, BETA = 200_000, 1e6, 0.1  # Rg/(Rf + Rg) with Rf = 9 kohm, Rg = 1 kohm
F_SIGNAL = 20e3  # Hz

INVERTING = """
[parts]
Vin = { voltage = "1 V", nodes = ["in", "gnd"] }
Rin = { resistor = "2.2 kohm", tolerance = "1%", nodes = ["in", "n"] }
Rf = { resistor = "33 kohm", tolerance = "1%", nodes = ["n", "out"] }
U1 = { opamp = "100000", range = ["50000", "200000"], nodes = ["out", "gnd", "n"] }

[[formula]]
name = "ideal"
quantity = "dc_gain(network_function(voltage(out), voltage(in)))"
expression = "-Rf/Rin"
"""


def noninverting(opamp_keys: str, audit: str, formulas: str) -> str:
    return (
        HEAD
        + f"""
[parts]
Vin = {{ voltage = "0.1 V", frequency = "20 kHz", nodes = ["in", "gnd"] }}
U1 = {{ opamp = "{A0}", gbw = "1 MHz", {opamp_keys}nodes = ["out", "in", "n"] }}
Rf = {{ resistor = "9 kohm", nodes = ["out", "n"] }}
Rg = {{ resistor = "1 kohm", nodes = ["n", "gnd"] }}

[audit]
{audit}
"""
        + formulas
    )


H = "network_function(voltage(out), voltage(in))"
RULE = f'[[formula]]\nname = "rule"\nquantity = "cutoff_frequency({H})"\nexpression = "U1_gbw*Rg/(Rf + Rg)"\n'
FLAT = f'[[formula]]\nname = "flat"\nquantity = "transfer(voltage(out), voltage(in))"\nexpression = "{A0}/(1 + {A0}*Rg/(Rf + Rg))"\n'


def one_pole_gain(a0: float, gbw: float, f: float) -> complex:
    """A/(1 + A*beta) with A = a0/(1 + j f a0/gbw) (f and gbw in Hz)."""
    a = a0 / (1 + 1j * f * a0 / gbw)
    return a / (1 + a * BETA)


def test_the_ideal_inverting_gain_against_a_finite_gain_stage():
    # -Rf/Rin over the true -(Rf/Rin)/(1 + (1 + Rf/Rin)/A) is 1 + (1 + Rf/Rin)/A.
    (finding,) = run_text(HEAD + INVERTING).audit
    assert finding.verdict == "differs"
    assert finding.holds_when == ("U1 -> oo",)
    k = 33e3 / 2.2e3
    assert_allclose(finding.nominal_error, (1 + k) / 100_000, rtol=1e-12)
    # worst case: the error (1 + Rf/Rin)/A is largest at the lowest A, the highest Rf, the lowest Rin
    assert finding.worst_case is not None
    assert_allclose(finding.worst_case.high, (1 + 33e3 * 1.01 / (2.2e3 * 0.99)) / 50_000, rtol=1e-9)
    assert_allclose(finding.worst_case.low, (1 + 33e3 * 0.99 / (2.2e3 * 1.01)) / 200_000, rtol=1e-9)


def test_the_gbw_is_a_symbol_with_a_range_in_hz():
    text = noninverting('gbw_range = ["0.5 MHz", "2 MHz"], ', "", FLAT)
    (finding,) = run_text(text).audit
    # |F|/|T| - 1 with the flat finite-gain formula: the pole at the signal frequency
    expected = A0 / (1 + A0 * BETA) / abs(one_pole_gain(A0, GBW, F_SIGNAL)) - 1
    assert finding.verdict == "differs"
    assert finding.holds_when == ("U1_gbw -> oo",)
    assert_allclose(finding.nominal_error, expected, rtol=1e-9)
    assert finding.worst_case is not None
    worst = A0 / (1 + A0 * BETA) / abs(one_pole_gain(A0, 0.5e6, F_SIGNAL)) - 1
    best = A0 / (1 + A0 * BETA) / abs(one_pole_gain(A0, 2e6, F_SIGNAL)) - 1
    assert_allclose([finding.worst_case.low, finding.worst_case.high], [best, worst], rtol=1e-9)
    assert dict(finding.worst_case.at)["U1_gbw"] == pytest.approx(0.5e6)


def test_the_rule_of_thumb_cutoff_holds_as_the_gain_grows_whatever_the_gbw():
    # (GBW*beta)/((GBW/A0)*(1 + A0*beta)) - 1 = -1/(1 + A0*beta): no gbw in it.
    text = noninverting('range = ["50000", "200000"], gbw_tolerance = "30%", ', 'symbols = ["U1", "U1_gbw"]', RULE)
    (finding,) = run_text(text).audit
    assert finding.verdict == "differs"
    assert finding.holds_when == ("U1 -> oo",)
    assert_allclose(finding.nominal_error, -1 / (1 + A0 * BETA), rtol=1e-9)
    assert finding.worst_case is not None
    assert_allclose(finding.worst_case.low, -1 / (1 + 50_000 * BETA), rtol=1e-9)
    assert_allclose(finding.worst_case.high, -1 / (1 + A0 * BETA), rtol=1e-9)


def test_the_exact_cutoff_written_with_the_gbw_symbol_is_equivalent():
    exact = (
        f'[[formula]]\nname = "exact"\nquantity = "cutoff_frequency({H})"\n'
        'expression = "U1_gbw/U1*(1 + U1*Rg/(Rf + Rg))"\n'
    )
    text = noninverting('range = ["50000", "200000"], gbw_tolerance = "30%", ', "", exact)
    (finding,) = run_text(text).audit
    assert finding.verdict == "equivalent" and not finding.holds_when


def test_the_json_names_the_gbw_symbol_and_its_worst_point_in_hz(tmp_path, capsys):
    path = tmp_path / "gbw.toml"
    path.write_text(noninverting('gbw_range = ["0.5 MHz", "2 MHz"], ', "", FLAT), encoding="utf-8")
    assert main(["check", str(path), "--json"]) == 1
    (entry,) = json.loads(capsys.readouterr().out)["audit"]
    assert entry["holds_when"] == ["U1_gbw -> oo"]
    assert entry["worst_case_at"] == {"U1_gbw": pytest.approx(0.5e6)}
    assert math.isfinite(entry["monte_carlo"]["std"]) and entry["monte_carlo"]["std"] > 0


@pytest.mark.parametrize(
    ("keys", "gbw", "message"),
    [
        ('gbw_range = ["3000000 rad/s", "9000000 rad/s"], ', "1 MHz", 'write "3000000 rad/s" in Hz'),
        ('gbw_tolerance = "10%", gbw_range = ["0.5 MHz", "2 MHz"], ', "1 MHz", "both a gbw_tolerance and a gbw_range"),
        ('gbw_tolerance = "10%", ', "6283185 rad/s", "is written in rad/s"),
    ],
)
def test_a_gbw_variation_that_cannot_be_used_says_what_to_write(keys, gbw, message):
    text = noninverting(keys, "", FLAT).replace('gbw = "1 MHz"', f'gbw = "{gbw}"')
    with pytest.raises(handcheck.HandcheckError) as info:
        handcheck.check_text(text)
    assert message in info.value.message


def test_a_gbw_tolerance_on_a_part_without_gbw_is_refused():
    text = HEAD + INVERTING.replace(
        'tolerance = "1%", nodes = ["in", "n"]', 'gbw_tolerance = "1%", nodes = ["in", "n"]'
    )
    with pytest.raises(handcheck.HandcheckError) as info:
        handcheck.check_text(text)
    assert 'part "Rin" has no gbw' in info.value.message


# An R-C low-pass (R1 = 1 kohm, C1 = 1 nF) buffered by a non-inverting stage of noise gain
# 10 on the one-pole op-amp: two real poles, a = 1/(R1*C1) and b = 2*pi*(GBW/A0)*(1 + A0*beta),
# whose -3 dB point solves (1 + x/a^2)(1 + x/b^2) = 2 for x = w^2 (solved by hand here), a
# polynomial with pi in its coefficients once U1_gbw is a symbol.
BUFFERED = (
    HEAD
    + f"""
[parts]
Vin = {{ voltage = "1 V", frequency = "1 kHz", nodes = ["in", "gnd"] }}
R1 = {{ resistor = "1 kohm", tolerance = "1%", nodes = ["in", "a"] }}
C1 = {{ capacitor = "1 nF", tolerance = "5%", nodes = ["a", "gnd"] }}
U1 = {{ opamp = "{A0}", gbw = "1 MHz", gbw_tolerance = "30%", nodes = ["out", "a", "n"] }}
Rf = {{ resistor = "9 kohm", nodes = ["out", "n"] }}
Rg = {{ resistor = "1 kohm", nodes = ["n", "gnd"] }}

[audit]
samples = 500

[[formula]]
name = "rc"
quantity = "cutoff_frequency({H})"
expression = "1/(2*pi*R1*C1)"
"""
)


def two_pole_cutoff(r1: float, c1: float, gbw: float) -> float:
    a, b = 1 / (r1 * c1), 2 * math.pi * gbw / A0 * (1 + A0 * BETA)
    x = (math.sqrt((a * a + b * b) ** 2 + 4 * a * a * b * b) - a * a - b * b) / 2
    return math.sqrt(x) / (2 * math.pi)


def rc_error(r1: float = 1e3, c1: float = 1e-9, gbw: float = GBW) -> float:
    return 1 / (2 * math.pi * r1 * c1) / two_pole_cutoff(r1, c1, gbw) - 1


def test_a_cutoff_with_no_closed_form_takes_the_gbw_symbol():
    (finding,) = run_text(BUFFERED).audit
    assert finding.verdict == "differs"
    assert_allclose(finding.nominal_error, rc_error(), rtol=1e-9)
    assert set(finding.holds_when) == {"R1 -> oo", "C1 -> oo", "U1_gbw -> oo"}
    # the reference error vanishes along the reported limits and not along the others
    for far in (rc_error(r1=1e9), rc_error(c1=1e-3), rc_error(gbw=1e12)):
        assert abs(far) < 1e-5
    for stays in (rc_error(r1=1e-3), rc_error(c1=1e-15), rc_error(gbw=1)):
        assert abs(stays) > 0.1
    assert finding.worst_case is not None
    corners = [rc_error(r, c, g) for r in (990, 1010) for c in (0.95e-9, 1.05e-9) for g in (0.7e6, 1.3e6)]
    assert finding.worst_case.low <= min(corners) * (1 + 1e-9) and max(corners) <= finding.worst_case.high * (1 + 1e-9)

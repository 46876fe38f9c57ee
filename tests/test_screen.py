"""The float screen in front of the mistake catalogue's exact re-solves.

The screen may only save work: every diagnosis must be the same with it on and off.
Each planted mistake below is computed outside handcheck, with plain complex
arithmetic (or numpy's nodal solve for the random ladders) from textbook closed
forms, and the catalogue must name it, the same way with and without the screen.
"""

from __future__ import annotations

import cmath
import dataclasses
import importlib
import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import handcheck
from handcheck.circuit.build import build
from handcheck.solve.quantities import parse_quantity
from handcheck.verify import rebuild
from handcheck.verify.claims import Tolerance, read_claim
from handcheck.verify.screen import cannot_match, float_quantity
from handcheck.worksheet.load import loads

check_module = importlib.import_module("handcheck.verify.check")


def polar(z: complex, unit: str, digits: int = 5) -> str:
    return f"{abs(z):.{digits}g} {unit} /_ {math.degrees(cmath.phase(z)):.{digits}g} deg"


def worksheet(parts: str, quantity: str, claim: str) -> str:
    return f"""
[worksheet]
format = 1
title = "Screen test"

[parts]
{parts}

[[step]]
name = "Q"
quantity = "{quantity}"
claim = "{claim}"
"""


@pytest.fixture
def both_ways(monkeypatch: pytest.MonkeyPatch) -> dict[str, int]:
    """Every diagnosis run with the screen on and off, the two compared; counts how
    many candidates the screen skipped (so a test can tell it did some work)."""
    real_diagnose = check_module.diagnose
    real_screen = rebuild.cannot_match
    counts = {"diagnosed": 0, "skipped": 0}

    def spy(ctx: rebuild.Context, only: tuple[str, ...] | None = None) -> list[tuple[str, str]]:
        on = real_diagnose(ctx, only)
        off = real_diagnose(dataclasses.replace(ctx, screen=False), only)
        assert on == off
        counts["diagnosed"] += 1
        return on

    def counted(*args: object) -> bool:
        skip = real_screen(*args)  # type: ignore[arg-type]
        counts["skipped"] += skip
        return skip

    monkeypatch.setattr(check_module, "diagnose", spy)
    monkeypatch.setattr(rebuild, "cannot_match", counted)
    return counts


W50 = 2 * math.pi * 50
SOURCE = 'Vs = { voltage = "10 V", frequency = "50 Hz", nodes = ["in", "gnd"] }'


def _reactance_sign() -> tuple[str, str, complex]:
    # Z_C = 1/(jwC) (from memory); the mistake writes +1/(wC) for the reactance
    r, c = 10.0, 200e-6
    parts = f'{SOURCE}\nR1 = {{ resistor = "10 ohm", nodes = ["in", "a"] }}\nC1 = {{ capacitor = "200 uF", nodes = ["a", "gnd"] }}'
    return parts, "current(R1)", 10 / complex(r, 1 / (W50 * c))


def _series_as_parallel() -> tuple[str, str, complex]:
    # R1 || C1 in series with R0; the mistake adds R1 and Z_C in series (impedances in
    # series add, in parallel their admittances add: from memory)
    r0, r1, c = 5.0, 20.0, 100e-6
    parts = (
        f'{SOURCE}\nR0 = {{ resistor = "5 ohm", nodes = ["in", "a"] }}\n'
        'R1 = { resistor = "20 ohm", nodes = ["a", "gnd"] }\nC1 = { capacitor = "100 uF", nodes = ["a", "gnd"] }'
    )
    return parts, "current(R0)", 10 / (r0 + r1 + 1 / (1j * W50 * c))


def _hertz_as_angular() -> tuple[str, str, complex]:
    # Z_L = jwL with w = 2*pi*f (from memory); the mistake uses f = 50 for w
    r, inductance = 10.0, 0.05
    parts = f'{SOURCE}\nR1 = {{ resistor = "10 ohm", nodes = ["in", "a"] }}\nL1 = {{ inductor = "50 mH", nodes = ["a", "gnd"] }}'
    return parts, "current(R1)", 10 / complex(r, 50 * inductance)


def _degrees_as_radians() -> tuple[str, str, complex]:
    # the source phasor is A*exp(j*phase) (from memory); the mistake reads 30 deg as 30 rad
    r, inductance = 10.0, 0.05
    parts = (
        'Vs = { voltage = "10 V", frequency = "50 Hz", phase = "30 deg", nodes = ["in", "gnd"] }\n'
        'R1 = { resistor = "10 ohm", nodes = ["in", "a"] }\nL1 = { inductor = "50 mH", nodes = ["a", "gnd"] }'
    )
    return parts, "current(R1)", 10 * cmath.exp(30j) / complex(r, W50 * inductance)


def _reversed_nodes() -> tuple[str, str, complex]:
    # Millman's theorem for the middle node, V = (V1/R1 + V2/R2)/(1/R1 + 1/R2 + jwC)
    # (from memory); the mistake enters V2 the other way round
    r1, r2, c = 10.0, 20.0, 100e-6
    parts = (
        'V1 = { voltage = "10 V", frequency = "50 Hz", nodes = ["p", "gnd"] }\n'
        'V2 = { voltage = "4 V", frequency = "50 Hz", phase = "60 deg", nodes = ["q", "gnd"] }\n'
        'R1 = { resistor = "10 ohm", nodes = ["p", "m"] }\nR2 = { resistor = "20 ohm", nodes = ["q", "m"] }\n'
        'C1 = { capacitor = "100 uF", nodes = ["m", "gnd"] }'
    )
    v2 = -4 * cmath.exp(1j * math.pi / 3)
    return parts, "voltage(m)", (10 / r1 + v2 / r2) / (1 / r1 + 1 / r2 + 1j * W50 * c)


PLANTED = {
    "reactance-sign": _reactance_sign,
    "series-as-parallel": _series_as_parallel,
    "hertz-as-angular": _hertz_as_angular,
    "degrees-as-radians": _degrees_as_radians,
    "reversed-nodes": _reversed_nodes,
}


@pytest.mark.parametrize("code", sorted(PLANTED))
def test_planted_mistake_is_named_alike_with_and_without_the_screen(code: str, both_ways: dict[str, int]) -> None:
    parts, quantity, wrong = PLANTED[code]()
    unit = "V" if quantity.startswith("voltage") else "A"
    report = handcheck.check_text(worksheet(parts, quantity, polar(wrong, unit)))
    (found,) = report.steps
    assert found.verdict == "differs"
    assert code in [d.mistake for d in found.diagnosis]
    assert both_ways["diagnosed"] == 1
    assert both_ways["skipped"] > 0  # the screen saved some exact solves here


# -- random ladders ----------------------------------------------------------------------


def _ladder_current(sections: list[tuple[float, str, float]], omega: float, source: complex) -> complex:
    """Source current of a ladder (series R, shunt L or C per section), by numpy's
    solve of the nodal equations Y v = i (nodal analysis, from memory)."""
    n = len(sections)
    y = np.zeros((n, n), dtype=complex)
    rhs = np.zeros(n, dtype=complex)
    for k, (r, kind, value) in enumerate(sections):
        shunt = 1j * omega * value if kind == "C" else 1 / (1j * omega * value)
        y[k, k] += 1 / r + shunt
        if k > 0:
            y[k - 1, k - 1] += 1 / r
            y[k - 1, k] -= 1 / r
            y[k, k - 1] -= 1 / r
        else:
            rhs[0] += source / r
    v = np.linalg.solve(y, rhs)
    return complex((source - v[0]) / sections[0][0])


@pytest.mark.slow  # eight random ladders, each checked twice
@settings(
    max_examples=8,
    derandomize=True,
    deadline=None,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture],
)
@given(
    sections=st.lists(
        st.tuples(
            st.sampled_from([10.0, 47.0, 220.0]),
            st.sampled_from(["C", "L"]),
            st.sampled_from([1.0, 2.2, 4.7]),
        ),
        min_size=1,
        max_size=3,
    ),
    mistake=st.sampled_from(["reactance-sign", "hertz-as-angular", "degrees-as-radians"]),
    flip=st.integers(0, 2),
)
def test_random_ladders_screen_changes_no_finding(
    sections: list[tuple[float, str, float]], mistake: str, flip: int, both_ways: dict[str, int]
) -> None:
    # capacitors in uF, inductors in mH; a 10 V, 40 deg, 1 kHz source
    scaled = [(r, kind, v * (1e-6 if kind == "C" else 1e-3)) for r, kind, v in sections]
    omega, phase = 2 * math.pi * 1000, math.radians(40)
    if mistake == "reactance-sign":
        r, kind, v = scaled[flip % len(scaled)]
        # a negative C or L: the reactance with the wrong sign
        scaled[flip % len(scaled)] = (r, kind, -v)
    if mistake == "hertz-as-angular":
        omega = 1000.0
    if mistake == "degrees-as-radians":
        phase = 40.0
    wrong = _ladder_current(scaled, omega, 10 * cmath.exp(1j * phase))
    lines = ['Vs = { voltage = "10 V", frequency = "1 kHz", phase = "40 deg", nodes = ["n0", "gnd"] }']
    for k, (r, kind, v) in enumerate(sections, start=1):
        lines.append(f'R{k} = {{ resistor = "{r:g} ohm", nodes = ["n{k - 1}", "n{k}"] }}')
        part = "capacitor" if kind == "C" else "inductor"
        lines.append(f'X{k} = {{ {part} = "{v:g} {"uF" if kind == "C" else "mH"}", nodes = ["n{k}", "gnd"] }}')
    before = dict(both_ways)
    report = handcheck.check_text(worksheet("\n".join(lines), "current(R1)", polar(wrong, "A")))
    (found,) = report.steps
    assert found.verdict != "agrees"
    assert both_ways["diagnosed"] == before["diagnosed"] + 1  # on and off compared in the spy


# -- the screen's decision itself -----------------------------------------------------------


def _series_rc() -> tuple[object, complex]:
    text = worksheet(
        f'{SOURCE}\nR1 = {{ resistor = "10 ohm", nodes = ["in", "a"] }}\nC1 = {{ capacitor = "200 uF", nodes = ["a", "gnd"] }}',
        "current(R1)",
        "1 A",
    )
    # I = V/(R + 1/(jwC)) (from memory)
    return build(loads(text)), 10 / complex(10.0, -1 / (W50 * 200e-6))


def test_float_value_is_the_closed_form() -> None:
    circuit, truth = _series_rc()
    near = float_quantity(circuit, parse_quantity("current(R1)"))  # type: ignore[arg-type]
    assert near is not None
    np.testing.assert_allclose(near.value, truth, rtol=1e-12)
    assert 0 < near.err < 1e-10


def _one_digit_off(z: complex) -> str:
    """A size one unit in its fifth digit from the rounded truth, on the side where it
    lies between one and two half-units from the true size (0.1 A < size < 1 A)."""
    size = abs(z)
    (off,) = [x for x in (round(size, 5) - 1e-5, round(size, 5) + 1e-5) if 5e-6 < abs(x - size) < 1e-5]
    return f"{off:.5f} A /_ {math.degrees(cmath.phase(z)):.5g} deg"


@pytest.mark.parametrize(
    ("written", "skipped"),
    [
        (lambda z: polar(10 * z, "A"), True),  # a tenfold size: far outside the claim's band
        (lambda z: polar(z, "A"), False),  # the claim itself
        (_one_digit_off, False),  # outside the written digits, inside the screen's margin
    ],
)
def test_far_candidate_skipped_near_one_not(written, skipped: bool) -> None:  # type: ignore[no-untyped-def]
    circuit, truth = _series_rc()
    claim = read_claim(written(truth))
    quantity = parse_quantity("current(R1)")
    assert cannot_match(circuit, quantity, claim, Tolerance()) is skipped  # type: ignore[arg-type]
    assert cannot_match(circuit, quantity, claim, Tolerance(0.01)) is skipped  # type: ignore[arg-type]

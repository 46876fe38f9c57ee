"""Certified ball evaluation, the real-form exact phasor and the float caution.

References: mpmath reference evaluation at 60 digits (the certified bounds);
sympy DomainMatrix over QQ_I (the real-form exact phasor); the extra-low-voltage
limit of 50 V AC rms (IEC 61140, from memory) for the caution at its threshold.
"""

from __future__ import annotations

import mpmath
import pytest
import sympy

import handcheck
from handcheck.circuit.build import build
from handcheck.solve.certified import certify
from handcheck.solve.phasor import solve
from handcheck.solve.realform import solve_real_form
from handcheck.verify.safety import cautions

J, pi = sympy.I, sympy.pi
CASES = [
    ("rational times power of j*100*pi", sympy.Rational(7, 3) * (J * 100 * pi) ** 9 + sympy.Rational(-1, 5)),
    ("ratio of polynomials in j*w", (1 + 3 * J * pi / 7) / (2 - (J * 100 * pi) ** 2 / 10**5)),
    ("roots and exponentials", sympy.sqrt(6) / 5 * sympy.exp(J * sympy.Rational(221, 1800) * pi)),
    ("abs, arg and atan2", sympy.Abs(3 + 4 * J) + sympy.arg(-1 + J) + sympy.atan2(1, 3)),
    # sympy leaves abs() of a number it cannot split unevaluated (a large step value)
    ("abs left to the balls", sympy.Abs(sympy.sqrt(2) + J * sympy.cos(sympy.Rational(3, 10)), evaluate=False)),
    ("strong cancellation", pi**20 - sympy.Rational(8769956796, 1) - sympy.Rational(1, 10**3)),
]


def _mp(expr: sympy.Expr) -> complex:
    with mpmath.workdps(60):
        value = mpmath.mpc(sympy.N(expr, 60))
        return value


@pytest.mark.parametrize("name, expr", CASES, ids=[c[0] for c in CASES])
def test_certified_value_lies_within_its_bound(name: str, expr: sympy.Expr) -> None:
    # source: mpmath reference evaluation at 60 digits
    certified = certify(expr)
    assert certified is not None
    reference = _mp(expr)
    with mpmath.workdps(60):
        assert abs(mpmath.re(reference) - certified.value.real) <= certified.bound
        assert abs(mpmath.im(reference) - certified.value.imag) <= certified.bound
    assert certified.bound <= 1e-15 * max(1.0, abs(certified.value))


def test_uncertifiable_values_give_none() -> None:
    assert certify(sympy.Integer(0)) is None  # no relative width for an exact zero
    assert certify(sympy.zoo) is None
    assert certify(sympy.gamma(sympy.Rational(1, 3))) is None  # not in the table


def _ladder_system(n: int) -> tuple[list, list, list]:
    """An RC ladder of n sections driven by a 1 A current into node 0 (invented)."""
    half, zero = sympy.Rational(1, 2), sympy.Integer(0)
    G = [[zero] * n for _ in range(n)]
    C = [[zero] * n for _ in range(n)]
    for k in range(n):
        G[k][k] += 2 * half if k + 1 < n else half
        if k + 1 < n:
            G[k][k + 1] -= half
            G[k + 1][k] -= half
        C[k][k] += sympy.Rational(1, 3 + k % 4)
    return G, C, [sympy.Integer(1)] + [zero] * (n - 1)


def test_real_form_equals_the_gaussian_rational_solve() -> None:
    # source: sympy DomainMatrix LU over QQ_I (reference library)
    from sympy.polys.matrices import DomainMatrix

    G, C, b = _ladder_system(12)
    w = sympy.Rational(3, 2)
    (fast,) = solve_real_form(G, C, w, [b])
    a = DomainMatrix.from_list_sympy(12, 12, [[G[r][c] + J * w * C[r][c] for c in range(12)] for r in range(12)])
    rhs = DomainMatrix.from_list_sympy(12, 1, [[v] for v in b]).convert_to(a.domain)
    reference = a.to_field().lu_solve(rhs.to_field()).to_Matrix()
    assert all(sympy.expand(fast[r] - reference[r, 0]) == 0 for r in range(12))
    with pytest.raises(ZeroDivisionError):
        solve_real_form([[1, -1], [-1, 1]], [[0, 0], [0, 0]], sympy.Integer(1), [[1, 0]])


def _divider(top: str, bottom: str, drive: str = "100 V rms") -> str:
    return f"""
[worksheet]
format = 1
title = "Divider near the extra-low-voltage limit (invented)"
phasors = "rms"
[parts]
V1 = {{ voltage = "{drive}", frequency = "50 Hz", nodes = ["a", "gnd"] }}
R1 = {{ resistor = "{top}", nodes = ["a", "m"] }}
R2 = {{ resistor = "{bottom}", nodes = ["m", "gnd"] }}
"""


@pytest.mark.parametrize(
    "drive, top, bottom, above",
    [
        ("40 V rms", "1 ohm", "1 ohm", False),  # nothing above 50 V
        ("40 V rms", "1 ohm", "10 ohm", False),
        ("60 V rms", "1 ohm", "1 ohm", True),  # the source itself
    ],
)
def test_float_caution_agrees_with_the_exact_values(drive: str, top: str, bottom: str, above: bool) -> None:
    # IEC 61140 extra-low voltage, 50 V AC rms (from memory)
    circuit = build(handcheck.loads(_divider(top, bottom, drive)))
    assert bool(cautions(circuit, solve(circuit))) is above


def test_part_voltage_at_the_threshold_is_confirmed_exactly() -> None:
    # Two anti-phase 30 V rms sources: no node exceeds 50 V rms, the resistor between
    # them sees exactly 60 V rms; a 50 V rms difference is still extra-low voltage.
    # IEC 61140 extra-low voltage, 50 V AC rms (from memory)
    def sheet(second: str) -> str:
        return f"""
[worksheet]
format = 1
title = "Anti-phase pair (invented)"
phasors = "rms"
[parts]
Va = {{ voltage = "30 V rms", frequency = "50 Hz", nodes = ["a", "gnd"] }}
Vb = {{ voltage = "{second} V rms", frequency = "50 Hz", phase = "180 deg", nodes = ["b", "gnd"] }}
R1 = {{ resistor = "10 ohm", nodes = ["a", "b"] }}
"""

    above = build(handcheck.loads(sheet("30")))
    (text,) = cautions(above, solve(above))
    assert "the voltage across R1 reaches 60 V rms" in text
    exactly = build(handcheck.loads(sheet("20")))
    assert cautions(exactly, solve(exactly)) == ()


@pytest.mark.parametrize(
    ("degree", "q", "seed"), [(0, sympy.Integer(100), 0), (7, sympy.Rational(314, 3), 1), (40, 120, 2)]
)
def test_polynomial_at_a_multiple_of_j_pi_equals_mpmath(degree: int, q: sympy.Rational, seed: int) -> None:
    # reference library: mpmath.polyval at 80 digits at s = j*q*pi; and the tree is the
    # one multiplying every power of s out gives (sympy structural equality)
    import random

    from handcheck.solve.phasor import _at_pi_multiple

    rnd = random.Random(seed)
    coeffs = [sympy.Rational(rnd.randint(-99, 99), rnd.randint(1, 9)) for _ in range(degree + 1)]
    q = sympy.Rational(q)
    got = _at_pi_multiple(coeffs, q)
    s = J * q * pi
    assert got == sympy.Add(*[c * s**i for i, c in enumerate(coeffs) if c != 0])
    with mpmath.workdps(80):
        point = mpmath.mpc(0, mpmath.mpf(q.p) / q.q * mpmath.pi)
        want = mpmath.polyval([mpmath.mpf(c.p) / c.q for c in reversed(coeffs)], point)
        value = mpmath.mpc(sympy.re(got).evalf(80), sympy.im(got).evalf(80))
        assert abs(value - want) <= mpmath.mpf(10) ** -60 * max(abs(want), 1)

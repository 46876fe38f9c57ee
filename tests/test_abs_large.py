"""abs() of a large exact number stays exact and right (issue 12, chains of steps).

The reference is mpmath's complex abs at 40 digits (mpmath documentation, mpmath.fabs /
abs of mpc); |v| = sqrt(v conj(v)) for every complex v (from memory).
"""

from __future__ import annotations

import mpmath
import pytest
import sympy

from handcheck.worksheet.evaluate import FUNCTIONS


def _chain(steps: int) -> sympy.Expr:
    # Z_k = R + (Z_(k-1) || jX) with X = -1/(2 pi f C): pi stays symbolic, so the exact
    # expression grows with every step.
    r, x = sympy.Integer(100), -1 / (2 * sympy.pi * 1000 * sympy.Rational(1, 10**6))
    z: sympy.Expr = r
    for _ in range(steps):
        z = r + z * (sympy.I * x) / (z + sympy.I * x)
    return z


@pytest.mark.slow  # a 200-digit value through abs() and mpmath
def test_abs_of_a_large_number_matches_mpmath_and_stays_exact():
    z = _chain(6)
    assert sympy.count_ops(z) > 40  # the large-number branch
    size = FUNCTIONS["abs"].rule(z)
    assert not size.atoms(sympy.Float)  # exact: no rounded number inside
    with mpmath.workdps(40):
        reference = abs(mpmath.mpc(*(mpmath.mpf(str(part)) for part in z.evalf(60).as_real_imag())))
        real, imag = (mpmath.mpf(str(part)) for part in size.evalf(50).as_real_imag())
        assert abs(real - reference) < mpmath.mpf("1e-35") * reference and abs(imag) < mpmath.mpf("1e-35")


def test_abs_of_a_small_number_keeps_its_closed_form():
    assert FUNCTIONS["abs"].rule(3 + 4 * sympy.I) == 5


def test_the_size_checks_walk_a_chain_of_steps_as_a_graph():
    # The exact value of step k holds step k-1 twice (Z || jX), so as a tree it doubles
    # with every step (from memory: a tree of a graph with shared children unfolds
    # exponentially); the checks visit each distinct subexpression once, linear in k.
    from handcheck.worksheet.evaluate import distinct_nodes

    sizes = {k: len(list(distinct_nodes(_chain(k)))) for k in (5, 10, 15)}
    assert sizes[15] - sizes[10] == sizes[10] - sizes[5]  # a fixed number of new nodes per step
    assert sizes[15] < 100

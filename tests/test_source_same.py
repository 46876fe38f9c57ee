"""Exact comparison of source frequencies without simplify (common practice: exact equality)."""

from __future__ import annotations

import pytest
import sympy

from handcheck.worksheet.sourcefunction import _same


@pytest.mark.parametrize(
    ("a", "b", "same"),
    [
        (sympy.Integer(0), 100 * sympy.pi, False),
        (2 * sympy.pi * 50, 100 * sympy.pi, True),
        (sympy.sqrt(2) ** 2, sympy.Integer(2), True),
        (sympy.sqrt(8), 2 * sympy.sqrt(2), True),
        (sympy.Rational(1, 3), sympy.Float(0.3333), False),
        (sympy.cos(1) ** 2 + sympy.sin(1) ** 2, sympy.Integer(1), True),  # Pythagorean identity
    ],
)
def test_same(a: sympy.Expr, b: sympy.Expr, same: bool) -> None:
    assert _same(a, b) is same

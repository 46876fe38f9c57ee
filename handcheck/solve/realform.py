"""Exact phasors at a rational w from the real form of the complex system.

With every entry of G and C rational and w rational, ``(G + jwC)(xr + j xi) = br + j bi``
is the real system of twice the size

    [[G, -wC], [wC, G]] [xr; xi] = [br; bi]

(the usual real embedding of a complex linear system, common practice), solved with
python-flint's ``fmpq_mat.solve``: exact rationals, fraction-free elimination in C.
The value is the same exact Gaussian rational that sympy's ``DomainMatrix`` gives
over ``QQ_I``. Measured on the 2-core machine of DESIGN.md: 200 unknowns in about
0.15 s against 4.8 s over ``QQ_I``; re-measured with ``benchmarks/bench_phasor.py``: 0.23 s against 8.5 s on a busy machine.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import sympy

from handcheck.solve.exact import as_sympy

__all__ = ["solve_real_form"]


def _fmpq(value: Any) -> Any:
    import flint

    value = sympy.Rational(value)
    return flint.fmpq(int(value.p), int(value.q))


def solve_real_form(
    G: Sequence[Sequence[sympy.Expr]],
    C: Sequence[Sequence[sympy.Expr]],
    omega: sympy.Expr,
    columns: Sequence[Sequence[sympy.Expr]],
) -> list[list[sympy.Expr]] | None:
    """Solve ``(G + j*omega*C) x = b`` exactly for each ``b`` in ``columns``.

    Parameters
    ----------
    G, C
        Square matrices of exact numbers (sympy).
    omega
        The angular frequency, a sympy number (0 for DC).
    columns
        Right-hand sides, each of length n, exact Gaussian rationals.

    Returns
    -------
    list of list of sympy.Expr or None
        One list of the unknowns' exact phasors per column; None when an entry is
        not rational (an algebraic coupling, a transcendental w) or python-flint is
        missing, and the caller's general solver applies.

    Raises
    ------
    ZeroDivisionError
        If the system is singular at this frequency.
    """
    try:
        import flint
    except ImportError:  # pragma: no cover - python-flint is a dependency
        return None
    n = len(G)
    if not omega.is_Rational:
        return None
    entries = [e for row in G for e in row] + [e for row in C for e in row]
    if not all(isinstance(e, sympy.Rational) or (isinstance(e, int) and not isinstance(e, bool)) for e in entries):
        return None
    split = []
    for column in columns:
        parts = [
            (sympy.Rational(v), sympy.Integer(0))
            if isinstance(v, (int, sympy.Rational))
            else as_sympy(v).as_real_imag()
            for v in column
        ]
        if not all(isinstance(p, sympy.Rational) for pair in parts for p in pair):
            return None
        split.append(parts)
    w = _fmpq(omega)
    width = 1 if omega == 0 else 2  # at DC, G x = b alone
    a = flint.fmpq_mat(width * n, width * n)
    for r in range(n):
        for c in range(n):
            g, cap = G[r][c], C[r][c]
            if g != 0:
                a[r, c] = _fmpq(g)
                if width == 2:
                    a[n + r, n + c] = a[r, c]
            if width == 2 and cap != 0:
                wc = w * _fmpq(cap)
                a[r, n + c] = -wc
                a[n + r, c] = wc
    rhs = flint.fmpq_mat(width * n, 2 * len(split) // width)
    for k, parts in enumerate(split):
        for r in range(n):
            re, im = parts[r]
            if width == 2:
                rhs[r, k], rhs[n + r, k] = _fmpq(re), _fmpq(im)
            else:
                rhs[r, 2 * k], rhs[r, 2 * k + 1] = _fmpq(re), _fmpq(im)
    x = a.solve(rhs)
    if width == 1:
        return [
            [_to_sympy(x[r, 2 * k]) + sympy.I * _to_sympy(x[r, 2 * k + 1]) for r in range(n)] for k in range(len(split))
        ]
    return [[_to_sympy(x[r, k]) + sympy.I * _to_sympy(x[n + r, k]) for r in range(n)] for k in range(len(split))]


def _to_sympy(value: Any) -> sympy.Rational:
    return sympy.Rational(int(value.p), int(value.q))

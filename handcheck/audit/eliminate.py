"""Fraction-free elimination on a matrix of exact multivariate polynomials.

Bareiss's one-step fraction-free Gaussian elimination keeps every entry a
polynomial (each is a minor of the matrix) and divides exactly by the previous
pivot, so no gcd is ever taken inside the loop; back substitution gives Cramer's
numerators ``det(A) x_i`` directly.

References
----------
E. H. Bareiss, "Sylvester's identity and multistep integer-preserving Gaussian
elimination", Mathematics of Computation 22(103), 1968, pp. 565-578 (from memory).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from handcheck.audit.ring import MAX_TERMS, AuditError

__all__ = ["Cramer", "solve_fraction_free"]


@dataclass(frozen=True)
class Cramer:
    """The solution of ``A x = b`` as ``x_i = numerators[i] / det``."""

    det: Any
    numerators: tuple[Any, ...]


def _pivot(rows: list[list[Any]], k: int) -> int | None:
    """The row at or below k with the smallest nonzero entry in column k (fewest terms)."""
    best, size = None, None
    for r in range(k, len(rows)):
        entry = rows[r][k]
        if not entry.is_zero() and (size is None or len(entry) < size):
            best, size = r, len(entry)
    return best


def solve_fraction_free(matrix: list[list[Any]], rhs: list[Any], check: Callable[[], None] | None = None) -> Cramer:
    """Solve ``matrix @ x = rhs`` exactly over the polynomials.

    Parameters
    ----------
    matrix
        Square list of rows of python-flint ``fmpz_mpoly`` (of one context).
    rhs
        The right-hand side, one polynomial per row.
    check
        Called between elimination steps (the time budget); may raise.

    Returns
    -------
    Cramer
        ``det`` (the determinant, up to the sign of the row swaps, which cancels in
        every ratio) and each ``det * x_i``.

    Raises
    ------
    AuditError
        If the matrix is singular or an entry grows beyond the size limit.
    """
    n = len(matrix)
    rows = [[*row, b] for row, b in zip(matrix, rhs, strict=True)]
    previous: Any = rows[0][0] ** 0 if n else None
    for k in range(n):
        if check is not None:
            check()
        p = _pivot(rows, k)
        if p is None:
            raise AuditError("the circuit's equations are singular with the parts kept as symbols")
        rows[k], rows[p] = rows[p], rows[k]
        pivot = rows[k]
        akk = pivot[k]
        for r in range(k + 1, n):
            row = rows[r]
            aik = row[k]
            for j in range(k + 1, n + 1):
                value = akk * row[j]
                if not aik.is_zero() and not pivot[j].is_zero():
                    value -= aik * pivot[j]
                if value.is_zero():
                    row[j] = value
                    continue
                row[j] = value / previous if not previous.is_one() else value
                if len(row[j]) > MAX_TERMS:
                    raise AuditError(
                        f"the exact network function grows beyond {MAX_TERMS:,} terms; keep fewer parts as symbols"
                    )
            row[k] = akk * 0
        previous = akk
    det = rows[n - 1][n - 1]
    scaled: list[Any] = [None] * n
    for i in range(n - 1, -1, -1):
        if check is not None:
            check()
        acc = det * rows[i][n]
        for j in range(i + 1, n):
            if not rows[i][j].is_zero():
                acc -= rows[i][j] * scaled[j]
        scaled[i] = acc / rows[i][i]
    return Cramer(det, tuple(scaled))

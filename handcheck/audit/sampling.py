"""Vectorised evaluation over samples of part values, and the Monte Carlo summary.

No code is generated and no text is read: polynomials are evaluated from their own
terms (python-flint exponent vectors and integer coefficients) and sympy expressions
by walking their tree, both with numpy arrays. These are floating-point numbers for
the statistics of the error (the distribution, not a proof); every exact statement of
the audit is made elsewhere.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import numpy as np
import sympy

from handcheck.audit.ring import AuditError, RatFunc

__all__ = ["MonteCarlo", "draw", "lowest_positive_root", "poly_values", "summarise", "sympy_values"]


@dataclass(frozen=True)
class MonteCarlo:
    """Moments and percentiles of a sampled relative error, and its histogram."""

    samples: int
    mean: float
    std: float
    p01: float
    p99: float
    distribution: str
    seed: int
    counts: tuple[int, ...] = ()
    edges: tuple[float, ...] = ()


def draw(ranges: Sequence[tuple[Fraction, Fraction]], samples: int, seed: int, distribution: str) -> list[np.ndarray]:
    """Seeded samples of each part: uniform over its range, or normal with the range as +-3 sigma.

    Parameters
    ----------
    ranges
        (low, high) of each part, exact.
    samples
        How many values of each.
    seed
        The generator's seed (numpy's PCG64).
    distribution
        "uniform" or "normal".

    Returns
    -------
    list of numpy.ndarray
        One array of values per part.
    """
    rng = np.random.default_rng(seed)
    columns = []
    for low, high in ranges:
        lo, hi = float(low), float(high)
        if distribution == "normal":
            columns.append(rng.normal((lo + hi) / 2, (hi - lo) / 6, samples))
        else:
            columns.append(rng.uniform(lo, hi, samples))
    return columns


def poly_values(poly: Any, columns: Mapping[int, Any]) -> Any:
    """A python-flint polynomial at arrays (or numbers) given per variable index.

    Variables given as plain numbers (pi, a fixed s) are folded into the
    coefficients first, so each distinct monomial in the sampled parts is formed
    once; powers are cached.
    """
    folded: dict[tuple[tuple[int, int], ...], Any] = {}
    for raw, coeff in zip(poly.monoms(), poly.coeffs(), strict=True):
        scale: Any = float(int(coeff))
        key: list[tuple[int, int]] = []
        for index, power in enumerate(int(p) for p in raw):
            if not power:
                continue
            value = columns[index]
            if np.ndim(value) == 0:
                scale *= value**power
            else:
                key.append((index, power))
        folded[tuple(key)] = folded.get(tuple(key), 0.0) + scale
    cache: dict[tuple[int, int], Any] = {}
    total: Any = 0.0
    for factors, scale in folded.items():
        term: Any = scale
        for index, power in factors:
            if (index, power) not in cache:
                cache[(index, power)] = columns[index] ** power
            term = term * cache[(index, power)]
        total = total + term
    return total


def ratio_values(ratio: RatFunc, columns: Mapping[int, Any]) -> Any:
    """num/den at the samples."""
    return poly_values(ratio.num, columns) / poly_values(ratio.den, columns)


_FUNCTIONS = {
    sympy.exp: np.exp,
    sympy.log: np.log,
    sympy.sin: np.sin,
    sympy.cos: np.cos,
    sympy.tan: np.tan,
    sympy.atan: np.arctan,
    sympy.Abs: np.abs,
}


def sympy_values(expr: sympy.Expr, columns: Mapping[str, Any]) -> Any:
    """A sympy expression at arrays given per symbol name, by walking its tree.

    Raises
    ------
    AuditError
        For a function the walker does not evaluate.
    """
    if expr.is_Symbol:
        return columns[expr.name]
    if expr.is_Number:
        return complex(expr) if expr.has(sympy.I) else float(expr)
    if expr is sympy.pi:
        return np.pi
    if expr is sympy.I:
        return 1j
    if expr.is_Add:
        return sum((sympy_values(a, columns) for a in expr.args), 0.0)
    if expr.is_Mul:
        result: Any = 1.0
        for arg in expr.args:
            result = result * sympy_values(arg, columns)
        return result
    if expr.is_Pow:
        base, exponent = sympy_values(expr.base, columns), sympy_values(expr.exp, columns)
        return np.power(base, exponent)
    for function, numeric in _FUNCTIONS.items():
        if expr.func == function:
            return numeric(sympy_values(expr.args[0], columns))
    raise AuditError(f"the audit cannot evaluate {expr.func} over samples")


def lowest_positive_root(coefficients: Sequence[Any], count: int) -> np.ndarray:
    """The lowest positive real root of sum c_k u^k at each sample (NaN where there is none).

    Batched companion-matrix eigenvalues (numpy.linalg.eigvals on a stack), the
    usual numerical route to all roots of a polynomial (common practice).
    """
    coeffs = [np.broadcast_to(np.asarray(c, dtype=float), (count,)) for c in coefficients]
    degree = len(coeffs) - 1
    lead = coeffs[-1]
    companion = np.zeros((count, degree, degree))
    for k in range(degree):
        companion[:, 0, k] = -coeffs[degree - 1 - k] / lead
    for k in range(1, degree):
        companion[:, k, k - 1] = 1.0
    roots = np.linalg.eigvals(companion)
    real = np.abs(roots.imag) <= 1e-9 * np.maximum(np.abs(roots), 1e-300)
    candidates = np.where(real & (roots.real > 0), roots.real, np.inf)
    lowest = candidates.min(axis=1)
    return np.where(np.isfinite(lowest), lowest, np.nan)


def summarise(errors: np.ndarray, distribution: str, seed: int, bins: int = 60) -> MonteCarlo:
    """Mean, standard deviation, 1st and 99th percentiles and a histogram of the errors."""
    finite = errors[np.isfinite(errors)]
    if finite.size == 0:
        raise AuditError("no sample gave a finite error")
    p01, p99 = np.percentile(finite, [1, 99])
    counts, edges = np.histogram(finite, bins=bins)
    return MonteCarlo(
        samples=int(errors.size),
        mean=float(finite.mean()),
        std=float(finite.std(ddof=1)) if finite.size > 1 else 0.0,
        p01=float(p01),
        p99=float(p99),
        distribution=distribution,
        seed=seed,
        counts=tuple(int(c) for c in counts),
        edges=tuple(float(e) for e in edges),
    )

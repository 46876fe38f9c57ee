"""How wrong a formula is: relative error at the nominal values, worst case, Monte Carlo.

The error is e = F/T - 1, signed (Format 1, second edition). Every closed form is
reduced to one real rational function R of the audited parts (and pi) with e = R - 1
("ratio") or e = sqrt(R) - 1 ("sqrt": compared squares, or magnitudes of a network
function at a frequency other than 0); e is increasing in R, so the extremes of e
are those of R, found rigorously in ball arithmetic (:mod:`handcheck.audit.worst`).
A frequency with no closed form ("root") is e = sqrt(u_F/u) - 1 with u the lowest
positive root of its defining polynomial: its worst case is sampled on a grid and its
bounds are then proved (:mod:`handcheck.audit.rootbound`), or said to be unproved.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Any, Literal

import flint
import numpy as np

from handcheck.audit.findings import WorstCase
from handcheck.audit.ring import AuditError, RatFunc, Ring
from handcheck.audit.rootbound import certified_bounds
from handcheck.audit.sampling import MonteCarlo, draw, lowest_positive_root, poly_values, ratio_values, summarise
from handcheck.audit.truth import coefficients_in_s
from handcheck.audit.worst import PRECISION, extreme, ratio_ball

__all__ = ["ErrorModel", "Ranges", "monte_carlo", "nominal_error", "worst_case"]

Kind = Literal["ratio", "sqrt", "root"]
#: Points per part of the grid a sampled worst case looks at (besides the corners).
GRID = 9
MAX_GRID = 20_000


@dataclass(frozen=True)
class Ranges:
    """The audited parts, their nominal values and their ranges (low == high: held at nominal)."""

    names: tuple[str, ...]
    nominal: tuple[Fraction, ...]
    box: tuple[tuple[Fraction, Fraction], ...]

    @property
    def varies(self) -> bool:
        return any(low != high for low, high in self.box)


@dataclass(frozen=True)
class ErrorModel:
    """e as a function of the parts: R - 1, sqrt(R) - 1, or sqrt(target/u) - 1 for a root."""

    kind: Kind
    ring: Ring
    ratio: RatFunc | None = None
    poly: Any = None  # root: P(u), u in the ring's "s" slot
    target: Callable[[dict[str, Any]], Any] | None = None  # root: u_F at samples (name -> array)
    in_s: RatFunc | None = None  # sqrt of |F/T|^2 at s = jw: F/T itself, for fast sampling
    s_value: complex = 0j
    u_formula: RatFunc | None = None  # root: u_F as a rational function, for certified bounds
    u_slack: float = 0.0  # root: how far u_formula may be from the exact target (relative), added to the bounds
    spread: bool = False  # root: e = sqrt(u/target) - 1, the quantity against its nominal value

    def from_ratio(self, r: Any) -> Any:
        """e from R (numbers or arrays)."""
        return r - 1 if self.kind == "ratio" else np.sqrt(r) - 1


def _columns(model: ErrorModel, names: tuple[str, ...], values: Sequence[Any]) -> dict[int, Any]:
    ring = model.ring
    columns: dict[int, Any] = {ring.names.index(n): v for n, v in zip(names, values, strict=True)}
    columns[ring.names.index("pi")] = math.pi
    columns.setdefault(0, 0.0)
    return columns


def lowest_root_exact(
    poly: Any, names: tuple[str, ...], ring_names: tuple[str, ...], point: Sequence[Fraction]
) -> float:
    """The lowest positive root u of P at exact part values, from certified complex roots (python-flint).

    With rational coefficients the roots are isolated exactly (``fmpq_poly.complex_roots``);
    when pi is among them (an op-amp's gbw in Hz) the coefficients are balls holding the
    exact numbers at :data:`PRECISION` bits and the roots are isolated by ``acb_poly.roots``,
    each a ball that provably contains one root.
    """
    values: dict[int, Any] = {ring_names.index(n): p for n, p in zip(names, point, strict=True)}
    with_pi = "pi" in ring_names and any(int(raw[ring_names.index("pi")]) for raw in poly.monoms())
    with flint.ctx.workprec(PRECISION):
        if with_pi:
            values = {i: flint.arb(flint.fmpq(v.numerator, v.denominator)) for i, v in values.items()}
            values[ring_names.index("pi")] = flint.arb.pi()
        zero: Any = flint.arb(0) if with_pi else Fraction(0)
        coefficients: dict[int, Any] = {}
        for raw, coeff in zip(poly.monoms(), poly.coeffs(), strict=True):
            monom = tuple(int(e) for e in raw)
            term = flint.arb(int(coeff)) if with_pi else Fraction(int(coeff))
            for index, power in enumerate(monom[1:], start=1):
                if power:
                    term *= values[index] ** power
            coefficients[monom[0]] = coefficients.get(monom[0], zero) + term
        ordered = [coefficients.get(k, zero) for k in range(max(coefficients) + 1)]
        roots: list[Any]
        if with_pi:
            roots = list(flint.acb_poly([flint.acb(c) for c in ordered]).roots())
        else:
            exact = flint.fmpq_poly([flint.fmpq(c.numerator, c.denominator) for c in ordered])
            pairs: list[Any] = list(exact.complex_roots())  # (ball, multiplicity) pairs
            roots = [pair[0] for pair in pairs]
        best = math.inf
        for root in roots:
            if (
                root.imag.contains(0)
                and root.real > 0
                and abs(float(root.imag.mid())) < 1e-30 + 1e-20 * abs(float(root.real.mid()))
            ):
                best = min(best, float(root.real.mid()))
    if not math.isfinite(best):
        raise AuditError("at the nominal values the defining polynomial has no positive root: no such frequency")
    return best


def _root_errors(model: ErrorModel, ranges: Ranges, columns: Sequence[Any], count: int) -> np.ndarray:
    by_index = _columns(model, ranges.names, columns)
    by_index[0] = 1.0
    coefficients = [poly_values(c, by_index) for c in coefficients_in_s(model.ring, model.poly)]
    u = lowest_positive_root(coefficients, count)
    assert model.target is not None
    target = model.target(dict(zip(ranges.names, columns, strict=True)))
    ratio = np.asarray(target, dtype=float) / u
    return np.sqrt(1 / ratio if model.spread else ratio) - 1


def _flip(e: float, outward: float) -> float:
    """1/(1 + e) - 1: an error of u_F/u turned into one of u/u_F, rounded towards ``outward``."""
    return math.nextafter(1 / (1 + e) - 1, outward)


def nominal_error(model: ErrorModel, ranges: Ranges, nominal_target: float | None = None) -> float:
    """The signed relative error at the nominal values (a certified ball for closed forms)."""
    if model.kind == "root":
        u = lowest_root_exact(model.poly, ranges.names, model.ring.names, ranges.nominal)
        assert nominal_target is not None
        return math.sqrt(nominal_target / u) - 1
    return error_at(model, ranges.names, ranges.nominal)


def error_at(model: ErrorModel, names: tuple[str, ...], point: Sequence[Fraction]) -> float:
    """e at an exact point of a closed form, from a ball (no cancellation in R - 1)."""
    assert model.ratio is not None
    with flint.ctx.workprec(PRECISION):
        ball = ratio_ball(model.ratio, names, point)
        return float(ball - 1 if model.kind == "ratio" else ball.sqrt() - 1)


def _point(ranges: Ranges, point: Sequence[Fraction | float]) -> tuple[tuple[str, float], ...]:
    """The varying parts' values at a point (SI)."""
    return tuple(
        (name, float(p)) for name, p, (low, high) in zip(ranges.names, point, ranges.box, strict=True) if low != high
    )


def worst_case(model: ErrorModel, ranges: Ranges, check: Callable[[], None] | None = None) -> WorstCase:
    """The lowest and highest error over the ranges, and where the larger in size occurs."""
    if model.kind == "root":
        return _sampled_worst(model, ranges, check)
    assert model.ratio is not None
    high = extreme(model.ratio, ranges.names, ranges.box, largest=True, check=check)
    low = extreme(model.ratio, ranges.names, ranges.box, largest=False, check=check)
    e_low, e_high = error_at(model, ranges.names, low.point), error_at(model, ranges.names, high.point)
    at = high.point if abs(e_high) >= abs(e_low) else low.point
    if low.value == high.value:
        at = ()  # the same error everywhere: no point is worse than another
    bounds = (
        float(model.from_ratio(max(low.bound, 0.0) if model.kind == "sqrt" else low.bound)),
        float(model.from_ratio(high.bound)),
    )
    where = _point(ranges, at) if at else ()
    return WorstCase(e_low, e_high, where, "ball arithmetic", bounds, low.complete and high.complete)


def _sampled_worst(model: ErrorModel, ranges: Ranges, check: Callable[[], None] | None = None) -> WorstCase:
    varying = [k for k, (lo, hi) in enumerate(ranges.box) if lo != hi]
    per = max(2, min(GRID, int(MAX_GRID ** (1 / max(len(varying), 1)))))
    axes = []
    for lo, hi in ranges.box:
        axes.append([float(lo)] if lo == hi else list(np.linspace(float(lo), float(hi), per)))
    points = np.array(list(itertools.product(*axes)))
    columns = [points[:, k] for k in range(points.shape[1])]
    errors = _root_errors(model, ranges, columns, len(points))
    k_low, k_high = int(np.nanargmin(errors)), int(np.nanargmax(errors))
    worst = k_high if abs(errors[k_high]) >= abs(errors[k_low]) else k_low
    low, high = float(errors[k_low]), float(errors[k_high])
    method = f"sampled on a grid of {len(points)} points, not certified"
    bounds: tuple[float, float] | None = None
    if model.u_formula is not None:
        # the proof is of u_F/u; a spread's errors are of u/u_F, the same bounds turned over
        sampled = (_flip(high, -math.inf), _flip(low, math.inf)) if model.spread else (low, high)
        below, above = certified_bounds(model.poly, model.u_formula, ranges.names, ranges.box, sampled, check)
        if below is not None and above is not None:
            if model.spread:
                below, above = _flip(above, -math.inf), _flip(below, math.inf)
            bounds = (below - model.u_slack, above + model.u_slack)
            method = f"sampled on a grid of {len(points)} points; bounds certified in ball arithmetic"
    return WorstCase(low, high, _point(ranges, points[worst]), method, bounds)


def monte_carlo(model: ErrorModel, ranges: Ranges, samples: int, seed: int, distribution: str) -> MonteCarlo:
    """The distribution of the error over seeded random part values."""
    columns = draw(ranges.box, samples, seed, distribution)
    if model.kind == "root":
        errors = _root_errors(model, ranges, columns, samples)
    else:
        assert model.ratio is not None
        with np.errstate(invalid="ignore", divide="ignore"):
            if model.in_s is not None:  # |F(jw)/T(jw)| - 1 from the few terms of F/T in s
                values = _columns(model, ranges.names, columns)
                values[0] = model.s_value
                errors = np.abs(ratio_values(model.in_s, values)) - 1
            else:
                errors = model.from_ratio(ratio_values(model.ratio, _columns(model, ranges.names, columns)))
    return summarise(np.broadcast_to(np.asarray(errors, dtype=float), (samples,)), distribution, seed)

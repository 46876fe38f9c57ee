"""Verdicts on claimed network functions and claimed lists (poles, zeros, band edges).

A claimed network function (an expression in s, rad/s) agrees exactly when it is the
same rational function; otherwise it is compared over a logarithmic grid of
frequencies spanning every pole and zero of both functions (a decade beyond each
side): the error is the largest of abs(Hc(jw) - H(jw)) / abs(H(jw)), allowed up to the
step's percentage, or under "digits" up to the claim's resolution (the relative
digits of its written numbers added, see :func:`handcheck.verify.claims.read_claim`). A list claim agrees when it
has as many values as the quantity and each claimed value, paired with the nearest
true value not yet taken, agrees with it (each within its own digits or the
percentage). A claimed function that differs is tried against the frequency-unit
slip (s scaled by 2*pi, codes ``hertz-as-angular`` and ``angular-as-hertz``).
"""

from __future__ import annotations

import dataclasses
import math

import mpmath
import sympy

from handcheck.errors import UnitError
from handcheck.verify.claims import LAPLACE, Claim, Tolerance, agrees, relative_error, to_complex
from handcheck.verify.findings import Diagnosis, Expected, StepBase, StepFinding
from handcheck.verify.present import describe_rational, format_number, format_value
from handcheck.worksheet.evaluate import Value
from handcheck.worksheet.units import DIMENSIONLESS, dim_of

__all__ = ["S_IN_FORMULAS", "check_function_of_s", "check_list"]

#: The s of a network function's formula: beside part values it is in 1/s (rad/s), so
#: that s*R1*C1 has no unit.
S_IN_FORMULAS = Value(LAPLACE, DIMENSIONLESS / dim_of("s"))
#: Points of the comparison grid.
GRID = 241


def _roots(expr: sympy.Expr) -> list[complex]:
    num, den = sympy.fraction(sympy.cancel(sympy.together(expr)))
    out: list[complex] = []
    for part in (num, den):
        poly = sympy.Poly(part, LAPLACE)
        if poly.degree() > 0:
            coeffs = [complex(sympy.N(c, 30)) for c in poly.all_coeffs()]
            out.extend(complex(r) for r in mpmath.polyroots(coeffs, maxsteps=200, extraprec=60))
    return out


def _grid(truth: sympy.Expr, claimed: sympy.Expr) -> list[float]:
    """Angular frequencies (rad/s) from a decade below the smallest nonzero pole or zero
    size to a decade above the largest (the roots only place the grid)."""
    sizes = [abs(r) for r in _roots(truth) + _roots(claimed) if abs(r) > 0]
    low, high = (min(sizes) / 10, max(sizes) * 10) if sizes else (0.1, 10.0)
    step = (math.log10(high) - math.log10(low)) / (GRID - 1)
    return [10 ** (math.log10(low) + k * step) for k in range(GRID)]


def _at(expr: sympy.Expr, w: float) -> complex:
    f = sympy.lambdify(LAPLACE, expr, "mpmath")
    return complex(f(mpmath.mpc(0, w)))


def check_function_of_s(
    base: StepBase, claim: Claim, truth: Value, tolerance: Tolerance, formula: Value | UnitError | None = None
) -> StepFinding:
    """The verdict on a claimed network function against the exact one, and on the step's
    ``formula`` (evaluated on the true part values, or the unit error it raised) where it
    has one."""
    found = _claimed_function(base, claim, truth, tolerance)
    if formula is None or found.verdict == "unit":
        return found
    if isinstance(formula, UnitError):
        message = f"the formula is not consistent in its units: {formula.message}"
        return dataclasses.replace(found, verdict="unit", message=message)
    return _with_formula(found, claim, truth, tolerance, formula)


def _allowed(claim: Claim, tolerance: Tolerance) -> float:
    """The largest relative difference a claimed function may have: the step's percentage,
    or the claim's own digits."""
    return tolerance.relative if tolerance.relative is not None else max(claim.resolution[0], 1e-12)


def _same_function(a: sympy.Expr, b: sympy.Expr, limit: float) -> bool:
    """Whether two functions of s are the same exactly, or within ``limit`` over the grid."""
    if sympy.cancel(sympy.together(a - b)) == 0:
        return True
    return _largest_difference(a, b, _grid(a, b))[0] <= limit


def _with_formula(found: StepFinding, claim: Claim, truth: Value, tolerance: Tolerance, formula: Value) -> StepFinding:
    """The finding of the claim, judged again with the step's formula (worksheet format 1:
    ``formula`` when the formula on true inputs is not the quantity, ``arithmetic`` when the
    claim does not follow from a right formula)."""
    written = f"{describe_rational(formula.expr)} {claim.unit_text}".strip()
    if formula.dim != truth.dim:
        message = f"the formula is in {formula.dim or 'no unit'}, but the quantity is in {truth.dim or 'no unit'}"
        return dataclasses.replace(found, recomputed=written, verdict="unit", message=message)
    limit = _allowed(claim, tolerance)
    right = _same_function(formula.expr, truth.expr, limit)
    if found.verdict == "agrees":
        notes = () if right else (f"the claim is right, but the formula as written gives {written}",)
        return dataclasses.replace(found, recomputed=written, notes=found.notes + notes)
    if right:
        message = f"the formula is right, but the claim does not follow from it: it gives {written}"
        return dataclasses.replace(found, recomputed=written, verdict="arithmetic", message=message)
    message = f"the formula, on the true part values, is not the circuit's network function: it gives {written}"
    return dataclasses.replace(found, recomputed=written, verdict="formula", message=message)


def _claimed_function(base: StepBase, claim: Claim, truth: Value, tolerance: Tolerance) -> StepFinding:
    """The verdict on the claimed function alone."""
    shown: Expected = {
        "expected": f"{describe_rational(truth.expr)} {claim.unit_text}".strip(),
        "exact": truth.expr,
        "expected_si": None,
    }
    if claim.dim != truth.dim:
        return StepFinding(
            **base,
            **shown,
            verdict="unit",
            message=f"the claim is in {claim.dim or 'no unit'}, but the quantity is in {truth.dim or 'no unit'}",
        )
    if sympy.cancel(sympy.together(claim.value.expr - truth.expr)) == 0:
        return StepFinding(
            **base, **shown, verdict="agrees", error=0.0, message="the same rational function of s, exactly"
        )
    grid = _grid(truth.expr, claim.value.expr)
    error, worst = _largest_difference(truth.expr, claim.value.expr, grid)
    limit = _allowed(claim, tolerance)
    message = (
        f"compared at {GRID} frequencies from {format_number(grid[0], 4)} to {format_number(grid[-1], 4)} rad/s; "
        f"largest relative difference {error:.3g} at {format_number(worst, 4)} rad/s (allowed {limit:.3g})"
    )
    if error <= limit:
        return StepFinding(**base, **shown, verdict="agrees", error=error, message=message)
    found = _s_scaled(truth.expr, claim.value.expr, limit, f"{describe_rational(truth.expr)} {claim.unit_text}".strip())
    return StepFinding(**base, **shown, verdict="differs", error=error, message=message, diagnosis=found)


def _largest_difference(truth: sympy.Expr, claimed: sympy.Expr, grid: list[float]) -> tuple[float, float]:
    """The largest abs(Hc(jw) - H(jw)) / abs(H(jw)) over the grid, and the w where it is."""
    f_true = sympy.lambdify(LAPLACE, truth, "mpmath")
    f_claim = sympy.lambdify(LAPLACE, claimed, "mpmath")
    error, worst = 0.0, grid[0]
    for w in grid:
        s = mpmath.mpc(0, w)
        exact = complex(f_true(s))
        try:
            written = complex(f_claim(s))
        except ZeroDivisionError:
            written = complex(math.inf)
        e = abs(written - exact) / abs(exact) if exact != 0 else abs(written)
        if e > error:
            error, worst = e, w
    return error, worst


def _s_scaled(truth: sympy.Expr, claimed: sympy.Expr, limit: float, right: str) -> tuple[Diagnosis, ...]:
    """The frequency-unit slip inside H(s): the claim is the true function with s
    multiplied by 2*pi (its poles and zeros at 1/(2*pi) of the circuit's, figures in
    hertz where s = jw needs rad/s, as a habitual 2*pi*f written with s for f gives)
    or divided by it (2*pi applied to figures already in rad/s). Hertz and radians per
    second confused is common practice's most frequent slip in filter notes; s is in
    rad/s (DESIGN, "Readings that the tests rely on")."""
    for factor, code, how in (
        (
            2 * sympy.pi,
            "hertz-as-angular",
            "multiplied by 2*pi: its poles and zeros sit at 1/(2*pi) of the circuit's, "
            "their values in hertz where s needs rad/s (s = jw is angular already: a 2*pi*s, as in 2*pi*f, does not "
            "belong in H(s))",
        ),
        (
            1 / (2 * sympy.pi),
            "angular-as-hertz",
            "divided by 2*pi: its poles and zeros sit at 2*pi times the "
            "circuit's (2*pi applied to figures already in rad/s)",
        ),
    ):
        moved = truth.subs(LAPLACE, factor * LAPLACE)
        if sympy.cancel(sympy.together(moved - truth)) == 0:
            continue  # a function without s (or of s only through a constant) tells nothing
        grid = _grid(moved, claimed)
        if _largest_difference(moved, claimed, grid)[0] <= limit:
            detail = f"the claim is the network function with s {how}: write {right}, what the circuit gives"
            return (Diagnosis(code, detail),)
    return ()


def check_list(base: StepBase, claim: Claim, truths: tuple[Value, ...], tolerance: Tolerance) -> StepFinding:
    """The verdict on a claimed list of values (poles, zeros, band edges)."""
    items = claim.items or (claim,)
    first = truths[0] if truths else None
    shown: Expected = {
        "expected": ", ".join(format_value(t, items[0]) for t in truths) or "none",
        "expected_si": (to_complex(first.expr).real, to_complex(first.expr).imag) if first is not None else None,
        "exact": sympy.Tuple(*(t.expr for t in truths)),
    }
    if any(item.dim != t.dim for item in items for t in truths[:1]):
        return StepFinding(
            **base,
            **shown,
            verdict="unit",
            message=f"the claim is in {items[0].dim or 'no unit'}, but the quantity is in {truths[0].dim or 'no unit'}",
        )
    if len(items) != len(truths):
        return StepFinding(
            **base, **shown, verdict="differs", message=f"{len(items)} values claimed, the quantity has {len(truths)}"
        )
    remaining = [to_complex(t.expr) for t in truths]
    worst = 0.0
    ok = True
    for item in items:
        value = to_complex(item.value.expr)
        nearest = min(remaining, key=lambda r: abs(r - value))
        remaining.remove(nearest)
        error = relative_error(item, nearest) or 0.0
        worst = max(worst, error)
        ok = ok and agrees(item, nearest, tolerance)
        if item.form == "real" and abs(nearest.imag) > 1e-12 * abs(nearest):
            ok = False  # a real number claimed for a complex root
    return StepFinding(**base, **shown, verdict="agrees" if ok else "differs", error=worst)

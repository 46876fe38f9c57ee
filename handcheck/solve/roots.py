"""Roots of a circuit's characteristic polynomial: exact where a closed form exists.

A polynomial with exact coefficients (over the rationals, or over an algebraic
number field when a coupling brings a square root into the circuit) is split into
its irreducible factors, exactly. Each distinct root then belongs to exactly one
factor and its multiplicity is exact, however close two roots lie. Roots of a
factor of degree one or two are kept in closed form (the quadratic formula);
roots of a factor of degree three or more are isolated numerically:

* over the rationals, with python-flint's certified complex root isolation
  (``fmpq_poly.complex_roots``, arb midpoint-radius balls) at a working
  precision of :data:`WORK_DPS` digits, and each ball's radius is checked to be
  below ``10**-WORK_DPS`` relative, so every digit reported is proven;
* over an algebraic field, with ``mpmath.polyroots`` (Durand-Kerner) at the
  same working precision on the coefficients evaluated to that precision; the
  factor is irreducible and hence squarefree, so the roots are simple and the
  iteration converges; its error estimate is checked.

Sources: irreducible factorisation over Q (Zassenhaus / van Hoeij, as
implemented in FLINT) and the quadratic formula are standard (from memory); the
certified root isolation is FLINT's ``arb_fmpz_poly_complex_roots`` (FLINT / Arb
documentation, from memory).

Every root also records the sign of its real part (-1, 0 or +1), decided exactly:
for closed forms by sympy's exact sign test, for balls by the ball excluding
zero, and for an even factor ``f(s) = g(s**2)`` a root whose ball meets the
imaginary axis is put on it exactly (its square is then a negative real root of
``g``; an irreducible factor has a root on the imaginary axis only if it is even
or odd, and an odd irreducible factor is ``s`` itself).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # pragma: no cover - typing only
    import mpmath
    import sympy

__all__ = ["WORK_DPS", "Factor", "Root", "approx", "factor_roots", "irreducible_factors"]

#: Working precision in decimal digits for every numerical step (roots, residues,
#: evaluation). Results are quoted to 30 significant digits; the margin absorbs the
#: loss in residues of close poles.
WORK_DPS = 60


@dataclass(frozen=True)
class Root:
    """One root of an irreducible factor.

    Attributes
    ----------
    exact : sympy.Expr or None
        The closed form (degree-one or degree-two factor), else None.
    approx : mpmath.mpc
        The value to at least :data:`WORK_DPS` significant digits.
    real_sign : int
        Sign of the real part: -1, 0 or +1 (decided exactly, see the module notes).
    imag_sign : int
        Sign of the imaginary part: -1, 0 (a real root) or +1.
    """

    exact: Any
    approx: Any
    real_sign: int
    imag_sign: int

    @property
    def value(self) -> Any:
        """The exact closed form when there is one, else the numerical value."""
        return self.exact if self.exact is not None else self.approx


@dataclass(frozen=True)
class Factor:
    """A monic irreducible factor and its roots (conjugate pairs adjacent, upper one first)."""

    poly: Any  # sympy.Poly in s
    roots: tuple[Root, ...]

    @property
    def degree(self) -> int:
        return int(self.poly.degree())

    @property
    def exact(self) -> bool:
        return all(r.exact is not None for r in self.roots)


def approx(value: Any, dps: int = WORK_DPS) -> mpmath.mpc:
    """An exact sympy number (or an mpmath number) as an ``mpmath.mpc`` at ``dps`` digits.

    Parameters
    ----------
    value : sympy.Expr, int, fractions.Fraction, mpmath.mpf or mpmath.mpc
        An exact number, or an mpmath number (returned as it is, made complex).
    dps : int
        Decimal digits.

    Returns
    -------
    mpmath.mpc
    """
    import mpmath
    import sympy

    with mpmath.workdps(dps):
        if isinstance(value, (mpmath.mpf, mpmath.mpc)):
            return mpmath.mpc(value)
        expr = _exact_number(value)
        number = sympy.N(expr, dps + 10)
        re, im = number.as_real_imag()
        return mpmath.mpc(mpmath.mpf(sympy.Float(re, dps + 10)), mpmath.mpf(sympy.Float(im, dps + 10)))


def _exact_number(value: Any) -> sympy.Expr:
    """An int, Fraction or sympy number as a sympy number (no text is ever parsed)."""
    from fractions import Fraction

    import sympy

    if isinstance(value, sympy.Basic):
        return value
    if isinstance(value, bool) or not isinstance(value, (int, Fraction)):
        raise TypeError(f"an exact number is needed here, not {type(value).__name__}")
    if isinstance(value, Fraction):
        return sympy.Rational(value.numerator, value.denominator)
    return sympy.Integer(value)


def irreducible_factors(poly: sympy.Poly) -> list[tuple[sympy.Poly, int]]:
    """Split a polynomial into monic irreducible factors with multiplicities, exactly.

    Parameters
    ----------
    poly : sympy.Poly
        Univariate, over ``QQ`` or an algebraic field ``QQ<a>``; not zero.

    Returns
    -------
    list of (sympy.Poly, int)
        Monic irreducible factors (over the same domain) and their multiplicities,
        ordered by degree, then by coefficients.

    Notes
    -----
    Over ``QQ`` python-flint's ``fmpq_poly.factor`` is used; over an algebraic
    field, sympy's ``Poly.factor_list`` (Trager's norm method, from memory).
    """
    import sympy

    if poly.is_zero:
        raise ValueError("the zero polynomial has no factorisation")
    gen = poly.gen
    domain = poly.domain
    if poly.degree() <= 0:
        return []
    out: list[tuple[sympy.Poly, int]] = []
    if domain.is_QQ or domain.is_ZZ:
        import flint

        coeffs = [flint.fmpq(int(c.p), int(c.q)) for c in (sympy.Rational(x) for x in reversed(poly.all_coeffs()))]
        _, factors = flint.fmpq_poly(coeffs).factor()
        for f, mult in factors:
            fc = [sympy.Rational(int(c.p), int(c.q)) for c in f.coeffs()]
            p = sympy.Poly(list(reversed(fc)), gen, domain=sympy.QQ).monic()
            out.append((p, int(mult)))
    else:
        _, factors = poly.factor_list()
        for f, mult in factors:
            out.append((f.monic(), int(mult)))
    out.sort(key=lambda fm: (fm[0].degree(), [str(c) for c in fm[0].all_coeffs()]))
    return out


def _exact_sign(value: sympy.Expr) -> int:
    import sympy

    if value.is_zero:
        return 0
    if value.is_positive:
        return 1
    if value.is_negative:
        return -1
    simplified = sympy.simplify(value)
    if simplified.is_zero:
        return 0
    if simplified.is_positive:
        return 1
    if simplified.is_negative:
        return -1
    raise ArithmeticError(f"cannot decide the sign of {value}")


def _closed_form_roots(poly: sympy.Poly) -> tuple[Root, ...]:
    import sympy

    coeffs = poly.all_coeffs()
    if poly.degree() == 1:
        r = sympy.radsimp(-coeffs[1] / coeffs[0])
        return (Root(r, approx(r), _exact_sign(r), 0),)
    a, b, c = coeffs
    b, c = b / a, c / a
    disc = sympy.radsimp(sympy.expand(b * b - 4 * c))
    dsign = _exact_sign(disc)
    re = sympy.radsimp(-b / 2)
    if dsign < 0:
        im = sympy.radsimp(sympy.sqrt(-disc) / 2)
        rsign = _exact_sign(re)
        upper = re + sympy.I * im
        lower = re - sympy.I * im
        return (Root(upper, approx(upper), rsign, 1), Root(lower, approx(lower), rsign, -1))
    half = sympy.radsimp(sympy.sqrt(disc) / 2)
    first, second = re + half, re - half  # first > second
    return (Root(first, approx(first), _exact_sign(first), 0), Root(second, approx(second), _exact_sign(second), 0))


def _is_even(poly: sympy.Poly) -> bool:
    coeffs = list(reversed(poly.all_coeffs()))
    return all(c == 0 for k, c in enumerate(coeffs) if k % 2 == 1)


def _numeric_roots_qq(poly: sympy.Poly) -> tuple[Root, ...]:
    import flint
    import mpmath
    import sympy

    coeffs = [flint.fmpq(int(sympy.Rational(c).p), int(sympy.Rational(c).q)) for c in reversed(poly.all_coeffs())]
    even = _is_even(poly)
    roots: list[Root] = []
    bits = int(WORK_DPS * 3.33) + 64
    with flint.ctx.workprec(bits):
        # python-flint 0.9's stub says list[acb]; complex_roots() returns (root, multiplicity) pairs
        found: list[tuple[flint.acb, int]] = flint.fmpq_poly(coeffs).complex_roots()  # type: ignore[assignment]
        for ball, mult in found:
            if mult != 1:  # an irreducible factor is squarefree
                raise ArithmeticError("an irreducible factor reported a repeated root")
            re_ball, im_ball = ball.real, ball.imag
            with mpmath.workdps(WORK_DPS + 20):
                value = mpmath.mpc(_arb_mid(re_ball), _arb_mid(im_ball))
                radius = _arb_mid(ball.rad())
                if radius > mpmath.mpf(10) ** (-WORK_DPS) * max(mpmath.mpf(1), abs(value)):
                    raise ArithmeticError("certified root isolation did not reach the working precision")
            if im_ball.is_zero():
                isign = 0
            elif 0 in im_ball:
                raise ArithmeticError("a root ball straddles the real axis")
            else:
                isign = 1 if im_ball > 0 else -1
            if re_ball.is_zero() or (0 in re_ball and even):
                rsign = 0
                value = mpmath.mpc(0, value.imag)
            elif 0 in re_ball:
                raise ArithmeticError("a root ball straddles the imaginary axis")
            else:
                rsign = 1 if re_ball > 0 else -1
            roots.append(Root(None, value, rsign, isign))
    return _ordered(roots)


def _arb_mid(x: Any) -> mpmath.mpf:
    """The exact midpoint of an arb ball as an mpmath number."""
    import mpmath

    mid = x.mid()
    man, exp = mid.man_exp()
    return mpmath.ldexp(mpmath.mpf(int(man)), int(exp))


def _numeric_roots_algebraic(poly: sympy.Poly) -> tuple[Root, ...]:
    import mpmath

    even = _is_even(poly)
    with mpmath.workdps(WORK_DPS + 30):
        coeffs = [approx(c, WORK_DPS + 30) for c in poly.all_coeffs()]
        found, err = mpmath.polyroots(coeffs, maxsteps=400, extraprec=2 * (WORK_DPS + 30), error=True)
        scale = max(abs(r) for r in found) if found else mpmath.mpf(1)
        if err > mpmath.mpf(10) ** (-WORK_DPS) * max(scale, 1):
            raise ArithmeticError("polynomial roots did not converge to the working precision")
        tiny = mpmath.mpf(10) ** (-(WORK_DPS + 10))
        roots = []
        for found_root in found:
            r = mpmath.mpc(found_root)
            isign = 0 if abs(r.imag) <= tiny * max(abs(r), 1) else (1 if r.imag > 0 else -1)
            if isign == 0:
                r = mpmath.mpc(r.real, 0)
            if abs(r.real) <= tiny * max(abs(r), 1):
                if not even:
                    raise ArithmeticError("cannot decide whether a root lies on the imaginary axis")
                rsign = 0
                r = mpmath.mpc(0, r.imag)
            else:
                rsign = 1 if r.real > 0 else -1
            roots.append(Root(None, r, rsign, isign))
    return _ordered(roots)


def _ordered(roots: list[Root]) -> tuple[Root, ...]:
    """Real roots, then conjugate pairs (upper first), each group by real part."""
    real = sorted((r for r in roots if r.imag_sign == 0), key=lambda r: -r.approx.real)
    upper = sorted((r for r in roots if r.imag_sign > 0), key=lambda r: (-r.approx.real, r.approx.imag))
    lower = [r for r in roots if r.imag_sign < 0]
    out = list(real)
    for u in upper:
        partner = min(lower, key=lambda r: abs(r.approx - u.approx.conjugate()))
        lower.remove(partner)
        out.extend([u, partner])
    if lower:
        raise ArithmeticError("complex roots do not come in conjugate pairs")
    return tuple(out)


def factor_roots(poly: sympy.Poly) -> tuple[Factor, ...]:
    """Roots of an irreducible (monic) factor or of every factor of a polynomial.

    Parameters
    ----------
    poly : sympy.Poly
        Univariate with exact coefficients (``QQ`` or an algebraic field).

    Returns
    -------
    tuple of Factor
        One entry per distinct irreducible factor (multiplicities are not kept
        here; see :func:`irreducible_factors`).

    Examples
    --------
    >>> import sympy
    >>> s = sympy.Symbol("s")
    >>> [f.roots[0].exact for f in factor_roots(sympy.Poly(s**2 + 3*s + 2, s, domain="QQ"))]
    [-1, -2]
    """
    out = []
    for f, _ in irreducible_factors(poly):
        out.append(Factor(f, roots_of_irreducible(f)))
    return tuple(out)


def roots_of_irreducible(factor: sympy.Poly) -> tuple[Root, ...]:
    """The roots of one monic irreducible factor: closed forms up to degree two."""
    if factor.degree() <= 2:
        return _closed_form_roots(factor)
    if factor.domain.is_QQ or factor.domain.is_ZZ:
        return _numeric_roots_qq(factor)
    return _numeric_roots_algebraic(factor)

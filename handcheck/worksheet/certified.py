"""Certified floating-point values of exact expressions, by ball arithmetic.

An exact value (a sympy expression of rationals, pi, I, powers and the elementary
functions) is evaluated with python-flint's ``acb`` ball arithmetic: every operation
returns a midpoint and a radius that is guaranteed to enclose the true result
(interval arithmetic with midpoint-radius balls; F. Johansson, "Arb: efficient
arbitrary-precision midpoint-radius interval arithmetic", IEEE Trans. Computers 66,
2017 -- from memory). The working precision doubles until the ball is narrower than
the double it rounds to, so the returned float carries a rigorous error bound
(:attr:`Certified.bound`). A tree of some hundred terms takes about a millisecond,
where sympy's 30-digit ``evalf`` of the same tree took 0.1 s.

An expression this evaluator does not know (a function outside the table below, a
singular point where no ball can be narrow) gives ``None``; the caller then falls
back to sympy's own arithmetic.

A large exact value that is no fraction of polynomials in pi (a chain of steps with
sqrt(2) or cos(0.3) in it) is held by the formula evaluator as a :class:`Held`
number: an atom to sympy, defined by its exact expression. Sympy's arithmetic and
tree walks see one symbol-like number, where the expression itself holds the
previous step twice (a tree doubling along the chain); ball arithmetic evaluates the
definition over its graph, each distinct subexpression once, so a chain costs time
linear in its length. Its value is never a float: sympy's ``evalf`` of a held number
is the ball's midpoint at a precision where the ball is narrower than the digits
asked for, and a :class:`~handcheck.errors.LimitError` when no precision up to
``PRECISIONS[-1]`` bits is (an exact zero, for one).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import sympy

from handcheck.errors import LimitError

__all__ = ["Certified", "Held", "certify"]

#: Precisions tried, in bits (the last is about 300 digits).
PRECISIONS = (96, 192, 384, 1000)
#: Required relative width of the ball against the value's magnitude.
WIDTH = 2.0**-62


class _UnknownError(Exception):
    """An expression the ball evaluator does not handle."""


@dataclass(frozen=True)
class Certified:
    """A complex double with a rigorous bound on its distance to the exact value.

    ``abs(exact.real - value.real) <= bound`` and the same for the imaginary part.
    """

    value: complex
    bound: float
    prec: int


def _ball(expr: sympy.Expr, memo: dict[sympy.Expr, Any]) -> Any:
    import flint

    hit = memo.get(expr)
    if hit is not None:
        return hit
    if isinstance(expr, Held):
        out = expr.ball(memo)
    elif expr.is_Rational:
        out = flint.acb(flint.arb(flint.fmpq(int(expr.p), int(expr.q))))
    elif expr is sympy.pi:
        out = flint.acb(flint.arb.pi())
    elif expr is sympy.E:
        out = flint.acb(flint.arb.const_e())
    elif expr is sympy.I:
        out = flint.acb(0, 1)
    elif expr.is_Add:
        out = flint.acb(0)
        for a in expr.args:
            out = out + _ball(a, memo)
    elif expr.is_Mul:
        out = flint.acb(1)
        for a in expr.args:
            out = out * _ball(a, memo)
    elif expr.is_Pow:
        base, exp = expr.args
        b = _ball(base, memo)
        if exp.is_Integer:
            n = int(exp)
            out = b**n if n >= 0 else 1 / (b ** (-n))
        elif exp == sympy.S.Half:
            out = b.sqrt()
        else:
            out = b ** _ball(exp, memo)  # principal branch, as sympy's
    else:
        out = _function(expr, memo)
    memo[expr] = out
    return out


def _function(expr: sympy.Expr, memo: dict[sympy.Expr, Any]) -> Any:
    import flint

    args = [_ball(a, memo) for a in expr.args]
    name = type(expr).__name__
    one = {
        "exp": lambda z: z.exp(),
        "log": lambda z: z.log(),
        "sin": lambda z: z.sin(),
        "cos": lambda z: z.cos(),
        "tan": lambda z: z.tan(),
        "atan": lambda z: z.atan(),
        "Abs": lambda z: flint.acb(abs(z)),
        "re": lambda z: flint.acb(z.real),
        "im": lambda z: flint.acb(z.imag),
        "arg": lambda z: flint.acb(z.arg()),
        "conjugate": lambda z: z.conjugate(),
    }
    if name in one and len(args) == 1:
        return one[name](args[0])
    if name == "atan2" and len(args) == 2 and all(a.imag == 0 for a in args):
        return flint.acb(flint.arb.atan2(args[0].real, args[1].real))
    raise _UnknownError(name)


def _narrow(part: Any, scale: float) -> bool:
    return math.isfinite(float(part.rad())) and float(part.rad()) <= WIDTH * scale


def certify(expr: sympy.Expr) -> Certified | None:
    """The exact number ``expr`` as a certified complex double, or None.

    Parameters
    ----------
    expr
        An exact sympy number (no free symbols).

    Returns
    -------
    Certified or None
        None when an operation is not in the evaluator's table, the value is not
        finite, or no precision up to ``PRECISIONS[-1]`` bits gives a narrow ball
        (an exact zero written as a difference, for one).

    Examples
    --------
    >>> c = certify(sympy.sqrt(2) * sympy.exp(sympy.I * sympy.pi / 4))
    >>> c.value, c.bound < 1e-15
    ((1+1j), True)
    """
    import flint

    saved = flint.ctx.prec
    try:
        for prec in PRECISIONS:
            flint.ctx.prec = prec
            try:
                z = _ball(_exact(expr), {})
            except (_UnknownError, ZeroDivisionError, ValueError, TypeError):
                return None
            re, im = z.real, z.imag
            magnitude = float(abs(z).mid()) if z.is_finite() else math.inf
            if not math.isfinite(magnitude):
                return None
            if magnitude == 0.0 or not (_narrow(re, magnitude) and _narrow(im, magnitude)):
                continue
            parts = []
            for part in (re, im):
                # a ball around 0 narrower than the value's rounding is reported as 0
                parts.append(0.0 if part.contains(0) else float(part.mid()))
            value = complex(parts[0], parts[1])
            if not (math.isfinite(value.real) and math.isfinite(value.imag)):
                return None
            width = max(float(re.rad()), float(im.rad()))
            bound = width + 2.0**-52 * max(abs(value.real), abs(value.imag)) + (width if 0.0 in parts else 0.0)
            return Certified(value, bound, prec)
        return None
    finally:
        flint.ctx.prec = saved


def _exact(x: Any) -> sympy.Expr:
    if isinstance(x, sympy.Basic):
        return x  # type: ignore[return-value]
    if isinstance(x, (int, Fraction)) and not isinstance(x, bool):
        return sympy.Rational(x)
    raise TypeError(f"not an exact number: {type(x).__name__}")


def _enclosure(expr: sympy.Expr, bits: int) -> Any:
    """A ball around ``expr`` of relative width below 2**-bits (None if there is none)."""
    import flint

    saved = flint.ctx.prec
    try:
        for prec in (*(p for p in PRECISIONS if p > bits + 20), PRECISIONS[-1] * 4):
            flint.ctx.prec = max(prec, bits + 30)
            try:
                z = _ball(expr, {})
            except (_UnknownError, ZeroDivisionError, ValueError, TypeError):
                return None
            if not z.is_finite():
                return None
            size = abs(z).lower()
            if size > 0 and max(z.real.rad(), z.imag.rad()) <= size * flint.arb(2) ** -bits:
                return z
        return None
    finally:
        flint.ctx.prec = saved


def _float(part: Any, prec: int) -> sympy.Float:
    from mpmath.libmp import from_man_exp

    man, exp = part.mid().man_exp()
    return sympy.Float._new(from_man_exp(int(man), int(exp), prec), prec)


def _decimal(value: complex) -> str:
    real = f"{value.real:.12g}..."
    if value.imag == 0:
        return real
    sign = "-" if value.imag < 0 else "+"
    return f"({real} {sign} {abs(value.imag):.12g}...j)"


class Held(sympy.AtomicExpr):
    """A large exact number held by name: an atom to sympy, defined by an exact expression.

    Parameters
    ----------
    definition
        The exact value (rationals, pi, I, elementary functions and other held
        numbers): ball arithmetic (:func:`certify`) evaluates it, sympy does not look
        inside.

    Examples
    --------
    >>> x = Held(sympy.sqrt(2) + sympy.pi)
    >>> x.args, certify(x * x - 2 * sympy.pi * x).value
    ((), (-7.869604401089359+0j))
    """

    is_number = True
    is_commutative = True
    definition: sympy.Expr
    _balls: dict[int, Any]
    _certified: list[Certified | None]

    def __new__(cls, definition: sympy.Expr) -> Held:
        obj = super().__new__(cls)
        obj.definition = definition
        obj._balls = {}  # its ball at each working precision, made once (not pickled)
        obj._certified = []  # certify(obj), once
        return obj

    def ball(self, memo: dict[sympy.Expr, Any]) -> Any:
        """The ball of the definition at the working precision (python-flint's ``ctx.prec``)."""
        import flint

        prec = flint.ctx.prec
        if prec not in self._balls:
            self._balls[prec] = _ball(self.definition, memo)
        return self._balls[prec]

    def certified(self) -> Certified | None:
        """:func:`certify` of this number, computed once."""
        if not self._certified:
            self._certified.append(certify(self))
        return self._certified[0]

    def __getnewargs__(self) -> tuple[sympy.Expr]:
        return (self.definition,)

    def _hashable_content(self) -> tuple[sympy.Expr]:
        return (self.definition,)

    def _eval_evalf(self, prec: int) -> sympy.Expr:
        z = _enclosure(self.definition, prec)
        if z is None:
            raise LimitError(
                "a large exact value of a chain of steps cannot be certified to "
                f"{int(prec * 0.30103)} digits (it may be exactly zero); write that step's value as a number"
            )
        real, imag = _float(z.real, prec), _float(z.imag, prec)
        return real if z.imag.is_zero() else real + sympy.I * imag

    # sympy's own assumptions would round the value; a held number answers only what its
    # ball proves (None: not known)
    def _eval_is_zero(self) -> bool | None:
        c = self.certified()
        return False if c is not None and abs(c.value) > 2 * c.bound else None

    def _eval_is_extended_real(self) -> bool | None:
        c = self.certified()
        return False if c is not None and abs(c.value.imag) > c.bound else None

    def _eval_is_extended_positive(self) -> bool | None:
        c = self.certified()
        return False if c is not None and (abs(c.value.imag) > c.bound or c.value.real < -c.bound) else None

    def _eval_is_extended_negative(self) -> bool | None:
        c = self.certified()
        return False if c is not None and (abs(c.value.imag) > c.bound or c.value.real > c.bound) else None

    def _shown(self) -> str:
        certified = self.certified()
        return "(held value)" if certified is None else _decimal(certified.value)

    def _sympystr(self, printer: object) -> str:
        return self._shown()

    def _latex(self, printer: object) -> str:
        return r"\text{" + self._shown() + "}"

    def _mathml_presentation(self, printer: object) -> object:
        element = printer.dom.createElement("mn")  # type: ignore[attr-defined]
        element.appendChild(printer.dom.createTextNode(self._shown()))  # type: ignore[attr-defined]
        return element

"""Rounding carried forward: the author's formula over the intervals of the written numbers.

A number an author writes stands for every value that rounds to it: half a unit in
its last digit either side of each written number (real and imaginary part, or
magnitude and angle), or the stated percentage (the usual reading of a rounded
figure, common practice). Each earlier step a formula uses is carried as that
interval, as a midpoint-radius ball, and the formula is evaluated over the balls with
python-flint's ``acb`` ball arithmetic, which encloses every value the formula can
take when each input ranges over its ball (F. Johansson, "Arb: efficient
arbitrary-precision midpoint-radius interval arithmetic", IEEE Trans. Computers 66,
2017; from memory). Part values, ``f``, ``w`` and the numbers in the formula are exact
and enter as balls of their certified values.

A claim *follows from the rounded values* of earlier steps when the true value lies
inside that ball widened by the claim's own digits (:func:`within`): rounding alone
then explains the difference, however large.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

import sympy

from handcheck.verify.claims import SLACK, Claim, Tolerance, to_complex
from handcheck.worksheet.evaluate import Value, unit_of
from handcheck.worksheet.expr import Binary, Call, Name, Node, Number, Unary

__all__ = [
    "Written",
    "by_size",
    "claim_ball",
    "describe",
    "holds_claim",
    "inside_claim",
    "propagate",
    "widened",
    "within",
]

#: Working precision of the balls, in bits (about 38 decimal digits).
PRECISION = 128
#: Relative width added to a ball made from a double (its rounding, with room).
_ULP = 2.0**-50


@dataclass(frozen=True)
class Written:
    """An earlier step's claim as written and the tolerance it was judged with."""

    claim: Claim
    tolerance: Tolerance
    #: for a step that agreed through rounding: the values its own inputs' digits allow
    #: (widened by its digits), which hold its true value; carried on with the claim's
    carried: Any = None


class _UnboundedError(Exception):
    """The balls give no finite enclosure (a division by a ball around zero)."""


def _point(z: complex, extra: float = 0.0) -> Any:
    """A ball around a double: its rounding and ``extra`` on each part."""
    import flint

    re_rad = abs(z.real) * _ULP + extra
    im_rad = abs(z.imag) * _ULP + extra
    return flint.acb(flint.arb(z.real, re_rad), flint.arb(z.imag, im_rad))


def _exact(expr: sympy.Expr) -> Any:
    """A ball enclosing an exact value (certified where ball arithmetic can, else 30 digits)."""
    import flint

    from handcheck.solve.certified import certify

    if expr == 0:
        return flint.acb(0)
    if expr.is_Rational:
        return flint.acb(flint.arb(flint.fmpq(int(expr.p), int(expr.q))))
    certified = certify(expr)
    if certified is not None:
        z, extra = certified.value, certified.bound
    else:
        z = to_complex(expr)
        extra = 1e-25 * abs(z)
    ball = _point(z, extra)
    return flint.acb(ball.real) if z.imag == 0 and expr.is_extended_real else ball


def claim_ball(written: Written) -> Any:
    """Every value the written claim stands for, as a ball.

    "digits": each written number within half a unit in its last digit (a polar claim
    as a magnitude ball times a unit phasor over the angle's ball, which encloses the
    sector); a percentage: the disc of that relative radius around the claim, widened
    so that it holds every true value the claim agrees with (``|c - t| <= p |t|``
    gives ``|c - t| <= p |c| / (1 - p)``).
    """
    own = _own_ball(written)
    return own if written.carried is None else own.union(written.carried)


def widened(written: Written, ball: Any) -> Any:
    """``ball`` widened by the claim's own digits (or tolerance) on each part."""
    import flint

    claim, tolerance = written.claim, written.tolerance
    size = abs(to_complex(claim.value.expr))
    if tolerance.relative is not None:
        extra = 2 * tolerance.relative * size + SLACK * size
        return ball + flint.acb(flint.arb(0, extra), flint.arb(0, extra))
    res_a, res_b = claim.resolution
    if claim.form == "polar":
        res_a = res_b = res_a + size * res_b
    return ball + flint.acb(flint.arb(0, res_a + SLACK * size), flint.arb(0, res_b + SLACK * size))


def _own_ball(written: Written) -> Any:
    import flint

    claim, tolerance = written.claim, written.tolerance
    value = to_complex(claim.value.expr)
    size = abs(value)
    if tolerance.relative is not None:
        radius = tolerance.relative * size / (1 - tolerance.relative)
        return _point(value, radius + SLACK * size)
    res_a, res_b = claim.resolution
    if claim.form == "polar":
        magnitude = flint.arb(size, size * _ULP + res_a + SLACK * size)
        angle = flint.arb(math.atan2(value.imag, value.real), res_b + 1e-15)
        if size <= res_a:
            return _point(0j, size + res_a)  # the angle of a value that rounds to zero means nothing
        return flint.acb(magnitude) * (flint.acb(0, 1) * flint.acb(angle)).exp()
    slack = SLACK * size
    real = flint.arb(value.real, abs(value.real) * _ULP + res_a + slack)
    if claim.form == "real":
        return flint.acb(real)  # a plain number: on the real line
    return flint.acb(real, flint.arb(value.imag, abs(value.imag) * _ULP + res_b + slack))


def _log10(z: Any) -> Any:
    import flint

    return z.log() / flint.acb(10).log()


def _functions() -> dict[str, Callable[..., Any]]:
    import flint

    return {
        "sqrt": lambda z: z.sqrt(),
        "exp": lambda z: z.exp(),
        "ln": lambda z: z.log(),
        "log10": _log10,
        "sin": lambda z: z.sin(),
        "cos": lambda z: z.cos(),
        "tan": lambda z: z.tan(),
        "atan": lambda z: z.atan(),
        "atan2": lambda y, x: flint.acb(flint.arb.atan2(y.real, x.real)),
        "abs": lambda z: flint.acb(abs(z)),
        "arg": lambda z: flint.acb(z.arg()),
        "re": lambda z: flint.acb(z.real),
        "im": lambda z: flint.acb(z.imag),
        "conj": lambda z: z.conjugate(),
        "polar": lambda m, a: m * (flint.acb(0, 1) * a).exp(),
        "db": lambda z: 20 * _log10(flint.acb(abs(z))),
    }


def _real_sqrt(x: Any) -> Any | None:
    return x.sqrt() if x >= 0 else None


def _real_log(x: Any) -> Any | None:
    return x.log() if x > 0 else None


#: One-argument functions done in real balls for a real argument (tighter than the
#: complex ones), where the real function is defined over the whole ball.
_REAL: dict[str, Callable[[Any], Any | None]] = {
    "sqrt": _real_sqrt,
    "exp": lambda x: x.exp(),
    "ln": _real_log,
    "sin": lambda x: x.sin(),
    "cos": lambda x: x.cos(),
    "tan": lambda x: x.tan(),
    "atan": lambda x: x.atan(),
    "abs": abs,
}


class _Balls:
    def __init__(self, env: Mapping[str, Value], written: Mapping[str, Written]) -> None:
        self.env = env
        self.written = written
        self.memo: dict[str, Any] = {}
        self.functions = _functions()

    def name(self, ident: str) -> Any:
        import flint

        ident = "w" if ident == "ω" else ident
        if ident not in self.memo:
            if ident in self.written:
                self.memo[ident] = claim_ball(self.written[ident])
            elif ident in self.env:
                self.memo[ident] = _exact(self.env[ident].expr)
            elif ident == "pi":
                self.memo[ident] = flint.acb(flint.arb.pi())
            elif ident == "j":
                self.memo[ident] = flint.acb(0, 1)
            else:
                raise _UnboundedError(ident)
        return self.memo[ident]

    def run(self, node: Node) -> Any:
        import flint

        if isinstance(node, Number):
            value = flint.acb(flint.arb(flint.fmpq(node.value.numerator, node.value.denominator)))
            if node.imaginary:
                value = value * flint.acb(0, 1)
            return value * _exact(unit_of(node.unit)[0]) if node.unit else value
        if isinstance(node, Name):
            return self.name(node.ident)
        if isinstance(node, Unary):
            return -self.run(node.operand)
        if isinstance(node, Binary):
            return self.binary(node.op, self.run(node.left), self.run(node.right))
        if isinstance(node, Call):
            args = [self.run(arg) for arg in node.args]
            real = _REAL.get(node.function)
            if real is not None and all(a.imag == 0 for a in args):
                on_line = real(args[0].real)
                if on_line is not None:
                    return flint.acb(on_line)
            rule = self.functions.get(node.function)
            if rule is None:
                raise _UnboundedError(node.function)
            return rule(*args)
        raise _UnboundedError(type(node).__name__)

    @staticmethod
    def binary(op: str, a: Any, b: Any) -> Any:
        import flint

        if op in ("*", "/", "||") and a.imag == 0 and b.imag == 0:
            # on the real line, in real balls: a complex ball's reciprocal encloses a
            # disc, far wider than the interval it stands for
            x, y = a.real, b.real
            if op == "*":
                return flint.acb(x * y)
            if op == "/":
                return flint.acb(x / y)
            if x == 0 and y == 0:
                return flint.acb(0)
            return (
                flint.acb(1 / (1 / x + 1 / y)) if not (x.contains(0) or y.contains(0)) else flint.acb(x * y / (x + y))
            )
        if op == "+":
            return a + b
        if op == "-":
            return a - b
        if op == "*":
            return a * b
        if op == "/":
            return a / b
        if op == "||":
            if a == 0 and b == 0:
                return flint.acb(0)
            return a * b / (a + b)
        if op == "^":
            if b.imag == 0 and b.real.is_exact() and b.real.is_integer():
                n = int(b.real.unique_fmpz())
                return a**n if n >= 0 else 1 / a ** (-n)
            return a**b
        if op == "angle":
            return a * (flint.acb(0, 1) * b).exp()
        raise _UnboundedError(op)


def propagate(tree: Node, env: Mapping[str, Value], written: Mapping[str, Written]) -> Any | None:
    """The ball of every value the formula takes over the written intervals of the
    earlier steps in ``written`` (other names exact from ``env``); None when the balls
    give no finite enclosure (a division by a number that rounds to zero)."""
    import flint

    saved = flint.ctx.prec
    flint.ctx.prec = PRECISION
    try:
        ball = _Balls(env, written).run(tree)
    except (_UnboundedError, ZeroDivisionError, ValueError, TypeError):
        return None
    finally:
        flint.ctx.prec = saved
    return ball if ball.is_finite() else None


def _reaches(distance: Any, limit: float) -> bool:
    """True when the lower end of a ball of distances is within ``limit``."""
    return float(distance.lower()) <= limit


def by_size(claim: Claim, truth: complex) -> bool:
    """True when the claim is read as a magnitude (a plain number for a complex value),
    as :func:`handcheck.verify.claims.compared` reads it."""
    return claim.form == "real" and truth.imag != 0 and abs(truth.imag) > SLACK * abs(truth)


def inside_claim(written: Written, truth: complex) -> bool:
    """True when the true value is one of the values the written claim stands for, as a
    number a formula can use: a plain magnitude of a complex value is not."""
    import flint

    ball = claim_ball(written)
    return bool(ball.overlaps(_point(truth))) or bool(flint.acb(truth) in ball)


def within(written: Written, ball: Any, truth: complex) -> bool:
    """True when the true value lies inside ``ball`` widened by the claim's own digits
    (or tolerance), the claim read as it is judged (magnitude and angle for a polar
    claim, the size for a plain number claimed for a complex value)."""
    import flint

    claim, tolerance = written.claim, written.tolerance
    slack = SLACK * abs(truth) + 1e-300
    size = abs(truth)
    if tolerance.relative is not None:
        if by_size(claim, truth):
            return _reaches(abs(flint.arb(abs(ball)) - size), tolerance.relative * size + slack)
        return _reaches(abs(ball - _point(truth)), tolerance.relative * size + slack)
    res_a, res_b = claim.resolution
    if by_size(claim, truth):
        return _reaches(abs(abs(ball) - size), res_a + slack)
    if claim.form != "polar":
        return _reaches(abs(ball.real - truth.real), res_a + slack) and _reaches(
            abs(ball.imag - truth.imag), res_b + slack
        )
    if not _reaches(abs(abs(ball) - size), res_a + slack):
        return False
    if size <= res_a or float(abs(ball).lower()) <= res_a:
        return True  # an angle means nothing for a value that rounds to zero
    angle = ball.arg()
    target = math.atan2(truth.imag, truth.real)
    return any(_reaches(abs(angle + k * 2 * flint.arb.pi() - target), res_b + 1e-12) for k in (-1, 0, 1))


def holds_claim(written: Written, ball: Any, by_magnitude: bool) -> bool:
    """True when the claim as written lies inside ``ball`` widened by its own digits (or
    tolerance): some value of the ball rounds to the claim.

    With ``by_magnitude`` (a plain number claimed for a complex value) the claim is
    read as the size of the ball's values, as :func:`handcheck.verify.claims.agrees`
    reads it.
    """
    claim, tolerance = written.claim, written.tolerance
    value = to_complex(claim.value.expr)
    if not by_magnitude:
        return within(written, ball, value)
    size = abs(value)
    limit = (tolerance.relative * size if tolerance.relative is not None else claim.resolution[0]) + SLACK * size
    return _reaches(abs(abs(ball) - size), limit + 1e-300)


def describe(ball: Any, show: Callable[[complex], str], size: Callable[[float], str]) -> str:
    """The ball in words, with ``show`` formatting a value in the claim's unit and
    ``size`` a distance: "23.88 V to 23.91 V" for a real ball, "within 0.02 V of
    3 - 4j V" otherwise."""
    re_mid, im_mid = float(ball.real.mid()), float(ball.imag.mid())
    re_rad, im_rad = float(ball.real.rad()), float(ball.imag.rad())
    if ball.imag == 0:
        return f"{show(complex(re_mid - re_rad))} to {show(complex(re_mid + re_rad))}"
    return f"within {size(math.hypot(re_rad, im_rad))} of {show(complex(re_mid, im_mid))}"

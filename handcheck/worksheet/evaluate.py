"""Evaluate an expression tree to an exact sympy value with its dimension.

Every value is a :class:`Value`: an exact sympy expression in coherent SI units and
a :class:`~handcheck.worksheet.units.Dim`. Dimensions are checked as the tree is
evaluated; a mismatch raises :class:`~handcheck.errors.UnitError` quoting the
sub-expression at fault.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Mapping
from dataclasses import dataclass
from fractions import Fraction
from itertools import islice

import sympy

from handcheck.errors import HandcheckError, LimitError, ParseError, UnitError
from handcheck.worksheet import pifraction
from handcheck.worksheet.certified import Held, certify
from handcheck.worksheet.expr import Binary, Call, Name, Node, Number, Unary, one_line, parse, printable
from handcheck.worksheet.units import DIMENSIONLESS, Dim, lookup_unit

__all__ = ["FUNCTIONS", "Value", "evaluate", "evaluate_text", "unit_of"]

#: Largest whole power accepted (keeps exact arithmetic from exploding).
MAX_POWER = 64
#: Deepest root accepted, the largest denominator of a fractional exponent: sympy's exact
#: powers of integers search for perfect powers up to that denominator, which takes
#: minutes past a few hundred thousand (``w^2.2e-6 || w^2.2e-6`` did not finish).
MAX_ROOT = 100
#: Most decimal digits in the numerator or denominator of an exact intermediate value.
#: Below Python's limit for converting an integer to text (4,300 digits), so that every
#: exact value can still be printed.
MAX_DIGITS = 4000
_MAX_BITS = int(MAX_DIGITS * 3.3219280948873626)  # log2(10) bits per decimal digit

_NOT_FINITE = (sympy.nan, sympy.zoo, sympy.oo, -sympy.oo)
_NOT_FINITE_SET = frozenset(_NOT_FINITE)


def distinct_nodes(expr: sympy.Basic) -> Iterator[sympy.Basic]:
    """Every distinct subexpression of ``expr``, once each.

    A walk of the expression as a graph: a subexpression that occurs many times (the
    impedance of one step inside every later one) is visited once, where sympy's tree
    walks (``atoms``, ``has``) visit it at every occurrence, which grows exponentially
    along a chain of steps.

    >>> x = sympy.Symbol("x")
    >>> sorted(map(str, distinct_nodes(x + 2 * x**2)))
    ['2', '2*x**2', '2*x**2 + x', 'x', 'x**2']
    """
    seen: set[sympy.Basic] = set()
    stack = [expr]
    while stack:
        node = stack.pop()
        if node in seen:
            continue
        seen.add(node)
        yield node
        stack.extend(node.args)


@dataclass(frozen=True)
class Value:
    """An exact value in coherent SI units, and its dimension."""

    expr: sympy.Expr
    dim: Dim = DIMENSIONLESS


def unit_of(words: tuple[tuple[str, int], ...]) -> tuple[sympy.Expr, Dim]:
    """The exact factor and dimension of a compound unit."""
    factor: sympy.Expr = sympy.Integer(1)
    dim = DIMENSIONLESS
    for word, exponent in words:
        unit = lookup_unit(word)
        factor *= unit.factor**exponent
        dim = dim * unit.dim**exponent
    return factor, dim


def without_time(dim: Dim) -> Dim:
    """The dimension with its power of time dropped (times read as seconds)."""
    return Dim(dim.mass, dim.length, Fraction(0), dim.current)


def _rational(value: Fraction) -> sympy.Rational:
    return sympy.Rational(value.numerator, value.denominator)


def _dimensionless(name: str, value: Value, text: str, node: Node) -> None:
    if not value.dim.dimensionless:
        raise UnitError(f'{name} needs a dimensionless argument, but "{text[node.start : node.end]}" is in {value.dim}')


def _parallel(a: sympy.Expr, b: sympy.Expr) -> sympy.Expr:
    if a == 0 and b == 0:
        return sympy.Integer(0)
    return a * b / (a + b)


#: Operations above which abs() of a number avoids splitting it into real and imaginary parts;
#: also the distinct subexpressions above which a value is large: arithmetic on it is done
#: in canonical form where it has one (:mod:`handcheck.worksheet.pifraction`).
_SMALL = 40


#: Nodes of a value's tree (each repeated subexpression counted every time) above which
#: it is large too: the first steps of a chain have few distinct subexpressions, but
#: their trees double with every step, and sympy's arithmetic walks the tree (a division
#: by step 8 of a chain took 2.6 s).
_TREE = 400


def _tree_size(expr: sympy.Basic, size: dict[sympy.Basic, int]) -> int:
    """Nodes of the tree of ``expr``, each distinct subexpression sized once (memo ``size``)."""
    if expr not in size:
        size[expr] = 1 + sum(_tree_size(a, size) for a in expr.args)
    return size[expr]


def _large(expr: sympy.Expr) -> bool:
    """True when ``expr`` has more than ``_SMALL`` distinct subexpressions, or a tree of
    more than ``_TREE`` nodes."""
    nodes = list(islice(distinct_nodes(expr), _SMALL + 1))
    return len(nodes) > _SMALL or _tree_size(expr, {}) > _TREE  # a walk of at most _SMALL nodes


def held(expr: sympy.Expr, nodes: list[sympy.Basic] | None = None) -> sympy.Expr:
    """``expr`` held by name (:class:`~handcheck.worksheet.certified.Held`) when it is large.

    Only a number that ball arithmetic certifies is held: an expression in symbols
    (a source function of ``t``, a part kept as a symbol) or one with no certified
    value stays as it is.
    """
    if nodes is None:
        if not _large(expr):
            return expr
        nodes = list(distinct_nodes(expr))
    if any(isinstance(n, sympy.Symbol) for n in nodes) or certify(expr) is None:
        return expr
    return Held(expr)


_SYMPY = {
    "+": lambda a, b: a + b,
    "-": lambda a, b: a - b,
    "*": lambda a, b: a * b,
    "/": lambda a, b: a / b,
    "||": _parallel,
}


def _abs(v: sympy.Expr) -> sympy.Expr:
    split = pifraction.parts(v) if _large(v) else None
    if split is not None:
        # sqrt(|v|^2) unevaluated: sympy would ask the sign of the large radicand
        return sympy.Pow(split[2], sympy.S.Half, evaluate=False)
    if v.is_number and sympy.count_ops(v) > _SMALL:
        # sqrt(v conj(v)) is exact too, and costs no splitting into real and imaginary
        # parts (which grows with the size of v); the comparisons evaluate it certified.
        return sympy.sqrt(sympy.expand_mul(v * sympy.conjugate(v), deep=False))
    return sympy.sqrt(sympy.re(v) ** 2 + sympy.im(v) ** 2)


@dataclass(frozen=True)
class Function:
    """A function a formula may call: arity, how dimensions pass, and the exact rule."""

    arity: int
    rule: Callable[..., sympy.Expr]
    dims: str  # "none": all args dimensionless, result too; "keep": result has arg 0's dim;
    # "sqrt": half the dim; "same2": both args same dim, result dimensionless;
    # "polar": (any, dimensionless) -> dim of arg 0; "ratio": any -> dimensionless


FUNCTIONS: dict[str, Function] = {
    "sqrt": Function(1, sympy.sqrt, "sqrt"),
    "exp": Function(1, sympy.exp, "none"),
    "ln": Function(1, sympy.log, "none"),
    "log10": Function(1, lambda x: sympy.log(x, 10), "none"),
    "sin": Function(1, sympy.sin, "none"),
    "cos": Function(1, sympy.cos, "none"),
    "tan": Function(1, sympy.tan, "none"),
    "atan": Function(1, sympy.atan, "none"),
    "atan2": Function(2, sympy.atan2, "same2"),
    "abs": Function(1, _abs, "keep"),
    "arg": Function(1, sympy.arg, "ratio"),
    "re": Function(1, sympy.re, "keep"),
    "im": Function(1, sympy.im, "keep"),
    "conj": Function(1, sympy.conjugate, "keep"),
    "polar": Function(2, lambda m, a: m * sympy.exp(sympy.I * a), "polar"),
    "db": Function(1, lambda x: 20 * sympy.log(_abs(x), 10), "none"),
}


_TRIG = frozenset({"sin", "cos", "tan", "polar"})


class _Evaluator:
    def __init__(
        self,
        text: str,
        env: Mapping[str, Value],
        angle_scale: sympy.Expr | None = None,
        functions: Mapping[str, Function] | None = None,
        seconds: bool = False,
    ) -> None:
        self.seconds = seconds
        self.text = text
        self.env = env
        self.angle_scale = angle_scale
        self.functions = {**FUNCTIONS, **functions} if functions else FUNCTIONS
        self.compact: set[sympy.Expr] = set()  # values made in canonical form by this evaluator

    def fast(self, value: sympy.Expr | None) -> sympy.Expr | None:
        """Note a value made in canonical form (None: there was none)."""
        if value is not None:
            self.compact.add(value)
        return value

    def quote(self, node: Node) -> str:
        return self.text[node.start : node.end].strip()

    def run(self, node: Node) -> Value:
        if isinstance(node, Number):
            return self.number(node)
        if isinstance(node, Name):
            return self.name(node)
        if isinstance(node, Unary):
            inner = self.run(node.operand)
            negated = self.fast(pifraction.negated(inner.expr)) if _large(inner.expr) else None
            return Value(-inner.expr if negated is None else negated, inner.dim)
        if isinstance(node, Binary):
            return self.checked(node, self.binary(node))
        if isinstance(node, Call):
            return self.checked(node, self.call(node))
        raise TypeError(f"unknown node {node!r}")  # pragma: no cover - the parser makes no others

    def too_large(self, node: Node) -> LimitError:
        return LimitError(
            f'"{self.quote(node)}" gives a number of more than {MAX_DIGITS:,} digits, too large to work with '
            "exactly; check the powers of ten and the exponents"
        )

    def checked(self, node: Node, value: Value) -> Value:
        """The value, if it is finite and its exact numbers are of a workable size.

        A value of more than ``_SMALL`` distinct subexpressions that is a fraction of
        polynomials in pi is rewritten in its canonical form
        (:mod:`handcheck.worksheet.pifraction`), which keeps a chain of steps linear;
        any other number that ball arithmetic certifies is held by name
        (:class:`~handcheck.worksheet.certified.Held`), its exact expression its
        definition (an expression in symbols, such as a source function of ``t``, is not).
        """
        expr = value.expr
        nodes = list(distinct_nodes(expr))
        hold = False
        if (
            (len(nodes) > _SMALL or _large(expr))
            and expr not in self.compact
            and not _NOT_FINITE_SET.intersection(nodes)
        ):
            short = pifraction.canonical(expr, _MAX_BITS)
            if short is not None:
                expr = short
                value = Value(short, value.dim)
                nodes = list(distinct_nodes(expr))
            hold = short is None
        if any(node in _NOT_FINITE_SET for node in nodes):
            raise ParseError(
                f'"{self.quote(node)}" has no finite value (a division by zero, or a function at a pole '
                "such as tan(90 deg) or db(0)); check the formula",
                self.text,
                node.start + 1,
            )
        for atom in nodes:
            if isinstance(atom, sympy.Rational) and max(abs(atom.p).bit_length(), atom.q.bit_length()) > _MAX_BITS:
                raise self.too_large(node)
        for power in nodes:
            if isinstance(power, sympy.Pow) and power.exp.is_Rational and power.exp.q > MAX_ROOT:
                raise self.too_deep(node, power.exp)
        return Value(held(expr, nodes), value.dim) if hold else value

    def too_deep(self, node: Node, exponent: sympy.Rational) -> LimitError:
        return LimitError(
            f'"{self.quote(node)}" takes a root deeper than the {MAX_ROOT}th (an exponent {exponent}), too costly '
            "to work with exactly; round the exponent to fewer decimals"
        )

    def number(self, node: Number) -> Value:
        value: sympy.Expr = _rational(node.value)
        if node.imaginary:
            value = value * sympy.I
        factor, dim = unit_of(node.unit)
        if self.seconds:
            dim = without_time(dim)
        return Value(value * factor, dim)

    def name(self, node: Name) -> Value:
        ident = "w" if node.ident == "ω" else node.ident
        if ident in self.env:
            return self.env[ident]
        if ident == "pi":
            return Value(sympy.pi)
        if ident == "j":
            return Value(sympy.I)
        known = ", ".join(sorted(k for k in self.env if not k.startswith("_")))
        hint = f"; known names: {known}" if known else ""
        raise ParseError(f'unknown name "{ident}"{hint}', self.text, node.start + 1)

    def arithmetic(self, op: str, left: sympy.Expr, right: sympy.Expr) -> sympy.Expr:
        """``left op right`` for ``op`` one of + - * / ||.

        When an operand is large: in canonical form where both operands have one; else by
        sympy, on the large operands held by name (a canonical form of pi times sqrt(2) has
        none, and sympy's division asks the assumptions of its every term).
        """
        if not (_large(left) or _large(right)):
            return _SYMPY[op](left, right)
        fast = self.fast(pifraction.combine(op, left, right, _MAX_BITS))
        if fast is not None:
            return fast
        if pifraction.from_expr(left) is not None and pifraction.from_expr(right) is not None:
            return _SYMPY[op](left, right)  # no value, or too wide: sympy does it and reports what it finds
        return _SYMPY[op](held(left), held(right))

    def binary(self, node: Binary) -> Value:
        left = self.run(node.left)
        right = self.run(node.right)
        op = node.op
        if op in ("+", "-", "||"):
            if left.dim != right.dim:
                what = {"+": "add", "-": "subtract", "||": "combine in parallel"}[op]
                raise UnitError(
                    f'cannot {what} "{self.quote(node.left)}" ({left.dim or "no unit"}) and '
                    f'"{self.quote(node.right)}" ({right.dim or "no unit"}) in "{self.quote(node)}"'
                )
            return Value(self.arithmetic(op, left.expr, right.expr), left.dim)
        if op == "*":
            return Value(self.arithmetic(op, left.expr, right.expr), left.dim * right.dim)
        if op == "/":
            if right.expr == 0:
                raise ParseError(
                    f'division by zero: "{self.quote(node.right)}" is exactly 0', self.text, node.right.start + 1
                )
            return Value(self.arithmetic(op, left.expr, right.expr), left.dim / right.dim)
        if op == "^":
            return self.power(node, left, right)
        if op == "angle":
            if not right.dim.dimensionless:
                raise UnitError(f'the angle "{self.quote(node.right)}" must be in deg or rad, not {right.dim}')
            angle = right.expr if self.angle_scale is None else right.expr * self.angle_scale
            return Value(left.expr * sympy.exp(sympy.I * angle), left.dim)
        raise TypeError(op)  # pragma: no cover

    def power(self, node: Binary, base: Value, exponent: Value) -> Value:
        if not exponent.dim.dimensionless:
            raise UnitError(f'the exponent "{self.quote(node.right)}" must have no unit, but is in {exponent.dim}')
        if exponent.expr.is_Rational:
            if abs(exponent.expr) > MAX_POWER:
                raise LimitError(
                    f'the power "{self.quote(node)}" is too large: exponents from -{MAX_POWER} to {MAX_POWER} '
                    "are accepted"
                )
            if exponent.expr.q > MAX_ROOT:
                raise self.too_deep(node, exponent.expr)
            if base.expr.is_Rational:
                bits = max(abs(base.expr.p).bit_length(), base.expr.q.bit_length())
                if bits * abs(exponent.expr) > _MAX_BITS:
                    raise self.too_large(node)
            dim = base.dim ** Fraction(int(exponent.expr.p), int(exponent.expr.q))
        elif base.dim.dimensionless:
            dim = DIMENSIONLESS
        else:
            raise UnitError(f'"{self.quote(node.left)}" has a unit, so its exponent must be a plain number')
        if base.expr == 0 and exponent.expr.is_negative:
            raise ParseError(
                f'division by zero: "{self.quote(node)}" raises 0 to a negative power', self.text, node.start + 1
            )
        whole = exponent.expr.is_Integer and pifraction.from_expr(base.expr) is not None
        return Value((base.expr if whole else held(base.expr)) ** exponent.expr, dim)

    def call(self, node: Call) -> Value:
        fn = self.functions.get(node.function)
        if fn is None:
            known = " ".join(self.functions)
            raise ParseError(f'unknown function "{node.function}"; known functions: {known}', self.text, node.start + 1)
        if len(node.args) != fn.arity:
            plural = "s" if fn.arity > 1 else ""
            raise ParseError(
                f"{node.function}() takes {fn.arity} argument{plural}, not {len(node.args)}", self.text, node.start + 1
            )
        args = [self.run(arg) for arg in node.args]
        name = f"{node.function}()"
        dim = DIMENSIONLESS
        if fn.dims == "none":
            for arg, sub in zip(args, node.args, strict=True):
                _dimensionless(name, arg, self.text, sub)
        elif fn.dims == "keep":
            dim = args[0].dim
        elif fn.dims == "sqrt":
            dim = args[0].dim ** Fraction(1, 2)
        elif fn.dims == "same2":
            if args[0].dim != args[1].dim:
                raise UnitError(f"{name} needs two arguments of one unit, not {args[0].dim} and {args[1].dim}")
        elif fn.dims == "repeat":  # repeat(period, g): a time (in seconds), and g's unit
            if not args[0].dim.dimensionless:
                raise UnitError(f'the period of {name} must be a time, like 1 ms, not "{self.quote(node.args[0])}"')
            dim = args[1].dim
        elif fn.dims == "polar":
            _dimensionless(name + " angle", args[1], self.text, node.args[1])
            dim = args[0].dim
        if node.function in ("ln", "log10") and args[0].expr == 0:
            raise ParseError(f"{name} of exactly 0 is not defined", self.text, node.start + 1)
        # abs() and db() split a canonical form themselves
        exprs = [a.expr if node.function in ("abs", "db") else held(a.expr) for a in args]
        if self.angle_scale is not None and node.function in _TRIG:
            exprs[-1] = exprs[-1] * self.angle_scale
        return Value(fn.rule(*exprs), dim)


def evaluate(
    node: Node,
    env: Mapping[str, Value],
    text: str,
    *,
    angle_scale: sympy.Expr | None = None,
    functions: Mapping[str, Function] | None = None,
    seconds: bool = False,
) -> Value:
    """Evaluate a parsed tree in an environment of named values.

    ``angle_scale`` multiplies every angle given to sin, cos, tan, polar and the
    angle operator; the mistake catalogue uses it to replay a calculator left in
    the wrong angle mode. ``functions`` adds functions to the formula language's
    own (the source functions ``step``, ``edge`` and ``repeat``). With ``seconds``
    every time and rate is read as a plain number in seconds and 1/s (as ``t`` is in
    a source function), so ``2000*t``, ``t/5 ms`` and ``2*pi*50 Hz*t`` all read.
    """
    try:
        return _Evaluator(text, env, angle_scale, functions, seconds).run(node)
    except HandcheckError as exc:
        raise one_line(exc) from None
    except (ValueError, TypeError, ZeroDivisionError, OverflowError, RecursionError) as exc:
        raise ParseError(f"cannot evaluate: {printable(str(exc))}", printable(text), None) from exc


def evaluate_text(text: str, env: Mapping[str, Value] | None = None) -> Value:
    """Parse and evaluate ``text`` in one call."""
    env = env or {}
    return evaluate(parse(text, set(env)), env, text)

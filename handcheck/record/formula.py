"""Formulas and exact values typeset by sympy's own printers (MathML and LaTeX).

A formula is parsed by the project's parser (:mod:`handcheck.worksheet.expr`) and the
tree is turned into an unevaluated sympy expression that keeps what the author wrote:
names stay names, numbers keep their digits and units, ``j`` stays ``j``. sympy's
presentation MathML printer and its LaTeX printer then typeset it; no markup is
built by hand for an expression. Names reaching the printer are identifiers of the
formula language (letters, digits, ``_``) or unit words, never free text, so the
printer's output needs no further escaping (it does not escape symbol names).
"""

from __future__ import annotations

import cmath
import math
import re
from collections.abc import Mapping

import sympy

from handcheck.errors import HandcheckError
from handcheck.solve.certified import certify
from handcheck.worksheet.evaluate import distinct_nodes
from handcheck.worksheet.expr import Binary, Call, Name, Node, Number, Unary, parse

__all__ = [
    "display_tree",
    "exact_display",
    "latex_of",
    "mathml_of",
    "number_display",
    "typeset_formula",
    "written_value",
]

#: Longest exact value typeset in full (characters of its sympy text).
MAX_EXACT_TEXT = 300
_SAFE_NAME = re.compile(r"^[A-Za-z_Ωµμ°ω][A-Za-z0-9_Ωµμω]*$")
_FUNCTIONS = {
    "sqrt": sympy.sqrt,
    "exp": sympy.exp,
    "ln": sympy.log,
    "sin": sympy.sin,
    "cos": sympy.cos,
    "tan": sympy.tan,
    "atan": sympy.atan,
    "abs": sympy.Abs,
    "re": sympy.re,
    "im": sympy.im,
    "conj": sympy.conjugate,
}


class _Infix(sympy.Function):
    """An operator of the formula language that sympy has no class for, typeset infix."""

    _mo = "?"
    _tex = "?"

    def _latex(self, printer: object) -> str:
        return f" {self._tex} ".join(printer._print(a) for a in self.args)  # type: ignore[attr-defined]

    def _mathml_presentation(self, printer: object) -> object:
        row = printer.dom.createElement("mrow")  # type: ignore[attr-defined]
        for index, arg in enumerate(self.args):
            if index:
                op = printer.dom.createElement("mo")  # type: ignore[attr-defined]
                op.appendChild(printer.dom.createTextNode(self._mo))  # type: ignore[attr-defined]
                row.appendChild(op)
            row.appendChild(printer._print(arg))  # type: ignore[attr-defined]
        return row


class Parallel(_Infix):
    """``a || b``, the parallel combination, typeset a ∥ b."""

    _mo = "∥"
    _tex = r"\parallel"


class Polar(_Infix):
    """``m /_ a``, a phasor in polar form, typeset m ∠ a."""

    _mo = "∠"
    _tex = r"\angle"


class Digits(sympy.Symbol):
    """A number exactly as written (``37.70`` keeps its last zero), typeset as a number."""

    def _latex(self, printer: object) -> str:
        return self.name

    def _mathml_presentation(self, printer: object) -> object:
        element = printer.dom.createElement("mn")  # type: ignore[attr-defined]
        element.appendChild(printer.dom.createTextNode(self.name))  # type: ignore[attr-defined]
        return element


_DIGITS = re.compile(r"^-?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")


def _symbol(name: str) -> sympy.Symbol:
    if not _SAFE_NAME.match(name):
        raise ValueError(f"not a formula name: {name!r}")
    return sympy.Symbol(name)


def _unit_word(word: str) -> str:
    """A unit word as it is printed: ohm as Ω, the micro prefix u as µ."""
    word = word.replace("ohm", "Ω")
    if len(word) > 1 and word[0] == "u" and word[1:] in ("F", "H", "s", "A", "V", "W", "Ω", "S"):
        word = "µ" + word[1:]
    return word


def _unit(words: tuple[tuple[str, int], ...]) -> sympy.Expr | None:
    factors = [
        sympy.Pow(_symbol(_unit_word(w)), e, evaluate=False) if e != 1 else _symbol(_unit_word(w)) for w, e in words
    ]
    if not factors:
        return None
    return factors[0] if len(factors) == 1 else sympy.Mul(*factors, evaluate=False)


def _number(node: Number) -> sympy.Expr:
    digits = node.digits
    if not _DIGITS.match(digits):
        raise ValueError(f"not a number: {digits!r}")
    if node.imaginary:
        value: sympy.Expr = Digits(digits + "j")
    else:
        value = sympy.Integer(int(digits)) if digits.isdigit() and not node.unit else Digits(digits)
    # With a unit, a number stays as written: sympy would print 1*uF as uF alone.
    unit = _unit(node.unit)
    return value if unit is None else sympy.Mul(value, unit, evaluate=False)


def display_tree(node: Node, values: Mapping[str, sympy.Expr] | None = None) -> sympy.Expr:
    """The parse tree as an unevaluated sympy expression, as the author wrote it.

    Parameters
    ----------
    node : Node
        A tree from :func:`handcheck.worksheet.expr.parse`.
    values : mapping, optional
        Display expressions put in place of names (the author's numbers).

    Returns
    -------
    sympy.Expr
        An unevaluated expression for the printers.
    """
    values = values or {}
    if isinstance(node, Number):
        return _number(node)
    if isinstance(node, Name):
        if node.ident in values:
            return values[node.ident]
        if node.ident == "pi":
            return sympy.pi
        return _symbol(node.ident)
    if isinstance(node, Unary):
        inner = display_tree(node.operand, values)
        if node.op == "-" and isinstance(inner, sympy.Number):
            return -inner
        if node.op == "-" and isinstance(inner, Digits):
            return Digits("-" + inner.name)
        return sympy.Mul(-1, inner, evaluate=False) if node.op == "-" else inner
    if isinstance(node, Binary):
        left, right = display_tree(node.left, values), display_tree(node.right, values)
        return _binary(node.op, left, right)
    if isinstance(node, Call):
        args = [display_tree(a, values) for a in node.args]
        function = _FUNCTIONS.get(node.function)
        if function is not None and len(args) == 1:
            return function(args[0], evaluate=False)
        return sympy.Function(node.function)(*args)
    raise ValueError(f"unknown node {type(node).__name__}")


def _binary(op: str, left: sympy.Expr, right: sympy.Expr) -> sympy.Expr:
    if op == "+":
        return sympy.Add(left, right, evaluate=False)
    if op == "-":
        return sympy.Add(left, sympy.Mul(-1, right, evaluate=False), evaluate=False)
    if op == "*":
        factors = [*(left.args if left.is_Mul and left.args[0] != -1 else (left,)), right]
        return sympy.Mul(*factors, evaluate=False)
    if op == "/":
        return sympy.Mul(left, sympy.Pow(right, -1, evaluate=False), evaluate=False)
    if op in ("^", "**"):
        return sympy.Pow(left, right, evaluate=False)
    if op == "||":
        return Parallel(left, right, evaluate=False)
    if op == "angle":
        return Polar(left, right, evaluate=False)
    raise ValueError(f"unknown operator {op}")


def mathml_of(expr: sympy.Expr) -> str:
    """Presentation MathML (the content of a ``math`` element) from sympy's printer."""
    from sympy.printing.mathml import mathml

    # "old": factors in the order written.
    return mathml(expr, printer="presentation", order="old", mul_symbol=_multiplication(expr))


def latex_of(expr: sympy.Expr) -> str:
    """LaTeX from sympy's printer."""
    return sympy.latex(expr, order="none", mul_symbol=_multiplication(expr))


def _multiplication(expr: sympy.Expr) -> str | None:
    """A centre dot between factors where a name of several letters (``Req``, ``kΩ``)
    would otherwise run into its neighbour (``Req Cc`` read as one word); none else."""
    names = (a.name for a in expr.atoms(sympy.Symbol) if not isinstance(a, Digits))
    return "dot" if any(len(name) > 1 for name in names) else None


def typeset_formula(
    text: str, names: frozenset[str], values: Mapping[str, sympy.Expr] | None = None
) -> sympy.Expr | None:
    """The formula ``text`` as a display expression, or None where it cannot be read."""
    try:
        tree = parse(text, names)
        return display_tree(tree, values)
    except (HandcheckError, ValueError, TypeError, RecursionError):
        return None


def written_value(text: str) -> sympy.Expr | None:
    """A written value (``"4.7 kohm"``, ``"0.63 A /_ -22 deg"``) as a display expression, or None."""
    return typeset_formula(text, frozenset())


def number_display(value: sympy.Expr, unit: str = "") -> sympy.Expr:
    """A program value (a frequency, a source's phasor) shown as a number with its unit:
    six significant digits, a complex value in polar form (magnitude ∠ angle in deg)."""
    number = complex(sympy.N(value, 15))

    def digits(x: float) -> sympy.Expr:
        text = f"{x:.6g}"
        return sympy.Integer(int(text)) if text.isdigit() and not unit else Digits(text)

    def with_unit(x: float, word: str) -> sympy.Expr:
        top, _, bottom = word.partition("/")
        shown = _unit(tuple((w, e) for w, e in ((top, 1), (bottom, -1)) if w))
        return digits(x) if shown is None else sympy.Mul(digits(x), shown, evaluate=False)

    if number.imag == 0:
        return with_unit(number.real, unit)
    angle = math.degrees(cmath.phase(number))
    return Polar(with_unit(abs(number), unit), sympy.Mul(Digits(f"{angle:.6g}"), _symbol("deg"), evaluate=False))


def _digits_at_least(exact: sympy.Expr) -> int:
    """A lower bound on the length of ``exact`` as text: its distinct subexpressions, and the
    digits of its distinct rationals.

    Each is printed at least once (an operation with its sign, a number with its digits);
    counting them needs no printing.
    """
    digits = 0
    for node in distinct_nodes(exact):
        digits += 1  # every distinct subexpression prints one character at least
        if isinstance(node, sympy.Rational):
            digits += int((abs(node.p).bit_length() + node.q.bit_length() - 2) * math.log10(2))
            if digits > MAX_EXACT_TEXT:
                break
    return digits


def exact_display(exact: sympy.Expr) -> tuple[sympy.Expr | None, str]:
    """An exact value for display (``j`` for the imaginary unit), and its decimal text.

    The exact form is shown as the solver left it (splitting a large expression into
    real and imaginary parts can grow it a hundredfold); one longer than
    ``MAX_EXACT_TEXT`` characters is not typeset.

    Returns
    -------
    tuple
        The display expression (None when the exact form is too long to typeset) and
        the value to 12 significant digits.
    """
    # ball arithmetic, and text in no order: sympy's N walks a large value as a tree, and its
    # printer orders the terms of a sum by their numerical values
    certified = certify(exact)
    value = certified.value if certified is not None else complex(sympy.N(exact, 15))
    re_text, im_text = f"{value.real:.12g}", f"{abs(value.imag):.12g}"
    sign = "-" if value.imag < 0 else "+"
    decimal = re_text if value.imag == 0 else f"{re_text} {sign} {im_text}j"
    if _digits_at_least(exact) > MAX_EXACT_TEXT or len(sympy.sstr(exact, order="none")) > MAX_EXACT_TEXT:
        return None, decimal
    return exact.xreplace({sympy.I: sympy.Symbol("j")}), decimal

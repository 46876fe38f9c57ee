"""A small, safe parser for formulas, claims and values.

The text a user writes is read by a tokenizer and a precedence-climbing parser that
build a tree of frozen dataclasses; nothing is ever passed to ``eval``, ``exec``,
``sympify`` or ``parse_expr``. Evaluation of the tree is in
:mod:`handcheck.worksheet.evaluate`.

Grammar, loosest binding first::

    polar   := sum [ ("∠" | "/_") sum ]
    sum     := par { ("+" | "-") par }
    par     := product { "||" product }
    product := unary { ("*" | "/") unary }
    unary   := ("-" | "+") unary | power
    power   := atom [ ("^" | "**") unary ]
    atom    := number [unit] | name | name "(" args ")" | "(" polar ")"
    unit    := ["1" "/"] word ["^" int] { ("/" | "*") word ["^" int] }

A number and the unit after it bind as one value, so ``t/3.2 ms`` divides by
3.2 ms. A number written with a trailing ``j`` (``4.5j``) is imaginary.
"""

from __future__ import annotations

import re
import unicodedata
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from fractions import Fraction

from handcheck.errors import HandcheckError, LimitError, ParseError
from handcheck.worksheet.units import UnitError, lookup_unit, suggest_unit

__all__ = [
    "Binary",
    "Call",
    "Name",
    "Node",
    "Number",
    "Unary",
    "one_line",
    "parse",
    "printable",
    "tokenize",
]

#: Deepest nesting of parentheses and operators accepted.
MAX_DEPTH = 60
#: Longest text accepted for one formula or claim.
MAX_LENGTH = 2000
#: Largest power of ten accepted in a number (the range of IEEE doubles, and then some).
MAX_EXPONENT = 400

RESERVED = frozenset({"j", "f", "w", "t", "pi"})


@dataclass(frozen=True)
class Token:
    kind: str  # "num", "name", "op", "end"
    text: str
    start: int  # 0-based offset in the text
    glued: bool = False  # no space between this token and the previous one


@dataclass(frozen=True)
class Node:
    start: int
    end: int


@dataclass(frozen=True)
class Number(Node):
    """A literal: exact value, unit words (possibly empty) and whether it is imaginary."""

    value: Fraction
    digits: str  # the number as written, without unit
    unit: tuple[tuple[str, int], ...] = ()  # (unit word, exponent) pairs
    imaginary: bool = False


@dataclass(frozen=True)
class Name(Node):
    ident: str


@dataclass(frozen=True)
class Unary(Node):
    op: str
    operand: Node


@dataclass(frozen=True)
class Binary(Node):
    op: str  # + - * / ^ || angle
    left: Node
    right: Node


@dataclass(frozen=True)
class Call(Node):
    function: str
    args: tuple[Node, ...]


# Digits are ASCII 0-9 only (re.ASCII): a str pattern's \d also matches every Unicode
# decimal digit (general category Nd: Arabic-Indic, fullwidth, Devanagari ...), which
# would read silently as numbers. Those are refused by name in tokenize().
_NUMBER = re.compile(r"(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?", re.ASCII)
_NAME = re.compile(r"[A-Za-z_Ωµμ°ω][A-Za-z0-9_Ωµμω]*")
#: "j4.5" as engineers write an imaginary number (part names of this shape are refused).
_J_NUMBER = re.compile(r"j((?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)", re.ASCII)
#: U+2126 OHM SIGN is canonically equivalent to U+03A9 GREEK CAPITAL LETTER OMEGA (its
#: canonical decomposition in UnicodeData.txt; NFC maps it to U+03A9), so both read as
#: the same unit sign. One character for one: columns stay where they were.
OHM_SIGN = "\u2126"
_OPS = ("**", "||", "/_", "∠", "+", "-", "*", "/", "^", "(", ")", ",")


def printable(text: str) -> str:
    """``text`` fit to quote in a one-line message: a line break, tab or other invisible
    character becomes one space (or U+FFFD), so columns still count from the start."""
    if text.isprintable():
        return text
    return "".join(ch if ch.isprintable() else " " if ch.isspace() else "\ufffd" for ch in text)


def one_line(exc: HandcheckError) -> HandcheckError:
    """The error with its message (and quoted text) made printable on one line; return it."""
    exc.message = printable(exc.message)
    exc.args = (exc.message,)
    if isinstance(exc, ParseError) and exc.text:
        exc.text = printable(exc.text)
    return exc


def foreign_digit(ch: str) -> str:
    """The message for a decimal digit other than ASCII 0-9, naming it by its Unicode name."""
    return (
        f'the digit "{ch}" (U+{ord(ch):04X} {unicodedata.name(ch, "DIGIT")}) is not one handcheck reads; '
        "write numbers with the digits 0-9"
    )


def tokenize(text: str) -> list[Token]:
    """Split ``text`` into tokens; raise :class:`ParseError` on a character that has no place."""
    if len(text) > MAX_LENGTH:
        raise LimitError(
            f"the text is {len(text):,} characters long; handcheck reads at most {MAX_LENGTH:,} in one formula, "
            "claim or value; split the calculation into steps"
        )
    text = text.replace(OHM_SIGN, "\u03a9")
    tokens: list[Token] = []
    pos = 0
    glued = False
    while pos < len(text):
        ch = text[pos]
        if ch.isspace():
            pos += 1
            glued = False
            continue
        match = _J_NUMBER.match(text, pos)
        if match and not glued:
            tokens.append(Token("jnum", match.group(1), pos, glued))
            pos = match.end()
            glued = True
            continue
        match = _NUMBER.match(text, pos)
        if match:
            tokens.append(Token("num", match.group(), pos, glued))
            pos = match.end()
            glued = True
            continue
        match = _NAME.match(text, pos)
        if match:
            tokens.append(Token("name", match.group(), pos, glued))
            pos = match.end()
            glued = True
            continue
        for op in _OPS:
            if text.startswith(op, pos):
                tokens.append(Token("op", op, pos, glued))
                pos += len(op)
                glued = True
                break
        else:
            hint = ""
            if ch in "`$;\"'[]{}=!<>&|@#\\":
                hint = ": formulas hold only numbers, units, names, operators + - * / ^ || and parentheses"
            if ch.isdecimal():  # Unicode general category Nd, not 0-9 (those matched above)
                raise ParseError(foreign_digit(ch), printable(text), pos + 1)
            shown = f'"{ch}"' if ch.isprintable() else f"U+{ord(ch):04X} (an invisible character; delete it)"
            raise ParseError(f"unexpected character {shown}{hint}", printable(text), pos + 1)
    tokens.append(Token("end", "", len(text), False))
    return tokens


def parse_number(digits: str, text: str = "", start: int = 0) -> Fraction:
    """The exact value of a decimal literal such as ``"2.2e-6"``."""
    mantissa, _, exponent = digits.lower().partition("e")
    if exponent and abs(int(exponent)) > MAX_EXPONENT:
        raise LimitError(
            f'the number "{digits}" is out of range: powers of ten from -{MAX_EXPONENT} to {MAX_EXPONENT} are accepted'
        )
    value = Fraction(mantissa)
    if exponent:
        value *= Fraction(10) ** int(exponent)
    return value


class _Parser:
    def __init__(self, text: str, names: frozenset[str]) -> None:
        self.text = text
        self.names = names
        self.tokens = tokenize(text)
        self.index = 0
        self.depth = 0

    # -- helpers ---------------------------------------------------------------
    @property
    def tok(self) -> Token:
        return self.tokens[self.index]

    def peek(self, offset: int = 1) -> Token:
        return self.tokens[min(self.index + offset, len(self.tokens) - 1)]

    def advance(self) -> Token:
        tok = self.tok
        self.index += 1
        return tok

    def error(self, message: str, tok: Token | None = None) -> ParseError:
        tok = tok or self.tok
        return ParseError(message, self.text, tok.start + 1)

    def expect(self, op: str) -> Token:
        if self.tok.kind == "op" and self.tok.text == op:
            return self.advance()
        found = f'"{self.tok.text}"' if self.tok.kind != "end" else "the end"
        raise self.error(f'expected "{op}" but found {found}')

    def at_op(self, *ops: str) -> bool:
        return self.tok.kind == "op" and self.tok.text in ops

    def deeper(self) -> None:
        self.depth += 1
        if self.depth > MAX_DEPTH:
            raise LimitError(f"the expression is nested more than {MAX_DEPTH} levels deep; split it into steps")

    # -- grammar ---------------------------------------------------------------
    def parse(self) -> Node:
        if self.tok.kind == "end":
            raise ParseError("the text is empty; write a number or a formula", self.text, None)
        node = self.polar()
        if self.tok.kind != "end":
            tok = self.tok
            after_number = self.index > 0 and self.tokens[self.index - 1].kind in ("num", "jnum")
            if tok.kind == "name" and after_number and tok.text not in self.names and tok.text not in RESERVED:
                raise self.error(
                    f'"{tok.text}" after a number is not a unit handcheck knows (for example ohm, kohm, uF, mH, '
                    "V, mA, Hz, rad/s, deg), nor a name in this worksheet" + _did_you_mean(tok.text)
                )
            if tok.kind in ("num", "name"):
                raise self.error(
                    f'"{tok.text}" follows a complete expression; write "*" to multiply'
                    if tok.kind == "name" or not tok.glued
                    else f'unexpected "{tok.text}"'
                )
            raise self.error(f'unexpected "{tok.text}"')
        return node

    def _binary_chain(self, ops: tuple[str, ...], operand: Callable[[], Node], name: Callable[[str], str]) -> Node:
        left = operand()
        while self.at_op(*ops):
            op = self.advance().text
            self.deeper()
            right = operand()
            self.depth -= 1
            left = Binary(left.start, right.end, name(op), left, right)
        return left

    def polar(self) -> Node:
        left = self.sum()
        if self.at_op("∠", "/_"):
            self.advance()
            right = self.sum()
            return Binary(left.start, right.end, "angle", left, right)
        return left

    def sum(self) -> Node:
        return self._binary_chain(("+", "-"), self.par, lambda op: op)

    def par(self) -> Node:
        return self._binary_chain(("||",), self.product, lambda op: op)

    def product(self) -> Node:
        return self._binary_chain(("*", "/"), self.unary, lambda op: op)

    def unary(self) -> Node:
        if self.at_op("-", "+"):
            tok = self.advance()
            self.deeper()
            operand = self.unary()
            self.depth -= 1
            return operand if tok.text == "+" else Unary(tok.start, operand.end, "-", operand)
        return self.power()

    def power(self) -> Node:
        base = self.atom()
        if self.at_op("^", "**"):
            self.advance()
            self.deeper()
            exponent = self.unary()
            self.depth -= 1
            return Binary(base.start, exponent.end, "^", base, exponent)
        return base

    def atom(self) -> Node:
        tok = self.tok
        if tok.kind in ("num", "jnum"):
            return self.number()
        if tok.kind == "name":
            self.advance()
            if self.at_op("("):
                return self.call(tok)
            return Name(tok.start, tok.start + len(tok.text), tok.text)
        if self.at_op("("):
            self.advance()
            self.deeper()
            inner = self.polar()
            self.depth -= 1
            close = self.expect(")")
            return _regionalise(inner, tok.start, close.start + 1)
        if tok.kind == "end":
            raise self.error("the formula ends too early; a number or name is missing")
        raise self.error(f'unexpected "{tok.text}"')

    def call(self, name_tok: Token) -> Node:
        self.expect("(")
        self.deeper()
        args: list[Node] = []
        if not self.at_op(")"):
            args.append(self.polar())
            while self.at_op(","):
                self.advance()
                args.append(self.polar())
        close = self.expect(")")
        self.depth -= 1
        return Call(name_tok.start, close.start + 1, name_tok.text, tuple(args))

    def number(self) -> Node:
        tok = self.advance()
        value = parse_number(tok.text, self.text, tok.start)
        end = tok.start + len(tok.text) + (1 if tok.kind == "jnum" else 0)
        imaginary = tok.kind == "jnum"
        if not imaginary and self.tok.kind == "name" and self.tok.glued and self.tok.text == "j":
            imaginary = True
            end = self.advance().start + 1
        unit, end = self.unit(end)
        return Number(tok.start, end, value, tok.text, unit, imaginary)

    def _unit_word(self, tok: Token) -> bool:
        if tok.kind != "name" or tok.text in RESERVED or tok.text in self.names:
            return False
        try:
            lookup_unit(tok.text)
        except UnitError:
            return False
        return True

    def _exponent(self) -> int:
        if self.at_op("^", "**") and (
            self.peek().kind == "num" or (self.peek().text == "-" and self.peek(2).kind == "num")
        ):
            self.advance()
            sign = -1 if self.at_op("-") else 1
            if sign < 0:
                self.advance()
            tok = self.advance()
            if not tok.text.isdigit() or int(tok.text) > 4:
                raise self.error(f'a unit power must be a whole number from 1 to 4, not "{tok.text}"', tok)
            return sign * int(tok.text)
        return 1

    def unit(self, end: int) -> tuple[tuple[tuple[str, int], ...], int]:
        tok = self.tok
        if tok.kind == "num" and tok.text == "1" and self.peek().text == "/" and self._unit_word(self.peek(2)):
            return self.reciprocal_unit()
        if tok.kind != "name":
            return (), end
        if not self._unit_word(tok):
            if tok.glued and tok.text not in self.names and tok.text not in RESERVED:
                raise self.error(
                    f'"{tok.text}" is not a unit handcheck knows (for example ohm, kohm, uF, mH, V, mA, Hz, rad/s, deg)'
                    + _did_you_mean(tok.text)
                )
            return (), end
        words: list[tuple[str, int]] = []
        self.advance()
        words.append((tok.text, self._exponent()))
        end = self.tokens[self.index - 1].start + len(self.tokens[self.index - 1].text)
        while self.at_op("/", "*") and self._unit_word(self.peek()):
            sign = -1 if self.advance().text == "/" else 1
            word = self.advance()
            words.append((word.text, sign * self._exponent()))
            end = self.tokens[self.index - 1].start + len(self.tokens[self.index - 1].text)
        return tuple(words), end

    def reciprocal_unit(self) -> tuple[tuple[tuple[str, int], ...], int]:
        """A unit written ``1/s`` or ``1/ms`` after a number (``100 1/s``)."""
        self.advance()  # "1"
        self.advance()  # "/"
        word = self.advance()
        words = [(word.text, -self._exponent())]
        while self.at_op("/", "*") and self._unit_word(self.peek()):
            sign = -1 if self.advance().text == "/" else 1
            more = self.advance()
            words.append((more.text, sign * self._exponent()))
        last = self.tokens[self.index - 1]
        return tuple(words), last.start + len(last.text)


def _regionalise(node: Node, start: int, end: int) -> Node:
    """Widen a parenthesised node's span to include its parentheses (for quoting)."""
    fields = dict(node.__dict__)
    fields["start"], fields["end"] = start, end
    return type(node)(**fields)


def parse(text: str, names: frozenset[str] | set[str] = frozenset()) -> Node:
    """Parse ``text`` into an expression tree.

    Parameters
    ----------
    text
        A formula, value or claim as the user wrote it.
    names
        Names defined in the worksheet (parts, steps); a word after a number that is
        one of these is never read as a unit.

    Raises
    ------
    ParseError
        With the text and the column of the trouble.
    """
    try:
        return _Parser(text, frozenset(names)).parse()
    except ParseError as exc:
        if not exc.text:
            exc.text = text
        raise one_line(exc) from None
    except HandcheckError as exc:
        raise one_line(exc) from None


def walk(node: Node) -> Iterator[Node]:
    """Every node of the tree, parents first."""
    yield node
    if isinstance(node, Unary):
        yield from walk(node.operand)
    elif isinstance(node, Binary):
        yield from walk(node.left)
        yield from walk(node.right)
    elif isinstance(node, Call):
        for arg in node.args:
            yield from walk(arg)


def names_in(node: Node) -> list[str]:
    """The names a tree refers to, in order of first appearance."""
    seen: dict[str, None] = {}
    for sub in walk(node):
        if isinstance(sub, Name):
            seen.setdefault(sub.ident, None)
    return list(seen)


def _did_you_mean(word: str) -> str:
    """``'; did you mean "uF"?'`` for a unit written in the wrong case, else ``""``."""
    found = suggest_unit(word)
    return f'; did you mean "{found}"?' if found else ""

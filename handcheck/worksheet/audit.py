"""The formula audit as written: ``[audit]``, ``[[formula]]`` and the parts' ``tolerance`` and ``range``.

Every text is parsed here, once (Format 1, second edition): an audited formula into
the project's expression tree, its quantity into an :class:`AuditQuantity` tree,
tolerances and ranges into exact values. The audit itself (``handcheck.audit``)
works on these values only.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from fractions import Fraction
from typing import Any, Literal

import sympy

from handcheck.errors import HandcheckError, ParseError, WorksheetError
from handcheck.worksheet.evaluate import evaluate
from handcheck.worksheet.expr import Node, Number, foreign_digit, names_in, one_line, parse, printable, tokenize, walk
from handcheck.worksheet.units import DIMENSIONLESS, dim_of

__all__ = [
    "AUDIT_QUANTITIES",
    "GBW_KEYS",
    "AuditQuantity",
    "AuditSheet",
    "FormulaSpec",
    "Variation",
    "gbw_owner",
    "gbw_symbol",
    "read_audit",
]

Distribution = Literal["uniform", "normal"]

#: Quantities an audited formula may name, and the unit each is in ("" a ratio;
#: "ohm"/"S" for impedances; "rad/s", "Hz" and "s" for the figures).
AUDIT_QUANTITIES: dict[str, str] = {
    "network_function": "",
    "transfer": "",
    "impedance": "ohm",
    "admittance": "S",
    "dc_gain": "",
    "hf_gain": "",
    "natural_frequency": "rad/s",
    "damping_ratio": "",
    "quality_factor": "",
    "time_constant": "s",
    "resonant_frequency": "Hz",
    "cutoff_frequency": "Hz",
}
#: Signals a network function is made of.
SIGNALS = ("voltage", "current")

_AUDIT_KEYS = ("symbols", "samples", "seed", "distribution")
_FORMULA_KEYS = ("name", "quantity", "expression", "reference")
#: Most Monte Carlo samples accepted (memory: a few arrays of doubles each).
MAX_SAMPLES = 5_000_000
#: Units of the parts' values, by kind (a gain has none).
_VALUE_UNITS = {
    "resistor": "ohm",
    "inductor": "H",
    "capacitor": "F",
    "vccs": "S",
    "ccvs": "ohm",
    "vcvs": "",
    "cccs": "",
    "opamp": "",
}


#: An op-amp's gain-bandwidth product kept as an audit symbol is named after the op-amp:
#: ``U1_gbw`` for op-amp U1, in Hz; its part keys are ``gbw_tolerance`` and ``gbw_range``.
GBW_SUFFIX = "_gbw"
GBW_KEYS = ("gbw_tolerance", "gbw_range")
_PART_KEYS = ("tolerance", "range")


def gbw_symbol(ident: str) -> str:
    """The audit symbol of op-amp ``ident``'s gain-bandwidth product."""
    return ident + GBW_SUFFIX


def gbw_owner(name: str, has_gbw: Callable[[str], bool]) -> str | None:
    """The op-amp whose gbw the audit symbol ``name`` is (None when it is none)."""
    ident = name.removesuffix(GBW_SUFFIX)
    return ident if ident != name and has_gbw(ident) else None


@dataclass(frozen=True)
class AuditQuantity:
    """A parsed quantity of the audit: ``name(args)``; an argument is a name or a nested quantity."""

    name: str
    args: tuple[str | AuditQuantity, ...]
    text: str

    def __str__(self) -> str:
        return self.text


@dataclass(frozen=True)
class Variation:
    """How far one part may stray: a relative ``tolerance`` or an exact ``range`` (SI units)."""

    part: str
    tolerance: Fraction | None = None
    low: sympy.Expr | None = None
    high: sympy.Expr | None = None
    line: int | None = None


@dataclass(frozen=True)
class FormulaSpec:
    """One ``[[formula]]``: the quantity, and the supplier's expression parsed (None for a spread)."""

    name: str
    quantity: AuditQuantity
    expression: Node | None
    expression_text: str | None
    reference: str | None = None
    line: int | None = None


@dataclass(frozen=True)
class AuditSheet:
    """The whole audit of a worksheet."""

    symbols: tuple[str, ...] | None
    samples: int = 10_000
    seed: int = 0
    distribution: Distribution = "uniform"
    formulas: tuple[FormulaSpec, ...] = ()
    variations: tuple[Variation, ...] = ()
    line: int | None = None

    def variation(self, part: str) -> Variation | None:
        """The tolerance or range of ``part``, if it has one."""
        for item in self.variations:
            if item.part == part:
                return item
        return None


class _QuantityReader:
    """``name(arg, ...)`` over the project's tokenizer; arguments are names or quantities."""

    def __init__(self, text: str) -> None:
        self.text = text
        self.tokens = tokenize(text)
        self.index = 0

    def fail(self, message: str) -> ParseError:
        return ParseError(message, self.text, self.tokens[self.index].start + 1)

    def take(self) -> Any:
        tok = self.tokens[self.index]
        self.index += 1
        return tok

    def quantity(self) -> AuditQuantity:
        start = self.take()
        known = (*AUDIT_QUANTITIES, *SIGNALS)
        if start.kind != "name" or start.text not in known:
            self.index -= 1
            raise self.fail(f'"{start.text}" is no quantity the audit knows; known: {", ".join(known)}')
        tok = self.tokens[self.index]
        if tok.text != "(":
            return AuditQuantity(start.text, (), start.text)
        self.take()
        args: list[str | AuditQuantity] = []
        while self.tokens[self.index].text != ")":
            tok = self.tokens[self.index]
            if tok.kind == "name" and self.tokens[self.index + 1].text == "(":
                args.append(self.quantity())
            elif tok.kind in ("name", "num"):
                args.append(self.take().text)
            else:
                raise self.fail(f'expected a node, part or quantity, not "{tok.text or "the end"}"')
            if self.tokens[self.index].text == ",":
                self.take()
            elif self.tokens[self.index].text != ")":
                raise self.fail('expected "," or ")"')
        close = self.take()
        return AuditQuantity(start.text, tuple(args), self.text[start.start : close.start + 1])

    def read(self) -> AuditQuantity:
        result = self.quantity()
        if self.tokens[self.index].kind != "end":
            raise self.fail(f'unexpected "{self.tokens[self.index].text}" after the quantity')
        return result


def parse_audit_quantity(text: str) -> AuditQuantity:
    """Read a quantity such as ``"network_function(voltage(out), voltage(in))"``.

    Raises
    ------
    ParseError
        With the column of the trouble.
    """
    reader = _QuantityReader(text)
    if reader.tokens[0].kind == "end":
        raise ParseError("the quantity is empty", text, None)
    return reader.read()


Locate = Callable[[str, str], "int | None"]


class _AuditReader:
    def __init__(self, data: Mapping[str, Any], path: str, locate: Locate, part_kinds: Mapping[str, str]) -> None:
        self.data = data
        self.path = path
        self.locate = locate
        self.kinds = part_kinds
        parts = data.get("parts", {})
        self.gbws = frozenset(
            gbw_symbol(ident)
            for ident, body in (parts.items() if isinstance(parts, dict) else ())
            if part_kinds.get(ident) == "opamp" and isinstance(body, dict) and "gbw" in body
        ) - frozenset(part_kinds)

    def fail(self, message: str, line: int | None) -> WorksheetError:
        return WorksheetError(printable(message), file=self.path, line=line)

    def sheet(self) -> AuditSheet | None:
        head = self.data.get("audit", {})
        raw = self.data.get("formula", [])
        if not isinstance(head, dict):
            raise self.fail("[audit] must be a table", self.locate("audit", ""))
        if not isinstance(raw, list):
            raise self.fail(
                "formulas are written as [[formula]] tables (double brackets)", self.locate("formula.0", "")
            )
        variations = self.variations()
        if not head and not raw:
            return AuditSheet(symbols=None, variations=variations) if variations else None
        for key in head:
            if key not in _AUDIT_KEYS:
                raise self.fail(
                    f'unknown key "{key}" in [audit]; it takes: {", ".join(_AUDIT_KEYS)}', self.locate("audit", key)
                )
        symbols = self.symbols(head)
        distribution = head.get("distribution", "uniform")
        if distribution not in ("uniform", "normal"):
            raise self.fail(
                f'distribution = "{distribution}" in [audit] must be "uniform" or "normal"',
                self.locate("audit", "distribution"),
            )
        return AuditSheet(
            symbols=symbols,
            samples=self.whole(head, "samples", 10_000, 1, MAX_SAMPLES),
            seed=self.whole(head, "seed", 0, 0, 2**63 - 1),
            distribution=distribution,
            formulas=tuple(self.formula(index, body) for index, body in enumerate(raw)),
            variations=variations,
            line=self.locate("audit", ""),
        )

    def whole(self, head: Mapping[str, Any], key: str, default: int, low: int, high: int) -> int:
        value = head.get(key, default)
        if isinstance(value, bool) or not isinstance(value, int) or not low <= value <= high:
            raise self.fail(
                f"{key} in [audit] must be a whole number from {low:,} to {high:,}, without quotes",
                self.locate("audit", key),
            )
        return value

    def symbols(self, head: Mapping[str, Any]) -> tuple[str, ...] | None:
        if "symbols" not in head:
            return None
        value = head["symbols"]
        line = self.locate("audit", "symbols")
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            raise self.fail(
                'symbols in [audit] must be a list of part ids in quotes, like symbols = ["R1", "C1"]', line
            )
        for ident in value:
            if ident in self.gbws:
                continue  # an op-amp's gain-bandwidth product
            if ident not in self.kinds:
                raise self.fail(f'symbols in [audit] names "{ident}", which is not a part of [parts]', line)
            if self.kinds[ident] not in _VALUE_UNITS:
                raise self.fail(
                    f'"{ident}" in symbols of [audit] is a {self.kinds[ident]}; only parts with a value (resistors, '
                    "inductors, capacitors, controlled-source gains, op-amp gains, and an op-amp's gbw as U1_gbw) can "
                    "be kept as symbols",
                    line,
                )
        if len(set(value)) != len(value):
            raise self.fail("symbols in [audit] names a part twice", line)
        return tuple(value)

    def formula(self, index: int, body: Any) -> FormulaSpec:
        where = f"formula.{index}"
        line = self.locate(where, "")
        if not isinstance(body, dict):
            raise self.fail(f"formula {index + 1} must be a table", line)
        for key in body:
            if key not in _FORMULA_KEYS:
                raise self.fail(
                    f'formula {index + 1} has an unknown key "{key}"; a formula takes: {", ".join(_FORMULA_KEYS)}',
                    self.locate(where, key),
                )
        for key in ("name", "quantity"):
            if not isinstance(body.get(key), str) or not body[key].strip():
                raise self.fail(f'formula {index + 1} needs {key} = "..." (text in quotes)', line)
        name = body["name"].strip()
        try:
            quantity = parse_audit_quantity(body["quantity"].strip())
            text = body.get("expression")
            if text is not None and not isinstance(text, str):
                raise self.fail(
                    f'expression of formula "{name}" must be text in quotes', self.locate(where, "expression")
                )
            tree = None
            if text is not None:
                text = " ".join(text.split())
                tree = parse(text, {*self.kinds, *self.gbws, "s"})
                self.check_names(name, tree, text, self.locate(where, "expression"))
        except HandcheckError as exc:
            exc.message = f'formula "{name}": {exc.message}'
            exc.args = (exc.message,)
            raise one_line(exc.located(self.path, line)) from None
        reference = body.get("reference")
        return FormulaSpec(name, quantity, tree, text, str(reference).strip() if reference is not None else None, line)

    def check_names(self, name: str, tree: Node, text: str, line: int | None) -> None:
        for ident in names_in(tree):
            if ident not in self.kinds and ident not in self.gbws and ident not in ("s", "w", "f", "pi", "j", "ω"):
                raise self.fail(f'formula "{name}": "{ident}" in "{text}" is not a part id (nor s, w, f or pi)', line)

    def variations(self) -> tuple[Variation, ...]:
        parts = self.data.get("parts", {})
        found = []
        for ident, body in parts.items() if isinstance(parts, dict) else ():
            if isinstance(body, dict) and ("tolerance" in body or "range" in body):
                found.append(self.variation(ident, body))
            if isinstance(body, dict) and any(key in body for key in GBW_KEYS):
                found.append(self.gbw_variation(ident, body))
        return tuple(found)

    def gbw_variation(self, ident: str, body: Mapping[str, Any]) -> Variation:
        """``gbw_tolerance`` or ``gbw_range`` of an op-amp with a gbw: the variation of ``U1_gbw``, in Hz."""
        line = self.locate("parts", ident)
        symbol = gbw_symbol(ident)
        if symbol not in self.gbws:
            raise self.fail(
                f'part "{ident}" has no gbw; only an op-amp with a gbw takes gbw_tolerance or gbw_range, like '
                f'{{ opamp = "200000", gbw = "1 MHz", gbw_range = ["0.7 MHz", "1.3 MHz"], nodes = [...] }}',
                line,
            )
        texts = body.get("gbw_range")
        for text in texts if isinstance(texts, list) else ():
            if isinstance(text, str) and any(word.startswith("rad") for word, _ in _units_of(text)):
                raise self.fail(
                    f'gbw_range of part "{ident}": write "{text}" in Hz (kHz, MHz), the unit of the symbol {symbol}',
                    line,
                )
        return self.spread(ident, symbol, body, GBW_KEYS, "Hz", '["0.7 MHz", "1.3 MHz"]', line)

    def variation(self, ident: str, body: Mapping[str, Any]) -> Variation:
        line = self.locate("parts", ident)
        kind = self.kinds.get(ident, "")
        if kind not in _VALUE_UNITS:
            raise self.fail(f'part "{ident}" is a {kind}; only parts with a value take a tolerance or a range', line)
        return self.spread(ident, ident, body, _PART_KEYS, _VALUE_UNITS[kind], '["9 kohm", "11 kohm"]', line)

    def spread(
        self,
        ident: str,
        symbol: str,
        body: Mapping[str, Any],
        keys: tuple[str, str],
        unit: str,
        like: str,
        line: int | None,
    ) -> Variation:
        """The variation of ``symbol`` from the part's tolerance key or range key (``keys``)."""
        tolerance_key, range_key = keys
        if tolerance_key in body and range_key in body:
            raise self.fail(f'part "{ident}" has both a {tolerance_key} and a {range_key}; give one', line)
        if tolerance_key in body:
            return Variation(symbol, tolerance=self.tolerance(ident, body[tolerance_key], line), line=line)
        value = body[range_key]
        if not isinstance(value, list) or len(value) != 2 or not all(isinstance(v, str) for v in value):
            raise self.fail(
                f'{range_key} of part "{ident}" must be two values in quotes, like {range_key} = {like}', line
            )
        low, high = (self.value(text, unit, f'{range_key} of part "{ident}"', line) for text in value)
        if not 0 < low < high:
            raise self.fail(f'{range_key} of part "{ident}" must go from a positive low value to a higher one', line)
        return Variation(symbol, low=low, high=high, line=line)

    def tolerance(self, ident: str, value: Any, line: int | None) -> Fraction:
        text = value.strip() if isinstance(value, str) else ""
        if not text.endswith("%"):
            raise self.fail(f'tolerance of part "{ident}" must be a percentage in quotes, like tolerance = "5%"', line)
        foreign = next((ch for ch in text if ch.isdecimal() and not ch.isascii()), None)
        if foreign is not None:  # Fraction() would read "٥%" as 5 %
            raise self.fail(f'tolerance of part "{ident}": {foreign_digit(foreign)}', line)
        try:
            number = Fraction(text[:-1].strip()) / 100
        except (ValueError, ZeroDivisionError):
            raise self.fail(f'tolerance "{text}" of part "{ident}" is not a percentage, like "5%"', line) from None
        if not 0 < number < 1:
            raise self.fail(f'tolerance "{text}" of part "{ident}" must be more than 0% and less than 100%', line)
        return number

    def value(self, text: str, unit: str, what: str, line: int | None) -> sympy.Expr:
        try:
            tree = parse(text)
            value = evaluate(tree, {}, text)
        except HandcheckError as exc:
            raise one_line(exc.located(self.path, line)) from None
        expected = dim_of(unit) if unit else DIMENSIONLESS
        if value.dim != expected or not value.expr.is_Rational:
            has_unit = any(isinstance(n, Number) and n.unit for n in walk(tree))
            need = f"in {unit}" if unit else "a plain number"
            hint = "; write it with its unit" if unit and not has_unit else ""
            raise self.fail(f'{what}: "{text}" must be an exact value {need}{hint}', line)
        return value.expr


def _units_of(text: str) -> list[tuple[str, int]]:
    """The unit words of a value as written (none when it does not parse: the reader says why)."""
    try:
        tree = parse(text)
    except HandcheckError:
        return []
    return [pair for node in walk(tree) if isinstance(node, Number) for pair in node.unit]


def read_audit(data: Mapping[str, Any], path: str, locate: Locate, part_kinds: Mapping[str, str]) -> AuditSheet | None:
    """Read ``[audit]``, ``[[formula]]`` and the parts' tolerances and ranges from the TOML data.

    Parameters
    ----------
    data
        The whole TOML document.
    path
        The file, for messages.
    locate
        ``locate(table, key)`` gives the line of a key (``key == ""``: the table's line).
    part_kinds
        Each part id and its kind.

    Returns
    -------
    AuditSheet or None
        None when the worksheet audits nothing and no part has a tolerance or range.

    Raises
    ------
    WorksheetError, ParseError, UnitError
        For a malformed audit, with the file and line.
    """
    return _AuditReader(data, path, locate, part_kinds).sheet()

"""The quantities a step may name (worksheet format 1), evaluated exactly.

A quantity is written like a function call: ``voltage(out)``, ``voltage(a, b)``,
``current(R1)``, ``impedance(a, b)``, ``transfer(voltage(out), voltage(in))``,
``power(Rload)``. Each evaluates to an exact :class:`Value` at the analysis
frequency, in the worksheet's peak/rms phasor convention.

Power with phasors (any circuit-analysis textbook, e.g. Alexander & Sadiku,
*Fundamentals of Electric Circuits*, 5th ed., section 11.8, from memory): with peak
phasors S = V I* / 2, with rms phasors S = V I*; P = Re S, Q = Im S, the apparent
power is |S| and the power factor |P|/|S| (never negative, whether the part
absorbs or delivers the power). At DC (w = 0) the phasor is the value
itself and S = V I.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import sympy

from handcheck.circuit.mna import MnaSystem
from handcheck.circuit.model import GROUND, Circuit, Part
from handcheck.errors import CircuitError, ParseError
from handcheck.solve.derived import DERIVED, POWER_NAMES, evaluate_derived
from handcheck.solve.frequency import FREQUENCY_QUANTITIES, evaluate_frequency
from handcheck.solve.phasor import Solution, part_current, part_voltage, solve_columns
from handcheck.worksheet.evaluate import Value
from handcheck.worksheet.expr import Token, tokenize
from handcheck.worksheet.units import DIMENSIONLESS, dim_of

__all__ = ["QUANTITIES", "Quantity", "evaluate_quantity", "evaluate_values", "parse_quantity"]

#: Quantity names and the unit word used to display them.
QUANTITIES: dict[str, str] = {
    "voltage": "V",
    "current": "A",
    "impedance": "ohm",
    "admittance": "S",
    "reactance": "ohm",
    "resistance": "ohm",
    "susceptance": "S",
    "conductance": "S",
    "transfer": "",
    "power": "W",
    "reactive_power": "var",
    "apparent_power": "VA",
    "power_factor": "",
}
TIME_DOMAIN = frozenset(
    {
        "at",
        "initial",
        "final",
        "peak",
        "peak_time",
        "settling_time",
        "time_constant",
        "natural_frequency",
        "damping_ratio",
        "quality_factor",
        "crossing_time",
        "absorbed_energy",
    }
)


@dataclass(frozen=True)
class Quantity:
    """A parsed quantity: its name and arguments (names, or nested quantities)."""

    name: str
    args: tuple[str | Quantity, ...]
    text: str

    def __str__(self) -> str:
        return self.text


#: Quantities of the whole circuit, written with or without "()".
CIRCUIT_WIDE = frozenset({"time_constant", "natural_frequency", "damping_ratio", "quality_factor"})
_QUOTED = re.compile(r'"([^"]*)"' + "|'([^']*)'")


class _QuantityParser:
    """Reads ``name(arg, ...)``; an argument is a node or part name, a nested
    quantity, or a value such as ``1.5 ms`` (quoted or not)."""

    def __init__(self, text: str) -> None:
        self.text = text
        self.quoted: dict[int, str] = {}
        masked = _QUOTED.sub(self._mask, text)
        self.tokens = tokenize(masked)
        self.index = 0

    def _mask(self, match: re.Match[str]) -> str:
        # A quoted value becomes a placeholder of the same length, remembered by offset.
        self.quoted[match.start()] = (match.group(1) if match.group(1) is not None else match.group(2)).strip()
        return "_" * (match.end() - match.start())

    def error(self, message: str, tok: Token) -> ParseError:
        return ParseError(message, self.text, tok.start + 1)

    def take(self) -> Token:
        tok = self.tokens[self.index]
        self.index += 1
        return tok

    @property
    def tok(self) -> Token:
        return self.tokens[self.index]

    def quantity(self) -> Quantity:
        start = self.tok
        if start.kind != "name":
            raise self.error('a quantity starts with its name, like "voltage(out)" or "current(R1)"', start)
        self.take()
        name = start.text
        if (
            name not in QUANTITIES
            and name not in TIME_DOMAIN
            and name not in DERIVED
            and name not in FREQUENCY_QUANTITIES
        ):
            known = ", ".join([*QUANTITIES, *DERIVED, *FREQUENCY_QUANTITIES, *sorted(TIME_DOMAIN)])
            raise self.error(f'unknown quantity "{name}"; known quantities: {known}', start)
        if name in CIRCUIT_WIDE and self.tok.text != "(":
            return Quantity(name, (), name)
        open_tok = self.take()
        if open_tok.text != "(":
            raise self.error(f'expected "(" after {name}', open_tok)
        args: list[str | Quantity] = []
        if self.tok.text != ")":
            while True:
                args.append(self.argument())
                if self.tok.text == ",":
                    self.take()
                    continue
                break
        close = self.take()
        if close.text != ")":
            raise self.error(f'expected ")" but found "{close.text or "the end"}"', close)
        end = close.start + 1
        return Quantity(name, tuple(args), self.text[start.start : end])

    def argument(self) -> str | Quantity:
        tok = self.tok
        if tok.start in self.quoted and tok.kind == "name":
            self.take()
            return self.quoted[tok.start]
        if tok.kind == "name" and self.tokens[self.index + 1].text == "(":
            return self.quantity()
        if tok.kind == "num" and self.tokens[self.index + 1].kind == "name":
            # a value with a unit, like 1.5 ms: keep its text
            first = self.take()
            last = first
            while self.tok.kind != "end" and self.tok.text not in (",", ")"):
                last = self.take()
            return self.text[first.start : last.start + len(last.text)].strip()
        if tok.kind in ("name", "num"):
            self.take()
            return tok.text
        raise self.error(f'expected a node, part or quantity, not "{tok.text or "the end"}"', tok)

    def parse(self) -> Quantity:
        result = self.quantity()
        tok = self.tok
        if tok.kind != "end":
            raise self.error(f'unexpected "{tok.text}" after the quantity', tok)
        return result


def parse_quantity(text: str) -> Quantity:
    """Read a quantity such as ``"impedance(a, b)"`` or ``'at(voltage(out), "1.5 ms")'``."""
    return _QuantityParser(text).parse()


class _Evaluator:
    def __init__(self, solution: Solution, quantity_text: str) -> None:
        self.solution = solution
        self.circuit: Circuit = solution.circuit
        self.system: MnaSystem = solution.system
        self.text = quantity_text

    def fail(self, message: str) -> ParseError:
        return ParseError(message, self.text, None)

    def node(self, name: str) -> str:
        if name == GROUND or name in self.system.nodes:
            return name
        known = ", ".join(self.circuit.nodes)
        raise self.fail(f'"{name}" is not a node of the circuit (nodes: {known}, {GROUND})')

    def part(self, name: str) -> Part:
        if self.circuit.has_part(name):
            return self.circuit.part(name)
        raise self.fail(f'"{name}" is not a part of the circuit')

    def is_node(self, name: str) -> bool:
        return name == GROUND or name in self.system.nodes

    def args(self, q: Quantity, low: int, high: int) -> tuple[str | Quantity, ...]:
        if not low <= len(q.args) <= high:
            count = str(low) if low == high else f"{low} or {high}"
            raise self.fail(f"{q.name}() takes {count} argument{'s' if high > 1 else ''}, not {len(q.args)}")
        return q.args

    def names(self, q: Quantity, low: int, high: int) -> tuple[str, ...]:
        args = self.args(q, low, high)
        for arg in args:
            if isinstance(arg, Quantity):
                raise self.fail(f"{q.name}() takes node or part names, not the quantity {arg}")
        return tuple(str(a) for a in args)

    @property
    def power_scale(self) -> sympy.Expr:
        if self.circuit.omega == 0 or self.circuit.phasors == "rms":
            return sympy.Integer(1)
        return sympy.Rational(1, 2)

    # -- the quantities --------------------------------------------------------
    def run(self, q: Quantity) -> Value:
        name = q.name
        if name in TIME_DOMAIN:
            raise NotImplementedError(name)
        if name in FREQUENCY_QUANTITIES:
            return evaluate_frequency(self.solution, q, lambda sol, inner: _Evaluator(sol, self.text).run(inner))  # type: ignore[return-value]
        if name in DERIVED or (name in POWER_NAMES and len(q.args) != 1):
            return evaluate_derived(self.solution, q, lambda sol, inner: _Evaluator(sol, self.text).run(inner))
        if name == "voltage":
            args = self.names(q, 1, 2)
            if len(args) == 1 and not self.is_node(args[0]) and self.circuit.has_part(args[0]):
                return Value(part_voltage(self.solution, self.part(args[0])), dim_of("V"))
            nodes = [self.node(a) for a in args]
            value = self.solution.node_voltage(nodes[0])
            if len(nodes) == 2:
                value -= self.solution.node_voltage(nodes[1])
            return Value(value, dim_of("V"))
        if name == "current":
            (ident,) = self.names(q, 1, 1)
            return Value(part_current(self.solution, self.part(ident)), dim_of("A"))
        if name in ("impedance", "admittance", "reactance", "resistance", "susceptance", "conductance"):
            args = self.names(q, 1, 2)
            if name in ("admittance", "susceptance", "conductance") and self.is_capacitor_at_dc(args):
                return Value(sympy.Integer(0), dim_of("S"))  # an open circuit at DC
            z = self.impedance(args)
            if name in ("impedance", "reactance", "resistance"):
                pick = {"impedance": lambda v: v, "reactance": sympy.im, "resistance": sympy.re}[name]
                return Value(pick(z), dim_of("ohm"))
            if z == 0:
                raise self.fail(
                    f"the impedance of {q.text[q.text.index('(') + 1 : -1]} is exactly 0, so it has no admittance"
                )
            y = 1 / z
            pick = {"admittance": lambda v: v, "susceptance": sympy.im, "conductance": sympy.re}[name]
            return Value(pick(y), dim_of("S"))
        if name == "transfer":
            first, second = self.args(q, 2, 2)
            if not isinstance(first, Quantity) or not isinstance(second, Quantity):
                raise self.fail("transfer() takes two quantities, like transfer(voltage(out), voltage(in))")
            top, bottom = self.run(first), self.run(second)
            if bottom.expr == 0:
                raise self.fail(f"{second} is exactly 0 at the analysis frequency, so the ratio is not defined")
            return Value(top.expr / bottom.expr, top.dim / bottom.dim)
        if name in ("power", "reactive_power", "apparent_power", "power_factor"):
            (ident,) = self.names(q, 1, 1)
            part = self.part(ident)
            complex_power = (
                self.power_scale
                * part_voltage(self.solution, part)
                * sympy.conjugate(part_current(self.solution, part))
            )
            if name == "power":
                return Value(sympy.re(complex_power), dim_of("W"))
            if name == "reactive_power":
                return Value(sympy.im(complex_power), dim_of("W"))
            apparent = sympy.Abs(complex_power)
            if name == "apparent_power":
                return Value(apparent, dim_of("W"))
            if apparent == 0:
                raise self.fail(f"{ident} carries no power at the analysis frequency, so it has no power factor")
            return Value(sympy.Abs(sympy.re(complex_power)) / apparent, DIMENSIONLESS)
        raise self.fail(f'unknown quantity "{name}"')  # pragma: no cover - the parser rejects it first

    def is_capacitor_at_dc(self, args: tuple[str, ...]) -> bool:
        if self.circuit.omega != 0 or len(args) != 1 or self.is_node(args[0]) or not self.circuit.has_part(args[0]):
            return False
        return self.circuit.part(args[0]).kind == "capacitor"

    def impedance(self, args: tuple[str, ...]) -> sympy.Expr:
        if len(args) == 1 and not self.is_node(args[0]):
            return self.part_impedance(self.part(args[0]))
        a = self.node(args[0])
        b = self.node(args[1]) if len(args) == 2 else GROUND
        if a == b:
            raise self.fail(f'impedance between "{a}" and itself is not defined; name two different nodes')
        return self.impedance_between(a, b)

    def part_impedance(self, part: Part) -> sympy.Expr:
        coupled = any(p.kind == "coupling" and part.id in p.inductors for p in self.circuit.parts)
        s = sympy.I * self.circuit.omega
        if part.kind == "resistor":
            return part.value
        if part.kind == "inductor" and not coupled:
            return s * part.value
        if part.kind == "capacitor":
            if self.circuit.omega == 0:
                raise self.fail(f"{part.id} is a capacitor and the analysis is at DC: its impedance is infinite")
            return 1 / (s * part.value)
        voltage = part_voltage(self.solution, part)
        current = part_current(self.solution, part)
        if current == 0:
            raise self.fail(f"{part.id} carries no current at the analysis frequency, so V/I is not defined")
        return voltage / current

    def impedance_between(self, a: str, b: str) -> sympy.Expr:
        """Inject 1 A into ``a`` and out of ``b`` with independent sources zeroed; return v(a) - v(b).

        Zeroed voltage sources stay as shorts (their branch equation keeps v = 0) and
        zeroed current sources as opens; dependent sources are kept (the usual
        Thevenin test-source method, common practice).
        """
        column = [sympy.Integer(0)] * self.system.size
        for node, sign in ((a, 1), (b, -1)):
            index = self.system.node(node)
            if index is not None:
                column[index] += sign
        try:
            (x,) = solve_columns(self.system, self.circuit, [column])
        except CircuitError as exc:
            raise CircuitError(
                f"the impedance between {a} and {b} is not defined: with the sources set to zero, {exc.message}",
                exc.parts,
                file=exc.file,
            ) from None
        va = x[self.system.node(a)] if self.system.node(a) is not None else sympy.Integer(0)  # type: ignore[index]
        vb = x[self.system.node(b)] if self.system.node(b) is not None else sympy.Integer(0)  # type: ignore[index]
        return va - vb


def evaluate_quantity(solution: Solution, quantity: Quantity) -> Value:
    """The exact value of ``quantity`` in the solved circuit.

    Raises
    ------
    ParseError
        If the quantity names a node or part the circuit does not have, or takes
        the wrong number of arguments.
    NotImplementedError
        For a time-domain quantity (not evaluated by the phasor solution).
    """
    return _Evaluator(solution, quantity.text).run(quantity)


def evaluate_values(solution: Solution, quantity: Quantity) -> tuple[Value, ...]:
    """The exact values of a list quantity (poles, zeros, band edges) in the solved circuit.

    Raises
    ------
    ParseError
        As :func:`evaluate_quantity`.
    """
    values = evaluate_frequency(solution, quantity, lambda sol, inner: _Evaluator(sol, quantity.text).run(inner))
    return values if isinstance(values, tuple) else (values,)

"""Network functions and impedances with the audited parts kept as symbols.

The circuit's modified nodal equations (:mod:`handcheck.circuit.mna`) are written
with the audited parts' values replaced by symbols; each row is scaled by the least
common multiple of its denominators so that every entry is a polynomial in s and the
symbols, and the system is solved by fraction-free elimination
(:mod:`handcheck.audit.eliminate`). A signal is a linear form in the unknowns; a
network function is the ratio of two signals, reduced by their gcd.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import sympy

from handcheck.audit.eliminate import Cramer, solve_fraction_free
from handcheck.audit.ring import AuditError, RatFunc, Ring
from handcheck.circuit.kinds import kind_unit
from handcheck.circuit.mna import MnaSystem, stamp
from handcheck.circuit.model import GROUND, Circuit, Part
from handcheck.worksheet.audit import AuditQuantity, gbw_owner, gbw_symbol

__all__ = [
    "SymbolicCircuit",
    "gbw_part",
    "impedance_function",
    "signal",
    "symbol_kinds",
    "symbol_unit",
    "symbolic_circuit",
    "transfer_function",
]

S = sympy.Symbol("s")


@dataclass(frozen=True)
class SymbolicCircuit:
    """The circuit with the audited parts as symbols, and its exact equations."""

    circuit: Circuit
    ring: Ring
    system: MnaSystem
    check: Callable[[], None] | None = None

    def solve(self, rhs: list[sympy.Expr]) -> Cramer:
        """Solve the equations for one right-hand side (sympy values), fraction-free."""
        rows, b = [], []
        n = self.system.size
        for i in range(n):
            entries = [self.ring.fraction(self.system.G[i][j] + S * self.system.C[i][j]) for j in range(n)]
            right = self.ring.fraction(rhs[i])
            scale = self.ring.constant(1)
            for item in (*entries, right):
                if not item.den.is_one():
                    scale = scale * (item.den / scale.gcd(item.den))
            rows.append([e.num * (scale / e.den) for e in entries])
            b.append(right.num * (scale / right.den))
        return solve_fraction_free(rows, b, self.check)

    def part(self, ident: str) -> Part:
        """A part of the circuit, with a message naming it when it is missing."""
        if not self.circuit.has_part(ident):
            raise AuditError(f'"{ident}" is not a part of the circuit')
        return self.circuit.part(ident)


def symbolic_circuit(
    circuit: Circuit, symbols: tuple[str, ...], check: Callable[[], None] | None = None
) -> SymbolicCircuit:
    """The circuit with the parts in ``symbols`` kept as symbols of the same name.

    Parameters
    ----------
    circuit
        The exact circuit (nominal values).
    symbols
        Part ids whose values become symbols (positive reals).
    check
        The time budget's check, called between elimination steps.

    Returns
    -------
    SymbolicCircuit
        With a ring of ``s``, the symbols and ``pi``.
    """
    ring = Ring(("s", *symbols, "pi"))
    parts: list[Part] = []
    for part in circuit.parts:
        changes: dict[str, Any] = {}
        if part.id in symbols:
            changes["value"] = sympy.Symbol(part.id, positive=True)
        if part.kind == "opamp" and part.gbw is not None and gbw_symbol(part.id) in symbols:
            changes["gbw"] = 2 * sympy.pi * sympy.Symbol(gbw_symbol(part.id), positive=True)  # the symbol is in Hz
        parts.append(dataclasses.replace(part, **changes) if changes else part)
    symbolic = dataclasses.replace(circuit, parts=tuple(parts))
    return SymbolicCircuit(symbolic, ring, stamp(symbolic), check)


def gbw_part(circuit: Circuit, name: str) -> Part | None:
    """The op-amp whose gain-bandwidth product the audit symbol ``name`` (``U1_gbw``) is, or None."""
    if circuit.has_part(name):
        return None

    def has_gbw(ident: str) -> bool:
        return circuit.has_part(ident) and circuit.part(ident).kind == "opamp" and circuit.part(ident).gbw is not None

    owner = gbw_owner(name, has_gbw)
    return circuit.part(owner) if owner is not None else None


def symbol_kinds(circuit: Circuit, symbols: tuple[str, ...]) -> dict[str, str]:
    """Each part's kind, and "gbw" for an op-amp's gbw symbol (like symbols may be set equal)."""
    kinds: dict[str, str] = {p.id: p.kind for p in circuit.parts}
    kinds.update({name: "gbw" for name in symbols if gbw_part(circuit, name) is not None})
    return kinds


def symbol_unit(circuit: Circuit, name: str) -> str:
    """The unit of an audit symbol's value: its part kind's, or Hz for a gbw."""
    return "Hz" if gbw_part(circuit, name) is not None else kind_unit(circuit.part(name).kind)


def _drive(sc: SymbolicCircuit) -> list[sympy.Expr]:
    """B u: one source at unit amplitude, or every source at its phasor."""
    system = sc.system
    amplitudes = []
    for ident in system.sources:
        source = sc.circuit.part(ident).source
        amplitudes.append(source.phasor(sc.circuit.phasors) if source is not None else sympy.Integer(0))
    live = [k for k, a in enumerate(amplitudes) if a != 0]
    if not live:
        raise AuditError("the circuit has no source with a nonzero value to drive a network function")
    if len(live) == 1:
        amplitudes = [sympy.Integer(1 if k == live[0] else 0) for k in range(len(amplitudes))]
    return [sum((row[k] * amplitudes[k] for k in range(len(amplitudes))), sympy.Integer(0)) for row in system.B]


def _node(sc: SymbolicCircuit, cramer: Cramer, name: str) -> Any:
    if name == GROUND:
        return cramer.det * 0
    if name not in sc.system.nodes:
        raise AuditError(f'"{name}" is neither a node nor a part of the circuit')
    return cramer.numerators[sc.system.nodes[name]]


def signal(sc: SymbolicCircuit, cramer: Cramer, quantity: AuditQuantity | str) -> RatFunc:
    """``voltage(a)``, ``voltage(a, b)``, ``voltage(P)`` or ``current(P)`` as an exact rational function.

    Raises
    ------
    AuditError
        For a name the circuit does not have or a signal the audit cannot form.
    """
    if isinstance(quantity, str) or quantity.name not in ("voltage", "current"):
        raise AuditError(f"{quantity} is not a voltage(...) or current(...)")
    ring, args = sc.ring, [str(a) for a in quantity.args]
    if not 1 <= len(args) <= 2 or any(not isinstance(a, str) for a in quantity.args):
        raise AuditError(f"{quantity} takes one or two node or part names")
    if quantity.name == "voltage":
        if len(args) == 1 and args[0] not in sc.system.nodes and args[0] != GROUND and sc.circuit.has_part(args[0]):
            part = sc.part(args[0])
            args = [part.nodes[0]] if part.kind == "opamp" else list(part.nodes[:2])
        value = _node(sc, cramer, args[0]) - (_node(sc, cramer, args[1]) if len(args) == 2 else 0)
        return RatFunc.make(ring, value, cramer.det)
    part = sc.part(args[0])
    if part.id in sc.system.branches:
        return RatFunc.make(ring, cramer.numerators[sc.system.branches[part.id]], cramer.det)
    voltage = RatFunc.make(ring, _node(sc, cramer, part.nodes[0]) - _node(sc, cramer, part.nodes[1]), cramer.det)
    if part.kind == "resistor":
        return voltage / ring.fraction(part.value)
    if part.kind == "capacitor":
        return voltage * ring.fraction(S * part.value)
    raise AuditError(f"current({part.id}) of a {part.kind} is not available to the audit")


def transfer_function(sc: SymbolicCircuit, quantity: AuditQuantity) -> RatFunc:
    """``network_function(Q1, Q2)`` or ``transfer(Q1, Q2)``: Q1/Q2 as a rational function of s and the symbols."""
    if len(quantity.args) != 2 or not all(isinstance(a, AuditQuantity) for a in quantity.args):
        raise AuditError(f"{quantity.name}() takes two signals, like {quantity.name}(voltage(out), voltage(in))")
    cramer = sc.solve(_drive(sc))
    top, bottom = (signal(sc, cramer, q) for q in quantity.args)
    if bottom.is_zero:
        raise AuditError(f"{quantity.args[1]} is identically 0, so {quantity.text} is not defined")
    return top / bottom


def impedance_function(sc: SymbolicCircuit, quantity: AuditQuantity) -> RatFunc:
    """``impedance(P)``, ``impedance(a, b)`` (sources set to zero) or the ``admittance`` of either.

    The impedance between two nodes is found by injecting a unit current into ``a``
    and out of ``b`` with the independent sources zeroed (the test-source method,
    common practice); a resistor, inductor or capacitor's own impedance is R, sL, 1/(sC).
    """
    args = [str(a) for a in quantity.args]
    if not 1 <= len(args) <= 2:
        raise AuditError(f"{quantity.name}() takes a part or one or two nodes")
    ring = sc.ring
    if len(args) == 1 and sc.circuit.has_part(args[0]) and args[0] not in sc.system.nodes:
        part = sc.part(args[0])
        own = {"resistor": part.value, "inductor": S * part.value, "capacitor": 1 / (S * part.value)}
        if part.kind not in own:
            raise AuditError(f"impedance({part.id}) of a {part.kind} is not available to the audit; name its nodes")
        z = ring.fraction(own[part.kind])
    else:
        a, b = args[0], args[1] if len(args) == 2 else GROUND
        rhs = [sympy.Integer(0)] * sc.system.size
        for node, sign in ((a, 1), (b, -1)):
            if node != GROUND:
                if node not in sc.system.nodes:
                    raise AuditError(f'"{node}" is not a node of the circuit')
                rhs[sc.system.nodes[node]] += sign
        cramer = sc.solve(rhs)
        z = RatFunc.make(ring, _node(sc, cramer, a) - _node(sc, cramer, b), cramer.det)
    if quantity.name == "admittance":
        if z.is_zero:
            raise AuditError(f"the impedance in {quantity.text} is 0, so it has no admittance")
        return ring.fraction(sympy.Integer(1)) / z
    return z

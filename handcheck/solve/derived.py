"""Quantities built on the steady state (second edition, "More quantities").

``magnitude(Q)`` and ``phase(Q)`` of a phasor quantity; ``at_frequency(Q, "10 kHz")``
(Q with the sinusoidal sources driven at another frequency); ``without(Q, P1, ...)``
(Q with parts removed, their terminals left open); ``short_current(a, b)`` (Norton
current); ``secondary_current(T)``; the power of several parts together
(``power(P1, P2)``, ``reactive_power``, ``apparent_power``, ``power_factor``);
``delivered_power(P)`` and ``delivered_reactive_power(P)``; ``energy(P)`` stored in a
capacitor or inductor; ``rms(Q)`` and ``average(Q)`` over every source frequency.

Sources of the formulas (from memory, standard results found in any circuit text,
e.g. Alexander & Sadiku, *Fundamentals of Electric Circuits*, 5th ed., chapters 4,
6 and 11):

- energy stored: w = C v^2 / 2 in a capacitor, w = L i^2 / 2 in an inductor. For a
  sinusoid of peak phasor V the average of v(t)^2 is |V|^2 / 2, so the average
  stored energy is C |V|^2 / 4 with peak phasors, C |V|^2 / 2 with rms phasors;
- complex power is additive over parts (Tellegen's theorem), so a group's P and Q
  are sums and its power factor is |P| / |P + jQ|;
- Thevenin voltage: the open-circuit voltage with the load removed; Norton current:
  the current through a short across the terminals (Thevenin's and Norton's theorems).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from typing import Any

import sympy

from handcheck.circuit.model import GROUND, Circuit, Part, Source
from handcheck.errors import ParseError
from handcheck.solve.phasor import Solution, part_current, part_voltage, solve
from handcheck.worksheet.evaluate import Value
from handcheck.worksheet.sourcefunction import SourceFunction, SourceTerm
from handcheck.worksheet.units import DIMENSIONLESS, dim_of

__all__ = ["DERIVED", "POWER_NAMES", "evaluate_derived", "removed", "retuned", "spectrum"]

#: Quantity names this module evaluates, and their display unit.
DERIVED: dict[str, str] = {
    "magnitude": "",
    "phase": "rad",
    "at_frequency": "",
    "without": "",
    "short_current": "A",
    "secondary_current": "A",
    "delivered_power": "W",
    "delivered_reactive_power": "var",
    "energy": "J",
    "rms": "",
    "average": "",
}
#: Power quantities that take one part or several.
POWER_NAMES = frozenset({"power", "reactive_power", "apparent_power", "power_factor"})

#: How a quantity is evaluated on a (possibly changed) solution: the caller's evaluator.
#: The quantity is typed Any: its class lives in solve/quantities.py, which imports this module.
Evaluate = Callable[[Solution, Any], Value]

_SHORT_ID = "short_current.link"


def _fail(message: str, text: str) -> ParseError:
    return ParseError(message, text, None)


def retuned(circuit: Circuit, omega: sympy.Expr) -> Circuit:
    """The circuit analysed at ``omega``.

    When some source already has a steady sinusoid at ``omega`` (a harmonic of a
    worksheet with several frequencies), the circuit is only analysed there: each
    source keeps its own frequencies. Otherwise every steady sinusoidal term of every
    source is driven at ``omega`` instead of its own frequency (the reading of
    ``at_frequency`` for a frequency response); constant terms then drive nothing.
    """
    runs_there = any(p.source is not None and p.source.steady(omega) != 0 for p in circuit.parts)
    if runs_there or omega == 0:
        return dataclasses.replace(circuit, omega=omega)
    parts = []
    for part in circuit.parts:
        source = part.source
        if source is not None and source.frequencies:
            terms = tuple(
                dataclasses.replace(term, omega=omega) if term.steady and term.omega != 0 else term
                for term in source.function.terms
            )
            function = dataclasses.replace(source.function, terms=terms)
            parts.append(dataclasses.replace(part, source=dataclasses.replace(source, function=function)))
        else:
            parts.append(part)
    return dataclasses.replace(circuit, omega=omega, parts=tuple(parts))


def removed(circuit: Circuit, idents: tuple[str, ...], text: str) -> Circuit:
    """The circuit without the named parts (their terminals left open)."""
    for ident in idents:
        if not circuit.has_part(ident):
            raise _fail(f'"{ident}" is not a part of the circuit; without() takes part ids after the quantity', text)
    gone = set(idents)
    for part in circuit.parts:
        if part.id in gone:
            continue
        if part.control in gone or any(i in gone for i in part.inductors):
            raise _fail(
                f"{part.id} depends on {part.control or ', '.join(part.inductors)}, so that part cannot be removed; "
                "remove both, or leave it in",
                text,
            )
    parts = tuple(p for p in circuit.parts if p.id not in gone)
    used = {n for p in parts for n in p.nodes}
    nodes = tuple(n for n in circuit.nodes if n in used)
    return dataclasses.replace(circuit, parts=parts, nodes=nodes)


def _shorted(circuit: Circuit, a: str, b: str, text: str) -> Circuit:
    """The circuit with an ideal short (a 0 V source, current from a to b) between a and b."""
    for node in (a, b):
        if node != GROUND and node not in circuit.nodes:
            known = ", ".join(circuit.nodes)
            raise _fail(f'"{node}" is not a node of the circuit (nodes: {known}, {GROUND})', text)
    if a == b:
        raise _fail(f'short_current() needs two different nodes, not "{a}" twice', text)
    zero = Source(SourceFunction(terms=(SourceTerm(sympy.Integer(0)),)))
    link = Part(id=_SHORT_ID, kind="voltage", nodes=(a, b), value=sympy.Integer(0), source=zero)
    return dataclasses.replace(circuit, parts=(*circuit.parts, link))


def _power_scale(circuit: Circuit) -> sympy.Expr:
    """1/2 for peak phasors at a frequency > 0, else 1 (S = V I*/2 or V I*)."""
    if circuit.omega == 0 or circuit.phasors == "rms":
        return sympy.Integer(1)
    return sympy.Rational(1, 2)


def _part(solution: Solution, ident: object, text: str) -> Part:
    if not isinstance(ident, str) or not solution.circuit.has_part(ident):
        raise _fail(f'"{ident}" is not a part of the circuit', text)
    return solution.circuit.part(ident)


def group_power(solution: Solution, name: str, idents: tuple[object, ...], text: str) -> Value:
    """``power``, ``reactive_power``, ``apparent_power`` or ``power_factor`` of the
    named parts together (complex powers added; absorbed power positive)."""
    if not idents:
        raise _fail(f"{name}() takes one part id or more, like {name}(Rload)", text)
    total = sympy.Integer(0)
    for ident in idents:
        part = _part(solution, ident, text)
        total += part_voltage(solution, part) * sympy.conjugate(part_current(solution, part))
    complex_power = _power_scale(solution.circuit) * total
    if name == "power":
        return Value(sympy.re(complex_power), dim_of("W"))
    if name == "reactive_power":
        return Value(sympy.im(complex_power), dim_of("W"))
    apparent = sympy.Abs(complex_power)
    if name == "apparent_power":
        return Value(apparent, dim_of("W"))
    if apparent == 0:
        raise _fail(
            f"{', '.join(map(str, idents))} carry no power at the analysis frequency, so there is no power factor", text
        )
    return Value(sympy.Abs(sympy.re(complex_power)) / apparent, DIMENSIONLESS)


def _energy(solution: Solution, ident: object, text: str, evaluate: Evaluate) -> Value:
    """Average stored energy over the periodic steady state: C <v^2> / 2 or L <i^2> / 2,
    with <x^2> the mean square over every source frequency (its value squared at DC)."""
    part = _part(solution, ident, text)
    circuit = solution.circuit
    if any(p.kind == "coupling" and part.id in p.inductors for p in circuit.parts):
        raise _fail(f"{part.id} is magnetically coupled; the energy of one coupled inductor alone is not defined", text)
    if part.kind not in ("capacitor", "inductor"):
        raise _fail(f"energy() takes a capacitor or an inductor; {part.id} is a {part.kind}", text)
    from handcheck.solve.quantities import Quantity

    kind = "voltage" if part.kind == "capacitor" else "current"
    inner = Quantity(kind, (part.id,), f"{kind}({part.id})")
    mean_square = _mean_square(solution, inner, text, evaluate)
    return Value(part.value * mean_square / 2, dim_of("J"))


def spectrum(circuit: Circuit, text: str) -> list[sympy.Expr]:
    """Every frequency (rad/s) the sources drive in steady state, DC (0) first."""
    out: list[sympy.Expr] = []
    for part in circuit.parts:
        source = part.source
        if source is None:
            continue
        if source.function.repeats:
            raise _fail(
                f"{part.id} repeats: rms() and average() over a repeating source's period are not available yet; "
                "write its harmonics as cosine terms",
                text,
            )
        if source.dc != 0 and not any(w == 0 for w in out):
            out.insert(0, sympy.Integer(0))
        for w in source.frequencies:
            if not any(sympy.simplify(w - v) == 0 for v in out):
                out.append(w)
    return out


def _mean_square(solution: Solution, inner: object, text: str, evaluate: Evaluate) -> sympy.Expr:
    """The mean square of a voltage or current over every source frequency together.

    A periodic steady state x(t) = X0 + sum_k |Xk| cos(wk t + phik) with distinct
    frequencies has the mean square X0^2 + sum_k |Xk|^2 / 2, the cross terms averaging
    to zero (Parseval's relation for a Fourier series; e.g. Alexander & Sadiku, 5th
    ed., sec. 17.5, from memory). With rms phasors |Xk|^2 is already the mean square
    of its term.
    """
    circuit = solution.circuit
    total = sympy.Integer(0)
    for w in spectrum(circuit, text):
        value = evaluate(solve(retuned(circuit, w)), inner)
        if w == 0:
            total += value.expr**2
        else:
            scale = sympy.Integer(1) if circuit.phasors == "rms" else sympy.Rational(1, 2)
            total += scale * sympy.Abs(value.expr) ** 2
    return total


def _rms_average(solution: Solution, q: object, inner: object, evaluate: Evaluate) -> Value:
    """``rms(Q)``: the square root of the mean square (:func:`_mean_square`);
    ``average(Q)``: the DC part X0."""
    circuit = solution.circuit
    name, text = q.name, q.text  # type: ignore[attr-defined]
    if getattr(inner, "name", None) not in ("voltage", "current"):
        raise _fail(f"{name}() takes a voltage or a current, like {name}(voltage(out))", text)
    dim = evaluate(solution, inner).dim
    if name == "average":
        driven = spectrum(circuit, text)
        if not driven or driven[0] != 0:
            return Value(sympy.Integer(0), dim)
        return Value(evaluate(solve(retuned(circuit, sympy.Integer(0))), inner).expr, dim)
    return Value(sympy.sqrt(_mean_square(solution, inner, text, evaluate)), dim)


def _inner(q: object, text: str, name: str) -> object:
    args = getattr(q, "args", ())
    if not args or not hasattr(args[0], "name"):
        raise _fail(f"{name}() takes a quantity first, like {name}(voltage(out))", text)
    return args[0]


def evaluate_derived(solution: Solution, q: object, evaluate: Evaluate) -> Value:
    """The exact value of a quantity of :data:`DERIVED` (or a power of several parts).

    Parameters
    ----------
    solution
        The solved circuit at the analysis frequency.
    q
        The parsed quantity (name, args, text).
    evaluate
        Evaluates any quantity on a solution (used for the quantity inside).

    Returns
    -------
    Value
        The exact value and its dimension.

    Raises
    ------
    ParseError
        For wrong arguments (named in the message).
    """
    name, args, text = q.name, q.args, q.text  # type: ignore[attr-defined]
    circuit = solution.circuit
    if name in POWER_NAMES:
        return group_power(solution, name, args, text)
    if name in ("delivered_power", "delivered_reactive_power"):
        absorbed = group_power(solution, name.removeprefix("delivered_"), args, text)
        return Value(-absorbed.expr, absorbed.dim)
    if name == "energy":
        if len(args) != 1:
            raise _fail("energy() takes one capacitor or inductor, like energy(C1)", text)
        return _energy(solution, args[0], text, evaluate)
    if name == "secondary_current":
        part = _part(solution, args[0] if len(args) == 1 else None, text)
        if part.kind != "transformer":
            raise _fail(f"secondary_current() takes a transformer; {part.id} is a {part.kind}", text)
        index = solution.system.labels.index(f"i({part.id}.secondary)")
        return Value(solution.x[index], dim_of("A"))
    if name == "short_current":
        if len(args) not in (1, 2) or any(hasattr(a, "name") for a in args):
            raise _fail("short_current() takes two nodes, like short_current(out, gnd)", text)
        a, b = str(args[0]), str(args[1]) if len(args) == 2 else GROUND
        shorted = solve(_shorted(circuit, a, b, text))
        return Value(part_current(shorted, shorted.circuit.part(_SHORT_ID)), dim_of("A"))
    inner = _inner(q, text, name)
    if name in ("magnitude", "phase", "at_frequency") and getattr(inner, "name", None) == "network_function":
        raise _fail(
            f"{name}() takes a phasor quantity, and network_function(...) is a function of s; write "
            f'{name}(transfer(...)) for its value at the analysis frequency, or {name}(at_frequency(transfer(...), "1 kHz"))'
            if name != "at_frequency"
            else 'at_frequency() takes a phasor quantity; write at_frequency(transfer(...), "1 kHz") for a network '
            "function's value at 1 kHz",
            text,
        )
    if name in ("magnitude", "phase"):
        if len(args) != 1:
            raise _fail(f"{name}() takes one quantity, like {name}(voltage(out))", text)
        value = evaluate(solution, inner)
        if name == "magnitude":
            return Value(sympy.Abs(value.expr), value.dim)
        if value.expr == 0:
            raise _fail(f"{inner} is exactly 0, so it has no phase", text)
        return Value(sympy.arg(value.expr), DIMENSIONLESS)
    if name == "at_frequency":
        return evaluate(solve(retuned(circuit, _frequency(args, text))), inner)
    if name in ("rms", "average"):
        if len(args) != 1:
            raise _fail(f"{name}() takes one voltage or current, like {name}(voltage(out))", text)
        return _rms_average(solution, q, inner, evaluate)
    if name == "without":
        if len(args) < 2 or any(hasattr(a, "name") for a in args[1:]):
            raise _fail(
                "without() takes a quantity and the part ids to remove, like without(voltage(out), Rload)", text
            )
        return evaluate(solve(removed(circuit, tuple(str(a) for a in args[1:]), text)), inner)
    raise _fail(f'unknown quantity "{name}"', text)  # pragma: no cover - the parser rejects it first


def _frequency(args: tuple[object, ...], text: str) -> sympy.Expr:
    """The angular frequency of ``at_frequency(Q, "10 kHz")`` (Hz or rad/s)."""
    from handcheck.worksheet.values import read_frequency

    if len(args) != 2 or hasattr(args[1], "name"):
        raise _fail('at_frequency() takes a quantity and a frequency, like at_frequency(voltage(out), "10 kHz")', text)
    return read_frequency(str(args[1]), f"the frequency in {text}")

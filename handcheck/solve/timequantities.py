"""Time-domain quantities (worksheet format 1), from the closed-form transient.

``at(Q, "1.5 ms")``, ``initial(Q)``, ``final(Q)``, ``peak(Q)``, ``peak_time(Q)``,
``settling_time(Q, "2%")``, ``crossing_time(Q, "1.2 V")`` for a voltage or current Q,
``absorbed_energy(P, "10 ms")`` for a part P, and, for a circuit whose
response is of first or second order, ``time_constant``, ``natural_frequency``
(rad/s), ``damping_ratio`` and ``quality_factor``.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import sympy

from handcheck.errors import CircuitError, ParseError
from handcheck.solve.absorbed import product_integral
from handcheck.solve.crossing import crossing_time
from handcheck.solve.products import product
from handcheck.solve.quantities import CIRCUIT_WIDE, Quantity
from handcheck.worksheet.evaluate import Value, evaluate_text
from handcheck.worksheet.units import DIMENSIONLESS, Dim, dim_of

__all__ = ["evaluate_time_quantity", "waveform_of"]


def waveform_of(transient: Any, quantity: Quantity) -> tuple[Any, Dim]:
    """The time function of ``voltage(...)`` or ``current(...)`` and its dimension."""
    if quantity.name == "voltage":
        args = [str(a) for a in quantity.args]
        circuit = transient.circuit
        if len(args) == 1 and circuit.has_part(args[0]) and args[0] not in circuit.nodes and args[0] != "gnd":
            return transient.part_voltage(args[0]), dim_of("V")
        if len(args) == 1:
            return transient.node_voltage(args[0]), dim_of("V")
        if len(args) == 2:
            return transient.node_voltage(args[0]) - transient.node_voltage(args[1]), dim_of("V")
    if quantity.name == "current" and len(quantity.args) == 1:
        return transient.part_current(str(quantity.args[0])), dim_of("A")
    if quantity.name == "energy" and len(quantity.args) == 1 and not isinstance(quantity.args[0], Quantity):
        return _stored_energy(transient, str(quantity.args[0]), quantity), dim_of("J")
    raise ParseError(
        "a time-domain quantity takes a voltage, a current or a stored energy, like voltage(out), "
        f"current(R1) or energy(C1), not {quantity}",
        str(quantity),
        None,
    )


def _stored_energy(transient: Any, ident: str, quantity: Quantity) -> Any:
    """``C v(t)**2 / 2`` of a capacitor or ``L i(t)**2 / 2`` of an inductor, as a waveform
    (e.g. Hayt & Kemmerly, *Engineering Circuit Analysis*, 8th ed., ch. 7, from memory)."""
    wave, half = _energy_base(transient, ident, quantity)
    return product(wave, wave, f"energy({ident})") * half


def _energy_base(transient: Any, ident: str, quantity: Quantity) -> tuple[Any, sympy.Expr]:
    """The capacitor's voltage or the inductor's current, and C/2 or L/2."""
    circuit = transient.circuit
    if not circuit.has_part(ident):
        raise ParseError(f'"{ident}" is not a part of the circuit', quantity.text, None)
    part = circuit.part(ident)
    if part.kind == "inductor" and any(p.kind == "coupling" and ident in p.inductors for p in circuit.parts):
        raise CircuitError(
            f"{ident} is magnetically coupled; the energy of one coupled inductor alone is not defined", (ident,)
        )
    if part.kind == "capacitor":
        wave = transient.part_voltage(ident)
    elif part.kind == "inductor":
        wave = transient.part_current(ident)
    else:
        raise ParseError(f"energy() takes a capacitor or an inductor; {ident} is a {part.kind}", quantity.text, None)
    if wave.impulses:
        raise CircuitError(
            f"{wave.name} holds an impulse from ideal switching, so the energy in {ident} is not defined "
            "at that instant; add the series resistance of the source or switch",
            (ident,),
        )
    return wave, part.value / 2


def _energy_value(transient: Any, quantity: Quantity, phasor: Callable[[Quantity], Value]) -> Value:
    """``at``, ``initial``, ``final``, ``peak`` and ``peak_time`` of ``energy(P)`` from the
    waveform w = v or i itself: ``half * w(t)**2``, and the peak of ``w**2`` is the square of the
    peak of ``|w|`` at the same time (no product of waveforms needed)."""
    name, args = quantity.name, quantity.args
    inner = args[0]
    assert isinstance(inner, Quantity)
    if len(inner.args) != 1 or isinstance(inner.args[0], Quantity):
        raise ParseError("energy() takes one capacitor or inductor, like energy(C1)", quantity.text, None)
    if len(args) != (2 if name == "at" else 1) or (len(args) == 2 and isinstance(args[1], Quantity)):
        if name == "at":
            raise ParseError('at() takes a quantity and a time, like at(voltage(out), "1.5 ms")', quantity.text, None)
        raise ParseError(f"{name}() takes one argument", quantity.text, None)
    wave, half = _energy_base(transient, str(inner.args[0]), quantity)
    joule = dim_of("J")
    if name == "at":
        return Value(half * _exact(wave(_time(str(args[1]), quantity))) ** 2, joule)
    if name == "initial":
        return Value(half * _exact(wave.initial()) ** 2, joule)
    if name == "final":
        final = wave.final()
        return phasor(inner) if final is None else Value(half * _exact(final) ** 2, joule)
    value, when = wave.peak()
    if name == "peak":
        return Value(half * _exact(value) ** 2, joule)
    if when == float("inf"):
        raise CircuitError(
            f"{inner} has no peak time: its largest value is only approached as t grows without bound", ()
        )
    return Value(_exact(when), dim_of("s"))


def _time(text: str, quantity: Quantity) -> sympy.Expr:
    value = evaluate_text(text)
    if value.dim != dim_of("s") or not value.expr.is_real or value.expr < 0:
        raise ParseError(f'the time "{text}" must be a time of 0 s or later, like "1.5 ms"', quantity.text, None)
    return value.expr


_UNIT_WORDS = {dim_of("V"): "V", dim_of("A"): "A", dim_of("J"): "J"}


def _level(text: str, dim: Dim, quantity: Quantity) -> sympy.Expr:
    value = evaluate_text(text)
    word = _UNIT_WORDS.get(dim, "")
    if value.dim != dim or not value.expr.is_real:
        raise ParseError(
            f'the level "{text}" must be a real value in the unit of the quantity, like "1.2 {word}"',
            quantity.text,
            None,
        )
    return value.expr


def _absorbed_energy(transient: Any, quantity: Quantity) -> Value:
    """``integral_0^T v i dt`` of a part, absorbed (passive sign convention)."""
    args = quantity.args
    if len(args) != 2 or isinstance(args[0], Quantity) or isinstance(args[1], Quantity):
        raise ParseError(
            'absorbed_energy() takes a part and a time, like absorbed_energy(R1, "10 ms")', quantity.text, None
        )
    ident = str(args[0])
    if not transient.circuit.has_part(ident):
        raise ParseError(f'"{ident}" is not a part of the circuit', quantity.text, None)
    until = _time(str(args[1]), quantity)
    voltage, current = transient.part_voltage(ident), transient.part_current(ident)
    return Value(_exact(product_integral(voltage, current, until)), dim_of("J"))


def _band(text: str, quantity: Quantity) -> sympy.Expr:
    cleaned = text.strip()
    if cleaned.endswith("%"):
        try:
            value = evaluate_text(cleaned[:-1]).expr / 100
        except ParseError:
            value = None
        if value is not None and value.is_positive and value < 1:
            return value
    raise ParseError(f'the band "{text}" must be a percentage like "2%"', quantity.text, None)


def _exact(number: Any) -> sympy.Expr:
    """A value from the transient solution as a sympy number (exact where it is; an
    mpmath number keeps its 30 and more digits)."""
    import mpmath

    if isinstance(number, sympy.Basic):
        return number
    if isinstance(number, (mpmath.mpc, complex)):
        value = mpmath.mpc(number)
        return sympy.Float(value.real, 30) + sympy.I * sympy.Float(value.imag, 30)
    return sympy.Float(number, 30)


def evaluate_time_quantity(transient: Any, quantity: Quantity, phasor: Callable[[Quantity], Value]) -> Value:
    """The value of a time-domain quantity.

    ``transient`` is the circuit's closed-form :class:`TransientSolution`;
    ``phasor`` evaluates a phasor quantity (used by ``final`` when a sinusoid
    persists: the final value is then the steady-state phasor).
    """
    name, args = quantity.name, quantity.args
    if name in CIRCUIT_WIDE:
        if args:
            raise ParseError(f"{name} takes no arguments; write {name}", quantity.text, None)
        method = getattr(transient, name)
        unit = {"time_constant": dim_of("s"), "natural_frequency": dim_of("Hz")}.get(name, DIMENSIONLESS)
        return Value(_exact(method()), unit)
    if name == "absorbed_energy":
        return _absorbed_energy(transient, quantity)
    if not args or not isinstance(args[0], Quantity):
        raise ParseError(f"{name}() takes a voltage or current first, like {name}(voltage(out))", quantity.text, None)
    inner = args[0]
    if inner.name == "energy" and name in ("at", "initial", "final", "peak", "peak_time"):
        return _energy_value(transient, quantity, phasor)
    wave, dim = waveform_of(transient, inner)
    if name == "at":
        if len(args) != 2 or isinstance(args[1], Quantity):
            raise ParseError('at() takes a quantity and a time, like at(voltage(out), "1.5 ms")', quantity.text, None)
        return Value(_exact(wave(_time(str(args[1]), quantity))), dim)
    if name == "crossing_time":
        if len(args) != 2 or isinstance(args[1], Quantity):
            raise ParseError(
                'crossing_time() takes a quantity and a level, like crossing_time(voltage(out), "1.2 V")',
                quantity.text,
                None,
            )
        level = _level(str(args[1]), dim, quantity)
        return Value(_exact(crossing_time(wave, level, _UNIT_WORDS.get(dim, ""))), dim_of("s"))
    if len(args) > (2 if name == "settling_time" else 1):
        raise ParseError(
            f"{name}() takes {'two arguments' if name == 'settling_time' else 'one argument'}", quantity.text, None
        )
    if name == "initial":
        return Value(_exact(wave.initial()), dim)
    if name == "final":
        final = wave.final()
        return phasor(inner) if final is None else Value(_exact(final), dim)
    if name in ("peak", "peak_time"):
        value, when = wave.peak()
        if name == "peak":  # signed; the checker compares its size unless the claim is negative
            return Value(_exact(value), dim)
        if when == float("inf"):
            raise CircuitError(
                f"{inner} has no peak time: its largest value is only approached as t grows without bound",
                (),
            )
        return Value(_exact(when), dim_of("s"))
    if name == "settling_time":
        if len(args) != 2 or isinstance(args[1], Quantity):
            raise ParseError(
                'settling_time() takes a quantity and a band, like settling_time(voltage(out), "2%")',
                quantity.text,
                None,
            )
        return Value(_exact(wave.settling_time(_band(str(args[1]), quantity))), dim_of("s"))
    raise ParseError(f'unknown time-domain quantity "{name}"', quantity.text, None)  # pragma: no cover

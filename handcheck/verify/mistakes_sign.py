"""The catalogue's sign mistakes (second edition): ``sign-convention`` (a power or a
source current claimed with the opposite sign convention, or an inverting stage's
gain written without its minus sign) and ``reversed-nodes`` (the claim is what the
circuit gives with one source's nodes swapped)."""

from __future__ import annotations

import cmath
import dataclasses
import math

from handcheck.circuit.model import GROUND, Circuit, Part
from handcheck.errors import HandcheckError, TimeLimitError
from handcheck.solve.phasor import solve
from handcheck.solve.quantities import Quantity, evaluate_quantity
from handcheck.verify.claims import agrees, to_complex
from handcheck.verify.present import format_number
from handcheck.verify.rebuild import Context, matches, names_in_quantity, requantify, same, shown

__all__ = ["reversed_nodes", "sign_convention"]

#: Quantities whose sign is fixed by a convention (DESIGN: power absorbed is positive).
_SIGNED_POWER = frozenset({"power", "reactive_power", "delivered_power", "delivered_reactive_power"})


def sign_convention(ctx: Context) -> str | None:
    """A power or a source current with the opposite sign convention: the power a part
    delivers written for the power it absorbs (or the reverse), a capacitor's reactive
    power written as its positive rating in var, a source's current taken in the
    direction it drives into the circuit. Passive sign convention versus a source's
    own convention is a classic confusion (Nilsson & Riedel, Electric Circuits, 10th
    ed., sec. 1.5 and 10.4; from memory)."""
    q = ctx.quantity
    if q is None or ctx.truth is None or ctx.truth.expr == 0 or ctx.claim.unit_text in ("dB", "dBm"):
        return None
    negated = -ctx.truth.expr
    if not matches(ctx, negated):
        return None
    inverted = _dropped_minus(ctx, q)
    if inverted is not None:
        return inverted
    names = ", ".join(str(a) for a in q.args)
    right = shown(ctx, ctx.truth.expr)
    if q.name in _SIGNED_POWER:
        reactive = "reactive" in q.name
        delivered = q.name.startswith("delivered_")
        kinds = {ctx.circuit.part(a).kind for a in q.args if isinstance(a, str) and ctx.circuit.has_part(a)}
        if reactive and not delivered and kinds == {"capacitor"}:
            return (
                f"the number is the capacitor's rating as a positive var figure; {q.name}({names}) is the reactive power it "
                f"absorbs, negative for a capacitor (it supplies vars): write {right}, or ask for "
                f"delivered_reactive_power({names})"
            )
        what = "reactive power" if reactive else "power"
        if delivered:
            return (
                f"the number is the {what} that {names} absorbs; {q.name}({names}) is what it delivers, the opposite sign: "
                f"write {right}, or ask for {q.name.removeprefix('delivered_')}({names})"
            )
        return (
            f"the number is the {what} that {names} delivers; {q.name}({names}) is the {what} it absorbs (absorbed is "
            f"positive), the opposite sign: write {right}, or ask for delivered_{q.name}({names})"
        )
    if q.name == "current" and len(q.args) == 1 and isinstance(q.args[0], str) and ctx.circuit.has_part(q.args[0]):
        part = ctx.circuit.part(q.args[0])
        if part.kind in ("voltage", "current") and len(part.nodes) == 2:
            first, second = part.nodes
            return (
                f"the number is the current that {part.id} drives out of its terminal {first} into the circuit; "
                f"current({part.id}) is the current through it from {first} to {second} (it enters at {first}), "
                f"the opposite sign: write {right}"
            )
    return None


#: Quantities whose sign an inverting stage sets: a gain, or a voltage after the stage.
_GAINS = frozenset({"transfer", "dc_gain", "hf_gain"})


def _dropped_minus(ctx: Context, q: Quantity) -> str | None:
    """An inverting op-amp stage's gain (or a voltage after it) claimed without its
    minus sign: the truth lies on the negative side (near 180 deg from the input) and
    the claim is the truth negated, as "Rf/Rin" gives it. The gain of the inverting
    amplifier is -Rf/Rin, and with a finite open-loop gain A it is
    -(Rf/Rin)/(1 + (1 + Rf/Rin)/A); a one-pole op-amp (``gbw``) turns it a little off
    180 deg (Sedra & Smith, Microelectronic Circuits, 7th ed., sec. 2.2 and 2.8, from
    memory). Quoting its size for the gain is common practice in design notes, and the
    sign is then lost downstream."""
    assert ctx.truth is not None
    value = to_complex(ctx.truth.expr)
    if not value.real < 0 or q.name not in (*_GAINS, "voltage"):
        return None
    stage = _inverting_stage(ctx.circuit, names_in_quantity(q))
    if stage is None:
        return None
    amp, feedback, inputs = stage
    ratio = _stage_gain(ctx.circuit.part(amp), f"{feedback}/{inputs}")
    right = shown(ctx, ctx.truth.expr)
    turn = _turn(value)
    if q.name in _GAINS:
        return (
            f"the number is the gain without its minus sign: the inverting stage {amp} gives {ratio} (the output "
            f"is {turn} from the input): write {right}; magnitude({q.text}) is the size without the sign"
        )
    return (
        f"the number is the voltage without the minus sign of the inverting stage {amp}: it gives {ratio} times "
        f"its input ({turn} from it): write {right}; magnitude({q.text}) is the size without the sign"
    )


def _stage_gain(amp: Part, ratio: str) -> str:
    """The inverting stage's gain in words: -ratio for an ideal op-amp, the finite-gain
    form with its open-loop gain A (and its one pole, with a ``gbw``)."""
    if amp.value == 0:
        return f"-{ratio}"
    gain = f"-({ratio})/(1 + (1 + {ratio})/A) with its open-loop gain A = {format_number(float(amp.value), 6)}"
    return gain if amp.gbw is None else f"{gain} at DC (its gbw adds one pole at gbw/A)"


def _turn(value: complex) -> str:
    """How far the output is turned from the input: 180 deg, or the angle itself."""
    if abs(value.imag) <= 1e-6 * abs(value):
        return "180 deg"
    return f"{format_number(math.degrees(cmath.phase(value)), 4)} deg"


def _inverting_stage(circuit: Circuit, names: set[str]) -> tuple[str, str, str] | None:
    """The op-amp of an inverting stage whose output the quantity names (its output
    node, or a part on it), with its feedback part (inverting input to output) and its
    input part (into the inverting input from elsewhere): their ids, or "Zf" and "Zin"."""
    passive = [p for p in circuit.parts if p.kind in ("resistor", "inductor", "capacitor")]
    for amp in circuit.parts:
        if amp.kind != "opamp" or len(amp.nodes) != 3:
            continue
        out, _, minus = amp.nodes
        on_output = {out} | {p.id for p in circuit.parts if out in p.nodes}
        if not names & on_output:
            continue
        feedback = [p for p in passive if set(p.nodes) == {minus, out}]
        inputs = [p for p in passive if minus in p.nodes and out not in p.nodes]
        if feedback and inputs:
            resistive = len(feedback) == len(inputs) == 1 and {feedback[0].kind, inputs[0].kind} == {"resistor"}
            return (amp.id, feedback[0].id, inputs[0].id) if resistive else (amp.id, "Zf", "Zin")
    return None


def reversed_nodes(ctx: Context) -> str | None:
    """The claim is what the circuit gives with one independent source's nodes swapped:
    a source drawn or entered the other way round (a current source's arrow, a
    supply's polarity). Common practice: the first thing a reviewer checks when a
    superposition result comes out with the wrong sum. Each source is tried once, the
    circuit solved again exactly; only when no cheaper code explains the number, and
    within the check's time budget.

    When the reversal only negates the quantity (a single source drives it), the
    likelier cause is the quantity's own nodes or direction taken the other way round,
    and the detail says so first. A source is ruled out when an earlier step that
    depends on it agrees with the circuit, sign included: that step shows the source
    was taken as connected."""
    if ctx.quantity is None or ctx.truth is None:
        return None
    sources = [
        p for p in ctx.circuit.parts if p.kind in ("voltage", "current") and p.source is not None and len(p.nodes) == 2
    ]
    for part in sources[:_MOST_SOURCES]:
        if ctx.budget is not None:
            ctx.budget.check(f"the mistake catalogue (reversed-nodes, {part.id})")
        first, second = part.nodes
        reversed_parts = tuple(
            dataclasses.replace(p, nodes=(second, first)) if p is part else p for p in ctx.circuit.parts
        )
        circuit = dataclasses.replace(ctx.circuit, parts=reversed_parts)
        value = requantify(ctx, circuit)
        if value is None or same(value, ctx.truth.expr) or not matches(ctx, value) or _confirmed(ctx, circuit):
            continue
        kind = "voltage source" if part.kind == "voltage" else "current source"
        written = f'nodes = ["{second}", "{first}"]'
        connected = f'nodes = ["{first}", "{second}"]' + (
            ", plus terminal first" if part.kind == "voltage" else ", driving current from the first node to the second"
        )
        right = shown(ctx, ctx.truth.expr)
        if same(value, -ctx.truth.expr):
            return (
                f"the number is the quantity with its sign reversed: {_direction(ctx)}, "
                f"or {kind} {part.id} connected the other way ({written}; it is connected as {connected}); "
                f"as connected, the value is {right}"
            )
        return (
            f"the number is what the circuit gives with {kind} {part.id} the other way round ({written}); "
            f"it is connected as {connected}: with it as connected the value is {right}"
        )
    return None


def _confirmed(ctx: Context, circuit: Circuit) -> bool:
    """True when an earlier step that agrees with the circuit would not agree with
    this changed one: its claim confirms the circuit as it is connected."""
    if not ctx.agreed:
        return False
    try:
        solution = solve(circuit)
    except TimeLimitError:
        raise
    except (HandcheckError, NotImplementedError, ZeroDivisionError):
        return False
    for earlier in ctx.agreed:
        try:
            value = evaluate_quantity(solution, earlier.quantity)
            number = to_complex(value.expr)
        except TimeLimitError:
            raise
        except (HandcheckError, NotImplementedError, ZeroDivisionError):
            continue
        if not agrees(earlier.claim, number, earlier.tolerance):
            return True
    return False


def _direction(ctx: Context) -> str:
    """How the quantity's own sign is set, in words: its nodes or its current's direction."""
    q = ctx.quantity
    while q is not None and q.name in ("at_frequency", "without") and q.args and isinstance(q.args[0], Quantity):
        q = q.args[0]
    args = [a for a in q.args if isinstance(a, str)] if q is not None else []
    part = ctx.circuit.part(args[0]) if len(args) == 1 and ctx.circuit.has_part(args[0]) else None
    if q is None or len(args) != len(q.args) or not args:
        return "the quantity's nodes (or the current's direction) taken the other way round"
    if q.name == "voltage" and part is None:
        a, b = (args[0], GROUND) if len(args) == 1 else (args[0], args[1])
        return f"the quantity's nodes taken the other way round (voltage({b}, {a}) for voltage({a}, {b}))"
    if q.name == "voltage" and part is not None and len(part.nodes) >= 2:
        return f"the voltage's nodes taken the other way round (voltage({part.id}) is v({part.nodes[0]}) - v({part.nodes[1]}))"
    if q.name == "current" and part is not None and len(part.nodes) >= 2:
        return f"the current's direction taken the other way round (current({part.id}) flows through it from {part.nodes[0]} to {part.nodes[1]})"
    if q.name == "secondary_current" and part is not None and len(part.nodes) >= 3:
        return f"the current's direction taken the other way round (secondary_current({part.id}) flows into the dotted secondary terminal {part.nodes[2]})"
    return "the quantity's nodes (or the current's direction) taken the other way round"


#: reversed-nodes tries at most this many sources (one exact solve each).
_MOST_SOURCES = 8

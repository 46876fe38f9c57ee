"""The catalogue's sign mistakes (second edition): ``sign-convention`` (a power or a
source current claimed with the opposite sign convention) and ``reversed-nodes``
(the claim is what the circuit gives with one source's nodes swapped)."""

from __future__ import annotations

import dataclasses

from handcheck.verify.rebuild import Context, matches, requantify, same, shown

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


def reversed_nodes(ctx: Context) -> str | None:
    """The claim is what the circuit gives with one independent source's nodes swapped:
    a source drawn or entered the other way round (a current source's arrow, a
    supply's polarity). Common practice: the first thing a reviewer checks when a
    superposition result comes out with the wrong sum. Each source is tried once, the
    circuit solved again exactly; only when no cheaper code explains the number, and
    within the check's time budget."""
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
        value = requantify(ctx, dataclasses.replace(ctx.circuit, parts=reversed_parts))
        if value is None or same(value, ctx.truth.expr) or not matches(ctx, value):
            continue
        kind = "voltage source" if part.kind == "voltage" else "current source"
        written = f'nodes = ["{second}", "{first}"]'
        return (
            f"the number is what the circuit gives with {kind} {part.id} the other way round ({written}); "
            f'it is connected as nodes = ["{first}", "{second}"]'
            + (
                " (plus terminal first)"
                if part.kind == "voltage"
                else " (it drives current from the first node to the second)"
            )
            + f": with it as connected the value is {shown(ctx, ctx.truth.expr)}"
        )
    return None


#: reversed-nodes tries at most this many sources (one exact solve each).
_MOST_SOURCES = 8

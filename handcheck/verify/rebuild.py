"""The mistake catalogue's machinery: what it knows of a step, and the step's
computation done again with one change built in (the circuit rewired or moved to
another frequency and solved again exactly, the formula evaluated with a changed
tree or environment), compared with the claim."""

from __future__ import annotations

import dataclasses
from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from typing import Any

import sympy

from handcheck.budget import Budget
from handcheck.circuit.model import GROUND, Circuit, Part
from handcheck.errors import HandcheckError, TimeLimitError
from handcheck.solve.phasor import solve
from handcheck.solve.quantities import Quantity, evaluate_quantity
from handcheck.verify.claims import Claim, Tolerance, agrees, to_complex
from handcheck.verify.present import format_value
from handcheck.verify.screen import cannot_match
from handcheck.worksheet.evaluate import Value, evaluate
from handcheck.worksheet.expr import Binary, Node, walk

__all__ = [
    "Agreed",
    "Context",
    "at_omega",
    "by_author",
    "flipped",
    "formula_value",
    "is_phasor",
    "matches",
    "matches_truth",
    "names_in_quantity",
    "node_voltages",
    "replaced",
    "requantify",
    "same",
    "scaled",
    "shown",
    "swapped",
    "with_phases",
]


@dataclass(frozen=True)
class Agreed:
    """An earlier step whose claim agrees with its quantity in the circuit."""

    quantity: Quantity
    claim: Claim
    tolerance: Tolerance


@dataclass(frozen=True)
class Context:
    """What the catalogue needs to know about one step that does not agree."""

    circuit: Circuit
    claim: Claim
    tolerance: Tolerance
    truth: Value | None
    formula: str | None
    tree: Node | None
    quantity: Quantity | None
    claimed_env: Mapping[str, Value]
    true_env: Mapping[str, Value]
    full_env: Mapping[str, Value]
    budget: Budget | None = None
    #: angular frequencies (rad/s) that the worksheet's steps name, in at_frequency(...)
    frequencies: tuple[sympy.Expr, ...] = ()
    #: screen each re-solve in floating point first (:mod:`handcheck.verify.screen`);
    #: False solves every candidate exactly (the screen can only save work)
    screen: bool = True
    #: the earlier steps that agree with the circuit (a source they confirm was not reversed)
    agreed: tuple[Agreed, ...] = ()


def matches(ctx: Context, value: sympy.Expr | complex | None) -> bool:
    """True when the mistaken ``value`` reproduces the claim, and is not itself within
    the claim's tolerance of the truth (a tolerance that covers both tells nothing)."""
    if value is None:
        return False
    number = value if isinstance(value, complex) else to_complex(value)
    if not agrees(ctx.claim, number, ctx.tolerance):
        return False
    return ctx.truth is None or not agrees(ctx.claim, to_complex(ctx.truth.expr), ctx.tolerance, value=number)


# -- re-solving the circuit with a mistake built in ----------------------------------


def requantify(ctx: Context, circuit: Circuit) -> sympy.Expr | None:
    """The step's quantity in a modified circuit (None when it cannot be had, or
    when a float solve shows it far from the claim: it could not match it)."""
    if ctx.quantity is None:
        return None
    if ctx.screen and cannot_match(circuit, ctx.quantity, ctx.claim, ctx.tolerance):
        return None
    try:
        return evaluate_quantity(solve(circuit), ctx.quantity).expr
    except TimeLimitError:
        raise
    except (HandcheckError, NotImplementedError, ZeroDivisionError):
        return None


def names_in_quantity(q: Quantity) -> set[str]:
    """Every node or part name a quantity refers to, nested quantities included (not
    a substring of its text: a node "m" is not inside "impedance")."""
    names: set[str] = set()
    for arg in q.args:
        names |= names_in_quantity(arg) if isinstance(arg, Quantity) else {arg}
    return names


def node_voltages(circuit: Circuit, nodes: tuple[str, ...]) -> tuple[sympy.Expr, ...] | None:
    """The phasors of these nodes (ground is 0) from one exact solve (None when it fails)."""
    try:
        solution = solve(circuit)
        return tuple(
            sympy.Integer(0)
            if n == GROUND
            else evaluate_quantity(solution, Quantity("voltage", (n,), f"voltage({n})")).expr
            for n in nodes
        )
    except TimeLimitError:
        raise
    except (HandcheckError, NotImplementedError, ZeroDivisionError):
        return None


def at_omega(circuit: Circuit, omega: sympy.Expr) -> Circuit:
    """The circuit analysed at ``omega`` with its sources moved there too."""
    parts = []
    for part in circuit.parts:
        source = part.source
        if source is not None and source.frequencies and circuit.active(part):
            moved = source.function.moved(circuit.omega, omega)
            parts.append(dataclasses.replace(part, source=dataclasses.replace(source, function=moved)))
        else:
            parts.append(part)
    return dataclasses.replace(circuit, parts=tuple(parts), omega=omega)


def with_phases(circuit: Circuit, scale: sympy.Expr) -> Circuit | None:
    """The circuit with every source phase multiplied by ``scale`` (None when no source has one)."""
    parts, changed = [], False
    for part in circuit.parts:
        source = part.source
        turned = source.function.phases_scaled(scale) if source is not None else None
        if source is not None and turned is not None:
            changed = True
            parts.append(dataclasses.replace(part, source=dataclasses.replace(source, function=turned)))
        else:
            parts.append(part)
    return dataclasses.replace(circuit, parts=tuple(parts)) if changed else None


def flipped(circuit: Circuit, kind: str) -> Iterator[tuple[str, Circuit]]:
    """The circuit with one reactive part's reactance sign flipped, then all of that kind."""
    chosen = [p for p in circuit.parts if p.kind == kind]
    coupled = {i for p in circuit.parts if p.kind == "coupling" for i in p.inductors}
    chosen = [p for p in chosen if p.id not in coupled]

    def flip(targets: set[str]) -> Circuit:
        parts: list[Part] = [dataclasses.replace(p, value=-p.value) if p.id in targets else p for p in circuit.parts]
        return dataclasses.replace(circuit, parts=tuple(parts))

    for part in chosen[:12]:
        yield part.id, flip({part.id})
    if len(chosen) > 1:
        yield "every " + kind, flip({p.id for p in chosen})


# -- the formula with a mistake built in -----------------------------------------------


def formula_value(
    ctx: Context, env: Mapping[str, Value], tree: Node | None = None, angle_scale: sympy.Expr | None = None
) -> sympy.Expr | None:
    tree = tree or ctx.tree
    if tree is None or ctx.formula is None:
        return None
    try:
        return evaluate(tree, env, ctx.formula, angle_scale=angle_scale).expr
    except TimeLimitError:
        raise
    except (HandcheckError, ZeroDivisionError):
        return None


def by_author(
    ctx: Context,
    tree: Node | None = None,
    angle_scale: sympy.Expr | None = None,
    changes: Mapping[str, Value] | None = None,
) -> bool:
    """True when the formula, worked out by the author with the given change, gives the claim
    (from the author's numbers as written, or before rounding)."""
    for env in (ctx.claimed_env, ctx.full_env):
        changed = formula_value(ctx, {**env, **(changes or {})}, tree, angle_scale)
        if changed is None or not matches(ctx, changed):
            continue
        if tree is None and angle_scale is None and changes is None:
            return True
        plain = formula_value(ctx, env)
        if plain is None or not same(changed, plain):
            return True  # the change made the difference
    return False


def same(a: sympy.Expr, b: sympy.Expr) -> bool:
    x, y = to_complex(a), to_complex(b)
    return abs(x - y) <= 1e-9 * max(abs(x), abs(y), 1e-300)


def swapped(tree: Node, old: str, new: str) -> Iterator[tuple[Binary, Node]]:
    """The tree with one ``old`` operator replaced by ``new``, one occurrence at a time."""
    for node in walk(tree):
        if isinstance(node, Binary) and node.op == old:
            yield node, replaced(tree, node, dataclasses.replace(node, op=new))


def replaced(tree: Node, target: Node, new: Node) -> Node:
    """The tree with the node ``target`` (found by identity) replaced by ``new``."""
    if tree is target:
        return new
    # the fields of whichever node class the tree is: a child node or a tuple of them
    changes: dict[str, Any] = {}
    for field in dataclasses.fields(tree):
        value = getattr(tree, field.name)
        if isinstance(value, Node):
            inner = replaced(value, target, new)
            if inner is not value:
                changes[field.name] = inner
        elif isinstance(value, tuple) and value and isinstance(value[0], Node):
            items = tuple(replaced(v, target, new) for v in value)
            if any(a is not b for a, b in zip(items, value, strict=True)):
                changes[field.name] = items
    return dataclasses.replace(tree, **changes) if changes else tree


def matches_truth(ctx: Context, value: sympy.Expr | None) -> bool:
    """True when a corrected formula gives the true value (to 9 significant digits)."""
    if value is None or ctx.truth is None:
        return False
    return same(value, ctx.truth.expr)


def scaled(ctx: Context, factor: sympy.Expr) -> bool:
    return ctx.truth is not None and matches(ctx, ctx.truth.expr * factor)


def is_phasor(value: sympy.Expr | None) -> bool:
    """True for a complex value off the real axis (a phasor with an angle of its own)."""
    if value is None:
        return False
    number = to_complex(value)
    return abs(number.imag) > 1e-9 * abs(number)


def shown(ctx: Context, value: sympy.Expr) -> str:
    assert ctx.truth is not None
    return format_value(Value(value, ctx.truth.dim), ctx.claim)

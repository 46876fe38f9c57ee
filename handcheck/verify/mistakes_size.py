"""The catalogue's ``magnitude-as-phasor`` mistake: sizes of phasors added or
subtracted as plain numbers where the phasors belong (|V1| - |V2| for V1 - V2, R + X
for the impedance R + jX).

Kirchhoff's laws hold for phasors, not for their sizes; adding meter readings round a
loop, or a resistance and a reactance, is the classic slip of a first AC course
(common practice; every introductory text warns of it in its phasor chapter, e.g.
Hughes, Electrical and Electronic Technology, from memory).
"""

from __future__ import annotations

import dataclasses

import sympy

from handcheck.errors import HandcheckError, TimeLimitError
from handcheck.solve.quantities import Quantity
from handcheck.verify.claims import to_complex
from handcheck.verify.present import format_number
from handcheck.verify.rebuild import (
    Context,
    by_author,
    formula_value,
    is_phasor,
    matches,
    matches_truth,
    node_voltages,
    replaced,
    requantify,
    same,
    shown,
)
from handcheck.worksheet.evaluate import evaluate
from handcheck.worksheet.expr import Binary, Call, Name, Node, walk
from handcheck.worksheet.units import Dim, dim_of

__all__ = ["magnitude_as_phasor"]

_IMMITTANCE = (dim_of("ohm"), dim_of("S"))


def magnitude_as_phasor(ctx: Context) -> str | None:
    """Magnitudes added or subtracted where the phasors belong: in the step's formula
    (the sizes of two phasors, or a resistance and a reactance added as numbers), or,
    for the claimed number, |R| + |X| of the impedance behind the quantity (also inside
    ``magnitude(...)``) or the sizes of two node voltages combined."""
    if ctx.truth is None:
        return None
    if ctx.tree is not None and ctx.formula is not None:
        found = _sizes_in_formula(ctx) or _parts_added(ctx)
        if found:
            return found
    if ctx.claim.form != "real" or ctx.quantity is None:
        return None
    return _parts_of_immittance(ctx) or _node_sizes(ctx)


def _text(ctx: Context, node: Node) -> str:
    return (ctx.formula or "")[node.start : node.end].strip()


def _sizes_in_formula(ctx: Context) -> str | None:
    """A ``+`` or ``-`` of two complex values worked out on their sizes."""
    assert ctx.tree is not None and ctx.truth is not None
    for node in walk(ctx.tree):
        if not isinstance(node, Binary) or node.op not in ("+", "-"):
            continue
        sized = dataclasses.replace(
            node,
            left=Call(node.left.start, node.left.end, "abs", (node.left,)),
            right=Call(node.right.start, node.right.end, "abs", (node.right,)),
        )
        tree = replaced(ctx.tree, node, sized)
        for env in (ctx.true_env, ctx.claimed_env, ctx.full_env):
            if not (is_phasor(formula_value(ctx, env, node.left)) or is_phasor(formula_value(ctx, env, node.right))):
                continue  # two numbers on the real axis: their sizes add as they are
            value = formula_value(ctx, env, tree)
            plain = formula_value(ctx, env)
            if value is None or not matches(ctx, value) or (plain is not None and same(value, plain)):
                continue
            left, right = _text(ctx, node.left), _text(ctx, node.right)
            verb = "added" if node.op == "+" else "subtracted"
            return (
                f"the number is |{left}| {node.op} |{right}|: the sizes were {verb} as plain "
                f"numbers, but {left} and {right} are complex values at different angles; "
                f"{'add' if node.op == '+' else 'subtract'} them as complex numbers (write each as a polar or "
                f"rectangular value), which gives {shown(ctx, ctx.truth.expr)}"
            )
    return None


def _parts_added(ctx: Context) -> str | None:
    """Two real impedances (or admittances) in the formula, a resistance and a reactance,
    added as numbers where they stand at right angles: ``R + X`` where ``R + j*X`` (or its size
    ``abs(R + j*X)``, sqrt(R^2 + X^2)) gives the quantity. The claim must follow from
    the formula, and the formula with ``j`` put in must give the true value."""
    assert ctx.tree is not None and ctx.truth is not None
    if not by_author(ctx):
        return None
    for node in walk(ctx.tree):
        if not isinstance(node, Binary) or node.op != "+":
            continue
        if _dim(ctx, node) not in _IMMITTANCE:
            continue  # amplitudes of two frequencies also add in quadrature (rms), but not at right angles
        left, right = formula_value(ctx, ctx.true_env, node.left), formula_value(ctx, ctx.true_env, node.right)
        if left is None or right is None or is_phasor(left) or is_phasor(right) or 0 in (left, right):
            continue
        for turned in ("right", "left"):
            side = getattr(node, turned)
            j_times = Binary(side.start, side.end, "*", Name(side.start, side.start, "j"), side)
            phasor = (
                dataclasses.replace(node, right=j_times)
                if turned == "right"
                else dataclasses.replace(node, left=j_times)
            )
            for new in (phasor, Call(node.start, node.end, "abs", (phasor,))):
                if not matches_truth(ctx, formula_value(ctx, ctx.true_env, replaced(ctx.tree, node, new))):
                    continue
                a, b = _text(ctx, node.left), _text(ctx, node.right)
                written = f"{a} + j*{b}" if turned == "right" else f"j*{a} + {b}"
                return (
                    f"the number is {a} + {b} added as plain numbers, but {a} and {b} are at right angles (a "
                    f'resistance and a reactance): "{written}" is the complex value, and its size '
                    f"abs({written}) = sqrt({a}^2 + {b}^2); with it the formula gives {shown(ctx, ctx.truth.expr)}"
                )
    return None


def _dim(ctx: Context, node: Node) -> Dim | None:
    """The dimension of a part of the formula (None when it cannot be evaluated)."""
    try:
        return evaluate(node, ctx.true_env, ctx.formula or "").dim
    except TimeLimitError:
        raise
    except (HandcheckError, ZeroDivisionError):
        return None


def _parts_of_immittance(ctx: Context) -> str | None:
    """A real claim that is |Re| + |Im| of the impedance or admittance behind the
    quantity: the quantity itself, or the one inside ``magnitude(...)``."""
    assert ctx.truth is not None and ctx.quantity is not None
    value: sympy.Expr | None = ctx.truth.expr
    q = ctx.quantity
    if q.name == "magnitude" and len(q.args) == 1 and isinstance(q.args[0], Quantity):
        inner = dataclasses.replace(ctx, quantity=q.args[0], screen=False)
        value = requantify(inner, ctx.circuit)
    if ctx.truth.dim not in _IMMITTANCE or value is None or not is_phasor(value):
        return None
    number = to_complex(value)
    if abs(number.real) == 0 or not matches(ctx, abs(sympy.re(value)) + abs(sympy.im(value))):
        return None
    r, x = ("R", "X") if ctx.truth.dim == dim_of("ohm") else ("G", "B")
    return (
        f"the number is |{r}| + |{x}|: the real and imaginary parts were added as plain numbers, but they are at "
        f"right angles; the size is sqrt(re^2 + im^2) = "
        f"{format_number(abs(number) / float(ctx.claim.unit_factor), 5)} {ctx.claim.unit_text}"
        f" and the value {shown(ctx, value)}"
    )


def _node_sizes(ctx: Context) -> str | None:
    """A real claim of voltage(a, b) that is |V(a)| - |V(b)| or |V(a)| + |V(b)|."""
    assert ctx.truth is not None and ctx.quantity is not None
    q = ctx.quantity
    if not (
        q.name == "voltage"
        and len(q.args) == 2
        and all(isinstance(a, str) and a in (*ctx.circuit.nodes, "gnd") for a in q.args)
    ):
        return None
    ends = node_voltages(ctx.circuit, (str(q.args[0]), str(q.args[1])))
    if ends is None or not (is_phasor(ends[0]) or is_phasor(ends[1])):
        return None
    a, b = q.args
    # sizes to 30 digits (as every match is judged), not as exact radicals: those
    # of a large circuit's node voltages take seconds to evaluate
    size_a, size_b = abs(to_complex(ends[0])), abs(to_complex(ends[1]))
    for op, value in (("-", complex(size_a - size_b)), ("+", complex(size_a + size_b))):
        if matches(ctx, value):
            return (
                f"the number is |V({a})| {op} |V({b})|: the sizes of the node voltages were combined as plain numbers, "
                f"but they are phasors at different angles; V({a}) - V({b}) as complex numbers gives "
                f"{shown(ctx, ctx.truth.expr)}"
            )
    return None

"""The catalogue's ``other-frequency`` mistake: a reactance or impedance taken at
another frequency of the worksheet (a source's, the analysis frequency, or one a step
names in ``at_frequency``)."""

from __future__ import annotations

import contextlib
import dataclasses
from collections.abc import Iterable

import sympy

from handcheck.errors import HandcheckError
from handcheck.solve.derived import retuned
from handcheck.solve.quantities import Quantity
from handcheck.verify.present import format_number
from handcheck.verify.rebuild import Context, by_author, matches, requantify, shown
from handcheck.worksheet.evaluate import Value
from handcheck.worksheet.expr import Name, walk
from handcheck.worksheet.units import dim_of
from handcheck.worksheet.values import read_frequency

__all__ = ["other_frequency", "worksheet_frequencies"]


def worksheet_frequencies(quantities: Iterable[Quantity]) -> tuple[sympy.Expr, ...]:
    """The angular frequencies (rad/s) named in ``at_frequency(Q, "...")`` anywhere in
    the quantities (nested ones too), in order of first appearance."""
    found: dict[sympy.Expr, None] = {}
    pending = list(quantities)
    while pending:
        q = pending.pop(0)
        if q.name == "at_frequency" and len(q.args) == 2 and isinstance(q.args[1], str):
            with contextlib.suppress(HandcheckError):  # the step itself reports it
                found.setdefault(read_frequency(q.args[1], q.text), None)
        pending.extend(a for a in q.args if isinstance(a, Quantity))
    return tuple(found)


def other_frequency(ctx: Context) -> str | None:
    """A reactance or impedance taken at another frequency of the worksheet (a
    source's, or one a step names in at_frequency): the fundamental's value reused in
    a harmonic's analysis, or one source's frequency in the other's; for a step that
    asks ``at_frequency(Q, F)``, Q taken at the analysis frequency (or another of the
    worksheet's) instead of F. Common practice (harmonic filter design notes reuse the
    50 Hz reactances; every reactance scales with the harmonic order)."""
    if ctx.truth is None or ctx.truth.dim not in (dim_of("ohm"), dim_of("S")):
        return None
    asked = _asked_at(ctx.quantity) if ctx.quantity is not None else None
    if asked is not None:
        return _at_another(ctx, *asked)
    if ctx.circuit.omega == 0:
        return None
    named = [w for p in ctx.circuit.parts if p.source is not None for w in p.source.frequencies]
    others = dict.fromkeys(w for w in (*named, *ctx.frequencies) if w not in (ctx.circuit.omega, 0))
    here = format_number(float(sympy.N(ctx.circuit.frequency)), 6)
    for omega in list(others)[:6]:
        hertz = format_number(float(sympy.N(omega / (2 * sympy.pi))), 6)
        detail = f"the number is the value at {hertz} Hz, another frequency of this worksheet; the analysis is at {here} Hz, where it is {shown(ctx, ctx.truth.expr)}"
        if ctx.tree is not None and by_author(
            ctx, changes={"f": Value(omega / (2 * sympy.pi), dim_of("Hz")), "w": Value(omega, dim_of("Hz"))}
        ):
            return detail + " (the formula's f or w was taken at " + hertz + " Hz)"
        if ctx.quantity is not None and matches(ctx, requantify(ctx, dataclasses.replace(ctx.circuit, omega=omega))):
            return detail
    return None


#: Quantities that keep the frequency of the quantity inside them.
_WRAPPERS = frozenset({"magnitude", "phase", "without"})


def _asked_at(q: Quantity) -> tuple[Quantity, sympy.Expr] | None:
    """The quantity with its ``at_frequency(Q, F)`` replaced by Q (through magnitude,
    phase and without), and F in rad/s; None for a quantity asked at no frequency of its own."""
    if q.name == "at_frequency" and len(q.args) == 2 and isinstance(q.args[0], Quantity):
        try:
            return q.args[0], read_frequency(str(q.args[1]), q.text)
        except HandcheckError:
            return None
    if q.name in _WRAPPERS and q.args and isinstance(q.args[0], Quantity):
        inner = _asked_at(q.args[0])
        if inner is not None:
            return dataclasses.replace(q, args=(inner[0], *q.args[1:])), inner[1]
    return None


def _at_another(ctx: Context, plain: Quantity, asked: sympy.Expr) -> str | None:
    """Detail when the step's quantity, taken at the analysis frequency or another
    frequency of the worksheet instead of the one it asks for, gives the claim."""
    named = [w for p in ctx.circuit.parts if p.source is not None for w in p.source.frequencies]
    others = dict.fromkeys(w for w in (ctx.circuit.omega, *named, *ctx.frequencies) if w not in (asked, 0))
    there = dataclasses.replace(ctx, quantity=plain)
    wanted = format_number(float(sympy.N(asked / (2 * sympy.pi))), 6)
    for omega in list(others)[:6]:
        if not matches(ctx, requantify(there, retuned(ctx.circuit, omega))):
            continue
        hertz = format_number(float(sympy.N(omega / (2 * sympy.pi))), 6)
        which = "the analysis frequency" if omega == ctx.circuit.omega else "another frequency of this worksheet"
        detail = (
            f"the number is the value at {hertz} Hz, {which}; this step asks for it at {wanted} Hz, "
            f"where it is {shown(ctx, ctx.truth.expr) if ctx.truth is not None else ''}"
        )
        uses = {n.ident for n in walk(ctx.tree) if isinstance(n, Name)} if ctx.tree is not None else set()
        if omega == ctx.circuit.omega and uses & {"f", "w"}:
            detail += f" (in a formula, f and w are the analysis frequency, {hertz} Hz: write the {wanted} Hz in it)"
        return detail
    return None

"""The exact network functions a worksheet's steps name, each once, for the frequency-response plot.

A step names a network function H when its quantity is ``network_function(Q1, Q2)`` or
``transfer(Q1, Q2)``, or holds one: ``magnitude(H)``, ``phase(H)``,
``at_frequency(H, "10 kHz")`` (and the two nested), ``cutoff_frequency(H)``,
``peak_frequency(H)``, ``band_edges(H)``, ``poles(H)``, ``zeros(H)``, ``dc_gain(H)``,
``hf_gain(H)``; an ``impedance(...)`` or ``admittance(...)`` is such an H too (Z(s)
with independent sources zeroed, in ohm; read at the analysis frequency, at another
with ``at_frequency``, or by ``resonant_frequency(Z)``). Two steps that name the same pair (Q1, Q2) share one H (a
``transfer`` and a ``network_function`` of the same quantities are the same function
of s). Each :class:`Curve` keeps H's exact coefficients and, per step, where on H the
step reads (:class:`Reading`); the claims themselves are read by the plot.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import sympy

from handcheck.errors import HandcheckError
from handcheck.solve.frequency import network_function
from handcheck.solve.network import laplace_symbol
from handcheck.solve.phasor import Solution
from handcheck.solve.quantities import Quantity, evaluate_quantity, parse_quantity
from handcheck.worksheet.units import dim_of

__all__ = ["MAX_CURVES", "Curve", "Reading", "named_curves", "names_function"]

#: At most this many network functions are drawn.
MAX_CURVES = 4
#: Readings of H that give a frequency (Hz) or a list of them.
_FREQUENCIES = frozenset({"cutoff_frequency", "peak_frequency", "band_edges", "poles", "zeros", "resonant_frequency"})
#: Network functions that are an impedance or admittance of the circuit, with their unit.
_IMMITTANCES = {"impedance": "ohm", "admittance": "S"}
_GAINS = frozenset({"dc_gain", "hf_gain"})


@dataclass(frozen=True)
class Reading:
    """Where on H one step reads.

    ``kind`` is ``"value"`` (H itself: a claimed function of s, or a phasor at
    ``omega``), ``"magnitude"`` or ``"phase"`` (at ``omega``), or the name of a
    frequency or gain quantity (``"cutoff_frequency"``, ``"poles"``, ``"dc_gain"``...).
    ``omega`` is the exact angular frequency in rad/s of a value, magnitude or phase.
    """

    step: str
    kind: str
    omega: sympy.Expr | None = None


@dataclass(frozen=True)
class Curve:
    """One exact network function H(s) = num/den and the steps that read it.

    ``num`` and ``den`` are H's exact coefficients, highest power of s first.
    """

    text: str
    num: tuple[sympy.Expr, ...]
    den: tuple[sympy.Expr, ...]
    readings: tuple[Reading, ...]
    #: ``"ohm"`` for an impedance Z(s), ``"S"`` for an admittance, ``""`` for a ratio.
    unit: str = ""


def _is_function(q: object) -> bool:
    if isinstance(q, Quantity) and q.name in _IMMITTANCES:
        return 1 <= len(q.args) <= 2 and all(isinstance(a, str) for a in q.args)
    return (
        isinstance(q, Quantity)
        and q.name in ("network_function", "transfer")
        and len(q.args) == 2
        and all(isinstance(a, Quantity) for a in q.args)
    )


def locate(q: Quantity, omega: sympy.Expr) -> tuple[Quantity, str, sympy.Expr | None] | None:
    """(H, kind, omega) for a quantity that reads a network function, else None."""
    if _is_function(q):
        return q, "value", omega
    args = q.args
    if q.name == "at_frequency" and len(args) == 2 and isinstance(args[0], Quantity) and isinstance(args[1], str):
        from handcheck.worksheet.values import read_frequency

        try:
            return locate(args[0], read_frequency(args[1], f"the frequency in {q.text}"))
        except HandcheckError:
            return None
    if len(args) != 1 or not isinstance(args[0], Quantity):
        return None
    if q.name in ("magnitude", "phase"):
        found = locate(args[0], omega)
        if found is not None and found[1] == "value":
            return found[0], q.name, found[2]
        return None
    if q.name in _FREQUENCIES | _GAINS and _is_function(args[0]):
        return args[0], q.name, None
    return None


def names_function(text: str | None) -> bool:
    """Whether a step's quantity text reads a network function (no solving)."""
    if not text:
        return False
    try:
        return locate(parse_quantity(text), sympy.Integer(0)) is not None
    except HandcheckError:
        return False


def _key(h: Quantity) -> tuple[str, ...]:
    if h.name in _IMMITTANCES:
        # impedance(a) looks into node a against ground: the same Z as impedance(a, gnd)
        return (h.name, *(str(a) for a in h.args), *(("gnd",) if len(h.args) == 1 else ()))
    return ("ratio", *(str(a) for a in h.args))


def _part_of_its_own(h: Quantity, solution: Solution) -> bool:
    """Whether ``h`` is one part's own impedance (R, sL, 1/(sC)): a formula, no network's."""
    circuit = solution.circuit
    if h.name not in _IMMITTANCES or len(h.args) != 1:
        return False
    name = str(h.args[0])
    return circuit.has_part(name) and name not in circuit.nodes


def _solved(solution: Solution, h: Quantity) -> tuple[str, sympy.Expr, str]:
    """(how the plot names H, H(s) exactly, H's unit: a ratio of a voltage to a
    current is an impedance in ohm whether it is written as one or as a ratio)."""
    if h.name in _IMMITTANCES:
        response = network_function(solution, h, evaluate_quantity)
        return h.text, response.expr, _IMMITTANCES[h.name]
    value = evaluate_quantity(solution, Quantity("network_function", h.args, h.text))
    unit = next((u for u in _IMMITTANCES.values() if value.dim == dim_of(u)), "")
    return f"{h.args[0]} / {h.args[1]}", value.expr, unit


def _coefficients(expr: sympy.Expr) -> tuple[tuple[sympy.Expr, ...], tuple[sympy.Expr, ...]]:
    s = laplace_symbol()
    num, den = sympy.fraction(sympy.cancel(sympy.together(expr)))
    return tuple(sympy.Poly(num, s).all_coeffs()), tuple(sympy.Poly(den, s).all_coeffs())


def named_curves(steps: Iterable[tuple[str, str | None]], solution: Solution) -> tuple[Curve, ...]:
    """The network functions the steps name, each solved once (at most :data:`MAX_CURVES`).

    Parameters
    ----------
    steps
        (step name, quantity text or None) in the worksheet's order.
    solution
        The exact steady-state solution (its circuit and analysis frequency).

    Returns
    -------
    tuple of Curve
        In the order the steps first name them. A network function that cannot be
        formed (no drive at the analysis frequency, a ratio of two sources' phases) is
        left out: its steps' verdicts already say why.
    """
    omega = solution.circuit.omega
    found: dict[tuple[str, ...], tuple[Quantity, list[Reading]]] = {}
    for name, text in steps:
        if not text:
            continue
        try:
            located = locate(parse_quantity(text), omega)
        except HandcheckError:
            continue
        if located is None:
            continue
        h, kind, at = located
        if _part_of_its_own(h, solution):
            continue
        key = _key(h)
        if key not in found:
            if len(found) == MAX_CURVES:
                continue
            found[key] = (h, [])
        found[key][1].append(Reading(name, kind, at))
    curves = []
    for h, readings in found.values():
        try:
            text, expr, unit = _solved(solution, h)
            num, den = _coefficients(expr)
        except (HandcheckError, sympy.PolynomialError):
            continue
        if all(c == 0 for c in num):
            continue  # identically 0 (a node shorted to ground): no magnitude to draw
        curves.append(Curve(text, num, den, tuple(readings), unit))
    return tuple(curves)

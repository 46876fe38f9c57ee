"""The transform system's right-hand sides and responses, solved exactly.

One right-hand side per independent source and one for the stored energy
``C x(0-)`` (the differentiation theorem), each solved for rational functions of s;
a quantity's response is a linear form ``sum (c0 + c1 s) x_k(s)`` in the unknowns.
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from handcheck.circuit.mna import MnaSystem
from handcheck.circuit.model import Circuit, Part
from handcheck.errors import CircuitError, LimitError, TimeLimitError
from handcheck.solve.laplace import Shape
from handcheck.solve.sourcetransforms import Basis, Wave

if TYPE_CHECKING:  # pragma: no cover - typing only
    from handcheck.solve.network import RationalFunction

__all__ = ["Column", "combine", "energy_vector", "laplace_s", "node_form", "shape_of", "solve_column", "to_time"]


def energy_vector(system: MnaSystem, circuit: Circuit, part: Part) -> list[Any]:
    """``C x(0-)`` for a unit initial voltage (capacitor, an op-amp's output) or current (inductor) of one part."""
    import sympy

    zero = sympy.Integer(0)
    rhs = [zero] * system.size
    if part.kind == "capacitor":
        if part.id in system.branches:
            rhs[system.branches[part.id]] += part.value
        else:
            for node, sign in ((part.nodes[0], 1), (part.nodes[1], -1)):
                row = system.node(node)
                if row is not None:
                    rhs[row] += sign * part.value
    elif part.kind == "opamp":  # the pole's state v(out): its row holds -v(out)/gbw in C
        branch = system.branches[part.id]
        rhs[branch] += system.C[branch][system.nodes[part.nodes[0]]]
    else:  # inductor: its column of C holds -L on its row and -M on each coupled inductor's row
        col = system.branches[part.id]
        for row in range(system.size):
            rhs[row] += system.C[row][col]
    return rhs


@dataclass(frozen=True)
class Column:
    """One right-hand side, its exact solution, and what multiplies it."""

    label: str
    responses: tuple[Any, ...]  # RationalFunction per unknown
    waves: tuple[Wave, ...]


def solve_column(system: MnaSystem, circuit: Circuit, rhs: list[Any], deadline: float) -> tuple[RationalFunction, ...]:
    from handcheck.solve.network import solve_rational

    remaining = deadline - time.monotonic()
    if remaining <= 0:
        raise timeout_error()
    try:
        return solve_rational(system.G, system.C, rhs, time_limit=remaining)
    except TimeLimitError:
        raise  # the command's own budget: never turned into another finding
    except TimeoutError:
        raise timeout_error() from None
    except ValueError as exc:
        raise CircuitError(
            "the circuit after t = 0 has no unique solution: its equations are singular for every s "
            f"({exc}); look for a loop of voltage sources and capacitors or a cut of current sources and inductors",
            file=circuit.path,
        ) from None


def timeout_error() -> LimitError:
    return LimitError(
        "the transient solution took longer than its time limit; simplify the circuit (fewer capacitors and "
        "inductors) or raise the limit"
    )


def laplace_s() -> Any:
    from handcheck.solve.network import laplace_symbol

    return laplace_symbol()


def node_form(system: MnaSystem, node: str) -> dict[int, tuple[Any, Any]]:
    index = system.node(node)
    return {} if index is None else {index: (1, 0)}


def combine(responses: tuple[Any, ...], linear: dict[int, tuple[Any, Any]]) -> tuple[Any, Any]:
    """``sum (c0 + c1 s) x_k(s)`` as a reduced fraction ``(num, den)``; ``(None, None)`` if zero."""
    import sympy

    if not responses:
        return None, None
    s = laplace_s()
    domain = responses[0].den.domain
    num = sympy.Poly(0, s, domain=domain)
    den = sympy.Poly(1, s, domain=domain)
    for k, (c0, c1) in linear.items():
        if c0 == 0 and c1 == 0:
            continue
        rf = responses[k]
        if rf.num.is_zero:
            continue
        mult = sympy.Poly([c1, c0], s, domain=domain) if c1 != 0 else sympy.Poly(c0, s, domain=domain)
        g = den.gcd(rf.den)
        lcm = den.exquo(g) * rf.den
        num = num * lcm.exquo(den) + mult * rf.num * lcm.exquo(rf.den)
        den = lcm
    if num.is_zero:
        return None, None
    g = num.gcd(den)
    num, den = num.exquo(g), den.exquo(g)
    lc = den.LC()
    return num.quo_ground(lc), den.monic()


def shape_of(num: Any, den: Any, basis: Basis) -> Shape:
    import sympy

    s = num.gen
    domain = num.domain
    bn = sympy.Poly(list(basis.num), s, domain=domain)
    bd = sympy.Poly(list(basis.den), s, domain=domain)
    n, d = num * bn, den * bd
    g = n.gcd(d)
    n, d = n.exquo(g), d.exquo(g)
    lc = d.LC()
    return Shape(n.quo_ground(lc), d.monic(), basis.extra)


def to_time(value: Any) -> Any:
    from fractions import Fraction

    import sympy

    if isinstance(value, sympy.Basic):
        return value
    if isinstance(value, bool):
        raise TypeError("a time must be a number")
    if isinstance(value, int):
        return sympy.Integer(value)
    if isinstance(value, Fraction):
        return sympy.Rational(value.numerator, value.denominator)
    if isinstance(value, float):
        return sympy.Rational(repr(value))  # the decimal as written, exactly
    raise TypeError(f"a time must be a number, not {type(value).__name__}")

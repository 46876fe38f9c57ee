"""Exact steady-state phasors at the analysis frequency.

At s = jw the equations ``(G + jw C) x = B u`` are solved exactly. When w is a
rational (or algebraic) number, that is one LU solve over the Gaussian rationals
(sympy's ``DomainMatrix`` over ``QQ_I``, or an algebraic field when a coupling
brings a square root), well under a millisecond for small circuits. When w is
2*pi*f with f rational, w is transcendental and an LU over ``QQ_I(pi)`` grows
quickly; then each unknown is first found as an exact rational function of s
(:mod:`handcheck.solve.network`) and evaluated at s = jw.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import sympy

from handcheck.circuit.mna import MnaSystem, stamp
from handcheck.circuit.model import GROUND, Circuit, Part
from handcheck.circuit.structure import check_dc
from handcheck.errors import CircuitError, TimeLimitError

__all__ = ["Solution", "part_current", "part_voltage", "solve", "solve_columns"]


def _format_frequency(omega: sympy.Expr) -> str:
    if omega == 0:
        return "DC"
    f = omega / (2 * sympy.pi)
    if f.is_Rational:
        return f"{float(f):.6g} Hz"
    return f"{float(omega):.6g} rad/s"


def _singular(system: MnaSystem, circuit: Circuit, matrix: list[list[sympy.Expr]]) -> CircuitError:
    """A CircuitError naming the parts tied to the null space of the matrix."""
    from sympy.polys.matrices import DomainMatrix

    parts: set[str] = set()
    try:
        null = DomainMatrix.from_list_sympy(system.size, system.size, matrix, extension=True).nullspace()
        rows = null.to_Matrix()
        involved = {k for k in range(system.size) for r in range(rows.rows) if rows[r, k] != 0}
    except Exception:
        involved = set(range(system.size))
    names = {system.labels[k][2:-1].split(".")[0] for k in involved}
    for part in circuit.parts:
        if (part.id in names or any(n in names for n in part.nodes if n != GROUND)) and part.kind in (
            "inductor", "capacitor", "voltage", "vcvs", "ccvs", "cccs", "vccs", "opamp", "transformer", "current"
        ):
            parts.add(part.id)
    ordered = sorted(parts)
    listed = (", ".join(ordered[:-1]) + " and " + ordered[-1]) if len(ordered) > 1 else (ordered[0] if ordered else "the circuit")
    lines = [p.line for p in circuit.parts if p.id in parts and p.line]
    return CircuitError(
        f"the circuit's equations are singular at {_format_frequency(circuit.omega)}: {listed} leave a voltage or "
        "current undetermined (for example an ideal LC tank driven exactly at resonance, or a controlled source "
        "that fixes its own control); add the parts' losses or analyse at another frequency",
        tuple(ordered),
        file=circuit.path,
        line=min(lines) if lines else None,
    )


def solve_columns(system: MnaSystem, circuit: Circuit, columns: Sequence[Sequence[sympy.Expr]]) -> list[list[sympy.Expr]]:
    """Solve ``(G + jw C) x = b`` exactly for each right-hand side ``b`` in ``columns``.

    Returns one list of unknowns per column.

    Raises
    ------
    CircuitError
        If the system is singular at the analysis frequency.
    """
    n = system.size
    if n == 0:
        return [[] for _ in columns]
    s = sympy.I * circuit.omega
    if circuit.omega.is_algebraic:
        return _solve_direct(system, circuit, s, columns)
    return _solve_by_network_functions(system, circuit, s, columns)


def _solve_direct(system: MnaSystem, circuit: Circuit, s: sympy.Expr, columns: Sequence[Sequence[sympy.Expr]]) -> list[list[sympy.Expr]]:
    from sympy.polys.matrices import DomainMatrix
    from sympy.polys.matrices.exceptions import DMNonInvertibleMatrixError

    n = system.size
    matrix = [[system.G[r][c] + s * system.C[r][c] for c in range(n)] for r in range(n)]
    rhs = [[columns[k][r] for k in range(len(columns))] for r in range(n)]
    both = DomainMatrix.from_list_sympy(
        n, n + len(columns), [row + rhs[r] for r, row in enumerate(matrix)], extension=True
    ).to_field()
    a = both.extract(list(range(n)), list(range(n)))
    b = both.extract(list(range(n)), list(range(n, n + len(columns))))
    try:
        x = a.lu_solve(b)
    except DMNonInvertibleMatrixError:
        raise _singular(system, circuit, matrix) from None
    values = x.to_Matrix()
    return [[values[r, k] for r in range(n)] for k in range(len(columns))]


def _solve_by_network_functions(
    system: MnaSystem, circuit: Circuit, s: sympy.Expr, columns: Sequence[Sequence[sympy.Expr]]
) -> list[list[sympy.Expr]]:
    from handcheck.solve.network import solve_rational

    results = []
    for column in columns:
        if all(v == 0 for v in column):
            results.append([sympy.Integer(0)] * system.size)
            continue
        try:
            functions = solve_rational(system.G, system.C, list(column))
        except TimeLimitError:
            raise
        except ValueError:
            n = system.size
            matrix = [[system.G[r][c] + s * system.C[r][c] for c in range(n)] for r in range(n)]
            raise _singular(system, circuit, matrix) from None
        values = []
        for fn in functions:
            den = fn.den.as_expr().subs(fn.den.gen, s)
            if sympy.expand(den) == 0:
                n = system.size
                matrix = [[system.G[r][c] + s * system.C[r][c] for c in range(n)] for r in range(n)]
                raise _singular(system, circuit, matrix)
            values.append(fn.num.as_expr().subs(fn.num.gen, s) / den)
        results.append(values)
    return results


@dataclass(frozen=True)
class Solution:
    """Exact phasors of every unknown at the analysis frequency.

    ``x`` holds the unknowns' phasors for the worksheet's sources (in its peak/rms
    convention); ``u`` the source phasors by part id (0 for a source that does not
    run at the analysis frequency).
    """

    circuit: Circuit
    system: MnaSystem
    x: tuple[sympy.Expr, ...]
    u: dict[str, sympy.Expr]

    @property
    def s(self) -> sympy.Expr:
        return sympy.I * self.circuit.omega

    def node_voltage(self, node: str) -> sympy.Expr:
        index = self.system.node(node)
        return sympy.Integer(0) if index is None else self.x[index]


def solve(circuit: Circuit, system: MnaSystem | None = None) -> Solution:
    """Solve the circuit at its analysis frequency with its own sources.

    Each active source is solved for at unit amplitude (the right-hand sides are
    then exact rationals) and the responses are added with the sources' exact
    phasors as weights (superposition), so a phase such as 22.1 deg, whose
    exponential is no algebraic number, never enters the matrix.
    """
    if circuit.omega == 0:
        check_dc(circuit)
    system = system or stamp(circuit)
    u = {
        ident: (circuit.part(ident).source.phasor(circuit.phasors, circuit.omega) if circuit.active(circuit.part(ident)) else sympy.Integer(0))  # type: ignore[union-attr]
        for ident in system.sources
    }
    active = [k for k, ident in enumerate(system.sources) if u[ident] != 0]
    if not active:
        # No source runs at this frequency: every phasor is zero, but check solvability all the same.
        if system.size:
            solve_columns(system, circuit, [[sympy.Integer(1)] + [sympy.Integer(0)] * (system.size - 1)])
        return Solution(circuit, system, (sympy.Integer(0),) * system.size, u)
    columns = [[system.B[r][k] for r in range(system.size)] for k in active]
    responses = solve_columns(system, circuit, columns)
    x = [
        sum((response[r] * u[system.sources[k]] for k, response in zip(active, responses, strict=True)), sympy.Integer(0))
        for r in range(system.size)
    ]
    return Solution(circuit, system, tuple(x), u)


def part_voltage(solution: Solution, part: Part) -> sympy.Expr:
    """v(nodes[0]) - v(nodes[1]); an op-amp's output voltage; a transformer's primary voltage."""
    if part.kind == "opamp":
        return solution.node_voltage(part.nodes[0])
    return solution.node_voltage(part.nodes[0]) - solution.node_voltage(part.nodes[1])


def part_current(solution: Solution, part: Part) -> sympy.Expr:
    """The current entering nodes[0] of the part (its output current for an op-amp, primary for a transformer)."""
    system, x = solution.system, solution.x
    if part.id in system.branches:
        return x[system.branches[part.id]]
    kind = part.kind
    if kind == "resistor":
        return part_voltage(solution, part) / part.value
    if kind == "capacitor":
        return solution.s * part.value * part_voltage(solution, part)
    if kind == "current":
        return solution.u[part.id]
    if kind == "vccs":
        assert isinstance(part.control, tuple)
        return part.value * (solution.node_voltage(part.control[0]) - solution.node_voltage(part.control[1]))
    if kind == "cccs":
        return part.value * x[system.branches[str(part.control)]]
    if kind == "transformer":
        return x[system.labels.index(f"i({part.id}.primary)")]
    if kind == "switch":  # an open switch carries nothing
        return sympy.Integer(0)
    raise CircuitError(f"{part.id} is a {kind}; it has no current of its own", (part.id,), file=solution.circuit.path, line=part.line)

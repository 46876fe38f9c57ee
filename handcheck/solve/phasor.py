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

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import sympy

from handcheck.circuit.mna import MnaSystem, stamp
from handcheck.circuit.model import GROUND, Circuit, Part
from handcheck.circuit.structure import check_dc
from handcheck.errors import CircuitError, TimeLimitError
from handcheck.solve.rational import pi_field

if TYPE_CHECKING:  # pragma: no cover - typing only
    from handcheck.solve.network import NetworkFunctions

__all__ = ["Solution", "Unknowns", "part_current", "part_voltage", "solve", "solve_columns"]


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
            "inductor",
            "capacitor",
            "voltage",
            "vcvs",
            "ccvs",
            "cccs",
            "vccs",
            "opamp",
            "transformer",
            "current",
        ):
            parts.add(part.id)
    ordered = sorted(parts)
    listed = (
        (", ".join(ordered[:-1]) + " and " + ordered[-1])
        if len(ordered) > 1
        else (ordered[0] if ordered else "the circuit")
    )
    lines = [p.line for p in circuit.parts if p.id in parts and p.line]
    return CircuitError(
        f"the circuit's equations are singular at {_format_frequency(circuit.omega)}: {listed} "
        f"{'leave' if len(ordered) > 1 else 'leaves'} a voltage or current undetermined (for example nodes "
        "with no path to ground, as when parts are removed, an ideal LC tank driven exactly at resonance, or "
        "a controlled source that fixes its own control); connect them, add the parts' losses or analyse at "
        "another frequency",
        tuple(ordered),
        file=circuit.path,
        line=min(lines) if lines else None,
    )


class Unknowns(Sequence[sympy.Expr]):
    """The exact phasors of a system's unknowns, each built on first use.

    ``build(k)`` gives unknown k; the value is kept, so every caller sees the same
    expression. An unknown nobody asks for is never formed (a step of a large
    circuit needs a handful of its hundreds of unknowns).
    """

    def __init__(self, size: int, build: Callable[[int], sympy.Expr]) -> None:
        self._size = size
        self._build = build
        self._values: dict[int, sympy.Expr] = {}

    def __len__(self) -> int:
        return self._size

    def __getitem__(self, index):  # type: ignore[no-untyped-def, override]
        if isinstance(index, slice):
            return tuple(self[k] for k in range(*index.indices(self._size)))
        k = index + self._size if index < 0 else index
        if not 0 <= k < self._size:
            raise IndexError(f"unknown {index} out of range 0..{self._size - 1}")
        value = self._values.get(k)
        if value is None:
            value = self._values[k] = self._build(k)
        return value

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Sequence) or len(other) != len(self):
            return NotImplemented
        return all(a == b for a, b in zip(self, other, strict=True))

    __hash__ = None  # type: ignore[assignment]

    def __repr__(self) -> str:
        return f"Unknowns({self._size}, formed {sorted(self._values)})"


def solve_columns(
    system: MnaSystem, circuit: Circuit, columns: Sequence[Sequence[sympy.Expr]]
) -> list[Sequence[sympy.Expr]]:
    """Solve ``(G + jw C) x = b`` exactly for each right-hand side ``b`` in ``columns``.

    Returns one sequence of unknowns per column (formed on first use when w is
    transcendental, see :class:`Unknowns`).

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
        return list(_solve_direct(system, circuit, s, columns))
    functions = _network_functions(system, circuit, columns)
    return [_weighted(system, [(sympy.Integer(1), f)], circuit) for f in functions]


def _solve_direct(
    system: MnaSystem, circuit: Circuit, s: sympy.Expr, columns: Sequence[Sequence[sympy.Expr]]
) -> list[Sequence[sympy.Expr]]:
    from sympy.polys.matrices import DomainMatrix
    from sympy.polys.matrices.exceptions import DMNonInvertibleMatrixError

    from handcheck.solve.realform import solve_real_form

    n = system.size
    matrix = [[system.G[r][c] + s * system.C[r][c] for c in range(n)] for r in range(n)]
    try:
        fast = solve_real_form(system.G, system.C, circuit.omega, columns)
    except ZeroDivisionError:
        raise _singular(system, circuit, matrix) from None
    if fast is not None:
        return list(fast)
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


def _network_functions(
    system: MnaSystem, circuit: Circuit, columns: Sequence[Sequence[sympy.Expr]]
) -> list[NetworkFunctions | None]:
    """Each column's reduced pencil (None for a zero column); no unknown is formed yet."""
    from handcheck.solve.network import prepare_rational

    prepared: list[NetworkFunctions | None] = []
    for column in columns:
        if all(v == 0 for v in column):
            prepared.append(None)
            continue
        try:
            prepared.append(prepare_rational(system.G, system.C, list(column)))
        except TimeLimitError:
            raise
        except ValueError:
            n = system.size
            s = sympy.I * circuit.omega
            matrix = [[system.G[r][c] + s * system.C[r][c] for c in range(n)] for r in range(n)]
            raise _singular(system, circuit, matrix) from None
    return prepared


def _weighted(system: MnaSystem, terms: list[tuple[sympy.Expr, NetworkFunctions | None]], circuit: Circuit) -> Unknowns:
    """Unknowns ``sum(weight * x_k(jw))`` over the columns, each formed on first use.

    Horner-free: ``x_k(jw) = sum c_i (jw)^i / sum d_i (jw)^i`` is assembled from the
    exact coefficients and the powers of jw (kept once), never by substituting into a
    sympy tree. w is transcendental here (2*pi*f), so no denominator can vanish at jw:
    its coefficients are rational or algebraic, and a zero would make jw algebraic.
    """
    powers: list[sympy.Expr] = [sympy.Integer(1)]
    q = circuit.omega / sympy.pi
    pi_multiple = q.is_Rational and q != 0

    def at(poly: sympy.Poly) -> sympy.Expr:
        coeffs = poly.all_coeffs()[::-1]
        if pi_multiple and poly.domain.is_QQ:
            return _at_pi_multiple(coeffs, q)
        while len(powers) < len(coeffs):
            powers.append(powers[-1] * s)
        return sympy.Add(*[c * p for c, p in zip(coeffs, powers, strict=False) if c != 0])

    def build(k: int) -> sympy.Expr:
        total: sympy.Expr = sympy.Integer(0)
        for weight, functions in terms:
            if functions is not None and weight != 0:
                fn = functions.function(k)
                if not fn.num.is_zero:
                    den = at(fn.den)
                    if pi_field(fn.den.domain) and _vanishes(den):
                        raise resonant()
                    total += weight * (at(fn.num) / den)
        return total

    def resonant() -> CircuitError:
        n = system.size
        return _singular(system, circuit, [[system.G[r][c] + s * system.C[r][c] for c in range(n)] for r in range(n)])

    s = sympy.I * circuit.omega
    return Unknowns(system.size, build)


def _at_pi_multiple(coeffs: list[sympy.Expr], q: sympy.Rational) -> sympy.Expr:
    """``sum c_i (j q pi)^i`` for rational ``c_i`` (low to high) and ``q``.

    The same flat sum of ``c q^i pi^i`` and ``I c q^i pi^i`` terms as multiplying
    each power out (the tree compares equal), built through one polynomial in pi
    for the even and one for the odd powers: four times quicker at degree 256,
    where every product of a large rational with a power of ``I*pi`` was
    flattened on its own.
    """
    even = [sympy.Integer(0)] * len(coeffs)
    odd = [sympy.Integer(0)] * len(coeffs)
    scale = sympy.Integer(1)
    for i, c in enumerate(coeffs):
        term = c * scale if i % 4 < 2 else -c * scale  # j^i = 1, j, -1, -j
        (even if i % 2 == 0 else odd)[i] = term
        scale *= q
    real = sympy.Poly(even[::-1], sympy.pi, domain="QQ").as_expr()
    imag = sympy.Poly(odd[::-1], sympy.pi, domain="QQ").as_expr()
    return sympy.Add(*sympy.Add.make_args(real), *[sympy.I * t for t in sympy.Add.make_args(imag)])


def _vanishes(value: sympy.Expr) -> bool:
    """Whether a number of QQ(i)(pi) is exactly zero: pi is transcendental, so it is zero
    only as a polynomial identity in pi (pi replaced by a symbol)."""
    p = sympy.Dummy("p")
    numerator, _ = sympy.fraction(sympy.together(sympy.expand(value.subs(sympy.pi, p))))
    return sympy.expand(numerator) == 0


@dataclass(frozen=True)
class Solution:
    """Exact phasors of every unknown at the analysis frequency.

    ``x`` holds the unknowns' phasors for the worksheet's sources (in its peak/rms
    convention); ``u`` the source phasors by part id (0 for a source that does not
    run at the analysis frequency).
    """

    circuit: Circuit
    system: MnaSystem
    x: Sequence[sympy.Expr]
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
        ident: (
            circuit.part(ident).source.phasor(circuit.phasors, circuit.omega)  # type: ignore[union-attr]
            if circuit.active(circuit.part(ident))
            else sympy.Integer(0)
        )
        for ident in system.sources
    }
    active = [k for k, ident in enumerate(system.sources) if u[ident] != 0]
    if not active:
        # No source runs at this frequency: every phasor is zero, but check solvability all the same.
        if system.size:
            solve_columns(system, circuit, [[sympy.Integer(1)] + [sympy.Integer(0)] * (system.size - 1)])
        return Solution(circuit, system, (sympy.Integer(0),) * system.size, u)
    columns = [[system.B[r][k] for r in range(system.size)] for k in active]
    weights = [u[system.sources[k]] for k in active]
    if circuit.omega.is_algebraic:
        responses = solve_columns(system, circuit, columns)
        x = [
            sum((response[r] * w for w, response in zip(weights, responses, strict=True)), sympy.Integer(0))
            for r in range(system.size)
        ]
        return Solution(circuit, system, tuple(x), u)
    functions = _network_functions(system, circuit, columns)
    return Solution(circuit, system, _weighted(system, list(zip(weights, functions, strict=True)), circuit), u)


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
    raise CircuitError(
        f"{part.id} is a {kind}; it has no current of its own", (part.id,), file=solution.circuit.path, line=part.line
    )

"""Closed-form transients: the complete response of a linear circuit for t >= 0.

Method
------
The circuit after t = 0 (switches in their new state) is written as the modified
nodal system ``C x' + G x = B u(t)`` (:mod:`handcheck.circuit.mna`). Its Laplace
transform with the state at ``t = 0-`` is

    (G + s C) X(s) = B U(s) + C x(0-)

(the differentiation theorem; e.g. Ogata, *Modern Control Engineering*, 5th ed.,
sec. 2-3, from memory). ``C x(0-)`` is written part by part: a capacitor ``C``
between nodes a and b charged to ``v0`` adds ``+C v0`` to row a and ``-C v0`` to row
b (to its own branch row when its current is an unknown); an inductor ``L`` with
current ``i0`` adds ``-L i0`` to its branch row and ``-M i0`` to the branch row of
each inductor it is coupled to.

Every right-hand side (one per independent source, one for the stored energy) is
solved exactly for rational functions of s (:mod:`handcheck.solve.columns`). Each
source function is a sum of weighted, delayed elementary transforms
(:mod:`handcheck.solve.sourcetransforms`); a repeating source is written out period
by period up to the horizon ``until``. The response is inverted by exact partial
fractions (:mod:`handcheck.solve.laplace`) with poles from
:mod:`handcheck.solve.roots`; ``sympy.inverse_laplace_transform`` is not used (too
slow beyond order four, see docs/DESIGN.md). The state at t = 0- comes from
:mod:`handcheck.solve.initialstate` (``start = "rest"`` or ``"steady"``).

Natural modes: the roots of ``det(G + s C)`` after cancelling the factors common to
every entry of the adjugate, i.e. of the least common denominator of ``X(s)`` for a
generic stored-energy vector (random, seeded, rational weights on every capacitor
and inductor). That is the minimal polynomial of the circuit's state matrix
(Gantmacher, *The Theory of Matrices*, vol. 1, ch. VI, from memory): two identical
RC sections give one time constant, not a double pole. Its degree is the order.
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from handcheck.circuit.mna import MnaSystem, stamp
from handcheck.circuit.model import GROUND, Circuit, Part
from handcheck.errors import CircuitError, LimitError
from handcheck.solve.columns import (
    Column,
    combine,
    energy_vector,
    laplace_s,
    node_form,
    shape_of,
    solve_column,
    timeout_error,
    to_time,
)
from handcheck.solve.initialstate import rest_state, steady_state, stores_state
from handcheck.solve.laplace import Piece, PoleBook, inverse_laplace
from handcheck.solve.roots import Factor, irreducible_factors, roots_of_irreducible
from handcheck.solve.sourcetransforms import Basis, basis_one, source_waves
from handcheck.solve.timefunction import Impulse, Term, TimeFunction

if TYPE_CHECKING:  # pragma: no cover - typing only
    import sympy


__all__ = [
    "DEFAULT_PERIODS",
    "MAX_ORDER",
    "TIME_LIMIT",
    "Impulse",
    "Term",
    "TimeFunction",
    "TransientSolution",
    "transient_solution",
]

#: Largest circuit order solved in closed form.
MAX_ORDER = 40
#: Default time limit of one transient solution, in seconds.
TIME_LIMIT = 60.0
#: Pulse trains are expanded over this many periods when no horizon is given.
DEFAULT_PERIODS = 20
_SEED = 20240607


# --------------------------------------------------------------------------
# the solution
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class TransientSolution:
    """The complete response of a circuit for t >= 0, in closed form.

    Build it with :func:`transient_solution`. Quantities are computed on demand;
    sign conventions follow :mod:`handcheck.solve.phasor` (a part's current enters
    ``nodes[0]``; its voltage is ``v(nodes[0]) - v(nodes[1])``).
    """

    circuit: Circuit
    system: MnaSystem
    columns: tuple[Column, ...]
    initial: tuple[tuple[str, Any], ...]
    modes: tuple[tuple[Factor, int], ...]
    polynomial: Any  # sympy.Poly: the characteristic (minimal) polynomial
    horizon: Any  # pulse trains are expanded over the periods starting up to this time
    valid: Any  # ... so the waveforms are complete for t before this time (None: for all t)
    time_limit: float

    # ----- state --------------------------------------------------------------

    def initial_conditions(self) -> dict[str, Any]:
        """Each capacitor's voltage and inductor's current at t = 0-, exactly."""
        return dict(self.initial)

    def _initial_of(self, ident: str) -> Any:
        return dict(self.initial)[ident]

    # ----- waveforms -----------------------------------------------------------

    def _function(
        self, name: str, linear: dict[int, tuple[Any, Any]], direct: list[tuple[Any, Basis, Any]]
    ) -> TimeFunction:
        import sympy

        deadline = time.monotonic() + self.time_limit
        book = PoleBook([f for f, _ in self.modes])
        pieces: list[Piece] = []
        for column in self.columns:
            num, den = combine(column.responses, linear)
            if num is None:
                continue
            for weight, basis, delay in column.waves:
                pieces.append(Piece(weight, shape_of(num, den, basis), delay))
        domain = self._domain()
        s = laplace_s()
        one = sympy.Poly(1, s, domain=domain)
        for weight, basis, delay in direct:
            pieces.append(Piece(weight, shape_of(one, one, basis), delay))
        return inverse_laplace(pieces, book, name=name, horizon=self.valid, deadline=deadline)

    def _domain(self) -> Any:
        for column in self.columns:
            if column.responses:
                return column.responses[0].den.domain
        import sympy

        return sympy.QQ

    def node_voltage(self, name: str) -> TimeFunction:
        """The voltage of a node to ground, ``v(name)``."""
        if name == GROUND:
            return TimeFunction((), horizon=self.valid, name="voltage(gnd)")
        if name not in self.system.nodes:
            raise CircuitError(f'there is no node "{name}" in the circuit', file=self.circuit.path)
        return self._function(f"voltage({name})", node_form(self.system, name), [])

    def _part(self, ident: str) -> Part:
        try:
            return self.circuit.part(ident)
        except KeyError:
            raise CircuitError(f'there is no part "{ident}" in the circuit', file=self.circuit.path) from None

    def part_voltage(self, ident: str) -> TimeFunction:
        """``v(nodes[0]) - v(nodes[1])`` of a part (an op-amp's output voltage; a transformer's primary)."""
        part = self._part(ident)
        if part.kind == "coupling":
            raise CircuitError(
                f"{ident} is a coupling; it has no voltage of its own", (ident,), file=self.circuit.path, line=part.line
            )
        if part.kind == "opamp":
            return self._function(f"voltage({ident})", node_form(self.system, part.nodes[0]), [])
        form = node_form(self.system, part.nodes[0])
        for k, (c0, c1) in node_form(self.system, part.nodes[1]).items():
            a0, a1 = form.get(k, (0, 0))
            form[k] = (a0 - c0, a1 - c1)
        return self._function(f"voltage({ident})", form, [])

    def part_current(self, ident: str) -> TimeFunction:
        """The current entering ``nodes[0]`` of a part (op-amp: output current; transformer: primary)."""
        import sympy

        part = self._part(ident)
        system = self.system
        name = f"current({ident})"
        kind = part.kind
        if ident in system.branches:
            return self._function(name, {system.branches[ident]: (1, 0)}, [])
        if kind == "transformer":
            return self._function(name, {system.labels.index(f"i({ident}.primary)"): (1, 0)}, [])
        if kind == "switch":
            return TimeFunction((), horizon=self.valid, name=name)
        if kind in ("resistor", "capacitor", "vccs"):
            nodes = part.nodes if kind != "vccs" else part.control
            assert isinstance(nodes, tuple)
            if kind == "resistor":
                scale: tuple[Any, Any] = (1 / part.value, 0)
            elif kind == "capacitor":
                scale = (0, part.value)
            else:
                scale = (part.value, 0)
            form: dict[int, tuple[Any, Any]] = {}
            for node, sign in ((nodes[0], 1), (nodes[1], -1)):
                index = system.node(node)
                if index is not None:
                    a0, a1 = form.get(index, (0, 0))
                    form[index] = (a0 + sign * scale[0], a1 + sign * scale[1])
            direct = []
            if kind == "capacitor":  # i = C dv/dt: transform s C V(s) - C v(0-)
                v0 = self._initial_of(ident)
                if v0 != 0:
                    direct.append((-part.value * v0, basis_one(), sympy.Integer(0)))
            return self._function(name, form, direct)
        if kind == "cccs":
            return self._function(name, {system.branches[str(part.control)]: (part.value, 0)}, [])
        if kind == "current":
            assert part.source is not None
            waves = source_waves(part.source, self.horizon)
            return self._function(name, {}, waves)
        raise CircuitError(
            f"{ident} is a {kind}; it has no current of its own", (ident,), file=self.circuit.path, line=part.line
        )

    # ----- natural modes ------------------------------------------------------

    def order(self) -> int:
        """The order of the circuit: the number of natural modes, with multiplicity."""
        return int(self.polynomial.degree())

    def natural_modes(self) -> tuple[Any, ...]:
        """The natural modes (poles, in 1/s), each repeated by its multiplicity.

        Exact sympy numbers for factors of degree one or two; others as
        ``mpmath.mpc`` with at least 30 significant digits (certified). Real
        roots first, then conjugate pairs, each factor in turn.
        """
        out = []
        for factor, mult in self.modes:
            for root in factor.roots:
                out.extend([root.value] * mult)
        return tuple(out)

    def _low_order(self, what: str, allowed: tuple[int, ...]) -> list[Any]:
        n = self.order()
        if n not in allowed:
            words = {0: "zeroth order (no capacitor or inductor stores energy)", 1: "first order", 2: "second order"}
            found = words.get(n, f"of order {n}")
            need = " or ".join(words[k].split(" (")[0] for k in allowed)
            raise CircuitError(
                f"{what} is defined for a {need} circuit, but this circuit is {found}",
                file=self.circuit.path,
            )
        return list(reversed(self.polynomial.all_coeffs()))  # c0, c1, (1)

    def time_constant(self) -> sympy.Expr:
        """The time constant in seconds, exactly.

        First order: ``1/|p|`` of the single real pole. Second order: overdamped or
        critically damped, the slower of the two, ``1/min|p|`` (the one that sets
        how long the response takes); underdamped, the envelope's
        ``1/|Re p| = 1/(zeta w_n)``.

        Raises
        ------
        CircuitError
            For any other order, or a mode that does not decay.
        """
        import sympy

        coeffs = self._low_order("a time constant", (1, 2))
        poles = self.natural_modes()
        for p in poles:
            if sympy.re(p) >= 0:
                raise CircuitError(
                    f"the circuit has a natural mode at s = {p} that does not decay, so it has no time constant",
                    file=self.circuit.path,
                )
        if len(coeffs) == 2:
            return 1 / coeffs[0]
        c0, c1 = coeffs[0], coeffs[1]
        disc = c1 * c1 - 4 * c0
        if disc >= 0:
            slow = (c1 - sympy.sqrt(disc)) / 2  # |p| of the slower pole
            return sympy.radsimp(1 / slow)
        return 2 / c1

    def natural_frequency(self) -> sympy.Expr:
        """``w_n = sqrt(p1 p2)`` in rad/s (second-order circuits), exactly."""
        import sympy

        c0, _ = self._low_order("a natural frequency", (2,))[:2]
        return sympy.sqrt(c0)

    def damping_ratio(self) -> sympy.Expr:
        """``zeta = -(p1 + p2)/(2 w_n)`` (second-order circuits), exactly."""
        import sympy

        c0, c1 = self._low_order("a damping ratio", (2,))[:2]
        if c0 == 0:
            raise CircuitError(
                "the circuit has a natural mode at s = 0, so its damping ratio is undefined", file=self.circuit.path
            )
        return sympy.radsimp(c1 / (2 * sympy.sqrt(c0)))

    def quality_factor(self) -> sympy.Expr:
        """``Q = 1/(2 zeta)`` (second-order circuits), exactly; ``oo`` for a lossless circuit."""
        import sympy

        c0, c1 = self._low_order("a quality factor", (2,))[:2]
        if c1 == 0:
            return sympy.oo
        return sympy.radsimp(sympy.sqrt(c0) / c1)


def _horizon(circuit: Circuit, until: Any) -> tuple[Any, Any]:
    """The time up to which repeats are written out, and the first period start left out.

    Without ``until``: :data:`DEFAULT_PERIODS` periods of the slowest repeat after
    the latest start of any source. (None, None) when no source repeats.
    """
    import sympy

    repeats = [r for p in circuit.parts if p.source is not None for r in p.source.function.repeats]
    if not repeats:
        return None, None
    if until is not None:
        horizon = to_time(until)
    else:
        latest = max(p.source.function.last_start for p in circuit.parts if p.source is not None)
        horizon = latest + DEFAULT_PERIODS * max(r.period for r in repeats)
    valid = None
    for p in circuit.parts:
        if p.source is not None and p.source.function.repeats:
            _, first_out = p.source.function.expanded(horizon)
            valid = first_out if valid is None else sympy.Min(valid, first_out)
    return horizon, valid


def _natural_modes(
    system: MnaSystem, circuit: Circuit, energy: dict[str, list[Any]], max_order: int, deadline: float
) -> tuple[list[tuple[Factor, int]], sympy.Poly]:
    """The natural modes (irreducible factors with their multiplicity) and their monic polynomial.

    The response to a random combination of the stored-energy vectors (seeded, so
    runs repeat) excites every mode, so the least common multiple of its
    denominators is the circuit's characteristic polynomial.
    """
    import random

    import sympy

    modes: list[tuple[Factor, int]] = []
    polynomial = sympy.Poly(1, laplace_s(), domain=sympy.QQ)
    if not energy:
        return modes, polynomial
    rng = random.Random(_SEED)
    generic = [sympy.Integer(0)] * system.size
    for vector in energy.values():
        weight = sympy.Rational(rng.randint(1, 10**6), rng.randint(1, 10**3))
        generic = [g + weight * e for g, e in zip(generic, vector, strict=True)]
    responses = solve_column(system, circuit, generic, deadline)
    polynomial = sympy.Poly(1, laplace_s(), domain=responses[0].den.domain)
    for rf in responses:
        if polynomial.degree() == 0:
            polynomial = rf.den
        elif not polynomial.rem(rf.den).is_zero:  # a multiple already: no gcd (slow over QQ<a>(pi))
            polynomial = polynomial.lcm(rf.den)
    polynomial = polynomial.monic()
    if polynomial.degree() > max_order:
        raise LimitError(
            f"the circuit is of order {polynomial.degree()} (that many independent capacitor voltages and "
            f"inductor currents); closed-form transients are limited to order {max_order}",
            file=circuit.path,
        )
    for f, mult in irreducible_factors(polynomial):
        if time.monotonic() > deadline:
            raise timeout_error()
        modes.append((Factor(f, roots_of_irreducible(f)), mult))
    return modes, polynomial


def _energy_columns(
    system: MnaSystem, circuit: Circuit, energy: dict[str, list[Any]], state: dict[str, Any], deadline: float
) -> list[Column]:
    """The response to the stored energy: rational initial values in one column, others one column each."""
    import sympy

    columns: list[Column] = []
    zero_delay = sympy.Integer(0)
    rational_rhs = [sympy.Integer(0)] * system.size
    any_rational = False
    for ident, vector in energy.items():
        v0 = state[ident]
        if v0 == 0:
            continue
        if v0.is_Rational:
            rational_rhs = [r + v0 * e for r, e in zip(rational_rhs, vector, strict=True)]
            any_rational = True
        else:
            columns.append(
                Column(
                    f"stored energy in {ident}",
                    solve_column(system, circuit, vector, deadline),
                    ((v0, basis_one(), zero_delay),),
                )
            )
    if any_rational and any(r != 0 for r in rational_rhs):
        columns.append(
            Column(
                "stored energy",
                solve_column(system, circuit, rational_rhs, deadline),
                ((sympy.Integer(1), basis_one(), zero_delay),),
            )
        )
    return columns


def _source_columns(system: MnaSystem, circuit: Circuit, horizon: Any, deadline: float) -> list[Column]:
    """One column of the response for each independent source that is on after t = 0."""
    columns: list[Column] = []
    for k, ident in enumerate(system.sources):
        part = circuit.part(ident)
        assert part.source is not None
        waves = source_waves(part.source, horizon)
        if not waves:
            continue
        rhs = [system.B[r][k] for r in range(system.size)]
        columns.append(Column(ident, solve_column(system, circuit, rhs, deadline), tuple(waves)))
    return columns


def transient_solution(
    circuit: Circuit,
    *,
    until: Any = None,
    max_order: int = MAX_ORDER,
    time_limit: float = TIME_LIMIT,
) -> TransientSolution:
    """Solve a circuit's complete response for t >= 0 in closed form.

    Parameters
    ----------
    circuit : Circuit
        With ``circuit.start`` ("rest" or "steady") and switch parts changing state
        at t = 0.
    until : time, optional
        Horizon up to which repeating sources are written out (seconds; sympy
        Rational, int, Fraction, or a float taken as the decimal it prints as).
        Default: the latest start of any source plus :data:`DEFAULT_PERIODS`
        periods of the slowest repeat.
    max_order : int
        Largest order accepted (:data:`MAX_ORDER`).
    time_limit : float
        Seconds allowed for the solution, and again for each waveform asked of it.

    Returns
    -------
    TransientSolution

    Raises
    ------
    CircuitError
        If the circuit after (or, for a steady start, before) t = 0 has no unique
        solution.
    LimitError
        If the order exceeds ``max_order`` or the time limit is exceeded.

    Examples
    --------
    >>> import handcheck
    >>> from handcheck.circuit.build import build
    >>> text = '''
    ... [worksheet]
    ... format = 1
    ... title = "RC charging"
    ... [parts]
    ... V1 = { voltage = "10 V", nodes = ["in", "gnd"] }
    ... R1 = { resistor = "1 kohm", nodes = ["in", "out"] }
    ... C1 = { capacitor = "1 uF", nodes = ["out", "gnd"] }
    ... '''
    >>> solution = transient_solution(build(handcheck.loads(text)))
    >>> solution.node_voltage("out").as_expr()
    10 - 10*exp(-1000*t)
    >>> solution.time_constant()
    1/1000
    """
    deadline = time.monotonic() + time_limit
    system = stamp(circuit)
    start = circuit.start
    if start not in ("rest", "steady"):
        raise CircuitError(f'start = "{start}" must be "rest" or "steady"', file=circuit.path)
    state = rest_state(circuit) if start == "rest" else steady_state(circuit)

    horizon, valid = _horizon(circuit, until)
    reactive = [p for p in circuit.parts if stores_state(p)]
    energy = {p.id: energy_vector(system, circuit, p) for p in reactive}
    # natural modes first: a generic stored-energy vector excites every mode
    modes, polynomial = _natural_modes(system, circuit, energy, max_order, deadline)
    columns = _energy_columns(system, circuit, energy, state, deadline)
    columns += _source_columns(system, circuit, horizon, deadline)
    return TransientSolution(
        circuit=circuit,
        system=system,
        columns=tuple(columns),
        initial=tuple((p.id, state[p.id]) for p in reactive),
        modes=tuple(modes),
        polynomial=polynomial,
        horizon=horizon,
        valid=valid,
        time_limit=time_limit,
    )

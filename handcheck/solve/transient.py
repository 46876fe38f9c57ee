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
solved exactly for rational functions of s with
:func:`handcheck.solve.network.solve_rational`. Each source's transform is a short
sum of weighted, delayed elementary transforms: ``1/s`` (constants and steps),
``1/s**2`` (ramps: the edges of pulse trains and of point lists), and
``(s + a)/((s + a)**2 + w**2)``, ``1/((s + a)**2 + w**2)`` (damped sinusoids). The
response is inverted by exact partial fractions (:mod:`handcheck.solve.laplace`)
with poles from :mod:`handcheck.solve.roots`; ``sympy.inverse_laplace_transform`` is
not used (too slow beyond order four, see docs/DESIGN.md).

State before t = 0
------------------
``start = "rest"``: each capacitor's voltage and inductor's current at ``t = 0-``
is its ``initial`` value (0 if none). ``start = "steady"``: the circuit before
t = 0 (each switch in its earlier state: a closing switch open, an opening one
closed) sat in its steady state, driven by the sources' values for ``t < 0``:
constant sources and undamped sinusoids as for ``t >= 0`` (they run for all time;
a delay only shifts a sinusoid's phase), a step source at its ``low`` level, every
other source off. That state is the DC solution plus the real part of each
sinusoid's phasor (``x(t) = Re(X exp(j w t))`` at ``t = 0``), found with the exact
phasor solver :func:`handcheck.solve.phasor.solve`, one solve per frequency.

Waveforms, as in :class:`handcheck.circuit.model.Source` (tau = t - delay): with
``start = "rest"`` every source is 0 before its delay; a "points" source holds its
first value from its delay until its first point, then follows the straight lines
and holds its last value. A pulse train is expanded period by period up to the
horizon ``until``.

Natural modes: the roots of ``det(G + s C)`` after cancelling the factors common to
every entry of the adjugate, i.e. of the least common denominator of ``X(s)`` for a
generic stored-energy vector (random, seeded, rational weights on every capacitor
and inductor). That is the minimal polynomial of the circuit's state matrix
(Gantmacher, *The Theory of Matrices*, vol. 1, ch. VI, from memory): two identical
RC sections give one time constant, not a double pole. Its degree is the order.
"""

from __future__ import annotations

import dataclasses
import time
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from handcheck.circuit.mna import MnaSystem, stamp
from handcheck.circuit.model import GROUND, Circuit, Part, Source
from handcheck.worksheet.sourcefunction import SourceFunction, SourceTerm
from handcheck.errors import CircuitError, LimitError, TimeLimitError
from handcheck.solve.laplace import Piece, PoleBook, Shape, compact, inverse_laplace
from handcheck.solve.roots import Factor, irreducible_factors, roots_of_irreducible
from handcheck.solve.waveform import Impulse, Term, TimeFunction

if TYPE_CHECKING:  # pragma: no cover - typing only
    import sympy

    from handcheck.solve.network import RationalFunction

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
# elementary transforms of the source waveforms
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class _Basis:
    """An elementary transform ``num/den`` (polynomials over QQ), times ``1/(s - q)**m`` when
    ``extra = (q, m)`` holds an exact pole outside the rationals' reach (``q = j*100*pi``)."""

    num: tuple[Any, ...]  # coefficients, highest power first
    den: tuple[Any, ...]
    extra: tuple[Any, int] | None = None


def _basis_one() -> _Basis:
    import sympy

    return _Basis((sympy.Integer(1),), (sympy.Integer(1),))


_Wave = tuple[Any, _Basis, Any]  # (weight, basis, delay)


def _term_waves(term: SourceTerm) -> list[_Wave]:
    """The transform of ``Re[X tau**n exp((-a + j w) tau)]`` from ``start`` on.

    ``L{tau**n exp(p tau)} = n!/(s - p)**(n+1)`` (standard table; e.g. Kreyszig,
    *Advanced Engineering Mathematics*, 10th ed., sec. 6.9, from memory). With a and
    w**2 rational the conjugate pair is one rational function: with
    ``(s + a + j w)**(n+1) = P(s) + j Q(s)``, the transform is
    ``n! (Re X * P - Im X * Q) / ((s + a)**2 + w**2)**(n+1)``. Otherwise each half
    keeps its exact pole.
    """
    import sympy

    s = sympy.Symbol("s", real=True)
    n, a, w, x = term.power, term.decay, term.omega, term.phasor
    fact = sympy.factorial(n)
    zero = sympy.Integer(0)
    if w == 0 and a.is_Rational:
        den = sympy.Poly((s + a) ** (n + 1), s).all_coeffs()
        return [(x * fact, _Basis((sympy.Integer(1),), tuple(den)), term.start)]
    if w != 0 and a.is_Rational and sympy.expand(w * w).is_Rational:
        den = tuple(sympy.Poly(((s + a) ** 2 + w * w) ** (n + 1), s).all_coeffs())
        p_part, q_part = sympy.expand((s + a + sympy.I * w) ** (n + 1)).as_real_imag()
        re_x, im_x = sympy.expand_complex(x).as_real_imag()
        out: list[_Wave] = []
        p_poly = sympy.Poly(sympy.expand(p_part), s)
        q_poly = sympy.Poly(sympy.expand(q_part / w), s)
        if re_x != 0:
            out.append((compact(re_x * fact), _Basis(tuple(p_poly.all_coeffs()), den), term.start))
        if im_x != 0:
            out.append((compact(-im_x * fact * w), _Basis(tuple(q_poly.all_coeffs()), den), term.start))
        return out
    one = (sympy.Integer(1),)
    pole = -a + sympy.I * w
    re_x, im_x = sympy.expand_complex(x).as_real_imag()
    x = re_x + sympy.I * im_x  # cos and sin of the phase, not exp(j phase): one canonical form
    if w == 0:
        return [(x * fact, _Basis(one, one, (pole, n + 1)), term.start)]
    half = fact / 2
    return [
        (compact(x * half), _Basis(one, one, (pole, n + 1)), term.start),
        (compact(sympy.conjugate(x) * half), _Basis(one, one, (sympy.conjugate(pole), n + 1)), term.start),
    ] if x != zero else []


def _source_waves(source: Source, horizon: Any) -> list[_Wave]:
    """The source's function for t >= 0 as weighted, delayed elementary transforms.

    Repeats are written out for the periods that start up to ``horizon``.
    """
    import sympy

    terms, _ = source.function.expanded(horizon if horizon is not None else sympy.Integer(0))
    merged: dict[tuple[_Basis, Any], Any] = {}
    zero = sympy.Integer(0)
    for term in terms:
        for weight, basis, at in _term_waves(term):
            merged[(basis, at)] = merged.get((basis, at), zero) + weight
    out = []
    for (basis, at), weight in merged.items():
        weight = compact(sympy.expand(weight)) if not weight.is_Rational else weight
        if weight != 0:
            out.append((weight, basis, at))
    return out


# --------------------------------------------------------------------------
# the state before t = 0
# --------------------------------------------------------------------------


def _rest_state(circuit: Circuit) -> dict[str, Any]:
    import sympy

    return {
        p.id: (p.initial if p.initial is not None else sympy.Integer(0))
        for p in circuit.parts
        if p.kind in ("capacitor", "inductor")
    }


def _steady_state(circuit: Circuit) -> dict[str, Any]:
    """Capacitor voltages and inductor currents at t = 0- of the circuit in its earlier steady state.

    Before t = 0 each source is the part of its function that ran for all time
    (constants and sinusoids outside every step, edge and repeat); the state is the
    DC solution plus, per frequency, ``Re(X)`` of the phasor solution.
    """
    import sympy

    from handcheck.solve import phasor

    zero = sympy.Integer(0)
    before = [dataclasses.replace(p, value=1 - p.value) if p.kind == "switch" else p for p in circuit.parts]
    reactive = [p for p in before if p.kind in ("capacitor", "inductor")]
    state = {p.id: zero for p in reactive}

    def solve(parts: list[Part], omega: Any, what: str) -> Any:
        pre = dataclasses.replace(circuit, parts=tuple(parts), omega=omega, phasors="peak")
        try:
            return phasor.solve(pre)
        except CircuitError as exc:
            raise CircuitError(
                f"the circuit before t = 0 (switches in their earlier state) has no unique steady state {what}: "
                f'{exc.message}; if that is how it was, give start = "rest" with the `initial` values of the '
                "capacitors and inductors instead",
                exc.parts,
                file=circuit.path,
            ) from None

    def collect(solution: Any, real_part: bool) -> None:
        for p in reactive:
            value = phasor.part_voltage(solution, p) if p.kind == "capacitor" else phasor.part_current(solution, p)
            if real_part:
                value = sympy.expand_complex(value).as_real_imag()[0]
            state[p.id] = state[p.id] + value

    earlier = {p.id: p.source.function.before_zero() for p in before if p.source is not None}

    def driven(omega: Any) -> list[Part]:
        out = []
        for p in before:
            if p.source is not None:
                value = earlier[p.id].steady(omega)
                if omega == 0:
                    function = SourceFunction((SourceTerm(value, before_zero=True),))
                else:
                    function = SourceFunction((SourceTerm(value, omega=omega, before_zero=True),))
                p = dataclasses.replace(p, source=Source(function))
            out.append(p)
        return out

    collect(solve(driven(zero), zero, "at DC"), False)
    omegas: list[Any] = []
    for function in earlier.values():
        for w in function.frequencies:
            if not any(sympy.simplify(w - o) == 0 for o in omegas):
                omegas.append(w)
    for w in omegas:
        collect(solve(driven(w), w, f"at {sympy.N(w / (2 * sympy.pi), 6)} Hz"), True)
    return {k: compact(v) for k, v in state.items()}


# --------------------------------------------------------------------------
# right-hand sides
# --------------------------------------------------------------------------


def _energy_vector(system: MnaSystem, circuit: Circuit, part: Part) -> list[Any]:
    """``C x(0-)`` for a unit initial voltage (capacitor) or current (inductor) of one part."""
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
    else:  # inductor: its column of C holds -L on its row and -M on each coupled inductor's row
        col = system.branches[part.id]
        for row in range(system.size):
            rhs[row] += system.C[row][col]
    return rhs


@dataclass(frozen=True)
class _Column:
    """One right-hand side, its exact solution, and what multiplies it."""

    label: str
    responses: tuple[Any, ...]  # RationalFunction per unknown
    waves: tuple[_Wave, ...]


def _solve(system: MnaSystem, circuit: Circuit, rhs: list[Any], deadline: float) -> tuple[RationalFunction, ...]:
    from handcheck.solve.network import solve_rational

    remaining = deadline - time.monotonic()
    if remaining <= 0:
        raise _timeout()
    try:
        return solve_rational(system.G, system.C, rhs, time_limit=remaining)
    except TimeLimitError:
        raise  # the command's own budget: never turned into another finding
    except TimeoutError:
        raise _timeout() from None
    except ValueError as exc:
        raise CircuitError(
            "the circuit after t = 0 has no unique solution: its equations are singular for every s "
            f"({exc}); look for a loop of voltage sources and capacitors or a cut of current sources and inductors",
            file=circuit.path,
        ) from None


def _timeout() -> LimitError:
    return LimitError(
        "the transient solution took longer than its time limit; simplify the circuit (fewer capacitors and "
        "inductors) or raise the limit"
    )


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
    columns: tuple[_Column, ...]
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
        self, name: str, linear: dict[int, tuple[Any, Any]], direct: list[tuple[Any, _Basis, Any]]
    ) -> TimeFunction:
        import sympy

        deadline = time.monotonic() + self.time_limit
        book = PoleBook([f for f, _ in self.modes])
        pieces: list[Piece] = []
        for column in self.columns:
            num, den = _combine(column.responses, linear)
            if num is None:
                continue
            for weight, basis, delay in column.waves:
                pieces.append(Piece(weight, _shape(num, den, basis), delay))
        domain = self._domain()
        s = _s()
        one = sympy.Poly(1, s, domain=domain)
        for weight, basis, delay in direct:
            pieces.append(Piece(weight, _shape(one, one, basis), delay))
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
        return self._function(f"voltage({name})", _node_form(self.system, name), [])

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
            return self._function(f"voltage({ident})", _node_form(self.system, part.nodes[0]), [])
        form = _node_form(self.system, part.nodes[0])
        for k, (c0, c1) in _node_form(self.system, part.nodes[1]).items():
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
                    direct.append((-part.value * v0, _basis_one(), sympy.Integer(0)))
            return self._function(name, form, direct)
        if kind == "cccs":
            return self._function(name, {system.branches[str(part.control)]: (part.value, 0)}, [])
        if kind == "current":
            assert part.source is not None
            waves = _source_waves(part.source, self.horizon)
            return self._function(name, {}, waves)
        raise CircuitError(
            f"{ident} is a {kind}; it has no current of its own", (ident,), file=self.circuit.path, line=part.line
        )

    # ----- natural modes ------------------------------------------------------

    def order(self) -> int:
        """The order of the circuit: the number of natural modes, with multiplicity."""
        return int(self.polynomial.degree())

    def characteristic_polynomial(self) -> sympy.Poly:
        """The monic polynomial in s whose roots are the natural modes (exact)."""
        return self.polynomial

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

    def time_constants(self) -> tuple[Any, ...]:
        """``1/|Re p|`` for every decaying natural mode, slowest first (a conjugate pair once).

        Exact for closed-form modes, else ``mpmath.mpf`` with 30+ digits; any order.
        """
        import mpmath
        import sympy

        out = []
        for factor, _ in self.modes:
            for root in factor.roots:
                if root.real_sign >= 0 or root.imag_sign < 0:
                    continue
                if root.exact is not None:
                    out.append(sympy.radsimp(-1 / sympy.re(root.exact)))
                else:
                    with mpmath.workdps(60):
                        out.append(-1 / root.approx.real)
        return tuple(sorted(out, key=lambda x: -float(x)))

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


def _s() -> Any:
    from handcheck.solve.network import laplace_symbol

    return laplace_symbol()


def _node_form(system: MnaSystem, node: str) -> dict[int, tuple[Any, Any]]:
    index = system.node(node)
    return {} if index is None else {index: (1, 0)}


def _combine(responses: tuple[Any, ...], linear: dict[int, tuple[Any, Any]]) -> tuple[Any, Any]:
    """``sum (c0 + c1 s) x_k(s)`` as a reduced fraction ``(num, den)``; ``(None, None)`` if zero."""
    import sympy

    if not responses:
        return None, None
    s = _s()
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


def _shape(num: Any, den: Any, basis: _Basis) -> Shape:
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


def _to_time(value: Any) -> Any:
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
        horizon = _to_time(until)
    else:
        latest = max(p.source.function.last_start for p in circuit.parts if p.source is not None)
        horizon = latest + DEFAULT_PERIODS * max(r.period for r in repeats)
    valid = None
    for p in circuit.parts:
        if p.source is not None and p.source.function.repeats:
            _, first_out = p.source.function.expanded(horizon)
            valid = first_out if valid is None else sympy.Min(valid, first_out)
    return horizon, valid


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
    import random

    import sympy

    deadline = time.monotonic() + time_limit
    system = stamp(circuit)
    start = circuit.start
    if start not in ("rest", "steady"):
        raise CircuitError(f'start = "{start}" must be "rest" or "steady"', file=circuit.path)
    state = _rest_state(circuit) if start == "rest" else _steady_state(circuit)

    horizon, valid = _horizon(circuit, until)
    reactive = [p for p in circuit.parts if p.kind in ("capacitor", "inductor")]
    energy = {p.id: _energy_vector(system, circuit, p) for p in reactive}

    # natural modes first: a generic stored-energy vector excites every mode
    modes: list[tuple[Factor, int]] = []
    polynomial = sympy.Poly(1, _s(), domain=sympy.QQ)
    if reactive:
        rng = random.Random(_SEED)
        generic = [sympy.Integer(0)] * system.size
        for p in reactive:
            weight = sympy.Rational(rng.randint(1, 10**6), rng.randint(1, 10**3))
            generic = [g + weight * e for g, e in zip(generic, energy[p.id], strict=True)]
        responses = _solve(system, circuit, generic, deadline)
        polynomial = sympy.Poly(1, _s(), domain=responses[0].den.domain)
        for rf in responses:
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
                raise _timeout()
            modes.append((Factor(f, roots_of_irreducible(f)), mult))

    columns: list[_Column] = []
    zero_delay = sympy.Integer(0)
    # stored energy: rational initial values in one column, others one column each
    rational_rhs = [sympy.Integer(0)] * system.size
    any_rational = False
    for p in reactive:
        v0 = state[p.id]
        if v0 == 0:
            continue
        if v0.is_Rational:
            rational_rhs = [r + v0 * e for r, e in zip(rational_rhs, energy[p.id], strict=True)]
            any_rational = True
        else:
            columns.append(
                _Column(
                    f"stored energy in {p.id}",
                    _solve(system, circuit, energy[p.id], deadline),
                    ((v0, _basis_one(), zero_delay),),
                )
            )
    if any_rational and any(r != 0 for r in rational_rhs):
        columns.append(
            _Column(
                "stored energy",
                _solve(system, circuit, rational_rhs, deadline),
                ((sympy.Integer(1), _basis_one(), zero_delay),),
            )
        )
    for k, ident in enumerate(system.sources):
        part = circuit.part(ident)
        assert part.source is not None
        waves = _source_waves(part.source, horizon)
        if not waves:
            continue
        rhs = [system.B[r][k] for r in range(system.size)]
        columns.append(_Column(ident, _solve(system, circuit, rhs, deadline), tuple(waves)))

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

"""Integrate a circuit in time with an exact, controlled step.

Method
------
The circuit equations ``E x' + G x = B u(t)`` (:mod:`.assemble`) are joined by the
sources' own linear generator ``w' = S w``, ``u = H w`` (:mod:`.generators`), which
makes the whole system homogeneous,

    [E 0] [x]'   [-G  B H] [x]
    [0 I] [w]  = [ 0   S ] [w],

and reduced to state equations ``q' = A q`` with ``q = (xi, w)`` (:mod:`.reduce`).
Between breakpoints the state moves exactly by ``q(t + h) = expm(A h) q(t)``
(the exact discretisation of a linear time-invariant system: Van Loan,
"Computing integrals involving the matrix exponential", IEEE Trans. Automat.
Control 23, 1978, from memory; the matrix exponential by scaling and squaring with
Pade approximants: Al-Mohy and Higham, SIAM J. Matrix Anal. Appl. 31, 2009, as
implemented in ``scipy.linalg.expm``). The step ``h`` is the sample interval; a
breakpoint between two samples splits that step there, the source states are
reset, and the circuit state is carried across by the consistency projection
(which keeps capacitor charges and inductor fluxes unless an ideal source or
switch forces a jump). Straight-line source pieces are therefore integrated
exactly, not approximated.

For accuracy over long runs the state is stepped in split coordinates when it
can be (:class:`Propagation`): the forced response ``X w`` (``X`` from a
Sylvester equation, Bartels-Stewart as in ``scipy.linalg.solve_sylvester``) plus
a transient moved by ``expm(A_c h)``, while the sources' own states move by
closed-form rotations. The rounding of a stiff circuit's exponential then cannot
make the drive's amplitude or phase drift from step to step.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np

from handcheck.circuit.model import Circuit
from handcheck.errors import CircuitError, LimitError
from handcheck.simulate.assemble import Equations, assemble
from handcheck.simulate.reduce import reduce_pencil
from handcheck.simulate.generators import Breakpoint, Exosystem, breakpoints, exo_step, exosystem

__all__ = [
    "FIT_PERIODS",
    "MIN_PER_PERIOD",
    "RING_PER_PERIOD",
    "Propagation",
    "Simulation",
    "StateModel",
    "exo_step",
    "propagation",
    "simulate",
    "state_model",
]

#: The fewest samples per period of a source sinusoid or pulse train (common practice).
MIN_PER_PERIOD = 20
#: Samples per period of the fastest ringing natural mode (common practice).
RING_PER_PERIOD = 20
#: Periods (or time constants) kept at the end of a default run for fitting.
FIT_PERIODS = 4
#: Periods (or time constants) run when the transient never dies out.
UNSETTLED_UNITS = 100


def _readonly(array: np.ndarray) -> np.ndarray:
    array.setflags(write=False)
    return array


@dataclass(frozen=True)
class StateModel:
    """The circuit after t = 0 as state equations ``q' = A q``, ``q = (xi, w)``.

    Attributes
    ----------
    equations : Equations
        The circuit equations (switches as after t = 0).
    exo : Exosystem
        The sources' generator.
    X : ndarray, shape (n, d)
        Unknowns of the circuit equations from the state: ``x = X q``.
    A : ndarray, shape (d, d)
        Block upper triangular: ``[[A_c, K], [0, S]]``.
    P : ndarray, shape (d, n + nw)
        Consistent state from any ``(x, w)``: ``q = P (x, w)``.
    modes : ndarray of complex
        The natural modes: eigenvalues of ``A_c`` (1/s), sorted by real part.
    index : int
        Index of the circuit's descriptor system.
    """

    equations: Equations
    exo: Exosystem
    X: np.ndarray
    A: np.ndarray
    P: np.ndarray
    modes: np.ndarray
    index: int

    @property
    def circuit_states(self) -> int:
        return self.A.shape[0] - self.exo.size

    def consistent(self, x: np.ndarray, w: np.ndarray) -> np.ndarray:
        """The state reached at once from circuit unknowns ``x`` and source states ``w``."""
        return self.P @ np.concatenate([x, w])


def state_model(circuit: Circuit) -> StateModel:
    """Reduce the circuit (switches as after t = 0) and its sources to state equations.

    Raises
    ------
    CircuitError
        If the circuit has no unique time response.
    """
    eq = assemble(circuit, switches="after")
    exo = exosystem(circuit)
    n, nw = eq.size, exo.size
    E = np.zeros((n + nw, n + nw))
    F = np.zeros((n + nw, n + nw))
    E[:n, :n] = eq.E
    E[n:, n:] = np.eye(nw)
    F[:n, :n] = -eq.G
    F[:n, n:] = eq.B @ exo.H
    F[n:, n:] = exo.S
    red = reduce_pencil(E, F, what=f"the circuit of {circuit.path}")
    Z, A, P = red.Z, red.A, red.P
    d = A.shape[0]
    dc = d - nw
    if nw:
        Zw = Z[n:]
        u, s, vt = np.linalg.svd(Zw)
        if s.size < nw or s[-1] <= 1e-10 * s[0]:
            raise CircuitError(
                "the sources could not be separated from the circuit's own states; please report this circuit"
            )
        T = np.hstack([vt[nw:].T, vt[:nw].T @ (u.T / s[:, None])])
        Tinv = np.linalg.inv(T)
        Z, A, P = Z @ T, Tinv @ A @ T, Tinv @ P
        A[dc:, :dc] = 0.0
        A[dc:, dc:] = exo.S
        P[dc:] = 0.0
        P[dc:, n:] = np.eye(nw)
    modes = np.linalg.eigvals(A[:dc, :dc]) if dc else np.zeros(0, complex)
    # a mode below 1e-12 of the circuit's own rate scale is a mode at s = 0 (rounding
    # leaves it at about 1e-16 of the other modes); report it as exactly 0
    reference = max(float(np.max(np.abs(modes), initial=0.0)), _rate_scale(eq))
    modes[np.abs(modes) <= 1e-12 * reference] = 0.0
    modes = modes[np.lexsort((modes.imag, modes.real))]
    return StateModel(eq, exo, _readonly(Z[:n].copy()), _readonly(A), _readonly(P), _readonly(modes), red.index)


def _rate_scale(eq: Equations) -> float:
    """A typical rate (1/s) of the circuit: geometric mean of |G| over that of |E| entries."""
    e, g = np.abs(eq.E[eq.E != 0]), np.abs(eq.G[eq.G != 0])
    if not e.size or not g.size:
        return 1.0
    return float(np.exp(np.mean(np.log(g)) - np.mean(np.log(e))))


@dataclass(frozen=True)
class Simulation:
    """A circuit's computed time response.

    Attributes
    ----------
    circuit : Circuit
        The circuit simulated.
    times : ndarray
        Sample times from 0 to ``span`` (s), equally spaced by ``step``.
    voltages : Mapping of str to ndarray
        Every node's voltage to ground (V), keyed by node name (ground is 0).
    currents : Mapping of str to ndarray
        Every part's current (A) entering its ``nodes[0]``, keyed by part id; an
        op-amp's is the current into its output terminal; a transformer's are
        ``"<id>.primary"`` and ``"<id>.secondary"``, entering the dotted ends.
        The value at a breakpoint (and at t = 0) is the one just after it.
    step : float
        The integration step, equal to the sample interval (s).
    span : float
        The time integrated (s).
    omega : float
        The analysis angular frequency (rad/s; 0 for DC).
    modes : ndarray of complex
        The natural modes (1/s) of the circuit after t = 0.
    rules : str
        What the run did and which sampling rules it met.
    settles_from : float
        The last isolated breakpoint (a delay or the last listed point), from which
        the transient is counted.
    breakpoints : tuple of float
        Times at which a step was split for a source breakpoint.
    index : int
        Index of the circuit's descriptor system.
    samples_per_period : float
        Samples per period of the fastest source sinusoid or pulse train (inf when none).
    """

    circuit: Circuit
    times: np.ndarray
    voltages: Mapping[str, np.ndarray]
    currents: Mapping[str, np.ndarray]
    step: float
    span: float
    omega: float
    modes: np.ndarray
    rules: str
    settles_from: float
    breakpoints: tuple[float, ...] = ()
    index: int = 1
    samples_per_period: float = math.inf
    tolerance: float = 1e-6
    notes: tuple[str, ...] = field(default=())

    @property
    def samples(self) -> int:
        return len(self.times)


def _classify(modes: np.ndarray) -> tuple[list[complex], list[complex], list[complex]]:
    """Split modes into (decaying, held at s = 0, undamped or growing)."""
    decaying, held, lasting = [], [], []
    for mode in modes:
        size = abs(mode)
        if size == 0:
            held.append(complex(mode))
        elif mode.real < -1e-9 * size:
            decaying.append(complex(mode))
        else:
            lasting.append(complex(mode))
    return decaying, held, lasting


def slowest_rate(
    modes: np.ndarray, omega: float, damping: list[float]
) -> tuple[float, complex | None, list[complex], list[complex]]:
    """The slowest decay rate (1/s) of the natural modes and damped sources."""
    decaying, held, lasting = _classify(modes)
    slowest: complex | None = None
    rate = math.inf
    for mode in decaying:
        if -mode.real < rate:
            rate, slowest = -mode.real, mode
    for a in damping:
        if 0 < a < rate:
            rate, slowest = a, complex(-a, 0.0)
    return rate, slowest, held, lasting


def _steady_before(circuit: Circuit, exo: Exosystem) -> tuple[np.ndarray, list[str]]:
    """Circuit unknowns at t = 0- when the circuit sat in its own steady state."""
    eq = assemble(circuit, switches="before")
    notes: list[str] = []
    u = np.array([plan.before_dc for plan in exo.plans])
    rhs = eq.B @ u if len(u) else np.zeros(eq.size)
    x, *_ = np.linalg.lstsq(eq.G, rhs, rcond=1e-12)
    rank = np.linalg.matrix_rank(eq.G, tol=1e-12 * max(np.linalg.norm(eq.G, 2), 1e-300))
    if np.linalg.norm(eq.G @ x - rhs) > 1e-9 * max(np.linalg.norm(rhs), 1e-300) and np.linalg.norm(rhs) > 0:
        raise CircuitError(
            "before t = 0 the circuit has no DC steady state (a constant source drives a capacitor with no "
            'path for direct current, or an inductor with nothing to limit its current); use start = "rest"',
            file=circuit.path,
        )
    if rank < eq.size:
        notes.append(
            "the DC state before t = 0 is not unique (a node held only by capacitors, or a loop of inductors); "
            "the one of smallest size was taken"
        )
    for k, plan in enumerate(exo.plans):
        for omega, U in plan.before_phasors:
            M = 1j * omega * eq.E + eq.G
            if np.linalg.cond(M) > 1e13:
                raise CircuitError(
                    f"before t = 0 the circuit has no steady state at the frequency of {plan.id}: it resonates "
                    "there without loss",
                    (plan.id,),
                    file=circuit.path,
                )
            x = x + np.linalg.solve(M, eq.B[:, k] * U).real
    return x, notes


def _rest_state(circuit: Circuit, eq: Equations) -> np.ndarray:
    """Circuit unknowns with capacitors and inductors at their ``initial`` values."""
    x = np.zeros(eq.size)
    initial = {p.id: float(p.initial) for p in circuit.parts if p.initial is not None}
    if eq.capacitors:
        inc = np.zeros((len(eq.capacitors), len(eq.nodes)))
        values = np.zeros(len(eq.capacitors))
        for k, (ident, a, b, _) in enumerate(eq.capacitors):
            if a is not None:
                inc[k, a] = 1.0
            if b is not None:
                inc[k, b] = -1.0
            values[k] = initial.get(ident, 0.0)
        if np.any(values):
            x[: len(eq.nodes)] = np.linalg.lstsq(inc, values, rcond=None)[0]
    for ident, col, _ in eq.inductors:
        x[col] = initial.get(ident, 0.0)
    return x


def _periods(circuit: Circuit, exo: Exosystem) -> list[float]:
    periods = [2 * math.pi / w for plan in exo.plans for w in plan.frequencies]
    periods += [p for plan in exo.plans for p in plan.periods]
    omega = float(circuit.omega)
    if omega > 0:
        periods.append(2 * math.pi / omega)
    return periods


@dataclass(frozen=True)
class Propagation:
    """How the state is stepped: ``q = T r``, ``r(t + dt) = phi(dt) r(t)``.

    When no natural mode coincides with a mode of the sources, ``T`` splits the
    state into the transient ``xi - X w`` and the sources ``w``, where ``X`` solves
    the Sylvester equation ``A_c X - X S = -K`` (so ``X w`` is the forced, steady
    response). The two halves then move independently, by ``expm(A_c dt)`` and by
    the closed form of :func:`exo_step`, and rounding in the circuit's exponential
    touches only the decaying transient. Otherwise (a circuit mode at a source
    mode: an integrator fed a constant, a lossless resonance at the drive
    frequency) ``T`` is the identity and the whole matrix is exponentiated, with the
    sources' block replaced by its closed form.
    """

    T: np.ndarray
    Tinv: np.ndarray
    decoupled: bool
    model: StateModel

    def phi(self, dt: float) -> np.ndarray:
        from scipy.linalg import expm

        model = self.model
        dc = model.circuit_states
        if self.decoupled:
            out = np.zeros_like(model.A)
            out[:dc, :dc] = expm(model.A[:dc, :dc] * dt)
        else:
            out = expm(model.A * dt)
            out[dc:, :dc] = 0.0
        out[dc:, dc:] = exo_step(model.exo, dt)
        return out


def propagation(model: StateModel, horizon: float) -> Propagation:
    """Choose the stepping coordinates for a state model (see :class:`Propagation`).

    The split is used only when every circuit mode is far from every source mode,
    both relatively and over the ``horizon`` (s) of the run: the forced response
    ``X w`` grows as ``1/gap``, and its cancellation against the transient would
    cost ``eps / (gap * horizon)`` of the answer.
    """
    d, dc = model.A.shape[0], model.circuit_states
    eye = np.eye(d)
    K = model.A[:dc, dc:]
    if dc in (0, d) or not np.any(K):
        return Propagation(eye, eye, True, model)
    from scipy.linalg import solve_sylvester

    S = model.A[dc:, dc:]
    source_modes = np.linalg.eigvals(S)
    scale = max(float(np.max(np.abs(model.modes))), float(np.max(np.abs(source_modes))), 1e-300)
    gap = float(np.min(np.abs(model.modes[:, None] - source_modes[None, :])))
    if gap > 1e-10 * scale and gap * horizon > 1e-2:
        Ac = model.A[:dc, :dc]
        X = solve_sylvester(Ac, -S, -K)
        residual = np.linalg.norm(Ac @ X - X @ S + K)
        if np.all(np.isfinite(X)) and residual <= 1e-9 * (np.linalg.norm(Ac) * np.linalg.norm(X) + np.linalg.norm(K)):
            T, Tinv = eye.copy(), eye.copy()
            T[:dc, dc:] = X
            Tinv[:dc, dc:] = -X
            return Propagation(T, Tinv, True, model)
    return Propagation(eye, eye, False, model)


def simulate(
    circuit: Circuit,
    *,
    span: float | None = None,
    tolerance: float = 1e-6,
    samples_per_period: float = 200,
    min_samples: int = 200,
    max_samples: int = 200_000,
) -> Simulation:
    """Integrate the circuit from t = 0 with an exact step and report every voltage and current.

    Parameters
    ----------
    circuit : Circuit
        The parsed circuit; ``circuit.start`` says how it starts (see Notes).
    span : float, optional
        Time to integrate (s). By default: whole periods of the analysis frequency
        (time constants of the slowest mode for DC) until the slowest natural
        mode has decayed below ``tolerance`` after the last delay, plus
        ``FIT_PERIODS`` more to fit over.
    tolerance : float
        Relative size below which the transient counts as gone (sets the default span).
    samples_per_period : float
        Samples per period of the fastest source sinusoid or pulse train (at least 20).
    min_samples : int
        The fewest sample intervals over the span.
    max_samples : int
        The most sample intervals; a default span is shortened, and the sample
        density lowered (never below 20 per source period), to stay within it.

    Returns
    -------
    Simulation

    Notes
    -----
    ``start = "rest"``: capacitors and inductors start at their ``initial`` values
    (zero if none), every source is zero before its delay. ``start = "steady"``:
    before t = 0 the circuit, with each switch in its earlier state, sat in its own
    steady state under the sources' values for t < 0 (constant and undamped sine
    sources as after t = 0, a step at ``offset + low``, every other source off);
    its capacitor voltages and inductor currents, DC plus the sinusoidal phasors
    at t = 0, are the starting values. In both cases the state then moves at once to
    a consistent state of the circuit after t = 0 by the consistency projection,
    which keeps capacitor charges and inductor fluxes unless an ideal source or
    switch forces a jump (see :mod:`.reduce`).

    The sampling rules (common practice, so that no straight segment drawn
    between samples is an artefact of the method): at least ``min_samples``
    samples; at least ``samples_per_period`` per period of the fastest source
    sinusoid or pulse train; at least 20 per period of the fastest ringing natural
    mode; an integration step no larger than the sample interval (here: equal).
    """
    if not 0 < tolerance < 1:
        raise ValueError(f"tolerance must lie between 0 and 1, not {tolerance}")
    if samples_per_period < MIN_PER_PERIOD:
        raise ValueError(
            f"samples_per_period must be at least {MIN_PER_PERIOD} (common practice), not {samples_per_period}"
        )
    if min_samples < 2 or max_samples < min_samples:
        raise ValueError("min_samples must be at least 2 and no more than max_samples")
    if span is not None and not span > 0:
        raise ValueError(f"span must be a positive time in seconds, not {span}")

    model = state_model(circuit)
    eq, exo = model.equations, model.exo
    omega = float(circuit.omega)
    notes: list[str] = []

    # ---- time scale, span and sample interval -----------------------------------
    damping = [d for plan in exo.plans for d in plan.decays]
    rate, _, held, lasting = slowest_rate(model.modes, omega, damping)
    settles_from = max((plan.settles_from for plan in exo.plans), default=0.0)
    settle = math.log(1 / tolerance) / rate if math.isfinite(rate) else 0.0
    if lasting:
        settle = math.inf
    periods = _periods(circuit, exo)
    pulses = [p for plan in exo.plans for p in plan.periods]
    if omega > 0:
        unit, unit_name = 2 * math.pi / omega, "period"
    elif pulses:
        unit, unit_name = max(pulses), "pulse period"
    elif math.isfinite(rate):
        unit, unit_name = 1 / rate, "time constant"
    else:
        ring = [2 * math.pi / abs(m.imag) for m in lasting if m.imag != 0]
        unit = max(ring) if ring else (settles_from or 1.0)
        unit_name = "period of the slowest undamped mode" if ring else "second" if unit == 1.0 else "delay"
    fastest = min(periods) if periods else math.inf
    ringing = [abs(m.imag) for m in model.modes if abs(m.imag) > 1e-9 * abs(m)]
    ring_period = 2 * math.pi / max(ringing) if ringing else math.inf

    # samples per unit of time needed by each rule
    want = {
        "asked": 1 / (fastest / samples_per_period) if math.isfinite(fastest) else 0.0,
        "least": 1 / (fastest / MIN_PER_PERIOD) if math.isfinite(fastest) else 0.0,
        "ring": 1 / (ring_period / RING_PER_PERIOD) if math.isfinite(ring_period) else 0.0,
    }
    short = False
    target = max(want["asked"], want["ring"])
    floor = want["least"]
    if span is None:
        if math.isfinite(settle):
            count = math.ceil((settles_from + settle) / unit - 1e-9) + FIT_PERIODS
        else:
            count = (math.ceil(settles_from / unit - 1e-9) if settles_from else 0) + UNSETTLED_UNITS
        per_unit = max(math.ceil(unit * target - 1e-9), 1)
        if count * per_unit > max_samples:
            least = max(math.ceil(unit * floor - 1e-9), 1)
            per_unit = max(max_samples // count, least)
            if count * per_unit > max_samples:
                count = max(max_samples // per_unit, FIT_PERIODS + 1)
                short = True
        if count * per_unit < min_samples:
            per_unit = math.ceil(min_samples / count)
        total = count * per_unit
        span = count * unit
        step = unit / per_unit
    else:
        total = max(min_samples, math.ceil(span * target - 1e-9))
        if total > max_samples:
            least = max(min_samples, math.ceil(span * floor - 1e-9))
            if least > max_samples:
                raise LimitError(
                    f"a span of {span:g} s needs {least} samples at {MIN_PER_PERIOD} per period of the fastest "
                    f"source; the limit is {max_samples}: shorten [transient] span",
                    file=circuit.path,
                )
            total = max_samples
        step = span / total
    if math.isfinite(fastest) and fastest / step < samples_per_period * (1 - 1e-9):
        notes.append(
            f"the sample density was lowered to {fastest / step:.4g} per period of the fastest source "
            f"(asked {samples_per_period:g}) to stay within {max_samples} samples"
        )
    if math.isfinite(ring_period) and ring_period / step < RING_PER_PERIOD * (1 - 1e-9):
        notes.append(
            f"the fastest ringing mode ({2 * math.pi / ring_period:.6g} rad/s) is integrated exactly "
            f"but drawn with {ring_period / step:.3g} samples per period (fewer than {RING_PER_PERIOD}), "
            f"to stay within {max_samples} samples"
        )
    if short:
        notes.append(
            f"the run was cut to {count} {unit_name}s to stay within {max_samples} samples: "
            "it is shorter than the transient needs"
        )
    if held:
        notes.append(
            f"{len(held)} natural mode(s) at s = 0 (a charge or flux with no path to decay): "
            "their part of the response holds a constant (or ramps under a constant drive)"
        )
    if lasting:
        worst = max(lasting, key=lambda m: m.real)
        kind = "grows" if worst.real > 1e-9 * abs(worst) else "never dies out"
        notes.append(f"the natural mode s = {worst:.6g} 1/s {kind}: the circuit does not settle")

    # ---- initial state --------------------------------------------------------
    if exo.start == "steady":
        x0, more = _steady_before(circuit, exo)
        notes += more
    else:
        x0 = _rest_state(circuit, eq)
    q = model.consistent(x0, exo.initial)

    # ---- march ----------------------------------------------------------------
    times = step * np.arange(total + 1)
    times[-1] = span
    points = breakpoints(exo, span, merge=1e-12 * span)
    Q = _march(model, q, step=step, total=total, points=points, times=times)

    # ---- outputs --------------------------------------------------------------
    d, dc = model.A.shape[0], model.circuit_states
    Wsel = np.zeros((exo.size, d))
    Wsel[:, dc:] = np.eye(exo.size)
    Y_i = eq.Jx @ model.X + eq.Jdx @ (model.X @ model.A) + eq.Ju @ (exo.H @ Wsel)
    nn = len(eq.nodes)
    V = model.X[:nn] @ Q
    currents_all = Y_i @ Q
    voltages = {name: _readonly(V[k]) for k, name in enumerate(eq.nodes)}
    currents = {key: _readonly(currents_all[k]) for k, key in enumerate(eq.current_keys)}

    per_period = fastest / step if math.isfinite(fastest) else math.inf
    rules = _rules_text(
        total=total,
        span=span,
        step=step,
        min_samples=min_samples,
        per_period=per_period,
        asked=samples_per_period,
        ring_period=ring_period,
        points=points,
        index=model.index,
        states=model.circuit_states,
        notes=notes,
    )
    return Simulation(
        circuit=circuit,
        times=_readonly(times),
        voltages=MappingProxyType(voltages),
        currents=MappingProxyType(currents),
        step=step,
        span=span,
        omega=omega,
        modes=model.modes,
        rules=rules,
        settles_from=settles_from,
        breakpoints=tuple(p.time for p in points),
        index=model.index,
        samples_per_period=per_period,
        tolerance=tolerance,
        notes=tuple(notes),
    )


def _march(
    model: StateModel, q: np.ndarray, *, step: float, total: int, points: tuple[Breakpoint, ...], times: np.ndarray
) -> np.ndarray:
    """States at every sample; steps that contain a breakpoint are split there."""
    P = model.P
    d = model.A.shape[0]
    dc = model.circuit_states
    how = propagation(model, horizon=float(times[-1]))
    cache: dict[float, np.ndarray] = {}

    def phi(dt: float) -> np.ndarray:
        if dt not in cache:
            cache[dt] = how.phi(dt)
        return cache[dt]

    Phi = phi(step)
    # Blocks of B steps: anchors B steps apart one after another, then every sample
    # between them in one matrix product with the stacked powers Phi^1..Phi^B
    # (B d^3 work to build the powers, against N d^2 for the steps themselves).
    block = int(max(1, min(64, math.isqrt(max(total, 1)), total // max(d, 1))))
    powers = np.empty((block, d, d))
    powers[0] = Phi
    for k in range(1, block):
        powers[k] = powers[k - 1] @ Phi
    stack = powers.reshape(block * d, d)
    R = np.empty((d, total + 1))
    R[:, 0] = how.Tinv @ q

    def plain(k: int, stop: int) -> None:
        """Fill R[:, k+1 .. stop] from R[:, k] by whole steps."""
        m = (stop - k) // block if block > 1 else 0
        if m:
            anchors = np.empty((d, m))
            anchors[:, 0] = R[:, k]
            for j in range(1, m):
                anchors[:, j] = powers[-1] @ anchors[:, j - 1]
            fill = (stack @ anchors).reshape(block, d, m)
            R[:, k + 1 : k + 1 + m * block] = fill.transpose(1, 2, 0).reshape(d, m * block)
            k += m * block
        while k < stop:
            R[:, k + 1] = Phi @ R[:, k]
            k += 1

    # each breakpoint: the interval (t_j, t_j+1] that holds it
    slots: list[tuple[int, float]] = []
    for point in points:
        where = point.time / step
        near = round(where)
        j = near - 1 if abs(where - near) <= 1e-9 * max(1.0, where) else math.floor(where)
        slots.append((min(max(j, 0), total - 1), point.time))

    def reset(r: np.ndarray, point: Breakpoint) -> np.ndarray:
        state = how.T @ r
        w = state[dc:].copy()
        w[list(point.index)] = point.values
        return how.Tinv @ (P @ np.concatenate([model.X @ state, w]))

    k, e = 0, 0
    while k < total:
        stop = slots[e][0] if e < len(slots) else total
        if k < stop:
            plain(k, stop)
            k = stop
        if e >= len(slots):
            break
        # the step from t_k holds one or more breakpoints
        r, now = R[:, k], times[k]
        while e < len(slots) and slots[e][0] == k:
            when = min(max(slots[e][1], now), times[k + 1])
            if when > now:
                r = phi(when - now) @ r
                now = when
            r = reset(r, points[e])
            e += 1
        if times[k + 1] > now:
            r = phi(times[k + 1] - now) @ r
        R[:, k + 1] = r
        k += 1
    return how.T @ R


def _rules_text(
    *,
    total: int,
    span: float,
    step: float,
    min_samples: int,
    per_period: float,
    asked: float,
    ring_period: float,
    points: tuple[Breakpoint, ...],
    index: int,
    states: int,
    notes: list[str],
) -> str:
    lines = [
        f"Method: exact discretisation x(t + h) = expm(A h) x(t) of {states} circuit state(s) "
        "augmented with the sources' own generators (oscillators for sinusoids, level and slope for "
        f"straight pieces); descriptor index {index}.",
        f"Step h = {step:.6g} s, equal to the sample interval (the step is never larger than the sample interval).",
        f"Samples: {total} intervals over {span:.6g} s (at least {min_samples} required).",
    ]
    if math.isfinite(per_period):
        lines.append(
            f"{per_period:.6g} samples per period of the fastest source sinusoid or pulse train "
            f"(asked {asked:g}; at least {MIN_PER_PERIOD})."
        )
    else:
        lines.append("No source sinusoid or pulse train: no per-period rule applies.")
    if math.isfinite(ring_period):
        lines.append(
            f"{ring_period / step:.6g} samples per period of the fastest ringing natural mode "
            f"(at least {RING_PER_PERIOD} unless noted)."
        )
    if points:
        lines.append(
            f"{len(points)} source breakpoint(s) inside the span: each splits its step there, so none is smoothed."
        )
    lines += [f"Note: {note}." for note in notes]
    return "\n".join(lines)

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
can be (:class:`.statemodel.Propagation`): the forced response ``X w`` (``X`` from a
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
from handcheck.errors import LimitError
from handcheck.simulate.generators import Breakpoint, Exosystem, breakpoints
from handcheck.simulate.march import march, rest_state, steady_before
from handcheck.simulate.statemodel import StateModel, readonly, slowest_rate, state_model

__all__ = [
    "FIT_PERIODS",
    "MIN_PER_PERIOD",
    "RING_PER_PERIOD",
    "Simulation",
    "simulate",
]

#: The fewest samples per period of a source sinusoid or pulse train (common practice).
MIN_PER_PERIOD = 20
#: Samples per period of the fastest ringing natural mode (common practice).
RING_PER_PERIOD = 20
#: Periods (or time constants) kept at the end of a default run for fitting.
FIT_PERIODS = 4
#: Periods (or time constants) run when the transient never dies out.
UNSETTLED_UNITS = 100


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


def _periods(circuit: Circuit, exo: Exosystem) -> list[float]:
    periods = [2 * math.pi / w for plan in exo.plans for w in plan.frequencies]
    periods += [p for plan in exo.plans for p in plan.periods]
    omega = float(circuit.omega)
    if omega > 0:
        periods.append(2 * math.pi / omega)
    return periods


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
    _check_arguments(span, tolerance, samples_per_period, min_samples, max_samples)
    model = state_model(circuit)
    omega = float(circuit.omega)
    scale = _time_scale(circuit, model, tolerance)
    grid = _sampling(circuit, scale, span, samples_per_period, min_samples, max_samples)
    notes = _sampling_notes(scale, grid, samples_per_period, max_samples)
    times, points, Q, more = _march_from_start(circuit, model, grid)
    notes += more
    voltages, currents = _outputs(model, Q)
    rules = _rules_text(grid, scale, model, points, notes, min_samples=min_samples, asked=samples_per_period)
    return Simulation(
        circuit=circuit,
        times=readonly(times),
        voltages=MappingProxyType(voltages),
        currents=MappingProxyType(currents),
        step=grid.step,
        span=grid.span,
        omega=omega,
        modes=model.modes,
        rules=rules,
        settles_from=scale.settles_from,
        breakpoints=tuple(p.time for p in points),
        index=model.index,
        samples_per_period=_per_period(scale, grid),
        tolerance=tolerance,
        notes=tuple(notes),
    )


def _per_period(scale: _TimeScale, grid: _Grid) -> float:
    """Samples per period of the fastest source sinusoid or pulse train (inf when none)."""
    return scale.fastest / grid.step if math.isfinite(scale.fastest) else math.inf


def _check_arguments(
    span: float | None, tolerance: float, samples_per_period: float, min_samples: int, max_samples: int
) -> None:
    """Refuse arguments of :func:`simulate` that no run can meet."""
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


@dataclass(frozen=True)
class _TimeScale:
    """The circuit's times that set a run's span and sample interval.

    Attributes
    ----------
    unit, unit_name
        The unit a default span is counted in (a period, a pulse period, a time
        constant, ...) and its name.
    settle
        Time for the slowest mode to decay below the tolerance (s; inf if it never does).
    settles_from
        The last isolated breakpoint (s).
    fastest
        Period of the fastest source sinusoid or pulse train (s; inf when none).
    ring_period
        Period of the fastest ringing natural mode (s; inf when none).
    held, lasting
        Natural modes at s = 0, and modes that never die out.
    """

    unit: float
    unit_name: str
    settle: float
    settles_from: float
    fastest: float
    ring_period: float
    held: list[complex]
    lasting: list[complex]


def _time_scale(circuit: Circuit, model: StateModel, tolerance: float) -> _TimeScale:
    """The unit of a default span, the settling time and the fastest periods."""
    exo = model.exo
    omega = float(circuit.omega)
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
    ringing = [abs(m.imag) for m in model.modes if abs(m.imag) > 1e-9 * abs(m)]
    return _TimeScale(
        unit=unit,
        unit_name=unit_name,
        settle=settle,
        settles_from=settles_from,
        fastest=min(periods) if periods else math.inf,
        ring_period=2 * math.pi / max(ringing) if ringing else math.inf,
        held=held,
        lasting=lasting,
    )


@dataclass(frozen=True)
class _Grid:
    """The run's span (s), its number of sample intervals and the step (s).

    ``count`` is the number of units of a default span (0 for a span given), and
    ``short`` says the default span was cut to stay within the sample limit.
    """

    span: float
    total: int
    step: float
    count: int = 0
    short: bool = False


def _sampling(
    circuit: Circuit,
    scale: _TimeScale,
    span: float | None,
    samples_per_period: float,
    min_samples: int,
    max_samples: int,
) -> _Grid:
    """The span and sample interval that meet the sampling rules within the sample limit."""
    fastest, ring_period = scale.fastest, scale.ring_period
    # samples per unit of time needed by each rule
    target = max(
        1 / (fastest / samples_per_period) if math.isfinite(fastest) else 0.0,
        1 / (ring_period / RING_PER_PERIOD) if math.isfinite(ring_period) else 0.0,
    )
    floor = 1 / (fastest / MIN_PER_PERIOD) if math.isfinite(fastest) else 0.0
    if span is None:
        return _default_grid(scale, target, floor, min_samples, max_samples)
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
    return _Grid(span=span, total=total, step=span / total)


def _default_grid(scale: _TimeScale, target: float, floor: float, min_samples: int, max_samples: int) -> _Grid:
    """Whole units until the transient is gone plus ``FIT_PERIODS``, sampled at ``target`` per second."""
    unit, settles_from = scale.unit, scale.settles_from
    short = False
    if math.isfinite(scale.settle):
        count = math.ceil((settles_from + scale.settle) / unit - 1e-9) + FIT_PERIODS
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
    return _Grid(span=count * unit, total=count * per_unit, step=unit / per_unit, count=count, short=short)


def _sampling_notes(scale: _TimeScale, grid: _Grid, samples_per_period: float, max_samples: int) -> list[str]:
    """Notes on what the sample limit cost and on modes that do not decay."""
    notes: list[str] = []
    fastest, ring_period, step = scale.fastest, scale.ring_period, grid.step
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
    if grid.short:
        notes.append(
            f"the run was cut to {grid.count} {scale.unit_name}s to stay within {max_samples} samples: "
            "it is shorter than the transient needs"
        )
    if scale.held:
        notes.append(
            f"{len(scale.held)} natural mode(s) at s = 0 (a charge or flux with no path to decay): "
            "their part of the response holds a constant (or ramps under a constant drive)"
        )
    if scale.lasting:
        worst = max(scale.lasting, key=lambda m: m.real)
        kind = "grows" if worst.real > 1e-9 * abs(worst) else "never dies out"
        notes.append(f"the natural mode s = {worst:.6g} 1/s {kind}: the circuit does not settle")
    return notes


def _march_from_start(
    circuit: Circuit, model: StateModel, grid: _Grid
) -> tuple[np.ndarray, tuple[Breakpoint, ...], np.ndarray, list[str]]:
    """Sample times, source breakpoints, the state at each sample, and notes on the start."""
    eq, exo = model.equations, model.exo
    notes: list[str] = []
    if exo.start == "steady":
        x0, notes = steady_before(circuit, exo)
    else:
        x0 = rest_state(circuit, eq)
    q = model.consistent(x0, exo.initial)
    times = grid.step * np.arange(grid.total + 1)
    times[-1] = grid.span
    points = breakpoints(exo, grid.span, merge=1e-12 * grid.span)
    Q = march(model, q, step=grid.step, total=grid.total, points=points, times=times)
    return times, points, Q, notes


def _outputs(model: StateModel, Q: np.ndarray) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
    """Every node voltage and part current at the samples of the state ``Q``."""
    eq, exo = model.equations, model.exo
    d, dc = model.A.shape[0], model.circuit_states
    Wsel = np.zeros((exo.size, d))
    Wsel[:, dc:] = np.eye(exo.size)
    Y_i = eq.Jx @ model.X + eq.Jdx @ (model.X @ model.A) + eq.Ju @ (exo.H @ Wsel)
    nn = len(eq.nodes)
    V = model.X[:nn] @ Q
    currents_all = Y_i @ Q
    voltages = {name: readonly(V[k]) for k, name in enumerate(eq.nodes)}
    currents = {key: readonly(currents_all[k]) for k, key in enumerate(eq.current_keys)}
    return voltages, currents


def _unknowns_text(index: int) -> str:
    """How the circuit's other unknowns follow from its states, in words (``index`` is
    the differential-algebraic index of the circuit equations: 0 or 1 when they follow
    from the states at each instant, 2 or more when derivatives of sources enter)."""
    if index <= 1:
        return "every other node voltage and current follows from the states at each instant"
    return (
        "some node voltages or currents follow from the rate of change of a source or state "
        f"(a loop of capacitors and voltage sources, or a cut of inductors and current sources: "
        f"{index} levels of derivatives), handled exactly"
    )


def _rules_text(
    grid: _Grid,
    scale: _TimeScale,
    model: StateModel,
    points: tuple[Breakpoint, ...],
    notes: list[str],
    *,
    min_samples: int,
    asked: float,
) -> str:
    """What the run did and which sampling rules it met, one sentence a line."""
    total, span, step = grid.total, grid.span, grid.step
    index, states = model.index, model.circuit_states
    per_period, ring_period = _per_period(scale, grid), scale.ring_period
    lines = [
        f"Method: exact discretisation x(t + h) = expm(A h) x(t) of {states} circuit state(s) "
        "augmented with the sources' own generators (oscillators for sinusoids, level and slope for "
        f"straight pieces); {_unknowns_text(index)}.",
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

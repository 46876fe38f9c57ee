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
from handcheck.simulate.statemodel import readonly, slowest_rate, state_model

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
    # Long by design: the span, sampling and note rules trade against each other and read best in one place.
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
        x0, more = steady_before(circuit, exo)
        notes += more
    else:
        x0 = rest_state(circuit, eq)
    q = model.consistent(x0, exo.initial)

    # ---- march ----------------------------------------------------------------
    times = step * np.arange(total + 1)
    times[-1] = span
    points = breakpoints(exo, span, merge=1e-12 * span)
    Q = march(model, q, step=step, total=total, points=points, times=times)

    # ---- outputs --------------------------------------------------------------
    d, dc = model.A.shape[0], model.circuit_states
    Wsel = np.zeros((exo.size, d))
    Wsel[:, dc:] = np.eye(exo.size)
    Y_i = eq.Jx @ model.X + eq.Jdx @ (model.X @ model.A) + eq.Ju @ (exo.H @ Wsel)
    nn = len(eq.nodes)
    V = model.X[:nn] @ Q
    currents_all = Y_i @ Q
    voltages = {name: readonly(V[k]) for k, name in enumerate(eq.nodes)}
    currents = {key: readonly(currents_all[k]) for k, key in enumerate(eq.current_keys)}

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
        times=readonly(times),
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

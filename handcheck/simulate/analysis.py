"""What the simulated waveforms show: steady-state phasors, settling, KCL.

- :func:`fit_phasors`: linear least squares of ``offset + a cos(w t) + b sin(w t)``
  over whole periods at the end of the run, for every voltage and current; the
  phasor (peak convention) is ``a - j b``, since
  ``Re((a - j b) e^{j w t}) = a cos(w t) + b sin(w t)``.
- :func:`settling`: how long the slowest natural mode needs to fall below a
  relative tolerance, ``t = ln(1/tol) / sigma`` for a mode ``e^{-sigma t}``.
- :func:`kcl_residual`: Kirchhoff's current law at every node and sample.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np

from handcheck.circuit.model import GROUND, Circuit
from handcheck.simulate.run import FIT_PERIODS, Simulation
from handcheck.simulate.statemodel import slowest_rate, state_model

__all__ = ["KclResidual", "PhasorFit", "Settling", "fit_phasors", "kcl_residual", "settling"]


@dataclass(frozen=True)
class PhasorFit:
    """Steady-state phasors fitted to the end of a simulation.

    Attributes
    ----------
    omega : float
        The angular frequency fitted (rad/s).
    periods : int
        Whole periods fitted.
    start, stop : float
        The window fitted (s).
    voltages, currents : Mapping of str to complex
        Peak phasors ``V = a - j b`` of ``offset + a cos(wt) + b sin(wt)``.
    voltage_offsets, current_offsets : Mapping of str to float
        The constant terms.
    residuals : Mapping of str to float
        Root-mean-square misfit of every signal (V or A), keyed like
        ``voltages`` (node names) and ``currents`` (part keys).
    residual : float
        The largest misfit relative to the largest fitted amplitude of its kind.
    """

    omega: float
    periods: int
    start: float
    stop: float
    voltages: Mapping[str, complex]
    currents: Mapping[str, complex]
    voltage_offsets: Mapping[str, float]
    current_offsets: Mapping[str, float]
    residuals: Mapping[str, float]
    residual: float


def _fit(times: np.ndarray, signals: np.ndarray, omega: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    basis = np.column_stack([np.ones_like(times), np.cos(omega * times), np.sin(omega * times)])
    coef, *_ = np.linalg.lstsq(basis, signals.T, rcond=None)
    misfit = basis @ coef - signals.T
    rms = np.sqrt(np.mean(misfit**2, axis=0))
    return coef[0], coef[1] - 1j * coef[2], rms


def fit_phasors(sim: Simulation, omega: float | None = None, periods: int | None = None) -> PhasorFit:
    """Fit offset, cosine and sine terms to every waveform over the last whole periods.

    Parameters
    ----------
    sim : Simulation
        The run.
    omega : float, optional
        Angular frequency (rad/s); default the analysis frequency of the run.
    periods : int, optional
        Whole periods at the end of the run to fit over. By default every whole
        period after the transient has decayed below the run's tolerance, or the
        last ``FIT_PERIODS`` if it never does within the run.

    Returns
    -------
    PhasorFit
        Peak-convention phasors (divide by sqrt(2) for rms).

    Notes
    -----
    Ordinary linear least squares (numpy.linalg.lstsq) on the basis
    ``1, cos(wt), sin(wt)``; over whole periods of equally spaced samples the three
    columns are orthogonal, so the fit equals the discrete Fourier coefficient at w.
    """
    w = float(sim.omega if omega is None else omega)
    if not w > 0:
        raise ValueError("fit_phasors needs a positive angular frequency (rad/s)")
    period = 2 * math.pi / w
    available = math.floor(sim.span / period + 1e-9)
    if available < 1:
        raise ValueError(f"the run ({sim.span:g} s) is shorter than one period ({period:g} s)")
    if periods is None:
        info = settling(sim, sim.tolerance)
        quiet = sim.span - (info.after + info.seconds) if math.isfinite(info.seconds) else -math.inf
        periods = math.floor(quiet / period + 1e-9) if quiet > 0 else 0
        if periods < 1:
            periods = min(FIT_PERIODS, available)
    if not 1 <= periods <= available:
        raise ValueError(f"periods must be between 1 and {available}, not {periods}")
    start = sim.span - periods * period
    keep = sim.times >= start - 1e-9 * sim.step
    t = sim.times[keep]
    nodes = list(sim.voltages)
    keys = list(sim.currents)
    data = np.array([sim.voltages[k][keep] for k in nodes] + [sim.currents[k][keep] for k in keys]).reshape(
        len(nodes) + len(keys), t.size
    )
    offsets, phasors, rms = _fit(t, data, w)
    nv = len(nodes)
    residuals = {k: float(r) for k, r in zip(nodes + keys, rms, strict=True)}
    worst = 0.0
    for lo, hi in ((0, nv), (nv, nv + len(keys))):
        if hi > lo:
            size = max(float(np.max(np.abs(phasors[lo:hi]) + np.abs(offsets[lo:hi]))), 1e-300)
            worst = max(worst, float(np.max(rms[lo:hi])) / size)
    return PhasorFit(
        omega=w,
        periods=periods,
        start=start,
        stop=sim.span,
        voltages=MappingProxyType({k: complex(phasors[i]) for i, k in enumerate(nodes)}),
        currents=MappingProxyType({k: complex(phasors[nv + i]) for i, k in enumerate(keys)}),
        voltage_offsets=MappingProxyType({k: float(offsets[i]) for i, k in enumerate(nodes)}),
        current_offsets=MappingProxyType({k: float(offsets[nv + i]) for i, k in enumerate(keys)}),
        residuals=MappingProxyType(residuals),
        residual=worst,
    )


@dataclass(frozen=True)
class Settling:
    """How long the transient takes to fall below a tolerance.

    Attributes
    ----------
    tolerance : float
        The relative size asked for.
    slowest : complex or None
        The slowest decaying natural mode (1/s), or a damped source's envelope
        ``-a``; None when nothing decays.
    seconds : float
        ``ln(1/tolerance) / sigma`` after ``after`` (inf when a mode never decays).
    periods : float or None
        ``seconds`` in periods of the analysis frequency (None for DC).
    after : float
        The last isolated breakpoint (delay, last listed point) it is counted from.
    long_enough : bool or None
        Whether the run lasted ``after + seconds`` (None when asked of a circuit).
    text : str
        The finding in words.
    """

    tolerance: float
    slowest: complex | None
    seconds: float
    periods: float | None
    after: float
    long_enough: bool | None
    text: str


def settling(subject: Circuit | Simulation, tolerance: float = 1e-6) -> Settling:
    """How many periods (or seconds) the transient needs to fall below ``tolerance``.

    Parameters
    ----------
    subject : Circuit or Simulation
        A circuit (its natural modes are computed) or a run (whose modes are used,
        and whose length is judged).
    tolerance : float
        Relative size of the transient, against its size at the start, that
        counts as gone.

    Notes
    -----
    The slowest mode ``e^{(-sigma + j w_d) t}`` falls below ``tol`` after
    ``ln(1/tol)/sigma`` (standard first-order decay; the mode's own amplitude, not
    the sum of all modes, is judged). Modes at s = 0 (a charge with no path to
    decay) leave a constant and are not counted; an undamped or growing mode never
    settles. A damped source's envelope ``e^{-a t}`` counts as a mode ``-a``.
    """
    if not 0 < tolerance < 1:
        raise ValueError(f"tolerance must lie between 0 and 1, not {tolerance}")
    if isinstance(subject, Simulation):
        circuit, modes, sim = subject.circuit, subject.modes, subject
    else:
        circuit, modes, sim = subject, state_model(subject).modes, None
    model_exo_damping = [float(d) for p in circuit.parts if p.source is not None for d in p.source.function.decays]
    omega = float(circuit.omega)
    rate, slowest, _, lasting = slowest_rate(modes, omega, model_exo_damping)
    after = (
        sim.settles_from
        if sim is not None
        else max((float(p.source.function.last_start) for p in circuit.parts if p.source is not None), default=0.0)
    )
    if lasting:
        seconds = math.inf
        worst = max(lasting, key=lambda m: m.real)
        text = f"the natural mode s = {worst:.6g} 1/s does not decay: the transient never falls below {tolerance:g}"
    elif math.isfinite(rate):
        seconds = math.log(1 / tolerance) / rate
        text = (
            f"the slowest mode s = {slowest:.6g} 1/s decays as e^({-rate:.6g} t): below {tolerance:g} "
            f"after {seconds:.6g} s"
        )
    else:
        seconds = 0.0
        text = "the circuit has no decaying natural mode: there is no transient to wait for"
    periods = seconds * omega / (2 * math.pi) if omega > 0 else None
    if periods is not None and math.isfinite(periods):
        text += f" ({periods:.4g} periods of the analysis frequency)"
    if after > 0 and math.isfinite(seconds):
        text += f", counted from {after:.6g} s"
    long_enough = None
    if sim is not None:
        long_enough = bool(sim.span >= after + seconds * (1 - 1e-9))
        text += "; the run was long enough" if long_enough else "; the run was NOT long enough"
    return Settling(tolerance, slowest, seconds, periods, after, long_enough, text)


@dataclass(frozen=True)
class KclResidual:
    """Kirchhoff's current law checked on the simulated currents.

    Attributes
    ----------
    relative : float
        The largest |sum of currents leaving a node| at any node and sample,
        divided by the largest |current| anywhere.
    absolute : float
        That largest sum (A).
    node : str or None
        Where it occurs.
    time : float or None
        When it occurs (s).
    scale : float
        The largest |current| anywhere (A).
    per_node : Mapping of str to float
        The largest |sum| at each node (A).
    """

    relative: float
    absolute: float
    node: str | None
    time: float | None
    scale: float
    per_node: Mapping[str, float]


def kcl_residual(sim: Simulation) -> KclResidual:
    """At every sample, the sum of currents leaving each node through its parts.

    A part's current enters its ``nodes[0]`` (leaving that node) and leaves at
    ``nodes[1]``; an op-amp's output current leaves the output node; transformer
    winding currents leave p1 and s1 and return at p2 and s2. Op-amp inputs,
    controlling nodes and couplings carry nothing.
    """
    circuit = sim.circuit
    nodes = list(circuit.nodes)
    index = {name: k for k, name in enumerate(nodes)}
    total = np.zeros((len(nodes), sim.samples))

    def leave(node: str, current: np.ndarray, sign: float) -> None:
        if node != GROUND:
            total[index[node]] += sign * current

    for part in circuit.parts:
        if part.kind == "coupling":
            continue
        if part.kind == "opamp":
            leave(part.nodes[0], sim.currents[part.id], 1.0)
        elif part.kind == "transformer":
            p1, p2, s1, s2 = part.nodes
            ip, is_ = sim.currents[f"{part.id}.primary"], sim.currents[f"{part.id}.secondary"]
            leave(p1, ip, 1.0)
            leave(p2, ip, -1.0)
            leave(s1, is_, 1.0)
            leave(s2, is_, -1.0)
        else:
            current = sim.currents[part.id]
            leave(part.nodes[0], current, 1.0)
            leave(part.nodes[1], current, -1.0)
    scale = max((float(np.max(np.abs(c))) for c in sim.currents.values()), default=0.0)
    if not nodes:
        return KclResidual(0.0, 0.0, None, None, scale, MappingProxyType({}))
    magnitude = np.abs(total)
    flat = int(np.argmax(magnitude))
    row, col = divmod(flat, sim.samples)
    absolute = float(magnitude[row, col])
    per_node = {name: float(np.max(magnitude[k])) for k, name in enumerate(nodes)}
    relative = absolute / scale if scale > 0 else absolute
    return KclResidual(relative, absolute, nodes[row], float(sim.times[col]), scale, MappingProxyType(per_node))

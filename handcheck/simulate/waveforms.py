"""Source waveforms as the output of a small linear system of their own.

Every independent source's waveform is, between breakpoints, the output
``u = H w`` of a linear time-invariant system ``w' = S w`` (an "exosystem",
the device of the internal-model principle: Francis and Wonham, "The internal
model principle of control theory", Automatica 12, 1976, from memory):

- a constant level is one state with ``w' = 0``;
- a sinusoid ``peak * exp(-a tau) * cos(omega tau + phase)`` is a two-state
  oscillator ``c' = -a c - omega s``, ``s' = omega c - a s`` (plus a level for
  the offset);
- a straight piece (pulse edges and flats, points) is a level and a slope,
  ``level' = slope``, ``slope' = 0``.

At a breakpoint (a delay, a pulse corner, a listed point) the states are reset to
the waveform's value and slope just after it. Appending these states to the
circuit's own makes the whole system homogeneous, so its matrix exponential
integrates the response to every waveform exactly between breakpoints.
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass

import numpy as np

from handcheck.circuit.model import Circuit, Part, Start

__all__ = ["Breakpoint", "Exosystem", "SourcePlan", "breakpoints", "exosystem"]


@dataclass(frozen=True)
class SourcePlan:
    """How one source is generated.

    Attributes
    ----------
    id : str
        The source's part id.
    offset : int
        Index of its first state in the exosystem state vector.
    S : ndarray
        Its state matrix.
    h : ndarray
        Its output row: ``u = h @ w_source``.
    initial : ndarray
        Its states just after t = 0.
    before_dc : float
        Its constant value before t = 0 (used by ``start = "steady"``).
    before_phasor : tuple of (float, complex) or None
        ``(omega, U)`` with ``u(t) = Re(U exp(j omega t))`` added before t = 0.
    omega, damping : float
        Angular frequency and envelope decay rate (0 when not a sinusoid).
    period : float
        Repetition period of a pulse train (0 otherwise).
    settles_from : float
        The time after which the waveform has no further isolated breakpoints.
    """

    id: str
    offset: int
    S: np.ndarray
    h: np.ndarray
    initial: np.ndarray
    before_dc: float
    before_phasor: tuple[float, complex] | None
    omega: float
    damping: float
    period: float
    settles_from: float
    part: Part

    @property
    def size(self) -> int:
        return len(self.h)


@dataclass(frozen=True)
class Exosystem:
    """The sources together: ``w' = S w``, ``u = H w``, reset at breakpoints."""

    plans: tuple[SourcePlan, ...]
    S: np.ndarray
    H: np.ndarray
    initial: np.ndarray
    start: Start

    @property
    def size(self) -> int:
        return self.S.shape[0]


@dataclass(frozen=True)
class Breakpoint:
    """A time after 0 at which some source states are reset: ``w[index] = values``."""

    time: float
    index: tuple[int, ...]
    values: tuple[float, ...]


_RAMP = np.array([[0.0, 1.0], [0.0, 0.0]])


def _oscillator(omega: float, damping: float) -> np.ndarray:
    return np.array([[0.0, 0.0, 0.0], [0.0, -damping, -omega], [0.0, omega, -damping]])


def _plan(part: Part, offset: int, start: Start) -> SourcePlan:
    src = part.source
    assert src is not None
    shape = src.shape
    delay = float(src.delay)
    off = float(src.offset)
    peak = float(src.peak)
    steady = start == "steady"
    if shape == "sine":
        omega, damping, phase = float(src.omega), float(src.damping), float(src.phase)  # type: ignore[arg-type]
        S, h = _oscillator(omega, damping), np.array([1.0, 1.0, 0.0])
        on = np.array([off, peak * math.cos(phase), peak * math.sin(phase)])
        if steady and damping == 0:  # it ran before t = 0 as it does after
            shifted = phase - omega * delay
            initial = np.array([off, peak * math.cos(shifted), peak * math.sin(shifted)])
            return SourcePlan(
                part.id,
                offset,
                S,
                h,
                initial,
                off,
                (omega, peak * cmath.exp(1j * shifted)),
                omega,
                damping,
                0.0,
                0.0,
                part,
            )
        initial = on if delay == 0 else np.zeros(3)
        return SourcePlan(part.id, offset, S, h, initial, 0.0, None, omega, damping, 0.0, delay, part)
    if shape in ("constant", "step"):
        S, h = np.zeros((1, 1)), np.array([1.0])
        on = np.array([off + peak])
        if steady and shape == "constant":
            return SourcePlan(part.id, offset, S, h, on, off + peak, None, 0.0, 0.0, 0.0, 0.0, part)
        before = off + float(src.low) if steady else 0.0
        initial = on if delay == 0 else np.array([before])
        return SourcePlan(part.id, offset, S, h, initial, before, None, 0.0, 0.0, 0.0, delay, part)
    # straight pieces: pulse trains and listed points
    S, h = _RAMP.copy(), np.array([1.0, 0.0])
    pieces = _pieces(part, 0.0)
    initial = np.zeros(2)
    if pieces and pieces[0][0] <= 0.0:
        initial = np.array(pieces[0][1:])
    period = float(src.period) if shape == "pulse" else 0.0  # type: ignore[arg-type]
    last = delay if shape == "pulse" else delay + float(src.points[-1][0])
    return SourcePlan(part.id, offset, S, h, initial, 0.0, None, 0.0, 0.0, period, last, part)


def _pieces(part: Part, until: float) -> list[tuple[float, float, float]]:
    """(time, level, slope) at the start of each straight piece, up to ``until``.

    The first piece always starts at the source's delay.
    """
    src = part.source
    assert src is not None
    delay, off = float(src.delay), float(src.offset)
    result: list[tuple[float, float, float]] = []
    if src.shape == "points":
        times = [float(t) for t, _ in src.points]
        values = [float(v) for _, v in src.points]
        if times[0] > 0:
            result.append((delay, off + values[0], 0.0))
        for k, (t, v) in enumerate(zip(times, values, strict=True)):
            slope = (values[k + 1] - v) / (times[k + 1] - t) if k + 1 < len(times) else 0.0
            result.append((delay + t, off + v, slope))
        return result
    # pulse train
    low, high = off + float(src.low), off + float(src.peak)
    rise, fall = float(src.rise), float(src.fall)
    width, period = float(src.width), float(src.period)  # type: ignore[arg-type]
    step = high - low
    k = 0
    while True:
        t0 = delay + k * period
        if t0 > until and k > 0:
            break
        if rise > 0:
            result += [(t0, low, step / rise), (t0 + rise, high, 0.0)]
        else:
            result.append((t0, high, 0.0))
        t2 = t0 + rise + width
        if fall > 0:
            result += [(t2, high, -step / fall), (t2 + fall, low, 0.0)]
        else:
            result.append((t2, low, 0.0))
        k += 1
    return result


def exosystem(circuit: Circuit, start: Start | None = None) -> Exosystem:
    """The exosystem of every independent source of the circuit, in part order.

    Parameters
    ----------
    circuit : Circuit
        The parsed circuit.
    start : {"rest", "steady"}, optional
        How the circuit starts (default: ``circuit.start``). From rest, every source
        is zero before its delay. In steady state, constant and undamped sine
        sources ran before t = 0 as they do after, a step sat at ``offset + low``
        until its delay, and every other source was off until its delay.
    """
    start = start or circuit.start
    plans: list[SourcePlan] = []
    offset = 0
    for part in circuit.parts:
        if part.kind in ("voltage", "current"):
            plan = _plan(part, offset, start)
            plans.append(plan)
            offset += plan.size
    S = np.zeros((offset, offset))
    H = np.zeros((len(plans), offset))
    initial = np.zeros(offset)
    for k, plan in enumerate(plans):
        block = slice(plan.offset, plan.offset + plan.size)
        S[block, block] = plan.S
        H[k, block] = plan.h
        initial[block] = plan.initial
    for array in (S, H, initial):
        array.setflags(write=False)
    return Exosystem(tuple(plans), S, H, initial, start)


def breakpoints(exo: Exosystem, until: float, *, merge: float = 0.0) -> tuple[Breakpoint, ...]:
    """Every reset in (0, until], in time order; resets closer than ``merge`` are one.

    When several resets of one source fall at one time (the end of a pulse's fall
    and the start of the next rise), the last one written holds.
    """
    raw: list[tuple[float, int, tuple[int, ...], tuple[float, ...]]] = []
    order = 0
    for plan in exo.plans:
        src = plan.part.source
        assert src is not None
        base = plan.offset
        if plan.size == 2:  # straight pieces
            for t, level, slope in _pieces(plan.part, until):
                raw.append((t, order, (base, base + 1), (level, slope)))
                order += 1
        else:
            delay = float(src.delay)
            if np.any(plan.initial != _on_state(plan)):
                raw.append((delay, order, tuple(range(base, base + plan.size)), tuple(_on_state(plan))))
                order += 1
    raw = [r for r in raw if 0.0 < r[0] <= until * (1 + 1e-14)]
    raw.sort(key=lambda r: (r[0], r[1]))
    merged: list[tuple[float, dict[int, tuple[int, float]]]] = []
    for t, written, index, values in raw:
        if not merged or t - merged[-1][0] > merge:
            merged.append((t, {}))
        resets = merged[-1][1]
        for i, value in zip(index, values, strict=True):
            if i not in resets or resets[i][0] < written:
                resets[i] = (written, value)
    return tuple(Breakpoint(t, tuple(resets), tuple(value for _, value in resets.values())) for t, resets in merged)


def _on_state(plan: SourcePlan) -> np.ndarray:
    """The states of a level or sinusoid source at its delay (right limit)."""
    src = plan.part.source
    assert src is not None
    off, peak = float(src.offset), float(src.peak)
    if plan.size == 3:
        if plan.before_phasor is not None:  # steady undamped sine: never switched
            return plan.initial
        phase = float(src.phase)
        return np.array([off, peak * math.cos(phase), peak * math.sin(phase)])
    return np.array([off + peak])

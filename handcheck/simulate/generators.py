"""Source functions as the output of a small linear system of their own.

Every independent source is, between breakpoints, the output ``u = h w`` of a linear
time-invariant system ``w' = S w`` (an "exosystem", the device of the
internal-model principle: Francis and Wonham, "The internal model principle of
control theory", Automatica 12, 1976, from memory). A source function is a sum of
terms ``Re[X tau**n exp(p tau)]`` (:mod:`handcheck.worksheet.sourcefunction`); all
terms with one exponent ``p = -a + j w`` share one Jordan chain

    z_j' = p z_j + z_(j+1),   j = 0 .. n,   u = Re(z_0),

(real states for w = 0, real and imaginary parts otherwise), whose solution is
``z_0(t) = sum_j z_j(T) (t - T)**j / j! exp(p (t - T))``. A term starting at s
contributes ``z_j(T) = X exp(p D) n!/(n - j)! D**(n - j)`` at T = s + D (the
binomial theorem). At every breakpoint (a term's start, a repeat's period) the
states are reset to the sum over the terms running then, computed afresh, so no
rounding accumulates over many periods. Appending these states to the circuit's
own makes the whole system homogeneous, so its matrix exponential integrates the
response to every source exactly between breakpoints.
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass
from typing import SupportsComplex

import numpy as np

from handcheck.circuit.model import Circuit, Part, Start
from handcheck.worksheet.sourcefunction import SourceFunction, SourceTerm

__all__ = ["Block", "Breakpoint", "Exosystem", "SourcePlan", "breakpoints", "exo_step", "exosystem"]


@dataclass(frozen=True)
class _Term:
    """A term in floats: ``Re[x tau**n exp(p tau)]`` from ``start`` on."""

    x: complex
    n: int
    p: complex
    start: float
    block: int


@dataclass(frozen=True)
class Block:
    """One Jordan chain of a source: exponent ``p``, ``length`` = highest power + 1.

    Its states start at ``offset``; two per power (real and imaginary part) when
    ``p`` is complex, one when it is real.
    """

    offset: int
    p: complex
    length: int

    @property
    def complex(self) -> bool:
        return self.p.imag != 0

    @property
    def size(self) -> int:
        return self.length * (2 if self.complex else 1)


@dataclass(frozen=True)
class SourcePlan:
    """How one source is generated.

    Attributes
    ----------
    id : str
        The source's part id.
    offset : int
        Index of its first state in the exosystem state vector.
    blocks : tuple of Block
        Its Jordan chains (offsets into the exosystem state vector).
    S : ndarray
        Its state matrix; ``h`` its output row; ``initial`` its states just after t = 0.
    before_dc : float
        Its constant value before t = 0 (used by ``start = "steady"``).
    before_phasors : tuple of (float, complex)
        ``(omega, U)`` pairs with ``u(t) = Re(U exp(j omega t))`` added before t = 0.
    frequencies : tuple of float
        Every angular frequency (> 0) in the source, damped or not.
    decays : tuple of float
        Every positive decay rate (1/s) of its terms.
    periods : tuple of float
        The periods of its repeats.
    settles_from : float
        The latest start of a term outside the repeats.
    """

    id: str
    offset: int
    blocks: tuple[Block, ...]
    S: np.ndarray
    h: np.ndarray
    initial: np.ndarray
    before_dc: float
    before_phasors: tuple[tuple[float, complex], ...]
    frequencies: tuple[float, ...]
    decays: tuple[float, ...]
    periods: tuple[float, ...]
    settles_from: float
    part: Part
    terms: tuple[_Term, ...] = ()
    repeats: tuple[tuple[float, tuple[_Term, ...]], ...] = ()

    @property
    def size(self) -> int:
        return len(self.h)

    def state(self, t: float) -> np.ndarray:
        """Every state of the source at time ``t`` (right limit), from its terms.

        A term starting within rounding (1e-9 of the period, 1e-12 of t) of ``t``
        counts as started: ``t`` is then its own breakpoint.
        """
        z = {b.offset: np.zeros(b.length, complex) for b in self.blocks}
        slack = 1e-12 * abs(t)
        for term in self.terms:
            if term.start <= t + slack:
                _add(z, self.blocks[term.block], term, max(t - term.start, 0.0))
        for period, terms in self.repeats:
            k = math.floor(t / period + 1e-9)
            local = max(t - k * period, 0.0)
            for term in terms:
                if term.start <= local + 1e-9 * period:
                    _add(z, self.blocks[term.block], term, max(local - term.start, 0.0))
        out = np.zeros(self.size)
        for b in self.blocks:
            k = b.offset - self.offset
            if b.complex:
                out[k : k + b.size : 2] = z[b.offset].real
                out[k + 1 : k + b.size : 2] = z[b.offset].imag
            else:
                out[k : k + b.size] = z[b.offset].real
        return out


def _add(z: dict[int, np.ndarray], block: Block, term: _Term, d: float) -> None:
    scale = term.x * cmath.exp(term.p * d)
    n = term.n
    for j in range(n + 1):
        z[block.offset][j] += scale * math.factorial(n) / math.factorial(n - j) * d ** (n - j)


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


def _chain(block: Block) -> np.ndarray:
    """The state matrix of one Jordan chain."""
    a, w = block.p.real, block.p.imag
    if not block.complex:
        return a * np.eye(block.length) + np.eye(block.length, k=1)
    rot = np.array([[a, -w], [w, a]])
    out = np.kron(np.eye(block.length), rot)
    out += np.kron(np.eye(block.length, k=1), np.eye(2))
    return out


def _float_term(term: SourceTerm, block: int) -> _Term:
    return _Term(
        complex(term.phasor), term.power, complex(-float(term.decay), float(term.omega)), float(term.start), block
    )


def _plan(part: Part, offset: int) -> SourcePlan:
    src = part.source
    assert src is not None
    function: SourceFunction = src.function
    everything = list(function.terms) + [t for r in function.repeats for t in r.terms]
    lengths: dict[tuple[float, float], int] = {}
    for term in everything:
        key = (-float(term.decay), float(term.omega))
        lengths[key] = max(lengths.get(key, 0), term.power + 1)
    blocks: list[Block] = []
    index: dict[tuple[float, float], int] = {}
    at = offset
    for key, length in lengths.items():
        index[key] = len(blocks)
        block = Block(at, complex(*key), length)
        blocks.append(block)
        at += block.size
    size = at - offset
    S = np.zeros((size, size))
    h = np.zeros(size)
    for block in blocks:
        k = block.offset - offset
        S[k : k + block.size, k : k + block.size] = _chain(block)
        h[k] = 1.0
    terms = tuple(_float_term(t, index[(-float(t.decay), float(t.omega))]) for t in function.terms)
    repeats = tuple(
        (float(r.period), tuple(_float_term(t, index[(-float(t.decay), float(t.omega))]) for t in r.terms))
        for r in function.repeats
    )
    earlier = function.before_zero()
    before_dc = float(sympy_real(earlier.steady(0)))
    before_phasors = tuple((float(w), complex(earlier.steady(w))) for w in earlier.frequencies)
    plan = SourcePlan(
        id=part.id,
        offset=offset,
        blocks=tuple(blocks),
        S=S,
        h=h,
        initial=np.zeros(size),
        before_dc=before_dc,
        before_phasors=before_phasors,
        frequencies=tuple(sorted({abs(float(t.omega)) for t in everything if t.omega != 0})),
        decays=tuple(float(d) for d in function.decays),
        periods=tuple(float(r.period) for r in function.repeats),
        settles_from=float(function.last_start),
        part=part,
        terms=terms,
        repeats=repeats,
    )
    return _with_initial(plan)


def sympy_real(value: SupportsComplex) -> float:
    """The real part of an exact number, as a float."""
    return complex(value).real


def _with_initial(plan: SourcePlan) -> SourcePlan:
    import dataclasses

    return dataclasses.replace(plan, initial=plan.state(0.0))


def exosystem(circuit: Circuit, start: Start | None = None) -> Exosystem:
    """The exosystem of every independent source of the circuit, in part order.

    Parameters
    ----------
    circuit : Circuit
        The parsed circuit.
    start : {"rest", "steady"}, optional
        How the circuit starts (default: ``circuit.start``); the sources' own
        states at t = 0+ are the same either way (what ran before t = 0 is in
        ``before_dc`` and ``before_phasors``).

    Returns
    -------
    Exosystem
    """
    start = start or circuit.start
    plans: list[SourcePlan] = []
    offset = 0
    for part in circuit.parts:
        if part.kind in ("voltage", "current"):
            plan = _plan(part, offset)
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


def _events(plan: SourcePlan, until: float) -> list[float]:
    """The times in (0, until] at which the source's states are reset."""
    times = {t.start for t in plan.terms if 0.0 < t.start <= until}
    for period, terms in plan.repeats:
        local = sorted({t.start for t in terms if t.start < period})
        k = 0
        while k * period <= until:
            for s in local:
                t = k * period + s
                if 0.0 < t <= until:
                    times.add(t)
            k += 1
    return sorted(times)


def breakpoints(exo: Exosystem, until: float, *, merge: float = 0.0) -> tuple[Breakpoint, ...]:
    """Every reset in (0, until], in time order; resets closer than ``merge`` are one.

    Parameters
    ----------
    exo : Exosystem
    until : float
        The end of the run (s).
    merge : float
        Resets of different sources closer than this are done at once.

    Returns
    -------
    tuple of Breakpoint
    """
    raw: list[tuple[float, int, tuple[int, ...], tuple[float, ...]]] = []
    order = 0
    for plan in exo.plans:
        index = tuple(range(plan.offset, plan.offset + plan.size))
        for t in _events(plan, until * (1 + 1e-14)):
            raw.append((t, order, index, tuple(plan.state(t))))
            order += 1
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


def exo_step(exo: Exosystem, dt: float) -> np.ndarray:
    """The sources' own transition matrix ``expm(S dt)``, in closed form.

    For a chain ``J = p I + N``: ``expm(J dt) = exp(p dt) sum_k (N dt)**k / k!``
    (N nilpotent), with ``exp(p dt)`` a rotation scaled by ``exp(Re(p) dt)`` for a
    complex p. Closed forms keep the sinusoids exact over any number of steps,
    independent of the circuit's own (possibly very fast) modes.

    Parameters
    ----------
    exo : Exosystem
    dt : float
        The step (s).

    Returns
    -------
    ndarray
    """
    out = np.zeros((exo.size, exo.size))
    for plan in exo.plans:
        for block in plan.blocks:
            shrink = math.exp(block.p.real * dt)
            if block.complex:
                c, s = math.cos(block.p.imag * dt), math.sin(block.p.imag * dt)
                unit = shrink * np.array([[c, -s], [s, c]])
            else:
                unit = np.array([[shrink]])
            width = unit.shape[0]
            for i in range(block.length):
                for j in range(i, block.length):
                    r = block.offset + i * width
                    col = block.offset + j * width
                    out[r : r + width, col : col + width] = unit * dt ** (j - i) / math.factorial(j - i)
    return out

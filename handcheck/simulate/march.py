"""The march in time: the state at t = 0, and every sample after it.

The state at t = 0- is the circuit's rest state (capacitors and inductors at their
``initial`` values) or its steady state before t = 0 (DC plus each sinusoid's phasor,
solved in floating point, independently of the exact path). Steps that hold a
source breakpoint are split there, the source states reset, and the circuit state
carried across by the consistency projection (:mod:`.reduce`).
"""

from __future__ import annotations

import math

import numpy as np

from handcheck.circuit.model import Circuit
from handcheck.errors import CircuitError
from handcheck.simulate.assemble import Equations, assemble
from handcheck.simulate.generators import Breakpoint, Exosystem
from handcheck.simulate.statemodel import StateModel, propagation

__all__ = ["flush_tiny", "march", "rest_state", "steady_before"]

#: Entries below this fraction of an array's largest are set to zero (see :func:`flush_tiny`).
TINY_FRACTION = 1e-100


def flush_tiny(array: np.ndarray) -> np.ndarray:
    """Set every entry of ``array`` below ``TINY_FRACTION`` of its largest to zero, in place.

    The one-step matrix of a long ladder and its powers hold entries far below any
    value of the response (down to 1e-323 at 128 sections), whose products are
    subnormal numbers (below 2**-1022), and a processor multiplies those 10 to 100
    times slower than normal ones (a 256-state march: 0.17 s in the powers of the
    one-step matrix against 0.01 s with them flushed). An entry below 1e-100 of the
    largest changes a product by under 1e-100 of its size, some 84 orders of
    magnitude below the rounding of double precision, so the response is the same
    to every digit it reports. Returns ``array``.
    """
    top = float(np.max(np.abs(array), initial=0.0))
    array[np.abs(array) < max(TINY_FRACTION * top, float(np.finfo(float).tiny))] = 0.0
    return array


def steady_before(circuit: Circuit, exo: Exosystem) -> tuple[np.ndarray, list[str]]:
    """Circuit unknowns at t = 0- when the circuit sat in its own steady state."""
    eq = assemble(circuit, switches="before")
    notes: list[str] = []
    u = np.array([plan.before_dc for plan in exo.plans])
    rhs = eq.B @ u if len(u) else np.zeros(eq.size)
    x, *_ = np.linalg.lstsq(eq.G, rhs, rcond=1e-12)
    rank = np.linalg.matrix_rank(eq.G, tol=1e-12 * max(float(np.linalg.norm(eq.G, 2)), 1e-300))
    if np.linalg.norm(eq.G @ x - rhs) > 1e-9 * max(float(np.linalg.norm(rhs)), 1e-300) and np.linalg.norm(rhs) > 0:
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


def rest_state(circuit: Circuit, eq: Equations) -> np.ndarray:
    """Circuit unknowns with capacitors and inductors at their ``initial`` values (and
    the output of an op-amp with a gbw at 0, or at a grounded capacitor's value)."""
    x = np.zeros(eq.size)
    initial = {p.id: float(p.initial) for p in circuit.parts if p.initial is not None}
    if eq.capacitors:
        # an op-amp's pole holds its output voltage: 0 at rest, unless a charged
        # capacitor from that output to ground sets it (the two share the state)
        grounded = {a if b is None else b for ident, a, b, _ in eq.capacitors if ident in initial and None in (a, b)}
        outs = [eq.nodes.index(p.nodes[0]) for p in circuit.parts if p.kind == "opamp" and p.gbw is not None]
        held = [k for k in outs if k not in grounded]
        inc = np.zeros((len(eq.capacitors) + len(held), len(eq.nodes)))
        values = np.zeros(len(eq.capacitors) + len(held))
        for k, (ident, a, b, _) in enumerate(eq.capacitors):
            if a is not None:
                inc[k, a] = 1.0
            if b is not None:
                inc[k, b] = -1.0
            values[k] = initial.get(ident, 0.0)
        for k, node in enumerate(held):
            inc[len(eq.capacitors) + k, node] = 1.0
        if np.any(values):
            x[: len(eq.nodes)] = np.linalg.lstsq(inc, values, rcond=None)[0]
    for ident, col, _ in eq.inductors:
        x[col] = initial.get(ident, 0.0)
    return x


def march(
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
            cache[dt] = flush_tiny(how.phi(dt))
        return cache[dt]

    Phi = phi(step)
    # Blocks of B steps: anchors B steps apart one after another, then every sample
    # between them in one matrix product with the stacked powers Phi^1..Phi^B
    # (B d^3 work to build the powers, against N d^2 for the steps themselves).
    block = int(max(1, min(64, math.isqrt(max(total, 1)), total // max(d, 1))))
    powers = np.empty((block, d, d))
    powers[0] = Phi
    for k in range(1, block):
        powers[k] = flush_tiny(powers[k - 1] @ Phi)
    stack = powers.reshape(block * d, d)
    R = np.empty((d, total + 1))
    R[:, 0] = flush_tiny(how.Tinv @ q)

    def plain(k: int, stop: int) -> None:
        """Fill R[:, k+1 .. stop] from R[:, k] by whole steps."""
        m = (stop - k) // block if block > 1 else 0
        if m:
            anchors = np.empty((d, m))
            anchors[:, 0] = R[:, k]
            for j in range(1, m):
                anchors[:, j] = flush_tiny(powers[-1] @ anchors[:, j - 1])
            fill = flush_tiny(stack @ anchors).reshape(block, d, m)
            R[:, k + 1 : k + 1 + m * block] = fill.transpose(1, 2, 0).reshape(d, m * block)
            k += m * block
        while k < stop:
            R[:, k + 1] = flush_tiny(Phi @ R[:, k])
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

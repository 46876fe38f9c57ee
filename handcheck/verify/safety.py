"""The caution for circuits above extra-low voltage.

Extra-low voltage is taken as at most 50 V AC rms or 120 V ripple-free DC, the
common IEC thresholds (IEC 61140 and IEC 60364-4-41, from memory).

In steady state every node voltage and every part's voltage is read from one
floating-point solve of the whole system; a value is confirmed from its exact phasor
only when it lies within the float's error margin of the threshold, so a large
circuit forms the exact phasors of its steps only.
"""

from __future__ import annotations

from typing import Any

import sympy

from handcheck.circuit.model import Circuit
from handcheck.solve.phasor import Solution
from handcheck.verify.claims import to_complex

__all__ = ["AC_LIMIT_RMS", "CAUTION", "DC_LIMIT", "cautions"]

AC_LIMIT_RMS = 50.0
DC_LIMIT = 120.0

CAUTION = (
    "This circuit works above extra-low voltage ({what}). handcheck verifies circuit arithmetic only; "
    "it is no safety assessment. Local electrical codes and review by a licensed professional govern "
    "the design, installation and testing of such circuits."
)


def _crest(function: object) -> float:
    """The largest absolute value of a source function over its first breakpoints and periods
    (sampled: a caution, not a measurement)."""
    import numpy as np

    starts = [float(t.start) for t in function.terms]  # type: ignore[attr-defined]
    scales = [float(r.period) for r in function.repeats]  # type: ignore[attr-defined]
    scales += [1 / float(t.decay) for t in function.terms if t.decay > 0]  # type: ignore[attr-defined]
    scales += [2 * np.pi / float(t.omega) for t in function.terms if t.omega != 0]  # type: ignore[attr-defined]
    span = max([*starts, 0.0]) + 3 * max([*scales, 1e-3])
    times = np.linspace(0.0, span, 2001)
    return float(np.max(np.abs(_sampled(function, times)), initial=0.0))


def _sampled(function: Any, times: Any) -> Any:
    """A source function's values at ``times`` (a numpy array), in doubles: each term's
    exact numbers are turned into floats once, not at every instant."""
    import numpy as np

    def terms_at(terms: Any, t: Any) -> Any:
        total = np.zeros(t.shape)
        for term in terms:
            tau = t - float(term.start)
            on = tau >= 0
            tau = np.where(on, tau, 0.0)
            lam = complex(-float(term.decay), float(term.omega))
            total += np.where(on, (complex(term.phasor) * tau**term.power * np.exp(lam * tau)).real, 0.0)
        return total

    total = terms_at(function.terms, times)
    for repeat in function.repeats:
        period = float(repeat.period)
        total += terms_at(repeat.terms, times - period * np.floor(times / period))
    return total


def _worst(circuit: Circuit, solution: Solution | None) -> str | None:
    for part in circuit.parts:
        if part.kind != "voltage" or part.source is None:
            continue
        source = part.source
        if not source.frequencies and abs(float(sympy.N(source.dc))) > DC_LIMIT:
            return f"{part.id}: {float(sympy.N(source.dc)):g} V DC"
        if source.frequencies and float(sympy.N(source.rms)) > AC_LIMIT_RMS:
            return f"{part.id}: {float(sympy.N(source.rms)):.4g} V rms"
        crest = _crest(source.function)
        if crest > DC_LIMIT:
            return f"{part.id}: reaches {crest:.4g} V"
    if solution is not None and circuit.omega != 0:
        return _above_in_steady_state(circuit, solution)
    return None


def _pairs(circuit: Circuit) -> list[tuple[str, str, str]]:
    """(what, plus node, minus node): every node against ground, then every part's voltage."""
    from handcheck.circuit.model import GROUND

    pairs = [(f"node {node}", node, GROUND) for node in circuit.nodes]
    for part in circuit.parts:
        if part.kind in ("opamp", "coupling") or len(part.nodes) < 2:
            continue  # an op-amp's voltage is its output node's
        pairs.append((f"the voltage across {part.id}", part.nodes[0], part.nodes[1]))
        if part.kind == "transformer" and len(part.nodes) == 4:
            pairs.append((f"the secondary of {part.id}", part.nodes[2], part.nodes[3]))
    return [p for p in pairs if p[1] != p[2]]


def _float_solve(solution: Solution) -> tuple[object, float] | None:
    """Every unknown's phasor from one floating-point solve (numpy), and a margin
    far wider than its error; None when the float system is singular."""
    import numpy as np

    system, circuit = solution.system, solution.circuit
    n = system.size
    zero = sympy.S.Zero
    w = float(circuit.omega)
    a = np.zeros((n, n), dtype=complex)
    for r in range(n):
        for c in range(n):
            g, cap = system.G[r][c], system.C[r][c]
            if g is not zero or cap is not zero:
                a[r, c] = complex(float(g), w * float(cap))
    u = np.array(
        [to_complex(solution.u[ident]) if solution.u[ident] != 0 else 0j for ident in system.sources], dtype=complex
    )
    b = (
        np.array([[float(e) for e in row] for row in system.B], dtype=float).reshape(n, len(u)) @ u
        if len(u)
        else np.zeros(n, complex)
    )
    try:
        inverse = np.linalg.inv(a)
    except np.linalg.LinAlgError:
        return None
    x = inverse @ b
    if not np.all(np.isfinite(x)):
        return None
    # |x - x_float| <= |A^-1| (|r| + rounding): the residual bound of a linear solve
    # (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., sec. 7.2 -- from
    # memory), taken 1000 times over and never below 1e-9 of the largest unknown.
    eps = np.finfo(float).eps
    residual = np.abs(a @ x - b).max() + n * eps * (np.abs(a).sum(axis=1).max() * np.abs(x).max() + np.abs(b).max())
    bound = np.abs(inverse).sum(axis=1).max() * residual
    margin = max(1000.0 * float(bound), 1e-9 * float(np.abs(x).max(initial=0.0)))
    return x, margin


def _above_in_steady_state(circuit: Circuit, solution: Solution) -> str | None:
    """The first node or part voltage above the AC threshold, decided by a float solve
    of every unknown; only a value within the float's margin of the threshold is
    confirmed from its exact phasor (certified, or exactly)."""
    scale = 1.0 if circuit.phasors == "rms" else 2**-0.5
    limit = AC_LIMIT_RMS * (1 + 1e-9)  # exactly 50 V is still extra-low voltage
    floated = _float_solve(solution)
    system = solution.system
    for what, plus, minus in _pairs(circuit):
        if floated is not None:
            x, margin = floated
            v = (x[system.node(plus)] if system.node(plus) is not None else 0j) - (  # type: ignore[index]
                x[system.node(minus)] if system.node(minus) is not None else 0j  # type: ignore[index]
            )
            rms = abs(v) * scale
            if rms + 2 * margin * scale < limit:
                continue
            if rms - 2 * margin * scale > limit:
                return f"{what} reaches {rms:.4g} V rms"
        rms = _exact_rms(solution.node_voltage(plus) - solution.node_voltage(minus), scale, limit)
        if rms is not None:
            return f"{what} reaches {rms:.4g} V rms"
    return None


def _exact_rms(voltage: sympy.Expr, scale: float, limit: float) -> float | None:
    """The rms value of an exact phasor when it is above ``limit``, else None."""
    from handcheck.solve.certified import certify

    certified = certify(voltage)
    if certified is not None:
        rms = abs(certified.value) * scale
        if abs(rms - limit) > 4 * certified.bound * scale:
            return rms if rms > limit else None
    rms = abs(to_complex(voltage)) * scale
    return rms if rms > limit else None


def cautions(circuit: Circuit, solution: Solution | None) -> tuple[str, ...]:
    """The cautions a check's output carries for this circuit (possibly none)."""
    what = _worst(circuit, solution)
    return (CAUTION.format(what=what),) if what else ()

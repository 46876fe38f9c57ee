"""The caution for circuits above extra-low voltage.

Extra-low voltage is taken as at most 50 V AC rms or 120 V ripple-free DC, the
common IEC thresholds (IEC 61140 and IEC 60364-4-41, from memory).
"""

from __future__ import annotations

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
    return max(abs(function.value(float(t))) for t in times)  # type: ignore[attr-defined]


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
        scale = 1.0 if circuit.phasors == "rms" else 2**-0.5
        for node in circuit.nodes:
            rms = abs(to_complex(solution.node_voltage(node))) * scale
            if rms > AC_LIMIT_RMS * (1 + 1e-9):  # exactly 50 V is still extra-low voltage
                return f"node {node} reaches {rms:.4g} V rms"
    return None


def cautions(circuit: Circuit, solution: Solution | None) -> tuple[str, ...]:
    """The cautions a check's output carries for this circuit (possibly none)."""
    what = _worst(circuit, solution)
    return (CAUTION.format(what=what),) if what else ()

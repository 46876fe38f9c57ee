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


def _worst(circuit: Circuit, solution: Solution | None) -> str | None:
    for part in circuit.parts:
        if part.kind != "voltage" or part.source is None:
            continue
        if part.source.omega is None and abs(float(sympy.N(part.source.peak))) > DC_LIMIT:
            return f"{part.id}: {float(sympy.N(part.source.peak)):g} V DC"
        if part.source.omega is not None and float(sympy.N(part.source.rms)) > AC_LIMIT_RMS:
            return f"{part.id}: {float(sympy.N(part.source.rms)):.4g} V rms"
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

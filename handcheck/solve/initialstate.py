"""The capacitor voltages and inductor currents at t = 0-, for both ways of starting.

(And the output voltage of each op-amp with a gain-bandwidth product: its one pole
holds a state, which starts at rest at 0, or at the ``initial`` value of a capacitor
from its output to ground, which shares that state.)

``start = "rest"``: each one's ``initial`` value (0 if none). ``start = "steady"``:
the circuit before t = 0 (each switch in its earlier state) sat in its steady state,
driven by what each source was before t = 0; that state is the DC solution plus the
real part of each sinusoid's phasor (``x(t) = Re(X exp(j w t))`` at ``t = 0``), found
with the exact phasor solver, one solve per frequency.
"""

from __future__ import annotations

import dataclasses
from typing import Any

from handcheck.circuit.model import GROUND, Circuit, Part, Source
from handcheck.errors import CircuitError
from handcheck.solve.exact import compact
from handcheck.worksheet.sourcefunction import SourceFunction, SourceTerm

__all__ = ["rest_state", "steady_state", "stores_state"]


def rest_state(circuit: Circuit) -> dict[str, Any]:
    """Each capacitor's and inductor's ``initial`` value (0 if none), by part id.

    Parameters
    ----------
    circuit : Circuit

    Returns
    -------
    dict of str to sympy.Expr
    """
    import sympy

    state = {p.id: (p.initial if p.initial is not None else sympy.Integer(0)) for p in circuit.parts if stores_state(p)}
    for part in circuit.parts:
        if part.kind == "opamp" and part.id in state:
            state[part.id] = _output_initial(circuit, part.nodes[0])
    return state


def _output_initial(circuit: Circuit, out: str) -> Any:
    """A pole's state at rest: its output voltage, which a capacitor with an ``initial``
    value from the output to ground fixes (they share that state); else 0."""
    import sympy

    for p in circuit.parts:
        if p.kind == "capacitor" and p.initial is not None and set(p.nodes) == {out, GROUND}:
            return p.initial if p.nodes[0] == out else -p.initial
    return sympy.Integer(0)


def stores_state(part: Part) -> bool:
    """Whether a part holds a state variable: a capacitor's voltage, an inductor's
    current, or the output voltage of an op-amp with a gain-bandwidth product (its pole)."""
    return part.kind in ("capacitor", "inductor") or (part.kind == "opamp" and part.gbw is not None)


def steady_state(circuit: Circuit) -> dict[str, Any]:
    """Capacitor voltages and inductor currents at t = 0- of the circuit in its earlier steady state.

    Before t = 0 each source is the part of its function that ran for all time
    (constants and sinusoids outside every step, edge and repeat); the state is the
    DC solution plus, per frequency, ``Re(X)`` of the phasor solution.

    Parameters
    ----------
    circuit : Circuit

    Returns
    -------
    dict of str to sympy.Expr

    Raises
    ------
    CircuitError
        If the circuit before t = 0 has no unique steady state.
    """
    import sympy

    from handcheck.solve import phasor

    zero = sympy.Integer(0)
    before = [dataclasses.replace(p, value=1 - p.value) if p.kind == "switch" else p for p in circuit.parts]
    reactive = [p for p in before if stores_state(p)]
    state = {p.id: zero for p in reactive}

    def solve(parts: list[Part], omega: Any, what: str) -> Any:
        pre = dataclasses.replace(circuit, parts=tuple(parts), omega=omega, phasors="peak")
        try:
            return phasor.solve(pre)
        except CircuitError as exc:
            raise CircuitError(
                f"the circuit before t = 0 (switches in their earlier state) has no unique steady state {what}: "
                f'{exc.message}; if that is how it was, give start = "rest" with the `initial` values of the '
                "capacitors and inductors instead",
                exc.parts,
                file=circuit.path,
            ) from None

    def collect(solution: Any, real_part: bool) -> None:
        for p in reactive:
            value = phasor.part_current(solution, p) if p.kind == "inductor" else phasor.part_voltage(solution, p)
            if real_part:
                value = sympy.expand_complex(value).as_real_imag()[0]
            state[p.id] = state[p.id] + value

    earlier = {p.id: p.source.function.before_zero() for p in before if p.source is not None}

    def driven(omega: Any) -> list[Part]:
        out = []
        for p in before:
            if p.source is not None:
                value = earlier[p.id].steady(omega)
                if omega == 0:
                    function = SourceFunction((SourceTerm(value, before_zero=True),))
                else:
                    function = SourceFunction((SourceTerm(value, omega=omega, before_zero=True),))
                out.append(dataclasses.replace(p, source=Source(function)))
            else:
                out.append(p)
        return out

    collect(solve(driven(zero), zero, "at DC"), False)
    omegas: list[Any] = []
    for function in earlier.values():
        for w in function.frequencies:
            if not any(sympy.simplify(w - o) == 0 for o in omegas):
                omegas.append(w)
    for w in omegas:
        collect(solve(driven(w), w, f"at {sympy.N(w / (2 * sympy.pi), 6)} Hz"), True)
    return {k: compact(v) for k, v in state.items()}

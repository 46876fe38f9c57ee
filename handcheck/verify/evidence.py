"""Independent numerical evidence for a check.

The circuit is integrated numerically in time (:mod:`handcheck.simulate`, which
shares no code with the symbolic path beyond the parsed circuit). From the
waveforms: steady-state phasors fitted over whole periods at the end of the run,
compared with the exact phasors; how many periods the transient needs to fall
below the tolerance and whether the run was long enough; Kirchhoff's current law at
every sample; and the largest difference between the closed-form response and the
numerical one for every voltage or current a step names. A disagreement between the
exact and the numerical answers is an error of handcheck and is reported as such.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from handcheck.circuit.model import Circuit
from handcheck.errors import HandcheckError, TimeLimitError
from handcheck.solve.quantities import Quantity, parse_quantity
from handcheck.solve.solutions import ExactSolutions
from handcheck.verify.claims import to_complex

__all__ = ["AGREEMENT_TARGET", "Evidence", "describe", "gather_evidence"]

#: Largest accepted difference between exact and numerical answers, relative to the
#: waveform's peak (or the drive, for phasors).
AGREEMENT_TARGET = 1e-6


@dataclass(frozen=True)
class Evidence:
    """What the numerical solution says, and how well it agrees with the exact one."""

    rules: str
    step: float
    span: float
    samples: int
    settling: str
    long_enough: bool | None
    periods_to_settle: float | None
    kcl_relative: float
    kcl_where: str
    phasors: tuple[tuple[str, complex, complex], ...] = ()  # (signal, fitted peak phasor, exact peak phasor)
    phasor_agreement: float | None = None
    waveforms: tuple[tuple[str, float], ...] = ()  # (quantity, largest difference relative to peak)
    problems: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()
    simulation: Any = field(default=None, compare=False, repr=False)
    transient: Any = field(default=None, compare=False, repr=False)
    fit: Any = field(default=None, compare=False, repr=False)  # the phasor fit, when one was made

    @property
    def agreement(self) -> float | None:
        """The worst closed-form against numerical difference over the steps' quantities."""
        values = [v for _, v in self.waveforms]
        return max(values) if values else None

    @property
    def ok(self) -> bool:
        return not self.problems


def _signals(steps: Any) -> list[Quantity]:
    """The voltages and currents the steps name (inside time-domain quantities too)."""
    found: dict[str, Quantity] = {}

    def visit(q: Quantity) -> None:
        if q.name in ("voltage", "current"):
            found.setdefault(q.text, q)
        for arg in q.args:
            if isinstance(arg, Quantity):
                visit(arg)

    for step in steps:
        if step.quantity:
            try:
                visit(parse_quantity(step.quantity))
            except HandcheckError:
                continue
    return list(found.values())


def _numeric(sim: Any, q: Quantity) -> Any:
    """The simulated samples of ``voltage(...)`` or ``current(...)``."""
    import numpy as np

    args = [str(a) for a in q.args]
    if q.name == "current":
        return np.asarray(sim.currents[args[0]])
    circuit = sim.circuit

    def node(name: str) -> Any:
        return np.zeros_like(sim.times) if name == "gnd" else np.asarray(sim.voltages[name])

    if len(args) == 1 and args[0] not in circuit.nodes and args[0] != "gnd" and circuit.has_part(args[0]):
        part = circuit.part(args[0])
        if part.kind == "opamp":
            return node(part.nodes[0])
        return node(part.nodes[0]) - node(part.nodes[1])
    if len(args) == 2:
        return node(args[0]) - node(args[1])
    return node(args[0])


def _settles_to_steady(function: Any) -> bool:
    """Whether a source ends as constants and undamped sinusoids (no repeat, no ramp)."""
    if function.repeats:
        return False
    return all(term.power == 0 and term.decay >= 0 for term in function.tail())


def _other_frequency(function: Any, omega: Any) -> bool:
    """Whether a source ends with an undamped sinusoid at a frequency other than ``omega``."""
    import sympy

    return any(
        term.decay == 0 and term.omega != 0 and sympy.simplify(term.omega - omega) != 0 for term in function.tail()
    )


def _phasor_comparison(
    circuit: Circuit, sim: Any, exact_solutions: ExactSolutions
) -> tuple[list[tuple[str, complex, complex]], float | None, list[str], Any]:
    from handcheck.simulate import fit_phasors
    from handcheck.solve.phasor import part_current

    notes: list[str] = []
    sources = [p for p in circuit.parts if p.source is not None]
    if circuit.omega == 0:
        return [], None, notes, None
    others = [p.id for p in sources if p.source is not None and not _settles_to_steady(p.source.function)]
    foreign = [
        p.id
        for p in sources
        if p.source is not None and p.id not in others and _other_frequency(p.source.function, circuit.omega)
    ]
    if others or foreign:
        notes.append(
            "no phasors fitted: the sources "
            + ", ".join(others + foreign)
            + " do not run as steady sinusoids at the analysis frequency"
        )
        return [], None, notes, None
    fit = fit_phasors(sim, float(circuit.omega))
    exact = exact_solutions.phasors
    to_peak = 1.0 if circuit.phasors == "peak" else math.sqrt(2)
    rows: list[tuple[str, complex, complex]] = []
    for node in circuit.nodes:
        rows.append((f"voltage({node})", complex(fit.voltages[node]), to_complex(exact.node_voltage(node)) * to_peak))
    for part in circuit.parts:
        if part.kind in ("coupling", "transformer") or part.id not in fit.currents:
            continue
        try:
            value = to_complex(part_current(exact, part)) * to_peak
        except HandcheckError:
            continue
        rows.append((f"current({part.id})", complex(fit.currents[part.id]), value))
    scale_v = max([abs(e) for n, _, e in rows if n.startswith("voltage(")] + [1e-300])
    scale_i = max([abs(e) for n, _, e in rows if n.startswith("current(")] + [1e-300])
    worst = 0.0
    for name, fitted, want in rows:
        scale = scale_v if name.startswith("voltage(") else scale_i
        worst = max(worst, abs(fitted - want) / scale)
    return rows, worst, notes, fit


def gather_evidence(
    circuit: Circuit,
    steps: Any = (),
    *,
    tolerance: float = AGREEMENT_TARGET,
    span: float | None = None,
    exact: ExactSolutions | None = None,
) -> Evidence:
    """Simulate the circuit and compare the numerical answers with the exact ones.

    Parameters
    ----------
    circuit
        The parsed circuit.
    steps
        The worksheet's steps; the voltages and currents they name are compared
        over the whole run (closed form against numerical).
    tolerance
        The relative size below which the transient counts as gone, and the largest
        accepted disagreement.
    span
        The time to simulate (s); by default long enough for the transient to decay.
    exact
        The check's exact solutions (shared, so nothing is solved twice); a fresh
        holder by default.

    Returns
    -------
    Evidence
        The numerical solution, its phasor fit, and the comparisons.
    """
    import numpy as np

    from handcheck.simulate import kcl_residual, settling, simulate

    if exact is None:
        exact = ExactSolutions(circuit)
    exact.budget.check("the numerical time-domain solution")
    sim = simulate(circuit, span=span, tolerance=tolerance)
    settle = settling(sim, tolerance)
    kcl = kcl_residual(sim)
    problems: list[str] = []
    notes: list[str] = list(getattr(sim, "notes", ()))
    if kcl.relative > 1e-9:
        problems.append(
            f"Kirchhoff's current law is off by {kcl.relative:.2g} of the largest current at node {kcl.node} "
            f"(t = {kcl.time:.4g} s): an error of handcheck's numerical solution"
        )
    rows, phasor_worst, phasor_notes, fit = _phasor_comparison(circuit, sim, exact)
    notes.extend(phasor_notes)
    if phasor_worst is not None and settle.long_enough and phasor_worst > max(tolerance, 1e-9) * 10:
        problems.append(
            f"the fitted phasors differ from the exact ones by {phasor_worst:.2g} of the drive: "
            "an error of handcheck, please report it"
        )
    waveforms: list[tuple[str, float]] = []
    transient = None
    try:
        from handcheck.solve.timequantities import waveform_of

        transient = exact.transient
        for q in _signals(steps):
            try:
                wave, _ = waveform_of(transient, q)
                numeric = _numeric(sim, q)
            except (HandcheckError, KeyError):
                continue
            closed = np.array([complex(wave.value(float(t))).real for t in sim.times])
            peak = max(float(np.max(np.abs(closed))), float(np.max(np.abs(numeric))), 1e-300)
            difference = float(np.max(np.abs(closed - numeric))) / peak
            waveforms.append((q.text, difference))
            if difference > tolerance:
                problems.append(
                    f"the closed-form and numerical responses of {q.text} differ by {difference:.2g} of its peak: "
                    "an error of handcheck, please report it"
                )
    except TimeLimitError:
        raise
    except HandcheckError as exc:
        notes.append(f"no closed-form comparison: {exc.message}")
    return Evidence(
        rules=sim.rules,
        step=float(sim.step),
        span=float(sim.span),
        samples=int(sim.samples),
        settling=settle.text,
        long_enough=settle.long_enough,
        periods_to_settle=settle.periods,
        kcl_relative=float(kcl.relative),
        kcl_where=f"node {kcl.node}, t = {kcl.time:.4g} s" if kcl.node is not None and kcl.time is not None else "",
        phasors=tuple(rows),
        phasor_agreement=phasor_worst,
        waveforms=tuple(waveforms),
        problems=tuple(problems),
        notes=tuple(notes),
        simulation=sim,
        transient=transient,
        fit=fit,
    )


def describe(evidence: Evidence) -> list[str]:
    """The evidence as lines of text for a terminal."""
    lines = ["numerical evidence (independent time-domain solution):"]
    lines.extend(f"  {line}" for line in evidence.rules.splitlines() if line.strip())
    lines.append(f"  {evidence.settling}")
    if evidence.phasor_agreement is not None:
        lines.append(
            f"  fitted phasors against exact ones: largest difference {evidence.phasor_agreement:.2g} of the drive"
        )
        for name, fitted, want in evidence.phasors:
            lines.append(
                f"    {name:<14} fitted {abs(fitted):.6g} ∠ {math.degrees(math.atan2(fitted.imag, fitted.real)):.4f} deg"
                f"   exact {abs(want):.6g} ∠ {math.degrees(math.atan2(want.imag, want.real)):.4f} deg (peak)"
            )
    lines.append(f"  Kirchhoff's current law: largest residual {evidence.kcl_relative:.2g} of the largest current")
    for name, difference in evidence.waveforms:
        lines.append(f"  closed form against numerical, {name}: largest difference {difference:.2g} of its peak")
    lines.extend(f"  note: {n}" for n in evidence.notes)
    lines.extend(f"  PROBLEM: {p}" for p in evidence.problems)
    return lines

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

__all__ = [
    "AGREEMENT_TARGET",
    "EDGE_PERIODS",
    "EDGE_SAMPLES",
    "SPREAD_SAMPLES",
    "STRETCH_CAP",
    "Evidence",
    "closed_form_at",
    "comparison_samples",
    "gather_evidence",
    "sample_rule",
]

#: Largest accepted difference between exact and numerical answers, relative to the
#: waveform's peak (or the drive, for phasors).
AGREEMENT_TARGET = 1e-6
#: Periods of the analysis frequency compared sample by sample at the start of the
#: run, after the last isolated breakpoint, and (``FIT_PERIODS``) at its end.
EDGE_PERIODS = 2
#: Samples in each of those stretches when the run has no analysis frequency.
EDGE_SAMPLES = 400
#: The most samples in one stretch (a denser run is compared on its first ones).
STRETCH_CAP = 4000
#: Samples spread evenly through the whole run besides the stretches.
SPREAD_SAMPLES = 300
#: A double keeps about this share of the largest term of a sum (16 ulps of margin).
_DOUBLE_SHARE = 16 * 2.0**-52


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
    convention: str = "peak"  # the worksheet's phasors ("peak" or "rms"): the unit a person reads them in
    phasor_agreement: float | None = None
    waveforms: tuple[tuple[str, float], ...] = ()  # (quantity, largest difference relative to peak)
    problems: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()
    compared: int = 0  # samples at which the closed form was compared with the numerical one
    comparison_rule: str = ""  # how those samples were chosen, in words
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


def _stretch(sim: Any, start: int, forward: bool) -> Any:
    """Indices of one stretch of whole periods (or ``EDGE_SAMPLES`` samples) from ``start``."""
    import numpy as np

    from handcheck.simulate.run import FIT_PERIODS

    n = int(sim.samples)
    periods = EDGE_PERIODS if forward else FIT_PERIODS
    whole = math.ceil(periods * 2 * math.pi / sim.omega / sim.step - 1e-9) + 1 if sim.omega > 0 else EDGE_SAMPLES
    count = whole
    count = min(count, STRETCH_CAP, n)
    if forward:
        start = min(start, n - count)
        return np.arange(start, start + count)
    return np.arange(n - count, n)


def comparison_samples(sim: Any, signals: Any = ()) -> Any:
    """The sample indices at which the closed form is compared with the simulation.

    The rule (stated in the evidence by :func:`sample_rule`): every sample of the first
    ``EDGE_PERIODS`` periods of the analysis frequency from t = 0 and from the last
    isolated breakpoint, and of the last ``FIT_PERIODS`` periods (``EDGE_SAMPLES``
    samples each without an analysis frequency; at most ``STRETCH_CAP`` each);
    ``SPREAD_SAMPLES`` samples spread evenly through the run; the samples on both
    sides of every source breakpoint; and the largest and smallest sample of each
    simulated waveform in ``signals``.

    Parameters
    ----------
    sim : Simulation
        The run.
    signals : sequence of ndarray
        Simulated waveforms (one value per sample) whose extremes are added.

    Returns
    -------
    ndarray of int
        Sorted, distinct indices into ``sim.times``.
    """
    import numpy as np

    n = int(sim.samples)
    settled = min(round(float(sim.settles_from) / sim.step), n - 1)
    parts = [_stretch(sim, 0, True), _stretch(sim, settled, True), _stretch(sim, n - 1, False)]
    parts.append(np.linspace(0, n - 1, min(SPREAD_SAMPLES, n)).round().astype(int))
    for point in sim.breakpoints:
        k = math.floor(point / sim.step + 1e-9)
        parts.append(np.array([k - 1, k, k + 1, k + 2]).clip(0, n - 1))
    for wave in signals:
        values = np.asarray(wave)
        parts.append(np.array([int(np.argmax(values)), int(np.argmin(values))]))
    return np.unique(np.concatenate(parts))


def sample_rule(sim: Any, compared: int) -> str:
    """The rule :func:`comparison_samples` followed, in words, with the count it gave."""
    from handcheck.simulate.run import FIT_PERIODS

    if sim.omega > 0:
        edge = f"the first {EDGE_PERIODS} periods (from t = 0 and from the last isolated breakpoint) and the last {FIT_PERIODS}"
    else:
        edge = f"the first {EDGE_SAMPLES} samples (from t = 0 and from the last isolated breakpoint) and the last {EDGE_SAMPLES}"
    return (
        f"closed form against numerical at {compared} of {sim.samples} samples: every sample of {edge} "
        f"(at most {STRETCH_CAP} each), {SPREAD_SAMPLES} spread evenly through the run, the samples on both "
        "sides of each source breakpoint, and the largest and smallest simulated sample of each quantity; "
        "there the closed form is evaluated in double precision with numpy (numerical evidence, not a "
        "certified value), and at 30 digits with mpmath where its terms cancel beyond what a double keeps"
    )


def closed_form_at(wave: Any, times: Any, tolerance: float) -> Any:
    """The closed-form waveform at ``times``, vectorised in double precision.

    Each term ``c (t - d)**n exp(p (t - d))`` (on from ``t = d``, right-continuous)
    is evaluated with numpy; where the terms' sizes exceed the sum by so much that a
    double could lose a tenth of ``tolerance`` of it, the value is taken from the
    waveform's own 30-digit evaluation instead.
    """
    import numpy as np

    times = np.asarray(times, dtype=float)
    values = np.zeros(times.size)
    sizes = np.zeros(times.size)
    terms = wave.terms
    if terms and times.size:
        numeric = [term.numeric for term in terms]
        c = np.array([complex(t[0]) for t in numeric])[:, None]
        n = np.array([t[1] for t in numeric])[:, None]
        p = np.array([complex(t[2]) for t in numeric])[:, None]
        d = np.array([float(t[3]) for t in numeric])[:, None]
        slack = 1e-9 * max(float(times[-1]), 1e-300)
        chunk = max(1, 2_000_000 // len(terms))
        for lo in range(0, times.size, chunk):
            tau = times[None, lo : lo + chunk] - d
            on = tau >= -slack
            tau = np.where(on, np.maximum(tau, 0.0), 0.0)
            each = np.where(on, c * tau**n * np.exp(p * tau), 0.0)
            values[lo : lo + chunk] = each.sum(axis=0).real
            sizes[lo : lo + chunk] = np.abs(each).sum(axis=0)
    peak = max(float(np.max(np.abs(values), initial=0.0)), 1e-300)
    for k in np.flatnonzero(sizes * _DOUBLE_SHARE > 0.1 * tolerance * peak):
        values[k] = wave.value(float(times[k]))
    return values


@dataclass(frozen=True)
class _Waveforms:
    """The closed-form responses of the steps' signals against the numerical ones.

    ``differences`` are (signal, largest difference over its peak); ``compared`` is
    the most samples compared for one signal; ``transient`` the closed-form
    solution (None when it could not be had, which ``notes`` then says).
    """

    differences: tuple[tuple[str, float], ...]
    problems: tuple[str, ...]
    notes: tuple[str, ...]
    transient: Any
    compared: int


def _waveform_comparison(sim: Any, steps: Any, exact: ExactSolutions, tolerance: float) -> _Waveforms:
    """Compare, at the samples of :func:`comparison_samples`, every voltage and current the steps name."""
    import numpy as np

    from handcheck.solve.timequantities import waveform_of

    waveforms: list[tuple[str, float]] = []
    problems: list[str] = []
    transient = None
    compared = 0
    try:
        transient = exact.transient
        for q in _signals(steps):
            try:
                wave, _ = waveform_of(transient, q)
                numeric = _numeric(sim, q)
            except (HandcheckError, KeyError):
                continue
            picked = comparison_samples(sim, [numeric])
            if wave.horizon is not None:
                picked = picked[sim.times[picked] < float(wave.horizon)]
            compared = max(compared, int(picked.size))
            closed = closed_form_at(wave, np.asarray(sim.times)[picked], tolerance)
            peak = max(float(np.max(np.abs(closed), initial=0.0)), float(np.max(np.abs(numeric))), 1e-300)
            difference = float(np.max(np.abs(closed - numeric[picked]), initial=0.0)) / peak
            waveforms.append((q.text, difference))
            if difference > tolerance:
                problems.append(
                    f"the closed-form and numerical responses of {q.text} differ by {difference:.2g} of its peak: "
                    "an error of handcheck, please report it"
                )
    except TimeLimitError:
        raise
    except HandcheckError as exc:
        note = f"no closed-form comparison: {exc.message}"
        return _Waveforms(tuple(waveforms), tuple(problems), (note,), transient, compared)
    return _Waveforms(tuple(waveforms), tuple(problems), (), transient, compared)


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
    found = _waveform_comparison(sim, steps, exact, tolerance)
    problems += found.problems
    notes += found.notes
    waveforms, transient, compared = found.differences, found.transient, found.compared
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
        convention=circuit.phasors,
        phasor_agreement=phasor_worst,
        waveforms=tuple(waveforms),
        problems=tuple(problems),
        notes=tuple(notes),
        compared=compared,
        comparison_rule=sample_rule(sim, compared) if waveforms else "",
        simulation=sim,
        transient=transient,
        fit=fit,
    )

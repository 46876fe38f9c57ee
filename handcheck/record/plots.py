"""Plots of the evidence (matplotlib, SVG or PNG by the file's extension).

One figure: the waveforms the steps name, voltages and currents each on their own axes
with their unit, with each claimed steady-state sinusoid drawn dashed over the
simulated one, each claimed time function dashed over its waveform, and each claimed
instantaneous value (``at``, ``initial``) as an open
circle beside a black cross at the exact value, each claimed ``peak`` or ``final``
value as a dashed level beside a dotted one at the exact value; the transient of each kind (simulated minus steady state) with the
envelope of the slowest natural mode; and phasor diagrams with the claimed and exact
phasors side by side, one per kind and frequency (the analysis frequency and each
frequency an ``at_frequency(...)`` step names).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from handcheck.errors import HandcheckError, ParseError
from handcheck.record.document import write_figure
from handcheck.record.visible import visible
from handcheck.solve.quantities import parse_quantity
from handcheck.verify.claims import TIME, read_claim, to_complex
from handcheck.verify.evidence import Evidence, _numeric, _signals
from handcheck.verify.findings import Report
from handcheck.worksheet.values import read_frequency, read_value

__all__ = ["PhasorRow", "TimeMark", "claimed_marks", "evidence_figure", "plot_evidence"]

_MAX_SIGNALS = 6
#: The figure's width in inches: fits the text width of an A4 or Letter page.
WIDTH_IN = 7.0
#: Phasor diagrams side by side in one row of the figure.
PHASORS_PER_ROW = 3
_KIND = {"V": "voltage", "A": "current"}


@dataclass(frozen=True)
class PhasorRow:
    """A claimed phasor of a voltage or current beside the exact one (peak values).

    ``hz`` is the frequency it is read at; ``analysis`` whether that is the worksheet's
    analysis frequency (its claimed sinusoid is then drawn over the waveforms).
    """

    step: str
    unit: str
    hz: float
    claimed: complex
    exact: complex
    analysis: bool


def _claimed_steps(report: Report) -> list[tuple[Any, Any, Any]]:
    """(step, its quantity, its claim) for every step whose quantity and claim read."""
    found = []
    for step in report.steps:
        if not step.quantity:
            continue
        try:
            found.append((step, parse_quantity(step.quantity), read_claim(step.claimed)))
        except HandcheckError:
            continue
    return found


def _claimed_phasors(report: Report, circuit: Any) -> list[PhasorRow]:
    """The phasor claims of voltages and currents, at the analysis frequency or at the
    frequency an ``at_frequency(...)`` step names."""
    to_peak = 1.0 if circuit.phasors == "peak" else math.sqrt(2)
    analysis_hz = float(circuit.omega) / (2 * math.pi)
    rows = []
    for step, named, claim in _claimed_steps(report):
        if step.exact is None:
            continue
        try:
            hz, quantity = _frequency_of(named, analysis_hz)
        except HandcheckError:
            continue
        if quantity.name not in ("voltage", "current") or claim.form not in ("polar", "rect"):
            continue
        unit = _unit(quantity)
        claimed, exact = to_complex(claim.value.expr) * to_peak, to_complex(step.exact) * to_peak
        rows.append(PhasorRow(step.name, unit, hz, claimed, exact, math.isclose(hz, analysis_hz, rel_tol=1e-9)))
    return rows


@dataclass(frozen=True)
class TimeMark:
    """A claimed instantaneous value of a voltage or current, drawn on its waveform.

    ``kind`` is ``"at"`` (the value at ``time`` s), ``"initial"`` (at t = 0+),
    ``"peak"`` (the largest absolute value, a level) or ``"final"`` (the value the
    waveform settles to, a level); ``claimed`` and ``exact`` are in SI units.
    """

    step: str
    kind: str
    signal: str
    unit: str
    claimed: float
    exact: float
    time: float | None = None


_LEVELS = ("at", "initial", "peak", "final")


def claimed_marks(report: Report) -> list[TimeMark]:
    """The real claims of ``at``, ``initial``, ``peak`` and ``final`` of a voltage or
    current, to be drawn where the reader compares them with the waveform."""
    marks = []
    for step, quantity, claim in _claimed_steps(report):
        if step.expected_si is None:
            continue
        args = quantity.args
        if quantity.name not in _LEVELS or not args or getattr(args[0], "name", None) not in ("voltage", "current"):
            continue
        if claim.form != "real":
            continue
        time = None
        if quantity.name == "at":
            try:
                time = float(read_value(str(args[1]), "s", f"the time in {quantity.text}"))
            except (HandcheckError, IndexError):
                continue
        inner = args[0]
        if isinstance(inner, str):
            continue
        marks.append(
            TimeMark(
                step.name,
                quantity.name,
                inner.text,
                _unit(inner),
                float(to_complex(claim.value.expr).real),
                float(step.expected_si[0]),
                time,
            )
        )
    return marks


def _draw_claimed_functions(report: Report, waves: dict[str, Any], times: Any) -> None:
    """Each claimed time function of a voltage or current, dashed over its waveform
    (evaluated at 400 instants of the run, at 20 digits, for the picture only)."""
    import numpy as np
    import sympy

    for step, quantity, claim in _claimed_steps(report):
        if claim.form != "function" or quantity.name not in ("voltage", "current"):
            continue
        axis = waves.get(_unit(quantity))
        if axis is None:
            continue
        t = np.linspace(0.0, float(times[-1]), 400)
        try:
            values = [float(sympy.re(sympy.N(claim.value.expr.subs(TIME, x), 20))) for x in t]
        except (TypeError, ValueError):
            continue
        axis.plot(t * 1e3, values, "--", lw=1.4, color="C3", label=f"{step.name} claimed (function of t)")


def _draw_marks(marks: list[TimeMark], waves: dict[str, Any]) -> None:
    """Claimed instants as open circles, claimed peaks and final values as dashed levels;
    the exact value in black beside each (a cross, a dotted level). A peak is drawn on
    the side where the simulated waveform has its largest absolute value."""
    import numpy as np

    exact_labelled: set[str] = set()
    for mark in marks:
        axis = waves.get(mark.unit)
        if axis is None:
            continue
        label = f"{mark.step} claimed ({mark.kind})"
        exact_label = None if mark.unit in exact_labelled else "exact value"
        exact_labelled.add(mark.unit)
        if mark.kind in ("at", "initial"):
            t_ms = 0.0 if mark.time is None else mark.time * 1e3
            axis.plot([t_ms], [mark.exact], "+", color="black", ms=9, mew=1.2, label=exact_label)
            axis.plot([t_ms], [mark.claimed], "o", mfc="none", color="C3", ms=7, mew=1.4, label=label)
            continue
        sign = 1.0
        if mark.kind == "peak":
            simulated = [ln for ln in axis.get_lines() if ln.get_label() == f"{mark.signal} (simulated)"]
            if simulated:
                values = np.asarray(simulated[0].get_ydata())
                sign = 1.0 if values.size == 0 or values[np.argmax(np.abs(values))] >= 0 else -1.0
        axis.axhline(sign * mark.claimed, ls=(0, (4, 3)), lw=1.1, color="C3", label=label)
        axis.axhline(sign * mark.exact, ls=":", lw=0.9, color="black", label=exact_label)


def _frequency_of(quantity: Any, analysis_hz: float) -> tuple[float, Any]:
    """(frequency in Hz, the quantity read there) for a quantity or ``at_frequency(Q, f)``."""
    args = quantity.args
    if quantity.name == "at_frequency" and len(args) == 2 and isinstance(args[1], str):
        omega = read_frequency(args[1], f"the frequency in {quantity.text}")
        return float(omega) / (2 * math.pi), args[0]
    return analysis_hz, quantity


def plot_evidence(report: Report, evidence: Evidence, path: str | Path) -> Path:
    """Write the evidence figure to ``path`` (``.svg`` or ``.png``) and return the path."""
    path = Path(path)
    if path.suffix.lower() not in (".svg", ".png"):
        raise ParseError(f'a plot is written as .svg or .png, not "{path.suffix or path.name}"', str(path), None)
    return write_figure(evidence_figure(report, evidence), path)


def evidence_figure(report: Report, evidence: Evidence) -> Any:
    """The evidence figure: one panel of waveforms per kind (voltages, currents), the
    transient of each kind below them, and a phasor diagram per kind and frequency in a
    row beneath (a small harmonic gets its own scale instead of vanishing beside the
    fundamental)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    sim = evidence.simulation
    circuit = sim.circuit
    signals = _signals(report.steps)[:_MAX_SIGNALS]
    if not signals:
        signals = [parse_quantity(f"voltage({n})") for n in circuit.nodes[:_MAX_SIGNALS]]
    rows = _claimed_phasors(report, circuit)
    units = [
        u for u in ("V", "A") if any(_unit(q) == u for q in signals) or any(r.unit == u and r.analysis for r in rows)
    ]
    groups = _phasor_groups(rows)
    columns = max(1, min(PHASORS_PER_ROW, len(groups)))
    phasor_rows = math.ceil(len(groups) / columns)
    # inches: waveforms, transients, a row of phasor diagrams (voltages and currents
    # with one row of diagrams stay under the page height the print stylesheet allows)
    heights = [1.55] * len(units) + [1.2] * len(units) + [2.5] * phasor_rows
    figure = plt.figure(figsize=(WIDTH_IN, 0.6 + sum(heights)), layout="constrained")
    grid = figure.add_gridspec(len(heights), columns, height_ratios=heights)
    waves = {u: figure.add_subplot(grid[k, :]) for k, u in enumerate(units)}
    first = waves[units[0]]
    for axis in list(waves.values())[1:]:
        axis.sharex(first)
    transients = {u: figure.add_subplot(grid[len(units) + k, :], sharex=first) for k, u in enumerate(units)}
    _draw_waves(evidence, signals, rows, waves, transients)
    _draw_marks(claimed_marks(report), waves)
    _draw_claimed_functions(report, waves, sim.times)
    for unit in units:
        waves[unit].set_ylabel(f"{_KIND[unit]} [{unit}]")
        transients[unit].set_ylabel(f"transient [{unit}]")
        for axis in (waves[unit], transients[unit]):
            axis.grid(alpha=0.3)
        # above the waveforms, not over them
        waves[unit].legend(fontsize=7, loc="lower left", bbox_to_anchor=(0, 1.01), ncol=2, frameon=False)
        if transients[unit].get_lines():
            transients[unit].legend(fontsize=7, loc="upper right")
    for axis in list(waves.values()) + list(transients.values())[:-1]:
        axis.tick_params(labelbottom=False)
    # the run's step under the time axis, clear of the phasor diagrams' ticks
    transients[units[-1]].set_xlabel(f"t [ms]  (simulated with a step of {sim.step:.3g} s, {sim.samples} samples)")
    figure.suptitle(visible(" ".join(report.title.split())), fontsize=10)
    several = len({hz for hz, _ in groups}) > 1
    for index, ((hz, unit), members) in enumerate(groups.items()):
        axes = figure.add_subplot(grid[2 * len(units) + index // columns, index % columns])
        at = f" at {_hz_text(hz)}" if several or hz != float(circuit.omega) / (2 * math.pi) else ""
        # drawn in the worksheet's own convention, as its claims are written
        shown = 1 / math.sqrt(2) if circuit.phasors == "rms" else 1.0
        drawn = [(r.step, r.claimed * shown, r.exact * shown) for r in members]
        _phasor_diagram(axes, drawn, f"{unit}, {circuit.phasors}", at)
    return figure


def _unit(q: Any) -> str:
    return "V" if q.name == "voltage" else "A"


def _phasor_groups(rows: list[PhasorRow]) -> dict[tuple[float, str], list[PhasorRow]]:
    """The phasor rows by (frequency, unit): the analysis frequency first, then upwards."""
    groups: dict[tuple[float, str], list[PhasorRow]] = {}
    for row in sorted(rows, key=lambda r: (not r.analysis, r.hz, r.unit != "V")):
        key = next((k for k in groups if k[1] == row.unit and math.isclose(k[0], row.hz, rel_tol=1e-9)), None)
        groups.setdefault(key or (row.hz, row.unit), []).append(row)
    return groups


def _hz_text(hz: float) -> str:
    """A frequency with an SI prefix: 150 Hz, 16.07 kHz."""
    for factor, prefix in ((1e9, "G"), (1e6, "M"), (1e3, "k")):
        if abs(hz) >= factor:
            return f"{hz / factor:.4g} {prefix}Hz"
    return f"{hz:.4g} Hz"


def _draw_waves(
    evidence: Evidence, signals: list[Any], rows: list[PhasorRow], waves: dict[str, Any], transients: dict[str, Any]
) -> None:
    """The simulated waveforms, the claimed sinusoids over them and the transients."""
    import numpy as np

    sim = evidence.simulation
    circuit = sim.circuit
    times_ms = np.asarray(sim.times) * 1e3
    omega = float(circuit.omega)
    fit = evidence.fit if omega > 0 and evidence.phasor_agreement is not None else None
    drawn: list[tuple[Any, Any]] = []
    for index, q in enumerate(signals):
        try:
            values = _numeric(sim, q)
        except KeyError:
            continue
        unit = _unit(q)
        (line,) = waves[unit].plot(times_ms, values, lw=1.2, color=f"C{index % 10}", label=f"{q.text} (simulated)")
        drawn.append((q, line))
        steady = _steady(fit, q, np.asarray(sim.times), omega) if fit is not None else None
        if steady is not None:
            transients[unit].plot(
                times_ms, values - steady, lw=1.0, color=line.get_color(), label=f"{q.text} - steady state"
            )
    for index, row in enumerate((r for r in rows if r.analysis), start=len(signals)):
        if omega <= 0:
            break
        start = sim.times[-1] - 3 * 2 * math.pi / omega
        t = np.linspace(max(start, 0.0), sim.times[-1], 600)
        wave = (row.claimed * np.exp(1j * omega * t)).real
        waves[row.unit].plot(t * 1e3, wave, "--", lw=1.4, color=f"C{index % 10}", label=f"{row.step} claimed")
    if fit is None and _settles_to_constant(circuit) and evidence.long_enough:
        for q, line in drawn:
            values = np.asarray(line.get_ydata())
            label = f"{q.text} - settled value (at the end of the run)"
            transients[_unit(q)].plot(times_ms, values - values[-1], lw=1.0, color=line.get_color(), label=label)
    slowest = _slowest_rate(sim)
    for unit, transient in transients.items():
        _quiet_transient(transient, waves[unit], slowest)
        _envelope(transient, sim, slowest)


def _envelope(transient: Any, sim: Any, slowest: float | None) -> None:
    """The envelope of the slowest natural mode, at the size of the largest transient."""
    import numpy as np

    lines = transient.get_lines()
    if not slowest or not lines:
        return
    amplitude = max((float(np.max(np.abs(line.get_ydata()))) for line in lines), default=0.0)
    if amplitude > 0:
        after = float(getattr(sim, "settles_from", 0.0))
        t = np.asarray(sim.times)
        envelope = amplitude * np.exp(-slowest * np.clip(t - after, 0, None))
        transient.plot(t * 1e3, envelope, ":", color="black", lw=1, label="envelope of the slowest mode")
        transient.plot(t * 1e3, -envelope, ":", color="black", lw=1)


def _steady(fit: Any, q: Any, times: Any, omega: float) -> Any:
    import numpy as np

    args = [str(a) for a in q.args]
    if q.name == "current":
        if args[0] not in fit.currents:
            return None
        phasor, offset = fit.currents[args[0]], fit.current_offsets.get(args[0], 0.0)
    else:

        def node(name: str) -> tuple[complex, float]:
            if name == "gnd":
                return 0j, 0.0
            return fit.voltages[name], fit.voltage_offsets.get(name, 0.0)

        if len(args) == 2:
            (pa, oa), (pb, ob) = node(args[0]), node(args[1])
            phasor, offset = pa - pb, oa - ob
        elif args[0] in fit.voltages or args[0] == "gnd":
            phasor, offset = node(args[0])
        else:
            return None
    return offset + (phasor * np.exp(1j * omega * times)).real


def _settles_to_constant(circuit: Any) -> bool:
    """Whether every source is constant once its last change is past (no sinusoid, no repeat)."""
    for part in circuit.parts:
        source = part.source
        if source is not None and (source.frequencies or source.function.repeats):
            return False
    return True


#: A transient smaller than this fraction of the waveforms' size is no transient.
QUIET = 1e-9


def _quiet_transient(transient: Any, waves: Any, slowest: float | None) -> None:
    """Say in a line why the transient panel holds no curve (instead of an empty panel)."""
    import numpy as np

    lines = transient.get_lines()
    scale = max((float(np.max(np.abs(line.get_ydata()))) for line in waves.get_lines()), default=0.0)
    size = max((float(np.max(np.abs(line.get_ydata()))) for line in lines), default=0.0)
    if lines and size > QUIET * scale:
        return
    if not slowest:
        text = "no transient:\nthe circuit has no decaying natural mode; every value follows its sources at once"
    elif lines:
        text = f"no transient:\nsimulated minus steady state stays below {QUIET:g} of the waveforms' size"
    else:
        text = "no transient drawn:\nno steady state could be fitted to subtract from the simulated waveforms"
    for line in lines:
        line.remove()
    transient.text(0.5, 0.5, text, transform=transient.transAxes, ha="center", va="center", fontsize=8)
    transient.set_yticks([])


def _slowest_rate(sim: Any) -> float | None:
    rates = [-complex(m).real for m in getattr(sim, "modes", ()) if complex(m).real < 0]
    return min(rates) if rates else None


#: A phasor shorter than this fraction of the largest in its diagram is drawn magnified.
SMALL = 0.08


def _magnified(size: float, largest: float) -> int:
    """The power of ten a small phasor is drawn magnified by (0: drawn to scale)."""
    if size <= 0 or size >= SMALL * largest:
        return 0
    return math.ceil(math.log10(0.3 * largest / size))


def _phasor_diagram(axes: Any, rows: list[tuple[str, complex, complex]], unit: str, at: str = "") -> None:
    """Exact phasors solid with a filled tip, claimed ones dashed with an open circle at
    the tip (visible where the two coincide); a phasor much smaller than the largest is
    drawn magnified by a power of ten, said in its label."""
    from matplotlib.lines import Line2D

    largest = max([abs(v) for _, c, e in rows for v in (c, e)] + [1e-300])
    for index, (name, claimed, exact) in enumerate(rows):
        color = f"C{index % 10}"
        power = _magnified(max(abs(claimed), abs(exact)), largest)
        scale = 10.0**power
        tip, said = exact * scale, claimed * scale
        axes.annotate(
            "", xy=(tip.real, tip.imag), xytext=(0, 0), arrowprops={"arrowstyle": "-|>", "color": color, "lw": 2}
        )
        axes.plot([0, said.real], [0, said.imag], "--", color=color, lw=1.3)
        axes.plot([said.real], [said.imag], "o", color=color, ms=7, mfc="none", mew=1.4)
        label = f" {name}" + (f" (x{scale:g})" if power else "")
        axes.text(tip.real, tip.imag, label, color=color, fontsize=8, clip_on=True)
    axes.set_xlim(-1.2 * largest, 1.2 * largest)
    axes.set_ylim(-1.2 * largest, 1.2 * largest)
    axes.set_aspect("equal")
    axes.axhline(0, color="grey", lw=0.5)
    axes.axvline(0, color="grey", lw=0.5)
    axes.set_title(f"phasors [{unit}]{at}", fontsize=9)
    key = [
        Line2D([], [], color="black", lw=2, label="exact"),
        Line2D([], [], color="black", lw=1.3, ls="--", marker="o", mfc="none", label="claimed"),
    ]
    axes.legend(handles=key, fontsize=7, loc="upper left", framealpha=0.8)
    axes.grid(alpha=0.3)

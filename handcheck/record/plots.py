"""Plots of the evidence (matplotlib, SVG or PNG by the file's extension).

One figure: the waveforms the steps name on one set of axes, with each claimed
steady-state sinusoid drawn dashed over the simulated one; the transient (simulated
minus steady state) with the envelope of the slowest natural mode; and phasor
diagrams with the claimed and exact phasors side by side.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

from handcheck.errors import HandcheckError, ParseError
from handcheck.record.document import write_figure
from handcheck.record.visible import visible
from handcheck.solve.quantities import parse_quantity
from handcheck.verify.claims import read_claim, to_complex
from handcheck.verify.evidence import Evidence, _numeric, _signals
from handcheck.verify.findings import Report

__all__ = ["evidence_figure", "plot_evidence"]

_MAX_SIGNALS = 6


def _claimed_phasors(report: Report, circuit: Any) -> list[tuple[str, str, complex, complex]]:
    """(step, unit, claimed peak phasor, exact peak phasor) for phasor claims of voltages and currents."""
    to_peak = 1.0 if circuit.phasors == "peak" else math.sqrt(2)
    rows = []
    for step in report.steps:
        if not step.quantity or step.exact is None:
            continue
        try:
            quantity = parse_quantity(step.quantity)
            claim = read_claim(step.claimed)
        except HandcheckError:
            continue
        if quantity.name not in ("voltage", "current") or claim.form not in ("polar", "rect"):
            continue
        unit = "V" if quantity.name == "voltage" else "A"
        rows.append((step.name, unit, to_complex(claim.value.expr) * to_peak, to_complex(step.exact) * to_peak))
    return rows


def plot_evidence(report: Report, evidence: Evidence, path: str | Path) -> Path:
    """Write the evidence figure to ``path`` (``.svg`` or ``.png``) and return the path."""
    path = Path(path)
    if path.suffix.lower() not in (".svg", ".png"):
        raise ParseError(f'a plot is written as .svg or .png, not "{path.suffix or path.name}"', str(path), None)
    return write_figure(evidence_figure(report, evidence), path)


def evidence_figure(report: Report, evidence: Evidence) -> Any:
    """The evidence figure: waveforms above, the transient below, phasor diagrams beside."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    import numpy as np

    sim = evidence.simulation
    circuit = sim.circuit
    times_ms = np.asarray(sim.times) * 1e3
    signals = _signals(report.steps)[:_MAX_SIGNALS]
    if not signals:
        signals = [parse_quantity(f"voltage({n})") for n in circuit.nodes[:_MAX_SIGNALS]]
    phasor_rows = _claimed_phasors(report, circuit)
    kinds = sorted({unit for _, unit, _, _ in phasor_rows})
    columns = 1 + len(kinds)
    figure = plt.figure(figsize=(6 + 3.2 * len(kinds), 6.4), layout="constrained")
    grid = figure.add_gridspec(2, columns, width_ratios=[2.2] + [1] * len(kinds))
    waves = figure.add_subplot(grid[0, 0])
    transient = figure.add_subplot(grid[1, 0], sharex=waves)
    omega = float(circuit.omega)
    fit = evidence.fit if omega > 0 and evidence.phasor_agreement is not None else None
    units = {"V" if q.name == "voltage" else "A" for q in signals}
    # currents on their own scale, so that milliamperes show beside volts
    amps = waves.twinx() if units == {"V", "A"} else waves
    drawn: list[tuple[Any, Any]] = []
    for index, q in enumerate(signals):
        try:
            values = _numeric(sim, q)
        except KeyError:
            continue
        unit = "V" if q.name == "voltage" else "A"
        axis = amps if unit == "A" else waves
        (line,) = axis.plot(times_ms, values, lw=1.2, color=f"C{index % 10}", label=f"{q.text} [{unit}] (simulated)")
        drawn.append((q, line))
        if fit is not None:
            steady = _steady(fit, q, np.asarray(sim.times), omega)
            if steady is not None:
                transient.plot(
                    times_ms, values - steady, lw=1.0, color=line.get_color(), label=f"{q.text} - steady state"
                )
    for index, (name, unit, claimed, _) in enumerate(phasor_rows, start=len(signals)):
        if omega <= 0:
            break
        start = sim.times[-1] - 3 * 2 * math.pi / omega
        t = np.linspace(max(start, 0.0), sim.times[-1], 600)
        axis = amps if unit == "A" else waves
        wave = (claimed * np.exp(1j * omega * t)).real
        axis.plot(t * 1e3, wave, "--", lw=1.4, color=f"C{index % 10}", label=f"{name} claimed [{unit}]")
    if fit is None and _settles_to_constant(circuit) and evidence.long_enough:
        for q, line in drawn:
            values = np.asarray(line.get_ydata())
            label = f"{q.text} - settled value (at the end of the run)"
            transient.plot(times_ms, values - values[-1], lw=1.0, color=line.get_color(), label=label)
    slowest = _slowest_rate(sim)
    _quiet_transient(transient, waves, slowest)
    if slowest and transient.get_lines():
        lines = transient.get_lines()
        amplitude = max((float(np.max(np.abs(line.get_ydata()))) for line in lines), default=0.0)
        if amplitude > 0:
            after = float(getattr(sim, "settles_from", 0.0))
            t = np.asarray(sim.times)
            envelope = amplitude * np.exp(-slowest * np.clip(t - after, 0, None))
            transient.plot(times_ms, envelope, ":", color="black", lw=1, label="envelope of the slowest mode")
            transient.plot(times_ms, -envelope, ":", color="black", lw=1)
    waves.set_ylabel("current [A]" if units == {"A"} else "voltage [V]")
    if amps is not waves:
        amps.set_ylabel("current [A]")
    figure.suptitle(visible(" ".join(report.title.split())), fontsize=10)
    handles, labels = waves.get_legend_handles_labels()
    if amps is not waves:
        more = amps.get_legend_handles_labels()
        handles, labels = handles + more[0], labels + more[1]
    # above the waveforms, not over them
    waves.legend(handles, labels, fontsize=7, loc="lower left", bbox_to_anchor=(0, 1.01), ncol=2, frameon=False)
    waves.grid(alpha=0.3)
    transient.set_xlabel("t [ms]")
    transient.set_ylabel("transient")
    transient.grid(alpha=0.3)
    if transient.get_lines():
        transient.legend(fontsize=7, loc="upper right")
    for column, unit in enumerate(kinds, start=1):
        axes = figure.add_subplot(grid[:, column])
        _phasor_diagram(axes, [(n, c, e) for n, u, c, e in phasor_rows if u == unit], unit)
    figure.text(0.01, 0.005, f"step {sim.step:.3g} s, {sim.samples} samples", fontsize=7)
    return figure


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


def _phasor_diagram(axes: Any, rows: list[tuple[str, complex, complex]], unit: str) -> None:
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
    axes.set_title(f"phasors [{unit}, peak]", fontsize=9)
    key = [
        Line2D([], [], color="black", lw=2, label="exact"),
        Line2D([], [], color="black", lw=1.3, ls="--", marker="o", mfc="none", label="claimed"),
    ]
    axes.legend(handles=key, fontsize=7, loc="upper left", framealpha=0.8)
    axes.grid(alpha=0.3)

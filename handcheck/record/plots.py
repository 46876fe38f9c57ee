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

__all__ = ["plot_evidence"]

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
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    import numpy as np

    path = Path(path)
    if path.suffix.lower() not in (".svg", ".png"):
        raise ParseError(f'a plot is written as .svg or .png, not "{path.suffix or path.name}"', str(path), None)
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
    for q in signals:
        try:
            values = _numeric(sim, q)
        except KeyError:
            continue
        unit = "V" if q.name == "voltage" else "A"
        (line,) = waves.plot(times_ms, values, lw=1.2, label=f"{q.text} [{unit}] (simulated)")
        if fit is not None:
            steady = _steady(fit, q, np.asarray(sim.times), omega)
            if steady is not None:
                transient.plot(
                    times_ms, values - steady, lw=1.0, color=line.get_color(), label=f"{q.text} - steady state"
                )
    for name, unit, claimed, _ in phasor_rows:
        if omega <= 0:
            break
        start = sim.times[-1] - 3 * 2 * math.pi / omega
        t = np.linspace(max(start, 0.0), sim.times[-1], 600)
        waves.plot(t * 1e3, (claimed * np.exp(1j * omega * t)).real, "--", lw=1.4, label=f"{name} claimed [{unit}]")
    slowest = _slowest_rate(sim)
    if slowest and fit is not None:
        lines = transient.get_lines()
        amplitude = max((float(np.max(np.abs(line.get_ydata()))) for line in lines), default=0.0)
        if amplitude > 0:
            after = float(getattr(sim, "settles_from", 0.0))
            t = np.asarray(sim.times)
            envelope = amplitude * np.exp(-slowest * np.clip(t - after, 0, None))
            transient.plot(times_ms, envelope, ":", color="black", lw=1, label="envelope of the slowest mode")
            transient.plot(times_ms, -envelope, ":", color="black", lw=1)
    waves.set_ylabel("value")
    waves.set_title(visible(" ".join(report.title.split())), fontsize=10)
    waves.legend(fontsize=7, loc="upper right")
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
    return write_figure(figure, path)


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


def _slowest_rate(sim: Any) -> float | None:
    rates = [-complex(m).real for m in getattr(sim, "modes", ()) if complex(m).real < 0]
    return min(rates) if rates else None


def _phasor_diagram(axes: Any, rows: list[tuple[str, complex, complex]], unit: str) -> None:
    largest = max([abs(v) for _, c, e in rows for v in (c, e)] + [1e-300])
    for index, (name, claimed, exact) in enumerate(rows):
        color = f"C{index % 10}"
        axes.annotate(
            "", xy=(exact.real, exact.imag), xytext=(0, 0), arrowprops={"arrowstyle": "->", "color": color, "lw": 2}
        )
        axes.annotate(
            "",
            xy=(claimed.real, claimed.imag),
            xytext=(0, 0),
            arrowprops={"arrowstyle": "->", "color": color, "lw": 1.2, "ls": "--"},
        )
        axes.text(exact.real, exact.imag, f" {name}", color=color, fontsize=8)
    axes.set_xlim(-1.15 * largest, 1.15 * largest)
    axes.set_ylim(-1.15 * largest, 1.15 * largest)
    axes.set_aspect("equal")
    axes.axhline(0, color="grey", lw=0.5)
    axes.axvline(0, color="grey", lw=0.5)
    axes.set_title(f"phasors [{unit}, peak]: exact solid, claimed dashed", fontsize=8)
    axes.grid(alpha=0.3)

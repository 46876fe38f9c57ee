"""The evidence figure's transient panel is never an empty frame.

The first-order step response V(1 - exp(-t/RC)) of an RC divider charging from rest
(any circuit-analysis textbook, e.g. Alexander & Sadiku, *Fundamentals of Electric
Circuits*, 5th ed., section 7.6, from memory) gives the transient drawn at DC; a
resistive divider has no natural mode and so no transient at all.
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

from handcheck.pipeline import run_text
from handcheck.record.plots import evidence_figure

HEAD = """
[worksheet]
format = 1
title = "Bias divider, 12 V supply"
[parts]
Vb = { voltage = "12 V", nodes = ["sup", "gnd"] }
R1 = { resistor = "10 kohm", nodes = ["sup", "mid"] }
R2 = { resistor = "4.7 kohm", nodes = ["mid", "gnd"] }
"""
STEP = """
[[step]]
name = "Vmid"
quantity = "voltage(mid)"
claim = "3.837 V"
"""
CAPACITOR = 'C1 = { capacitor = "1 uF", nodes = ["mid", "gnd"] }\n'
STEADY = """
[worksheet]
format = 1
title = "RC load already in its steady state"
[parts]
Vs = { voltage = "10 V", frequency = "50 Hz", nodes = ["in", "gnd"] }
R1 = { resistor = "100 ohm", nodes = ["in", "out"] }
C1 = { capacitor = "10 uF", nodes = ["out", "gnd"] }
[transient]
start = "steady"
[[step]]
name = "Vo"
quantity = "voltage(out)"
claim = "9.54 V /_ -17.4 deg"
"""


def _transient_panel(text: str) -> object:
    result = run_text(text, evidence=True)
    figure = evidence_figure(result.report, result.evidence)
    return figure.axes[1]


def _said(axis: object) -> str:
    return " ".join(t.get_text() for t in axis.texts)  # type: ignore[attr-defined]


@pytest.mark.parametrize(
    ("text", "reason"),
    [
        (HEAD + STEP, "no decaying natural mode"),
        (STEADY, "simulated minus steady state stays below"),
    ],
    ids=["resistive-dc", "steady-start"],
)
def test_a_panel_without_transient_says_so(text: str, reason: str) -> None:
    import matplotlib.pyplot as plt

    axis = _transient_panel(text)
    assert not axis.get_lines()  # type: ignore[attr-defined]
    assert "no transient" in _said(axis) and reason in _said(axis)
    plt.close("all")


def test_dc_charging_draws_the_transient_against_the_settled_value() -> None:
    import matplotlib.pyplot as plt

    axis = _transient_panel(HEAD + CAPACITOR + STEP)
    assert _said(axis) == ""
    line = next(x for x in axis.get_lines() if x.get_label().startswith("voltage(mid) - settled"))  # type: ignore[attr-defined]
    t = np.asarray(line.get_xdata()) * 1e-3
    # Thevenin of the divider: 12*4.7/14.7 V behind 10k || 4.7k, so tau = (10k || 4.7k) * 1 uF
    final = 12 * 4.7 / 14.7
    tau = (10e3 * 4.7e3 / 14.7e3) * 1e-6
    # the run ends once the slowest mode is below 1e-6 of its start, so the settled
    # value read at its end is within about 1e-6 of the true final value
    assert_allclose(line.get_ydata(), -final * np.exp(-t / tau), atol=3e-6 * final)
    plt.close("all")


PHASORS = """
[worksheet]
format = 1
title = "Coil and snubber, 24 V 50 Hz"
[parts]
Vs = { voltage = "24 V", frequency = "50 Hz", nodes = ["line", "gnd"] }
Rc = { resistor = "33 ohm", nodes = ["line", "m"] }
Lc = { inductor = "120 mH", nodes = ["m", "gnd"] }
Rs = { resistor = "100 ohm", nodes = ["line", "k"] }
Cs = { capacitor = "0.47 uF", nodes = ["k", "gnd"] }
[[step]]
name = "Ic"
quantity = "current(Lc)"
claim = "0.479 A /_ -48.8 deg"
[[step]]
name = "Isn"
quantity = "current(Cs)"
claim = "3.2 mA /_ 95 deg"
"""


@pytest.mark.slow  # simulates and draws the evidence figure
def test_phasor_diagram_shows_a_coinciding_claim_and_magnifies_a_small_phasor() -> None:
    import matplotlib.pyplot as plt

    result = run_text(PHASORS, evidence=True)
    figure = evidence_figure(result.report, result.evidence)
    diagram = next(a for a in figure.axes if a.get_title().startswith("phasors [A"))
    # the claim that agrees is still marked: an open circle at its tip
    tips = [line for line in diagram.get_lines() if line.get_marker() == "o"]
    ic = complex(0.479 * np.exp(-1j * np.radians(48.8)))
    assert any(np.allclose([line.get_xdata()[0], line.get_ydata()[0]], [ic.real, ic.imag]) for line in tips)
    # 3.5 mA beside 0.48 A: drawn at 100 times its size, and said so
    isn = complex(3.2e-3 * np.exp(1j * np.radians(95)))
    assert any(
        np.allclose([line.get_xdata()[0], line.get_ydata()[0]], [100 * isn.real, 100 * isn.imag]) for line in tips
    )
    assert any("Isn (x100)" in t.get_text() for t in diagram.texts)
    # the legends sit clear of the data: the waveforms' above their axes, the
    # diagram's inside its frame
    figure.canvas.draw()
    waves = figure.axes[0]
    assert waves.get_legend().get_window_extent().y0 >= waves.get_window_extent().y1
    assert diagram.get_window_extent().contains(*diagram.get_legend().get_window_extent().p0)
    plt.close("all")


BOTH = (
    PHASORS
    + """
[[step]]
name = "Vm"
quantity = "voltage(m)"
claim = "18.1 V /_ 41.2 deg"
"""
)


def test_voltages_and_currents_have_axes_of_their_own_with_units() -> None:
    import matplotlib.pyplot as plt

    result = run_text(BOTH, evidence=True)
    figure = evidence_figure(result.report, result.evidence)
    timed = [a for a in figure.axes if not a.get_title().startswith("phasors")]
    by_label = {a.get_ylabel(): a for a in timed}
    assert {"voltage [V]", "current [A]", "transient [V]", "transient [A]"} <= set(by_label)
    # no axis carries both kinds, and none is a twin drawn over another
    for axis in timed:
        names = [line.get_label() for line in axis.get_lines() if not line.get_label().startswith("_")]
        assert not (any("voltage(" in n or n.startswith("Vm") for n in names) and any("current(" in n for n in names))
    assert len({a.get_position().bounds for a in timed}) == len(timed)
    volts = [line.get_label() for line in by_label["voltage [V]"].get_lines()]
    amps = [line.get_label() for line in by_label["current [A]"].get_lines()]
    assert "voltage(m) (simulated)" in volts and "Vm claimed" in volts
    assert "current(Lc) (simulated)" in amps and "Ic claimed" in amps
    plt.close("all")


# A 50 Hz supply with a small 3rd harmonic into an RC load (R = 100 ohm, C = 10 uF):
# each harmonic is a phasor problem of its own by superposition, V_out = V/(1 + jwRC)
# (Alexander & Sadiku, Fundamentals of Electric Circuits, 5th ed., section 10.6, from memory).
HARMONIC = """
[worksheet]
format = 1
title = "RC load on a supply with a 3rd harmonic"
frequency = "50 Hz"
[parts]
Vs = { voltage = "10*cos(2*pi*50*t) + 0.3*cos(2*pi*150*t) V", nodes = ["in", "gnd"] }
R1 = { resistor = "100 ohm", nodes = ["in", "out"] }
C1 = { capacitor = "10 uF", nodes = ["out", "gnd"] }
[[step]]
name = "Vo"
quantity = "voltage(out)"
claim = "9.54 V /_ -17.4 deg"
[[step]]
name = "Vo3"
quantity = 'at_frequency(voltage(out), "150 Hz")'
claim = "0.218 V /_ -43.3 deg"
"""


def test_a_harmonic_gets_a_phasor_diagram_of_its_own_at_its_scale() -> None:
    import matplotlib.pyplot as plt

    result = run_text(HARMONIC, evidence=True)
    figure = evidence_figure(result.report, result.evidence)
    diagrams = {a.get_title(): a for a in figure.axes if a.get_title().startswith("phasors")}
    assert set(diagrams) == {"phasors [V, peak] at 50 Hz", "phasors [V, peak] at 150 Hz"}
    third = diagrams["phasors [V, peak] at 150 Hz"]
    tips = [line for line in third.get_lines() if line.get_marker() == "o"]
    w = 2 * np.pi * 150
    exact = 0.3 / (1 + 1j * w * 100 * 10e-6)
    # drawn to its own scale: its tip at its size, the axes fitted to it
    claimed = 0.218 * np.exp(-1j * np.radians(43.3))
    assert len(tips) == 1
    assert_allclose([tips[0].get_xdata()[0], tips[0].get_ydata()[0]], [claimed.real, claimed.imag])
    assert_allclose(third.get_xlim(), (-1.2 * abs(exact), 1.2 * abs(exact)), rtol=2e-3)
    fundamental = diagrams["phasors [V, peak] at 50 Hz"]
    assert len([line for line in fundamental.get_lines() if line.get_marker() == "o"]) == 1
    plt.close("all")


def test_the_figure_fits_a_printed_page_at_full_width() -> None:
    import matplotlib.pyplot as plt

    result = run_text(BOTH, evidence=True)
    figure = evidence_figure(result.report, result.evidence)
    width, height = figure.get_size_inches()
    # A4 text area with 14 mm and 15 mm margins is 182 x 267 mm, Letter's 188 x 249 mm;
    # the print stylesheet caps a plot at 180 x 230 mm (common practice for margins)
    assert width * 25.4 <= 180 and height * 25.4 <= 230
    plt.close("all")

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

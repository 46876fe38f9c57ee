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

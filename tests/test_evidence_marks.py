"""Claimed instants, peaks and final values drawn where the reader compares them.

The exact values are checked against the underdamped series RLC step response
v_C(t) = V (1 - exp(-a t) (cos(wd t) + (a/wd) sin(wd t))), a = R/(2L), wd = sqrt(1/(LC) - a^2),
and its peak V (1 + exp(-a pi/wd)) at t = pi/wd (Nilsson & Riedel, Electric Circuits,
10th ed., section 8.3 and the overshoot of 8.4, from memory).
"""

from __future__ import annotations

import math

import pytest

from handcheck.pipeline import run_text
from handcheck.record.plots import claimed_marks, evidence_figure

V, R, L, C = 12.0, 10.0, 10e-3, 100e-6
SHEET = """
[worksheet]
format = 1
title = "Relay coil switch-on"
[parts]
Vs = { voltage = "12 V", nodes = ["a", "gnd"] }
R1 = { resistor = "10 ohm", nodes = ["a", "b"] }
L1 = { inductor = "10 mH", nodes = ["b", "c"] }
C1 = { capacitor = "100 uF", nodes = ["c", "gnd"] }
[transient]
start = "rest"
[[step]]
name = "v1"
quantity = 'at(voltage(c), "1 ms")'
claim = "5.5 V"
[[step]]
name = "vpk"
quantity = "peak(voltage(c))"
claim = "17.5 V"
[[step]]
name = "vfin"
quantity = "final(voltage(c))"
claim = "12 V"
"""


def closed_form(t: float) -> float:
    a = R / (2 * L)
    wd = math.sqrt(1 / (L * C) - a * a)
    return V * (1 - math.exp(-a * t) * (math.cos(wd * t) + a / wd * math.sin(wd * t)))


def test_marks_hold_the_claims_and_the_exact_values():
    a = R / (2 * L)
    wd = math.sqrt(1 / (L * C) - a * a)
    report = run_text(SHEET, evidence=True).report
    marks = {m.step: m for m in claimed_marks(report)}
    assert marks["v1"].kind == "at" and marks["v1"].time == pytest.approx(1e-3)
    assert marks["v1"].claimed == 5.5 and marks["v1"].exact == pytest.approx(closed_form(1e-3), rel=1e-9)
    assert marks["vpk"].exact == pytest.approx(V * (1 + math.exp(-a * math.pi / wd)), rel=1e-9)
    assert marks["vfin"].exact == pytest.approx(V) and marks["vfin"].signal == "voltage(c)"


@pytest.mark.slow  # simulates and draws the evidence figure
def test_the_figure_draws_each_claim_on_its_waveform():
    outcome = run_text(SHEET, evidence=True)
    figure = evidence_figure(outcome.report, outcome.evidence)
    lines = {line.get_label(): line for axis in figure.axes for line in axis.get_lines()}
    assert list(lines["v1 claimed (at)"].get_xdata()) == [pytest.approx(1.0)]  # ms
    assert list(lines["v1 claimed (at)"].get_ydata()) == [5.5]
    assert list(lines["vpk claimed (peak)"].get_ydata()) == [17.5, 17.5]  # a level, on the positive side
    assert "vfin claimed (final)" in lines and "exact value" in lines


RC_SHEET = """
[worksheet]
format = 1
title = "Sensor supply RC charge"
[parts]
Vs = { voltage = "3.3 V", nodes = ["a", "gnd"] }
R1 = { resistor = "2 kohm", nodes = ["a", "out"] }
C1 = { capacitor = "10 uF", nodes = ["out", "gnd"] }
[transient]
start = "rest"
[[step]]
name = "vout"
quantity = "voltage(out)"
claim = "3.3*(1 - exp(-t/25 ms)) V"
"""


@pytest.mark.slow  # simulates and draws the evidence figure
def test_a_claimed_time_function_is_drawn_over_the_simulated_waveform():
    # The claim's own function, 3.3 (1 - exp(-t/25 ms)), beside the simulated charge of an
    # RC of 20 ms, V (1 - exp(-t/RC)) (Alexander & Sadiku, 5th ed., section 7.6, from memory).
    import numpy as np

    outcome = run_text(RC_SHEET, evidence=True)
    figure = evidence_figure(outcome.report, outcome.evidence)
    lines = {line.get_label(): line for axis in figure.axes for line in axis.get_lines()}
    claimed = lines["vout claimed (function of t)"]
    t = np.asarray(claimed.get_xdata()) / 1e3
    assert np.allclose(claimed.get_ydata(), 3.3 * (1 - np.exp(-t / 25e-3)), rtol=1e-12, atol=1e-12)
    simulated = lines["voltage(out) (simulated)"]
    ts = np.asarray(simulated.get_xdata()) / 1e3
    assert np.allclose(simulated.get_ydata(), 3.3 * (1 - np.exp(-ts / 20e-3)), atol=1e-9)

"""A power step of a circuit driven at two frequencies says what its quantity holds.

Reference: the average of p(t) = R i(t)^2 over one period, sampled with numpy from
the steady-state current of each source term (i_k = V_k / (R + j w_k L), the impedance
of a series RL branch; Alexander & Sadiku, Fundamentals of Electric Circuits, 5th ed.,
sections 9.4 and 17.6, from memory): with distinct frequencies the cross terms average
to zero, so the total is the sum of the powers at each frequency.
"""

from __future__ import annotations

import re

import numpy as np
import pytest

import handcheck

SHEET = """
[worksheet]
format = 1
title = "heater fed with a harmonic"
frequency = "50 Hz"
[parts]
Vh = { voltage = "10*cos(2*pi*50 Hz*t) + 3*cos(2*pi*150 Hz*t) V", nodes = ["h", "gnd"] }
Rh = { resistor = "10 ohm", nodes = ["h", "k"] }
Lh = { inductor = "10 mH", nodes = ["k", "gnd"] }
[[step]]
name = "P"
quantity = "power(Rh)"
claim = "CLAIM"
"""


def average_power() -> tuple[float, float]:
    """(power at 50 Hz, average over a period of both terms), by numpy."""
    r, ind = 10.0, 10e-3
    t = np.linspace(0, 0.02, 4000, endpoint=False)  # uniform over one period: the mean is exact
    current = np.zeros_like(t)
    powers = []
    for amplitude, f in ((10.0, 50.0), (3.0, 150.0)):
        w = 2 * np.pi * f
        phasor = amplitude / (r + 1j * w * ind)
        current += np.abs(phasor) * np.cos(w * t + np.angle(phasor))
        powers.append(0.5 * abs(phasor) ** 2 * r)
    return powers[0], float(np.mean(r * current**2))


@pytest.mark.parametrize("which", ["fundamental", "total"])
def test_the_note_gives_the_total_over_every_frequency(which):
    fundamental, total = average_power()
    claim = f"{fundamental if which == 'fundamental' else total:.5g} W"
    step = handcheck.check_text(SHEET.replace("CLAIM", claim)).steps[0]
    assert step.verdict == ("agrees" if which == "fundamental" else "differs")
    (note,) = [n for n in step.notes if "over every frequency" in n]
    shown = float(re.search(r"together it is ([\d.]+) W", note).group(1))
    assert shown == pytest.approx(total, rel=1e-4)
    assert note.endswith("the claim is that total") == (which == "total")
    assert "150 Hz" in note


def test_one_frequency_gives_no_note():
    sheet = SHEET.replace(" + 3*cos(2*pi*150 Hz*t)", "").replace("CLAIM", "4.55 W")
    assert not [n for n in handcheck.check_text(sheet).steps[0].notes if "every frequency" in n]

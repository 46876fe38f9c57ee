"""rms, average and stored energy over every source frequency together.

References: the rms of a DC level plus a sinusoid, sqrt(V0^2 + V1^2/2), and the
mean square of a Fourier series as the sum of its terms' mean squares (Parseval's
relation; Alexander & Sadiku, Fundamentals of Electric Circuits, 5th ed., sec. 17.5,
from memory); the RC low-pass |H(jw)|^2 = 1/(1 + (wRC)^2); w = C v^2 / 2.
Cross-checked against numpy: the mean of the squared waveform over one period.
"""

from __future__ import annotations

import math

import numpy as np
import sympy
from numpy.testing import assert_allclose

import handcheck
from handcheck.verify.findings import StepFinding


def run(parts: str, steps: list[tuple[str, str, str]], header: str = "") -> dict[str, StepFinding]:
    lines = ["[worksheet]", "format = 1", 'title = "reference"', header, "[parts]", parts]
    for name, quantity, claim in steps:
        lines += ["[[step]]", f'name = "{name}"', f'quantity = "{quantity}"', f'claim = "{claim}"']
    report = handcheck.check(handcheck.loads("\n".join(lines), "<reference>"))
    return {step.name: step for step in report.steps}


def test_dc_plus_sinusoid() -> None:
    parts = """
Vb = { voltage = "2.5 + 1.2*cos(1000*t) V", nodes = ["in", "gnd"] }
Rb = { resistor = "1 kohm", nodes = ["in", "out"] }
Cb = { capacitor = "1 uF", nodes = ["out", "gnd"] }
"""
    found = run(
        parts,
        [
            ("rin", "rms(voltage(in))", "2.640 V"),
            ("avg", "average(voltage(out))", "2.5 V"),
            ("rout", "rms(voltage(out))", "2.571 V"),
            ("E", "energy(Cb)", "3.305 uJ"),
        ],
    )
    v0, v1 = sympy.Rational(5, 2), sympy.Rational(6, 5)
    assert sympy.simplify(found["rin"].exact - sympy.sqrt(v0**2 + v1**2 / 2)) == 0
    assert found["avg"].exact == v0
    # the ripple through the RC at wRC = 1 is halved in power
    assert sympy.simplify(found["rout"].exact - sympy.sqrt(v0**2 + v1**2 / 4)) == 0
    assert sympy.simplify(found["E"].exact - sympy.Rational(1, 10**6) * (v0**2 + v1**2 / 4) / 2) == 0
    assert all(f.verdict == "agrees" for f in found.values()), {k: (v.verdict, v.expected) for k, v in found.items()}
    # numpy: the mean square of the sampled steady-state waveform over one period
    t = np.linspace(0, 2 * math.pi / 1000, 20001)[:-1]
    h = 1 / (1 + 1j)
    v = 2.5 + np.real(1.2 * h * np.exp(1j * 1000 * t))
    assert_allclose(float(sympy.N(found["rout"].exact)), math.sqrt(np.mean(v**2)), rtol=1e-9)


def test_harmonics_of_one_source() -> None:
    parts = """
Vh = { voltage = "cos(1000*t) + 0.3*cos(3000*t) V", nodes = ["in", "gnd"] }
Rh = { resistor = "1 kohm", nodes = ["in", "out"] }
Ch = { capacitor = "1 uF", nodes = ["out", "gnd"] }
"""
    found = run(
        parts,
        [("r", "rms(voltage(out))", "0.5045 V"), ("a", "average(voltage(out))", "0 V")],
        header='frequency = "1000 rad/s"',
    )
    expected = sympy.sqrt(sympy.Rational(1, 2) / 2 + sympy.Rational(9, 100) / 2 / 10)
    assert sympy.simplify(found["r"].exact - expected) == 0
    assert found["r"].verdict == found["a"].verdict == "agrees"

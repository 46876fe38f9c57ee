"""Where a cutoff formula with no closed form holds: each symbol going to 0 and to infinity.

An R1-C1 low-pass loaded by a second R2-C2 section; the output is the first capacitor.
Its -3 dB frequency solves a polynomial of degree two in w^2 (no closed form in the
audit), and the unloaded formula 1/(2*pi*R1*C1) (first-order low-pass; Nilsson &
Riedel, Electric Circuits, 10th ed., sec. 14.2, from memory) holds whenever the load
stops mattering. The reference is computed here, independently of handcheck: the
divider H(s) = 1/(1 + R1*Y(s)) with Y = s*C1 + s*C2/(1 + s*R2*C2) (voltage divider,
from memory), its response from scipy.signal.freqs and the half-power point found by
scipy.optimize.brentq after a logarithmic scan. Component values are invented.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from handcheck.pipeline import run_text

NOMINAL = {"R1": 1e3, "C1": 100e-9, "R2": 100e3, "C2": 10e-9}

SHEET = """[worksheet]
format = 1
title = "loaded RC low-pass"

[parts]
Vin = { voltage = "1 V", nodes = ["in", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["in", "a"] }
C1 = { capacitor = "100 nF", nodes = ["a", "gnd"] }
R2 = { resistor = "100 kohm", nodes = ["a", "b"] }
C2 = { capacitor = "10 nF", nodes = ["b", "gnd"] }

[audit]
symbols = ["R1", "C1", "R2", "C2"]  # no tolerances: the conditions and the nominal error only

[[formula]]
name = "unloaded"
quantity = "cutoff_frequency(network_function(voltage(a), voltage(in)))"
expression = "1/(2*pi*R1*C1)"
"""


def reference_cutoff(r1: float, c1: float, r2: float, c2: float) -> float:
    """The -3 dB frequency in Hz of H = (1 + s R2 C2)/((1 + s R2 C2)(1 + s R1 C1) + s R1 C2)."""
    from scipy.optimize import brentq
    from scipy.signal import freqs

    num = [r2 * c2, 1.0]
    den = np.polyadd(np.polymul([r2 * c2, 1.0], [r1 * c1, 1.0]), [r1 * c2, 0.0])

    def below_half(w: float) -> float:
        _, h = freqs(num, den, worN=[w])
        return float(abs(h[0]) ** 2 - 0.5)

    w0 = 1 / (r1 * c1)
    grid = np.logspace(math.log10(w0) - 6, math.log10(w0) + 6, 2000)
    _, h = freqs(num, den, worN=grid)
    first = int(np.argmax(abs(h) ** 2 < 0.5))
    return brentq(below_half, grid[first - 1], grid[first], xtol=1e-300, rtol=1e-15) / (2 * math.pi)


def reference_error(**scaled: float) -> float:
    values = {**NOMINAL, **scaled}
    formula = 1 / (2 * math.pi * values["R1"] * values["C1"])
    return formula / reference_cutoff(values["R1"], values["C1"], values["R2"], values["C2"]) - 1


LIMITS = {("R1", "0"), ("C1", "oo"), ("R2", "oo"), ("C2", "0")}


def test_the_unloaded_formula_holds_as_each_part_makes_the_load_negligible():
    (finding,) = run_text(SHEET).audit
    assert finding.verdict == "differs"
    assert set(finding.holds_when) == {f"{name} -> {towards}" for name, towards in LIMITS}
    assert_allclose(finding.nominal_error, reference_error(), rtol=1e-9)


@pytest.mark.parametrize("name", sorted(NOMINAL))
@pytest.mark.parametrize("towards", ["0", "oo"])
def test_each_reported_limit_is_one_where_the_reference_error_vanishes(name, towards):
    # Along a reported limit the reference error falls by orders of magnitude; along
    # the others it stays near its own non-zero limit.
    factor = 1e-6 if towards == "0" else 1e6
    near, far = (
        abs(reference_error(**{name: NOMINAL[name] * factor**0.5})),
        abs(reference_error(**{name: NOMINAL[name] * factor})),
    )
    if (name, towards) in LIMITS:
        assert far < 1e-6 and far < near
    else:
        assert far > 1e-3

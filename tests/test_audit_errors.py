"""How wrong a formula is, and where it holds, against references written in the test.

Item 5 of the formula audit (nominal error, certified worst case, Monte Carlo moments,
spread without expression) and item 4 (the conditions, at every frequency) on an
invented buck-converter output filter: the supplier's formula leaves out the inductor's
series resistance. References: the filter's network function by the voltage-divider rule
(any circuits text, e.g. Alexander & Sadiku, *Fundamentals of Electric Circuits*, 5th ed.,
ch. 9 and 14, from memory) evaluated with numpy; a dense brute-force grid for the worst
cases; numpy sampling written here for the Monte Carlo moments.
"""

from __future__ import annotations

import functools
import math

import numpy as np
from numpy.testing import assert_allclose

from handcheck.audit import audit
from handcheck.circuit.build import build
from handcheck.worksheet.load import loads

LC_FILTER = """
[worksheet]
format = 1
title = "buck output filter"

[parts]
Vsw = { voltage = "5 V", frequency = "20 kHz", nodes = ["sw", "gnd"] }
Resr = { resistor = "30 mohm", range = ["10 mohm", "60 mohm"], nodes = ["sw", "m"] }
Lf = { inductor = "22 uH", tolerance = "20%", nodes = ["m", "out"] }
Cf = { capacitor = "47 uF", tolerance = "10%", nodes = ["out", "gnd"] }
Rload = { resistor = "2 ohm", range = ["1 ohm", "10 ohm"], nodes = ["out", "gnd"] }

[audit]
samples = 20000
seed = 5
distribution = "normal"

[[formula]]
name = "H_note"
quantity = "network_function(voltage(out), voltage(sw))"
expression = "1/(1 + s*Lf/Rload + s^2*Lf*Cf)"

[[formula]]
name = "H_spread"
quantity = "network_function(voltage(out), voltage(sw))"

[[formula]]
name = "Q_note"
quantity = "quality_factor"
expression = "Rload*sqrt(Cf/Lf)"
"""

S = 2j * math.pi * 20e3
BOX = {"Resr": (10e-3, 60e-3), "Lf": (17.6e-6, 26.4e-6), "Cf": (42.3e-6, 51.7e-6), "Rload": (1.0, 10.0)}
NOMINAL = {"Resr": 30e-3, "Lf": 22e-6, "Cf": 47e-6, "Rload": 2.0}


def _true(resr, lf, cf, rload):
    """V_out/V_sw: Rload || 1/(sC) over that plus Resr + sL."""
    shunt = rload / (1 + S * rload * cf)
    return shunt / (shunt + resr + S * lf)


def _note(resr, lf, cf, rload):
    return 1 / (1 + S * lf / rload + S * S * lf * cf)


@functools.cache
def _found() -> dict:
    worksheet = loads(LC_FILTER)
    return {f.name: f for f in audit(worksheet, build(worksheet))}


def _grid(points: int = 21) -> list[np.ndarray]:
    axes = [np.linspace(lo, hi, points) for lo, hi in BOX.values()]
    return [g.ravel() for g in np.meshgrid(*axes, indexing="ij")]


def test_holds_only_as_the_series_resistance_vanishes() -> None:
    # F/T - 1 = Resr (1 + s Cf Rload)/(s^2 Lf Cf Rload + s Lf + Rload) by hand from the
    # two divider expressions: -> 0 as Resr -> 0; as Lf -> oo only where s != 0 (at DC
    # it stays Resr/Rload), so Lf -> oo is no condition at every frequency.
    assert _found()["H_note"].verdict == "differs"
    assert _found()["H_note"].holds_when == ("Resr -> 0",)


def test_nominal_error_is_the_magnitude_ratio_at_the_analysis_frequency() -> None:
    values = NOMINAL.values()
    expected = abs(_note(*values)) / abs(_true(*values)) - 1
    assert_allclose(_found()["H_note"].nominal_error, expected, rtol=1e-9)
    assert _found()["H_note"].error_frequency == 20e3


def test_worst_case_against_a_dense_grid() -> None:
    # brute force: 21^4 points of the box, corners included; the certified bounds must
    # enclose every grid value, and the extremes found must be no better than the grid's.
    columns = _grid()
    errors = np.abs(_note(*columns)) / np.abs(_true(*columns)) - 1
    worst = _found()["H_note"].worst_case
    assert worst.method == "ball arithmetic" and worst.complete
    low, high = worst.bounds
    assert low <= errors.min() * (1 + 1e-9) and high >= errors.max() * (1 - 1e-9)
    assert worst.low <= errors.min() * (1 + 1e-9) and worst.high >= errors.max() * (1 - 1e-9)
    assert_allclose([worst.low, worst.high], [errors.min(), errors.max()], rtol=1e-6)
    at = dict(worst.at)
    assert_allclose(abs(_note(*at.values())) / abs(_true(*at.values())) - 1, worst.high, rtol=1e-9)


def test_spread_without_expression_against_a_dense_grid() -> None:
    columns = _grid()
    spread = np.abs(_true(*columns)) / abs(_true(*NOMINAL.values())) - 1
    worst = _found()["H_spread"].worst_case
    assert _found()["H_spread"].verdict == "spread"
    assert_allclose([worst.low, worst.high], [spread.min(), spread.max()], rtol=1e-6)


def _normal_draws(samples: int, seed: int) -> list[np.ndarray]:
    # numpy sampling written here: one normal array per symbol in [parts] order, the
    # range as +-3 standard deviations around its middle
    rng = np.random.default_rng(seed)
    return [rng.normal((lo + hi) / 2, (hi - lo) / 6, samples) for lo, hi in BOX.values()]


def test_monte_carlo_moments_against_numpy_sampling() -> None:
    columns = _normal_draws(20000, 5)
    for name, errors in (
        ("H_note", np.abs(_note(*columns)) / np.abs(_true(*columns)) - 1),
        ("H_spread", np.abs(_true(*columns)) / abs(_true(*NOMINAL.values())) - 1),
    ):
        mc = _found()[name].monte_carlo
        assert mc.samples == 20000 and mc.distribution == "normal" and mc.seed == 5
        assert_allclose(
            [mc.mean, mc.std, mc.p01, mc.p99],
            [errors.mean(), errors.std(ddof=1), np.percentile(errors, 1), np.percentile(errors, 99)],
            rtol=1e-7,
        )


def test_quality_factor_against_its_closed_form() -> None:
    # Q = sqrt(a0 a2)/a1 of the denominator a2 s^2 + a1 s + a0 (second-order section,
    # from memory): a2 = Lf Cf Rload, a1 = Lf + Cf Resr Rload, a0 = Resr + Rload.
    found = _found()["Q_note"]
    assert found.holds_when == ("Resr -> 0",)
    assert found.true_expression == "sqrt(Cf*Lf*Rload*(Resr + Rload))/(Cf*Resr*Rload + Lf)"
    resr, lf, cf, rload = _grid(9)
    q = np.sqrt((resr + rload) * lf * cf * rload) / (lf + cf * resr * rload)
    errors = rload * np.sqrt(cf / lf) / q - 1
    worst = found.worst_case
    assert_allclose([worst.low, worst.high], [errors.min(), errors.max()], rtol=1e-6)


# An RC snubber across a relay coil (invented): the supplier's damping ratio leaves out
# the coil's resistance. The loop's denominator is Cs Lc s^2 + Cs (Rc + Rs) s + 1 (two
# impedances in parallel), so zeta = a1/(2 sqrt(a0 a2)) = (Rc + Rs) sqrt(Cs/Lc)/2
# (second-order section, from memory).
SNUBBER = """
[worksheet]
format = 1
title = "relay coil snubber"

[parts]
Is = { current = "0.1 A", nodes = ["gnd", "a"] }
Rc = { resistor = "240 ohm", tolerance = "10%", nodes = ["a", "m"] }
Lc = { inductor = "150 mH", tolerance = "20%", nodes = ["m", "gnd"] }
Rs = { resistor = "470 ohm", tolerance = "5%", nodes = ["a", "k"] }
Cs = { capacitor = "100 nF", tolerance = "10%", nodes = ["k", "gnd"] }

[audit]
samples = 1000

[[formula]]
name = "zeta_note"
quantity = "damping_ratio"
expression = "Rs/2*sqrt(Cs/Lc)"
"""


def test_snubber_damping_shown_with_its_square_factor_outside_the_root() -> None:
    import sympy

    worksheet = loads(SNUBBER)
    (found,) = audit(worksheet, build(worksheet))
    rc, lc, rs, cs = sympy.symbols("Rc Lc Rs Cs")
    assert found.true_expression == str((rc + rs) * sympy.sqrt(cs / lc) / 2)
    assert found.holds_when == ("Rc -> 0", "Rs -> oo")
    assert_allclose(found.nominal_error, 470 / (240 + 470) - 1, rtol=1e-12)
    # the error Rs/(Rc + Rs) - 1 is monotone: its extremes at the resistors' ends
    assert_allclose(
        [found.worst_case.low, found.worst_case.high], [446.5 / (264 + 446.5) - 1, 493.5 / (216 + 493.5) - 1], rtol=1e-9
    )

"""The Bode plot: the exact curve against scipy.signal.freqs, its frequency span, and the
claims drawn on it.

References: scipy.signal.freqs (the reference library for H(jw) of a rational
function given by its coefficients) and scipy.signal.buttap (Butterworth prototype
poles); the third-order Butterworth prototype g = 1, 2, 1 (Matthaei, Young & Jones,
"Microwave Filters, Impedance-Matching Networks, and Coupling Structures", 1964,
table 4.05-1, from memory).
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

from handcheck.pipeline import curves_for, run_text
from handcheck.record.bode import bode_figure, frequency_grid, marks, response_at

H = "network_function(voltage(out), voltage(in))"
T = "transfer(voltage(out), voltage(in))"

BUTTERWORTH = """
[worksheet]
format = 1
title = "Third-order Butterworth ladder"
[parts]
Vs = { voltage = "1 V", frequency = "1 rad/s", nodes = ["in", "gnd"] }
Rsrc = { resistor = "1 ohm", nodes = ["in", "a"] }
C1 = { capacitor = "1 F", nodes = ["a", "gnd"] }
L2 = { inductor = "2 H", nodes = ["a", "out"] }
C3 = { capacitor = "1 F", nodes = ["out", "gnd"] }
Rload = { resistor = "1 ohm", nodes = ["out", "gnd"] }
[[step]]
name = "H"
quantity = "network_function(voltage(out), voltage(in))"
claim = "0.5/(s^3 + 2*s^2 + 2*s + 1)"
"""

# A lead network: R1 || C1 in series, R2 to ground. H = (1 + s R1 C1)/(1 + R1/R2 + s R1 C1),
# zero at 1/(R1 C1) = 1000 rad/s, pole at (R1 + R2)/(R1 R2 C1) = 101000 rad/s (circuit
# analysis from memory; the numbers checked against scipy below).
LEAD = """
[worksheet]
format = 1
title = "Lead network ahead of a comparator"
[parts]
Vin = { voltage = "1 V", frequency = "1 kHz", nodes = ["in", "gnd"] }
R1 = { resistor = "100 kohm", nodes = ["in", "out"] }
C1 = { capacitor = "10 nF", nodes = ["in", "out"] }
R2 = { resistor = "1 kohm", nodes = ["out", "gnd"] }
[[step]]
name = "T1k"
quantity = "transfer(voltage(out), voltage(in))"
claim = "0.0140 /_ 45 deg"
[[step]]
name = "g100k"
quantity = 'magnitude(at_frequency(transfer(voltage(out), voltage(in)), "100 kHz"))'
claim = "-3.1 dB"
[[step]]
name = "ph"
quantity = 'phase(at_frequency(transfer(voltage(out), voltage(in)), "10 kHz"))'
claim = "70 deg"
[[step]]
name = "z"
quantity = "zeros(network_function(voltage(out), voltage(in)))"
claim = "-1000 rad/s"
[[step]]
name = "fc"
quantity = "cutoff_frequency(transfer(voltage(out), voltage(in)))"
claim = "16 kHz"
"""


def _curves(text: str) -> tuple:
    result = run_text(text)
    return result.report, curves_for(result.report, result.exact)


def _floats(coefficients: tuple) -> tuple[float, ...]:
    return tuple(float(c) for c in coefficients)


@pytest.mark.parametrize("text", [BUTTERWORTH, LEAD], ids=["butterworth", "lead"])
def test_exact_curve_matches_scipy_freqs(text: str) -> None:
    from scipy.signal import freqs

    _, curves = _curves(text)
    assert len(curves) == 1
    num, den = _floats(curves[0].num), _floats(curves[0].den)
    w = 2 * np.pi * frequency_grid(num, den, [])
    _, reference = freqs(num, den, worN=w)
    assert_allclose(response_at(num, den, w), reference, rtol=1e-10)


def test_butterworth_coefficients_and_grid_span_the_poles() -> None:
    from scipy.signal import buttap

    _, (curve,) = _curves(BUTTERWORTH)
    num, den = _floats(curve.num), _floats(curve.den)
    lead = den[0]
    assert_allclose(np.array(den) / lead, [1, 2, 2, 1], rtol=1e-15)
    assert_allclose(np.array(num) / lead, [0.5], rtol=1e-15)
    poles = np.roots(den)
    _, reference_poles, _ = buttap(3)
    assert_allclose(np.sort_complex(poles), np.sort_complex(reference_poles), atol=1e-12)
    grid = frequency_grid(num, den, [])
    sizes = np.abs(poles) / (2 * math.pi)
    assert grid[0] <= sizes.min() / 10 * (1 + 1e-12)
    assert grid[-1] >= sizes.max() * 10 * (1 - 1e-12)


def test_grid_spans_a_zero_and_a_pole_two_decades_apart() -> None:
    _, (curve,) = _curves(LEAD)
    num, den = _floats(curve.num), _floats(curve.den)
    grid = frequency_grid(num, den, [])
    assert_allclose(grid[0], 1000 / (2 * math.pi) / 10, rtol=1e-9)
    assert_allclose(grid[-1], 101000 / (2 * math.pi) * 10, rtol=1e-9)


def _lines(axis: object) -> list:
    return list(axis.get_lines())  # type: ignore[attr-defined]


def _has_point(axis: object, x: float, y: float) -> bool:
    for line in _lines(axis):
        xs, ys = np.asarray(line.get_xdata(), float), np.asarray(line.get_ydata(), float)
        if xs.size == 1 and math.isclose(xs[0], x, rel_tol=1e-9) and math.isclose(ys[0], y, rel_tol=1e-6):
            return True
    return False


def _has_vertical(axis: object, x: float) -> bool:
    for line in _lines(axis):
        xs = np.asarray(line.get_xdata(), float)
        if xs.size == 2 and xs[0] == xs[1] and math.isclose(xs[0], x, rel_tol=1e-9):
            return True
    return False


def test_figure_carries_every_claim() -> None:
    report, curves = _curves(LEAD)
    found = {(m.step, m.kind) for m in marks(report, curves[0])}
    assert found == {
        ("T1k", "point"),
        ("g100k", "magnitude"),
        ("ph", "phase"),
        ("z", "zero"),
        ("fc", "frequency"),
        ("fc", "exact-frequency"),
    }
    figure = bode_figure(report, curves)
    magnitude, phase = figure.axes[0], figure.axes[1]
    assert _has_point(magnitude, 1000.0, 20 * math.log10(0.0140))
    assert _has_point(phase, 1000.0, 45.0)
    assert _has_point(magnitude, 100000.0, -3.1)
    assert _has_point(phase, 10000.0, 70.0)
    assert _has_vertical(magnitude, 16000.0) and _has_vertical(phase, 16000.0)
    # the zero at its size, 1000 rad/s, sits on the exact curve
    h = abs((1 + 1j) / (1 + 100 + 1j))
    assert _has_point(magnitude, 1000 / (2 * math.pi), 20 * math.log10(h))
    import matplotlib.pyplot as plt

    plt.close(figure)


def test_claimed_function_is_drawn_dashed_beside_the_exact_one() -> None:
    report, curves = _curves(BUTTERWORTH.replace("2*s + 1)", "2.4*s + 1)"))
    figure = bode_figure(report, curves)
    magnitude = figure.axes[0]
    styles = {line.get_label(): line.get_linestyle() for line in _lines(magnitude)}
    assert styles["exact"] == "-" and styles["H claimed"] == "--"
    claimed = next(line for line in _lines(magnitude) if line.get_label() == "H claimed")
    exact = next(line for line in _lines(magnitude) if line.get_label() == "exact")
    # the two differ where the wrong coefficient matters, near 1 rad/s
    assert np.max(np.abs(claimed.get_ydata() - exact.get_ydata())) > 0.5
    import matplotlib.pyplot as plt

    plt.close(figure)


def test_no_curve_without_a_network_function() -> None:
    text = LEAD.split("[[step]]", maxsplit=1)[0] + '[[step]]\nname = "v"\nquantity = "voltage(out)"\nclaim = "0.01 V"\n'
    _, curves = _curves(text)
    assert curves == ()


@pytest.mark.slow  # draws and writes Bode figures
def test_check_plot_writes_the_bode_plot_and_the_record_carries_it(tmp_path: Path) -> None:
    from handcheck.cli import main

    sheet = tmp_path / "lead.toml"
    sheet.write_text(LEAD, encoding="utf-8")
    main(["check", str(sheet), "--plot", str(tmp_path / "lead.png")])
    assert (tmp_path / "lead-bode.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    main(["record", str(sheet), "-o", str(tmp_path / "lead.html"), "--no-evidence"])
    html = (tmp_path / "lead.html").read_text(encoding="utf-8")
    assert "Frequency response of the exact network function voltage(out) / voltage(in)" in html
    assert html.count("<svg") == 1


# A parallel tank seen from node a: (R1 + sL1) in parallel with 1/(sC1), so
# Z(s) = (s L1 + R1) / (s^2 L1 C1 + s R1 C1 + 1) (series and parallel impedances,
# Alexander & Sadiku, Fundamentals of Electric Circuits, 5th ed., section 9.7, from
# memory); Rs and the zeroed source Vs (a short) sit outside the node pair a-gnd only
# through Rs, which is in parallel: Z_a = Rs || Z_tank.
TANK = """
[worksheet]
format = 1
title = "Input impedance of a tank behind a resistor"
[parts]
Vs = { voltage = "1 V", frequency = "1 kHz", nodes = ["in", "gnd"] }
Rs = { resistor = "50 ohm", nodes = ["in", "a"] }
R1 = { resistor = "10 ohm", nodes = ["a", "b"] }
L1 = { inductor = "1 mH", nodes = ["b", "gnd"] }
C1 = { capacitor = "1 uF", nodes = ["a", "gnd"] }
[[step]]
name = "Za"
quantity = "impedance(a, gnd)"
claim = "10.5 + 7j ohm"
[[step]]
name = "f0"
quantity = "resonant_frequency(impedance(a))"
claim = "5 kHz"
[[step]]
name = "XL"
quantity = "impedance(L1)"
claim = "6.28j ohm"
"""


def test_an_impedance_is_plotted_in_ohm_not_as_a_gain() -> None:
    from scipy.signal import freqs

    report, curves = _curves(TANK)
    # impedance(a, gnd) and impedance(a) are one Z; a part's own impedance draws no curve
    assert len(curves) == 1 and curves[0].unit == "ohm"
    r1, l1, c1, rs = 10.0, 1e-3, 1e-6, 50.0
    tank_num, tank_den = np.array([l1, r1]), np.array([l1 * c1, r1 * c1, 1.0])
    # Z = Rs*Zt/(Rs + Zt) = Rs*N / (Rs*D + N)
    num, den = rs * tank_num, np.polyadd(rs * tank_den, tank_num)
    figure = bode_figure(report, curves)
    magnitude, phase = figure.axes[0], figure.axes[1]
    assert magnitude.get_ylabel() == "abs(Z) [ohm]" and magnitude.get_yscale() == "log"
    assert "dB" not in magnitude.get_title() + magnitude.get_ylabel()
    exact = next(line for line in _lines(magnitude) if line.get_label() == "exact")
    hz = np.asarray(exact.get_xdata())
    _, reference = freqs(num, den, worN=2 * np.pi * hz)
    assert_allclose(exact.get_ydata(), np.abs(reference), rtol=1e-9)
    # the claimed phasor at the analysis frequency, at its size in ohm
    assert _has_point(magnitude, 1000.0, abs(10.5 + 7j))
    assert _has_point(phase, 1000.0, math.degrees(math.atan2(7, 10.5)))
    found = {(m.step, m.kind) for m in marks(report, curves[0])}
    assert found == {("Za", "point"), ("f0", "frequency"), ("f0", "exact-frequency")}
    assert _has_vertical(magnitude, 5000.0)
    import matplotlib.pyplot as plt

    plt.close(figure)


def test_a_ratio_of_a_voltage_to_a_current_is_drawn_as_an_impedance() -> None:
    from scipy.signal import freqs

    # v(a)/i(Rs): the current through Rs all flows into the tank, so the ratio is the
    # tank's own Z(s) = (s L1 + R1) / (s^2 L1 C1 + s R1 C1 + 1), in ohm
    text = TANK.split("[[step]]", maxsplit=1)[0] + (
        '[[step]]\nname = "Zt"\nquantity = "transfer(voltage(a), current(Rs))"\nclaim = "10.5 ohm /_ 34 deg"\n'
    )
    report, curves = _curves(text)
    assert len(curves) == 1 and curves[0].unit == "ohm"
    figure = bode_figure(report, curves)
    magnitude = figure.axes[0]
    assert magnitude.get_ylabel() == "abs(Z) [ohm]"
    assert magnitude.get_title() == "Z = voltage(a) / current(Rs) [ohm]"
    exact = next(line for line in _lines(magnitude) if line.get_label() == "exact")
    hz = np.asarray(exact.get_xdata())
    _, reference = freqs([1e-3, 10.0], [1e-9, 1e-5, 1.0], worN=2 * np.pi * hz)
    assert_allclose(exact.get_ydata(), np.abs(reference), rtol=1e-9)
    assert _has_point(magnitude, 1000.0, 10.5)
    import matplotlib.pyplot as plt

    plt.close(figure)


@pytest.mark.slow  # draws and writes Bode figures
def test_several_curves_stack_to_the_width_of_a_page_and_the_record_has_one_figure_each(tmp_path: Path) -> None:
    from handcheck.cli import main

    # the lead network's transfer function and its output impedance: two curves; the
    # input impedance is identically 0 (the zeroed source shorts node in) and draws none
    text = LEAD + (
        '[[step]]\nname = "Zout"\nquantity = "impedance(out)"\nclaim = "1 kohm"\n'
        '[[step]]\nname = "Zin"\nquantity = "impedance(in)"\nclaim = "1 ohm"\n'
    )
    report, curves = _curves(text)
    assert [c.unit for c in curves] == ["", "ohm"]
    figure = bode_figure(report, curves)
    # A4 text width 210 mm less 2 x 14 mm margins = 7.17 in (common practice)
    assert figure.get_size_inches()[0] <= 7.17
    import matplotlib.pyplot as plt

    plt.close(figure)
    sheet = tmp_path / "lead.toml"
    sheet.write_text(text.replace("1 kohm", "1.01 kohm"), encoding="utf-8")
    main(["record", str(sheet), "-o", str(tmp_path / "lead.html"), "--no-evidence"])
    html = (tmp_path / "lead.html").read_text(encoding="utf-8")
    assert html.count("Frequency response of the exact network function") == 2
    widths = [float(w) for w in re.findall(r'<svg [^>]*width="([0-9.]+)pt"', html)]
    assert len(widths) == 2 and all(w <= 7.17 * 72 for w in widths)

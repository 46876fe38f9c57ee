"""Network functions, poles, zeros and frequencies against outside references.

Each reference is named beside its check: filter prototype closed forms and tables,
textbook results for the series RLC circuit and the Sallen-Key stage, and
scipy.signal (tf2zpk, freqs, buttap) as the reference library.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy
from numpy.testing import assert_allclose

import handcheck
from handcheck.verify.findings import StepFinding


def run(parts: str, steps: list[tuple[str, str, str]], header: str = "") -> dict[str, StepFinding]:
    lines = ["[worksheet]", "format = 1", 'title = "reference"', header, "[parts]", parts]
    for name, quantity, claim in steps:
        quoted = quantity.replace('"', '\\"')
        lines += ["[[step]]", f'name = "{name}"', f'quantity = "{quoted}"', f'claim = "{claim}"']
    report = handcheck.check(handcheck.loads("\n".join(lines), "<reference>"))
    return {step.name: step for step in report.steps}


def si(step: StepFinding) -> complex:
    assert step.expected_si is not None
    return complex(*step.expected_si)


def ladder(g: tuple[str, str, str], omega: str = "1") -> str:
    """Doubly terminated third-order low-pass ladder (1 ohm each end): shunt C, series L, shunt C."""
    return f"""
Vs = {{ voltage = "1 V", frequency = "{omega} rad/s", nodes = ["in", "gnd"] }}
Rsrc = {{ resistor = "1 ohm", nodes = ["in", "a"] }}
C1 = {{ capacitor = "{g[0]} F", nodes = ["a", "gnd"] }}
L2 = {{ inductor = "{g[1]} H", nodes = ["a", "out"] }}
C3 = {{ capacitor = "{g[2]} F", nodes = ["out", "gnd"] }}
Rload = {{ resistor = "1 ohm", nodes = ["out", "gnd"] }}
"""


H = "network_function(voltage(out), voltage(in))"


def test_butterworth_third_order_prototype() -> None:
    # Butterworth prototype g = 1, 2, 1 (Matthaei, Young & Jones, "Microwave Filters,
    # Impedance-Matching Networks, and Coupling Structures", 1964, table 4.05-1, from
    # memory): H(s) = (1/2)/(s^3 + 2s^2 + 2s + 1), |H(jw)| = (1/2)/sqrt(1 + w^6),
    # cutoff 1 rad/s, poles on the unit circle (scipy.signal.buttap).
    from scipy.signal import buttap

    found = run(
        ladder(("1", "2", "1")),
        [
            ("Hs", H, "0.5/(s^3 + 2*s^2 + 2*s + 1)"),
            ("fc", f"cutoff_frequency({H})", "0.1592 Hz"),
            ("pl", f"poles({H})", "-1, -0.5 + 0.866j, -0.5 - 0.866j rad/s"),
            ("g0", f"dc_gain({H})", "0.5"),
            ("ghf", f"hf_gain({H})", "0"),
            *[
                (
                    f"m{k}",
                    f'magnitude(at_frequency(transfer(voltage(out), voltage(in)), "{w} rad/s"))',
                    f"{0.5 / math.sqrt(1 + w**6):.6f}",
                )
                for k, w in enumerate((0.25, 0.5, 1.0, 2.0, 4.0))
            ],
        ],
    )
    assert all(step.verdict == "agrees" for step in found.values()), {k: v.verdict for k, v in found.items()}
    assert found["Hs"].message == "the same rational function of s, exactly"
    assert sympy.simplify(found["fc"].exact - 1 / (2 * sympy.pi)) == 0
    _, poles, _ = buttap(3)
    got = [complex(sympy.N(p, 20)) for p in found["pl"].exact]
    assert_allclose(
        sorted(poles, key=lambda p: (p.real, p.imag)), sorted(got, key=lambda p: (p.real, p.imag)), atol=1e-12
    )
    for k, w in enumerate((0.25, 0.5, 1.0, 2.0, 4.0)):
        assert_allclose(si(found[f"m{k}"]).real, 0.5 / math.sqrt(1 + w**6), rtol=1e-12)


def test_a_network_function_that_differs_is_found_on_the_grid() -> None:
    found = run(
        ladder(("1", "2", "1")),
        [("wrong", H, "0.5/(s^3 + 2*s^2 + 3*s + 1)"), ("pct", H, "0.5/(s^3 + 2*s^2 + 2*s + 1.001)")],
    )
    assert found["wrong"].verdict == "differs"
    assert found["pct"].verdict == "differs"


def test_chebyshev_half_db_ripple_third_order() -> None:
    # 0.5 dB ripple Chebyshev prototype, n = 3: g1 = g3 = 1.5963, g2 = 1.0967 (Matthaei,
    # Young & Jones, 1964, table 4.05-2(a), from memory). At the band edge w = 1 rad/s
    # the response is 0.5 dB below its peak (1/2 for 1 ohm terminations); the -3 dB
    # frequency is cosh(acosh(1/eps)/n), eps = sqrt(10^(0.05) - 1) (Williams & Taylor,
    # "Electronic Filter Design Handbook", 4th ed., ch. 2, from memory).
    eps = math.sqrt(10**0.05 - 1)
    w3 = math.cosh(math.acosh(1 / eps) / 3)
    found = run(
        ladder(("1.5963", "1.0967", "1.5963")),
        [
            ("edge", 'magnitude(at_frequency(transfer(voltage(out), voltage(in)), "1 rad/s"))', "-6.52 dB"),
            ("fc", f"cutoff_frequency({H})", f"{w3 / (2 * math.pi):.4f} Hz"),
            ("g0", f"dc_gain({H})", "0.5"),
        ],
    )
    assert_allclose(si(found["edge"]).real, 0.5 * 10 ** (-0.5 / 20), rtol=2e-4)  # table to 4 digits
    assert_allclose(si(found["fc"]).real, w3 / (2 * math.pi), rtol=2e-4)
    assert found["edge"].verdict == found["fc"].verdict == found["g0"].verdict == "agrees"


SERIES_RLC = """
Vs = { voltage = "1 V", frequency = "1 kHz", nodes = ["in", "gnd"] }
Lr = { inductor = "10 mH", nodes = ["in", "m"] }
Cr = { capacitor = "2.2 uF", nodes = ["m", "out"] }
Rr = { resistor = "15 ohm", nodes = ["out", "gnd"] }
"""


def test_series_rlc_band_pass_bandwidth_and_q() -> None:
    # Series RLC band-pass across R: f0 = 1/(2 pi sqrt(LC)), bandwidth R/(2 pi L),
    # Q = f0/BW = (1/R) sqrt(L/C) (Alexander & Sadiku, 5th ed., sec. 14.5, from memory).
    ind, c, r = sympy.Rational(1, 100), sympy.Rational(22, 10**7), sympy.Integer(15)
    f0 = 1 / (2 * sympy.pi * sympy.sqrt(ind * c))
    bw = r / (2 * sympy.pi * ind)
    found = run(
        SERIES_RLC,
        [
            ("f0", "peak_frequency(transfer(voltage(out), voltage(in)))", f"{float(f0):.5g} Hz"),
            ("fr", "resonant_frequency(without(impedance(in, gnd), Vs))", f"{float(f0):.5g} Hz"),
            ("BW", "bandwidth(transfer(voltage(out), voltage(in)))", f"{float(bw):.5g} Hz"),
            ("edges", "band_edges(transfer(voltage(out), voltage(in)))", "1 kHz, 2 kHz"),
            ("g0", "dc_gain(transfer(voltage(out), voltage(in)))", "0"),
        ],
    )
    assert sympy.simplify(found["f0"].exact - f0) == 0
    assert sympy.simplify(found["fr"].exact - f0) == 0
    assert sympy.simplify(found["BW"].exact - bw) == 0
    low, high = (float(sympy.N(e, 20)) for e in found["edges"].exact)
    assert_allclose(math.sqrt(low * high), float(f0), rtol=1e-12)  # edges are geometric about f0
    assert_allclose(float(f0) / (high - low), float(sympy.sqrt(ind / c) / r), rtol=1e-12)
    assert found["f0"].verdict == found["fr"].verdict == found["BW"].verdict == "agrees"
    assert found["edges"].verdict == "differs"


SALLEN_KEY = """
Vs = { voltage = "1 V", frequency = "1 kHz", nodes = ["in", "gnd"] }
R1 = { resistor = "10 kohm", nodes = ["in", "a"] }
R2 = { resistor = "10 kohm", nodes = ["a", "b"] }
C1 = { capacitor = "22 nF", nodes = ["a", "out"] }
C2 = { capacitor = "10 nF", nodes = ["b", "gnd"] }
buf = { opamp = "ideal", nodes = ["out", "b", "out"] }
"""


def test_sallen_key_against_scipy_signal() -> None:
    # Unity-gain Sallen-Key low-pass: H(s) = 1/(R1 R2 C1 C2 s^2 + C2 (R1 + R2) s + 1)
    # (Sallen & Key, IRE Trans. Circuit Theory, 1955; form as in Horowitz & Hill, 3rd
    # ed., sec. 6.3, from memory). Reference responses, poles: scipy.signal.
    from scipy.signal import freqs, tf2zpk

    r1 = r2 = 10e3
    c1, c2 = 22e-9, 10e-9
    den = [r1 * r2 * c1 * c2, c2 * (r1 + r2), 1.0]
    _, poles, _ = tf2zpk([1.0], den)
    # -3 dB point of the reference: |H|^2 = 1/2 solved as a polynomial in x = w^2
    a, b = den[0], den[1]
    x = np.roots([a * a, b * b - 2 * a, 1 - 2])
    wc = math.sqrt(max(r.real for r in x if abs(r.imag) < 1e-9 and r.real > 0))
    _, at_wc = freqs([1.0], den, worN=[wc])
    found = run(
        SALLEN_KEY,
        [
            (
                "pl",
                f"poles({H})",
                ", ".join(f"{p.real:.6g} {'+' if p.imag >= 0 else '-'} {abs(p.imag):.6g}j" for p in poles) + " rad/s",
            ),
            ("fc", f"cutoff_frequency({H})", f"{wc / (2 * math.pi):.6g} Hz"),
            ("w0", "natural_frequency", f"{1 / math.sqrt(a):.6g} rad/s"),
            # the same H with its coefficients rounded to 5 digits: agrees within those digits
            ("Hr", H, "4.5455e7/(s^2 + 9090.9*s + 4.5455e7)"),
            ("Hw", H, "4.5455e7/(s^2 + 9990.9*s + 4.5455e7)"),
        ],
    )
    assert found["Hr"].verdict == "agrees", found["Hr"].message
    assert found["Hw"].verdict == "differs"
    got = sorted((complex(sympy.N(p, 20)) for p in found["pl"].exact), key=lambda p: p.imag)
    assert_allclose(got, sorted(poles, key=lambda p: p.imag), rtol=1e-12)
    assert_allclose(si(found["fc"]).real, wc / (2 * math.pi), rtol=1e-12)
    assert_allclose(abs(at_wc[0]), 1 / math.sqrt(2), rtol=1e-12)
    assert found["pl"].verdict == found["fc"].verdict == "agrees"
    assert_allclose(si(found["w0"]).real, 1 / math.sqrt(a), rtol=1e-12)


@pytest.mark.parametrize(
    "quantity, message",
    [
        (f"band_edges({H})", "no peak"),
        ("cutoff_frequency(voltage(out))", "no network function"),
        ("dc_gain(network_function(voltage(out), current(Vs), voltage(in)))", "no network function"),
    ],
)
def test_questions_a_response_cannot_answer(quantity: str, message: str) -> None:
    with pytest.raises(handcheck.HandcheckError, match=message):
        run(ladder(("1", "2", "1")), [("x", quantity, "1 Hz")])


def test_a_network_function_is_shown_in_the_authors_form_with_scipy_normalised_coefficients():
    # Series RLC, output across C: H = 1/(LC) / (s^2 + (R/L) s + 1/(LC)) (Alexander &
    # Sadiku, 5th ed., section 14.4, from memory); scipy.signal.normalize makes the
    # denominator monic, as the expected value is shown.
    from scipy import signal

    r, ind, c = 100.0, 0.1, 10e-6
    b, a = signal.normalize([2.0 / (ind * c)], [2.0, 2.0 * r / ind, 2.0 / (ind * c)])
    parts = "\n".join(
        [
            'Vin = { voltage = "1 V", frequency = "100 Hz", nodes = ["in", "gnd"] }',
            'Rs = { resistor = "100 ohm", nodes = ["in", "m"] }',
            'Ls = { inductor = "100 mH", nodes = ["m", "out"] }',
            'Cs = { capacitor = "10 uF", nodes = ["out", "gnd"] }',
        ]
    )
    steps = run(parts, [("H", "network_function(voltage(out), voltage(in))", "1e6/(s^2 + 1000*s + 1e6)")])
    shown = f"{round(b[0])}/(s^2 + {round(a[1])}*s + {round(a[2])})"
    assert steps["H"].expected == shown == "1000000/(s^2 + 1000*s + 1000000)"
    assert steps["H"].verdict == "agrees"


@pytest.mark.parametrize(
    "quantity",
    [
        "magnitude(network_function(voltage(out), voltage(in)))",
        "phase(network_function(voltage(out), voltage(in)))",
        'at_frequency(network_function(voltage(out), voltage(in)), "1 kHz")',
    ],
)
def test_a_phasor_function_of_a_network_function_says_what_to_write(quantity):
    # Common practice: a function of s has no single magnitude; the message names transfer().
    parts = "\n".join(
        [
            'Vin = { voltage = "1 V", frequency = "100 Hz", nodes = ["in", "gnd"] }',
            'R1 = { resistor = "1 kohm", nodes = ["in", "out"] }',
            'C1 = { capacitor = "1 uF", nodes = ["out", "gnd"] }',
        ]
    )
    with pytest.raises(
        handcheck.HandcheckError, match=r"network_function\(\.\.\.\) is a function of s|transfer\("
    ) as info:
        run(parts, [("H", quantity, "0.5")])
    assert "transfer(" in str(info.value) and "not a finite number" not in str(info.value)


def test_a_network_function_with_an_irrational_mutual_inductance_is_exact():
    # M = k sqrt(L1 L2) = 0.5 sqrt(2) mH is irrational. Closed form of two coupled coils,
    # the secondary loaded by R2: H = s M R2 / ((R1 + s L1)(R2 + s L2) - s^2 M^2)
    # (Nilsson & Riedel, Electric Circuits, 10th ed., section 9.10, from memory),
    # checked against a numpy solve of the nodal equations at two frequencies.
    r1, r2, l1, l2 = 10.0, 50.0, 1e-3, 2e-3
    m = 0.5 * math.sqrt(l1 * l2)
    parts = "\n".join(
        [
            'Vs = { voltage = "1 V", frequency = "1 kHz", nodes = ["a", "gnd"] }',
            'R1 = { resistor = "10 ohm", nodes = ["a", "b"] }',
            'L1 = { inductor = "1 mH", nodes = ["b", "gnd"] }',
            'L2 = { inductor = "2 mH", nodes = ["c", "gnd"] }',
            'link = { coupling = "0.5", inductors = ["L1", "L2"] }',
            'R2 = { resistor = "50 ohm", nodes = ["c", "gnd"] }',
        ]
    )
    a2, a1, a0 = l1 * l2 - m * m, r1 * l2 + r2 * l1, r1 * r2
    claim = f"{m * r2 / a2:.6g}*s/(s^2 + {a1 / a2:.6g}*s + {a0 / a2:.6g})"
    steps = run(parts, [("H", "network_function(voltage(c), voltage(a))", claim)])
    assert steps["H"].verdict == "agrees"
    s = sympy.Symbol("s")
    (symbol,) = steps["H"].exact.free_symbols
    for w in (1e3, 3e4):
        jw = 1j * w
        nodal = np.array(
            [[-1 / r1, 0, -1, 0], [0, -1 / r2, 0, -1], [1, 0, -jw * l1, -jw * m], [0, 1, -jw * m, -jw * l2]]
        )
        vc = np.linalg.solve(nodal, np.array([-1 / r1, 0, 0, 0], dtype=complex))[1]
        exact = complex(steps["H"].exact.subs(symbol, sympy.I * w).evalf(30))
        assert exact == pytest.approx(vc, rel=1e-12)
    assert str(symbol) == str(s)

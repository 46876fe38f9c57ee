"""End-to-end checks of worksheets on circuits whose answers are published or textbook closed forms.

Every reference value is named beside its check. Each worksheet is checked through
the public API (``handcheck.loads`` + ``handcheck.check``): a claim taken from the
reference must get the verdict ``agrees``, the exact value behind the verdict is
compared with the closed form (exactly where the frequency and parts are rational),
and a claim that is off must not agree.
"""

from __future__ import annotations

import mpmath
import numpy as np
import pytest
import sympy
from numpy.testing import assert_allclose

import handcheck
from handcheck.verify.findings import StepFinding

mp = mpmath.MPContext()  # a private context: the global mpmath precision is left alone
mp.dps = 40


def dec(x: object, digits: int = 30) -> str:
    """A decimal string (no exponent) of an mpmath or float value."""
    return mp.nstr(mp.mpf(x), digits, min_fixed=-100, max_fixed=100)


def polar(magnitude: object, degrees: float, unit: str = "") -> str:
    """A polar claim (worksheet format 1): the magnitude to 20 digits, the angle to 1e-12 degree."""
    return f"{dec(magnitude, 20)}{' ' + unit if unit else ''} ∠ {float(degrees):.12f} deg"


def check_steps(text: str) -> dict[str, StepFinding]:
    report = handcheck.check(handcheck.loads(text, "<reference>"))
    return {step.name: step for step in report.steps}


def expected(step: StepFinding) -> complex:
    assert step.expected_si is not None
    return complex(*step.expected_si)


def exactly_equal(a: sympy.Expr, b: sympy.Expr) -> bool:
    return sympy.simplify(a - b) == 0


# ---------------------------------------------------------------------------
# 1. Doubly terminated LC ladder low-pass prototypes (1 ohm source and load, w_c = 1 rad/s)
# ---------------------------------------------------------------------------


def ladder(g: list[str], omega: str, *, shunt_first: bool) -> tuple[dict[str, dict[str, object]], str]:
    """Source EMF V1 at node "in", 1 ohm source resistance, the ladder g1..gn, 1 ohm load.

    Returns the parts and the name of the load node.
    """
    parts: dict[str, dict[str, object]] = {
        "V1": {"voltage": "1 V", "frequency": f"{omega} rad/s", "nodes": ["in", "gnd"]},
        "Rs": {"resistor": "1 ohm", "nodes": ["in", "n1"]},
    }
    node = "n1"
    for k, value in enumerate(g, start=1):
        if (k % 2 == 1) == shunt_first:
            parts[f"C{k}"] = {"capacitor": f"{value} F", "nodes": [node, "gnd"]}
        else:
            after = f"n{k + 1}"
            parts[f"L{k}"] = {"inductor": f"{value} H", "nodes": [node, after]}
            node = after
    parts["RL"] = {"resistor": "1 ohm", "nodes": [node, "gnd"]}
    return parts, node


def ladder_step(parts: dict[str, dict[str, object]], out: str, omega: str, claim: str, make_worksheet) -> StepFinding:
    step = {"name": "H", "quantity": f"transfer(voltage({out}), voltage(in))", "claim": claim}
    return check_steps(make_worksheet(parts, [step], frequency=f"{omega} rad/s"))["H"]


def butterworth_g(n: int) -> list[mp.mpf]:
    # g_k = 2 sin((2k-1) pi / (2n)), k = 1..n, g_{n+1} = 1: Butterworth prototype element values
    # (Matthaei, Young & Jones, Microwave Filters, Impedance-Matching Networks and Coupling
    # Structures, 1964, eq. 4.05-1 and table 4.05-1; Zverev, Handbook of Filter Synthesis, 1967;
    # from memory).
    return [2 * mp.sin((2 * k - 1) * mp.pi / (2 * n)) for k in range(1, n + 1)]


def butterworth_magnitude(n: int, omega: str) -> mp.mpf:
    # |H(jw)| = (1/2) / sqrt(1 + w^(2n)) for the doubly terminated (1 ohm / 1 ohm) Butterworth
    # ladder, H = V_load / V_source EMF: the maximally flat magnitude (same books, from memory)
    # times the 1/2 of the matched divider at w = 0.
    w = mp.mpf(omega)
    return mp.mpf(1) / 2 / mp.sqrt(1 + w ** (2 * n))


def scipy_response(kind: str, n: int, omega: str) -> complex:
    """Half of scipy.signal's analog prototype (DC gain 1 for odd n): the equal-terminated ladder's H."""
    from scipy import signal

    z, p, k = signal.buttap(n) if kind == "butterworth" else signal.cheb1ap(n, 0.5)
    _, h = signal.freqs_zpk(z, p, k, worN=[float(omega)])
    return complex(h[0]) / 2


def ladder_claim(magnitude: object, kind: str, n: int, omega: str, *, scale: str = "1", shift: float = 0) -> str:
    """|H| from the closed form, the phase from scipy.signal (both references); optionally spoilt."""
    degrees = np.degrees(np.angle(scipy_response(kind, n, omega))) + shift
    return polar(mp.mpf(magnitude) * mp.mpf(scale), degrees)


BUTTERWORTH_OMEGAS = ["0.1", "0.5", "0.9", "1", "1.25", "2", "4"]


def test_butterworth_formula_gives_the_tabulated_values():
    # Matthaei, Young & Jones (1964), table 4.05-1 (from memory): n = 3: 1, 2, 1;
    # n = 5: 0.6180, 1.6180, 2.0000, 1.6180, 0.6180. Four decimals, so half a unit in the last place.
    assert_allclose([float(g) for g in butterworth_g(3)], [1.0, 2.0, 1.0], rtol=0, atol=5e-5)
    assert_allclose([float(g) for g in butterworth_g(5)], [0.618, 1.618, 2.0, 1.618, 0.618], rtol=0, atol=5e-5)


@pytest.mark.parametrize("omega", BUTTERWORTH_OMEGAS)
def test_butterworth_n3_ladder_is_exact(omega, make_worksheet):
    # n = 3 has the exact element values 1, 2, 1 (see the table test above).
    parts, out = ladder(["1", "2", "1"], omega, shunt_first=True)
    claim = ladder_claim(butterworth_magnitude(3, omega), "butterworth", 3, omega)
    step = ladder_step(parts, out, omega, claim, make_worksheet)
    assert step.verdict == "agrees", step
    w = sympy.Rational(omega)
    s = sympy.I * w
    # Exact: |H|^2 = 1/4 / (1 + w^6) (Butterworth magnitude, from memory) ...
    assert exactly_equal(step.exact * sympy.conjugate(step.exact), sympy.Rational(1, 4) / (1 + w**6))
    # ... and H(s) = (1/2) / B3(s), B3(s) = (s + 1)(s^2 + s + 1) = s^3 + 2 s^2 + 2 s + 1, the
    # third-order Butterworth polynomial (any filter handbook, e.g. Zverev 1967, from memory).
    assert exactly_equal(step.exact, sympy.Rational(1, 2) / (s**3 + 2 * s**2 + 2 * s + 1))
    # Second reference: scipy.signal.buttap.
    assert_allclose(expected(step), scipy_response("butterworth", 3, omega), rtol=1e-12)


@pytest.mark.parametrize("omega", BUTTERWORTH_OMEGAS)
def test_butterworth_n5_ladder(omega, make_worksheet):
    # n = 5 element values are irrational: written to 30 digits, so the circuit is the prototype
    # to ~1e-30 relative; 20-digit claims and rtol 1e-12 leave a wide margin.
    g = [dec(v, 30) for v in butterworth_g(5)]
    parts, out = ladder(g, omega, shunt_first=False)
    magnitude = butterworth_magnitude(5, omega)
    step = ladder_step(parts, out, omega, ladder_claim(magnitude, "butterworth", 5, omega), make_worksheet)
    assert step.verdict == "agrees", step
    assert_allclose(abs(expected(step)), float(magnitude), rtol=1e-12)
    assert_allclose(expected(step), scipy_response("butterworth", 5, omega), rtol=1e-12)


@pytest.mark.parametrize(("scale", "shift"), [("1.001", 0), ("1", 0.01)])
def test_butterworth_ladder_wrong_claim_is_caught(scale, shift, make_worksheet):
    # A magnitude 0.1% off, or a phase 0.01 degree off, must not agree.
    parts, out = ladder(["1", "2", "1"], "1", shunt_first=True)
    wrong = ladder_claim(butterworth_magnitude(3, "1"), "butterworth", 3, "1", scale=scale, shift=shift)
    step = ladder_step(parts, out, "1", wrong, make_worksheet)
    assert step.verdict == "differs"
    assert_allclose(abs(expected(step)), 0.5 / np.sqrt(2), rtol=1e-14)  # |H(j1)| = 1/2 / sqrt(2): 3 dB point


def chebyshev_g(n: int, ripple_db: float) -> list[mp.mpf]:
    # Chebyshev prototype recursion (Matthaei, Young & Jones, 1964, eq. 4.05-2, from memory):
    # beta = ln(coth(L_Ar / 17.37)), 17.37 = 40 / ln 10; gamma = sinh(beta / (2n));
    # a_k = sin((2k-1) pi / (2n)); b_k = gamma^2 + sin^2(k pi / n);
    # g_1 = 2 a_1 / gamma; g_k = 4 a_{k-1} a_k / (b_{k-1} g_{k-1}); g_{n+1} = 1 for odd n.
    ripple = mp.mpf(ripple_db)
    beta = mp.log(mp.coth(ripple * mp.log(10) / 40))
    gamma = mp.sinh(beta / (2 * n))
    a = [mp.sin((2 * k - 1) * mp.pi / (2 * n)) for k in range(1, n + 1)]
    b = [gamma**2 + mp.sin(k * mp.pi / n) ** 2 for k in range(1, n + 1)]
    g = [2 * a[0] / gamma]
    for k in range(1, n):
        g.append(4 * a[k - 1] * a[k] / (b[k - 1] * g[k - 1]))
    return g


def test_chebyshev_recursion_gives_the_tabulated_values():
    # Matthaei, Young & Jones (1964), table 4.05-2(a), 0.5 dB ripple (from memory):
    # n = 3: 1.5963, 1.0967, 1.5963; n = 5: 1.7058, 1.2296, 2.5408, 1.2296, 1.7058.
    assert_allclose([float(g) for g in chebyshev_g(3, 0.5)], [1.5963, 1.0967, 1.5963], rtol=0, atol=5e-5)
    assert_allclose(
        [float(g) for g in chebyshev_g(5, 0.5)], [1.7058, 1.2296, 2.5408, 1.2296, 1.7058], rtol=0, atol=5e-5
    )


def chebyshev_magnitude(n: int, omega: str) -> mp.mpf:
    # |H|^2 = (1/4) / (1 + eps^2 T_n(w)^2), eps^2 = 10^(ripple/10) - 1 = 10^0.05 - 1 for 0.5 dB:
    # the Chebyshev type I magnitude of an odd-order, equally terminated ladder (Matthaei, Young &
    # Jones 1964, section 4.03, from memory). T_n(w) = cos(n acos w) for |w| <= 1, cosh(n acosh w) above.
    w = mp.mpf(omega)
    t = mp.chebyt(n, w)
    eps2 = mp.power(10, mp.mpf("0.05")) - 1
    return mp.sqrt(mp.mpf(1) / 4 / (1 + eps2 * t**2))


@pytest.mark.parametrize(("n", "shunt_first"), [(3, False), (5, True)])
@pytest.mark.parametrize("omega", ["0.2", "0.5", "0.8", "1", "1.3", "2"])
def test_chebyshev_half_db_ladder(n, shunt_first, omega, make_worksheet):
    g = [dec(v, 30) for v in chebyshev_g(n, 0.5)]
    parts, out = ladder(g, omega, shunt_first=shunt_first)
    magnitude = chebyshev_magnitude(n, omega)
    step = ladder_step(parts, out, omega, ladder_claim(magnitude, "chebyshev", n, omega), make_worksheet)
    assert step.verdict == "agrees", step
    assert_allclose(abs(expected(step)), float(magnitude), rtol=1e-12)
    # Second references: numpy's Chebyshev polynomial and scipy.signal.cheb1ap.
    t = np.polynomial.chebyshev.Chebyshev.basis(n)(float(omega))
    assert_allclose(abs(expected(step)) ** 2, 0.25 / (1 + (10**0.05 - 1) * t**2), rtol=1e-12)
    assert_allclose(expected(step), scipy_response("chebyshev", n, omega), rtol=1e-10)


# ---------------------------------------------------------------------------
# 2. Series and parallel RLC resonance
# Closed forms (Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 14, series and
# parallel resonance, from memory): w0 = 1/sqrt(LC); series Q = w0 L / R, parallel
# Q = R / (w0 L); bandwidth B = w0 / Q; half-power frequencies
# w1,2 = w0 (sqrt(1 + 1/(4 Q^2)) -/+ 1/(2Q)).
# ---------------------------------------------------------------------------

L_SERIES = sympy.Rational(1, 10)  # 0.1 H
C_SERIES = sympy.Rational(1, 10**5)  # 10 uF
W0 = 1 / sympy.sqrt(L_SERIES * C_SERIES)  # 1000 rad/s


def half_power(w0: sympy.Expr, q: sympy.Expr) -> tuple[sympy.Expr, sympy.Expr]:
    root = sympy.sqrt(1 + 1 / (4 * q**2))
    return w0 * (root - 1 / (2 * q)), w0 * (root + 1 / (2 * q))


# R chosen so that 1/(2Q) is a/b of a Pythagorean triple (a, b, c) and w1, w2 are decimals:
# Q = 16000/759 (triple 759, 32000, 32041) and Q = 20/9 (triple 9, 40, 41).
SERIES_CASES = [("4.74375", "976.5625", "1024"), ("45", "800", "1250")]


def series_rlc(omega: str, resistance: str, steps: list[dict[str, str]], make_worksheet) -> dict[str, StepFinding]:
    parts = {
        "V1": {"voltage": "10 V", "frequency": f"{omega} rad/s", "nodes": ["in", "gnd"]},
        "R1": {"resistor": f"{resistance} ohm", "nodes": ["in", "a"]},
        "L1": {"inductor": "0.1 H", "nodes": ["a", "b"]},
        "C1": {"capacitor": "10 uF", "nodes": ["b", "gnd"]},
    }
    return check_steps(make_worksheet(parts, steps, frequency=f"{omega} rad/s"))


@pytest.mark.parametrize(("resistance", "w1", "w2"), SERIES_CASES)
def test_series_rlc_half_power_frequencies_follow_the_closed_form(resistance, w1, w2):
    r = sympy.Rational(resistance)
    q = W0 * L_SERIES / r
    low, high = half_power(W0, q)
    assert W0 == 1000
    assert exactly_equal(low, sympy.Rational(w1))
    assert exactly_equal(high, sympy.Rational(w2))
    assert exactly_equal(high - low, W0 / q)  # B = w0 / Q


@pytest.mark.parametrize(("resistance", "w1", "w2"), SERIES_CASES)
def test_series_rlc_at_resonance(resistance, w1, w2, make_worksheet):
    r = sympy.Rational(resistance)
    steps = [
        {"name": "Z", "quantity": "transfer(voltage(in), current(R1))", "claim": f"{resistance} ohm"},
        {"name": "I", "quantity": "current(R1)", "claim": f"{dec(10 / mp.mpf(resistance), 20)} A"},
        {"name": "P", "quantity": "power(R1)", "claim": f"{dec(50 / mp.mpf(resistance), 20)} W"},
    ]
    found = series_rlc("1000", resistance, steps, make_worksheet)
    assert [s.verdict for s in found.values()] == ["agrees"] * 3, found
    assert exactly_equal(found["Z"].exact, r)  # |Z| = R, purely resistive at w0
    assert exactly_equal(found["I"].exact, 10 / r)  # current in phase with the source voltage
    assert exactly_equal(found["P"].exact, 10**2 / (2 * r))  # P = |V|^2 / (2R), peak phasors


@pytest.mark.parametrize(("resistance", "w1", "w2"), SERIES_CASES)
@pytest.mark.parametrize(("edge", "sign"), [(0, -1), (1, 1)])
def test_series_rlc_at_half_power(resistance, w1, w2, edge, sign, make_worksheet):
    # Below resonance the series circuit is capacitive (Z = R - jR at w1), above it inductive
    # (Z = R + jR at w2); |I| is 1/sqrt(2) of its peak V/R at both.
    r = sympy.Rational(resistance)
    omega = (w1, w2)[edge]
    peak = 10 / mp.mpf(resistance)
    steps = [
        {
            "name": "Z",
            "quantity": "transfer(voltage(in), current(R1))",
            "claim": polar(mp.mpf(resistance) * mp.sqrt(2), 45 * sign, "ohm"),
        },
        {"name": "I", "quantity": "current(R1)", "claim": polar(peak / mp.sqrt(2), -45 * sign, "A")},
    ]
    found = series_rlc(omega, resistance, steps, make_worksheet)
    assert [s.verdict for s in found.values()] == ["agrees"] * 2, found
    assert exactly_equal(found["Z"].exact, r * (1 + sign * sympy.I))
    current = found["I"].exact
    assert exactly_equal(current * sympy.conjugate(current), (10 / r) ** 2 / 2)


PARALLEL_R = mp.mpf(2000)  # Q = R / (w0 L) = 2000 / 100 = 20


def parallel_rlc(omega: str, steps: list[dict[str, str]], make_worksheet) -> dict[str, StepFinding]:
    parts = {
        "I1": {"current": "10 mA", "frequency": f"{omega} rad/s", "nodes": ["gnd", "top"]},
        "R1": {"resistor": "2 kohm", "nodes": ["top", "gnd"]},
        "L1": {"inductor": "0.1 H", "nodes": ["top", "gnd"]},
        "C1": {"capacitor": "10 uF", "nodes": ["top", "gnd"]},
    }
    return check_steps(make_worksheet(parts, steps, frequency=f"{omega} rad/s"))


def test_parallel_rlc_at_resonance(make_worksheet):
    steps = [
        {"name": "Z", "quantity": "impedance(top, gnd)", "claim": "2 kohm"},
        {"name": "V", "quantity": "voltage(top)", "claim": "20 V"},
    ]
    found = parallel_rlc("1000", steps, make_worksheet)
    assert [s.verdict for s in found.values()] == ["agrees"] * 2, found
    assert exactly_equal(found["Z"].exact, 2000)  # Z(w0) = R
    assert exactly_equal(found["V"].exact, sympy.Rational(10, 1000) * 2000)  # V in phase with I


@pytest.mark.parametrize(("edge", "sign"), [(0, 1), (1, -1)])
def test_parallel_rlc_at_half_power(edge, sign, make_worksheet):
    # Q = 20, so w1,2 are irrational: written to 30 digits. Below resonance the parallel
    # circuit is inductive (Z = R(1 + j)/2 at w1), above it capacitive (Z = R(1 - j)/2 at w2).
    w0, q = mp.mpf(1000), PARALLEL_R / (1000 * mp.mpf("0.1"))
    root = mp.sqrt(1 + 1 / (4 * q**2))
    w1, w2 = w0 * (root - 1 / (2 * q)), w0 * (root + 1 / (2 * q))
    assert_allclose(float(w2 - w1), float(w0 / q), rtol=1e-14)  # B = w0 / Q = 50 rad/s
    omega = dec((w1, w2)[edge], 30)
    steps = [
        {
            "name": "Z",
            "quantity": "impedance(top, gnd)",
            "claim": polar(PARALLEL_R / mp.sqrt(2), 45 * sign, "ohm"),
        }
    ]
    found = parallel_rlc(omega, steps, make_worksheet)
    assert found["Z"].verdict == "agrees", found
    assert_allclose(expected(found["Z"]), 1000 * (1 + sign * 1j), rtol=1e-12)


def test_series_rlc_wrong_q_is_caught(make_worksheet):
    # Claiming |Z| = R at a half-power frequency (forgetting the reactance) must not agree.
    found = series_rlc(
        "800",
        "45",
        [{"name": "Z", "quantity": "transfer(voltage(in), current(R1))", "claim": "45 ohm"}],
        make_worksheet,
    )
    assert found["Z"].verdict == "differs"
    assert exactly_equal(found["Z"].exact, 45 - 45 * sympy.I)


# ---------------------------------------------------------------------------
# 3. Wien network: series RC feeding parallel RC, equal R and C.
# H = V_out / V_in = 1 / (3 + j (x - 1/x)), x = w R C, so H = 1/3 exactly at w = 1/(RC)
# (the Wien-bridge oscillator's feedback network; any oscillator text, from memory).
# ---------------------------------------------------------------------------


def wien(frequency: str, claim: str, make_worksheet) -> StepFinding:
    parts = {
        "V1": {"voltage": "1 V", "frequency": frequency, "nodes": ["in", "gnd"]},
        "R1": {"resistor": "10 kohm", "nodes": ["in", "a"]},
        "C1": {"capacitor": "10 nF", "nodes": ["a", "out"]},
        "R2": {"resistor": "10 kohm", "nodes": ["out", "gnd"]},
        "C2": {"capacitor": "10 nF", "nodes": ["out", "gnd"]},
    }
    step = {"name": "H", "quantity": "transfer(voltage(out), voltage(in))", "claim": claim}
    return check_steps(make_worksheet(parts, [step], frequency=frequency))["H"]


RC = sympy.Rational(10**4) * sympy.Rational(1, 10**8)  # 10 kohm * 10 nF = 1e-4 s


def test_wien_network_is_one_third_at_its_frequency(make_worksheet):
    step = wien("10000 rad/s", "0.33333333333333", make_worksheet)
    assert step.verdict == "agrees", step
    assert step.exact == sympy.Rational(1, 3)


@pytest.mark.parametrize("frequency", ["2500 rad/s", "40000 rad/s", "1 kHz"])
def test_wien_network_closed_form(frequency, make_worksheet):
    # "1 kHz" makes w = 2000 pi, transcendental: the exact result must still match the closed form.
    w = sympy.Rational(frequency.split()[0]) if "rad" in frequency else 2 * sympy.pi * 1000
    x = w * RC
    closed = 1 / (3 + sympy.I * (x - 1 / x))
    value = complex(sympy.N(closed, 30))
    step = wien(frequency, polar(abs(value), np.degrees(np.angle(value))), make_worksheet)
    assert step.verdict == "agrees", step
    assert exactly_equal(step.exact, closed)


def test_wien_network_wrong_claim_is_caught(make_worksheet):
    step = wien("10000 rad/s", "0.5", make_worksheet)  # the half of a plain divider, not the Wien 1/3
    assert step.verdict == "differs"

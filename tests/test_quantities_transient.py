"""crossing_time and absorbed_energy (second edition) against outside references.

Each reference is named beside its check: textbook closed forms (from memory where
so) and scipy.integrate (solve_ivp with events, quad) on the circuit's own ODE,
written here by hand from Kirchhoff's laws.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy
from numpy.testing import assert_allclose
from scipy.integrate import quad, solve_ivp

import handcheck
from handcheck.errors import HandcheckError
from handcheck.verify.findings import StepFinding

RC = """
V1 = { voltage = "10 V", nodes = ["in", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["in", "out"] }
C1 = { capacitor = "1 uF", nodes = ["out", "gnd"] }
"""
RLC = """
V1 = { voltage = "1 V", nodes = ["in", "gnd"] }
R1 = { resistor = "100 ohm", nodes = ["in", "m"] }
L1 = { inductor = "100 mH", nodes = ["m", "out"] }
C1 = { capacitor = "10 uF", nodes = ["out", "gnd"] }
"""
LADDER = """
V1 = { voltage = "1 V", nodes = ["in", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["in", "a"] }
C1 = { capacitor = "1 uF", nodes = ["a", "gnd"] }
R2 = { resistor = "1 kohm", nodes = ["a", "b"] }
C2 = { capacitor = "1 uF", nodes = ["b", "gnd"] }
R3 = { resistor = "1 kohm", nodes = ["b", "c"] }
C3 = { capacitor = "1 uF", nodes = ["c", "gnd"] }
"""


def run(parts: str, steps: list[tuple[str, str, str]]) -> dict[str, StepFinding]:
    """Check a worksheet made of ``parts`` (TOML lines) and (name, quantity, claim) steps."""
    lines = ["[worksheet]", "format = 1", 'title = "reference"', "[transient]", 'start = "rest"', "[parts]", parts]
    for name, quantity, claim in steps:
        lines += ["[[step]]", f'name = "{name}"', f"quantity = '{quantity}'", f'claim = "{claim}"']
    report = handcheck.check(handcheck.loads("\n".join(lines), "<reference>"))
    return {step.name: step for step in report.steps}


def value(step: StepFinding) -> float:
    assert step.expected_si is not None
    return step.expected_si[0]


# -- crossing_time -------------------------------------------------------------


@pytest.mark.parametrize("level", [1, 5, 9.5])
def test_rc_charge_crossing_is_exact(level: float) -> None:
    # RC charging from rest: v = Vs (1 - exp(-t/RC)), so t = -RC ln(1 - v/Vs)
    # (Hayt & Kemmerly, Engineering Circuit Analysis, 8th ed., ch. 8, from memory).
    step = run(RC, [("tx", f'crossing_time(voltage(out), "{level} V")', "1 ms")])["tx"]
    expected = -1e-3 * math.log(1 - level / 10)
    assert_allclose(value(step), expected, rtol=1e-14)
    exact = sympy.nsimplify(sympy.Rational(str(level)) / 10)
    assert sympy.simplify(step.exact - (-sympy.log(1 - exact) / 1000)) == 0  # the closed form itself


def test_rc_current_crossing_from_above() -> None:
    # i = (Vs/R) exp(-t/RC) falls through 2 mA at t = RC ln(10 mA / 2 mA) (from memory).
    step = run(RC, [("tx", 'crossing_time(current(C1), "2 mA")', "1.609 ms")])["tx"]
    assert step.verdict == "agrees"
    assert_allclose(value(step), 1e-3 * math.log(5), rtol=1e-14)


def _rlc_ivp(level: float, events_on: int = 1) -> float:
    # Series RLC step from rest: L di/dt = Vs - R i - vC, C dvC/dt = i (Kirchhoff's laws).
    r, ell, c = 100.0, 0.1, 10e-6

    def rhs(t: float, x: np.ndarray) -> list[float]:
        return [(1.0 - r * x[0] - x[1]) / ell, x[0] / c]

    def hit(t: float, x: np.ndarray) -> float:
        return x[events_on] - level

    sol = solve_ivp(rhs, (0, 0.02), [0.0, 0.0], events=hit, rtol=1e-12, atol=1e-15, method="DOP853")
    return float(sol.t_events[0][0])


@pytest.mark.parametrize("level", [0.5, 1.0, 1.1])
def test_underdamped_rlc_first_crossing_against_solve_ivp(level: float) -> None:
    # scipy.integrate.solve_ivp with an event on vC - level, on the same ODE.
    step = run(RLC, [("tx", f'crossing_time(voltage(out), "{level} V")', "1 ms")])["tx"]
    assert_allclose(value(step), _rlc_ivp(level), rtol=1e-8)


def test_underdamped_rlc_rise_time_closed_form() -> None:
    # 0-100 % rise time of an underdamped second-order step response: t_r = (pi - acos(zeta))/wd
    # (Ogata, Modern Control Engineering, 5th ed., sec. 5-3, from memory); here wn = 1000 rad/s,
    # zeta = 0.5.
    step = run(RLC, [("tx", 'crossing_time(voltage(C1), "1 V")', "2.418 ms")])["tx"]
    assert step.verdict == "agrees"
    assert_allclose(value(step), (math.pi - math.acos(0.5)) / (1000 * math.sqrt(0.75)), rtol=1e-14)


def test_current_crossing_from_either_side() -> None:
    # the series current rises from 0 through its peak and falls back through 1 mA; the
    # first crossing is on the way up (solve_ivp event on i - 1 mA)
    step = run(RLC, [("tx", 'crossing_time(current(L1), "1 mA")', "1 ms")])["tx"]
    assert_allclose(value(step), _rlc_ivp(1e-3, events_on=0), rtol=1e-8)


def test_third_order_ladder_against_solve_ivp() -> None:
    # poles from an irreducible cubic (no closed form): the numerical root path;
    # reference: solve_ivp with an event on the last node's nodal equations.
    step = run(LADDER, [("tx", 'crossing_time(voltage(c), "0.5 V")', "5 ms")])["tx"]
    tau = 1e-3

    def rhs(t: float, v: np.ndarray) -> list[float]:
        return [(1 - 2 * v[0] + v[1]) / tau, (v[0] - 2 * v[1] + v[2]) / tau, (v[1] - v[2]) / tau]

    def hit(t: float, v: np.ndarray) -> float:
        return v[2] - 0.5

    sol = solve_ivp(rhs, (0, 0.05), [0, 0, 0], events=hit, rtol=1e-12, atol=1e-15, method="DOP853")
    assert_allclose(value(step), sol.t_events[0][0], rtol=1e-8)


def test_crossing_at_a_jump_is_the_delay() -> None:
    # a divider with no storage jumps from 0 to 5 V at 1 ms: it reaches 2 V at that instant
    parts = """
V1 = { voltage = "10*step(t - 1 ms) V", nodes = ["in", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["in", "out"] }
R2 = { resistor = "1 kohm", nodes = ["out", "gnd"] }
"""
    step = run(parts, [("tx", 'crossing_time(voltage(out), "2 V")', "1 ms")])["tx"]
    assert step.exact == sympy.Rational(1, 1000)


def test_a_level_never_reached_names_the_range() -> None:
    with pytest.raises(HandcheckError) as info:
        run(RLC, [("tx", 'crossing_time(voltage(out), "1.2 V")', "1 ms")])
    message = str(info.value)
    assert "never reaches 1.2 V" in message
    assert "stays between 0.0 V and 1.16303 V" in message  # the overshoot exp(-pi zeta/sqrt(1-zeta^2)) = 16.3 %
    with pytest.raises(HandcheckError, match="only approaches that level"):
        run(RC, [("tx", 'crossing_time(voltage(out), "10 V")', "1 ms")])
    with pytest.raises(HandcheckError, match='the level "1 A" must be a real value in the unit of the quantity'):
        run(RC, [("tx", 'crossing_time(voltage(out), "1 A")', "1 ms")])


# -- absorbed_energy -------------------------------------------------------------


@pytest.mark.parametrize("until", ["0.5 ms", "1 ms", "3 ms"])
def test_resistor_energy_in_rc_charge(until: str) -> None:
    # w_R(T) = Vs^2 C/2 (1 - exp(-2T/RC)) (from memory: integral of (Vs/R)^2 exp(-2t/RC) R dt);
    # the source delivers C Vs^2 (1 - exp(-T/RC)), the capacitor stores C v(T)^2/2.
    steps = run(
        RC,
        [
            ("wr", f'absorbed_energy(R1, "{until}")', "1 uJ"),
            ("wv", f'absorbed_energy(V1, "{until}")', "1 uJ"),
            ("wc", f'absorbed_energy(C1, "{until}")', "1 uJ"),
        ],
    )
    t = float(until.split(maxsplit=1)[0]) * 1e-3
    c, vs = 1e-6, 10.0
    assert_allclose(value(steps["wr"]), vs**2 * c / 2 * (1 - math.exp(-2 * t / 1e-3)), rtol=1e-14)
    assert_allclose(value(steps["wv"]), -c * vs**2 * (1 - math.exp(-t / 1e-3)), rtol=1e-14)
    assert_allclose(value(steps["wc"]), c / 2 * (vs * (1 - math.exp(-t / 1e-3))) ** 2, rtol=1e-14)
    assert steps["wr"].exact.is_real and not steps["wr"].exact.has(sympy.I)


def test_resistor_energy_over_a_long_charge_is_half_cv2() -> None:
    # charging a capacitor from rest through any resistor loses C V^2/2 in it (from memory)
    step = run(RC, [("wx", 'absorbed_energy(R1, "100 ms")', "50 uJ")])["wx"]
    assert step.verdict == "agrees"
    assert_allclose(value(step), 50e-6, rtol=1e-14)


def test_rlc_energies_against_quad() -> None:
    # scipy.integrate.quad of R i(t)^2 and of L i di/dt with i from solve_ivp on the ODE.
    r, ell, c = 100.0, 0.1, 10e-6

    def rhs(t: float, x: np.ndarray) -> list[float]:
        return [(1.0 - r * x[0] - x[1]) / ell, x[0] / c]

    sol = solve_ivp(rhs, (0, 0.01), [0.0, 0.0], dense_output=True, rtol=1e-12, atol=1e-15, method="DOP853")
    steps = run(RLC, [("wr", 'absorbed_energy(R1, "4 ms")', "1 uJ"), ("wl", 'absorbed_energy(L1, "2 ms")', "1 uJ")])
    wr, _ = quad(lambda t: r * sol.sol(t)[0] ** 2, 0, 4e-3, epsabs=0, epsrel=1e-12, limit=200)
    assert_allclose(value(steps["wr"]), wr, rtol=1e-8)
    # the inductor's energy is L i(T)^2/2 (from memory)
    assert_allclose(value(steps["wl"]), ell / 2 * sol.sol(2e-3)[0] ** 2, rtol=1e-8)


def test_ladder_energy_numeric_poles_against_quad() -> None:
    tau = 1e-3

    def rhs(t: float, v: np.ndarray) -> list[float]:
        return [(1 - 2 * v[0] + v[1]) / tau, (v[0] - 2 * v[1] + v[2]) / tau, (v[1] - v[2]) / tau]

    sol = solve_ivp(rhs, (0, 0.01), [0, 0, 0], dense_output=True, rtol=1e-12, atol=1e-15, method="DOP853")
    steps = run(LADDER, [("wx", 'absorbed_energy(R2, "3 ms")', "1 uJ")])
    ref, _ = quad(lambda t: (sol.sol(t)[0] - sol.sol(t)[1]) ** 2 / 1e3, 0, 3e-3, epsabs=0, epsrel=1e-12, limit=200)
    assert_allclose(value(steps["wx"]), ref, rtol=1e-8)


def test_sinusoidal_drive_energy_against_quad() -> None:
    # an RL driven by a cosine from rest: the integral mixes decaying and undamped terms,
    # and products of a sinusoid with its conjugate (q = 0); reference: quad of R i^2 with
    # i from solve_ivp on L di/dt = v - R i.
    parts = """
V1 = { voltage = "10*cos(2*pi*50 Hz*t) V", nodes = ["in", "gnd"] }
R1 = { resistor = "10 ohm", nodes = ["in", "m"] }
L1 = { inductor = "50 mH", nodes = ["m", "gnd"] }
"""
    sol = solve_ivp(
        lambda t, x: [(10 * math.cos(2 * math.pi * 50 * t) - 10 * x[0]) / 0.05],
        (0, 0.05),
        [0.0],
        dense_output=True,
        rtol=1e-12,
        atol=1e-15,
        method="DOP853",
    )
    steps = run(parts, [("wx", 'absorbed_energy(R1, "37 ms")', "1 mJ")])
    ref, _ = quad(lambda t: 10 * sol.sol(t)[0] ** 2, 0, 37e-3, epsabs=0, epsrel=1e-12, limit=400)
    assert_allclose(value(steps["wx"]), ref, rtol=1e-8)


def test_energy_through_an_impulse_is_refused() -> None:
    parts = """
V1 = { voltage = "10 V", nodes = ["in", "gnd"] }
C1 = { capacitor = "1 uF", nodes = ["in", "gnd"] }
"""
    with pytest.raises(HandcheckError, match="holds an impulse"):
        run(parts, [("wx", 'absorbed_energy(C1, "1 ms")', "1 uJ")])


def test_absorbed_energy_arguments() -> None:
    with pytest.raises(HandcheckError, match="takes a part and a time"):
        run(RC, [("wx", 'absorbed_energy(voltage(out), "1 ms")', "1 uJ")])
    with pytest.raises(HandcheckError, match='"R9" is not a part'):
        run(RC, [("wx", 'absorbed_energy(R9, "1 ms")', "1 uJ")])


# -- energy(P) as a function of time: at, final, peak ----------------------------


def test_stored_energy_in_time_against_solve_ivp() -> None:
    # w_C = C vC^2/2, w_L = L i^2/2 (Hayt & Kemmerly, 8th ed., ch. 7, from memory), with vC
    # and i from solve_ivp on the series RLC's ODE.
    r, ell, c = 100.0, 0.1, 10e-6
    sol = solve_ivp(
        lambda t, x: [(1.0 - r * x[0] - x[1]) / ell, x[0] / c],
        (0, 0.01),
        [0.0, 0.0],
        dense_output=True,
        rtol=1e-12,
        atol=1e-15,
        method="DOP853",
    )
    steps = run(
        RLC,
        [
            ("wc", 'at(energy(C1), "2 ms")', "1 uJ"),
            ("wl", 'at(energy(L1), "1.3 ms")', "1 uJ"),
            ("wfin", "final(energy(C1))", "5 uJ"),
            ("wini", "initial(energy(L1))", "0 J"),
        ],
    )
    assert_allclose(value(steps["wc"]), c / 2 * sol.sol(2e-3)[1] ** 2, rtol=1e-8)
    assert_allclose(value(steps["wl"]), ell / 2 * sol.sol(1.3e-3)[0] ** 2, rtol=1e-8)
    assert steps["wfin"].exact == sympy.Rational(1, 200000)  # C V^2/2 once charged
    assert steps["wini"].exact == 0


def test_peak_stored_energy_from_the_overshoot() -> None:
    # the capacitor voltage peaks at Vs (1 + exp(-pi zeta/sqrt(1 - zeta^2))) (Ogata, Modern
    # Control Engineering, 5th ed., sec. 5-3, from memory), so its energy at C/2 times its square
    steps = run(RLC, [("wp", "peak(energy(C1))", "6.763 uJ"), ("tp", "peak_time(energy(C1))", "3.628 ms")])
    overshoot = math.exp(-math.pi * 0.5 / math.sqrt(0.75))
    assert steps["wp"].verdict == "agrees"
    assert_allclose(value(steps["wp"]), 10e-6 / 2 * (1 + overshoot) ** 2, rtol=1e-13)
    assert_allclose(value(steps["tp"]), math.pi / (1000 * math.sqrt(0.75)), rtol=1e-13)  # t_p = pi/wd


def test_stored_energy_under_a_sinusoid_against_solve_ivp() -> None:
    # products of sinusoids (poles 2jw and 0) and of decaying terms; reference: solve_ivp
    parts = """
V1 = { voltage = "10*cos(2*pi*50 Hz*t) V", nodes = ["in", "gnd"] }
R1 = { resistor = "10 ohm", nodes = ["in", "m"] }
L1 = { inductor = "50 mH", nodes = ["m", "gnd"] }
"""
    sol = solve_ivp(
        lambda t, x: [(10 * math.cos(2 * math.pi * 50 * t) - 10 * x[0]) / 0.05],
        (0, 0.05),
        [0.0],
        dense_output=True,
        rtol=1e-12,
        atol=1e-15,
        method="DOP853",
    )
    steps = run(parts, [("wl", 'at(energy(L1), "13 ms")', "1 mJ"), ("tx", 'crossing_time(energy(L1), "2 mJ")', "1 ms")])
    assert_allclose(value(steps["wl"]), 0.05 / 2 * sol.sol(13e-3)[0] ** 2, rtol=1e-8)
    # the energy reaches 2 mJ when |i| first reaches sqrt(2 * 2 mJ / L)
    level = math.sqrt(2 * 2e-3 / 0.05)
    hit = solve_ivp(
        lambda t, x: [(10 * math.cos(2 * math.pi * 50 * t) - 10 * x[0]) / 0.05],
        (0, 0.05),
        [0.0],
        events=lambda t, x: abs(x[0]) - level,
        rtol=1e-12,
        atol=1e-15,
        method="DOP853",
    )
    assert_allclose(value(steps["tx"]), hit.t_events[0][0], rtol=1e-8)


def test_energy_of_a_resistor_is_refused() -> None:
    with pytest.raises(HandcheckError, match="energy\\(\\) takes a capacitor or an inductor"):
        run(RC, [("wx", 'at(energy(R1), "1 ms")', "1 uJ")])


def test_stored_energy_crossing_against_solve_ivp() -> None:
    # the product waveform C vC^2/2 of the underdamped RLC (exact conjugate poles) reaches
    # 5 uJ = C (1 V)^2/2 when vC first reaches 1 V: solve_ivp event on vC - 1 V
    step = run(RLC, [("tx", 'crossing_time(energy(C1), "5 uJ")', "2.418 ms")])["tx"]
    assert_allclose(value(step), _rlc_ivp(1.0), rtol=1e-8)


def test_energy_of_a_repeating_drive_at_a_time() -> None:
    # a clocked RC: the energy at 3.2 ms is C v(3.2 ms)^2/2 with v from solve_ivp on
    # C dv/dt = (vs(t) - v)/R, vs the 5 V clock with 10 us edges (period 1 ms, half on)
    parts = """
Vclk = { voltage = "5*repeat(1 ms, edge(t, 10 us) - edge(t - 0.5 ms, 10 us)) V", nodes = ["in", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["in", "out"] }
C1 = { capacitor = "0.2 uF", nodes = ["out", "gnd"] }
"""

    def clock(t: float) -> float:
        u = t % 1e-3
        rise = min(u / 1e-5, 1.0)
        fall = min(max(u - 5e-4, 0.0) / 1e-5, 1.0)
        return 5 * (rise - fall)

    sol = solve_ivp(
        lambda t, v: [(clock(t) - v[0]) / 2e-4],
        (0, 3.2e-3),
        [0.0],
        rtol=1e-11,
        atol=1e-14,
        max_step=2e-6,
        method="DOP853",
    )
    steps = run(parts, [("wx", 'at(energy(C1), "3.2 ms")', "1 uJ")])
    assert_allclose(value(steps["wx"]), 0.2e-6 / 2 * sol.y[0][-1] ** 2, rtol=1e-6)


def test_a_level_met_at_the_crest_is_reached_there() -> None:
    # the level written as the exact overshoot crest 1 + exp(-pi zeta/sqrt(1 - zeta^2)) V with
    # zeta = 1/2 is reached at the peak time t_p = pi/wd (Ogata, 5th ed., sec. 5-3, from memory)
    step = run(RLC, [("tx", 'crossing_time(voltage(C1), "1 V + exp(-pi/sqrt(3))*1 V")', "3.628 ms")])["tx"]
    assert step.verdict == "agrees"
    assert_allclose(value(step), math.pi / (1000 * math.sqrt(0.75)), rtol=1e-13)


def test_a_level_just_below_the_crest_is_found_beside_it() -> None:
    # 1e-30 V below the crest the two crossings lie about sqrt(2e-30 V / |v''(t_p)|) ~ 3.5e-18 s
    # either side of t_p = pi/wd (Ogata, 5th ed., sec. 5-3, from memory): the first is found, not refused
    step = run(RLC, [("tx", 'crossing_time(voltage(C1), "1 V + exp(-pi/sqrt(3))*1 V - 1e-30 V")', "3.628 ms")])["tx"]
    tp = math.pi / (1000 * math.sqrt(0.75))
    assert_allclose(value(step), tp, rtol=1e-13)
    assert value(step) < tp

"""Closed-form transients (handcheck.solve.transient) against outside sources.

Each check names its source: textbook closed forms (from memory, as marked),
scipy.signal / scipy.integrate time-domain solutions of state equations written
independently here, and mpmath polynomial roots. Tolerances are explicit.
"""

from __future__ import annotations

import itertools

import mpmath
import pytest
import sympy

import handcheck
from handcheck.circuit.build import build
from handcheck.errors import CircuitError, LimitError
from handcheck.solve.transient import transient_solution

t = sympy.Symbol("t")


def circuit(parts: str, start: str = "rest"):
    text = f'[worksheet]\nformat = 1\ntitle = "transient test"\n[transient]\nstart = "{start}"\n[parts]\n{parts}'
    return build(handcheck.loads(text))


def agree(value, exact, digits: int = 30) -> bool:
    """``value`` (mpmath) equals the exact sympy number to ``digits`` significant digits."""
    with mpmath.workdps(digits + 20):
        reference = mpmath.mpf(sympy.N(exact, digits + 20))
        return abs(value - reference) <= mpmath.mpf(10) ** -digits * max(abs(reference), mpmath.mpf(10) ** -digits)


RC = """
V1 = { voltage = "10 V", nodes = ["in", "gnd"] }
R1 = { resistor = "2 kohm", nodes = ["in", "out"] }
C1 = { capacitor = "470 nF", nodes = ["out", "gnd"] }
"""

SERIES_RLC = """
V1 = { voltage = "10 V", nodes = ["in", "gnd"] }
R1 = { resistor = "20 ohm", nodes = ["in", "a"] }
L1 = { inductor = "10 mH", nodes = ["a", "out"] }
C1 = { capacitor = "10 uF", nodes = ["out", "gnd"] }
"""


# ----------------------------------------------------------------------------
# first order
# ----------------------------------------------------------------------------


def test_rc_charging_closed_form():
    # v_C(t) = V (1 - exp(-t/RC)) for a step V applied through R to an uncharged C
    # (any circuits textbook, e.g. Hayt & Kemmerly, Engineering Circuit Analysis, ch. 8; from memory)
    solution = transient_solution(circuit(RC))
    v = solution.node_voltage("out")
    R, C, V = sympy.Integer(2000), sympy.Rational(47, 10**8), 10
    tau = R * C
    assert sympy.simplify(v.as_expr(t) - V * (1 - sympy.exp(-t / tau))) == 0
    assert solution.order() == 1
    assert solution.time_constant() == tau
    assert solution.natural_modes() == (-1 / tau,)
    # 63.2 % at one time constant, 99.3 % at five (1 - e^-1, 1 - e^-5: textbook rule, from memory)
    assert agree(v(tau), V * (1 - sympy.exp(-1)))
    assert round(float(v(tau)) / V, 3) == 0.632
    assert round(float(v(5 * tau)) / V, 3) == 0.993
    # float and exact times agree
    assert abs(v(float(tau)) - v(tau)) < 1e-12
    assert v.initial() == 0 and v.final() == 10
    # the 2 % settling time of a first-order response is tau*ln(50) (from the closed form)
    assert agree(v.settling_time(sympy.Rational(2, 100)), tau * sympy.log(50))
    # charging current V/R exp(-t/RC), largest at 0+
    i = solution.part_current("C1")
    assert sympy.simplify(i.as_expr(t) - V / R * sympy.exp(-t / tau)) == 0
    value, when = i.peak()
    assert agree(value, sympy.Rational(1, 200)) and when == 0
    # the source delivers that current: it enters the source's minus... i.e. i(V1) = -i(C1)
    assert sympy.simplify(solution.part_current("V1").as_expr(t) + i.as_expr(t)) == 0


def test_rl_current_rise_closed_form():
    # i_L(t) = V/R (1 - exp(-t R/L)) (textbook closed form, from memory)
    solution = transient_solution(
        circuit(
            """
            V1 = { voltage = "12 V", nodes = ["in", "gnd"] }
            R1 = { resistor = "6 ohm", nodes = ["in", "a"] }
            L1 = { inductor = "30 mH", nodes = ["a", "gnd"] }
            """
        )
    )
    i = solution.part_current("L1")
    R, L = 6, sympy.Rational(3, 100)
    assert sympy.simplify(i.as_expr(t) - sympy.Rational(12, R) * (1 - sympy.exp(-t * R / L))) == 0
    assert solution.time_constant() == L / R
    vl = solution.part_voltage("L1")
    assert sympy.simplify(vl.as_expr(t) - 12 * sympy.exp(-t * R / L)) == 0
    assert vl.initial() == 12 and vl.final() == 0


def test_capacitor_with_initial_voltage_discharges():
    # v(t) = V0 exp(-t/RC) (textbook natural response, from memory)
    solution = transient_solution(
        circuit(
            """
            C1 = { capacitor = "100 uF", initial = "5 V", nodes = ["a", "gnd"] }
            R1 = { resistor = "1 kohm", nodes = ["a", "gnd"] }
            """
        )
    )
    v = solution.node_voltage("a")
    assert sympy.simplify(v.as_expr(t) - 5 * sympy.exp(-10 * t)) == 0
    assert solution.initial_conditions() == {"C1": 5}
    # the capacitor's current (into nodes[0]) is -V0/R exp(-t/RC): it discharges into R
    assert sympy.simplify(solution.part_current("C1").as_expr(t) + sympy.Rational(5, 1000) * sympy.exp(-10 * t)) == 0
    assert v.peak() == (5, 0)


def test_steady_start_opening_switch_rl():
    # Before t = 0 the switch is closed and the inductor carries its DC current
    # I0 = V/R1; it opens at t = 0 and the current decays through R2 as I0 exp(-t R2/L)
    # (textbook switched RL circuit, from memory).
    solution = transient_solution(
        circuit(
            """
            V1 = { voltage = "12 V", nodes = ["in", "gnd"] }
            R1 = { resistor = "4 ohm", nodes = ["in", "x"] }
            S1 = { switch = "opens", nodes = ["x", "a"] }
            L1 = { inductor = "2 H", nodes = ["a", "gnd"] }
            R2 = { resistor = "8 ohm", nodes = ["a", "gnd"] }
            """,
            start="steady",
        )
    )
    assert solution.initial_conditions() == {"L1": 3}
    i = solution.part_current("L1")
    assert sympy.simplify(i.as_expr(t) - 3 * sympy.exp(-4 * t)) == 0
    assert i.initial() == 3 and i.final() == 0
    # the inductor's voltage jumps to -I0 R2 at 0+; the open switch carries nothing
    assert solution.part_voltage("L1").initial() == -24
    assert solution.part_current("S1").as_expr(t) == 0


def test_steady_start_closing_switch_rc():
    # C charged to 10 V through 1 kohm for a long time; a switch closes at t = 0 putting
    # 1 kohm across it: v = 5 + 5 exp(-t/(R||R C)) (Thevenin equivalent; from memory)
    solution = transient_solution(
        circuit(
            """
            V1 = { voltage = "10 V", nodes = ["in", "gnd"] }
            R1 = { resistor = "1 kohm", nodes = ["in", "a"] }
            C1 = { capacitor = "2 uF", nodes = ["a", "gnd"] }
            S1 = { switch = "closes", nodes = ["a", "b"] }
            R2 = { resistor = "1 kohm", nodes = ["b", "gnd"] }
            """,
            start="steady",
        )
    )
    assert solution.initial_conditions() == {"C1": 10}
    v = solution.node_voltage("a")
    assert sympy.simplify(v.as_expr(t) - (5 + 5 * sympy.exp(-t / sympy.Rational(1, 1000)))) == 0


# ----------------------------------------------------------------------------
# second order
# ----------------------------------------------------------------------------


def test_series_rlc_underdamped_step_overshoot_and_peak_time():
    # Standard second-order step response without zeros, v_C(s) = V wn^2/(s (s^2 + 2 zeta wn s + wn^2)):
    # percent overshoot 100 exp(-pi zeta/sqrt(1 - zeta^2)), peak time pi/(wn sqrt(1 - zeta^2))
    # (Ogata, Modern Control Engineering, 5th ed., sec. 5-3, from memory).
    solution = transient_solution(circuit(SERIES_RLC))
    R, L, C = sympy.Integer(20), sympy.Rational(1, 100), sympy.Rational(1, 10**5)
    wn = 1 / sympy.sqrt(L * C)
    zeta = R / 2 * sympy.sqrt(C / L)
    assert solution.order() == 2
    assert sympy.simplify(solution.natural_frequency() - wn) == 0
    assert sympy.simplify(solution.damping_ratio() - zeta) == 0
    assert sympy.simplify(solution.quality_factor() - 1 / (2 * zeta)) == 0
    v = solution.node_voltage("out")
    value, when = v.peak()
    mpmath.mp.dps = 40
    try:
        z, w = mpmath.mpf(sympy.N(zeta, 50)), mpmath.mpf(sympy.N(wn, 50))
        overshoot = 100 * mpmath.exp(-mpmath.pi * z / mpmath.sqrt(1 - z**2))
        tp = mpmath.pi / (w * mpmath.sqrt(1 - z**2))
        assert abs(100 * (value - 10) / 10 - overshoot) < mpmath.mpf(10) ** -25
        assert abs(when - tp) < mpmath.mpf(10) ** -28
    finally:
        mpmath.mp.dps = 15
    assert v.initial() == 0 and v.final() == 10
    # underdamped: the time constant is that of the envelope, 1/(zeta wn) = 2L/R
    assert solution.time_constant() == 2 * L / R
    # settling: after t_s the deviation never again exceeds 2 %; at t_s it equals 2 %
    ts = v.settling_time(sympy.Rational(2, 100))
    assert abs(abs(v(ts) - 10) - mpmath.mpf("0.2")) < 1e-25
    for k in range(1, 400):
        assert abs(v(ts + k * mpmath.mpf("1e-5")) - 10) <= mpmath.mpf("0.2") * (1 + mpmath.mpf(10) ** -20)
    # Ogata's 4/(zeta wn) (2 % criterion) is an envelope estimate: the exact value is below it
    assert ts < 4 / (zeta * wn)


def test_parallel_rlc_natural_frequency_and_damping():
    # Parallel RLC: wn = 1/sqrt(LC), zeta = 1/(2R) sqrt(L/C), Q = R sqrt(C/L) (textbook, from memory)
    solution = transient_solution(
        circuit(
            """
            I1 = { current = "1 mA", nodes = ["gnd", "a"] }
            R1 = { resistor = "500 ohm", nodes = ["a", "gnd"] }
            L1 = { inductor = "1 mH", nodes = ["a", "gnd"] }
            C1 = { capacitor = "100 nF", nodes = ["a", "gnd"] }
            """
        )
    )
    R, L, C = sympy.Integer(500), sympy.Rational(1, 1000), sympy.Rational(1, 10**7)
    assert sympy.simplify(solution.natural_frequency() - 1 / sympy.sqrt(L * C)) == 0
    assert sympy.simplify(solution.damping_ratio() - sympy.sqrt(L / C) / (2 * R)) == 0
    assert sympy.simplify(solution.quality_factor() - R * sympy.sqrt(C / L)) == 0
    # the inductor takes the whole source current in the end
    assert solution.part_current("L1").final() == sympy.Rational(1, 1000)


def test_overdamped_time_constant_is_the_slower_pole():
    # Series RLC with zeta > 1: poles -(R/2L) +- sqrt((R/2L)^2 - 1/LC); the slower one sets tau
    solution = transient_solution(
        circuit(
            """
            V1 = { voltage = "1 V", nodes = ["in", "gnd"] }
            R1 = { resistor = "1 kohm", nodes = ["in", "a"] }
            L1 = { inductor = "100 mH", nodes = ["a", "out"] }
            C1 = { capacitor = "1 uF", nodes = ["out", "gnd"] }
            """
        )
    )
    alpha = sympy.Rational(1000, 2) / sympy.Rational(1, 10)
    slow = alpha - sympy.sqrt(alpha**2 - 1 / (sympy.Rational(1, 10) * sympy.Rational(1, 10**6)))
    assert sympy.simplify(solution.time_constant() - 1 / slow) == 0
    assert solution.damping_ratio() > 1


def test_initial_and_final_value_theorems():
    # f(0+) = lim_{s->oo} s F(s), f(oo) = lim_{s->0} s F(s) (initial- and final-value theorems,
    # Ogata sec. 2-3, from memory), with F(s) written here by hand from impedances.
    s = sympy.Symbol("s")
    R, L, C, V = sympy.Integer(20), sympy.Rational(1, 100), sympy.Rational(1, 10**5), 10
    solution = transient_solution(circuit(SERIES_RLC))
    current = V / s / (R + s * L + 1 / (s * C))
    quantities = {
        "i(L1)": (solution.part_current("L1"), current),
        "v(C1)": (solution.part_voltage("C1"), current / (s * C)),
        "v(L1)": (solution.part_voltage("L1"), current * s * L),
        "v(R1)": (solution.part_voltage("R1"), current * R),
    }
    for name, (f, transform) in quantities.items():
        assert f.initial() == sympy.limit(s * transform, s, sympy.oo), name
        assert f.final() == sympy.limit(s * transform, s, 0), name
        # and the closed form agrees with its own limits
        assert abs(f(sympy.Rational(1, 10**12)) - mpmath.mpf(float(f.initial()))) < 1e-6, name


# ----------------------------------------------------------------------------
# against numerical integration
# ----------------------------------------------------------------------------


def _rlc_state_equations(R, L, C, source):
    """d/dt [v_C, i_L] for a series RLC across a source u(t) (KVL around the loop)."""

    def rhs(time, y):
        vc, il = y
        return [il / C, (source(time) - R * il - vc) / L]

    return rhs


@pytest.mark.slow
def test_sine_driven_series_rlc_from_rest_against_lsim_and_solve_ivp():
    import numpy as np
    from scipy import signal
    from scipy.integrate import solve_ivp

    solution = transient_solution(
        circuit(
            """
            V1 = { voltage = "10 V", frequency = "50 Hz", phase = "22.1 deg", nodes = ["in", "gnd"] }
            R1 = { resistor = "20 ohm", nodes = ["in", "a"] }
            L1 = { inductor = "10 mH", nodes = ["a", "out"] }
            C1 = { capacitor = "10 uF", nodes = ["out", "gnd"] }
            """
        )
    )
    v, i = solution.node_voltage("out"), solution.part_current("L1")
    R, L, C = 20.0, 0.01, 1e-5
    w, phase = 2 * np.pi * 50, np.deg2rad(22.1)

    def u(time):
        return 10 * np.cos(w * time + phase)

    times = np.linspace(0, 0.06, 241)
    # solve_ivp, 8th-order Dormand-Prince at rtol 1e-12: agreement to 1e-9 V / 1e-10 A
    ivp = solve_ivp(
        _rlc_state_equations(R, L, C, u), (0, 0.06), [0, 0], t_eval=times, method="DOP853", rtol=1e-12, atol=1e-13
    )
    assert ivp.success
    assert max(abs(v.value(tt) - y) for tt, y in zip(times, ivp.y[0], strict=True)) < 1e-9
    assert max(abs(i.value(tt) - y) for tt, y in zip(times, ivp.y[1], strict=True)) < 1e-10
    # scipy.signal.lsim (exact for inputs linear between samples): with 2.5 us steps the
    # interpolation error of the cosine is below (w h)^2/8 * 10 V ~ 8e-7 V
    fine = np.linspace(0, 0.06, 24001)
    system = signal.StateSpace([[0, 1 / C], [-1 / L, -R / L]], [[0], [1 / L]], [[1, 0]], [[0]])
    _, y, _ = signal.lsim(system, u(fine), fine)
    assert max(abs(v.value(tt) - yy) for tt, yy in zip(fine[::100], y[::100], strict=True)) < 2e-6
    # the steady state is the phasor V H(jw), H = 1/(1 - w^2 LC + j w RC) (textbook; from memory)
    omega = solution.circuit.part("V1").source.omega
    Rs, Ls, Cs = sympy.Integer(20), sympy.Rational(1, 100), sympy.Rational(1, 10**5)
    phi = sympy.pi * sympy.Rational(221, 1800)
    expected = 10 * (sympy.cos(phi) + sympy.I * sympy.sin(phi)) / (1 - omega**2 * Ls * Cs + sympy.I * omega * Rs * Cs)
    assert sympy.cancel(v.steady_phasor(omega) - expected) == 0  # exact: a rational function of pi, cos, sin
    assert v.final() is None
    assert v.initial() == 0 and i.initial() == 0


def test_delayed_step_against_solve_ivp():
    import numpy as np
    from scipy.integrate import solve_ivp

    solution = transient_solution(
        circuit(
            """
            V2 = { voltage = "5*step(t - 1 ms) V", nodes = ["in", "gnd"] }
            R1 = { resistor = "20 ohm", nodes = ["in", "a"] }
            L1 = { inductor = "10 mH", nodes = ["a", "out"] }
            C1 = { capacitor = "10 uF", nodes = ["out", "gnd"] }
            """
        )
    )
    v = solution.node_voltage("out")
    assert all(float(v(k * 1e-4)) == 0 for k in range(10))  # nothing before the delay
    rhs = _rlc_state_equations(20.0, 0.01, 1e-5, lambda time: 5.0)
    times = np.linspace(1e-3, 0.02, 191)
    ivp = solve_ivp(rhs, (1e-3, 0.02), [0, 0], t_eval=times, method="DOP853", rtol=1e-12, atol=1e-13)
    assert max(abs(v.value(tt) - y) for tt, y in zip(times, ivp.y[0], strict=True)) < 1e-9
    # the delayed response is the undelayed one shifted (time-shift theorem)
    undelayed = transient_solution(circuit(SERIES_RLC)).node_voltage("out")
    with mpmath.workdps(50):
        for k in range(1, 20):
            tt = sympy.Rational(k, 1000)
            assert abs(v(tt + sympy.Rational(1, 1000)) - undelayed(tt) / 2) < mpmath.mpf(10) ** -28
    expr = v.as_expr(t)
    assert expr.has(sympy.Heaviside)


@pytest.mark.slow
def test_points_source_against_solve_ivp():
    import numpy as np
    from scipy.integrate import solve_ivp

    solution = transient_solution(
        circuit(
            """
            V5 = { voltage = [["0 ms", "0 V"], ["1 ms", "5 V"], ["3 ms", "5 V"], ["4 ms", "0 V"]], nodes = ["d", "gnd"] }
            R1 = { resistor = "20 ohm", nodes = ["d", "a"] }
            L1 = { inductor = "10 mH", nodes = ["a", "out"] }
            C1 = { capacitor = "10 uF", nodes = ["out", "gnd"] }
            """
        )
    )
    v = solution.node_voltage("out")
    breaks = [0.0, 1e-3, 3e-3, 4e-3, 0.012]

    def u(time):
        return float(np.interp(time, [0, 1e-3, 3e-3, 4e-3], [0, 5, 5, 0]))

    rhs = _rlc_state_equations(20.0, 0.01, 1e-5, u)
    state = [0.0, 0.0]
    worst = 0.0
    for a, b in itertools.pairwise(breaks):  # integrate piece by piece: the input has corners
        times = np.linspace(a, b, 41)
        ivp = solve_ivp(rhs, (a, b), state, t_eval=times, method="DOP853", rtol=1e-12, atol=1e-13)
        worst = max(worst, *(abs(v.value(tt) - y) for tt, y in zip(times, ivp.y[0], strict=True)))
        state = list(ivp.y[:, -1])
    assert worst < 1e-9
    assert v.final() == 0
    # the largest value, located where the derivative vanishes, beats a dense sampling
    value, when = v.peak()
    sampled = max(abs(v.value(k * 1e-5)) for k in range(1200))
    assert float(abs(value)) >= sampled
    assert abs(v.derivative_at(when)) < 1e-20


def test_pulse_train_against_solve_ivp():
    import numpy as np
    from scipy.integrate import solve_ivp

    solution = transient_solution(
        circuit(
            """
            V4 = { voltage = "repeat(4 ms, edge(t, 10 us) - edge(t - 10 us - 1 ms, 10 us)) V", nodes = ["c", "gnd"] }
            R1 = { resistor = "1 kohm", nodes = ["c", "a"] }
            C1 = { capacitor = "1 uF", nodes = ["a", "gnd"] }
            """
        ),
        until=sympy.Rational(12, 1000),
    )
    v = solution.node_voltage("a")
    corners = sorted({k * 4e-3 + x for k in range(3) for x in (0, 1e-5, 1.01e-3, 1.02e-3)} | {0.012})

    def u(time):
        phase = time % 4e-3
        return float(np.interp(phase, [0, 1e-5, 1.01e-3, 1.02e-3, 4e-3], [0, 1, 1, 0, 0]))

    state, worst = [0.0], 0.0
    for a, b in itertools.pairwise(corners):
        times = np.linspace(a, b, 11)
        ivp = solve_ivp(
            lambda time, y: [(u(time) - y[0]) / 1e-3],
            (a, b),
            state,
            t_eval=times,
            method="DOP853",
            rtol=1e-12,
            atol=1e-14,
        )
        worst = max(worst, *(abs(v.value(tt) - y) for tt, y in zip(times, ivp.y[0], strict=True)))
        state = [ivp.y[0, -1]]
    assert worst < 1e-9
    # periods starting up to `until` (12 ms) are expanded: complete before the next edge at 16 ms
    v(sympy.Rational(159, 10000))
    with pytest.raises(LimitError, match="repeating source"):
        v(sympy.Rational(16, 1000))
    with pytest.raises(CircuitError):
        v.final()


@pytest.mark.slow
def test_steady_ac_start_with_closing_switch_against_solve_ivp():
    # Before t = 0 the series RLC ran in its sinusoidal steady state with 20 ohm; the switch
    # shorts 10 ohm of it at t = 0. Initial state: Re of the phasors V/Z and V/(Z j w C) with
    # Z = R + j w L + 1/(j w C) (textbook phasor analysis, from memory); after t = 0, the
    # state equations integrated by solve_ivp.
    import numpy as np
    from scipy.integrate import solve_ivp

    solution = transient_solution(
        circuit(
            """
            V1 = { voltage = "10 V", frequency = "50 Hz", nodes = ["in", "gnd"] }
            R1 = { resistor = "10 ohm", nodes = ["in", "b"] }
            R2 = { resistor = "10 ohm", nodes = ["b", "a"] }
            S1 = { switch = "closes", nodes = ["b", "a"] }
            L1 = { inductor = "10 mH", nodes = ["a", "out"] }
            C1 = { capacitor = "10 uF", nodes = ["out", "gnd"] }
            """,
            start="steady",
        )
    )
    w, L, C = 2 * np.pi * 50, 0.01, 1e-5
    current = 10 / (20 + 1j * w * L + 1 / (1j * w * C))
    state = solution.initial_conditions()
    assert abs(float(sympy.N(state["L1"], 30)) - current.real) < 1e-13
    assert abs(float(sympy.N(state["C1"], 30)) - (current / (1j * w * C)).real) < 1e-11
    v, i = solution.node_voltage("out"), solution.part_current("L1")
    times = np.linspace(0, 0.04, 161)
    rhs = _rlc_state_equations(10.0, L, C, lambda time: 10 * np.cos(w * time))
    ivp = solve_ivp(
        rhs,
        (0, 0.04),
        [(current / (1j * w * C)).real, current.real],
        t_eval=times,
        method="DOP853",
        rtol=1e-12,
        atol=1e-13,
    )
    assert max(abs(v.value(tt) - y) for tt, y in zip(times, ivp.y[0], strict=True)) < 1e-9
    assert max(abs(i.value(tt) - y) for tt, y in zip(times, ivp.y[1], strict=True)) < 1e-10
    # continuity: capacitor voltage and inductor current do not jump at the switching
    assert abs(v.initial() - sympy.N(state["C1"], 40)) < 1e-35 and abs(i.initial() - sympy.N(state["L1"], 40)) < 1e-35


@pytest.mark.slow
def test_damped_delayed_sine_with_offset_against_solve_ivp():
    import numpy as np
    from scipy.integrate import solve_ivp

    solution = transient_solution(
        circuit(
            """
            V1 = { voltage = "(1 + 2*exp(-100 1/s*(t - 2 ms))*cos(2*pi*50 Hz*(t - 2 ms) + 30 deg))*step(t - 2 ms) V", nodes = ["in", "gnd"] }
            R1 = { resistor = "20 ohm", nodes = ["in", "a"] }
            L1 = { inductor = "10 mH", nodes = ["a", "out"] }
            C1 = { capacitor = "10 uF", nodes = ["out", "gnd"] }
            """
        )
    )
    v = solution.node_voltage("out")
    d = 2e-3

    def u(time):  # the source function as written, for t >= the delay (tau = t - delay)
        return 1 + 2 * np.exp(-100 * (time - d)) * np.cos(2 * np.pi * 50 * (time - d) + np.pi / 6)

    times = np.linspace(d, 0.05, 193)
    ivp = solve_ivp(
        _rlc_state_equations(20.0, 0.01, 1e-5, u),
        (d, 0.05),
        [0, 0],
        t_eval=times,
        method="DOP853",
        rtol=1e-12,
        atol=1e-13,
    )
    assert max(abs(v.value(tt) - y) for tt, y in zip(times, ivp.y[0], strict=True)) < 1e-9
    assert v.final() == 1  # only the offset remains


def test_coupled_inductors_against_solve_ivp():
    # M = k sqrt(L1 L2) = sqrt(2)/2 H: an algebraic number, so the exact arithmetic runs in Q(sqrt 2).
    # Reference: [L1 M; M L2] di/dt = [V - R1 i1; -R2 i2] (coupled-coil equations, from memory).
    import numpy as np
    from scipy.integrate import solve_ivp

    solution = transient_solution(
        circuit(
            """
            V1 = { voltage = "1 V", nodes = ["in", "gnd"] }
            R1 = { resistor = "1 ohm", nodes = ["in", "a"] }
            L1 = { inductor = "1 H", nodes = ["a", "gnd"] }
            L2 = { inductor = "2 H", nodes = ["b", "gnd"] }
            mutual_ps = { coupling = "0.5", inductors = ["L1", "L2"] }
            R2 = { resistor = "3 ohm", nodes = ["b", "gnd"] }
            """
        )
    )
    v = solution.node_voltage("b")
    assert v.exact  # a quadratic over Q(sqrt 2): closed-form poles
    m = 0.5 * np.sqrt(2.0)
    inverse = np.linalg.inv(np.array([[1.0, m], [m, 2.0]]))

    def rhs(time, y):
        return inverse @ np.array([1.0 - y[0], -3.0 * y[1]])

    times = np.linspace(0, 10, 101)
    ivp = solve_ivp(rhs, (0, 10), [0, 0], t_eval=times, method="DOP853", rtol=1e-12, atol=1e-14)
    assert max(abs(v.value(tt) - (-3 * y)) for tt, y in zip(times, ivp.y[1], strict=True)) < 1e-10


def test_resonant_drive_grows_without_bound():
    # An undamped LC driven at its own frequency: V(s) = I s^2/(C (s^2 + w^2)^2), whose inverse
    # is I (sin wt + w t cos wt)/(2 w C) (table of Laplace transforms, from memory)
    solution = transient_solution(
        circuit(
            """
            I1 = { current = "1 mA", frequency = "1000 rad/s", nodes = ["gnd", "a"] }
            L1 = { inductor = "1 H", nodes = ["a", "gnd"] }
            C1 = { capacitor = "1 uF", nodes = ["a", "gnd"] }
            """
        )
    )
    v = solution.node_voltage("a")
    expected = (
        sympy.Rational(1, 1000)
        * (sympy.sin(1000 * t) + 1000 * t * sympy.cos(1000 * t))
        / (2 * 1000 * sympy.Rational(1, 10**6))
    )
    assert sympy.simplify(v.as_expr(t) - expected) == 0
    with pytest.raises(CircuitError, match="resonance"):
        v.final()
    value, when = v.peak(sympy.Rational(1, 10))  # on a finite window it has a peak
    assert abs(v.derivative_at(when)) < 1e-20 * abs(value) * 1000


def _ladder(sections: int) -> str:
    lines = ['V1 = { voltage = "1 V", nodes = ["n0", "gnd"] }', 'Rs = { resistor = "1 ohm", nodes = ["n0", "m0"] }']
    previous = "m0"
    for k in range(1, sections + 1):
        lines.append(f'L{k} = {{ inductor = "{k} H", nodes = ["{previous}", "n{k}"] }}')
        lines.append(f'C{k} = {{ capacitor = "{k + 1} F", nodes = ["n{k}", "gnd"] }}')
        previous = f"n{k}"
    lines.append(f'RL = {{ resistor = "2 ohm", nodes = ["{previous}", "gnd"] }}')
    return "\n".join(lines) + "\n"


def _ladder_state_matrix(sections: int):
    """State equations of the ladder, x = [i1, v1, i2, v2, ...] (KVL on each inductor, KCL at each node)."""
    n = 2 * sections
    A = sympy.zeros(n, n)
    B = sympy.zeros(n, 1)
    for k in range(1, sections + 1):
        i, v = 2 * (k - 1), 2 * (k - 1) + 1
        Lk, Ck = sympy.Integer(k), sympy.Integer(k + 1)
        # L di_k/dt = v_{k-1} - v_k, with v_0 = u - Rs i_1
        if k == 1:
            A[i, i] = -1 / Lk
            B[i, 0] = 1 / Lk
        else:
            A[i, v - 2] = 1 / Lk
        A[i, v] = -1 / Lk
        # C dv_k/dt = i_k - i_{k+1} (or - v_n/RL at the end)
        A[v, i] = 1 / Ck
        if k < sections:
            A[v, i + 2] = -1 / Ck
        else:
            A[v, v] = -1 / (2 * Ck)
    return A, B


@pytest.mark.slow
@pytest.mark.parametrize("sections", [2, 3])
def test_ladder_against_scipy_signal_and_mpmath_roots(sections):
    import numpy as np
    from scipy import signal

    solution = transient_solution(circuit(_ladder(sections)))
    v = solution.node_voltage(f"n{sections}")
    A, B = _ladder_state_matrix(sections)
    assert solution.order() == 2 * sections
    # poles: roots of det(sI - A), found by mpmath.polyroots at 60 digits; ours agree to 30 digits
    s = sympy.Symbol("s")
    charpoly = sympy.Poly((s * sympy.eye(2 * sections) - A).det(), s)
    with mpmath.workdps(60):
        reference = mpmath.polyroots(
            [mpmath.mpf(sympy.Rational(c).p) / int(sympy.Rational(c).q) for c in charpoly.all_coeffs()],
            maxsteps=200,
            extraprec=200,
        )
        ours = [
            mpmath.mpc(complex(p)) if not isinstance(p, (mpmath.mpf, mpmath.mpc)) else p
            for p in solution.natural_modes()
        ]
        assert len(ours) == len(reference)
        for p in ours:
            nearest = min(reference, key=lambda r: abs(r - p))
            assert abs(nearest - p) <= mpmath.mpf(10) ** -30 * abs(p)
    # step response against scipy.signal.step on the independent state equations
    C = sympy.zeros(1, 2 * sections)
    C[0, 2 * sections - 1] = 1
    system = signal.StateSpace(np.array(A, dtype=float), np.array(B, dtype=float), np.array(C, dtype=float), [[0.0]])
    times = np.linspace(0, 60, 301)
    _, y = signal.step(system, T=times)
    assert max(abs(v.value(tt) - yy) for tt, yy in zip(times, y, strict=True)) < 1e-10
    assert v.final() == sympy.Rational(2, 3)  # DC: divider 2/(1 + 2)
    if sections == 3:
        with pytest.raises(CircuitError, match="order 6"):
            solution.time_constant()
        with pytest.raises(CircuitError, match="poles with no closed form"):
            v.as_expr()


# ----------------------------------------------------------------------------
# limits and messages
# ----------------------------------------------------------------------------


def test_order_cap_and_time_limit():
    with pytest.raises(LimitError, match="order 8"):
        transient_solution(circuit(_ladder(4)), max_order=6)
    with pytest.raises(LimitError, match="time limit"):
        transient_solution(circuit(_ladder(12)), time_limit=1e-6)


def test_first_order_circuit_has_no_damping_ratio():
    solution = transient_solution(circuit(RC))
    with pytest.raises(CircuitError, match="this circuit is first order"):
        solution.damping_ratio()


def test_ideal_switching_impulse_is_reported():
    # a capacitor straight across a voltage source charges instantly: i = C V delta(t)
    solution = transient_solution(
        circuit(
            """
            V1 = { voltage = "10 V", nodes = ["in", "gnd"] }
            C1 = { capacitor = "1 uF", nodes = ["in", "gnd"] }
            R1 = { resistor = "1 kohm", nodes = ["in", "gnd"] }
            """
        )
    )
    i = solution.part_current("C1")
    assert i.as_expr(t) == sympy.DiracDelta(t) / 10**5
    with pytest.raises(CircuitError, match="impulse"):
        i.peak()


def test_lossless_lc_keeps_ringing():
    # LC tank with an initial charge: v = V0 cos(t/sqrt(LC)) (textbook, from memory)
    solution = transient_solution(
        circuit(
            """
            C1 = { capacitor = "1 uF", initial = "2 V", nodes = ["a", "gnd"] }
            L1 = { inductor = "1 mH", nodes = ["a", "gnd"] }
            """
        )
    )
    v = solution.node_voltage("a")
    w0 = 1 / sympy.sqrt(sympy.Rational(1, 10**9))
    assert sympy.simplify(v.as_expr(t) - 2 * sympy.cos(w0 * t)) == 0
    assert v.final() is None
    assert sympy.simplify(v.steady_phasor(w0) - 2) == 0
    assert solution.quality_factor() == sympy.oo
    with pytest.raises(CircuitError, match="does not decay"):
        solution.time_constant()


def test_sallen_key_low_pass_is_second_order():
    # Unity-gain Sallen-Key low-pass: wn = 1/sqrt(R1 R2 C1 C2), Q = sqrt(R1 R2 C1 C2)/(C2 (R1 + R2))
    # (Sallen and Key, IRE Trans. Circuit Theory, 1955; the usual design formulas, from memory)
    solution = transient_solution(
        circuit(
            """
            V1 = { voltage = "1 V", nodes = ["in", "gnd"] }
            R1 = { resistor = "10 kohm", nodes = ["in", "x"] }
            R2 = { resistor = "10 kohm", nodes = ["x", "p"] }
            C1 = { capacitor = "20 nF", nodes = ["x", "out"] }
            C2 = { capacitor = "10 nF", nodes = ["p", "gnd"] }
            U1 = { opamp = "ideal", nodes = ["out", "p", "n"] }
            R3 = { resistor = "1 kohm", nodes = ["out", "n"] }
            """
        )
    )
    R1 = R2 = sympy.Integer(10**4)
    C1, C2 = sympy.Rational(2, 10**8), sympy.Rational(1, 10**8)
    assert sympy.simplify(solution.natural_frequency() - 1 / sympy.sqrt(R1 * R2 * C1 * C2)) == 0
    assert sympy.simplify(solution.quality_factor() - sympy.sqrt(R1 * R2 * C1 * C2) / (C2 * (R1 + R2))) == 0
    v = solution.node_voltage("out")
    assert v.initial() == 0 and v.final() == 1
    # the difference of two node voltages is the voltage across the input resistors and C1
    difference = solution.node_voltage("in") - v
    assert sympy.simplify(difference.as_expr(t) - (1 - v.as_expr(t))) == 0
    assert difference.initial() == 1


def test_resistive_circuit_follows_its_source():
    # no energy storage: order 0, the divider ratio 2/(3 + 2) applied to a step at 1 ms
    solution = transient_solution(
        circuit(
            """
            V1 = { voltage = "10*step(t - 1 ms) V", nodes = ["in", "gnd"] }
            R1 = { resistor = "3 kohm", nodes = ["in", "out"] }
            R2 = { resistor = "2 kohm", nodes = ["out", "gnd"] }
            """
        )
    )
    v = solution.node_voltage("out")
    assert solution.order() == 0 and solution.natural_modes() == ()
    assert v.as_expr(t) == 4 * sympy.Heaviside(t - sympy.Rational(1, 1000))
    assert v.initial() == 0 and v.final() == 4
    value, when = v.peak()
    assert value == 4 and agree(when, sympy.Rational(1, 1000))
    with pytest.raises(CircuitError, match="zeroth order"):
        solution.time_constant()

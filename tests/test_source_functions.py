"""Sources written as functions of t, checked against sources outside the project.

Each check names its reference: the Laplace time-shift theorem (any standard text;
e.g. Kreyszig, *Advanced Engineering Mathematics*, 10th ed., sec. 6.3, from memory),
the Fourier series of a square wave (a standard signals text, e.g. Oppenheim and
Willsky, *Signals and Systems*, 2nd ed., ch. 3, from memory), scipy.integrate.solve_ivp,
and the trigonometric identity sin(x) = cos(x - 90 deg).
"""

from __future__ import annotations

import math
from itertools import pairwise

import numpy as np
import pytest
import sympy
from numpy.testing import assert_allclose
from scipy.integrate import solve_ivp

import handcheck
from handcheck.circuit.build import build
from handcheck.simulate import simulate
from handcheck.solve.phasor import solve
from handcheck.solve.transient import transient_solution

t = sympy.Symbol("t")


def rc(source: str, *, r: str = "1 kohm", c: str = "1 uF", head: str = "") -> handcheck.Worksheet:
    """A source driving R into C to ground; the output is node "out"."""
    return handcheck.loads(
        f'[worksheet]\nformat = 1\ntitle = "source test"\n{head}[parts]\n'
        f'Vs = {{ voltage = {source}, nodes = ["in", "gnd"] }}\n'
        f'Rs = {{ resistor = "{r}", nodes = ["in", "out"] }}\n'
        f'Cs = {{ capacitor = "{c}", nodes = ["out", "gnd"] }}\n'
    )


def test_delayed_step_is_the_step_response_shifted():
    # L{f(t - d) H(t - d)} = exp(-s d) F(s): the RC step response V(1 - exp(-t/RC)),
    # shifted by d = 1 ms (time-shift theorem).
    circuit = build(rc('"12*step(t - 1 ms) V"'))
    v = transient_solution(circuit).node_voltage("out")
    d = sympy.Rational(1, 1000)
    expected = 12 * (1 - sympy.exp(-(t - d) * 1000)) * sympy.Heaviside(t - d)
    assert sympy.simplify(v.as_expr(t) - expected) == 0
    sim = simulate(circuit, span=6e-3)
    reference = np.where(sim.times < 1e-3, 0.0, 12 * (1 - np.exp(-(sim.times - 1e-3) * 1000)))
    assert_allclose(sim.voltages["out"], reference, rtol=0, atol=1e-10)


def test_delayed_exponential_is_the_undelayed_response_shifted():
    # Input exp(-a (t - d)) H(t - d) into RC (1/RC = b): the undelayed response is
    # b (exp(-a t) - exp(-b t))/(b - a) (partial fractions of b/((s + a)(s + b))),
    # and the delayed one is that shifted by d (time-shift theorem).
    circuit = build(rc('"exp(-(t - 2 ms)/0.5 ms)*step(t - 2 ms) V"'))
    v = transient_solution(circuit).node_voltage("out")
    a, b, d = sympy.Integer(2000), sympy.Integer(1000), sympy.Rational(2, 1000)
    tau = t - d
    expected = b * (sympy.exp(-a * tau) - sympy.exp(-b * tau)) / (b - a) * sympy.Heaviside(tau)
    assert sympy.simplify(v.as_expr(t) - expected) == 0
    sim = simulate(circuit, span=8e-3)
    tt = np.maximum(sim.times - 2e-3, 0.0)
    reference = float(b) * (np.exp(-2000 * tt) - np.exp(-1000 * tt)) / float(b - a)
    assert_allclose(sim.voltages["out"], reference, rtol=0, atol=1e-10)


def test_rc_driven_by_a_square_wave_reaches_its_fourier_series():
    # A square wave of amplitude A (0 to A, half the period high) is
    # A/2 + sum over odd k of (2A/(k pi)) sin(k w0 t); through RC each harmonic is
    # scaled by H_k = 1/(1 + j k w0 RC) (Fourier series of a square wave; superposition).
    amplitude, period, rc_time = 5.0, 1e-3, 0.2e-3
    circuit = build(rc('"5*repeat(1 ms, step(t) - step(t - 0.5 ms)) V"', r="200 ohm"))
    closed = transient_solution(circuit, until=sympy.Rational(17, 1000)).node_voltage("out")
    sim = simulate(circuit, span=16e-3)
    inside = np.nonzero((sim.times > 15e-3) & (sim.times < 16e-3))[0][::5]  # 75 time constants in: steady
    times = sim.times[inside]
    w0 = 2 * math.pi / period
    k = np.arange(1, 400001, 2)[:, None]
    h = 1 / (1 + 1j * k * w0 * rc_time)
    series = amplitude / 2 + np.sum(
        (2 * amplitude / (k * math.pi)) * np.abs(h) * np.sin(k * w0 * times[None, :] + np.angle(h)), axis=0
    )
    exact = np.array([closed.value(x) for x in times])
    assert_allclose(exact, series, rtol=0, atol=2e-5)  # the series' tail: about 2A/(pi w0 RC K)
    assert_allclose(sim.voltages["out"][inside], series, rtol=0, atol=2e-5)
    assert_allclose(sim.voltages["out"][inside], exact, rtol=0, atol=1e-9)


def test_damped_sinusoid_into_rc_against_solve_ivp():
    # RC dv/dt = u(t) - v with u = 10 exp(-t/5 ms) cos(2 pi 1 kHz t), solved by
    # scipy.integrate.solve_ivp (DOP853) at rtol 1e-10.
    circuit = build(rc('"10*exp(-t/5 ms)*cos(2*pi*1 kHz*t) V"', c="0.1 uF"))
    closed = transient_solution(circuit).node_voltage("out")

    def rhs(time: float, v: np.ndarray) -> list[float]:
        u = 10 * math.exp(-time / 5e-3) * math.cos(2 * math.pi * 1000 * time)
        return [(u - v[0]) / 1e-4]

    times = np.linspace(0, 10e-3, 201)
    ivp = solve_ivp(rhs, (0, 10e-3), [0.0], t_eval=times, method="DOP853", rtol=1e-10, atol=1e-12)
    assert ivp.success
    exact = np.array([closed.value(x) for x in times])
    assert_allclose(exact, ivp.y[0], rtol=0, atol=1e-8)
    sim = simulate(circuit, span=10e-3, min_samples=2000)
    ivp_at_samples = solve_ivp(rhs, (0, 10e-3), [0.0], t_eval=sim.times, method="DOP853", rtol=1e-10, atol=1e-12)
    assert_allclose(sim.voltages["out"], ivp_at_samples.y[0], rtol=0, atol=1e-8)


@pytest.mark.parametrize(
    ("function", "first_edition"),
    [
        ('"100*cos(2000*t + 30 deg) V"', '"100 V", frequency = "2000 rad/s", phase = "30 deg"'),
        # sin(x) = cos(x - 90 deg)
        ('"100*sin(2000*t + 30 deg) V"', '"100 V", frequency = "2000 rad/s", phase = "-60 deg"'),
        ('"2*cos(2*pi*50 Hz*t - 45 deg) V"', '"2 V", frequency = "50 Hz", phase = "-45 deg"'),
        ('"3*sin(2*pi*50 Hz*t) V"', '"3 V", frequency = "50 Hz", phase = "-90 deg"'),
    ],
)
def test_phasors_read_from_the_function_equal_the_first_editions(function, first_edition):
    new = solve(build(rc(function)))
    old = solve(build(rc(first_edition)))
    for node in ("in", "out"):
        assert sympy.simplify(sympy.expand_complex(new.node_voltage(node) - old.node_voltage(node))) == 0


def test_a_step_that_starts_later_drives_no_phasor_and_a_constant_drives_dc():
    # The drive read from the function (docs/transients.md): "3 + 12*step(t - 1 ms)"
    # drives 3 V at DC; the later step belongs to the transient only.
    circuit = build(rc('"3 + 12*step(t - 1 ms) V"'))
    assert solve(circuit).node_voltage("out") == 3
    assert transient_solution(circuit).node_voltage("out").final() == 15


# -- worksheets the project has not seen: both paths against solve_ivp ---------------------

UNSEEN = {
    # series R-L-C, a ramp that levels off, plus a burst that decays
    "ramp-and-burst": (
        '"2*(t/1 ms)*step(t) - 2*((t - 1 ms)/1 ms)*step(t - 1 ms) + 0.5*exp(-t/2 ms)*sin(2*pi*3 kHz*t) V"',
        lambda s: 2 * min(s / 1e-3, 1.0) + 0.5 * math.exp(-s / 2e-3) * math.sin(2 * math.pi * 3000 * s),
    ),
    # a trapezoid train with an offset, delayed inside its period
    "offset-trapezoids": (
        '"1 + 2*repeat(2 ms, edge(t - 0.2 ms, 0.1 ms) - edge(t - 1 ms, 0.3 ms)) V"',
        lambda s: 1 + 2 * float(np.interp(s % 2e-3, [0, 0.2e-3, 0.3e-3, 1e-3, 1.3e-3, 2e-3], [0, 0, 1, 1, 0, 0])),
    ),
    # t squared under a window, and a sinusoid switched on late
    "window-and-late-sine": (
        '"(t/1 ms)^2*(step(t) - step(t - 1 ms)) + cos(2000*(t - 1.5 ms))*step(t - 1.5 ms) V"',
        lambda s: ((s / 1e-3) ** 2 if s < 1e-3 else 0.0) + (math.cos(2000 * (s - 1.5e-3)) if s >= 1.5e-3 else 0.0),
    ),
}
_CORNERS = {
    "ramp-and-burst": [1e-3],
    "offset-trapezoids": [k * 2e-3 + x for k in range(4) for x in (0.2e-3, 0.3e-3, 1e-3, 1.3e-3)],
    "window-and-late-sine": [1e-3, 1.5e-3],
}


@pytest.mark.slow
@pytest.mark.parametrize("name", list(UNSEEN))
def test_unseen_worksheets_agree_with_solve_ivp_in_both_paths(name):
    function, u = UNSEEN[name]
    sheet = handcheck.loads(
        '[worksheet]\nformat = 1\ntitle = "unseen"\n[parts]\n'
        f'Vs = {{ voltage = {function}, nodes = ["in", "gnd"] }}\n'
        'Rs = { resistor = "30 ohm", nodes = ["in", "a"] }\n'
        'Ls = { inductor = "10 mH", nodes = ["a", "out"] }\n'
        'Cs = { capacitor = "2 uF", nodes = ["out", "gnd"] }\n'
    )
    circuit = build(sheet)
    span = 6e-3
    closed = transient_solution(circuit, until=sympy.Rational(6, 1000)).node_voltage("out")
    sim = simulate(circuit, span=span, min_samples=3000)

    def rhs(time: float, y: np.ndarray) -> list[float]:  # y = (v_C, i_L)
        return [y[1] / 2e-6, (u(time) - 30 * y[1] - y[0]) / 10e-3]

    edges = sorted({0.0, *[c for c in _CORNERS[name] if c < span], span})
    times, values, state = [], [], [0.0, 0.0]
    for a, b in pairwise(edges):
        grid = np.linspace(a, b, 31)[:-1] + (b - a) / 60
        ivp = solve_ivp(rhs, (a, b), state, t_eval=grid, method="DOP853", rtol=1e-11, atol=1e-13)
        assert ivp.success
        times += list(grid)
        values += list(ivp.y[0])
        state = list(solve_ivp(rhs, (a, b), state, method="DOP853", rtol=1e-11, atol=1e-13).y[:, -1])
    times_a, values_a = np.array(times), np.array(values)
    exact = np.array([closed.value(x) for x in times_a])
    scale = max(1.0, float(np.max(np.abs(values_a))))
    assert_allclose(exact, values_a, rtol=0, atol=1e-8 * scale)
    numerical = np.interp(times_a, sim.times, sim.voltages["out"])
    step = sim.times[1] - sim.times[0]
    # linear interpolation between samples: error below h^2/8 times the largest curvature
    assert_allclose(numerical, values_a, rtol=0, atol=max(1e-6, 2e8 * step**2) * scale)

"""Every part kind of worksheet format 1, checked against closed forms.

Each circuit is small enough that its answer is a textbook closed form; the source
of each form is named beside the check. Frequencies are rational in rad/s (or the
analysis is at DC) so every component of the MNA system is rational and the
results are compared exactly with ``sympy.simplify(a - b) == 0``. Where a check
uses a floating-point reference (numpy), the tolerance is explicit.
Component values are invented.
"""

from __future__ import annotations

import random

import numpy as np
import pytest
import sympy
from numpy.testing import assert_allclose

import handcheck
from handcheck.circuit.build import build
from handcheck.solve.phasor import solve
from handcheck.solve.quantities import evaluate_quantity, parse_quantity

j = sympy.I
R = sympy.Rational
sqrt = sympy.sqrt


def worksheet(parts: str, head: str = "", steps: str = "") -> str:
    """A format-1 worksheet with the given [parts] body and optional [worksheet] keys."""
    return f'[worksheet]\nformat = 1\ntitle = "part kinds"\n{head}\n[parts]\n{parts}\n{steps}'


def solved(parts: str, head: str = ""):
    return solve(build(handcheck.loads(worksheet(parts, head))))


def value(solution, quantity: str) -> sympy.Expr:
    """The exact value of a quantity in a solved circuit."""
    return evaluate_quantity(solution, parse_quantity(quantity)).expr


def same(a, b) -> bool:
    return sympy.simplify(sympy.sympify(a) - sympy.sympify(b)) == 0


# --------------------------------------------------------------------------
# resistor, inductor, capacitor
# --------------------------------------------------------------------------

RLC_SERIES = """
I1 = { current = "1 A", frequency = "2 rad/s", nodes = ["gnd", "a"] }
R1 = { resistor = "3 ohm", nodes = ["a", "b"] }
L1 = { inductor = "2 H", nodes = ["b", "c"] }
C1 = { capacitor = "0.25 F", nodes = ["c", "gnd"] }
"""


def test_rlc_part_impedances_are_r_jwl_and_one_over_jwc():
    # Z_R = R, Z_L = jwL, Z_C = 1/(jwC) (Alexander & Sadiku, Fundamentals of Electric
    # Circuits, 5th ed., sec. 9.4, from memory). w = 2 rad/s, R = 3, L = 2, C = 1/4.
    sol = solved(RLC_SERIES)
    w = 2
    assert same(value(sol, "impedance(R1)"), 3)
    assert same(value(sol, "impedance(L1)"), j * w * 2)
    assert same(value(sol, "impedance(C1)"), 1 / (j * w * R(1, 4)))
    # reactance is Im Z: negative for a capacitor (same source)
    assert same(value(sol, "reactance(C1)"), -2)
    assert same(value(sol, "reactance(L1)"), 4)
    assert same(value(sol, "resistance(R1)"), 3)


def test_rlc_impedance_from_the_solved_circuit():
    # V/I of each part in the solved circuit, and the series sum seen from node a:
    # Z = R + jwL + 1/(jwC) = 3 + 4j - 2j (impedances in series add, same source).
    sol = solved(RLC_SERIES)
    assert same(value(sol, "transfer(voltage(L1), current(L1))"), 4 * j)
    assert same(value(sol, "transfer(voltage(C1), current(C1))"), -2 * j)
    assert same(value(sol, "transfer(voltage(R1), current(R1))"), 3)
    assert same(value(sol, "impedance(a, gnd)"), 3 + 2 * j)
    assert same(value(sol, "impedance(a)"), 3 + 2 * j)
    assert same(value(sol, "admittance(a)"), 1 / (3 + 2 * j))
    # the 1 A source drives the whole chain: v(a) = Z * 1 A
    assert same(value(sol, "voltage(a)"), 3 + 2 * j)


def test_random_rlc_parallel_impedance_matches_closed_form():
    # Parallel R, L, C: Y = 1/R + 1/(jwL) + jwC (Alexander & Sadiku, 5th ed., sec. 9.7,
    # from memory). Seeded random decimal values, read exactly as rationals.
    rng = random.Random(20240611)
    for _ in range(4):
        r, l_, c, w = (rng.randint(1, 9999) for _ in range(4))
        parts = f"""
I1 = {{ current = "1 A", frequency = "{w / 100} rad/s", nodes = ["gnd", "a"] }}
R1 = {{ resistor = "{r / 1000} ohm", nodes = ["a", "gnd"] }}
L1 = {{ inductor = "{l_ / 1000} H", nodes = ["a", "gnd"] }}
C1 = {{ capacitor = "{c / 1000} F", nodes = ["a", "gnd"] }}
"""
        rr, ll, cc, ww = R(r, 1000), R(l_, 1000), R(c, 1000), R(w, 100)
        y = 1 / rr + 1 / (j * ww * ll) + j * ww * cc
        assert same(value(solved(parts), "impedance(a)"), 1 / y)


# --------------------------------------------------------------------------
# independent sources
# --------------------------------------------------------------------------

RMS_SOURCE = """
V1 = { voltage = "10 V rms", frequency = "3 rad/s", phase = "30 deg", nodes = ["in", "gnd"] }
R1 = { resistor = "5 ohm", nodes = ["in", "gnd"] }
"""


def test_rms_source_in_peak_convention():
    # A sinusoid of rms value A has peak A*sqrt(2) (any circuits text, e.g. Alexander &
    # Sadiku, 5th ed., sec. 11.4, from memory); phase 30 deg = pi/6 rad.
    sol = solved(RMS_SOURCE, 'phasors = "peak"')
    v = value(sol, "voltage(in)")
    assert same(v, 10 * sqrt(2) * sympy.exp(j * sympy.pi / 6))
    assert same(sympy.Abs(v), 10 * sqrt(2))
    assert same(sympy.arg(v), sympy.pi / 6)
    # default convention is peak (DESIGN, worksheet format 1)
    assert same(value(solved(RMS_SOURCE), "voltage(in)"), v)


def test_rms_source_in_rms_convention():
    sol = solved(RMS_SOURCE, 'phasors = "rms"')
    v = value(sol, "voltage(in)")
    assert same(v, 10 * sympy.exp(j * sympy.pi / 6))
    assert same(value(sol, "current(R1)"), 2 * sympy.exp(j * sympy.pi / 6))


def test_peak_source_in_rms_convention():
    parts = """
V1 = { voltage = "6 V", frequency = "3 rad/s", phase = "-90 deg", nodes = ["in", "gnd"] }
R1 = { resistor = "5 ohm", nodes = ["in", "gnd"] }
"""
    # 6 V peak at -90 deg: rms phasor 6/sqrt(2) * (-j) (from memory, as above)
    assert same(value(solved(parts, 'phasors = "rms"'), "voltage(in)"), -j * 6 / sqrt(2))
    assert same(value(solved(parts), "voltage(in)"), -6 * j)


def test_source_phase_in_radians():
    parts = """
V1 = { voltage = "2 V", frequency = "1 rad/s", phase = "1 rad", nodes = ["in", "gnd"] }
R1 = { resistor = "1 ohm", nodes = ["in", "gnd"] }
"""
    assert same(value(solved(parts), "voltage(in)"), 2 * sympy.exp(j))


@pytest.mark.parametrize(("nodes", "sign"), [('["gnd", "a"]', 1), ('["a", "gnd"]', -1)])
def test_current_source_direction_dc(nodes, sign):
    # DESIGN: a current source drives its current through itself from nodes[0] to
    # nodes[1]; ["gnd", "a"] pushes 2 A into node a, and Ohm's law across the 5 ohm
    # resistor to ground gives v(a) = +10 V; reversed, -10 V.
    parts = f"""
I1 = {{ current = "2 A", nodes = {nodes} }}
R1 = {{ resistor = "5 ohm", nodes = ["a", "gnd"] }}
"""
    sol = solved(parts)
    assert sol.circuit.omega == 0
    assert same(value(sol, "voltage(a)"), sign * 10)
    assert same(value(sol, "current(I1)"), 2)
    assert same(value(sol, "current(R1)"), sign * 2)


def test_current_source_direction_ac_and_rms():
    # current(P) of a source equals its phasor; 4 A rms in peak convention is 4*sqrt(2).
    parts = """
I1 = { current = "4 A rms", frequency = "5 rad/s", phase = "90 deg", nodes = ["gnd", "a"] }
R1 = { resistor = "3 ohm", nodes = ["a", "gnd"] }
"""
    sol = solved(parts)
    assert same(value(sol, "current(I1)"), 4 * sqrt(2) * j)
    assert same(value(sol, "voltage(a)"), 12 * sqrt(2) * j)
    sol_rms = solved(parts, 'phasors = "rms"')
    assert same(value(sol_rms, "current(I1)"), 4 * j)
    assert same(value(sol_rms, "voltage(a)"), 12 * j)


def test_voltage_source_current_sign():
    # Sign convention: current enters nodes[0] (the plus terminal); a source feeding a
    # resistor therefore carries a negative current (DESIGN, worksheet format 1).
    parts = """
V1 = { voltage = "12 V", nodes = ["a", "gnd"] }
R1 = { resistor = "4 ohm", nodes = ["a", "gnd"] }
"""
    sol = solved(parts)
    assert same(value(sol, "current(V1)"), -3)
    assert same(value(sol, "voltage(V1)"), 12)


def test_dc_inductor_short_capacitor_open():
    # At DC an inductor is a short and a capacitor an open (Alexander & Sadiku, 5th ed.,
    # sec. 6.2 and 6.4, from memory): v(out) = 12 * 4/(2 + 4) = 8 V, i(L) = 2 A.
    parts = """
V1 = { voltage = "12 V", nodes = ["in", "gnd"] }
R1 = { resistor = "2 ohm", nodes = ["in", "m"] }
L1 = { inductor = "1 H", nodes = ["m", "out"] }
R2 = { resistor = "4 ohm", nodes = ["out", "gnd"] }
C1 = { capacitor = "1 uF", nodes = ["out", "gnd"] }
"""
    sol = solved(parts)
    assert sol.circuit.omega == 0
    assert same(value(sol, "voltage(out)"), 8)
    assert same(value(sol, "voltage(m, out)"), 0)
    assert same(value(sol, "voltage(L1)"), 0)
    assert same(value(sol, "current(L1)"), 2)
    assert same(value(sol, "current(C1)"), 0)
    assert same(value(sol, "voltage(C1)"), 8)


def test_dc_source_is_zero_at_an_ac_analysis_frequency():
    # Superposition: a constant source contributes nothing to the phasor at w != 0
    # (Alexander & Sadiku, 5th ed., sec. 10.5, from memory).
    parts = """
V1 = { voltage = "12 V", nodes = ["a", "gnd"] }
R1 = { resistor = "1 ohm", nodes = ["a", "b"] }
V2 = { voltage = "2 V", frequency = "1 rad/s", nodes = ["c", "gnd"] }
R2 = { resistor = "1 ohm", nodes = ["c", "b"] }
R3 = { resistor = "1 ohm", nodes = ["b", "gnd"] }
"""
    # only V2 drives: v(b) = 2 * (1 || 1) / (1 + 1 || 1) = 2/3
    assert same(value(solved(parts), "voltage(b)"), R(2, 3))


# --------------------------------------------------------------------------
# dependent sources
# --------------------------------------------------------------------------


def test_vcvs_gain():
    # vcvs: v(nodes[0]) - v(nodes[1]) = gain * (v(control[0]) - v(control[1])).
    parts = """
V1 = { voltage = "3 V", frequency = "2 rad/s", nodes = ["in", "gnd"] }
Ra = { resistor = "1 ohm", nodes = ["in", "m"] }
Rb = { resistor = "2 ohm", nodes = ["m", "gnd"] }
buf = { vcvs = "5", nodes = ["out", "gnd"], control = ["in", "m"] }
RL = { resistor = "7 ohm", nodes = ["out", "gnd"] }
"""
    sol = solved(parts)
    # v(in) - v(m) = 3 * 1/3 = 1 V (voltage divider), so v(out) = 5 V, independent of RL
    assert same(value(sol, "voltage(out)"), 5)
    assert same(value(sol, "transfer(voltage(out), voltage(in, m))"), 5)
    assert same(value(sol, "current(RL)"), R(5, 7))


@pytest.mark.parametrize(("nodes", "sign"), [('["out", "gnd"]', -1), ('["gnd", "out"]', 1)])
def test_vccs_transconductance_into_load(nodes, sign):
    # vccs current gm*v_c flows through the source from nodes[0] to nodes[1]. With
    # nodes ["out", "gnd"] it draws gm*v_c out of node out, so KCL at out gives
    # v_out/R_L + gm v_c = 0, v_out = -gm R_L v_c (the common-source small-signal gain,
    # Sedra & Smith, Microelectronic Circuits, 7th ed., ch. 7, from memory).
    parts = f"""
V1 = {{ voltage = "2 V", frequency = "10 rad/s", nodes = ["in", "gnd"] }}
Rg = {{ resistor = "1 Mohm", nodes = ["in", "gnd"] }}
drv_gm = {{ vccs = "5 mS", nodes = {nodes}, control = ["in", "gnd"] }}
RL = {{ resistor = "2 kohm", nodes = ["out", "gnd"] }}
"""
    sol = solved(parts)
    gm, rl = R(5, 1000), 2000
    assert same(value(sol, "transfer(voltage(out), voltage(in))"), sign * gm * rl)
    assert same(value(sol, "voltage(out)"), sign * gm * rl * 2)
    assert same(value(sol, "current(drv_gm)"), gm * 2)


def test_cccs_current_mirror():
    # cccs current = gain * i(control), through the source from nodes[0] to nodes[1].
    # Reference current i(Rin) = 2 V / 4 ohm = 0.5 A; a unity mirror sinking that current
    # out of node o1 through RL1 = 10 ohm gives v(o1) = -5 V; gain 3 sourcing into node o2
    # through RL2 = 10 ohm gives v(o2) = +15 V (current mirror: Sedra & Smith, 7th ed.,
    # ch. 8, from memory).
    parts = """
V1 = { voltage = "2 V", nodes = ["in", "gnd"] }
Rin = { resistor = "4 ohm", nodes = ["in", "gnd"] }
mirror = { cccs = "1", nodes = ["o1", "gnd"], control = "Rin" }
RL1 = { resistor = "10 ohm", nodes = ["o1", "gnd"] }
mirror3 = { cccs = "3", nodes = ["gnd", "o2"], control = "Rin" }
RL2 = { resistor = "10 ohm", nodes = ["o2", "gnd"] }
"""
    sol = solved(parts)
    assert same(value(sol, "current(Rin)"), R(1, 2))
    assert same(value(sol, "current(mirror)"), R(1, 2))
    assert same(value(sol, "current(mirror3)"), R(3, 2))
    assert same(value(sol, "voltage(o1)"), -5)
    assert same(value(sol, "voltage(o2)"), 15)
    assert same(value(sol, "transfer(current(mirror3), current(Rin))"), 3)


def test_cccs_controlled_by_a_voltage_source_current():
    # The current of V1 enters its plus terminal, so it is -0.5 A when V1 feeds Rin;
    # mirror (gain 2, nodes [o, gnd]) then carries -1 A from o to gnd, i.e. pushes 1 A into
    # o, and v(o) = +1 A * 3 ohm.
    parts = """
V1 = { voltage = "2 V", nodes = ["in", "gnd"] }
Rin = { resistor = "4 ohm", nodes = ["in", "gnd"] }
mirror = { cccs = "2", nodes = ["o", "gnd"], control = "V1" }
RL = { resistor = "3 ohm", nodes = ["o", "gnd"] }
"""
    sol = solved(parts)
    assert same(value(sol, "current(V1)"), -R(1, 2))
    assert same(value(sol, "voltage(o)"), 3)


def test_ccvs_transresistance():
    # ccvs: v(nodes[0]) - v(nodes[1]) = r * i(control); i(Rin) = 5 V / 10 kohm = 0.5 mA,
    # r = 4 kohm: v(out) = 2 V (transresistance amplifier, Sedra & Smith, 7th ed.,
    # ch. 1, from memory).
    parts = """
V1 = { voltage = "5 V", frequency = "1 rad/s", nodes = ["in", "gnd"] }
Rin = { resistor = "10 kohm", nodes = ["in", "gnd"] }
sense_amp = { ccvs = "4 kohm", nodes = ["out", "gnd"], control = "Rin" }
RL = { resistor = "1 kohm", nodes = ["out", "gnd"] }
"""
    sol = solved(parts)
    assert same(value(sol, "voltage(out)"), 2)
    assert same(value(sol, "transfer(voltage(out), current(Rin))"), 4000)


# --------------------------------------------------------------------------
# ideal op-amp
# --------------------------------------------------------------------------


def test_opamp_inverting_amplifier():
    # Inverting amplifier with an ideal op-amp: v_out/v_in = -R2/R1 (Sedra & Smith,
    # Microelectronic Circuits, 7th ed., sec. 2.2, from memory).
    parts = """
V1 = { voltage = "0.5 V", frequency = "100 rad/s", nodes = ["in", "gnd"] }
R1 = { resistor = "2 kohm", nodes = ["in", "n"] }
R2 = { resistor = "15 kohm", nodes = ["n", "out"] }
RL = { resistor = "1 kohm", nodes = ["out", "gnd"] }
U1 = { opamp = "ideal", nodes = ["out", "gnd", "n"] }
"""
    sol = solved(parts)
    assert same(value(sol, "transfer(voltage(out), voltage(in))"), -R(15, 2))
    assert same(value(sol, "voltage(n)"), 0)  # virtual ground
    # input impedance of the inverting stage is R1 (same source)
    assert same(value(sol, "transfer(voltage(in), current(R1))"), 2000)


def test_opamp_non_inverting_amplifier():
    # Non-inverting amplifier: v_out/v_in = 1 + R2/R1 (Sedra & Smith, 7th ed., sec. 2.3,
    # from memory).
    parts = """
V1 = { voltage = "0.5 V", nodes = ["in", "gnd"] }
R1 = { resistor = "3 kohm", nodes = ["n", "gnd"] }
R2 = { resistor = "12 kohm", nodes = ["n", "out"] }
U1 = { opamp = "ideal", nodes = ["out", "in", "n"] }
"""
    sol = solved(parts)
    assert same(value(sol, "transfer(voltage(out), voltage(in))"), 5)
    assert same(value(sol, "voltage(out)"), R(5, 2))


def test_opamp_integrator():
    # Inverting integrator at w: v_out/v_in = -1/(jwRC) (Sedra & Smith, 7th ed.,
    # sec. 2.8, from memory). R = 10 kohm, C = 1 uF, w = 300 rad/s: RC w = 3.
    parts = """
V1 = { voltage = "1 V", frequency = "300 rad/s", nodes = ["in", "gnd"] }
R1 = { resistor = "10 kohm", nodes = ["in", "n"] }
C1 = { capacitor = "1 uF", nodes = ["n", "out"] }
U1 = { opamp = "ideal", nodes = ["out", "gnd", "n"] }
"""
    sol = solved(parts)
    h = value(sol, "transfer(voltage(out), voltage(in))")
    assert same(h, -1 / (j * 300 * 10000 * R(1, 10**6)))
    assert same(h, j / 3)


# --------------------------------------------------------------------------
# coupled inductors
# --------------------------------------------------------------------------


def coupled(l1: str, l2: str, k: str, secondary: str, load: str = 'RL = { resistor = "7 ohm", nodes = ["s", "gnd"] }'):
    return f"""
V1 = {{ voltage = "1 V", frequency = "3 rad/s", nodes = ["p", "gnd"] }}
L1 = {{ inductor = "{l1}", nodes = ["p", "gnd"] }}
L2 = {{ inductor = "{l2}", nodes = {secondary} }}
mutual_ps = {{ coupling = "{k}", inductors = ["L1", "L2"] }}
{load}
"""


def coupled_input_impedance(l1, l2, k, rl, w):
    # Z_in = jwL1 + (wM)^2/(R_L + jwL2), M = k sqrt(L1 L2) (Alexander & Sadiku,
    # Fundamentals of Electric Circuits, 5th ed., sec. 13.2-13.3, from memory).
    m = k * sqrt(l1 * l2)
    return j * w * l1 + (w * m) ** 2 / (rl + j * w * l2), m


@pytest.mark.parametrize(("l1", "l2", "k"), [("2 H", "8 H", "0.5"), ("1 H", "3 H", "0.5"), ("4 H", "1 H", "0.9")])
def test_coupled_inductor_input_impedance(l1, l2, k):
    vals = {"2 H": 2, "8 H": 8, "1 H": 1, "3 H": 3, "4 H": 4}
    z_in, _ = coupled_input_impedance(vals[l1], vals[l2], sympy.nsimplify(k), 7, 3)
    for secondary in ('["s", "gnd"]', '["gnd", "s"]'):  # the reflected term does not depend on the dots
        sol = solved(coupled(l1, l2, k, secondary))
        # the primary current enters the plus terminal of V1: Z_in = -V1 / i(V1)
        assert same(-value(sol, "transfer(voltage(p), current(V1))"), z_in)
        assert same(value(sol, "transfer(voltage(L1), current(L1))"), z_in)


def test_coupled_inductor_input_impedance_with_sources_zeroed():
    # impedance(p) looks into node p with a zeroed current source (an open) driving it.
    parts = coupled("2 H", "8 H", "0.5", '["s", "gnd"]').replace(
        'V1 = { voltage = "1 V", frequency = "3 rad/s", nodes = ["p", "gnd"] }',
        'I1 = { current = "1 A", frequency = "3 rad/s", nodes = ["gnd", "p"] }',
    )
    z_in, _ = coupled_input_impedance(2, 8, R(1, 2), 7, 3)
    sol = solved(parts)
    assert same(value(sol, "impedance(p)"), z_in)
    assert same(value(sol, "voltage(p)"), z_in)


def test_coupled_inductor_dot_convention_flips_secondary_voltage():
    # Dotted ends are nodes[0]. With the load across the secondary,
    # v_s = jwM R_L V1 / ((R_L + jwL2) Z_in) when the dotted end of L2 is at s;
    # swapping L2's nodes reverses the sign (Alexander & Sadiku, 5th ed., sec. 13.2,
    # dot convention, from memory).
    z_in, m = coupled_input_impedance(2, 8, R(1, 2), 7, 3)
    v_s = j * 3 * m * 7 / ((7 + j * 3 * 8) * z_in)
    dotted = value(solved(coupled("2 H", "8 H", "0.5", '["s", "gnd"]')), "voltage(s)")
    swapped = value(solved(coupled("2 H", "8 H", "0.5", '["gnd", "s"]')), "voltage(s)")
    assert same(dotted, v_s)
    assert same(swapped, -v_s)
    assert not same(dotted, 0)


def test_coupled_inductor_open_secondary_ratio():
    # Open secondary: v_2/v_1 = M/L1 = k sqrt(L2/L1) (from memory, same source).
    load = 'Rx = { resistor = "1 ohm", nodes = ["p", "gnd"] }'
    sol = solved(coupled("2 H", "8 H", "0.5", '["s", "gnd"]', load))
    assert same(value(sol, "transfer(voltage(s), voltage(p))"), R(1, 2) * sqrt(R(8, 2)))
    sol = solved(coupled("1 H", "3 H", "0.5", '["s", "gnd"]', load))
    assert same(value(sol, "transfer(voltage(s), voltage(p))"), R(1, 2) * sqrt(3))


def test_coupled_inductors_against_numpy_loop_equations():
    # Independent numeric reference: the two mesh equations
    #   V1 = jwL1 I1 + jwM I2,  0 = jwM I1 + (jwL2 + R_L) I2
    # (currents into the dotted ends; Alexander & Sadiku, 5th ed., sec. 13.2, from
    # memory) solved with numpy.linalg.solve.
    w, l1, l2, k, rl = 3.0, 1.0, 3.0, 0.5, 7.0
    m = k * np.sqrt(l1 * l2)
    a = np.array([[1j * w * l1, 1j * w * m], [1j * w * m, 1j * w * l2 + rl]])
    i1, i2 = np.linalg.solve(a, np.array([1.0, 0.0]))
    sol = solved(coupled("1 H", "3 H", "0.5", '["s", "gnd"]'))
    got_i1 = complex(sympy.N(value(sol, "current(L1)"), 20))
    got_vs = complex(sympy.N(value(sol, "voltage(s)"), 20))
    assert_allclose(got_i1, i1, rtol=1e-12)
    assert_allclose(got_vs, -i2 * rl, rtol=1e-12)


# --------------------------------------------------------------------------
# ideal transformer
# --------------------------------------------------------------------------


def transformer_circuit(ratio: str, secondary: str, load: str) -> str:
    return f"""
I1 = {{ current = "1 A", frequency = "2 rad/s", nodes = ["gnd", "p"] }}
T1 = {{ transformer = "{ratio}", nodes = ["p", "gnd", {secondary}] }}
{load}
"""


def test_transformer_voltage_ratio_and_reflected_resistance():
    # Ideal transformer: v2/v1 = N2/N1 and Z_in = (N1/N2)^2 Z_L (Alexander & Sadiku,
    # 5th ed., sec. 13.5, from memory). N1:N2 = 1:3, R_L = 18 ohm -> Z_in = 2 ohm.
    load = 'RL = { resistor = "18 ohm", nodes = ["s", "gnd"] }'
    sol = solved(transformer_circuit("1:3", '"s", "gnd"', load))
    assert same(value(sol, "transfer(voltage(s), voltage(p))"), 3)
    assert same(value(sol, "impedance(p)"), 2)
    assert same(value(sol, "voltage(p)"), 2)
    # current ratio i2/i1 = N1/N2 (same source): 1 A in, 1/3 A out through RL
    assert same(value(sol, "current(RL)"), R(1, 3))


def test_transformer_reflected_reactive_load():
    # Step-down 5:2 into R + jwL = 4 + 6j ohm: Z_in = (5/2)^2 (4 + 6j) (same source).
    load = """RL = { resistor = "4 ohm", nodes = ["s", "x"] }
LL = { inductor = "3 H", nodes = ["x", "gnd"] }"""
    sol = solved(transformer_circuit("5:2", '"s", "gnd"', load))
    assert same(value(sol, "impedance(p)"), R(25, 4) * (4 + 6 * j))
    assert same(value(sol, "transfer(voltage(s), voltage(p))"), R(2, 5))


def test_transformer_dot_convention_flips_secondary():
    # Dots at p1 and s1: swapping the secondary's ends reverses v(s) (dot convention,
    # Alexander & Sadiku, 5th ed., sec. 13.5, from memory); Z_in is unchanged.
    load = 'RL = { resistor = "18 ohm", nodes = ["s", "gnd"] }'
    sol = solved(transformer_circuit("1:3", '"gnd", "s"', load))
    assert same(value(sol, "transfer(voltage(s), voltage(p))"), -3)
    assert same(value(sol, "impedance(p)"), 2)


# --------------------------------------------------------------------------
# power
# --------------------------------------------------------------------------

RL_LOAD = """
V1 = {{ voltage = "{amp}", frequency = "2 rad/s", nodes = ["in", "gnd"] }}
R1 = {{ resistor = "3 ohm", nodes = ["in", "m"] }}
L1 = {{ inductor = "2 H", nodes = ["m", "gnd"] }}
"""


def test_power_rl_load_peak_phasors():
    # |V| = 10 V peak, Z = 3 + 4j (|Z| = 5), peak phasors:
    # P = |V|^2 R / (2|Z|^2) = 6 W, Q = |I|^2 X / 2 = 8 var, |S| = 10 VA, pf = R/|Z| = 0.6
    # (Alexander & Sadiku, 5th ed., sec. 11.2 and 11.6-11.8, from memory).
    sol = solved(RL_LOAD.format(amp="10 V"), 'phasors = "peak"')
    assert same(value(sol, "power(R1)"), 6)
    assert same(value(sol, "reactive_power(R1)"), 0)
    assert same(value(sol, "power(L1)"), 0)
    assert same(value(sol, "reactive_power(L1)"), 8)
    # the source delivers: absorbed power is negative (DESIGN sign convention)
    assert same(value(sol, "power(V1)"), -6)
    assert same(value(sol, "reactive_power(V1)"), -8)
    assert same(value(sol, "apparent_power(V1)"), 10)
    assert same(value(sol, "power_factor(V1)"), R(3, 5))
    assert same(value(sol, "power_factor(R1)"), 1)
    assert same(value(sol, "power_factor(L1)"), 0)


@pytest.mark.parametrize("phasors", ["peak", "rms"])
def test_power_is_independent_of_phasor_convention(phasors):
    # A "10 V rms" source is 10*sqrt(2) V peak: P = V_rms^2 R / |Z|^2 = 12 W,
    # Q = 16 var, |S| = 20 VA whatever the convention of the worksheet (same source).
    sol = solved(RL_LOAD.format(amp="10 V rms"), f'phasors = "{phasors}"')
    assert same(value(sol, "power(R1)"), 12)
    assert same(value(sol, "reactive_power(L1)"), 16)
    assert same(value(sol, "power(V1)"), -12)
    assert same(value(sol, "apparent_power(V1)"), 20)
    assert same(value(sol, "power_factor(V1)"), R(3, 5))


def test_power_balance_tellegen():
    # Complex power sums to zero over all parts (Tellegen's theorem; Alexander & Sadiku,
    # 5th ed., sec. 11.8, conservation of AC power, from memory).
    parts = """
V1 = { voltage = "10 V", frequency = "2 rad/s", phase = "45 deg", nodes = ["in", "gnd"] }
R1 = { resistor = "3 ohm", nodes = ["in", "m"] }
L1 = { inductor = "2 H", nodes = ["m", "gnd"] }
C1 = { capacitor = "0.1 F", nodes = ["m", "gnd"] }
R2 = { resistor = "5 ohm", nodes = ["in", "gnd"] }
"""
    sol = solved(parts)
    ids = ["V1", "R1", "L1", "C1", "R2"]
    assert same(sum(value(sol, f"power({p})") for p in ids), 0)
    assert same(sum(value(sol, f"reactive_power({p})") for p in ids), 0)
    assert not same(value(sol, "power(R2)"), 0)


def test_power_dc():
    # At DC P = V I (no factor 1/2): 12 V across 4 ohm is 36 W (Ohm's and Joule's laws).
    parts = """
V1 = { voltage = "12 V", nodes = ["a", "gnd"] }
R1 = { resistor = "4 ohm", nodes = ["a", "gnd"] }
"""
    sol = solved(parts)
    assert same(value(sol, "power(R1)"), 36)
    assert same(value(sol, "power(V1)"), -36)


def test_power_steps_through_check_text():
    # The same numbers as claims in a worksheet: every step agrees, and a claim with the
    # source's sign flipped does not (DESIGN: power absorbed is positive).
    steps = """
[[step]]
name = "P"
quantity = "power(R1)"
claim = "6 W"
[[step]]
name = "Ps"
quantity = "power(V1)"
claim = "-6 W"
[[step]]
name = "Q"
quantity = "reactive_power(L1)"
claim = "8 var"
[[step]]
name = "S"
quantity = "apparent_power(V1)"
claim = "10 VA"
[[step]]
name = "pf"
quantity = "power_factor(V1)"
claim = "0.6"
[[step]]
name = "Pwrong"
quantity = "power(V1)"
claim = "6 W"
"""
    report = handcheck.check_text(worksheet(RL_LOAD.format(amp="10 V"), "", steps))
    verdicts = [s.verdict for s in report.steps]
    assert verdicts[:5] == ["agrees"] * 5
    assert verdicts[5] == "differs"
    assert same(report.steps[1].exact, -6)
    assert_allclose(report.steps[3].expected_si, [10.0, 0.0], rtol=1e-12)


# --------------------------------------------------------------------------
# structural errors
# --------------------------------------------------------------------------

STEP = '\n[[step]]\nname = "x"\nquantity = "voltage(a)"\nclaim = "1 V"\n'


def circuit_error(parts: str, head: str = "") -> handcheck.CircuitError:
    with pytest.raises(handcheck.CircuitError) as info:
        handcheck.check_text(worksheet(parts, head, STEP))
    return info.value


def test_parallel_voltage_sources_form_a_loop():
    exc = circuit_error("""
V1 = { voltage = "5 V", nodes = ["a", "gnd"] }
V2 = { voltage = "6 V", nodes = ["a", "gnd"] }
R1 = { resistor = "1 ohm", nodes = ["a", "gnd"] }
""")
    assert set(exc.parts) == {"V1", "V2"}
    assert "V1" in str(exc) and "V2" in str(exc)
    assert isinstance(exc, handcheck.HandcheckError)


def test_voltage_source_across_inductor_at_dc_is_a_loop():
    # An inductor is a short at DC (sec. 6.4, as above): V1 across L1 is a loop.
    exc = circuit_error("""
V1 = { voltage = "5 V", nodes = ["a", "gnd"] }
L1 = { inductor = "1 mH", nodes = ["a", "gnd"] }
""")
    assert set(exc.parts) == {"V1", "L1"}


def test_current_source_in_series_with_capacitor_at_dc():
    # At DC the capacitor is open, so node a is reached only through I1 and C1.
    exc = circuit_error("""
I1 = { current = "1 mA", nodes = ["gnd", "a"] }
C1 = { capacitor = "1 uF", nodes = ["a", "b"] }
R1 = { resistor = "1 kohm", nodes = ["b", "gnd"] }
""")
    assert set(exc.parts) == {"I1", "C1"}
    assert "I1" in str(exc) and "C1" in str(exc)


def test_same_series_capacitor_is_fine_at_ac():
    # Control for the test above: with a sinusoidal source the capacitor conducts and
    # v(a) = I (R + 1/(jwC)) = 1 * (1 + 1/(j*1*1)) (same sources as above).
    parts = """
I1 = { current = "1 A", frequency = "1 rad/s", nodes = ["gnd", "a"] }
C1 = { capacitor = "1 F", nodes = ["a", "b"] }
R1 = { resistor = "1 ohm", nodes = ["b", "gnd"] }
"""
    assert same(value(solved(parts), "voltage(a)"), 1 - j)


def test_node_reached_only_through_current_sources():
    exc = circuit_error("""
I1 = { current = "1 A", frequency = "1 rad/s", nodes = ["gnd", "a"] }
I2 = { current = "1 A", frequency = "1 rad/s", nodes = ["a", "b"] }
R1 = { resistor = "1 ohm", nodes = ["b", "gnd"] }
""")
    assert set(exc.parts) == {"I1", "I2"}


def test_island_not_connected_to_ground():
    exc = circuit_error("""
V1 = { voltage = "1 V", nodes = ["a", "gnd"] }
R1 = { resistor = "1 ohm", nodes = ["a", "gnd"] }
R2 = { resistor = "1 ohm", nodes = ["x", "y"] }
R3 = { resistor = "2 ohm", nodes = ["y", "x"] }
""")
    assert set(exc.parts) == {"R2", "R3"}
    assert "gnd" in str(exc)


def test_series_lc_driven_at_resonance():
    # Series LC at w = 1/sqrt(LC) = 1 rad/s has Z = 0 (Alexander & Sadiku, 5th ed.,
    # sec. 14.5, from memory): across an ideal voltage source the current is undetermined.
    exc = circuit_error("""
V1 = { voltage = "1 V", frequency = "1 rad/s", nodes = ["a", "gnd"] }
L1 = { inductor = "1 H", nodes = ["a", "b"] }
C1 = { capacitor = "1 F", nodes = ["b", "gnd"] }
""")
    assert {"L1", "C1"} <= set(exc.parts)
    assert set(exc.parts) <= {"L1", "C1", "V1"}


def test_parallel_lc_driven_at_resonance_by_current_source():
    # Parallel LC at resonance has infinite impedance (same source, sec. 14.6): a
    # current source into it leaves the node voltage undetermined.
    exc = circuit_error("""
I1 = { current = "1 A", frequency = "0.5 rad/s", nodes = ["gnd", "a"] }
L1 = { inductor = "2 H", nodes = ["a", "gnd"] }
C1 = { capacitor = "2 F", nodes = ["a", "gnd"] }
""")
    assert {"L1", "C1"} <= set(exc.parts)
    assert set(exc.parts) <= {"L1", "C1", "I1"}


def test_series_lc_just_off_resonance_solves():
    # Control: at w = 2 rad/s, Z = j*2*1 + 1/(j*2*1) = 1.5j, so i = 1/(1.5j).
    parts = """
V1 = { voltage = "1 V", frequency = "2 rad/s", nodes = ["a", "gnd"] }
L1 = { inductor = "1 H", nodes = ["a", "b"] }
C1 = { capacitor = "1 F", nodes = ["b", "gnd"] }
"""
    assert same(value(solved(parts), "current(L1)"), 1 / (R(3, 2) * j))

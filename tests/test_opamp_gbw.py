"""An op-amp with a gain-bandwidth product (``gbw``): one pole, checked against outside sources.

The model is the one-pole open loop A(s) = A0/(1 + s/wp) with wp = 2*pi*gbw/A0 (the
dominant-pole model of an internally compensated op-amp). Each check names its
source: the closed-loop results of Sedra & Smith, *Microelectronic Circuits*,
chapter "Operational amplifiers", section "Effect of finite open-loop gain and
bandwidth on circuit performance" (from memory; edition-independent, section number
not checked): the closed-loop gain A/(1 + A*beta), its exact -3 dB angular frequency
wp*(1 + A0*beta) and the approximation GBW/(noise gain) for large A0; scipy.signal
(``freqs``, ``step``) as the reference library for the same one-pole model; the
first-order step response 1 - exp(-t/tau) (any circuits text, from memory).
Component values are invented.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy
from numpy.testing import assert_allclose

import handcheck
from handcheck.circuit.build import build
from handcheck.errors import CircuitError, UnitError, WorksheetError
from handcheck.pipeline import run_text
from handcheck.solve.phasor import solve
from handcheck.solve.quantities import evaluate_quantity, parse_quantity
from handcheck.solve.transient import transient_solution

A0 = 200_000
GBW = 10**6  # Hz
BETA = sympy.Rational(1, 10)  # Rg/(Rf + Rg) with Rf = 9 kohm, Rg = 1 kohm
WP = 2 * sympy.pi * GBW / A0  # rad/s, the open-loop pole
S = sympy.Symbol("s")
H = "network_function(voltage(out), voltage(in))"


def worksheet(parts: str, head: str = "", steps: str = "") -> str:
    return f'[worksheet]\nformat = 1\ntitle = "one-pole op-amp"\n{head}\n[parts]\n{parts}\n{steps}'


NONINVERTING = f"""
Vin = {{ voltage = "0.1 V", frequency = "20 kHz", nodes = ["in", "gnd"] }}
U1 = {{ opamp = "{A0}", gbw = "1 MHz", nodes = ["out", "in", "n"] }}
Rf = {{ resistor = "9 kohm", tolerance = "1%", nodes = ["out", "n"] }}
Rg = {{ resistor = "1 kohm", tolerance = "1%", nodes = ["n", "gnd"] }}
"""


def exact(parts: str, quantity: str, head: str = "") -> sympy.Expr:
    """The exact value handcheck derives for a quantity."""
    solution = solve(build(handcheck.loads(worksheet(parts, head))))
    return evaluate_quantity(solution, parse_quantity(quantity)).expr


def closed_loop() -> sympy.Expr:
    """A/(1 + A*beta) with the one-pole A(s) (Sedra & Smith, from memory), built here in sympy."""
    a = A0 / (1 + S / WP)
    return sympy.cancel(a / (1 + a * BETA))


# --------------------------------------------------------------------------
# reading the worksheet
# --------------------------------------------------------------------------


@pytest.mark.parametrize("text", ["1 MHz", "1000 kHz", "1000000 Hz"])
def test_gbw_reads_hz_khz_mhz_as_the_same_exact_angular_frequency(text):
    parts = f'V1 = {{ voltage = "1 V", nodes = ["p", "gnd"] }}\nU1 = {{ opamp = "1000", gbw = "{text}", nodes = ["o", "p", "o"] }}'
    part = build(handcheck.loads(worksheet(parts))).part("U1")
    assert part.value == 1000
    assert sympy.simplify(part.gbw - 2 * sympy.pi * 10**6) == 0


def test_gbw_in_rad_per_second_stays_rational():
    parts = 'V1 = { voltage = "1 V", nodes = ["p", "gnd"] }\nU1 = { opamp = "1000", gbw = "6283185 rad/s", nodes = ["o", "p", "o"] }'
    assert build(handcheck.loads(worksheet(parts))).part("U1").gbw == 6283185


def test_gbw_on_an_ideal_op_amp_says_to_give_the_gain():
    parts = 'V1 = { voltage = "1 V", nodes = ["p", "gnd"] }\nU1 = { opamp = "ideal", gbw = "1 MHz", nodes = ["o", "p", "o"] }'
    with pytest.raises(WorksheetError) as info:
        handcheck.loads(worksheet(parts))
    assert "op-amp U1 is ideal" in info.value.message
    assert 'opamp = "200000", gbw = "1 MHz"' in info.value.message


@pytest.mark.parametrize(
    ("line", "kind"),
    [
        ('R2 = { resistor = "1 kohm", gbw = "1 MHz", nodes = ["p", "gnd"] }', "resistor"),
        ('V2 = { voltage = "1 V", gbw = "1 MHz", nodes = ["q", "gnd"] }', "voltage"),
        ('amp_e = { vcvs = "10", gbw = "1 MHz", control = ["p", "gnd"], nodes = ["e", "gnd"] }', "vcvs"),
    ],
)
def test_gbw_on_another_kind_names_the_part_and_the_op_amp_form(line, kind):
    parts = 'V1 = { voltage = "1 V", nodes = ["p", "gnd"] }\n' + line
    with pytest.raises(WorksheetError) as info:
        handcheck.loads(worksheet(parts))
    ident = line.split()[0]
    assert info.value.message.startswith(
        f'{ident} is a {kind}; only an op-amp with a finite open-loop gain takes "gbw"'
    )
    assert 'opamp = "200000", gbw = "1 MHz"' in info.value.message


@pytest.mark.parametrize("text", ["1 V", "-1 MHz", "0 Hz", "1000000"])
def test_gbw_must_be_a_positive_frequency(text):
    parts = f'V1 = {{ voltage = "1 V", nodes = ["p", "gnd"] }}\nU1 = {{ opamp = "1000", gbw = "{text}", nodes = ["o", "p", "o"] }}'
    with pytest.raises(UnitError) as info:
        handcheck.loads(worksheet(parts))
    assert "gain-bandwidth product (gbw) of op-amp U1" in info.value.message
    assert "must be a positive frequency in Hz or rad/s" in info.value.message


# A gbw in Hz (pi in the equations) together with a coupling whose mutual inductance
# M = k*sqrt(L1*L2) = 0.5*sqrt(6) mH is irrational: the exact numbers lie in QQ<sqrt(6)>(pi).
# V1 drives L1 (2 mH) directly; L2 (3 mH, coupled with k = 0.5) is loaded by R1 = 1 kohm
# and feeds a non-inverting stage of noise gain 10. The coupled pair gives
# v(s)/v(p) = (M/L1)/(1 + s*L2*(1 - k^2)/R1) (coupled coils with both dots on the
# driven ends, from V1 = s L1 I1 + s M I2, V2 = s M I1 + s L2 I2, I2 = -V2/R1; Nilsson &
# Riedel, Electric Circuits, 10th ed., sec. 6.4 and 9.10, from memory), and the stage the
# one-pole closed loop A/(1 + A*beta) (Sedra & Smith, from memory).
COUPLED = f"""
V1 = {{ voltage = "1 V", frequency = "20 kHz", nodes = ["p", "gnd"] }}
L1 = {{ inductor = "2 mH", nodes = ["p", "gnd"] }}
L2 = {{ inductor = "3 mH", nodes = ["s", "gnd"] }}
link12 = {{ coupling = "0.5", inductors = ["L1", "L2"] }}
R1 = {{ resistor = "1 kohm", nodes = ["s", "gnd"] }}
U1 = {{ opamp = "{A0}", gbw = "1 MHz", nodes = ["out", "s", "n"] }}
Rf = {{ resistor = "9 kohm", nodes = ["out", "n"] }}
Rg = {{ resistor = "1 kohm", nodes = ["n", "gnd"] }}
"""
H_COUPLED = "network_function(voltage(out), voltage(p))"
K, L1, L2, R1 = sympy.Rational(1, 2), sympy.Rational(2, 1000), sympy.Rational(3, 1000), 1000
COIL_POLE = R1 / (L2 * (1 - K**2))  # rad/s, 4000000/9
LOOP_POLE = WP * (1 + A0 * BETA)  # rad/s


def coupled_response() -> sympy.Expr:
    """(M/L1)/(1 + s/COIL_POLE) times A/(1 + A*beta), built here in sympy."""
    m = K * sympy.sqrt(L1 * L2)
    return (m / L1) / (1 + S / COIL_POLE) * closed_loop()


def test_gbw_in_hz_with_an_irrational_mutual_inductance_solves_exactly():
    found = exact(COUPLED, H_COUPLED)
    assert found.has(sympy.pi) and found.has(sympy.sqrt(6))
    assert sympy.simplify(found - coupled_response()) == 0
    phasor = exact(COUPLED, "voltage(out)")
    reference = complex(coupled_response().subs(S, sympy.I * 2 * sympy.pi * 20_000))
    assert_allclose(complex(phasor), reference, rtol=1e-12)


def test_gbw_in_hz_with_a_coupling_cutoff_is_the_two_pole_closed_form():
    # Two real poles a, b: |H|^2 falls to half where (1 + x/a^2)(1 + x/b^2) = 2, x = w^2,
    # so x = (sqrt((a^2 + b^2)^2 + 4 a^2 b^2) - a^2 - b^2)/2 (solved by hand here);
    # scipy.signal.freqs of the same poles confirms the half-power point.
    from scipy.signal import freqs

    a, b = float(COIL_POLE), float(LOOP_POLE)
    x = (math.sqrt((a * a + b * b) ** 2 + 4 * a * a * b * b) - a * a - b * b) / 2
    fc = exact(COUPLED, f"cutoff_frequency({H_COUPLED})")
    assert_allclose(float(fc), math.sqrt(x) / (2 * math.pi), rtol=1e-12)
    _, h = freqs([a * b], np.polymul([1.0, a], [1.0, b]), worN=[0.0, 2 * math.pi * float(fc)])
    assert_allclose(abs(h[1]) / abs(h[0]), 1 / math.sqrt(2), rtol=1e-12)


def test_gbw_in_hz_with_a_coupling_step_response_is_the_two_pole_closed_form():
    # Step response of K*a*b/((s + a)(s + b)): K*(1 - b/(b - a) e^(-a t) + a/(b - a) e^(-b t))
    # (partial fractions, any circuits text, from memory), K = (M/L1)*A0/(1 + A0*beta).
    parts = COUPLED.replace('"1 V", frequency = "20 kHz"', '"1*step(t) V"')
    wave = transient_solution(build(handcheck.loads(worksheet(parts)))).node_voltage("out").as_expr()
    a, b = COIL_POLE, LOOP_POLE
    gain = K * sympy.sqrt(L2 / L1) * A0 / (1 + A0 * BETA)
    t = sympy.Symbol("t")
    closed = gain * (1 - b / (b - a) * sympy.exp(-a * t) + a / (b - a) * sympy.exp(-b * t))
    for point in (sympy.Integer(0), sympy.Rational(1, 10**6), sympy.Rational(5, 10**6), sympy.Rational(1, 10**4)):
        assert sympy.N(wave.subs(t, point) - closed.subs(t, point), 30) == pytest.approx(0, abs=1e-25)


def test_a_worksheet_with_gbw_in_hz_and_an_irrational_coupling_checks_out():
    reference = complex(coupled_response().subs(S, sympy.I * 2 * sympy.pi * 20_000))
    a, b = float(COIL_POLE), float(LOOP_POLE)
    fc = math.sqrt((math.sqrt((a * a + b * b) ** 2 + 4 * a * a * b * b) - a * a - b * b) / 2) / (2 * math.pi)
    steps = (
        f'[[step]]\nname = "vo"\nquantity = "voltage(out)"\n'
        f'claim = "{abs(reference):.5g} V /_ {math.degrees(np.angle(reference)):.4g} deg"\n'
        f'[[step]]\nname = "fc"\nquantity = "cutoff_frequency({H_COUPLED})"\nclaim = "{fc / 1000:.5g} kHz"\n'
    )
    report = handcheck.check_text(worksheet(COUPLED, steps=steps))
    assert [(s.name, s.verdict) for s in report.steps] == [("vo", "agrees"), ("fc", "agrees")]


# --------------------------------------------------------------------------
# exact equations: network function, cutoff, DC, steady state, poles
# --------------------------------------------------------------------------


def test_network_function_is_the_closed_loop_gain_of_the_one_pole_model():
    # Sedra & Smith (from memory): A(s) = A0/(1 + s/wp), closed loop A/(1 + A*beta),
    # = A0*wp/(s + wp*(1 + A0*beta)).
    found = exact(NONINVERTING, H)
    assert sympy.simplify(found - closed_loop()) == 0
    assert sympy.simplify(found - A0 * WP / (S + WP * (1 + A0 * BETA))) == 0


def test_cutoff_is_wp_times_one_plus_loop_gain_and_near_gbw_over_noise_gain():
    # Exact closed-loop -3 dB angular frequency wp*(1 + A0*beta); for large A0 it
    # tends to GBW*beta = GBW/(noise gain) (Sedra & Smith, from memory).
    fc = exact(NONINVERTING, f"cutoff_frequency({H})")
    assert sympy.simplify(fc - WP * (1 + A0 * BETA) / (2 * sympy.pi)) == 0
    approx = GBW * BETA
    relative = float((fc - approx) / approx)
    assert_allclose(relative, 1 / float(A0 * BETA), rtol=1e-12)  # exactly 1/(A0*beta) here


def test_dc_gain_uses_the_dc_open_loop_gain():
    # At s = 0 the open-loop gain is A0: A0/(1 + A0*beta), the finite-gain result
    # (Sedra & Smith, from memory); the DC phasor of a constant source agrees.
    assert exact(NONINVERTING, f"dc_gain({H})") == sympy.Rational(A0) / (1 + A0 * BETA)
    dc_parts = NONINVERTING.replace('"0.1 V", frequency = "20 kHz"', '"0.1 V"')
    assert exact(dc_parts, "voltage(out)") == sympy.Rational(1, 10) * A0 / (1 + A0 * BETA)


def test_pole_is_minus_wp_times_one_plus_loop_gain():
    # The closed loop's one pole, -wp*(1 + A0*beta) (Sedra & Smith, from memory).
    solution = solve(build(handcheck.loads(worksheet(NONINVERTING))))
    (pole,) = evaluate_quantity(solution, parse_quantity(f"poles({H})"))
    assert sympy.simplify(pole.expr + WP * (1 + A0 * BETA)) == 0


@pytest.mark.parametrize("hz", [1e3, 20e3, 100e3, 1e6])
def test_gain_and_phase_at_frequency_match_scipy_freqs_of_the_one_pole_model(hz):
    # Reference: scipy.signal.freqs of the open loop A(s) = A0*wp/(s + wp), closed
    # with A/(1 + A*beta) in numpy (Sedra & Smith's closed-loop relation, from memory).
    from scipy.signal import freqs

    wp = float(WP)
    _, a = freqs([A0 * wp], [1.0, wp], worN=[2 * math.pi * hz])
    reference = a[0] / (1 + a[0] * float(BETA))
    inner = f'at_frequency(transfer(voltage(out), voltage(in)), "{hz:g} Hz")'
    magnitude = exact(NONINVERTING, f"magnitude({inner})")
    phase = exact(NONINVERTING, f"phase({inner})")
    assert_allclose(float(magnitude), abs(reference), rtol=1e-12)
    assert_allclose(float(phase), np.angle(reference), rtol=1e-12, atol=1e-15)


def test_steady_phasor_at_the_source_frequency_matches_scipy_and_the_fitted_simulation():
    from scipy.signal import freqs

    wp = float(WP)
    _, a = freqs([A0 * wp], [1.0, wp], worN=[2 * math.pi * 20e3])
    reference = 0.1 * a[0] / (1 + a[0] * float(BETA))
    assert_allclose(complex(exact(NONINVERTING, "voltage(out)")), reference, rtol=1e-12)
    result = run_text(worksheet(NONINVERTING, steps=STEP_VOUT), evidence=True)
    fitted = {name: fit for name, fit, _ in result.evidence.phasors}
    assert_allclose(fitted["voltage(out)"], reference, rtol=1e-9)


STEP_VOUT = '[[step]]\nname = "vo"\nquantity = "voltage(out)"\nclaim = "0.98 V /_ -11.3 deg"\n'


def test_audit_of_gbw_over_noise_gain_reports_the_exact_relative_error():
    # GBW*beta against wp*(1 + A0*beta): (GBW*beta)/(wp*(1 + A0*beta)) - 1
    # = -1/(1 + A0*beta) at the nominal values (Sedra & Smith's relations, from memory).
    text = worksheet(
        NONINVERTING,
        steps=(
            f'[[formula]]\nname = "approx"\nquantity = "cutoff_frequency({H})"\nexpression = "1 MHz*Rg/(Rf + Rg)"\n'
        ),
    )
    (finding,) = run_text(text).audit
    assert finding.verdict == "differs"
    assert_allclose(finding.nominal_error, -1 / (1 + A0 * float(BETA)), rtol=1e-9)


def test_audit_with_the_gain_as_symbol_finds_the_rule_holds_as_the_gain_grows():
    # The rule of thumb GBW/(noise gain) is the limit A0 -> oo of wp*(1 + A0*beta)
    # (Sedra & Smith, from memory); over A0 in [50000, 200000] its error is
    # -1/(1 + A0*beta), lowest at A0 = 50000.
    parts = NONINVERTING.replace(f'opamp = "{A0}",', f'opamp = "{A0}", range = ["50000", "{A0}"],').replace(
        ', tolerance = "1%"', ""
    )
    text = worksheet(
        parts,
        steps=(
            '[audit]\nsymbols = ["U1"]\n[[formula]]\nname = "approx"\n'
            f'quantity = "cutoff_frequency({H})"\nexpression = "1 MHz*Rg/(Rf + Rg)"\n'
        ),
    )
    (finding,) = run_text(text).audit
    assert finding.holds_when == ("U1 -> oo",)
    assert finding.worst_case is not None
    assert_allclose(finding.worst_case.low, -1 / (1 + 50_000 * float(BETA)), rtol=1e-9)
    assert_allclose(finding.worst_case.high, -1 / (1 + A0 * float(BETA)), rtol=1e-9)


LOSSLESS_LOOP = """
Vs = { voltage = "1 V", frequency = "FREQ", nodes = ["src", "gnd"] }
U1 = { opamp = "1.5625", gbw = "1 kHz", nodes = ["v1", "p1", "v2"] }
Ra1 = { resistor = "562.5 ohm", nodes = ["v1", "p1"] }
Rb1 = { resistor = "1 kohm", nodes = ["p1", "src"] }
U2 = { opamp = "1.5625", gbw = "1 kHz", nodes = ["v2", "p2", "gnd"] }
Rx = { resistor = "1600 ohm", nodes = ["v1", "p2"] }
Ry = { resistor = "900 ohm", nodes = ["v2", "p2"] }
"""


def test_a_pole_on_the_axis_exactly_at_the_analysis_frequency_is_named_not_divided_by():
    # Two one-pole op-amps (A0 = 25/16, G = 2*pi*1 kHz) whose 1/A0 losses are cancelled
    # by positive feedback: v1*s/G = -v2 and v2*s/G = (9/25)*v1, so s^2 = -(9/25)*G^2 and
    # the poles sit at +-j*0.6*G, i.e. at 600 Hz (derived here by hand from the op-amp
    # equation of the docs). At 500 Hz the circuit solves; at 600 Hz it has no steady state.
    solution = solve(build(handcheck.loads(worksheet(LOSSLESS_LOOP.replace("FREQ", "500 Hz")))))
    poles = evaluate_quantity(solution, parse_quantity("poles(network_function(voltage(v1), voltage(src)))"))
    assert_allclose(sorted(complex(p.expr).imag for p in poles), [-0.6 * 2 * math.pi * 1e3, 0.6 * 2 * math.pi * 1e3])
    assert all(abs(complex(p.expr).real) < 1e-20 for p in poles)
    with pytest.raises(CircuitError, match="singular at 600 Hz"):
        solution = solve(build(handcheck.loads(worksheet(LOSSLESS_LOOP.replace("FREQ", "600 Hz")))))
        evaluate_quantity(solution, parse_quantity("voltage(v1)"))


# --------------------------------------------------------------------------
# transients: follower step, closed form and the independent simulation
# --------------------------------------------------------------------------

A_F = 1000
FOLLOWER = f"""
Vin = {{ voltage = "1*step(t) V", nodes = ["in", "gnd"] }}
U1 = {{ opamp = "{A_F}", gbw = "100 kHz", nodes = ["out", "in", "out"] }}
RL = {{ resistor = "10 kohm", nodes = ["out", "gnd"] }}
"""
WP_F = 2 * sympy.pi * 100_000 / A_F
TAU_F = 1 / (WP_F * (1 + A_F))  # follower: beta = 1


def test_follower_time_constant_is_one_over_wp_times_one_plus_a0():
    circuit = build(handcheck.loads(worksheet(FOLLOWER)))
    tau = transient_solution(circuit).time_constant()
    assert sympy.simplify(tau - TAU_F) == 0


def test_follower_step_closed_form_and_simulation_against_scipy_step():
    # Reference: the first-order step A0/(1 + A0)*(1 - exp(-t/tau)) (from memory),
    # and scipy.signal.step of the closed loop A0*wp/(s + wp*(1 + A0)).
    from scipy.signal import step

    circuit = build(handcheck.loads(worksheet(FOLLOWER)))
    wave = transient_solution(circuit).node_voltage("out").as_expr()
    t = sympy.Symbol("t")
    final = sympy.Rational(A_F, 1 + A_F)
    closed = final * (1 - sympy.exp(-t / TAU_F))
    for point in (sympy.Rational(1, 10**7), sympy.Rational(159, 10**8), sympy.Rational(1, 10**5)):
        assert sympy.N(wave.subs(t, point) - closed.subs(t, point), 30) == pytest.approx(0, abs=1e-25)

    steps = '[[step]]\nname = "tau"\nquantity = "time_constant"\nclaim = "1.59 us"\n'
    result = run_text(worksheet(FOLLOWER, steps=steps), evidence=True)
    assert result.evidence.ok
    sim = result.evidence.simulation
    times = np.asarray(sim.times)
    simulated = np.asarray(sim.voltages["out"])
    tau = float(TAU_F)
    assert_allclose(simulated, float(final) * (1 - np.exp(-times / tau)), rtol=0, atol=1e-12)
    wp = float(WP_F)
    _, reference = step(([A_F * wp], [1.0, wp * (1 + A_F)]), T=times)
    assert_allclose(simulated, reference, rtol=0, atol=1e-9)


def test_follower_released_from_its_steady_state_starts_from_the_poles_state():
    # start = "steady": before t = 0 the output sat at A0/(1 + A0) V; after the input
    # drops to 0 it decays as exp(-t/tau) (first-order free response, from memory).
    parts = FOLLOWER.replace('"1*step(t) V"', '"1 - step(t) V"')
    circuit = build(handcheck.loads(worksheet(parts, head='[transient]\nstart = "steady"')))
    wave = transient_solution(circuit).node_voltage("out").as_expr()
    t = sympy.Symbol("t")
    closed = sympy.Rational(A_F, 1 + A_F) * sympy.exp(-t / TAU_F)
    for point in (sympy.Integer(0), sympy.Rational(159, 10**8), sympy.Rational(1, 10**5)):
        assert sympy.N(wave.subs(t, point) - closed.subs(t, point), 30) == pytest.approx(0, abs=1e-25)
    steps = '[[step]]\nname = "v0"\nquantity = "initial(voltage(out))"\nclaim = "0.999 V"\n'
    result = run_text(worksheet(parts, head='[transient]\nstart = "steady"', steps=steps), evidence=True)
    sim = result.evidence.simulation
    times = np.asarray(sim.times)
    assert_allclose(np.asarray(sim.voltages["out"]), float(A_F / (1 + A_F)) * np.exp(-times / float(TAU_F)), atol=1e-12)


def _exact_and_simulated(parts: str, node: str) -> tuple[sympy.Expr, np.ndarray, np.ndarray]:
    circuit = build(handcheck.loads(worksheet(parts)))
    wave = transient_solution(circuit).node_voltage(node).as_expr()
    steps = f'[[step]]\nname = "v0"\nquantity = "initial(voltage({node}))"\nclaim = "1 V"\n'
    sim = run_text(worksheet(parts, steps=steps), evidence=True).evidence.simulation
    return wave, np.asarray(sim.times), np.asarray(sim.voltages[node])


def test_a_charged_capacitor_on_the_output_sets_the_poles_state():
    # The capacitor from the output to ground and the pole share one state: the output
    # starts at the capacitor's 1 V and, with the input at 0, decays as exp(-t/tau) with
    # the follower's tau (first-order free response, from memory; the stiff output
    # makes the capacitor irrelevant to the pole).
    parts = FOLLOWER.replace('"1*step(t) V"', '"0 V"').replace(
        'RL = { resistor = "10 kohm", nodes = ["out", "gnd"] }',
        'CL = { capacitor = "1 nF", nodes = ["out", "gnd"], initial = "1 V" }',
    )
    wave, times, simulated = _exact_and_simulated(parts, "out")
    t = sympy.Symbol("t")
    assert sympy.simplify(wave - sympy.exp(-t / TAU_F)) == 0
    assert_allclose(simulated, np.exp(-times / float(TAU_F)), atol=1e-12)


def test_a_charged_series_capacitor_leaves_the_output_at_rest():
    # Output held at 0 (pole at rest, input 0); the 1 nF capacitor charged to 1 V
    # discharges through 1 kohm: v(n) = -exp(-t/(R*C)) (RC discharge, from memory).
    parts = FOLLOWER.replace('"1*step(t) V"', '"0 V"').replace(
        'RL = { resistor = "10 kohm", nodes = ["out", "gnd"] }',
        'CL = { capacitor = "1 nF", nodes = ["out", "n"], initial = "1 V" }\n'
        'RL = { resistor = "1 kohm", nodes = ["n", "gnd"] }',
    )
    wave, times, simulated = _exact_and_simulated(parts, "n")
    t = sympy.Symbol("t")
    assert sympy.simplify(wave + sympy.exp(-t * 10**6)) == 0
    assert_allclose(simulated, -np.exp(-times * 1e6), atol=1e-12)

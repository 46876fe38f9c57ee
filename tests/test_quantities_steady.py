"""Second-edition steady-state quantities against outside references.

magnitude, phase, at_frequency, dB and dBm claims, delivered power, the power of a
group of parts, stored energy, without (Thevenin), short_current (Norton) and
secondary_current. Each reference is named beside its check.
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
    """Check a worksheet made of ``parts`` (TOML lines) and (name, quantity, claim) steps."""
    lines = ["[worksheet]", "format = 1", 'title = "reference"', header, "[parts]", parts]
    for name, quantity, claim in steps:
        quoted = quantity.replace('"', '\\"')
        lines += ["[[step]]", f'name = "{name}"', f'quantity = "{quoted}"', f'claim = "{claim}"']
    report = handcheck.check(handcheck.loads("\n".join(lines), "<reference>"))
    return {step.name: step for step in report.steps}


def si(step: StepFinding) -> complex:
    assert step.expected_si is not None
    return complex(*step.expected_si)


RC = """
Vs = { voltage = "1 V", frequency = "1000 rad/s", nodes = ["in", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["in", "out"] }
C1 = { capacitor = "1 uF", nodes = ["out", "gnd"] }
"""


def test_magnitude_phase_and_db_of_rc_lowpass_match_scipy_freqs() -> None:
    # Reference: scipy.signal.freqs for H(s) = 1/(RC s + 1), RC = 1 ms.
    from scipy.signal import freqs

    omegas = [250.0, 1000.0, 4000.0]
    _, response = freqs([1.0], [1e-3, 1.0], worN=omegas)
    steps = []
    for k, w in enumerate(omegas):
        h = f'at_frequency(transfer(voltage(out), voltage(in)), "{w:g} rad/s")'
        steps += [
            (f"m{k}", f"magnitude({h})", f"{abs(response[k]):.6f}"),
            (f"p{k}", f"phase({h})", f"{math.degrees(np.angle(response[k])):.4f} deg"),
            (f"d{k}", h, f"{20 * math.log10(abs(response[k])):.4f} dB"),
        ]
    found = run(RC, steps)
    for k in range(len(omegas)):
        assert found[f"m{k}"].verdict == "agrees"
        assert found[f"p{k}"].verdict == "agrees"
        assert found[f"d{k}"].verdict == "agrees"
        assert_allclose(si(found[f"m{k}"]).real, abs(response[k]), rtol=1e-12)
        assert_allclose(si(found[f"p{k}"]).real, np.angle(response[k]), rtol=1e-12)  # radians
        assert_allclose(si(found[f"d{k}"]).real, abs(response[k]), rtol=1e-12)  # the ratio, not dB
    # The exact corner: |H| = 1/sqrt(2), phase -pi/4 (any text on first-order circuits).
    corner = run(
        RC,
        [
            ("m", "magnitude(transfer(voltage(out), voltage(in)))", "0.7071"),
            ("p", "phase(voltage(out))", "-0.7854 rad"),
            ("bad", "phase(voltage(out))", "-40 deg"),
        ],
    )
    assert sympy.simplify(corner["m"].exact - 1 / sympy.sqrt(2)) == 0
    assert sympy.simplify(corner["p"].exact + sympy.pi / 4) == 0
    assert corner["p"].verdict == "agrees"
    assert corner["bad"].verdict != "agrees"


def test_db_claim_resolution_and_dbm_power() -> None:
    # 20*log10(1/sqrt(2)) = -3.0103 dB (definition of the decibel, IEC 60027-3).
    found = run(
        RC,
        [
            ("a", "transfer(voltage(out), voltage(in))", "-3.01 dB"),
            ("b", "transfer(voltage(out), voltage(in))", "-3.1 dB"),
            ("c", "transfer(voltage(out), voltage(in))", "-3.00 dB"),
        ],
    )
    assert found["a"].verdict == "agrees"
    assert found["b"].verdict == "differs"
    assert found["c"].verdict == "differs"
    assert found["a"].expected == "-3.01 dB" or found["a"].expected.startswith("-3.010")
    # 1 W is 30 dBm (definition: 10*log10(P / 1 mW)); at DC power is V*I.
    dc = """
Vs = { voltage = "10 V", nodes = ["a", "gnd"] }
Rload = { resistor = "100 ohm", nodes = ["a", "gnd"] }
"""
    found = run(
        dc, [("p", "power(Rload)", "30.00 dBm"), ("d", "delivered_power(Vs)", "1 W"), ("off", "power(Rload)", "27 dBm")]
    )
    assert found["p"].verdict == "agrees"
    assert si(found["p"]) == 1.0  # W, the power itself
    assert found["d"].verdict == "agrees"
    assert found["off"].verdict == "differs"


@pytest.mark.parametrize("text", ["123456789012345678901234567890 dB", "-6001 dB", "3001 dBm"])
def test_level_claim_out_of_range_is_refused_without_building_it(text: str) -> None:
    # Found by fuzzing: 10^(1.2e29/20) built exactly filled the memory. A level beyond
    # the compared range of 1e-300..1e300 (6000 dB, 3000 dBm) is refused at once.
    from handcheck.errors import LimitError
    from handcheck.verify.claims import read_claim

    with pytest.raises(LimitError, match="level out of range"):
        read_claim(text)


def test_group_power_and_delivered_power_balance() -> None:
    # Tellegen's theorem (Penfield, Spence & Duinker, "Tellegen's theorem and electrical
    # networks", 1970, from memory): the complex powers of all parts sum to zero, so the
    # source delivers what the others absorb. Series RL at 50 Hz, rms phasors:
    # S = |V|^2 / Z*, P = |V|^2 R / |Z|^2 (Alexander & Sadiku, 5th ed., sec. 11.8, from memory).
    parts = """
Vs = { voltage = "230 V rms", frequency = "50 Hz", nodes = ["a", "gnd"] }
Rw = { resistor = "10 ohm", nodes = ["a", "m"] }
Lw = { inductor = "31.831 mH", nodes = ["m", "gnd"] }
"""
    r, ind, v, w = 10.0, 31.831e-3, 230.0, 2 * math.pi * 50
    z = complex(r, w * ind)
    s = v**2 / z.conjugate()
    found = run(
        parts,
        [
            ("P", "power(Rw, Lw)", f"{s.real:.6g} W"),
            ("Q", "reactive_power(Rw, Lw)", f"{s.imag:.6g} var"),
            ("S", "apparent_power(Rw, Lw)", f"{abs(s):.6g} VA"),
            ("pf", "power_factor(Rw, Lw)", f"{r / abs(z):.6g}"),
            ("Pd", "delivered_power(Vs)", f"{s.real:.6g} W"),
            ("Qd", "delivered_reactive_power(Vs)", f"{s.imag:.6g} var"),
        ],
        header='phasors = "rms"',
    )
    for name in ("P", "Q", "S", "pf", "Pd", "Qd"):
        assert found[name].verdict == "agrees", name
    assert_allclose(si(found["Pd"]).real, s.real, rtol=1e-12)
    assert_allclose(si(found["Qd"]).real, s.imag, rtol=1e-12)


def test_energy_stored_dc_and_ac_average() -> None:
    # w = C V^2 / 2 and w = L I^2 / 2 (Hayt, Kemmerly & Durbin, Engineering Circuit
    # Analysis, 8th ed., sec. 7.1 and 7.2, from memory); at DC the capacitor charges to
    # the source voltage and the inductor carries V/R.
    dc = """
Vs = { voltage = "12 V", nodes = ["a", "gnd"] }
Rs = { resistor = "4 ohm", nodes = ["a", "b"] }
Cb = { capacitor = "470 uF", nodes = ["a", "gnd"] }
Lb = { inductor = "2 mH", nodes = ["b", "gnd"] }
"""
    found = run(dc, [("Ec", "energy(Cb)", "33.84 mJ"), ("El", "energy(Lb)", "9 mJ")])
    assert found["Ec"].exact == sympy.Rational(470, 10**6) * 144 / 2
    assert found["El"].exact == sympy.Rational(2, 1000) * 9 / 2
    assert found["Ec"].verdict == found["El"].verdict == "agrees"
    # AC: the average of C v(t)^2 / 2 for v = Vp cos(wt) is C Vp^2 / 4.
    ac = """
Vs = { voltage = "10 V", frequency = "50 Hz", nodes = ["a", "gnd"] }
Cb = { capacitor = "100 uF", nodes = ["a", "gnd"] }
"""
    found = run(ac, [("E", "energy(Cb)", "2.5 mJ")])
    assert found["E"].exact == sympy.Rational(100, 10**6) * 100 / 4
    # The same source written as 10 V rms (peak 10*sqrt(2) V), in either phasor convention.
    for header in ('phasors = "rms"', 'phasors = "peak"'):
        found = run(ac.replace('"10 V"', '"10 V rms"'), [("E", "energy(Cb)", "5 mJ")], header=header)
        assert found["E"].exact == sympy.Rational(100, 10**6) * 100 / 2


BRIDGE = """
Vs = { voltage = "10 V", nodes = ["top", "gnd"] }
Ra = { resistor = "2 kohm", nodes = ["top", "a"] }
Rb = { resistor = "3 kohm", nodes = ["a", "gnd"] }
Rc = { resistor = "6 kohm", nodes = ["top", "b"] }
Rd = { resistor = "4 kohm", nodes = ["b", "gnd"] }
Rload = { resistor = "1 kohm", nodes = ["a", "b"] }
"""


def test_bridge_thevenin_and_norton() -> None:
    # Unbalanced Wheatstone bridge, the textbook Thevenin procedure (e.g. Alexander &
    # Sadiku, 5th ed., ch. 4, from memory): Vth = Vs (Rb/(Ra+Rb) - Rd/(Rc+Rd)),
    # Rth = Ra||Rb + Rc||Rd, Norton current Vth/Rth.
    vth = sympy.Integer(10) * (sympy.Rational(3, 5) - sympy.Rational(4, 10))
    rth = sympy.Rational(2000 * 3000, 5000) + sympy.Rational(6000 * 4000, 10000)
    found = run(
        BRIDGE,
        [
            ("Vth", "without(voltage(a, b), Rload)", "2 V"),
            ("Rth", "without(impedance(a, b), Rload)", "3.6 kohm"),
            ("In", "without(short_current(a, b), Rload)", "0.5556 mA"),
            ("Il", "current(Rload)", "0.43478 mA"),
            ("In_with_load", "short_current(a, b)", "0.5556 mA"),
        ],
    )
    assert found["Vth"].exact == vth
    assert sympy.simplify(found["Rth"].exact - rth) == 0
    assert sympy.simplify(found["In"].exact - vth / rth) == 0
    # Shorting a-b with the load still there shorts the load too: the same Norton current.
    assert sympy.simplify(found["In_with_load"].exact - vth / rth) == 0
    # the load current from the equivalent: Vth / (Rth + Rload)
    assert sympy.simplify(found["Il"].exact - vth / (rth + 1000)) == 0
    assert all(f.verdict == "agrees" for f in found.values())


def test_secondary_current_of_ideal_transformer() -> None:
    # Ideal transformer N1:N2 = 1:4 (ideal-transformer relations v2 = (N2/N1) v1,
    # i1 N1 = i2 N2 flowing out of the dotted secondary; any circuits text, from memory).
    # 10 V on the primary, 160 ohm load: v2 = 40 V, 250 mA out of the dotted end,
    # so the current *into* the dotted secondary terminal is -250 mA; primary 1 A.
    parts = """
Vs = { voltage = "10 V", frequency = "50 Hz", nodes = ["p", "gnd"] }
Tx = { transformer = "1:4", nodes = ["p", "gnd", "s", "gnd"] }
Rload = { resistor = "160 ohm", nodes = ["s", "gnd"] }
"""
    found = run(parts, [("I2", "secondary_current(Tx)", "-250 mA"), ("I1", "current(Tx)", "1 A")])
    assert found["I2"].exact == sympy.Rational(-1, 4)
    assert found["I2"].verdict == "agrees"


def test_at_frequency_picks_the_harmonic_of_a_source_with_several_frequencies() -> None:
    # Superposition of two sources at different frequencies (any text): at each
    # frequency only the source running there drives the circuit; RC divider
    # |H(jw)| = 1/sqrt(1 + (wRC)^2).
    parts = """
Vf = { voltage = "1 V", frequency = "1000 rad/s", nodes = ["in", "m"] }
V3 = { voltage = "0.2 V", frequency = "3000 rad/s", nodes = ["m", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["in", "out"] }
C1 = { capacitor = "1 uF", nodes = ["out", "gnd"] }
"""
    found = run(
        parts,
        [
            ("out1", "magnitude(voltage(out))", "0.7071 V"),
            ("out3", 'magnitude(at_frequency(voltage(out), "3000 rad/s"))', "0.06325 V"),
        ],
        header='frequency = "1000 rad/s"',
    )
    assert sympy.simplify(found["out3"].exact - sympy.Rational(2, 10) / sympy.sqrt(10)) == 0
    assert found["out1"].verdict == found["out3"].verdict == "agrees"


@pytest.mark.parametrize(
    "quantity, message",
    [
        ("without(voltage(out), Rx)", "not a part"),
        ("energy(R1)", "capacitor or an inductor"),
        ("short_current(out, out)", "two different nodes"),
        ("secondary_current(R1)", "transformer"),
        ('at_frequency(voltage(out), "3 V")', "frequency"),
    ],
)
def test_wrong_arguments_are_clear_errors(quantity: str, message: str) -> None:
    with pytest.raises(handcheck.HandcheckError, match=message):
        run(RC, [("x", quantity, "1 V")])

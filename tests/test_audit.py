"""The formula audit against sources outside the project (issue 14, item 10).

Each check names its source. Circuits and values are invented; the closed forms they
are checked against are the textbooks'.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from handcheck.audit import audit
from handcheck.circuit.build import build
from handcheck.cli import main
from handcheck.worksheet.load import loads

HEAD = '[worksheet]\nformat = 1\ntitle = "audit test"\n'

SALLEN_KEY = (
    HEAD
    + """
[parts]
Vin = { voltage = "1 V", frequency = "1 kHz", nodes = ["in", "gnd"] }
R1 = { resistor = "10 kohm", tolerance = "1%", nodes = ["in", "a"] }
R2 = { resistor = "15 kohm", tolerance = "1%", nodes = ["a", "b"] }
C1 = { capacitor = "22 nF", tolerance = "5%", nodes = ["a", "out"] }
C2 = { capacitor = "10 nF", tolerance = "5%", nodes = ["b", "gnd"] }
buf = { opamp = "ideal", nodes = ["out", "b", "out"] }

[audit]
samples = 20000
seed = 3
"""
)


def _audit(text: str) -> dict:
    worksheet = loads(text)
    return {f.name: f for f in audit(worksheet, build(worksheet))}


def _formula(name: str, quantity: str, expression: str | None = None) -> str:
    body = f'\n[[formula]]\nname = "{name}"\nquantity = "{quantity}"\n'
    return body + (f'expression = "{expression}"\n' if expression else "")


# -- Sallen-Key unity-gain low-pass ------------------------------------------------
# Source: M. E. Van Valkenburg, *Analog Filter Design*, Holt-Saunders 1982, ch. 5
# (Sallen-Key unity-gain low-pass; from memory): w0 = 1/sqrt(R1 R2 C1 C2),
# Q = sqrt(R1 R2 C1 C2) / (C2 (R1 + R2)), C1 the feedback capacitor.
def test_sallen_key_figures_are_equivalent() -> None:
    found = _audit(
        SALLEN_KEY
        + _formula("w0", "natural_frequency", "1/sqrt(R1*R2*C1*C2)")
        + _formula("Q", "quality_factor", "sqrt(R1*R2*C1*C2)/(C2*(R1 + R2))")
        + _formula("H", "network_function(voltage(out), voltage(in))", "1/(s^2*R1*R2*C1*C2 + s*C2*(R1 + R2) + 1)")
    )
    for name in ("w0", "Q", "H"):
        assert found[name].verdict == "equivalent"
        assert found[name].holds_when == ()
        assert found[name].nominal_error == 0
    assert found["w0"].worst_case.low == found["w0"].worst_case.high == 0
    # Shown as one row, not as errors of 0 % (worst case 0 % to 0 %, Monte Carlo 0 %).
    from handcheck.record.audit import audit_rows

    rows = dict(audit_rows(found["w0"]))
    assert rows["error"].startswith("none: the formula is the quantity exactly")
    assert not {"error at nominal", "worst case", "Monte Carlo"} & set(rows)


def test_sallen_key_q_for_equal_resistors_holds_only_when_they_are_equal() -> None:
    # Same source: with R1 = R2 the Q becomes sqrt(C1/C2)/2.
    found = _audit(SALLEN_KEY + _formula("Q_eq", "quality_factor", "sqrt(C1/C2)/2"))["Q_eq"]
    assert found.verdict == "differs"
    assert found.holds_when == ("R1 = R2",)
    r1, r2 = 10e3, 15e3
    assert_allclose(found.nominal_error, (r1 + r2) / (2 * math.sqrt(r1 * r2)) - 1, rtol=1e-12)


def test_hertz_formula_for_angular_frequency_is_diagnosed() -> None:
    found = _audit(SALLEN_KEY + _formula("f0", "natural_frequency", "1/(2*pi*sqrt(R1*R2*C1*C2))"))["f0"]
    assert found.verdict == "differs"
    assert [d.mistake for d in found.diagnosis] == ["hertz-as-angular"]
    assert_allclose(found.nominal_error, 1 / (2 * math.pi) - 1, rtol=1e-12)


def test_sallen_key_cutoff_against_its_closed_form() -> None:
    # Source: the -3 dB point of a second-order low-pass, |H(jw)|^2 = 1/2 solved for w
    # (Van Valkenburg, as above, from memory): wc = w0 sqrt(1 - 1/(2Q^2) + sqrt((1 - 1/(2Q^2))^2 + 1)).
    found = _audit(
        SALLEN_KEY
        + _formula("fc", "cutoff_frequency(network_function(voltage(out), voltage(in)))", "1/(2*pi*sqrt(R1*R2*C1*C2))")
    )["fc"]
    r1, r2, c1, c2 = 10e3, 15e3, 22e-9, 10e-9
    w0 = 1 / math.sqrt(r1 * r2 * c1 * c2)
    q = math.sqrt(r1 * r2 * c1 * c2) / (c2 * (r1 + r2))
    a = 1 - 1 / (2 * q * q)
    wc = w0 * math.sqrt(a + math.sqrt(a * a + 1))
    assert found.verdict == "differs"
    assert_allclose(found.nominal_error, w0 / wc - 1, rtol=1e-9)
    # scipy.signal as the reference library: |H| at the true cutoff is 1/sqrt(2)
    from scipy import signal

    _, h = signal.freqs([1.0], [r1 * r2 * c1 * c2, c2 * (r1 + r2), 1.0], worN=[wc])
    assert_allclose(abs(h[0]), 1 / math.sqrt(2), rtol=1e-9)
    assert "sampled" in found.worst_case.method


def test_sallen_key_cutoff_monte_carlo_against_numpy_sampling() -> None:
    # The sampled -3 dB point (batched polynomial roots) against the closed form above
    # evaluated on numpy's own draws (uniform, [parts] order, seed 3 of SALLEN_KEY).
    found = _audit(
        SALLEN_KEY
        + _formula("fc", "cutoff_frequency(network_function(voltage(out), voltage(in)))", "1/(2*pi*sqrt(R1*R2*C1*C2))")
    )["fc"]
    rng = np.random.default_rng(3)
    r1, r2, c1, c2 = (
        rng.uniform(v * (1 - tol), v * (1 + tol), 20000)
        for v, tol in ((10e3, 0.01), (15e3, 0.01), (22e-9, 0.05), (10e-9, 0.05))
    )
    w0 = 1 / np.sqrt(r1 * r2 * c1 * c2)
    q = np.sqrt(r1 * r2 * c1 * c2) / (c2 * (r1 + r2))
    a = 1 - 1 / (2 * q * q)
    errors = w0 / (w0 * np.sqrt(a + np.sqrt(a * a + 1))) - 1
    mc = found.monte_carlo
    assert_allclose(
        [mc.mean, mc.std, mc.p01, mc.p99],
        [errors.mean(), errors.std(ddof=1), np.percentile(errors, 1), np.percentile(errors, 99)],
        rtol=1e-7,
    )


# -- loaded divider ------------------------------------------------------------------
# Source: the RC low-pass H = 1/(1 + sRC) (any circuits text, e.g. Alexander & Sadiku,
# *Fundamentals of Electric Circuits*, 5th ed., ch. 14, from memory); a load Rload across
# C gives H = 1/(1 + R/Rload + sRC), so the unloaded formula holds as Rload -> oo.
LOADED = (
    HEAD
    + """
[parts]
Vin = { voltage = "1 V", nodes = ["in", "gnd"] }
R = { resistor = "1 kohm", tolerance = "5%", nodes = ["in", "out"] }
C = { capacitor = "100 nF", tolerance = "10%", nodes = ["out", "gnd"] }
Rload = { resistor = "100 kohm", range = ["20 kohm", "200 kohm"], nodes = ["out", "gnd"] }
"""
)


def test_loaded_rc_divider_holds_as_the_load_goes_to_infinity() -> None:
    found = _audit(
        LOADED
        + _formula("H", "network_function(voltage(out), voltage(in))", "1/(1 + s*R*C)")
        + _formula("tau", "time_constant", "R*C")
        + _formula("fc", "cutoff_frequency(network_function(voltage(out), voltage(in)))", "1/(2*pi*R*C)")
    )
    h = found["H"]
    assert h.verdict == "differs"
    # d = F/T - 1 = R/(Rload (1 + sRC)): -> 0 as R -> 0 or Rload -> oo; as C -> oo only
    # for s != 0 (at DC, the analysis frequency here, it stays R/Rload): no condition.
    assert h.holds_when == ("R -> 0", "Rload -> oo")
    # At DC (the analysis frequency here) the error is R/Rload exactly.
    assert_allclose(h.nominal_error, 1e3 / 100e3, rtol=1e-12)
    # Worst case: largest at R high and Rload low, smallest at R low and Rload high.
    assert_allclose(h.worst_case.high, 1050 / 20e3, rtol=1e-9)
    assert_allclose(h.worst_case.low, 950 / 200e3, rtol=1e-9)
    assert dict(h.worst_case.at) == pytest.approx({"R": 1050.0, "C": dict(h.worst_case.at)["C"], "Rload": 20e3})
    tau = found["tau"]  # the true tau is R C Rload/(R + Rload)
    assert tau.verdict == "differs" and "Rload -> oo" in tau.holds_when
    assert_allclose(tau.nominal_error, 1e3 / 100e3, rtol=1e-12)
    fc = found["fc"]  # first order: wc = (1 + R/Rload)/(RC): a closed form, compared exactly
    assert fc.method.startswith("exact identity")
    assert_allclose(fc.nominal_error, 1 / (1 + 1e3 / 100e3) - 1, rtol=1e-12)


def test_worst_case_against_a_dense_grid() -> None:
    # Brute force written here: the exact error R/Rload at DC, on a 61 x 61 grid.
    found = _audit(LOADED + _formula("H", "network_function(voltage(out), voltage(in))", "1/(1 + s*R*C)"))["H"]
    r = np.linspace(950, 1050, 61)[:, None]
    load = np.linspace(20e3, 200e3, 61)[None, :]
    grid = r / load
    assert_allclose([found.worst_case.low, found.worst_case.high], [grid.min(), grid.max()], rtol=1e-9)
    lo, hi = found.worst_case.bounds
    assert lo <= grid.min() * (1 + 1e-9) and hi >= grid.max() * (1 - 1e-9)


def test_monte_carlo_moments_against_numpy_sampling() -> None:
    found = _audit(LOADED + _formula("H", "network_function(voltage(out), voltage(in))", "1/(1 + s*R*C)"))["H"]
    mc = found.monte_carlo
    rng = np.random.default_rng(0)  # the default seed; symbols drawn in [parts] order
    r = rng.uniform(950, 1050, 10_000)
    rng.uniform(90e-9, 110e-9, 10_000)
    load = rng.uniform(20e3, 200e3, 10_000)
    errors = r / load
    assert mc.samples == 10_000
    assert_allclose(
        [mc.mean, mc.std, mc.p01, mc.p99],
        [errors.mean(), errors.std(ddof=1), np.percentile(errors, 1), np.percentile(errors, 99)],
        rtol=1e-9,
    )


# -- Wien network ---------------------------------------------------------------------
# Source: A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, Wien-bridge oscillator
# (from memory): the series-RC / parallel-RC network has w0 = 1/sqrt(R1 R2 C1 C2);
# the familiar 1/(RC) is for equal parts only.
WIEN = (
    HEAD
    + """
[parts]
Vin = { voltage = "1 V", frequency = "1 kHz", nodes = ["in", "gnd"] }
R1 = { resistor = "10 kohm", tolerance = "1%", nodes = ["in", "m"] }
C1 = { capacitor = "16 nF", tolerance = "5%", nodes = ["m", "out"] }
R2 = { resistor = "10 kohm", tolerance = "1%", nodes = ["out", "gnd"] }
C2 = { capacitor = "16 nF", tolerance = "5%", nodes = ["out", "gnd"] }
"""
)


def test_wien_frequency_formula_holds_only_for_equal_parts() -> None:
    quantity = "natural_frequency(network_function(voltage(out), voltage(in)))"
    found = _audit(WIEN + _formula("w0", quantity, "1/(R1*C1)") + _formula("w0_exact", quantity, "1/sqrt(R1*R2*C1*C2)"))
    assert found["w0"].verdict == "differs"
    assert found["w0"].holds_when == ("R1 = R2 and C1 = C2",)
    assert found["w0"].nominal_error == 0  # the nominal parts are equal
    assert found["w0_exact"].verdict == "equivalent"
    # worst case: 1/(R1 C1) / (1/sqrt(R1 R2 C1 C2)) - 1 = sqrt(R2 C2/(R1 C1)) - 1, monotone
    assert_allclose(found["w0"].worst_case.high, math.sqrt(1.01 * 1.05 / (0.99 * 0.95)) - 1, rtol=1e-9)
    assert_allclose(found["w0"].worst_case.low, math.sqrt(0.99 * 0.95 / (1.01 * 1.05)) - 1, rtol=1e-9)


# -- ideal against finite-gain op-amp --------------------------------------------------
# Source: Sedra & Smith, as above, the inverting amplifier with finite open-loop gain A
# (from memory): G = -(R2/R1) / (1 + (1 + R2/R1)/A).
INVERTING = (
    HEAD
    + """
[parts]
Vin = { voltage = "1 V", nodes = ["in", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["in", "n"] }
R2 = { resistor = "100 kohm", nodes = ["n", "out"] }
amp = { opamp = "200000", range = ["50000", "200000"], nodes = ["out", "gnd", "n"] }

[audit]
symbols = ["R1", "R2", "amp"]
"""
)


def test_ideal_gain_formula_against_a_finite_gain_op_amp() -> None:
    found = _audit(INVERTING + _formula("G", "dc_gain(network_function(voltage(out), voltage(in)))", "-R2/R1"))["G"]
    assert found.verdict == "differs"
    assert "amp -> oo" in found.holds_when
    # error = F/T - 1 = (1 + R2/R1)/A
    assert_allclose(found.nominal_error, 101 / 200000, rtol=1e-12)
    assert_allclose([found.worst_case.low, found.worst_case.high], [101 / 200000, 101 / 50000], rtol=1e-9)
    assert dict(found.worst_case.at) == {"amp": 50000.0}


def test_exact_finite_gain_formula_is_equivalent() -> None:
    formula = _formula("G", "dc_gain(network_function(voltage(out), voltage(in)))", "-(R2/R1)/(1 + (1 + R2/R1)/amp)")
    assert _audit(INVERTING + formula)["G"].verdict == "equivalent"


# -- parallel tank with a lossy inductor -------------------------------------------------
# Source: E. Hughes, *Electrical and Electronic Technology*, parallel resonance of a coil
# with resistance (from memory): unity power factor at w^2 = 1/(LC) - R^2/L^2.
TANK = (
    HEAD
    + """
[parts]
Is = { current = "1 mA", frequency = "10 kHz", nodes = ["gnd", "top"] }
Rs = { resistor = "5 ohm", range = ["1 ohm", "20 ohm"], nodes = ["top", "m"] }
L = { inductor = "1 mH", tolerance = "10%", nodes = ["m", "gnd"] }
C = { capacitor = "100 nF", tolerance = "10%", nodes = ["top", "gnd"] }
"""
)


def test_tank_resonance_with_lossy_inductor_holds_as_r_goes_to_zero() -> None:
    found = _audit(TANK + _formula("f0", "resonant_frequency(impedance(top, gnd))", "1/(2*pi*sqrt(L*C))"))["f0"]
    assert found.verdict == "differs"
    assert "Rs -> 0" in found.holds_when
    r, inductance, c = 5.0, 1e-3, 100e-9
    true = math.sqrt(1 / (inductance * c) - r * r / inductance**2)
    assert_allclose(found.nominal_error, (1 / math.sqrt(inductance * c)) / true - 1, rtol=1e-10)
    exact = _formula("f0x", "resonant_frequency(impedance(top, gnd))", "sqrt(1/(L*C) - Rs^2/L^2)/(2*pi)")
    assert _audit(TANK + exact)["f0x"].verdict == "equivalent"


# -- spread, the command line, the contract keys ------------------------------------------
def test_spread_without_expression_and_cli_contract(tmp_path, capsys) -> None:
    path = tmp_path / "sk.toml"
    path.write_text(SALLEN_KEY + _formula("w0", "natural_frequency"), encoding="utf-8")
    assert main(["check", str(path), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    (entry,) = data["audit"]
    for key in (
        "name",
        "quantity",
        "verdict",
        "true_expression",
        "holds_when",
        "nominal_error",
        "worst_case_error",
        "worst_case_at",
        "monte_carlo",
        "diagnosis",
    ):
        assert key in entry
    assert entry["verdict"] == "spread" and data["ok"] is True
    assert set(entry["monte_carlo"]) >= {"samples", "mean", "std", "p01", "p99"}
    # w0 = 1/sqrt(R1 R2 C1 C2): the extremes at the corners, written here
    low = 1 / math.sqrt(1.01 * 1.01 * 1.05 * 1.05) - 1
    high = 1 / math.sqrt(0.99 * 0.99 * 0.95 * 0.95) - 1
    assert_allclose(entry["worst_case_error"], [low, high], rtol=1e-9)


def test_a_differing_formula_fails_the_check(tmp_path, capsys) -> None:
    path = tmp_path / "sk.toml"
    path.write_text(SALLEN_KEY + _formula("Q", "quality_factor", "sqrt(C1/C2)/2"), encoding="utf-8")
    assert main(["check", str(path), "--json"]) == 1
    data = json.loads(capsys.readouterr().out)
    assert data["ok"] is False and data["audit"][0]["verdict"] == "differs"
    assert main(["check", str(path)]) == 1
    out = capsys.readouterr().out
    assert "formula audit" in out and "holds when R1 = R2" in out


def test_a_formula_in_the_wrong_unit() -> None:
    found = _audit(LOADED + _formula("Z", "impedance(R)", "1/R"))["Z"]
    assert found.verdict == "unit"
    assert [d.mistake for d in found.diagnosis] == ["impedance-as-admittance"]


# -- display of a root of a perfect square --------------------------------------------
# First-order RC high-pass loaded by a second resistor: w_c = 1/(R_eq C) with
# R_eq = R1 || R2 (textbook single-pole cutoff, from memory). The truth is found as
# a square, w_c^2 = (R1 + R2)^2/(C^2 R1^2 R2^2), and shown as its exact root.
# (The Q of the LC filter below shows the root of a square denominator only.)
def test_cutoff_found_as_a_square_is_shown_as_its_root() -> None:
    text = (
        HEAD
        + """
[parts]
Vin = { voltage = "1 V", frequency = "100 Hz", nodes = ["in", "gnd"] }
C = { capacitor = "1 uF", tolerance = "10%", nodes = ["in", "x"] }
R1 = { resistor = "10 kohm", tolerance = "1%", nodes = ["x", "gnd"] }
R2 = { resistor = "40 kohm", tolerance = "1%", nodes = ["x", "gnd"] }

[audit]
samples = 1000
"""
        + _formula("wc", "cutoff_frequency(network_function(voltage(x), voltage(in)))", "1/(2*pi*R1*C)")
    )
    found = _audit(text)["wc"]
    assert found.verdict == "differs"
    assert "sqrt" not in found.true_expression
    # positive parts make the root positive: no abs(...) around it
    import sympy

    r1, r2, c = sympy.symbols("R1 R2 C")
    assert found.true_expression == str((r1 + r2) / (2 * sympy.pi * c * r1 * r2))
    # nominal: R_eq/R1 - 1 = 8000/10000 - 1 = -0.2, the formula's f is 1/(2 pi R1 C) = 0.8 f_c
    assert found.nominal_error == pytest.approx(-0.2, rel=1e-12)


def _sallen_key_cutoff_errors(points: int) -> np.ndarray:
    """The formula w0 against the closed-form -3 dB point above, on a dense grid."""
    axes = [np.linspace(v * (1 - tol), v * (1 + tol), points) for v, tol in SK_TOLERANCES]
    r1, r2, c1, c2 = (g.ravel() for g in np.meshgrid(*axes, indexing="ij"))
    q = np.sqrt(r1 * r2 * c1 * c2) / (c2 * (r1 + r2))
    a = 1 - 1 / (2 * q * q)
    return 1 / np.sqrt(a + np.sqrt(a * a + 1)) - 1  # w0/wc - 1


SK_TOLERANCES = ((10e3, 0.01), (15e3, 0.01), (22e-9, 0.05), (10e-9, 0.05))


def test_sallen_key_cutoff_worst_case_bounds_are_certified() -> None:
    # Brute force written here: a 25^4 grid of the closed form (Van Valkenburg, as above).
    # The certified bounds enclose every grid value and lie within 1e-6 of the grid's extremes.
    quantity = "cutoff_frequency(network_function(voltage(out), voltage(in)))"
    worst = _audit(SALLEN_KEY + _formula("fc", quantity, "1/(2*pi*sqrt(R1*R2*C1*C2))"))["fc"].worst_case
    assert "bounds certified" in worst.method
    errors = _sallen_key_cutoff_errors(25)
    low, high = worst.bounds
    assert low <= errors.min() and high >= errors.max()
    assert_allclose([low, high], [errors.min(), errors.max()], atol=1e-6)


def test_root_bound_proof_widens_past_a_too_low_guess() -> None:
    # Handed a sampled extreme 2 points too low (and too high), the proof must not confirm
    # it: the bounds it proves still enclose the dense grid.
    from handcheck.audit.network import symbolic_circuit
    from handcheck.audit.rootbound import certified_bounds
    from handcheck.audit.run import _ranges, _symbols
    from handcheck.audit.truth import true_value

    worksheet = loads(SALLEN_KEY + _formula("fc", "cutoff_frequency(network_function(voltage(out), voltage(in)))"))
    circuit = build(worksheet)
    symbols = _symbols(worksheet.audit, worksheet, circuit)
    ranges = _ranges(worksheet.audit, circuit, symbols)[0]
    sc = symbolic_circuit(circuit, symbols)
    truth = true_value(sc, worksheet.audit.formulas[0].quantity)
    import sympy

    r1, r2, c1, c2 = (sympy.Symbol(n, positive=True) for n in ("R1", "R2", "C1", "C2"))
    u_formula = sc.ring.fraction(1 / (r1 * r2 * c1 * c2))
    errors = _sallen_key_cutoff_errors(25)
    low, high = certified_bounds(
        truth.poly, u_formula, ranges.names, ranges.box, (errors.min() + 0.02, errors.max() - 0.02)
    )
    assert low is not None and high is not None
    assert low <= errors.min() and high >= errors.max()


def test_sallen_key_cutoff_spread_bounds_are_certified() -> None:
    # Without expression: the -3 dB point's own spread, wc/wc_nominal - 1, against the
    # same 25^4 grid of the closed form (Van Valkenburg, as above).
    quantity = "cutoff_frequency(network_function(voltage(out), voltage(in)))"
    found = _audit(SALLEN_KEY + _formula("fc", quantity))["fc"]
    axes = [np.linspace(v * (1 - tol), v * (1 + tol), 25) for v, tol in SK_TOLERANCES]
    r1, r2, c1, c2 = (g.ravel() for g in np.meshgrid(*axes, indexing="ij"))

    def cutoff(r1, r2, c1, c2):
        w0 = 1 / np.sqrt(r1 * r2 * c1 * c2)
        q = np.sqrt(r1 * r2 * c1 * c2) / (c2 * (r1 + r2))
        a = 1 - 1 / (2 * q * q)
        return w0 * np.sqrt(a + np.sqrt(a * a + 1))

    spread = cutoff(r1, r2, c1, c2) / cutoff(10e3, 15e3, 22e-9, 10e-9) - 1
    assert found.verdict == "spread" and "bounds certified" in found.worst_case.method
    low, high = found.worst_case.bounds
    assert low <= spread.min() and high >= spread.max()
    assert_allclose([low, high], [spread.min(), spread.max()], atol=1e-6)
    # and its Monte Carlo moments against numpy sampling (seed 3, uniform, [parts] order)
    rng = np.random.default_rng(3)
    draws = [rng.uniform(v * (1 - tol), v * (1 + tol), 20000) for v, tol in SK_TOLERANCES]
    sampled = cutoff(*draws) / cutoff(10e3, 15e3, 22e-9, 10e-9) - 1
    mc = found.monte_carlo
    assert_allclose(
        [mc.mean, mc.std, mc.p01, mc.p99],
        [sampled.mean(), sampled.std(ddof=1), np.percentile(sampled, 1), np.percentile(sampled, 99)],
        rtol=1e-7,
    )

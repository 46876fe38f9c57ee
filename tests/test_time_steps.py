"""Time-domain steps in a worksheet, and the numerical evidence of a check."""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

import handcheck
from handcheck.circuit.build import build
from handcheck.cli import main
from handcheck.verify.evidence import AGREEMENT_TARGET, gather_evidence

WORKSHEETS = Path(__file__).resolve().parent.parent / "worksheets"

RC = """
[worksheet]
format = 1
title = "RC charging from rest"
[transient]
start = "rest"
[parts]
V1 = {{ voltage = "10 V", nodes = ["in", "gnd"] }}
R1 = {{ resistor = "1 kohm", nodes = ["in", "out"] }}
C1 = {{ capacitor = "1 uF", nodes = ["out", "gnd"] }}
[[step]]
name = "tau"
quantity = "time_constant"
formula = "R1*C1"
claim = "1 ms"
[[step]]
name = "v_tau"
quantity = 'at(voltage(out), "1 ms")'
claim = "{v1}"
[[step]]
name = "v_5tau"
quantity = 'at(voltage(out), "5 ms")'
claim = "9.933 V"
[[step]]
name = "i0"
quantity = "initial(current(R1))"
claim = "10 mA"
[[step]]
name = "vfin"
quantity = "final(voltage(out))"
claim = "10 V"
[[step]]
name = "vt"
quantity = "voltage(out)"
claim = "{vt}"
"""


def verdicts(report: handcheck.Report) -> dict[str, str]:
    return {s.name: s.verdict for s in report.steps}


@pytest.mark.slow
def test_first_order_rc_against_the_textbook_closed_form():
    # v(t) = V (1 - exp(-t/RC)): 63.2 % at one time constant, 99.3 % at five
    # (textbook closed form of a first-order step response; 1 - e^-1 = 0.63212, 1 - e^-5 = 0.99326).
    report = handcheck.check_text(RC.format(v1="6.321 V", vt="10*(1 - exp(-t/(1 ms))) V"))
    assert verdicts(report) == dict.fromkeys(["tau", "v_tau", "v_5tau", "i0", "vfin", "vt"], "agrees")
    v1 = next(s for s in report.steps if s.name == "v_tau")
    assert v1.expected_si[0] == pytest.approx(10 * (1 - math.exp(-1)), rel=1e-12)


@pytest.mark.slow
def test_a_wrong_time_function_and_value_are_found():
    report = handcheck.check_text(RC.format(v1="3.679 V", vt="10*(1 - exp(-t/(2 ms))) V"))
    result = verdicts(report)
    assert result["v_tau"] == "differs"  # e^-1 written where 1 - e^-1 belongs
    assert result["vt"] == "differs"
    assert report.first_divergence == "v_tau"


def test_lc_filter_demo_verdicts():
    report = handcheck.check_file(str(WORKSHEETS / "lc-input-filter.toml"))
    assert verdicts(report) == {
        "wn": "agrees",
        "zeta": "agrees",
        "Vfinal": "agrees",
        "Vpeak": "formula",
        "tpeak": "agrees",
        "i0": "agrees",
    }
    # Percent overshoot of a second-order step response, 100 exp(-pi zeta / sqrt(1 - zeta^2))
    # (Ogata, Modern Control Engineering, 5th ed., sec. 5-3, from memory), on the final value.
    zeta = next(s for s in report.steps if s.name == "zeta").expected_si[0]
    final = next(s for s in report.steps if s.name == "Vfinal").expected_si[0]
    peak = next(s for s in report.steps if s.name == "Vpeak").expected_si[0]
    assert peak == pytest.approx(final * (1 + math.exp(-math.pi * zeta / math.sqrt(1 - zeta**2))), rel=1e-9)


@pytest.mark.slow
@pytest.mark.parametrize("name", sorted(p.name for p in WORKSHEETS.glob("*.toml")))
def test_bundled_demos_have_closed_form_and_numerical_agreement(name):
    # The agreement target of the evidence: below 1e-6 of the waveform's peak.
    worksheet = handcheck.load(WORKSHEETS / name)
    evidence = gather_evidence(build(worksheet), worksheet.steps)
    assert evidence.ok, evidence.problems
    assert evidence.waveforms, "every demo names at least one voltage or current"
    assert evidence.agreement is not None and evidence.agreement < AGREEMENT_TARGET
    assert evidence.kcl_relative < 1e-9
    assert evidence.samples >= 200


@pytest.mark.slow
def test_evidence_in_json_and_plot(tmp_path, capsys):
    out = tmp_path / "snubber.svg"
    status = main(["check", str(WORKSHEETS / "coil-snubber.toml"), "--json", "--plot", str(out)])
    assert status == 0
    data = json.loads(capsys.readouterr().out)
    evidence = data["evidence"]
    assert evidence["kcl_residual"] < 1e-9
    assert evidence["phasor_agreement"] < 1e-6
    assert evidence["long_enough"] is True
    assert out.read_text(encoding="utf-8").lstrip().startswith("<?xml")


def test_simulate_command(capsys):
    assert main(["simulate", str(WORKSHEETS / "lc-input-filter.toml")]) == 0
    text = capsys.readouterr().out
    assert "Kirchhoff's current law" in text
    assert "closed form against numerical, voltage(out)" in text


STEADY = """
[worksheet]
format = 1
title = "Steady start: a step with an offset and an opening switch"
[transient]
start = "steady"
[parts]
V1 = { voltage = "1.5 + 4*step(t - 0.2 ms) V", nodes = ["in", "gnd"] }
R1 = { resistor = "100 ohm", nodes = ["in", "a"] }
L1 = { inductor = "10 mH", nodes = ["a", "b"] }
R2 = { resistor = "50 ohm", nodes = ["b", "gnd"] }
S1 = { switch = "opens", nodes = ["b", "gnd"] }
C1 = { capacitor = "2 uF", nodes = ["a", "gnd"] }
[[step]]
name = "iL0"
quantity = "initial(current(L1))"
claim = "15 mA"
"""


def test_steady_start_closed_form_and_numerical_agree():
    # Before t = 0 the switch shorts R2: the inductor carries the 1.5 V that ran before t = 0, over R1: 1.5 V/100 ohm
    # = 15 mA at DC (Ohm's law), and an inductor's current is continuous at the switching.
    report = handcheck.check_text(STEADY)
    assert verdicts(report) == {"iL0": "agrees"}
    evidence = gather_evidence(build(handcheck.loads(STEADY)), handcheck.loads(STEADY).steps)
    assert evidence.ok, evidence.problems
    assert evidence.agreement < AGREEMENT_TARGET

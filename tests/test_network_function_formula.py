"""A network-function step's own formula is evaluated and judged, as every step's is.

Source: the RC low-pass H(s) = 1/(1 + s R C) (Alexander & Sadiku, Fundamentals of Electric
Circuits, 5th edition, section 14.2, from memory), here R = 10 kohm, C = 10 nF: a pole at
s = -10000 rad/s. The verdict words follow check output format 1 (DESIGN.md): ``formula``
when the formula on true inputs is not the quantity, ``arithmetic`` when the claim does
not follow from a right formula.
"""

from __future__ import annotations

import pytest

import handcheck
from handcheck.errors import HandcheckError


def _sheet(formula: str, claim: str) -> str:
    return f"""[worksheet]
format = 1
title = "Anti-alias RC, its transfer function by hand"

[parts]
Vs = {{ voltage = "1 V", frequency = "1 kHz", nodes = ["in", "gnd"] }}
R1 = {{ resistor = "10 kohm", nodes = ["in", "out"] }}
C1 = {{ capacitor = "10 nF", nodes = ["out", "gnd"] }}

[[step]]
name = "H"
quantity = "network_function(voltage(out), voltage(in))"
formula = "{formula}"
claim = "{claim}"
"""


def _step(formula: str, claim: str):
    report = handcheck.check_text(_sheet(formula, claim), name="rc.toml")
    return report.steps[0]


def test_a_right_formula_and_claim_agree_and_the_formula_is_shown() -> None:
    step = _step("1/(1 + s*R1*C1)", "1/(1 + s/10000)")
    assert step.verdict == "agrees"
    assert step.recomputed == "10000/(s + 10000)"
    assert not any("formula as written" in note for note in step.notes)


def test_a_wrong_formula_whose_value_is_claimed_is_the_formula() -> None:
    # 2*R1*C1 for R1*C1: the pole at 5000 rad/s, as the claim says
    step = _step("1/(1 + 2*s*R1*C1)", "1/(1 + s/5000)")
    assert step.verdict == "formula"
    assert step.recomputed == "5000/(s + 5000)"


def test_a_claim_that_does_not_follow_from_a_right_formula_is_arithmetic() -> None:
    step = _step("1/(1 + s*R1*C1)", "1/(1 + s/1000)")
    assert step.verdict == "arithmetic"


def test_a_right_claim_beside_a_wrong_formula_says_so() -> None:
    step = _step("1/(1 + s*R1*C1/2)", "1/(1 + s/10000)")
    assert step.verdict == "agrees"
    assert any("the formula as written gives 20000/(s + 20000)" in note for note in step.notes), step.notes


def test_a_formula_whose_units_do_not_add_up_is_unit() -> None:
    step = _step("1/(1 + s*R1)", "1/(1 + s/10000)")  # C1 left out: ohm/s beside 1
    assert step.verdict == "unit"
    assert "not consistent in its units" in (step.message or "")


def test_a_formula_naming_no_part_is_a_worksheet_error() -> None:
    with pytest.raises(HandcheckError, match="C2"):
        _step("1/(1 + s*R1*C2)", "1/(1 + s/10000)")

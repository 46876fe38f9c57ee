"""A later step dividing by an earlier step whose true value is exactly 0 still gets a verdict.

A voltage source set to zero is a short circuit, so the impedance seen at its terminal
with the sources zeroed is exactly 0 ohm (Thevenin's theorem; Alexander & Sadiku,
Fundamentals of Electric Circuits, 5th ed., section 4.5, from memory); the current of
R1 below is V/R1 by Ohm's law.
"""

from __future__ import annotations

import handcheck

SHEET = """
[worksheet]
format = 1
title = "zero divisor"
[parts]
Vs = { voltage = "10 V", nodes = ["a", "gnd"] }
R1 = { resistor = "100 ohm", nodes = ["a", "gnd"] }
[[step]]
name = "Zs"
quantity = "impedance(a)"
claim = "100 ohm"
[[step]]
name = "I"
formula = "Vs/Zs"
claim = "CLAIM"
[[step]]
name = "Iq"
quantity = "current(R1)"
formula = "Vs/Zs"
claim = "CLAIM"
"""


def test_the_check_goes_on_and_names_the_step_the_error_comes_from():
    report = handcheck.check_text(SHEET.replace("CLAIM", "0.1 A"))
    steps = {s.name: s for s in report.steps}
    assert steps["Zs"].verdict == "differs" and report.first_divergence == "Zs"
    assert steps["I"].verdict == "carried" and steps["I"].caused_by == "Zs"
    assert any("cannot be evaluated with the true values" in n for n in steps["I"].notes)
    # judged against its quantity: 10 V / 100 ohm is the current of R1
    assert steps["Iq"].verdict == "agrees"
    assert steps["Iq"].expected_si[0] == 0.1


def test_a_wrong_claim_with_a_quantity_is_carried():
    steps = {s.name: s for s in handcheck.check_text(SHEET.replace("CLAIM", "0.2 A")).steps}
    assert steps["Iq"].verdict == "carried" and steps["Iq"].caused_by == "Zs"

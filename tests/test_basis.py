"""Check output format 1, second edition: each step's ``basis`` and ``notes``.

DESIGN.md, "Check output format 1: second-edition keys": ``basis`` is ``circuit``
(a quantity), ``formula`` (only its own formula) or ``none``; a ``formula`` step always
carries a note saying so and naming the quantity that would check it against the
circuit; the notes are shown in the terminal too.

Every claimed number below is the textbook closed form named beside it, worked by hand.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

import handcheck
from handcheck.cli import main
from handcheck.record.text import render
from handcheck.verify.basis import FORMULA_ONLY

HEADER = '[worksheet]\nformat = 1\ntitle = "basis"\n'

# A 10 V DC source on a 3 kohm + 2 kohm divider. Ohm's law and the voltage divider
# (Nilsson and Riedel, Electric Circuits, 10th ed., sec. 3.3; from memory):
# I = 10 V / 5 kohm = 2 mA; voltage(out) = 10 V * 2/5 = 4 V; voltage(R1) = 6 V.
DIVIDER = (
    HEADER
    + """
[parts]
V1 = { voltage = "10 V", nodes = ["in", "gnd"] }
R1 = { resistor = "3 kohm", nodes = ["in", "out"] }
R2 = { resistor = "2 kohm", nodes = ["out", "gnd"] }
"""
)

STEPS = """
[[step]]
name = "I"
quantity = "current(R1)"
claim = "2 mA"

[[step]]
name = "Vo"
formula = "V1*R2/(R1 + R2)"
claim = "4 V"

[[step]]
name = "n"
claim = "3"
"""


def _json(tmp_path: Path, text: str, capsys: pytest.CaptureFixture[str]) -> tuple[int, dict]:
    path = tmp_path / "sheet.toml"
    path.write_text(text, encoding="utf-8")
    status = main(["check", str(path), "--json"])
    return status, json.loads(capsys.readouterr().out)


def test_basis_of_each_kind_of_step(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    status, data = _json(tmp_path, DIVIDER + STEPS, capsys)
    assert status == 0 and data["ok"] is True
    steps = {s["name"]: s for s in data["steps"]}
    assert [s["verdict"] for s in data["steps"]] == ["agrees", "agrees", "unchecked"]
    assert [s["basis"] for s in data["steps"]] == ["circuit", "formula", "none"]
    assert steps["I"]["notes"] == []
    # the formula's true value is exactly the divider's output voltage (and R2's voltage)
    (note,) = steps["Vo"]["notes"]
    assert note.startswith(FORMULA_ONLY)
    assert 'add quantity = "voltage(out)"' in note and "voltage(R2)" in note
    assert steps["n"]["notes"] == ["no quantity and no formula: nothing to check the claim against"]
    # the first-edition keys are all still there, unchanged in kind
    for key in ("name", "verdict", "claimed", "expected", "expected_si", "error", "caused_by", "diagnosis"):
        assert key in steps["Vo"]
    assert steps["Vo"]["expected_si"] == [4.0, 0.0]


def test_terminal_shows_notes_and_counts_the_two_kinds_of_agreement() -> None:
    report = handcheck.check_text(DIVIDER + STEPS, "sheet.toml")
    text = render(report, handcheck.__version__)
    lines = text.splitlines()
    row = next(k for k, line in enumerate(lines) if line.split()[1:2] == ["Vo"])
    assert lines[row].startswith("ok?") and "agrees with its own formula only" in lines[row]
    assert lines[row + 1].strip().startswith(FORMULA_ONLY)
    unchecked = next(k for k, line in enumerate(lines) if line.split()[1:2] == ["n"])
    assert "nothing to check the claim against" in lines[unchecked + 1]
    assert lines[-1] == "OK: 3 steps (1 agrees with the circuit, 1 agrees with its own formula only, 1 unchecked)"


def test_circuit_only_summary_keeps_its_wording() -> None:
    report = handcheck.check_text(DIVIDER + STEPS.split('[[step]]\nname = "Vo"', maxsplit=1)[0], "sheet.toml")
    assert [s.basis for s in report.steps] == ["circuit"]
    assert render(report, handcheck.__version__).splitlines()[-1] == "OK: 1 step (1 agrees)"


def test_a_wrong_formula_agrees_only_with_itself_and_is_told_what_to_add() -> None:
    # V1*R2/R1 is no voltage of this divider (the divider gives 4 V and 6 V, above), so
    # no quantity is named; the note names the kind of quantity a voltage needs.
    wrong = DIVIDER + '\n[[step]]\nname = "Vo"\nformula = "V1*R2/R1"\nclaim = "6.667 V"\n'
    report = handcheck.check_text(wrong, "sheet.toml")
    (step,) = report.steps
    assert (step.verdict, step.basis) == ("agrees", "formula")
    (note,) = step.notes
    assert note.startswith(FORMULA_ONLY) and '"voltage(NODE)"' in note
    assert "voltage(out)" not in note
    text = render(report, handcheck.__version__)
    assert text.splitlines()[-1] == "OK: 1 step (1 agrees with its own formula only)"


def test_a_right_claim_with_a_wrong_formula_shows_its_remark() -> None:
    # the claim 4 V is voltage(out) (divider, above); the formula as written gives 6 V
    sheet = DIVIDER + '\n[[step]]\nname = "Vo"\nquantity = "voltage(out)"\nformula = "V1*R1/(R1 + R2)"\nclaim = "4 V"\n'
    report = handcheck.check_text(sheet, "sheet.toml")
    (step,) = report.steps
    assert (step.verdict, step.basis) == ("agrees", "circuit")
    assert step.notes == ("the claim is right, but the formula as written gives 6 V",)
    assert "the claim is right, but the formula as written gives 6 V" in render(report, handcheck.__version__)


def test_capacitor_impedance_formula_names_the_part() -> None:
    # Z_C = 1/(j w C) (Nilsson and Riedel, Electric Circuits, 10th ed., sec. 9.4; from
    # memory): at 1 kHz and 1 uF, -j/(2*pi*1e3*1e-6) = -159.15j ohm.
    sheet = (
        HEADER
        + """
[parts]
V1 = { voltage = "1 V", frequency = "1 kHz", nodes = ["in", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["in", "out"] }
C1 = { capacitor = "1 uF", nodes = ["out", "gnd"] }

[[step]]
name = "Zc"
formula = "1/(j*w*C1)"
claim = "-159.2j ohm"
"""
    )
    (step,) = handcheck.check_text(sheet, "rc.toml").steps
    assert (step.verdict, step.basis) == ("agrees", "formula")
    assert 'add quantity = "impedance(C1)"' in step.notes[0]


def test_formula_step_with_a_unit_slip_keeps_its_message_and_the_note() -> None:
    # R*C is a time (s); R/C is ohm/F, so a claim in s cannot match (dimensional analysis)
    sheet = DIVIDER + '\nC1 = { capacitor = "1 uF", nodes = ["out", "gnd"] }\n'
    sheet += '\n[[step]]\nname = "tau"\nformula = "R1/C1"\nclaim = "3 ms"\n'
    (step,) = handcheck.check_text(sheet, "sheet.toml").steps
    assert (step.verdict, step.basis) == ("unit", "formula")
    assert step.notes[0] == step.message and step.notes[1].startswith(FORMULA_ONLY)
    assert '"time_constant"' in step.notes[1]


def test_record_carries_basis_and_notes() -> None:
    from handcheck.pipeline import record_inputs
    from handcheck.record.model import build_record
    from handcheck.worksheet.load import loads

    inputs = record_inputs(loads(DIVIDER + STEPS, "sheet.toml"), evidence=False)
    record = build_record(inputs)
    assert [s["basis"] for s in record["steps"]] == ["circuit", "formula", "none"]
    assert record["steps"][1]["notes"][0].startswith(FORMULA_ONLY)
    assert record["summary"]["basis_counts"] == {"circuit": 1, "formula": 1, "none": 1}


def test_notes_wrap_to_the_width_asked_for() -> None:
    report = handcheck.check_text(DIVIDER + STEPS, "sheet.toml")
    for width in (60, 100, 140):
        text = render(report, handcheck.__version__, width=width)
        note_lines = [line for line in text.splitlines() if line.startswith("     ") and line.strip()]
        assert note_lines and max(len(line) for line in note_lines) <= width
    # the whole note reads the same whatever the width
    narrow = " ".join(render(report, handcheck.__version__, width=60).split())
    wide = " ".join(render(report, handcheck.__version__, width=140).split())
    assert FORMULA_ONLY in narrow and FORMULA_ONLY in wide
    assert len(render(report, handcheck.__version__, width=60).splitlines()) > len(
        render(report, handcheck.__version__, width=140).splitlines()
    )


def test_the_summary_counts_come_in_a_fixed_order():
    # Common practice: a summary lists agreement first, whatever step came first.
    from handcheck.record.text import _counts
    from handcheck.verify.findings import StepFinding

    steps = tuple(
        StepFinding(name=f"s{i}", claimed="1", quantity="voltage(a)", formula=None, line=i, verdict=v, basis="circuit")
        for i, v in enumerate(["formula", "agrees", "carried", "agrees", "unit"])
    )
    assert _counts(steps) == "2 agrees, 1 formula, 1 carried, 1 unit"

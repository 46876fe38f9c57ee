"""Malformed worksheets: each gives one message naming the file, the part or step and
the line, and the command exits with status 2 (check output format 1, DESIGN.md)."""

from __future__ import annotations

import pytest

import handcheck
from handcheck.cli import main

HEAD = '[worksheet]\nformat = 1\ntitle = "t"\n'
DIVIDER = (
    '[parts]\nV1 = { voltage = "1 V", nodes = ["a", "gnd"] }\nR1 = { resistor = "1 kohm", nodes = ["a", "gnd"] }\n'
)

# (id, worksheet text after HEAD, the whole message expected on stderr after "handcheck: ")
CASES = [
    (
        "unknown node in a quantity",
        DIVIDER + '[[step]]\nname = "x"\nquantity = "voltage(b)"\nclaim = "1 V"\n',
        'W.toml:9: step "x": "b" is not a node of the circuit (nodes: a, gnd) in "voltage(b)"',
    ),
    (
        "unknown part in a quantity",
        DIVIDER + '[[step]]\nname = "x"\nquantity = "current(R2)"\nclaim = "1 A"\n',
        'W.toml:9: step "x": "R2" is not a part of the circuit in "current(R2)"',
    ),
    (
        "both ends on one node",
        '[parts]\nV1 = { voltage = "1 V", nodes = ["a", "gnd"] }\nR1 = { resistor = "1 kohm", nodes = ["a", "a"] }\n',
        'W.toml:6: part "R1" has both ends on node "a"; connect it between two different nodes',
    ),
    (
        "duplicate step names",
        DIVIDER + '[[step]]\nname = "x"\nclaim = "1"\n[[step]]\nname = "x"\nclaim = "2"\n',
        'W.toml:11: step name "x" is used twice (steps 1 and 2); names must be unique',
    ),
    (
        "a value in the wrong unit",
        '[parts]\nR1 = { resistor = "3 kF", nodes = ["a", "gnd"] }\n',
        'W.toml:5: the resistor value of R1 "3 kF" is in F, but must be in ohm',
    ),
    (
        "a value without a unit",
        '[parts]\nR1 = { resistor = "3", nodes = ["a", "gnd"] }\n',
        'W.toml:5: the resistor value of R1 "3" has no unit; write it with one, like "4.7 kohm"',
    ),
    (
        "a controlling part that does not exist",
        DIVIDER + 'mirror = { cccs = "2", control = "Vx", nodes = ["a", "gnd"] }\n',
        'W.toml:7: mirror is controlled by the current of part "Vx", which is not in [parts]',
    ),
    (
        "a missing claim",
        DIVIDER + '[[step]]\nname = "x"\nquantity = "voltage(a)"\n',
        'W.toml:7: step "x" needs a claim, the number the author wrote',
    ),
    (
        "an unknown part kind",
        '[parts]\nR1 = { resistr = "3 kohm", nodes = ["a", "gnd"] }\n',
        'W.toml:5: part "R1" has no kind (did you mean "resistor"?); give one of: resistor, inductor, capacitor, '
        "voltage, current, vcvs, vccs, cccs, ccvs, opamp, coupling, transformer, switch",
    ),
    (
        "invalid TOML",
        "[parts\n",
        "W.toml:4: not valid TOML: Expected ']' at the end of a table declaration",
    ),
    (
        "a forward reference",
        DIVIDER + '[[step]]\nname = "x"\nformula = "y*2"\nclaim = "1"\n[[step]]\nname = "y"\nclaim = "2"\n',
        'W.toml:9: step "x": the formula uses "y", which is a later step; a formula may use only earlier steps',
    ),
    (
        "a step using itself",
        DIVIDER + '[[step]]\nname = "x"\nformula = "x*2"\nclaim = "1"\n',
        'W.toml:9: step "x": the formula uses the step itself; a formula may use only earlier steps',
    ),
    (
        "unbalanced parentheses",
        DIVIDER + '[[step]]\nname = "x"\nformula = "(R1 + 2 ohm"\nclaim = "1 ohm"\n',
        'W.toml:9: step "x": expected ")" but found the end in "(R1 + 2 ohm" at column 12',
    ),
    (
        "no ground",
        '[parts]\nV1 = { voltage = "1 V", nodes = ["a", "b"] }\nR1 = { resistor = "3 kohm", nodes = ["a", "b"] }\n',
        'W.toml: no part connects to ground; name one node "gnd"',
    ),
    (
        "an unknown key in a step",
        DIVIDER + '[[step]]\nname = "x"\nclaimed = "1 V"\n',
        'W.toml:9: step 1 has an unknown key "claimed" (did you mean "claim"?); '
        "a step takes: name, quantity, formula, claim, tolerance",
    ),
]


def _write(tmp_path, body: str, head: str = HEAD):
    path = tmp_path / "W.toml"
    path.write_text(head + body, encoding="utf-8")
    return path


@pytest.mark.parametrize(("body", "message"), [(b, m) for _, b, m in CASES], ids=[c[0] for c in CASES])
def test_message_word_for_word(tmp_path, monkeypatch, capsys, body, message):
    monkeypatch.chdir(tmp_path)
    _write(tmp_path, body)
    assert main(["check", "W.toml"]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    assert captured.err == f"handcheck: {message}\n"


def test_wrong_format(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    _write(tmp_path, DIVIDER, head='[worksheet]\nformat = 2\ntitle = "t"\n')
    assert main(["check", "W.toml"]) == 2
    assert (
        capsys.readouterr().err
        == "handcheck: W.toml:2: format = 2 is not a format this version reads; write format = 1\n"
    )


def test_missing_title(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    _write(tmp_path, DIVIDER, head="[worksheet]\nformat = 1\n")
    assert main(["check", "W.toml"]) == 2
    assert capsys.readouterr().err == 'handcheck: W.toml:1: [worksheet] needs a "title"\n'


def test_errors_are_handcheck_errors():
    with pytest.raises(handcheck.WorksheetError) as info:
        handcheck.loads(HEAD + '[parts]\nR1 = { resistor = "1 ohm", nodes = ["a", "a"] }\n', "mem.toml")
    assert isinstance(info.value, handcheck.HandcheckError)
    assert isinstance(info.value, ValueError)
    assert info.value.line == 5
    assert info.value.file == "mem.toml"


def test_claim_in_the_wrong_unit_is_a_verdict_not_an_error():
    report = handcheck.check_text(HEAD + DIVIDER + '[[step]]\nname = "x"\nquantity = "voltage(a)"\nclaim = "2 A"\n')
    assert report.steps[0].verdict == "unit"
    assert report.steps[0].message == "the claim is in A, but the quantity is in V"


def test_formula_with_inconsistent_units_quotes_the_subexpression():
    report = handcheck.check_text(HEAD + DIVIDER + '[[step]]\nname = "y"\nformula = "R1 + 1/R1"\nclaim = "2 ohm"\n')
    assert report.steps[0].verdict == "unit"
    assert report.steps[0].message == (
        'the formula is not consistent in its units: cannot add "R1" (ohm) and "1/R1" (S) in "R1 + 1/R1"'
    )


def test_payload_in_a_formula_is_a_parse_error_and_runs_nothing(tmp_path, monkeypatch, capsys):
    sentinel = tmp_path / "ran"
    monkeypatch.chdir(tmp_path)
    payloads = [
        f"__import__('os').system('touch {sentinel}')",
        "__class__.__mro__",
        "lambda: 1",
        f"`touch {sentinel}`",
        f"$(touch {sentinel})",
        "R1.__dict__",
    ]
    for payload in payloads:
        body = DIVIDER + f'[[step]]\nname = "x"\nformula = """{payload}"""\nclaim = "1"\n'
        _write(tmp_path, body)
        assert main(["check", "W.toml"]) == 2, payload
        err = capsys.readouterr().err
        assert err.startswith('handcheck: W.toml:9: step "x": '), err
        assert "Traceback" not in err
    assert not sentinel.exists()

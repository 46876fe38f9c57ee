"""Reading [audit], [[formula]], tolerances and ranges; the finite-gain op-amp part."""

from __future__ import annotations

from fractions import Fraction

import pytest
import sympy

from handcheck.errors import HandcheckError, ParseError, WorksheetError
from handcheck.verify.check import check
from handcheck.worksheet.load import loads

HEAD = '[worksheet]\nformat = 1\ntitle = "loader test"\n'
PARTS = """
[parts]
Vin = { voltage = "1 V", nodes = ["in", "gnd"] }
R1 = { resistor = "10 kohm", tolerance = "5%", nodes = ["in", "out"] }
C1 = { capacitor = "10 nF", range = ["9 nF", "11 nF"], nodes = ["out", "gnd"] }
"""


def test_audit_tables_are_read_and_parsed_once() -> None:
    worksheet = loads(
        HEAD
        + PARTS
        + """
[audit]
samples = 500
seed = 4
distribution = "normal"

[[formula]]
name = "tau"
quantity = "time_constant"
expression = "R1*C1"
reference = "note, eq. 1"

[[formula]]
name = "H"
quantity = "network_function(voltage(out), voltage(in))"
"""
    )
    sheet = worksheet.audit
    assert sheet is not None
    assert (sheet.samples, sheet.seed, sheet.distribution, sheet.symbols) == (500, 4, "normal", None)
    assert sheet.variation("R1").tolerance == Fraction(1, 20)
    c1 = sheet.variation("C1")
    assert (c1.low, c1.high) == (sympy.Rational(9, 10**9), sympy.Rational(11, 10**9))
    tau, h = sheet.formulas
    assert tau.expression is not None and tau.reference == "note, eq. 1" and tau.line == 15
    assert h.expression is None
    assert h.quantity.name == "network_function"
    assert [a.text for a in h.quantity.args] == ["voltage(out)", "voltage(in)"]


@pytest.mark.parametrize(
    ("extra", "error", "words"),
    [
        ("[audit]\nsample = 10\n", WorksheetError, 'unknown key "sample" in [audit]'),
        ('[audit]\nsymbols = ["R9"]\n', WorksheetError, '"R9", which is not a part'),
        ('[audit]\nsamples = "10"\n', WorksheetError, "samples in [audit] must be a whole number"),
        ('[audit]\ndistribution = "gauss"\n', WorksheetError, 'must be "uniform" or "normal"'),
        ('[[formula]]\nname = "x"\n', WorksheetError, 'needs quantity = "..."'),
        ('[[formula]]\nname = "x"\nquantity = "cutoff(H)"\n', ParseError, "no quantity the audit knows"),
        (
            '[[formula]]\nname = "x"\nquantity = "time_constant"\nexpression = "R1*Cx"\n',
            WorksheetError,
            '"Cx" in "R1*Cx" is not a part id',
        ),
        ('[[formula]]\nname = "x"\nquantity = "time_constant"\nexpression = "R1*(C1"\n', ParseError, 'formula "x"'),
    ],
)
def test_malformed_audit_is_refused_with_its_line(extra: str, error: type, words: str) -> None:
    with pytest.raises(error) as caught:
        loads(HEAD + PARTS + extra, "sheet.toml")
    assert words in str(caught.value)
    assert str(caught.value).startswith("sheet.toml:")


@pytest.mark.parametrize(
    ("part", "words"),
    [
        ('R2 = { resistor = "1 kohm", tolerance = "5", nodes = ["out", "gnd"] }', "must be a percentage"),
        ('R2 = { resistor = "1 kohm", tolerance = "150%", nodes = ["out", "gnd"] }', "less than 100%"),
        (
            'R2 = { resistor = "1 kohm", range = ["1 nF", "2 nF"], nodes = ["out", "gnd"] }',
            "must be an exact value in ohm",
        ),
        ('R2 = { resistor = "1 kohm", range = ["2 kohm", "1 kohm"], nodes = ["out", "gnd"] }', "to a higher one"),
        ('R2 = { resistor = "1 kohm", range = ["1 kohm"], nodes = ["out", "gnd"] }', "must be two values"),
        (
            'R2 = { resistor = "1 kohm", tolerance = "1%", range = ["1 kohm", "2 kohm"], nodes = ["out", "gnd"] }',
            "both a tolerance and a range",
        ),
        ('V2 = { voltage = "1 V", tolerance = "1%", nodes = ["out", "gnd"] }', "only parts with a value"),
    ],
)
def test_malformed_variation(part: str, words: str) -> None:
    with pytest.raises(HandcheckError) as caught:
        loads(HEAD + PARTS + part + "\n", "sheet.toml")
    assert words in str(caught.value)


def test_worksheet_without_audit_has_none() -> None:
    text = (
        HEAD
        + '[parts]\nR1 = { resistor = "1 kohm", nodes = ["a", "gnd"] }\nV1 = { voltage = "1 V", nodes = ["a", "gnd"] }\n'
    )
    assert loads(text).audit is None


def test_finite_gain_inverting_amplifier_step() -> None:
    # Source: Sedra & Smith, *Microelectronic Circuits*, inverting amplifier with finite
    # open-loop gain (from memory): G = -(R2/R1)/(1 + (1 + R2/R1)/A). Exact path.
    text = (
        HEAD
        + """
[parts]
Vin = { voltage = "1 V", nodes = ["in", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["in", "n"] }
R2 = { resistor = "100 kohm", nodes = ["n", "out"] }
amp = { opamp = "1000", nodes = ["out", "gnd", "n"] }

[[step]]
name = "G"
quantity = "transfer(voltage(out), voltage(in))"
claim = "-90.827"
"""
    )
    report = check(loads(text))
    (step,) = report.steps
    assert step.verdict == "agrees"
    expected = -(100) / (1 + 101 / 1000)
    assert step.expected_si[0] == pytest.approx(expected, rel=1e-12)


def test_finite_gain_in_the_numerical_path() -> None:
    # The independent time-domain solution stamps the same finite gain (scipy-free check:
    # the fitted DC output against the closed form above).
    from handcheck.circuit.build import build
    from handcheck.verify.evidence import gather_evidence

    text = (
        HEAD
        + """
[parts]
Vin = { voltage = "1 V", frequency = "1 kHz", nodes = ["in", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["in", "n"] }
R2 = { resistor = "10 kohm", nodes = ["n", "out"] }
amp = { opamp = "100", nodes = ["out", "gnd", "n"] }
[[step]]
name = "v"
quantity = "voltage(out)"
claim = "-9.009 V"
"""
    )
    worksheet = loads(text)
    evidence = gather_evidence(build(worksheet), worksheet.steps)
    assert evidence.ok
    fitted = dict((name, f) for name, f, _ in evidence.phasors)["voltage(out)"]
    assert abs(fitted) == pytest.approx(10 / (1 + 11 / 100), rel=1e-6)

"""The safe expression parser, units and claims."""

from __future__ import annotations

import pytest
import sympy

from handcheck.errors import LimitError, ParseError, UnitError
from handcheck.verify.claims import Tolerance, agrees, read_claim, read_tolerance, to_complex
from handcheck.worksheet.evaluate import Value, evaluate_text
from handcheck.worksheet.units import dim_of
from handcheck.worksheet.values import read_frequency

OHM, FARAD, SECOND = dim_of("ohm"), dim_of("F"), dim_of("s")


@pytest.mark.parametrize(
    ("text", "exact", "dim"),
    [
        # SI prefixes are exact powers of ten (SI Brochure, 9th ed., table 7).
        ("0.22 uF", sympy.Rational(22, 10**8), FARAD),
        ("0.22 µF", sympy.Rational(22, 10**8), FARAD),
        ("4.7 kohm", sympy.Integer(4700), OHM),
        ("4.7kΩ", sympy.Integer(4700), OHM),
        ("2.2e-6 F", sympy.Rational(22, 10**7), FARAD),
        ("3.2 ms", sympy.Rational(32, 10**4), SECOND),
        ("1 Mohm", sympy.Integer(10**6), OHM),
    ],
)
def test_values_are_exact_rationals(text, exact, dim):
    value = evaluate_text(text)
    assert value.expr == exact
    assert value.dim == dim


def test_number_and_unit_bind_as_one_value():
    # "t/3.2 ms" divides by 3.2 ms (worksheet format 1, DESIGN.md).
    value = evaluate_text("1 s/3.2 ms")
    assert value.expr == sympy.Rational(10000, 32)
    assert value.dim.dimensionless


def test_operators_and_parallel():
    env = {"R1": Value(sympy.Integer(6), OHM), "R2": Value(sympy.Integer(3), OHM)}
    assert evaluate_text("R1 || R2", env).expr == 2  # 6*3/(6+3)
    assert evaluate_text("R1 + R1 || R2", env).expr == 8  # || binds tighter than +
    assert evaluate_text("2^3 + 2**2", env).expr == 12
    assert evaluate_text("-2^2").expr == -4
    assert evaluate_text("12.3 - 4.5j").expr == sympy.Rational(123, 10) - sympy.Rational(9, 2) * sympy.I
    assert evaluate_text("polar(2, 90 deg)").expr.equals(2 * sympy.I)
    assert evaluate_text("2 /_ 90 deg").expr.equals(2 * sympy.I)


def test_functions():
    assert evaluate_text("sqrt(4)").expr == 2
    assert evaluate_text("db(10)").expr.equals(20)  # 20 log10 |x|
    assert evaluate_text("abs(3 + 4j)").expr == 5
    assert evaluate_text("arg(j)").expr == sympy.pi / 2
    assert evaluate_text("atan2(1, 1)").expr == sympy.pi / 4
    assert evaluate_text("conj(1 + 2j)").expr == 1 - 2 * sympy.I
    assert evaluate_text("re(1 + 2j) + im(1 + 2j)").expr == 3
    assert evaluate_text("ln(exp(2))").expr == 2
    assert evaluate_text("cos(60 deg)").expr == sympy.Rational(1, 2)
    assert evaluate_text("sqrt(4 ohm * 9 ohm)").dim == OHM


@pytest.mark.parametrize(
    ("text", "error", "message"),
    [
        ("1 ohm + 1 F", UnitError, 'cannot add "1 ohm" (ohm) and "1 F" (F) in "1 ohm + 1 F"'),
        ("sin(1 ohm)", UnitError, 'sin() needs a dimensionless argument, but "1 ohm" is in ohm'),
        ("sqrt(1, 2)", ParseError, 'sqrt() takes 1 argument, not 2 in "sqrt(1, 2)" at column 1'),
        ("foo(1)", ParseError, "unknown function"),
        ("1/0", ParseError, 'division by zero: "0" is exactly 0 in "1/0" at column 3'),
        ("(1 + 2", ParseError, 'expected ")" but found the end in "(1 + 2" at column 7'),
        ("2 R", ParseError, '"R" after a number is not a unit handcheck knows'),
        ("2 kilohms", ParseError, '"kilohms" after a number is not a unit handcheck knows'),
        ("x.y", ParseError, "unexpected"),
        ("1e999999", LimitError, 'the number "1e999999" is out of range'),
        ("2^100000", LimitError, 'the power "2^100000" is too large'),
        ("(" * 100 + "1" + ")" * 100, LimitError, "nested more than 60 levels deep"),
        ("", ParseError, "the text is empty"),
    ],
)
def test_bad_expressions(text, error, message):
    with pytest.raises(error) as info:
        evaluate_text(text)
    assert message in str(info.value)


def test_no_code_is_run_for_python_syntax():
    for payload in ("__import__('os')", "().__class__", "lambda x: x", "[1][0]", "a if b else c", "{1}"):
        with pytest.raises(ParseError):
            evaluate_text(payload)


def test_radians_per_second_is_angular_frequency():
    # The radian is dimensionless in SI (SI Brochure, 9th ed., table 4), so the unit
    # text decides: "1000 rad/s" is w = 1000, "1000 Hz" is f = 1000.
    assert read_frequency("1000 rad/s", "f") == 1000
    assert read_frequency("1000 Hz", "f") == 2000 * sympy.pi
    assert read_frequency("2 kHz", "f") == 4000 * sympy.pi
    with pytest.raises(UnitError):
        read_frequency("50 V", "f")


def test_claims():
    claim = read_claim("35.81 ohm")
    assert claim.value.expr == sympy.Rational(3581, 100)
    assert claim.resolution == pytest.approx((0.005, 0.0))
    rect = read_claim("12.3 - 4.5j ohm")
    assert rect.value.expr == sympy.Rational(123, 10) - sympy.Rational(45, 10) * sympy.I
    assert rect.value.dim == OHM
    assert rect.resolution == pytest.approx((0.05, 0.05))
    polar = read_claim("0.63 A ∠ -22.1 deg")
    assert polar.form == "polar"
    assert polar.resolution == pytest.approx((0.005, 0.05 * 3.141592653589793 / 180))
    ascii_polar = read_claim("0.63 A /_ -22.1")
    assert ascii_polar.value.expr == polar.value.expr  # an angle without unit is in degrees
    assert read_claim("2.2 kohm").resolution == pytest.approx((50.0, 0.0))
    assert read_claim("4.7e-3 A").resolution == pytest.approx((0.00005, 0.0))


def test_digits_tolerance_is_half_a_unit_in_the_last_digit():
    # Common practice: a figure rounded to its last digit is within half a unit of it.
    digits = Tolerance()
    claim = read_claim("35.81 ohm")
    assert agrees(claim, complex(35.8149, 0), digits)
    assert not agrees(claim, complex(35.8151, 0), digits)
    polar = read_claim("1.00 V /_ 30.0 deg")
    assert agrees(polar, complex(to_complex(sympy.exp(sympy.I * sympy.pi * sympy.Rational(3004, 18000)))), digits)
    assert not agrees(polar, complex(to_complex(sympy.exp(sympy.I * sympy.pi * sympy.Rational(3006, 18000)))), digits)


def test_percent_tolerance():
    assert read_tolerance("0.5%") == Tolerance(0.005)
    claim = read_claim("100 ohm")
    assert agrees(claim, complex(100.4, 0), read_tolerance("0.5%"))
    assert not agrees(claim, complex(100.6, 0), read_tolerance("0.5%"))
    with pytest.raises(Exception, match="must be"):
        read_tolerance("five percent")


def test_bad_claims():
    with pytest.raises(ParseError, match="a claim is a number with its unit"):
        read_claim("R1 * 2")
    with pytest.raises(ParseError, match="one unit"):
        read_claim("12 ohm - 3j ohm")


@pytest.mark.parametrize(("text", "meant"), [("10 uf", "uF"), ("1 Kohm", "kohm"), ("3 MHZ", "MHz"), ("4.7 nf", "nF")])
def test_a_unit_in_the_wrong_case_is_named_in_the_message(text, meant):
    # SI prefixes and unit symbols are case-sensitive (SI Brochure, 9th ed., 2019, sections
    # 3 and 5.2, from memory): the message says which spelling is meant.
    with pytest.raises(ParseError, match=f'did you mean "{meant}"'):
        read_claim(text)

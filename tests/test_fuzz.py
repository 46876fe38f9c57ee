"""Fuzzing: generated formulas, claims and whole worksheets, valid and broken.

The contract under test (worksheet format 1 and check output format 1, DESIGN.md):
whatever text a worksheet holds, handcheck either answers or raises one of its own
errors, a :class:`~handcheck.errors.HandcheckError` with a one-line message, which the
command line turns into exit status 2. Nothing else may escape: no ``KeyError``, no
``RecursionError``, no sympy internals. Generated *valid* input is also checked
against an independent evaluation in Python's exact ``fractions``.

The tests call library functions directly (no subprocesses). Hypothesis runs
derandomized, so every run draws the same cases. ``HANDCHECK_FUZZ_EXAMPLES`` sets the
total number of generated cases across this file (default :data:`DEFAULT_TOTAL`);
each test gets a fixed share of it. Each Hypothesis example is a batch of
:data:`BATCH` cases, which draws the same cases at a third of the cost of one example
per case. These tests are marked ``slow`` (``pytest -m "not slow"`` leaves them out).
"""

from __future__ import annotations

import json
import math
import os
import time
from fractions import Fraction

import pytest
import sympy
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import handcheck
from handcheck.errors import HandcheckError, LimitError, ParseError
from handcheck.solve.quantities import parse_quantity
from handcheck.verify.claims import read_claim, read_tolerance
from handcheck.worksheet.evaluate import Value, evaluate_text
from handcheck.worksheet.expr import parse
from handcheck.worksheet.units import dim_of
from handcheck.worksheet.values import read_frequency, read_value

# -- how many cases -------------------------------------------------------------

#: Cases per test at the default size; their sum is the default total.
SHARES = {
    "random_text": 3000,
    "formulas": 5000,
    "exact_arithmetic": 2500,
    "claims": 4000,
    "exact_claims": 1500,
    "worksheet_text": 3000,
    "whole_worksheets": 1000,
    "valid_worksheets": 300,
}
DEFAULT_TOTAL = sum(SHARES.values())
TOTAL = int(os.environ.get("HANDCHECK_FUZZ_EXAMPLES", DEFAULT_TOTAL))
#: Cases drawn in one Hypothesis example.
BATCH = 10


def fuzz(share: str):
    """Decorate one test: its share of the total in batches, seeded, no deadline, marked slow."""
    configured = settings(
        max_examples=max(1, round(SHARES[share] * TOTAL / DEFAULT_TOTAL / BATCH)),
        deadline=None,
        derandomize=True,
        database=None,
        suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large, HealthCheck.filter_too_much],
    )
    return lambda test: pytest.mark.slow(configured(test))


def batch(strategy: st.SearchStrategy) -> st.SearchStrategy[list]:
    """:data:`BATCH` cases from ``strategy``."""
    return st.lists(strategy, min_size=BATCH, max_size=BATCH)


def only_handcheck_errors(function, *args, **kwargs):
    """Call ``function``; return its result, or the HandcheckError it raised.

    Any other exception fails the test, naming its type and the input.
    """
    try:
        return function(*args, **kwargs)
    except HandcheckError as exc:
        message = str(exc)
        assert len(message.splitlines()) == 1, f"an error message must be one line: {message!r}"
        assert "Traceback" not in message
        return exc
    except Exception as exc:  # anything else is the failure this file looks for
        pytest.fail(f"{type(exc).__name__} escaped from {function.__name__}{args!r}: {exc}")


# -- strategies: formulas -------------------------------------------------------

OHM, HENRY, FARAD, VOLT, HERTZ = (dim_of(u) for u in ("ohm", "H", "F", "V", "Hz"))
ENV = {
    "R1": Value(sympy.Integer(4700), OHM),
    "L1": Value(sympy.Rational(95, 1000), HENRY),
    "C1": Value(sympy.Rational(22, 10**8), FARAD),
    "V1": Value(sympy.Integer(24), VOLT),
    "x": Value(sympy.Rational(3, 2)),
    "f": Value(sympy.Integer(60), HERTZ),
    "w": Value(120 * sympy.pi, HERTZ),
}

DIGITS = st.sampled_from(
    [
        "0",
        "1",
        "2",
        "2.5",
        ".5",
        "3.",
        "47",
        "0.22",
        "1e3",
        "2.2e-6",
        "4.7E+3",
        "1e400",
        "1e-400",
        "1e401",
        "1e999999",
        "007",
        "0.0",
        "123456789012345678901234567890",
        "1.5j",
        "j2",
        "3j",
        "1e",
    ]
)
UNITS = st.sampled_from(
    [
        "",
        "",
        "",
        " ohm",
        "kohm",
        " Ω",
        "kΩ",
        " uF",
        " µF",
        " mH",
        " V",
        " mA",
        " A",
        " Hz",
        " kHz",
        " rad/s",
        " deg",
        "°",
        " rad",
        " ms",
        " s",
        " W",
        " var",
        " VA",
        " S",
        " ohm^2",
        " F^-1",
        " V/A",
        " m",
        " kg",
        " furlong",
        " xyz",
        " ohm^5",
        " V/A*s",
        " dB",
        " percent",
        " K",
        " mol",
    ]
)
NAMES = st.sampled_from(
    ["R1", "L1", "C1", "V1", "x", "f", "w", "ω", "pi", "j", "t", "y", "R2", "_", "__class__", "os", "Vs", "gnd"]
)
FUNCTIONS = st.sampled_from(
    [
        "sqrt",
        "exp",
        "ln",
        "log10",
        "sin",
        "cos",
        "tan",
        "atan",
        "atan2",
        "abs",
        "arg",
        "re",
        "im",
        "conj",
        "polar",
        "db",
        "sinh",
        "eval",
        "__import__",
        "max",
    ]
)
OPERATORS = st.sampled_from(["+", "-", "*", "/", "^", "**", "||", "∠", "/_", " ", ",", "//", "%"])
NOISE = st.sampled_from([*"()^*/+-|,.∠_eEjJ0123456789 \t\n`$;'\"[]{}=#@!\\?:&<>~", "\x00", "é", "Ω", "µ", "\u200b"])


def _leaf() -> st.SearchStrategy[str]:
    return st.one_of(st.tuples(DIGITS, UNITS).map("".join), NAMES)


def _grow(children: st.SearchStrategy[str]) -> st.SearchStrategy[str]:
    return st.one_of(
        st.tuples(children, OPERATORS, children).map(lambda t: f"{t[0]} {t[1]} {t[2]}"),
        st.tuples(children, OPERATORS, children).map("".join),
        children.map(lambda c: f"({c})"),
        children.map(lambda c: f"-{c}"),
        st.tuples(FUNCTIONS, st.lists(children, max_size=3)).map(lambda t: f"{t[0]}({', '.join(t[1])})"),
    )


FORMULAS = st.recursive(_leaf(), _grow, max_leaves=10)
#: Shorter formulas for the steps of whole worksheets (cheaper to draw).
SHORT_FORMULAS = st.recursive(_leaf(), _grow, max_leaves=4)


@st.composite
def mutated(draw, base: st.SearchStrategy[str]) -> str:
    """A text from ``base`` with a few characters deleted, inserted or replaced."""
    text = draw(base)
    for _ in range(draw(st.integers(0, 3))):
        position = draw(st.integers(0, len(text)))
        action = draw(st.sampled_from(("delete", "insert", "replace")))
        if action == "delete":
            text = text[:position] + text[position + 1 :]
        elif action == "insert":
            text = text[:position] + draw(NOISE) + text[position:]
        else:
            text = text[:position] + draw(NOISE) + text[position + 1 :]
    return text


# -- strategies: claims ---------------------------------------------------------


def _decimal(value: Fraction) -> str:
    """An exact decimal literal for a fraction whose denominator divides a power of ten."""
    sign = "-" if value < 0 else ""
    value = abs(value)
    scale = 0
    while value.denominator != 1:
        value *= 10
        scale += 1
    digits = str(value.numerator).rjust(scale + 1, "0")
    return sign + (digits[:-scale] + "." + digits[-scale:] if scale else digits)


DECIMALS = st.builds(
    lambda mantissa, scale: Fraction(mantissa, 10**scale), st.integers(-(10**7), 10**7), st.integers(0, 6)
)
#: Unit as written: (exact factor to SI, the SI unit). SI prefixes: SI Brochure, 9th ed., table 7.
CLAIM_UNITS = {
    "ohm": (1, "ohm"),
    "kohm": (1000, "ohm"),
    "mA": (Fraction(1, 1000), "A"),
    "uF": (Fraction(1, 10**6), "F"),
    "V": (1, "V"),
    "mV": (Fraction(1, 1000), "V"),
    "W": (1, "W"),
    "kHz": (1000, "Hz"),
    "mH": (Fraction(1, 1000), "H"),
    "S": (1, "S"),
    "us": (Fraction(1, 10**6), "s"),
}

CLAIMS = st.one_of(
    st.tuples(DIGITS, UNITS).map("".join),
    st.tuples(DIGITS, st.sampled_from([" + ", " - ", "+", "-"]), DIGITS, st.sampled_from(["j", "", "j "]), UNITS).map(
        "".join
    ),
    st.tuples(
        DIGITS,
        UNITS,
        st.sampled_from([" ∠ ", " /_ ", "∠", "/_", " ∠ -"]),
        DIGITS,
        st.sampled_from(["", " deg", "°", " rad", " V"]),
    ).map("".join),
    st.tuples(SHORT_FORMULAS, UNITS).map("".join),
)


# -- strategies: worksheets -----------------------------------------------------

TEMPLATES = [
    {  # a divider at DC
        "V1": {"voltage": "10 V", "nodes": ["in", "gnd"]},
        "R1": {"resistor": "3 kohm", "nodes": ["in", "out"]},
        "R2": {"resistor": "2 kohm", "nodes": ["out", "gnd"]},
    },
    {  # an RC low-pass at a rational angular frequency
        "V1": {"voltage": "1 V", "frequency": "1000 rad/s", "phase": "30 deg", "nodes": ["in", "gnd"]},
        "R1": {"resistor": "1 kohm", "nodes": ["in", "out"]},
        "C1": {"capacitor": "1 uF", "nodes": ["out", "gnd"], "initial": "0 V"},
    },
    {  # a series RLC driven by a current source
        "I1": {"current": "2 mA rms", "frequency": "500 rad/s", "nodes": ["gnd", "a"]},
        "R1": {"resistor": "100 ohm", "nodes": ["a", "b"]},
        "L1": {"inductor": "10 mH", "nodes": ["b", "gnd"]},
        "C1": {"capacitor": "10 uF", "nodes": ["a", "gnd"]},
    },
    {  # an inverting amplifier
        "V1": {"voltage": "1 V", "nodes": ["in", "gnd"]},
        "R1": {"resistor": "1 kohm", "nodes": ["in", "n"]},
        "R2": {"resistor": "10 kohm", "nodes": ["n", "out"]},
        "U1": {"opamp": "ideal", "nodes": ["out", "gnd", "n"]},
        "RL": {"resistor": "2 kohm", "nodes": ["out", "gnd"]},
    },
    {  # a transformer, coupled inductors and controlled sources
        "V1": {"voltage": "10 V", "frequency": "100 rad/s", "nodes": ["p", "gnd"]},
        "T1": {"transformer": "10:1", "nodes": ["p", "gnd", "s", "gnd"]},
        "R1": {"resistor": "5 ohm", "nodes": ["s", "m"]},
        "L1": {"inductor": "1 H", "nodes": ["m", "gnd"]},
        "L2": {"inductor": "2 H", "nodes": ["q", "gnd"]},
        "R2": {"resistor": "1 ohm", "nodes": ["q", "gnd"]},
        "mutual_ps": {"coupling": "0.5", "inductors": ["L1", "L2"]},
        "buf": {"vcvs": "2", "control": ["m", "gnd"], "nodes": ["e", "gnd"]},
        "mirror": {"cccs": "3", "control": "R2", "nodes": ["e", "gnd"]},
        "R3": {"resistor": "1 ohm", "nodes": ["e", "gnd"]},
    },
]
QUANTITIES = st.sampled_from(
    [
        "voltage(out)",
        "voltage(in, out)",
        "current(R1)",
        "impedance(R1)",
        "impedance(in, gnd)",
        "admittance(R1)",
        "reactance(C1)",
        "resistance(R1)",
        "power(R1)",
        "reactive_power(V1)",
        "apparent_power(V1)",
        "power_factor(V1)",
        "transfer(voltage(out), voltage(in))",
        "voltage(a)",
        "current(L1)",
        "voltage(s)",
        "initial(voltage(out))",
        "final(voltage(out))",
        'at(voltage(out), "1 ms")',
        "time_constant",
        "voltage(nowhere)",
        "current(Q9)",
        "voltage(",
        "power()",
        "volts(a)",
        "impedance(a, a)",
    ]
)
STEP_NAMES = st.sampled_from(["x", "y", "z", "Vout", "R1", "pi", "2x", "x y", "", "__class__"])
JUNK = st.one_of(
    st.text(max_size=12),
    st.integers(-5, 5),
    st.booleans(),
    st.floats(allow_nan=True, allow_infinity=True),
    st.lists(st.text(max_size=4), max_size=5),
    st.dictionaries(st.sampled_from(["a", "nodes", "resistor"]), st.text(max_size=4), max_size=2),
    SHORT_FORMULAS,
    CLAIMS,
)
TITLES = st.sampled_from(["Valve coil snubber", "", "  ", "日本語", "a\nb", "__import__('os')"]) | st.text(max_size=8)
PART_KEYS = st.sampled_from(
    [
        "resistor",
        "inductor",
        "capacitor",
        "voltage",
        "current",
        "vcvs",
        "vccs",
        "cccs",
        "ccvs",
        "opamp",
        "coupling",
        "transformer",
        "switch",
        "nodes",
        "frequency",
        "phase",
        "initial",
        "control",
        "inductors",
        "resistr",
        "node",
        "value",
        "shape",
        "delay",
        "points",
        "period",
        "width",
    ]
)


def toml_value(value: object) -> str:
    """A TOML literal for test data (``json`` spells strings as TOML basic strings)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf") if math.isinf(value) else repr(value)
    if isinstance(value, (int, str)):
        return json.dumps(value, ensure_ascii=False)
    if isinstance(value, list):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{ " + ", ".join(f"{json.dumps(str(k))} = {toml_value(v)}" for k, v in value.items()) + " }"
    raise TypeError(value)  # pragma: no cover - the strategies make no other types


def render(head: dict[str, object], parts: dict[str, dict[str, object]], steps: list[dict[str, object]]) -> str:
    lines = ["[worksheet]", *(f"{k} = {toml_value(v)}" for k, v in head.items()), "[parts]"]
    lines += [f"{json.dumps(ident)} = {toml_value(body)}" for ident, body in parts.items()]
    for step in steps:
        lines.append("[[step]]")
        lines += [f"{json.dumps(k)} = {toml_value(v)}" for k, v in step.items()]
    return "\n".join(lines) + "\n"


@st.composite
def worksheets(draw) -> str:
    """A worksheet from a template, with steps; sometimes broken at the data level."""
    parts = {ident: dict(body) for ident, body in draw(st.sampled_from(TEMPLATES)).items()}
    head: dict[str, object] = {"format": 1, "title": draw(TITLES)}
    if draw(st.booleans()):
        head["tolerance"] = draw(st.sampled_from(["digits", "1%", "0.5 %", "200%", "0%", "five"]))
    if draw(st.booleans()):
        head["phasors"] = draw(st.sampled_from(["peak", "rms", "avg"]))
    if draw(st.integers(0, 4)) == 0:
        head["frequency"] = draw(st.sampled_from(["1000 rad/s", "60 Hz", "0 Hz", "-1 Hz", "50 V"]))
    steps = []
    for _ in range(draw(st.integers(0, 3))):
        step: dict[str, object] = {"name": draw(STEP_NAMES), "claim": draw(CLAIMS)}
        if draw(st.booleans()):
            step["quantity"] = draw(QUANTITIES)
        if draw(st.booleans()):
            step["formula"] = draw(SHORT_FORMULAS)
        if draw(st.integers(0, 5)) == 0:
            step["tolerance"] = draw(st.sampled_from(["1%", "digits", "x"]))
        steps.append(step)
    for _ in range(draw(st.integers(0, 2))):
        where = draw(st.sampled_from(("part", "head", "step")))
        if where == "part":
            body = parts[draw(st.sampled_from(sorted(parts)))]
            action = draw(st.sampled_from(("set", "delete", "add")))
            key = draw(st.sampled_from(sorted(body))) if action != "add" else draw(PART_KEYS)
            if action == "delete":
                body.pop(key, None)
            else:
                body[key] = draw(JUNK)
        elif where == "head":
            head[
                draw(st.sampled_from(["format", "title", "reference", "frequency", "tolerance", "phasors", "titel"]))
            ] = draw(JUNK)
        elif steps:
            steps[0][draw(st.sampled_from(["name", "claim", "quantity", "formula", "tolerance", "claimed"]))] = draw(
                JUNK
            )
    return render(head, parts, steps)


@st.composite
def broken_text(draw) -> str:
    """A worksheet's text with lines dropped, doubled or cut, or characters changed."""
    lines = draw(worksheets()).splitlines(keepends=True)
    for _ in range(draw(st.integers(1, 3))):
        if not lines:
            break
        index = draw(st.integers(0, len(lines) - 1))
        action = draw(st.sampled_from(("drop", "double", "cut", "noise", "swap")))
        if action == "drop":
            del lines[index]
        elif action == "double":
            lines.insert(index, lines[index])
        elif action == "cut":
            lines[index] = lines[index][: draw(st.integers(0, len(lines[index])))]
        elif action == "noise":
            position = draw(st.integers(0, len(lines[index])))
            lines[index] = lines[index][:position] + draw(NOISE) + lines[index][position:]
        else:
            other = draw(st.integers(0, len(lines) - 1))
            lines[index], lines[other] = lines[other], lines[index]
    return "".join(lines)


# -- the properties -------------------------------------------------------------


@fuzz("random_text")
@given(
    texts=batch(
        st.text(max_size=40)
        | st.text(st.characters(codec="utf-8"), max_size=40)
        | st.text(st.characters(categories=["Cs"]) | st.sampled_from('ab1 [="\n'), max_size=12)
    )
)
def test_any_text_is_read_or_refused(texts):
    for text in texts:
        _any_text_is_read_or_refused(text)


def _any_text_is_read_or_refused(text):
    # Arbitrary Unicode, lone surrogates too, in every reader of user text.
    only_handcheck_errors(parse, text)
    only_handcheck_errors(evaluate_text, text, ENV)
    only_handcheck_errors(read_claim, text)
    only_handcheck_errors(read_tolerance, text)
    only_handcheck_errors(read_value, text, "ohm", "R1")
    only_handcheck_errors(read_frequency, text, "the frequency")
    # A worksheet hands a quantity over on one line (the loader reads line breaks as
    # spaces); handcheck.solve.quantities quotes its text as given.
    only_handcheck_errors(parse_quantity, " ".join(text.splitlines()))
    only_handcheck_errors(handcheck.loads, text, "<fuzz>")


@fuzz("formulas")
@given(texts=batch(FORMULAS | mutated(FORMULAS)))
def test_formulas_evaluate_or_refuse(texts):
    for text in texts:
        result = only_handcheck_errors(evaluate_text, text, ENV)
        if not isinstance(result, HandcheckError):
            assert isinstance(result, Value)
            assert not result.expr.has(sympy.nan, sympy.zoo, sympy.oo, -sympy.oo)


@st.composite
def exact_trees(draw, depth: int = 0) -> tuple[str, Fraction | None]:
    """A dimensionless formula in full parentheses and its value in fractions
    (None where it divides by zero)."""
    if depth >= 3 or draw(st.integers(0, 2)) == 0:
        value = draw(DECIMALS)
        literal = _decimal(value)
        if draw(st.booleans()):  # the same number in e-notation
            exponent = draw(st.integers(-3, 3))
            literal = _decimal(value / Fraction(10) ** exponent) + f"e{exponent}"
        return (f"({literal})" if value < 0 else literal), value
    op = draw(st.sampled_from(("+", "-", "*", "/", "^", "neg")))
    left_text, left = draw(exact_trees(depth + 1))
    if op == "neg":
        return f"-({left_text})", None if left is None else -left
    if op == "^":
        power = draw(st.integers(-3, 3))
        value = None if left is None or (left == 0 and power < 0) else left**power
        return f"({left_text})^{power}" if power >= 0 else f"({left_text})^({power})", value
    right_text, right = draw(exact_trees(depth + 1))
    text = f"({left_text}) {op} ({right_text})"
    if left is None or right is None:
        return text, None
    if op == "+":
        return text, left + right
    if op == "-":
        return text, left - right
    if op == "*":
        return text, left * right
    return text, None if right == 0 else left / right


@fuzz("exact_arithmetic")
@given(trees=batch(exact_trees()))
def test_exact_arithmetic_matches_fractions(trees):
    # The parser and evaluator against Python's own exact rational arithmetic.
    for text, expected in trees:
        if expected is None:
            with pytest.raises(ParseError, match="division by zero"):
                evaluate_text(text)
            continue
        value = evaluate_text(text)
        assert value.dim.dimensionless
        assert value.expr == sympy.Rational(expected.numerator, expected.denominator), text


@fuzz("claims")
@given(texts=batch(CLAIMS | mutated(CLAIMS)))
def test_claims_read_or_refuse(texts):
    for text in texts:
        only_handcheck_errors(read_claim, text)


@fuzz("exact_claims")
@given(
    cases=batch(
        st.tuples(
            DECIMALS,
            DECIMALS,
            st.sampled_from(sorted(CLAIM_UNITS)),
            st.sampled_from(("real", "rect", "polar")),
            st.integers(-179, 180),
        )
    )
)
def test_written_claims_read_exactly(cases):
    for case in cases:
        _written_claim_reads_exactly(*case)


def _written_claim_reads_exactly(real, imag, unit, form, angle):
    # A claim written from known numbers reads back as exactly those numbers.
    factor, si_unit = CLAIM_UNITS[unit]
    if form == "real":
        claim = read_claim(f"{_decimal(real)} {unit}")
        assert claim.value.expr == sympy.Rational(real * factor)
    elif form == "rect":
        sign = "-" if imag < 0 else "+"
        claim = read_claim(f"{_decimal(real)} {sign} {_decimal(abs(imag))}j {unit}")
        expected = sympy.Rational(real * factor) + sympy.I * sympy.Rational(imag * factor)
        assert sympy.expand(claim.value.expr - expected) == 0
    else:
        magnitude = abs(real)
        claim = read_claim(f"{_decimal(magnitude)} {unit} ∠ {angle} deg")
        expected = sympy.Rational(magnitude * factor) * sympy.exp(sympy.I * sympy.pi * angle / 180)
        assert claim.form == "polar"
        assert complex(sympy.N(claim.value.expr, 20)) == pytest.approx(
            complex(sympy.N(expected, 20)), rel=1e-15, abs=1e-300
        )
    assert claim.dim == dim_of(si_unit)


@fuzz("worksheet_text")
@given(texts=batch(worksheets() | broken_text()))
def test_worksheet_text_loads_or_refuses(texts):
    for text in texts:
        result = only_handcheck_errors(handcheck.loads, text, "<fuzz>")
        if isinstance(result, HandcheckError):
            assert result.file == "<fuzz>", f"the message does not name the file: {result}"


@fuzz("whole_worksheets")
@given(texts=batch(worksheets() | broken_text()))
def test_whole_worksheets_check_or_refuse(texts):
    for text in texts:
        result = only_handcheck_errors(handcheck.check_text, text, "<fuzz>")
        if isinstance(result, handcheck.Report):
            assert all(
                step.verdict in ("agrees", "arithmetic", "formula", "carried", "differs", "unit", "unchecked")
                for step in result.steps
            )


@st.composite
def valid_dividers(draw) -> tuple[str, Fraction]:
    """A divider with exact part values and the exact output voltage (Ohm's law)."""
    source = draw(st.integers(1, 400))
    r1, r2 = draw(st.integers(1, 10**6)), draw(st.integers(1, 10**6))
    prefix = draw(st.sampled_from([("ohm", 1), ("kohm", 1000), ("Mohm", 10**6)]))
    return (
        render(
            {"format": 1, "title": "divider", "tolerance": "0.0001%"},
            {
                "V1": {"voltage": f"{source} V", "nodes": ["in", "gnd"]},
                "R1": {"resistor": f"{r1} {prefix[0]}", "nodes": ["in", "out"]},
                "R2": {"resistor": f"{r2} {prefix[0]}", "nodes": ["out", "gnd"]},
            },
            [{"name": "Vout", "quantity": "voltage(out)", "formula": "V1*R2/(R1 + R2)", "claim": "@"}],
        ),
        Fraction(source * r2, r1 + r2),
    )


@fuzz("valid_worksheets")
@given(cases=batch(valid_dividers()))
def test_valid_worksheets_agree(cases):
    # V_out = V * R2 / (R1 + R2) (Ohm's law for two resistors in series), computed
    # here in fractions and written to 12 significant digits.
    for text, exact in cases:
        claim = f"{float(exact):.12g} V"
        report = handcheck.check_text(text.replace('"@"', json.dumps(claim)), "<fuzz>")
        (step,) = report.steps
        assert step.verdict == "agrees", (claim, step)
        assert report.ok


#: Texts beyond a limit; the second field says whether the claim reader meets the
#: limit too (a claim holds no powers or products, so it refuses those as claims first).
BEYOND_LIMITS = [
    ("1e999999", True),
    ("1e-999999 V", True),
    ("2^1000000", False),
    ("2^-1000000", False),
    ("(" * 70 + "1" + ")" * 70, True),
    ("(" * 1999 + "1", True),
    ("-" * 1999 + "1", True),
    ("sqrt(" * 61 + "1" + ")" * 61, True),
    ("1+" * 1500 + "1", True),
    ("1" * 999_999, True),
    ("(((2^64)^64)^64)", False),
    ("*".join(["1e400"] * 11), False),
]


@pytest.mark.parametrize(("text", "as_claim"), BEYOND_LIMITS, ids=[text[:24] for text, _ in BEYOND_LIMITS])
def test_limits_are_errors_not_hangs(text, as_claim):
    # Each limit answers at once (well under a second; 5 s allows for a loaded machine)
    # with a LimitError, where unlimited exact arithmetic or recursion would hang or crash.
    started = time.perf_counter()
    with pytest.raises(LimitError):
        evaluate_text(text)
    if as_claim:
        with pytest.raises(LimitError):
            read_claim(text)
    else:
        with pytest.raises(ParseError, match="a claim is a number with its unit"):
            read_claim(text)
    assert time.perf_counter() - started < 5


@pytest.mark.parametrize(
    ("formula", "claim"), [("exp(exp(exp(10)))", "1"), ("1e300*1e300*R1", "1 ohm"), ("exp(1e400)", "5")]
)
def test_a_value_beyond_floating_point_agrees_with_no_claim(formula, claim):
    # Found by fuzzing: a true value that overflows to infinity once agreed with any claim.
    # Such a value is now refused outright, naming the step.
    text = render(
        {"format": 1, "title": "overflow"},
        TEMPLATES[0],
        [{"name": "x", "formula": formula, "claim": claim}],
    )
    with pytest.raises(LimitError, match='step "x": a value is beyond the range of numbers handcheck compares'):
        handcheck.check_text(text, "<fuzz>")


def test_a_deep_root_is_an_error_not_a_hang():
    # Found by fuzzing: sympy's exact power of an integer searches for perfect powers up to
    # the exponent's denominator, so "w^2.2e-6 || w^2.2e-6" (a denominator of 5,000,000) ran
    # for minutes. Roots up to the 100th are accepted; 5 s allows for a loaded machine.
    started = time.perf_counter()
    with pytest.raises(LimitError, match="takes a root deeper than the 100th"):
        evaluate_text("w^2.2e-6 || w^2.2e-6", ENV)
    with pytest.raises(LimitError, match="takes a root deeper than the 100th"):
        evaluate_text("x^(1/97) * x^(1/89)", ENV)  # two roots within the limit, their product beyond
    assert evaluate_text("x^0.01", ENV).expr == sympy.Rational(3, 2) ** sympy.Rational(1, 100)
    assert time.perf_counter() - started < 5

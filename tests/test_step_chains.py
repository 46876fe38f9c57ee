"""A long chain of steps, each naming the one before, is checked exactly and in linear time.

The chain is the input impedance of an RC ladder built one section at a time,
``Zk = R1 + (Z(k-1) || jXc)`` at 1 kHz, so pi stays exact (issue 12, item 3; the
recurrence of a ladder's input impedance, section by section, is a textbook one:
Hayt, Kemmerly and Durbin, *Engineering Circuit Analysis*, 8th ed., ch. 10, series
and parallel impedances -- from memory). Each step's exact value holds the previous
step's twice, so as a sympy tree it doubled with every step: 30 steps ran past the
default time limit.

References: the step values come from the same recurrence in mpmath at 40 digits
(mpmath documentation, mpc arithmetic); the canonical form of a value of Q(i)(pi)
is compared with sympy's exact arithmetic (``sympy.simplify(a - b) == 0``) and with
mpmath.
"""

from __future__ import annotations

import mpmath
import numpy as np
import pytest
import sympy

from handcheck.pipeline import run_text
from handcheck.solve.certified import certify
from handcheck.worksheet.evaluate import evaluate_text
from handcheck.worksheet.pifraction import canonical, combine, from_expr, parts, to_expr

#: Part values of the chain (invented). With R1 much smaller than the reactance the
#: chain converges slowly, so its 4-digit values still change at step 30.
R1, C1, FREQUENCY = "1.2", "2.2e-6", 1000


#: Factors of the series resistance that take a chain out of the fractions of
#: polynomials in pi: the formula's text and the same number in mpmath.
FACTORS = {
    "": lambda: mpmath.mpf(1),
    "sqrt(2)": lambda: mpmath.sqrt(2),
    "cos(0.3)": lambda: mpmath.cos(mpmath.mpf("0.3")),
    "exp(-0.5 ms/(2.2 ms))": lambda: mpmath.exp(-mpmath.mpf("0.5") / mpmath.mpf("2.2")),
}


def reference_chain(steps: int, factor: str = "") -> list[complex]:
    """Xc, Z0, Z1, ..., Z(steps) of the chain, from mpmath at 40 digits.

    With a ``factor``, the series term of every step is ``R1*factor``.
    """
    with mpmath.workdps(40):
        r, c = mpmath.mpf(R1), mpmath.mpf(C1)
        g = FACTORS[factor]()
        xc = -1 / (2 * mpmath.pi * FREQUENCY * c)
        values = [mpmath.mpc(xc), mpmath.mpc(r)]
        z = mpmath.mpc(r)
        for _ in range(steps):
            z = r * g + z * (1j * xc) / (z + 1j * xc)
            values.append(z)
        return [complex(v) for v in values]


def _written(z: complex) -> str:
    sign = "-" if z.imag < 0 else "+"
    return f"{mpmath.nstr(z.real, 4)} {sign} {mpmath.nstr(abs(z.imag), 4)}j ohm"


def chain_worksheet(steps: int, wrong_at: int | None = None, factor: str = "") -> str:
    """The worksheet of a chain of ``steps`` steps after Xc and Z0.

    Every claim is the reference value to 4 digits, except step ``wrong_at``'s,
    claimed 3 % too large. With a ``factor``, each step's formula is
    ``R1*factor + (Z(k-1) || (j*Xc))``.
    """
    values = reference_chain(steps, factor)
    series = f"R1*{factor}" if factor else "R1"
    lines = [
        "[worksheet]",
        "format = 1",
        f'title = "RC ladder input impedance, {steps} sections built step by step (invented)"',
        'tolerance = "digits"',
        "[parts]",
        'V1 = { voltage = "1 V", frequency = "1 kHz", nodes = ["a", "gnd"] }',
        f'R1 = {{ resistor = "{R1} ohm", nodes = ["a", "b"] }}',
        'C1 = { capacitor = "2.2 uF", nodes = ["b", "gnd"] }',
        "[[step]]",
        'name = "Xc"',
        'quantity = "reactance(C1)"',
        'formula = "-1/(2*pi*f*C1)"',
        f'claim = "{mpmath.nstr(values[0].real, 5)} ohm"',
        "[[step]]",
        'name = "Z0"',
        'formula = "R1"',
        f'claim = "{R1} ohm"',
    ]
    for k in range(1, steps + 1):
        z = values[k + 1] * (1.03 if k == wrong_at else 1)
        lines += [
            "[[step]]",
            f'name = "Z{k}"',
            f'formula = "{series} + (Z{k - 1} || (j*Xc))"',
            f'claim = "{_written(z)}"',
        ]
    return "\n".join(lines) + "\n"


def test_thirty_steps_finish_with_every_verdict_and_value_right():
    # the time limit is the product's own guard: 30 s, a quarter of the default
    report = run_text(chain_worksheet(30), time_limit=30).report
    assert report is not None
    assert [s.verdict for s in report.steps] == ["agrees"] * 32
    expected = np.array([complex(*s.expected_si) for s in report.steps if s.expected_si is not None])
    np.testing.assert_allclose(expected, reference_chain(30), rtol=1e-12)
    last = report.steps[-1].exact
    assert last is not None and not last.atoms(sympy.Float)  # exact, no rounded number inside


def test_a_wrong_claim_in_a_long_chain_is_named():
    report = run_text(chain_worksheet(30, wrong_at=20), time_limit=30).report
    assert report is not None
    verdicts = {s.name: s.verdict for s in report.steps}
    assert report.first_divergence == "Z20"
    assert verdicts["Z20"] == "arithmetic"  # the claim does not follow from its own formula
    assert all(v == "agrees" for name, v in verdicts.items() if name != "Z20")


pi, j = sympy.pi, sympy.I
# values of Q(i)(pi) written in different ways, and their sympy forms
_VALUES = [
    (pi + 1) ** 2 / (pi + 1),
    (3 + 4 * j) / (pi - 2 * j) + sympy.Rational(1, 7),
    1 / (1 / (pi + j) + 1 / (2 - pi * j)),
    (pi**3 - j * pi) * (pi + sympy.Rational(5, 3)) ** -2,
]


@pytest.mark.parametrize("value", _VALUES)
def test_the_canonical_form_is_the_same_number(value):
    form = canonical(value, 10_000)
    assert form is not None
    assert sympy.simplify(form - value) == 0
    np.testing.assert_allclose(complex(form.evalf(30)), complex(value.evalf(30)), rtol=1e-14)


def test_the_canonical_form_is_unique():
    # two ways to the same number give one form (the form is reduced: monic denominator)
    assert to_expr(from_expr((pi + 1) ** 2 / (pi + 1))) == to_expr(from_expr(pi + 1))
    a = 1 / (1 / (pi + j) + 1 / (2 - pi * j))
    b = (pi + j) * (2 - pi * j) / (pi + j + 2 - pi * j)
    assert to_expr(from_expr(a)) == to_expr(from_expr(b))


def test_operations_in_canonical_form_agree_with_sympy():
    x, y = _VALUES[1], _VALUES[2]
    for op, exact in (("+", x + y), ("-", x - y), ("*", x * y), ("/", x / y), ("||", x * y / (x + y))):
        out = combine(op, x, y, 10_000)
        assert out is not None and sympy.simplify(out - exact) == 0, op
    re, im, size = parts(x)  # type: ignore[misc]
    assert sympy.simplify(re + j * im - x) == 0 and sympy.simplify(size - re**2 - im**2) == 0


def test_values_outside_the_field_are_left_to_sympy():
    assert from_expr(sympy.sqrt(2) + pi) is None
    assert from_expr(sympy.exp(pi)) is None
    assert combine("/", pi, sympy.Integer(0), 64) is None  # no value: sympy reports it
    assert canonical((pi + 1) ** 40, 8) is None  # coefficients wider than allowed


def test_a_step_of_the_chain_stays_exact_in_the_formula_language():
    # the evaluator itself: 40 nested parallel combinations of pi and j
    env = {}
    value = evaluate_text("pi")
    for _ in range(40):
        env = {"z": value}
        value = evaluate_text("1 + (z || (j*pi))", env)
    with mpmath.workdps(40):
        z = mpmath.mpc(mpmath.pi)
        for _ in range(40):
            z = 1 + z * (1j * mpmath.pi) / (z + 1j * mpmath.pi)
        reference = complex(z)
    assert from_expr(value.expr) is not None  # still in canonical form (degree 80 in pi)
    certified = certify(value.expr)  # ball arithmetic; sympy's evalf of this form is slow
    assert certified is not None and certified.bound < 1e-14
    np.testing.assert_allclose(certified.value, reference, rtol=1e-14)
    size = certify(evaluate_text("abs(z)", {"z": value}).expr)
    assert size is not None
    np.testing.assert_allclose(size.value, abs(reference), rtol=1e-14)


def test_the_record_shows_a_long_chain_value_by_its_decimals():
    # the exact form of step 30 is far longer than the record typesets; its decimal
    # text is the certified value (reference: the mpmath recurrence above)
    from handcheck.record.formula import exact_display

    report = run_text(chain_worksheet(30), time_limit=30).report
    assert report is not None and report.steps[-1].exact is not None
    shown, decimal = exact_display(report.steps[-1].exact)
    assert shown is None
    real, imag = decimal.removesuffix("j").split(" - ")
    np.testing.assert_allclose(complex(float(real), -float(imag)), reference_chain(30)[-1], rtol=1e-11)

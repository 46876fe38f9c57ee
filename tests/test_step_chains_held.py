"""Long chains of steps whose values are no fractions of polynomials in pi stay linear.

The chain of tests/test_step_chains.py with the series term ``R1*sqrt(2)``,
``R1*cos(0.3)`` or ``R1*exp(-0.5 ms/(2.2 ms))`` (issue 12, item 2): the values leave
Q(i)(pi), so the canonical form does not hold them, and as sympy trees they doubled
with every step (20 steps 15.6 s CPU, 30 steps past a 120 s time limit). The
evaluator holds such a value by name, its exact expression its definition, and
evaluates it by ball arithmetic (:class:`handcheck.worksheet.certified.Held`).

References: the step values come from the same recurrence evaluated independently
in mpmath at 40 digits (mpmath documentation, mpf/mpc arithmetic and its sqrt, cos
and exp); the recurrence of a ladder's input impedance section by section is a
textbook one (Hayt, Kemmerly and Durbin, *Engineering Circuit Analysis*, 8th ed.,
ch. 10 -- from memory).
"""

from __future__ import annotations

import json
import pickle

import mpmath
import numpy as np
import pytest
import sympy

from handcheck.errors import LimitError
from handcheck.pipeline import run_text
from handcheck.record.formula import exact_display
from handcheck.record.jsonout import report_dict
from handcheck.solve.certified import certify
from handcheck.worksheet.certified import Held
from handcheck.worksheet.evaluate import distinct_nodes
from tests.test_step_chains import chain_worksheet, reference_chain

FACTORS = ["sqrt(2)", "cos(0.3)", "exp(-0.5 ms/(2.2 ms))"]


def _inside(expr: sympy.Basic) -> set[sympy.Basic]:
    """Every distinct subexpression of ``expr`` and of the definitions of its held numbers."""
    seen: set[sympy.Basic] = set()
    stack = [expr]
    while stack:
        for node in distinct_nodes(stack.pop()):
            if node not in seen:
                seen.add(node)
                if isinstance(node, Held):
                    stack.append(node.definition)
    return seen


@pytest.mark.parametrize("factor", FACTORS)
def test_thirty_steps_outside_pi_fractions_finish_with_every_value_right(factor):
    # the time limit is the product's own guard: 30 s, a quarter of the default
    report = run_text(chain_worksheet(30, factor=factor), time_limit=30).report
    assert report is not None
    assert [s.verdict for s in report.steps] == ["agrees"] * 32
    expected = np.array([complex(*s.expected_si) for s in report.steps if s.expected_si is not None])
    np.testing.assert_allclose(expected, reference_chain(30, factor), rtol=1e-12)
    last = report.steps[-1].exact
    inside = _inside(last)
    assert any(isinstance(n, Held) for n in inside)  # held by name: no canonical form of pi
    assert not any(isinstance(n, sympy.Float) for n in inside)  # exact, no rounded number inside
    certified = certify(last)
    assert certified is not None and certified.bound < 1e-13 * abs(certified.value)


def test_a_wrong_claim_in_a_long_chain_outside_pi_fractions_is_named():
    report = run_text(chain_worksheet(30, wrong_at=20, factor="sqrt(2)"), time_limit=30).report
    assert report is not None
    verdicts = {s.name: s.verdict for s in report.steps}
    assert report.first_divergence == "Z20"
    assert verdicts["Z20"] == "arithmetic"  # the claim does not follow from its own formula
    assert all(v == "agrees" for name, v in verdicts.items() if name != "Z20")


def test_the_json_and_the_record_of_a_held_value_are_its_certified_decimals():
    report = run_text(chain_worksheet(30, factor="cos(0.3)"), time_limit=30).report
    assert report is not None
    data = json.loads(json.dumps(report_dict(report, "test")))
    last = data["steps"][-1]
    reference = reference_chain(30, "cos(0.3)")[-1]
    np.testing.assert_allclose(complex(*last["expected_si"]), reference, rtol=1e-12)
    shown, decimal = exact_display(report.steps[-1].exact)
    real, imag = decimal.removesuffix("j").split(" - ")
    np.testing.assert_allclose(complex(float(real), -float(imag)), reference, rtol=1e-11)
    held = next(n for n in distinct_nodes(report.steps[-1].exact) if isinstance(n, Held))
    text = sympy.sstr(held)  # a held number prints as its certified decimals, marked as cut
    assert shown is not None and text in sympy.sstr(shown)  # short: the last step's own terms and one held
    real, imag = text.strip("()").replace("...", "").removesuffix("j").split(" - ")
    np.testing.assert_allclose(complex(float(real), -float(imag)), certify(held).value, rtol=1e-11)


def test_a_held_value_survives_pickling():
    # a worker process of a batch sends its report back pickled
    report = run_text(chain_worksheet(12, factor="sqrt(2)"), time_limit=30).report
    assert report is not None
    last = report.steps[-1].exact
    again = pickle.loads(pickle.dumps(last))
    assert again == last
    assert certify(again) == certify(last)


def test_a_held_value_that_cannot_be_certified_is_never_used():
    # exactly 0 written as a difference: no ball around it is narrow against its size
    zero = Held(sympy.Add(sympy.sqrt(2), -sympy.sqrt(2), evaluate=False))
    assert certify(zero) is None
    with pytest.raises(LimitError, match="cannot be certified"):
        sympy.N(zero, 15)
    assert zero.is_zero is None  # not known: sympy's own rounding decides nothing


def test_a_held_value_answers_sympy_only_what_its_ball_proves():
    value = Held(sympy.sqrt(2) + sympy.I * sympy.pi)
    assert value.is_zero is False and value.is_extended_real is False
    assert value.args == ()  # sympy's tree walks stop at it
    np.testing.assert_allclose(complex(sympy.N(value, 30)), complex(2**0.5, np.pi), rtol=1e-15)
    size = certify(sympy.Abs(value))
    assert size is not None
    np.testing.assert_allclose(size.value, np.hypot(2**0.5, np.pi), rtol=1e-15)


def test_a_large_expression_in_symbols_is_not_held():
    # a source function of t, a part kept as a symbol: held numbers are numbers only
    from handcheck.worksheet.evaluate import Value, evaluate_text

    x = sympy.Symbol("x")
    text = " + ".join(f"x^{k}*sqrt({k + 1})" for k in range(1, 25))
    value = evaluate_text(text, {"x": Value(x)})
    assert not any(isinstance(n, Held) for n in distinct_nodes(value.expr))
    expected = sum(x**k * sympy.sqrt(k + 1) for k in range(1, 25))
    assert sympy.expand(value.expr - expected) == 0
    number = evaluate_text(text.replace("x", "cos(0.3)"))
    assert any(isinstance(n, Held) for n in distinct_nodes(number.expr))
    np.testing.assert_allclose(complex(sympy.N(number.expr, 20)), complex(expected.subs(x, sympy.cos(0.3))), rtol=1e-14)


def test_currents_of_an_rms_source_over_a_long_chain_are_right():
    # a source written in rms is sqrt(2) times that in peak phasors: I_k = V1/Z_k divides
    # sqrt(2) by a canonical form of pi (none of the two has the other's form); the
    # operand is held by name for sympy's division (reference: mpmath, 40 digits)
    text = chain_worksheet(30).replace('voltage = "1 V"', 'voltage = "230 V rms"')
    impedances = reference_chain(30)[2:]
    currents = [230 * 2**0.5 / z for z in impedances]
    for k, current in enumerate(currents, start=1):
        sign = "-" if current.imag < 0 else "+"
        claim = f"{current.real:.4g} {sign} {abs(current.imag):.4g}j A"
        text += f'[[step]]\nname = "I{k}"\nformula = "V1/Z{k}"\nclaim = "{claim}"\n'
    report = run_text(text, time_limit=30).report
    assert report is not None
    assert all(s.verdict == "agrees" for s in report.steps)
    found = {s.name: complex(*s.expected_si) for s in report.steps if s.expected_si is not None}
    with mpmath.workdps(40):
        peak = 230 * mpmath.sqrt(2)
        expected = [complex(peak / mpmath.mpc(z)) for z in impedances]
    np.testing.assert_allclose([found[f"I{k}"] for k in range(1, 31)], expected, rtol=1e-12)

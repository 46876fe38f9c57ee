"""The formula audit of a worksheet: one :class:`AuditFinding` per ``[[formula]]``.

Order of work for each formula: the exact truth with the audited parts as symbols
(:mod:`handcheck.audit.truth`), the supplier's expression as an exact value, the
unit check, equivalence and the conditions under which the two agree
(:mod:`handcheck.audit.compare`), then the errors (:mod:`handcheck.audit.errors`).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from fractions import Fraction
from typing import Any

import sympy

from handcheck.audit.compare import formula_value, holds_when, likely_mistakes, quantity_dim
from handcheck.audit.display import true_expression
from handcheck.audit.errors import ErrorModel, Ranges, lowest_root_exact, monte_carlo, nominal_error, worst_case
from handcheck.audit.findings import AuditFinding
from handcheck.audit.network import SymbolicCircuit, gbw_part, symbol_kinds, symbol_unit, symbolic_circuit
from handcheck.audit.ring import AuditError, RatFunc
from handcheck.audit.rootlimits import root_limits
from handcheck.audit.sampling import sympy_values
from handcheck.audit.truth import Truth, coefficients_in_s, magnitude_squared, true_value
from handcheck.circuit.model import Circuit
from handcheck.errors import HandcheckError
from handcheck.verify.findings import Diagnosis
from handcheck.worksheet.audit import AUDIT_QUANTITIES, AuditSheet, FormulaSpec
from handcheck.worksheet.model import Worksheet

__all__ = ["audit"]


def _symbols(sheet: AuditSheet, worksheet: Worksheet, circuit: Circuit) -> tuple[str, ...]:
    symbols = sheet.symbols if sheet.symbols is not None else tuple(v.part for v in sheet.variations)
    if not symbols:
        raise AuditError(
            'the audit keeps no part as a symbol: list them in [audit] symbols = [...] or give parts a tolerance = "5%" or a range',
            file=worksheet.path,
            line=sheet.line,
        )
    for ident in symbols:
        if gbw_part(circuit, ident) is not None:
            continue
        part = circuit.part(ident)
        if part.kind == "opamp" and part.value == 0:
            raise AuditError(
                f'op-amp "{ident}" is ideal and cannot be kept as a symbol; give it a finite gain, like opamp = "200000"',
                file=worksheet.path,
                line=part.line,
            )
    return tuple(symbols)


def _ranges(sheet: AuditSheet, circuit: Circuit, symbols: tuple[str, ...]) -> tuple[Ranges, tuple[str, ...]]:
    nominal, box, notes = [], [], []
    for ident in symbols:
        exact = _nominal(circuit, ident)
        value = Fraction(int(exact.p), int(exact.q))
        nominal.append(value)
        variation = sheet.variation(ident)
        if variation is None:
            box.append((value, value))
            notes.append(f"{ident} has no tolerance or range: it is held at its nominal value for the errors")
        elif variation.tolerance is not None:
            box.append((value * (1 - variation.tolerance), value * (1 + variation.tolerance)))
        else:
            low, high = (Fraction(int(v.p), int(v.q)) for v in (variation.low, variation.high))  # type: ignore[union-attr]
            box.append((low, high))
            if not low <= value <= high:
                notes.append(f"the nominal value of {ident} lies outside its range")
    return Ranges(symbols, tuple(nominal), tuple(box)), tuple(notes)


def _nominal(circuit: Circuit, ident: str) -> sympy.Rational:
    """A symbol's nominal value: the part's value, or an op-amp's gbw in Hz."""
    amp = gbw_part(circuit, ident)
    if amp is None:
        return circuit.part(ident).value  # type: ignore[return-value]
    assert amp.gbw is not None
    hz = sympy.nsimplify(amp.gbw / (2 * sympy.pi))
    if not hz.is_Rational:
        raise AuditError(
            f"the gbw of op-amp {amp.id} is written in rad/s; to keep it as the symbol {ident} (in Hz) write it in "
            f'Hz, like gbw = "1 MHz"',
            file=circuit.path,
            line=amp.line,
        )
    return hz


def _at_frequency(sc: SymbolicCircuit, ratio: RatFunc) -> tuple[RatFunc, str]:
    """A ratio of functions of s at the analysis frequency: itself at DC, else |.|^2 at s = jw."""
    ring = sc.ring
    omega = sc.circuit.omega
    if omega == 0:
        return ratio.substitute({"s": ring.constant(0)}), "ratio"
    w = ring.fraction(omega)
    u = w * w
    return magnitude_squared(ring, ratio.num, u) / magnitude_squared(ring, ratio.den, u), "sqrt"


def _nominal_constant(ring_ratio: RatFunc, ranges: Ranges) -> RatFunc:
    """The exact value of a rational function of the parts at their nominal values, as a constant."""
    expr = ring_ratio.to_sympy().subs(
        {
            sympy.Symbol(n, positive=True): sympy.Rational(v.numerator, v.denominator)
            for n, v in zip(ranges.names, ranges.nominal, strict=True)
        }
    )
    return ring_ratio.ring.fraction(sympy.nsimplify(expr) if expr.has(sympy.Float) else expr)


def _spread_model(sc: SymbolicCircuit, truth: Truth, ranges: Ranges) -> ErrorModel:
    ring = sc.ring
    if truth.form == "root":
        nominal_u = _nominal_root(sc, truth, ranges)
        # the nominal root is a double from a certified ball: the proved bounds are widened by the rounding
        fixed = ring.fraction(sympy.Rational(*Fraction(nominal_u).as_integer_ratio()))
        return ErrorModel(
            "root", ring, poly=truth.poly, target=lambda columns: nominal_u, u_formula=fixed, u_slack=1e-12, spread=True
        )
    assert truth.value is not None
    value, kind = (truth.value, "sqrt") if truth.form == "square" else (truth.value, "ratio")
    if truth.in_s:
        value, kind = _at_frequency(sc, truth.value)
    constant = _nominal_constant(value, ranges)
    if constant.is_zero:
        raise AuditError("the quantity is 0 at the nominal values, so its relative spread is not defined")
    return ErrorModel(kind, ring, ratio=value / constant)  # type: ignore[arg-type]


def _nominal_root(sc: SymbolicCircuit, truth: Truth, ranges: Ranges) -> float:
    return lowest_root_exact(truth.poly, ranges.names, sc.ring.names, ranges.nominal)


def _finish(
    finding: dict[str, Any],
    model: ErrorModel | None,
    sheet: AuditSheet,
    ranges: Ranges,
    check: Callable[[], None] | None,
    target: float | None = None,
) -> AuditFinding:
    """Add the nominal error, the worst case and the Monte Carlo summary."""
    if model is not None:
        finding["nominal_error"] = 0.0 if finding["verdict"] == "spread" else nominal_error(model, ranges, target)
        if ranges.varies:
            finding["worst_case"] = worst_case(model, ranges, check)
            if check is not None:
                check()
            finding["monte_carlo"] = monte_carlo(model, ranges, sheet.samples, sheet.seed, sheet.distribution)
    return AuditFinding(**finding)


def _closed_form(sc: SymbolicCircuit, truth: Truth, value: sympy.Expr, symbols: tuple[str, ...]) -> dict[str, Any]:
    """Equivalence, conditions and mistakes for a truth with a closed form; the error model."""
    ring = sc.ring
    squared = truth.form == "square"
    formula = ring.fraction(value**2 if squared else value)
    assert truth.value is not None
    ratio = formula / truth.value
    d = ratio - ring.fraction(sympy.Integer(1))
    kinds = symbol_kinds(sc.circuit, symbols)
    equivalent = d.is_zero
    point, kind = _at_frequency(sc, ratio) if truth.in_s else (ratio, "sqrt" if squared else "ratio")
    fast = ratio if truth.in_s and sc.circuit.omega != 0 else None
    model = ErrorModel(kind, ring, ratio=point, in_s=fast, s_value=1j * float(sc.circuit.omega))  # type: ignore[arg-type]
    result: dict[str, Any] = {"model": model, "equivalent": equivalent, "holds_when": holds_when(d, symbols, kinds)}
    result["diagnosis"] = () if equivalent else likely_mistakes(ratio, truth.unit, squared)
    result["method"] = "exact identity of rational functions" + (" (of the squares)" if squared else "")
    return result


def _root_form(
    sc: SymbolicCircuit, truth: Truth, value: sympy.Expr, symbols: tuple[str, ...], ranges: Ranges
) -> dict[str, Any]:
    """A frequency with no closed form: does the formula solve the defining polynomial identically?"""
    ring = sc.ring
    u_formula = (2 * sympy.pi * value) ** 2
    nominal_target = float(
        u_formula.subs(
            {
                sympy.Symbol(n, positive=True): sympy.Rational(v.numerator, v.denominator)
                for n, v in zip(ranges.names, ranges.nominal, strict=True)
            }
        ).evalf(30)
    )
    model = ErrorModel("root", ring, poly=truth.poly, target=lambda columns: sympy_values(u_formula, columns))
    result: dict[str, Any] = {"model": model, "target": nominal_target, "holds_when": ()}
    try:
        u = ring.fraction(u_formula)
    except AuditError:
        result["equivalent"] = None  # decided numerically below
        result["method"] = "numerical comparison at the nominal values and over the ranges (not a proof)"
        return result
    result["model"] = dataclasses.replace(model, u_formula=u)
    residual = ring.fraction(sympy.Integer(0))
    for k, coefficient in enumerate(coefficients_in_s(ring, truth.poly)):
        residual = residual + RatFunc.make(ring, coefficient, ring.constant(1)) * u.power(k)
    kinds = symbol_kinds(sc.circuit, symbols)
    result["equivalent"] = residual.is_zero
    limits = root_limits(ring, truth.poly, coefficients_in_s(ring, truth.poly), u, ranges.names, ranges.nominal)
    result["holds_when"] = limits + holds_when(residual, symbols, kinds, limits=False)
    result["method"] = (
        "exact: whether the formula solves the defining polynomial in w^2 identically; lowest positive root certified at the nominal values"
    )
    return result


def _unit_finding(base: dict[str, Any], sc: SymbolicCircuit, truth: Truth, value: Any, expected: Any) -> AuditFinding:
    """The formula is in another unit; an impedance taken for an admittance (or back) is named."""
    diagnosis: tuple[Diagnosis, ...] = ()
    if truth.form == "exact" and value.dim == expected**-1 and truth.value is not None:
        try:
            product = sc.ring.fraction(value.expr) * truth.value
        except AuditError:
            product = None
        if product is not None and (product - sc.ring.fraction(sympy.Integer(1))).is_zero:
            diagnosis = (Diagnosis("impedance-as-admittance", "the formula is the reciprocal of the quantity"),)
    notes = (
        *base["notes"],
        f"the formula is in {value.dim or 'no unit'}, but the quantity is in {expected or 'no unit'}",
    )
    return AuditFinding(**{**base, "notes": notes}, verdict="unit", diagnosis=diagnosis)


def _audit_formula(
    sc: SymbolicCircuit,
    formula: FormulaSpec,
    sheet: AuditSheet,
    ranges: Ranges,
    notes: tuple[str, ...],
    check: Callable[[], None] | None,
) -> AuditFinding:
    truth = true_value(sc, formula.quantity)
    base: dict[str, Any] = {
        "name": formula.name,
        "quantity": formula.quantity.text,
        "true_expression": true_expression(sc.ring, truth),
        "expression": formula.expression_text,
        "reference": formula.reference,
        "unit": AUDIT_QUANTITIES.get(formula.quantity.name, ""),
        "line": formula.line,
        "notes": notes,
        "error_frequency": float(sc.circuit.frequency) if truth.in_s else None,
        "units": tuple((n, symbol_unit(sc.circuit, n)) for n in ranges.names),
    }
    if formula.expression is None:
        base["method"] = "spread of the quantity over the tolerances"
        return _finish({**base, "verdict": "spread"}, _spread_model(sc, truth, ranges), sheet, ranges, check)
    value = formula_value(formula, sc.circuit, ranges.names)
    expected = quantity_dim(formula.quantity)
    if value.dim != expected:
        return _unit_finding(base, sc, truth, value, expected)
    if truth.form == "root":
        result = _root_form(sc, truth, value.expr, ranges.names, ranges)
    else:
        result = _closed_form(sc, truth, value.expr, ranges.names)
    partial = _finish(
        {**base, "verdict": "differs", "holds_when": result["holds_when"], "method": result["method"]},
        result["model"],
        sheet,
        ranges,
        check,
        result.get("target"),
    )
    equivalent = result["equivalent"]
    if equivalent is None:  # numerical: every error found is below the comparison's resolution
        errors = [partial.nominal_error or 0.0]
        if partial.worst_case is not None:
            errors += [partial.worst_case.low, partial.worst_case.high]
        equivalent = max(abs(e) for e in errors) < 1e-9
    elif equivalent and truth.form == "root" and abs(partial.nominal_error or 0.0) > 1e-12:
        equivalent = False  # another root of the polynomial, not the lowest
    notes = partial.notes
    if truth.form == "square" and _negative_at_nominal(value.expr, ranges):
        equivalent = False  # the squares agree, the sign does not
        notes = (*notes, "the formula is negative at the nominal values, where the quantity is positive")
    diagnosis = tuple(Diagnosis(code, detail) for code, detail in result.get("diagnosis", ()))
    return dataclasses.replace(
        partial,
        verdict="equivalent" if equivalent else "differs",
        holds_when=() if equivalent else partial.holds_when,
        diagnosis=diagnosis,
        notes=notes,
    )


def _negative_at_nominal(expr: sympy.Expr, ranges: Ranges) -> bool:
    nominal = {
        sympy.Symbol(n, positive=True): sympy.Rational(v.numerator, v.denominator)
        for n, v in zip(ranges.names, ranges.nominal, strict=True)
    }
    value = sympy.N(expr.subs(nominal), 30)
    return bool(value.is_real and value < 0)


def audit(worksheet: Worksheet, circuit: Circuit, budget: Any = None) -> tuple[AuditFinding, ...]:
    """Audit every ``[[formula]]`` of the worksheet against its circuit.

    Parameters
    ----------
    worksheet
        The loaded worksheet (its ``audit`` holds the formulas, parsed).
    circuit
        The worksheet's exact circuit (nominal values).
    budget
        An object with a ``check()`` method that raises when the time budget is spent
        (called at safe points between exact steps), or None.

    Returns
    -------
    tuple of AuditFinding
        One per formula, in the worksheet's order (empty without formulas).

    Raises
    ------
    HandcheckError
        For a formula that cannot be audited, with the file, the line and the formula's name.
    """
    sheet = worksheet.audit
    if sheet is None or not sheet.formulas:
        return ()
    check = (lambda: budget.check("the formula audit")) if budget is not None else None
    symbols = _symbols(sheet, worksheet, circuit)
    ranges, notes = _ranges(sheet, circuit, symbols)
    sc = symbolic_circuit(circuit, symbols, check)
    findings = []
    for formula in sheet.formulas:
        try:
            findings.append(_audit_formula(sc, formula, sheet, ranges, notes, check))
        except HandcheckError as exc:
            if not exc.message.startswith("formula "):
                exc.message = f'formula "{formula.name}": {exc.message}'
                exc.args = (exc.message,)
            raise exc.located(worksheet.path, formula.line) from None
    return tuple(findings)

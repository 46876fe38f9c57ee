"""A supplier's formula against the exact truth: equivalence, where it holds, likely mistakes.

Equivalence is an identity of rational functions in s, the audited parts and pi
(pi is transcendental, so it may be treated as one more indeterminate): the formula
itself for network functions, impedances, gains and time constants; its square for
the second-order figures and for frequencies of degree one in w^2 (no square root
enters the comparison); for a frequency with no closed form, whether the formula
solves the defining polynomial identically.

Where it holds: the relative difference d = F/T - 1 (or F^2/T^2 - 1) is a rational
function; as a part x goes to 0 it vanishes when the lowest power of x in d's
numerator is above the lowest in its denominator; as x grows without bound, when the
numerator's degree in x is below the denominator's; for a function of s, both at s
held general and at s = 0 (the condition holds at every frequency, DC included); two
like parts equal when d is
identically zero after putting one for the other (leading terms of exact rational
functions; no general limit routine).
"""

from __future__ import annotations

import itertools
from collections.abc import Mapping
from dataclasses import dataclass
from fractions import Fraction

import sympy

from handcheck.audit.ring import AuditError, RatFunc, Ring
from handcheck.circuit.kinds import KINDS
from handcheck.circuit.model import Circuit
from handcheck.worksheet.audit import AuditQuantity, FormulaSpec, gbw_symbol
from handcheck.worksheet.evaluate import Value, evaluate
from handcheck.worksheet.units import DIMENSIONLESS, Dim, dim_of

__all__ = ["formula_value", "holds_when", "likely_mistakes", "quantity_dim"]

_HZ = Dim(time=Fraction(-1))
_SIGNAL = {"voltage": dim_of("V"), "current": dim_of("A")}


def quantity_dim(quantity: AuditQuantity | str) -> Dim:
    """The dimension of an audited quantity (a ratio of signals for a network function)."""
    if isinstance(quantity, str):
        raise AuditError(f'"{quantity}" is not a quantity')
    name = quantity.name
    if name in _SIGNAL:
        return _SIGNAL[name]
    if name in ("network_function", "transfer"):
        if len(quantity.args) != 2:
            raise AuditError(f"{name}() takes two signals, like {name}(voltage(out), voltage(in))")
        return quantity_dim(quantity.args[0]) / quantity_dim(quantity.args[1])
    if name in ("dc_gain", "hf_gain"):
        if len(quantity.args) != 1:
            raise AuditError(f"{name}() takes one network function")
        return quantity_dim(quantity.args[0])
    fixed = {
        "impedance": dim_of("ohm"),
        "admittance": dim_of("S"),
        "natural_frequency": _HZ,
        "resonant_frequency": _HZ,
        "cutoff_frequency": _HZ,
        "time_constant": dim_of("s"),
    }
    return fixed.get(name, DIMENSIONLESS)


def formula_value(formula: FormulaSpec, circuit: Circuit, symbols: tuple[str, ...]) -> Value:
    """The supplier's expression as an exact sympy value with its dimension.

    Audited parts are positive symbols, the others their exact values; ``s`` is the
    Laplace variable, ``w`` and ``f`` the analysis frequency; a source's id is its phasor.
    """
    env: dict[str, Value] = {
        "s": Value(sympy.Symbol("s"), _HZ),
        "w": Value(circuit.omega, _HZ),
        "f": Value(circuit.frequency, _HZ),
    }
    for part in circuit.parts:
        unit = KINDS[part.kind].unit if part.kind in KINDS else ""
        dim = dim_of(unit) if unit else DIMENSIONLESS
        if part.source is not None:
            env[part.id] = Value(part.source.phasor(circuit.phasors), dim)
        elif part.id in symbols:
            env[part.id] = Value(sympy.Symbol(part.id, positive=True), dim)
        elif part.kind not in ("switch",):
            env[part.id] = Value(part.value, dim)
        if part.kind == "opamp" and part.gbw is not None and not circuit.has_part(gbw_symbol(part.id)):
            name = gbw_symbol(part.id)  # the gbw in Hz, as "1 MHz" reads in a formula
            hz = sympy.Symbol(name, positive=True) if name in symbols else part.gbw / (2 * sympy.pi)
            env[name] = Value(hz, _HZ)
    assert formula.expression is not None and formula.expression_text is not None
    return evaluate(formula.expression, env, formula.expression_text)


def _lowest(poly: object, index: int) -> int:
    return min((int(m[index]) for m in poly.monoms()), default=0)  # type: ignore[attr-defined]


def _leading_vanishes(d: RatFunc, i: int, towards_zero: bool) -> bool:
    if d.is_zero:
        return True
    if towards_zero:
        return _lowest(d.num, i) > _lowest(d.den, i)
    return d.num.degrees()[i] < d.den.degrees()[i]


def _vanishes_with(d: RatFunc, name: str, towards_zero: bool) -> bool:
    """Whether d -> 0 as the part goes to 0 (or infinity), at every frequency.

    The leading terms in the part decide it for s held general; a function of s is
    also tested at s = 0 on its own, because a leading coefficient with a factor s
    vanishes at DC (an RC low-pass's gain tends to its formula as C -> oo at every
    frequency except DC, where a load's divider error stays).
    """
    i = d.ring.names.index(name)
    if not _leading_vanishes(d, i, towards_zero):
        return False
    if "s" not in d.free():
        return True
    try:
        at_dc = d.substitute({"s": d.ring.constant(0)})
    except AuditError:  # the quantity has no value at DC: nothing more to test
        return True
    return _leading_vanishes(at_dc, i, towards_zero)


def _vanishes_equal(d: RatFunc, pairs: tuple[tuple[str, str], ...]) -> bool:
    ring = d.ring
    try:
        substituted = d.substitute({b: ring.gen(a) for a, b in pairs})
    except AuditError:  # the condition makes the expression undefined
        return False
    return substituted.is_zero


def holds_when(d: RatFunc, symbols: tuple[str, ...], kinds: Mapping[str, str], limits: bool = True) -> tuple[str, ...]:
    """The conditions under which the relative difference ``d`` vanishes.

    Parameters
    ----------
    d
        F/T - 1 (or the same of the squares), a rational function.
    symbols
        The audited parts.
    kinds
        Each part's kind: only like parts are set equal.
    limits
        Whether to try each part going to 0 and to infinity.

    Returns
    -------
    tuple of str
        ``"R2 -> oo"``, ``"R1 -> 0"``, ``"C1 = C2"``, ``"R1 = R2 and C1 = C2"``.
    """
    if d.is_zero:
        return ()
    found = []
    used = d.free()
    for name in symbols:
        if limits and name in used:
            if _vanishes_with(d, name, towards_zero=True):
                found.append(f"{name} -> 0")
            if _vanishes_with(d, name, towards_zero=False):
                found.append(f"{name} -> oo")
    pairs = [(a, b) for a, b in itertools.combinations(symbols, 2) if kinds.get(a) == kinds.get(b)]
    single = [p for p in pairs if _vanishes_equal(d, (p,))]
    found += [f"{a} = {b}" for a, b in single]
    rest = [p for p in pairs if p not in single]
    for first, second in itertools.combinations(rest, 2):
        if len({*first, *second}) == 4 and _vanishes_equal(d, (first, second)):
            found.append(f"{first[0]} = {first[1]} and {second[0]} = {second[1]}")
    return tuple(found)


@dataclass(frozen=True)
class _Candidate:
    code: str
    factor: sympy.Expr
    detail: str


def _candidates(unit: str, squared: bool) -> list[_Candidate]:
    two_pi = 2 * sympy.pi
    found = []
    if unit == "rad/s":
        found.append(
            _Candidate(
                "hertz-as-angular",
                1 / two_pi,
                "the formula gives hertz (cycles per second) where the quantity is in rad/s: it lacks a factor 2*pi",
            )
        )
    if unit == "Hz":
        found.append(
            _Candidate(
                "angular-as-hertz", two_pi, "the formula gives rad/s where the quantity is in hertz: divide it by 2*pi"
            )
        )
    for k in (-3, -2, -1, 1, 2, 3):
        found.append(
            _Candidate(
                "prefix",
                sympy.Integer(10) ** (3 * k),
                f"the formula is off by a factor of 10^{3 * k}: an SI prefix slipped",
            )
        )
    if not squared:
        found.append(_Candidate("phase-sign", sympy.Integer(-1), "the formula has the opposite sign of the quantity"))
    return found


def likely_mistakes(ratio: RatFunc, unit: str, squared: bool) -> tuple[tuple[str, str], ...]:
    """Catalogued mistakes that turn the true expression into the formula exactly.

    ``ratio`` is F/T (or F^2/T^2 when ``squared``); a mistake is reported when it is
    identically the mistake's factor (2*pi for hertz taken as angular frequency, a
    power of 1000 for a prefix, -1 for a sign), the same codes as the step catalogue.
    """
    if ratio.free() - {"pi"}:
        return ()
    ring: Ring = ratio.ring
    found = []
    for candidate in _candidates(unit, squared):
        factor = candidate.factor**2 if squared else candidate.factor
        if (ratio - ring.fraction(factor)).is_zero:
            found.append((candidate.code, candidate.detail))
    return tuple(found)

"""The true value of an audited quantity, exactly, with the parts as symbols.

Three forms:

- ``exact``: the quantity itself is a rational function (network functions and
  impedances in s; dc and hf gains and the time constant in the symbols);
- ``square``: the quantity's square is (natural frequency, damping ratio, Q, and a
  resonant or cutoff frequency whose defining polynomial is of degree one in w^2);
- ``root``: the quantity is sqrt(u)/(2 pi) Hz for the lowest positive root u = w^2 of
  a polynomial P(u) whose coefficients are polynomials in the symbols (a cutoff or a
  resonance of higher order: no closed form, compared numerically and said so).

Second-order figures from a denominator a2 s^2 + a1 s + a0 (any circuit-analysis
text; Alexander & Sadiku, *Fundamentals of Electric Circuits*, 5th ed., ch. 8 and
14, from memory): w0^2 = a0/a2, zeta = a1/(2 sqrt(a0 a2)), Q = 1/(2 zeta) =
sqrt(a0 a2)/a1; first order a1 s + a0: tau = a1/a0. |H(jw)|^2 = N(jw)N(-jw) /
(D(jw)D(-jw)) is a rational function of u = w^2 (common practice).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Literal

import sympy

from handcheck.audit.network import SymbolicCircuit, impedance_function, transfer_function
from handcheck.audit.ring import AuditError, RatFunc, Ring
from handcheck.worksheet.audit import AUDIT_QUANTITIES, AuditQuantity

__all__ = ["Truth", "coefficients_in_s", "true_value"]

Form = Literal["exact", "square", "root"]


@dataclass(frozen=True)
class Truth:
    """The quantity's exact truth in one of three forms (see the module's text)."""

    form: Form
    value: RatFunc | None  # the quantity (exact) or its square (square)
    unit: str
    in_s: bool = False  # a function of s: taken at the analysis frequency for errors
    poly: Any = None  # root: P(u), u held in the ring's "s" slot
    order: int = 0  # the order of the denominator the figures came from


def coefficients_in_s(ring: Ring, poly: Any) -> list[Any]:
    """The coefficients a_k (polynomials in the other names) of poly = sum a_k s^k."""
    groups: dict[int, dict[tuple[int, ...], int]] = {}
    for raw, coeff in zip(poly.monoms(), poly.coeffs(), strict=True):
        monom = tuple(int(e) for e in raw)
        groups.setdefault(monom[0], {})[(0, *monom[1:])] = int(coeff)
    top = max(groups, default=0)
    return [ring.ctx.from_dict(groups[k]) if k in groups else ring.constant(0) for k in range(top + 1)]


def even_odd_at(ring: Ring, poly: Any, v: RatFunc) -> tuple[RatFunc, RatFunc]:
    """E(v), O(v) with poly(s) = E(s^2) + s O(s^2), evaluated at s^2 = v (a rational function)."""
    coeffs = coefficients_in_s(ring, poly)
    one = ring.fraction(sympy.Integer(1))
    even, odd = ring.fraction(sympy.Integer(0)), ring.fraction(sympy.Integer(0))
    power = one
    for k in range(0, len(coeffs), 2):
        even = even + RatFunc.make(ring, coeffs[k], ring.constant(1)) * power
        if k + 1 < len(coeffs):
            odd = odd + RatFunc.make(ring, coeffs[k + 1], ring.constant(1)) * power
        power = power * v
    return even, odd


def magnitude_squared(ring: Ring, poly: Any, u: RatFunc) -> RatFunc:
    """|poly(jw)|^2 = E(-u)^2 + u O(-u)^2 with u = w^2."""
    even, odd = even_odd_at(ring, poly, -u)
    return even * even + u * odd * odd


def _u(ring: Ring) -> RatFunc:
    return RatFunc(ring, ring.gen("s"), ring.constant(1))


def _denominator(sc: SymbolicCircuit, quantity: AuditQuantity) -> Any:
    """The denominator the figures come from: of H when given, else the circuit's determinant."""
    if quantity.args:
        (inner,) = quantity.args
        if not isinstance(inner, AuditQuantity):
            raise AuditError(f"{quantity.name}() takes a network function, like {quantity.name}(network_function(...))")
        return _function(sc, inner).den
    return sc.solve([sympy.Integer(0)] * sc.system.size).det


def _function(sc: SymbolicCircuit, quantity: AuditQuantity) -> RatFunc:
    if quantity.name in ("network_function", "transfer"):
        return transfer_function(sc, quantity)
    if quantity.name in ("impedance", "admittance"):
        return impedance_function(sc, quantity)
    raise AuditError(f"{quantity.text} is not a network function, transfer or impedance")


def _figures(sc: SymbolicCircuit, quantity: AuditQuantity) -> Truth:
    ring = sc.ring
    coeffs = coefficients_in_s(ring, _denominator(sc, quantity))
    while len(coeffs) > 1 and coeffs[0].is_zero():
        coeffs = coeffs[1:]  # a pole at s = 0 (a free integrator) carries no figure
    order = len(coeffs) - 1
    a = [RatFunc.make(ring, c, ring.constant(1)) for c in coeffs]
    name = quantity.name
    if name == "time_constant":
        if order != 1:
            raise AuditError(f"time_constant needs a first-order circuit or function; this one is of order {order}")
        return Truth("exact", a[1] / a[0], "s", order=1)
    if order != 2:
        raise AuditError(f"{name} needs a second-order circuit or function; this one is of order {order}")
    four = ring.fraction(sympy.Integer(4))
    square = {
        "natural_frequency": a[0] / a[2],
        "damping_ratio": a[1] * a[1] / (four * a[0] * a[2]),
        "quality_factor": a[0] * a[2] / (a[1] * a[1]),
    }[name]
    return Truth("square", square, AUDIT_QUANTITIES[name], order=2)


def _gain(sc: SymbolicCircuit, quantity: AuditQuantity) -> Truth:
    (inner,) = quantity.args or (None,)
    if not isinstance(inner, AuditQuantity):
        raise AuditError(f"{quantity.name}() takes a network function, like {quantity.name}(network_function(...))")
    h = _function(sc, inner)
    ring = sc.ring
    num, den = coefficients_in_s(ring, h.num), coefficients_in_s(ring, h.den)
    if quantity.name == "dc_gain":
        if den[0].is_zero():
            raise AuditError(f"{inner.text} has a pole at s = 0: its DC gain is infinite")
        return Truth("exact", RatFunc.make(ring, num[0], den[0]), "")
    if len(num) > len(den):
        raise AuditError(f"{inner.text} grows without bound as s grows: it has no high-frequency gain")
    top = num[-1] if len(num) == len(den) else ring.constant(0)
    return Truth("exact", RatFunc.make(ring, top, den[-1]), "")


def _lowest_root_truth(ring: Ring, poly: Any, unit: str) -> Truth:
    """A frequency in Hz from the lowest positive root of poly(u), u = w^2 in rad^2/s^2."""
    coeffs = coefficients_in_s(ring, poly)
    while len(coeffs) > 1 and coeffs[0].is_zero():
        coeffs = coeffs[1:]  # u = 0 is no frequency > 0
    if len(coeffs) < 2:
        raise AuditError("the defining polynomial has no root in the frequency")
    if len(coeffs) == 2:  # u = -c0/c1; f^2 = u/(4 pi^2)
        four_pi2 = ring.fraction(4 * sympy.pi**2)
        u = RatFunc.make(ring, -coeffs[0], coeffs[1])
        return Truth("square", u / four_pi2, unit, order=1)
    shifted = sum((c * ring.gen("s") ** k for k, c in enumerate(coeffs)), ring.constant(0))
    return Truth("root", None, unit, poly=shifted, order=len(coeffs) - 1)


def _cutoff(sc: SymbolicCircuit, quantity: AuditQuantity) -> Truth:
    (inner,) = quantity.args or (None,)
    if not isinstance(inner, AuditQuantity):
        raise AuditError("cutoff_frequency() takes a network function, like cutoff_frequency(network_function(...))")
    ring = sc.ring
    h = _function(sc, inner)
    num, den = coefficients_in_s(ring, h.num), coefficients_in_s(ring, h.den)
    if not num[0].is_zero() and not den[0].is_zero():
        gn, gd = num[0], den[0]  # a low-pass: the DC gain
    elif len(num) == len(den):
        gn, gd = num[-1], den[-1]  # a high-pass: the high-frequency gain
    else:
        raise AuditError(
            f"{inner.text} is neither low-pass nor high-pass (no DC or high-frequency gain): name band_edges"
        )
    u = _u(ring)
    n2, d2 = magnitude_squared(ring, h.num, u), magnitude_squared(ring, h.den, u)
    # |N|^2/|D|^2 = g^2/2  <=>  2 gd^2 |N|^2 - gn^2 |D|^2 = 0 (times the denominators)
    two = ring.fraction(sympy.Integer(2))
    g2 = RatFunc.make(ring, gn * gn, gd * gd)
    equation = two * n2 - g2 * d2
    return _lowest_root_truth(ring, equation.num, "Hz")


def _resonance(sc: SymbolicCircuit, quantity: AuditQuantity) -> Truth:
    (inner,) = quantity.args or (None,)
    if not isinstance(inner, AuditQuantity) or inner.name not in ("impedance", "admittance"):
        raise AuditError("resonant_frequency() takes an impedance(...) or admittance(...)")
    ring = sc.ring
    z = impedance_function(sc, inner)
    # Im N(jw) D(-jw) = w (On Ed - En Od) at s^2 = -u: real where that vanishes
    minus_u = -_u(ring)
    en, on = even_odd_at(ring, z.num, minus_u)
    ed, od = even_odd_at(ring, z.den, minus_u)
    equation = on * ed - en * od
    if equation.is_zero:
        raise AuditError(f"{inner.text} is real at every frequency: it has no resonance")
    return _lowest_root_truth(ring, equation.num, "Hz")


def true_value(sc: SymbolicCircuit, quantity: AuditQuantity) -> Truth:
    """The exact truth of an audited quantity.

    Raises
    ------
    AuditError
        When the quantity does not apply to this circuit (order, pass band, names).
    """
    name = quantity.name
    if name in ("network_function", "transfer", "impedance", "admittance"):
        return Truth("exact", _function(sc, quantity), AUDIT_QUANTITIES[name], in_s=True)
    if name in ("natural_frequency", "damping_ratio", "quality_factor", "time_constant"):
        return _figures(sc, quantity)
    if name in ("dc_gain", "hf_gain"):
        return _gain(sc, quantity)
    if name == "cutoff_frequency":
        return _cutoff(sc, quantity)
    if name == "resonant_frequency":
        return _resonance(sc, quantity)
    raise AuditError(f'"{name}" is not a quantity an audited formula can name')

"""Source functions as weighted, delayed elementary Laplace transforms.

Each term ``Re[X tau**n exp((-a + j w) tau)]`` of a source function
(:mod:`handcheck.worksheet.sourcefunction`) starting at d becomes
``exp(-s d)`` (the time-shift theorem) times its transform, a rational function of s
with exact coefficients, or ``1/(s - q)**m`` for a pole q the rationals cannot
reach (a sinusoid at ``2*pi*50`` rad/s).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from handcheck.circuit.model import Source
from handcheck.solve.exact import compact
from handcheck.worksheet.sourcefunction import SourceTerm

__all__ = ["Basis", "Wave", "basis_one", "source_waves", "term_waves"]


@dataclass(frozen=True)
class Basis:
    """An elementary transform ``num/den`` (polynomials over QQ), times ``1/(s - q)**m`` when
    ``extra = (q, m)`` holds an exact pole outside the rationals' reach (``q = j*100*pi``)."""

    num: tuple[Any, ...]  # coefficients, highest power first
    den: tuple[Any, ...]
    extra: tuple[Any, int] | None = None


def basis_one() -> Basis:
    """The transform 1 (an impulse at the term's time, as stored energy enters).

    Returns
    -------
    Basis
    """
    import sympy

    return Basis((sympy.Integer(1),), (sympy.Integer(1),))


Wave = tuple[Any, Basis, Any]  # (weight, basis, delay)


def term_waves(term: SourceTerm) -> list[Wave]:
    """The transform of ``Re[X tau**n exp((-a + j w) tau)]`` from ``start`` on.

    Parameters
    ----------
    term : SourceTerm

    Returns
    -------
    list of (weight, Basis, delay)

    ``L{tau**n exp(p tau)} = n!/(s - p)**(n+1)`` (standard table; e.g. Kreyszig,
    *Advanced Engineering Mathematics*, 10th ed., sec. 6.9, from memory). With a and
    w**2 rational the conjugate pair is one rational function: with
    ``(s + a + j w)**(n+1) = P(s) + j Q(s)``, the transform is
    ``n! (Re X * P - Im X * Q) / ((s + a)**2 + w**2)**(n+1)``. Otherwise each half
    keeps its exact pole.
    """
    import sympy

    s = sympy.Symbol("s", real=True)
    n, a, w, x = term.power, term.decay, term.omega, term.phasor
    fact = sympy.factorial(n)
    zero = sympy.Integer(0)
    if w == 0 and a.is_Rational:
        den = sympy.Poly((s + a) ** (n + 1), s).all_coeffs()
        return [(x * fact, Basis((sympy.Integer(1),), tuple(den)), term.start)]
    if w != 0 and a.is_Rational and sympy.expand(w * w).is_Rational:
        den = tuple(sympy.Poly(((s + a) ** 2 + w * w) ** (n + 1), s).all_coeffs())
        p_part, q_part = sympy.expand((s + a + sympy.I * w) ** (n + 1)).as_real_imag()
        re_x, im_x = sympy.expand_complex(x).as_real_imag()
        out: list[Wave] = []
        p_poly = sympy.Poly(sympy.expand(p_part), s)
        q_poly = sympy.Poly(sympy.expand(q_part / w), s)
        if re_x != 0:
            out.append((compact(re_x * fact), Basis(tuple(p_poly.all_coeffs()), den), term.start))
        if im_x != 0:
            out.append((compact(-im_x * fact * w), Basis(tuple(q_poly.all_coeffs()), den), term.start))
        return out
    one = (sympy.Integer(1),)
    pole = -a + sympy.I * w
    re_x, im_x = sympy.expand_complex(x).as_real_imag()
    x = re_x + sympy.I * im_x  # cos and sin of the phase, not exp(j phase): one canonical form
    if w == 0:
        return [(x * fact, Basis(one, one, (pole, n + 1)), term.start)]
    half = fact / 2
    return (
        [
            (compact(x * half), Basis(one, one, (pole, n + 1)), term.start),
            (compact(sympy.conjugate(x) * half), Basis(one, one, (sympy.conjugate(pole), n + 1)), term.start),
        ]
        if x != zero
        else []
    )


def source_waves(source: Source, horizon: Any) -> list[Wave]:
    """The source's function for t >= 0 as weighted, delayed elementary transforms.

    Parameters
    ----------
    source : Source
    horizon : sympy number or None
        Repeats are written out for the periods that start up to this time.

    Returns
    -------
    list of (weight, Basis, delay)
    """
    import sympy

    terms, _ = source.function.expanded(horizon if horizon is not None else sympy.Integer(0))
    merged: dict[tuple[Basis, Any], Any] = {}
    zero = sympy.Integer(0)
    for term in terms:
        for weight, basis, at in term_waves(term):
            merged[(basis, at)] = merged.get((basis, at), zero) + weight
    out = []
    for (basis, at), total in merged.items():
        weight = compact(sympy.expand(total)) if not total.is_Rational else total
        if weight != 0:
            out.append((weight, basis, at))
    return out

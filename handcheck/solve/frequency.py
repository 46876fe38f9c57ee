"""Network functions and the frequencies read from them, exactly.

``network_function(Q1, Q2)`` is Q1/Q2 as a reduced rational function of s (rad/s),
from the circuit's modified nodal equations solved over the rationals
(:func:`handcheck.solve.network.solve_rational`). From it: ``poles(H)``,
``zeros(H)`` (certified roots, :mod:`handcheck.solve.roots`), ``dc_gain(H)``,
``hf_gain(H)``, ``cutoff_frequency(H)``, ``band_edges(H)``, ``bandwidth(H)``,
``peak_frequency(H)`` and ``resonant_frequency(Z)``.

Every frequency is a positive real root of an exact polynomial, never a scan: with
s = jw, N(jw) = Nr(w) + j Ni(w) splits into even and odd parts with real
coefficients, so |H(jw)|^2 = (Nr^2 + Ni^2)/(Dr^2 + Di^2) is a ratio of polynomials in
w (even ones: in w^2), and Z(jw) is real where Ni Dr - Nr Di = 0 (the usual
reading of the magnitude-squared function, e.g. Van Valkenburg, *Analog Filter
Design*, 1982, ch. 2, from memory). Real roots are isolated exactly
(``Poly.real_roots``: sympy's exact root isolation, each root a ``CRootOf``).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import sympy

from handcheck.errors import ParseError
from handcheck.solve.network import laplace_symbol, solve_rational
from handcheck.solve.phasor import Solution
from handcheck.solve.rational import algebraic_pi_field, pi_field
from handcheck.worksheet.evaluate import Value
from handcheck.worksheet.units import Dim, dim_of

if TYPE_CHECKING:  # derived.py is imported where it is used
    from handcheck.solve.derived import Evaluate

__all__ = ["FREQUENCY_QUANTITIES", "LIST_QUANTITIES", "Response", "evaluate_frequency", "network_function"]

#: Quantities of a network function, and their unit word.
FREQUENCY_QUANTITIES: dict[str, str] = {
    "network_function": "",
    "poles": "rad/s",
    "zeros": "rad/s",
    "dc_gain": "",
    "hf_gain": "",
    "cutoff_frequency": "Hz",
    "band_edges": "Hz",
    "bandwidth": "Hz",
    "peak_frequency": "Hz",
    "resonant_frequency": "Hz",
}
#: Quantities whose value is a list.
LIST_QUANTITIES = frozenset({"poles", "zeros", "band_edges"})


@dataclass(frozen=True)
class Response:
    """A network function H(s) = num/den (exact polynomials in s) and its dimension."""

    num: sympy.Poly
    den: sympy.Poly
    dim: Dim

    @property
    def expr(self) -> sympy.Expr:
        return self.num.as_expr() / self.den.as_expr()


class _LaplaceSolution(Solution):
    """A solution whose unknowns are rational functions of s (for the quantity evaluator)."""

    @property
    def s(self) -> sympy.Expr:
        return laplace_symbol()


def _fail(message: str, text: str) -> ParseError:
    return ParseError(message, text, None)


def _laplace_solution(solution: Solution, column: list[sympy.Expr] | None = None) -> Solution:
    """Every unknown as a function of s, for the circuit's sources (or one injection column)."""
    system = solution.system
    if column is not None:
        columns, weights = [column], [sympy.Integer(1)]
    else:
        active = [k for k, ident in enumerate(system.sources) if solution.u.get(ident, 0) != 0]
        columns = [[system.B[r][k] for r in range(system.size)] for k in active]
        weights = [solution.u[system.sources[k]] for k in active]
    x = [sympy.Integer(0)] * system.size
    for col, weight in zip(columns, weights, strict=True):
        functions = solve_rational(system.G, system.C, col)
        for r, fn in enumerate(functions):
            x[r] += weight * fn.as_expr()
    return _LaplaceSolution(solution.circuit, system, tuple(sympy.together(v) for v in x), dict(solution.u))


def _exact_poly(expr: sympy.Expr, s: sympy.Symbol) -> sympy.Poly:
    """``expr`` as a polynomial in s over the smallest exact domain: an irrational part
    value (a coupling's M = k*sqrt(L1*L2)) gives an algebraic field, not sympy's EX."""
    poly = sympy.Poly(expr, s)
    if poly.domain.is_EX:
        try:
            poly = sympy.Poly(expr, s, extension=True)
        except (sympy.PolynomialError, NotImplementedError):
            return poly
    if poly.domain.is_EX:  # pi (a gbw in Hz) and a square root (a coupling) together
        field = algebraic_pi_field(poly.coeffs())
        if field is not None:
            return sympy.Poly(expr, s, domain=field)
    return poly


def _response(expr: sympy.Expr, dim: Dim, text: str) -> Response:
    s = laplace_symbol()
    num, den = sympy.fraction(sympy.cancel(sympy.together(expr)))
    try:
        n, d = _exact_poly(num, s), _exact_poly(den, s)
    except sympy.PolynomialError:
        raise _fail(f"{text} is no rational function of s", text) from None
    for poly in (n, d):
        if not (poly.domain.is_QQ or poly.domain.is_ZZ or poly.domain.is_Algebraic or pi_field(poly.domain)):
            raise _fail(
                f"{text} depends on how the sources' phases combine (coefficients {poly.domain}); "
                "name a ratio driven by one source",
                text,
            )
    if d.is_zero:
        raise _fail(f"{text}: the second quantity is identically 0, so the ratio is not defined", text)
    lc = d.LC()
    return Response(_exact_poly(n.as_expr() / lc, s), _exact_poly(d.as_expr() / lc, s), dim)


def impedance_function(solution: Solution, args: tuple[str, ...], text: str) -> Response:
    """Z(s) of a part (R, sL, 1/(sC)) or between two nodes (1 A injected, sources zeroed)."""
    s = laplace_symbol()
    circuit, system = solution.circuit, solution.system
    if len(args) == 1 and circuit.has_part(args[0]) and args[0] not in circuit.nodes:
        part = circuit.part(args[0])
        table = {"resistor": part.value, "inductor": s * part.value, "capacitor": 1 / (s * part.value)}
        if part.kind not in table:
            raise _fail(f"the impedance of a {part.kind} as a function of s is not defined; name two nodes", text)
        return _response(table[part.kind], dim_of("ohm"), text)
    a, b = args[0], args[1] if len(args) == 2 else "gnd"
    column = [sympy.Integer(0)] * system.size
    for node, sign in ((a, 1), (b, -1)):
        index = system.node(node)
        if index is not None:
            column[index] += sign
    x = _laplace_solution(solution, column).x
    va = x[system.node(a)] if system.node(a) is not None else 0  # type: ignore[index]
    vb = x[system.node(b)] if system.node(b) is not None else 0  # type: ignore[index]
    return _response(va - vb, dim_of("ohm"), text)


def network_function(solution: Solution, q: object, evaluate: Evaluate) -> Response:
    """The exact H(s) named by ``network_function(Q1, Q2)``, ``transfer(Q1, Q2)``,
    ``impedance(...)`` or ``admittance(...)``.

    Raises
    ------
    ParseError
        If the quantity is none of these, or Q2 is identically 0.
    """
    name, args, text = q.name, q.args, q.text  # type: ignore[attr-defined]
    if name == "without" and args and hasattr(args[0], "name"):
        from handcheck.solve.derived import removed
        from handcheck.solve.phasor import solve

        reduced = solve(removed(solution.circuit, tuple(str(a) for a in args[1:]), text))
        return network_function(reduced, args[0], evaluate)
    if name in ("impedance", "admittance"):
        z = impedance_function(solution, tuple(str(a) for a in args), text)
        if name == "impedance":
            return z
        if z.num.is_zero:
            raise _fail(f"{text}: the impedance is identically 0, so there is no admittance", text)
        return _response(z.den.as_expr() / z.num.as_expr(), dim_of("S"), text)
    if name not in ("network_function", "transfer") or len(args) != 2 or not all(hasattr(a, "name") for a in args):
        raise _fail(
            f"{text} is no network function; write network_function(Q1, Q2) or transfer(Q1, Q2), "
            "like network_function(voltage(out), voltage(in))",
            text,
        )
    if not any(v != 0 for v in solution.u.values()):
        raise _fail(f"{text}: no source runs at the analysis frequency, so the ratio has no drive", text)
    laplace = _laplace_solution(solution)
    top, bottom = evaluate(laplace, args[0]), evaluate(laplace, args[1])
    if sympy.simplify(bottom.expr) == 0:
        raise _fail(f"{args[1]} is identically 0, so {text} is not defined", text)
    return _response(top.expr / bottom.expr, top.dim / bottom.dim, text)


def _split(poly: sympy.Poly, w: sympy.Symbol) -> tuple[sympy.Poly, sympy.Poly]:
    """Real and imaginary parts of poly(jw) as real polynomials in w."""
    re_part, im_part = sympy.Integer(0), sympy.Integer(0)
    for (k,), c in poly.terms():
        term = c * sympy.I**k * w**k
        if k % 2 == 0:
            re_part += term
        else:
            im_part += term / sympy.I
    return _exact_poly(re_part, w), _exact_poly(im_part, w)


def _positive_roots(poly: sympy.Poly) -> list[sympy.Expr]:
    """The distinct positive real roots of a real polynomial, exact, ascending."""
    if poly.is_zero or poly.degree() <= 0:
        return []
    squarefree = _exact_poly(sympy.quo(poly, sympy.gcd(poly, poly.diff())).as_expr(), poly.gen)
    if pi_field(squarefree.domain):  # pi from an op-amp's gbw in Hz: the roots of handcheck.solve.roots
        from handcheck.solve.roots import factor_roots

        roots = [
            r.exact if r.exact is not None else _number(r.approx).as_real_imag()[0]
            for f in factor_roots(squarefree.monic())
            for r in f.roots
            if r.imag_sign == 0 and r.real_sign > 0
        ]
    elif not squarefree.domain.is_QQ and not squarefree.domain.is_ZZ:
        roots = [r for r in sympy.real_roots(squarefree)]
    else:
        roots = squarefree.real_roots()
    return sorted({r for r in roots if r.is_positive}, key=lambda r: float(sympy.N(r, 30)))


def _magnitude_squared(h: Response) -> tuple[sympy.Poly, sympy.Poly, sympy.Symbol]:
    """|H(jw)|^2 = P(w)/Q(w), both real polynomials in w."""
    w = sympy.Symbol("w", positive=True)
    nr, ni = _split(h.num, w)
    dr, di = _split(h.den, w)
    return nr**2 + ni**2, dr**2 + di**2, w


def _value(p: sympy.Poly, q: sympy.Poly, w: sympy.Expr) -> sympy.Expr:
    return p.as_expr().subs(p.gen, w) / q.as_expr().subs(q.gen, w)


def _hz(w: sympy.Expr) -> sympy.Expr:
    return w / (2 * sympy.pi)


def _gains(h: Response, text: str) -> tuple[sympy.Expr | None, sympy.Expr | None]:
    """H(0) (None at a pole) and H(s -> oo) (None when it grows without bound)."""
    dc = None if h.den.eval(0) == 0 else h.num.eval(0) / h.den.eval(0)
    if h.num.is_zero or h.num.degree() < h.den.degree():
        hf = sympy.Integer(0)
    elif h.num.degree() == h.den.degree():
        hf = h.num.LC() / h.den.LC()
    else:
        hf = None
    return dc, hf


def _crossings(h: Response, level: sympy.Expr) -> list[sympy.Expr]:
    """The frequencies w > 0 (rad/s) where |H(jw)|^2 equals ``level``."""
    p, q, _ = _magnitude_squared(h)
    return _positive_roots(p - q * level)


def _peak(h: Response, text: str) -> sympy.Expr:
    """The w > 0 of largest |H(jw)| (0 when the largest value is at DC)."""
    p, q, w = _magnitude_squared(h)
    critical = _positive_roots(p.diff(w) * q - p * q.diff(w))
    best, where = (_value(p, q, sympy.Integer(0)) if q.eval(0) != 0 else sympy.oo), sympy.Integer(0)
    for r in critical:
        value = _value(p, q, r)
        if sympy.N(value - best, 30) > 0:
            best, where = value, r
    if where == 0 and not critical:
        raise _fail(f"{text}: abs(H) has no peak at a frequency above 0 (it only falls or only rises)", text)
    return where


def evaluate_frequency(solution: Solution, q: object, evaluate: Evaluate) -> Value | tuple[Value, ...]:
    """The value of a quantity of :data:`FREQUENCY_QUANTITIES`.

    Returns a :class:`Value` (for ``network_function``, an expression in s), or a
    tuple of values for ``poles``, ``zeros`` and ``band_edges``.

    Raises
    ------
    ParseError
        For a wrong argument, or a response that has no such frequency (said why).
    """
    name, args, text = q.name, q.args, q.text  # type: ignore[attr-defined]
    if name == "network_function":
        h = network_function(solution, q, evaluate)
        return Value(h.expr, h.dim)
    if len(args) != 1 or not hasattr(args[0], "name"):
        raise _fail(
            f"{name}() takes one network function, like {name}(network_function(voltage(out), voltage(in)))", text
        )
    h = network_function(solution, args[0], evaluate)
    hz = dim_of("Hz")
    if name in ("poles", "zeros"):
        from handcheck.solve.roots import factor_roots, irreducible_factors

        poly = h.den if name == "poles" else h.num
        if poly.degree() <= 0:
            return ()
        out: list[Value] = []
        multiplicity = dict(irreducible_factors(poly.monic()))
        for factor in factor_roots(poly.monic()):
            for root in factor.roots:
                value = root.exact if root.exact is not None else _number(root.approx)
                out.extend([Value(value, hz)] * multiplicity.get(factor.poly, 1))
        return tuple(out)
    dc, hf = _gains(h, text)
    if name == "dc_gain":
        if dc is None:
            raise _fail(f"{args[0]} has a pole at s = 0: its DC gain is infinite", text)
        return Value(dc, h.dim)
    if name == "hf_gain":
        if hf is None:
            raise _fail(f"{args[0]} grows without bound as s grows: it has no high-frequency gain", text)
        return Value(hf, h.dim)
    if name == "resonant_frequency":
        w = sympy.Symbol("w", positive=True)
        nr, ni = _split(h.num, w)
        dr, di = _split(h.den, w)
        roots = _positive_roots(ni * dr - nr * di)
        if not roots:
            raise _fail(f"{args[0]} is real at no frequency above 0: there is no resonance", text)
        return Value(_hz(roots[0]), hz)
    if name == "cutoff_frequency":
        return Value(_hz(_cutoff(h, dc, hf, text)), hz)
    peak = _peak(h, text)
    if name == "peak_frequency":
        return Value(_hz(peak), hz)
    p, qq, _ = _magnitude_squared(h)
    half = _value(p, qq, peak) / 2
    crossings = _crossings(h, half)
    below = [r for r in crossings if sympy.N(r - peak, 30) < 0]
    above = [r for r in crossings if sympy.N(r - peak, 30) > 0]
    if peak == 0 or not below or not above:
        raise _fail(f"{args[0]} is no band-pass: abs(H) does not fall to 1/sqrt(2) of its peak on both sides", text)
    low, high = _hz(below[-1]), _hz(above[0])
    if name == "band_edges":
        return (Value(low, hz), Value(high, hz))
    return Value(high - low, hz)


def _cutoff(h: Response, dc: sympy.Expr | None, hf: sympy.Expr | None, text: str) -> sympy.Expr:
    """The -3 dB frequency (rad/s): from the DC gain for a low-pass, else from the
    high-frequency gain for a high-pass."""
    if dc is not None and dc != 0:
        roots = _crossings(h, sympy.Abs(dc) ** 2 / 2)
        if roots:
            return roots[0]
    if hf is not None and hf != 0:
        roots = _crossings(h, sympy.Abs(hf) ** 2 / 2)
        if roots:
            return roots[-1]
    raise _fail(
        f"{text}: abs(H) never reaches 1/sqrt(2) of its DC or high-frequency gain; "
        "for a band-pass claim band_edges or bandwidth",
        text,
    )


def _number(value: object) -> sympy.Expr:
    import mpmath

    c = mpmath.mpc(value)
    return sympy.Float(c.real, 30) + sympy.I * sympy.Float(c.imag, 30)

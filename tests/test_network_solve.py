"""Tests of ``handcheck.solve.network`` against references outside the project.

References used: textbook closed forms of small circuits (quoted from memory),
sympy's exact linear algebra (``Matrix.LUsolve``, ``Matrix.det``) and numpy's
floating-point ``linalg.solve`` as independent libraries.  Circuits are
written as part lists and turned into modified nodal systems by the small
builder below (conductance/branch stamps: common practice).  Component
values are invented.
"""

from __future__ import annotations

import os
import sys
from fractions import Fraction as Fr

import pytest

try:
    import handcheck.solve.network  # noqa: F401
except ImportError:  # running from a checkout without the package installed
    sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

import sympy
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from handcheck.solve.network import RationalFunction, _solve, laplace_symbol, solve_rational

s = sympy.Symbol("s")


def mna(n_nodes, parts):
    """Modified nodal system of ``parts`` on nodes ``1..n_nodes`` (0 is ground).

    ``parts`` holds ``(kind, a, b, value)`` with kind ``"R"``, ``"C"``, ``"L"``
    or ``"V"`` (value in ohm, farad, henry, volt; V: ``v_a - v_b = value``).
    Unknowns: ``v_1..v_n`` then one branch current (flowing from ``a`` to
    ``b`` through the part) per L and V, in part order.  Stamps are the usual
    modified-nodal ones (common practice); each node row is the sum of
    currents leaving the node.
    """
    n_branch = sum(1 for p in parts if p[0] in "LV")
    size = n_nodes + n_branch
    G = [[Fr(0)] * size for _ in range(size)]
    C = [[Fr(0)] * size for _ in range(size)]
    b = [Fr(0)] * size
    nxt = n_nodes
    for kind, a, c, val in parts:
        ia, ic = a - 1, c - 1
        if kind in "RC":
            M, y = (G, 1 / Fr(val)) if kind == "R" else (C, Fr(val))
            for i, j, sign in ((ia, ia, 1), (ic, ic, 1), (ia, ic, -1), (ic, ia, -1)):
                if i >= 0 and j >= 0:
                    M[i][j] += sign * y
        else:
            k = nxt
            nxt += 1
            for i, sign in ((ia, 1), (ic, -1)):
                if i >= 0:
                    G[i][k] += sign
                    G[k][i] += sign
            if kind == "L":
                C[k][k] -= Fr(val)
            else:
                b[k] = Fr(val)
    return G, C, b


def ladder(n):
    """RLC ladder, n sections (series R, series L, shunt C); output = last node."""
    parts = [("V", 1, 0, 1)]
    prev = 1
    for k in range(1, n + 1):
        mid, end = 2 * k, 2 * k + 1
        parts += [
            ("R", prev, mid, 1 + Fr(k, 10)),
            ("L", mid, end, Fr(1, k + 1)),
            ("C", end, 0, Fr(1, 2 * k + 3)),
        ]
        prev = end
    return (*mna(2 * n + 1, parts), 2 * n)


def rf_of(expr):
    """Reduced RationalFunction of a sympy expression in s (reference side)."""
    num, den = sympy.fraction(sympy.cancel(sympy.together(expr)))
    return RationalFunction.reduced(sympy.Poly(num, s, domain="QQ"), sympy.Poly(den, s, domain="QQ"))


def sym_matrix(M):
    return sympy.Matrix([[sympy.Rational(x.numerator, x.denominator) for x in row] for row in M])


# ---------------------------------------------------------------- closed forms


@pytest.mark.parametrize("use_flint", [True, False])
def test_rc_lowpass_first_order_closed_form(use_flint):
    # V_out/V_in = 1/(1 + sRC) and source current -sC/(1 + sRC)
    # (first-order RC low-pass; series RC impedance R + 1/(sC)) -- textbook, from memory
    R, Cv = Fr(3, 2), Fr(2, 7)
    G, C, b = mna(2, [("V", 1, 0, 1), ("R", 1, 2, R), ("C", 2, 0, Cv)])
    (v1, v2, i_src), route = _solve(G, C, b, None, None, use_flint)
    assert route == "schur"
    Rs, Cs = sympy.Rational(3, 2), sympy.Rational(2, 7)
    assert v1 == rf_of(sympy.Integer(1))
    assert v2 == rf_of(1 / (1 + s * Rs * Cs))
    assert i_src == rf_of(-s * Cs / (1 + s * Rs * Cs))
    assert v2.den == sympy.Poly(s + sympy.Rational(7, 3), s, domain="QQ")  # pole at -1/(RC)


@pytest.mark.parametrize("use_flint", [True, False])
def test_rc_highpass_with_floating_capacitor(use_flint):
    # series C then shunt R: V_out/V_in = sRC/(1 + sRC); source current
    # -sC/(1 + sRC) (first-order RC high-pass) -- textbook, from memory.
    # The capacitor between two live nodes gives C a dependent nonzero column.
    R, Cv = Fr(4, 3), Fr(3, 8)
    G, C, b = mna(2, [("V", 1, 0, 1), ("C", 1, 2, Cv), ("R", 2, 0, R)])
    (v1, v2, i_src), route = _solve(G, C, b, None, None, use_flint)
    assert route == "schur"
    tau = sympy.Rational(4, 3) * sympy.Rational(3, 8)
    assert v1 == rf_of(sympy.Integer(1))
    assert v2 == rf_of(s * tau / (1 + s * tau))
    assert i_src == rf_of(-s * sympy.Rational(3, 8) / (1 + s * tau))


def test_bridged_network_against_hand_written_current_balances():
    # two series resistors (input node 1, middle node 3, output node 2) bridged
    # by a capacitor from 1 to 2, shunt resistors at 3 and 2.  Reference: the
    # two node equations (Kirchhoff's current law, textbook) written by hand,
    # without the nodal-matrix builder, solved by sympy.solve.
    R, Cv, Rs = Fr(1), Fr(1, 2), Fr(1, 3)
    G, C, b = mna(3, [("V", 1, 0, 1), ("R", 1, 3, R), ("R", 3, 2, R), ("C", 1, 2, Cv), ("R", 3, 0, Rs), ("R", 2, 0, 5)])
    v2, v3 = sympy.symbols("v2 v3")
    Rq, Cq, Rsq = sympy.Integer(1), sympy.Rational(1, 2), sympy.Rational(1, 3)
    kcl = [
        (v3 - 1) / Rq + (v3 - v2) / Rq + v3 / Rsq,
        (v2 - v3) / Rq + (v2 - 1) * s * Cq + v2 / 5,
    ]
    ref = sympy.solve(kcl, [v2, v3], dict=True)[0]
    got = solve_rational(G, C, b, unknowns=[1, 2])
    assert got == (rf_of(ref[v2]), rf_of(ref[v3]))


def test_series_rlc_current_has_lc_s2_rc_s_1_denominator():
    # I(s) = 1/(R + sL + 1/(sC)) = sC/(LC s^2 + RC s + 1); V_C = 1/(LC s^2 + RC s + 1)
    # (series RLC driven by a voltage step source) -- textbook, from memory
    R, L, Cv = Fr(5, 3), Fr(1, 2), Fr(3, 4)
    G, C, b = mna(3, [("V", 1, 0, 1), ("R", 1, 2, R), ("L", 2, 3, L), ("C", 3, 0, Cv)])
    (vc, i_l) = solve_rational(G, C, b, unknowns=[2, 4])
    Rs, Ls, Cs = (sympy.Rational(x.numerator, x.denominator) for x in (R, L, Cv))
    char = Ls * Cs * s**2 + Rs * Cs * s + 1
    assert i_l.den == sympy.Poly(char / (Ls * Cs), s, domain="QQ")
    assert i_l.num == sympy.Poly(s / Ls, s, domain="QQ")
    assert vc == rf_of(1 / char)


def test_resistive_divider_is_constant():
    # V_out = R2/(R1 + R2) (voltage divider) -- textbook, from memory
    G, C, b = mna(2, [("V", 1, 0, 9), ("R", 1, 2, 4), ("R", 2, 0, 2)])
    (v2,) = solve_rational(G, C, b, unknowns=[1])
    assert v2 == rf_of(sympy.Integer(9) * 2 / 6)


def test_capacitor_across_source_takes_reversal_route():
    # C1 directly across the source (a capacitor/source loop, so the Schur
    # block is singular).  V2 = 1/(1 + sRC2); source current
    # -(sC1 + sC2/(1 + sRC2)) (parallel admittances) -- textbook, from memory
    R, C1, C2 = Fr(2), Fr(1, 3), Fr(5, 2)
    G, C, b = mna(2, [("V", 1, 0, 1), ("C", 1, 0, C1), ("R", 1, 2, R), ("C", 2, 0, C2)])
    Rs, C1s, C2s = sympy.Integer(2), sympy.Rational(1, 3), sympy.Rational(5, 2)
    for use_flint in (True, False):
        (v1, v2, i_src), route = _solve(G, C, b, None, None, use_flint)
        assert route == "reversal"
        assert v1 == rf_of(sympy.Integer(1))
        assert v2 == rf_of(1 / (1 + s * Rs * C2s))
        assert i_src == rf_of(-(s * C1s + s * C2s / (1 + s * Rs * C2s)))


def test_capacitive_divider_needs_a_shifted_regular_point():
    # C1 across the source, then C2 in series and C3 to ground: node 2 sees only
    # capacitors, so G is singular and the reversal route must use s0 != 0.
    # V2 = C2/(C2 + C3) (capacitive divider); source current
    # -s (C1 + C2 C3/(C2 + C3)) (parallel/series capacitances) -- textbook, from memory
    C1, C2, C3 = Fr(1, 5), Fr(2, 3), Fr(7, 4)
    G, C, b = mna(2, [("V", 1, 0, 1), ("C", 1, 0, C1), ("C", 1, 2, C2), ("C", 2, 0, C3)])
    c1, c2, c3 = (sympy.Rational(x.numerator, x.denominator) for x in (C1, C2, C3))
    for use_flint in (True, False):
        (_, v2, i_src), route = _solve(G, C, b, None, None, use_flint)
        assert route == "reversal"
        assert v2 == rf_of(c2 / (c2 + c3))
        assert i_src == rf_of(-s * (c1 + c2 * c3 / (c2 + c3)))


def test_algebraic_entry_goes_through_general_route():
    # RC low-pass with R = sqrt(6)/5: V_out = 1/(1 + sRC) -- textbook, from memory
    R, Cv = sympy.sqrt(6) / 5, sympy.Rational(2, 3)
    G = [[1 / R, -1 / R, 1], [-1 / R, 1 / R, 0], [1, 0, 0]]
    C = [[0, 0, 0], [0, Cv, 0], [0, 0, 0]]
    (v2,) = solve_rational(G, C, [0, 0, 1], unknowns=[1])
    assert v2.den.domain.is_AlgebraicField
    assert sympy.cancel(v2.as_expr() - 1 / (1 + s * R * Cv)) == 0
    # exact value at s = 3 against the closed form, rationalised by sympy
    assert sympy.radsimp(v2(3) - 1 / (1 + 3 * R * Cv)) == 0
    with pytest.raises(ZeroDivisionError):
        v2(-1 / (R * Cv))


# ---------------------------------------------------------- reference libraries


def test_small_ladder_equals_sympy_lusolve_cancel():
    # reference library: sympy Matrix.LUsolve then cancel, every unknown
    G, C, b, out = ladder(2)
    ref = (sym_matrix(G) + s * sym_matrix(C)).LUsolve(sym_matrix([[x] for x in b]))
    got = solve_rational(G, C, b)
    assert len(got) == len(ref)
    for rf, e in zip(got, ref, strict=True):
        assert rf == rf_of(e)
    assert got[out].den.degree() == 4  # two L and two C, all independent


def test_ladder_against_numpy_at_imaginary_frequency():
    # reference library: numpy.linalg.solve in complex128 at s = 7j/10
    np = pytest.importorskip("numpy")
    G, C, b, out = ladder(8)
    sv = sympy.Rational(7, 10) * sympy.I
    A = np.array(
        [[float(g) + 0.7j * float(c) for g, c in zip(rg, rc, strict=True)] for rg, rc in zip(G, C, strict=True)]
    )
    x = np.linalg.solve(A, np.array([float(v) for v in b], dtype=complex))
    got = solve_rational(G, C, b, unknowns=[out, 1])
    for k, rf in zip([out, 1], got, strict=True):
        assert complex(rf(sv)) == pytest.approx(x[k], rel=1e-10, abs=1e-12)


_entry = st.fractions(min_value=-4, max_value=4, max_denominator=3)
_sparse_entry = st.one_of(st.just(Fr(0)), _entry)


@st.composite
def systems(draw):
    n = draw(st.integers(1, 4))
    G = [[draw(_sparse_entry) for _ in range(n)] for _ in range(n)]
    if draw(st.booleans()):
        C = [[draw(_sparse_entry) for _ in range(n)] for _ in range(n)]
    else:  # low rank with dependent nonzero columns, as floating capacitors give
        k = draw(st.integers(1, max(1, n - 1)))
        us = [[draw(_sparse_entry) for _ in range(n)] for _ in range(k)]
        vs = [[draw(_entry) for _ in range(n)] for _ in range(k)]
        C = [[sum(u[i] * v[j] for u, v in zip(us, vs, strict=True)) for j in range(n)] for i in range(n)]
    b = [draw(_entry) for _ in range(n)]
    return G, C, b


@pytest.mark.slow
@settings(derandomize=True, max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(systems())
def test_random_systems_match_sympy_exact_solve(system):
    # reference library: sympy det (Berkowitz) and exact Matrix.LUsolve at fixed s
    G, C, b = system
    Gs, Cs, bs = sym_matrix(G), sym_matrix(C), sym_matrix([[x] for x in b])
    det = sympy.expand((Gs + s * Cs).det(method="berkowitz"))
    if det == 0:
        with pytest.raises(ValueError):
            solve_rational(G, C, b)
        return
    fast, _ = _solve(G, C, b, None, None, True)
    general, _ = _solve(G, C, b, None, None, False)
    assert fast == general
    checked = 0
    for sv in (
        sympy.Integer(0),
        sympy.Integer(1),
        sympy.Rational(-1, 2),
        sympy.Integer(3),
        sympy.Rational(5, 7),
        sympy.Integer(-2),
        sympy.Integer(7),
    ):
        if det.subs(s, sv) == 0:
            continue
        ref = (Gs + sv * Cs).LUsolve(bs)
        for rf, e in zip(fast, ref, strict=True):
            assert rf(sv) == e
        checked += 1
        if checked == 4:
            break
    assert checked == 4  # det has degree <= 4, so at most 4 of the 7 points are roots
    for rf in fast:
        assert rf.num.gcd(rf.den).degree() == 0 and rf.den.LC() == 1
        assert rf.den.degree() <= sum(1 for row in C if any(row))


# ------------------------------------------------------------ errors, options


def test_parallel_voltage_sources_singular_for_every_s():
    # two ideal sources in parallel (a loop of voltage sources) make the nodal
    # matrix singular for every s -- common practice
    G, C, b = mna(2, [("V", 1, 0, 1), ("V", 1, 0, 2), ("R", 1, 2, 1), ("C", 2, 0, 1)])
    with pytest.raises(ValueError, match="identically zero"):
        solve_rational(G, C, b)


def test_unconnected_node_singular_for_every_s():
    # a node with no part attached gives a zero row -- common practice
    G, C, b = mna(3, [("V", 1, 0, 1), ("R", 1, 2, 1), ("L", 2, 0, 1)])
    with pytest.raises(ValueError, match="identically zero"):
        solve_rational(G, C, b)


def test_unknowns_subset_and_order():
    G, C, b, out = ladder(3)
    full = solve_rational(G, C, b)
    assert solve_rational(G, C, b, unknowns=[out, 0, out]) == (full[out], full[0], full[out])
    with pytest.raises(IndexError):
        solve_rational(G, C, b, unknowns=[len(G)])


def test_time_limit_raises_timeout():
    G, C, b, out = ladder(24)
    with pytest.raises(TimeoutError):
        solve_rational(G, C, b, unknowns=[out], time_limit=0)
    assert solve_rational(G, C, b, unknowns=[out], time_limit=60)[0].den.degree() == 48


def test_floats_and_text_are_refused():
    G, C, b = mna(2, [("V", 1, 0, 1), ("R", 1, 2, 2), ("C", 2, 0, 1)])
    for bad in (0.5, sympy.Float("0.5"), "1/2"):
        Gb = [row[:] for row in G]
        Gb[1][1] = bad
        with pytest.raises(TypeError):
            solve_rational(Gb, C, b)


def test_rational_function_invariants_and_evaluation():
    num = sympy.Poly(2 * s + 2, s, domain="QQ")
    den = sympy.Poly(4 * s**2 - 4, s, domain="QQ")
    rf = RationalFunction.reduced(num, den)
    assert rf.den == sympy.Poly(s - 1, s, domain="QQ")
    assert rf.num == sympy.Poly(sympy.Rational(1, 2), s, domain="QQ")
    assert rf(Fr(3)) == sympy.Rational(1, 4)
    assert sympy.cancel(rf.as_expr() - 1 / (2 * (s - 1))) == 0
    with pytest.raises(ZeroDivisionError):
        rf(1)
    with pytest.raises(ValueError):
        RationalFunction(num, den)  # not monic
    assert laplace_symbol() == s


# ------------------------------------------- sparse characteristic polynomial


def _permuted_hessenberg(r, band, seed):
    """A random upper Hessenberg rational matrix of upper bandwidth ``band``, its rows
    and columns renumbered at random (a similarity): ``{row: {col: fmpq}}``."""
    import random

    flint = pytest.importorskip("flint")
    rnd = random.Random(seed)
    perm = list(range(r))
    rnd.shuffle(perm)
    dense = [[Fr(0)] * r for _ in range(r)]
    for i in range(r):
        for j in range(max(i - 1, 0), min(i + band, r - 1) + 1):
            if rnd.random() < 0.8:
                dense[i][j] = Fr(rnd.randint(-9, 9), rnd.randint(1, 5))
    entries: dict = {}
    for i in range(r):
        for j in range(r):
            if dense[i][j]:
                entries.setdefault(perm[i], {})[perm[j]] = flint.fmpq(dense[i][j].numerator, dense[i][j].denominator)
    return dense, entries


@pytest.mark.parametrize(("r", "band", "seed"), [(1, 1, 0), (6, 1, 1), (12, 1, 2), (9, 3, 3), (15, 2, 4)])
def test_sparse_charpoly_equals_sympy_berkowitz(r, band, seed):
    # reference library: sympy Matrix.charpoly (Berkowitz) of the matrix before renumbering
    from handcheck.solve.network import _hessenberg_charpoly

    dense, entries = _permuted_hessenberg(r, band, seed)
    got = _hessenberg_charpoly(entries, r)
    if got is None:  # the search found no Hessenberg numbering: allowed, but not for a path
        assert band > 1
        return
    want = sym_matrix(dense).charpoly(s).all_coeffs()[::-1]
    assert [sympy.Rational(int(c.p), int(c.q)) for c in got] == want


def test_sparse_charpoly_declines_a_dense_matrix():
    # a full 5 x 5 matrix has no Hessenberg numbering: the dense charpoly is used instead
    flint = pytest.importorskip("flint")
    from handcheck.solve.network import _hessenberg_charpoly

    entries = {i: {j: flint.fmpq(i + 2 * j + 1) for j in range(5)} for i in range(5)}
    assert _hessenberg_charpoly(entries, 5) is None


def test_long_ladder_against_numpy_at_imaginary_frequency():
    # reference library: numpy.linalg.solve in complex128 at s = 7j/10; 24 sections take
    # the sparse characteristic polynomial and the sparse adjugate recursion
    np = pytest.importorskip("numpy")
    G, C, b, out = ladder(24)
    A = np.array(
        [[float(g) + 0.7j * float(c) for g, c in zip(rg, rc, strict=True)] for rg, rc in zip(G, C, strict=True)]
    )
    x = np.linalg.solve(A, np.array([float(v) for v in b], dtype=complex))
    sv = sympy.Rational(7, 10) * sympy.I
    for k, rf in zip([out, 3], solve_rational(G, C, b, unknowns=[out, 3]), strict=True):
        assert complex(rf(sv)) == pytest.approx(x[k], rel=1e-9, abs=1e-14)
    assert solve_rational(G, C, b, unknowns=[out])[0].den.degree() == 48

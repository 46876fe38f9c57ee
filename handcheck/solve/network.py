"""Exact s-domain solution of a linear circuit's nodal system ``(G + s*C) x = b``.

Every unknown of the modified nodal system is returned as a reduced rational
function ``x_k(s) = N_k(s) / D_k(s)`` with exact rational coefficients (or,
when some matrix entry is an algebraic number such as ``sqrt(6)/5``, with
coefficients in the algebraic number field those entries generate).

Method
------
The pencil ``G + s*C`` is brought, with exact constant transformations only,
to the state-space form

    x_k(sigma) = c_k + w_k^T (sigma*I + K)^{-1} g,        K of size r x r,

where ``r = rank(C)``; two variants produce it:

* *Schur route* (tried first).  With the row transform ``P`` and column
  transform ``Q`` read off the reduced row echelon form of ``[C | I]`` one has
  ``P C Q = diag(I_r, 0)``.  If the block ``A22`` of ``A = P G Q`` that meets
  the zero block is invertible, the Schur complement
  ``K = A11 - A12 A22^{-1} A21`` gives the form above with ``sigma = s``
  (Schur complement / Gaussian block elimination: Golub & Van Loan,
  *Matrix Computations*, 4th ed., sec. 3.2 -- from memory).  This is the
  common case (index one: no loop of capacitors and voltage sources, no
  cut set of inductors and current sources -- common practice).
* *Reversal route* (always applies to a regular pencil).  Pick ``s0`` with
  ``M0 = G + s0*C`` invertible (at most ``r + 1`` integers are tried, since
  ``det(G + s*C)`` has degree at most ``r``; if all are singular the
  determinant is identically zero and ``ValueError`` is raised).  With the
  rank factorisation ``C = U R`` (``U`` the pivot columns of ``C``, ``R`` the
  nonzero rows of its echelon form) and ``s = s0 + 1/t`` one gets
  ``K = R M0^{-1} U``, ``sigma = t``; the Sherman-Morrison-Woodbury identity
  gives the form above (Golub & Van Loan, sec. 2.1.4 -- from memory), and
  the polynomials in ``t`` are mapped back by ``p(t) -> (s - s0)^r p(1/(s-s0))``.

Then ``D(sigma) = det(sigma*I + K)`` is a characteristic polynomial, and the
numerators of *all* unknowns come from the vector ``u(sigma) = adj(sigma*I + K) g``,
whose coefficient vectors follow from comparing powers of ``sigma`` in
``(sigma*I + K) u(sigma) = D(sigma) g``:
``u_{r-1} = g``, ``u_{j-1} = d_j g - K u_j`` (the vector form of the
Faddeev-LeVerrier recursion -- from memory); the unused last equation
``K u_0 = d_0 g`` is checked as a certificate.  Finally
``N_k = c_k D + w_k^T u``, and ``gcd(N_k, D)`` is cancelled with ``D`` made monic.

Exactness: all arithmetic is over ``QQ`` (or the algebraic field) with sympy's
``DomainMatrix``; no floating-point number is ever used.

Routes and figures
------------------
Measured on this 2-core machine (python-flint 0.9, sympy 1.14), RLC ladder
of N sections (series R, series L, shunt C; ``3N + 2`` unknowns,
rank(C) = 2N), exact output voltage, N = 64 (194 unknowns, denominator of
degree 128):

* evaluation at 129 integer points with python-flint (exact ``fmpz_mat.det``
  and ``fmpz_mat.solve`` per point, about 44 ms a point) then Lagrange
  interpolation with ``fmpq_poly``: 5.8 s;
* the same per prime with ``nmod_mat`` (multimodular): 0.6 s per 62-bit
  prime for the 129 points, and the coefficients need more than 1000 bits,
  so about 11 s -- rejected;
* ``sympy.linsolve`` then ``cancel``: 2.8-3.1 s; ``Matrix.LUsolve`` then
  ``cancel``: no answer in 60 s already at N = 4;
* **chosen**: the Schur route above with python-flint (sympy's
  ``DomainMatrix`` over ``QQ`` is flint-backed; the characteristic
  polynomial is ``flint.fmpq_mat.charpoly``): 0.20-0.26 s in two runs
  (all 194 unknowns: 0.34 s).  One exact elimination replaces 129, and the Schur complement of
  a ladder stays sparse, which keeps the characteristic polynomial cheap;
  since then, when a breadth-first renumbering makes ``K`` upper Hessenberg of
  small band, the characteristic polynomial comes from the Hessenberg
  recurrence and the adjugate recursion runs on K's nonzero entries in
  integers: at N = 128 (386 unknowns) 0.03 s against 0.84 s for
  ``fmpq_mat.charpoly`` and 0.13 s against 0.43 s for the recursion;
  since then the matrices stay sparse through the whole reduction (only the
  block that is solved goes to python-flint's dense ``fmpq_mat`` and back):
  the reduction, characteristic polynomial, adjugate vectors and the output
  voltage take 0.08 s at N = 64 against 0.24 s with dense flint-backed
  matrices, and 0.22-0.29 s at N = 128 against 1.06 s, most of it having gone
  into converting dense 386 x 386 matrices between sympy and python-flint;
* the same algorithm on the general route (sympy's sparse pure-Python
  matrices and its Berkowitz characteristic polynomial; used for algebraic
  entries or without python-flint): 1.07-1.15 s;
* reversal route (forced by a capacitor across the source, so ``K`` is
  dense): 1.3 s with python-flint, 4.3 s on the general route.

``benchmarks/bench_solve.py`` prints the table for N = 2..64 against both
sympy baselines in one run.
"""

from __future__ import annotations

import time
from collections.abc import Sequence
from fractions import Fraction
from numbers import Integral
from typing import TYPE_CHECKING, Any

from handcheck.solve.pencil import StateSpace, check_deadline, reduce_pencil
from handcheck.solve.rational import RationalFunction, laplace_symbol, number_field, to_sympy_number

if TYPE_CHECKING:  # pragma: no cover - typing only
    from sympy.polys.matrices import DomainMatrix

__all__ = ("NetworkFunctions", "RationalFunction", "laplace_symbol", "prepare_rational", "solve_rational")


def _rows(M: Any, name: str) -> list[list[Any]]:
    """Return a matrix given as nested sequences or sympy Matrix as a list of rows."""
    if hasattr(M, "tolist"):
        M = M.tolist()
    try:
        return [list(r) for r in M]
    except TypeError:
        raise TypeError(f"{name} must be a sequence of rows or a sympy Matrix") from None


def _vector(b: Any) -> list[Any]:
    """Return a vector given flat, as a column of 1-lists, or as a sympy Matrix."""
    if hasattr(b, "tolist"):
        b = b.tolist()
    out = []
    for e in b:
        if isinstance(e, (list, tuple)):
            if len(e) != 1:
                raise ValueError("b must be a vector")
            out.append(e[0])
        else:
            out.append(e)
    return out


def _domain_entries(G: Any, C: Any, b: Any) -> tuple[Any, int, dict, dict, dict]:
    """Convert ``G``, ``C``, ``b`` to the nonzero elements of one exact field.

    Returns
    -------
    tuple
        ``(K, n, G_dod, C_dod, b_dod)``: ``K`` is ``QQ`` when every entry is
        rational, else the field from :func:`number_field`; the matrices
        are dicts ``{row: {col: element}}`` of nonzero entries (``b`` as an
        ``n x 1`` matrix).
    """
    from sympy import QQ, Rational, S

    Gr, Cr, br = _rows(G, "G"), _rows(C, "C"), _vector(b)
    n = len(Gr)
    if n == 0:
        raise ValueError("empty system")
    if any(len(r) != n for r in Gr) or len(Cr) != n or any(len(r) != n for r in Cr):
        raise ValueError("G and C must both be square of the same size")
    if len(br) != n:
        raise ValueError(f"b has {len(br)} entries, expected {n}")

    mats: list[dict] = [{}, {}, {}]
    slow: list[tuple[int, int, int, Any]] = []
    sources = ((0, Gr), (1, Cr), (2, [[e] for e in br]))
    for m, rows in sources:
        dod = mats[m]
        for i, row in enumerate(rows):
            for j, e in enumerate(row):
                t = type(e)
                if e is S.Zero:  # most entries of a large circuit's matrices
                    continue
                if isinstance(e, Rational):
                    dod.setdefault(i, {})[j] = QQ(int(e.p), int(e.q))
                elif t is int:  # exact type test: bool is refused below
                    if e:
                        dod.setdefault(i, {})[j] = QQ(e)
                elif t is Fraction:
                    if e:
                        dod.setdefault(i, {})[j] = QQ(e.numerator, e.denominator)
                elif isinstance(e, Integral) and not isinstance(e, bool):
                    if e:
                        dod.setdefault(i, {})[j] = QQ(int(e))
                else:
                    v = to_sympy_number(e)
                    if not v.is_zero:
                        slow.append((m, i, j, v))
    K = QQ
    irr = list(dict.fromkeys(v for _, _, _, v in slow if not v.is_Rational))
    if irr:
        K, _ = number_field(irr)
        for dod in mats:
            for row in dod.values():
                for j in row:
                    row[j] = K.convert(row[j], QQ)
    for m, i, j, v in slow:
        elem = QQ(int(v.p), int(v.q)) if v.is_Rational else K.from_sympy(v)
        if K is not QQ and v.is_Rational:
            elem = K.convert(elem, QQ)
        if elem:
            mats[m].setdefault(i, {})[j] = elem
    return K, n, mats[0], mats[1], mats[2]


def _det_shifted(Km: DomainMatrix, use_flint: bool) -> list:
    """Coefficients, low to high, of ``det(sigma*I + K)`` (monic, length r+1).

    Uses python-flint's ``fmpq_mat.charpoly`` for ``QQ`` when allowed, else
    sympy's ``DomainMatrix.charpoly`` (Berkowitz's division-free algorithm).
    """
    dom = Km.domain
    r = Km.shape[0]
    if r == 0:
        return [dom.one]
    negK = -Km
    if use_flint and dom.is_QQ:
        import flint

        if dom.dtype is flint.fmpq:
            banded = _hessenberg_charpoly(negK.to_dod(), r)
            if banded is not None:
                return banded
        ent = negK.to_list()
        if dom.dtype is flint.fmpq:
            fm = flint.fmpq_mat(ent)
        else:
            fm = flint.fmpq_mat([[flint.fmpq(int(dom.numer(x)), int(dom.denom(x))) for x in row] for row in ent])
        cf = fm.charpoly().coeffs()
        if dom.dtype is flint.fmpq:
            return list(cf)
        return [dom(int(c.p), int(c.q)) for c in cf]
    return list(reversed(negK.charpoly()))


#: Largest distance above the diagonal for the Hessenberg recurrence (else flint's dense charpoly).
_BAND = 8


def _path_order(entries: dict, r: int) -> list[int]:
    """An ordering of ``0..r-1`` by breadth-first search over the pattern of ``entries``.

    Each component is searched from a vertex of least degree, neighbours taken by
    increasing degree (the Cuthill-McKee ordering: Cuthill and McKee, "Reducing the
    bandwidth of sparse symmetric matrices", Proc. ACM National Conference, 1969,
    from memory). A ladder's state matrix, whose pattern is a path, comes out
    tridiagonal.
    """
    neighbours: list[set[int]] = [set() for _ in range(r)]
    for i, row in entries.items():
        for j in row:
            if i != j:
                neighbours[i].add(j)
                neighbours[j].add(i)
    seen = [False] * r
    order: list[int] = []
    for start in sorted(range(r), key=lambda v: len(neighbours[v])):
        if seen[start]:
            continue
        seen[start] = True
        queue = [start]
        while queue:
            order += queue
            nxt = []
            for v in queue:
                for w in sorted(neighbours[v], key=lambda u: len(neighbours[u])):
                    if not seen[w]:
                        seen[w] = True
                        nxt.append(w)
            queue = nxt
    return order


def _hessenberg_charpoly(entries: dict, r: int) -> list | None:
    """``det(x I - H)`` low to high for a sparse ``H`` (``{row: {col: fmpq}}``), or None.

    The rows and columns are renumbered by :func:`_path_order` (a similarity, so
    the characteristic polynomial is the same). When the result is upper Hessenberg
    with every entry at most ``_BAND`` above the diagonal, the recurrence

        p_0 = 1,  p_m = (x - h_mm) p_{m-1} - sum_{i<m} h_im (h_{i+1,i} ... h_{m,m-1}) p_{i-1}

    gives it exactly in ``O(r * _BAND)`` polynomial operations (H. Cohen, *A Course
    in Computational Algebraic Number Theory*, Springer 1993, sec. 2.2.4, from
    memory), where a dense method costs ``O(r^3)`` operations on large rationals.
    None when the renumbered matrix is not of that shape.
    """
    import flint

    order = _path_order(entries, r)
    place = {v: k for k, v in enumerate(order)}
    H: dict[tuple[int, int], Any] = {}
    for i, row in entries.items():
        for j, value in row.items():
            a, b = place[i], place[j]
            if a - b > 1 or b - a > _BAND:
                return None
            H[a, b] = value
    zero = flint.fmpq(0)
    polys = [flint.fmpq_poly([1])]
    for m in range(r):
        p = flint.fmpq_poly([-H.get((m, m), zero), 1]) * polys[m]
        product = flint.fmpq(1)
        for i in range(m - 1, max(m - _BAND, 0) - 1, -1):
            product *= H.get((i + 1, i), zero)
            if product == 0:
                break
            above = H.get((i, m))
            if above is not None:
                p -= polys[i] * (above * product)
        polys.append(p)
    coeffs = polys[r].coeffs()
    return [*coeffs, *([flint.fmpq(0)] * (r + 1 - len(coeffs)))]


def _adjugate_columns(ss: StateSpace, d: list, deadline: float | None, use_flint: bool = True) -> Any:
    """Coefficient vectors of ``u(sigma) = adj(sigma I + K) g`` as columns (a
    DomainMatrix, or :class:`_IntegerColumns` on the python-flint path).

    Notes
    -----
    Comparing powers of ``sigma`` in ``(sigma I + K) u = D(sigma) g`` gives
    ``u_{r-1} = g`` and ``u_{j-1} = d_j g - K u_j``; the remaining equation
    ``K u_0 = d_0 g`` is checked (certificate of the characteristic
    polynomial against ``g``).
    """
    from sympy.polys.matrices import DomainMatrix

    Km, g = ss.K, ss.g
    r = Km.shape[0]
    if use_flint and _flint_rationals(Km.domain):
        return _adjugate_flint(Km.to_dod(), g.to_dod(), r, d, deadline)
    cols = [None] * r
    u = g
    cols[r - 1] = u
    for j in range(r - 1, 0, -1):
        u = g.mul(d[j]) - Km * u
        cols[j - 1] = u
        if j % 8 == 0:
            check_deadline(deadline, "adjugate recursion")
    if not (Km * u - g.mul(d[0])).is_zero_matrix:
        raise ArithmeticError("characteristic polynomial failed its check K u0 = d0 g")
    return DomainMatrix.hstack(*cols)


def _flint_rationals(dom: Any) -> bool:
    """Whether ``dom`` is sympy's ``QQ`` with python-flint's ``fmpq`` as elements."""
    if not dom.is_QQ:
        return False
    try:
        import flint
    except ImportError:  # pragma: no cover - python-flint is a dependency
        return False
    return dom.dtype is flint.fmpq


def _adjugate_flint(K: dict, gd: dict, r: int, d: list, deadline: float | None) -> _IntegerColumns:
    """:func:`_adjugate_columns` over python-flint's ``fmpq``, in integers.

    ``K`` and ``gd`` are the nonzero entries (``{row: {col: fmpq}}``) of ``K`` and of
    the column ``g``. With ``K = Kz / delta`` and ``g = gz / gamma`` (common
    denominators) the coefficients of ``det(sigma I + K)`` are ``d_j = E_j /
    delta^(r-j)`` with integers ``E_j`` (those of ``det(sigma I + Kz)``), and ``u_j =
    w_j / (delta^(r-1-j) gamma)`` where ``w_{r-1} = gz``, ``w_{j-1} = E_j gz - Kz w_j``:
    the same recursion in integers, multiplying only K's nonzero entries, with one
    division per entry at the end instead of a reduced fraction after every
    operation. The certificate ``Kz w_0 = E_0 gz`` is checked as in
    :func:`_adjugate_columns`.
    """
    import math

    import flint

    g = [gd.get(i, {}).get(0, flint.fmpq(0)) for i in range(r)]
    delta = math.lcm(*(int(e.q) for row in K.values() for e in row.values()), 1)
    gamma = math.lcm(*(int(e.q) for e in g if e != 0), 1)
    rows = [[(c, int(v * delta)) for c, v in sorted(K.get(i, {}).items())] for i in range(r)]
    gz = [int(e * gamma) for e in g]
    E = [d[j] * flint.fmpq(delta) ** (r - j) for j in range(r + 1)]
    if any(e.q != 1 for e in E):  # cannot happen for a characteristic polynomial of K
        raise ArithmeticError("characteristic polynomial is not that of K (a coefficient is no integer)")
    Ez = [int(e.p) for e in E]
    nonzero = [i for i in range(r) if gz[i]]

    def times_k(w: list[int]) -> list[int]:
        return [sum(v * w[c] for c, v in row) for row in rows]

    vectors = [gz]
    for j in range(r - 1, 0, -1):
        nxt = [-x for x in times_k(vectors[-1])]
        for i in nonzero:
            nxt[i] += Ez[j] * gz[i]
        vectors.append(nxt)
        if j % 8 == 0:
            check_deadline(deadline, "adjugate recursion")
    if times_k(vectors[-1]) != [Ez[0] * x for x in gz]:
        raise ArithmeticError("characteristic polynomial failed its check K u0 = d0 g")
    vectors.reverse()  # vectors[j] holds w_j, the coefficient of sigma**j times delta^(r-1-j) gamma
    return _IntegerColumns(vectors, [flint.fmpz(delta) ** (r - 1 - j) * gamma for j in range(r)])


class _IntegerColumns:
    """The adjugate vectors as integers: ``vectors[j]`` divided by ``scale[j]`` is the
    coefficient vector of ``sigma**j`` (made into fractions only for the unknowns
    asked for)."""

    def __init__(self, vectors: list[list[int]], scale: list) -> None:
        self.vectors, self.scale = vectors, scale

    def times(self, row: dict) -> list:
        """``row * U`` for a row given by its nonzero entries ``{col: fmpq}``, as a list of fmpq."""
        import flint

        terms = [(int(v.p), int(v.q), c) for c, v in row.items()]
        out = []
        for w, sc in zip(self.vectors, self.scale, strict=True):
            total = flint.fmpq(0)
            for p, q, c in terms:
                if w[c]:
                    total += flint.fmpq(p * w[c], q)
            out.append(total / sc)
        return out


class NetworkFunctions:
    """The reduced pencil of one right-hand side, ready to give any unknown's ``N_k/D_k``.

    Built by :func:`prepare_rational`: the pencil reduction, the characteristic
    polynomial and the adjugate vectors are computed once for every unknown; each
    :meth:`function` then costs one row times a matrix and one gcd, so a caller that
    needs a few unknowns of a large circuit pays for those few only.
    """

    def __init__(self, ss: StateSpace, d: list, umat: Any, dom: Any, size: int, deadline: float | None) -> None:
        self._ss, self._d, self._umat, self._dom = ss, d, umat, dom
        self._deadline = deadline
        self.size = size
        self.route = ss.route
        self._cache: dict[int, RationalFunction] = {}

    def function(self, k: int) -> RationalFunction:
        """``x_k(s)`` reduced (``D_k`` monic)."""
        from sympy import Poly

        cached = self._cache.get(k)
        if cached is not None:
            return cached
        ss, d, dom = self._ss, self._d, self._dom
        ck = ss.c[k]
        low = [ck * dj for dj in d]  # c_k D(sigma)
        if self._umat is not None:
            row = ss.w_row(k)
            if isinstance(self._umat, _IntegerColumns):
                products = self._umat.times(row.to_dod().get(0, {}))
            else:
                products = (row * self._umat).to_list()[0]
            for j, w in enumerate(products):
                low[j] = low[j] + w
        s = laplace_symbol()
        if ss.shift is None:
            Nk = Poly.from_list(list(reversed(low)), s, domain=dom)
            Dk = Poly.from_list(list(reversed(d)), s, domain=dom)
        else:
            # p(t) -> (s - s0)^r p(1/(s - s0)): reverse the length-(r+1) list, shift
            Nk = Poly.from_list(low, s, domain=dom).shift(-ss.shift)
            Dk = Poly.from_list(list(d), s, domain=dom).shift(-ss.shift)
        result = RationalFunction.reduced(Nk, Dk)
        self._cache[k] = result
        return result


def _prepare(G: Any, C: Any, b: Any, time_limit: float | None, use_flint: bool) -> NetworkFunctions:
    """The pencil reduction of :func:`solve_rational`, for every unknown, numerators not yet formed.

    ``use_flint=False`` forces the general pure-sympy route.
    """
    from sympy.polys.matrices import DomainMatrix

    deadline = None if time_limit is None else time.monotonic() + float(time_limit)
    check_deadline(deadline, "start")
    dom, n, Gd, Cd, bd = _domain_entries(G, C, b)
    if use_flint and dom.is_QQ:
        try:
            import flint  # noqa: F401
        except ImportError:
            use_flint = False
    else:
        use_flint = False
    # sparse throughout: a circuit's matrices are mostly zeros; the blocks that are
    # solved go to python-flint's dense matrices and back (see handcheck.solve.pencil)
    Gm = DomainMatrix(Gd, (n, n), dom)
    Cm = DomainMatrix(Cd, (n, n), dom)
    bm = DomainMatrix(bd, (n, 1), dom)
    check_deadline(deadline, "conversion")

    ss = reduce_pencil(Gm, Cm, bm, range(n), deadline, use_flint)
    d = _det_shifted(ss.K, use_flint)
    check_deadline(deadline, "characteristic polynomial")
    umat = _adjugate_columns(ss, d, deadline, use_flint) if ss.K.shape[0] else None
    return NetworkFunctions(ss, d, umat, dom, n, deadline)


def _solve(
    G: Any,
    C: Any,
    b: Any,
    unknowns: Sequence[int] | None,
    time_limit: float | None,
    use_flint: bool,
) -> tuple[tuple[RationalFunction, ...], str]:
    """Implementation of :func:`solve_rational`; also returns the route name."""
    prepared = _prepare(G, C, b, time_limit, use_flint)
    n = prepared.size
    if unknowns is None:
        sel = list(range(n))
    else:
        sel = []
        for k in unknowns:
            if isinstance(k, bool) or not isinstance(k, Integral):
                raise TypeError(f"unknown index must be an int, got {k!r}")
            if not 0 <= int(k) < n:
                raise IndexError(f"unknown index {k} out of range 0..{n - 1}")
            sel.append(int(k))
    results = []
    for i, k in enumerate(sel):
        results.append(prepared.function(k))
        if i % 16 == 15:
            check_deadline(prepared._deadline, "reduction")
    return tuple(results), prepared.route


def prepare_rational(G: Any, C: Any, b: Any, *, time_limit: float | None = None) -> NetworkFunctions:
    """Reduce ``(G + s*C) x = b`` once; each unknown's rational function on request.

    Same arguments, exceptions and exactness as :func:`solve_rational` (which is
    this followed by :meth:`NetworkFunctions.function` for every unknown wanted).
    """
    return _prepare(G, C, b, time_limit, use_flint=True)


def solve_rational(
    G: Any,
    C: Any,
    b: Any,
    *,
    unknowns: Sequence[int] | None = None,
    time_limit: float | None = None,
) -> tuple[RationalFunction, ...]:
    """Solve ``(G + s*C) x = b`` exactly for rational functions of ``s``.

    Parameters
    ----------
    G, C : sequence of sequences, or sympy Matrix
        Square ``n x n`` matrices.  Entries: ``int``, ``fractions.Fraction``,
        sympy ``Rational``, or exact sympy algebraic numbers (e.g.
        ``sqrt(6)/5``).  Floats are refused with ``TypeError``.
    b : sequence, or sympy column Matrix
        Constant right-hand side of length ``n``, same element kinds.
    unknowns : sequence of int, optional
        Indices of the unknowns wanted, in the order wanted (default: all).
    time_limit : float, optional
        Seconds; ``TimeoutError`` is raised at the first check between
        stages (and between recursion steps) after it has passed.  A single
        library call (an elimination, a characteristic polynomial) is not
        interrupted.

    Returns
    -------
    tuple of RationalFunction
        ``x_k(s) = N_k(s)/D_k(s)`` reduced, ``D_k`` monic, over ``QQ`` for
        rational input, over the algebraic field generated by the entries
        otherwise.

    Raises
    ------
    ValueError
        If ``det(G + s*C)`` is identically zero, or shapes disagree.
    TypeError
        For floats, text or non-numeric entries.
    TimeoutError
        If ``time_limit`` is exceeded.

    Notes
    -----
    Pencil reduction to ``c + W (sigma I + K)^{-1} g``, characteristic
    polynomial of ``K`` and the adjugate-vector recursion; see the module
    docstring for the method, its sources and the measured figures.  With
    python-flint installed, rational systems use it (via sympy's
    ``DomainMatrix`` and ``flint.fmpq_mat.charpoly``); algebraic entries use
    sympy's pure-Python sparse matrices.

    Examples
    --------
    RC low-pass, source 1 V at node 0, R = 2 from node 0 to node 1,
    C = 1/2 from node 1 to ground; unknowns ``(v0, v1, i_source)``:

    >>> from fractions import Fraction as Fr
    >>> G = [[Fr(1, 2), Fr(-1, 2), 1], [Fr(-1, 2), Fr(1, 2), 0], [1, 0, 0]]
    >>> C = [[0, 0, 0], [0, Fr(1, 2), 0], [0, 0, 0]]
    >>> solve_rational(G, C, [0, 0, 1], unknowns=[1])[0].as_expr()
    1/(s + 1)
    """
    return _solve(G, C, b, unknowns, time_limit, use_flint=True)[0]

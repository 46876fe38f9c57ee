"""The pencil ``G + s*C`` brought to a state-space form with exact constant transformations.

The two routes, Schur (tried first) and reversal (for any regular pencil), are
described with their sources in the docstring of :mod:`handcheck.solve.network`,
which uses this form to find every unknown's rational function.
"""

from __future__ import annotations

import time
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # pragma: no cover - typing only
    from sympy.polys.matrices import DomainMatrix

__all__ = ["StateSpace", "check_deadline", "reduce_pencil"]


@dataclass(frozen=True)
class StateSpace:
    """``x_k(sigma) = c_k + W[k] (sigma I + K)^{-1} g`` for the selected unknowns.

    ``shift is None`` means ``sigma = s``; otherwise ``sigma = 1/(s - shift)``.
    """

    K: DomainMatrix
    g: DomainMatrix
    W: DomainMatrix
    c: tuple
    shift: Any
    route: str
    #: Row of ``W`` for each selected unknown (None: row k is unknown k's).
    rows: tuple[int, ...] | None = None

    def w_row(self, k: int) -> DomainMatrix:
        """``W``'s row of the k-th selected unknown, as a 1 x r matrix."""
        i = k if self.rows is None else self.rows[k]
        return self.W[i : i + 1, :]


def check_deadline(deadline: float | None, stage: str) -> None:
    """Raise ``TimeoutError`` if the monotonic clock has passed ``deadline``."""
    if deadline is not None and time.monotonic() >= deadline:
        raise TimeoutError(f"solve_rational: time limit exceeded ({stage})")


def _singular() -> tuple[type[Exception], ...]:
    """Exceptions sympy raises for a singular exact solve."""
    from sympy.polys.matrices.exceptions import DMNonInvertibleMatrixError

    return (DMNonInvertibleMatrixError, ZeroDivisionError)


def _block_solve(A: DomainMatrix, B: DomainMatrix, use_flint: bool) -> DomainMatrix:
    """``A^{-1} B`` exactly, in the format ``A`` came in.

    A sparse block over ``QQ`` is solved by python-flint's dense ``fmpq_mat`` (sympy's
    ``DFM``) and the result made sparse again: the reduction keeps its products sparse
    (a circuit's matrices are mostly zeros), while sympy's own sparse solve goes through
    pure-Python dense elimination (3.1 s for the 130 x 130 block of a 128-section
    ladder against 0.04 s here). Other domains, and ``use_flint=False``, keep sympy's solve.

    Raises
    ------
    DMNonInvertibleMatrixError
        If ``A`` is singular.
    """
    if A.rep.fmt != "sparse" or not use_flint:
        return A.lu_solve(B)
    dense = A.to_dense()
    if not getattr(dense.rep, "is_DFM", False):
        return A.lu_solve(B)
    return dense.lu_solve(B.to_dense()).to_sparse()


@dataclass(frozen=True)
class _Echelon:
    """The reduced row echelon form ``R`` of ``[C | I]`` and what is read off it.

    ``cpiv`` are the pivot columns of ``C`` (``r`` of them, its rank) and
    ``nonpiv`` the other ``m = n - r``; ``P = R[:, n:]`` is the row transform.
    """

    R: DomainMatrix
    cpiv: list[int]
    nonpiv: list[int]
    dense: bool
    #: Whether blocks may be solved by python-flint (see :func:`_block_solve`).
    flint: bool = True

    def like_c(self, M: DomainMatrix) -> DomainMatrix:
        """A block taken from ``R``, made dense when C came dense."""
        return M.to_dense() if self.dense else M

    @property
    def r(self) -> int:
        return len(self.cpiv)

    @property
    def m(self) -> int:
        return len(self.nonpiv)


def reduce_pencil(
    Gm: DomainMatrix,
    Cm: DomainMatrix,
    bm: DomainMatrix,
    sel: Sequence[int],
    deadline: float | None,
    use_flint: bool = True,
) -> StateSpace:
    """Bring ``(G + sC) x = b`` to the state-space form of :class:`StateSpace`.

    Parameters
    ----------
    Gm, Cm : DomainMatrix
        ``n x n`` over a field.
    bm : DomainMatrix
        ``n x 1``.
    sel : sequence of int
        Unknowns wanted.
    deadline : float or None
        ``time.monotonic()`` limit.
    use_flint : bool
        Whether a sparse block over ``QQ`` may be solved by python-flint (False: sympy's
        own solve, the general route).

    Returns
    -------
    StateSpace

    Raises
    ------
    ValueError
        If ``det(G + sC)`` is identically zero.

    Notes
    -----
    Schur route, then reversal route (see the module docstring).
    """
    from sympy.polys.matrices import DomainMatrix

    n = Gm.shape[0]
    # the echelon form of [C | I] on sparse matrices (C of a circuit is mostly zeros);
    # the blocks taken from it are made dense when C came dense
    R, pivots = DomainMatrix.hstack(Cm.to_sparse(), DomainMatrix.eye(n, Gm.domain).to_sparse()).rref()
    cpiv = [p for p in pivots if p < n]
    pivset = set(cpiv)
    ech = _Echelon(R, cpiv, [j for j in range(n) if j not in pivset], Cm.rep.fmt != "sparse", use_flint)
    check_deadline(deadline, "echelon form of C")
    found = _schur_route(Gm, bm, ech, sel, deadline)
    if found is not None:
        return found
    return _reversal_route(Gm, Cm, bm, ech, sel, deadline)


def _schur_route(
    Gm: DomainMatrix, bm: DomainMatrix, ech: _Echelon, sel: Sequence[int], deadline: float | None
) -> StateSpace | None:
    """The Schur-complement form with ``P C Q = diag(I_r, 0)``; None when ``A22`` is singular."""
    from sympy.polys.matrices import DomainMatrix

    K = Gm.domain
    n = Gm.shape[0]
    R, cpiv, nonpiv, r, m = ech.R, ech.cpiv, ech.nonpiv, ech.r, ech.m
    P = ech.like_c(R[:, n:])
    f = P * bm
    Gp = Gm.extract(list(range(n)), cpiv) if r else None
    Gn = Gm.extract(list(range(n)), nonpiv) if m else None
    F = ech.like_c(R.extract(list(range(r)), nonpiv)) if (r and m) else None
    if m == 0:
        Kmat = P * Gp
        W = DomainMatrix.eye(r, K)
        Wrows = {cpiv[i]: i for i in range(r)}
        c_full = {k: K.zero for k in range(n)}
        Wsel = W.extract([Wrows[k] for k in sel], list(range(r)))
        return StateSpace(Kmat, f, Wsel, tuple(c_full[k] for k in sel), None, "schur")

    if r:
        assert Gp is not None and F is not None  # both exist when r > 0 and m > 0
        GQ2 = Gn - Gp * F
    else:
        GQ2 = Gn
    A2 = P * GQ2  # columns of A = P G Q beyond the first r
    A22 = A2[r:, :]
    try:
        if r:
            A1 = P * Gp
            rhs = DomainMatrix.hstack(A1[r:, :], f[r:, :])
        else:
            rhs = f[r:, :]
        Y = _block_solve(A22, rhs, ech.flint)
    except _singular():
        check_deadline(deadline, "Schur complement")
        return None
    check_deadline(deadline, "Schur complement")
    if r == 0:  # no reactive element: x = G^{-1} b, constant
        c_full = {nonpiv[a]: Y[a, 0].element for a in range(m)}
        Wsel = DomainMatrix.zeros((len(sel), 0), K)
        zeros = DomainMatrix.zeros((0, 0), K), DomainMatrix.zeros((0, 1), K)
        return StateSpace(*zeros, Wsel, tuple(c_full[k] for k in sel), None, "schur")
    assert F is not None
    return _schur_form(A1, A2, f, F, Y, ech, sel)


def _schur_form(
    A1: DomainMatrix,
    A2: DomainMatrix,
    f: DomainMatrix,
    F: DomainMatrix,
    Y: DomainMatrix,
    ech: _Echelon,
    sel: Sequence[int],
) -> StateSpace:
    """``K = A11 - A12 Y1`` and the rows of the selected unknowns, from ``Y = A22^{-1} [A21 | f2]``."""
    from sympy.polys.matrices import DomainMatrix

    r, cpiv, nonpiv = ech.r, ech.cpiv, ech.nonpiv
    Y1 = Y[:, :r]
    y2c = Y[:, r:]
    A12 = A2[:r, :]
    Kmat = A1[:r, :] - A12 * Y1
    g = f[:r, :] - A12 * y2c
    # x[piv] = (I + F Y1) y1 - F y2c ; x[nonpiv] = -Y1 y1 + y2c
    Wp = DomainMatrix.eye(r, A1.domain) + F * Y1
    Fy = F * y2c
    # the selected rows are looked up in [Wp; -Y1] through `order` when asked for,
    # the constants read from one list each (slicing a row per unknown here cost
    # 1 ms each in conversions)
    where = {k: i for i, k in enumerate(cpiv)} | {k: r + a for a, k in enumerate(nonpiv)}
    order = [where[k] for k in sel]
    both = DomainMatrix.vstack(Wp, -Y1)  # rows looked up through `order`, never copied
    fy, yc = [row[0] for row in Fy.to_list()], [row[0] for row in y2c.to_list()]
    cs = [-fy[i] if i < r else yc[i - r] for i in order]
    return StateSpace(Kmat, g, both, tuple(cs), None, "schur", tuple(order))


def _reversal_route(
    Gm: DomainMatrix,
    Cm: DomainMatrix,
    bm: DomainMatrix,
    ech: _Echelon,
    sel: Sequence[int],
    deadline: float | None,
) -> StateSpace:
    """The form in ``t = 1/(s - s0)`` at the first integer ``s0`` where ``G + s0 C`` is regular."""
    from sympy.polys.matrices import DomainMatrix

    K = Gm.domain
    n, r = Gm.shape[0], ech.r
    if r == 0:
        raise ValueError("det(G + sC) is identically zero: C = 0 and G is singular")
    U = Cm.extract(list(range(n)), ech.cpiv)
    Rt = ech.like_c(ech.R[:r, :n])
    rhs = DomainMatrix.hstack(U, bm)
    Z = None
    s0 = 0
    for i in range(r + 1):  # deg det(G + sC) <= r: r+1 zeros mean det == 0
        s0 = (i + 1) // 2 * (1 if i % 2 else -1)
        M0 = Gm + Cm.mul(K.convert(s0)) if s0 else Gm
        try:
            Z = _block_solve(M0, rhs, ech.flint)
            break
        except _singular():
            check_deadline(deadline, "search for a regular point")
            continue
    if Z is None:
        raise ValueError("det(G + sC) is identically zero (the system is singular for every s)")
    check_deadline(deadline, "reversal solve")
    Zu = Z[:, :r]
    zb = Z[:, r:]
    Kmat = Rt * Zu
    g = Rt * zb
    Wsel = -Zu.extract(list(sel), list(range(r)))
    return StateSpace(Kmat, g, Wsel, tuple(zb[k, 0].element for k in sel), s0, "reversal")

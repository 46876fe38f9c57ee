"""Reduce a linear descriptor system ``E z' = F z`` to state equations.

For a regular pencil ``s E - F`` the state space splits into two subspaces
(Weierstrass form): ``V*``, where the solutions live and move by ordinary
differential equations, and ``W*``, which belongs to the infinite eigenvalues and
carries no motion. Both are limits of the Wong sequences

    V_0 = R^n,  V_{k+1} = F^-1(E V_k)   (preimage),
    W_0 = {0},  W_{k+1} = E^-1(F W_k),

(Wong, "The eigenvalue problem lambda T x + S x", J. Differential Equations 16,
1974; Berger, Ilchmann and Trenn, "The quasi-Kronecker form for matrix pencils",
SIAM J. Matrix Anal. Appl. 33, 2012; both from memory). With ``Z`` a basis of
``V*`` the solutions are ``z = Z q`` with ``q' = A q``, ``E Z A = F Z``. A state
``z0`` that is not consistent (just after a switch or a jump of a source) moves
at once to ``Pi z0``, the projection onto ``V*`` along ``W*``; this is the
distributional solution's jump (Trenn, "Distributional differential algebraic
equations", PhD thesis, TU Ilmenau, 2009, from memory). For index 1 it keeps
``E z`` (the capacitor charges and inductor fluxes) unchanged.

The common index-1 case is done with one singular value decomposition of ``E``
(the semi-explicit reduction found in Brenan, Campbell and Petzold, "Numerical
Solution of Initial-Value Problems in Differential-Algebraic Equations", SIAM
1996, ch. 2, from memory); higher index falls back to the Wong sequences.
Rows and columns are first equilibrated (Ruiz, "A scaling algorithm to equilibrate
both rows and columns norms in matrices", RAL-TR-2001-034, from memory), and rank
decisions are made on row-normalised copies, so that a 1 pF capacitor next to a
1 H inductor is not mistaken for a zero.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from handcheck.errors import CircuitError

__all__ = ["Reduction", "reduce_pencil"]

#: Relative size below which a singular value counts as zero.
RANK_TOLERANCE = 1e-10


@dataclass(frozen=True)
class Reduction:
    """State equations of a descriptor system.

    Attributes
    ----------
    Z : ndarray, shape (n, d)
        Consistent states are ``z = Z q``.
    A : ndarray, shape (d, d)
        ``q' = A q``.
    P : ndarray, shape (d, n)
        ``q = P z0`` is the consistent state reached at once from ``z0``.
    index : int
        The index of the pencil (0 for an ordinary differential equation).
    """

    Z: np.ndarray
    A: np.ndarray
    P: np.ndarray
    index: int


def _pow2(x: np.ndarray) -> np.ndarray:
    return np.exp2(np.round(np.log2(x)))


def _equilibrate(E: np.ndarray, F: np.ndarray, sweeps: int = 12) -> tuple[np.ndarray, np.ndarray]:
    """Row and column scalings (powers of two) that bring |F| + sigma |E| to unit maxima."""
    absE, absF = np.abs(E), np.abs(F)
    nzE, nzF = absE[absE > 0], absF[absF > 0]
    sigma = float(np.exp(np.mean(np.log(nzF)) - np.mean(np.log(nzE)))) if nzE.size and nzF.size else 1.0
    M = absF + sigma * absE
    n = M.shape[0]
    r, c = np.ones(n), np.ones(n)
    for _ in range(sweeps):
        scaled = M * r[:, None] * c[None, :]
        rows = scaled.max(axis=1)
        cols = scaled.max(axis=0)
        rows[rows == 0] = 1.0
        cols[cols == 0] = 1.0
        r = r / np.sqrt(rows)
        c = c / np.sqrt(cols)
    return _pow2(r), _pow2(c)


def _row_normalised(M: np.ndarray, floor: float) -> np.ndarray:
    """M with every row of norm above ``floor * max`` scaled to norm 1, the rest zeroed."""
    norms = np.linalg.norm(M, axis=1)
    top = norms.max(initial=0.0)
    if top == 0.0:
        return np.zeros_like(M)
    keep = norms > floor * top
    out = np.zeros_like(M)
    out[keep] = M[keep] / norms[keep, None]
    return out


def _null(M: np.ndarray, tol: float) -> np.ndarray:
    """Orthonormal basis of the kernel of M (rank decided on the row-normalised matrix)."""
    n = M.shape[1]
    if M.shape[0] == 0:
        return np.eye(n)
    N = _row_normalised(M, tol)
    _, s, vt = np.linalg.svd(N)
    rank = int(np.sum(s > tol * max(s[0], 1e-300))) if s.size else 0
    return vt[rank:].T.copy()


def _range(M: np.ndarray, tol: float) -> np.ndarray:
    """Orthonormal basis of the column space of M."""
    if M.shape[1] == 0:
        return np.zeros((M.shape[0], 0))
    norms = np.linalg.norm(M, axis=0)
    top = norms.max(initial=0.0)
    if top == 0.0:
        return np.zeros((M.shape[0], 0))
    keep = norms > tol * top
    cols = M[:, keep] / norms[keep]
    u, s, _ = np.linalg.svd(cols, full_matrices=False)
    rank = int(np.sum(s > tol * s[0]))
    return u[:, :rank]


def _preimage(M: np.ndarray, U: np.ndarray, tol: float) -> np.ndarray:
    """Basis of {z : M z in range(U)} for an orthonormal U."""
    n = M.shape[0]
    if U.shape[1] == 0:
        return _null(M, tol)
    if U.shape[1] >= n:
        return np.eye(M.shape[1])
    q, _ = np.linalg.qr(U, mode="complete")
    complement = q[:, U.shape[1] :]
    return _null(complement.T @ M, tol)


def _wong(E: np.ndarray, F: np.ndarray, tol: float) -> tuple[np.ndarray, np.ndarray, int]:
    n = E.shape[0]
    V = np.eye(n)
    for _ in range(n + 1):
        nxt = _preimage(F, _range(E @ V, tol), tol)
        if nxt.shape[1] >= V.shape[1]:
            break
        V = nxt
    W = _null(E, tol)
    index = 1 if W.shape[1] else 0
    for _ in range(n + 1):
        nxt = _preimage(E, _range(F @ W, tol), tol)
        if nxt.shape[1] <= W.shape[1]:
            break
        W = nxt
        index += 1
    return V, W, index


def reduce_pencil(E: np.ndarray, F: np.ndarray, *, general: bool = False, what: str = "the circuit") -> Reduction:
    """State equations ``q' = A q`` for ``E z' = F z``.

    Parameters
    ----------
    E, F : ndarray, shape (n, n)
        The descriptor system.
    general : bool
        Skip the index-1 shortcut and use the Wong sequences (for testing).
    what : str
        How to name the system in an error message.

    Raises
    ------
    CircuitError
        If the pencil is singular (no unique solution) or could not be split.
    """
    n = E.shape[0]
    if n == 0:
        return Reduction(np.zeros((0, 0)), np.zeros((0, 0)), np.zeros((0, 0)), 0)
    r, c = _equilibrate(E, F)
    Es = E * r[:, None] * c[None, :]
    Fs = F * r[:, None] * c[None, :]
    tol = RANK_TOLERANCE

    result = None if general else _index_one(Es, Fs, tol)
    if result is None:
        V, W, index = _wong(Es, Fs, tol)
        if V.shape[1] + W.shape[1] != n:
            raise CircuitError(
                f"{what} has no unique time response: its equations do not fix every voltage and current "
                f"({V.shape[1]} free states and {W.shape[1]} fixed directions in {n} unknowns)"
            )
        T = np.hstack([V, W])
        if np.linalg.cond(T) > 1e10:
            raise CircuitError(f"{what} is too close to having no unique time response to be integrated reliably")
        A, *_ = np.linalg.lstsq(Es @ V, Fs @ V, rcond=None)
        P = np.linalg.inv(T)[: V.shape[1]]
        Zs = V
    else:
        Zs, A, P, index = result
    scale = max(np.linalg.norm(Fs @ Zs), np.linalg.norm(Es @ Zs) * max(np.abs(A).max(initial=0.0), 1.0), 1e-300)
    if Zs.shape[1] and np.linalg.norm(Es @ Zs @ A - Fs @ Zs) > 1e-8 * scale:
        raise CircuitError(f"{what}: the reduction to state equations failed its own check; please report this circuit")
    return Reduction(Zs * c[:, None], A, P * (1.0 / c)[None, :], index)


def _index_one(Es: np.ndarray, Fs: np.ndarray, tol: float) -> tuple[np.ndarray, np.ndarray, np.ndarray, int] | None:
    """The semi-explicit reduction, or None when the pencil is not of index 0 or 1."""
    n = Es.shape[0]
    norms = np.linalg.norm(Es, axis=1)
    d = np.where(norms > 0, 1.0 / np.where(norms > 0, norms, 1.0), 1.0)
    Es, Fs = Es * d[:, None], Fs * d[:, None]  # rank of E decided with every row of E at unit size
    u, s, vt = np.linalg.svd(Es)
    rank = int(np.sum(s > tol * s[0])) if s.size and s[0] > 0 else 0
    if rank == n:
        return np.eye(n), np.linalg.solve(Es, Fs), np.eye(n), 0
    u1, u2 = u[:, :rank], u[:, rank:]
    v1, v2 = vt[:rank].T, vt[rank:].T
    F11, F12 = u1.T @ Fs @ v1, u1.T @ Fs @ v2
    F21, F22 = u2.T @ Fs @ v1, u2.T @ Fs @ v2
    sv = np.linalg.svd(F22, compute_uv=False)
    if sv.size == 0 or sv[-1] <= 1e3 * tol * sv[0]:
        return None
    K = -np.linalg.solve(F22, F21)
    A = (F11 + F12 @ K) / s[:rank, None]
    Z = v1 + v2 @ K
    return Z, A, v1.T.copy(), 1

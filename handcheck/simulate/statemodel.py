"""The circuit and its sources as state equations, and how the state is stepped.

The circuit equations ``E x' + G x = B u(t)`` (:mod:`.assemble`) are joined by the
sources' own generator ``w' = S w``, ``u = H w`` (:mod:`.generators`), which makes
the whole system homogeneous, and reduced to state equations ``q' = A q`` with
``q = (xi, w)`` (:mod:`.reduce`). Between breakpoints the state moves exactly by
``q(t + h) = expm(A h) q(t)`` (the exact discretisation of a linear time-invariant
system: Van Loan, "Computing integrals involving the matrix exponential", IEEE Trans.
Automat. Control 23, 1978, from memory; the matrix exponential by scaling and
squaring with Pade approximants: Al-Mohy and Higham, SIAM J. Matrix Anal. Appl. 31,
2009, as implemented in ``scipy.linalg.expm``), in split coordinates when it can be
(:class:`Propagation`; the Sylvester equation by Bartels-Stewart as in
``scipy.linalg.solve_sylvester``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from handcheck.circuit.model import Circuit
from handcheck.errors import CircuitError
from handcheck.simulate.assemble import Equations, assemble
from handcheck.simulate.generators import Exosystem, exo_step, exosystem
from handcheck.simulate.reduce import reduce_pencil

__all__ = ["Propagation", "StateModel", "propagation", "readonly", "slowest_rate", "state_model"]


def readonly(array: np.ndarray) -> np.ndarray:
    """The array, made read-only (returned for chaining)."""
    array.setflags(write=False)
    return array


@dataclass(frozen=True)
class StateModel:
    """The circuit after t = 0 as state equations ``q' = A q``, ``q = (xi, w)``.

    Attributes
    ----------
    equations : Equations
        The circuit equations (switches as after t = 0).
    exo : Exosystem
        The sources' generator.
    X : ndarray, shape (n, d)
        Unknowns of the circuit equations from the state: ``x = X q``.
    A : ndarray, shape (d, d)
        Block upper triangular: ``[[A_c, K], [0, S]]``.
    P : ndarray, shape (d, n + nw)
        Consistent state from any ``(x, w)``: ``q = P (x, w)``.
    modes : ndarray of complex
        The natural modes: eigenvalues of ``A_c`` (1/s), sorted by real part.
    index : int
        Index of the circuit's descriptor system.
    """

    equations: Equations
    exo: Exosystem
    X: np.ndarray
    A: np.ndarray
    P: np.ndarray
    modes: np.ndarray
    index: int

    @property
    def circuit_states(self) -> int:
        return self.A.shape[0] - self.exo.size

    def consistent(self, x: np.ndarray, w: np.ndarray) -> np.ndarray:
        """The state reached at once from circuit unknowns ``x`` and source states ``w``."""
        return self.P @ np.concatenate([x, w])


def state_model(circuit: Circuit) -> StateModel:
    """Reduce the circuit (switches as after t = 0) and its sources to state equations.

    Raises
    ------
    CircuitError
        If the circuit has no unique time response.
    """
    eq = assemble(circuit, switches="after")
    exo = exosystem(circuit)
    n, nw = eq.size, exo.size
    E = np.zeros((n + nw, n + nw))
    F = np.zeros((n + nw, n + nw))
    E[:n, :n] = eq.E
    E[n:, n:] = np.eye(nw)
    F[:n, :n] = -eq.G
    F[:n, n:] = eq.B @ exo.H
    F[n:, n:] = exo.S
    red = reduce_pencil(E, F, what=f"the circuit of {circuit.path}")
    Z, A, P = red.Z, red.A, red.P
    d = A.shape[0]
    dc = d - nw
    if nw:
        Zw = Z[n:]
        u, s, vt = np.linalg.svd(Zw)
        if s.size < nw or s[-1] <= 1e-10 * s[0]:
            raise CircuitError(
                "the sources could not be separated from the circuit's own states; please report this circuit"
            )
        T = np.hstack([vt[nw:].T, vt[:nw].T @ (u.T / s[:, None])])
        Tinv = np.linalg.inv(T)
        Z, A, P = Z @ T, Tinv @ A @ T, Tinv @ P
        A[dc:, :dc] = 0.0
        A[dc:, dc:] = exo.S
        P[dc:] = 0.0
        P[dc:, n:] = np.eye(nw)
    modes = np.linalg.eigvals(A[:dc, :dc]) if dc else np.zeros(0, complex)
    # a mode below 1e-12 of the circuit's own rate scale is a mode at s = 0 (rounding
    # leaves it at about 1e-16 of the other modes); report it as exactly 0
    reference = max(float(np.max(np.abs(modes), initial=0.0)), _rate_scale(eq))
    modes[np.abs(modes) <= 1e-12 * reference] = 0.0
    modes = modes[np.lexsort((modes.imag, modes.real))]
    return StateModel(eq, exo, readonly(Z[:n].copy()), readonly(A), readonly(P), readonly(modes), red.index)


def _rate_scale(eq: Equations) -> float:
    """A typical rate (1/s) of the circuit: geometric mean of |G| over that of |E| entries."""
    e, g = np.abs(eq.E[eq.E != 0]), np.abs(eq.G[eq.G != 0])
    if not e.size or not g.size:
        return 1.0
    return float(np.exp(np.mean(np.log(g)) - np.mean(np.log(e))))


def _classify(modes: np.ndarray) -> tuple[list[complex], list[complex], list[complex]]:
    """Split modes into (decaying, held at s = 0, undamped or growing)."""
    decaying, held, lasting = [], [], []
    for mode in modes:
        size = abs(mode)
        if size == 0:
            held.append(complex(mode))
        elif mode.real < -1e-9 * size:
            decaying.append(complex(mode))
        else:
            lasting.append(complex(mode))
    return decaying, held, lasting


def slowest_rate(
    modes: np.ndarray, omega: float, damping: list[float]
) -> tuple[float, complex | None, list[complex], list[complex]]:
    """The slowest decay rate (1/s) of the natural modes and damped sources."""
    decaying, held, lasting = _classify(modes)
    slowest: complex | None = None
    rate = math.inf
    for mode in decaying:
        if -mode.real < rate:
            rate, slowest = -mode.real, mode
    for a in damping:
        if 0 < a < rate:
            rate, slowest = a, complex(-a, 0.0)
    return rate, slowest, held, lasting


@dataclass(frozen=True)
class Propagation:
    """How the state is stepped: ``q = T r``, ``r(t + dt) = phi(dt) r(t)``.

    When no natural mode coincides with a mode of the sources, ``T`` splits the
    state into the transient ``xi - X w`` and the sources ``w``, where ``X`` solves
    the Sylvester equation ``A_c X - X S = -K`` (so ``X w`` is the forced, steady
    response). The two halves then move independently, by ``expm(A_c dt)`` and by
    the closed form of :func:`exo_step`, and rounding in the circuit's exponential
    touches only the decaying transient. Otherwise (a circuit mode at a source
    mode: an integrator fed a constant, a lossless resonance at the drive
    frequency) ``T`` is the identity and the whole matrix is exponentiated, with the
    sources' block replaced by its closed form.
    """

    T: np.ndarray
    Tinv: np.ndarray
    decoupled: bool
    model: StateModel

    def phi(self, dt: float) -> np.ndarray:
        from scipy.linalg import expm

        model = self.model
        dc = model.circuit_states
        if self.decoupled:
            out = np.zeros_like(model.A)
            out[:dc, :dc] = expm(model.A[:dc, :dc] * dt)
        else:
            out = expm(model.A * dt)
            out[dc:, :dc] = 0.0
        out[dc:, dc:] = exo_step(model.exo, dt)
        return out


#: Source states up to which the Sylvester equation is solved column by column.
FEW_SOURCE_STATES = 8


def _sylvester_few(Ac: np.ndarray, S: np.ndarray, K: np.ndarray) -> np.ndarray:
    """``X`` with ``Ac X - X S = -K`` for a small ``S``, by the Schur form of ``S`` alone.

    With ``S = W T W^H`` (complex Schur form, ``T`` upper triangular) and ``Y = X W``,
    column j of ``Y`` solves ``(Ac - T_jj I) y_j = -(K W)_j + sum_{i<j} T_ij y_i``:
    the Bartels-Stewart method (Bartels and Stewart, "Solution of the matrix
    equation AX + XB = C", Comm. ACM 15, 1972, from memory) with the Schur
    reduction of the large ``Ac`` replaced by one LU solve per source state,
    which is several times cheaper while ``S`` has only a few states.
    """
    from scipy.linalg import schur

    T, W = schur(S.astype(complex), output="complex")
    rhs = -(K @ W)
    Y = np.zeros(rhs.shape, dtype=complex)
    eye = np.eye(Ac.shape[0])
    for j in range(T.shape[0]):
        Y[:, j] = np.linalg.solve(Ac - T[j, j] * eye, rhs[:, j] + Y[:, :j] @ T[:j, j])
    return (Y @ W.conj().T).real


def propagation(model: StateModel, horizon: float) -> Propagation:
    """Choose the stepping coordinates for a state model (see :class:`Propagation`).

    The split is used only when every circuit mode is far from every source mode,
    both relatively and over the ``horizon`` (s) of the run: the forced response
    ``X w`` grows as ``1/gap``, and its cancellation against the transient would
    cost ``eps / (gap * horizon)`` of the answer.
    """
    d, dc = model.A.shape[0], model.circuit_states
    eye = np.eye(d)
    K = model.A[:dc, dc:]
    if dc in (0, d) or not np.any(K):
        return Propagation(eye, eye, True, model)
    from scipy.linalg import solve_sylvester

    S = model.A[dc:, dc:]
    source_modes = np.linalg.eigvals(S)
    scale = max(float(np.max(np.abs(model.modes))), float(np.max(np.abs(source_modes))), 1e-300)
    gap = float(np.min(np.abs(model.modes[:, None] - source_modes[None, :])))
    if gap > 1e-10 * scale and gap * horizon > 1e-2:
        Ac = model.A[:dc, :dc]
        X = _sylvester_few(Ac, S, K) if S.shape[0] <= FEW_SOURCE_STATES else solve_sylvester(Ac, -S, -K)
        residual = np.linalg.norm(Ac @ X - X @ S + K)
        if np.all(np.isfinite(X)) and residual <= 1e-9 * (np.linalg.norm(Ac) * np.linalg.norm(X) + np.linalg.norm(K)):
            T, Tinv = eye.copy(), eye.copy()
            T[:dc, dc:] = X
            Tinv[:dc, dc:] = -X
            return Propagation(T, Tinv, True, model)
    return Propagation(eye, eye, False, model)

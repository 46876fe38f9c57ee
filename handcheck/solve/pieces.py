"""Pieces of a waveform between its delays, and the root search on them.

On each interval between delays a waveform is a sum of groups
``exp(p u) * sum_j a_j u**j`` in the local time ``u``. Extremes are found by
sampling the derivative on a grid finer than a tenth of the fastest live time scale
and refining every sign change in mpmath by the Illinois variant of regula falsi
(Dahlquist and Bjorck, *Numerical Methods*, 1974, sec. 6.2, from memory). Floating
point numbers only place the grid and choose brackets.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from typing import Any

from handcheck.errors import LimitError

__all__ = [
    "DIGITS",
    "FloatGroups",
    "Group",
    "Segment",
    "derivative_groups",
    "fade_time",
    "group_value",
    "illinois_root",
    "log_magnitude",
    "log_size",
    "sample_grid",
    "shift_group",
    "sign_change_brackets",
]

#: Significant digits every reported number carries at least.
DIGITS = 30

_MAX_SAMPLES = 4_000_000  # grid points per analysis, in total
_NEGLIGIBLE = 1e-22  # a term below this fraction of the waveform's size no longer sets the grid


@dataclass(frozen=True)
class Group:
    """``exp(p u) * sum_j coeffs[j] u**j`` in the local time ``u = t - start``."""

    pole: Any  # mpmath.mpc
    coeffs: tuple[Any, ...]  # mpmath.mpc
    real_sign: int
    imag_sign: int


@dataclass(frozen=True)
class Segment:
    start: Any  # mpmath.mpf
    end: Any  # mpmath.mpf or None for the last (unbounded) piece
    groups: tuple[Group, ...]


def shift_group(group: Group, delta: Any) -> Group:
    """The same function written in the local time of a start later by ``delta``."""
    import mpmath

    p, a = group.pole, group.coeffs
    scale = mpmath.exp(p * delta)
    new = []
    for j in range(len(a)):
        acc = mpmath.mpc(0)
        for m in range(j, len(a)):
            acc += a[m] * math.comb(m, j) * delta ** (m - j)
        new.append(acc * scale)
    return Group(p, tuple(new), group.real_sign, group.imag_sign)


def group_value(groups: tuple[Group, ...], u: Any, order: int = 0) -> Any:
    """Sum of the groups (or their ``order``-th derivative) at local time ``u``, in mpmath."""
    import mpmath

    total = mpmath.mpc(0)
    for g in groups:
        coeffs = list(g.coeffs)
        for _ in range(order):
            coeffs = [
                g.pole * coeffs[j] + ((j + 1) * coeffs[j + 1] if j + 1 < len(coeffs) else 0) for j in range(len(coeffs))
            ]
        poly = mpmath.mpc(0)
        for c in reversed(coeffs):
            poly = poly * u + c
        total += poly * mpmath.exp(g.pole * u)
    return total


def derivative_groups(groups: tuple[Group, ...], order: int) -> tuple[Group, ...]:
    out = []
    for g in groups:
        coeffs = list(g.coeffs)
        for _ in range(order):
            coeffs = [
                g.pole * coeffs[j] + ((j + 1) * coeffs[j + 1] if j + 1 < len(coeffs) else 0) for j in range(len(coeffs))
            ]
        out.append(Group(g.pole, tuple(coeffs), g.real_sign, g.imag_sign))
    return tuple(out)


class FloatGroups:
    """The groups in double precision, for placing grids and choosing brackets only."""

    def __init__(self, groups: tuple[Group, ...]) -> None:
        import numpy as np

        self.poles = np.array([complex(g.pole) for g in groups], dtype=complex)
        width = max((len(g.coeffs) for g in groups), default=1)
        self.coeffs = np.zeros((len(groups), width), dtype=complex)
        for i, g in enumerate(groups):
            for j, c in enumerate(g.coeffs):
                self.coeffs[i, j] = complex(c)

    def __call__(self, u: Any) -> Any:
        import numpy as np

        u = np.asarray(u, dtype=float)
        total = np.zeros(u.shape, dtype=complex)
        with np.errstate(over="raise", invalid="raise"):
            try:
                for i in range(len(self.poles)):
                    poly = np.zeros(u.shape, dtype=complex)
                    for c in self.coeffs[i, ::-1]:
                        poly = poly * u + c
                    total += poly * np.exp(self.poles[i] * u)
            except FloatingPointError:
                raise LimitError(
                    "the waveform grows beyond the floating-point range inside the time window; "
                    "ask for a shorter window"
                ) from None
        return total.real


def log_magnitude(g: Group, u: float) -> float:
    """log of ``sum |a_j| u**j * exp(Re(p) u)`` (a bound on the group's size)."""
    return log_size([abs(complex(c)) for c in g.coeffs], float(g.pole.real), u)


def log_size(mags: list[float], rate: float, u: float) -> float:
    mag = 0.0
    for j, c in enumerate(mags):
        mag += c * (u**j if u > 0 else (1.0 if j == 0 else 0.0))
    if mag == 0.0:
        return -math.inf
    return math.log(mag) + rate * u


def fade_time(g: Group, level: float) -> float:
    """Local time after which a decaying group stays below ``exp(level)`` (a bound)."""
    alpha = -float(g.pole.real)
    if alpha <= 0:
        return math.inf
    mags = [abs(complex(c)) for c in g.coeffs]
    k = len(mags) - 1
    u = max(k / alpha, 0.0)  # beyond its hump, u**j exp(-alpha u) decreases for every j <= k
    if log_size(mags, -alpha, u) <= level:
        return u
    hi = max(u, 1.0 / alpha)
    while log_size(mags, -alpha, hi) > level:
        hi *= 2.0
        if hi > 1e300:
            return math.inf
    lo = u
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if log_size(mags, -alpha, mid) > level:
            lo = mid
        else:
            hi = mid
        if hi - lo <= 1e-9 * hi:
            break
    return hi


def sample_grid(groups: tuple[Group, ...], length: float, scale: float) -> Any:
    """Local times on ``[0, length]``, finer than a tenth of every live time scale."""
    import numpy as np

    level = math.log(scale * _NEGLIGIBLE) if scale > 0 else -math.inf
    fade = [fade_time(g, level) for g in groups]
    fades = sorted({0.0, length, *(min(f, length) for f in fade)})
    pieces = []
    total = 0
    for a, b in itertools.pairwise(fades):
        if b <= a:
            continue
        live = [g for g, f in zip(groups, fade, strict=True) if f > a and complex(g.pole) != 0]
        rates = [abs(complex(g.pole)) for g in live]
        h = 0.1 / max(rates) if rates else (b - a) / 64
        n = max(math.ceil((b - a) / h) + 1, 17)
        total += n
        if total > _MAX_SAMPLES:
            raise LimitError(
                "the waveform needs more than "
                f"{_MAX_SAMPLES} samples to search for its extremes (time scales too far apart, or a "
                "window of very many periods); ask for a shorter window"
            )
        pieces.append(np.linspace(a, b, n))
    if not pieces:
        return np.array([0.0, length])
    return np.unique(np.concatenate(pieces))


def illinois_root(fun: Any, a: Any, b: Any, fa: Any, fb: Any) -> Any:
    """A root of ``fun`` in ``[a, b]`` where ``fa`` and ``fb`` differ in sign (mpmath)."""
    import mpmath

    tol = mpmath.mpf(10) ** (-(DIGITS + 8)) * max(abs(a), abs(b), mpmath.mpf(10) ** -30)
    side = 0
    for _ in range(400):
        if fa == 0:
            return a
        if fb == 0:
            return b
        c = b - fb * (b - a) / (fb - fa)
        if not (min(a, b) < c < max(a, b)):
            c = (a + b) / 2
        fc = fun(c)
        if fc == 0:
            return c
        if (fc > 0) == (fb > 0):
            b, fb = c, fc
            if side == -1:
                fa /= 2
            side = -1
        else:
            a, fa = c, fc
            if side == 1:
                fb /= 2
            side = 1
        if abs(b - a) <= tol:
            break
    return b if abs(fb) < abs(fa) else a


def sign_change_brackets(values: Any) -> list[int]:
    """Indices i with a sign change (or an exact zero) between samples i and i+1."""
    import numpy as np

    s = np.sign(values)
    idx = np.nonzero((s[:-1] * s[1:] < 0) | (s[1:] == 0))[0]
    return [int(i) for i in idx]

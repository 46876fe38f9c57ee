"""The circuit: frozen parts with exact values.

Sign convention for every part (worksheet format 1): current enters ``nodes[0]`` and
leaves ``nodes[1]``; the part's voltage is v(nodes[0]) - v(nodes[1]); power absorbed
is positive.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import sympy

from handcheck.worksheet.model import PhasorConvention

__all__ = ["GROUND", "Circuit", "Part", "Shape", "Source", "Start"]

Start = Literal["rest", "steady"]

GROUND = "gnd"


Shape = Literal["constant", "sine", "step", "pulse", "points"]


@dataclass(frozen=True)
class Source:
    """An independent source's waveform.

    ``peak`` is the amplitude: the peak of a sinusoid ``peak*cos(omega*t + phase)``,
    the value of a constant or step, the high level of a pulse train. ``omega`` is
    None for every shape but "sine". ``rms_written`` records that the amplitude was
    written as an rms value.

    Time-domain keys (all exact, in SI units; see docs/transients.md). With
    tau = t - delay, a source is zero before ``delay`` when the circuit starts from
    rest, and from ``delay`` on it is:

    - "constant", "step": ``offset + peak``;
    - "sine": ``offset + peak*exp(-damping*tau)*cos(omega*tau + phase)``;
    - "pulse": ``offset + low`` plus ``peak - low`` times a trapezoid train: rising
      over ``rise`` from tau = k*period, high for ``width`` (measured from the end of
      the rise), falling over ``fall``;
    - "points": ``offset`` plus the straight-line interpolation of ``points``
      (time, value) pairs (time measured from ``delay``), holding the last value.

    A "step" differs from a "constant" only when the circuit starts in its own steady
    state: a constant source was on before t = 0, a step sat at ``offset + low``
    until ``delay``. In a steady start, constant and undamped sinusoidal sources run
    for all time (a delay only shifts a sinusoid's phase) and ``initial`` values are
    not used.
    """

    peak: sympy.Expr
    omega: sympy.Expr | None = None
    phase: sympy.Expr = sympy.Integer(0)
    rms_written: bool = False
    shape: Shape = "constant"
    offset: sympy.Expr = sympy.Integer(0)
    delay: sympy.Expr = sympy.Integer(0)
    damping: sympy.Expr = sympy.Integer(0)
    low: sympy.Expr = sympy.Integer(0)
    width: sympy.Expr | None = None
    period: sympy.Expr | None = None
    rise: sympy.Expr = sympy.Integer(0)
    fall: sympy.Expr = sympy.Integer(0)
    points: tuple[tuple[sympy.Expr, sympy.Expr], ...] = ()

    @property
    def steady_sinusoid(self) -> bool:
        """True for an undamped sinusoid: one that has a steady-state phasor."""
        return self.shape == "sine" and self.damping == 0

    def phasor(self, convention: PhasorConvention) -> sympy.Expr:
        """The source's phasor in the given convention (a constant's phasor is its value)."""
        if self.omega is None:
            return self.peak + self.offset
        magnitude = self.peak if convention == "peak" else self.peak / sympy.sqrt(2)
        return magnitude * sympy.exp(sympy.I * self.phase)

    @property
    def rms(self) -> sympy.Expr:
        """The rms value of the waveform."""
        return self.peak if self.omega is None else self.peak / sympy.sqrt(2)


@dataclass(frozen=True)
class Part:
    """One part of the circuit.

    ``value`` is the exact value in coherent SI units: ohms, henries, farads, the
    source amplitude (peak), a gain, a coupling coefficient, or a turns ratio
    N2/N1 for a transformer.
    """

    id: str
    kind: str
    nodes: tuple[str, ...]
    value: sympy.Expr
    source: Source | None = None
    control: tuple[str, ...] | str | None = None
    inductors: tuple[str, ...] = ()
    initial: sympy.Expr | None = None
    line: int | None = None

    @property
    def two_terminal(self) -> bool:
        return self.kind not in ("opamp", "transformer", "coupling")


@dataclass(frozen=True)
class Circuit:
    """A checked circuit and its analysis settings.

    ``omega`` is the analysis angular frequency in rad/s (exact; 0 for DC), and
    ``phasors`` the meaning of a phasor's magnitude.
    """

    parts: tuple[Part, ...]
    nodes: tuple[str, ...]  # every node but ground, in order of first appearance
    omega: sympy.Expr
    phasors: PhasorConvention = "peak"
    path: str = "<worksheet>"
    start: Start = "rest"

    def part(self, ident: str) -> Part:
        for part in self.parts:
            if part.id == ident:
                return part
        raise KeyError(ident)

    def has_part(self, ident: str) -> bool:
        return any(part.id == ident for part in self.parts)

    @property
    def frequency(self) -> sympy.Expr:
        """The analysis frequency in hertz."""
        return self.omega / (2 * sympy.pi)

    def active(self, part: Part) -> bool:
        """True when an independent source contributes to phasors at the analysis frequency."""
        source = part.source
        if source is None:
            return False
        if source.omega is None:
            return self.omega == 0 and source.shape not in ("pulse", "points")
        if not source.steady_sinusoid:
            return False
        return bool(sympy.simplify(source.omega - self.omega) == 0)

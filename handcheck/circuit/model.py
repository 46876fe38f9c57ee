"""The circuit: frozen parts with exact values.

Sign convention for every part (worksheet format 1): current enters ``nodes[0]`` and
leaves ``nodes[1]``; the part's voltage is v(nodes[0]) - v(nodes[1]); power absorbed
is positive.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import sympy

from handcheck.circuit.kinds import Kind
from handcheck.worksheet.model import PhasorConvention
from handcheck.worksheet.sourcefunction import SourceFunction

__all__ = ["GROUND", "Circuit", "Part", "Source", "Start"]

Start = Literal["rest", "steady"]

GROUND = "gnd"


@dataclass(frozen=True)
class Source:
    """An independent source: its exact function of time (see
    :mod:`handcheck.worksheet.sourcefunction`), in V or A.

    The steady-state drive is read exactly from the function: each term
    ``A*cos(w*t + phi)`` or ``A*sin(w*t + phi)`` that runs for all t >= 0 drives the
    frequency w with the peak phasor ``A*exp(j*phi)`` (``-j*A*exp(j*phi)`` for a sine),
    each constant term drives DC; terms that decay, start later or repeat drive no
    phasor. ``rms_written`` records that the amplitude was written as an rms value.
    """

    function: SourceFunction
    rms_written: bool = False

    @property
    def omega(self) -> sympy.Expr | None:
        """The one frequency (rad/s) of the source's steady sinusoids, or None."""
        return self.function.omega

    @property
    def frequencies(self) -> tuple[sympy.Expr, ...]:
        """Every frequency (rad/s, > 0) of the source's steady sinusoids."""
        return self.function.frequencies

    @property
    def dc(self) -> sympy.Expr:
        """The constant part of the steady drive."""
        return self.function.steady(sympy.Integer(0))

    def steady(self, omega: sympy.Expr) -> sympy.Expr:
        """The exact peak phasor of the drive at ``omega`` rad/s (0: the DC value)."""
        return self.function.steady(omega)

    def phasor(self, convention: PhasorConvention, omega: sympy.Expr | None = None) -> sympy.Expr:
        """The source's phasor at ``omega`` in the given convention.

        A source with no sinusoid gives its DC value at any frequency (the value a
        formula sees for its id); ``omega`` defaults to the source's own frequency.
        """
        if not self.frequencies:
            return self.dc
        if omega is None:
            omega = self.frequencies[0]
        value = self.steady(omega)
        if omega == 0:
            return value
        return value if convention == "peak" else value / sympy.sqrt(2)

    @property
    def rms(self) -> sympy.Expr:
        """The rms value of the steady drive (DC and every sinusoid together)."""
        total = self.dc**2
        for omega in self.frequencies:
            total += sympy.Abs(self.steady(omega)) ** 2 / 2
        return sympy.sqrt(total)


@dataclass(frozen=True)
class Part:
    """One part of the circuit.

    ``value`` is the exact value in coherent SI units: ohms, henries, farads, the
    source amplitude (peak), a gain, a coupling coefficient, or a turns ratio
    N2/N1 for a transformer. ``gbw`` is an op-amp's gain-bandwidth product as an
    angular frequency (rad/s; None: no pole, the gain is flat): its open-loop gain
    is ``A(s) = A0 / (1 + s*A0/gbw)``, one pole at gbw/A0.
    """

    id: str
    kind: Kind
    nodes: tuple[str, ...]
    value: sympy.Expr
    source: Source | None = None
    control: tuple[str, ...] | str | None = None
    inductors: tuple[str, ...] = ()
    initial: sympy.Expr | None = None
    line: int | None = None
    gbw: sympy.Expr | None = None


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
        return source.steady(self.omega) != 0

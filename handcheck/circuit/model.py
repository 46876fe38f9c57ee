"""The circuit: frozen parts with exact values.

Sign convention for every part (worksheet format 1): current enters ``nodes[0]`` and
leaves ``nodes[1]``; the part's voltage is v(nodes[0]) - v(nodes[1]); power absorbed
is positive.
"""

from __future__ import annotations

from dataclasses import dataclass

import sympy

from handcheck.worksheet.model import PhasorConvention

__all__ = ["GROUND", "Circuit", "Part", "Source"]

GROUND = "gnd"


@dataclass(frozen=True)
class Source:
    """An independent source's waveform: ``peak * cos(omega*t + phase)``, or a constant.

    ``omega`` is None for a constant source. ``rms_written`` records that the
    amplitude was written as an rms value.
    """

    peak: sympy.Expr
    omega: sympy.Expr | None = None
    phase: sympy.Expr = sympy.Integer(0)
    rms_written: bool = False

    def phasor(self, convention: PhasorConvention) -> sympy.Expr:
        """The source's phasor in the given convention (a constant's phasor is its value)."""
        if self.omega is None:
            return self.peak
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
        if part.source is None:
            return False
        if part.source.omega is None:
            return self.omega == 0
        return bool(sympy.simplify(part.source.omega - self.omega) == 0)

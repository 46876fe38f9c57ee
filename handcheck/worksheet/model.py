"""The worksheet as written: frozen records of the TOML file's contents.

Values are still text here (``"0.22 uF"``); :mod:`handcheck.circuit.build` turns
parts into exact circuit elements and :mod:`handcheck.verify` reads the steps.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

__all__ = ["PartSpec", "PhasorConvention", "StepSpec", "Worksheet"]

PhasorConvention = Literal["peak", "rms"]

#: Part kinds of worksheet format 1, and the unit each kind's value is in.
PART_KINDS: dict[str, str] = {
    "resistor": "ohm",
    "inductor": "H",
    "capacitor": "F",
    "voltage": "V",
    "current": "A",
    "vcvs": "",
    "vccs": "S",
    "cccs": "",
    "ccvs": "ohm",
    "opamp": "",
    "coupling": "",
    "transformer": "",
    "switch": "",
}

#: Time-domain keys of independent sources (docs/transients.md).
SOURCE_TIME_KEYS = ("shape", "offset", "delay", "damping", "low", "width", "period", "rise", "fall", "points")


@dataclass(frozen=True)
class PartSpec:
    """One entry of ``[parts]``, as written."""

    id: str
    kind: str
    value: str
    nodes: tuple[str, ...] = ()
    frequency: str | None = None
    phase: str | None = None
    initial: str | None = None
    control: tuple[str, ...] | str | None = None
    inductors: tuple[str, ...] = ()
    line: int | None = None
    extra: tuple[tuple[str, object], ...] = ()

    def get(self, key: str) -> object | None:
        """A time-domain key's raw value, or None."""
        return dict(self.extra).get(key)


@dataclass(frozen=True)
class StepSpec:
    """One ``[[step]]``, as written."""

    name: str
    claim: str
    quantity: str | None = None
    formula: str | None = None
    tolerance: str | None = None
    line: int | None = None
    index: int = 0
    key_lines: tuple[tuple[str, int], ...] = ()

    def line_of(self, key: str) -> int | None:
        """The line of one of the step's keys (the step's first line if unknown)."""
        return dict(self.key_lines).get(key, self.line)


@dataclass(frozen=True)
class Worksheet:
    """A whole worksheet file, as written, with its provenance."""

    path: str
    text: str
    sha256: str
    title: str
    reference: str | None = None
    phasors: PhasorConvention = "peak"
    frequency: str | None = None
    tolerance: str = "digits"
    parts: tuple[PartSpec, ...] = ()
    steps: tuple[StepSpec, ...] = ()
    transient: tuple[tuple[str, str], ...] = field(default_factory=tuple)
    lines: tuple[tuple[str, int], ...] = field(default_factory=tuple)

    def line_of(self, key: str) -> int | None:
        """The line of a ``[worksheet]`` key, where known."""
        return dict(self.lines).get(key)

    def part(self, ident: str) -> PartSpec:
        for part in self.parts:
            if part.id == ident:
                return part
        raise KeyError(ident)

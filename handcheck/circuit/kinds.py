"""The one table of part kinds: each kind's unit, terminals, keys and what its value means.

A leaf module (it imports nothing of handcheck), so the loader can check a part's
keys and read its value against the same table the circuit stages use.
"""

from __future__ import annotations

from dataclasses import dataclass
from types import MappingProxyType
from typing import Literal, get_args

__all__ = ["KINDS", "REACTIVE", "SOURCES", "Kind", "KindInfo", "kind_unit"]

Kind = Literal[
    "resistor",
    "inductor",
    "capacitor",
    "voltage",
    "current",
    "vcvs",
    "vccs",
    "cccs",
    "ccvs",
    "opamp",
    "coupling",
    "transformer",
    "switch",
]


@dataclass(frozen=True)
class KindInfo:
    """What the table knows of one kind.

    Attributes
    ----------
    unit : str
        The unit of the kind's value (``""``: a plain number or a word).
    terminals : int
        How many entries ``nodes`` takes (0: none, a coupling names inductors).
    keys : tuple of str
        The keys the kind takes besides its own.
    value : str
        What the value means, in words.
    """

    unit: str
    terminals: int
    keys: tuple[str, ...]
    value: str


_TABLE: dict[str, KindInfo] = {
    "resistor": KindInfo("ohm", 2, ("nodes", "initial"), "resistance"),
    "inductor": KindInfo("H", 2, ("nodes", "initial"), "inductance; initial: current nodes[0] to nodes[1] at t = 0-"),
    "capacitor": KindInfo("F", 2, ("nodes", "initial"), "capacitance; initial: voltage at t = 0-"),
    "voltage": KindInfo("V", 2, ("nodes", "frequency", "phase"), "source function of t, or amplitude"),
    "current": KindInfo("A", 2, ("nodes", "frequency", "phase"), "source function of t, or amplitude"),
    "vcvs": KindInfo("", 2, ("nodes", "control"), "voltage gain"),
    "vccs": KindInfo("S", 2, ("nodes", "control"), "transconductance"),
    "cccs": KindInfo("", 2, ("nodes", "control"), "current gain"),
    "ccvs": KindInfo("ohm", 2, ("nodes", "control"), "transresistance"),
    "opamp": KindInfo("", 3, ("nodes", "gbw"), '"ideal" or a finite open-loop DC gain; gbw: gain-bandwidth product'),
    "coupling": KindInfo("", 0, ("inductors",), "coupling coefficient in [-1, 1]"),
    "transformer": KindInfo("", 4, ("nodes",), 'turns ratio "N1:N2"'),
    "switch": KindInfo("", 2, ("nodes",), '"opens" or "closes" at t = 0'),
}
assert set(_TABLE) == set(get_args(Kind))

#: Every part kind of worksheet format 1, in the order the docs list them.
KINDS = MappingProxyType(_TABLE)
#: Independent sources.
SOURCES: tuple[Kind, ...] = ("voltage", "current")
#: Parts that store energy.
REACTIVE: tuple[Kind, ...] = ("capacitor", "inductor")


def kind_unit(kind: str) -> str:
    """The unit of a kind's value (``""`` for a plain number or a word).

    Parameters
    ----------
    kind : str
        A part kind.

    Returns
    -------
    str
    """
    return KINDS[kind].unit

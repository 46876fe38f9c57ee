"""Numeric assembly of a circuit's equations ``E x' + G x = B u(t)``.

This module is the numerical path's own statement of the circuit equations. It
reads the parsed :class:`~handcheck.circuit.model.Circuit` and nothing of the
symbolic path: every exact part value is converted with ``float()`` and stamped
here, so that an error in one path cannot hide in the other.

The unknowns ``x`` are the node voltages (ground excluded) followed by the currents
of the parts whose current is not a function of the node voltages alone:
inductors, independent voltage sources, voltage-output controlled sources (vcvs,
ccvs), switches (a closed switch is a 0 V branch, an open one carries a current
held at zero), op-amp outputs, both transformer windings, and every part whose
current controls a current-controlled source. This is modified nodal analysis
(Ho, Ruehli and Brennan, "The modified nodal approach to network analysis",
IEEE Trans. Circuits Syst. 22, 1975, from memory), written in first-order
descriptor form: capacitors and inductors put their C and L (and the mutual
inductance M = k sqrt(L1 L2) of a coupling) into ``E``; everything else is in
``G``; each independent source has one column of ``B``.

Sign convention (worksheet format 1): a part's current enters ``nodes[0]`` and
leaves ``nodes[1]``; a current source drives its value through itself from
``nodes[0]`` to ``nodes[1]``; an op-amp's current is the current into its output
terminal (it returns to ground); a transformer's winding currents enter the
dotted ends p1 and s1.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Literal

import numpy as np

from handcheck.circuit.model import GROUND, Circuit, Part
from handcheck.errors import CircuitError, Where

__all__ = ["Equations", "assemble", "current_keys"]

#: Part kinds whose current is always an unknown of its own.
_BRANCH = ("inductor", "voltage", "vcvs", "ccvs", "switch", "opamp")


def current_keys(part: Part) -> tuple[str, ...]:
    """The keys under which a part's currents are reported.

    A two-terminal part and an op-amp report one current under their id; a
    transformer reports ``"<id>.primary"`` and ``"<id>.secondary"``; a coupling
    carries no current of its own.
    """
    if part.kind == "transformer":
        return (f"{part.id}.primary", f"{part.id}.secondary")
    if part.kind == "coupling":
        return ()
    return (part.id,)


@dataclass(frozen=True)
class Equations:
    """The circuit equations ``E x' + G x = B u(t)`` in floating point.

    Attributes
    ----------
    labels : tuple of str
        Name of each unknown: ``"v(node)"`` or ``"i(key)"``.
    nodes : tuple of str
        The circuit's nodes (ground excluded), the first ``len(nodes)`` unknowns.
    E, G : ndarray, shape (n, n)
        The descriptor matrices.
    B : ndarray, shape (n, m)
        One column per independent source, in the order of ``sources``.
    sources : tuple of str
        Ids of the independent sources.
    current_keys : tuple of str
        The reported currents, in order (see :func:`current_keys`).
    Jx, Jdx : ndarray, shape (p, n); Ju : ndarray, shape (p, m)
        Each reported current is ``Jx @ x + Jdx @ x' + Ju @ u``.
    capacitors : tuple of (str, int | None, int | None, float)
        Id, index of ``nodes[0]`` and ``nodes[1]`` (None for ground), capacitance.
    inductors : tuple of (str, int, float)
        Id, index of its current unknown, inductance.
    switches : Mapping of str to bool
        Whether each switch is closed in these equations.
    """

    labels: tuple[str, ...]
    nodes: tuple[str, ...]
    E: np.ndarray
    G: np.ndarray
    B: np.ndarray
    sources: tuple[str, ...]
    current_keys: tuple[str, ...]
    Jx: np.ndarray
    Jdx: np.ndarray
    Ju: np.ndarray
    capacitors: tuple[tuple[str, int | None, int | None, float], ...]
    inductors: tuple[tuple[str, int, float], ...]
    switches: Mapping[str, bool]

    @property
    def size(self) -> int:
        return len(self.labels)


def _frozen(array: np.ndarray) -> np.ndarray:
    array.setflags(write=False)
    return array


def _needs_branch(part: Part, controls: set[str]) -> bool:
    return part.kind in _BRANCH or part.id in controls


def assemble(circuit: Circuit, *, switches: Literal["after", "before"] = "after") -> Equations:
    """Stamp the circuit's equations numerically.

    Parameters
    ----------
    circuit : Circuit
        The parsed circuit (exact values are converted with ``float``).
    switches : {"after", "before"}
        The state of the switches: as they are for t > 0 (a switch written
        "closes" is closed) or as they were before t = 0 (it was open).

    Returns
    -------
    Equations
        ``E x' + G x = B u`` with the maps from ``x``, ``x'`` and ``u`` to every
        part current.

    Notes
    -----
    Stamps are the usual modified-nodal ones (Ho, Ruehli and Brennan 1975, from
    memory); an ideal op-amp imposes v(+) = v(-) and lets its output current be
    whatever is needed; a finite gain A0 makes it v(+) - v(-) = v(out)/A0, and a
    gain-bandwidth product gbw (rad/s) adds v(out)'/gbw, the one-pole open loop
    A(s) = A0/(1 + s A0/gbw) written in time; an ideal transformer with n = N2/N1 imposes
    ``v_s = n v_p`` and ``i_p + n i_s = 0`` with both currents entering the dotted
    ends (textbook ideal-transformer relations, from memory).
    """
    parts = circuit.parts
    nodes = tuple(circuit.nodes)
    node_index = {name: k for k, name in enumerate(nodes)}
    controls = {str(p.control) for p in parts if p.kind in ("cccs", "ccvs")}

    labels = [f"v({name})" for name in nodes]
    branch: dict[str, int] = {}
    for part in parts:
        if part.kind == "transformer":
            for name in current_keys(part):
                branch[name] = len(labels)
                labels.append(f"i({name})")
        elif part.kind != "coupling" and _needs_branch(part, controls):
            branch[part.id] = len(labels)
            labels.append(f"i({part.id})")
    n = len(labels)
    sources = tuple(p.id for p in parts if p.kind in ("voltage", "current"))
    source_index = {ident: k for k, ident in enumerate(sources)}
    m = len(sources)

    E = np.zeros((n, n))
    G = np.zeros((n, n))
    B = np.zeros((n, m))
    keys = [key for p in parts for key in current_keys(p)]
    key_index = {key: k for k, key in enumerate(keys)}
    Jx = np.zeros((len(keys), n))
    Jdx = np.zeros((len(keys), n))
    Ju = np.zeros((len(keys), m))

    def idx(node: str) -> int | None:
        return None if node == GROUND else node_index[node]

    def add(matrix: np.ndarray, row: int | None, col: int | None, value: float) -> None:
        if row is not None and col is not None:
            matrix[row, col] += value

    def kcl_branch(a: int | None, b: int | None, col: int) -> None:
        """A current unknown ``col`` leaves node a and enters node b."""
        add(G, a, col, 1.0)
        add(G, b, col, -1.0)

    def voltage_row(matrix: np.ndarray, row: int | None, a: int | None, b: int | None, scale: float) -> None:
        """Add ``scale * (v_a - v_b)`` to a row."""
        add(matrix, row, a, scale)
        add(matrix, row, b, -scale)

    def between(matrix: np.ndarray, a: int | None, b: int | None, c: int | None, d: int | None, value: float) -> None:
        """A current ``value * (v_c - v_d)`` leaving node a and entering node b."""
        voltage_row(matrix, a, c, d, value)
        voltage_row(matrix, b, c, d, -value)

    closed: dict[str, bool] = {}
    couplings = {frozenset(p.inductors): p for p in parts if p.kind == "coupling"}

    for part in parts:
        kind = part.kind
        where: Where = {"file": circuit.path, "line": part.line}
        if kind in ("coupling",):
            continue
        if kind == "opamp":
            out, plus, minus = (idx(node) for node in part.nodes)
            io = branch[part.id]
            add(G, out, io, 1.0)  # the output current enters the op-amp from the output node
            voltage_row(G, io, plus, minus, 1.0)
            if part.value != 0:  # finite open-loop gain A: v(+) - v(-) - v(out)/A = 0
                add(G, io, out, -1.0 / float(part.value))
            if part.gbw is not None:  # one pole, A(s) = A0/(1 + s A0/gbw): ... - v(out)'/gbw = 0
                add(E, io, out, -1.0 / float(part.gbw))
            Jx[key_index[part.id], io] = 1.0
            continue
        if kind == "transformer":
            p1, p2, s1, s2 = (idx(node) for node in part.nodes)
            ratio = float(part.value)
            ip, is_ = branch[f"{part.id}.primary"], branch[f"{part.id}.secondary"]
            kcl_branch(p1, p2, ip)
            kcl_branch(s1, s2, is_)
            voltage_row(G, ip, s1, s2, 1.0)  # v_s - n v_p = 0
            voltage_row(G, ip, p1, p2, -ratio)
            G[is_, ip] += 1.0  # i_p + n i_s = 0
            G[is_, is_] += ratio
            Jx[key_index[f"{part.id}.primary"], ip] = 1.0
            Jx[key_index[f"{part.id}.secondary"], is_] = 1.0
            continue

        a, b = idx(part.nodes[0]), idx(part.nodes[1])
        value = float(part.value)
        key = key_index[part.id]
        col = branch.get(part.id)

        if col is not None:
            kcl_branch(a, b, col)
            Jx[key, col] = 1.0
            row = col
            if kind == "resistor":
                voltage_row(G, row, a, b, 1.0)
                G[row, col] -= value
            elif kind == "capacitor":
                voltage_row(E, row, a, b, value)
                G[row, col] -= 1.0
            elif kind == "inductor":
                E[row, col] += value
                voltage_row(G, row, a, b, -1.0)
                for other in parts:
                    if other.kind == "inductor" and other.id != part.id:
                        coupling = couplings.get(frozenset((part.id, other.id)))
                        if coupling is not None:
                            mutual = float(coupling.value) * math.sqrt(value * float(other.value))
                            E[row, branch[other.id]] += mutual
            elif kind == "voltage":
                voltage_row(G, row, a, b, 1.0)
                B[row, source_index[part.id]] = 1.0
            elif kind == "current":
                G[row, col] += 1.0
                B[row, source_index[part.id]] = 1.0
            elif kind == "vcvs":
                c, d = (idx(node) for node in part.control)  # type: ignore[union-attr]
                voltage_row(G, row, a, b, 1.0)
                voltage_row(G, row, c, d, -value)
            elif kind == "vccs":
                c, d = (idx(node) for node in part.control)  # type: ignore[union-attr]
                G[row, col] += 1.0
                voltage_row(G, row, c, d, -value)
            elif kind == "cccs":
                G[row, col] += 1.0
                G[row, branch[str(part.control)]] -= value
            elif kind == "ccvs":
                voltage_row(G, row, a, b, 1.0)
                G[row, branch[str(part.control)]] -= value
            elif kind == "switch":
                is_closed = (part.value == 1) == (switches == "after")
                closed[part.id] = is_closed
                if is_closed:
                    voltage_row(G, row, a, b, 1.0)
                else:
                    G[row, col] += 1.0
            else:
                raise CircuitError(
                    f"{part.id} is a {kind}, which the time-domain solver does not know", (part.id,), **where
                )
            continue

        # parts whose current follows from the node voltages, their derivatives or the sources
        if kind == "resistor":
            conductance = 1.0 / value
            between(G, a, b, a, b, conductance)
            voltage_row(Jx, key, a, b, conductance)
        elif kind == "capacitor":
            between(E, a, b, a, b, value)
            voltage_row(Jdx, key, a, b, value)
        elif kind == "current":
            k = source_index[part.id]
            add(B, a, k, -1.0)
            add(B, b, k, 1.0)
            Ju[key, k] = 1.0
        elif kind == "vccs":
            c, d = (idx(node) for node in part.control)  # type: ignore[union-attr]
            between(G, a, b, c, d, value)
            voltage_row(Jx, key, c, d, value)
        elif kind == "cccs":
            control = branch[str(part.control)]
            add(G, a, control, value)
            add(G, b, control, -value)
            Jx[key, control] = value
        else:
            raise CircuitError(
                f"{part.id} is a {kind}, which the time-domain solver does not know", (part.id,), **where
            )

    capacitors = tuple((p.id, idx(p.nodes[0]), idx(p.nodes[1]), float(p.value)) for p in parts if p.kind == "capacitor")
    inductors = tuple((p.id, branch[p.id], float(p.value)) for p in parts if p.kind == "inductor")
    return Equations(
        labels=tuple(labels),
        nodes=nodes,
        E=_frozen(E),
        G=_frozen(G),
        B=_frozen(B),
        sources=sources,
        current_keys=tuple(keys),
        Jx=_frozen(Jx),
        Jdx=_frozen(Jdx),
        Ju=_frozen(Ju),
        capacitors=capacitors,
        inductors=inductors,
        switches=MappingProxyType(closed),
    )

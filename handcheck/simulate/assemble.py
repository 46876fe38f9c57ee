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


@dataclass(frozen=True)
class _Stamps:
    """The arrays being filled while the equations are stamped, with their index maps.

    Only :func:`assemble` makes one and only its helpers below write into it; what
    leaves the module is the frozen :class:`Equations`.
    """

    node_index: Mapping[str, int]
    branch: Mapping[str, int]
    source_index: Mapping[str, int]
    key_index: Mapping[str, int]
    E: np.ndarray
    G: np.ndarray
    B: np.ndarray
    Jx: np.ndarray
    Jdx: np.ndarray
    Ju: np.ndarray

    def idx(self, node: str) -> int | None:
        """Index of a node's voltage unknown (None for ground)."""
        return None if node == GROUND else self.node_index[node]


def _add(matrix: np.ndarray, row: int | None, col: int | None, value: float) -> None:
    if row is not None and col is not None:
        matrix[row, col] += value


def _kcl_branch(G: np.ndarray, a: int | None, b: int | None, col: int) -> None:
    """A current unknown ``col`` leaves node a and enters node b."""
    _add(G, a, col, 1.0)
    _add(G, b, col, -1.0)


def _voltage_row(matrix: np.ndarray, row: int | None, a: int | None, b: int | None, scale: float) -> None:
    """Add ``scale * (v_a - v_b)`` to a row."""
    _add(matrix, row, a, scale)
    _add(matrix, row, b, -scale)


def _between(matrix: np.ndarray, a: int | None, b: int | None, c: int | None, d: int | None, value: float) -> None:
    """A current ``value * (v_c - v_d)`` leaving node a and entering node b."""
    _voltage_row(matrix, a, c, d, value)
    _voltage_row(matrix, b, c, d, -value)


def _unknowns(circuit: Circuit) -> tuple[list[str], dict[str, int]]:
    """Labels of the unknowns and the index of each branch-current unknown."""
    controls = {str(p.control) for p in circuit.parts if p.kind in ("cccs", "ccvs")}
    labels = [f"v({name})" for name in circuit.nodes]
    branch: dict[str, int] = {}
    for part in circuit.parts:
        if part.kind == "transformer":
            for name in current_keys(part):
                branch[name] = len(labels)
                labels.append(f"i({name})")
        elif part.kind != "coupling" and _needs_branch(part, controls):
            branch[part.id] = len(labels)
            labels.append(f"i({part.id})")
    return labels, branch


def _stamp_opamp(s: _Stamps, part: Part) -> None:
    """An op-amp: ideal, finite gain A0, or one pole set by its gain-bandwidth product."""
    out, plus, minus = (s.idx(node) for node in part.nodes)
    io = s.branch[part.id]
    _add(s.G, out, io, 1.0)  # the output current enters the op-amp from the output node
    _voltage_row(s.G, io, plus, minus, 1.0)
    if part.value != 0:  # finite open-loop gain A: v(+) - v(-) - v(out)/A = 0
        _add(s.G, io, out, -1.0 / float(part.value))
    if part.gbw is not None:  # one pole, A(s) = A0/(1 + s A0/gbw): ... - v(out)'/gbw = 0
        _add(s.E, io, out, -1.0 / float(part.gbw))
    s.Jx[s.key_index[part.id], io] = 1.0


def _stamp_transformer(s: _Stamps, part: Part) -> None:
    """An ideal transformer: ``v_s = n v_p`` and ``i_p + n i_s = 0``."""
    p1, p2, s1, s2 = (s.idx(node) for node in part.nodes)
    ratio = float(part.value)
    ip, is_ = s.branch[f"{part.id}.primary"], s.branch[f"{part.id}.secondary"]
    _kcl_branch(s.G, p1, p2, ip)
    _kcl_branch(s.G, s1, s2, is_)
    _voltage_row(s.G, ip, s1, s2, 1.0)  # v_s - n v_p = 0
    _voltage_row(s.G, ip, p1, p2, -ratio)
    s.G[is_, ip] += 1.0  # i_p + n i_s = 0
    s.G[is_, is_] += ratio
    s.Jx[s.key_index[f"{part.id}.primary"], ip] = 1.0
    s.Jx[s.key_index[f"{part.id}.secondary"], is_] = 1.0


def _unknown_kind(circuit: Circuit, part: Part) -> CircuitError:
    where: Where = {"file": circuit.path, "line": part.line}
    return CircuitError(f"{part.id} is a {part.kind}, which the time-domain solver does not know", (part.id,), **where)


def _stamp_inductor(s: _Stamps, circuit: Circuit, part: Part, row: int, couplings: Mapping[frozenset, Part]) -> None:
    """An inductor's row ``L i' + sum M i_other' - (v_a - v_b) = 0``."""
    a, b = s.idx(part.nodes[0]), s.idx(part.nodes[1])
    value = float(part.value)
    s.E[row, row] += value
    _voltage_row(s.G, row, a, b, -1.0)
    for other in circuit.parts:
        if other.kind == "inductor" and other.id != part.id:
            coupling = couplings.get(frozenset((part.id, other.id)))
            if coupling is not None:
                mutual = float(coupling.value) * math.sqrt(value * float(other.value))
                s.E[row, s.branch[other.id]] += mutual


def _stamp_with_current(
    s: _Stamps,
    circuit: Circuit,
    part: Part,
    switches: Literal["after", "before"],
    couplings: Mapping[frozenset, Part],
) -> bool | None:
    """A two-terminal part whose current is an unknown of its own, row ``col``.

    Returns whether a switch is closed (None for any other part).
    """
    kind = part.kind
    a, b = s.idx(part.nodes[0]), s.idx(part.nodes[1])
    value = float(part.value)
    col = row = s.branch[part.id]
    G = s.G
    _kcl_branch(G, a, b, col)
    s.Jx[s.key_index[part.id], col] = 1.0
    if kind == "resistor":
        _voltage_row(G, row, a, b, 1.0)
        G[row, col] -= value
    elif kind == "capacitor":
        _voltage_row(s.E, row, a, b, value)
        G[row, col] -= 1.0
    elif kind == "inductor":
        _stamp_inductor(s, circuit, part, row, couplings)
    elif kind == "voltage":
        _voltage_row(G, row, a, b, 1.0)
        s.B[row, s.source_index[part.id]] = 1.0
    elif kind == "current":
        G[row, col] += 1.0
        s.B[row, s.source_index[part.id]] = 1.0
    elif kind in ("vcvs", "vccs"):
        c, d = (s.idx(node) for node in part.control)  # type: ignore[union-attr]
        if kind == "vcvs":
            _voltage_row(G, row, a, b, 1.0)
        else:
            G[row, col] += 1.0
        _voltage_row(G, row, c, d, -value)
    elif kind in ("cccs", "ccvs"):
        if kind == "cccs":
            G[row, col] += 1.0
        else:
            _voltage_row(G, row, a, b, 1.0)
        G[row, s.branch[str(part.control)]] -= value
    elif kind == "switch":
        is_closed = (part.value == 1) == (switches == "after")
        if is_closed:
            _voltage_row(G, row, a, b, 1.0)
        else:
            G[row, col] += 1.0
        return is_closed
    else:
        raise _unknown_kind(circuit, part)
    return None


def _stamp_by_voltage(s: _Stamps, circuit: Circuit, part: Part) -> None:
    """A part whose current follows from the node voltages, their derivatives or the sources."""
    kind = part.kind
    a, b = s.idx(part.nodes[0]), s.idx(part.nodes[1])
    value = float(part.value)
    key = s.key_index[part.id]
    if kind == "resistor":
        conductance = 1.0 / value
        _between(s.G, a, b, a, b, conductance)
        _voltage_row(s.Jx, key, a, b, conductance)
    elif kind == "capacitor":
        _between(s.E, a, b, a, b, value)
        _voltage_row(s.Jdx, key, a, b, value)
    elif kind == "current":
        k = s.source_index[part.id]
        _add(s.B, a, k, -1.0)
        _add(s.B, b, k, 1.0)
        s.Ju[key, k] = 1.0
    elif kind == "vccs":
        c, d = (s.idx(node) for node in part.control)  # type: ignore[union-attr]
        _between(s.G, a, b, c, d, value)
        _voltage_row(s.Jx, key, c, d, value)
    elif kind == "cccs":
        control = s.branch[str(part.control)]
        _add(s.G, a, control, value)
        _add(s.G, b, control, -value)
        s.Jx[key, control] = value
    else:
        raise _unknown_kind(circuit, part)


def _empty_stamps(circuit: Circuit) -> tuple[list[str], tuple[str, ...], tuple[str, ...], _Stamps]:
    """Labels, sources, current keys and zeroed arrays of the circuit's equations."""
    labels, branch = _unknowns(circuit)
    n = len(labels)
    sources = tuple(p.id for p in circuit.parts if p.kind in ("voltage", "current"))
    m = len(sources)
    keys = tuple(key for p in circuit.parts for key in current_keys(p))
    stamps = _Stamps(
        node_index={name: k for k, name in enumerate(circuit.nodes)},
        branch=branch,
        source_index={ident: k for k, ident in enumerate(sources)},
        key_index={key: k for k, key in enumerate(keys)},
        E=np.zeros((n, n)),
        G=np.zeros((n, n)),
        B=np.zeros((n, m)),
        Jx=np.zeros((len(keys), n)),
        Jdx=np.zeros((len(keys), n)),
        Ju=np.zeros((len(keys), m)),
    )
    return labels, sources, keys, stamps


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
    labels, sources, keys, s = _empty_stamps(circuit)
    closed: dict[str, bool] = {}
    couplings = {frozenset(p.inductors): p for p in circuit.parts if p.kind == "coupling"}
    for part in circuit.parts:
        if part.kind == "coupling":
            continue
        if part.kind == "opamp":
            _stamp_opamp(s, part)
        elif part.kind == "transformer":
            _stamp_transformer(s, part)
        elif part.id in s.branch:
            is_closed = _stamp_with_current(s, circuit, part, switches, couplings)
            if is_closed is not None:
                closed[part.id] = is_closed
        else:
            _stamp_by_voltage(s, circuit, part)

    parts = circuit.parts
    capacitors = tuple(
        (p.id, s.idx(p.nodes[0]), s.idx(p.nodes[1]), float(p.value)) for p in parts if p.kind == "capacitor"
    )
    inductors = tuple((p.id, s.branch[p.id], float(p.value)) for p in parts if p.kind == "inductor")
    return Equations(
        labels=tuple(labels),
        nodes=tuple(circuit.nodes),
        E=_frozen(s.E),
        G=_frozen(s.G),
        B=_frozen(s.B),
        sources=sources,
        current_keys=keys,
        Jx=_frozen(s.Jx),
        Jdx=_frozen(s.Jdx),
        Ju=_frozen(s.Ju),
        capacitors=capacitors,
        inductors=inductors,
        switches=MappingProxyType(closed),
    )

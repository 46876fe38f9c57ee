"""Modified nodal analysis: the circuit's equations as ``(G + s*C) x = B u``.

Unknowns are the node voltages (ground excluded) and the currents of the parts
whose current cannot be written from node voltages: inductors, voltage sources,
voltage-output controlled sources, op-amp outputs, transformer windings, and any
part whose current controls a current-controlled source. Every entry of ``G`` and
``C`` is exact and constant, so the matrix is polynomial of degree one in s. Each
column of ``B`` is one independent source at unit amplitude; ``u`` holds the
sources' phasors.

References
----------
C.-W. Ho, A. E. Ruehli, P. A. Brennan, "The modified nodal approach to network
analysis", IEEE Trans. Circuits and Systems 22(6), 1975 (from memory); the stamps
for ideal op-amps, transformers and coupled inductors are the usual textbook ones
(common practice).
"""

from __future__ import annotations

from dataclasses import dataclass

import sympy

from handcheck.circuit.model import GROUND, Circuit, Part

__all__ = ["MnaSystem", "stamp"]

_ALWAYS_BRANCH = ("inductor", "voltage", "vcvs", "ccvs", "opamp")


def _branch(part: Part, controls: set[str | tuple[str, ...] | None]) -> bool:
    """Whether a part's current is an unknown of its own."""
    if part.kind == "switch":
        return part.value == 1  # a closed switch is a 0 V branch; an open one is absent
    return part.kind in _ALWAYS_BRANCH or part.id in controls


@dataclass(frozen=True)
class MnaSystem:
    """The exact equations of a circuit.

    ``labels`` names each unknown (``v(out)``, ``i(L1)``); ``G`` and ``C`` are dense
    square tuples of exact sympy numbers; ``B`` has one column per independent
    source, in the order of ``sources``.
    """

    labels: tuple[str, ...]
    nodes: dict[str, int]
    branches: dict[str, int]
    G: tuple[tuple[sympy.Expr, ...], ...]
    C: tuple[tuple[sympy.Expr, ...], ...]
    B: tuple[tuple[sympy.Expr, ...], ...]
    sources: tuple[str, ...]

    @property
    def size(self) -> int:
        return len(self.labels)

    def node(self, name: str) -> int | None:
        """Index of a node's voltage; None for ground."""
        return None if name == GROUND else self.nodes[name]


class _Builder:
    def __init__(self, circuit: Circuit) -> None:
        self.circuit = circuit
        controls = {p.control for p in circuit.parts if p.kind in ("cccs", "ccvs")}
        self.branch_parts = [p for p in circuit.parts if _branch(p, controls)]
        labels = [f"v({n})" for n in circuit.nodes]
        self.nodes = {n: k for k, n in enumerate(circuit.nodes)}
        self.branches: dict[str, int] = {}
        for part in self.branch_parts:
            self.branches[part.id] = len(labels)
            labels.append(f"i({part.id})")
        self.transformers: dict[str, tuple[int, int]] = {}
        for part in circuit.parts:
            if part.kind == "transformer":
                self.transformers[part.id] = (len(labels), len(labels) + 1)
                labels += [f"i({part.id}.primary)", f"i({part.id}.secondary)"]
        self.labels = tuple(labels)
        n = len(labels)
        self.sources = tuple(p.id for p in circuit.parts if p.source is not None)
        zero = sympy.Integer(0)
        self.G = [[zero] * n for _ in range(n)]
        self.C = [[zero] * n for _ in range(n)]
        self.B = [[zero] * len(self.sources) for _ in range(n)]

    def v(self, node: str) -> int | None:
        return None if node == GROUND else self.nodes[node]

    def add(self, matrix: list[list[sympy.Expr]], row: int | None, col: int | None, value: sympy.Expr) -> None:
        if row is not None and col is not None:
            matrix[row][col] += value

    def kcl(self, part_nodes: tuple[str, str], col: int, scale: sympy.Expr = sympy.Integer(1)) -> None:
        """The unknown ``col`` is a current entering nodes[0] and leaving nodes[1]."""
        self.add(self.G, self.v(part_nodes[0]), col, scale)
        self.add(self.G, self.v(part_nodes[1]), col, -scale)

    def voltage_row(self, row: int, nodes: tuple[str, str], scale: sympy.Expr, matrix: str = "G") -> None:
        """Add scale*(v(nodes[0]) - v(nodes[1])) to an equation row."""
        target = self.G if matrix == "G" else self.C
        self.add(target, row, self.v(nodes[0]), scale)
        self.add(target, row, self.v(nodes[1]), -scale)

    def admittance(self, nodes: tuple[str, str], value: sympy.Expr, matrix: str) -> None:
        target = self.G if matrix == "G" else self.C
        a, b = self.v(nodes[0]), self.v(nodes[1])
        self.add(target, a, a, value)
        self.add(target, b, b, value)
        self.add(target, a, b, -value)
        self.add(target, b, a, -value)

    def transconductance(self, out: tuple[str, ...], control: tuple[str, ...], gm: sympy.Expr) -> None:
        for node, sign in ((out[0], 1), (out[1], -1)):
            for cnode, csign in ((control[0], 1), (control[1], -1)):
                self.add(self.G, self.v(node), self.v(cnode), sign * csign * gm)

    def source_column(self, part: Part) -> int:
        return self.sources.index(part.id)

    def control_current(self, part: Part) -> int:
        return self.branches[str(part.control)]

    def stamp(self) -> MnaSystem:
        mutual = self.mutual_terms()
        for part in self.circuit.parts:
            self.stamp_part(part, mutual)
        return MnaSystem(
            labels=self.labels,
            nodes=self.nodes,
            branches=self.branches,
            G=tuple(tuple(r) for r in self.G),
            C=tuple(tuple(r) for r in self.C),
            B=tuple(tuple(r) for r in self.B),
            sources=self.sources,
        )

    def mutual_terms(self) -> dict[str, list[tuple[str, sympy.Expr]]]:
        terms: dict[str, list[tuple[str, sympy.Expr]]] = {}
        for part in self.circuit.parts:
            if part.kind == "coupling":
                first, second = (self.circuit.part(i) for i in part.inductors)
                m = part.value * sympy.sqrt(first.value * second.value)
                terms.setdefault(first.id, []).append((second.id, m))
                terms.setdefault(second.id, []).append((first.id, m))
        return terms

    def stamp_part(self, part: Part, mutual: dict[str, list[tuple[str, sympy.Expr]]]) -> None:
        kind, nodes = part.kind, part.nodes
        branch = self.branches.get(part.id)
        if branch is not None and kind not in ("opamp",):
            self.kcl((nodes[0], nodes[1]), branch)
        if kind == "resistor":
            if branch is None:
                self.admittance((nodes[0], nodes[1]), 1 / part.value, "G")
            else:  # v - R i = 0
                self.voltage_row(branch, (nodes[0], nodes[1]), sympy.Integer(1))
                self.G[branch][branch] -= part.value
        elif kind == "capacitor":
            if branch is None:
                self.admittance((nodes[0], nodes[1]), part.value, "C")
            else:  # s C v - i = 0
                self.voltage_row(branch, (nodes[0], nodes[1]), part.value, "C")
                self.G[branch][branch] -= 1
        elif kind == "inductor":  # v - s L i - s M i_other = 0
            assert branch is not None
            self.voltage_row(branch, (nodes[0], nodes[1]), sympy.Integer(1))
            self.C[branch][branch] -= part.value
            for other, m in mutual.get(part.id, []):
                self.C[branch][self.branches[other]] -= m
        elif kind == "switch":  # closed: v = 0; open: nothing at all
            if branch is not None:
                self.voltage_row(branch, (nodes[0], nodes[1]), sympy.Integer(1))
        elif kind == "voltage":  # v = u
            assert branch is not None
            self.voltage_row(branch, (nodes[0], nodes[1]), sympy.Integer(1))
            self.B[branch][self.source_column(part)] += 1
        elif kind == "current":
            column = self.source_column(part)
            if branch is None:  # the source's current enters nodes[0]: move it to the right
                for node, sign in ((nodes[0], -1), (nodes[1], 1)):
                    row = self.v(node)
                    if row is not None:
                        self.B[row][column] += sign
            else:  # i = u
                self.G[branch][branch] += 1
                self.B[branch][column] += 1
        elif kind == "vcvs":  # v_out - gain v_control = 0
            assert branch is not None and isinstance(part.control, tuple)
            self.voltage_row(branch, (nodes[0], nodes[1]), sympy.Integer(1))
            self.voltage_row(branch, (part.control[0], part.control[1]), -part.value)
        elif kind == "vccs":
            assert isinstance(part.control, tuple)
            if branch is None:
                self.transconductance(nodes, part.control, part.value)
            else:  # i - gm v_control = 0
                self.G[branch][branch] += 1
                self.voltage_row(branch, (part.control[0], part.control[1]), -part.value)
        elif kind == "cccs":
            control = self.control_current(part)
            if branch is None:
                self.kcl((nodes[0], nodes[1]), control, part.value)
            else:  # i - gain i_control = 0
                self.G[branch][branch] += 1
                self.G[branch][control] -= part.value
        elif kind == "ccvs":  # v - r i_control = 0
            assert branch is not None
            self.voltage_row(branch, (nodes[0], nodes[1]), sympy.Integer(1))
            self.G[branch][self.control_current(part)] -= part.value
        elif kind == "opamp":  # output current into the op-amp; v(+) - v(-) = 0
            assert branch is not None
            self.add(self.G, self.v(nodes[0]), branch, sympy.Integer(1))
            self.voltage_row(branch, (nodes[1], nodes[2]), sympy.Integer(1))
            if part.value != 0:  # a finite open-loop gain A: v(+) - v(-) - v(out)/A = 0
                self.add(self.G, branch, self.v(nodes[0]), -1 / part.value)
            if part.gbw is not None:  # A(s) = A0/(1 + s A0/gbw): v(+) - v(-) - v(out)/A0 - s v(out)/gbw = 0
                self.add(self.C, branch, self.v(nodes[0]), -1 / part.gbw)
        elif kind == "transformer":
            primary, secondary = self.transformers[part.id]
            n = part.value
            self.kcl((nodes[0], nodes[1]), primary)
            self.kcl((nodes[2], nodes[3]), secondary)
            # v_s - n v_p = 0 ; i_p + n i_s = 0  (currents entering the dotted ends)
            self.voltage_row(primary, (nodes[2], nodes[3]), sympy.Integer(1))
            self.voltage_row(primary, (nodes[0], nodes[1]), -n)
            self.G[secondary][primary] += 1
            self.G[secondary][secondary] += n


def stamp(circuit: Circuit) -> MnaSystem:
    """Write the circuit's modified nodal equations, exactly."""
    return _Builder(circuit).stamp()

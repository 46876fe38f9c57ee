"""Structural checks made before any equation is written.

Each check names the parts involved, so the engineer can see the fault on the
drawing: references to parts or nodes that do not exist, islands with no path to
ground, loops of voltage-defined branches, and cuts made only of current sources
(a node's current cannot be set by current sources alone). These are the standard
topological conditions for a modified nodal system to be solvable (common practice).
"""

from __future__ import annotations

from collections import defaultdict, deque

from handcheck.circuit.model import GROUND, Circuit, Part
from handcheck.errors import CircuitError

__all__ = ["check_structure"]

_VOLTAGE_DEFINED = ("voltage", "vcvs", "ccvs", "switch")
_CURRENT_DEFINED = ("current", "vccs", "cccs")
_CARRIES_CURRENT = ("resistor", "inductor", "capacitor", "voltage", "current", "vcvs", "vccs", "cccs", "ccvs", "switch")


def _edges(part: Part) -> list[tuple[str, str]]:
    """The galvanic connections a part makes between nodes."""
    if part.kind == "opamp":
        return [(part.nodes[0], GROUND)]
    if part.kind == "transformer":
        return [(part.nodes[0], part.nodes[1]), (part.nodes[2], part.nodes[3])]
    if part.kind == "coupling" or (part.kind == "switch" and part.value == 0):
        return []
    return [(part.nodes[0], part.nodes[1])]


def _components(nodes: set[str], edges: list[tuple[str, str, str]]) -> list[tuple[set[str], set[str]]]:
    """Connected components as (nodes, part ids)."""
    graph: dict[str, list[tuple[str, str]]] = defaultdict(list)
    for a, b, ident in edges:
        graph[a].append((b, ident))
        graph[b].append((a, ident))
    seen: set[str] = set()
    result = []
    for start in sorted(nodes):
        if start in seen:
            continue
        comp_nodes, comp_parts = {start}, set()
        queue = deque([start])
        seen.add(start)
        while queue:
            node = queue.popleft()
            for other, ident in graph[node]:
                comp_parts.add(ident)
                if other not in seen:
                    seen.add(other)
                    comp_nodes.add(other)
                    queue.append(other)
        result.append((comp_nodes, comp_parts))
    return result


def _path(forest: dict[str, list[tuple[str, str]]], start: str, goal: str) -> list[str]:
    """Part ids on the forest path from start to goal."""
    previous: dict[str, tuple[str, str] | None] = {start: None}
    queue = deque([start])
    while queue:
        node = queue.popleft()
        if node == goal:
            break
        for other, ident in forest[node]:
            if other not in previous:
                previous[other] = (node, ident)
                queue.append(other)
    parts = []
    node = goal
    while previous.get(node):
        back, ident = previous[node]  # type: ignore[misc]
        parts.append(ident)
        node = back
    return parts[::-1]


def _names(idents: list[str] | set[str]) -> str:
    ordered = sorted(idents)
    return ", ".join(ordered[:-1]) + " and " + ordered[-1] if len(ordered) > 1 else ordered[0]


def _check_references(circuit: Circuit) -> None:
    nodes = set(circuit.nodes) | {GROUND}
    ids = {part.id: part for part in circuit.parts}
    for part in circuit.parts:
        where = {"file": circuit.path, "line": part.line}
        if part.kind in ("vcvs", "vccs"):
            for node in part.control or ():
                if node not in nodes:
                    raise CircuitError(
                        f'{part.id} is controlled by the voltage at node "{node}", but no part connects to that node',
                        (part.id,),
                        **where,
                    )
        if part.kind in ("cccs", "ccvs"):
            control = part.control
            if not isinstance(control, str) or control not in ids:
                raise CircuitError(
                    f'{part.id} is controlled by the current of part "{control}", which is not in [parts]',
                    (part.id,),
                    **where,
                )
            if ids[control].kind not in _CARRIES_CURRENT:
                raise CircuitError(
                    f"{part.id} is controlled by the current of {control}, a {ids[control].kind}; "
                    "name a two-terminal part instead",
                    (part.id, control),
                    **where,
                )
            if control == part.id:
                raise CircuitError(f"{part.id} is controlled by its own current", (part.id,), **where)
        if part.kind == "coupling":
            first, second = part.inductors
            for ident in part.inductors:
                if ident not in ids or ids[ident].kind != "inductor":
                    what = "is not in [parts]" if ident not in ids else f"is a {ids[ident].kind}"
                    raise CircuitError(
                        f'coupling {part.id} names "{ident}", which {what}; a coupling joins two inductors',
                        (part.id,),
                        **where,
                    )
            if first == second:
                raise CircuitError(f"coupling {part.id} names {first} twice; a coupling joins two different inductors", (part.id,), **where)
        if part.kind == "opamp" and len(set(part.nodes)) < 3:
            raise CircuitError(f"op-amp {part.id} has two terminals on one node; give output, + and - input distinct nodes", (part.id,), **where)
        if part.kind == "transformer" and (part.nodes[0] == part.nodes[1] or part.nodes[2] == part.nodes[3]):
            raise CircuitError(f"transformer {part.id} has a winding with both ends on one node", (part.id,), **where)
    pairs: dict[frozenset[str], str] = {}
    for part in circuit.parts:
        if part.kind == "coupling":
            key = frozenset(part.inductors)
            if key in pairs:
                raise CircuitError(f"{pairs[key]} and {part.id} both couple {_names(key)}; keep one", (pairs[key], part.id), file=circuit.path, line=part.line)
            pairs[key] = part.id


def _check_islands(circuit: Circuit) -> None:
    if not any(GROUND in part.nodes for part in circuit.parts) and not any(p.kind == "opamp" for p in circuit.parts):
        raise CircuitError(f'no part connects to ground; name one node "{GROUND}"', (), file=circuit.path)
    edges = [(a, b, part.id) for part in circuit.parts for a, b in _edges(part)]
    nodes = set(circuit.nodes) | {GROUND}
    for comp_nodes, comp_parts in _components(nodes, edges):
        if GROUND in comp_nodes:
            continue
        first = min((p for p in circuit.parts if p.id in comp_parts), key=lambda p: p.line or 0, default=None)
        raise CircuitError(
            f"node{'s' if len(comp_nodes) > 1 else ''} {_names(comp_nodes)} "
            f"{'have' if len(comp_nodes) > 1 else 'has'} no path to {GROUND}"
            + (f" (parts {_names(comp_parts)})" if comp_parts else "")
            + "; connect the island to the rest of the circuit",
            tuple(sorted(comp_parts)),
            file=circuit.path,
            line=first.line if first else None,
        )


def _check_voltage_loops(circuit: Circuit) -> None:
    dc = circuit.omega == 0
    forest: dict[str, list[tuple[str, str]]] = defaultdict(list)
    root: dict[str, str] = {}

    def find(node: str) -> str:
        while root.get(node, node) != node:
            node = root[node]
        return node

    for part in circuit.parts:
        defined = part.kind in _VOLTAGE_DEFINED or part.kind == "opamp" or (dc and part.kind == "inductor")
        if not defined or not _edges(part):
            continue
        a, b = _edges(part)[0]
        ra, rb = find(a), find(b)
        if ra == rb:
            loop = [*_path(forest, b, a), part.id]
            what = "voltage sources" if not dc else "voltage sources and inductors (shorts at DC)"
            raise CircuitError(
                f"{_names(set(loop))} form a loop of {what}: their voltages are fixed around a closed "
                "path, so the current in it is not determined; add a resistance in the loop or remove one source",
                tuple(sorted(set(loop))),
                file=circuit.path,
                line=part.line,
            )
        root[ra] = rb
        forest[a].append((b, part.id))
        forest[b].append((a, part.id))


def _check_current_cuts(circuit: Circuit) -> None:
    dc = circuit.omega == 0
    edges = []
    for part in circuit.parts:
        if part.kind in _CURRENT_DEFINED or (dc and part.kind == "capacitor"):
            continue
        edges.extend((a, b, part.id) for a, b in _edges(part))
    nodes = set(circuit.nodes) | {GROUND}
    for comp_nodes, _ in _components(nodes, edges):
        if GROUND in comp_nodes:
            continue
        sources = sorted(
            part.id
            for part in circuit.parts
            if (part.kind in _CURRENT_DEFINED or (dc and part.kind == "capacitor"))
            and len({n in comp_nodes for n in part.nodes}) == 2
        )
        what = "current sources" if not dc else "current sources and capacitors (open at DC)"
        raise CircuitError(
            f"node{'s' if len(comp_nodes) > 1 else ''} {_names(comp_nodes)} "
            f"{'connect' if len(comp_nodes) > 1 else 'connects'} to the rest of the circuit only through "
            f"{what} {_names(sources) if sources else ''}: the node voltage is not determined; "
            "add a resistance from the node to ground or to another node",
            tuple(sources),
            file=circuit.path,
            line=min((circuit.part(s).line or 0 for s in sources), default=None) or None,
        )


def check_structure(circuit: Circuit) -> None:
    """Raise :class:`CircuitError` naming the parts if the circuit cannot be solved as drawn."""
    _check_references(circuit)
    _check_islands(circuit)
    _check_voltage_loops(circuit)
    _check_current_cuts(circuit)

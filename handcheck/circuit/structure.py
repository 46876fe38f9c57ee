"""Structural checks made before any equation is written.

Each check names the parts involved, so the engineer can see the fault on the
drawing: references to parts or nodes that do not exist, islands with no path to
ground, loops of voltage-defined branches, and cuts made only of current sources
(a node's current cannot be set by current sources alone). These are the standard
topological conditions for a modified nodal system to be solvable (common practice).
"""

from __future__ import annotations

import difflib
from collections import defaultdict, deque
from collections.abc import Iterable

from handcheck.circuit.model import GROUND, Circuit, Part
from handcheck.errors import CircuitError, Where

__all__ = ["check_dc", "check_structure"]

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


def _suggest(word: str, choices: set[str] | list[str]) -> str:
    close = difflib.get_close_matches(word, sorted(choices), n=1)
    return f' (did you mean "{close[0]}"?)' if close else ""


def _names(idents: Iterable[str]) -> str:
    ordered = sorted(idents)
    return ", ".join(ordered[:-1]) + " and " + ordered[-1] if len(ordered) > 1 else ordered[0]


_KIND_PLURALS = {
    "voltage": "voltage sources",
    "vcvs": "controlled voltage sources",
    "ccvs": "controlled voltage sources",
    "opamp": "op-amp outputs",
    "switch": "closed switches",
    "inductor": "inductors (shorts at DC)",
    "current": "current sources",
    "vccs": "controlled current sources",
    "cccs": "controlled current sources",
    "capacitor": "capacitors (open at DC)",
}


def _kinds(circuit: Circuit, idents: list[str] | set[str]) -> str:
    """The kinds of the named parts, as plural words: "voltage sources and op-amp outputs"."""
    words: list[str] = []
    for ident in sorted(idents):
        word = _KIND_PLURALS[circuit.part(ident).kind]
        if word not in words:
            words.append(word)
    return ", ".join(words[:-1]) + " and " + words[-1] if len(words) > 1 else words[0]


def _check_references(circuit: Circuit) -> None:
    nodes = set(circuit.nodes) | {GROUND}
    ids = {part.id: part for part in circuit.parts}
    for part in circuit.parts:
        where: Where = {"file": circuit.path, "line": part.line}
        if part.kind in ("vcvs", "vccs"):
            for node in part.control or ():
                if node not in nodes:
                    raise CircuitError(
                        f'{part.id} is controlled by the voltage at node "{node}", but no part connects to that node'
                        f"{_suggest(node, nodes)}; check the spelling in control of {part.id}",
                        (part.id,),
                        **where,
                    )
        if part.kind == "vcvs" and part.control is not None:
            sensed = tuple(part.control)
            if (sensed == part.nodes and part.value == 1) or (sensed == part.nodes[::-1] and part.value == -1):
                raise CircuitError(
                    f"{part.id} senses its own output voltage with gain {part.value}, so its equation reads "
                    "v = v and leaves that voltage undetermined; take the control from another pair of nodes",
                    (part.id,),
                    **where,
                )
        if part.kind in ("cccs", "ccvs"):
            control = part.control
            if not isinstance(control, str) or control not in ids:
                raise CircuitError(
                    f'{part.id} is controlled by the current of part "{control}", which is not in [parts]'
                    f"{_suggest(str(control), set(ids) - {part.id})}",
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
                    inductors = {i for i, p in ids.items() if p.kind == "inductor"}
                    hint = _suggest(ident, inductors) if ident not in ids else ""
                    raise CircuitError(
                        f'coupling {part.id} names "{ident}", which {what}{hint}; a coupling joins two inductors',
                        (part.id,),
                        **where,
                    )
            if first == second:
                raise CircuitError(
                    f"coupling {part.id} names {first} twice; a coupling joins two different inductors",
                    (part.id,),
                    **where,
                )
        if part.kind == "opamp" and part.nodes[1] == part.nodes[2]:
            # (the output may share a node with an input: a voltage follower)
            raise CircuitError(
                f"op-amp {part.id} has both inputs on node {part.nodes[1]}; give the + and - inputs distinct nodes",
                (part.id,),
                **where,
            )
        if part.kind == "transformer" and (part.nodes[0] == part.nodes[1] or part.nodes[2] == part.nodes[3]):
            raise CircuitError(f"transformer {part.id} has a winding with both ends on one node", (part.id,), **where)
    pairs: dict[frozenset[str], str] = {}
    for part in circuit.parts:
        if part.kind == "coupling":
            key = frozenset(part.inductors)
            if key in pairs:
                raise CircuitError(
                    f"{pairs[key]} and {part.id} both couple {_names(key)}; keep one",
                    (pairs[key], part.id),
                    file=circuit.path,
                    line=part.line,
                )
            pairs[key] = part.id


def _check_islands(circuit: Circuit) -> None:
    if not any(GROUND in part.nodes for part in circuit.parts) and not any(p.kind == "opamp" for p in circuit.parts):
        like = sorted(n for n in circuit.nodes if n.lower() in (GROUND, "ground"))
        hint = f' (node names are case-sensitive: "{like[0]}" is not ground)' if like else ""
        raise CircuitError(f'no part connects to ground; name one node "{GROUND}"{hint}', (), file=circuit.path)
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


def _check_voltage_loops(circuit: Circuit, dc: bool) -> None:
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
            raise CircuitError(
                f"{_names(set(loop))} form a loop of {_kinds(circuit, set(loop))}: their voltages are fixed around a closed "
                "path, so the current in it is not determined; add a resistance in the loop or remove one source",
                tuple(sorted(set(loop))),
                file=circuit.path,
                line=part.line,
            )
        root[ra] = rb
        forest[a].append((b, part.id))
        forest[b].append((a, part.id))


def _check_current_cuts(circuit: Circuit, dc: bool) -> None:
    edges: list[tuple[str, str, str]] = []
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
        what = f"{_kinds(circuit, sources)} {_names(sources)}" if sources else "nothing"
        raise CircuitError(
            f"node{'s' if len(comp_nodes) > 1 else ''} {_names(comp_nodes)} "
            f"{'connect' if len(comp_nodes) > 1 else 'connects'} to the rest of the circuit only through "
            f"{what}: the node voltage is not determined; "
            "add a resistance from the node to ground or to another node",
            tuple(sources),
            file=circuit.path,
            line=min((circuit.part(s).line or 0 for s in sources), default=None) or None,
        )


#: Kinds whose terminal alone on a node is a slip of the pen: the part would carry no
#: current (or, for a current source, force a current with nowhere to go).
_NEEDS_COMPANY = ("resistor", "inductor", "capacitor", "current", "vccs", "cccs", "switch")
_OPAMP_PINS = ("output", "non-inverting input", "inverting input")


def _check_dangling(circuit: Circuit, named: frozenset[str] = frozenset()) -> None:
    """A node named by only one terminal is most often a misspelt node name.

    It is accepted where the lone terminal defines a voltage (an independent or
    controlled voltage source, an op-amp output, a transformer winding, an inductor
    coupled to another): that is an open-circuit output, and its voltage is determined. A node that a controlled source
    senses (``control``), or that a step's quantity names (the open port of
    ``impedance(p)``), counts as named a second time.
    """
    uses: dict[str, list[tuple[Part, int]]] = defaultdict(list)
    sensed: set[str] = set(named)
    coupled = {ident for part in circuit.parts if part.kind == "coupling" for ident in part.inductors}
    for part in circuit.parts:
        for index, node in enumerate(part.nodes):
            uses[node].append((part, index))
        if part.kind in ("vcvs", "vccs") and part.control:
            sensed.update(part.control)
    lonely: dict[str, tuple[Part, str]] = {}
    for node, terminals in uses.items():
        if node == GROUND or len(terminals) != 1:
            continue
        part, index = terminals[0]
        if part.kind == "opamp" and index > 0:
            lonely[node] = (part, f"the {_OPAMP_PINS[index]} of op-amp {part.id}")
        elif part.kind in _NEEDS_COMPANY and node not in sensed and part.id not in coupled:
            what = {"current": "a current source", "inductor": "an inductor"}.get(part.kind, f"a {part.kind}")
            lonely[node] = (part, f"one end of {part.id} ({what})")
    if not lonely:
        return
    for node, (part, _) in lonely.items():
        # Two lonely nodes spelt alike are most likely one node written two ways.
        others = [n for n, (p, _) in lonely.items() if n != node and p.id != part.id]
        close = difflib.get_close_matches(node, others, n=1, cutoff=0.6)
        if close:
            other = lonely[close[0]][0]
            raise CircuitError(
                f'nodes "{node}" (at {part.id}) and "{close[0]}" (at {other.id}) are each named only once, so '
                "neither connects to anything; if they are one node, spell it the same way in both parts",
                (part.id, other.id),
                file=circuit.path,
                line=part.line,
            )
    node, (part, end) = next(iter(lonely.items()))
    raise CircuitError(
        f'node "{node}" is named only once, so {end} connects to nothing; '
        f'check the spelling of "{node}" in the nodes of {part.id}, or connect another part to it',
        (part.id,),
        file=circuit.path,
        line=part.line,
    )


def check_structure(circuit: Circuit, named: frozenset[str] = frozenset()) -> None:
    """Raise :class:`CircuitError` naming the parts if the circuit cannot be solved as drawn.

    ``named`` holds the words of the steps' quantities: a node a step names is no
    dangling node but a port.
    """
    _check_references(circuit)
    _check_dangling(circuit, named)
    _check_islands(circuit)
    _check_voltage_loops(circuit, dc=False)
    _check_current_cuts(circuit, dc=False)


def check_dc(circuit: Circuit) -> None:
    """The checks for a solution at DC, where inductors are shorts and capacitors open.

    Made only when a DC solution is needed: a capacitive divider is a fine circuit
    for a transient, but has no unique DC solution.
    """
    _check_voltage_loops(circuit, dc=True)
    _check_current_cuts(circuit, dc=True)

"""Structural checks on a circuit before any matrix is solved.

A circuit the engine cannot analyse should be named in words: which nodes
float, which part has no ground, rather than "singular matrix".
"""

from __future__ import annotations

import numpy as np

from netnoise import circuit as ck
from netnoise.circuit.disjoint import DisjointSets
from netnoise.errors import CircuitError

__all__ = ["check_topology", "check_element_values"]


def check_topology(circuit: ck.Circuit) -> None:
    """Raise CircuitError for a circuit whose equations cannot be solved:
    no ground, parts not connected to ground at all, nodes without a DC path
    to ground, or a loop of voltage sources and inductors."""
    if not circuit.elements:
        raise CircuitError("the circuit has no elements")
    touches_ground = any(ck.GROUND in e.terminals() for e in circuit.elements)
    if not touches_ground:
        raise CircuitError(
            "no element connects to ground (node 0); every circuit needs a reference node: "
            "connect the circuit's common to node 0 (or 'gnd')"
        )
    every_terminal: list[tuple[str, str]] = []
    dc_paths: list[tuple[str, str]] = []
    for element in circuit.elements:
        terminals = element.terminals()
        if len(terminals) == 2:  # most elements: one pair, without a generator
            every_terminal.append((terminals[0], terminals[1]))
        else:
            every_terminal.extend((terminals[0], node) for node in terminals[1:])
        dc_paths.extend(element.dc_paths())
    apart = _cut_off_from_ground(circuit.nodes, every_terminal)
    if apart:
        raise CircuitError(
            f"part of the circuit is not connected to the rest at all (nodes {_some(apart, circuit)}); "
            "connect it, or remove it from the netlist"
        )
    _check_voltage_loops(circuit)
    floating = _cut_off_from_ground(circuit.nodes, dc_paths)
    if floating:
        raise CircuitError(
            f"node(s) {_some(floating, circuit)} have no DC path to ground: they connect to the rest only through "
            "capacitors or current sources, so their DC voltage is undefined. Add a resistor to "
            "ground (a large value such as 1 GΩ models a leakage path) or check the node names"
        )


def _some(nodes: list[str], circuit: ck.Circuit, most: int = 8) -> str:
    """The first ``most`` of ``nodes``, as the netlist spelled them."""
    names = [circuit.shown_node(node) for node in nodes[: most + 1]] + nodes[most + 1 :]
    return ", ".join(names[:most]) + (f" and {len(names) - most} more" if len(names) > most else "")


_SMALL_GRAPH = 2000  # edges up to which union-find in Python beats loading and calling scipy.sparse.csgraph


def _cut_off_from_ground(nodes: tuple[str, ...], edges: list[tuple[str, str]]) -> list[str]:
    """The nodes no chain of ``edges`` joins to ground (connected components
    of the graph: union-find for a small circuit, scipy.sparse.csgraph for a
    large one; loading csgraph loads scipy.sparse.linalg, ~0.1 s of start-up)."""
    if len(edges) <= _SMALL_GRAPH:
        sets = DisjointSets()
        for one, other in edges:
            sets.union(one, other)
        ground = sets.find(ck.GROUND)
        return [node for node in nodes if sets.find(node) != ground]
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    index = {ck.GROUND: 0, **{node: i + 1 for i, node in enumerate(nodes)}}
    if edges:
        a = np.fromiter(map(index.__getitem__, [e[0] for e in edges]), dtype=np.int64, count=len(edges))
        b = np.fromiter(map(index.__getitem__, [e[1] for e in edges]), dtype=np.int64, count=len(edges))
    else:
        a = b = np.zeros(0, dtype=np.int64)
    graph = coo_matrix((np.ones(a.size), (a, b)), shape=(len(index), len(index)))
    _, label = connected_components(graph, directed=False)
    return [node for node, i in index.items() if label[i] != label[0]]


def _check_voltage_loops(circuit: ck.Circuit) -> None:
    loops = DisjointSets()
    members: list[tuple[str, str]] = []  # (element name, one of its nodes)
    for element in circuit.elements:
        for a, b in element.voltage_defined():
            members.append((element.name, a))
            if a == b or not loops.union(a, b):
                names = [name for name, node in members if loops.find(node) == loops.find(a)]
                raise CircuitError(
                    f"{element.name} closes a loop of voltage sources, amplifier outputs and/or inductors "
                    f"({', '.join(names[:8])}): at DC the loop's voltages over-determine each "
                    "other. Add the series resistance the real parts have"
                )


def check_element_values(circuit: ck.Circuit) -> None:
    """Raise CircuitError for values the engine cannot compute with correctly, or that no real
    part can have: each kind checks its own (``Element.check_values``) and, where members
    depend on each other (couplings of inductors), all of them together (``check_all``)."""
    by_kind: dict[type, list] = {}
    for element in circuit.elements:
        by_kind.setdefault(type(element), []).append(element)
    for kind, members in by_kind.items():
        kind.check_all(members, circuit)  # type: ignore[attr-defined]

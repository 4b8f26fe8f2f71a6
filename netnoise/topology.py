"""Structural checks on a circuit before any matrix is solved.

A circuit the engine cannot analyse should be named in words: which nodes
float, which part has no ground, rather than "singular matrix".
"""

from __future__ import annotations

from . import circuit as ck
from .errors import CircuitError

__all__ = ["check_topology"]

# elements whose two terminals are joined by a path that conducts at DC
_DC_CONDUCTING = (
    ck.Resistor,
    ck.Inductor,
    ck.VoltageSource,
    ck.VoltageControlledVoltageSource,
    ck.CurrentControlledVoltageSource,
)


class _DisjointSets:
    def __init__(self):
        self.parent: dict[str, str] = {}

    def find(self, x: str) -> str:
        self.parent.setdefault(x, x)
        while self.parent[x] != x:
            self.parent[x] = self.parent[self.parent[x]]
            x = self.parent[x]
        return x

    def union(self, a: str, b: str) -> None:
        self.parent[self.find(a)] = self.find(b)


def check_topology(circuit: ck.Circuit) -> None:
    """Raise CircuitError if the circuit has no ground or nodes without a DC path to it."""
    if not circuit.elements:
        raise CircuitError("the circuit has no elements")
    nodes = circuit.nodes
    touches_ground = any(ck.GROUND in getattr(e, "nodes", ()) for e in circuit.elements)
    if not touches_ground:
        raise CircuitError(
            "no element connects to ground (node 0); every circuit needs a reference node: "
            "connect the circuit's common to node 0 (or 'gnd')"
        )
    dc = _DisjointSets()
    dc.find(ck.GROUND)
    for element in circuit.elements:
        if isinstance(element, _DC_CONDUCTING):
            dc.union(*element.nodes)
    ground = dc.find(ck.GROUND)
    floating = [node for node in nodes if dc.find(node) != ground]
    if floating:
        shown = ", ".join(floating[:8]) + (f" and {len(floating) - 8} more" if len(floating) > 8 else "")
        raise CircuitError(
            f"node(s) {shown} have no DC path to ground: they connect to the rest only through "
            "capacitors or current sources, so their DC voltage is undefined. Add a resistor to "
            "ground (a large value such as 1 GΩ models a leakage path) or check the node names"
        )

"""Structural checks on a circuit before any matrix is solved.

A circuit the engine cannot analyse should be named in words: which nodes
float, which part has no ground, rather than "singular matrix".
"""

from __future__ import annotations

from . import circuit as ck
from .errors import CircuitError

__all__ = ["check_topology"]

# elements that fix the voltage between their terminals (at DC for L)
_VOLTAGE_DEFINING = (
    ck.VoltageSource,
    ck.VoltageControlledVoltageSource,
    ck.CurrentControlledVoltageSource,
    ck.Inductor,
)

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

    def union(self, a: str, b: str) -> bool:
        """Join the sets of a and b; False if they were joined already."""
        ra, rb = self.find(a), self.find(b)
        self.parent[ra] = rb
        return ra != rb


def check_topology(circuit: ck.Circuit) -> None:
    """Raise CircuitError for a circuit whose equations cannot be solved:
    no ground, parts not connected to ground at all, nodes without a DC path
    to ground, or a loop of voltage sources and inductors."""
    if not circuit.elements:
        raise CircuitError("the circuit has no elements")
    nodes = circuit.nodes
    touches_ground = any(ck.GROUND in getattr(e, "nodes", ()) for e in circuit.elements)
    if not touches_ground:
        raise CircuitError(
            "no element connects to ground (node 0); every circuit needs a reference node: "
            "connect the circuit's common to node 0 (or 'gnd')"
        )
    _check_connected(circuit)
    _check_voltage_loops(circuit)
    dc = _DisjointSets()
    dc.find(ck.GROUND)
    for element in circuit.elements:
        if isinstance(element, _DC_CONDUCTING):
            dc.union(*element.nodes)
        elif isinstance(element, ck.OpAmp):  # its output is a voltage source to ground
            dc.union(element.nodes[2], ck.GROUND)
    ground = dc.find(ck.GROUND)
    floating = [node for node in nodes if dc.find(node) != ground]
    if floating:
        shown = ", ".join(floating[:8]) + (f" and {len(floating) - 8} more" if len(floating) > 8 else "")
        raise CircuitError(
            f"node(s) {shown} have no DC path to ground: they connect to the rest only through "
            "capacitors or current sources, so their DC voltage is undefined. Add a resistor to "
            "ground (a large value such as 1 GΩ models a leakage path) or check the node names"
        )


def _check_connected(circuit: ck.Circuit) -> None:
    joined = _DisjointSets()
    joined.find(ck.GROUND)
    for element in circuit.elements:
        terminals = list(getattr(element, "nodes", ())) + list(getattr(element, "control_nodes", ()))
        for node in terminals[1:]:
            joined.union(terminals[0], node)
    ground = joined.find(ck.GROUND)
    apart = [node for node in circuit.nodes if joined.find(node) != ground]
    if apart:
        shown = ", ".join(apart[:8]) + (f" and {len(apart) - 8} more" if len(apart) > 8 else "")
        raise CircuitError(
            f"part of the circuit is not connected to the rest at all (nodes {shown}); "
            "connect it, or remove it from the netlist"
        )


def _check_voltage_loops(circuit: ck.Circuit) -> None:
    loops = _DisjointSets()
    for element in circuit.elements:
        if isinstance(element, (*_VOLTAGE_DEFINING, ck.OpAmp)):
            a, b = (element.nodes[2], ck.GROUND) if isinstance(element, ck.OpAmp) else element.nodes
            if a == b or not loops.union(a, b):
                members = [
                    e.name for e in circuit.elements
                    if isinstance(e, (*_VOLTAGE_DEFINING, ck.OpAmp)) and loops.find(e.nodes[0 if not isinstance(e, ck.OpAmp) else 2]) == loops.find(a)
                ]
                raise CircuitError(
                    f"{element.name} closes a loop of voltage sources, amplifier outputs and/or inductors "
                    f"({', '.join(members[:8])}): at DC the loop's voltages over-determine each "
                    "other. Add the series resistance the real parts have"
                )

"""The linear DC operating point: ``G x = b_dc``.

Capacitors are open and inductors shorted (their branch rows read
v_a - v_b = 0 at s = 0); independent sources take their DC values;
amplifiers their DC open-loop gain.  Excess (1/f) resistor noise uses the
DC voltages found here.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse.linalg as spla

from netnoise import circuit as ck
from netnoise.errors import CircuitError
from netnoise.engine.mna import MnaSystem, assemble
from netnoise.circuit.topology import check_couplings, check_element_values, check_topology

__all__ = ["OperatingPoint", "operating_point", "solve_operating_point"]


@dataclass(frozen=True)
class OperatingPoint:
    """DC node voltages (V, ground omitted), and for every element the current
    through it from its first node to its second (A; SPICE convention for
    sources: into the + terminal) and the voltage across it (first node
    minus second, V).  An amplifier's entries are those of its output pin."""

    node_voltages: dict[str, float]
    element_currents: dict[str, float]
    element_voltages: dict[str, float]


def dc_excitation(system: MnaSystem) -> np.ndarray:
    """Right-hand side of the DC equations."""
    b = np.zeros(system.size)
    for element in system.circuit.elements:
        if isinstance(element, ck.VoltageSource):
            b[system.branch_index[ck.name_key(element.name)]] += element.dc
        elif isinstance(element, ck.CurrentSource):
            a, c = (system.node_row(n) for n in element.nodes)
            if a >= 0:
                b[a] -= element.dc
            if c >= 0:
                b[c] += element.dc
    return b


def solve_operating_point(system: MnaSystem) -> np.ndarray:
    """The DC solution vector of ``system``; CircuitError if singular."""
    try:
        lu = spla.splu(system.G.tocsc().astype(float))
    except RuntimeError:
        raise CircuitError(
            "the DC equations are singular: a node has no DC path to ground, or voltage sources, "
            "amplifier outputs and inductors form a loop"
        ) from None
    x = lu.solve(dc_excitation(system))
    if not np.all(np.isfinite(x)):
        raise CircuitError("the DC operating point is not finite; check for extreme element values")
    return x


def operating_point(circuit: ck.Circuit) -> OperatingPoint:
    """The DC operating point of ``circuit``."""
    check_topology(circuit)
    check_element_values(circuit)
    check_couplings(circuit)
    system = assemble(circuit)
    x = solve_operating_point(system)

    def v(node: str) -> float:
        row = system.node_row(node)
        return float(x[row]) if row >= 0 else 0.0

    def branch(name: str) -> float:
        return float(x[system.branch_index[ck.name_key(name)]])

    currents: dict[str, float] = {}
    voltages: dict[str, float] = {}
    for element in circuit.elements:
        if isinstance(element, ck.MutualCoupling):
            continue
        if isinstance(element, ck.OpAmp):
            voltages[element.name] = v(element.nodes[2])
            currents[element.name] = branch(element.name)
            continue
        across = v(element.nodes[0]) - v(element.nodes[1])
        voltages[element.name] = across
        if isinstance(element, ck.Resistor):
            currents[element.name] = across / element.resistance
        elif isinstance(element, ck.Capacitor):
            currents[element.name] = 0.0
        elif isinstance(element, ck.CurrentSource):
            currents[element.name] = element.dc
        elif isinstance(element, ck.VoltageControlledCurrentSource):
            c, d = element.control_nodes
            currents[element.name] = element.transconductance * (v(c) - v(d))
        elif isinstance(element, ck.CurrentControlledCurrentSource):
            currents[element.name] = element.gain * branch(element.control_source)
        else:  # V, E, H, L: their branch current is an unknown
            currents[element.name] = branch(element.name)
    nodes = {node: v(node) for node in system.node_index}
    return OperatingPoint(node_voltages=nodes, element_currents=currents, element_voltages=voltages)

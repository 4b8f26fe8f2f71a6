"""Structural checks on a circuit before any matrix is solved.

A circuit the engine cannot analyse should be named in words: which nodes
float, which part has no ground, rather than "singular matrix".
"""

from __future__ import annotations

import math

import numpy as np

from netnoise import circuit as ck
from netnoise.errors import CircuitError

__all__ = ["check_topology", "check_couplings", "check_element_values", "RESISTANCE_RANGE", "VALUE_RANGE", "GAIN_LIMIT"]

# Ω: the resistances the engine computes with.  A resistor's noise enters as 4kT/R (≈ 1.7e-20/R
# A²/Hz) and leaves multiplied by a squared transfer impedance (up to the largest R squared), so
# products of about four such values must stay normal doubles (1e-308 .. 1e308); 1e±60 keeps
# them within 1e±260.  Beyond it (1e308 Ω: 4kT/R underflows to 0) the noise would be shown as 0.
RESISTANCE_RANGE = (1e-60, 1e60)
VALUE_RANGE = RESISTANCE_RANGE  # F and H: time constants R·C, L/R then stay within 1e±120 s

# the largest |gain| of a controlled source (V/V, A/A, S, Ω) and amplifier open-loop gain: the
# same span as RESISTANCE_RANGE, for the same reason (a gain near 1e308 overflows the matrix norms
# and the squared transfers)
GAIN_LIMIT = 1e60

_GAINS = (
    (ck.VoltageControlledVoltageSource, "gain", "V/V"),
    (ck.CurrentControlledCurrentSource, "gain", "A/A"),
    (ck.VoltageControlledCurrentSource, "transconductance", "S"),
    (ck.CurrentControlledVoltageSource, "transresistance", "Ω"),
)

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
    touches_ground = any(ck.GROUND in getattr(e, "nodes", ()) for e in circuit.elements)
    if not touches_ground:
        raise CircuitError(
            "no element connects to ground (node 0); every circuit needs a reference node: "
            "connect the circuit's common to node 0 (or 'gnd')"
        )
    every_terminal = []
    dc_paths = []
    for element in circuit.elements:
        terminals = tuple(getattr(element, "nodes", ())) + tuple(getattr(element, "control_nodes", ()))
        every_terminal.extend((terminals[0], node) for node in terminals[1:])
        if isinstance(element, _DC_CONDUCTING):
            dc_paths.append(element.nodes)
        elif isinstance(element, ck.OpAmp):  # its output is a voltage source to ground
            dc_paths.append((element.nodes[2], ck.GROUND))
    apart = _cut_off_from_ground(circuit.nodes, every_terminal)
    if apart:
        raise CircuitError(
            f"part of the circuit is not connected to the rest at all (nodes {_some(apart)}); "
            "connect it, or remove it from the netlist"
        )
    _check_voltage_loops(circuit)
    floating = _cut_off_from_ground(circuit.nodes, dc_paths)
    if floating:
        raise CircuitError(
            f"node(s) {_some(floating)} have no DC path to ground: they connect to the rest only through "
            "capacitors or current sources, so their DC voltage is undefined. Add a resistor to "
            "ground (a large value such as 1 GΩ models a leakage path) or check the node names"
        )


def _some(names: list[str], most: int = 8) -> str:
    return ", ".join(names[:most]) + (f" and {len(names) - most} more" if len(names) > most else "")


def _cut_off_from_ground(nodes: tuple[str, ...], edges: list[tuple[str, str]]) -> list[str]:
    """The nodes no chain of ``edges`` joins to ground (connected components
    of the graph, scipy.sparse.csgraph)."""
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    index = {ck.GROUND: 0, **{node: i + 1 for i, node in enumerate(nodes)}}
    if edges:
        a = np.fromiter((index[e[0]] for e in edges), dtype=np.int64, count=len(edges))
        b = np.fromiter((index[e[1]] for e in edges), dtype=np.int64, count=len(edges))
    else:
        a = b = np.zeros(0, dtype=np.int64)
    graph = coo_matrix((np.ones(a.size), (a, b)), shape=(len(index), len(index)))
    _, label = connected_components(graph, directed=False)
    return [node for node, i in index.items() if label[i] != label[0]]


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


# a coefficient matrix whose smallest eigenvalue lies above -this is taken as positive
# semidefinite: coefficients are read from text with a few digits, and eigvalsh of a matrix of
# entries of size 1 is accurate to ~1e-15; an exactly singular set (k = 1, a perfect
# transformer) must pass
_COUPLING_TOLERANCE = 1e-12


def check_couplings(circuit: ck.Circuit) -> None:
    """Raise CircuitError for mutual couplings (K elements) no set of real coils can have: an
    inductor coupled with itself, a pair coupled twice, a coupling naming something that is
    not an inductor, or coefficients whose inductance matrix is not positive semidefinite
    (checked for each group of inductors joined by couplings)."""
    couplings = [e for e in circuit.elements if isinstance(e, ck.MutualCoupling)]
    if not couplings:
        return
    inductors = {ck.name_key(e.name): e for e in circuit.elements if isinstance(e, ck.Inductor)}
    pairs: dict[frozenset, ck.MutualCoupling] = {}
    groups = _DisjointSets()
    for k in couplings:
        first, second = (ck.name_key(name) for name in k.inductors)
        for name in k.inductors:
            if ck.name_key(name) not in inductors:
                raise CircuitError(f"{k.name}: '{name}' is not an inductor of this circuit")
        if first == second:
            raise CircuitError(
                f"{k.name} couples inductor {inductors[first].name} with itself; a coupling joins two "
                "different inductors (an inductor's own inductance is its value): remove it or name the other inductor"
            )
        pair = frozenset((first, second))
        if pair in pairs:
            raise CircuitError(
                f"{pairs[pair].name} and {k.name} both couple {inductors[first].name} and {inductors[second].name}; "
                "a pair of inductors has one coupling coefficient: keep one K element for the pair"
            )
        pairs[pair] = k
        groups.union(first, second)
    members: dict[str, list[str]] = {}
    for key in sorted({key for pair in pairs for key in pair}):
        members.setdefault(groups.find(key), []).append(key)
    for keys in members.values():
        where = {key: i for i, key in enumerate(keys)}
        own = np.array([inductors[key].inductance for key in keys], dtype=float)
        matrix = np.diag(own)  # the group's inductance matrix: L_i on the diagonal, M_ij = k·√(L_i·L_j)
        group_k = [k for pair, k in pairs.items() if next(iter(pair)) in where]
        for k in group_k:
            i, j = (where[ck.name_key(name)] for name in k.inductors)
            matrix[i, j] = matrix[j, i] = k.coupling * math.sqrt(abs(own[i] * own[j]))
        # scaled by D⁻¹ on both sides, D = diag(√|L_i|) (congruence keeps the signs of the
        # eigenvalues, Sylvester's law of inertia), so values from nH to H are judged alike
        scale = 1.0 / np.sqrt(np.where(own != 0.0, np.abs(own), 1.0))
        lowest = float(np.linalg.eigvalsh(scale[:, None] * matrix * scale[None, :])[0])
        if lowest < -_COUPLING_TOLERANCE:
            names = ", ".join(inductors[key].name for key in keys)
            raise CircuitError(
                f"the couplings {', '.join(k.name for k in group_k)} among inductors {names} cannot exist: their "
                f"inductance matrix is not positive semidefinite (the coefficient matrix has the eigenvalue "
                f"{lowest:.3g}), so these coils could store negative magnetic energy. Lower the coupling "
                "coefficients (for three coils k12² + k13² + k23² - 2·k12·k13·k23 must not exceed 1)"
            )


def check_element_values(circuit: ck.Circuit) -> None:
    """Raise CircuitError for a value the engine cannot compute with correctly: a resistance
    outside :data:`RESISTANCE_RANGE` (its noise would underflow or overflow and be shown as a
    number), or a negative capacitance or inductance (an active element: like a negative
    resistance, it is refused; model active behaviour with a controlled source)."""
    low, high = RESISTANCE_RANGE
    for element in circuit.elements:
        for kind, attribute, unit in _GAINS:
            if isinstance(element, kind) and not abs(getattr(element, attribute)) <= GAIN_LIMIT:
                raise CircuitError(
                    f"{element.name}: {attribute} {getattr(element, attribute):g} {unit} is beyond ±{GAIN_LIMIT:g}, "
                    "the range netnoise computes correctly (the matrix norms and squared transfers would "
                    "overflow): a gain of 1e6 to 1e9 models an ideal amplifier"
                )
        if isinstance(element, ck.Resistor):
            r = element.resistance
            if math.isfinite(r) and r > 0.0 and not (low <= r <= high):
                raise CircuitError(
                    f"{element.name}: resistance {r:g} Ω is outside the range netnoise computes correctly "
                    f"({low:g} Ω to {high:g} Ω): its noise 4kT/R and the products it enters would leave the "
                    "range of floating-point numbers and be shown as 0 or infinity. Use a value in the "
                    "range (a wire: merge the nodes; an open circuit: remove the resistor)"
                )
        elif isinstance(element, ck.OpAmp) and not abs(element.model.open_loop_gain) <= GAIN_LIMIT:
            raise CircuitError(
                f"{element.name}: open-loop gain aol = {element.model.open_loop_gain:g} (model "
                f"{element.model.name}) is above {GAIN_LIMIT:g}, beyond what netnoise computes correctly "
                "(the squared transfers would overflow): a gain of 1e6 to 1e9 models an ideal amplifier"
            )
        elif isinstance(element, (ck.Capacitor, ck.Inductor)) and not (
            _reactance(element) <= 0.0 or VALUE_RANGE[0] <= _reactance(element) <= VALUE_RANGE[1]
        ):
            what, unit = ("capacitance", "F") if isinstance(element, ck.Capacitor) else ("inductance", "H")
            raise CircuitError(
                f"{element.name}: {what} {_reactance(element):g} {unit} is outside the range netnoise computes "
                f"correctly ({VALUE_RANGE[0]:g} {unit} to {VALUE_RANGE[1]:g} {unit}): the circuit's time constants "
                "and the noise they shape would leave the range of floating-point numbers and be shown as 0. "
                "Use a value in the range (or leave the part out)"
            )
        elif isinstance(element, ck.Capacitor) and element.capacitance < 0.0:
            raise CircuitError(
                f"{element.name}: negative capacitance ({element.capacitance:g} F). Like a negative resistance it "
                "is an active element (it needs a source of power and can make the circuit unstable); netnoise "
                "takes passive, positive values: model active behaviour with a controlled source"
            )
        elif isinstance(element, ck.Inductor) and element.inductance < 0.0:
            raise CircuitError(
                f"{element.name}: negative inductance ({element.inductance:g} H). Like a negative resistance it "
                "is an active element (it needs a source of power and can make the circuit unstable); netnoise "
                "takes passive, positive values: model active behaviour with a controlled source"
            )


def _reactance(element) -> float:
    return element.capacitance if isinstance(element, ck.Capacitor) else element.inductance

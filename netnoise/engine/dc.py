"""The linear DC operating point: ``G x = b_dc``.

Capacitors are open and inductors shorted (their branch rows read
v_a - v_b = 0 at s = 0); independent sources take their DC values;
amplifiers their DC open-loop gain.  Excess (1/f) resistor noise uses the
DC voltages found here.  A circuit with nonlinear elements (diodes,
transistors) is solved by :mod:`netnoise.engine.operating_point`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from netnoise import circuit as ck
from netnoise.circuit.topology import check_element_values, check_topology
from netnoise.constants import DEFAULT_TEMPERATURE_C, ZERO_CELSIUS_K
from netnoise.engine.mna import MnaSystem, assemble
from netnoise.errors import CircuitError

__all__ = ["OperatingPoint", "operating_point", "solve_operating_point"]


@dataclass(frozen=True)
class OperatingPoint:
    """DC node voltages (V, ground omitted), and for every element the current
    through it from its first node to its second (A; SPICE convention for
    sources: into the + terminal) and the voltage across it (first node
    minus second, V).  An amplifier's entries are those of its output pin.

    A circuit with nonlinear elements adds ``devices``: each device's
    operating point (keys end in their SI unit: ``"collector_current_A"``)
    and ``method``, how the nonlinear equations were solved; the point found
    is one solution of them (a circuit with several stable states has others)."""

    node_voltages: dict[str, float]
    element_currents: dict[str, float]
    element_voltages: dict[str, float]
    devices: dict[str, dict[str, float]] = field(default_factory=dict)
    method: str | None = None


def dc_excitation(system: MnaSystem) -> np.ndarray:
    """Right-hand side of the DC equations: every element's DC excitation."""
    b = np.zeros(system.size)
    stamps = system.stamps
    for element in system.circuit.elements:
        element.stamp_dc(stamps, b)
    return b


def solve_operating_point(system: MnaSystem) -> np.ndarray:
    """The DC solution vector of ``system``; CircuitError if singular.  A
    system with nonlinear elements is solved by Newton's method at the
    temperature its devices were biased at (else the circuit's)."""
    if any(not element.is_linear for element in system.circuit.elements):
        from netnoise.engine.operating_point import solve_nonlinear

        temperatures = [e.small_signal.temperature_K for e in system.circuit.elements if e.small_signal is not None]
        celsius = system.circuit.temperature_celsius
        kelvin = ZERO_CELSIUS_K + (DEFAULT_TEMPERATURE_C if celsius is None else celsius)
        return solve_nonlinear(system.circuit, temperatures[0] if temperatures else kelvin).x
    import scipy.sparse.linalg as spla  # on first use: a noise analysis alone never loads it

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


def operating_point(circuit: ck.Circuit, temperature_celsius: float | None = None) -> OperatingPoint:
    """The DC operating point of ``circuit`` at ``temperature_celsius`` (°C; default: the
    netlist's ``.temp``, else 27 °C), which sets resistors with temperature coefficients,
    diodes and transistors.  Nodes are keyed as the netlist spelled them."""
    if temperature_celsius is None:
        temperature_celsius = circuit.temperature_celsius
    if temperature_celsius is None:
        temperature_celsius = DEFAULT_TEMPERATURE_C
    circuit = circuit.at_temperature(temperature_celsius)
    check_topology(circuit)
    check_element_values(circuit)
    method = None
    if any(not element.is_linear for element in circuit.elements):
        from netnoise.engine.operating_point import solve_nonlinear

        solution = solve_nonlinear(circuit, temperature_celsius + ZERO_CELSIUS_K)
        circuit, x, method = solution.circuit, np.array(solution.x), solution.method
        system = assemble(circuit)
    else:
        system = assemble(circuit)
        x = solve_operating_point(system)

    view = _Solution(system, x)
    currents: dict[str, float] = {}
    voltages: dict[str, float] = {}
    devices: dict[str, dict[str, float]] = {}
    for element in circuit.elements:
        small = element.small_signal
        if small is not None:
            devices[element.name] = {key: value for key, value in small.summary if math.isfinite(value)}
        current = element.dc_current(view)
        if current is None:
            continue
        currents[element.name] = current
        voltages[element.name] = element.dc_voltage(view) or 0.0
    nodes = {circuit.shown_node(node): view.v(node) for node in system.node_index}
    return OperatingPoint(
        node_voltages=nodes, element_currents=currents, element_voltages=voltages, devices=devices, method=method
    )


class _Solution:
    """A solution vector seen by node and element."""

    def __init__(self, system: MnaSystem, x: np.ndarray) -> None:
        self.system = system
        self.x = x

    def v(self, node: str) -> float:
        row = self.system.node_row(node)
        return float(self.x[row]) if row >= 0 else 0.0

    def branch_current(self, element) -> float:
        name = element if isinstance(element, str) else element.name
        return float(self.x[self.system.branch_index[ck.name_key(name)]])

"""The DC operating point of a circuit with nonlinear elements, and the
circuit linearised there.

The DC equations are ``F(x) = G x − b + Σ i_dev(x) = 0``: ``G`` and ``b``
are the linear circuit's (the nonlinear kinds stamp only their ohmic
resistances), ``i_dev`` the currents each nonlinear core draws.  Newton's
method solves them, each device linearised at its junction voltages limited
from the previous iterate (Nagel, *SPICE2*, UCB/ERL M520, 1975; the method
is textbook: Vladimirescu, *The SPICE Book*, 1994).  When plain Newton does
not converge, a conductance from every node to ground is stepped down from
10 mS to nothing (gmin stepping), and failing that the independent sources
are ramped up from zero (source stepping).  A circuit that has more than one
stable state (a latch) gets one of them: the solution found is *a* solution.

:func:`biased` returns the circuit itself when every element is linear (the
linear path stays bit-identical), else a copy whose nonlinear elements hold
their small-signal model at the solution: assembling that copy gives the G
and C of the linearised circuit, and its noise sources are the devices'
noise at their operating point.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from netnoise import circuit as ck
from netnoise.circuit.elements.base import DeviceEnvironment
from netnoise.circuit.topology import check_element_values
from netnoise.engine.mna import MnaSystem, assemble
from netnoise.errors import CircuitError

__all__ = ["NonlinearSolution", "is_nonlinear", "solve_nonlinear", "biased", "MAX_NODE_VOLTAGE"]

_RELTOL = 1e-9  # relative step at convergence
_VNTOL = 1e-12  # V, absolute step at convergence
_ABSTOL = 1e-15  # A, absolute step of a branch current at convergence
_MAX_ITERATIONS = 150
_GMIN_STEPS = tuple(10.0**-k for k in range(2, 13))  # S from every node to ground, 10 mS .. 1 pS
MAX_NODE_VOLTAGE = 1e6  # V: a solution beyond is one only the junctions' GMIN holds up


@dataclass(frozen=True, eq=False)
class NonlinearSolution:
    """The solved DC point: the solution vector (the assembled ordering), the
    circuit with its nonlinear elements biased there, how it was found
    (``"Newton"``, ``"gmin stepping"`` or ``"source stepping"``), the Newton
    iterations taken in all, and the temperature (K)."""

    x: np.ndarray
    circuit: ck.Circuit
    method: str
    iterations: int
    temperature_K: float


def is_nonlinear(circuit: ck.Circuit) -> bool:
    return any(not element.is_linear for element in circuit.elements)


class _Newton:
    """Newton's method over one assembled system."""

    def __init__(self, system: MnaSystem, env: DeviceEnvironment) -> None:
        self.system = system
        self.env = env
        self.G = system.G.tocsr().astype(float)
        from netnoise.engine.dc import dc_excitation

        self.b = dc_excitation(system)
        stamps = system.stamps
        self.devices = [
            (e, np.array(e.device_rows(stamps), dtype=np.int64)) for e in system.circuit.elements if not e.is_linear
        ]
        self.voltage_rows = np.array([label.startswith("v(") for label in system.unknowns])
        self.iterations = 0
        self.last_x = np.zeros(system.size)
        self.unsettled: list[str] = []

    @staticmethod
    def _at(x: np.ndarray, rows: np.ndarray) -> np.ndarray:
        return np.where(rows >= 0, x[np.maximum(rows, 0)], 0.0)

    def run(self, x0: np.ndarray, gdiag: float, scale: float) -> np.ndarray | None:
        x = x0.copy()
        states: list[np.ndarray | None] = [None] * len(self.devices)
        n = self.system.size
        diagonal = sp.diags(np.where(self.voltage_rows, gdiag, 0.0)) if gdiag > 0.0 else None
        for iteration in range(_MAX_ITERATIONS):
            self.iterations += 1
            rhs = scale * self.b
            rows_, cols_, vals_ = [], [], []
            settled = []
            for k, (device, rows) in enumerate(self.devices):
                load = device.load(self._at(x, rows), states[k], self.env)
                states[k] = load.state
                settled.append(load.settled)
                keep = rows >= 0
                np.subtract.at(rhs, rows[keep], load.current[keep])
                r, c = np.meshgrid(rows, rows, indexing="ij")
                mask = (r >= 0) & (c >= 0)
                rows_.append(r[mask])
                cols_.append(c[mask])
                vals_.append(load.jacobian[mask])
            jacobian = self.G + sp.csr_matrix(
                (np.concatenate(vals_), (np.concatenate(rows_), np.concatenate(cols_))), shape=(n, n)
            )
            if diagonal is not None:
                jacobian = jacobian + diagonal
            import scipy.sparse.linalg as spla  # on first use: a linear circuit never loads it

            try:
                new = spla.splu(sp.csc_matrix(jacobian)).solve(rhs)
            except RuntimeError:
                return None
            if not np.all(np.isfinite(new)):
                return None
            step = np.abs(new - x)
            bound = np.where(
                self.voltage_rows,
                _RELTOL * np.maximum(np.abs(new), np.abs(x)) + _VNTOL,
                _RELTOL * np.maximum(np.abs(new), np.abs(x)) + _ABSTOL,
            )
            self.last_x = new
            self.unsettled = [
                device.name
                for (device, rows), ok in zip(self.devices, settled)
                if not ok or np.any(step[rows[rows >= 0]] > bound[rows[rows >= 0]])
            ]
            x = new
            if iteration > 0 and all(settled) and np.all(step <= bound):
                return x
        return None


def _refuse(newton: _Newton) -> CircuitError:
    names = newton.unsettled or [device.name for device, _ in newton.devices]
    parts = []
    for name in names[:5]:
        _, rows = next((d, r) for d, r in newton.devices if d.name == name)
        labels = newton.system.unknowns
        shown = [
            f"{labels[row]} {newton.last_x[row]:.4g} {'V' if labels[row].startswith('v(') else 'A'}"
            for row in dict.fromkeys(int(r) for r in rows if r >= 0)
        ]
        parts.append(f"{name} ({', '.join(shown)})")
    more = f" and {len(names) - 5} more" if len(names) > 5 else ""
    return CircuitError(
        "the DC operating point was not found (Newton's method, then gmin stepping, then source stepping): "
        f"{'; '.join(parts)}{more} did not settle (shown with the last values of Newton's method at full supply). Check the bias network: a supply, "
        "a missing resistor, a device connected the wrong way round or a model value out of range"
    )


def solve_nonlinear(circuit: ck.Circuit, temperature_K: float) -> NonlinearSolution:
    """The DC operating point of ``circuit`` (which has nonlinear elements) at
    ``temperature_K`` kelvin (a device's own temp= wins); CircuitError names
    the devices that did not settle."""
    plain = dataclasses.replace(circuit, elements=tuple(e.without_bias() for e in circuit.elements))
    system = assemble(plain)
    env = DeviceEnvironment(temperature_K=temperature_K)
    newton = _Newton(system, env)
    zero = np.zeros(system.size)
    method = "Newton"
    x = newton.run(zero, 0.0, 1.0)
    first = (newton.last_x, newton.unsettled)  # what a failure reports: the full circuit's last iterate
    if x is None:
        method = "gmin stepping"
        x = _gmin_stepping(newton, zero)
    if x is None:
        method = "source stepping"
        x = _source_stepping(newton, zero)
    if x is None:
        newton.last_x, newton.unsettled = first
        raise _refuse(newton)
    _refuse_runaway(system, x)
    elements = list(plain.elements)
    for index, element in enumerate(elements):
        if not element.is_linear:
            rows = np.array(element.device_rows(system.stamps), dtype=np.int64)
            elements[index] = element.at_operating_point(_Newton._at(x, rows), env)
    solved = dataclasses.replace(circuit, elements=tuple(elements))
    x.setflags(write=False)
    return NonlinearSolution(x, solved, method, newton.iterations, temperature_K)


def _gmin_stepping(newton: _Newton, x0: np.ndarray) -> np.ndarray | None:
    x: np.ndarray | None = x0
    for gdiag in (*_GMIN_STEPS, 0.0):
        x = newton.run(x, gdiag, 1.0)  # type: ignore[arg-type]
        if x is None:
            return None
    return x


def _source_stepping(newton: _Newton, x0: np.ndarray) -> np.ndarray | None:
    scale, step, x = 0.0, 0.1, x0
    while scale < 1.0:
        trial = min(1.0, scale + step)
        found = newton.run(x, 0.0, trial)
        if found is None:
            step /= 4.0
            if step < 1e-5:
                return None
            continue
        scale, x = trial, found
        step = min(step * 2.0, 0.5)
    return x


def _refuse_runaway(system: MnaSystem, x: np.ndarray) -> None:
    voltages = {node: float(x[row]) for node, row in system.node_index.items()}
    high = [(node, v) for node, v in voltages.items() if abs(v) > MAX_NODE_VOLTAGE]
    if high:
        shown = ", ".join(f"{node} at {v:.3g} V" for node, v in high[:5])
        raise CircuitError(
            f"the circuit has no DC operating point: the equations settle only with {shown}, held there by "
            "nothing but the 1 pS netnoise puts across each junction (a current forced into a junction in "
            "its blocking direction, or a source fighting a device). Give that current a path"
        )


def biased(circuit: ck.Circuit, temperature_K: float) -> tuple[ck.Circuit, NonlinearSolution | None]:
    """``circuit`` itself when it is linear; else the circuit with its
    nonlinear elements biased at their DC operating point, and that point."""
    if not is_nonlinear(circuit):
        return circuit, None
    check_element_values(circuit)  # before Newton divides by them
    solution = solve_nonlinear(circuit, temperature_K)
    return solution.circuit, solution

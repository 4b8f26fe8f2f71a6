"""Small circuits built directly as netnoise.circuit objects (no parser),
so the engine tests do not depend on the netlist front end."""

from __future__ import annotations

from netnoise.circuit import (
    Capacitor,
    Circuit,
    CurrentControlledCurrentSource,
    CurrentControlledVoltageSource,
    CurrentSource,
    Inductor,
    Resistor,
    VoltageControlledVoltageSource,
    VoltageSource,
)


def circuit(*elements, title="test circuit"):
    return Circuit(title=title, elements=tuple(elements))


def R(name, a, b, value):
    return Resistor(name=name, nodes=(a, b), resistance=value)


def C(name, a, b, value):
    return Capacitor(name=name, nodes=(a, b), capacitance=value)


def L(name, a, b, value):
    return Inductor(name=name, nodes=(a, b), inductance=value)


def V(name, a, b, ac=1.0):
    return VoltageSource(name=name, nodes=(a, b), ac_magnitude=ac)


def I(name, a, b, ac=1.0):
    return CurrentSource(name=name, nodes=(a, b), ac_magnitude=ac)


def E(name, a, b, ca, cb, gain):
    return VoltageControlledVoltageSource(name=name, nodes=(a, b), control_nodes=(ca, cb), gain=gain)


def F(name, a, b, control, gain):
    return CurrentControlledCurrentSource(name=name, nodes=(a, b), control_source=control, gain=gain)


def H(name, a, b, control, r):
    return CurrentControlledVoltageSource(name=name, nodes=(a, b), control_source=control, transresistance=r)


def butterworth_ladder(order: int, r0: float, f3db: float):
    """Doubly terminated LC Butterworth low-pass ending in a shunt C.

    Odd orders start with a shunt C, even orders with a series L, so the
    load's own noise is filtered too (an even order ending in a series L
    would pass RL's white noise unfiltered: unbounded to infinite bandwidth).

    Prototype values g_k = 2 sin((2k-1)π/2n) (Williams & Taylor, Electronic
    Filter Design Handbook; the standard closed form), de-normalised to the
    termination r0 (ohms) and corner f3db (Hz).  Input source Vin with
    series Rs, output across RL at node 'n{order}'.
    """
    import math

    w = 2 * math.pi * f3db
    parts = [V("Vin", "src", "0"), R("Rs", "src", "n0", r0)]
    node = "n0"
    for k in range(1, order + 1):
        g = 2 * math.sin((2 * k - 1) * math.pi / (2 * order))
        if (k + order) % 2 == 0:  # shunt capacitor at the current node
            parts.append(C(f"C{k}", node, "0", g / (r0 * w)))
        else:  # series inductor to a new node
            nxt = f"n{k}"
            parts.append(L(f"L{k}", node, nxt, g * r0 / w))
            node = nxt
    parts.append(R("RL", node, "0", r0))
    return circuit(*parts, title=f"Butterworth n={order}"), node


def opamp(name, plus, minus, out, **model):
    """An amplifier instance with an OpAmpModel built from keyword arguments."""
    from netnoise.circuit import OpAmp, OpAmpModel

    return OpAmp(name=name, nodes=(plus, minus, out), model=OpAmpModel(name=model.pop("model_name", "test"), **model))


def rc_grid_lines(nx: int, ny: int, leak: str | None = None) -> list[str]:
    """Netlist lines of an invented RC grid m{i}_{j}: uneven resistors between neighbours, a
    grounded capacitor of one of five values at every node (and a resistor ``leak`` to ground
    at every node when given); the tests add their own source, ground path and ``.end``."""
    lines = []
    k = 0
    for i in range(nx):
        for j in range(ny):
            for di, dj in ((1, 0), (0, 1)):
                if i + di < nx and j + dj < ny:
                    k += 1
                    lines.append(f"R{k} m{i}_{j} m{i + di}_{j + dj} {1000 + 37 * (k % 11)}")
            lines.append(f"C{i}_{j} m{i}_{j} 0 {(1 + (i * ny + j) % 5) * 1e-13:g}")
            if leak is not None:
                lines.append(f"Rg{i}_{j} m{i}_{j} 0 {leak}")
    return lines

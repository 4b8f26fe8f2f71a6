"""Supply rails at the DC operating point: the pins of an amplifier drawn with its
supplies (``Xname in+ in- v+ v- out MODEL``) checked against them.

The rails are not modelled (the amplifier is linear and draws no supply current), so
a pin outside them means a real part would be saturated or out of its input range and
the small-signal noise figures would not hold; the analysis says so in a note
(code ``outside-rails``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from netnoise import circuit as ck
from netnoise.engine.dc import _Solution, solve_operating_point
from netnoise.engine.mna import MnaSystem
from netnoise.errors import CircuitError
from netnoise.results.notes import Note

__all__ = ["RailExcursion", "rail_excursions", "rail_notes", "RAIL_NOTE"]

RAIL_NOTE = "outside-rails"  # the code of the notes made here


@dataclass(frozen=True)
class RailExcursion:
    """A pin of ``element`` whose DC voltage lies outside its supply rails, or (``pin`` None)
    rails that cannot be checked: a rail node connected to nothing else (``voltage_V`` None),
    or rails whose upper one is not above the lower.  Node names canonical; volts."""

    element: str
    pin: str | None
    node: str | None
    voltage_V: float | None
    upper_node: str
    lower_node: str
    upper_V: float | None
    lower_V: float | None


def rail_excursions(system: MnaSystem, x: np.ndarray) -> list[RailExcursion]:
    """Every pin outside its element's supply rails (:meth:`Element.rail_pins`) at the DC
    solution ``x`` of ``system``.  A pin counts as outside beyond 1 µV plus 1e-9 of the
    rails' size (rounding of the solve)."""
    view = _Solution(system, x)
    out: list[RailExcursion] = []
    for element in system.circuit.elements:
        found = element.rail_pins()
        if found is None:
            continue
        (upper, lower), pins = found
        known = [node == ck.GROUND or node in system.node_index for node in (upper, lower)]
        if not all(known):
            out.append(RailExcursion(element.name, None, None, None, upper, lower, None, None))
            continue
        high, low = view.v(upper), view.v(lower)
        if not high > low:
            out.append(RailExcursion(element.name, None, None, None, upper, lower, high, low))
            continue
        slack = 1e-6 + 1e-9 * max(abs(high), abs(low))
        for pin, node in pins:
            v = view.v(node)
            if v > high + slack or v < low - slack:
                out.append(RailExcursion(element.name, pin, node, v, upper, lower, high, low))
    return out


def rail_notes(system: MnaSystem) -> list[Note]:
    """Notes on the elements whose pins leave their supply rails at the DC operating point
    (none when no element has rails: the DC point is not even solved)."""
    if not any(element.rail_pins() is not None for element in system.circuit.elements):
        return []
    circuit = system.circuit
    try:
        x = solve_operating_point(system)
    except CircuitError as error:
        return [Note(RAIL_NOTE, f"supply rails not checked: {error}", {})]
    notes = []
    for found in rail_excursions(system, x):
        upper, lower = circuit.shown_node(found.upper_node), circuit.shown_node(found.lower_node)
        data = {
            "element": found.element,
            "pin": found.pin,
            "node": circuit.shown_node(found.node) if found.node is not None else None,
            "voltage_V": found.voltage_V,
            "upper_node": upper,
            "lower_node": lower,
            "upper_V": found.upper_V,
            "lower_V": found.lower_V,
        }
        if found.upper_V is None:
            text = (
                f"{found.element}: its supply pins {upper} and {lower} are not both driven by the circuit "
                "(a rail connected to nothing else), so its pins were not checked against the rails"
            )
        elif found.pin is None:
            text = (
                f"{found.element}: its upper rail {upper} ({found.upper_V:.4g} V) is not above its lower "
                f"rail {lower} ({found.lower_V:.4g} V); the pin order is in+ in- v+ v- out"
            )
        else:
            text = (
                f"{found.element}: its {found.pin} pin ({circuit.shown_node(found.node or '')}) sits at "
                f"{found.voltage_V:.4g} V at DC, outside its supply rails {lower} = {found.lower_V:.4g} V .. "
                f"{upper} = {found.upper_V:.4g} V: a real part would be saturated there, and the noise "
                "figures, which assume it linear, would not hold"
            )
        notes.append(Note(RAIL_NOTE, text, data))
    return notes

"""The elaborated, flat circuit: what the engine sees.

The elaborator (:mod:`netnoise.netlist.elaborate`) turns the parsed netlist
into a :class:`Circuit`: subcircuits expanded, parameters evaluated, every
value a float in SI units, every element keeping the place in the file it
came from, and every primary value remembering where it came from
(:class:`ValueOrigin`).

Naming conventions
------------------
* Node names are canonical: lower case, hierarchical with ``.`` (``x1.mid``),
  ground is always ``"0"`` (``gnd`` in any case is an alias).  Each keeps the
  spelling the user first wrote (``node_spellings``, ``Circuit.shown_node``):
  compared lower case, shown as written (``/OUT``, ``X1.Mid``).
* Element names keep the spelling the user wrote, hierarchical with ``.``
  (``X1.R2``: instance path, then element).  Look-ups are case-insensitive;
  use :func:`name_key` to compare.
"""

from __future__ import annotations

import dataclasses
import difflib
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from functools import cached_property

from netnoise.circuit.elements.amplifier import OpAmp, OpAmpModel
from netnoise.circuit.elements.base import Element
from netnoise.circuit.elements.bipolar import Bipolar
from netnoise.circuit.elements.capacitor import Capacitor
from netnoise.circuit.elements.controlled import (
    CurrentControlledCurrentSource,
    CurrentControlledVoltageSource,
    VoltageControlledCurrentSource,
    VoltageControlledVoltageSource,
)
from netnoise.circuit.elements.coupling import MutualCoupling
from netnoise.circuit.elements.diode import Diode
from netnoise.circuit.elements.inductor import Inductor
from netnoise.circuit.elements.jfet import JunctionFet
from netnoise.circuit.elements.lossy_capacitor import LossyCapacitor
from netnoise.circuit.elements.mosfet import Mosfet
from netnoise.circuit.elements.resistor import Resistor
from netnoise.circuit.elements.sources import CurrentSource, NoiseSpec, VoltageSource
from netnoise.constants import GROUND, canonical_node
from netnoise.errors import SourceLocation, UsageError

__all__ = [
    "GROUND",
    "name_key",
    "Element",
    "Resistor",
    "Capacitor",
    "LossyCapacitor",
    "Inductor",
    "MutualCoupling",
    "VoltageSource",
    "CurrentSource",
    "VoltageControlledVoltageSource",
    "VoltageControlledCurrentSource",
    "CurrentControlledCurrentSource",
    "CurrentControlledVoltageSource",
    "NoiseSpec",
    "OpAmpModel",
    "OpAmp",
    "Diode",
    "Bipolar",
    "JunctionFet",
    "Mosfet",
    "Sweep",
    "NoiseCard",
    "ValueOrigin",
    "Circuit",
]


def name_key(name: str) -> str:
    """Canonical key for a case-insensitive element or node name."""
    return name.lower()


@dataclass(frozen=True)
class Sweep:
    """A frequency sweep as written on ``.ac`` / ``.noise``.

    ``kind`` is ``"dec"``, ``"oct"`` or ``"lin"``; ``points`` is per decade,
    per octave, or in total (lin); ``start`` and ``stop`` in hertz.
    """

    kind: str
    points: int
    start: float
    stop: float


@dataclass(frozen=True)
class NoiseCard:
    """``.noise v(out[,ref]) SOURCE kind points start stop``."""

    output_node: str
    reference_node: str
    input_source: str | None
    sweep: Sweep | None
    origin: SourceLocation | None = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class ValueOrigin:
    """Where an element's primary value came from.

    ``kind``: ``"literal"`` (a number written on the line), ``"param"`` (one
    parameter name in braces), ``"expression"`` (an expression of
    parameters), ``"override"`` (a subcircuit parameter set on the X line of
    its instance), ``"changed"`` (set by :meth:`Circuit.with_values`).
    ``text`` is what was written; ``parameters`` the names it uses.
    """

    kind: str
    text: str
    parameters: tuple[str, ...] = ()
    location: SourceLocation | None = field(default=None, compare=False)


@dataclass(frozen=True)
class Circuit:
    """A flat circuit plus the analysis defaults its netlist supplied.

    ``parameters``: the top-level ``.param`` values (lower-case names).
    ``value_origins``: name_key(element) -> :class:`ValueOrigin` of its primary value.
    ``tolerances``: element name -> the tolerance its line gives (``tolerance=1%``: 0.01).
    ``node_spellings``: canonical node -> the spelling the netlist first gave it.
    """

    title: str
    elements: tuple[Element, ...]
    temperature_celsius: float | None = None  # from .temp
    noise_card: NoiseCard | None = None
    ac_sweep: Sweep | None = None
    notices: tuple[str, ...] = ()  # one-line remarks for the user (ignored cards, suspicious values)
    source_file: str = "<text>"
    parameters: Mapping[str, float] = field(default_factory=dict, compare=False)
    value_origins: Mapping[str, ValueOrigin] = field(default_factory=dict, compare=False, repr=False)
    rebuild: Callable[[Mapping[str, float]], Circuit] | None = field(default=None, compare=False, repr=False)
    tolerances: Mapping[str, float] = field(default_factory=dict, compare=False)  # element -> tolerance=, a fraction
    node_spellings: Mapping[str, str] = field(default_factory=dict, compare=False, repr=False)

    def shown_node(self, node: str) -> str:
        """``node`` as the netlist first spelled it (``/OUT`` for ``/out``); ground is ``0``."""
        key = canonical_node(node)
        return self.node_spellings.get(key, key)

    def at_temperature(self, celsius: float) -> Circuit:
        """This circuit with every value that follows the ambient temperature at ``celsius``
        (°C): resistors with temperature coefficients; itself when none does."""
        changed = False
        elements = list(self.elements)
        for i in self._temperature_dependent:
            element = elements[i].at_temperature(celsius)
            if element is not elements[i]:
                elements[i] = element
                changed = True
        return dataclasses.replace(self, elements=tuple(elements)) if changed else self

    @cached_property
    def _temperature_dependent(self) -> tuple[int, ...]:
        """Indices of the elements whose values follow the ambient temperature."""
        probe = -1.0e3  # a temperature no element is at: those that follow it change
        return tuple(i for i, e in enumerate(self.elements) if e.at_temperature(probe) is not e)

    operating_point_requested: bool = False  # the netlist has an .op card: report the DC operating point

    @cached_property
    def _index(self) -> dict[str, int]:
        return {name_key(e.name): i for i, e in enumerate(self.elements)}

    def element(self, name: str) -> Element:
        """The element called ``name`` (case-insensitive); KeyError if none."""
        return self.elements[self._index[name_key(name)]]

    @cached_property
    def nodes(self) -> tuple[str, ...]:
        """Every non-ground node, in order of first appearance."""
        seen: dict[str, None] = {}
        for element in self.elements:
            for node in element.terminals():
                if node != GROUND:
                    seen.setdefault(node, None)
        return tuple(seen)

    @cached_property
    def node_set(self) -> frozenset[str]:
        """Every non-ground node (canonical names), for look-ups."""
        return frozenset(self.nodes)

    def value_origin(self, name: str) -> ValueOrigin | None:
        """Where element ``name``'s primary value came from (None: built in code)."""
        return self.value_origins.get(name_key(name))

    # ---- values that can change
    def with_values(self, values: Mapping[str, float]) -> Circuit:
        """A copy with the primary values of the named elements replaced
        (``{"R1": 2.2e3, "C2": 10e-12}``, SI units); nothing is read again."""
        elements = list(self.elements)
        origins = dict(self.value_origins)
        for name, value in values.items():
            try:
                index = self._index[name_key(name)]
            except KeyError:
                close = difflib.get_close_matches(name_key(name), list(self._index), n=3)
                hint = f"; did you mean {', '.join(close)}?" if close else ""
                raise UsageError(f"no element called '{name}' in the circuit{hint}") from None
            try:
                elements[index] = elements[index].with_value(float(value))
            except ValueError as exc:
                raise UsageError(str(exc)) from None
            origins[name_key(name)] = ValueOrigin("changed", repr(float(value)))
        return dataclasses.replace(self, elements=tuple(elements), value_origins=origins)

    def with_params(self, params: Mapping[str, float]) -> Circuit:
        """A copy with top-level ``.param`` values replaced and every value
        that depends on them evaluated again, from the statements already
        read (the text is not parsed again)."""
        if self.rebuild is None:
            raise UsageError("this circuit was not read from a netlist, so it has no .param values to change")
        unknown = [name for name in params if name.lower() not in self.parameters]
        if unknown:
            known = ", ".join(sorted(self.parameters)) or "none"
            raise UsageError(f"no top-level .param called {', '.join(repr(n) for n in unknown)}; parameters: {known}")
        return self.rebuild({name.lower(): float(value) for name, value in params.items()})

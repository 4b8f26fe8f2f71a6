"""The elaborated, flat circuit: what the engine sees.

The elaborator (:mod:`netnoise.elaborate`) turns the parsed netlist into a
:class:`Circuit`: subcircuits expanded, parameters evaluated, every value a
float in SI units, every element keeping the place in the file it came from.

Naming conventions
------------------
* Node names are canonical: lower case, hierarchical with ``.`` (``x1.mid``),
  ground is always ``"0"`` (``gnd`` is accepted as an alias in the netlist).
* Element names keep the spelling the user wrote, hierarchical with ``.``
  (``X1.R2``: instance path, then element).  Look-ups are case-insensitive;
  use :func:`name_key` to compare.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import Union

from netnoise.errors import SourceLocation

__all__ = [
    "GROUND",
    "name_key",
    "Resistor",
    "Capacitor",
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
    "Element",
    "Sweep",
    "NoiseCard",
    "Circuit",
]

GROUND = "0"


def name_key(name: str) -> str:
    """Canonical key for a case-insensitive element or node name."""
    return name.lower()


@dataclass(frozen=True)
class _TwoTerminal:
    name: str
    nodes: tuple[str, str]
    origin: SourceLocation | None = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class NoiseSpec:
    """An explicit noise density given to an independent source.

    One-sided amplitude density ``white`` (V/√Hz for a V source, A/√Hz for an
    I source) with a 1/f^slope part below ``corner_Hz``:
    S(f) = white² · (1 + (corner_Hz / f)^slope).  ``corner_Hz = 0``: white only.
    """

    white: float
    corner_Hz: float = 0.0
    slope: float = 1.0


@dataclass(frozen=True)
class Resistor(_TwoTerminal):
    """Resistance in ohms between ``nodes[0]`` and ``nodes[1]``.

    ``noiseless``: no noise at all (an ideal load, a cold part).
    ``temperature_celsius``: this part's own temperature for its thermal
    noise (None: the analysis temperature).  ``noise_index_dB``: excess (1/f)
    noise index, dB re 1 µV of noise per volt of DC across it per decade of
    frequency, as resistor makers state it (None: no excess noise).
    """

    resistance: float = 0.0
    noiseless: bool = False
    temperature_celsius: float | None = None
    noise_index_dB: float | None = None


@dataclass(frozen=True)
class Capacitor(_TwoTerminal):
    """Capacitance in farads."""

    capacitance: float = 0.0


@dataclass(frozen=True)
class Inductor(_TwoTerminal):
    """Inductance in henries; its current is an MNA unknown."""

    inductance: float = 0.0


@dataclass(frozen=True)
class MutualCoupling:
    """K element: coupling coefficient ``coupling`` (|k| <= 1) of two inductors."""

    name: str
    inductors: tuple[str, str]
    coupling: float
    origin: SourceLocation | None = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class VoltageSource(_TwoTerminal):
    """Independent voltage source, ``nodes[0]`` is the + terminal.

    ``dc`` in volts; ``ac_magnitude`` in volts and ``ac_phase`` in degrees
    (kept for reports; the noise engine uses a unit excitation).
    """

    dc: float = 0.0
    ac_magnitude: float = 0.0
    ac_phase: float = 0.0
    noise: NoiseSpec | None = None  # an explicit noise voltage density (sensor, reference)


@dataclass(frozen=True)
class CurrentSource(_TwoTerminal):
    """Independent current source; positive current flows from ``nodes[0]``
    through the source to ``nodes[1]`` (SPICE convention).  Amperes, degrees.

    ``shot``: the DC current is a junction current (photocurrent, dark
    current, a diode's bias) with shot noise 2q|I_dc| (Schottky 1918).
    """

    dc: float = 0.0
    ac_magnitude: float = 0.0
    ac_phase: float = 0.0
    noise: NoiseSpec | None = None  # an explicit noise current density
    shot: bool = False


@dataclass(frozen=True)
class VoltageControlledVoltageSource(_TwoTerminal):
    """E element: v(nodes) = gain * v(control_nodes)."""

    control_nodes: tuple[str, str] = (GROUND, GROUND)
    gain: float = 0.0


@dataclass(frozen=True)
class VoltageControlledCurrentSource(_TwoTerminal):
    """G element: current transconductance * v(control_nodes), siemens,
    flowing from ``nodes[0]`` through the source to ``nodes[1]``."""

    control_nodes: tuple[str, str] = (GROUND, GROUND)
    transconductance: float = 0.0


@dataclass(frozen=True)
class CurrentControlledCurrentSource(_TwoTerminal):
    """F element: current gain * i(control_source) from ``nodes[0]`` to
    ``nodes[1]`` through the source; ``control_source`` names a V element."""

    control_source: str = ""
    gain: float = 0.0


@dataclass(frozen=True)
class CurrentControlledVoltageSource(_TwoTerminal):
    """H element: v(nodes) = transresistance * i(control_source), ohms."""

    control_source: str = ""
    transresistance: float = 0.0


@dataclass(frozen=True)
class OpAmpModel:
    """A voltage-feedback amplifier described the way its data sheet is.

    Noise: input voltage noise ``voltage_noise`` (V/√Hz, white) with 1/f
    corner ``voltage_noise_corner_Hz``; input current noise
    ``current_noise`` (A/√Hz, on each input, uncorrelated) with corner
    ``current_noise_corner_Hz``.  Gain: ``open_loop_gain`` (V/V at DC) and
    ``gain_bandwidth_Hz`` (dominant pole at GBW/A0), optional
    ``second_pole_Hz``.  ``input_capacitance`` from each input to ground
    (common-mode), ``differential_capacitance`` between the inputs (F),
    ``output_resistance`` (Ω, noiseless).
    """

    name: str
    voltage_noise: float = 0.0
    voltage_noise_corner_Hz: float = 0.0
    current_noise: float = 0.0
    current_noise_corner_Hz: float = 0.0
    open_loop_gain: float = 1e5
    gain_bandwidth_Hz: float = 1e6
    second_pole_Hz: float | None = None
    input_capacitance: float = 0.0
    differential_capacitance: float = 0.0
    output_resistance: float = 0.0


@dataclass(frozen=True)
class OpAmp:
    """An amplifier instance: ``nodes`` = (non-inverting input, inverting
    input, output); the output is referred to ground."""

    name: str
    nodes: tuple[str, str, str]
    model: OpAmpModel
    origin: SourceLocation | None = field(default=None, compare=False, repr=False)


Element = Union[
    Resistor,
    Capacitor,
    Inductor,
    MutualCoupling,
    VoltageSource,
    CurrentSource,
    VoltageControlledVoltageSource,
    VoltageControlledCurrentSource,
    CurrentControlledCurrentSource,
    CurrentControlledVoltageSource,
    OpAmp,
]


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
class Circuit:
    """A flat circuit plus the analysis defaults its netlist supplied."""

    title: str
    elements: tuple[Element, ...]
    temperature_celsius: float | None = None  # from .temp
    noise_card: NoiseCard | None = None
    ac_sweep: Sweep | None = None
    notices: tuple[str, ...] = ()  # one-line remarks for the user (ignored cards, suspicious values)
    source_file: str = "<text>"

    def element(self, name: str) -> Element:
        """The element called ``name`` (case-insensitive); KeyError if none."""
        key = name_key(name)
        for element in self.elements:
            if name_key(element.name) == key:
                return element
        raise KeyError(name)

    @cached_property
    def nodes(self) -> tuple[str, ...]:
        """Every non-ground node, in order of first appearance."""
        seen: dict[str, None] = {}
        for element in self.elements:
            for node in getattr(element, "nodes", ()):
                if node != GROUND:
                    seen.setdefault(node, None)
            for node in getattr(element, "control_nodes", ()):
                if node != GROUND:
                    seen.setdefault(node, None)
        return tuple(seen)

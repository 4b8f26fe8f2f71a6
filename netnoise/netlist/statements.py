"""The statements of a netlist file: one frozen dataclass per line form,
every field keeping its place in the file.  Element lines' statements are
defined by their element kinds (:mod:`netnoise.circuit.elements`) and
gathered here; the dot-cards' are defined here."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Union

from netnoise.circuit.elements.base import Passive
from netnoise.circuit.elements.controlled import CurrentControlled, VoltageControlled
from netnoise.circuit.elements.coupling import Coupling
from netnoise.circuit.elements.lossy_capacitor import LossyCapacitorLine
from netnoise.circuit.elements.sources import IndependentSource
from netnoise.errors import SourceLocation
from netnoise.text.fields import Assignment, Value, Word
from netnoise.text.source import SourceText

__all__ = [
    "Sweep",
    "Passive",
    "Coupling",
    "IndependentSource",
    "VoltageControlled",
    "CurrentControlled",
    "Instance",
    "LossyCapacitorLine",
    "ModelCard",
    "ParamCard",
    "SubcktCard",
    "EndsCard",
    "IncludeCard",
    "TempCard",
    "AcCard",
    "NoiseCard",
    "OptionsCard",
    "OpCard",
    "Statement",
    "ParsedFile",
    "Toleranced",
]


@dataclass(frozen=True)
class Sweep:
    """``dec|oct|lin points start stop`` as written (evaluated later)."""

    kind: str  # lower case
    points: Value
    start: Value
    stop: Value
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class Instance:
    """X: a subcircuit instance."""

    name: str
    nodes: tuple[Word, ...]
    subckt: Word
    overrides: tuple[Assignment, ...]
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class ModelCard:
    """``.model NAME TYPE [(] param=value ... [)]``: an amplifier (``opamp``)
    or a device model (``d``, ``npn``, ``pnp``, ``njf``, ``pjf``, ``nmos``, ``pmos``)."""

    name: Word
    kind: str  # lower case: 'opamp', 'd', 'npn', ...
    params: tuple[Assignment, ...]
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class ParamCard:
    assignments: tuple[Assignment, ...]
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class SubcktCard:
    name: Word
    pins: tuple[Word, ...]
    defaults: tuple[Assignment, ...]
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class EndsCard:
    name: Word | None
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class IncludeCard:
    path: str
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class TempCard:
    value: Value
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class AcCard:
    sweep: Sweep
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class NoiseCard:
    output: Word
    reference: Word | None
    source: Word | None
    sweep: Sweep | None
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class OptionsCard:
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class OpCard:
    """``.op``: show the DC operating point with the results."""

    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class Toleranced:
    """An element line with ``tolerance=PCT%``: the line's own statement, and the
    tolerance of its value as a fraction (0.01 for 1 %), for Monte Carlo studies."""

    statement: Statement
    fraction: float
    loc: SourceLocation = field(compare=False)


Statement = Union[
    Toleranced,
    ModelCard,
    LossyCapacitorLine,
    Passive,
    Coupling,
    IndependentSource,
    VoltageControlled,
    CurrentControlled,
    Instance,
    ParamCard,
    SubcktCard,
    EndsCard,
    IncludeCard,
    TempCard,
    AcCard,
    NoiseCard,
    OptionsCard,
    OpCard,
]


@dataclass(frozen=True)
class ParsedFile:
    """One file's statements, in order."""

    title: str
    statements: tuple[Statement, ...]
    source: SourceText = field(repr=False)

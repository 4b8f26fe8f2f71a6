"""The statements of a netlist file: one frozen dataclass per line form,
every field keeping its place in the file."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Union

from netnoise.errors import SourceLocation
from netnoise.text.fields import Assignment, Value, Word
from netnoise.text.source import SourceText

__all__ = [
    "Sweep", "Passive", "Coupling", "IndependentSource", "VoltageControlled", "CurrentControlled", "Instance",
    "ModelCard", "ParamCard", "SubcktCard", "EndsCard", "IncludeCard", "TempCard", "AcCard", "NoiseCard",
    "OptionsCard", "Statement", "ParsedFile",
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
class Passive:
    """R, C or L.  Resistors may carry ``noiseless``, ``temp=`` and ``ni=``."""

    letter: str
    name: str
    nodes: tuple[Word, Word]
    value: Value
    loc: SourceLocation = field(compare=False)
    noiseless: bool = False
    temperature: Value | None = None  # temp=, °C
    noise_index: Value | None = None  # ni=, dB


@dataclass(frozen=True)
class Coupling:
    """K: two inductor names and a coupling coefficient."""

    name: str
    inductors: tuple[Word, Word]
    value: Value
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class IndependentSource:
    """V or I.  Absent values are None (DC 0, no AC; AC alone means 1)."""

    letter: str
    name: str
    nodes: tuple[Word, Word]
    dc: Value | None
    ac_magnitude: Value | None
    ac_phase: Value | None
    has_ac: bool
    waveform: str | None  # name of an ignored transient spec, e.g. 'SIN'
    loc: SourceLocation = field(compare=False)
    noise: Value | None = None  # noise=, V/√Hz or A/√Hz
    corner: Value | None = None  # corner=, Hz
    slope: Value | None = None  # slope=, the exponent of 1/f
    shot: bool = False  # I only


@dataclass(frozen=True)
class VoltageControlled:
    """E or G."""

    letter: str
    name: str
    nodes: tuple[Word, Word]
    control_nodes: tuple[Word, Word]
    gain: Value
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class CurrentControlled:
    """F or H: controlled by the current through a named V source."""

    letter: str
    name: str
    nodes: tuple[Word, Word]
    control: Word
    gain: Value
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
    """``.model NAME opamp [(] param=value ... [)]`` (only amplifier models)."""

    name: Word
    kind: str  # lower case: 'opamp'
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


Statement = Union[
    ModelCard,
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
]


@dataclass(frozen=True)
class ParsedFile:
    """One file's statements, in order."""

    title: str
    statements: tuple[Statement, ...]
    source: SourceText = field(repr=False)

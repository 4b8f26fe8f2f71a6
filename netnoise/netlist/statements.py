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
from netnoise.errors import NetlistError, SourceLocation
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
    "SetAsideCard",
    "InitialCard",
    "OperatingPointCard",
    "LibCard",
    "LibSection",
    "EndlCard",
    "FuncCard",
    "ReaderNotice",
    "LeftOutLine",
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
    a device model (``d``, ``npn``, ``pnp``, ``njf``, ``pjf``, ``nmos``, ``pmos``)
    or the defaults of R, C and L lines (``r``, ``c``, ``l``)."""

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
    summary: Value | None = field(default=None, compare=False)  # points per summary (not used)


@dataclass(frozen=True)
class SetAsideCard:
    """A card that does not change a small-signal noise analysis (``.tran``,
    ``.print``, a ``.control`` block, ...): read, then set aside with a notice.
    ``last_line``: the block's last line (``.endc``), None for one card."""

    name: str  # lower case, '.tran'
    loc: SourceLocation = field(compare=False)
    last_line: int | None = None


@dataclass(frozen=True)
class InitialCard:
    """``.ic`` / ``.nodeset``: node voltages ``v(node)=value`` that start a
    transient or a nonlinear solve; a linear noise analysis sets them aside."""

    name: str  # '.ic' or '.nodeset'
    voltages: tuple[tuple[Word, Value], ...]
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class OperatingPointCard:
    """``.op``: asks for the DC operating point beside the noise report."""

    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class LibCard:
    """``.lib FILE SECTION``: the lines of one section of a library file."""

    path: str
    section: Word
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class LibSection:
    """``.lib NAME`` inside a library file: a section starts (ends at ``.endl``)."""

    name: Word
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class EndlCard:
    name: Word | None
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class FuncCard:
    """``.func name(arg, ...) {expression}``: a function for expressions."""

    name: Word
    params: tuple[Word, ...]
    body: Value
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class LeftOutLine:
    """An element line that could not be read (its problem is reported): its
    name stays taken, so a second element of that name is still a duplicate."""

    name: Word
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class ReaderNotice:
    """A remark the reading of a file made (bytes in comments that were not
    UTF-8, an unused field): becomes one of the circuit's notices."""

    text: str
    loc: SourceLocation | None = field(default=None, compare=False)


@dataclass(frozen=True)
class OptionsCard:
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
    SetAsideCard,
    InitialCard,
    OperatingPointCard,
    LibCard,
    LibSection,
    EndlCard,
    FuncCard,
    ReaderNotice,
    LeftOutLine,
]


@dataclass(frozen=True)
class ParsedFile:
    """One file's statements, in order."""

    title: str
    statements: tuple[Statement, ...]
    source: SourceText = field(repr=False)
    problems: tuple[NetlistError, ...] = field(default=(), repr=False)  # lines that could not be read

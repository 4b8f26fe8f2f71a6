"""The element kinds netnoise knows, by netlist letter.

Adding a kind: one module in :mod:`netnoise.circuit.elements` (see
:mod:`netnoise.circuit.elements.base` for the protocol), its tests, and one
line in :data:`KINDS`.  A kind with a ``selector`` keyword is chosen over
the plain kind of its letter when that keyword is on the line.
"""

from __future__ import annotations

from netnoise.circuit.elements.amplifier import OpAmp
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
from netnoise.circuit.elements.polynomial import PolyCCCS, PolyCCVS, PolyVCCS, PolyVCVS
from netnoise.circuit.elements.resistor import Resistor
from netnoise.circuit.elements.sources import CurrentSource, VoltageSource

__all__ = ["KINDS", "LINE_LETTERS", "kinds_for", "kind_for_line", "forms"]

KINDS: tuple[type[Element], ...] = (
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
    LossyCapacitor,
    Diode,
    Bipolar,
    JunctionFet,
    Mosfet,
    PolyVCVS,
    PolyVCCS,
    PolyCCCS,
    PolyCCVS,
)

_BY_LETTER: dict[str, list[type[Element]]] = {}
for _kind in KINDS:
    _BY_LETTER.setdefault(_kind.letter, []).append(_kind)

# letters with a line form of their own ('X' lines are instances, read by the netlist parser)
LINE_LETTERS = "".join(letter for letter in _BY_LETTER if letter != "X") + "X"


def kinds_for(letter: str) -> tuple[type[Element], ...]:
    """The kinds written with ``letter`` (upper case); the plain one first."""
    return tuple(sorted(_BY_LETTER.get(letter, ()), key=lambda k: k.selector is not None))


def kind_for_line(letter: str, has_key) -> type[Element]:
    """The kind that reads a line of ``letter``: one whose selector keyword
    ``has_key(keyword)`` finds on the line, else the plain kind."""
    candidates = kinds_for(letter)
    for kind in candidates:
        if kind.selector is not None and has_key(kind.selector):
            return kind
    return candidates[0]


def forms(letter: str) -> str:
    """The usage line(s) of ``letter``, for messages."""
    return "  or  ".join(kind.form for kind in kinds_for(letter))

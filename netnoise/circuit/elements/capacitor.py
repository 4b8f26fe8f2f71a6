"""C: a capacitance; noiseless.  Form: ``Cname node1 node2 value``.

Stamp: the resistor's pattern in the C matrix.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from netnoise.circuit.elements.base import BuildContext, Passive, TwoTerminal, refuse_negative_reactance, value_nodes
from netnoise.text.fields import LineReader

__all__ = ["Capacitor"]


@dataclass(frozen=True)
class Capacitor(TwoTerminal):
    """Capacitance in farads."""

    capacitance: float = 0.0

    letter: ClassVar[str] = "C"
    form: ClassVar[str] = "Cname node1 node2 value"
    value_field: ClassVar[str] = "capacitance"
    unit: ClassVar[str] = "F"

    def check_values(self) -> None:
        refuse_negative_reactance(self, "capacitance", "F", self.capacitance)

    @classmethod
    def parse(cls, line: LineReader) -> Passive:
        nodes = (line.node("first node"), line.node("second node"))
        value = line.value("value")
        line.done()
        return Passive("C", line.name, nodes, value, line.loc, kind=cls)

    @classmethod
    def build(cls, statement: Passive, ctx: BuildContext) -> Capacitor:
        return cls(ctx.name, value_nodes(ctx, statement), ctx.loc, capacitance=ctx.number(statement.value))

    @classmethod
    def stamp_all(cls, elements, s) -> None:
        a = np.fromiter((s.node(e.nodes[0]) for e in elements), dtype=np.int64, count=len(elements))
        b = np.fromiter((s.node(e.nodes[1]) for e in elements), dtype=np.int64, count=len(elements))
        y = np.fromiter((e.capacitance for e in elements), dtype=float, count=len(elements))
        s.admittances("C", a, b, y)

    def stamp(self, s) -> None:
        type(self).stamp_all([self], s)

    def dc_current(self, v) -> float:
        return 0.0

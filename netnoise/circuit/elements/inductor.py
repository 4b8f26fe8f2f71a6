"""L: an inductance; noiseless; its current is an MNA unknown.

Form: ``Lname node1 node2 value``.  Stamp (branch k): KCL G[a,k] += 1,
G[b,k] -= 1; branch row v_a - v_b - sL·i_k = 0, i.e. G[k,a] = 1, G[k,b] = -1,
C[k,k] = -L.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

from netnoise.circuit.elements.base import (
    BuildContext,
    Passive,
    TwoTerminal,
    branch_kcl,
    refuse_negative_reactance,
    value_nodes,
)
from netnoise.text.fields import LineReader

__all__ = ["Inductor"]


@dataclass(frozen=True)
class Inductor(TwoTerminal):
    """Inductance in henries; its current is an MNA unknown."""

    inductance: float = 0.0

    letter: ClassVar[str] = "L"
    form: ClassVar[str] = "Lname node1 node2 value"
    value_field: ClassVar[str] = "inductance"
    unit: ClassVar[str] = "H"
    branch_count: ClassVar[int] = 1

    def check_values(self) -> None:
        refuse_negative_reactance(self, "inductance", "H", self.inductance)

    @classmethod
    def parse(cls, line: LineReader) -> Passive:
        nodes = (line.node("first node"), line.node("second node"))
        value = line.value("value")
        line.done()
        return Passive("L", line.name, nodes, value, line.loc, kind=cls)

    @classmethod
    def build(cls, statement: Passive, ctx: BuildContext) -> Inductor:
        return cls(ctx.name, value_nodes(ctx, statement), ctx.loc, inductance=ctx.number(statement.value))

    def dc_paths(self) -> tuple[tuple[str, str], ...]:
        return (self.nodes,)

    def voltage_defined(self) -> tuple[tuple[str, str], ...]:
        return (self.nodes,)  # at DC: a short

    def stamp(self, s) -> None:
        k = s.branch(self)
        branch_kcl(s, s.node(self.nodes[0]), s.node(self.nodes[1]), k)
        s.c(k, k, -self.inductance)

    def dc_current(self, v) -> float:
        return v.branch_current(self)

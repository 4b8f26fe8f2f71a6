"""C with ``esr=``: a capacitor with its equivalent series resistance, whose
thermal noise counts.

Form: ``Cname node1 node2 value esr=OHMS`` (ESR, the equivalent series
resistance, as capacitor data sheets state it).  An internal node m sits
between the resistance and the capacitance:

    G: 1/ESR between node1 and m;   C: the capacitance between m and node2.

Noise: the thermal noise 4kT/ESR of the series resistance at the analysis
temperature (Johnson 1928; Nyquist 1928).  At DC the part is open.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any, ClassVar

from netnoise.circuit.elements.base import BuildContext, TwoTerminal, refuse_negative_reactance, value_nodes
from netnoise.errors import SourceLocation
from netnoise.noise.mechanisms import THERMAL, NoiseSource, thermal_current_density
from netnoise.text.fields import Keyed, LineReader, Value, Word

__all__ = ["LossyCapacitor", "LossyCapacitorLine"]


@dataclass(frozen=True)
class LossyCapacitorLine:
    """Statement of a C line with ``esr=``."""

    name: str
    nodes: tuple[Word, Word]
    value: Value
    esr: Value
    loc: SourceLocation = field(compare=False)
    kind: Any = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class LossyCapacitor(TwoTerminal):
    """Capacitance (F) in series with its equivalent series resistance ``esr`` (Ω, > 0)."""

    capacitance: float = 0.0
    esr: float = 0.0

    letter: ClassVar[str] = "C"
    selector: ClassVar[str | None] = "esr"
    form: ClassVar[str] = "Cname node1 node2 value esr=OHMS"
    value_field: ClassVar[str] = "capacitance"
    unit: ClassVar[str] = "F"

    def check_values(self) -> None:
        refuse_negative_reactance(self, "capacitance", "F", self.capacitance)

    @classmethod
    def parse(cls, line: LineReader) -> LossyCapacitorLine:
        nodes = (line.node("first node"), line.node("second node"))
        value = line.value("value")
        item = line.peek()
        if not (isinstance(item, Keyed) and item.key.lower() == "esr"):
            line.done()
        esr = line.keyed_value(item, "series resistance")  # type: ignore[arg-type]
        line.done()
        return LossyCapacitorLine(line.name, nodes, value, esr, line.loc, kind=cls)

    @classmethod
    def build(cls, statement: LossyCapacitorLine, ctx: BuildContext) -> LossyCapacitor:
        esr = ctx.number(statement.esr)
        if not esr > 0:
            raise ctx.fail(
                f"{ctx.name}: esr= must be above 0 Ω, not {esr:g}",
                statement.esr.loc,
                "leave esr= out for an ideal capacitor",
            )
        return cls(ctx.name, value_nodes(ctx, statement), ctx.loc, capacitance=ctx.number(statement.value), esr=esr)

    def internal_nodes(self) -> tuple[str, ...]:
        return ("m",)

    def stamp(self, s) -> None:
        a, b = (s.node(x) for x in self.nodes)
        m = s.internal(self, "m")
        y = 1.0 / self.esr
        for matrix, (p, q), value in (("G", (a, m), y), ("C", (m, b), self.capacitance)):
            put = s.g if matrix == "G" else s.c
            put(p, p, value)
            put(q, q, value)
            put(p, q, -value)
            put(q, p, -value)

    def dc_current(self, v) -> float:
        return 0.0

    def noise_sources(self, n) -> Iterator[NoiseSource]:
        m = n.internal(self, "m")
        a = n.node(self.nodes[0])
        injection = tuple((row, sign) for row, sign in ((a, 1.0), (m, -1.0)) if row >= 0)
        t = n.temperature_K
        yield NoiseSource(
            name=f"{self.name} (esr)",
            element=self.name,
            mechanism=THERMAL,
            value=self.esr,
            unit="Ω",
            injection=injection,
            white_density=thermal_current_density(self.esr, t),
            temperature_K=t,
        )

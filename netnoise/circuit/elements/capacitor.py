"""C: a capacitance; it adds no noise.

Form: ``Cname node1 node2 [value] [MODEL] [m=N] [ic=VOLTS]`` (the value may be keyed: ``C=10n``).
``m``: m equal parts in parallel (C·m); ``ic``: a transient's starting voltage, read
and ignored with a notice.

Stamp: the resistor's pattern in the C matrix, with C·m.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from netnoise.circuit.elements.base import (
    BuildContext,
    Passive,
    TwoTerminal,
    ignore_initial_condition,
    multiplier,
    parse_passive,
    passive_model,
    refuse_negative_reactance,
    value_nodes,
)
from netnoise.circuit.limits import VALUE_RANGE
from netnoise.text.fields import LineReader

__all__ = ["Capacitor", "CAPACITOR_OPTIONS"]

# the options of a C line: key -> what it is
CAPACITOR_OPTIONS: dict[str, str] = {"m": "multiplier (parts in parallel)", "ic": "initial condition"}


@dataclass(frozen=True)
class Capacitor(TwoTerminal):
    """Capacitance in farads of one part; ``multiplier`` equal parts in parallel."""

    capacitance: float = 0.0
    multiplier: float = 1.0

    letter: ClassVar[str] = "C"
    form: ClassVar[str] = "Cname node1 node2 [value] [MODEL] [m=N] [ic=VOLTS]"
    value_field: ClassVar[str] = "capacitance"
    unit: ClassVar[str] = "F"

    def check_values(self) -> None:
        refuse_negative_reactance(self, "capacitance", "F", self.effective_capacitance)

    @classmethod
    def check_all(cls, elements, circuit) -> None:
        """``check_values`` of every capacitor; those plainly in range in one vectorised step."""
        members = list(elements)
        c = np.fromiter((e.capacitance * e.multiplier for e in members), dtype=float, count=len(members))
        low, high = VALUE_RANGE
        refused = (c < 0.0) | ((c > 0.0) & ~((low <= c) & (c <= high)))
        for at in np.flatnonzero(refused).tolist():  # netlist order: the first refused raises
            members[at].check_values()

    @property
    def effective_capacitance(self) -> float:
        """The capacitance the circuit sees (F): one part's times ``multiplier``."""
        return self.capacitance * self.multiplier

    @classmethod
    def parse(cls, line: LineReader) -> Passive:
        return parse_passive(cls, line, CAPACITOR_OPTIONS)

    @classmethod
    def build(cls, statement: Passive, ctx: BuildContext) -> Capacitor:
        value, _ = passive_model(statement, ctx)  # its card supplies only the value (C=)
        if not statement.options:
            return cls(ctx.name, value_nodes(ctx, statement), ctx.loc, capacitance=value)
        ignore_initial_condition(statement, ctx)
        m = multiplier(statement, ctx)
        return cls(ctx.name, value_nodes(ctx, statement), ctx.loc, capacitance=value, multiplier=m)

    @classmethod
    def stamp_all(cls, elements, s) -> None:
        members = list(elements)
        a = s.node_rows([e.nodes[0] for e in members])
        b = s.node_rows([e.nodes[1] for e in members])
        y = np.fromiter((e.capacitance * e.multiplier for e in members), dtype=float, count=len(members))
        s.admittances("C", a, b, y)

    def stamp(self, s) -> None:
        type(self).stamp_all([self], s)

    def dc_current(self, v) -> float:
        return 0.0

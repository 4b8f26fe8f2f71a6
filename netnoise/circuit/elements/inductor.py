"""L: an inductance; it adds no noise; its current is an MNA unknown.

Form: ``Lname node1 node2 [value] [MODEL] [m=N] [ic=AMPS]`` (the value may be keyed: ``L=1u``).
``m``: m equal parts in parallel (L/m); ``ic``: a transient's starting current, read
and ignored with a notice.

Stamp (branch k): KCL G[a,k] += 1, G[b,k] -= 1; branch row v_a - v_b - sL·i_k = 0,
i.e. G[k,a] = 1, G[k,b] = -1, C[k,k] = -L/m.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

from netnoise.circuit.elements.base import (
    BuildContext,
    Passive,
    TwoTerminal,
    branch_kcl,
    ignore_initial_condition,
    multiplier,
    parse_passive,
    passive_model,
    refuse_negative_reactance,
    value_nodes,
)
from netnoise.text.fields import LineReader

__all__ = ["Inductor", "INDUCTOR_OPTIONS"]

# the options of an L line: key -> what it is
INDUCTOR_OPTIONS: dict[str, str] = {"m": "multiplier (parts in parallel)", "ic": "initial condition"}


@dataclass(frozen=True)
class Inductor(TwoTerminal):
    """Inductance in henries of one part; ``multiplier`` equal parts in parallel
    (uncoupled to each other); its current is an MNA unknown."""

    inductance: float = 0.0
    multiplier: float = 1.0

    letter: ClassVar[str] = "L"
    form: ClassVar[str] = "Lname node1 node2 [value] [MODEL] [m=N] [ic=AMPS]"
    value_field: ClassVar[str] = "inductance"
    unit: ClassVar[str] = "H"
    branch_count: ClassVar[int] = 1

    def check_values(self) -> None:
        refuse_negative_reactance(self, "inductance", "H", self.effective_inductance)

    @property
    def effective_inductance(self) -> float:
        """The inductance the circuit sees (H): one part's divided by ``multiplier``."""
        return self.inductance / self.multiplier

    @classmethod
    def parse(cls, line: LineReader) -> Passive:
        return parse_passive(cls, line, INDUCTOR_OPTIONS)

    @classmethod
    def build(cls, statement: Passive, ctx: BuildContext) -> Inductor:
        value, _ = passive_model(statement, ctx)  # its card supplies only the value (L=)
        if not statement.options:
            return cls(ctx.name, value_nodes(ctx, statement), ctx.loc, inductance=value)
        ignore_initial_condition(statement, ctx)
        m = multiplier(statement, ctx)
        return cls(ctx.name, value_nodes(ctx, statement), ctx.loc, inductance=value, multiplier=m)

    def dc_paths(self) -> tuple[tuple[str, str], ...]:
        return (self.nodes,)

    def voltage_defined(self) -> tuple[tuple[str, str], ...]:
        return (self.nodes,)  # at DC: a short

    def stamp(self, s) -> None:
        k = s.branch(self)
        branch_kcl(s, s.node(self.nodes[0]), s.node(self.nodes[1]), k)
        s.c(k, k, -self.effective_inductance)

    def dc_current(self, v) -> float:
        return v.branch_current(self)

"""E, G, F, H: linear controlled sources; noiseless.

=====  ===============================  =================================================
E      ``Ename out+ out- in+ in- gain``  branch k: KCL as L; v_a - v_b - gain·(v_c - v_d) = 0
G      ``Gname out+ out- in+ in- gm``    KCL rows a, b: ±gm at columns c, d
F      ``Fname out+ out- Vctrl gain``    KCL rows a, b: ±gain at the controlling V's branch column
H      ``Hname out+ out- Vctrl r``       branch k: KCL as L; v_a - v_b - r·i_ctrl = 0
=====  ===============================  =================================================

F and H sense the current through a named V source of the same scope.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, ClassVar

from netnoise.circuit.elements.base import BuildContext, TwoTerminal, branch_kcl, refuse_huge_gain, value_nodes
from netnoise.constants import GROUND
from netnoise.errors import SourceLocation
from netnoise.text.fields import LineReader, Value, Word

__all__ = [
    "VoltageControlled",
    "CurrentControlled",
    "VoltageControlledVoltageSource",
    "VoltageControlledCurrentSource",
    "CurrentControlledCurrentSource",
    "CurrentControlledVoltageSource",
]


@dataclass(frozen=True)
class VoltageControlled:
    """Statement of an E or G line."""

    letter: str
    name: str
    nodes: tuple[Word, Word]
    control_nodes: tuple[Word, Word]
    gain: Value
    loc: SourceLocation = field(compare=False)
    kind: Any = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class CurrentControlled:
    """Statement of an F or H line: controlled by the current through a named V source."""

    letter: str
    name: str
    nodes: tuple[Word, Word]
    control: Word
    gain: Value
    loc: SourceLocation = field(compare=False)
    kind: Any = field(default=None, compare=False, repr=False)


class _VoltageControlledForm:
    gain_word: ClassVar[str]
    supplies_gain: ClassVar[bool] = True

    def terminals(self) -> tuple[str, ...]:
        return (*self.nodes, *self.control_nodes)  # type: ignore[attr-defined]

    @classmethod
    def parse(cls, line: LineReader) -> VoltageControlled:
        nodes = (line.node("positive output node"), line.node("negative output node"))
        control = (line.node("positive control node"), line.node("negative control node"))
        gain = line.value(cls.gain_word)
        line.done()
        return VoltageControlled(cls.letter, line.name, nodes, control, gain, line.loc, kind=cls)  # type: ignore[attr-defined]

    @classmethod
    def build(cls, statement: VoltageControlled, ctx: BuildContext):
        control = (ctx.node(statement.control_nodes[0]), ctx.node(statement.control_nodes[1]))
        return cls(ctx.name, value_nodes(ctx, statement), ctx.loc, control, ctx.number(statement.gain))  # type: ignore[call-arg]


class _VoltageOutput:
    """An output that fixes the voltage between its nodes through a branch current (E, H)."""

    branch_count: ClassVar[int] = 1

    def dc_paths(self) -> tuple[tuple[str, str], ...]:
        return (self.nodes,)  # type: ignore[attr-defined]

    def voltage_defined(self) -> tuple[tuple[str, str], ...]:
        return (self.nodes,)  # type: ignore[attr-defined]

    def dc_current(self, v) -> float:
        return v.branch_current(self)


class _CurrentControlledForm:
    gain_word: ClassVar[str]
    supplies_gain: ClassVar[bool] = True

    @classmethod
    def parse(cls, line: LineReader) -> CurrentControlled:
        nodes = (line.node("positive output node"), line.node("negative output node"))
        control = line.node("controlling voltage source")
        gain = line.value(cls.gain_word)
        line.done()
        return CurrentControlled(cls.letter, line.name, nodes, control, gain, line.loc, kind=cls)  # type: ignore[attr-defined]

    @classmethod
    def build(cls, statement: CurrentControlled, ctx: BuildContext):
        from netnoise.circuit.elements.sources import VoltageSource

        control = ctx.local_name(statement.control)
        ctx.refer(statement.control, control, VoltageSource, "voltage source", "control_source")
        return cls(ctx.name, value_nodes(ctx, statement), ctx.loc, control, ctx.number(statement.gain))  # type: ignore[call-arg]

    def references(self) -> tuple[str, ...]:
        return (self.control_source,)  # type: ignore[attr-defined]

    def controlling_branch(self, s) -> int:
        try:
            target = s.element(self.control_source)  # type: ignore[attr-defined]
        except KeyError:
            target = None
        if target is None or getattr(type(target), "letter", "") != "V":
            raise s.fail(
                f"{self.name}: controlling source '{self.control_source}' is not a voltage source "  # type: ignore[attr-defined]
                "of this circuit (F and H elements sense the current through a named V source)"
            )
        return s.branch(target)


@dataclass(frozen=True)
class VoltageControlledVoltageSource(_VoltageOutput, _VoltageControlledForm, TwoTerminal):
    """E element: v(nodes) = gain * v(control_nodes)."""

    control_nodes: tuple[str, str] = (GROUND, GROUND)
    gain: float = 0.0

    letter: ClassVar[str] = "E"
    form: ClassVar[str] = "Ename out+ out- in+ in- gain"
    gain_word: ClassVar[str] = "gain"
    statement_value: ClassVar[str | None] = "gain"
    value_field: ClassVar[str] = "gain"

    def check_values(self) -> None:
        refuse_huge_gain(self, "gain", "V/V", self.gain)

    def stamp(self, s) -> None:
        k = s.branch(self)
        branch_kcl(s, s.node(self.nodes[0]), s.node(self.nodes[1]), k)
        c, d = (s.node(x) for x in self.control_nodes)
        s.g(k, c, -self.gain)
        s.g(k, d, self.gain)


@dataclass(frozen=True)
class VoltageControlledCurrentSource(_VoltageControlledForm, TwoTerminal):
    """G element: current transconductance * v(control_nodes), siemens,
    flowing from ``nodes[0]`` through the source to ``nodes[1]``."""

    control_nodes: tuple[str, str] = (GROUND, GROUND)
    transconductance: float = 0.0

    letter: ClassVar[str] = "G"
    form: ClassVar[str] = "Gname out+ out- in+ in- transconductance"
    gain_word: ClassVar[str] = "transconductance"
    statement_value: ClassVar[str | None] = "gain"
    value_field: ClassVar[str] = "transconductance"
    unit: ClassVar[str] = "S"

    def check_values(self) -> None:
        refuse_huge_gain(self, "transconductance", "S", self.transconductance)

    def stamp(self, s) -> None:
        a, b = (s.node(x) for x in self.nodes)
        c, d = (s.node(x) for x in self.control_nodes)
        gm = self.transconductance
        s.g(a, c, gm)
        s.g(a, d, -gm)
        s.g(b, c, -gm)
        s.g(b, d, gm)

    def dc_current(self, v) -> float:
        c, d = self.control_nodes
        return self.transconductance * (v.v(c) - v.v(d))


@dataclass(frozen=True)
class CurrentControlledCurrentSource(_CurrentControlledForm, TwoTerminal):
    """F element: current gain * i(control_source) from ``nodes[0]`` to
    ``nodes[1]`` through the source; ``control_source`` names a V element."""

    control_source: str = ""
    gain: float = 0.0

    letter: ClassVar[str] = "F"
    form: ClassVar[str] = "Fname out+ out- Vcontrol gain"
    gain_word: ClassVar[str] = "gain"
    statement_value: ClassVar[str | None] = "gain"
    value_field: ClassVar[str] = "gain"

    def check_values(self) -> None:
        refuse_huge_gain(self, "gain", "A/A", self.gain)

    def stamp(self, s) -> None:
        a, b = (s.node(x) for x in self.nodes)
        kc = self.controlling_branch(s)
        s.g(a, kc, self.gain)
        s.g(b, kc, -self.gain)

    def dc_current(self, v) -> float:
        return self.gain * v.branch_current(self.control_source)


@dataclass(frozen=True)
class CurrentControlledVoltageSource(_VoltageOutput, _CurrentControlledForm, TwoTerminal):
    """H element: v(nodes) = transresistance * i(control_source), ohms."""

    control_source: str = ""
    transresistance: float = 0.0

    letter: ClassVar[str] = "H"
    form: ClassVar[str] = "Hname out+ out- Vcontrol transresistance"
    gain_word: ClassVar[str] = "transresistance"
    statement_value: ClassVar[str | None] = "gain"
    value_field: ClassVar[str] = "transresistance"
    unit: ClassVar[str] = "Ω"

    def check_values(self) -> None:
        refuse_huge_gain(self, "transresistance", "Ω", self.transresistance)

    def stamp(self, s) -> None:
        k = s.branch(self)
        kc = self.controlling_branch(s)
        branch_kcl(s, s.node(self.nodes[0]), s.node(self.nodes[1]), k)
        s.g(k, kc, -self.transresistance)

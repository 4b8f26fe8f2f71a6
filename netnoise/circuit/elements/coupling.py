"""K: mutual coupling of two inductors.  Form: ``Kname Lfirst Lsecond coupling``.

Stamp: C[k1,k2] -= M, C[k2,k1] -= M with M = k·sqrt(L1·L2), k1, k2 the
inductors' branch rows.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, ClassVar

import numpy as np

from netnoise.circuit.elements.base import BuildContext, Element
from netnoise.errors import SourceLocation
from netnoise.text.fields import LineReader, Value, Word

__all__ = ["MutualCoupling", "Coupling"]


@dataclass(frozen=True)
class Coupling:
    """Statement of a K line: two inductor names and a coupling coefficient."""

    name: str
    inductors: tuple[Word, Word]
    value: Value
    loc: SourceLocation = field(compare=False)
    kind: Any = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class MutualCoupling(Element):
    """K element: coupling coefficient ``coupling`` (0 < |k| <= 1) of two inductors."""

    inductors: tuple[str, str] = ("", "")
    coupling: float = 0.0
    origin: SourceLocation | None = field(default=None, compare=False, repr=False)

    letter: ClassVar[str] = "K"
    form: ClassVar[str] = "Kname Lfirst Lsecond coupling"
    value_field: ClassVar[str] = "coupling"

    @classmethod
    def parse(cls, line: LineReader) -> Coupling:
        inductors = (line.node("first inductor name"), line.node("second inductor name"))
        value = line.value("coupling coefficient")
        line.done()
        return Coupling(line.name, inductors, value, line.loc, kind=cls)

    @classmethod
    def build(cls, statement: Coupling, ctx: BuildContext) -> "MutualCoupling":
        from netnoise.circuit.elements.inductor import Inductor

        k = ctx.number(statement.value)
        if not 0 < abs(k) <= 1:
            raise ctx.fail(
                f"the coupling coefficient of {ctx.name} must satisfy 0 < |k| <= 1, not {k:g}",
                statement.value.loc,
            )
        first, second = (ctx.local_name(w) for w in statement.inductors)
        for slot, word, full in (("inductors0", statement.inductors[0], first), ("inductors1", statement.inductors[1], second)):
            ctx.refer(word, full, Inductor, "inductor", slot)
        return cls(ctx.name, (first, second), k, ctx.loc)

    def references(self) -> tuple[str, ...]:
        return self.inductors

    def stamp(self, s) -> None:
        rows = []
        for name in self.inductors:
            try:
                inductor = s.element(name)
            except KeyError:
                inductor = None
            if inductor is None or getattr(type(inductor), "letter", "") != "L" or inductor.branch_count != 1:
                raise s.fail(f"{self.name}: '{name}' is not an inductor of this circuit")
            rows.append((s.branch(inductor), inductor.inductance))
        (k1, l1), (k2, l2) = rows
        m = self.coupling * np.sqrt(l1 * l2)
        s.c(k1, k2, -m)
        s.c(k2, k1, -m)

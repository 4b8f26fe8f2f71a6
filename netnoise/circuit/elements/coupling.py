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
from netnoise.text.values import exact

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
    def build(cls, statement: Coupling, ctx: BuildContext) -> MutualCoupling:
        from netnoise.circuit.elements.inductor import Inductor

        k = ctx.number(statement.value)
        if not 0 < abs(k) <= 1:
            raise ctx.fail(
                f"the coupling coefficient of {ctx.name} must satisfy 0 < |k| <= 1, not {exact(k)}",
                statement.value.loc,
            )
        first, second = (ctx.local_name(w) for w in statement.inductors)
        for slot, word, full in (
            ("inductors0", statement.inductors[0], first),
            ("inductors1", statement.inductors[1], second),
        ):
            ctx.refer(word, full, Inductor, "inductor", slot)
        return cls(ctx.name, (first, second), k, ctx.loc)

    def references(self) -> tuple[str, ...]:
        return self.inductors

    @classmethod
    def check_all(cls, elements, circuit) -> None:
        """Refuse couplings no set of real coils can have: an inductor coupled with itself, a
        pair coupled twice, a coupling naming something that is not an inductor, or
        coefficients whose inductance matrix is not positive semidefinite (checked for each
        group of inductors joined by couplings)."""
        from netnoise.circuit.disjoint import DisjointSets
        from netnoise.circuit.elements.inductor import Inductor
        from netnoise.errors import CircuitError

        inductors = {}
        for k in elements:
            for name in k.inductors:
                try:
                    found = circuit.element(name)
                except KeyError:
                    found = None
                if not isinstance(found, Inductor):
                    raise CircuitError(f"{k.name}: '{name}' is not an inductor of this circuit")
                inductors[name.lower()] = found
        pairs: dict[frozenset, MutualCoupling] = {}
        groups = DisjointSets()
        for k in elements:
            first, second = (name.lower() for name in k.inductors)
            if first == second:
                raise CircuitError(
                    f"{k.name} couples inductor {inductors[first].name} with itself; a coupling joins two "
                    "different inductors (an inductor's own inductance is its value): remove it or name the other inductor"
                )
            pair = frozenset((first, second))
            if pair in pairs:
                raise CircuitError(
                    f"{pairs[pair].name} and {k.name} both couple {inductors[first].name} and {inductors[second].name}; "
                    "a pair of inductors has one coupling coefficient: keep one K element for the pair"
                )
            pairs[pair] = k
            groups.union(first, second)
        members: dict[str, list[str]] = {}
        for key in sorted({key for pair in pairs for key in pair}):
            members.setdefault(groups.find(key), []).append(key)
        for keys in members.values():
            _check_group(keys, inductors, pairs)

    def stamp(self, s) -> None:
        rows = []
        for name in self.inductors:
            try:
                inductor = s.element(name)
            except KeyError:
                inductor = None
            if inductor is None or getattr(type(inductor), "letter", "") != "L" or inductor.branch_count != 1:
                raise s.fail(f"{self.name}: '{name}' is not an inductor of this circuit")
            rows.append((s.branch(inductor), inductor.effective_inductance))
        (k1, l1), (k2, l2) = rows
        m = self.coupling * np.sqrt(l1 * l2)
        s.c(k1, k2, -m)
        s.c(k2, k1, -m)


# a coefficient matrix whose smallest eigenvalue lies above -this is taken as positive
# semidefinite: coefficients are read from text with a few digits, and eigvalsh of a matrix of
# entries of size 1 is accurate to ~1e-15; an exactly singular set (k = 1, a perfect
# transformer) must pass
_COUPLING_TOLERANCE = 1e-12


def _check_group(keys: list[str], inductors: dict, pairs: dict) -> None:
    """The inductance matrix of one group of coupled inductors must be positive semidefinite."""
    import math

    from netnoise.errors import CircuitError

    where = {key: i for i, key in enumerate(keys)}
    own = np.array([inductors[key].effective_inductance for key in keys], dtype=float)
    matrix = np.diag(own)  # the group's inductance matrix: L_i on the diagonal, M_ij = k·√(L_i·L_j)
    group_k = [k for pair, k in pairs.items() if next(iter(pair)) in where]
    for k in group_k:
        i, j = (where[name.lower()] for name in k.inductors)
        matrix[i, j] = matrix[j, i] = k.coupling * math.sqrt(abs(own[i] * own[j]))
    # scaled by D⁻¹ on both sides, D = diag(√|L_i|) (congruence keeps the signs of the
    # eigenvalues, Sylvester's law of inertia), so values from nH to H are judged alike
    scale = 1.0 / np.sqrt(np.where(own != 0.0, np.abs(own), 1.0))
    lowest = float(np.linalg.eigvalsh(scale[:, None] * matrix * scale[None, :])[0])
    if lowest < -_COUPLING_TOLERANCE:
        names = ", ".join(inductors[key].name for key in keys)
        raise CircuitError(
            f"the couplings {', '.join(k.name for k in group_k)} among inductors {names} cannot exist: their "
            f"inductance matrix is not positive semidefinite (the coefficient matrix has the eigenvalue "
            f"{lowest:.3g}), so these coils could store negative magnetic energy. Lower the coupling "
            "coefficients (for three coils k12² + k13² + k23² - 2·k12·k13·k23 must not exceed 1)"
        )

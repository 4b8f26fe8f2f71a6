"""E, G, F, H with ``POLY(n)``: polynomial controlled sources, noiseless.

Forms (the SPICE2 polynomial form that amplifier macro-models use)::

    Ename out+ out- POLY(n) c1+ c1- ... cn+ cn- p0 p1 ...    v(out) = P(v(c1+, c1-), ...)
    Gname out+ out- POLY(n) c1+ c1- ... cn+ cn- p0 p1 ...    i = P(...) from out+ through it to out-
    Fname out+ out- POLY(n) V1 ... Vn p0 p1 ...              i = P(i(V1), ...)
    Hname out+ out- POLY(n) V1 ... Vn p0 p1 ...              v(out) = P(i(V1), ...)

P(x) = p0 + Σ pᵢ·xᵢ + Σ_{i≤j} p·xᵢxⱼ + Σ_{i≤j≤k} p·xᵢxⱼxₖ + ..., the terms of each
degree in lexicographic order of their indices (x1², x1x2, ..., x2², ...), as far as
coefficients are given; a one-dimensional polynomial with a single coefficient
takes it as p1 (the SPICE2 rules, from memory).  The source is nonlinear: the
operating point solves it with the rest, and at that point it is linearised
into its slopes ∂P/∂xᵢ.
"""

from __future__ import annotations

import dataclasses
import itertools
from dataclasses import dataclass, field
from typing import Any, ClassVar

import numpy as np

from netnoise.circuit.elements.base import (
    BuildContext,
    DeviceEnvironment,
    DeviceLoad,
    Element,
    SmallSignal,
    branch_kcl,
)
from netnoise.errors import SourceLocation
from netnoise.text.fields import Call, LineReader, Value, Word, as_value, describe, glued_call
from netnoise.text.source import fail

__all__ = ["PolyStatement", "PolyVCVS", "PolyVCCS", "PolyCCCS", "PolyCCVS", "polynomial_terms"]

MAX_DIMENSIONS = 20


def polynomial_terms(dimensions: int, count: int) -> list[tuple[int, ...]]:
    """The index tuples of the first ``count`` terms (``()`` is the constant)."""
    terms: list[tuple[int, ...]] = []
    degree = 0
    while len(terms) < count:
        terms.extend(itertools.combinations_with_replacement(range(dimensions), degree))
        degree += 1
    return terms[:count]


@dataclass(frozen=True)
class PolyStatement:
    """Statement of an E, G, F or H line with ``POLY(n)``."""

    letter: str
    name: str
    nodes: tuple[Word, Word]
    controls: tuple[Word, ...]  # 2n nodes (E, G) or n source names (F, H)
    coefficients: tuple[Value, ...]
    loc: SourceLocation = field(compare=False)
    kind: Any = field(default=None, compare=False, repr=False)
    value: Any = None  # no primary value


@dataclass(frozen=True)
class _Polynomial(Element):
    nodes: tuple[str, str] = ("0", "0")
    controls: tuple[str, ...] = ()
    coefficients: tuple[float, ...] = ()
    origin: SourceLocation | None = field(default=None, compare=False, repr=False)
    bias: SmallSignal | None = field(default=None, compare=False, repr=False)

    is_linear: ClassVar[bool] = False
    supplies_gain: ClassVar[bool] = True
    selector: ClassVar[str | None] = "poly"
    by_current: ClassVar[bool] = False  # F, H: controlled by currents of V sources
    voltage_output: ClassVar[bool] = False  # E, H: a branch fixes the output voltage

    # ---- netlist form
    @classmethod
    def parse(cls, line: LineReader) -> PolyStatement:
        fields = line.fields
        if len(fields) < 3:
            raise fail(f"{line.name} is missing its POLY(n) and controls", line.last_end, line.form_hint())
        out = fields[:2]
        for item in out:
            if not isinstance(item, Word):
                raise fail(
                    f"expected an output node of {line.name} here, not {describe(item)}", item.loc, line.form_hint()
                )
        poly = fields[2]
        if isinstance(poly, Word):  # POLY(2) is one word where a node could stand
            poly = glued_call(poly) or poly
        if not (isinstance(poly, Call) and poly.name.lower() == "poly" and len(poly.args) == 1):
            raise fail(f"expected POLY(n) here, not {describe(poly)}", poly.loc, line.form_hint())
        arg = poly.args[0]
        try:
            n = int(arg.text) if isinstance(arg, Word) else 0
        except ValueError:
            n = 0
        if not 1 <= n <= MAX_DIMENSIONS:
            raise fail(f"{line.name}: POLY(n) takes a whole number of controls from 1 to {MAX_DIMENSIONS}", poly.loc)
        wanted = n if cls.by_current else 2 * n
        rest = fields[3:]
        controls = rest[:wanted]
        if len(controls) < wanted:
            what = "controlling voltage sources" if cls.by_current else "controlling node pairs"
            raise fail(f"{line.name}: POLY({n}) needs {n} {what}", line.fields[-1].end, line.form_hint())
        for item in controls:
            if not isinstance(item, Word):
                raise fail(f"expected a control of {line.name} here, not {describe(item)}", item.loc, line.form_hint())
        coefficients = tuple(as_value(item, f"coefficient of {line.name}") for item in rest[wanted:])
        if not coefficients:
            raise fail(f"{line.name} has no polynomial coefficients", line.fields[-1].end, line.form_hint())
        line.position = len(fields)
        return PolyStatement(cls.letter, line.name, (out[0], out[1]), tuple(controls), coefficients, line.loc, cls)  # type: ignore[arg-type]

    @classmethod
    def build(cls, statement: PolyStatement, ctx: BuildContext) -> _Polynomial:
        from netnoise.circuit.elements.sources import VoltageSource

        values = [ctx.number(c) for c in statement.coefficients]
        dims = len(statement.controls) if cls.by_current else len(statement.controls) // 2
        if dims == 1 and len(values) == 1:
            values = [0.0, values[0]]  # a lone coefficient is the linear one
        if cls.by_current:
            controls = []
            for slot, word in enumerate(statement.controls):
                name = ctx.local_name(word)
                ctx.refer(word, name, VoltageSource, "voltage source", f"controls{slot}")
                controls.append(name)
        else:
            controls = [ctx.node(word) for word in statement.controls]
        nodes = (ctx.node(statement.nodes[0]), ctx.node(statement.nodes[1]))
        return cls(ctx.name, nodes=nodes, controls=tuple(controls), coefficients=tuple(values), origin=ctx.loc)

    # ---- structure
    @property
    def dimensions(self) -> int:
        return len(self.controls) if self.by_current else len(self.controls) // 2

    def terminals(self) -> tuple[str, ...]:
        return self.nodes if self.by_current else (*self.nodes, *self.controls)

    def references(self) -> tuple[str, ...]:
        return self.controls if self.by_current else ()

    def dc_paths(self) -> tuple[tuple[str, str], ...]:
        return (self.nodes,) if self.voltage_output else ()

    def voltage_defined(self) -> tuple[tuple[str, str], ...]:
        return (self.nodes,) if self.voltage_output else ()

    def dc_current(self, v) -> float | None:
        return v.branch_current(self) if self.voltage_output else None

    def dc_voltage(self, v) -> float | None:
        return v.v(self.nodes[0]) - v.v(self.nodes[1])

    # ---- the rows it works on: output nodes (or its branch), then its controls
    def device_nodes(self) -> tuple[str, ...]:
        return (*self.nodes, *([""] if self.voltage_output else []), *self.controls)

    def device_rows(self, s) -> tuple[int, ...]:
        rows = [s.node(self.nodes[0]), s.node(self.nodes[1])]
        if self.voltage_output:
            rows.append(s.branch(self))
        for control in self.controls:
            rows.append(s.branch(_source(s, self, control)) if self.by_current else s.node(control))
        return tuple(rows)

    def _projection(self) -> np.ndarray:
        offset = 3 if self.voltage_output else 2
        width = offset + len(self.controls)
        p = np.zeros((self.dimensions, width))
        for i in range(self.dimensions):
            if self.by_current:
                p[i, offset + i] = 1.0
            else:
                p[i, offset + 2 * i] = 1.0
                p[i, offset + 2 * i + 1] = -1.0
        return p

    def value_and_slopes(self, x: np.ndarray) -> tuple[float, np.ndarray]:
        """P(x) and ∂P/∂x."""
        total, slopes = 0.0, np.zeros(self.dimensions)
        for coefficient, term in zip(self.coefficients, polynomial_terms(self.dimensions, len(self.coefficients))):
            if coefficient == 0.0:
                continue
            total += coefficient * float(np.prod([x[i] for i in term]))
            for j in set(term):
                rest = list(term)
                rest.remove(j)
                slopes[j] += coefficient * term.count(j) * float(np.prod([x[i] for i in rest]))
        return total, slopes

    def _rows_effect(self, slopes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(d current / d P, Jacobian) over the device rows for output value P."""
        projection = self._projection()
        out = np.zeros(projection.shape[1])
        if self.voltage_output:
            out[2] = -1.0  # the branch row: v(out+) − v(out−) − P = 0
        else:
            out[0], out[1] = 1.0, -1.0  # P leaves out+ into the source, enters out−
        return out, np.outer(out, slopes @ projection)

    def load(self, v: np.ndarray, previous: np.ndarray | None, env: DeviceEnvironment) -> DeviceLoad:
        x = self._projection() @ v
        value, slopes = self.value_and_slopes(x)
        out, jacobian = self._rows_effect(slopes)
        return DeviceLoad(out * value - jacobian @ v, jacobian, x, True)

    def at_operating_point(self, v: np.ndarray, env: DeviceEnvironment) -> Element:
        x = self._projection() @ v
        value, slopes = self.value_and_slopes(x)
        _, jacobian = self._rows_effect(slopes)
        unit = "V" if self.voltage_output else "A"
        summary = ((f"output_{unit}", value), *((f"slope_{i + 1}", float(s)) for i, s in enumerate(slopes)))
        bias = SmallSignal(jacobian, (), (), np.array(v, dtype=float), summary, env.temperature_K)
        return dataclasses.replace(self, bias=bias)

    def without_bias(self) -> Element:
        return self if self.bias is None else dataclasses.replace(self, bias=None)

    @property
    def small_signal(self) -> SmallSignal | None:
        return self.bias

    # ---- stamps: the output branch always, the slopes once biased
    def stamp(self, s) -> None:
        if self.voltage_output:
            branch_kcl(s, s.node(self.nodes[0]), s.node(self.nodes[1]), s.branch(self))
        if self.bias is None:
            return
        rows = self.device_rows(s)
        for i, ri in enumerate(rows):
            for j, rj in enumerate(rows):
                s.g(ri, rj, float(self.bias.conductance[i, j]))


def _source(s, owner: _Polynomial, name: str) -> Element:
    try:
        target = s.element(name)
    except KeyError:
        target = None
    if target is None or getattr(type(target), "letter", "") != "V":
        raise s.fail(
            f"{owner.name}: controlling source '{name}' is not a voltage source of this circuit "
            "(F and H elements sense the current through a named V source)"
        )
    return target


@dataclass(frozen=True)
class PolyVCVS(_Polynomial):
    """E with POLY(n): v(nodes) = P(control voltages)."""

    letter: ClassVar[str] = "E"
    form: ClassVar[str] = "Ename out+ out- POLY(n) c1+ c1- ... p0 p1 ..."
    branch_count: ClassVar[int] = 1
    voltage_output: ClassVar[bool] = True


@dataclass(frozen=True)
class PolyVCCS(_Polynomial):
    """G with POLY(n): a current P(control voltages) from out+ through it to out-."""

    letter: ClassVar[str] = "G"
    form: ClassVar[str] = "Gname out+ out- POLY(n) c1+ c1- ... p0 p1 ..."


@dataclass(frozen=True)
class PolyCCCS(_Polynomial):
    """F with POLY(n): a current P(currents of V sources)."""

    letter: ClassVar[str] = "F"
    form: ClassVar[str] = "Fname out+ out- POLY(n) V1 ... p0 p1 ..."
    by_current: ClassVar[bool] = True


@dataclass(frozen=True)
class PolyCCVS(_Polynomial):
    """H with POLY(n): v(nodes) = P(currents of V sources)."""

    letter: ClassVar[str] = "H"
    form: ClassVar[str] = "Hname out+ out- POLY(n) V1 ... p0 p1 ..."
    branch_count: ClassVar[int] = 1
    voltage_output: ClassVar[bool] = True
    by_current: ClassVar[bool] = True

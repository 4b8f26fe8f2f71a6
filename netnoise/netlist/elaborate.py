"""Statements -> a flat :class:`~netnoise.circuit.Circuit`.

What happens here, in order:

1. ``.include`` cards are replaced by the statements of the file they name
   (relative to the including file; cycles and nesting deeper than
   :data:`MAX_INCLUDE_DEPTH` are refused).
2. ``.subckt`` ... ``.ends`` blocks become definitions.  Definitions may nest;
   a nested one is visible only inside its parent.
3. The top level is expanded: its ``.param`` cards are evaluated in order
   (each may use the ones before it), then every element line becomes an
   element.  An ``X`` line expands its subcircuit in a new scope: the
   instance's ``name=value`` overrides (evaluated where the ``X`` line is),
   else the ``.subckt`` defaults, then the body's own ``.param`` cards.
   Parameters are looked up in the instance scope, then the scope the
   subcircuit was defined in, out to the global ``.param`` values.

Every statement is tried on its own: a problem is kept and the reading goes
on, and all are raised together at the end (see DEVELOPERS.md, "Every
problem in one pass").

Naming: element ``R2`` inside instance ``X1`` is ``X1.R2``; internal node
``mid`` is ``x1.mid``; pins stand for the outer nodes they are connected to;
``0`` (alias ``gnd``) is the one global node.  ``F``/``H`` controlling
sources and ``K`` inductors are names in the scope where the line is.
"""

from __future__ import annotations

import contextlib
import dataclasses
import difflib
import functools
import math
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from netnoise import circuit as c
from netnoise.circuit.elements.amplifier import OpAmp, check_opamp_param
from netnoise.circuit.elements.base import ModelValues
from netnoise.constants import ABSOLUTE_ZERO_C, GROUND_ALIASES
from netnoise.errors import NetlistError, SourceLocation, raise_problems
from netnoise.netlist.definitions import (
    CARD_NAMES as _CARD_NAMES,
)
from netnoise.netlist.definitions import (
    MAX_FLAT_ELEMENTS,
    NOT_ELEMENTS,
    Definition,
    all_statements,
    build_definitions,
    check_flat_size,
    flat_element_counts,
)
from netnoise.netlist.includes import MAX_INCLUDE_DEPTH, expand_includes
from netnoise.netlist.statements import (
    AcCard,
    Assignment,
    FuncCard,
    InitialCard,
    Instance,
    LeftOutLine,
    ModelCard,
    NoiseCard,
    OperatingPointCard,
    OptionsCard,
    ParamCard,
    ParsedFile,
    Passive,
    ReaderNotice,
    SetAsideCard,
    Statement,
    Sweep,
    TempCard,
    Toleranced,
    Value,
    Word,
)
from netnoise.text.expressions import CONSTANTS, FUNCTIONS, Function, evaluate, referenced_names
from netnoise.text.fields import shown
from netnoise.text.source import bounded
from netnoise.text.values import SMALLEST_NORMAL, exact

__all__ = [
    "MAX_INCLUDE_DEPTH",
    "MAX_SUBCKT_DEPTH",
    "MAX_FLAT_ELEMENTS",
    "GROUND_ALIASES",
    "elaborate",
    "flat_element_counts",
]

_name_key = c.name_key

# Subcircuit instances nested deeper than this are refused (the expansion
# recurses; real designs nest a handful of levels).
MAX_SUBCKT_DEPTH = 100


def _fail(message: str, location: SourceLocation | None, hint: str = "") -> NetlistError:
    # names can be very long; a message stays a line or two
    return NetlistError(bounded(message), location, bounded(hint))


def _where(location: SourceLocation | None) -> str:
    return f"{location.file}:{location.line}" if location is not None else "(unknown place)"


@contextlib.contextmanager
def _naming_instance(instance: str):
    """A line of a subcircuit that fails for one instance (its parameters) names that
    instance; the innermost one names the whole path (X1.X2), outer ones leave it."""
    try:
        yield
    except NetlistError as error:
        if not error.instance:
            error.instance = instance
        raise


# --------------------------------------------------------------------------
# 3. expansion


@dataclass
class _Scope:
    definition: Definition
    parent: _Scope | None  # the scope the definition was written in
    element_prefix: str  # 'X1.X2.' ('' at the top)
    node_prefix: str  # 'x1.x2.'
    pin_map: dict[str, str]
    params: dict[str, float] = field(default_factory=dict)
    param_origin: dict[str, SourceLocation] = field(default_factory=dict)
    overridden: set[str] = field(default_factory=set)  # parameters set on the instance's X line
    within: str = ""  # for messages: "X1, an instance of subcircuit 'amp' (top.cir:9)"
    # shared by every scope of one elaboration: node names written at the top level with a dot,
    # and the internal nodes instances made, so a top-level 'x1.mid' cannot join X1's 'mid' unseen
    names: _NodeNames = field(default_factory=lambda: _NodeNames())

    def visible(self) -> dict[str, float]:
        chain: list[_Scope] = []
        scope: _Scope | None = self
        while scope is not None:
            chain.append(scope)
            scope = scope.parent
        merged: dict[str, float] = {}
        for scope in reversed(chain):
            merged.update(scope.params)
        return merged

    def node(self, word: Word) -> str:
        key = word.text.lower()
        if key in GROUND_ALIASES:
            return c.GROUND
        pin_map = self.pin_map
        if key in pin_map:
            return pin_map[key]
        prefix = self.node_prefix
        full = prefix + key
        names = self.names
        # compared lower case, shown as first written (X1.Mid for x1.mid)
        spelled = names.spelled
        if full not in spelled:
            spelled[full] = self.element_prefix + word.text
        if prefix:
            names.internal.add(full)
        elif "." in key:
            names.top_dotted.setdefault(key, word)
        return full


@dataclass
class _NodeNames:
    top_dotted: dict[str, Word] = field(default_factory=dict)
    internal: set[str] = field(default_factory=set)
    spelled: dict[str, str] = field(default_factory=dict)  # canonical node -> as first written

    def check(self) -> None:
        """Refuse a top-level node spelled like a subcircuit's internal node: it would join it."""
        for key, word in self.top_dotted.items():
            if key in self.internal:
                instance, inner = key.rsplit(".", 1)
                raise _fail(
                    f"the top-level node '{word.text}' is spelled like node '{inner}' inside instance "
                    f"{instance.upper()}, and would join it unseen",
                    word.loc,
                    "rename the top-level node (a dot in a top-level name is read as a path into an instance)",
                )


@dataclass
class _Pending:
    """A name (F/H control source, K inductor) to check once all elements exist."""

    index: int  # into the element list
    word: Word
    full_name: str
    wanted: type
    what: str
    slot: str  # 'control_source', 'inductors0' / 'inductors1', or 'controls<i>' (POLY)
    owner: str


class _BuildContext:
    """What an element kind sees while it builds itself (see
    :class:`netnoise.circuit.elements.base.BuildContext`)."""

    __slots__ = ("engine", "scope", "name", "loc", "node", "_refs")

    def __init__(self, engine: _Elaborator, scope: _Scope, name: str, loc: SourceLocation) -> None:
        self.engine = engine
        self.scope = scope
        self.name = name
        self.loc = loc
        # a node word -> its canonical node (the scope's own method: one call less an element end)
        self.node: Callable[[Word], str] = scope.node
        self._refs: list[tuple[Word, str, type, str, str]] = []

    def number(self, value: Value) -> float:
        return self.engine.number(value, self.scope)

    def local_name(self, word: Word) -> str:
        return self.scope.element_prefix + word.text

    def refer(self, word: Word, full_name: str, wanted: type, what: str, slot: str) -> None:
        self._refs.append((word, full_name, wanted, what, slot))

    def notice(self, text: str, loc: SourceLocation | None = None, about: str | None = None) -> None:
        """Say ``text`` once; with ``about`` (an element's name) the same text said of several
        elements becomes one notice naming them all."""
        where = _where(loc or self.loc)
        if about is None:
            self.engine.notices.append(f"{where}: {text}")
            return
        if text not in self.engine.grouped:  # the notice keeps the place of its first element
            self.engine.notices.append(_Grouped(text))
        self.engine.grouped.setdefault(text, []).append((about, where))

    def fail(self, message: str, loc: SourceLocation | None, hint: str = "") -> NetlistError:
        return _fail(message, loc, hint)

    def model(self, word: Word, types: tuple[str, ...]) -> ModelValues:
        """The ``.model`` called ``word`` visible here, of one of ``types``, its
        values evaluated where it is written (upper-case names)."""
        found = self.scope.definition.find_model(word.text.lower())
        wanted = " or ".join(t.upper() for t in types)
        if found is None:
            names = [n for n in self.scope.definition.visible_names()]
            close = difflib.get_close_matches(word.text.lower(), [n.lower() for n in names], n=3)
            hint = "did you mean " + " or ".join(f"'{n}'" for n in close) + "?" if close else ""
            same = self.models_of(types)
            if same:
                hint = (hint + " " if hint else "") + f"{wanted} models here: {', '.join(same[:8])}"
            raise _fail(
                f"{self.name}: no .model called '{word.text}'",
                word.loc,
                hint or f"add a card: .model {word.text} {types[0].upper()} (param=value ...)",
            )
        card, home = found
        if card.kind not in types:
            raise _fail(
                f"{self.name}: model '{word.text}' is a {card.kind.upper()} model; this element takes {wanted}",
                word.loc,
                f"the .model is at {_where(card.loc)}",
            )
        where: _Scope | None = self.scope
        while where is not None and where.definition is not home:
            where = where.parent
        values = {a.name.upper(): self.engine.number(a.value, where or self.scope) for a in card.params}
        return ModelValues(card.name.text, card.kind, values, card.loc)

    def has_model(self, word: Word) -> bool:
        """Whether a .model called ``word`` (of any type) is visible here."""
        return self.scope.definition.find_model(word.text.lower()) is not None

    def models_of(self, types: tuple[str, ...]) -> list[str]:
        """The names of the visible .model cards of one of ``types``."""
        names: list[str] = []
        scope: Definition | None = self.scope.definition
        while scope is not None:
            names.extend(m.name.text for m in scope.models.values() if m.kind in types and m.name.text not in names)
            scope = scope.parent
        return names

    def settle(self, index: int) -> None:
        """The element now has an index: its references are checked once all exist."""
        for word, full_name, wanted, what, slot in self._refs:
            self.engine.pending.append(_Pending(index, word, full_name, wanted, what, slot, self.name))


def _origin(value: Value, scope: _Scope) -> c.ValueOrigin:
    """Where a value came from: a literal, one parameter, an expression, or an X-line override."""
    if value.number is not None:
        return c.ValueOrigin("literal", value.text, (), value.loc)
    names = tuple(sorted(referenced_names(value.tree))) if value.tree is not None else ()
    tree = value.tree
    single = getattr(tree, "data", None) == "name" or (not hasattr(tree, "data") and len(names) == 1)
    kind = "param" if single and len(names) == 1 else "expression"
    if any(name in scope.overridden for name in names):
        kind = "override"
    return c.ValueOrigin(kind, value.text, names, value.loc)


class _Skipped(Exception):
    """A value that uses a parameter whose own definition was refused: the
    problem is reported once, at that definition, not at every use."""


class _Elaborator:
    def __init__(
        self,
        notices: list[str | _Grouped],
        param_overrides: dict[str, float] | None = None,
        problems: list[NetlistError] | None = None,
        functions: dict[str, Function] | None = None,
    ) -> None:
        self.param_overrides = param_overrides or {}
        # every problem found, in order; a statement that fails is left out and the reading goes on
        self.problems: list[NetlistError] = problems if problems is not None else []
        self.incomplete = bool(self.problems)  # lines were left out: checks across lines may mislead
        self.broken: set[str] = set()  # parameters whose definitions were refused
        # name key -> (name, place) of element lines left out: their names stay taken
        self.failed: dict[str, tuple[str, SourceLocation]] = {}
        self.functions = functions or {}
        self.origins: dict[str, c.ValueOrigin] = {}
        self.tolerances: dict[str, float] = {}  # element name -> tolerance=, as a fraction
        self.elements: list[c.Element] = []
        self.by_key: dict[str, tuple[c.Element, SourceLocation]] = {}
        self.pending: list[_Pending] = []
        self.notices = notices
        self.grouped: dict[str, list[tuple[str, str]]] = {}  # notice text -> (name, file:line) of each element
        self.active: list[Definition] = []  # instantiation stack, for recursion

    # ---- values
    def number(self, value: Value, scope: _Scope) -> float:
        if value.number is not None:
            result = value.number
        else:
            assert value.tree is not None and value.source is not None
            if self.broken and referenced_names(value.tree) & self.broken:
                raise _Skipped
            result = evaluate(value.tree, scope.visible(), value.source.location, self.functions)
        if not math.isfinite(result):
            raise _fail("the value is not a finite number", value.loc)
        if result != 0 and abs(result) < SMALLEST_NORMAL:
            raise _fail(
                f"the value {result!r} underflows: its size is below {SMALLEST_NORMAL:.3g}, the smallest a "
                "double holds in full precision",
                value.loc,
                "write 0 for zero, or a value of a sensible size",
            )
        return result

    def define_params(self, assignments: tuple[Assignment, ...], scope: _Scope, where: _Scope) -> None:
        """Set each assignment in ``scope``, evaluating it in ``where``; at the
        top level a value in ``self.param_overrides`` replaces the written one."""
        for assignment in assignments:
            try:
                self.define_param(assignment, scope, where)
            except NetlistError as problem:
                self.report(problem, scope)
                self.broken.add(assignment.name.lower())
            except _Skipped:
                self.broken.add(assignment.name.lower())

    def attempt(self, work: Callable[[], Any]) -> Any:
        """``work()``, or None with its problem kept (a card that fails is left out)."""
        try:
            return work()
        except NetlistError as problem:
            self.problems.append(problem)
        except _Skipped:
            pass
        return None

    def report(self, problem: NetlistError, scope: _Scope) -> None:
        """Keep ``problem`` (naming the instance it happened in) and go on."""
        if not problem.instance and scope.within:
            problem.instance = scope.within
        self.problems.append(problem)
        self.incomplete = True

    def define_param(self, assignment: Assignment, scope: _Scope, where: _Scope) -> None:
        key = assignment.name.lower()
        if key in CONSTANTS:
            raise _fail(f"'{assignment.name}' is a built-in constant and cannot be redefined", assignment.loc)
        if key in scope.param_origin:
            raise _fail(
                f"parameter '{assignment.name}' is already defined in this scope",
                assignment.loc,
                f"the first definition is at {_where(scope.param_origin[key])}",
            )
        if scope.parent is None and key in self.param_overrides:
            scope.params[key] = self.param_overrides[key]
        else:
            scope.params[key] = self.number(assignment.value, where)
        scope.param_origin[key] = assignment.loc

    # ---- elements
    def add(self, element: c.Element, loc: SourceLocation) -> int:
        key = _name_key(element.name)
        if key in self.failed:
            name, first = self.failed[key]
            raise _fail(
                f"duplicate element name '{element.name}'",
                loc,
                f"the first '{name}' is at {_where(first)} (a line with a problem of its own)",
            )
        if key in self.by_key:
            first = self.by_key[key][1]
            raise _fail(
                f"duplicate element name '{element.name}'",
                loc,
                f"the first '{self.by_key[key][0].name}' is at {_where(first)}",
            )
        self.by_key[key] = (element, loc)
        elements = self.elements
        elements.append(element)
        return len(elements) - 1

    def expand(self, scope: _Scope) -> None:
        body = scope.definition.body
        for statement in body:
            if isinstance(statement, ParamCard):
                self.define_params(statement.assignments, scope, scope)
        for statement in body:
            if type(statement) is not Passive:  # R, C and L lines (most of a large netlist) are elements
                if isinstance(statement, LeftOutLine):
                    self.left_out(scope.element_prefix + statement.name.text, statement.loc)
                    continue
                if isinstance(statement, NOT_ELEMENTS):
                    continue
            try:
                if isinstance(statement, Instance):
                    self.instance(statement, scope)
                else:
                    self.element(statement, scope)
            except NetlistError as problem:
                self.report(problem, scope)
                self.left_out(scope.element_prefix + _statement_name(statement), statement.loc)
            except _Skipped:
                self.incomplete = True
                self.left_out(scope.element_prefix + _statement_name(statement), statement.loc)

    def left_out(self, name: str, loc: SourceLocation) -> None:
        """Element ``name`` (at ``loc``) could not be read or built: its name stays taken."""
        self.incomplete = True
        key = c.name_key(name)
        if key in self.by_key:
            first = self.by_key[key]
            self.problems.append(
                _fail(
                    f"duplicate element name '{name}'",
                    loc,
                    f"the first '{first[0].name}' is at {_where(first[1])}",
                )
            )
        else:
            self.failed.setdefault(key, (name, loc))

    def element(self, statement: Any, scope: _Scope) -> None:
        if isinstance(statement, Toleranced):  # the line's tolerance, kept for Monte Carlo studies
            inner: Any = statement.statement
            self.tolerances[scope.element_prefix + inner.name] = statement.fraction
            statement = inner
        kind = statement.kind  # an element line's statement names the kind that builds it
        name = scope.element_prefix + statement.name
        loc = statement.loc
        ctx = _BuildContext(self, scope, name, loc)
        element = kind.build(statement, ctx)
        index = self.add(element, loc)
        if ctx._refs:
            ctx.settle(index)
        value_field = kind.statement_value
        value = getattr(statement, value_field, None) if value_field else None
        if value is not None:
            self.origins[_name_key(name)] = _origin(value, scope)

    def opamp(self, statement: Instance, scope: _Scope, model: ModelCard, home: Definition) -> None:
        name = scope.element_prefix + statement.name
        if model.kind != "opamp":
            raise _fail(
                f"{name}: '{model.name.text}' is a {model.kind.upper()} device model, not an amplifier or subcircuit",
                statement.subckt.loc,
                "a device model is used by its element letter (D, Q, J, M), not by an X line",
            )
        if len(statement.nodes) not in (3, 5):
            raise _fail(
                f"{name} connects {len(statement.nodes)} node(s) but the amplifier "
                f"'{model.name.text}' has 3 pins (in+, in-, out) or 5 with its supplies (in+, in-, v+, v-, out)",
                statement.loc,
                f"write: {statement.name} in+ in- out {model.name.text}  or  "
                f"{statement.name} in+ in- v+ v- out {model.name.text}",
            )
        # the model's own values are evaluated where the .model is written
        where: _Scope | None = scope
        while where is not None and where.definition is not home:
            where = where.parent
        if where is None:  # pragma: no cover - the model was found on this chain
            where = scope
        values: dict[str, tuple[float, Value]] = {}
        for assignment in model.params:
            values[assignment.name.lower()] = (self.number(assignment.value, where), assignment.value)
        given: set[str] = set()
        for assignment in statement.overrides:
            check_opamp_param(assignment, name)
            key = assignment.name.lower()
            if key in given:
                raise _fail(f"parameter '{assignment.name}' is given twice on {name}", assignment.loc)
            given.add(key)
            values[key] = (self.number(assignment.value, scope), assignment.value)
        ctx = _BuildContext(self, scope, name, statement.loc)
        self.add(OpAmp.build_instance(statement, ctx, model.name.text, values), statement.loc)

    def instance(self, statement: Instance, scope: _Scope) -> None:
        key = statement.subckt.text.lower()
        definition = scope.definition.find(key)
        found_model = scope.definition.find_model(key)
        if found_model is not None:
            if definition is not None:
                raise _fail(
                    f"{statement.name}: '{statement.subckt.text}' names both a subcircuit and a .model",
                    statement.subckt.loc,
                    f"the .subckt is at {_where(definition.loc)}, the .model at {_where(found_model[0].loc)}; "
                    "rename one of them",
                )
            self.opamp(statement, scope, *found_model)
            return
        if definition is None:
            close = difflib.get_close_matches(key, [n.lower() for n in scope.definition.visible_names()], n=3)
            hint = "did you mean " + " or ".join(f"'{n}'" for n in close) + "?" if close else ""
            if not hint and scope.definition.visible_names():
                hint = "defined here: " + ", ".join(sorted(scope.definition.visible_names()))
            raise _fail(
                f"{statement.name}: no subcircuit or amplifier model called '{statement.subckt.text}'",
                statement.subckt.loc,
                hint,
            )
        if definition in self.active:
            cycle = " -> ".join(d.name for d in (*self.active[self.active.index(definition) :], definition))
            raise _fail(
                f"{statement.name}: subcircuit '{definition.name}' instantiates itself ({cycle})", statement.loc
            )
        if len(self.active) >= MAX_SUBCKT_DEPTH:
            names = [d.name for d in (*self.active, definition)]
            chain = (
                " -> ".join(names)
                if len(names) <= 8
                else (" -> ".join(names[:3]) + f" -> … ({len(names) - 6:,} more) … -> " + " -> ".join(names[-3:]))
            )
            raise _fail(
                f"{statement.name}: subcircuit instances are nested more than {MAX_SUBCKT_DEPTH} deep ({chain})",
                statement.loc,
                "each subcircuit instantiates the next; flatten some levels of the chain",
            )
        if len(statement.nodes) != len(definition.pins):
            pins = " ".join(p.text for p in definition.pins) or "none"
            raise _fail(
                f"{statement.name} connects {len(statement.nodes)} node(s) but subcircuit "
                f"'{definition.name}' has {len(definition.pins)} pin(s) ({pins})",
                statement.loc,
                f"'{definition.name}' is defined at {_where(definition.loc)}",
            )
        # the enclosing scope of the definition: lexical, found on our chain
        parent: _Scope | None = scope
        while parent is not None and parent.definition is not definition.parent:
            parent = parent.parent
        name = scope.element_prefix + statement.name
        inner = _Scope(
            definition,
            parent,
            name + ".",
            name.lower() + ".",
            {pin.text.lower(): scope.node(node) for pin, node in zip(definition.pins, statement.nodes)},
            names=scope.names,
            within=f"{name}, an instance of subcircuit '{definition.name}' ({_where(statement.loc)})",
        )
        declared = {a.name.lower(): a for a in definition.defaults}
        overrides: dict[str, Assignment] = {}
        for assignment in statement.overrides:
            okey = assignment.name.lower()
            if okey not in declared:
                known = ", ".join(a.name for a in definition.defaults) or "none"
                raise _fail(
                    f"subcircuit '{definition.name}' has no parameter '{assignment.name}'",
                    assignment.loc,
                    f"its parameters: {known}",
                )
            if okey in overrides:
                raise _fail(f"parameter '{assignment.name}' is given twice on {statement.name}", assignment.loc)
            overrides[okey] = assignment
        within = f"{name}, an instance of subcircuit '{definition.name}' ({_where(statement.loc)})"
        for default in definition.defaults:
            okey = default.name.lower()
            if okey in overrides:  # written on the X line: evaluated where that line is
                inner.params[okey] = self.number(overrides[okey].value, scope)
                inner.overridden.add(okey)
            else:
                with _naming_instance(within):
                    inner.params[okey] = self.number(default.value, inner)
            inner.param_origin[okey] = default.loc
        self.active.append(definition)
        with _naming_instance(within):
            self.expand(inner)
        self.active.pop()

    # ---- references
    def resolve(self) -> None:
        for item in self.pending:
            found = self.by_key.get(c.name_key(item.full_name))
            if found is None and self.incomplete:
                continue  # the line that would define it may be one of those left out
            if found is None or not isinstance(found[0], item.wanted):
                candidates = [e.name for e, _ in self.by_key.values() if isinstance(e, item.wanted)]
                close = difflib.get_close_matches(item.full_name, candidates, n=3)
                hint = "did you mean " + " or ".join(f"'{n}'" for n in close) + "?" if close else ""
                what = "is not a" if found is not None else "names no"
                self.problems.append(
                    _fail(f"{item.owner}: '{item.word.text}' {what} {item.what} in this scope", item.word.loc, hint)
                )
                continue
            target = found[0].name
            element = self.elements[item.index]
            if item.slot == "control_source":
                element = dataclasses.replace(element, control_source=target)  # type: ignore[call-arg]
            elif item.slot.startswith("controls"):  # one of a polynomial source's controlling sources
                controls = list(element.controls)  # type: ignore[attr-defined]
                controls[int(item.slot[len("controls") :])] = target
                element = dataclasses.replace(element, controls=tuple(controls))  # type: ignore[call-arg]
            else:
                pair = list(element.inductors)  # type: ignore[attr-defined]
                pair[int(item.slot[-1])] = target
                element = dataclasses.replace(element, inductors=tuple(pair))  # type: ignore[call-arg]
            self.elements[item.index] = element
            self.by_key[c.name_key(element.name)] = (element, self.by_key[c.name_key(element.name)][1])


# --------------------------------------------------------------------------
# analysis cards


def _one(statements: list[Statement], kind: type, problems: list[NetlistError]) -> Statement | None:
    """The one card of ``kind`` (a second, third... is a problem; the first is used)."""
    found = [s for s in statements if isinstance(s, kind)]
    for extra in found[1:]:
        problems.append(
            _fail(
                f"a second '{_CARD_NAMES[kind]}' card", extra.loc, f"the first is at {_where(found[0].loc)}; keep one"
            )
        )
    return found[0] if found else None


def _sweep(sweep: Sweep, engine: _Elaborator, scope: _Scope) -> c.Sweep:
    points = engine.number(sweep.points, scope)
    if points < 1 or not float(points).is_integer():
        raise _fail(f"the number of points must be a whole number of at least 1, not {exact(points)}", sweep.points.loc)
    start = engine.number(sweep.start, scope)
    stop = engine.number(sweep.stop, scope)
    if sweep.kind in ("dec", "oct") and start <= 0:
        raise _fail(f"a {sweep.kind} sweep needs a start frequency above 0 Hz, not {exact(start)}", sweep.start.loc)
    if start < 0:
        raise _fail(f"the start frequency cannot be negative ({exact(start)})", sweep.start.loc)
    if stop < start:
        raise _fail(
            f"the stop frequency ({exact(stop)} Hz) is below the start frequency ({exact(start)} Hz)", sweep.stop.loc
        )
    return c.Sweep(sweep.kind, int(points), start, stop)


def _node_check(word: Word, nodes: set[str], what: str, spelled: dict[str, str], incomplete: bool = False) -> str:
    """``word`` as a node of the circuit; ``incomplete``: lines were left out
    (one of them may connect it), so a node not found is not refused."""
    key = word.text.lower()
    if key in GROUND_ALIASES:
        return c.GROUND
    if key not in nodes and not incomplete:
        close = difflib.get_close_matches(key, sorted(nodes), n=3)
        hint = "did you mean " + " or ".join(f"'{spelled.get(n, n)}'" for n in close) + "?" if close else ""
        raise _fail(f"the {what} node '{word.text}' is not connected to any element", word.loc, hint)
    return key


def _noise_card(card: NoiseCard, engine: _Elaborator, scope: _Scope, nodes: set[str]) -> c.NoiseCard:
    spelled = scope.names.spelled
    output = _node_check(card.output, nodes, ".noise output", spelled, engine.incomplete)
    if output == c.GROUND:
        raise _fail("the .noise output cannot be ground", card.output.loc)
    reference = (
        _node_check(card.reference, nodes, ".noise reference", spelled, engine.incomplete)
        if card.reference
        else c.GROUND
    )
    if reference == output:
        raise _fail("the .noise output and reference are the same node", card.reference.loc)  # type: ignore[union-attr]
    source_name = None
    if card.source is not None:
        found = engine.by_key.get(c.name_key(card.source.text))
        if found is None and engine.incomplete:
            raise _Skipped  # the line that defines it may be one of those left out
        if found is None or not found[0].can_drive:
            sources = [e.name for e, _ in engine.by_key.values() if e.can_drive]
            close = difflib.get_close_matches(card.source.text, sources, n=3)
            hint = "did you mean " + " or ".join(f"'{n}'" for n in close) + "?" if close else ""
            raise _fail(
                f"the .noise input '{card.source.text}' is not a voltage or current source of this circuit",
                card.source.loc,
                hint,
            )
        source_name = found[0].name
    sweep = _sweep(card.sweep, engine, scope) if card.sweep else None
    return c.NoiseCard(output, reference, source_name, sweep, card.loc)


# --------------------------------------------------------------------------
# the entry point


def _no_elements(parsed: ParsedFile) -> NetlistError:
    lines = parsed.source.lines
    if not any(line.strip() for line in lines):
        return _fail(
            "the netlist is empty",
            parsed.source.location(1, 1),
            "a netlist is a title line, then element lines such as 'R1 in out 1k'",
        )
    where = parsed.source.location(1, 1)
    title = parsed.title
    if (
        title
        and title.split()[0][:1].upper() in "RCLKVIEGFHX"
        and len(title.split()) >= 3
        and len([line for line in lines if line.strip()]) == 1
    ):
        hint = f"the first line is always the title, so '{shown(title)}' was read as one; put a title line first"
    else:
        hint = "the first line is the title; element lines (R1 in out 1k, ...) follow it at the top level"
    return _fail("the netlist has no elements", where, hint)


def elaborate(
    parsed: ParsedFile,
    base_dir: Path,
    source_file: str = "<text>",
    own_path: Path | None = None,
    includes_within: Path | None = None,
) -> c.Circuit:
    """The flat circuit described by ``parsed`` (a top-level file).

    ``base_dir`` is where its ``.include`` paths start; ``own_path`` (if the
    text came from a file) lets an include cycle back to it be caught;
    ``includes_within``: the folder whose tree every included file must be in.

    Every problem is collected, in every file, and raised at the end together
    (:func:`netnoise.errors.raise_problems`): one alone as itself, several as
    a :class:`~netnoise.errors.NetlistProblems`.
    """
    try:
        chain = (own_path.resolve(),) if own_path is not None else ()
    except (RuntimeError, OSError):
        chain = ()
    within = includes_within.resolve() if includes_within is not None else None
    problems: list[NetlistError] = list(parsed.problems)
    statements = expand_includes(parsed, base_dir, chain, within=within, problems=problems)
    top = build_definitions(statements, problems)
    try:
        check_flat_size(top)
    except NetlistError as problem:  # nothing is expanded past this limit
        raise_problems([*problems, problem])
    return _flat_circuit(parsed, top, source_file, {}, problems)


def _rebuilt(parsed: ParsedFile, top: Definition, source_file: str, overrides: dict[str, float], new_overrides):
    return _flat_circuit(parsed, top, source_file, {**overrides, **new_overrides})


def _cards(statements: Iterable[Statement]) -> list[Statement]:
    """``statements`` but their R, C and L lines (most lines of a large netlist):
    what the look-ups for cards go through, in the same order."""
    return [statement for statement in statements if type(statement) is not Passive]


def _functions(statements: list[Statement], engine: _Elaborator) -> dict[str, Function]:
    """The ``.func`` functions of ``statements`` (every level's), wherever they are
    written (their names are global)."""
    functions: dict[str, Function] = {}
    first: dict[str, SourceLocation] = {}
    for statement in statements:
        if not isinstance(statement, FuncCard):
            continue
        key = statement.name.text.lower()
        if key in FUNCTIONS or key == "if":
            engine.problems.append(
                _fail(
                    f"'{statement.name.text}' is a built-in function and cannot be redefined",
                    statement.name.loc,
                    "give the .func another name",
                )
            )
        elif key in functions:
            engine.problems.append(
                _fail(
                    f"function '{statement.name.text}' is defined twice",
                    statement.name.loc,
                    f"the first definition is at {_where(first[key])}",
                )
            )
        else:
            body = statement.body
            assert body.tree is not None and body.source is not None
            params = tuple(p.text.lower() for p in statement.params)
            functions[key] = Function(statement.name.text, params, body.tree, body.source.location)
            first[key] = statement.loc
    return functions


def _set_aside_notice(statements: list[Statement]) -> str | None:
    """One notice naming every card of ``statements`` (every level's) that was read
    and set aside, in file order."""
    found: list[tuple[str, int, str]] = []  # file, line, text
    for statement in statements:
        if isinstance(statement, (SetAsideCard, InitialCard)):
            loc = statement.loc
            where = _where(loc)
            if isinstance(statement, InitialCard):
                text = f"{statement.name} ({where}, {len(statement.voltages)} node voltage(s))"
            elif statement.name == ".control":
                text = f".control block ({where}-{statement.last_line})"
            else:
                text = f"{statement.name} ({where})"
            found.append((loc.file, loc.line, text))
    if not found:
        return None
    files = list(dict.fromkeys(file for file, _, _ in found))
    found.sort(key=lambda item: (files.index(item[0]), item[1]))
    return (
        "set aside, as they do not change a small-signal noise analysis (other analyses, printing, "
        "start-up values): " + ", ".join(text for _, _, text in found)
    )


def _flat_circuit(
    parsed: ParsedFile,
    top: Definition,
    source_file: str,
    overrides: dict[str, float],
    problems: list[NetlistError] | None = None,
) -> c.Circuit:
    notices: list[str | _Grouped] = []
    engine = _Elaborator(notices, overrides, problems)
    cards = _cards(all_statements(top))  # every level's
    top_cards = _cards(top.body)
    engine.functions = _functions(cards, engine)
    scope = _Scope(top, None, "", "", {})
    engine.expand(scope)
    try:
        scope.names.check()
    except NetlistError as problem:
        engine.problems.append(problem)
    engine.resolve()
    if not engine.elements and not engine.problems:
        raise _no_elements(parsed)

    temperature = None
    temp_card = _one(top_cards, TempCard, engine.problems)
    if isinstance(temp_card, TempCard):
        temperature = engine.attempt(lambda: _temperature(temp_card, engine, scope))
    ac_card = _one(top_cards, AcCard, engine.problems)
    ac_sweep = engine.attempt(lambda: _sweep(ac_card.sweep, engine, scope)) if isinstance(ac_card, AcCard) else None
    circuit_nodes = {n for e in engine.elements for n in e.terminals()}
    noise = _one(top_cards, NoiseCard, engine.problems)
    noise_card = (
        engine.attempt(lambda: _noise_card(noise, engine, scope, circuit_nodes))
        if isinstance(noise, NoiseCard)
        else None
    )
    raise_problems(engine.problems)

    for statement in top_cards:
        if isinstance(statement, OptionsCard):
            notices.append(f"{_where(statement.loc)}: .options ignored: netnoise has no simulator options to set")
    set_aside = _set_aside_notice(cards)
    if set_aside is not None:
        notices.append(set_aside)
    operating_point = False
    for statement in cards:
        if isinstance(statement, ReaderNotice):
            notices.append(statement.text if statement.loc is None else f"{_where(statement.loc)}: {statement.text}")
        elif isinstance(statement, OperatingPointCard):
            operating_point = True
            notices.append(f"{_where(statement.loc)}: .op: the DC operating point is added to the report")
    if isinstance(noise, NoiseCard) and noise.summary is not None:
        notices.append(
            f"{_where(noise.summary.loc)}: the last field of .noise (points per summary, "
            f"'{shown(noise.summary.text)}') is not used: netnoise reports the whole budget once"
        )

    # a partial of module-level functions, not a closure: the circuit can be pickled
    # (sent to worker processes or a cluster by netnoise.studies)
    rebuild = functools.partial(_rebuilt, parsed, top, source_file, overrides)

    return c.Circuit(
        title=parsed.title,
        elements=tuple(engine.elements),
        temperature_celsius=temperature,
        noise_card=noise_card,
        ac_sweep=ac_sweep,
        notices=tuple(
            dict.fromkeys(n if isinstance(n, str) else _grouped_notice(n.text, engine.grouped[n.text]) for n in notices)
        ),
        source_file=source_file,
        parameters=dict(scope.params),
        value_origins=engine.origins,
        tolerances=engine.tolerances,
        rebuild=rebuild,
        node_spellings=scope.names.spelled,
        operating_point_requested=operating_point,
    )


@dataclass(frozen=True)
class _Grouped:
    """The place, among the notices, of one said of several elements (filled in at the end)."""

    text: str


_GROUPED_SHOWN = 6  # elements named in one grouped notice before "and N more"


def _grouped_notice(text: str, about: list[tuple[str, str]]) -> str:
    """One notice for ``text`` said of every (name, place) in ``about``."""
    if len(about) == 1:
        ((name, where),) = about
        return f"{where}: {name}: {text}"
    shown_names = ", ".join(f"{name} ({where})" for name, where in about[:_GROUPED_SHOWN])
    more = f" and {len(about) - _GROUPED_SHOWN} more" if len(about) > _GROUPED_SHOWN else ""
    return f"{shown_names}{more}: {text}"


def _temperature(card: TempCard, engine: _Elaborator, scope: _Scope) -> float:
    temperature = engine.number(card.value, scope)
    if temperature <= ABSOLUTE_ZERO_C:
        raise _fail(f"{exact(temperature)} °C is at or below absolute zero (-273.15 °C)", card.value.loc)
    return temperature


def _statement_name(statement: Any) -> str:
    inner = statement.statement if isinstance(statement, Toleranced) else statement
    name = getattr(inner, "name", "")
    return name if isinstance(name, str) else ""

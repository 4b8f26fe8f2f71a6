"""``.subckt`` ... ``.ends`` blocks become definitions, ``.model`` cards are
scoped as SPICE scopes them, and the flat size of a hierarchy is estimated
before anything is expanded."""

from __future__ import annotations

from dataclasses import dataclass, field

from netnoise.constants import GROUND_ALIASES
from netnoise.errors import NetlistError, SourceLocation
from netnoise.netlist.statements import (
    AcCard,
    Assignment,
    EndsCard,
    FuncCard,
    InitialCard,
    Instance,
    LeftOutLine,
    ModelCard,
    NoiseCard,
    OperatingPointCard,
    OptionsCard,
    ParamCard,
    Passive,
    ReaderNotice,
    SetAsideCard,
    Statement,
    SubcktCard,
    TempCard,
    Word,
)
from netnoise.text.source import bounded


def _fail(message: str, location: SourceLocation | None, hint: str = "") -> NetlistError:
    # names can be very long; a message stays a line or two
    return NetlistError(bounded(message), location, bounded(hint))


def _where(location: SourceLocation | None) -> str:
    return f"{location.file}:{location.line}" if location is not None else "(unknown place)"


__all__ = [
    "Definition",
    "build_definitions",
    "flat_element_counts",
    "check_flat_size",
    "MAX_FLAT_ELEMENTS",
    "TOP_LEVEL_ONLY",
    "NOT_ELEMENTS",
    "CARD_NAMES",
    "all_statements",
]

# A netlist whose subcircuits would expand to more elements than this is
# refused before anything is expanded (the count is estimated from the
# definitions); 5 million elements need gigabytes and hours.
MAX_FLAT_ELEMENTS = 5_000_000
TOP_LEVEL_ONLY = (TempCard, AcCard, NoiseCard, OptionsCard)
CARD_NAMES = {TempCard: ".temp", AcCard: ".ac", NoiseCard: ".noise", OptionsCard: ".options"}
# statements that make no element (allowed anywhere; the elaborator reads them apart)
NOT_ELEMENTS = (
    ParamCard,
    *TOP_LEVEL_ONLY,
    SetAsideCard,
    InitialCard,
    OperatingPointCard,
    FuncCard,
    ReaderNotice,
    LeftOutLine,
)


@dataclass
class Definition:
    name: str  # as written; '' for the top level
    pins: tuple[Word, ...]
    defaults: tuple[Assignment, ...]
    loc: SourceLocation | None
    parent: Definition | None
    body: list[Statement] = field(default_factory=list)
    children: dict[str, Definition] = field(default_factory=dict)
    models: dict[str, ModelCard] = field(default_factory=dict)

    def find(self, key: str) -> Definition | None:
        scope: Definition | None = self
        while scope is not None:
            if key in scope.children:
                return scope.children[key]
            scope = scope.parent
        return None

    def find_model(self, key: str) -> tuple[ModelCard, Definition] | None:
        """The .model called ``key`` visible here, and the definition it is written in."""
        scope: Definition | None = self
        while scope is not None:
            if key in scope.models:
                return scope.models[key], scope
            scope = scope.parent
        return None

    def visible_names(self) -> list[str]:
        names: list[str] = []
        scope: Definition | None = self
        while scope is not None:
            names.extend(d.name for d in scope.children.values())
            names.extend(m.name.text for m in scope.models.values())
            scope = scope.parent
        return names


def all_statements(top: Definition):
    """Every statement of ``top`` and of the definitions inside it, at any depth."""
    stack = [top]
    while stack:
        definition = stack.pop()
        yield from definition.body
        stack.extend(definition.children.values())


def build_definitions(statements: list[Statement], problems: list[NetlistError] | None = None) -> Definition:
    """The top level and its ``.subckt`` definitions; ``problems``: where the
    problems found go (the reading goes on), else the first is raised."""
    top = Definition("", (), (), None, None)
    current = top
    for statement in statements:
        if type(statement) is Passive:  # an R, C or L line (most of a large netlist): in the open definition
            current.body.append(statement)
            continue
        try:
            current, problem = _place(statement, current, top)
        except NetlistError as refused:
            problem = refused
        if problem is not None:
            if problems is None:
                raise problem
            problems.append(problem)
    if current is not top:
        problem = _fail(
            f"'.subckt {current.name}' is never closed",
            current.loc,
            f"add '.ends {current.name}' after its last line",
        )
        if problems is None:
            raise problem
        problems.append(problem)
    return top


def _place(statement: Statement, current: Definition, top: Definition) -> tuple[Definition, NetlistError | None]:
    """Put ``statement`` where it belongs: the definition open after it, and
    the problem with it (a refused .subckt still opens a definition, kept
    apart, so its lines do not fall to the level around it)."""
    if isinstance(statement, SubcktCard):
        key = statement.name.text.lower()
        definition = Definition(statement.name.text, statement.pins, statement.defaults, statement.loc, current)
        problem: NetlistError | None = None
        if key in current.children:
            first = current.children[key].loc
            problem = _fail(
                f"subcircuit '{statement.name.text}' is defined twice",
                statement.name.loc,
                f"the first definition is at {_where(first)}" if first else "",
            )
        elif key in current.models:
            problem = _fail(
                f"'{statement.name.text}' is both a subcircuit and a .model",
                statement.name.loc,
                f"the .model is at {_where(current.models[key].loc)}; rename one of them",
            )
        else:
            try:
                _check_pins(statement)
            except NetlistError as bad:
                problem = bad
            else:
                current.children[key] = definition
        return definition, problem
    if isinstance(statement, ModelCard):
        key = statement.name.text.lower()
        if key in current.models:
            raise _fail(
                f"model '{statement.name.text}' is defined twice",
                statement.name.loc,
                f"the first definition is at {_where(current.models[key].loc)}",
            )
        if key in current.children:
            raise _fail(
                f"'{statement.name.text}' is both a subcircuit and a .model",
                statement.name.loc,
                f"the .subckt is at {_where(current.children[key].loc)}; rename one of them",
            )
        current.models[key] = statement
    elif isinstance(statement, EndsCard):
        if current is top:
            raise _fail("'.ends' without a .subckt to close", statement.loc)
        mismatch = None
        if statement.name is not None and statement.name.text.lower() != current.name.lower():
            mismatch = _fail(
                f"'.ends {statement.name.text}' does not match the open '.subckt {current.name}'",
                statement.name.loc,
                f"close '{current.name}' first (it starts at {_where(current.loc)})",
            )
        return current.parent, mismatch  # type: ignore[return-value]
    else:
        if current is not top and isinstance(statement, TOP_LEVEL_ONLY):
            raise _fail(
                f"'{CARD_NAMES[type(statement)]}' belongs at the top level, not inside .subckt {current.name}",
                statement.loc,
            )
        current.body.append(statement)
    return current, None


def _check_pins(statement: SubcktCard) -> None:
    seen: dict[str, Word] = {}
    for pin in statement.pins:
        key = pin.text.lower()
        if key in GROUND_ALIASES:
            raise _fail(
                f"ground ('{pin.text}') cannot be a pin of .subckt {statement.name.text}",
                pin.loc,
                "ground is shared by every subcircuit already",
            )
        if key in seen:
            raise _fail(f"pin '{pin.text}' appears twice on .subckt {statement.name.text}", pin.loc)
        seen[key] = pin
    names = {a.name.lower() for a in statement.defaults}
    if len(names) != len(statement.defaults):
        for index, assignment in enumerate(statement.defaults):
            if assignment.name.lower() in {a.name.lower() for a in statement.defaults[:index]}:
                raise _fail(f"parameter '{assignment.name}' is declared twice", assignment.loc)


def _instance_target(definition: Definition, statement: Instance) -> Definition | None:
    """The subcircuit an X line expands (None: an amplifier model, or unknown)."""
    key = statement.subckt.text.lower()
    if definition.find_model(key) is not None:
        return None
    return definition.find(key)


def flat_element_counts(top: Definition) -> dict[int, int]:
    """How many elements each definition reachable from ``top`` expands to
    (by ``id``), counted from the definitions without expanding anything:
    its own element lines plus, per X line, its subcircuit's count.  An
    amplifier model or an unknown name counts 1; an instance that closes a
    cycle counts 0 (the expansion refuses it).  Iterative: a chain of any
    depth is counted without recursion."""
    counts: dict[int, int] = {}
    started: set[int] = set()
    stack: list[tuple[Definition, bool]] = [(top, False)]
    while stack:
        definition, finished = stack.pop()
        if finished:
            total = 0
            for statement in definition.body:
                if isinstance(statement, Instance):
                    child = _instance_target(definition, statement)
                    total += 1 if child is None else counts.get(id(child), 0)
                elif type(statement) is Passive or not isinstance(statement, NOT_ELEMENTS):
                    total += 1
            counts[id(definition)] = total
            continue
        if id(definition) in started:
            continue
        started.add(id(definition))
        stack.append((definition, True))
        for statement in definition.body:
            if isinstance(statement, Instance):
                child = _instance_target(definition, statement)
                if child is not None and id(child) not in started:
                    stack.append((child, False))
    return counts


def check_flat_size(top: Definition) -> None:
    """Refuse, before expanding, a netlist whose subcircuits would expand to
    more than :data:`MAX_FLAT_ELEMENTS` elements: the count, and the chain of
    instances responsible."""
    counts = flat_element_counts(top)
    total = counts[id(top)]
    if total <= MAX_FLAT_ELEMENTS:
        return
    steps: list[str] = []
    first: SourceLocation | None = None
    definition, seen = top, set()
    while id(definition) not in seen and len(steps) < 4:
        seen.add(id(definition))
        instances = [
            (counts.get(id(child), 0), statement, child)
            for statement in definition.body
            if isinstance(statement, Instance) and (child := _instance_target(definition, statement)) is not None
        ]
        if not instances:
            break
        biggest = max(instances, key=lambda item: item[0])
        same = sum(1 for count, _, child in instances if child is biggest[2])
        where = "the top level" if definition is top else f"'{bounded(definition.name[:60])}'"
        steps.append(f"{where} has {same:,} of '{bounded(biggest[2].name[:60])}' ({biggest[0]:,} elements each)")
        first = first or biggest[1].loc
        definition = biggest[2]
    raise NetlistError(
        f"the subcircuits would expand to {total:,} elements, more than the limit of {MAX_FLAT_ELEMENTS:,}",
        first,
        "; ".join(steps) + ": check the instance counts and nesting",
    )

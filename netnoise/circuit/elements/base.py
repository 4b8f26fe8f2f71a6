"""The protocol every element kind follows, and the views the engine gives it.

An element kind is one frozen dataclass subclassing :class:`Element`, in one
module of :mod:`netnoise.circuit.elements`, listed once in
:mod:`netnoise.circuit.registry`.  It declares

* its netlist form: ``letter``, ``form`` (the usage line shown in messages),
  ``parse(line)`` -> a statement, and ``build(statement, ctx)`` -> the element;
* its structure: ``terminals()`` (every node it touches), ``branch_count``
  (branch currents it adds as unknowns), ``internal_nodes()`` (named
  internal unknowns);
* the supply rails its pins should stay within at DC (``rail_pins``);
* its class for the topology checks: ``dc_paths()`` (node pairs it joins at
  DC) and ``voltage_defined()`` (node pairs whose voltage it fixes);
* its stamps into G and C (``stamp(s)``, or ``stamp_all`` for many at once)
  and its DC right-hand side (``stamp_dc(s, b)``);
* its DC current and voltage from a solution (``dc_current(v)``, ``dc_voltage(v)``);
* its noise sources (``noise_sources(n)``);
* its values at an ambient temperature (``at_temperature``);
* the values it can compute with (``check_values``, or ``check_all`` for
  checks across its members);
* its values that can change (``value_field``, ``with_value``).

The engine asks only these; it never asks which class an element is.

Nonlinear kinds (diodes, transistors, polynomial sources) set ``is_linear =
False`` and add

* ``device_nodes()``: the nodes of their nonlinear core, external node names
  or ``"#label"`` for one of their internal nodes;
* ``load(v, previous, env)`` -> :class:`DeviceLoad`: the currents the core
  draws from those nodes and their Jacobian at voltages ``v`` (junction
  voltages limited from the ``previous`` iterate's), for Newton's method;
* ``at_operating_point(v, env)`` -> a copy holding its :class:`SmallSignal`
  model at the solved voltages: its ``stamp`` then adds that linearisation
  to G and C, and ``noise_sources`` the device noise at that point.

Their ``stamp`` always stamps their linear parts (ohmic resistances), so the
Newton solver assembles the linear rest of the circuit with the same
assembler.  A source with a correlated partner will return a small
cross-spectral block from ``noise_correlations``.  Linear kinds inherit the
defaults below.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, ClassVar, Protocol

from netnoise.errors import SourceLocation

if TYPE_CHECKING:
    import numpy as np

    from netnoise.noise.mechanisms import NoiseSource
    from netnoise.text.fields import LineReader

__all__ = [
    "Element",
    "TwoTerminal",
    "Stamper",
    "SolutionView",
    "NoiseView",
    "BuildContext",
    "Passive",
    "parse_passive",
    "multiplier",
    "ignore_initial_condition",
    "DeviceEnvironment",
    "DeviceLoad",
    "DeviceNoise",
    "SmallSignal",
    "ModelValues",
]


class Stamper(Protocol):
    """What the MNA assembler offers a kind while it stamps (rows: -1 is ground)."""

    def node(self, name: str) -> int: ...
    def node_rows(self, names: list[str]) -> np.ndarray: ...
    def branch(self, element: Element) -> int: ...
    def internal(self, element: Element, label: str) -> int: ...
    def g(self, row: int, col: int, value: float) -> None: ...
    def c(self, row: int, col: int, value: float) -> None: ...
    def admittances(self, matrix: str, a: np.ndarray, b: np.ndarray, y: np.ndarray) -> None: ...
    def element(self, name: str) -> Element: ...
    def fail(self, message: str) -> Exception: ...


class SolutionView(Protocol):
    """A solution vector seen by node and element (DC operating point)."""

    def v(self, node: str) -> float: ...
    def branch_current(self, element: Element | str) -> float: ...


class NoiseView(Protocol):
    """What a kind needs to state its noise sources."""

    temperature_K: float  # the analysis temperature

    def node(self, name: str) -> int: ...
    def branch(self, element: Element) -> int: ...
    def internal(self, element: Element, label: str) -> int: ...
    def current_between(self, a: str, b: str) -> tuple[tuple[int, float], ...]: ...
    def dc_voltage(self, a: str, b: str) -> float: ...


class BuildContext(Protocol):
    """What the elaborator offers a kind while it builds an element from its statement."""

    name: str  # full hierarchical name (X1.R2)
    loc: SourceLocation

    def number(self, value: Any) -> float: ...
    def node(self, word: Any) -> str: ...
    def local_name(self, word: Any) -> str: ...
    def refer(self, word: Any, full_name: str, wanted: type, what: str, slot: str) -> None: ...
    def notice(self, text: str, loc: SourceLocation | None = None, about: str | None = None) -> None: ...
    def fail(self, message: str, loc: SourceLocation | None, hint: str = "") -> Exception: ...
    def model(self, word: Any, types: tuple[str, ...]) -> ModelValues: ...
    def has_model(self, word: Any) -> bool: ...
    def models_of(self, types: tuple[str, ...]) -> list[str]: ...


@dataclass(frozen=True)
class ModelValues:
    """A ``.model`` card as a device sees it: its name and type (lower case),
    its parameters evaluated where the card is written (upper-case names), and
    where it is."""

    name: str
    type: str
    values: dict[str, float]
    loc: SourceLocation | None = None


@dataclass(frozen=True)
class DeviceEnvironment:
    """What the Newton solver tells a nonlinear kind: the analysis temperature
    (K; a device's own ``temp=`` wins) and the conductance put across every
    junction (S) so that no node is left without a DC path."""

    temperature_K: float
    gmin: float = 1e-12


@dataclass(frozen=True)
class DeviceLoad:
    """A nonlinear core linearised at one Newton iterate, over its ``device_nodes``.

    The currents it draws from its nodes (A, out of each node into the
    device) are ``current + jacobian @ v``: ``jacobian`` (S) is the derivative
    at the (limited) junction voltages and ``current`` the companion current
    that makes the line pass through the device's current there.  ``state``:
    the limited junction voltages, handed back as ``previous`` next time;
    ``settled``: no voltage had to be limited."""

    current: np.ndarray
    jacobian: np.ndarray
    state: np.ndarray
    settled: bool = True


@dataclass(frozen=True)
class DeviceNoise:
    """One noise current between device nodes ``a`` and ``b`` (indices into
    ``device_nodes``; it flows from a to b inside the device): density
    ``white + flicker_at_1Hz / f^slope`` (A²/Hz); ``label`` completes the
    budget row's name, ``value``/``unit`` the number that sets it."""

    label: str
    mechanism: str
    a: int
    b: int
    white: float
    flicker_at_1Hz: float = 0.0
    slope: float = 1.0
    value: float = 0.0
    unit: str = "A"
    temperature_K: float | None = None


@dataclass(frozen=True)
class SmallSignal:
    """A nonlinear core at its operating point, over its ``device_nodes``.

    ``conductance`` (S): the Jacobian of its node currents at the solution;
    ``capacitors``: (a, b, farads) between device nodes; ``noise``: its
    noise currents; ``voltages``: the solved node voltages (V);
    ``summary``: (key, value) pairs for the operating-point report, keys
    ending in their SI unit (``"collector_current_A"``)."""

    conductance: np.ndarray
    capacitors: tuple[tuple[int, int, float], ...]
    noise: tuple[DeviceNoise, ...]
    voltages: np.ndarray
    summary: tuple[tuple[str, float], ...]
    temperature_K: float


@dataclass(frozen=True)
class Element:
    """Base of every element kind; the defaults are those of a passive, noiseless part."""

    name: str

    letter: ClassVar[str] = ""
    form: ClassVar[str] = ""
    selector: ClassVar[str | None] = None  # a keyword on the letter's line that selects this kind
    value_field: ClassVar[str | None] = None  # the primary value, as `with_values` changes it
    statement_value: ClassVar[str | None] = "value"  # the statement field that gives it
    can_drive: ClassVar[bool] = False  # an independent source: can be the analysis input
    supplies_gain: ClassVar[bool] = False  # can supply power (controlled sources, amplifiers): loops may be unstable
    unit: ClassVar[str] = ""
    branch_count: ClassVar[int] = 0
    is_linear: ClassVar[bool] = True

    # ---- netlist form
    @classmethod
    def parse(cls, line: LineReader) -> Any:
        raise NotImplementedError(f"{cls.__name__} has no netlist form")

    @classmethod
    def build(cls, statement: Any, ctx: BuildContext) -> Element:
        raise NotImplementedError(f"{cls.__name__} cannot be built from a statement")

    # ---- structure
    def terminals(self) -> tuple[str, ...]:
        """Every node this element touches (controlling nodes included)."""
        return ()

    def internal_nodes(self) -> tuple[str, ...]:
        """Labels of internal unknowns (``"<name>#<label>"`` in the system)."""
        return ()

    def references(self) -> tuple[str, ...]:
        """Names of other elements this one refers to (control sources, coupled inductors)."""
        return ()

    # ---- topology
    def dc_paths(self) -> tuple[tuple[str, str], ...]:
        return ()

    def voltage_defined(self) -> tuple[tuple[str, str], ...]:
        return ()

    def rail_pins(self) -> tuple[tuple[str, str], tuple[tuple[str, str], ...]] | None:
        """((upper rail node, lower rail node), ((pin label, node), ...)): supply rails this
        element's pins should stay within at the DC operating point; None: no rails."""
        return None

    # ---- values the engine can compute with
    def check_values(self) -> None:
        """Raise CircuitError for a value the engine cannot compute with correctly."""

    def at_temperature(self, celsius: float) -> Element:
        """This element at ambient temperature ``celsius`` (°C): a copy whose values
        follow it (a resistor's temperature coefficients), or itself."""
        return self

    @classmethod
    def check_all(cls, elements: Iterable[Element], circuit: Any) -> None:
        """Checks of all the elements of this kind together (``circuit`` for their neighbours)."""
        for element in elements:
            element.check_values()

    # ---- stamps
    def stamp(self, s: Stamper) -> None:
        pass

    @classmethod
    def stamp_all(cls, elements: Iterable[Element], s: Stamper) -> None:
        for element in elements:
            element.stamp(s)

    def stamp_dc(self, s: Stamper, b: np.ndarray) -> None:
        """Add this element's DC excitation to ``b``."""

    def excitation(self, s: Stamper, b: np.ndarray) -> str | None:
        """Add a unit small-signal excitation to ``b`` and return its unit
        ("V" or "A"), or None for an element that cannot be an input."""
        return None

    # ---- DC
    def dc_current(self, v: SolutionView) -> float | None:
        """Current from the first terminal through the element to the second (A); None: not reported."""
        return None

    def dc_voltage(self, v: SolutionView) -> float | None:
        """Voltage across the element (first terminal minus second, V); None: not reported."""
        return None

    # ---- noise
    def noise_sources(self, n: NoiseView) -> Iterator[NoiseSource]:
        return iter(())

    # ---- nonlinear kinds (is_linear = False)
    def device_nodes(self) -> tuple[str, ...]:
        """Nodes of the nonlinear core: node names, ``"#label"`` for an internal one."""
        return ()

    def device_rows(self, s: Stamper | NoiseView) -> tuple[int, ...]:
        """Rows of :meth:`device_nodes` in the system (-1: ground)."""
        return tuple(s.internal(self, n[1:]) if n.startswith("#") else s.node(n) for n in self.device_nodes())

    def load(self, v: np.ndarray, previous: np.ndarray | None, env: DeviceEnvironment) -> DeviceLoad:
        """The core linearised at node voltages ``v`` (``device_nodes`` order, V)."""
        raise NotImplementedError(f"{type(self).__name__} is linear")

    def at_operating_point(self, v: np.ndarray, env: DeviceEnvironment) -> Element:
        """A copy holding its small-signal model at the solved voltages ``v``."""
        return self

    def without_bias(self) -> Element:
        """This element without a small-signal model (itself for a linear kind)."""
        return self

    @property
    def small_signal(self) -> SmallSignal | None:
        """The small-signal model a nonlinear kind holds once biased (None: not biased)."""
        return None

    # ---- values
    def with_value(self, value: float) -> Element:
        """A copy with its primary value replaced (ValueError if it has none)."""
        if self.value_field is None:
            raise ValueError(f"{self.name} has no value that can be changed")
        return dataclasses.replace(self, **{self.value_field: float(value)})  # type: ignore[arg-type]

    @property
    def primary_value(self) -> float | None:
        return None if self.value_field is None else float(getattr(self, self.value_field))


@dataclass(frozen=True)
class TwoTerminal(Element):
    """An element between ``nodes[0]`` and ``nodes[1]``."""

    nodes: tuple[str, str]
    origin: SourceLocation | None = field(default=None, compare=False, repr=False)

    def terminals(self) -> tuple[str, ...]:
        return self.nodes

    def dc_voltage(self, v: SolutionView) -> float | None:
        return v.v(self.nodes[0]) - v.v(self.nodes[1])


@dataclass(frozen=True)
class Passive:
    """Statement of an R, C or L line: its value and, as written, its options
    (``options``: (key in lower case, Value, or a tuple of Values for a
    list such as ``tc=a,b``), in line order); ``quiet`` for a resistor
    whose noise is switched off; ``kind`` is the element kind that builds it."""

    letter: str
    name: str
    nodes: tuple[Any, Any]  # Words
    value: Any  # Value
    loc: SourceLocation = field(compare=False)
    quiet: bool = False
    options: tuple[tuple[str, Any], ...] = ()
    kind: Any = field(default=None, compare=False, repr=False)
    model: Any = None  # Word: the .model NAME R|C|L the line names, None: none

    def option(self, key: str) -> Any:
        """The Value (or tuple of Values) of option ``key``, None when the line has none."""
        for name, value in self.options:
            if name == key:
                return value
        return None


def parse_passive(
    cls: Any,
    line: LineReader,
    options: dict[str, str],
    lists: frozenset[str] = frozenset(),
    flag: str | None = None,
    retired: dict[str, str] | None = None,
) -> Passive:
    """An R, C or L line: two nodes, the value (plain, or keyed by the letter:
    ``R=1k``, ``C=10n``, ``L=1u``), then ``key=value`` options among ``options``
    (key -> what it is, for messages; keys in ``lists`` take ``a,b``), the
    keyword ``flag`` (the resistor's ``quiet``) and none of the ``retired``
    keywords (keyword -> the message that names what to write)."""
    from netnoise.text.fields import Keyed, Word, describe
    from netnoise.text.source import fail

    nodes = (line.node("first node"), line.node("second node"))
    item = line.peek()
    model = None
    if isinstance(item, Keyed) and item.key.lower() == cls.letter.lower():
        value = line.keyed_value(item, "value")
    elif _model_word(item, flag, retired):  # no value: the model card gives it
        model = line.take("model name")
        value = None
    else:
        value = line.value("value")
    quiet = False
    taken: dict[str, Any] = {}
    hint = line.form_hint()
    while (item := line.peek()) is not None:
        word = item.text.lower() if isinstance(item, Word) else ""
        if flag is not None and word == flag:
            if quiet:
                raise fail(f"{line.name} says '{flag}' twice", item.loc)
            line.take(flag)
            quiet = True
            continue
        if retired and word in retired:
            raise fail(f"{line.name}: {retired[word]}", item.loc, hint)
        if model is None and not taken and not quiet and _model_word(item, flag, retired):
            model = line.take("model name")
            continue
        key = item.key.lower() if isinstance(item, Keyed) else ""
        if value is None and key == cls.letter.lower() and not taken:  # Rname a b MODEL R=10k
            value = line.keyed_value(item, "value")  # type: ignore[arg-type]
            continue
        if key not in options:
            line.check_unsupported_form(item)
            raise fail(f"unexpected extra field {describe(item)} on {line.name}", item.loc, hint)
        if key in taken:
            raise fail(f"{line.name} has two {key}= values", item.loc)
        if key in lists:
            taken[key] = line.keyed_values(item, options[key])  # type: ignore[arg-type]
        else:
            taken[key] = line.keyed_value(item, options[key])  # type: ignore[arg-type]
    return Passive(cls.letter, line.name, nodes, value, line.loc, quiet, tuple(taken.items()), kind=cls, model=model)


def _model_word(item: Any, flag: str | None, retired: dict[str, str] | None) -> bool:
    """A plain word that names a model: starts with a letter, not the flag or a retired keyword."""
    from netnoise.text.fields import Word
    from netnoise.text.values import split_value

    if not isinstance(item, Word) or not item.text[:1].isalpha():
        return False
    try:
        split_value(item.text)  # a value (RKM: R47) stays a value
    except ValueError:
        pass
    else:
        return False
    word = item.text.lower()
    return word != flag and not (retired and word in retired)


def report_unmodelled(card: ModelValues, used: Any, ctx: BuildContext, also: tuple[str, ...] = ()) -> None:
    """One notice per card naming its parameters outside ``used`` (and ``also``): read, without effect."""
    ignored = sorted(k for k in card.values if k not in used and k not in also)
    if ignored:
        ctx.notice(
            f".model {card.name}: parameters read but not modelled, so without effect: {', '.join(ignored)}",
            card.loc,
        )


# the standard parameters a .model NAME R|C|L card supplies: card name -> option key
# (the value keyed by its letter; TC1, TC2 of a resistor, common practice)
PASSIVE_MODEL_PARAMETERS: dict[str, dict[str, str]] = {
    "r": {"R": "value", "TC1": "tc1", "TC2": "tc2"},
    "c": {"C": "value"},
    "l": {"L": "value"},
}


def passive_model(statement: Passive, ctx: BuildContext) -> tuple[float, dict[str, float]]:
    """The value of an R, C or L line and the defaults its ``.model`` card supplies
    (option key -> number); the line's own value wins over the card's."""
    letter = statement.letter.lower()
    if statement.model is None:
        return ctx.number(statement.value), {}
    word = statement.model
    if not ctx.has_model(word):
        from netnoise.text.fields import describe

        same = ctx.models_of((letter,))
        listed = (
            f"{statement.letter} models here: {', '.join(same[:8])}"
            if same
            else "no .model of type " + statement.letter
        )
        if statement.value is None:  # in the value's place
            raise ctx.fail(
                f"bad value of {ctx.name}: '{word.text}' is not a number, and no .model called '{word.text}' is visible",
                word.loc,
                f"to use a parameter, put it in braces: {{{word.text}}}; {listed}",
            )
        raise ctx.fail(
            f"unexpected extra field {describe(word)} on {ctx.name}: no .model called '{word.text}' is visible",
            word.loc,
            f"{listed}; the form is: {statement.kind.form}" if statement.kind is not None else listed,
        )
    card = ctx.model(word, (letter,))
    known = PASSIVE_MODEL_PARAMETERS[letter]
    report_unmodelled(card, known, ctx)
    defaults = {known[k]: v for k, v in card.values.items() if k in known}
    card_value = defaults.pop("value", None)
    if statement.value is not None:
        return ctx.number(statement.value), defaults
    if card_value is None:
        raise ctx.fail(
            f"{ctx.name} gives no value and its .model {card.name} has no {statement.letter}=",
            statement.model.loc,
            f"write the value before the model name, or {statement.letter}=value on the .model card",
        )
    return card_value, defaults


def multiplier(statement: Passive, ctx: BuildContext) -> float:
    """``m=``: how many equal parts stand in parallel (1 when not given); above 0."""
    value = statement.option("m")
    if value is None:
        return 1.0
    m = ctx.number(value)
    if not m > 0:
        raise ctx.fail(
            f"{ctx.name}: m={m:g} must be above 0 (m parts stand in parallel)",
            value.loc,
            "leave m= out for one part",
        )
    return m


def ignore_initial_condition(statement: Passive, ctx: BuildContext) -> None:
    """``ic=`` sets a transient's starting point: read, and ignored with a notice."""
    value = statement.option("ic")
    if value is not None:
        ctx.number(value)  # still a value that must make sense
        ctx.notice(
            "ic= (the starting value of a transient) is ignored: noise analysis works on the small-signal circuit",
            value.loc,
            about=ctx.name,
        )


def value_nodes(ctx: BuildContext, statement: Any) -> tuple[str, str]:
    """The canonical nodes of a two-node statement."""
    return (ctx.node(statement.nodes[0]), ctx.node(statement.nodes[1]))


def current_into(s: Any, b: np.ndarray, nodes: tuple[str, str], amount: float) -> None:
    """A current ``amount`` flowing from ``nodes[0]`` through the element to
    ``nodes[1]``, as a right-hand side: it leaves node 0 and enters node 1."""
    first, second = (s.node(x) for x in nodes)
    if first >= 0:
        b[first] -= amount
    if second >= 0:
        b[second] += amount


def refuse_negative_reactance(element: Element, what: str, unit: str, value: float) -> None:
    """Negative C or L: refused like a negative R; out of :data:`VALUE_RANGE`: refused by name."""
    from netnoise.circuit.limits import VALUE_RANGE
    from netnoise.errors import CircuitError

    if value < 0.0:
        raise CircuitError(
            f"{element.name}: negative {what} ({value:g} {unit}). Like a negative resistance it "
            "is an active element (it needs a source of power and can make the circuit unstable); netnoise "
            "takes passive, positive values: model active behaviour with a controlled source"
        )
    if value > 0.0 and not VALUE_RANGE[0] <= value <= VALUE_RANGE[1]:
        raise CircuitError(
            f"{element.name}: {what} {value:g} {unit} is outside the range netnoise computes "
            f"correctly ({VALUE_RANGE[0]:g} {unit} to {VALUE_RANGE[1]:g} {unit}): the circuit's time constants "
            "and the noise they shape would leave the range of floating-point numbers and be shown as 0. "
            "Use a value in the range (or leave the part out)"
        )


def refuse_huge_gain(element: Element, what: str, unit: str, value: float) -> None:
    """A gain beyond :data:`GAIN_LIMIT` overflows the matrix norms and squared transfers."""
    from netnoise.circuit.limits import GAIN_LIMIT
    from netnoise.errors import CircuitError

    if not abs(value) <= GAIN_LIMIT:
        raise CircuitError(
            f"{element.name}: {what} {value:g} {unit} is beyond ±{GAIN_LIMIT:g}, "
            "the range netnoise computes correctly (the matrix norms and squared transfers would "
            "overflow): a gain of 1e6 to 1e9 models an ideal amplifier"
        )


def branch_kcl(s: Stamper, a: int, b: int, k: int) -> None:
    """The KCL columns and branch-row entries of a branch current ``k`` from a to b."""
    s.g(a, k, 1.0)
    s.g(b, k, -1.0)
    s.g(k, a, 1.0)
    s.g(k, b, -1.0)

"""What the semiconductor kinds (D, Q, J, M) share.

* The line form ``Xname node ... model [area] [key=value ...]``: the model is
  the last plain word that is not a number; the nodes come before it.
* Their ``.model`` parameters: each kind lists the standard names it models
  with their defaults; other names on the card are read and listed once in a
  notice, and a ``LEVEL`` other than 1 is refused by name.
* Junction physics: the Shockley current, its limiting between Newton steps
  (Nagel, *SPICE2: A Computer Program to Simulate Semiconductor Circuits*,
  UCB/ERL M520, 1975; also Vladimirescu, *The SPICE Book*, 1994), depletion
  capacitance with its linear continuation above FC·VJ (FC = 0.5), and the
  temperature of the saturation current (Massobrio & Antognetti,
  *Semiconductor Device Modeling with SPICE*, 1993).
* :class:`Semiconductor`: the generic part of a device -- series (ohmic)
  resistances to internal nodes stamped as conductances, the biased core
  stamped from its :class:`~netnoise.circuit.elements.base.SmallSignal`,
  and its noise rows (the thermal noise of the ohmic resistances, then the
  core's own sources).
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field
from functools import cached_property
from typing import Any, ClassVar

import numpy as np

from netnoise.circuit.elements.base import (
    BuildContext,
    DeviceEnvironment,
    DeviceLoad,
    Element,
    NoiseView,
    SmallSignal,
    Stamper,
    report_unmodelled,
)
from netnoise.constants import (
    ABSOLUTE_ZERO_C,
    BOLTZMANN,
    DEFAULT_TEMPERATURE_C,
    ELEMENTARY_CHARGE,
    MAX_TEMPERATURE_C,
    ZERO_CELSIUS_K,
)
from netnoise.errors import CircuitError, SourceLocation
from netnoise.noise.mechanisms import THERMAL, NoiseSource, thermal_current_density
from netnoise.text.fields import Keyed, LineReader, Value, Word, as_value, describe
from netnoise.text.source import fail
from netnoise.text.values import exact, parse_value

__all__ = [
    "DeviceStatement",
    "Semiconductor",
    "thermal_voltage",
    "limit_junction",
    "refuse_forced_junction",
    "critical_voltage",
    "junction_current",
    "depletion_capacitance",
    "saturation_current_at",
    "NOMINAL_TEMPERATURE_K",
]

NOMINAL_TEMPERATURE_K = DEFAULT_TEMPERATURE_C + ZERO_CELSIUS_K  # model parameters hold at 27 °C (common practice)
_EXP_LIMIT = 80.0  # above this exponent the exponential continues as its tangent (no overflow)
_FC = 0.5  # forward-bias coefficient of the depletion capacitance (common practice)


def thermal_voltage(temperature_K: float) -> float:
    """kT/q, V."""
    return BOLTZMANN * temperature_K / ELEMENTARY_CHARGE


def _exp(x: float) -> tuple[float, float]:
    """exp(x) and its derivative, continued linearly above :data:`_EXP_LIMIT`."""
    if x <= _EXP_LIMIT:
        e = math.exp(x)
        return e, e
    top = math.exp(_EXP_LIMIT)
    return top * (1.0 + x - _EXP_LIMIT), top


def junction_current(v: float, saturation: float, n_vt: float) -> tuple[float, float]:
    """Shockley: I = IS·(exp(v/(N·Vt)) − 1) and dI/dv (A, S)."""
    e, de = _exp(v / n_vt)
    return saturation * (e - 1.0), saturation * de / n_vt


def refuse_forced_junction(owner: str, what: str, v: float, n_vt: float) -> None:
    """Refuse a solution whose junction sits past the exponential's computed range: only an ideal
    source straight across it puts it there, and the current it implies is beyond any real part's."""
    if v / n_vt > _EXP_LIMIT:
        raise CircuitError(
            f"{owner}: {v:.4g} V held across its {what + ' ' if what else ''}junction (beyond {_EXP_LIMIT * n_vt:.3g} V) would drive "
            "an unbounded current: a source is connected straight across it (or across a chain of bare junctions). "
            "Put a resistance in series "
            "(RS on the model card, or a resistor)"
        )


def critical_voltage(n_vt: float, saturation: float) -> float:
    """The voltage above which junction steps are limited: N·Vt·ln(N·Vt/(√2·IS)) (Nagel 1975)."""
    return n_vt * math.log(n_vt / (math.sqrt(2.0) * saturation))


def limit_junction(new: float, old: float, n_vt: float, vcrit: float) -> tuple[float, bool]:
    """A junction voltage step from ``old`` to ``new`` limited to a logarithmic
    step where the exponential is steep (Nagel 1975, pnjlim); True if unchanged."""
    if new > vcrit and abs(new - old) > 2.0 * n_vt:
        if old > 0.0:
            arg = 1.0 + (new - old) / n_vt
            return (old + n_vt * math.log(arg) if arg > 0.0 else vcrit), False
        return n_vt * math.log(new / n_vt), False
    return new, True


def limit_step(new: float, old: float, most: float) -> tuple[float, bool]:
    """A step of a square-law control voltage bounded to ``most`` volts; True if unchanged."""
    if abs(new - old) <= most:
        return new, True
    return old + math.copysign(most, new - old), False


def depletion_capacitance(v: float, cj0: float, vj: float, m: float) -> float:
    """Cj0/(1 − v/VJ)^M below FC·VJ, continued linearly above (FC = 0.5), F
    (Massobrio & Antognetti 1993; common practice)."""
    if cj0 == 0.0:
        return 0.0
    if v < _FC * vj:
        return cj0 * (1.0 - v / vj) ** (-m)
    return cj0 / (1.0 - _FC) ** (1.0 + m) * (1.0 - _FC * (1.0 + m) + m * v / vj)


def saturation_current_at(saturation: float, temperature_K: float, eg: float, xti: float, n: float) -> float:
    """IS(T) = IS·(T/Tnom)^(XTI/N)·exp((T/Tnom − 1)·EG/(N·Vt(T))) (Massobrio & Antognetti 1993)."""
    ratio = temperature_K / NOMINAL_TEMPERATURE_K
    return saturation * ratio ** (xti / n) * math.exp((ratio - 1.0) * eg / (n * thermal_voltage(temperature_K)))


@dataclass(frozen=True)
class DeviceStatement:
    """Statement of a D, Q, J or M line."""

    letter: str
    name: str
    nodes: tuple[Word, ...]
    model: Word
    area: Value | None
    options: tuple[tuple[str, Value, SourceLocation], ...]
    loc: SourceLocation = field(compare=False)
    kind: Any = field(default=None, compare=False, repr=False)
    value: Any = None  # no primary value


def _is_number(item: Any) -> bool:
    if not isinstance(item, Word):
        return False
    try:
        parse_value(item.text)
    except ValueError:
        return False
    return True


@dataclass(frozen=True)
class Semiconductor(Element):
    """A device with a model card: nodes, model values, area, own temperature."""

    nodes: tuple[str, ...] = ()
    model: str = ""
    model_type: str = ""  # the card's type, lower case: d, npn, pnp, njf, pjf, nmos, pmos
    parameters: tuple[tuple[str, float], ...] = ()
    area: float = 1.0
    temperature_celsius: float | None = None
    origin: SourceLocation | None = field(default=None, compare=False, repr=False)
    bias: SmallSignal | None = field(default=None, compare=False, repr=False)

    is_linear: ClassVar[bool] = False
    model_types: ClassVar[tuple[str, ...]] = ()
    node_counts: ClassVar[tuple[int, ...]] = ()
    roles: ClassVar[tuple[str, ...]] = ()  # the terminals' names, for internal nodes and messages
    defaults: ClassVar[Mapping[str, float]] = {}  # the model parameters this kind computes with
    line_options: ClassVar[tuple[str, ...]] = ("temp", "area")
    takes_area: ClassVar[bool] = True
    positive: ClassVar[tuple[str, ...]] = ()  # model values that must be above zero (divisors, logarithms)
    signed: ClassVar[tuple[str, ...]] = ()  # model values that may be negative

    # ---- netlist form
    @classmethod
    def parse(cls, line: LineReader) -> DeviceStatement:
        positional: list[Any] = []
        options: list[tuple[str, Value, SourceLocation]] = []
        while (item := line.peek()) is not None:
            line.take("field")
            if isinstance(item, Keyed):
                key = item.key.lower()
                if key not in cls.line_options:
                    allowed = ", ".join(f"{k}=" for k in cls.line_options)
                    raise fail(
                        f"{line.name}: '{item.key}=' is not an option of this element",
                        item.loc,
                        f"it takes {allowed}; put model parameters on its .model card",
                    )
                if any(k == key for k, _, _ in options):
                    raise fail(f"{line.name} has two {item.key}= values", item.loc)
                options.append((key, as_value(item.value, f"{item.key} of {line.name}"), item.loc))
            elif options:
                raise fail(f"unexpected {describe(item)} on {line.name} after its options", item.loc, line.form_hint())
            else:
                positional.append(item)
        named = [i for i, item in enumerate(positional) if isinstance(item, Word) and not _is_number(item)]
        if not named or len(positional) <= min(cls.node_counts):
            raise fail(f"{line.name} is missing its model name", line.last_end, line.form_hint())
        at = named[-1]
        nodes = positional[:at]
        if len(nodes) not in cls.node_counts:
            counts = " or ".join(str(n) for n in cls.node_counts)
            raise fail(
                f"{line.name} connects {len(nodes)} node(s) before its model '{positional[at].text}'; it takes {counts}",
                positional[at].loc,
                line.form_hint(),
            )
        for node in nodes:
            if not isinstance(node, Word):
                raise fail(f"expected a node of {line.name} here, not {describe(node)}", node.loc, line.form_hint())
        rest = positional[at + 1 :]
        area = None
        if rest and cls.takes_area:
            area = as_value(rest[0], f"area of {line.name}")
            rest = rest[1:]
        if rest:
            raise fail(f"unexpected extra field {describe(rest[0])} on {line.name}", rest[0].loc, line.form_hint())
        return DeviceStatement(
            line.letter, line.name, tuple(nodes), positional[at], area, tuple(options), line.loc, cls
        )

    @classmethod
    def build(cls, statement: DeviceStatement, ctx: BuildContext) -> Semiconductor:
        card = ctx.model(statement.model, cls.model_types)
        level = card.values.get("LEVEL", 1.0)
        if level != 1.0:
            raise ctx.fail(
                f".model {card.name}: level {exact(level)} is not implemented",
                card.loc,
                f"netnoise computes level 1 {cls.__name__} models; remove LEVEL= or write LEVEL=1",
            )
        known = {k: v for k, v in card.values.items() if k in cls.defaults}
        report_unmodelled(card, cls.defaults, ctx, also=("LEVEL",))
        values = dict(cls.defaults)
        values.update(known)
        options = {key: (ctx.number(value), loc) for key, value, loc in statement.options}
        area = ctx.number(statement.area) if statement.area is not None else options.pop("area", (1.0, None))[0]
        options.pop("area", None)
        if not (math.isfinite(area) and area > 0.0):
            raise ctx.fail(
                f"{ctx.name}: area {area:g} must be positive", statement.loc, "area is a multiplier, 1 for one device"
            )
        temperature = options.pop("temp", (None, None))[0]
        if temperature is not None and not ABSOLUTE_ZERO_C < temperature <= MAX_TEMPERATURE_C:
            raise ctx.fail(
                f"{ctx.name}: temp={exact(temperature)} °C is not a device temperature",
                statement.loc,
                "temp= is the device's own temperature in degrees Celsius",
            )
        extra = cls.build_options(options, ctx)
        return cls(
            ctx.name,
            nodes=tuple(ctx.node(n) for n in statement.nodes),
            model=card.name,
            model_type=card.type,
            parameters=tuple(sorted(values.items())),
            area=area,
            temperature_celsius=temperature,
            origin=ctx.loc,
            **extra,
        )

    @classmethod
    def build_options(cls, options: dict[str, tuple[float, Any]], ctx: BuildContext) -> dict[str, Any]:
        """Kind-specific fields from the line's options (W=, L=, m= of a MOS)."""
        return {}

    # ---- model values
    @cached_property
    def p(self) -> dict[str, float]:
        """The model parameters by upper-case name."""
        return dict(self.parameters)

    @property
    def polarity(self) -> float:
        return 1.0

    def device_temperature_K(self, env_K: float) -> float:
        return env_K if self.temperature_celsius is None else self.temperature_celsius + ZERO_CELSIUS_K

    # ---- structure
    def terminals(self) -> tuple[str, ...]:
        return self.nodes

    def series_resistances(self) -> tuple[float, ...]:
        """The ohmic resistance in series with each terminal (Ω; 0: none)."""
        return (0.0,) * len(self.nodes)

    def internal_nodes(self) -> tuple[str, ...]:
        return tuple(role for role, r in zip(self.roles, self.series_resistances()) if r > 0.0)

    def device_nodes(self) -> tuple[str, ...]:
        return tuple(
            f"#{role}" if r > 0.0 else node for node, role, r in zip(self.nodes, self.roles, self.series_resistances())
        )

    def check_values(self) -> None:
        bad = [k for k, v in self.parameters if not math.isfinite(v)]
        if bad:
            raise CircuitError(f"{self.name}: model {self.model} has values that are not finite: {', '.join(bad)}")
        p = self.p
        not_positive = [k for k in self.positive if not p[k] > 0.0]
        negative = [k for k, v in self.parameters if v < 0.0 and k not in self.signed]
        if not_positive or negative:
            names = ", ".join(f"{k}={p[k]:g}" for k in (*not_positive, *negative))
            raise CircuitError(
                f"{self.name}: model {self.model} has {names}; "
                f"{', '.join(self.positive)} must be positive and the others not negative"
            )

    # ---- stamps
    def stamp(self, s: Stamper) -> None:
        for node, role, r in zip(self.nodes, self.roles, self.series_resistances()):
            if r > 0.0:
                a, b = s.node(node), s.internal(self, role)
                g = 1.0 / r
                s.g(a, a, g)
                s.g(b, b, g)
                s.g(a, b, -g)
                s.g(b, a, -g)
        if self.bias is None:
            return
        rows = self.device_rows(s)
        for i, ri in enumerate(rows):
            for j, rj in enumerate(rows):
                s.g(ri, rj, float(self.bias.conductance[i, j]))
        for a, b, farads in self.bias.capacitors:
            ra, rb = rows[a], rows[b]
            s.c(ra, ra, farads)
            s.c(rb, rb, farads)
            s.c(ra, rb, -farads)
            s.c(rb, ra, -farads)

    # ---- nonlinear core
    def evaluate(
        self, v: np.ndarray, previous: np.ndarray | None, env: DeviceEnvironment
    ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, bool]:
        """The core at node voltages ``v`` (``device_nodes`` order): its control
        voltages are ``u = P @ v``, limited from ``previous`` when given.
        Returns the currents out of each device node into the core at the
        limited ``u`` (A), their derivatives by ``u`` (S), ``P``, the limited
        ``u`` and whether none was limited."""
        raise NotImplementedError

    def load(self, v: np.ndarray, previous: np.ndarray | None, env: DeviceEnvironment) -> DeviceLoad:
        current, by_u, projection, u, settled = self.evaluate(v, previous, env)
        # the tangent at the limited point: i(u) + di/du (P v - u)
        return DeviceLoad(current - by_u @ u, by_u @ projection, u, settled)

    def at_operating_point(self, v: np.ndarray, env: DeviceEnvironment) -> Semiconductor:
        import dataclasses

        _, by_u, projection, _, _ = self.evaluate(v, None, env)
        capacitors, noise, summary = self.operating_details(v, env)
        bias = SmallSignal(
            conductance=by_u @ projection,
            capacitors=capacitors,
            noise=noise,
            voltages=np.array(v, dtype=float),
            summary=summary,
            temperature_K=self.device_temperature_K(env.temperature_K),
        )
        return dataclasses.replace(self, bias=bias)

    def operating_details(self, v: np.ndarray, env: DeviceEnvironment) -> tuple[Any, Any, Any]:
        """(capacitors, noise, summary) at the solved voltages ``v``."""
        raise NotImplementedError

    @property
    def small_signal(self) -> SmallSignal | None:
        return self.bias

    def without_bias(self) -> Semiconductor:
        import dataclasses

        return self if self.bias is None else dataclasses.replace(self, bias=None)

    # ---- noise
    def noise_sources(self, n: NoiseView) -> Iterator[NoiseSource]:
        t = self.device_temperature_K(n.temperature_K)
        for node, role, r in zip(self.nodes, self.roles, self.series_resistances()):
            if r > 0.0:
                injection = _between(n.node(node), n.internal(self, role))
                yield NoiseSource(
                    name=f"{self.name} ({role} resistance)",
                    element=self.name,
                    mechanism=THERMAL,
                    value=r,
                    unit="Ω",
                    injection=injection,
                    white_density=thermal_current_density(r, t),
                    temperature_K=t,
                )
        if self.bias is None:
            return
        rows = self.device_rows(n)
        for source in self.bias.noise:
            injection = _between(rows[source.a], rows[source.b])
            if not injection or (source.white <= 0.0 and source.flicker_at_1Hz <= 0.0):
                continue
            yield NoiseSource(
                name=f"{self.name} ({source.label})",
                element=self.name,
                mechanism=source.mechanism,
                value=abs(
                    source.value
                ),  # the size that sets the density (2q|I|, KF·|I|^AF); its sign is the operating point's
                unit=source.unit,
                injection=injection,
                white_density=source.white,
                flicker_at_1Hz=source.flicker_at_1Hz,
                slope=source.slope,
                temperature_K=source.temperature_K,
            )


def _between(a: int, b: int) -> tuple[tuple[int, float], ...]:
    return tuple((row, sign) for row, sign in ((a, 1.0), (b, -1.0)) if row >= 0)

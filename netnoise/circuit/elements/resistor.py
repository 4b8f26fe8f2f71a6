"""R: a resistance, with its thermal noise and, given a noise index, its excess (1/f) noise.

Form: ``Rname node1 node2 [value] [MODEL] [quiet] [m=N] [tc1=PER_K] [tc2=PER_K2] [tc=a,b] [temp=CELSIUS] [ni=DB]``
(the value may be keyed: ``R=4k7``).

* ``m``: m equal parts in parallel: R/m in the stamp; for noise m independent
  parts, thermal m·4kT/R (the same as one resistor R/m) and excess m times one part's.
* ``tc1``, ``tc2`` (or ``tc=tc1,tc2``): R(T) = R·(1 + tc1·ΔT + tc2·ΔT²), ΔT from the
  nominal 27 °C (:data:`~netnoise.constants.NOMINAL_TEMPERATURE_C`), at the part's own
  ``temp=`` or else the analysis temperature (common practice; IEC 60115-1 defines the
  temperature coefficient of resistance).
* ``temp``: the part's own temperature for its resistance and thermal noise.
* ``ni``: excess-noise index, dB re 1 µV per volt of DC per decade.
* ``quiet``: no noise at all (an ideal load, a part left out of the budget).

Stamp: the conductance y = 1/R_eff, G[a,a] += y, G[b,b] += y, G[a,b] -= y, G[b,a] -= y.

The options are read as numbers by :meth:`Resistor.options_from` into
:class:`ResistorOptions`; a ``.model MODEL R (R=... TC1=... TC2=...)`` card named on the
line supplies the value when the line gives none and tc1, tc2 as ``defaults`` there (the
line's own value and options win; other card parameters are listed once in a notice).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np

from netnoise.circuit.elements.base import (
    BuildContext,
    NoiseView,
    Passive,
    SolutionView,
    TwoTerminal,
    multiplier,
    parse_passive,
    passive_model,
    value_nodes,
)
from netnoise.circuit.limits import RESISTANCE_RANGE
from netnoise.constants import ABSOLUTE_ZERO_C, MAX_TEMPERATURE_C, NOMINAL_TEMPERATURE_C, ZERO_CELSIUS_K
from netnoise.errors import CircuitError
from netnoise.noise.mechanisms import (
    EXCESS,
    THERMAL,
    NoiseSource,
    check_excess_level,
    excess_current_flicker,
    thermal_current_density,
)
from netnoise.text.fields import LineReader
from netnoise.text.values import exact, milli_slip_notice

__all__ = ["Resistor", "ResistorOptions", "RESISTOR_OPTIONS", "QUIET", "NOISE_INDEX_PLAUSIBLE_DB"]

# Noise indices of real resistors, dB re 1 µV/V per decade: from about -40 dB (metal foil,
# wirewound) to about +20 dB (carbon composition) -- from memory of manufacturers' data, widened
# by 10 dB each way. Outside it the value is almost surely a slip; it is used, with a notice.
NOISE_INDEX_PLAUSIBLE_DB = (-50.0, 30.0)

QUIET = "quiet"  # the keyword that switches off a resistor's noise
# the options of an R line (and, later, of a .model NAME R card): key -> what it is
RESISTOR_OPTIONS: dict[str, str] = {
    "m": "multiplier (parts in parallel)",
    "tc1": "first-order temperature coefficient (1/K)",
    "tc2": "second-order temperature coefficient (1/K²)",
    "tc": "temperature coefficients tc1,tc2",
    "temp": "temperature",
    "ni": "noise index",
}
_RETIRED = {
    "noiseless": f"'noiseless' is not a netnoise keyword: write '{QUIET}' to switch off this resistor's noise",
}


@dataclass(frozen=True)
class ResistorOptions:
    """A resistor's options as numbers: ``multiplier`` (parts in parallel),
    ``tc1`` (1/K), ``tc2`` (1/K²), ``temperature_celsius`` (its own, None: the
    analysis temperature), ``noise_index_dB`` (None: no excess noise), ``quiet``."""

    multiplier: float = 1.0
    tc1: float = 0.0
    tc2: float = 0.0
    temperature_celsius: float | None = None
    noise_index_dB: float | None = None
    quiet: bool = False


@dataclass(frozen=True)
class Resistor(TwoTerminal):
    """Resistance in ohms of one part at the nominal 27 °C, between ``nodes[0]`` and ``nodes[1]``.

    ``multiplier``: equal parts in parallel.  ``tc1``, ``tc2``: temperature
    coefficients (1/K, 1/K²).  ``quiet``: no noise at all.
    ``temperature_celsius``: this part's own temperature (None: the ambient).
    ``ambient_celsius``: the analysis temperature the circuit is solved at
    (set by :meth:`at_temperature`; None: the nominal 27 °C).
    ``noise_index_dB``: excess (1/f) noise index, dB re 1 µV of noise per volt
    of DC across it per decade of frequency, as resistor makers state it
    (None: no excess noise).
    """

    resistance: float = 0.0
    quiet: bool = False
    temperature_celsius: float | None = None
    noise_index_dB: float | None = None
    multiplier: float = 1.0
    tc1: float = 0.0
    tc2: float = 0.0
    ambient_celsius: float | None = None

    letter: ClassVar[str] = "R"
    form: ClassVar[str] = (
        "Rname node1 node2 [value] [MODEL] [quiet] [m=N] [tc1=PER_K] [tc2=PER_K2] [tc=tc1,tc2] [temp=CELSIUS] [ni=DB]"
    )
    value_field: ClassVar[str] = "resistance"
    unit: ClassVar[str] = "Ω"

    # ---- netlist form
    @classmethod
    def parse(cls, line: LineReader) -> Passive:
        return parse_passive(cls, line, RESISTOR_OPTIONS, lists=frozenset({"tc"}), flag=QUIET, retired=_RETIRED)

    @classmethod
    def options_from(
        cls, statement: Passive, ctx: BuildContext, defaults: Mapping[str, float] | None = None
    ) -> ResistorOptions:
        """The line's options as numbers; ``defaults`` (key of :data:`RESISTOR_OPTIONS` ->
        number, e.g. from a model card) fill in what the line does not give."""
        numbers: dict[str, float] = dict(defaults or {})
        for key in ("tc1", "tc2", "temp", "ni"):
            value = statement.option(key)
            if value is not None:
                numbers[key] = ctx.number(value)
        if statement.option("m") is not None:
            numbers["m"] = multiplier(statement, ctx)
        pair = statement.option("tc")
        if pair is not None:
            if statement.option("tc1") is not None or statement.option("tc2") is not None:
                raise ctx.fail(
                    f"{ctx.name} gives tc= and tc1=/tc2= both", pair[0].loc, "write tc=tc1,tc2 or tc1= and tc2="
                )
            if len(pair) > 2:
                raise ctx.fail(
                    f"{ctx.name}: tc= takes two coefficients (tc1,tc2), not {len(pair)}",
                    pair[2].loc,
                    "write tc=tc1,tc2",
                )
            numbers["tc1"] = ctx.number(pair[0])
            if len(pair) == 2:
                numbers["tc2"] = ctx.number(pair[1])
        temperature = numbers.get("temp")
        if temperature is not None:
            where = statement.option("temp").loc if statement.option("temp") is not None else ctx.loc
            if temperature <= ABSOLUTE_ZERO_C:
                raise ctx.fail(
                    f"{ctx.name}: temp={exact(temperature)} °C is at or below absolute zero (-273.15 °C)",
                    where,
                    "temp= is the resistor's own temperature in degrees Celsius",
                )
            if temperature > MAX_TEMPERATURE_C:
                raise ctx.fail(
                    f"{ctx.name}: temp={exact(temperature)} °C is above {MAX_TEMPERATURE_C:g} °C, beyond any part's",
                    where,
                    "temp= is the resistor's own temperature in degrees Celsius",
                )
        noise_index = numbers.get("ni")
        low, high = NOISE_INDEX_PLAUSIBLE_DB
        if noise_index is not None and not low <= noise_index <= high:
            ctx.notice(
                f"{ctx.name}: noise index ni={exact(noise_index)} dB is outside "
                f"{low:g} .. +{high:g} dB, where resistors' noise indices lie; check the value "
                f"(it is dB re 1 µV per volt per decade)",
                statement.option("ni").loc if statement.option("ni") is not None else None,
            )
        return ResistorOptions(
            multiplier=numbers.get("m", 1.0),
            tc1=numbers.get("tc1", 0.0),
            tc2=numbers.get("tc2", 0.0),
            temperature_celsius=temperature,
            noise_index_dB=noise_index,
            quiet=statement.quiet,
        )

    @classmethod
    def build(cls, statement: Passive, ctx: BuildContext) -> Resistor:
        nodes = value_nodes(ctx, statement)
        value, defaults = passive_model(statement, ctx)
        if statement.value is not None and statement.value.number is not None and value < 1.0:
            notice = milli_slip_notice(ctx.name, statement.value.text, value)
            if notice:
                ctx.notice(notice, statement.value.loc)
        if not statement.options and not statement.quiet and not defaults:  # most lines: no options to read
            return cls(ctx.name, nodes, ctx.loc, resistance=value)
        return cls.with_options(ctx.name, nodes, ctx.loc, value, cls.options_from(statement, ctx, defaults))

    @classmethod
    def with_options(cls, name: str, nodes: tuple[str, str], origin: Any, value: float, o: ResistorOptions) -> Resistor:
        """The resistor ``value`` (Ω, one part at 27 °C) with options ``o``."""
        return cls(
            name,
            nodes,
            origin,
            resistance=value,
            quiet=o.quiet,
            temperature_celsius=o.temperature_celsius,
            noise_index_dB=o.noise_index_dB,
            multiplier=o.multiplier,
            tc1=o.tc1,
            tc2=o.tc2,
        )

    # ---- the value at a temperature
    def at_temperature(self, celsius: float) -> Resistor:
        if (self.tc1 == 0.0 and self.tc2 == 0.0) or self.temperature_celsius is not None:
            return self  # its resistance does not follow the ambient
        if self.ambient_celsius == celsius:
            return self
        return dataclasses.replace(self, ambient_celsius=float(celsius))

    @property
    def part_resistance(self) -> float:
        """One part's resistance at its temperature (Ω): R·(1 + tc1·ΔT + tc2·ΔT²)."""
        if self.tc1 == 0.0 and self.tc2 == 0.0:
            return self.resistance
        own = self.temperature_celsius if self.temperature_celsius is not None else self.ambient_celsius
        dt = (own if own is not None else NOMINAL_TEMPERATURE_C) - NOMINAL_TEMPERATURE_C
        return self.resistance * (1.0 + self.tc1 * dt + self.tc2 * dt * dt)

    @property
    def effective_resistance(self) -> float:
        """The resistance the circuit sees (Ω): one part's at its temperature, divided by ``multiplier``."""
        return self.part_resistance / self.multiplier

    # ---- topology and stamps
    def dc_paths(self) -> tuple[tuple[str, str], ...]:
        return (self.nodes,)

    def check_values(self) -> None:
        low, high = RESISTANCE_RANGE
        r = self.effective_resistance
        if self.part_resistance <= 0.0 < self.resistance:
            raise CircuitError(
                f"{self.name}: its temperature coefficients (tc1={self.tc1:g}/K, tc2={self.tc2:g}/K²) make "
                f"its resistance {r:g} Ω at its temperature: check tc1 and tc2 (they are per kelvin, "
                "e.g. tc1=100u for 100 ppm/K)"
            )
        if math.isfinite(r) and r > 0.0 and not (low <= r <= high):
            raise CircuitError(
                f"{self.name}: resistance {r:g} Ω is outside the range netnoise computes correctly "
                f"({low:g} Ω to {high:g} Ω): its noise 4kT/R and the products it enters would leave the "
                "range of floating-point numbers and be shown as 0 or infinity. Use a value in the "
                "range (a wire: merge the nodes; an open circuit: remove the resistor)"
            )

    def check(self, s) -> None:
        r = self.effective_resistance
        if not np.isfinite(r):
            raise s.fail(f"{self.name}: resistance {r} is not a finite number")
        if r == 0.0:
            raise s.fail(
                f"{self.name}: zero resistance. A 0 Ω resistor has no defined thermal noise "
                "(its noise current 4kT/R is infinite); replace it by a wire (merge the nodes) "
                "or give it a small positive value"
            )
        if r < 0.0:
            raise s.fail(
                f"{self.name}: negative resistance ({r:g} Ω). Thermal noise 4kT/R is defined only "
                "for a passive, positive resistance; model active behaviour with a controlled source"
            )

    @classmethod
    def stamp_all(cls, elements, s) -> None:
        """All resistors in one vectorised step (the bulk of a large circuit)."""
        members = list(elements)
        r = _effective_resistances(members)
        bad = ~np.isfinite(r) | (r <= 0.0)
        if bad.any():
            members[int(np.argmax(bad))].check(s)  # the first one check refuses, with its message
        a = s.node_rows([e.nodes[0] for e in members])
        b = s.node_rows([e.nodes[1] for e in members])
        s.admittances("G", a, b, 1.0 / r)

    @classmethod
    def check_all(cls, elements, circuit) -> None:
        """``check_values`` of every resistor; those plainly in range in one vectorised step."""
        members = list(elements)
        r = _effective_resistances(members)
        low, high = RESISTANCE_RANGE
        plain = np.fromiter((e.tc1 == 0.0 and e.tc2 == 0.0 for e in members), dtype=bool, count=len(members))
        fine = plain & ~(np.isfinite(r) & (r > 0.0) & ~((low <= r) & (r <= high)))
        for at in np.flatnonzero(~fine).tolist():  # netlist order: the first refused raises
            members[at].check_values()

    def stamp(self, s) -> None:
        type(self).stamp_all([self], s)

    def dc_current(self, v: SolutionView) -> float:
        return (v.v(self.nodes[0]) - v.v(self.nodes[1])) / self.effective_resistance

    # ---- noise
    def temperature_K(self, analysis_K: float) -> float:
        return analysis_K if self.temperature_celsius is None else self.temperature_celsius + ZERO_CELSIUS_K

    def noise_sources(self, n: NoiseView) -> Iterator[NoiseSource]:
        if self.quiet:
            return
        injection = n.current_between(*self.nodes)
        if not injection:  # both ends on ground: it cannot reach the output
            return
        t = self.temperature_K(n.temperature_K)
        r = self.effective_resistance  # m parts: m·4kT/R_part = 4kT/(R_part/m), Nyquist 1928
        yield NoiseSource(
            name=self.name,
            element=self.name,
            mechanism=THERMAL,
            value=r,
            unit="Ω",
            injection=injection,
            white_density=thermal_current_density(r, t),
            temperature_K=t,
        )
        if self.noise_index_dB is None:
            return
        v_dc = n.dc_voltage(*self.nodes)
        if v_dc == 0.0:
            return
        check_excess_level(self.name, self.noise_index_dB, v_dc)
        yield NoiseSource(
            name=f"{self.name} (excess)",
            element=self.name,
            mechanism=EXCESS,
            value=r,
            unit="Ω",
            injection=injection,
            white_density=0.0,
            # m independent parts, each with the whole DC voltage across it: m times one part's
            flicker_at_1Hz=self.multiplier * excess_current_flicker(self.noise_index_dB, v_dc, self.part_resistance),
            details={"noise_index_dB": self.noise_index_dB, "dc_voltage_V": v_dc},
        )


def _effective_resistances(members: list[Resistor]) -> np.ndarray:
    """Every member's ``effective_resistance`` (Ω), as one float array."""
    return np.fromiter(
        (e.resistance / e.multiplier if e.tc1 == 0.0 and e.tc2 == 0.0 else e.effective_resistance for e in members),
        dtype=float,
        count=len(members),
    )

"""R: a resistance, with its thermal noise and, given a noise index, its excess (1/f) noise.

Form: ``Rname node1 node2 value [noiseless] [temp=CELSIUS] [ni=DB]``.
Stamp: G[a,a] += 1/R, G[b,b] += 1/R, G[a,b] -= 1/R, G[b,a] -= 1/R.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from netnoise.circuit.elements.base import BuildContext, NoiseView, Passive, SolutionView, TwoTerminal, value_nodes
from netnoise.circuit.limits import RESISTANCE_RANGE
from netnoise.constants import ABSOLUTE_ZERO_C, MAX_TEMPERATURE_C, ZERO_CELSIUS_K
from netnoise.errors import CircuitError
from netnoise.noise.mechanisms import (
    EXCESS,
    THERMAL,
    NoiseSource,
    check_excess_level,
    excess_current_flicker,
    thermal_current_density,
)
from netnoise.text.fields import Keyed, LineReader, Word, describe
from netnoise.text.source import fail
from netnoise.text.values import exact, milli_slip_notice

__all__ = ["Resistor", "NOISE_INDEX_PLAUSIBLE_DB"]

# Noise indices of real resistors, dB re 1 µV/V per decade: from about -40 dB (metal foil,
# wirewound) to about +20 dB (carbon composition) -- from memory of manufacturers' data, widened
# by 10 dB each way. Outside it the value is almost surely a slip; it is used, with a notice.
NOISE_INDEX_PLAUSIBLE_DB = (-50.0, 30.0)
_OPTIONS_HINT = "after the value a resistor takes: noiseless, temp=CELSIUS, ni=DB (noise index)"


@dataclass(frozen=True)
class Resistor(TwoTerminal):
    """Resistance in ohms between ``nodes[0]`` and ``nodes[1]``.

    ``noiseless``: no noise at all (an ideal load, a cold part).
    ``temperature_celsius``: this part's own temperature for its thermal
    noise (None: the analysis temperature).  ``noise_index_dB``: excess (1/f)
    noise index, dB re 1 µV of noise per volt of DC across it per decade of
    frequency, as resistor makers state it (None: no excess noise).
    """

    resistance: float = 0.0
    noiseless: bool = False
    temperature_celsius: float | None = None
    noise_index_dB: float | None = None

    letter: ClassVar[str] = "R"
    form: ClassVar[str] = "Rname node1 node2 value [noiseless] [temp=CELSIUS] [ni=DB]"
    value_field: ClassVar[str] = "resistance"
    unit: ClassVar[str] = "Ω"

    # ---- netlist form
    @classmethod
    def parse(cls, line: LineReader) -> Passive:
        nodes = (line.node("first node"), line.node("second node"))
        value = line.value("value")
        noiseless = False
        temperature = noise_index = None
        while (item := line.peek()) is not None:
            if isinstance(item, Word) and item.text.lower() == "noiseless":
                if noiseless:
                    raise fail(f"{line.name} says 'noiseless' twice", item.loc)
                line.take("noiseless")
                noiseless = True
                continue
            key = item.key.lower() if isinstance(item, Keyed) else ""
            if key == "temp":
                if temperature is not None:
                    raise fail(f"{line.name} has two temp= values", item.loc)
                temperature = line.keyed_value(item, "temperature")  # type: ignore[arg-type]
            elif key == "ni":
                if noise_index is not None:
                    raise fail(f"{line.name} has two ni= values", item.loc)
                noise_index = line.keyed_value(item, "noise index")  # type: ignore[arg-type]
            else:
                line.check_unsupported_form(item)
                raise fail(f"unexpected extra field {describe(item)} on {line.name}", item.loc, _OPTIONS_HINT)
        return Passive("R", line.name, nodes, value, line.loc, noiseless, temperature, noise_index, kind=cls)

    @classmethod
    def build(cls, statement: Passive, ctx: BuildContext) -> Resistor:
        nodes = value_nodes(ctx, statement)
        value = ctx.number(statement.value)
        if statement.value.number is not None and value < 1.0:
            notice = milli_slip_notice(ctx.name, statement.value.text, value)
            if notice:
                ctx.notice(notice, statement.value.loc)
        temperature = None
        if statement.temperature is not None:
            temperature = ctx.number(statement.temperature)
            if temperature <= ABSOLUTE_ZERO_C:
                raise ctx.fail(
                    f"{ctx.name}: temp={exact(temperature)} °C is at or below absolute zero (-273.15 °C)",
                    statement.temperature.loc,
                    "temp= is the resistor's own temperature in degrees Celsius",
                )
            if temperature > MAX_TEMPERATURE_C:
                raise ctx.fail(
                    f"{ctx.name}: temp={exact(temperature)} °C is above {MAX_TEMPERATURE_C:g} °C, beyond any part's",
                    statement.temperature.loc,
                    "temp= is the resistor's own temperature in degrees Celsius",
                )
        noise_index = ctx.number(statement.noise_index) if statement.noise_index is not None else None
        low, high = NOISE_INDEX_PLAUSIBLE_DB
        if noise_index is not None and not low <= noise_index <= high:
            ctx.notice(
                f"{ctx.name}: noise index ni={exact(noise_index)} dB is outside "
                f"{low:g} .. +{high:g} dB, where resistors' noise indices lie; check the value "
                f"(it is dB re 1 µV per volt per decade)",
                statement.noise_index.loc,
            )
        return cls(
            ctx.name,
            nodes,
            ctx.loc,
            resistance=value,
            noiseless=statement.noiseless,
            temperature_celsius=temperature,
            noise_index_dB=noise_index,
        )

    # ---- topology and stamps
    def dc_paths(self) -> tuple[tuple[str, str], ...]:
        return (self.nodes,)

    def check_values(self) -> None:
        low, high = RESISTANCE_RANGE
        r = self.resistance
        if math.isfinite(r) and r > 0.0 and not (low <= r <= high):
            raise CircuitError(
                f"{self.name}: resistance {r:g} Ω is outside the range netnoise computes correctly "
                f"({low:g} Ω to {high:g} Ω): its noise 4kT/R and the products it enters would leave the "
                "range of floating-point numbers and be shown as 0 or infinity. Use a value in the "
                "range (a wire: merge the nodes; an open circuit: remove the resistor)"
            )

    def check(self, s) -> None:
        r = self.resistance
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
        for element in elements:
            element.check(s)
        a = np.fromiter((s.node(e.nodes[0]) for e in elements), dtype=np.int64, count=len(elements))
        b = np.fromiter((s.node(e.nodes[1]) for e in elements), dtype=np.int64, count=len(elements))
        y = 1.0 / np.fromiter((e.resistance for e in elements), dtype=float, count=len(elements))
        s.admittances("G", a, b, y)

    def stamp(self, s) -> None:
        type(self).stamp_all([self], s)

    def dc_current(self, v: SolutionView) -> float:
        return (v.v(self.nodes[0]) - v.v(self.nodes[1])) / self.resistance

    # ---- noise
    def temperature_K(self, analysis_K: float) -> float:
        return analysis_K if self.temperature_celsius is None else self.temperature_celsius + ZERO_CELSIUS_K

    def noise_sources(self, n: NoiseView) -> Iterator[NoiseSource]:
        if self.noiseless:
            return
        injection = n.current_between(*self.nodes)
        if not injection:  # both ends on ground: it cannot reach the output
            return
        t = self.temperature_K(n.temperature_K)
        yield NoiseSource(
            name=self.name,
            element=self.name,
            mechanism=THERMAL,
            value=self.resistance,
            unit="Ω",
            injection=injection,
            white_density=thermal_current_density(self.resistance, t),
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
            value=self.resistance,
            unit="Ω",
            injection=injection,
            white_density=0.0,
            flicker_at_1Hz=excess_current_flicker(self.noise_index_dB, v_dc, self.resistance),
            details={"noise_index_dB": self.noise_index_dB, "dc_voltage_V": v_dc},
        )

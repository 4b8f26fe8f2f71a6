"""The voltage-feedback amplifier, described the way its data sheet is.

Used from a plain ``X`` line whose last name is a ``.model NAME opamp (...)``
card: ``Xname in+ in- out MODEL [param=value ...]``, or with its supply pins in
the usual order of amplifier macro-models, ``Xname in+ in- v+ v- out MODEL``.
The rails are not modelled (no current flows in the supply pins); after the
DC operating point is found, :meth:`OpAmp.rail_pins` lets the analysis say
when an input or the output sits outside them.

Macro-model (stamped directly, no hidden subcircuit): an internal node p1
with conductance g1 = ``STAGE_CONDUCTANCE`` and capacitance g1·A0/(2π·GBW),
driven by gm = A0·g1 times (v+ − v−) (DC gain A0, pole at GBW/A0); an
optional unity-gain stage p2 (g2 ∥ c2, the second pole); an output branch
k: v_out − v_last − r_out·i_k = 0; input capacitances in C.  The output is
a voltage source to ground at DC.

Noise: the input voltage noise is the current gm·eₙ injected at p1 -- the
same as a source in series with the input, and it sees the input
capacitances; the current noise is one source per input pin to ground.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any, ClassVar

from netnoise.circuit.elements.base import Element
from netnoise.constants import GROUND
from netnoise.errors import SourceLocation
from netnoise.noise.mechanisms import AMPLIFIER_CURRENT, AMPLIFIER_VOLTAGE, NoiseSource, power_density
from netnoise.text.fields import Assignment, shown
from netnoise.text.source import fail
from netnoise.text.values import exact

__all__ = ["OpAmpModel", "OpAmp", "OPAMP_PARAMS", "STAGE_CONDUCTANCE", "check_opamp_param", "opamp_param_list"]

STAGE_CONDUCTANCE = 1e-3  # S, internal pole nodes of the amplifier model

# .model NAME opamp parameters: our name -> (OpAmpModel field, what it is)
OPAMP_PARAMS: dict[str, tuple[str, str]] = {
    "en": ("voltage_noise", "input voltage noise density, V/√Hz (white)"),
    "en_corner": ("voltage_noise_corner_Hz", "1/f corner of en, Hz"),
    "in": ("current_noise", "input current noise density on each input, A/√Hz (white)"),
    "in_corner": ("current_noise_corner_Hz", "1/f corner of in, Hz"),
    "aol": ("open_loop_gain", "open-loop DC gain, V/V"),
    "gbw": ("gain_bandwidth_Hz", "gain-bandwidth product, Hz"),
    "fp2": ("second_pole_Hz", "second pole, Hz"),
    "cin": ("input_capacitance", "common-mode capacitance of each input to ground, F"),
    "cdiff": ("differential_capacitance", "capacitance between the inputs, F"),
    "rout": ("output_resistance", "output resistance, Ω"),
}


def opamp_param_list() -> str:
    return ", ".join(OPAMP_PARAMS)


def check_opamp_param(item: Assignment, owner: str) -> None:
    """Refuse a parameter name that an amplifier model does not have."""
    if item.name.lower() not in OPAMP_PARAMS:
        raise fail(
            f"{owner}: an opamp model has no parameter '{shown(item.name)}'",
            item.loc,
            f"its parameters: {opamp_param_list()}",
        )


@dataclass(frozen=True)
class OpAmpModel:
    """A voltage-feedback amplifier described the way its data sheet is.

    Noise: input voltage noise ``voltage_noise`` (V/√Hz, white) with 1/f
    corner ``voltage_noise_corner_Hz``; input current noise
    ``current_noise`` (A/√Hz, on each input, uncorrelated) with corner
    ``current_noise_corner_Hz``.  Gain: ``open_loop_gain`` (V/V at DC) and
    ``gain_bandwidth_Hz`` (dominant pole at GBW/A0), optional
    ``second_pole_Hz``.  ``input_capacitance`` from each input to ground
    (common-mode), ``differential_capacitance`` between the inputs (F),
    ``output_resistance`` (Ω, noiseless).
    """

    name: str
    voltage_noise: float = 0.0
    voltage_noise_corner_Hz: float = 0.0
    current_noise: float = 0.0
    current_noise_corner_Hz: float = 0.0
    open_loop_gain: float = 1e5
    gain_bandwidth_Hz: float = 1e6
    second_pole_Hz: float | None = None
    input_capacitance: float = 0.0
    differential_capacitance: float = 0.0
    output_resistance: float = 0.0


@dataclass(frozen=True)
class OpAmp(Element):
    """An amplifier instance: ``nodes`` = (non-inverting input, inverting
    input, output); the output is referred to ground."""

    nodes: tuple[str, str, str] = (GROUND, GROUND, GROUND)
    model: OpAmpModel = field(default_factory=lambda: OpAmpModel(""))
    origin: SourceLocation | None = field(default=None, compare=False, repr=False)
    supplies: tuple[str, str] | None = None  # (v+, v-) of the 5-pin form: checked, not modelled

    letter: ClassVar[str] = "X"
    form: ClassVar[str] = "Xname in+ in- [v+ v-] out opamp_model [param=value ...]"
    branch_count: ClassVar[int] = 1
    statement_value: ClassVar[str | None] = None
    supplies_gain: ClassVar[bool] = True

    @classmethod
    def build_instance(cls, statement: Any, ctx: Any, model_name: str, values: dict[str, tuple[float, Any]]) -> OpAmp:
        """The amplifier of an X line; ``values`` maps parameter names to
        (number, Value), the model card's with the line's overrides on top."""
        name = ctx.name
        fields: dict[str, float] = {}
        for key, (number, value) in values.items():
            field_name, what = OPAMP_PARAMS[key]
            if key in ("aol", "gbw", "fp2"):
                if number <= 0:
                    raise ctx.fail(f"{name}: {key} ({what}) must be above 0, not {exact(number)}", value.loc)
            elif number < 0:
                raise ctx.fail(f"{name}: {key} ({what}) cannot be negative ({exact(number)})", value.loc)
            fields[field_name] = number
        model = OpAmpModel(name=model_name, **fields)
        defaulted = [key for key in ("aol", "gbw") if key not in values]
        if defaulted:
            given = {"aol": f"aol={model.open_loop_gain:g}", "gbw": f"gbw={model.gain_bandwidth_Hz:g} Hz"}
            ctx.notice(
                f"{name}: model {model_name} gives no {' or '.join(defaulted)}; the defaults "
                f"{', '.join(given[k] for k in defaulted)} are used, and they set the amplifier's bandwidth "
                "and so the noise bandwidth: give the part's values"
            )
        words = statement.nodes
        supplies = None
        if len(words) == 5:  # in+ in- v+ v- out
            supplies = (ctx.node(words[2]), ctx.node(words[3]))
            words = (words[0], words[1], words[4])
        nodes = (ctx.node(words[0]), ctx.node(words[1]), ctx.node(words[2]))
        return cls(name, nodes, model, ctx.loc, supplies)

    def check_values(self) -> None:
        from netnoise.circuit.limits import GAIN_LIMIT
        from netnoise.errors import CircuitError

        if not abs(self.model.open_loop_gain) <= GAIN_LIMIT:
            raise CircuitError(
                f"{self.name}: open-loop gain aol = {self.model.open_loop_gain:g} (model "
                f"{self.model.name}) is above {GAIN_LIMIT:g}, beyond what netnoise computes correctly "
                "(the squared transfers would overflow): a gain of 1e6 to 1e9 models an ideal amplifier"
            )

    # ---- structure and topology
    def terminals(self) -> tuple[str, ...]:
        return self.nodes  # not the supply pins: no current flows in them here

    def rail_pins(self) -> tuple[tuple[str, str], tuple[tuple[str, str], ...]] | None:
        """((v+ node, v- node), ((pin label, node), ...)): the rails, and the pins whose DC
        voltage must lie between them; None without supply pins."""
        if self.supplies is None:
            return None
        return self.supplies, (("in+", self.nodes[0]), ("in-", self.nodes[1]), ("out", self.nodes[2]))

    def internal_nodes(self) -> tuple[str, ...]:
        return ("p1", "p2") if self.model.second_pole_Hz else ("p1",)

    def dc_paths(self) -> tuple[tuple[str, str], ...]:
        return ((self.nodes[2], GROUND),)  # its output is a voltage source to ground

    def voltage_defined(self) -> tuple[tuple[str, str], ...]:
        return ((self.nodes[2], GROUND),)

    @property
    def input_transconductance(self) -> float:
        """gm of the first stage (S): a unit input noise voltage is the current gm injected at p1."""
        return self.model.open_loop_gain * STAGE_CONDUCTANCE

    # ---- stamps
    def stamp(self, s) -> None:
        model = self.model
        plus, minus, out = (s.node(x) for x in self.nodes)
        k = s.branch(self)
        g1 = STAGE_CONDUCTANCE
        gm = self.input_transconductance
        p1 = s.internal(self, "p1")
        s.g(p1, p1, g1)
        s.c(p1, p1, g1 * model.open_loop_gain / (2 * math.pi * model.gain_bandwidth_Hz))  # pole at GBW/A0
        s.g(p1, plus, -gm)  # current gm·(v+ - v-) flows into p1
        s.g(p1, minus, gm)
        last = p1
        if model.second_pole_Hz:
            p2 = s.internal(self, "p2")
            s.g(p2, p2, g1)
            s.c(p2, p2, g1 / (2 * math.pi * model.second_pole_Hz))
            s.g(p2, p1, -g1)
            last = p2
        s.g(out, k, 1.0)  # KCL: the output branch current leaves node out into the amplifier
        s.g(k, out, 1.0)
        s.g(k, last, -1.0)
        s.g(k, k, -model.output_resistance)
        for pin in (plus, minus):
            _admittance(s, pin, -1, model.input_capacitance)
        _admittance(s, plus, minus, model.differential_capacitance)

    # ---- DC: the output pin
    def dc_current(self, v) -> float:
        return v.branch_current(self)

    def dc_voltage(self, v) -> float:
        return v.v(self.nodes[2])

    # ---- noise
    def noise_sources(self, n) -> Iterator[NoiseSource]:
        model = self.model
        owner = f"{self.name} (model {model.name})"
        if model.voltage_noise > 0:
            white, flicker = power_density(owner, "en =", model.voltage_noise, "V/√Hz", model.voltage_noise_corner_Hz)
            yield NoiseSource(
                name=f"{self.name} (voltage)",
                element=self.name,
                mechanism=AMPLIFIER_VOLTAGE,
                value=model.voltage_noise,
                unit="V/√Hz",
                injection=((n.internal(self, "p1"), self.input_transconductance),),
                white_density=white,
                flicker_at_1Hz=flicker,
                details={"model": model.name},
            )
        if model.current_noise > 0:
            white, flicker = power_density(owner, "in =", model.current_noise, "A/√Hz", model.current_noise_corner_Hz)
            for pin, label in zip(self.nodes[:2], ("in+", "in-")):
                injection = n.current_between(pin, GROUND)
                if injection:
                    yield NoiseSource(
                        name=f"{self.name} ({label})",
                        element=self.name,
                        mechanism=AMPLIFIER_CURRENT,
                        value=model.current_noise,
                        unit="A/√Hz",
                        injection=injection,
                        white_density=white,
                        flicker_at_1Hz=flicker,
                        details={"model": model.name},
                    )


def _admittance(s, a: int, b: int, y: float) -> None:
    s.c(a, a, y)
    s.c(b, b, y)
    s.c(a, b, -y)
    s.c(b, a, -y)

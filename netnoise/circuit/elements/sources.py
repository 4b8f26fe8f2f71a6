"""V and I: independent sources, with an optional explicit noise density
and, for I, shot noise of its DC current.

Forms: ``Vname node+ node- [DC] [value] [AC magnitude [phase]] [noise=V/rtHz [corner=HZ] [slope=N]]``
and the same for ``I`` with A/rtHz and ``[shot]``; the values may be keyed:
``DC=5``, ``AC=1``.  A transient waveform
(``SIN(...)``, ...) is read and ignored with a notice.

V stamps a branch current k: KCL G[a,k] += 1, G[b,k] -= 1, branch row
v_a - v_b = V.  I has only a right-hand side: positive current flows from
``nodes[0]`` through the source to ``nodes[1]`` (SPICE convention).
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any, ClassVar

from netnoise.circuit.elements.base import BuildContext, TwoTerminal, branch_kcl, current_into, value_nodes
from netnoise.errors import SourceLocation
from netnoise.noise.mechanisms import SHOT, SOURCE, NoiseSource, power_density, shot_current_density
from netnoise.text.fields import Call, Keyed, LineReader, Value, Word, is_value
from netnoise.text.source import fail
from netnoise.text.values import exact

__all__ = ["NoiseSpec", "VoltageSource", "CurrentSource", "IndependentSource"]

_WAVEFORMS = {"sin", "pulse", "exp", "pwl", "sffm", "am"}
SOURCE_NOISE_KEYS = ("noise", "corner", "slope")


@dataclass(frozen=True)
class NoiseSpec:
    """An explicit noise density given to an independent source.

    One-sided amplitude density ``white`` (V/√Hz for a V source, A/√Hz for an
    I source) with a 1/f^slope part below ``corner_Hz``:
    S(f) = white² · (1 + (corner_Hz / f)^slope).  ``corner_Hz = 0``: white only.
    """

    white: float
    corner_Hz: float = 0.0
    slope: float = 1.0


@dataclass(frozen=True)
class IndependentSource:
    """Statement of a V or I line.  Absent values are None (DC 0, no AC; AC alone means 1)."""

    letter: str
    name: str
    nodes: tuple[Word, Word]
    dc: Value | None
    ac_magnitude: Value | None
    ac_phase: Value | None
    has_ac: bool
    waveform: str | None  # name of an ignored transient spec, e.g. 'SIN'
    loc: SourceLocation = field(compare=False)
    noise: Value | None = None  # noise=, V/√Hz or A/√Hz
    corner: Value | None = None  # corner=, Hz
    slope: Value | None = None  # slope=, the exponent of 1/f
    shot: bool = False  # I only
    kind: Any = field(default=None, compare=False, repr=False)


def _parse_source(cls, line: LineReader) -> IndependentSource:
    letter, name = cls.letter, line.name
    nodes = (line.node("positive node"), line.node("negative node"))
    dc: Value | None = None
    ac_magnitude: Value | None = None
    ac_phase: Value | None = None
    has_ac = False
    waveform: str | None = None
    noise: dict[str, Value] = {}
    noise_at: dict[str, Keyed] = {}
    shot = False
    while (item := line.peek()) is not None:
        keyword = item.text.lower() if isinstance(item, Word) else ""
        key = item.key.lower() if isinstance(item, Keyed) else ""
        if keyword == "dc":
            if dc is not None:
                raise fail(f"{name} has two DC values", item.loc, line.form_hint())
            line.take("DC keyword")
            dc = line.value("DC value")
        elif key == "dc":  # keyed: DC=5
            if dc is not None:
                raise fail(f"{name} has two DC values", item.loc, line.form_hint())
            dc = line.keyed_value(item, "DC value")  # type: ignore[arg-type]
        elif key == "ac":  # keyed: AC=1 (the magnitude; a phase follows as a plain value)
            if has_ac:
                raise fail(f"{name} has two AC specifications", item.loc, line.form_hint())
            has_ac = True
            ac_magnitude = line.keyed_value(item, "AC magnitude")  # type: ignore[arg-type]
            if is_value(line.peek()):
                ac_phase = line.value("AC phase")
        elif keyword == "ac":
            if has_ac:
                raise fail(f"{name} has two AC specifications", item.loc, line.form_hint())
            line.take("AC keyword")
            has_ac = True
            if is_value(line.peek()):
                ac_magnitude = line.value("AC magnitude")
                if is_value(line.peek()):
                    ac_phase = line.value("AC phase")
        elif keyword == "shot":
            if letter != "I":
                raise fail(
                    f"{name}: 'shot' applies to current sources only",
                    item.loc,
                    "mark the junction current (an I source) with shot; give a V source noise=DENSITY",
                )
            if shot:
                raise fail(f"{name} says 'shot' twice", item.loc)
            line.take("shot")
            shot = True
        elif key in SOURCE_NOISE_KEYS:
            if key in noise:
                raise fail(f"{name} has two {key}= values", item.loc)
            what = {"noise": "noise density", "corner": "noise corner frequency", "slope": "noise slope"}[key]
            noise[key] = line.keyed_value(item, what)  # type: ignore[arg-type]
            noise_at[key] = item  # type: ignore[assignment]
        elif isinstance(item, Call) and item.name.lower() in _WAVEFORMS:
            if waveform is not None:
                raise fail(f"{name} has two waveforms", item.loc, line.form_hint())
            line.take("waveform")
            waveform = item.name.upper()
        elif dc is None and is_value(item):
            dc = line.value("DC value")
        else:
            line.done()
    if "noise" not in noise:
        for key in ("corner", "slope"):
            if key in noise:
                raise fail(
                    f"{name}: {key}= shapes a noise density, but there is no noise=",
                    noise_at[key].loc,
                    f"add noise=DENSITY ({cls.density_unit}), e.g. noise=10n {key}=...",
                )
    return IndependentSource(
        letter,
        name,
        nodes,
        dc,
        ac_magnitude,
        ac_phase,
        has_ac,
        waveform,
        line.loc,
        noise.get("noise"),
        noise.get("corner"),
        noise.get("slope"),
        shot,
        kind=cls,
    )


def _noise_spec(statement: IndependentSource, ctx: BuildContext, unit: str) -> NoiseSpec | None:
    if statement.noise is None:
        return None
    name = ctx.name
    white = ctx.number(statement.noise)
    if white < 0:
        raise ctx.fail(f"{name}: the noise density cannot be negative ({exact(white)} {unit})", statement.noise.loc)
    corner = 0.0
    if statement.corner is not None:
        corner = ctx.number(statement.corner)
        if corner < 0:
            raise ctx.fail(
                f"{name}: the noise corner cannot be negative ({exact(corner)} Hz)",
                statement.corner.loc,
                "corner=0 (or no corner=) means white noise only",
            )
    slope = 1.0
    if statement.slope is not None:
        slope = ctx.number(statement.slope)
        if not 0 < slope <= 3:
            raise ctx.fail(
                f"{name}: the noise slope must satisfy 0 < slope <= 3, not {exact(slope)}",
                statement.slope.loc,
                "slope=1 is 1/f noise, slope=2 is 1/f² (random walk)",
            )
    return NoiseSpec(white, corner, slope)


def _build_fields(cls, statement: IndependentSource, ctx: BuildContext) -> dict[str, Any]:
    dc = ctx.number(statement.dc) if statement.dc else 0.0
    magnitude = 0.0
    if statement.has_ac:
        magnitude = ctx.number(statement.ac_magnitude) if statement.ac_magnitude else 1.0
    phase = ctx.number(statement.ac_phase) if statement.ac_phase else 0.0
    if statement.waveform:
        ctx.notice(
            f"the {statement.waveform}(...) waveform is ignored; noise analysis works on the small-signal circuit",
            about=ctx.name,
        )
    return dict(dc=dc, ac_magnitude=magnitude, ac_phase=phase, noise=_noise_spec(statement, ctx, cls.density_unit))


def _explicit_source(element, n, injection, shot_too: bool) -> Iterator[NoiseSource]:
    spec = element.noise
    if spec is None or spec.white <= 0.0:
        return
    white, flicker = power_density(
        element.name, "noise density", spec.white, element.density_unit, spec.corner_Hz, spec.slope
    )
    yield NoiseSource(
        name=f"{element.name} (noise)" if shot_too else element.name,
        element=element.name,
        mechanism=SOURCE,
        value=spec.white,
        unit=element.density_unit,
        injection=injection,
        white_density=white,
        flicker_at_1Hz=flicker,
        slope=spec.slope,
        details={"corner_Hz": spec.corner_Hz} if spec.corner_Hz > 0 else {},
    )


@dataclass(frozen=True)
class VoltageSource(TwoTerminal):
    """Independent voltage source, ``nodes[0]`` is the + terminal.

    ``dc`` in volts; ``ac_magnitude`` in volts and ``ac_phase`` in degrees
    (kept for reports; the noise engine uses a unit excitation); ``noise``
    an explicit noise voltage density in series (a sensor, a reference).
    """

    dc: float = 0.0
    ac_magnitude: float = 0.0
    ac_phase: float = 0.0
    noise: NoiseSpec | None = None

    letter: ClassVar[str] = "V"
    form: ClassVar[str] = "Vname node+ node- [DC] [value] [AC magnitude [phase]] [noise=V/rtHz [corner=HZ] [slope=N]]"
    value_field: ClassVar[str] = "dc"
    statement_value: ClassVar[str | None] = "dc"
    can_drive: ClassVar[bool] = True
    unit: ClassVar[str] = "V"
    density_unit: ClassVar[str] = "V/√Hz"
    branch_count: ClassVar[int] = 1

    @classmethod
    def parse(cls, line: LineReader) -> IndependentSource:
        return _parse_source(cls, line)

    @classmethod
    def build(cls, statement: IndependentSource, ctx: BuildContext) -> VoltageSource:
        return cls(ctx.name, value_nodes(ctx, statement), ctx.loc, **_build_fields(cls, statement, ctx))

    def dc_paths(self) -> tuple[tuple[str, str], ...]:
        return (self.nodes,)

    def voltage_defined(self) -> tuple[tuple[str, str], ...]:
        return (self.nodes,)

    def stamp(self, s) -> None:
        branch_kcl(s, s.node(self.nodes[0]), s.node(self.nodes[1]), s.branch(self))

    def stamp_dc(self, s, b) -> None:
        b[s.branch(self)] += self.dc

    def excitation(self, s, b) -> str:
        b[s.branch(self)] = 1.0
        return "V"

    def dc_current(self, v) -> float:
        return v.branch_current(self)

    def noise_sources(self, n) -> Iterator[NoiseSource]:
        yield from _explicit_source(self, n, ((n.branch(self), 1.0),), False)


@dataclass(frozen=True)
class CurrentSource(TwoTerminal):
    """Independent current source; positive current flows from ``nodes[0]``
    through the source to ``nodes[1]`` (SPICE convention).  Amperes, degrees.

    ``shot``: the DC current is a junction current (photocurrent, dark
    current, a diode's bias) with shot noise 2q|I_dc| (Schottky 1918).
    """

    dc: float = 0.0
    ac_magnitude: float = 0.0
    ac_phase: float = 0.0
    noise: NoiseSpec | None = None  # an explicit noise current density
    shot: bool = False

    letter: ClassVar[str] = "I"
    form: ClassVar[str] = (
        "Iname node+ node- [DC] [value] [AC magnitude [phase]] [noise=A/rtHz [corner=HZ] [slope=N]] [shot]"
    )
    value_field: ClassVar[str] = "dc"
    statement_value: ClassVar[str | None] = "dc"
    can_drive: ClassVar[bool] = True
    unit: ClassVar[str] = "A"
    density_unit: ClassVar[str] = "A/√Hz"

    @classmethod
    def parse(cls, line: LineReader) -> IndependentSource:
        return _parse_source(cls, line)

    @classmethod
    def build(cls, statement: IndependentSource, ctx: BuildContext) -> CurrentSource:
        fields = _build_fields(cls, statement, ctx)
        if statement.shot and fields["dc"] == 0.0:
            ctx.notice(
                f"{ctx.name}: 'shot' marks a junction current, but its DC current is 0 A, so its shot noise "
                "2q|I| is zero: give the junction's DC current (the value after the nodes)"
            )
        return cls(ctx.name, value_nodes(ctx, statement), ctx.loc, shot=statement.shot, **fields)

    def stamp_dc(self, s, b) -> None:
        current_into(s, b, self.nodes, self.dc)

    def excitation(self, s, b) -> str:
        current_into(s, b, self.nodes, 1.0)
        return "A"

    def dc_current(self, v) -> float:
        return self.dc

    def noise_sources(self, n) -> Iterator[NoiseSource]:
        injection = n.current_between(*self.nodes)
        if injection and self.shot and self.dc != 0.0:
            yield NoiseSource(
                name=self.name,
                element=self.name,
                mechanism=SHOT,
                value=self.dc,
                unit="A",
                injection=injection,
                white_density=shot_current_density(self.dc),
            )
        yield from _explicit_source(self, n, injection, self.shot)

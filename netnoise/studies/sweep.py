"""Sweeps of one or two values, and the value that just meets a target.

A sweep varies element values, top-level ``.param`` values or the analysis
temperature (``"temp"``, °C) over a grid, refilling the prepared analysis at
each point (no parsing, no new assembly), and records at each point the
total rms noise, the dominant source, and -- with an input source -- the
bandwidth and the settling time: the noise–speed trade-off.

:func:`meet_target` finds, by root finding on the smooth curve (Brent's
method on the logarithm of the value), the value at which the noise just
meets a target, or at which the settling time just meets a deadline.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from netnoise.engine.analysis import PreparedAnalysis, prepare
from netnoise.errors import CircuitError, UsageError

__all__ = ["Vary", "SweepPoint", "SweepResult", "sweep", "meet_target", "TargetAnswer", "TEMPERATURE"]

TEMPERATURE = "temp"


@dataclass(frozen=True)
class Vary:
    """One swept quantity: an element name, a ``.param`` name or ``"temp"`` (°C),
    and its values (SI units)."""

    name: str
    values: tuple[float, ...]

    @classmethod
    def span(cls, name: str, start: float, stop: float, steps: int = 11, log: bool = False) -> Vary:
        if steps < 2:
            raise UsageError(f"a sweep needs at least 2 steps, not {steps}")
        if log and (start <= 0 or stop <= 0):
            raise UsageError(f"a logarithmic sweep of {name} needs positive limits, not {start:g} .. {stop:g}")
        grid = np.geomspace(start, stop, steps) if log else np.linspace(start, stop, steps)
        return cls(name, tuple(float(x) for x in grid))


@dataclass(frozen=True)
class SweepPoint:
    """One point: the values (in the order of the sweep's ``vary``), the total
    rms output noise (V), the dominant source, and the speed (None without an
    input source; settling None without an accuracy)."""

    values: tuple[float, ...]
    total_rms_V: float
    dominant: str
    bandwidth_Hz: float | None
    settling_time_s: float | None


@dataclass(frozen=True, eq=False)
class SweepResult:
    """All points of a sweep, in grid order (the first quantity varies slowest)."""

    vary: tuple[Vary, ...]
    points: tuple[SweepPoint, ...]
    settle_accuracy: float | None = None

    @property
    def total_rms_V(self) -> np.ndarray:
        return np.array([p.total_rms_V for p in self.points])

    @property
    def settling_time_s(self) -> np.ndarray:
        return np.array([math.nan if p.settling_time_s is None else p.settling_time_s for p in self.points])

    @property
    def bandwidth_Hz(self) -> np.ndarray:
        return np.array([math.nan if p.bandwidth_Hz is None else p.bandwidth_Hz for p in self.points])


class _Evaluator:
    """The prepared analysis at new values of the swept quantities."""

    def __init__(self, prepared: PreparedAnalysis, names: Sequence[str], settle: float | None, speed: bool) -> None:
        self.prepared = prepared
        self.names = list(names)
        self.settle = settle
        self.speed = speed and prepared.problem.has_input
        circuit = prepared.circuit
        self.kinds = []
        for name in self.names:
            if name.lower() == TEMPERATURE:
                self.kinds.append("temp")
                continue
            try:
                element = circuit.element(name)
            except KeyError:
                element = None
            if element is not None and element.value_field is not None:
                self.kinds.append("element")
            elif name.lower() in circuit.parameters:
                self.kinds.append("param")
            else:
                raise UsageError(
                    f"cannot vary '{name}': it is neither an element with a value, a top-level .param "
                    f"nor 'temp' (parameters: {', '.join(sorted(circuit.parameters)) or 'none'})"
                )

    def prepared_at(self, values: Sequence[float]) -> PreparedAnalysis:
        element_values = {n: v for n, v, k in zip(self.names, values, self.kinds) if k == "element"}
        params = {n: v for n, v, k in zip(self.names, values, self.kinds) if k == "param"}
        temps = [v for v, k in zip(values, self.kinds) if k == "temp"]
        prepared = self.prepared
        if temps:
            problem = prepared.problem
            s = problem.settings
            prepared = prepare(
                prepared.circuit,
                output=s.output,
                reference=s.reference,
                input_source=s.input_source,
                band=(s.low, s.high),
                points_per_decade=s.points_per_decade,
                temperature_celsius=temps[0],
                options=problem.options,
            )
        if params:
            prepared = prepared.with_params(params)
        if element_values:
            prepared = prepared.with_values(element_values)
        return prepared

    def point(self, values: Sequence[float]) -> SweepPoint:
        from netnoise.studies.response import speed_of_response

        prepared = self.prepared_at(values)
        result = prepared.analyze()
        dominant = result.contributions[0].label if result.contributions and result.total_variance > 0 else ""
        bandwidth = settling = None
        if self.speed:
            problem = prepared.problem
            assert problem.input_vector is not None  # self.speed says there is an input
            speed = speed_of_response(
                problem.system, problem.selector, problem.input_vector, self.settle, problem.options
            )
            bandwidth, settling = speed.bandwidth_Hz, speed.settling_time_s
        return SweepPoint(tuple(float(v) for v in values), result.total_rms, dominant, bandwidth, settling)


def sweep(
    prepared: PreparedAnalysis,
    vary: Sequence[Vary],
    settle: float | None = None,
    speed: bool = True,
    progress: Callable[[int, int], None] | None = None,
) -> SweepResult:
    """Evaluate ``prepared`` over the grid of ``vary`` (one or two quantities).

    ``settle`` is the settling accuracy (a fraction of the step); ``progress``
    is called with (points done, points in all) after each point."""
    if not 1 <= len(vary) <= 2:
        raise UsageError(f"a sweep varies one or two quantities, not {len(vary)}")
    evaluator = _Evaluator(prepared, [v.name for v in vary], settle, speed)
    grid = (
        [(a,) for a in vary[0].values] if len(vary) == 1 else [(a, b) for a in vary[0].values for b in vary[1].values]
    )
    points = []
    for done, values in enumerate(grid, start=1):
        points.append(evaluator.point(values))
        if progress is not None:
            progress(done, len(grid))
    return SweepResult(tuple(vary), tuple(points), settle)


@dataclass(frozen=True)
class TargetAnswer:
    """The value of ``name`` that just meets the target, and what it gives there."""

    name: str
    value: float
    point: SweepPoint
    target: str  # "noise" or "settling"


def meet_target(
    prepared: PreparedAnalysis,
    name: str,
    low: float,
    high: float,
    *,
    noise_rms_V: float | None = None,
    settling_time_s: float | None = None,
    settle: float | None = None,
) -> TargetAnswer:
    """The value of ``name`` in [low, high] at which the total rms noise equals
    ``noise_rms_V`` -- or, with ``settling_time_s``, at which the settling time
    equals it (to ``settle``, the accuracy) -- found by root finding on the
    smooth curve (Brent's method, in log value when both limits are positive).
    UsageError when the target lies outside what [low, high] reaches."""
    from scipy.optimize import brentq

    if (noise_rms_V is None) == (settling_time_s is None):
        raise UsageError("give one target: a noise rms or a settling time")
    if settling_time_s is not None and settle is None:
        raise UsageError("a settling-time target needs a settling accuracy (--settle)")
    evaluator = _Evaluator(prepared, [name], settle, speed=settling_time_s is not None)
    logarithmic = low > 0 and high > 0
    cache: dict[float, SweepPoint] = {}

    def at(u: float) -> SweepPoint:
        if u not in cache:
            cache[u] = evaluator.point([math.exp(u) if logarithmic else u])
        return cache[u]

    def miss(u: float) -> float:
        p = at(u)
        if noise_rms_V is not None:
            return math.log(p.total_rms_V / noise_rms_V)
        if p.settling_time_s is None:
            raise CircuitError("the settling time is not defined here (no input source?)")
        return math.log(p.settling_time_s / (settling_time_s or 1.0))

    a, b = (math.log(low), math.log(high)) if logarithmic else (low, high)
    fa, fb = miss(a), miss(b)
    what = f"{noise_rms_V:.4g} V rms" if noise_rms_V is not None else f"a settling time of {settling_time_s:.4g} s"
    if fa * fb > 0:
        got = (at(a), at(b))
        reached = (
            f"{got[0].total_rms_V:.4g} .. {got[1].total_rms_V:.4g} V rms"
            if noise_rms_V is not None
            else f"{got[0].settling_time_s:.4g} .. {got[1].settling_time_s:.4g} s"
        )
        raise UsageError(
            f"{what} is not reached for {name} between {low:g} and {high:g} (it gives {reached}); widen the range"
        )
    root = brentq(miss, a, b, xtol=1e-12, rtol=1e-10)
    value = math.exp(root) if logarithmic else root
    point = at(root)
    if settling_time_s is None and settle is not None and prepared.problem.has_input:
        point = _Evaluator(prepared, [name], settle, speed=True).point([value])  # what the answer costs in speed
    return TargetAnswer(name, value, point, "noise" if noise_rms_V is not None else "settling")

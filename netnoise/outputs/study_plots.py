"""The noise–speed trade-off of a sweep, drawn (matplotlib, imported inside the functions).

Left: total rms output noise against settling time (or against bandwidth
when no settling accuracy was asked for), each point labelled with its
value -- the curve a designer picks a point on.  Right: the noise against
the swept value.  Every function takes ``ax=`` and returns what it drew.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from netnoise.engformat import format_quantity, si_prefix_scale

__all__ = ["TradeoffPlot", "plot_tradeoff"]

LINE_COLOUR = "#2f7f7a"
TARGET_COLOUR = "#b5473a"


@dataclass(frozen=True)
class TradeoffPlot:
    """What :func:`plot_tradeoff` drew: the figure, its axes and the lines."""

    figure: Any
    axes: tuple[Any, ...]
    lines: tuple[Any, ...]


def _label(name: str, value: float, units: dict[str, str]) -> str:
    return f"{value:.3g} °C" if name.lower() == "temp" else format_quantity(value, units.get(name, ""), 3)


def plot_tradeoff(
    result, *, units: dict[str, str] | None = None, target_rms: float | None = None, answer=None, ax=None
) -> TradeoffPlot:
    """Draw a sweep's trade-off; ``answer`` (a target's answer) is marked on
    both panels; ``ax``: a pair of axes to draw into (else a new figure)."""
    from matplotlib.figure import Figure

    units = units or {}
    if ax is None:
        figure = Figure(figsize=(10.0, 4.4), layout="constrained")
        axes = tuple(figure.subplots(1, 2))
    else:
        axes = tuple(ax)
        figure = axes[0].figure
    noise = result.total_rms_V
    scale, prefix = si_prefix_scale(float(np.nanmax(noise)))
    settling = result.settling_time_s
    speed_is_settling = result.settle_accuracy is not None and np.all(np.isfinite(settling))
    speed = settling if speed_is_settling else result.bandwidth_Hz
    name0 = result.vary[0].name
    lines = []
    values = np.array([p.values[0] for p in result.points])
    # one curve per value of the second quantity (a grid), else one curve
    if len(result.vary) == 2:
        second = result.vary[1]
        curves = [
            (f"{second.name} = {_label(second.name, v, units)}", np.array([p.values[1] == v for p in result.points]))
            for v in second.values
        ]
    else:
        curves = [("", np.ones(len(result.points), dtype=bool))]
    colours = [LINE_COLOUR, "#6b5b95", "#c99a2e", "#3f6fa6", "#5b8c3a", "#a05a8c"]
    drawn_speed = bool(np.all(np.isfinite(speed)))
    for index, (label, mask) in enumerate(curves):
        colour = colours[index % len(colours)]
        if drawn_speed:
            (line,) = axes[0].plot(speed[mask], noise[mask] / scale, "o-", color=colour, label=label or None)
            lines.append(line)
            if index == 0:
                for x, y, v in zip(speed[mask], noise[mask] / scale, values[mask]):
                    axes[0].annotate(
                        _label(name0, v, units), (x, y), textcoords="offset points", xytext=(4, 4), fontsize=8
                    )
        (line,) = axes[1].plot(values[mask], noise[mask] / scale, "o-", color=colour, label=label or None)
        lines.append(line)
    if drawn_speed:
        axes[0].set_xscale("log")
        axes[0].set_xlabel("settling time (s)" if speed_is_settling else "bandwidth (Hz)")
    else:
        axes[0].text(0.5, 0.5, "no input source: speed not defined", ha="center", transform=axes[0].transAxes)
    axes[0].set_ylabel(f"total output noise ({prefix}V rms)")
    axes[0].set_title("noise against speed")
    if len(curves) > 1:
        axes[1].legend(loc="best", fontsize=8)
    if values.min() > 0 and values.max() / values.min() > 20:
        axes[1].set_xscale("log")
    axes[1].set_xlabel(f"{name0} ({'°C' if name0.lower() == 'temp' else units.get(name0, '')})")
    axes[1].set_ylabel(f"total output noise ({prefix}V rms)")
    axes[1].set_title(f"noise against {name0}")
    if target_rms is not None and math.isfinite(target_rms):
        for a in axes:
            lines.append(a.axhline(target_rms / scale, color=TARGET_COLOUR, linestyle="--", label="target"))
    if answer is not None:
        point = answer.point
        label = f"{answer.name} = {_label(answer.name, answer.value, units)}"
        x = point.settling_time_s if speed_is_settling else point.bandwidth_Hz
        if x is not None and drawn_speed:
            lines.append(axes[0].plot([x], [point.total_rms_V / scale], "D", color=TARGET_COLOUR, label=label)[0])
        lines.append(
            axes[1].plot([answer.value], [point.total_rms_V / scale], "D", color=TARGET_COLOUR, label=label)[0]
        )
        axes[1].legend(loc="best", fontsize=8)
    for a in axes:
        a.grid(True, which="both", color="#e2e2e2")
    return TradeoffPlot(figure, axes, tuple(lines))

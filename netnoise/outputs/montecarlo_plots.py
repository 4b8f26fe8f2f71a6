"""Figures of a Monte Carlo result.  matplotlib is imported inside the functions only.

Every function takes ``ax=`` (a matplotlib Axes; a new figure when None) and
returns a :class:`MonteCarloPlot` holding what it drew, so a notebook can
restyle it or draw two results on one axes.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from netnoise.errors import UsageError

__all__ = ["MonteCarloPlot", "plot_total_histogram", "plot_density_band", "plot_montecarlo", "save_montecarlo_plot"]

SAVE_FORMATS = {".png": "png", ".svg": "svg", ".pdf": "pdf"}


@dataclass
class MonteCarloPlot:
    """What a plot function drew: its axes, figure and artists by role."""

    ax: Any
    figure: Any
    artists: dict[str, Any] = field(default_factory=dict)


def _axes(ax):
    if ax is None:
        from matplotlib.figure import Figure

        figure = Figure(figsize=(7, 4.5))
        ax = figure.add_subplot()
    return ax, ax.figure


def plot_total_histogram(result, *, ax=None, bins: int | str = "auto") -> MonteCarloPlot:
    """Histogram of the trials' total rms noise (µV), the target as a vertical line."""
    ax, figure = _axes(ax)
    micro = result.total_rms_V * 1e6
    counts, edges, patches = ax.hist(micro, bins=bins, color="tab:blue", alpha=0.75, label=f"{result.trials} trials")
    artists = {"counts": counts, "edges": edges, "patches": patches}
    if result.target_rms_V is not None:
        artists["target"] = ax.axvline(
            result.target_rms_V * 1e6, color="tab:red", label=f"target (yield {100 * result.yield_fraction:.1f} %)"
        )
    ax.set_xlabel("total output noise (µV rms)")
    ax.set_ylabel("trials")
    ax.legend(loc="best")
    return MonteCarloPlot(ax, figure, artists)


def plot_density_band(result, *, ax=None, low: float = 1.0, high: float = 99.0) -> MonteCarloPlot:
    """Output noise density (nV/√Hz) over frequency: the median of the trials
    inside the band between their ``low`` and ``high`` percentiles."""
    ax, figure = _axes(ax)
    points = result.density_percentiles((low, 50.0, high))
    rt = np.sqrt(points) * 1e9
    f = result.frequency_Hz
    band = ax.fill_between(f, rt[0], rt[2], color="tab:blue", alpha=0.25, label=f"{low:g} % to {high:g} % of trials")
    (median,) = ax.plot(f, rt[1], color="tab:blue", label="median")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlabel("frequency (Hz)")
    ax.set_ylabel("output noise density (nV/√Hz)")
    ax.legend(loc="best")
    return MonteCarloPlot(ax, figure, {"median": median, "band": band})


def plot_montecarlo(result) -> MonteCarloPlot:
    """Both figures side by side on a new figure (the density only when kept)."""
    from matplotlib.figure import Figure

    figure = Figure(figsize=(12, 4.5), layout="constrained")
    with_density = result.output_density is not None
    axes = figure.subplots(1, 2 if with_density else 1, squeeze=False)[0]
    drawn = plot_total_histogram(result, ax=axes[0]).artists
    if with_density:
        drawn.update(plot_density_band(result, ax=axes[1]).artists)
    return MonteCarloPlot(axes, figure, drawn)


def save_montecarlo_plot(result, path: str | os.PathLike) -> None:
    """Write :func:`plot_montecarlo` to ``path`` (PNG, SVG or PDF by extension), atomically."""
    from netnoise.outputs.export import atomic_write

    extension = os.path.splitext(os.fspath(path))[1].lower()
    if extension not in SAVE_FORMATS:
        raise UsageError(
            f"cannot write a plot to '{os.fspath(path)}': use a file name ending in {', '.join(SAVE_FORMATS)}"
        )
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    figure = plot_montecarlo(result).figure
    FigureCanvasAgg(figure)
    fmt = SAVE_FORMATS[extension]
    metadata = {"png": None, "svg": {"Date": None}, "pdf": {"CreationDate": None}}[fmt]
    atomic_write(path, lambda handle: figure.savefig(handle, format=fmt, dpi=150, metadata=metadata), binary=True)

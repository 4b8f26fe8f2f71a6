"""Plots of a noise result (the only module that uses matplotlib).

matplotlib is imported inside the functions, never at module level, so
``import netnoise`` and the command line stay light when no plot is asked for.

:func:`plot_noise` builds a :class:`matplotlib.figure.Figure` directly, without
pyplot, so it neither needs nor changes the interactive backend; a notebook
can restyle the returned figure or draw it with ``display(fig)``.
:func:`save_plot` renders through the non-interactive Agg canvas.

Layout: two stacked axes sharing a logarithmic frequency axis.

* upper -- total output noise density (heavy line) and the largest
  contributors (thin lines), amplitude in an SI-prefixed V/√Hz, log-log;
* lower -- output noise integrated from the band's low edge up to each
  frequency (rms), linear in an SI-prefixed volt, with the band total
  marked and annotated.

Band edges inside the plotted range are drawn on both axes.
"""

from __future__ import annotations

import os
from typing import TYPE_CHECKING

import numpy as np

from netnoise.constants import celsius
from netnoise.engformat import format_quantity, si_prefix_scale
from netnoise.errors import UsageError
from netnoise.outputs.export import atomic_write
from netnoise.results.result import NoiseResult

if TYPE_CHECKING:  # pragma: no cover
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

__all__ = ["plot_noise", "save_plot", "save_figure", "SAVE_FORMATS"]

#: File extensions :func:`save_plot` writes, with matplotlib's format name.
SAVE_FORMATS = {".png": "png", ".svg": "svg", ".pdf": "pdf"}

# Our own colours: an ink-dark total over muted earth and jewel tones.
TOTAL_COLOUR = "#1c2433"
CONTRIBUTOR_COLOURS = ("#b5473a", "#2f7f7a", "#c99a2e", "#6b5b95", "#5b8c3a", "#a05a8c", "#3f6fa6", "#8c6d46")
BAND_COLOUR = "#8a8a8a"
GRID_COLOUR = "#e2e2e2"
TOTAL_WIDTH = 2.6
CONTRIBUTOR_WIDTH = 1.2
# Line styles cycle with the colours, so contributors with equal curves (matched
# parts: two arms of a bridge, two input amplifiers) stay visible on each other.
CONTRIBUTOR_STYLES = ("-", (0, (5, 3)), (0, (1, 2)), "-.")

# gid values, so code (and tests) can find each drawn element.
GID_TOTAL = "total-density"
GID_CONTRIBUTOR = "contributor-density"
GID_CUMULATIVE = "cumulative-rms"
GID_BAND_TOTAL = "band-total"
GID_BAND_EDGE = "band-edge"


# --- data preparation -----------------------------------------------------
def _positive_grid(result: NoiseResult) -> np.ndarray:
    """Mask of grid points a log frequency axis can show (f > 0)."""
    return result.frequency_Hz > 0


def _amplitude(power_density: np.ndarray) -> np.ndarray:
    return np.sqrt(np.maximum(power_density, 0.0))


def _scale(values: np.ndarray | float) -> tuple[float, str]:
    """SI (scale, prefix) for the largest finite value."""
    array = np.asarray(values, dtype=float)
    finite = array[np.isfinite(array)]
    peak = float(finite.max()) if finite.size else 0.0
    return si_prefix_scale(peak)


def _top_contributors(result: NoiseResult, top: int) -> list[tuple[int, str]]:
    """(source index, legend label) of the ``top`` largest non-zero contributors."""
    order = np.argsort(-result.source_variance, kind="stable")
    shares = result.shares
    picked = []
    for k in order[:top]:
        if shares[k] <= 0.0:
            break
        picked.append((int(k), f"{result.source_names[k]} ({100.0 * shares[k]:.1f} %)"))
    return picked


# --- drawing, one function per thing drawn ---------------------------------
def _draw_density(ax: Axes, result: NoiseResult, top: int) -> None:
    show = _positive_grid(result)
    f = result.frequency_Hz[show]
    total = result.output_density_rt[show]
    scale, prefix = _scale(total)
    ax.plot(
        f,
        total / scale,
        color=TOTAL_COLOUR,
        linewidth=TOTAL_WIDTH,
        label=f"total ({format_quantity(result.total_rms, 'V')} rms)",
        gid=GID_TOTAL,
        alpha=0.8,
        zorder=2,  # under the contributors, so a dominant one stays visible on it
    )
    for n, (k, label) in enumerate(_top_contributors(result, top)):
        ax.plot(
            f,
            _amplitude(result.source_density[k][show]) / scale,
            color=CONTRIBUTOR_COLOURS[n % len(CONTRIBUTOR_COLOURS)],
            linestyle=CONTRIBUTOR_STYLES[n % len(CONTRIBUTOR_STYLES)],
            linewidth=CONTRIBUTOR_WIDTH if n % len(CONTRIBUTOR_STYLES) == 0 else CONTRIBUTOR_WIDTH + 0.4,
            label=label,
            gid=GID_CONTRIBUTOR,
            zorder=3,
        )
    ax.set_xscale("log")
    ax.set_yscale("log")
    peak = float(np.max(total, initial=0.0)) / scale
    if peak > 0:  # show 100 dB below the peak at most: tails far below it only squash the view
        ax.set_ylim(bottom=max(ax.get_ylim()[0], peak * 1e-5))
    ax.set_ylabel(f"output noise density ({prefix}V/√Hz)")
    _plain_log_labels(ax)


def _legend(ax: Axes) -> None:
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize="small", frameon=False)


def _plain_log_labels(ax: Axes) -> None:
    """Label the log density axis with plain numbers (30, 0.001) rather than powers."""
    from matplotlib.ticker import FuncFormatter, NullFormatter

    ax.yaxis.set_major_formatter(FuncFormatter(lambda value, _: f"{value:g}"))
    ax.yaxis.set_minor_formatter(NullFormatter())


def _draw_cumulative(ax: Axes, result: NoiseResult) -> None:
    show = _positive_grid(result)
    f = result.frequency_Hz[show]
    scale, prefix = _scale(max(result.total_rms, float(np.max(result.cumulative_rms, initial=0.0))))
    ax.plot(f, result.cumulative_rms[show] / scale, color=TOTAL_COLOUR, linewidth=TOTAL_WIDTH - 0.8, gid=GID_CUMULATIVE)
    total = result.total_rms / scale
    ax.axhline(total, color=CONTRIBUTOR_COLOURS[0], linewidth=0.9, linestyle="--", gid=GID_BAND_TOTAL)
    ax.annotate(
        f"band total {format_quantity(result.total_rms, 'V')} rms",
        xy=(f[-1], total) if f.size else (1.0, total),
        xytext=(-4, 3),
        textcoords="offset points",
        ha="right",
        va="bottom",
        fontsize="small",
        color=CONTRIBUTOR_COLOURS[0],
    )
    ax.set_xscale("log")
    ax.set_ylim(bottom=0.0, top=max(total, 1e-300) * 1.12)
    ax.set_ylabel(f"rms from {format_quantity(result.band_low_Hz, 'Hz')} ({prefix}V)")
    ax.set_xlabel("frequency (Hz)")


def _mark_band(ax: Axes, result: NoiseResult, *, label: bool) -> None:
    """Dotted verticals at the band edges that fall inside the plotted grid."""
    f = result.frequency_Hz[_positive_grid(result)]
    if f.size == 0:
        return
    edges = [result.band_low_Hz, result.band_high_Hz]
    slack = 1e-9  # grid ends may differ from the band edges by round-off
    visible = [e for e in edges if np.isfinite(e) and f[0] * (1 - slack) <= e <= f[-1] * (1 + slack)]
    for n, edge in enumerate(visible):
        ax.axvline(
            edge,
            color=BAND_COLOUR,
            linewidth=1.0,
            linestyle=":",
            gid=GID_BAND_EDGE,
            zorder=1,
            label="band edge" if (label and n == 0) else "_nolegend_",
        )


def _style(ax: Axes) -> None:
    ax.grid(True, which="major", color=GRID_COLOUR, linewidth=0.7)
    ax.grid(True, which="minor", color=GRID_COLOUR, linewidth=0.35)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)


def _heading(result: NoiseResult) -> str:
    import textwrap

    title = result.title.strip() or "noise"
    heading = f"{title}: output noise at {celsius(result.temperature_K):.1f} °C"
    return "\n".join(textwrap.wrap(heading, width=80))


def plot_noise(result: NoiseResult, *, top: int = 5) -> Figure:
    """Density and cumulative-rms plot of ``result``; returns the Figure.

    ``top`` is how many individual contributors get their own line.
    """
    from matplotlib.figure import Figure

    if top < 0:
        raise UsageError(f"top must be 0 or more, not {top}")
    fig = Figure(figsize=(7.5, 6.5), layout="constrained")
    density_ax, cumulative_ax = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": (3, 2)})
    _draw_density(density_ax, result, top)
    _mark_band(density_ax, result, label=True)
    _legend(density_ax)
    _draw_cumulative(cumulative_ax, result)
    _mark_band(cumulative_ax, result, label=False)
    for ax in (density_ax, cumulative_ax):
        _style(ax)
    fig.suptitle(_heading(result), fontsize="medium")
    return fig


def save_plot(result: NoiseResult, path: str | os.PathLike, *, top: int = 5) -> None:
    """Draw ``result`` and write it to ``path`` as PNG, SVG or PDF (chosen by
    the extension), atomically; any other extension is a UsageError."""
    extension = os.path.splitext(os.fspath(path))[1].lower()
    if extension not in SAVE_FORMATS:
        known = ", ".join(SAVE_FORMATS)
        raise UsageError(f"cannot write a plot to '{os.fspath(path)}': use a file name ending in {known}")
    save_figure(plot_noise(result, top=top), path)


def save_figure(fig: "Figure", path: str | os.PathLike) -> None:
    """Write any figure to ``path`` as PNG, SVG or PDF (by its extension),
    atomically, through the non-interactive Agg canvas."""
    extension = os.path.splitext(os.fspath(path))[1].lower()
    if extension not in SAVE_FORMATS:
        known = ", ".join(SAVE_FORMATS)
        raise UsageError(f"cannot write a plot to '{os.fspath(path)}': use a file name ending in {known}")
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    fmt = SAVE_FORMATS[extension]
    FigureCanvasAgg(fig)
    metadata = {"png": None, "svg": {"Date": None}, "pdf": {"CreationDate": None}}[fmt]
    atomic_write(path, lambda handle: fig.savefig(handle, format=fmt, dpi=150, metadata=metadata), binary=True)

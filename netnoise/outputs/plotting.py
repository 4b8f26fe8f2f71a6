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

Every plotting function takes ``ax=`` (an Axes; for :func:`plot_noise` a pair
of Axes or a Figure) and returns a :class:`NoisePlot` holding the figure, the
axes and the lines drawn.  A NoisePlot shows itself in a notebook
(``_repr_png_``) without ``%matplotlib`` and without pyplot.  Drawing a second
result on the same axes (a before/after) reuses the first one's scale.

The figure is laid out by fixed margins (no constrained layout: it is slow)
that keep each plotting area at least two-thirds of the figure's width; the
legend sits in the right-hand third, its names shortened from the left
(``…stage.R12``) to fit.  Log axes are labelled with plain numbers (no
mathtext), with the minor ticks labelled too when an axis spans under two
decades.
"""

from __future__ import annotations

import io
import math
import os
import weakref
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from netnoise.constants import celsius
from netnoise.engformat import format_quantity, si_prefix_scale
from netnoise.errors import CircuitError, UsageError
from netnoise.outputs.export import atomic_write
from netnoise.results.result import NoiseResult

if TYPE_CHECKING:  # pragma: no cover
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

__all__ = ["plot_noise", "plot_density", "plot_cumulative", "save_plot", "save_figure", "NoisePlot", "SAVE_FORMATS"]

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

# Fixed layout of the two-panel figure (fractions of the figure): the axes
# span LEFT..RIGHT (over two-thirds of the width), the legend the rest.
FIGURE_SIZE = (8.5, 6.5)
LEFT, RIGHT, BOTTOM, TOP, GAP = 0.08, 0.752, 0.08, 0.9, 0.06
#: Longest legend line; a longer entry puts its share on a second line, and a
#: name longer still keeps its end, after an ellipsis.
LEGEND_NAME_CHARS = 22
#: The density axis shows at most this ratio below its peak (100 dB in power).
DISPLAY_RANGE = 1e-5


# --- the returned handle ---------------------------------------------------
@dataclass(frozen=True, eq=False)
class NoisePlot:
    """What a plotting function drew: ``figure``, ``axes`` (the panels, top
    first) and ``lines`` (the curves, in drawing order).  In a notebook it
    displays as a PNG; ``savefig`` passes through to the figure."""

    figure: Any
    axes: tuple
    lines: tuple

    def __repr__(self) -> str:
        return f"<NoisePlot: {len(self.axes)} axes, {len(self.lines)} lines>"

    def _repr_png_(self) -> bytes:
        buffer = io.BytesIO()
        self.figure.savefig(buffer, format="png", dpi=100)
        return buffer.getvalue()

    def savefig(self, *args, **kwargs) -> None:
        self.figure.savefig(*args, **kwargs)


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


# The (scale, prefix) each axes was first drawn with, so a second result drawn
# on it lands on the same scale.
_AXIS_SCALES: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


# How many results were drawn on each axes: a later one gets dashed totals
# and the next colours, so a before/after can be told apart.
_DRAWS: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


def _next_draw(ax: Axes) -> int:
    count = _DRAWS.get(ax, 0)
    _DRAWS[ax] = count + 1
    if count:
        ax.autoscale(enable=True, axis="y")  # limits for every result drawn, not the first one's
    return count


def _axis_scale(ax: Axes, values) -> tuple[float, str]:
    if ax not in _AXIS_SCALES:
        _AXIS_SCALES[ax] = _scale(values)
    return _AXIS_SCALES[ax]


def _check_has_noise(result: NoiseResult) -> None:
    if not np.any(result.output_density > 0.0) or not result.total_variance > 0.0:
        raise CircuitError(
            "nothing to plot: no noise source reaches this output (every part is noiseless, or none is connected to it)"
        )


def _short(name: str, limit: int = LEGEND_NAME_CHARS) -> str:
    """``name`` cut to ``limit`` characters, keeping its end (the part's own
    name in a hierarchical one) after an ellipsis."""
    return name if len(name) <= limit else "…" + name[-(limit - 1) :]


def _row_label(result: NoiseResult, k: int) -> str:
    """A source's name, with its mechanism added where the name alone would not
    tell it from the element's other sources (``Rc1 (thermal)`` beside
    ``Rc1 (excess)``)."""
    name, element = result.source_names[k], result.source_elements[k]
    siblings = sum(1 for e in result.source_elements if e == element)
    if siblings > 1 and name == element:
        return f"{name} ({result.source_mechanisms[k]})"
    return name


def _fit(name: str, tail: str) -> str:
    """A legend entry ``name tail`` on one line when it is short enough, else
    the (shortened) name over the tail."""
    one_line = f"{name} {tail}"
    return one_line if len(one_line) <= LEGEND_NAME_CHARS else f"{_short(name)}\n{tail}"


def _top_contributors(result: NoiseResult, top: int, prefix: str = "") -> list[tuple[int, str]]:
    """(source index, legend label) of the ``top`` largest non-zero contributors."""
    order = np.argsort(-result.source_variance, kind="stable")
    shares = result.shares
    picked = []
    for k in order[:top]:
        if shares[k] <= 0.0:
            break
        picked.append((int(k), _fit(prefix + _row_label(result, int(k)), f"({100.0 * shares[k]:.1f} %)")))
    return picked


def _density_curves(result: NoiseResult, input_referred: bool) -> tuple[np.ndarray, np.ndarray, str, str]:
    """(total power density, per-source power density, unit, axis label)."""
    if not input_referred:
        return result.output_density, result.source_density, "V", "output noise density"
    referred = result.input_referred_density
    if referred is None:
        raise UsageError("an input-referred plot needs the result of an analysis with an input source (--input)")
    gain = result.gain
    assert gain is not None  # an input-referred density exists only with a gain
    with np.errstate(divide="ignore", invalid="ignore"):
        per_source = np.where(gain > 0, result.source_density / np.where(gain > 0, gain, 1.0) ** 2, np.inf)
    return referred, per_source, result.input_unit or "V", "input-referred noise density"


# --- drawing, one function per thing drawn ---------------------------------
def _draw_density(
    ax: Axes, result: NoiseResult, top: int, *, input_referred: bool = False, label: str | None = None
) -> list:
    show = _positive_grid(result)
    f = result.frequency_Hz[show]
    power, per_source, unit, what = _density_curves(result, input_referred)
    total = _amplitude(power[show])
    total[~np.isfinite(power[show])] = np.nan  # a zero of the signal gain: a gap, not a spike
    scale, prefix = _axis_scale(ax, total)
    prefix_label = f"{label}: " if label else ""
    draw = _next_draw(ax)
    lines = ax.plot(
        f,
        total / scale,
        color=TOTAL_COLOUR,
        linewidth=TOTAL_WIDTH,
        linestyle="-" if draw == 0 else (0, (6, 2)),
        label=_fit(
            f"{prefix_label}total",
            f"({format_quantity(result.total_rms, 'V')} rms{' at output' if input_referred else ''})",
        ),
        gid=GID_TOTAL,
        alpha=0.8,
        zorder=2,  # under the contributors, so a dominant one stays visible on it
    )
    peak = float(np.nanmax(total, initial=0.0)) / scale
    floor = peak * DISPLAY_RANGE
    n = 3 * draw
    for k, name in _top_contributors(result, top, prefix_label):
        curve = _amplitude(per_source[k][show]) / scale
        curve[~np.isfinite(per_source[k][show])] = np.nan
        if not np.nanmax(curve, initial=0.0) > floor:  # wholly under the display floor: neither drawn nor listed
            continue
        lines += ax.plot(
            f,
            curve,
            color=CONTRIBUTOR_COLOURS[n % len(CONTRIBUTOR_COLOURS)],
            linestyle=CONTRIBUTOR_STYLES[n % len(CONTRIBUTOR_STYLES)],
            linewidth=CONTRIBUTOR_WIDTH if n % len(CONTRIBUTOR_STYLES) == 0 else CONTRIBUTOR_WIDTH + 0.4,
            label=name,
            gid=GID_CONTRIBUTOR,
            zorder=3,
        )
        n += 1
    ax.set_xscale("log")
    ax.set_yscale("log")
    if peak > 0:  # show 100 dB below the peak at most: tails far below it only squash the view
        bottom, top_ = ax.get_ylim()
        bottom = max(bottom, floor)
        if top_ / bottom < 10.0:  # under a decade: widen to one about the middle, so ticks can be labelled
            middle = math.sqrt(top_ * bottom)
            bottom, top_ = middle / math.sqrt(10.0), middle * math.sqrt(10.0)
        ax.set_ylim(bottom, top_)
    ax.set_ylabel(f"{what} ({prefix}{unit}/√Hz)")
    _plain_log_labels(ax.yaxis, *ax.get_ylim())
    return lines


def _legend(ax: Axes) -> None:
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize="small", frameon=False)


def _plain(value: float) -> str:
    return f"{value:g}"


def _frequency_tick(value: float) -> str:
    return format_quantity(value, "", 3).replace(" ", "")


def _plain_log_labels(axis, low: float, high: float, text=_plain) -> None:
    """Label a log axis with plain numbers (30, 0.001, 10k), never mathtext;
    under two decades the minor ticks are labelled too (2, 3, 5 between
    decades; every one under a decade)."""
    from matplotlib.ticker import FuncFormatter, NullFormatter

    axis.set_major_formatter(FuncFormatter(lambda value, _: text(value)))
    decades = math.log10(high / low) if low > 0 and high > low else 0.0
    if decades >= 2.0:
        axis.set_minor_formatter(NullFormatter())
        return
    wanted = {2, 3, 5} if decades > 1.0 else set(range(2, 10))

    def minor(value: float, _) -> str:
        if value <= 0:
            return ""
        mantissa = value / 10.0 ** math.floor(math.log10(value) + 1e-9)
        return text(value) if round(mantissa) in wanted and abs(mantissa - round(mantissa)) < 1e-6 else ""

    axis.set_minor_formatter(FuncFormatter(minor))


def _draw_cumulative(ax: Axes, result: NoiseResult, *, label: str | None = None) -> list:
    show = _positive_grid(result)
    f = result.frequency_Hz[show]
    scale, prefix = _axis_scale(ax, max(result.total_rms, float(np.max(result.cumulative_rms, initial=0.0))))
    draw = _next_draw(ax)
    lines = ax.plot(
        f,
        result.cumulative_rms[show] / scale,
        color=TOTAL_COLOUR,
        linewidth=TOTAL_WIDTH - 0.8,
        gid=GID_CUMULATIVE,
        linestyle="-" if draw == 0 else (0, (6, 2)),
        label=label or "_nolegend_",
    )
    total = result.total_rms / scale
    lines += [ax.axhline(total, color=CONTRIBUTOR_COLOURS[0], linewidth=0.9, linestyle="--", gid=GID_BAND_TOTAL)]
    ax.annotate(
        f"{label + ': ' if label else ''}band total {format_quantity(result.total_rms, 'V')} rms",
        xy=(f[-1], total) if f.size else (1.0, total),
        xytext=(-4, 3),
        textcoords="offset points",
        ha="right",
        va="bottom",
        fontsize="small",
        color=CONTRIBUTOR_COLOURS[0],
    )
    ax.set_xscale("log")
    highest = max(total, 1e-300) * 1.12
    ax.set_ylim(bottom=0.0, top=max(highest, ax.get_ylim()[1]) if draw else highest)
    ax.set_ylabel(f"rms from {format_quantity(result.band_low_Hz, 'Hz')} ({prefix}V)")
    ax.set_xlabel("frequency (Hz)")
    return lines


def _mark_band(ax: Axes, result: NoiseResult, *, label: bool) -> list:
    """Dotted verticals at the band edges that fall inside the plotted grid."""
    f = result.frequency_Hz[_positive_grid(result)]
    if f.size == 0:
        return []
    edges = [result.band_low_Hz, result.band_high_Hz]
    slack = 1e-9  # grid ends may differ from the band edges by round-off
    visible = [e for e in edges if np.isfinite(e) and f[0] * (1 - slack) <= e <= f[-1] * (1 + slack)]
    return [
        ax.axvline(
            edge,
            color=BAND_COLOUR,
            linewidth=1.0,
            linestyle=":",
            gid=GID_BAND_EDGE,
            zorder=1,
            label="band edge" if (label and n == 0) else "_nolegend_",
        )
        for n, edge in enumerate(visible)
    ]


def _style(ax: Axes, result: NoiseResult) -> None:
    ax.grid(True, which="major", color=GRID_COLOUR, linewidth=0.7)
    ax.grid(True, which="minor", color=GRID_COLOUR, linewidth=0.35)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    low, high = ax.get_xlim()
    _plain_log_labels(ax.xaxis, low, high, _frequency_tick)


def _heading(result: NoiseResult, input_referred: bool = False) -> str:
    import textwrap

    title = result.title.strip() or "noise"
    what = f"noise referred to {result.input_source}" if input_referred else "output noise"
    heading = f"{title}: {what} at {celsius(result.temperature_K):.1f} °C"
    return "\n".join(textwrap.wrap(heading, width=80))


def _new_figure(panels: int):
    from matplotlib.figure import Figure

    fig = Figure(figsize=FIGURE_SIZE if panels == 2 else (FIGURE_SIZE[0], 4.0))
    top = TOP if panels == 2 else 0.88
    bottom = BOTTOM if panels == 2 else 0.13
    fig.subplots_adjust(left=LEFT, right=RIGHT, bottom=bottom, top=top, hspace=GAP / (top - bottom) * 3)
    return fig


def _check_top(top: int) -> None:
    if top < 0:
        raise UsageError(f"top must be 0 or more, not {top}")


def _is_axes(value) -> bool:
    from matplotlib.axes import Axes

    return isinstance(value, Axes)


def plot_density(
    result: NoiseResult, *, ax: Axes | None = None, top: int = 5, input_referred: bool = False, label: str | None = None
) -> NoisePlot:
    """The density panel alone: total and the ``top`` largest contributors
    (output-referred, or divided by |H(f)|² with ``input_referred``), on
    ``ax`` or on a new figure.  ``label`` prefixes the legend entries (to tell
    two results on one axes apart)."""
    _check_top(top)
    _check_has_noise(result)
    if ax is None:
        fig = _new_figure(1)
        ax = fig.subplots()
        fig.suptitle(_heading(result, input_referred), fontsize="medium")
    elif not _is_axes(ax):
        raise UsageError("plot_density(ax=...) takes one matplotlib Axes")
    lines = _draw_density(ax, result, top, input_referred=input_referred, label=label)
    lines += _mark_band(ax, result, label=label is None)
    _legend(ax)
    _style(ax, result)
    return NoisePlot(ax.figure, (ax,), tuple(lines))


def plot_cumulative(result: NoiseResult, *, ax: Axes | None = None, label: str | None = None) -> NoisePlot:
    """The integrated-noise panel alone, on ``ax`` or on a new figure."""
    _check_has_noise(result)
    if ax is None:
        fig = _new_figure(1)
        ax = fig.subplots()
        fig.suptitle(_heading(result), fontsize="medium")
    elif not _is_axes(ax):
        raise UsageError("plot_cumulative(ax=...) takes one matplotlib Axes")
    lines = _draw_cumulative(ax, result, label=label)
    lines += _mark_band(ax, result, label=False)
    if label:
        _legend(ax)
    _style(ax, result)
    return NoisePlot(ax.figure, (ax,), tuple(lines))


def _panels(ax):
    """(figure, density axes, cumulative axes, made here) from ``ax``: None,
    a Figure or a pair of Axes."""
    from matplotlib.figure import Figure, SubFigure

    if ax is None:
        fig = _new_figure(2)
        density_ax, cumulative_ax = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": (3, 2)})
        return fig, density_ax, cumulative_ax, True
    if isinstance(ax, (Figure, SubFigure)):
        density_ax, cumulative_ax = ax.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": (3, 2)})
        return ax, density_ax, cumulative_ax, True
    try:
        density_ax, cumulative_ax = ax
    except (TypeError, ValueError):
        raise UsageError(
            "plot_noise draws two panels: give ax=(upper, lower) axes or a Figure; "
            "plot_density(ax=...) and plot_cumulative(ax=...) draw one"
        ) from None
    if not (_is_axes(density_ax) and _is_axes(cumulative_ax)):
        raise UsageError("plot_noise(ax=...) takes a pair of matplotlib Axes or a Figure")
    return density_ax.figure, density_ax, cumulative_ax, False


def plot_noise(
    result: NoiseResult, *, top: int = 5, ax=None, input_referred: bool = False, label: str | None = None
) -> NoisePlot:
    """Density and cumulative-rms plot of ``result``; returns a :class:`NoisePlot`.

    ``top`` is how many individual contributors get their own line.
    ``ax``: None (a new figure), a Figure to draw in, or a pair of Axes
    (upper: density, lower: cumulative) -- give the axes of an earlier plot to
    draw a second result over it, with ``label`` telling them apart.
    ``input_referred`` draws the density panel divided by |H(f)|² (needs an
    input source).  A result without any noise is a CircuitError.
    """
    _check_top(top)
    _check_has_noise(result)
    if input_referred:
        _density_curves(result, True)  # refuse before drawing anything
    fig, density_ax, cumulative_ax, made = _panels(ax)
    lines = _draw_density(density_ax, result, top, input_referred=input_referred, label=label)
    lines += _mark_band(density_ax, result, label=label is None)
    _legend(density_ax)
    lines += _draw_cumulative(cumulative_ax, result, label=label)
    lines += _mark_band(cumulative_ax, result, label=False)
    if label:
        _legend(cumulative_ax)
    for ax_ in (density_ax, cumulative_ax):
        _style(ax_, result)
    if made:
        fig.suptitle(_heading(result, input_referred), fontsize="medium")
    return NoisePlot(fig, (density_ax, cumulative_ax), tuple(lines))


def save_plot(result: NoiseResult, path: str | os.PathLike, *, top: int = 5, input_referred: bool = False) -> None:
    """Draw ``result`` and write it to ``path`` as PNG, SVG or PDF (chosen by
    the extension), atomically; any other extension is a UsageError."""
    extension = os.path.splitext(os.fspath(path))[1].lower()
    if extension not in SAVE_FORMATS:
        known = ", ".join(SAVE_FORMATS)
        raise UsageError(f"cannot write a plot to '{os.fspath(path)}': use a file name ending in {known}")
    fmt = SAVE_FORMATS[extension]
    data = plot_bytes(result, fmt, top=top, input_referred=input_referred)
    atomic_write(path, lambda handle: handle.write(data), binary=True)


def plot_bytes(result: NoiseResult, fmt: str, *, top: int = 5, input_referred: bool = False) -> bytes:
    """The plot of ``result`` as the bytes of a ``png``, ``svg`` or ``pdf`` file
    (no dates inside, so a file is reproducible)."""
    return figure_bytes(plot_noise(result, top=top, input_referred=input_referred).figure, fmt)


def figure_bytes(fig: Figure, fmt: str) -> bytes:
    """Any figure as the bytes of a ``png``, ``svg`` or ``pdf`` file, through the
    non-interactive Agg canvas (no dates inside)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    FigureCanvasAgg(fig)
    metadata = {"png": None, "svg": {"Date": None}, "pdf": {"CreationDate": None}}[fmt]
    buffer = io.BytesIO()
    fig.savefig(buffer, format=fmt, dpi=150, metadata=metadata)
    return buffer.getvalue()


def save_figure(fig: Figure, path: str | os.PathLike) -> None:
    """Write any figure (a study's plot, say) to ``path`` as PNG, SVG or PDF, by its extension, atomically."""
    extension = os.path.splitext(os.fspath(path))[1].lower()
    if extension not in SAVE_FORMATS:
        known = ", ".join(SAVE_FORMATS)
        raise UsageError(f"cannot write a plot to '{os.fspath(path)}': use a file name ending in {known}")
    data = figure_bytes(fig, SAVE_FORMATS[extension])
    atomic_write(path, lambda handle: handle.write(data), binary=True)

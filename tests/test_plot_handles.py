"""Issue 15: plots a notebook and a review can use -- handles, ax=, readable
ticks, legends that leave the plot its room, no plot of nothing.  Checked by
data and labels (and the layout's extents), not pixels."""

from __future__ import annotations

import dataclasses
import math
import sys

import numpy as np
import pytest

matplotlib = pytest.importorskip("matplotlib")
matplotlib.use("Agg")

import _output_samples as samples  # noqa: E402  (tests/ is on sys.path, conftest.py)
from matplotlib.backends.backend_agg import FigureCanvasAgg  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from netnoise.errors import CircuitError, UsageError  # noqa: E402
from netnoise.outputs import plotting  # noqa: E402


def _labels(ax, gid):
    return [line.get_label() for line in ax.get_lines() if line.get_gid() == gid]


def _drawn(figure):
    FigureCanvasAgg(figure)
    figure.canvas.draw()
    return figure.canvas.get_renderer()


def test_handle_holds_figure_axes_and_lines_and_shows_as_png():
    figures_before = sys.modules["matplotlib.pyplot"].get_fignums() if "matplotlib.pyplot" in sys.modules else None
    handle = plotting.plot_noise(samples.resistors())
    assert isinstance(handle.figure, Figure) and len(handle.axes) == 2
    assert handle.axes == tuple(handle.figure.axes)
    gids = [line.get_gid() for line in handle.lines]
    assert gids.count(plotting.GID_TOTAL) == 1 and gids.count(plotting.GID_CONTRIBUTOR) == 3
    assert gids.count(plotting.GID_CUMULATIVE) == 1
    png = handle._repr_png_()
    assert png.startswith(b"\x89PNG")
    width, height = int.from_bytes(png[16:20], "big"), int.from_bytes(png[20:24], "big")  # PNG IHDR
    assert (width, height) == (850, 650)  # 8.5 × 6.5 in at 100 dpi
    # no pyplot figure left behind (pyplot not even imported, if no other test did)
    if figures_before is None:
        assert "matplotlib.pyplot" not in sys.modules
    else:
        assert sys.modules["matplotlib.pyplot"].get_fignums() == figures_before


def test_second_result_on_the_same_axes_keeps_the_first_scale():
    first = plotting.plot_noise(samples.resistors(), label="before")
    louder = samples.white(density_rt=3e-6)  # on its own axes this would be drawn in µV/√Hz
    second = plotting.plot_noise(louder, ax=first.axes, label="after")
    assert second.figure is first.figure and second.axes == first.axes
    totals = [line for line in first.axes[0].get_lines() if line.get_gid() == plotting.GID_TOTAL]
    assert len(totals) == 2
    np.testing.assert_allclose(totals[1].get_ydata(), 3e-6 / 1e-9, rtol=1e-12)  # still nV/√Hz
    assert totals[1].get_linestyle() != totals[0].get_linestyle()
    texts = [t.get_text() for t in first.axes[0].get_legend().get_texts()]
    assert any(t.startswith("before: total") for t in texts) and any(t.startswith("after: total") for t in texts)
    top = first.axes[1].get_ylim()[1]
    assert top >= louder.total_rms / 1e-6  # the integrated panel shows both totals (µV, the first one's scale)


def test_ax_takes_a_figure_or_single_axes_for_one_panel():
    fig = Figure()
    handle = plotting.plot_noise(samples.resistors(), ax=fig)
    assert handle.figure is fig and len(fig.axes) == 2
    single = Figure().subplots()
    density = plotting.plot_density(samples.resistors(), ax=single)
    assert density.axes == (single,) and _labels(single, plotting.GID_TOTAL)
    cumulative = plotting.plot_cumulative(samples.resistors(), ax=Figure().subplots())
    assert [line.get_gid() for line in cumulative.lines][:2] == [plotting.GID_CUMULATIVE, plotting.GID_BAND_TOTAL]
    with pytest.raises(UsageError, match="two panels"):
        plotting.plot_noise(samples.resistors(), ax=Figure().subplots())


def _visible_tick_labels(ax, figure):
    _drawn(figure)
    low, high = ax.get_ylim()
    labels = []
    for minor in (False, True):
        for tick in ax.yaxis.get_major_ticks() if not minor else ax.yaxis.get_minor_ticks():
            if low <= tick.get_loc() <= high and tick.label1.get_visible() and tick.label1.get_text():
                labels.append(tick.label1.get_text())
    return labels


def test_a_flat_spectrum_gets_several_plain_tick_labels():
    handle = plotting.plot_noise(samples.white(density_rt=756e-9))
    ax = handle.axes[0]
    labels = _visible_tick_labels(ax, handle.figure)
    assert len(labels) >= 4, labels
    assert not any("$" in text for text in labels)  # plain text, no mathtext
    low, high = ax.get_ylim()
    assert low < 756 < high and 1.0 - 1e-9 <= math.log10(high / low) < 2.0  # at least a decade shown


def test_a_wide_span_labels_only_the_decades():
    handle = plotting.plot_noise(samples.rc_unbounded())
    ax = handle.axes[0]
    low, high = ax.get_ylim()
    assert math.log10(high / low) > 2
    for label in _visible_tick_labels(ax, handle.figure):
        assert float(label) == pytest.approx(10.0 ** round(math.log10(float(label))), rel=1e-9)
    frequency_labels = [t.get_text() for t in handle.axes[1].get_xticklabels() if t.get_text()]
    assert "1k" in frequency_labels and "1M" in frequency_labels  # engineering prefixes, not powers of ten


def _renamed(result, names, elements):
    return dataclasses.replace(result, source_names=names, source_elements=elements)


def test_long_names_leave_the_axes_two_thirds_of_the_figure():
    long = "Xfront.Xpreamp.Xsecond_stage.Rfeedback_network"
    result = _renamed(samples.resistors(), (long + " (excess)", long, "Xother.R3"), (long, long, "Xother.R3"))
    handle = plotting.plot_noise(result, label="design B")
    renderer = _drawn(handle.figure)
    width = handle.figure.bbox.width
    for ax in handle.axes:
        assert ax.get_window_extent(renderer).width / width >= 2 / 3
    legend = handle.axes[0].get_legend().get_window_extent(renderer)
    assert legend.x1 <= width  # the whole legend is on the figure
    texts = [t.get_text() for t in handle.axes[0].get_legend().get_texts()]
    assert any(t.startswith("…") and "(excess)" in t for t in texts)  # the end of the name is kept


def test_a_source_named_as_its_element_gets_its_mechanism_beside_its_sibling():
    result = _renamed(samples.resistors(), ("Rc1 (excess)", "Rc1", "R3"), ("Rc1", "Rc1", "R3"))
    result = dataclasses.replace(result, source_mechanisms=("excess", "thermal", "thermal"))
    labels = _labels(plotting.plot_noise(result).axes[0], plotting.GID_CONTRIBUTOR)
    assert labels == ["R3 (75.0 %)", "Rc1 (thermal) (20.0 %)", "Rc1 (excess) (5.0 %)"]


def test_a_curve_under_the_display_floor_gets_no_legend_entry():
    base = samples.resistors()
    density = np.array(base.source_density)
    density[0] *= 1e-12  # R1 at 120 dB under the total: below the 100 dB window
    variance = np.array(base.source_variance)
    variance[0] *= 1e-12
    result = dataclasses.replace(base, source_density=density, source_variance=variance)
    ax = plotting.plot_noise(result).axes[0]
    labels = _labels(ax, plotting.GID_CONTRIBUTOR)
    assert [label.split(" ")[0] for label in labels] == ["R3", "R2"]
    assert not any(t.get_text().startswith("R1") for t in ax.get_legend().get_texts())


def test_no_noise_is_a_message_not_a_plot():
    silent = samples.white(
        source_density=np.zeros((1, 41)), source_variance=np.zeros(1), cumulative_variance=np.zeros(41)
    )
    for draw in (plotting.plot_noise, plotting.plot_density, plotting.plot_cumulative):
        with pytest.raises(CircuitError, match="no noise source reaches this output"):
            draw(silent)


def test_input_referred_density_option():
    result = samples.resistors(gain=2.0)
    handle = plotting.plot_noise(result, input_referred=True)
    ax = handle.axes[0]
    (total,) = [line for line in ax.get_lines() if line.get_gid() == plotting.GID_TOTAL]
    # flat gain 2: input-referred density is the output density / 2 (definition), in nV/√Hz
    np.testing.assert_allclose(total.get_ydata(), np.sqrt(result.input_referred_density) / 1e-9, rtol=1e-12)
    np.testing.assert_allclose(total.get_ydata(), result.output_density_rt / 2 / 1e-9, rtol=1e-12)
    assert ax.get_ylabel() == "input-referred noise density (nV/√Hz)"
    assert handle.figure.get_suptitle().startswith("three resistors: noise referred to VIN")
    with pytest.raises(UsageError, match="input source"):
        plotting.plot_noise(samples.white(), input_referred=True)

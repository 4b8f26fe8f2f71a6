"""Plots (netnoise.plotting): checked by their data and labels, not pixels."""

from __future__ import annotations

import dataclasses
import os

import numpy as np
import pytest

matplotlib = pytest.importorskip("matplotlib")
matplotlib.use("Agg")

import _output_samples as samples  # tests/ is on sys.path (conftest.py)

from netnoise.errors import UsageError  # noqa: E402
from netnoise.outputs import plotting  # noqa: E402


def _lines(ax, gid):
    return [line for line in ax.get_lines() if line.get_gid() == gid]


@pytest.fixture
def resistors_figure():
    result = samples.resistors()
    return result, plotting.plot_noise(result, top=5)


def test_two_stacked_axes_share_a_log_frequency_axis(resistors_figure):
    _, fig = resistors_figure
    density_ax, cumulative_ax = fig.axes
    assert density_ax.get_xscale() == "log" and density_ax.get_yscale() == "log"
    assert cumulative_ax.get_xscale() == "log" and cumulative_ax.get_yscale() == "linear"
    assert density_ax.get_shared_x_axes().joined(density_ax, cumulative_ax)
    assert cumulative_ax.get_xlabel() == "frequency (Hz)"


def test_total_density_line_is_the_result_scaled_to_nano(resistors_figure):
    result, fig = resistors_figure
    density_ax = fig.axes[0]
    (total,) = _lines(density_ax, plotting.GID_TOTAL)
    np.testing.assert_allclose(total.get_xdata(), result.frequency_Hz, rtol=1e-15)
    np.testing.assert_allclose(total.get_ydata(), result.output_density_rt / 1e-9, rtol=1e-12)
    assert density_ax.get_ylabel() == "output noise density (nV/√Hz)"
    assert total.get_linewidth() > max(line.get_linewidth() for line in _lines(density_ax, plotting.GID_CONTRIBUTOR))


def test_contributor_lines_in_rank_order_with_shares(resistors_figure):
    result, fig = resistors_figure
    lines = _lines(fig.axes[0], plotting.GID_CONTRIBUTOR)
    # shares R/ΣR: 75 %, 20 %, 5 % (sample construction)
    assert [line.get_label() for line in lines] == ["R3 (75.0 %)", "R2 (20.0 %)", "R1 (5.0 %)"]
    np.testing.assert_allclose(lines[0].get_ydata(), np.sqrt(result.source_density[2]) / 1e-9, rtol=1e-12)
    legend_texts = [text.get_text() for text in fig.axes[0].get_legend().get_texts()]
    assert "R3 (75.0 %)" in legend_texts and legend_texts[0].startswith("total (3.64 µV rms")


def test_top_limits_the_contributor_lines():
    fig = plotting.plot_noise(samples.many(), top=2)
    labels = [line.get_label() for line in _lines(fig.axes[0], plotting.GID_CONTRIBUTOR)]
    assert labels == ["R20 (9.5 %)", "R19 (9.0 %)"]  # 20/210, 19/210 (arithmetic)


def test_cumulative_curve_ends_at_the_total(resistors_figure):
    result, fig = resistors_figure
    cumulative_ax = fig.axes[1]
    (curve,) = _lines(cumulative_ax, plotting.GID_CUMULATIVE)
    np.testing.assert_allclose(curve.get_ydata(), result.cumulative_rms / 1e-6, rtol=1e-12)
    assert curve.get_ydata()[-1] == pytest.approx(result.total_rms / 1e-6, rel=1e-9)
    assert curve.get_ydata()[0] == 0.0  # integrated from the band's low edge (1 Hz, the grid's start)
    (band_total,) = _lines(cumulative_ax, plotting.GID_BAND_TOTAL)
    assert band_total.get_ydata()[0] == pytest.approx(result.total_rms / 1e-6, rel=1e-12)
    assert "(µV)" in cumulative_ax.get_ylabel() and "1 Hz" in cumulative_ax.get_ylabel()
    annotations = [child.get_text() for child in cumulative_ax.texts]
    assert annotations == ["band total 3.64 µV rms"]


def test_band_edges_marked_on_both_axes(resistors_figure):
    _, fig = resistors_figure
    for ax in fig.axes:
        edges = sorted(line.get_xdata()[0] for line in _lines(ax, plotting.GID_BAND_EDGE))
        assert edges == pytest.approx([1.0, 10e3], rel=1e-12)


def test_unbounded_band_draws_no_edge_outside_the_grid():
    # band 0..∞ over a 1 Hz..100 MHz grid: neither edge is inside the plot
    fig = plotting.plot_noise(samples.rc_unbounded())
    assert all(not _lines(ax, plotting.GID_BAND_EDGE) for ax in fig.axes)
    # kT/C for 1 nF at 300 K = 2.03 µV (common practice)
    assert fig.axes[1].texts[0].get_text() == "band total 2.04 µV rms"


def test_zero_frequency_is_left_off_the_log_axis():
    result = samples.white(low=0.0, high=4.0)  # 100 nV/√Hz over 4 Hz = 200 nV (common practice)
    fig = plotting.plot_noise(result)
    (total,) = _lines(fig.axes[0], plotting.GID_TOTAL)
    np.testing.assert_allclose(total.get_xdata(), result.frequency_Hz[1:], rtol=1e-15)
    assert fig.axes[1].texts[0].get_text() == "band total 200 nV rms"


@pytest.mark.parametrize("suffix, magic", [(".png", b"\x89PNG"), (".svg", b"<?xml"), (".pdf", b"%PDF")])
def test_save_plot_by_extension(tmp_path, suffix, magic):
    target = tmp_path / f"noise{suffix}"
    plotting.save_plot(samples.resistors(), target)
    assert target.read_bytes().startswith(magic)
    assert os.listdir(tmp_path) == [target.name]


def test_save_plot_refuses_other_extensions(tmp_path):
    with pytest.raises(UsageError, match=".png"):
        plotting.save_plot(samples.white(), tmp_path / "noise.jpg")
    assert os.listdir(tmp_path) == []


def test_failed_save_leaves_no_file(tmp_path, monkeypatch):
    from matplotlib.figure import Figure

    def broken_savefig(self, *args, **kwargs):
        raise RuntimeError("renderer failed")

    monkeypatch.setattr(Figure, "savefig", broken_savefig)
    with pytest.raises(RuntimeError):
        plotting.save_plot(samples.white(), tmp_path / "noise.png")
    assert os.listdir(tmp_path) == []


def test_band_edge_within_round_off_of_the_grid_end_is_drawn():
    result = samples.white(low=1.0, high=5.0)
    nudged = dataclasses.replace(result, frequency_Hz=result.frequency_Hz * (1 + 4e-16) + 2e-16)
    fig = plotting.plot_noise(nudged)
    edges = sorted(line.get_xdata()[0] for line in _lines(fig.axes[0], plotting.GID_BAND_EDGE))
    assert edges == pytest.approx([1.0, 5.0], rel=1e-12)


def test_a_noise_figure_adds_no_panel():
    # issue 3: the plot keeps its two panels when the result carries a noise figure
    result = samples.front_end()
    fig = plotting.plot_noise(result, top=5)
    assert len(fig.axes) == 2
    labels = [line.get_label() for line in _lines(fig.axes[0], plotting.GID_CONTRIBUTOR)]
    # one line per noise source, amplifier sources separately; shares by sample construction
    assert labels == ["Rs (50.0 %)", "Xu1 (voltage) (30.0 %)", "Xu1 (in+) (10.0 %)", "R1 (10.0 %)"]

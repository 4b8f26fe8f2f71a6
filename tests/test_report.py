"""The plain-text noise budget (netnoise.report)."""

from __future__ import annotations

import dataclasses
import importlib.util
import math
import pathlib
import sys

import numpy as np
import pytest
from scipy.constants import k as BOLTZMANN

from netnoise.engformat import format_quantity
from netnoise.errors import UsageError
from netnoise.report import BAR_WIDTH, CAUTION, format_report


def _load_samples():
    name = "_netnoise_output_samples"
    if name not in sys.modules:
        spec = importlib.util.spec_from_file_location(name, pathlib.Path(__file__).with_name("_output_samples.py"))
        module = importlib.util.module_from_spec(spec)
        sys.modules[name] = module
        spec.loader.exec_module(module)
    return sys.modules[name]


samples = _load_samples()


def _table_rows(text: str) -> list[str]:
    """The data rows of the budget table (between its rule and the blank line)."""
    lines = text.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith("Budget")) + 4
    rows = []
    for line in lines[start:]:
        if not line.strip():
            break
        rows.append(line)
    return rows


def test_white_source_total_and_peak_to_peak():
    # 100 nV/√Hz white over 4 Hz -> 200 nV rms (common practice);
    # peak-to-peak ≈ 6.6 × rms = 1.32 µV (common practice).
    text = format_report(samples.white())
    assert "200 nV rms" in text
    assert "≈ 1.32 µV" in text
    assert "6.6 σ peak-to-peak, common practice" in text


def test_temperature_in_celsius_and_kelvin():
    # 300 K = 26.85 °C (kelvin offset 273.15, by definition)
    text = format_report(samples.white())
    assert "26.85 °C" in text and "300.00 K" in text


def test_bounded_band_is_low_to_high():
    text = format_report(samples.white())
    assert "1 Hz .. 5 Hz" in text
    assert "∞" not in text


def test_unbounded_band_says_infinite_bandwidth():
    text = format_report(samples.rc_unbounded())
    assert "0 Hz .. ∞" in text
    assert "to infinite bandwidth (exact)" in text


def test_spot_density_of_a_1k_resistor():
    # √(4kTR) for 1 kΩ at 300 K = 4.07 nV/√Hz (Johnson 1928 / Nyquist 1928, k from scipy)
    density = math.sqrt(4 * BOLTZMANN * 300.0 * 1e3)
    assert density == pytest.approx(4.07e-9, rel=2e-3)
    text = format_report(samples.rc_unbounded())
    line = next(line for line in text.splitlines() if line.strip().startswith("at") and " 1 Hz" in line)
    assert line.endswith("4.07 nV/√Hz")


def test_spot_densities_at_each_decade_of_the_grid():
    text = format_report(samples.resistors())  # grid 1 Hz .. 10 kHz
    spots = [line.split()[1] + " " + line.split()[2] for line in text.splitlines() if line.startswith("  at ")]
    assert spots == ["1 Hz", "10 Hz", "100 Hz", "1 kHz", "10 kHz"]


def test_budget_ranks_dominant_source_first():
    # shares are R/ΣR for equal gains: 15/20, 4/20, 1/20 (from the sample's construction)
    text = format_report(samples.resistors())
    rows = _table_rows(text)
    assert [row.split()[1] for row in rows] == ["R3", "R2", "R1"]
    assert "75.0 %" in rows[0] and "20.0 %" in rows[1] and "5.0 %" in rows[2]
    assert rows[-1].split()[-2] == "%" and "100.0 %" in rows[-1]  # cumulative reaches 100 %
    assert "Dominant source: R3" in text and "75.0 %" in text.split("Dominant source:")[1]


def test_share_bar_is_proportional():
    rows = _table_rows(format_report(samples.resistors()))
    bars = [row.split()[-1] for row in rows]
    assert bars[0] == "#" * round(0.75 * BAR_WIDTH)
    assert len(bars[0]) > len(bars[1]) > 0


def test_totals_with_an_input_source():
    result = samples.resistors()
    # ΣR = 20 kΩ, gain 2, band 1 Hz..10 kHz: v² = 4kT·ΣR·gain²·(f_hi - f_lo) (Johnson/Nyquist; white noise)
    expected_rms = math.sqrt(4 * BOLTZMANN * 300.0 * 20e3 * 4.0 * (10e3 - 1.0))
    assert result.total_rms == pytest.approx(expected_rms, rel=1e-12)
    text = format_report(result)
    assert f"{format_quantity(expected_rms, 'V')} rms" in text
    assert "|H| = 2 V/V" in text
    assert "6.02 dB" in text  # 20·log10(2) = 6.02 dB (common practice)
    assert f"{format_quantity(expected_rms / 2.0, 'V')} rms" in text  # input-referred = output / gain
    assert "9.999 kHz" in text  # ENBW of a flat gain = band width (common practice)
    assert "VIN (voltage source)" in text


def test_current_input_uses_transimpedance_units():
    text = format_report(samples.resistors(input_unit="A"))
    assert "|H| = 2 V/A" in text
    assert "dB re 1 V/A" in text
    assert "VIN (current source)" in text
    # input-referred current = output rms / transimpedance, in amperes
    expected = samples.resistors().total_rms / 2.0
    line = next(line for line in text.splitlines() if "input-referred" in line)
    assert line.endswith(f"{format_quantity(expected, 'A')} rms")
    assert format_quantity(expected, "A").endswith("µA")


def test_no_input_source_leaves_out_signal_lines():
    text = format_report(samples.white())
    assert "gain at maximum" not in text and "input-referred" not in text and "ENBW" not in text


def test_top_lumps_the_rest_into_one_row():
    # 20 sources with variances 1..20: the 16 smallest hold 136/210 = 64.8 % (arithmetic)
    text = format_report(samples.many(), top=5)
    rows = _table_rows(text)
    assert len(rows) == 5
    assert "(16 others)" in rows[-1]
    assert "64.8 %" in rows[-1] and "100.0 %" in rows[-1]
    assert [row.split()[1] for row in rows[:4]] == ["R20", "R19", "R18", "R17"]


def test_top_none_lists_every_source():
    rows = _table_rows(format_report(samples.many(), top=None))
    assert len(rows) == 20
    assert not any("others" in row for row in rows)


def test_top_exactly_the_number_of_sources_needs_no_lump():
    rows = _table_rows(format_report(samples.many(), top=20))
    assert len(rows) == 20 and not any("others" in row for row in rows)


def test_top_below_one_is_refused():
    with pytest.raises(UsageError):
        format_report(samples.white(), top=0)


def test_notes_and_integration_accuracy():
    text = format_report(samples.resistors())
    assert "- temperature taken from the netlist" in text
    assert "accurate to about" not in text  # integration_rel_error is 0
    text = format_report(samples.rc_unbounded())  # integration_rel_error 2e-3
    assert "accurate to about 0.2 %" in text


def test_ends_with_one_short_caution_line():
    text = format_report(samples.white())
    assert text.endswith("\n")
    last = text.rstrip("\n").splitlines()[-1]
    assert last == CAUTION
    assert "design estimates" in last and "mains" in last and "local codes" in last
    assert len(last) < 130


def test_circuit_without_noise():
    quiet = samples.white(source_density=np.zeros((1, 41)), source_variance=np.zeros(1), cumulative_variance=np.zeros(41))
    text = format_report(quiet)
    assert "No noise source contributes" in text
    assert "0 V rms" in text


def test_equal_shares_are_called_a_tie():
    result = samples.resistors()
    two = dataclasses.replace(
        result,
        source_names=("R1", "R2"),
        source_mechanisms=("thermal",) * 2,
        source_values=("10 kΩ",) * 2,
        source_density=result.source_density[[1, 1]],
        source_variance=result.source_variance[[1, 1]],
    )
    text = format_report(two)
    assert "Largest sources: R1 and R2 tie at 50.0 %" in text  # two equal halves (arithmetic)
    assert "Dominant source" not in text


def test_gain_below_one_is_shown_plainly():
    text = format_report(samples.resistors(gain=0.5))
    assert "|H| = 0.5 V/V  (-6.02 dB)" in text  # 20·log10(0.5) = -6.02 dB (common practice)

"""The plain-text noise budget (netnoise.report)."""

from __future__ import annotations

import dataclasses
import math

import _output_samples as samples  # tests/ is on sys.path (conftest.py)
import numpy as np
import pytest
from scipy.constants import k as BOLTZMANN

from netnoise.engformat import format_quantity
from netnoise.errors import UsageError
from netnoise.outputs.report import BAR_WIDTH, CAUTION, format_report


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
    assert "to infinite bandwidth" in text and "(exact)" not in text


def test_totals_say_how_they_were_found():
    exact = format_report(samples.rc_unbounded())  # exact-symmetric, rounding 1e-12
    assert "totals found by" in exact and "exact symmetric eigen-solution (rounding ≈ 1e-12)" in exact
    integrated = format_report(samples.white())  # a hand-built band result: quadrature, no estimate given
    line = next(x for x in integrated.splitlines() if "totals found by" in x)
    assert line.split("totals found by")[1].strip() == "numerical integration"


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
    quiet = samples.white(
        source_density=np.zeros((1, 41)), source_variance=np.zeros(1), cumulative_variance=np.zeros(41)
    )
    text = format_report(quiet)
    assert "No noise source contributes" in text
    assert "0 V rms" in text


def test_equal_shares_are_called_a_tie():
    result = samples.resistors()
    two = dataclasses.replace(
        result,
        source_names=("R1", "R2"),
        source_mechanisms=("thermal",) * 2,
        source_values=(10e3,) * 2,
        source_units=("Ω",) * 2,
        source_details=({},) * 2,
        source_density=result.source_density[[1, 1]],
        source_variance=result.source_variance[[1, 1]],
    )
    text = format_report(two)
    assert "Largest sources: R1 and R2 tie at 50.0 %" in text  # two equal halves (arithmetic)
    assert "Dominant source" not in text


def test_gain_below_one_is_shown_plainly():
    text = format_report(samples.resistors(gain=0.5))
    assert "|H| = 0.5 V/V  (-6.02 dB)" in text  # 20·log10(0.5) = -6.02 dB (common practice)


# --- noise figure, grouping, SNR, converter, DC (issue 3) --------------------------
def _front_end_rms() -> float:
    # the sample's sources are 100 Ω of equivalent thermal noise at 290 K, gain 10, band 10 Hz..100 kHz:
    # v² = 4kT·R·gain²·(f_hi - f_lo) (Johnson 1928 / Nyquist 1928; white noise)
    return math.sqrt(4 * BOLTZMANN * 290.0 * 100.0 * 10.0**2 * (100e3 - 10.0))


def _section_lines(text: str, heading: str) -> list[str]:
    lines = text.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith(heading)) + 2
    out = []
    for line in lines[start:]:
        if line and not line.startswith(" "):
            break
        out.append(line)
    return out


def test_noise_figure_section_for_f_equal_two():
    # the source resistor gives half the output noise power: F = 2, NF = 10·log10(2) = 3.01 dB,
    # Te = T0·(F − 1) = 290 K (common practice; IEEE T0 = 290 K)
    text = format_report(samples.front_end())
    section = _section_lines(text, "Noise figure")
    assert "Rs (50 Ω), its noise taken at T0 = 290 K (IEEE definition)" in section[0]
    assert any(line.endswith("NF = 3.01 dB") for line in section)
    assert any(line.endswith("Te = 290 K × (F − 1) = 290 K") for line in section)
    spots = [line.split() for line in section if line.strip().startswith("at ")]
    assert [s[1] + " " + s[2] for s in spots] == ["10 Hz", "100 Hz", "1 kHz", "10 kHz", "100 kHz"]
    assert all(s[-2:] == ["3.01", "dB"] for s in spots)


def test_no_noise_figure_section_without_a_source_resistor():
    assert "Noise figure" not in format_report(samples.resistors())
    assert "Noise figure" not in format_report(samples.front_end(with_noise_figure=False))


def test_spot_noise_figure_between_grid_points_is_interpolated_in_log_frequency():
    base = samples.front_end()
    f = np.geomspace(7.0, 1.3e5, 50)  # no decade falls on this grid
    nf = 2.0 * np.log10(f)  # made-up spectrum, linear in log f: exactly 2 dB per decade
    result = dataclasses.replace(
        base,
        frequency_Hz=f,
        source_density=np.repeat(base.source_density[:, :1], f.size, axis=1),
        cumulative_variance=np.linspace(0.0, base.total_variance, f.size),
        gain=np.full(f.size, 10.0),
        noise_figure_spectrum_dB=nf,
    )
    section = _section_lines(format_report(result), "Noise figure")
    spot = {
        line.split()[1] + " " + line.split()[2]: line.split()[-2] for line in section if line.strip().startswith("at ")
    }
    # 2·log10(f): 2 dB at 10 Hz ... 10 dB at 100 kHz (arithmetic)
    assert spot == {"10 Hz": "2.00", "100 Hz": "4.00", "1 kHz": "6.00", "10 kHz": "8.00", "100 kHz": "10.00"}


def test_spot_noise_figure_without_signal_gain_is_said_in_words():
    base = samples.front_end()
    nf = np.array(base.noise_figure_spectrum_dB)
    nf[10] = math.inf  # the grid's 100 Hz point (10 points per decade from 10 Hz)
    text = format_report(dataclasses.replace(base, noise_figure_spectrum_dB=nf))
    section = _section_lines(text, "Noise figure")
    line = next(line for line in section if line.split()[:3] == ["at", "100", "Hz"])
    assert line.endswith("— (no signal gain at this frequency)")
    assert not any("inf" in line or "∞" in line or "nan" in line for line in section)


def test_one_row_per_source_by_default():
    rows = _table_rows(format_report(samples.front_end()))
    # shares = equivalent resistance / 100 Ω (sample construction): 50, 30, 10, 10 %
    assert [row.split("  ")[2].strip() for row in rows][:2] == ["Rs", "Xu1 (voltage)"]
    assert "amplifier-voltage" in rows[1] and "30.0 %" in rows[1]
    assert len(rows) == 4


def test_grouped_by_element_merges_an_amplifiers_sources():
    text = format_report(samples.front_end(), group_by="element")
    assert "Budget by element" in text
    rows = _table_rows(text)
    assert [row.split()[1] for row in rows] == ["Rs", "Xu1", "R1"]
    # Xu1 = voltage 30 % + in+ 10 % (sample construction)
    assert "amplifier-voltage+amplifier-current" in rows[1] and "40.0 %" in rows[1] and "90.0 %" in rows[1]
    assert "Dominant element: Rs (thermal, 50 Ω) gives 50.0 %" in text


def test_grouped_element_value_is_what_its_sources_share():
    base = samples.front_end()
    # the sample's amplifier has two sources of one model, LN1: 4 nV/√Hz and 1 pA/√Hz
    rows = _table_rows(format_report(base, group_by="element"))
    assert rows[1].split()[1:4] == ["Xu1", "amplifier-voltage+amplifier-current", "LN1"]
    assert "nV/√Hz" not in rows[1]


def test_grouped_by_mechanism():
    text = format_report(samples.front_end(), group_by="mechanism")
    rows = _table_rows(text)
    assert [row.split()[1] for row in rows] == ["thermal", "amplifier-voltage", "amplifier-current"]
    # thermal = Rs 50 % + R1 10 % (sample construction)
    assert "2 sources" in rows[0] and "60.0 %" in rows[0]
    assert "1 source " in rows[1] + " " and "30.0 %" in rows[1]
    assert "Dominant mechanism: thermal (2 sources) gives 60.0 %" in text
    header = text.splitlines()[text.splitlines().index(rows[0]) - 2]
    assert header.split()[:3] == ["#", "mechanism", "sources"]


def test_grouped_rows_are_lumped_by_top_too():
    rows = _table_rows(format_report(samples.front_end(), group_by="mechanism", top=2))
    assert len(rows) == 2 and "(2 others)" in rows[1] and "40.0 %" in rows[1]


def test_unknown_grouping_is_refused():
    with pytest.raises(UsageError, match="mechanism"):
        format_report(samples.front_end(), group_by="colour")


def _snr(result, signal, at="input"):
    from netnoise.results.figures import signal_to_noise

    return signal_to_noise(result, signal, at=at)


def _adc(result, bits, full_scale, rate):
    from netnoise.results.figures import adc_comparison

    return adc_comparison(result, bits=bits, full_scale_V=full_scale, sample_rate_Hz=rate)


def test_signal_to_noise_section_for_a_signal_at_the_input():
    result = samples.front_end()
    text = format_report(result, snr=_snr(result, 1e-3), signal_at="input")
    section = _section_lines(text, "Signal-to-noise")
    # 1 mV at the input, pass-band gain 10 -> 10 mV at the output; SNR = 20·log10(S/N) (definition)
    expected = 20 * math.log10(10e-3 / _front_end_rms())
    assert expected == pytest.approx(67.96, rel=1e-4)
    assert section[0].endswith("1 mV rms at the input (VS)")
    assert section[1].endswith("10 mV rms (pass-band gain 10 V/V)")
    assert section[3].endswith(f"{expected:.2f} dB")


def test_signal_to_noise_for_a_signal_at_the_output_and_below_the_noise():
    result = samples.front_end()
    text = format_report(result, snr=_snr(result, 2e-6, "output"), signal_at="output")
    section = _section_lines(text, "Signal-to-noise")
    assert section[0].endswith("2 µV rms at the output")
    expected = 20 * math.log10(2e-6 / _front_end_rms())  # about -6 dB (definition)
    assert any(line.endswith(f"{expected:.2f} dB") for line in section)
    assert "no larger than the noise" in text


def test_converter_section_16_bits_converter_sets_the_floor():
    result = samples.front_end()
    text = format_report(result, adc=_adc(result, 16, 4.096, 1e6))
    section = _section_lines(text, "Converter (ideal 16-bit ADC, 4.096 V peak-to-peak full scale, sampled at 1 MHz)")
    joined = " ".join(" ".join(section).split())
    assert "62.5 µV" in section[0]  # q = 4.096 V / 2^16 (arithmetic)
    assert "18 µV rms" in section[1]  # q/√12 = 18.04 µV (common practice)
    assert "98.09 dB" in section[2]  # 6.02·16 + 1.76 = 98.1 dB (common practice)
    lsb = _front_end_rms() / (4.096 / 2**16)
    assert f"= {lsb:.3g} LSB rms" in section[3]
    combined = 10 * math.log10((4.096 / (2 * math.sqrt(2))) ** 2 / (_front_end_rms() ** 2 + (4.096 / 2**16) ** 2 / 12))
    assert f"{combined:.2f} dB (full-scale sine)" in joined  # noise powers add (common practice)
    assert f"{(combined - 1.76) / 6.02:.2f} bits" in joined  # ENOB = (SNR − 1.76)/6.02 (common practice)
    assert section[7].split()[-1] == "converter"
    assert "The converter sets the floor" in joined
    # band 10 Hz..100 kHz ends below Nyquist (500 kHz): said so
    assert "below the Nyquist frequency 500 kHz" in joined


def test_converter_section_analog_chain_sets_the_floor_and_aliasing():
    result = samples.front_end()
    text = format_report(result, adc=_adc(result, 24, 4.096, 100e3))
    joined = " ".join(" ".join(_section_lines(text, "Converter (ideal 24-bit ADC")).split())
    # 24 bits of 4.096 V: q/√12 = 70.5 nV rms, far under the 4 µV of the analog chain (arithmetic)
    assert "The analog chain sets the floor" in joined
    ratio = 20 * math.log10(_front_end_rms() / (4.096 / 2**24 / math.sqrt(12)))
    assert f"{ratio:.1f} dB above the quantisation" in joined
    assert "aliases into 0 .. 50 kHz" in joined  # band reaches 100 kHz, Nyquist is 50 kHz


def test_wrapped_sentences_keep_numbers_with_their_units():
    result = samples.front_end()
    for adc in (_adc(result, 24, 4.096, 100e3), _adc(result, 16, 4.096, 1e6), _adc(result, 10, 1.0, 10e6)):
        section = _section_lines(format_report(result, adc=adc), "Converter")
        assert all(len(line) <= 100 for line in section)
        assert not any(line.rstrip()[-1:].isdigit() for line in section if line.strip())  # no "3.99" / "dB" split


def test_converter_with_a_stated_signal_and_clipping_warning():
    result = samples.front_end()
    adc = _adc(result, 12, 2.0, 1e6)
    # 100 mV at the input, gain 10: 1 V rms at the converter, above a 2 V p-p sine's 707 mV rms (arithmetic)
    text = format_report(result, snr=_snr(result, 0.1), adc=adc)
    q = 2.0 / 2**12
    combined = 10 * math.log10(1.0 / (_front_end_rms() ** 2 + q**2 / 12))
    joined = " ".join(" ".join(_section_lines(text, "Converter")).split())  # undo the wrapping
    assert f"against both: SNR {combined:.2f} dB" in joined
    assert "would clip" in joined


def test_dc_operating_point_section():
    from netnoise.engine.dc import OperatingPoint

    op = OperatingPoint(
        node_voltages={"in": 5.0, "out": 2.5, "mid": 3e-17},  # 3e-17 V: solver round-off
        element_currents={"V1": -2.5e-3, "R1": 2.5e-3, "C1": 0.0},
        element_voltages={"V1": 5.0, "R1": 2.5, "C1": 2.5},
    )
    text = format_report(samples.front_end(), operating_point=op)
    section = _section_lines(text, "DC operating point")
    assert [line.split() for line in section[1:4]] == [
        ["v(in)", "5", "V"],
        ["v(out)", "2.5", "V"],
        ["v(mid)", "0", "V"],
    ]
    rows = {line.split()[0]: line.split()[1:] for line in section[8:] if line.strip()}
    assert rows == {"V1": ["5", "V", "-2.5", "mA"], "R1": ["2.5", "V", "2.5", "mA"], "C1": ["2.5", "V", "0", "A"]}
    assert text.index("DC operating point") > text.index("Dominant source")
    assert text.rstrip().endswith(CAUTION)


def test_non_finite_operating_point_is_refused():
    from netnoise.engine.dc import OperatingPoint
    from netnoise.errors import CircuitError

    op = OperatingPoint({"out": math.nan}, {}, {})
    with pytest.raises(CircuitError, match="out"):
        format_report(samples.white(), operating_point=op)


@pytest.mark.parametrize(
    "change, field",
    [
        (dict(source_variance=np.array([math.nan])), "source_variance"),
        (dict(source_density=np.full((1, 41), math.inf)), "source_density"),
        (dict(gain_peak=math.inf), "gain_peak"),
        (dict(noise_figure_dB=math.nan), "noise_figure_dB"),
        (dict(noise_figure_spectrum_dB=np.full(41, math.nan)), "noise_figure_spectrum_dB"),
        (dict(cumulative_variance=np.full(41, math.nan)), "cumulative_variance"),
    ],
)
def test_non_finite_results_are_refused_before_printing(change, field):
    from netnoise.errors import CircuitError

    with pytest.raises(CircuitError) as caught:
        format_report(samples.white(**change))
    message = str(caught.value)
    assert field in message and "not finite" in message

"""The report's figures-of-merit sections: noise figure, signal-to-noise, and the
comparison with an ideal converter."""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

from netnoise.constants import T0_KELVIN
from netnoise.engformat import format_quantity
from netnoise.outputs.labels import value_text
from netnoise.outputs.text_layout import decade_frequencies as _decade_frequencies
from netnoise.outputs.text_layout import field as _field
from netnoise.outputs.text_layout import hz as _hz
from netnoise.outputs.text_layout import section as _section
from netnoise.outputs.text_layout import wrapped as _wrapped
from netnoise.results.result import NoiseResult

if TYPE_CHECKING:  # pragma: no cover
    from netnoise.results.figures import AdcComparison, SignalToNoise

__all__ = ["noise_figure_section", "signal_to_noise_section", "converter_section", "enob_bits", "T0_K"]

#: IEEE standard noise temperature of the source, kelvin (noise figure definition).
T0_K = T0_KELVIN


def _db(value: float, digits: int = 2) -> str:
    return f"{round(value, digits) + 0.0:.{digits}f} dB"  # + 0.0: no "-0.00"


# --- noise figure -------------------------------------------------------------
def _source_resistor_value(result: NoiseResult) -> str:
    name = result.source_resistor or ""
    for k, element in enumerate(result.source_elements):
        if element.lower() == name.lower() and result.source_mechanisms[k] == "thermal":
            return value_text(float(result.source_values[k]), result.source_units[k])
    return ""


def _spot_noise_figure(result: NoiseResult, frequency: float) -> float:
    """Spot noise figure (dB) at ``frequency``: the grid value there, else
    interpolated linearly in log frequency; +inf when a neighbour has no gain."""
    f = result.frequency_Hz
    nf = np.asarray(result.noise_figure_spectrum_dB, dtype=float)
    positive = f > 0
    f, nf = f[positive], nf[positive]
    i = int(np.searchsorted(f, frequency))
    for j in (i - 1, i):
        if 0 <= j < f.size and math.isclose(f[j], frequency, rel_tol=1e-9):
            return float(nf[j])
    i = min(max(i, 1), f.size - 1)
    a, b = nf[i - 1], nf[i]
    if not (math.isfinite(a) and math.isfinite(b)):
        return math.inf
    t = (math.log(frequency) - math.log(f[i - 1])) / (math.log(f[i]) - math.log(f[i - 1]))
    return float(a + t * (b - a))


def noise_figure_section(result: NoiseResult) -> list[str]:
    if result.noise_figure_dB is None and result.noise_figure_spectrum_dB is None:
        return []
    lines = _section("Noise figure")
    value = _source_resistor_value(result)
    lines.append(
        _field(
            "referred to",
            f"{result.source_resistor or 'the source resistor'}{f' ({value})' if value else ''}, "
            f"its noise taken at T0 = {T0_K:g} K (IEEE definition)",
        )
    )
    if result.noise_figure_dB is not None:
        nf = result.noise_figure_dB
        lines.append(_field("over the band", f"NF = {_db(nf)}"))
        factor = 10.0 ** (nf / 10.0)
        kelvin = T0_K * (factor - 1.0)
        kelvin_text = f"{kelvin:,.0f}" if kelvin >= 1000 else f"{kelvin:.4g}"
        lines.append(_field("noise temperature", f"Te = {T0_K:g} K × (F − 1) = {kelvin_text} K"))
    if result.noise_figure_spectrum_dB is not None and result.noise_figure_spectrum_dB.size:
        frequencies = _decade_frequencies(result)
        if not frequencies:
            f = result.frequency_Hz
            frequencies = sorted({float(f[0]), float(f[-1])} - {0.0})
        width = max((len(_hz(x)) for x in frequencies), default=0)
        lines.append("  spot noise figure")
        for x in frequencies:
            spot = _spot_noise_figure(result, x)
            text = _db(spot) if math.isfinite(spot) else "— (no signal gain at this frequency)"
            lines.append(f"    at {_hz(x):>{width}}   {text}")
    return lines


# --- signal-to-noise and the converter --------------------------------------------
def enob_bits(snr_dB: float) -> float:
    """Effective number of bits of a full-scale-sine SNR: (SNR − 1.76 dB) / 6.02 dB
    (common practice; the inverse of 6.02N + 1.76 dB)."""
    return (snr_dB - 1.76) / 6.02


def _snr_text(snr_dB: float) -> str:
    return _db(snr_dB) if math.isfinite(snr_dB) else "unbounded (no noise at the output)"


def signal_to_noise_section(result: NoiseResult, snr: SignalToNoise, at: str) -> list[str]:
    lines = _section("Signal-to-noise")
    gain = result.gain_at_max or 0.0
    if at == "input" and gain > 0.0:
        unit = result.input_unit or "V"
        gain_text = f"{gain:.4g} V/V" if unit == "V" else format_quantity(gain, "V/A", 4)
        signal_in = snr.signal_output_rms_V / gain
        lines.append(_field("signal", f"{format_quantity(signal_in, unit)} rms at the input ({result.input_source})"))
        lines.append(
            _field("at the output", f"{format_quantity(snr.signal_output_rms_V, 'V')} rms (pass-band gain {gain_text})")
        )
    else:
        lines.append(_field("signal", f"{format_quantity(snr.signal_output_rms_V, 'V')} rms at the output"))
    lines.append(_field("noise at the output", f"{format_quantity(snr.noise_rms_V, 'V')} rms over the band"))
    lines.append(_field("SNR", _snr_text(snr.snr_dB)))
    if math.isfinite(snr.snr_dB) and snr.snr_dB <= 0.0:
        lines.append("  The signal is no larger than the noise in this band.")
    return lines


def converter_section(result: NoiseResult, adc: AdcComparison, snr: SignalToNoise | None) -> list[str]:
    rate = adc.sample_rate_Hz
    nyquist = rate / 2.0
    lines = _section(
        f"Converter (ideal {adc.bits}-bit ADC, {format_quantity(adc.full_scale_V, 'V', 4)} peak-to-peak full scale, "
        f"sampled at {_hz(rate)})"
    )
    lines.append(_field("LSB  q = FS / 2^N", format_quantity(adc.lsb_V, "V"), 30))
    lines.append(
        _field(
            "quantisation noise  q/√12",
            f"{format_quantity(adc.quantisation_rms_V, 'V')} rms "
            f"(as {format_quantity(adc.quantisation_density_V_per_rtHz, 'V/√Hz')} over 0 .. {_hz(nyquist)})",
            30,
        )
    )
    lines.append(
        _field("ideal SNR  6.02N + 1.76 dB", f"{_db(adc.ideal_snr_dB)} (full-scale sine, common practice)", 30)
    )
    lsb_fraction = adc.analog_rms_V / adc.lsb_V
    lines.append(
        _field("analog chain noise", f"{format_quantity(adc.analog_rms_V, 'V')} rms = {lsb_fraction:.3g} LSB rms", 30)
    )
    lines.append(_field("SNR, analog chain alone", _snr_text(adc.analog_snr_dB), 30))
    lines.append(_field("SNR, both together", f"{_db(adc.combined_snr_dB)} (full-scale sine)", 30))
    enob = enob_bits(adc.combined_snr_dB)
    lines.append(_field("effective resolution", f"{enob:.2f} bits (ENOB, from the combined SNR)", 30))
    lines.append(_field("floor set by", adc.floor_set_by, 30))
    cost = adc.ideal_snr_dB - adc.combined_snr_dB
    if adc.analog_rms_V == 0.0:
        verdict = "The converter sets the floor: the analog chain adds no noise."
    else:
        ratio_dB = 20.0 * math.log10(adc.analog_rms_V / adc.quantisation_rms_V)
        if adc.floor_set_by == "analog chain":
            verdict = (
                f"The analog chain sets the floor: its noise is {_db(abs(ratio_dB), 1)} above the quantisation "
                f"noise and costs {_db(cost)} of the converter's ideal SNR."
            )
        else:
            verdict = (
                f"The converter sets the floor: its quantisation noise is {_db(abs(ratio_dB), 1)} above the "
                f"analog chain's noise, which costs {_db(cost)} of the ideal SNR."
            )
    lines.append("")
    lines += _wrapped(verdict)
    if math.isfinite(result.band_high_Hz) and result.band_high_Hz < nyquist * (1 - 1e-9):
        lines += _wrapped(
            f"Note: the band ends at {_hz(result.band_high_Hz)}, below the Nyquist frequency {_hz(nyquist)}; "
            "analog noise between them also reaches the converter but is not counted here "
            "(analyse up to the anti-alias filter's roll-off, or to infinity)."
        )
    elif result.band_high_Hz > nyquist * (1 + 1e-9):
        lines += _wrapped(
            f"Analog noise above the Nyquist frequency {_hz(nyquist)} aliases into 0 .. {_hz(nyquist)}: "
            "the whole band's noise is counted."
        )
    if snr is not None:
        signal = snr.signal_output_rms_V
        combined = 10.0 * math.log10(signal**2 / (adc.analog_rms_V**2 + adc.quantisation_rms_V**2))
        lines += _wrapped(
            f"The stated signal ({format_quantity(signal, 'V')} rms at the converter) against both: SNR {_db(combined)}."
        )
        if signal > adc.full_scale_sine_rms_V * (1 + 1e-9):
            lines += _wrapped(
                f"Warning: as a sine that signal exceeds the full scale ({format_quantity(adc.full_scale_sine_rms_V, 'V')} "
                "rms for a full-scale sine) and would clip."
            )
    return lines

"""Figures of merit computed from a noise result: SNR, and the comparison
with an ideal ADC's quantisation noise.

Pure functions of a :class:`~netnoise.result.NoiseResult`; SI units.
(The noise figure needs the engine -- the source resistor's noise at
T0 = 290 K -- and is computed by :func:`netnoise.analysis.analyze`.)
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from netnoise.errors import UsageError
from netnoise.results.result import NoiseResult

__all__ = ["SignalToNoise", "AdcComparison", "signal_to_noise", "adc_comparison", "ideal_adc_snr_dB"]


def _db_power(ratio: float) -> float:
    return 10.0 * math.log10(ratio) if ratio > 0 else -math.inf


def _db_amplitude(ratio: float) -> float:
    """20·log10 of an amplitude ratio: the same dB as ``_db_power(ratio**2)``
    without squaring (which overflows for a ratio above about 1e154)."""
    if math.isinf(ratio):
        return math.inf
    return 20.0 * math.log10(ratio) if ratio > 0 else -math.inf


# ranges an --adc card must fall in: far beyond any converter, and narrow enough
# that no figure (LSB, q/sqrt(fs/2), SNR) overflows or underflows
ADC_FULL_SCALE_V = (1e-9, 1e6)
ADC_SAMPLE_RATE_HZ = (1e-3, 1e13)


@dataclass(frozen=True)
class SignalToNoise:
    """A stated signal against the band's output noise."""

    signal_output_rms_V: float  # the signal as it appears at the output, V rms
    noise_rms_V: float  # band-integrated output noise, V rms
    snr_dB: float  # 20·log10(signal / noise)


def signal_to_noise(result: NoiseResult, signal_rms: float, *, at: str = "input") -> SignalToNoise:
    """SNR at the output of a signal of ``signal_rms`` (V or A rms).

    ``at="input"``: the signal is at the input source and reaches the output
    with ``result.pass_band_gain`` (a signal in the pass band); ``at="output"``:
    the signal is given at the output, in V rms.
    """
    if not (signal_rms > 0 and math.isfinite(signal_rms)):
        raise UsageError(f"the signal must be a positive rms value, got {signal_rms!r}")
    if at == "input":
        if result.pass_band_gain is None:
            raise UsageError("a signal at the input needs an input source (--input SOURCE or the .noise card)")
        out = signal_rms * result.pass_band_gain
    elif at == "output":
        out = signal_rms
    else:
        raise UsageError(f"the signal is 'input' or 'output', not {at!r}")
    noise = result.total_rms
    return SignalToNoise(out, noise, _db_amplitude(out / noise) if noise > 0 else math.inf)


def ideal_adc_snr_dB(bits: int) -> float:
    """SNR of a full-scale sine in an ideal N-bit converter: 6.02N + 1.76 dB
    (common practice; exactly 20·log10(2^N · √1.5))."""
    return 20.0 * math.log10(2.0**bits * math.sqrt(1.5))


@dataclass(frozen=True)
class AdcComparison:
    """The analog chain's output noise against an ideal ADC's quantisation.

    ``full_scale_V`` is the converter's input range (peak-to-peak);
    q = full_scale / 2^bits; quantisation noise q/√12 rms spread over the
    Nyquist band 0..rate/2.  Noise of the analog chain outside the Nyquist
    band aliases into it, so its whole band total counts.
    """

    bits: int
    full_scale_V: float
    sample_rate_Hz: float
    lsb_V: float
    quantisation_rms_V: float
    analog_rms_V: float
    full_scale_sine_rms_V: float
    ideal_snr_dB: float  # converter alone, full-scale sine
    analog_snr_dB: float  # full-scale sine against the analog noise alone
    combined_snr_dB: float  # against both, added in power
    quantisation_density_V_per_rtHz: float  # q²/12 spread over rate/2, as a density
    floor_set_by: str  # "analog chain" or "converter"


def adc_comparison(result: NoiseResult, *, bits: int, full_scale_V: float, sample_rate_Hz: float) -> AdcComparison:
    """Compare ``result``'s output noise with an ideal ``bits``-bit ADC."""
    if not (isinstance(bits, int) and 1 <= bits <= 32):
        raise UsageError(f"ADC resolution must be 1 to 32 bits, got {bits!r}")
    if not (full_scale_V > 0 and math.isfinite(full_scale_V)):
        raise UsageError(f"ADC full scale must be a positive voltage, got {full_scale_V!r}")
    if not (sample_rate_Hz > 0 and math.isfinite(sample_rate_Hz)):
        raise UsageError(f"ADC sample rate must be a positive frequency, got {sample_rate_Hz!r}")
    if not ADC_FULL_SCALE_V[0] <= full_scale_V <= ADC_FULL_SCALE_V[1]:
        raise UsageError(f"ADC full scale must be 1 nV to 1 MV peak-to-peak, got {full_scale_V!r} V")
    if not ADC_SAMPLE_RATE_HZ[0] <= sample_rate_Hz <= ADC_SAMPLE_RATE_HZ[1]:
        raise UsageError(f"ADC sample rate must be 1 mHz to 10 THz, got {sample_rate_Hz!r} Hz")
    lsb = full_scale_V / 2.0**bits
    q_rms = lsb / math.sqrt(12.0)
    sine_rms = full_scale_V / (2.0 * math.sqrt(2.0))
    analog = result.total_rms
    return AdcComparison(
        bits=bits,
        full_scale_V=full_scale_V,
        sample_rate_Hz=sample_rate_Hz,
        lsb_V=lsb,
        quantisation_rms_V=q_rms,
        analog_rms_V=analog,
        full_scale_sine_rms_V=sine_rms,
        ideal_snr_dB=_db_amplitude(sine_rms / q_rms),
        analog_snr_dB=_db_amplitude(sine_rms / analog) if analog > 0 else math.inf,
        combined_snr_dB=_db_amplitude(sine_rms / math.hypot(analog, q_rms)),
        quantisation_density_V_per_rtHz=q_rms / math.sqrt(sample_rate_Hz / 2.0),
        floor_set_by="analog chain" if analog > q_rms else "converter",
    )

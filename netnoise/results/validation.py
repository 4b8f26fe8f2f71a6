"""Refusing what cannot be printed: a result holding NaN or an infinity where a
number is expected is refused by name, before anything is formatted or written."""

from __future__ import annotations

import math

import numpy as np

from netnoise.errors import CircuitError
from netnoise.results.result import NoiseResult

__all__ = ["non_finite_fields", "check_finite"]


def non_finite_fields(result: NoiseResult) -> list[str]:
    """Names of the result's numbers that are NaN or infinite where a finite
    value is required ([] when the result can be reported).

    Allowed: an infinite band high edge (the band reaches infinity), and
    ``+inf`` points of the spot noise-figure spectrum (no signal gain at that
    frequency; shown as such, never as a number).
    """
    bad: list[str] = []
    arrays = {
        "frequency_Hz": result.frequency_Hz,
        "source_density": result.source_density,
        "source_variance": result.source_variance,
        "cumulative_variance": result.cumulative_variance,
    }
    if result.gain is not None:
        arrays["gain"] = result.gain
    for name, array in arrays.items():
        if not np.all(np.isfinite(array)):
            bad.append(name)
    scalars = {
        "temperature_K": result.temperature_K,
        "band_low_Hz": result.band_low_Hz,
        "gain_peak": result.gain_peak,
        "gain_squared_integral": result.gain_squared_integral,
        "integration_rel_error": result.integration_rel_error,
        "noise_figure_dB": result.noise_figure_dB,
    }
    for name, value in scalars.items():
        if value is not None and not math.isfinite(value):
            bad.append(name)
    if math.isnan(result.band_high_Hz):
        bad.append("band_high_Hz")
    spectrum = result.noise_figure_spectrum_dB
    if spectrum is not None and (np.any(np.isnan(spectrum)) or np.any(spectrum == -np.inf)):
        bad.append("noise_figure_spectrum_dB")
    if not bad and not math.isfinite(result.total_variance):
        bad.append("total output noise (the sum of the sources overflows)")
    return bad


def check_finite(result: NoiseResult) -> None:
    """Raise :class:`CircuitError` naming the fields that are NaN or infinite."""
    bad = non_finite_fields(result)
    if bad:
        raise CircuitError(
            f"the analysis result holds NaN or infinite values ({', '.join(bad)}), so no figures are "
            "reported: a number that is not finite would be wrong. This comes from a near-singular "
            "circuit or extreme element values; check for a lossless resonance or an element many "
            "orders of magnitude away from the rest"
        )

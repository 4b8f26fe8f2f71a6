"""Hand-built NoiseResult objects for the report / export / plot / CLI tests.

Every number here can be checked on paper; each builder says how.  Loaded by
the tests with :func:`load` (by file path, so it works in any import mode).
"""

from __future__ import annotations

import math

import numpy as np
from scipy.constants import k as BOLTZMANN

from netnoise.results.result import NoiseResult


def thermal_density(resistance: float, kelvin: float) -> float:
    """One-sided thermal voltage noise power density 4kTR, V²/Hz
    (Johnson 1928 / Nyquist 1928; k from scipy.constants)."""
    return 4.0 * BOLTZMANN * kelvin * resistance


def white(density_rt=100e-9, low=1.0, high=5.0, points=41, **extra) -> NoiseResult:
    """One white source of ``density_rt`` V/√Hz over [low, high].

    rms = density_rt * sqrt(high - low): 100 nV/√Hz over 4 Hz is 200 nV rms
    (common practice: white noise power grows linearly with bandwidth).
    """
    f = np.linspace(low, high, points)
    s = density_rt**2
    fields = dict(
        title="white check",
        temperature_K=300.0,
        output_node="out",
        reference_node="0",
        input_source=None,
        input_unit=None,
        band_low_Hz=low,
        band_high_Hz=high,
        frequency_Hz=f,
        source_names=("R1",),
        source_mechanisms=("thermal",),
        source_values=(1e3,),
        source_units=("Ω",),
        source_density=np.full((1, f.size), s),
        source_variance=np.array([s * (high - low)]),
        cumulative_variance=s * (f - low),
    )
    fields.update(extra)
    return NoiseResult(**fields)


RESISTORS = (("R1", 1e3, "1 kΩ"), ("R2", 4e3, "4 kΩ"), ("R3", 15e3, "15 kΩ"))


def resistors(kelvin=300.0, low=1.0, high=10e3, gain=2.0, input_unit="V") -> NoiseResult:
    """Three resistors seen at the output through a flat gain ``gain`` (white
    densities 4kTR·gain²), with a voltage input source of the same flat gain.

    Shares are R/ΣR = 1/20, 4/20, 15/20, so R3 dominates with 75 %.
    ENBW of a flat gain over [low, high] is high - low (common practice).
    """
    f = np.geomspace(low, high, 81)
    dens = np.array([thermal_density(r, kelvin) * gain**2 for _, r, _ in RESISTORS])
    bw = high - low
    return NoiseResult(
        title="three resistors",
        temperature_K=kelvin,
        output_node="out",
        reference_node="ref",
        input_source="VIN",
        input_unit=input_unit,
        band_low_Hz=low,
        band_high_Hz=high,
        frequency_Hz=f,
        source_names=tuple(n for n, _, _ in RESISTORS),
        source_mechanisms=("thermal",) * 3,
        source_values=tuple(r for _, r, _ in RESISTORS),
        source_units=("Ω",) * len(RESISTORS),
        source_density=np.repeat(dens[:, None], f.size, axis=1),
        source_variance=dens * bw,
        cumulative_variance=dens.sum() * (f - low),
        gain=np.full(f.size, gain),
        gain_squared_integral=gain**2 * bw,
        notes=("temperature taken from the netlist",),
    )


def many(count=20) -> NoiseResult:
    """``count`` white sources with variances 1, 2, ..., count (×1e-15 V²) over 1..11 Hz."""
    f = np.linspace(1.0, 11.0, 11)
    variances = np.arange(1, count + 1, dtype=float) * 1e-15
    dens = variances / 10.0
    return NoiseResult(
        title="many sources",
        temperature_K=290.0,
        output_node="out",
        reference_node="0",
        input_source=None,
        input_unit=None,
        band_low_Hz=1.0,
        band_high_Hz=11.0,
        frequency_Hz=f,
        source_names=tuple(f"R{i + 1}" for i in range(count)),
        source_mechanisms=("thermal",) * count,
        source_values=(1e3,) * count,
        source_units=("Ω",) * count,
        source_density=np.repeat(dens[:, None], f.size, axis=1),
        source_variance=variances,
        cumulative_variance=dens.sum() * (f - 1.0),
    )


def rc_unbounded(resistance=1e3, capacitance=1e-9, kelvin=300.0) -> NoiseResult:
    """A resistor's thermal noise filtered by one RC pole, integrated 0..∞.

    Density 4kTR/(1+(f/fc)²); integral to f is 4kTR·fc·atan(f/fc); to ∞ it is
    4kTR·fc·π/2 = kT/C (common practice: the kT/C result).  Grid 1 Hz..100 MHz.
    The totals as the engine finds them for an RC network: the symmetric eigen-solution.
    """
    fc = 1.0 / (2.0 * math.pi * resistance * capacitance)
    s0 = thermal_density(resistance, kelvin)
    f = np.geomspace(1.0, 1e8, 8 * 10 + 1)
    dens = s0 / (1.0 + (f / fc) ** 2)
    return NoiseResult(
        title="RC low-pass",
        temperature_K=kelvin,
        output_node="out",
        reference_node="0",
        input_source="V1",
        input_unit="V",
        band_low_Hz=0.0,
        band_high_Hz=math.inf,
        frequency_Hz=f,
        source_names=("R1",),
        source_mechanisms=("thermal",),
        source_values=(1e3,),
        source_units=("Ω",),
        source_density=dens[None, :],
        source_variance=np.array([BOLTZMANN * kelvin / capacitance]),
        cumulative_variance=s0 * fc * np.arctan(f / fc),
        gain=1.0 / np.sqrt(1.0 + (f / fc) ** 2),
        gain_squared_integral=fc * math.pi / 2.0,
        integration_rel_error=2e-3,
        total_method="exact-symmetric",
        total_tolerance=1e-12,
    )


#: front_end(): each source's output density as the thermal density of an
#: equivalent resistance (Ω) at T0 = 290 K, times gain².  The source resistor
#: holds half the total, so F = 2: NF = 10·log10(2) = 3.0103 dB and
#: Te = T0·(F − 1) = 290 K (common practice: F = 2 is Te = T0).
FRONT_END = (
    # name,            element, mechanism,           (value, unit, details),                    equivalent Ω
    ("Rs", "Rs", "thermal", (50.0, "Ω", {}), 50.0),
    ("Xu1 (voltage)", "Xu1", "amplifier-voltage", (4e-9, "V/√Hz", {"model": "LN1"}), 30.0),
    ("Xu1 (in+)", "Xu1", "amplifier-current", (1e-12, "A/√Hz", {"model": "LN1"}), 10.0),
    ("R1", "R1", "thermal", (10.0, "Ω", {}), 10.0),
)


def front_end(gain=10.0, low=10.0, high=100e3, with_noise_figure=True) -> NoiseResult:
    """An amplifier stage fed from a 50 Ω source resistor, flat gain ``gain``
    over [low, high], at T0 = 290 K, with a voltage input source VS.

    Shares: Rs 50 %, Xu1 (voltage) 30 %, Xu1 (in+) 10 %, R1 10 % (equivalent
    resistances over their sum); by element Rs 50 %, Xu1 40 %, R1 10 %; by
    mechanism thermal 60 %, amplifier-voltage 30 %, amplifier-current 10 %.
    """
    kelvin = 290.0
    f = np.geomspace(low, high, 4 * 10 + 1)  # 10 points per decade, decades on the grid
    dens = np.array([thermal_density(ohms, kelvin) * gain**2 for *_, ohms in FRONT_END])
    bw = high - low
    total_over_source = dens.sum() / dens[0]
    extra = {}
    if with_noise_figure:
        extra = dict(
            source_resistor="Rs",
            noise_figure_spectrum_dB=np.full(f.size, 10.0 * math.log10(total_over_source)),
            noise_figure_dB=10.0 * math.log10(total_over_source),
        )
    return NoiseResult(
        title="front end",
        temperature_K=kelvin,
        output_node="out",
        reference_node="0",
        input_source="VS",
        input_unit="V",
        band_low_Hz=low,
        band_high_Hz=high,
        frequency_Hz=f,
        source_names=tuple(row[0] for row in FRONT_END),
        source_mechanisms=tuple(row[2] for row in FRONT_END),
        source_values=tuple(row[3][0] for row in FRONT_END),
        source_units=tuple(row[3][1] for row in FRONT_END),
        source_details=tuple(row[3][2] for row in FRONT_END),
        source_elements=tuple(row[1] for row in FRONT_END),
        source_density=np.repeat(dens[:, None], f.size, axis=1),
        source_variance=dens * bw,
        cumulative_variance=dens.sum() * (f - low),
        gain=np.full(f.size, gain),
        gain_squared_integral=gain**2 * bw,
        **extra,
    )

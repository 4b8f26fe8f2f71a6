"""What a noise source is, and the densities of the physical mechanisms.

A source enters the MNA equations as an injection (``(row, coefficient)``
pairs of its unit excitation) with a one-sided power density
``S(f) = white_density + flicker_at_1Hz · (1 Hz / f)^slope`` in A²/Hz or
V²/Hz as its injection is a current or a voltage.  Sources are uncorrelated.

Mechanism names are fixed (they appear in JSON) and order the budget rows:
rows come grouped by mechanism in :data:`MECHANISMS` order, netlist order
within each.

* ``thermal`` -- Johnson–Nyquist noise of a resistance, a current 4kT/R in
  parallel with it (Johnson 1928; Nyquist 1928).
* ``excess`` -- a resistor's 1/f current noise from its noise index.
* ``shot`` -- 2q|I| of a junction current (Schottky 1918).
* ``flicker`` -- a semiconductor's 1/f noise KF·|I|^AF/f of a junction or
  channel current (the model card's KF and AF).
* ``channel-thermal`` -- the thermal noise of a field-effect transistor's
  channel, 8kT·gm/3 in saturation (van der Ziel 1962, long channel).
* ``source`` -- an explicit density given to an independent V or I source.
* ``amplifier-voltage`` / ``amplifier-current`` -- an amplifier's input
  voltage noise and the current noise of each input.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field

from netnoise.constants import BOLTZMANN, ELEMENTARY_CHARGE
from netnoise.errors import CircuitError

__all__ = [
    "THERMAL",
    "EXCESS",
    "SHOT",
    "SOURCE",
    "FLICKER",
    "CHANNEL_THERMAL",
    "AMPLIFIER_VOLTAGE",
    "AMPLIFIER_CURRENT",
    "MECHANISMS",
    "NoiseSource",
    "thermal_current_density",
    "shot_current_density",
    "excess_current_flicker",
    "power_density",
    "check_excess_level",
    "AMPLITUDE_RANGE",
]

THERMAL = "thermal"
EXCESS = "excess"
SHOT = "shot"
SOURCE = "source"
AMPLIFIER_VOLTAGE = "amplifier-voltage"
AMPLIFIER_CURRENT = "amplifier-current"
FLICKER = "flicker"
CHANNEL_THERMAL = "channel-thermal"
MECHANISMS = (THERMAL, EXCESS, SHOT, SOURCE, AMPLIFIER_VOLTAGE, AMPLIFIER_CURRENT, FLICKER, CHANNEL_THERMAL)
# the order of budget rows: the amplifier's voltage and current rows stay together per amplifier;
# a device's own rows (channel, shot, flicker) stay together after the resistances
ROW_ORDER = {
    THERMAL: 0,
    EXCESS: 1,
    CHANNEL_THERMAL: 2,
    SHOT: 2,
    FLICKER: 2,
    SOURCE: 3,
    AMPLIFIER_VOLTAGE: 4,
    AMPLIFIER_CURRENT: 4,
}


@dataclass(frozen=True)
class NoiseSource:
    """One noise generator: where it enters the equations and how strong it is.

    ``name`` labels its budget row (the element name, with a suffix where one
    element has several sources); ``element`` the element it belongs to;
    ``mechanism`` one of :data:`MECHANISMS`.  ``value`` and ``unit``: the
    number that sets it (a resistance in Ω, a DC current in A, a density in
    V/√Hz or A/√Hz); ``details`` further numbers that set it, keyed with
    their units (``{"noise_index_dB": -10.0, "dc_voltage_V": 5.0}``) and,
    for an amplifier, ``{"model": "NAME"}``.  ``injection`` lists (row,
    coefficient) pairs of its unit excitation.
    """

    name: str
    element: str
    mechanism: str
    value: float
    unit: str
    injection: tuple[tuple[int, float], ...]
    white_density: float
    flicker_at_1Hz: float = 0.0
    slope: float = 1.0
    temperature_K: float | None = None  # thermal sources: the temperature used
    details: Mapping[str, float | str] = field(default_factory=dict)


def thermal_current_density(resistance: float, temperature_K: float) -> float:
    """4kT/R, A²/Hz: the Norton noise current of a resistance (Johnson 1928; Nyquist 1928)."""
    return 4.0 * BOLTZMANN * temperature_K / resistance


def shot_current_density(current: float) -> float:
    """2q|I|, A²/Hz (Schottky 1918)."""
    return 2.0 * ELEMENTARY_CHARGE * abs(current)


def excess_current_flicker(noise_index_dB: float, dc_voltage: float, resistance: float) -> float:
    """The 1/f current density of a resistor at 1 Hz, A²/Hz, from its noise index.

    The noise index NI is dB re 1 µV of noise per volt of DC across the part
    per decade of frequency, as resistor makers state it.  A voltage density
    K/f has ∫_f^{10f} K/f df = K·ln 10 = (NI_lin·V_dc)²; as a parallel current, K/R².
    """
    per_volt = 10.0 ** (noise_index_dB / 20.0) * 1e-6
    return (per_volt * dc_voltage) ** 2 / math.log(10.0) / resistance**2


# V/√Hz or A/√Hz: the amplitude densities netnoise computes with (the noise of a resistor in
# circuit.limits.RESISTANCE_RANGE lies well inside).  The square (the power density) of a value outside
# underflows to 0 or overflows, and its products with squared transfers leave the doubles.
AMPLITUDE_RANGE = (1e-60, 1e30)


def power_density(owner: str, what: str, amplitude: float, unit: str, corner_Hz: float = 0.0, slope: float = 1.0):
    """(white level, 1/f level at 1 Hz) of an amplitude density ``amplitude`` with a 1/f^slope
    part below ``corner_Hz`` -- S = amplitude²·(1 + (corner/f)^slope) -- checked where they are
    formed; CircuitError naming ``owner`` and the value when they would not be normal numbers."""
    low, high = AMPLITUDE_RANGE
    if not (low <= amplitude <= high):
        raise CircuitError(
            f"{owner}: {what} {amplitude:g} {unit} is outside the range netnoise computes correctly "
            f"({low:g} to {high:g} {unit}): its square, the noise power density, would be shown as 0 or "
            "overflow. Give a value in the range (leave the noise out for a noiseless part)"
        )
    white = amplitude**2
    if corner_Hz <= 0.0:
        return white, 0.0
    if 2.0 * math.log10(amplitude) + slope * math.log10(corner_Hz) > 2.0 * math.log10(high):
        raise CircuitError(
            f"{owner}: {what} {amplitude:g} {unit} with a 1/f corner at {corner_Hz:g} Hz gives a density at "
            f"1 Hz above ({high:g} {unit})², beyond what netnoise computes correctly: lower the corner frequency"
        )
    return white, white * corner_Hz**slope


def check_excess_level(owner: str, noise_index_dB: float, dc_voltage: float) -> None:
    """Refuse a noise index whose excess noise at ``dc_voltage`` leaves the range computed
    correctly (the exponent is checked before it is raised: ni=1e300 overflows)."""
    log_noise = noise_index_dB / 20.0 - 6.0 + math.log10(abs(dc_voltage))  # V rms per decade
    low, high = AMPLITUDE_RANGE
    if not (math.log10(low) <= log_noise <= math.log10(high)):
        size = "above 1e300" if log_noise > 300 else "below 1e-300" if log_noise < -300 else f"of {10.0**log_noise:.3g}"
        raise CircuitError(
            f"{owner}: noise index {noise_index_dB:g} dB at {abs(dc_voltage):g} V of DC gives an excess noise {size} "
            f"V per decade, outside the range netnoise computes correctly ({low:g} to {high:g} V): give a noise "
            "index in the makers' range (about -50 to +30 dB)"
        )

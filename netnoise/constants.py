"""Physical constants, reference temperatures and the names of ground: one place each.

The constants are the exact SI values (2019 redefinition of the SI base units).
"""

from __future__ import annotations

__all__ = [
    "BOLTZMANN",
    "ELEMENTARY_CHARGE",
    "ZERO_CELSIUS_K",
    "ABSOLUTE_ZERO_C",
    "T0_KELVIN",
    "DEFAULT_TEMPERATURE_C",
    "NOMINAL_TEMPERATURE_C",
    "MAX_TEMPERATURE_C",
    "GROUND",
    "GROUND_ALIASES",
    "canonical_node",
    "is_ground",
    "kelvin",
    "celsius",
]

BOLTZMANN = 1.380649e-23  # J/K, exact (SI 2019)
ELEMENTARY_CHARGE = 1.602176634e-19  # C, exact (SI 2019)
ZERO_CELSIUS_K = 273.15  # K at 0 °C
ABSOLUTE_ZERO_C = -ZERO_CELSIUS_K  # °C
T0_KELVIN = 290.0  # K, the standard reference temperature of noise figure (IEEE definition of noise figure; Friis 1944)
DEFAULT_TEMPERATURE_C = 27.0  # °C (300.15 K), the trade's customary analysis temperature (common practice)
NOMINAL_TEMPERATURE_C = 27.0  # °C, the temperature at which element values are stated (common practice)

# °C: the highest temperature accepted.  Far above anything electronics meets (solder melts near
# 200 °C, silicon near 1400 °C); beyond it 4kT and its products with squared transfers approach the
# top of the doubles, and a figure there means a typing slip, not a circuit
MAX_TEMPERATURE_C = 1e5

GROUND = "0"  # the canonical name of the reference node
GROUND_ALIASES = frozenset({"0", "gnd"})  # compared lower-cased


def canonical_node(name: str) -> str:
    """The canonical spelling of a node name: lower case, ground as ``"0"``."""
    key = name.lower()
    return GROUND if key in GROUND_ALIASES else key


def is_ground(name: str) -> bool:
    """True for ``0`` and ``gnd`` in any case."""
    return name.lower() in GROUND_ALIASES


def kelvin(celsius_value: float) -> float:
    """°C -> K."""
    return celsius_value + ZERO_CELSIUS_K


def celsius(kelvin_value: float) -> float:
    """K -> °C."""
    return kelvin_value - ZERO_CELSIUS_K

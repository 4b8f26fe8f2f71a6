"""What the field-effect kinds (J, M) share: the square-law channel, and its noise.

Drain current in the forward direction (vds ≥ 0; the drain and source swap
roles when it is negative), with vov = vgs − VT (Shichman & Hodges, IEEE
JSSC 3, 1968):

  vov ≤ 0            I = 0
  vds ≥ vov          I = (k/2)·vov²·(1 + λ·vds)                (saturation)
  otherwise          I = k·vds·(vov − vds/2)·(1 + λ·vds)       (triode)

``k`` is KP·W/L for a MOS and 2·BETA for a JFET (whose card writes
I = BETA·vov²).  Channel noise at the operating point: thermal 8kT·gm/3 in
saturation, 4kT·gds0·(1 + η + η²)/(1 + η)·(2/3) in triode with η = 1 −
vds/vov (van der Ziel, *Noise in Solid State Devices and Circuits*, 1986;
long channel), and flicker KF·|I|^AF/f (the simple form, no Cox·L²).
"""

from __future__ import annotations

from dataclasses import dataclass

from netnoise.constants import BOLTZMANN

__all__ = ["Channel", "square_law", "channel_thermal_density"]


@dataclass(frozen=True)
class Channel:
    """The channel at one point: current (A, drain to source in the device's
    own sense) and its derivatives by vgs, vds (S)."""

    current: float
    gm: float
    gds: float
    saturated: bool
    overdrive: float


def square_law(vgs: float, vds: float, threshold: float, k: float, lam: float) -> Channel:
    """The square-law channel for vds ≥ 0 (see the module docstring)."""
    vov = vgs - threshold
    if vov <= 0.0:
        return Channel(0.0, 0.0, 0.0, True, vov)
    clm = 1.0 + lam * vds
    if vds >= vov:
        i0 = 0.5 * k * vov * vov
        return Channel(i0 * clm, k * vov * clm, i0 * lam, True, vov)
    i0 = k * vds * (vov - 0.5 * vds)
    return Channel(i0 * clm, k * vds * clm, k * (vov - vds) * clm + i0 * lam, False, vov)


def channel_thermal_density(channel: Channel, vds: float, k: float, temperature_K: float) -> float:
    """The channel's thermal noise current density (A²/Hz), long channel."""
    if channel.overdrive <= 0.0:
        return 0.0
    if channel.saturated:
        return 8.0 * BOLTZMANN * temperature_K * channel.gm / 3.0
    eta = 1.0 - vds / channel.overdrive
    gds0 = k * channel.overdrive
    return 4.0 * BOLTZMANN * temperature_K * gds0 * (2.0 / 3.0) * (1.0 + eta + eta * eta) / (1.0 + eta)

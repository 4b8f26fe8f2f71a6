"""D: a junction diode at its operating point, with its noise.

Form: ``Dname anode cathode model [area] [temp=CELSIUS]`` with
``.model NAME D (IS= N= RS= CJO= VJ= M= TT= BV= IBV= KF= AF= EG= XTI=)``.

DC (Shockley, with the series resistance RS to an internal anode node):
I = IS·(exp(V/(N·Vt)) − 1) − IBV·exp(−(V + BV)/(N·Vt)) (the second term
only when BV is given), plus GMIN across the junction.  IS, IBV and CJO
scale with the area, RS divides by it; IS follows the temperature with EG
and XTI.  At the operating point the junction is its conductance dI/dV in
parallel with the depletion capacitance Cj(V) and the diffusion capacitance
TT·dI/dV.  Noise: shot 2q|I| and flicker KF·|I|^AF/f of the junction
current, thermal 4kT/RS of the series resistance.
"""

from __future__ import annotations

import math
from typing import Any, ClassVar

import numpy as np

from netnoise.circuit.elements.base import DeviceEnvironment, DeviceNoise
from netnoise.circuit.elements.semiconductor import (
    Semiconductor,
    critical_voltage,
    depletion_capacitance,
    junction_current,
    limit_junction,
    refuse_forced_junction,
    saturation_current_at,
    thermal_voltage,
)
from netnoise.noise.mechanisms import FLICKER, SHOT, shot_current_density

__all__ = ["Diode"]

_PROJECTION = np.array([[1.0, -1.0]])


class Diode(Semiconductor):
    """A pn junction diode between ``nodes[0]`` (anode) and ``nodes[1]`` (cathode)."""

    letter: ClassVar[str] = "D"
    form: ClassVar[str] = "Dname anode cathode model [area] [temp=CELSIUS]"
    model_types: ClassVar[tuple[str, ...]] = ("d",)
    node_counts: ClassVar[tuple[int, ...]] = (2,)
    roles: ClassVar[tuple[str, ...]] = ("anode", "cathode")
    positive: ClassVar[tuple[str, ...]] = ("IS", "N", "VJ")
    signed: ClassVar[tuple[str, ...]] = ()
    defaults: ClassVar[dict[str, float]] = {
        "IS": 1e-14,
        "N": 1.0,
        "RS": 0.0,
        "CJO": 0.0,
        "VJ": 1.0,
        "M": 0.5,
        "TT": 0.0,
        "BV": 0.0,  # 0: no breakdown modelled
        "IBV": 1e-3,
        "KF": 0.0,
        "AF": 1.0,
        "EG": 1.11,
        "XTI": 3.0,
    }

    def dc_paths(self) -> tuple[tuple[str, str], ...]:
        return ((self.nodes[0], self.nodes[1]),)

    def series_resistances(self) -> tuple[float, ...]:
        return (self.p["RS"] / self.area, 0.0)

    def _junction(self, env: DeviceEnvironment) -> tuple[float, float]:
        """(IS at the device temperature, N·Vt)."""
        p = self.p
        t = self.device_temperature_K(env.temperature_K)
        return saturation_current_at(p["IS"] * self.area, t, p["EG"], p["XTI"], p["N"]), p["N"] * thermal_voltage(t)

    def _current(self, vd: float, env: DeviceEnvironment) -> tuple[float, float]:
        """The junction current and its conductance without GMIN (A, S)."""
        saturation, n_vt = self._junction(env)
        i, g = junction_current(vd, saturation, n_vt)
        bv = self.p["BV"]
        if bv > 0.0:
            ib, gb = junction_current(-(vd + bv), self.p["IBV"] * self.area, n_vt)
            i -= ib + self.p["IBV"] * self.area
            g += gb
        return i, g

    def evaluate(self, v, previous, env):
        vd = float(v[0] - v[1])
        settled = True
        if previous is not None:
            saturation, n_vt = self._junction(env)
            vd, settled = limit_junction(vd, float(previous[0]), n_vt, critical_voltage(n_vt, saturation))
            bv = self.p["BV"]
            if bv > 0.0 and vd < -bv:  # the breakdown side is limited as a junction too
                vr, settled_r = limit_junction(
                    -(vd + bv),
                    -(float(previous[0]) + bv),
                    n_vt,
                    critical_voltage(n_vt, self.p["IBV"] * self.area),
                )
                vd, settled = -(vr + bv), settled and settled_r
        i, g = self._current(vd, env)
        i += env.gmin * vd
        g += env.gmin
        return np.array([i, -i]), np.array([[g], [-g]]), _PROJECTION, np.array([vd]), settled

    def operating_details(self, v: np.ndarray, env: DeviceEnvironment) -> tuple[Any, Any, Any]:
        p = self.p
        vd = float(v[0] - v[1])
        refuse_forced_junction(self.name, "", vd, self._junction(env)[1])
        i, g = self._current(vd, env)
        t = self.device_temperature_K(env.temperature_K)
        depletion = depletion_capacitance(vd, p["CJO"] * self.area, p["VJ"], p["M"])
        diffusion = p["TT"] * g
        noise = [DeviceNoise("shot", SHOT, 0, 1, shot_current_density(i), value=i, unit="A")]
        if p["KF"] > 0.0 and i != 0.0:
            noise.append(DeviceNoise("flicker", FLICKER, 0, 1, 0.0, p["KF"] * abs(i) ** p["AF"], value=i, unit="A"))
        summary = (
            ("current_A", i),
            ("junction_voltage_V", vd),
            ("conductance_S", g),
            ("resistance_ohm", 1.0 / g if g > 0.0 else math.inf),
            ("capacitance_F", depletion + diffusion),
            ("temperature_K", t),
        )
        return ((0, 1, depletion + diffusion),), tuple(noise), summary

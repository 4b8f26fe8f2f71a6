"""J: a junction FET (square law) at its operating point, with its noise.

Form: ``Jname drain gate source model [area] [temp=CELSIUS]`` with
``.model NAME NJF|PJF (VTO= BETA= LAMBDA= RD= RS= CGS= CGD= PB= IS= KF= AF=)``.

DC: the channel I = BETA·(vgs − VTO)²·(1 + LAMBDA·vds) in saturation and its
triode continuation (see :mod:`netnoise.circuit.elements.fet`; every
voltage's sign reversed for PJF, whose card writes VTO as an NJF's does,
negative for a depletion device: the SPICE convention, from memory); the
gate-source and gate-drain junctions each IS·(e^{v/Vt} − 1) plus GMIN; RD and RS ohmic to internal nodes.  BETA, IS, CGS and CGD
scale with the area, RD and RS divide by it; parameters do not follow the
temperature.  At the operating point: gm, gds and the junction conductances,
Cgs = CGS/(1 − vgs/PB)^½ and Cgd likewise.  Noise: channel thermal 8kT·gm/3,
flicker KF·|Id|^AF/f, gate shot 2q|Ig| of the junction leakage, thermal of RD
and RS.
"""

from __future__ import annotations

import math
from typing import Any, ClassVar

import numpy as np

from netnoise.circuit.elements.base import DeviceEnvironment, DeviceNoise
from netnoise.circuit.elements.fet import channel_thermal_density, square_law
from netnoise.circuit.elements.semiconductor import (
    Semiconductor,
    critical_voltage,
    depletion_capacitance,
    junction_current,
    limit_junction,
    limit_step,
    refuse_forced_junction,
    thermal_voltage,
)
from netnoise.noise.mechanisms import CHANNEL_THERMAL, FLICKER, SHOT, shot_current_density

__all__ = ["JunctionFet"]

# control voltages u = (vgs, vgd) from device node voltages (d', g, s')
_PROJECTION = np.array([[0.0, 1.0, -1.0], [-1.0, 1.0, 0.0]])


class JunctionFet(Semiconductor):
    """An N- or P-channel JFET: ``nodes`` (drain, gate, source)."""

    letter: ClassVar[str] = "J"
    form: ClassVar[str] = "Jname drain gate source model [area] [temp=CELSIUS]"
    model_types: ClassVar[tuple[str, ...]] = ("njf", "pjf")
    node_counts: ClassVar[tuple[int, ...]] = (3,)
    roles: ClassVar[tuple[str, ...]] = ("drain", "gate", "source")
    positive: ClassVar[tuple[str, ...]] = ("BETA", "IS", "PB")
    signed: ClassVar[tuple[str, ...]] = ("VTO",)
    defaults: ClassVar[dict[str, float]] = {
        "VTO": -2.0,
        "BETA": 1e-4,
        "LAMBDA": 0.0,
        "RD": 0.0,
        "RS": 0.0,
        "CGS": 0.0,
        "CGD": 0.0,
        "PB": 1.0,
        "IS": 1e-14,
        "KF": 0.0,
        "AF": 1.0,
    }

    @property
    def polarity(self) -> float:
        return -1.0 if self.model_type == "pjf" else 1.0

    def dc_paths(self) -> tuple[tuple[str, str], ...]:
        d, g, s = self.nodes
        return ((d, s), (g, s), (g, d))

    def series_resistances(self) -> tuple[float, ...]:
        return (self.p["RD"] / self.area, 0.0, self.p["RS"] / self.area)

    def _parts(self, vgs: float, vgd: float, env: DeviceEnvironment) -> dict[str, Any]:
        p = self.p
        t = self.device_temperature_K(env.temperature_K)
        vt = thermal_voltage(t)
        k = 2.0 * p["BETA"] * self.area
        vds = vgs - vgd
        if vds >= 0.0:
            ch = square_law(vgs, vds, p["VTO"], k, p["LAMBDA"])
            # I(vgs, vds): by vgs = gm + gds, by vgd = −gds
            ids, d_gs, d_gd = ch.current, ch.gm + ch.gds, -ch.gds
        else:  # drain and source swap roles: I = −I'(vgd, −vds)
            ch = square_law(vgd, -vds, p["VTO"], k, p["LAMBDA"])
            ids, d_gs, d_gd = -ch.current, ch.gds, -(ch.gm + ch.gds)
        i_s = p["IS"] * self.area
        igs, ggs = junction_current(vgs, i_s, vt)
        igd, ggd = junction_current(vgd, i_s, vt)
        return {
            "ch": ch,
            "ids": ids,
            "d_gs": d_gs,
            "d_gd": d_gd,
            "igs": igs,
            "ggs": ggs,
            "igd": igd,
            "ggd": ggd,
            "vt": vt,
            "k": k,
            "vds": vds,
            "T": t,
        }

    def evaluate(self, v, previous, env):
        pol = self.polarity
        vgs, vgd = pol * float(v[1] - v[2]), pol * float(v[1] - v[0])
        settled = True
        if previous is not None:
            vt = thermal_voltage(self.device_temperature_K(env.temperature_K))
            vcrit = critical_voltage(vt, self.p["IS"] * self.area)
            old_gs, old_gd = float(previous[0]), float(previous[1])
            vgs, ok1 = limit_junction(vgs, old_gs, vt, vcrit)
            vgd, ok2 = limit_junction(vgd, old_gd, vt, vcrit)
            most = 1.0 + abs(old_gs - self.p["VTO"])
            vgs, ok3 = limit_step(vgs, old_gs, most)
            vgd, ok4 = limit_step(vgd, old_gd, max(most, 1.0 + abs(old_gd - self.p["VTO"])))
            settled = ok1 and ok2 and ok3 and ok4
        x = self._parts(vgs, vgd, env)
        g = env.gmin
        igs, igd = x["igs"] + g * vgs, x["igd"] + g * vgd
        ggs, ggd = x["ggs"] + g, x["ggd"] + g
        ids = x["ids"]
        # currents out of (d', g, s') into the device
        currents = np.array([ids - igd, igs + igd, -ids - igs])
        by_u = np.array(
            [
                [x["d_gs"], x["d_gd"] - ggd],
                [ggs, ggd],
                [-x["d_gs"] - ggs, -x["d_gd"]],
            ]
        )
        return pol * currents, pol * by_u, pol * _PROJECTION, np.array([vgs, vgd]), settled

    def operating_details(self, v: np.ndarray, env: DeviceEnvironment) -> tuple[Any, Any, Any]:
        p, pol = self.p, self.polarity
        vgs, vgd = pol * float(v[1] - v[2]), pol * float(v[1] - v[0])
        x = self._parts(vgs, vgd, env)
        refuse_forced_junction(self.name, "gate-source", vgs, x["vt"])
        refuse_forced_junction(self.name, "gate-drain", vgd, x["vt"])
        ch, t = x["ch"], x["T"]
        ids = x["ids"]
        cgs = depletion_capacitance(vgs, p["CGS"] * self.area, p["PB"], 0.5)
        cgd = depletion_capacitance(vgd, p["CGD"] * self.area, p["PB"], 0.5)
        ig = x["igs"] + x["igd"]
        drain, source = (0, 2) if x["vds"] >= 0.0 else (2, 0)
        noise = [
            DeviceNoise(
                "channel",
                CHANNEL_THERMAL,
                drain,
                source,
                channel_thermal_density(ch, abs(x["vds"]), x["k"], t),
                value=ch.gm,
                unit="S",
                temperature_K=t,
            ),
            DeviceNoise("gate shot", SHOT, 1, 2, shot_current_density(ig), value=ig, unit="A"),
        ]
        if p["KF"] > 0.0 and ids != 0.0:
            noise.append(DeviceNoise("flicker", FLICKER, 0, 2, 0.0, p["KF"] * abs(ids) ** p["AF"], value=ids, unit="A"))
        summary = (
            ("drain_current_A", pol * ids),
            ("gate_current_A", pol * ig),
            ("gate_source_V", pol * vgs),
            ("drain_source_V", pol * x["vds"]),
            ("transconductance_S", ch.gm),
            ("output_resistance_ohm", 1.0 / ch.gds if ch.gds > 0.0 else math.inf),
            ("c_gs_F", cgs),
            ("c_gd_F", cgd),
            ("temperature_K", t),
        )
        return ((1, 2, cgs), (1, 0, cgd)), tuple(noise), summary

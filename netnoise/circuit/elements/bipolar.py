"""Q: a bipolar transistor (Gummel–Poon DC) at its operating point, with its noise.

Form: ``Qname collector base emitter [substrate] model [area] [temp=CELSIUS]``
with ``.model NAME NPN|PNP (IS= BF= BR= NF= NR= VAF= VAR= IKF= IKR= ISE= NE=
ISC= NC= RB= RE= RC= CJE= VJE= MJE= CJC= VJC= MJC= TF= TR= XTB= EG= XTI= KF= AF=)``.

DC (Gummel & Poon, Bell Syst. Tech. J. 49, 1970, in the SPICE2 form of
Massobrio & Antognetti, *Semiconductor Device Modeling with SPICE*, 1993),
with vbe, vbc the internal junction voltages (signs reversed for PNP):

  Ibe1 = IS(e^{vbe/NF·Vt} − 1), Ibe2 = ISE(e^{vbe/NE·Vt} − 1),
  Ibc1 = IS(e^{vbc/NR·Vt} − 1), Ibc2 = ISC(e^{vbc/NC·Vt} − 1),
  q1 = 1/(1 − vbc/VAF − vbe/VAR), q2 = Ibe1/IKF + Ibc1/IKR,
  qb = q1(1 + √(1 + 4q2))/2,
  Ic = (Ibe1 − Ibc1)/qb − Ibc1/BR − Ibc2, Ib = Ibe1/BF + Ibe2 + Ibc1/BR + Ibc2.

RE and RC are ohmic resistances to internal nodes; the base resistance
between the base and the internal base falls from RB towards RBM as
RBM + (RB − RBM)/qb, or with IRB as RBM + 3(RB − RBM)(tan z − z)/(z·tan²z)
(its value is held across each Newton step, and its small-signal value is
the resistance at the operating point).  The substrate node is
accepted and left unconnected (no substrate junction).  At the operating
point: the Jacobian (gm, gπ, gμ, go), Cbe = Cje(vbe) + TF·gm and Cbc =
Cjc(vbc) + TR·gbc.  Noise: base shot 2q|Ib| and flicker KF·|Ib|^AF/f
between internal base and emitter, collector shot 2q|Ic| between internal
collector and emitter, thermal noise of RB, RE and RC.  BF and BR follow the
temperature as (T/Tnom)^XTB, IS with EG and XTI.
"""

from __future__ import annotations

import math
from typing import Any, ClassVar

import numpy as np

from netnoise.circuit.elements.base import DeviceEnvironment, DeviceNoise
from netnoise.circuit.elements.semiconductor import (
    NOMINAL_TEMPERATURE_K,
    Semiconductor,
    critical_voltage,
    depletion_capacitance,
    junction_current,
    limit_junction,
    refuse_forced_junction,
    saturation_current_at,
    thermal_voltage,
)
from netnoise.noise.mechanisms import FLICKER, SHOT, THERMAL, shot_current_density, thermal_current_density

__all__ = ["Bipolar"]

# control voltages u = (vbe, vbc) from device node voltages (c', b', e')
_PROJECTION = np.array([[0.0, 1.0, -1.0], [-1.0, 1.0, 0.0]])


def _inverse(x: float) -> float:
    return 0.0 if x == 0.0 or math.isinf(x) else 1.0 / x


class Bipolar(Semiconductor):
    """An NPN or PNP transistor: ``nodes`` (collector, base, emitter)."""

    letter: ClassVar[str] = "Q"
    form: ClassVar[str] = "Qname collector base emitter [substrate] model [area] [temp=CELSIUS]"
    model_types: ClassVar[tuple[str, ...]] = ("npn", "pnp")
    node_counts: ClassVar[tuple[int, ...]] = (3, 4)
    roles: ClassVar[tuple[str, ...]] = ("collector", "base", "emitter")
    positive: ClassVar[tuple[str, ...]] = ("IS", "BF", "BR", "NF", "NR", "NE", "NC", "VJE", "VJC")
    signed: ClassVar[tuple[str, ...]] = ("RBM",)
    defaults: ClassVar[dict[str, float]] = {
        "IS": 1e-16,
        "BF": 100.0,
        "BR": 1.0,
        "NF": 1.0,
        "NR": 1.0,
        "VAF": 0.0,  # 0: no base-width modulation (infinite)
        "VAR": 0.0,
        "IKF": 0.0,  # 0: no high injection (infinite)
        "IKR": 0.0,
        "ISE": 0.0,
        "NE": 1.5,
        "ISC": 0.0,
        "NC": 2.0,
        "RB": 0.0,
        "RBM": -1.0,  # negative: equal to RB (no modulation)
        "IRB": 0.0,  # 0: the base resistance falls with qb instead
        "RE": 0.0,
        "RC": 0.0,
        "CJE": 0.0,
        "VJE": 0.75,
        "MJE": 0.33,
        "CJC": 0.0,
        "VJC": 0.75,
        "MJC": 0.33,
        "TF": 0.0,
        "TR": 0.0,
        "XTB": 0.0,
        "EG": 1.11,
        "XTI": 3.0,
        "KF": 0.0,
        "AF": 1.0,
    }

    @property
    def polarity(self) -> float:
        return -1.0 if self.model_type == "pnp" else 1.0

    def terminals(self) -> tuple[str, ...]:
        return self.nodes[:3]  # the substrate is not connected

    def dc_paths(self) -> tuple[tuple[str, str], ...]:
        c, b, e = self.nodes[:3]
        return ((b, e), (b, c), (c, e))

    def series_resistances(self) -> tuple[float, ...]:
        # RB is not a fixed resistance: it lives in the core, between the base and the internal base
        p = self.p
        return (p["RC"] / self.area, 0.0, p["RE"] / self.area)

    @property
    def _has_rb(self) -> bool:
        return self.p["RB"] > 0.0

    def internal_nodes(self) -> tuple[str, ...]:
        rs = self.series_resistances()
        return tuple(role for role, r in zip(self.roles, rs) if r > 0.0 or (role == "base" and self._has_rb))

    def device_nodes(self) -> tuple[str, ...]:
        """(collector', base', emitter') and, with RB, the external base last."""
        c, b, e = self.nodes[:3]
        rc, _, re = self.series_resistances()
        core = ("#collector" if rc > 0.0 else c, "#base" if self._has_rb else b, "#emitter" if re > 0.0 else e)
        return (*core, b) if self._has_rb else core

    def base_resistance(self, qb: float, ib: float) -> float:
        """The base spreading resistance (Ω): RBM + (RB − RBM)/qb, or with IRB the current-crowding
        form RBM + 3(RB − RBM)(tan z − z)/(z·tan²z) (Massobrio & Antognetti 1993)."""
        p, a = self.p, self.area
        rb = p["RB"] / a
        rbm = rb if p["RBM"] < 0.0 else p["RBM"] / a
        irb = p["IRB"] * a
        if irb <= 0.0:
            return rbm + (rb - rbm) / qb
        if ib <= 0.0:
            return rb
        root = math.sqrt(ib / irb)
        z = (-1.0 + math.sqrt(1.0 + 144.0 * ib / (math.pi**2 * irb))) / (24.0 / math.pi**2 * root)
        if z < 1e-6:
            return rb
        tz = math.tan(z)
        return rbm + 3.0 * (rb - rbm) * (tz - z) / (z * tz * tz)

    def _scaled(self, env: DeviceEnvironment) -> dict[str, float]:
        p, a = self.p, self.area
        t = self.device_temperature_K(env.temperature_K)
        ratio = t / NOMINAL_TEMPERATURE_K
        factor = ratio ** p["XTB"]
        i_s = saturation_current_at(p["IS"] * a, t, p["EG"], p["XTI"], 1.0)
        growth = i_s / (p["IS"] * a)
        return {
            "T": t,
            "VT": thermal_voltage(t),
            "IS": i_s,
            "BF": p["BF"] * factor,
            "BR": p["BR"] * factor,
            "ISE": p["ISE"] * a / factor * growth ** (1.0 / p["NE"]),
            "ISC": p["ISC"] * a / factor * growth ** (1.0 / p["NC"]),
            "IKF": p["IKF"] * a,
            "IKR": p["IKR"] * a,
        }

    def _currents(self, vbe: float, vbc: float, s: dict[str, float]) -> dict[str, float]:
        """Terminal currents Ic, Ib (NPN sense) and their derivatives by vbe, vbc."""
        p, vt = self.p, s["VT"]
        ibe1, gbe1 = junction_current(vbe, s["IS"], p["NF"] * vt)
        ibc1, gbc1 = junction_current(vbc, s["IS"], p["NR"] * vt)
        ibe2, gbe2 = junction_current(vbe, s["ISE"], p["NE"] * vt) if s["ISE"] > 0 else (0.0, 0.0)
        ibc2, gbc2 = junction_current(vbc, s["ISC"], p["NC"] * vt) if s["ISC"] > 0 else (0.0, 0.0)
        inv_vaf, inv_var = _inverse(p["VAF"]), _inverse(p["VAR"])
        early = 1.0 - vbc * inv_vaf - vbe * inv_var
        if early > 1e-6:
            q1 = 1.0 / early
            dq1_be, dq1_bc = q1 * q1 * inv_var, q1 * q1 * inv_vaf
        else:  # a junction voltage beyond an Early voltage (a far Newton step): held, not divided by zero
            q1, dq1_be, dq1_bc = 1e6, 0.0, 0.0
        inv_ikf, inv_ikr = _inverse(s["IKF"]), _inverse(s["IKR"])
        q2 = ibe1 * inv_ikf + ibc1 * inv_ikr
        root = math.sqrt(max(1.0 + 4.0 * q2, 1e-12))
        qb = q1 * (1.0 + root) / 2.0
        dqb_be = dq1_be * (1.0 + root) / 2.0 + q1 * gbe1 * inv_ikf / root
        dqb_bc = dq1_bc * (1.0 + root) / 2.0 + q1 * gbc1 * inv_ikr / root
        transport = (ibe1 - ibc1) / qb
        dt_be = gbe1 / qb - transport / qb * dqb_be
        dt_bc = -gbc1 / qb - transport / qb * dqb_bc
        bf, br = s["BF"], s["BR"]
        return {
            "ic": transport - ibc1 / br - ibc2,
            "ib": ibe1 / bf + ibe2 + ibc1 / br + ibc2,
            "dic_be": dt_be,
            "dic_bc": dt_bc - gbc1 / br - gbc2,
            "dib_be": gbe1 / bf + gbe2,
            "dib_bc": gbc1 / br + gbc2,
            "gbc": gbc1 + gbc2,
            "qb": qb,
        }

    def evaluate(self, v, previous, env):
        pol = self.polarity
        s = self._scaled(env)
        vbe, vbc = pol * float(v[1] - v[2]), pol * float(v[1] - v[0])
        settled = True
        if previous is not None:
            vt = s["VT"]
            nf, nr = self.p["NF"] * vt, self.p["NR"] * vt
            vbe, ok_be = limit_junction(vbe, float(previous[0]), nf, critical_voltage(nf, s["IS"]))
            vbc, ok_bc = limit_junction(vbc, float(previous[1]), nr, critical_voltage(nr, s["IS"]))
            settled = ok_be and ok_bc
        c = self._currents(vbe, vbc, s)
        g = env.gmin
        ic = c["ic"] - g * vbc
        ib = c["ib"] + g * (vbe + vbc)
        dic = (c["dic_be"], c["dic_bc"] - g)
        dib = (c["dib_be"] + g, c["dib_bc"] + g)
        currents = pol * np.array([ic, ib, -(ic + ib)])
        by_u = np.array([dic, dib, (-(dic[0] + dib[0]), -(dic[1] + dib[1]))])
        # u = pol·P·v and the currents are pol·I(u): by u, pol·dI/du
        if not self._has_rb:
            return currents, pol * by_u, _PROJECTION * pol, np.array([vbe, vbc]), settled
        # the base resistance: its value follows qb (or the base current) and is held for the step
        # (its own derivative left out of the Jacobian, as is common practice)
        vx = pol * float(v[3] - v[1])
        gx = 1.0 / self.base_resistance(c["qb"], c["ib"])
        currents = np.append(currents, pol * gx * vx)
        currents[1] -= pol * gx * vx
        by_u = np.vstack([np.hstack([by_u, np.zeros((3, 1))]), [0.0, 0.0, gx]])
        by_u[1, 2] = -gx
        projection = np.zeros((3, 4))
        projection[:2, :3] = _PROJECTION
        projection[2, 3], projection[2, 1] = 1.0, -1.0
        return currents, pol * by_u, projection * pol, np.array([vbe, vbc, vx]), settled

    def operating_details(self, v: np.ndarray, env: DeviceEnvironment) -> tuple[Any, Any, Any]:
        p, pol, a = self.p, self.polarity, self.area
        s = self._scaled(env)
        vbe, vbc = pol * float(v[1] - v[2]), pol * float(v[1] - v[0])
        refuse_forced_junction(self.name, "base-emitter", vbe, p["NF"] * s["VT"])
        refuse_forced_junction(self.name, "base-collector", vbc, p["NR"] * s["VT"])
        c = self._currents(vbe, vbc, s)
        ic, ib = c["ic"], c["ib"]
        gm = c["dic_be"]
        gpi = c["dib_be"]
        go = -c["dic_bc"]  # dIc/dvce at fixed vbe
        cbe = depletion_capacitance(vbe, p["CJE"] * a, p["VJE"], p["MJE"]) + p["TF"] * gm
        cbc = depletion_capacitance(vbc, p["CJC"] * a, p["VJC"], p["MJC"]) + p["TR"] * c["gbc"]
        rbb = self.base_resistance(c["qb"], ib) if self._has_rb else 0.0
        noise = [
            DeviceNoise("base shot", SHOT, 1, 2, shot_current_density(ib), value=ib, unit="A"),
            DeviceNoise("collector shot", SHOT, 0, 2, shot_current_density(ic), value=ic, unit="A"),
        ]
        if p["KF"] > 0.0 and ib != 0.0:
            noise.append(
                DeviceNoise("base flicker", FLICKER, 1, 2, 0.0, p["KF"] * abs(ib) ** p["AF"], value=ib, unit="A")
            )
        if rbb > 0.0:
            noise.append(
                DeviceNoise(
                    "base resistance",
                    THERMAL,
                    3,
                    1,
                    thermal_current_density(rbb, s["T"]),
                    value=rbb,
                    unit="Ω",
                    temperature_K=s["T"],
                )
            )
        summary = (
            ("collector_current_A", pol * ic),
            ("base_current_A", pol * ib),
            ("base_emitter_V", pol * vbe),
            ("collector_emitter_V", pol * (vbe - vbc)),
            ("current_gain", ic / ib if ib != 0.0 else math.inf),
            ("transconductance_S", gm),
            ("r_pi_ohm", 1.0 / gpi if gpi > 0.0 else math.inf),
            ("output_resistance_ohm", 1.0 / go if go > 0.0 else math.inf),
            ("base_resistance_ohm", rbb),
            ("c_pi_F", cbe),
            ("c_mu_F", cbc),
            ("temperature_K", s["T"]),
        )
        return ((1, 2, cbe), (1, 0, cbc)), tuple(noise), summary

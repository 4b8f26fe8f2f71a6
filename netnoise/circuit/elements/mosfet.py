"""M: a MOS transistor (level 1) at its operating point, with its noise.

Form: ``Mname drain gate source bulk model [W=metres] [L=metres] [m=count]
[temp=CELSIUS]`` (AD= AS= PD= PS= NRD= NRS= are read and named in a notice) with ``.model NAME NMOS|PMOS (VTO= KP= GAMMA= PHI= LAMBDA=
RD= RS= CBD= CBS= CGSO= CGDO= CGBO= TOX= KF= AF=)``.

DC (Shichman & Hodges 1968, the level-1 model): threshold VT = VTO +
GAMMA·(√(PHI − vbs) − √PHI) (for vbs > 0, √PHI/(1 + vbs/(2·PHI)) in place of
the first root), channel I = (KP/2)(W/L)(vgs − VT)²(1 +
LAMBDA·vds) in saturation and its triode continuation (see
:mod:`netnoise.circuit.elements.fet`; every voltage reversed for PMOS, whose
card writes VTO negative), times m.  The bulk junctions are not modelled as
diodes (no DC current, CBD and CBS as fixed capacitances).  Gate capacitances (Meyer, IEEE JSSC 6, 1971) from
Cox = εox·W·L/TOX (εox = 3.9·ε0): in saturation Cgs = 2/3·Cox, in triode
Cgs = Cgd = Cox/2, in cut-off Cgb = Cox; plus the overlaps CGSO·W, CGDO·W,
CGBO·L.  Noise: channel thermal 8kT·gm/3 (long channel), flicker KF·|Id|^AF/f
(the simple form, without Cox·L²), thermal of RD and RS.  Parameters do not
follow the temperature.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np

from netnoise.circuit.elements.base import BuildContext, DeviceEnvironment, DeviceNoise
from netnoise.circuit.elements.fet import channel_thermal_density, square_law
from netnoise.circuit.elements.semiconductor import Semiconductor, limit_step
from netnoise.noise.mechanisms import CHANNEL_THERMAL, FLICKER

__all__ = ["Mosfet"]

# drain and source geometry for bulk junctions that are not modelled: read, named in a notice
_GEOMETRY_READ = ("ad", "as", "pd", "ps", "nrd", "nrs")
_EPS_OX = 3.9 * 8.8541878128e-12  # F/m, silicon dioxide (common practice)
# control voltages u = (vgs, vds, vbs) from device node voltages (d', g, s', b)
_PROJECTION = np.array([[0.0, 1.0, -1.0, 0.0], [1.0, 0.0, -1.0, 0.0], [0.0, 0.0, -1.0, 1.0]])


@dataclass(frozen=True)
class Mosfet(Semiconductor):
    """An N- or P-channel MOS transistor: ``nodes`` (drain, gate, source, bulk)."""

    width: float = 100e-6
    length: float = 100e-6
    count: float = 1.0

    letter: ClassVar[str] = "M"
    form: ClassVar[str] = "Mname drain gate source bulk model [W=metres] [L=metres] [m=count] [temp=CELSIUS]"
    model_types: ClassVar[tuple[str, ...]] = ("nmos", "pmos")
    node_counts: ClassVar[tuple[int, ...]] = (4,)
    roles: ClassVar[tuple[str, ...]] = ("drain", "gate", "source", "bulk")
    line_options: ClassVar[tuple[str, ...]] = ("temp", "w", "l", "m", *_GEOMETRY_READ)
    takes_area: ClassVar[bool] = False
    positive: ClassVar[tuple[str, ...]] = ("KP", "PHI")
    signed: ClassVar[tuple[str, ...]] = ("VTO",)
    defaults: ClassVar[dict[str, float]] = {
        "VTO": 0.0,
        "KP": 2e-5,
        "GAMMA": 0.0,
        "PHI": 0.6,
        "LAMBDA": 0.0,
        "RD": 0.0,
        "RS": 0.0,
        "CBD": 0.0,
        "CBS": 0.0,
        "CGSO": 0.0,
        "CGDO": 0.0,
        "CGBO": 0.0,
        "TOX": 0.0,  # 0: no intrinsic gate capacitance
        "KF": 0.0,
        "AF": 1.0,
    }

    @classmethod
    def build_options(cls, options: dict[str, tuple[float, Any]], ctx: BuildContext) -> dict[str, Any]:
        out = {}
        unused = [key.upper() for key in _GEOMETRY_READ if key in options]
        if unused:
            ctx.notice(f"{ctx.name}: {'=, '.join(unused)}= read but not modelled (no bulk junction diodes)")
        for key, field_name in (("w", "width"), ("l", "length"), ("m", "count")):
            if key in options:
                value, loc = options[key]
                if not (math.isfinite(value) and value > 0.0):
                    raise ctx.fail(f"{ctx.name}: {key.upper()}={value:g} must be positive", loc)
                out[field_name] = value
        return out

    @property
    def polarity(self) -> float:
        return -1.0 if self.model_type == "pmos" else 1.0

    def dc_paths(self) -> tuple[tuple[str, str], ...]:
        return ((self.nodes[0], self.nodes[2]),)

    def series_resistances(self) -> tuple[float, ...]:
        return (self.p["RD"] / self.count, 0.0, self.p["RS"] / self.count, 0.0)

    def _k(self) -> float:
        return self.p["KP"] * self.width / self.length * self.count

    def _threshold(self, vbs: float) -> tuple[float, float]:
        """VT and dVT/dvbs."""
        p = self.p
        vto = self.polarity * p["VTO"]  # a PMOS card writes VTO negative (common practice)
        if p["GAMMA"] == 0.0:
            return vto, 0.0
        phi = p["PHI"]
        if vbs <= 0.0:
            root = math.sqrt(phi - vbs)
            slope = -1.0 / (2.0 * root)
        else:  # forward body bias: √φ/(1 + vbs/2φ), smooth at 0 and never negative (common practice)
            root = math.sqrt(phi) / (1.0 + vbs / (2.0 * phi))
            slope = -math.sqrt(phi) / (2.0 * phi) / (1.0 + vbs / (2.0 * phi)) ** 2
        return vto + p["GAMMA"] * (root - math.sqrt(phi)), p["GAMMA"] * slope

    def _channel(self, vgs: float, vds: float, vbs: float) -> dict[str, Any]:
        """I (drain to source) and its derivatives by (vgs, vds, vbs)."""
        lam, k = self.p["LAMBDA"], self._k()
        if vds >= 0.0:
            vth, dvth = self._threshold(vbs)
            ch = square_law(vgs, vds, vth, k, lam)
            return {"ch": ch, "i": ch.current, "d": (ch.gm, ch.gds, -ch.gm * dvth), "vth": vth}
        # reversed: the drain acts as source; vgd = vgs − vds, vbd = vbs − vds
        vth, dvth = self._threshold(vbs - vds)
        ch = square_law(vgs - vds, -vds, vth, k, lam)
        gmb = -ch.gm * dvth
        # I = −I'(vgd, −vds, vbd)
        return {"ch": ch, "i": -ch.current, "d": (-ch.gm, ch.gm + ch.gds + gmb, -gmb), "vth": vth}

    def evaluate(self, v, previous, env):
        pol = self.polarity
        vgs, vds, vbs = pol * float(v[1] - v[2]), pol * float(v[0] - v[2]), pol * float(v[3] - v[2])
        settled = True
        if previous is not None:
            vto = self.polarity * self.p["VTO"]
            vgs, ok1 = limit_step(vgs, float(previous[0]), 1.0 + abs(float(previous[0]) - vto))
            vds, ok2 = limit_step(vds, float(previous[1]), 2.0 + abs(float(previous[1])))
            settled = ok1 and ok2
        c = self._channel(vgs, vds, vbs)
        g = env.gmin
        i = c["i"] + g * vds
        dgs, dds, dbs = c["d"]
        dds += g
        currents = np.array([i, 0.0, -i, 0.0])
        by_u = np.array([[dgs, dds, dbs], [0.0, 0.0, 0.0], [-dgs, -dds, -dbs], [0.0, 0.0, 0.0]])
        return pol * currents, pol * by_u, pol * _PROJECTION, np.array([vgs, vds, vbs]), settled

    def operating_details(self, v: np.ndarray, env: DeviceEnvironment) -> tuple[Any, Any, Any]:
        p, pol = self.p, self.polarity
        t = self.device_temperature_K(env.temperature_K)
        vgs, vds, vbs = pol * float(v[1] - v[2]), pol * float(v[0] - v[2]), pol * float(v[3] - v[2])
        c = self._channel(vgs, vds, vbs)
        ch = c["ch"]
        vth = c["vth"]
        ids = c["i"]
        w, length, m = self.width, self.length, self.count
        cox = _EPS_OX / p["TOX"] * w * length * m if p["TOX"] > 0.0 else 0.0
        if ch.overdrive <= 0.0:
            cgs, cgd, cgb = 0.0, 0.0, cox
        elif ch.saturated:
            cgs, cgd, cgb = 2.0 * cox / 3.0, 0.0, 0.0
        else:
            cgs, cgd, cgb = cox / 2.0, cox / 2.0, 0.0
        if vds < 0.0:
            cgs, cgd = cgd, cgs
        cgs += p["CGSO"] * w * m
        cgd += p["CGDO"] * w * m
        cgb += p["CGBO"] * length * m
        drain, source = (0, 2) if vds >= 0.0 else (2, 0)
        gmb = abs(c["d"][2])
        noise = [
            DeviceNoise(
                "channel",
                CHANNEL_THERMAL,
                drain,
                source,
                channel_thermal_density(ch, abs(vds), self._k(), t),
                value=ch.gm,
                unit="S",
                temperature_K=t,
            )
        ]
        if p["KF"] > 0.0 and ids != 0.0:
            noise.append(DeviceNoise("flicker", FLICKER, 0, 2, 0.0, p["KF"] * abs(ids) ** p["AF"], value=ids, unit="A"))
        summary = (
            ("drain_current_A", pol * ids),
            ("gate_source_V", pol * vgs),
            ("drain_source_V", pol * vds),
            ("threshold_V", pol * vth),
            ("transconductance_S", ch.gm),
            ("body_transconductance_S", gmb),
            ("output_resistance_ohm", 1.0 / ch.gds if ch.gds > 0.0 else math.inf),
            ("c_gs_F", cgs),
            ("c_gd_F", cgd),
            ("c_gb_F", cgb),
            ("temperature_K", t),
        )
        capacitors = ((1, 2, cgs), (1, 0, cgd), (1, 3, cgb), (3, 0, p["CBD"] * m), (3, 2, p["CBS"] * m))
        return capacitors, tuple(noise), summary

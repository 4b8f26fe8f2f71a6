"""The diode D: its operating point and noise against published results.

Every reference value names its source.  Tolerances are relative.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants
from scipy.special import lambertw

from netnoise.engine.analysis import analyze
from netnoise.engine.dc import operating_point
from netnoise.errors import CircuitError, NetlistError
from netnoise.netlist.load import parse_netlist

K_B = constants.Boltzmann
Q = constants.elementary_charge
T = 300.15  # K, 27 °C
VT = K_B * T / Q


def _netlist(body: str) -> str:
    return "diode test\n" + body + "\n.end\n"


def test_diode_series_resistor_operating_point_is_lambert_w():
    # V = I·R + n·Vt·ln(1 + I/IS) solved exactly: I = n·Vt/R · W(IS·R/(n·Vt) · exp((V + IS·R)/(n·Vt))) − IS
    # (the closed form with the Lambert W function: Banwell & Jayakumar, Electronics Letters 36, 2000).
    vs, r, i_s, n = 5.0, 1e3, 1e-14, 1.5
    circuit = parse_netlist(_netlist(f"V1 in 0 {vs}\nR1 in a {r}\nD1 a 0 dm\n.model dm D (IS={i_s} N={n})"))
    op = operating_point(circuit)
    nvt = n * VT
    arg = i_s * r / nvt * math.exp((vs + i_s * r) / nvt)
    current = nvt / r * float(np.real(lambertw(arg))) - i_s
    assert op.element_currents["R1"] == pytest.approx(current, rel=1e-9)
    assert op.devices["D1"]["current_A"] == pytest.approx(current, rel=1e-9)
    assert op.node_voltages["a"] == pytest.approx(vs - current * r, rel=1e-9)


def test_forward_diode_noise_is_half_a_resistor_rd():
    # A forward-biased diode's voltage noise density is √(2kT·r_d), r_d = Vt/I: half the thermal
    # noise power of a resistor r_d (Motchenbacher & Connelly, Low-Noise Electronic System Design,
    # ch. on diodes).  Driven by an ideal current source so only the diode is seen.
    i_dc = 1e-3
    circuit = parse_netlist(_netlist(f"I1 0 a {i_dc}\nD1 a 0 dm\n.model dm D (IS=1e-14)"))
    result = analyze(circuit, output="a", band=(10.0, 1e3), temperature_celsius=27.0)
    rd = VT / i_dc
    assert result.spot_density(100.0) == pytest.approx(math.sqrt(2 * K_B * T * rd), rel=1e-6)
    assert result.source_mechanisms == ("shot",)


def test_diode_flicker_corner_from_kf_and_af():
    # Flicker density KF·I^AF/f equals shot 2qI at fc = KF·I^(AF−1)/(2q) (the SPICE noise model;
    # common practice).
    i_dc, kf, af = 1e-4, 1e-15, 1.2
    circuit = parse_netlist(_netlist(f"I1 0 a {i_dc}\nD1 a 0 dm\n.model dm D (IS=1e-14 KF={kf} AF={af})"))
    result = analyze(circuit, output="a", band=(1.0, 1e6), temperature_celsius=27.0)
    corner = kf * i_dc ** (af - 1) / (2 * Q)
    rd = VT / i_dc
    white = 2 * Q * i_dc * rd**2  # Schottky 1918, across r_d
    assert corner == pytest.approx(494.6, rel=1e-3)  # the numbers above (arithmetic)
    assert result.spot_density(100.0) ** 2 == pytest.approx(white * (1 + corner / 100.0), rel=1e-6)


def test_series_resistance_adds_its_thermal_noise():
    # RS in series: v² = 2kT·r_d + 4kT·RS (Johnson 1928; Motchenbacher & Connelly).
    i_dc, rs = 1e-3, 50.0
    circuit = parse_netlist(_netlist(f"I1 0 a {i_dc}\nD1 a 0 dm\n.model dm D (IS=1e-14 RS={rs})"))
    result = analyze(circuit, output="a", band=(10.0, 1e3), temperature_celsius=27.0)
    rd = VT / i_dc
    assert result.spot_density(100.0) ** 2 == pytest.approx(2 * K_B * T * rd + 4 * K_B * T * rs, rel=1e-6)


def test_depletion_capacitance_sets_the_pole():
    # A reverse-biased junction is Cj = CJO/(1 − V/VJ)^M (Sze, Physics of Semiconductor Devices;
    # common practice): with R to a source the noise bandwidth of kT/C gives v² = kT/Cj.
    cjo, vj, m, vr = 10e-12, 0.8, 0.5, 5.0
    circuit = parse_netlist(
        _netlist(f"V1 k 0 {vr}\nR1 k0 a 1meg\nV2 k0 0 0\nD1 a k dm\n.model dm D (IS=1e-14 CJO={cjo} VJ={vj} M={m})")
    )
    op = operating_point(circuit)
    # the junction sits a little under 5 V: its leakage and the 1 pS kept across every junction
    # (common practice) drop ~5 µV across R1, so Cj is taken at the solved junction voltage
    v_reverse = op.node_voltages["k"] - op.node_voltages["a"]
    assert v_reverse == pytest.approx(vr, rel=1e-5)
    cj = cjo / (1 + v_reverse / vj) ** m
    assert op.devices["D1"]["capacitance_F"] == pytest.approx(cj, rel=1e-9)


def test_unknown_parameters_are_listed_once_and_level_is_refused():
    circuit = parse_netlist(
        _netlist("V1 in 0 1\nR1 in a 1k\nD1 a 0 dm\nD2 a 0 dm\n.model dm D (IS=1e-14 ISR=1n NR=2 TNOM=25)")
    )
    listed = [n for n in circuit.notices if "not modelled" in n]
    assert len(listed) == 1 and "ISR, NR, TNOM" in listed[0]
    with pytest.raises(NetlistError, match="level 3 is not implemented"):
        parse_netlist(_netlist("V1 in 0 1\nR1 in a 1k\nD1 a 0 dm\n.model dm D (LEVEL=3)"))


def test_model_scoped_in_subcircuit():
    # a .model inside a .subckt is local to it (SPICE scoping; common practice)
    inner = "V1 in 0 1\nX1 in 0 clamp\n.subckt clamp a b\nR1 a c 1k\nD1 c b dl\n.model dl D (IS=1e-12)\n.ends\n"
    circuit = parse_netlist(_netlist(inner))
    assert circuit.element("X1.D1").p["IS"] == 1e-12
    with pytest.raises(NetlistError, match="D2: no .model called 'dl'"):
        parse_netlist(_netlist(inner + "D2 in 0 dl"))


def test_steep_exponential_converges():
    # A diode straight across a 10 V source through 1 Ω: Newton from 0 V would step to 10 V on the
    # junction (e^386); limited steps converge (Nagel 1975).  Check KCL against Lambert W as above.
    vs, r, i_s = 10.0, 1.0, 1e-14
    circuit = parse_netlist(_netlist(f"V1 in 0 {vs}\nR1 in a {r}\nD1 a 0 dm\n.model dm D (IS={i_s})"))
    op = operating_point(circuit)
    arg = i_s * r / VT * math.exp((vs + i_s * r) / VT)
    current = VT / r * float(np.real(lambertw(arg))) - i_s
    assert op.element_currents["R1"] == pytest.approx(current, rel=1e-9)


def test_forced_reverse_current_has_no_solution():
    # 1 mA forced into a diode's blocking direction with no other path: no DC solution exists.
    circuit = parse_netlist(_netlist("I1 a 0 1m\nD1 a 0 dm\n.model dm D (IS=1e-14)"))
    with pytest.raises(CircuitError, match="no DC operating point"):
        operating_point(circuit)


def test_linear_circuits_take_the_linear_path_unchanged():
    from netnoise.engine.operating_point import biased

    circuit = parse_netlist(_netlist("V1 in 0 1\nR1 in a 1k\nR2 a 0 1k"))
    same, solution = biased(circuit, 300.0)
    assert same is circuit and solution is None


def test_op_card_shows_the_operating_point(tmp_path, capsys):
    # `.op` in the netlist appends the operating point as --dc does; r_d = Vt/I (Shockley; common practice).
    from netnoise.cli import main

    path = tmp_path / "op.cir"
    path.write_text(_netlist("I1 0 a 1m\nD1 a 0 dm\n.model dm D (IS=1e-14)\n.op\n.noise v(a) I1 dec 1 10 100"))
    assert main(["analyze", str(path)]) == 0
    text = capsys.readouterr().out
    assert "DC operating point" in text and "D1" in text
    assert f"r_d {VT / 1e-3:.4g} Ω" in text


def test_reverse_breakdown_follows_bv_and_ibv():
    # Beyond BV the reverse current is IBV·exp(−(V + BV)/(N·Vt)) (the SPICE2 breakdown form,
    # Massobrio & Antognetti, Semiconductor Device Modeling with SPICE, ch. 1): a 10 mA reverse
    # current puts the junction at V = −(BV + N·Vt·ln(I/IBV)) (the forward IS term is negligible).
    bv, ibv, i_rev = 5.1, 1e-3, 10e-3
    circuit = parse_netlist(_netlist(f"I1 a 0 {i_rev}\nD1 a 0 dz\n.model dz D (IS=1e-14 BV={bv} IBV={ibv})"))
    op = operating_point(circuit)
    assert op.node_voltages["a"] == pytest.approx(-(bv + VT * math.log(i_rev / ibv)), rel=1e-6)


def test_model_values_out_of_range_are_refused_by_name():
    circuit = parse_netlist(_netlist("V1 in 0 1\nR1 in a 1k\nD1 a 0 dm\n.model dm D (IS=0 RS=-1)"))
    with pytest.raises(CircuitError, match=r"D1: model dm has IS=0, RS=-1"):
        operating_point(circuit)
    with pytest.raises(CircuitError, match=r"D1: model dm has IS=0, RS=-1"):
        analyze(circuit, output="a", band=(1.0, 10.0))


def test_source_straight_across_a_junction_is_refused():
    # 10 V held across an ideal junction implies IS·e^(10/Vt), beyond any real current (Shockley):
    # refused with the remedy, not shown as a number.
    circuit = parse_netlist(_netlist("V1 a 0 10\nD1 a 0 dm\n.model dm D (IS=1e-14)"))
    with pytest.raises(CircuitError, match="D1: 10 V held across its junction"):
        operating_point(circuit)

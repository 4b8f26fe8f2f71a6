"""Bipolar and field-effect transistors against published results, and
Newton's method on hard and random circuits.

Every reference value names its source.  Tolerances are relative.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy import constants
from scipy.optimize import brentq

from netnoise.engine.analysis import analyze
from netnoise.engine.dc import operating_point
from netnoise.netlist.load import parse_netlist

K_B = constants.Boltzmann
Q = constants.elementary_charge
T = 300.15
VT = K_B * T / Q
T0_C = 290.0 - 273.15  # the noise figure's reference temperature, as °C


def _net(body: str) -> str:
    return "transistor test\n" + body + "\n.end\n"


def _input_density(result) -> float:
    """Input-referred density (V²/Hz) in the middle of a flat band."""
    return float(np.median(result.input_referred_density))


# --- bipolar ---------------------------------------------------------------------


def test_gummel_poon_collector_current_with_early_effect():
    # Ic = IS(e^{vbe/Vt} − e^{vbc/Vt})·(1 − vbc/VAF) − IS(e^{vbc/Vt} − 1)/BR, the Gummel–Poon
    # transport current with qb = q1 = 1/(1 − vbc/VAF) (Gummel & Poon 1970; Massobrio & Antognetti,
    # Semiconductor Device Modeling with SPICE, ch. 2).
    i_s, vaf, br, vbe, vce = 1e-15, 50.0, 2.0, 0.65, 5.0
    circuit = parse_netlist(
        _net(f"VB b 0 {vbe}\nVC c 0 {vce}\nQ1 c b 0 qn\n.model qn NPN (IS={i_s} VAF={vaf} BR={br})")
    )
    op = operating_point(circuit)
    vbc = vbe - vce
    expected = i_s * (math.exp(vbe / VT) - math.exp(vbc / VT)) * (1 - vbc / vaf) - i_s * math.expm1(vbc / VT) / br
    assert op.devices["Q1"]["collector_current_A"] == pytest.approx(expected, rel=1e-9)
    # gm = Ic/Vt for an ideal junction (Gray & Meyer, ch. 1)
    assert op.devices["Q1"]["transconductance_S"] == pytest.approx(expected / VT, rel=1e-3)


def test_pnp_mirrors_npn():
    # A PNP biased with every voltage reversed carries the same current reversed (common practice).
    n = operating_point(parse_netlist(_net("VB b 0 0.6\nVC c 0 3\nQ1 c b 0 q\n.model q NPN (IS=1e-15 VAF=40)")))
    p = operating_point(parse_netlist(_net("VB b 0 -0.6\nVC c 0 -3\nQ1 c b 0 q\n.model q PNP (IS=1e-15 VAF=40)")))
    assert p.devices["Q1"]["collector_current_A"] == pytest.approx(-n.devices["Q1"]["collector_current_A"], rel=1e-9)


def _ce_stage(rb: float, bf: float = 100.0) -> str:
    # base driven by an ideal source (the input), collector load noiseless: only the transistor's noise
    return _net(
        f"V1 b 0 DC 0.65\nVCC vcc 0 10\nRC vcc c 2k quiet\nQ1 c b 0 qn\n.model qn NPN (IS=1e-15 BF={bf} RB={rb})"
    )


def test_bipolar_input_voltage_noise():
    # eₙ² = 4kT(r_b + 1/(2g_m)) to first order (Gray & Meyer, Analysis and Design of Analog Integrated
    # Circuits, noise chapter); exactly, with the base shot noise through r_b and the collector shot
    # referred through the divider r_b/r_π: 4kT·r_b + (2kT/g_m)(1 + r_b/r_π)² + 2qI_B·r_b².
    rb = 20.0
    circuit = parse_netlist(_ce_stage(rb))
    op = operating_point(circuit).devices["Q1"]
    gm, r_pi, ib = op["transconductance_S"], op["r_pi_ohm"], op["base_current_A"]
    result = analyze(circuit, output="c", input_source="V1", band=(100.0, 1e3), temperature_celsius=27.0)
    exact = 4 * K_B * T * rb + 2 * K_B * T / gm * (1 + rb / r_pi) ** 2 + 2 * Q * ib * rb**2
    assert _input_density(result) == pytest.approx(exact, rel=1e-6)
    assert _input_density(result) == pytest.approx(4 * K_B * T * (rb + 1 / (2 * gm)), rel=3e-2)


def test_bipolar_input_current_noise():
    # iₙ² = 2qI_B (Gray & Meyer, noise chapter): driven by a current into the base, the base shot noise
    # enters exactly as the input does; the collector shot adds 2qI_C/(g_m·r_π)² ≈ 2qI_C/β² beside it.
    circuit = parse_netlist(
        _net("I1 0 b DC 5u AC 1\nVCC vcc 0 10\nRC vcc c 1k quiet\nQ1 c b 0 qn\n.model qn NPN (IS=1e-15 BF=120)")
    )
    op = operating_point(circuit).devices["Q1"]
    ib, ic, gm, r_pi = op["base_current_A"], op["collector_current_A"], op["transconductance_S"], op["r_pi_ohm"]
    result = analyze(circuit, output="c", input_source="I1", band=(100.0, 1e3), temperature_celsius=27.0)
    assert _input_density(result) == pytest.approx(2 * Q * ib + 2 * Q * ic / (gm * r_pi) ** 2, rel=1e-6)
    assert _input_density(result) == pytest.approx(2 * Q * ib, rel=2 / 120)


def test_bipolar_optimum_source_resistance_and_minimum_noise_figure():
    # With r_b = 0: eₙ² = 2kT/g_m, iₙ² = 2qI_B, R_opt = eₙ/iₙ = √β/g_m and F_min ≈ 1 + 1/√β
    # (Gray & Meyer, noise chapter; Motchenbacher & Connelly, Low-Noise Electronic System Design).
    # Exactly (collector shot referred through R_s/r_π): F − 1 = [2kT/g_m·(1 + R_s/r_π)² + 2qI_B·R_s²]/(4kT·R_s).
    beta, ic = 400.0, 100e-6
    ib = ic / beta
    gm = ic / (K_B * 290.0 / Q)
    r_opt = math.sqrt(beta) / gm
    circuit = parse_netlist(
        _net(
            f"V1 in 0 DC 0\nRS in x {r_opt}\nCB x b 1\nI1 0 b {ib}\nVCC vcc 0 12\nRC vcc c 10k quiet\n"
            f"Q1 c b 0 qn\n.model qn NPN (IS=1e-15 BF={beta})"
        )
    )
    result = analyze(
        circuit, output="c", input_source="V1", band=(900.0, 1100.0), temperature_celsius=T0_C, source_resistor="RS"
    )
    op = operating_point(circuit, T0_C).devices["Q1"]
    g, r_pi, i_b = op["transconductance_S"], op["r_pi_ohm"], op["base_current_A"]
    kt = K_B * 290.0
    exact = 1 + (2 * kt / g * (1 + r_opt / r_pi) ** 2 + 2 * Q * i_b * r_opt**2) / (4 * kt * r_opt)
    factor = 10 ** (result.noise_figure_dB / 10)
    assert factor == pytest.approx(exact, rel=1e-6)
    assert factor == pytest.approx(1 + 1 / math.sqrt(beta), rel=5e-3)


def test_differential_pair_input_noise_is_root_two_of_one_transistor():
    # A differential pair's input voltage noise is √2 times that of one of its transistors at the same
    # current (Gray & Meyer, noise chapter).
    model = ".model qn NPN (IS=1e-15 BF=150 RB=40)"
    pair = parse_netlist(
        _net(
            "V1 b1 0 DC 0\nV2 b2 0 DC 0\nVCC vcc 0 10\nRC1 vcc c1 2k quiet\nRC2 vcc c2 2k quiet\n"
            f"Q1 c1 b1 e qn\nQ2 c2 b2 e qn\nIT e 0 2m\n{model}"
        )
    )
    single = parse_netlist(
        _net(f"V1 b1 0 DC 0\nVCC vcc 0 10\nRC1 vcc c1 2k quiet\nQ1 c1 b1 e qn\nIT e 0 1m\nCE e 0 1\n{model}")
    )
    band = (900.0, 1100.0)
    p = analyze(pair, output="c1", reference="c2", input_source="V1", band=band, temperature_celsius=27.0)
    s = analyze(single, output="c1", input_source="V1", band=band, temperature_celsius=27.0)
    assert math.sqrt(_input_density(p) / _input_density(s)) == pytest.approx(math.sqrt(2.0), rel=1e-6)


def test_current_mirror_output_noise_comes_from_both_devices():
    # The output noise current of a simple mirror is the output device's collector shot plus the
    # reference device's noise mirrored: i² = 2qI_C2 + (g_m2/(g_m1 + g_π1 + g_π2))²·2q(I_C1 + I_B1 + I_B2),
    # about twice one device's 2qI_C (Gray & Meyer, noise chapter).  Read across a noiseless 1 Ω.
    circuit = parse_netlist(
        _net("IREF 0 m 1m\nQ1 m m 0 qn\nQ2 o m 0 qn\nVCC vcc 0 5\nRL vcc o 1 quiet\n.model qn NPN (IS=1e-15 BF=200)")
    )
    op = operating_point(circuit).devices
    q1, q2 = op["Q1"], op["Q2"]
    g1, g2 = q1["transconductance_S"], q2["transconductance_S"]
    gp1, gp2 = 1 / q1["r_pi_ohm"], 1 / q2["r_pi_ohm"]
    mirrored = (
        (g2 / (g1 + gp1 + gp2)) ** 2 * 2 * Q * (q1["collector_current_A"] + q1["base_current_A"] + q2["base_current_A"])
    )
    exact = 2 * Q * q2["collector_current_A"] + mirrored
    result = analyze(circuit, output="o", reference="vcc", band=(100.0, 1e3), temperature_celsius=27.0)
    assert result.spot_density(300.0) ** 2 == pytest.approx(exact, rel=1e-6)
    assert result.spot_density(300.0) ** 2 == pytest.approx(2 * 2 * Q * q2["collector_current_A"], rel=3e-2)


# --- field-effect ------------------------------------------------------------------


def test_jfet_self_biased_operating_point_against_direct_solve():
    # I_D = BETA(V_GS − VTO)²(1 + λV_DS) with V_GS = −I_D·R_S, V_DS = V_DD − I_D(R_D + R_S)
    # (Shichman & Hodges, IEEE JSSC 3, 1968), solved by scipy.optimize.brentq.
    beta, vto, lam, rs, rd, vdd = 1.5e-3, -1.8, 0.02, 680.0, 3.3e3, 15.0

    def f(i):
        return beta * (-i * rs - vto) ** 2 * (1 + lam * (vdd - i * (rd + rs))) - i

    i_d = brentq(f, 1e-9, -vto / rs * 0.999)
    circuit = parse_netlist(
        _net(
            f"VDD vdd 0 {vdd}\nRD vdd d {rd}\nJ1 d 0 s jn\nRS s 0 {rs}\n.model jn NJF (VTO={vto} BETA={beta} LAMBDA={lam})"
        )
    )
    op = operating_point(circuit)
    assert op.devices["J1"]["drain_current_A"] == pytest.approx(i_d, rel=1e-9)


def test_fet_input_noise_and_flicker_corner():
    # Input-referred channel noise 4kT·(2/3)/g_m (van der Ziel; Gray & Meyer, noise chapter) and the
    # flicker corner where KF·I_D^AF/f equals 8kT·g_m/3 (the SPICE noise model; common practice).
    kf, af = 1e-16, 1.0
    circuit = parse_netlist(
        _net(
            f"V1 g 0 DC -1\nVDD vdd 0 15\nRD vdd d 1k quiet\nJ1 d g 0 jn\n"
            f".model jn NJF (VTO=-2.5 BETA=2m LAMBDA=0.01 KF={kf} AF={af})"
        )
    )
    op = operating_point(circuit).devices["J1"]
    gm, i_d = op["transconductance_S"], op["drain_current_A"]
    white = 4 * K_B * T * (2 / 3) / gm
    corner = kf * i_d**af / (8 * K_B * T * gm / 3)
    result = analyze(circuit, output="d", input_source="V1", band=(1.0, 1e5), temperature_celsius=27.0)
    density = result.input_referred_density
    f = result.frequency_Hz
    assert density == pytest.approx(white * (1 + corner / f), rel=1e-6)


def test_mos_square_law_operating_point():
    # I_D = (KP/2)(W/L)(V_GS − V_TO)²(1 + λV_DS) in saturation (Shichman & Hodges 1968), here with a
    # source resistor: V_GS = V_G − I_D·R_S, solved by scipy.optimize.brentq.
    kp, w, length, vto, lam, vg, rs, vdd = 120e-6, 40e-6, 2e-6, 0.8, 0.03, 3.0, 1e3, 10.0

    def f(i):
        return kp / 2 * w / length * (vg - i * rs - vto) ** 2 * (1 + lam * (vdd - i * rs)) - i

    i_d = brentq(f, 1e-12, (vg - vto) / rs * 0.999)
    circuit = parse_netlist(
        _net(
            f"VG g 0 {vg}\nVDD d 0 {vdd}\nM1 d g s s nm W={w} L={length}\nRS s 0 {rs}\n"
            f".model nm NMOS (VTO={vto} KP={kp} LAMBDA={lam})"
        )
    )
    op = operating_point(circuit).devices["M1"]
    # rel 1e-7: the solution also carries the 1 pS put across the channel (1e-11 A here)
    assert op["drain_current_A"] == pytest.approx(i_d, rel=1e-7)
    # gm = √(2·KP·(W/L)·I_D·(1 + λV_DS)) in saturation (Gray & Meyer, ch. 1)
    assert op["transconductance_S"] == pytest.approx(
        math.sqrt(2 * kp * w / length * i_d * (1 + lam * (vdd - i_d * rs))), rel=1e-7
    )


def test_mos_input_noise_and_body_effect():
    # Input-referred channel noise 4kT(2/3)/g_m; the threshold rises as VTO + γ(√(φ − v_BS) − √φ)
    # (Gray & Meyer, ch. 1 and the noise chapter).
    circuit = parse_netlist(
        _net(
            "V1 g 0 DC 2.5\nVB b 0 -2\nVDD vdd 0 10\nRD vdd d 1k quiet\nM1 d g 0 b nm W=20u L=1u m=2\n"
            ".model nm NMOS (VTO=0.7 KP=100u GAMMA=0.5 PHI=0.7)"
        )
    )
    op = operating_point(circuit).devices["M1"]
    assert op["threshold_V"] == pytest.approx(0.7 + 0.5 * (math.sqrt(2.7) - math.sqrt(0.7)), rel=1e-12)
    # in saturation (v_DS > v_GS − V_T), where the 2/3 holds: with 5k the part sat in triode
    assert op["drain_source_V"] > op["gate_source_V"] - op["threshold_V"]
    result = analyze(circuit, output="d", input_source="V1", band=(100.0, 1e3), temperature_celsius=27.0)
    assert _input_density(result) == pytest.approx(4 * K_B * T * (2 / 3) / op["transconductance_S"], rel=1e-6)


# --- Newton's method ----------------------------------------------------------------


def test_latch_settles_in_one_state_and_says_it_is_a_solution():
    # Two cross-coupled transistors: two stable states, symmetric but for one resistor
    # (Sedra & Smith, Microelectronic Circuits, bistable circuits; common practice).
    from netnoise.outputs.report import _operating_point

    circuit = parse_netlist(
        _net(
            "VCC vcc 0 5\nRC1 vcc c1 1k\nRC2 vcc c2 1.1k\nRB1 c2 b1 10k\nRB2 c1 b2 10k\n"
            "Q1 c1 b1 0 qn\nQ2 c2 b2 0 qn\n.model qn NPN (IS=1e-15 BF=100)"
        )
    )
    op = operating_point(circuit)
    v, dev = op.node_voltages, op.devices
    # the point found satisfies Kirchhoff's current law at both collectors and both bases
    for c, rc, b, q in (("c1", 1e3, "b2", "Q1"), ("c2", 1.1e3, "b1", "Q2")):
        into = (v["vcc"] - v[c]) / rc
        out = dev[q]["collector_current_A"] + (v[c] - v[b]) / 1e4
        assert into == pytest.approx(out, rel=1e-9)
    for b, q, c in (("b1", "Q1", "c2"), ("b2", "Q2", "c1")):
        assert (v[c] - v[b]) / 1e4 == pytest.approx(dev[q]["base_current_A"], rel=1e-6)
    text = "\n".join(_operating_point(op))
    assert "a solution of the nonlinear equations" in text and "has others" in text


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    st.integers(min_value=2, max_value=5).flatmap(
        lambda n: st.tuples(
            st.just(n),
            st.integers(min_value=-200, max_value=200).map(lambda k: k / 10.0),
            st.lists(st.floats(min_value=10.0, max_value=1e5), min_size=n, max_size=n),
            st.lists(
                st.tuples(st.integers(0, n), st.integers(0, n), st.floats(min_value=1e-16, max_value=1e-9)),
                min_size=1,
                max_size=6,
            ),
        )
    )
)
def test_random_diode_networks_satisfy_kcl(case):
    # Kirchhoff's current law at every node of the solution (Kirchhoff 1845): the sum of the currents
    # leaving a node is zero to the solver's tolerance (the 1 pS across each junction allowed for).
    n, vs, chain, diodes = case
    lines = [f"V1 n1 0 {vs}"]
    for k in range(1, n):
        lines.append(f"R{k} n{k} n{k + 1} {chain[k - 1]}")
    lines.append(f"R{n} n{n} 0 {chain[n - 1]}")
    names = {0: "0", **{k: f"n{k}" for k in range(1, n + 1)}}
    for j, (a, b, i_s) in enumerate(diodes):
        if a == b:
            continue
        # RS = 1 Ω: a chain of bare junctions straight across the source is refused (see test_diode)
        lines.append(f"D{j} {names[a]} {names[b]} dm{j}\n.model dm{j} D (IS={i_s} RS=1)")
    circuit = parse_netlist(_net("\n".join(lines)))
    op = operating_point(circuit)
    leaving: dict[str, list[float]] = {}
    for element in circuit.elements:
        a, b = element.terminals()[:2]
        current = (
            op.devices[element.name]["current_A"] if element.name in op.devices else op.element_currents[element.name]
        )
        leaving.setdefault(a, []).append(current)
        leaving.setdefault(b, []).append(-current)
    for node, currents in leaving.items():
        if node == "0":
            continue
        scale = sum(abs(c) for c in currents)
        assert abs(sum(currents)) <= 1e-9 * scale + 1e-10, (node, currents)


def test_sensitivity_follows_the_operating_point():
    # A bias value moves the operating point, and with it gm and the shot noise: the adjoint
    # sensitivity (Director & Rohrer 1969) against a central difference of two whole analyses
    # with the value changed by ±1 % (an independent computation).
    import netnoise
    from netnoise.studies.sensitivity import sensitivities

    text = "V1 in 0 DC 0.68 AC 1\nRS in b 1k\nVCC vcc 0 10\nRC vcc c 2k\nQ1 c b 0 qn\n.model qn NPN (IS=1e-15 BF=150 RB=30 VAF=60)"
    circuit = parse_netlist(_net(text))
    prepared = netnoise.prepare(circuit, output="c", band=(100.0, 1e4), temperature_celsius=27.0)
    found = {s.element: s for s in sensitivities(prepared, speed=False)}
    up = prepared.with_values({"V1": 0.68 * 1.001}).analyze().total_rms
    down = prepared.with_values({"V1": 0.68 * 0.999}).analyze().total_rms
    nominal = prepared.analyze().total_rms
    expected = (up - down) / (2 * 0.001) / nominal  # % per %
    assert found["V1"].rms_pct_per_pct == pytest.approx(expected, rel=2e-3)
    # the temperature moves the bias too (IS(T), Vt): per % of the absolute temperature
    kelvin = 27.0 + 273.15
    warm, cool = (
        netnoise.analyze(circuit, output="c", band=(100.0, 1e4), temperature_celsius=kelvin * f - 273.15).total_rms
        for f in (1.001, 0.999)
    )
    assert found["temp"].rms_pct_per_pct == pytest.approx((warm - cool) / (2 * 0.001) / nominal, rel=2e-3)
    assert abs(expected) > 0.05  # the bias matters here


def _follower():
    return parse_netlist(
        _net(
            "VDD vdd 0 5\nVin in 0 2.5\nRsens in g 1meg\nM1 vdd g out 0 nf W=200u L=2u\nM2 out bias 0 0 ns W=50u L=4u\n"
            "Vb bias 0 1.1\nQ1 vdd out e qn\nRE e 0 10k\n"
            ".model nf NMOS (VTO=0.7 KP=110u GAMMA=0.45 PHI=0.7 LAMBDA=0.02)\n.model ns NMOS (VTO=0.7 KP=110u LAMBDA=0.01)\n"
            ".model qn NPN (IS=1e-15 BF=100)"
        )
    )


@pytest.mark.parametrize("method", ["_gmin_stepping", "_source_stepping"])
def test_each_fallback_reaches_the_same_operating_point(method):
    # gmin stepping and source stepping are continuation methods (Nagel 1975; Vladimirescu, The SPICE
    # Book): each must land on the solution Newton finds, here checked by Kirchhoff's current law
    # at the emitter (Q1's emitter current equals RE's) and by agreement with the default solve.
    from netnoise.circuit.elements.base import DeviceEnvironment
    from netnoise.engine import operating_point as opm
    from netnoise.engine.mna import assemble

    circuit = _follower()
    reference = opm.solve_nonlinear(circuit, T)
    newton = opm._Newton(assemble(circuit), DeviceEnvironment(T))
    x = getattr(opm, method)(newton, np.zeros(reference.x.size))
    assert x is not None
    assert x == pytest.approx(reference.x, rel=1e-7, abs=1e-12)


def test_a_failure_names_the_devices_and_their_voltages(monkeypatch):
    from netnoise.engine import operating_point as opm
    from netnoise.errors import CircuitError

    monkeypatch.setattr(opm, "_MAX_ITERATIONS", 1)  # no method can converge in one step
    with pytest.raises(CircuitError, match=r"did not settle") as info:
        operating_point(_follower())
    assert "M1 (v(vdd) 5 V, v(g) " in str(info.value) and "v(out) " in str(info.value)


def test_base_resistance_falls_with_high_injection():
    # r_bb = RBM + (RB − RBM)/q_b with q_b = (1 + √(1 + 4·I_be1/IKF))/2 when VAF = VAR = 0, and with
    # IRB: RBM + 3(RB − RBM)(tan z − z)/(z·tan²z), z = (−1 + √(1 + 144·I_B/(π²·IRB)))/((24/π²)·√(I_B/IRB))
    # (Gummel–Poon as in Massobrio & Antognetti, Semiconductor Device Modeling with SPICE, ch. 2).
    i_s, ikf, rb, rbm = 1e-15, 5e-3, 200.0, 20.0
    base = f"VB b 0 0.78\nVC c 0 5\nQ1 c b 0 qn\n.model qn NPN (IS={i_s} BF=100 IKF={ikf} RB={rb} RBM={rbm}"
    op = operating_point(parse_netlist(_net(base + ")"))).devices["Q1"]
    ibe1 = i_s * math.expm1(op["base_emitter_V"] / VT)
    qb = (1 + math.sqrt(1 + 4 * ibe1 / ikf)) / 2
    assert op["base_resistance_ohm"] == pytest.approx(rbm + (rb - rbm) / qb, rel=1e-9)
    irb = 1e-4
    op = operating_point(parse_netlist(_net(base + f" IRB={irb})"))).devices["Q1"]
    ib = op["base_current_A"]
    z = (-1 + math.sqrt(1 + 144 * ib / (math.pi**2 * irb))) / (24 / math.pi**2 * math.sqrt(ib / irb))
    expected = rbm + 3 * (rb - rbm) * (math.tan(z) - z) / (z * math.tan(z) ** 2)
    assert op["base_resistance_ohm"] == pytest.approx(expected, rel=1e-9)
    assert rbm < expected < rb


@pytest.mark.parametrize(("kind", "sign"), [("NJF", 1.0), ("PJF", -1.0)])
def test_p_channel_mirrors_n_channel(kind, sign):
    # Reversing every voltage and the polarity gives the same current reversed (common practice).
    vto = -2.0  # a PJF card writes VTO as an NJF's (the SPICE convention, from memory)
    circuit = parse_netlist(
        _net(f"VG g 0 {-0.5 * sign}\nVD d 0 {5 * sign}\nJ1 d g 0 j\n.model j {kind} (VTO={vto} BETA=1m LAMBDA=0.01)")
    )
    op = operating_point(circuit).devices["J1"]
    # BETA(VGS − VTO)²(1 + λVDS) in the n-channel sense (Shichman & Hodges 1968)
    assert sign * op["drain_current_A"] == pytest.approx(1e-3 * 1.5**2 * 1.05, rel=1e-9)


def test_pmos_square_law_and_mos_flicker():
    # PMOS: I_D = (KP/2)(W/L)(V_SG − |V_TO|)² (Shichman & Hodges 1968); its drain flicker KF·I^AF/f
    # against the channel's 8kT·g_m/3 at the output, referred to the input (the SPICE noise model).
    kp, w, length, kf = 50e-6, 40e-6, 4e-6, 1e-17
    circuit = parse_netlist(
        _net(
            f"VDD vdd 0 5\nV1 g 0 DC 3.5\nM1 d g vdd vdd pm W={w} L={length}\nRD d 0 2k quiet\n"
            f".model pm PMOS (VTO=-0.8 KP={kp} KF={kf} AF=1)"
        )
    )
    op = operating_point(circuit).devices["M1"]
    i_d = kp / 2 * w / length * (1.5 - 0.8) ** 2
    assert -op["drain_current_A"] == pytest.approx(i_d, rel=1e-7)
    gm = op["transconductance_S"]
    result = analyze(circuit, output="d", input_source="V1", band=(1.0, 1e5), temperature_celsius=27.0)
    white = 8 * K_B * T * gm / 3
    expected = (white + kf * i_d / result.frequency_Hz) / gm**2
    assert result.input_referred_density == pytest.approx(expected, rel=1e-6)


def test_mos_geometry_options_are_read_and_named():
    circuit = parse_netlist(
        _net(
            "VDD d 0 5\nVG g 0 2\nM1 d g 0 0 nm W=10u L=1u AD=20p AS=20p PD=24u PS=24u\n.model nm NMOS (VTO=0.7 KP=100u)"
        )
    )
    assert any("AD=, AS=, PD=, PS= read but not modelled" in notice for notice in circuit.notices)


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    st.integers(10, 300).map(lambda k: k / 10.0),
    st.lists(st.integers(0, 60).map(lambda k: 10.0 ** (k / 10.0)), min_size=4, max_size=4),
)
def test_random_bias_networks_converge_and_satisfy_kcl(vcc, scale):
    # A divider-biased stage with any supply and resistors from 1 Ω·10^0 to 10^6: the point found
    # satisfies Kirchhoff's current law at the base, collector and emitter (Kirchhoff 1845),
    # whether the transistor is off, active or saturated.
    r1, r2, rc, re = 1e3 * scale[0], 1e3 * scale[1], 100.0 * scale[2], 1.0 * scale[3]
    text = (
        f"VCC vcc 0 {vcc}\nR1 vcc b {r1}\nR2 b 0 {r2}\nRC vcc c {rc}\nRE e 0 {re}\nQ1 c b e q\n"
        ".model q NPN (IS=1e-15 BF=150 VAF=50 IKF=0.05)"
    )
    op = operating_point(parse_netlist(_net(text)))
    v, q = op.node_voltages, op.devices["Q1"]
    ic, ib = q["collector_current_A"], q["base_current_A"]
    tol = 1e-9
    leak = 2e-12 * vcc  # the 1 pS across each junction carries up to this; the device summary omits it
    assert (vcc - v["c"]) / rc == pytest.approx(ic, rel=tol, abs=leak)
    assert v["e"] / re == pytest.approx(ic + ib, rel=tol, abs=leak)
    assert (vcc - v["b"]) / r1 - v["b"] / r2 == pytest.approx(ib, rel=1e-6, abs=leak)


def test_reverse_gate_leakage_shot_row_shows_its_size():
    # A reverse-biased gate leaks about -IS per junction (Shockley diode law, common practice); the
    # budget row of its shot noise 2q|I| (Schottky 1918) gives the size |I|, not the signed current.
    circuit = parse_netlist(
        _net(
            "V1 g 0 DC -1 AC 1\nVDD vdd 0 15\nRD vdd d 1k quiet\nJ1 d g 0 jn\n.model jn NJF (VTO=-2.5 BETA=2m IS=1e-11)"
        )
    )
    ig = operating_point(circuit).devices["J1"]["gate_current_A"]
    assert ig < 0.0
    result = analyze(circuit, output="d", input_source="V1", band=(1.0, 1e5), temperature_celsius=27.0)
    row = result.source_names.index("J1 (gate shot)")
    assert result.source_values[row] == pytest.approx(abs(ig), rel=1e-12)

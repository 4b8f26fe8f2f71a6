"""Amplifier, shot, excess and explicit source noise; noise figure; ADC
figures -- against published closed forms.  Circuits built without the
parser.  Every reference names its source."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from circuit_builders import C, E, I, R, V, circuit, opamp
from scipy import constants

from netnoise.circuit import NoiseSpec
from netnoise.engine.analysis import analyze
from netnoise.engine.dc import operating_point
from netnoise.results.figures import adc_comparison, ideal_adc_snr_dB

K_B = constants.Boltzmann
Q_E = constants.e
T = 300.0
T_C = T - 273.15


def quiet(r):
    return dataclasses.replace(r, quiet=True)


# --- amplifier noise ------------------------------------------------------------------------


def test_non_inverting_amplifier_textbook_formula():
    # Output noise of a non-inverting stage (Horowitz & Hill, The Art of
    # Electronics, 3rd ed., ch. 8; Motchenbacher & Connelly, Low-Noise
    # Electronic System Design):
    #   e_out² = G²[e_n² + (i_n R_s)² + 4kT R_s + (i_n R_p)² + 4kT R_p],
    #   G = 1 + R2/R1, R_p = R1 ∥ R2.  Flat band, near-ideal amplifier.
    en, i_n, rs, r1, r2 = 4e-9, 1e-12, 2e3, 1e3, 9e3
    ckt = circuit(
        V("Vs", "src", "0"),
        R("Rs", "src", "p", rs),
        R("R1", "n", "0", r1),
        R("R2", "n", "out", r2),
        opamp("XU1", "p", "n", "out", voltage_noise=en, current_noise=i_n, open_loop_gain=1e8, gain_bandwidth_Hz=1e12),
    )
    res = analyze(ckt, output="out", input_source="Vs", band=(10.0, 1e3), temperature_celsius=T_C)
    g = 1 + r2 / r1
    rp = r1 * r2 / (r1 + r2)
    expected = g**2 * (en**2 + (i_n * rs) ** 2 + 4 * K_B * T * rs + (i_n * rp) ** 2 + 4 * K_B * T * rp)
    assert res.spot_density(100.0) ** 2 == pytest.approx(expected, rel=1e-6)
    assert res.gain_at_max == pytest.approx(g, rel=1e-6)
    mechanisms = {c.source: c.mechanism for c in res.contributions}
    assert mechanisms["XU1 (voltage)"] == "amplifier-voltage"
    assert mechanisms["XU1 (in+)"] == mechanisms["XU1 (in-)"] == "amplifier-current"
    by_element = {c.element: c.share for c in res.grouped("element")}
    assert set(by_element) == {"XU1", "Rs", "R1", "R2"}
    assert sum(by_element.values()) == pytest.approx(1.0, rel=1e-12)


def _transimpedance(cin, cf, rf, en, i_n, a0, gbw, iph):
    return circuit(
        I("Iph", "0", "n", ac=1.0),
        C("Cin", "n", "0", cin),
        R("Rf", "n", "out", rf),
        C("Cf", "n", "out", cf),
        opamp("XTIA", "0", "n", "out", voltage_noise=en, current_noise=i_n, open_loop_gain=a0, gain_bandwidth_Hz=gbw),
    )


def test_transimpedance_stage_closed_form_with_finite_gbw():
    # Photodiode transimpedance stage with a one-pole amplifier A(s) = A0/(1+s/ωa):
    # noise gain NG = 1 + Z_f/Z_in (Z_in = 1/sC_in, Z_f = R_f ∥ 1/sC_f); the loop
    # divides every term by (1 + NG/A):
    #   S_out = [e_n²|NG|² + (4kT/R_f + i_n²)|Z_f|²] / |1 + NG/A|²
    # (standard feedback analysis, e.g. Horowitz & Hill ch. 8 on photodiode
    # amplifiers).  Finite GBW is what bounds the e_n·(1 + C_in/C_f) plateau.
    cin, cf, rf, en, i_n, a0, gbw = 100e-12, 1e-12, 1e6, 5e-9, 2e-15, 1e5, 1e9
    res = analyze(
        _transimpedance(cin, cf, rf, en, i_n, a0, gbw, 0.0),
        output="out",
        input_source="Iph",
        band=(10.0, 1e8),
        points_per_decade=10,
        temperature_celsius=T_C,
    )
    s = 2j * np.pi * res.frequency_Hz
    zf = rf / (1 + s * rf * cf)
    ng = 1 + zf * s * cin
    a = a0 / (1 + s * a0 / (2 * np.pi * gbw))
    loop = np.abs(1 + ng / a) ** 2
    expected = (en**2 * np.abs(ng) ** 2 + (4 * K_B * T / rf + i_n**2) * np.abs(zf) ** 2) / loop
    np.testing.assert_allclose(res.output_density, expected, rtol=1e-6)
    # on the plateau (above the R_f·C_f corner, below GBW/(1 + C_in/C_f)) the
    # amplifier's e_n·(1 + C_in/C_f) dominates (common practice)
    plateau = res.spot_density(2e6)
    assert plateau == pytest.approx(en * (1 + cin / cf), rel=0.05)
    assert res.contributions[0].source == "XTIA (voltage)"


def test_amplifier_voltage_noise_with_1_over_f_corner_integrates_to_closed_form():
    # Integrated 1/f-plus-white noise from f_L to f_H:
    #   e_n²·(f_c·ln(f_H/f_L) + f_H − f_L)  (common practice)
    en, fc, fl, fh = 10e-9, 200.0, 0.1, 1e4
    ckt = circuit(
        R("Rg", "p", "0", 1.0),
        opamp(
            "XB",
            "p",
            "out",
            "out",
            voltage_noise=en,
            voltage_noise_corner_Hz=fc,
            open_loop_gain=1e9,
            gain_bandwidth_Hz=1e12,
        ),
    )
    ckt = dataclasses.replace(ckt, elements=(quiet(ckt.elements[0]), ckt.elements[1]))
    res = analyze(ckt, output="out", band=(fl, fh))
    assert res.total_variance == pytest.approx(en**2 * (fc * math.log(fh / fl) + fh - fl), rel=1e-6)


def test_explicit_source_noise_on_a_voltage_source():
    # A reference with a specified density 20 nV/√Hz, 1/f corner 10 Hz, seen
    # directly at its node; same closed form as above (common practice).
    white, fc, fl, fh = 20e-9, 10.0, 1.0, 1e3
    ref = dataclasses.replace(V("Vref", "ref", "0"), noise=NoiseSpec(white=white, corner_Hz=fc))
    ckt = circuit(ref, quiet(R("Rl", "ref", "0", 1e3)))
    res = analyze(ckt, output="ref", band=(fl, fh))
    assert res.total_variance == pytest.approx(white**2 * (fc * math.log(fh / fl) + fh - fl), rel=1e-6)
    assert res.contributions[0].mechanism == "source"


def test_1_over_f_from_zero_hz_is_refused():
    from netnoise.errors import CircuitError

    ref = dataclasses.replace(V("Vref", "ref", "0"), noise=NoiseSpec(white=1e-8, corner_Hz=10.0))
    with pytest.raises(CircuitError, match="1/f"):
        analyze(circuit(ref, R("Rl", "ref", "0", 1e3)), output="ref", band=(0.0, 1e3))


def test_1_over_f_with_infinite_band_combines_exact_white_and_numeric_flicker():
    # RC node with a 1/f source current: white part exact (kT/C for the
    # resistor), 1/f part ∫ K/f·|Z|² df from f_L (closed form
    # K R²/2·ln(1 + (f_c/f_L)²) for |Z|² = R²/(1+(f/f_c)²); common practice).
    r, cap, fl = 1e4, 1e-9, 1.0
    fc = 1 / (2 * math.pi * r * cap)
    k = (1e-12) ** 2 * 100.0  # A²/Hz at 1 Hz: 1 pA/√Hz white, 100 Hz corner
    src = dataclasses.replace(I("In", "0", "a", ac=0.0), noise=NoiseSpec(white=1e-12, corner_Hz=100.0))
    ckt = circuit(src, R("R1", "a", "0", r), C("C1", "a", "0", cap))
    res = analyze(ckt, output="a", band=(fl, math.inf), temperature_celsius=T_C)
    flicker = k * r**2 / 2 * math.log(1 + (fc / fl) ** 2)
    white = (1e-12) ** 2 * r**2 * fc * (math.pi / 2 - math.atan(fl / fc))
    by = {c.source: c.variance_V2 for c in res.contributions}
    assert by["In"] == pytest.approx(white + flicker, rel=1e-4)
    assert by["R1"] == pytest.approx(4 * K_B * T * r * fc * (math.pi / 2 - math.atan(fl / fc)), rel=1e-6)


# --- shot and excess noise -----------------------------------------------------------------


def test_shot_noise_of_1mA():
    # Shot noise of 1 mA: sqrt(2qI) ≈ 17.9 pA/√Hz (Schottky 1918; common practice).
    src = dataclasses.replace(I("Id", "0", "a", ac=0.0), dc=1e-3, shot=True)
    res = analyze(circuit(src, quiet(R("Rl", "a", "0", 1e3))), output="a", band=(1.0, 1e3))
    assert res.spot_density(10.0) / 1e3 == pytest.approx(17.9e-12, rel=1e-3)
    assert res.spot_density(10.0) / 1e3 == pytest.approx(math.sqrt(2 * Q_E * 1e-3), rel=1e-9)
    assert res.contributions[0].mechanism == "shot"


@pytest.mark.parametrize("scale", [0.25, 4.0])
def test_shot_share_scales_with_current(scale):
    # Shot noise power ∝ I (Schottky 1918), thermal unchanged.
    def run(i):
        src = dataclasses.replace(I("Id", "0", "a", ac=0.0), dc=i, shot=True)
        res = analyze(circuit(src, R("Rl", "a", "0", 1e4)), output="a", band=(1.0, 1e3))
        return {c.mechanism: c.variance_V2 for c in res.contributions}

    base, scaled = run(1e-6), run(1e-6 * scale)
    assert scaled["shot"] / base["shot"] == pytest.approx(scale, rel=1e-9)
    assert scaled["thermal"] == pytest.approx(base["thermal"], rel=1e-12)


def test_excess_noise_from_noise_index_per_decade():
    # Noise index NI (dB re 1 µV/V per decade): over one decade the excess
    # noise voltage is NI_lin·V_dc rms (the makers' definition; common
    # practice; the measurement standard IEC 60195 is named from memory).
    # Here Rx and a noiseless equal resistor divide a 20 V source, so Rx has
    # 10 V across it and its noise voltage halves into node mid.
    ni, v_dc, r = 0.0, 10.0, 1e4  # 0 dB: 1 µV/V
    rx = dataclasses.replace(R("Rx", "top", "mid", r), noise_index_dB=ni)
    ckt = circuit(V("Vb", "top", "0"), rx, quiet(R("Rlow", "mid", "0", r)))
    ckt = dataclasses.replace(ckt, elements=(dataclasses.replace(ckt.elements[0], dc=2 * v_dc),) + ckt.elements[1:])
    res = analyze(ckt, output="mid", band=(10.0, 100.0))
    by = {c.mechanism: c.variance_V2 for c in res.contributions}
    # Rx sees V_dc = 10 V; its series noise voltage divides by 2 into node mid
    assert by["excess"] == pytest.approx((1e-6 * v_dc) ** 2 / 4, rel=1e-6)


@pytest.mark.parametrize("factor", [0.5, 3.0])
def test_excess_noise_scales_with_dc_voltage_squared(factor):
    # Excess noise power ∝ V_dc² (resistor current noise; common practice).
    def run(v):
        rx = dataclasses.replace(R("Rx", "top", "mid", 1e4), noise_index_dB=-10.0)
        src = dataclasses.replace(V("Vb", "top", "0"), dc=v)
        res = analyze(circuit(src, rx, R("Rlow", "mid", "0", 1e4)), output="mid", band=(1.0, 1e3))
        return {c.mechanism: c.variance_V2 for c in res.contributions}

    base, scaled = run(5.0), run(5.0 * factor)
    assert scaled["excess"] / base["excess"] == pytest.approx(factor**2, rel=1e-9)


def test_quiet_and_per_element_temperature():
    # 4kTR at the resistor's own temperature (Nyquist 1928); a quiet part adds nothing.
    hot = dataclasses.replace(R("Rhot", "a", "0", 1e3), temperature_celsius=400.0 - 273.15)
    ckt = circuit(hot, quiet(R("Rcold", "a", "0", 1e3)))
    res = analyze(ckt, output="a", band=(1.0, 2.0), temperature_celsius=T_C)
    assert [c.source for c in res.contributions] == ["Rhot"]
    # 1 kΩ ∥ 1 kΩ: Rhot's noise current sees 500 Ω
    assert res.spot_density(1.5) ** 2 == pytest.approx(4 * K_B * 400.0 / 1e3 * 500.0**2, rel=1e-9)


def test_dc_operating_point_of_a_divider_and_amplifier():
    # Ohm's law and an ideal-ish follower (common practice).
    ckt = circuit(
        dataclasses.replace(V("Vb", "top", "0"), dc=5.0),
        R("Ra", "top", "mid", 3e3),
        R("Rb", "mid", "0", 2e3),
        opamp("XF", "mid", "out", "out", open_loop_gain=1e6, gain_bandwidth_Hz=1e6),
        R("Rl", "out", "0", 1e3),
    )
    op = operating_point(ckt)
    assert op.node_voltages["mid"] == pytest.approx(2.0, rel=1e-12)
    assert op.node_voltages["out"] == pytest.approx(2.0, rel=1e-5)
    assert op.element_currents["Ra"] == pytest.approx(1e-3, rel=1e-12)
    assert op.element_currents["Vb"] == pytest.approx(-1e-3, rel=1e-12)  # SPICE: into the + terminal
    assert op.element_voltages["Rb"] == pytest.approx(2.0, rel=1e-12)


# --- noise figure ------------------------------------------------------------------------


def _t_pad(loss_db, z0=50.0, prefix=""):
    # Matched T attenuator: K = 10^(dB/20); series arms Z0(K−1)/(K+1), shunt
    # 2Z0K/(K²−1) (standard pad formulas, e.g. Reference Data for Engineers).
    k = 10 ** (loss_db / 20)
    return z0 * (k - 1) / (k + 1), 2 * z0 * k / (k * k - 1)


@pytest.mark.parametrize("loss_db", [3.0, 10.0])
def test_matched_attenuator_at_290K_has_noise_figure_equal_to_its_loss(loss_db):
    # F = L for a matched passive attenuator at T0 = 290 K (Friis 1944; IEEE
    # standard temperature T0 = 290 K).  The load is an ideal (noiseless) 50 Ω.
    series, shunt = _t_pad(loss_db)
    ckt = circuit(
        V("Vs", "s", "0"),
        R("Rs", "s", "a", 50.0),
        R("Ra", "a", "m", series),
        R("Rsh", "m", "0", shunt),
        R("Rb", "m", "out", series),
        quiet(R("RL", "out", "0", 50.0)),
    )
    res = analyze(
        ckt, output="out", input_source="Vs", band=(1e3, 1e6), temperature_celsius=290.0 - 273.15, source_resistor="Rs"
    )
    assert res.noise_figure_dB == pytest.approx(loss_db, rel=1e-9)
    np.testing.assert_allclose(res.noise_figure_spectrum_dB, loss_db, rtol=1e-9)


def test_attenuator_noise_figure_at_another_temperature():
    # A lossy passive two-port at physical temperature T: F = 1 + (L − 1)·T/T0
    # (Friis 1944; the attenuator's noise temperature is (L−1)T).  The source
    # resistor is taken at T0 = 290 K whatever the circuit temperature.
    loss_db, t = 6.0, 350.0
    series, shunt = _t_pad(loss_db)
    ckt = circuit(
        V("Vs", "s", "0"),
        R("Rs", "s", "a", 50.0),
        R("Ra", "a", "m", series),
        R("Rsh", "m", "0", shunt),
        R("Rb", "m", "out", series),
        quiet(R("RL", "out", "0", 50.0)),
    )
    res = analyze(ckt, output="out", band=(1e3, 1e6), temperature_celsius=t - 273.15, source_resistor="Rs")
    loss = 10 ** (loss_db / 10)
    assert res.noise_figure_dB == pytest.approx(10 * math.log10(1 + (loss - 1) * t / 290.0), rel=1e-9)


def _stage(prefix, node_in, node_out, gain):
    # A matched 50 Ω voltage amplifier: 50 Ω input termination, ideal gain,
    # 50 Ω series output.  Available power gain G = gain²/4 into 50 Ω.
    return [
        R(f"{prefix}in", node_in, "0", 50.0),
        E(f"{prefix}E", f"{prefix.lower()}x", "0", node_in, "0", gain),
        R(f"{prefix}out", f"{prefix.lower()}x", node_out, 50.0),
    ]


def test_friis_cascade_of_two_gain_stages():
    # F = F1 + (F2 − 1)/G1 for two matched stages (Friis 1944), at T0 = 290 K.
    kw = dict(band=(1e3, 1e4), temperature_celsius=290.0 - 273.15, source_resistor="Rs")
    g1, g2 = 4.0, 3.0

    def run(*stages):
        parts = [V("Vs", "s", "0"), R("Rs", "s", "in", 50.0)]
        node = "in"
        for n, gain in enumerate(stages):
            parts += _stage(f"S{n}", node, f"o{n}", gain)
            node = f"o{n}"
        parts.append(quiet(R("RL", node, "0", 50.0)))
        return analyze(circuit(*parts), output=node, **kw).noise_figure_dB

    f1 = 10 ** (run(g1) / 10)
    f2 = 10 ** (run(g2) / 10)
    cascade = 10 ** (run(g1, g2) / 10)
    assert cascade == pytest.approx(f1 + (f2 - 1) / (g1**2 / 4), rel=1e-9)


# --- converter ---------------------------------------------------------------------------


def test_ideal_16_bit_adc_snr():
    # 6.02N + 1.76 dB: 98.1 dB for 16 bits (common practice).
    assert ideal_adc_snr_dB(16) == pytest.approx(98.1, abs=0.05)
    assert ideal_adc_snr_dB(16) == pytest.approx(6.02 * 16 + 1.76, rel=1e-3)


def test_adc_comparison_names_the_floor():
    # q = FS/2^N; quantisation noise q/√12 (common practice).
    res = analyze(circuit(R("R1", "a", "0", 1e3), C("C1", "a", "0", 1e-9)), output="a", band=(0.0, math.inf))
    adc = adc_comparison(res, bits=16, full_scale_V=5.0, sample_rate_Hz=1e6)
    assert adc.quantisation_rms_V == pytest.approx(5.0 / 2**16 / math.sqrt(12), rel=1e-12)
    assert adc.floor_set_by == ("analog chain" if res.total_rms > adc.quantisation_rms_V else "converter")
    assert adc.combined_snr_dB < min(adc.ideal_snr_dB, adc.analog_snr_dB)

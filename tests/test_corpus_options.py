"""Netlists written the way schematic exports and parts lists write them (circuits of our own
invention, in ``tests/corpus_options/``): export-style node names and titles, RKM values,
``m=``, ``tc1``/``tc2``/``tc=a,b``, keyed values, ``ic=``, amplifiers with supply pins.
Each is read and analysed, through the Python API and the command line, and its figure is
checked against an independent computation; the source of each formula is named beside it."""

from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy import constants, integrate

import netnoise
from netnoise.engine.dc import operating_point

CORPUS = Path(__file__).parent / "corpus_options"
K_B = constants.Boltzmann  # J/K, exact (SI 2019), via scipy
T27 = 300.15  # K, 27 °C
T85 = 358.15  # K, 85 °C


def load(name: str) -> netnoise.Circuit:
    return netnoise.load_netlist(CORPUS / name)


def cli(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "netnoise", *args], capture_output=True, text=True, encoding="utf-8", check=False
    )


def r_at(r: float, tc1: float, tc2: float, celsius: float) -> float:
    """R(T) = R·(1 + tc1·ΔT + tc2·ΔT²), ΔT from 27 °C (common practice; IEC 60115-1 defines
    the temperature coefficient of resistance)."""
    dt = celsius - 27.0
    return r * (1 + tc1 * dt + tc2 * dt * dt)


def test_the_corpus_has_every_style():
    names = sorted(p.name for p in CORPUS.glob("*.cir"))
    assert len(names) >= 8
    for name in names:  # every one is read and analysed
        result = netnoise.analyze(load(name))
        assert result.total_rms > 0


def test_rc_with_exported_names_and_rkm_values_gives_kT_over_C():
    # R1 = 4k7, R2 = 0R1 in series, C1 = 2n2: the total noise of an RC low-pass to infinite
    # bandwidth is kT/C, whatever R (Johnson 1928, Nyquist 1928; common practice)
    result = netnoise.analyze(load("rc_export.cir"))
    assert result.total_variance == pytest.approx(K_B * T27 / 2.2e-9, rel=1e-9, abs=0)
    assert result.output_node == "/OUT"
    values = {c.source: c.value for c in result.contributions}
    assert values == {"R1": pytest.approx(4700.0, rel=1e-12, abs=0), "R2": pytest.approx(0.1, rel=1e-12, abs=0)}


def test_four_parts_in_parallel_are_one_quarter_the_resistance_for_noise():
    # m=4 parts of 20k: thermal noise current 4·4kT/20k = 4kT/5k (Johnson–Nyquist: S_i = 4kT/R per
    # part, independent parts add in power), so the low-frequency density is 4kT·5k
    result = netnoise.analyze(load("parallel_m.cir"), band=(1.0, 10.0))
    assert result.spot_density(1.0) ** 2 == pytest.approx(4 * K_B * T27 * 5e3, rel=1e-6, abs=0)
    # and the same circuit written as one 5k part gives the same budget
    single = netnoise.parse_netlist("single\nI1 0 s AC 1\nR1 s 0 5k\nC1 s 0 1n\n")
    reference = netnoise.analyze(single, output="s", band=(1.0, 10.0))
    assert result.total_variance == pytest.approx(reference.total_variance, rel=1e-12, abs=0)
    # to infinite bandwidth: kT/C, C = 1 nF (common practice)
    assert netnoise.analyze(load("parallel_m.cir")).total_variance == pytest.approx(K_B * T27 / 1e-9, rel=1e-9, abs=0)


@pytest.mark.parametrize("name", ["tc_hot.cir", "tc_own_temp.cir"])
def test_temperature_coefficients_at_85_celsius(name):
    # R(85 °C) from the tc formula above; thermal noise 4kT·R(T) at T = 358.15 K (Nyquist 1928),
    # white over the .noise band 1 Hz .. 1 kHz: total 4kT·R(T)·(1000 - 1) Hz (the band integral is
    # numerical, to about 1e-8)
    resistance = r_at(10e3, 3e-3, 10e-6, 85.0)
    assert resistance == pytest.approx(12_076.4, rel=1e-9, abs=0)  # 10k·(1 + 0.174 + 0.03364), by hand
    result = netnoise.analyze(load(name))
    assert result.total_variance == pytest.approx(4 * K_B * T85 * resistance * 999.0, rel=1e-7, abs=0)
    assert result.contributions[0].value == pytest.approx(resistance, rel=1e-12, abs=0)


def test_tc_follows_the_analysis_temperature_unless_the_part_has_its_own():
    hot = load("tc_hot.cir")  # no own temp=: the analysis temperature sets R(T)
    for celsius in (-40.0, 27.0, 125.0):
        result = netnoise.analyze(hot, temperature_celsius=celsius)
        expected = 4 * K_B * (celsius + 273.15) * r_at(10e3, 3e-3, 10e-6, celsius) * 999.0  # as above
        assert result.total_variance == pytest.approx(expected, rel=1e-7, abs=0)
    own = load("tc_own_temp.cir")  # temp=85 on the part: the ambient changes nothing
    assert netnoise.analyze(own, temperature_celsius=-40.0).total_variance == pytest.approx(
        4 * K_B * T85 * r_at(10e3, 3e-3, 10e-6, 85.0) * 999.0, rel=1e-7, abs=0
    )
    # the DC operating point at 85 °C: 1 mA of DC into R(85 °C)
    dc = netnoise.parse_netlist("dc\nI1 0 b DC 1m\nR1 b 0 10k tc1=3m tc2=10u\n.temp 85\n")
    assert operating_point(dc).node_voltages["b"] == pytest.approx(
        1e-3 * r_at(10e3, 3e-3, 10e-6, 85.0), rel=1e-12, abs=0
    )


def test_keyed_values():
    circuit = load("keyed_values.cir")
    # two 10k in a divider, 10 nF at the tap: kT/C (common practice); DC 5 V halved (Ohm's law)
    assert netnoise.analyze(circuit).total_variance == pytest.approx(K_B * T27 / 10e-9, rel=1e-9, abs=0)
    assert operating_point(circuit).node_voltages["/MID"] == pytest.approx(2.5, rel=1e-12, abs=0)
    assert circuit.element("V1").ac_magnitude == 1.0


def test_rkm_divider():
    circuit = load("rkm_mixed.cir")
    r1, r2, r3 = 1.5e3, 0.47, 10.0e3  # 1k5, R47, 10k0 (IEC 60062 letter-and-digit code)
    shunt = r2 * r3 / (r2 + r3)
    # the tap of a divider: 10 V · (R2 ∥ R3) / (R1 + R2 ∥ R3) (Ohm's law)
    assert operating_point(circuit).node_voltages["/TAP"] == pytest.approx(
        10.0 * shunt / (r1 + shunt), rel=1e-12, abs=0
    )
    # every resistor of a passive RC node to infinite bandwidth: kT/C with C = 4u7 (common practice)
    assert netnoise.analyze(circuit).total_variance == pytest.approx(K_B * T27 / 4.7e-6, rel=1e-9, abs=0)


def test_two_inductors_in_parallel():
    # R = 100 Ω across L/m = 0.5 mH: v = i_R·(R ∥ jωL), |Z|² = R²(ωL)²/(R² + (ωL)²); the band
    # integral of 4kT/R·|Z|² from f1 to f2 is 4kTR·[f - (R/2πL)·atan(2πLf/R)] (by hand from
    # ∫ x²/(a² + x²) = x - a·atan(x/a)); checked against scipy's quad below
    r, inductance = 100.0, 1e-3 / 2
    f1, f2 = 10.0, 100e3

    def closed(f):
        return 4 * K_B * T27 * r * (f - r / (2 * math.pi * inductance) * math.atan(2 * math.pi * inductance * f / r))

    expected = closed(f2) - closed(f1)
    quad, _ = integrate.quad(
        lambda f: (
            4 * K_B * T27 / r * (r * 2 * math.pi * f * inductance) ** 2 / (r**2 + (2 * math.pi * f * inductance) ** 2)
        ),
        f1,
        f2,
    )
    assert quad == pytest.approx(expected, rel=1e-9, abs=0)
    assert netnoise.analyze(load("lc_m.cir")).total_variance == pytest.approx(expected, rel=1e-6, abs=0)


def test_initial_conditions_are_ignored_with_a_notice():
    circuit = load("ic_ignored.cir")
    notes = [n for n in circuit.notices if "ic=" in n]
    assert len(notes) == 1 and "ignored" in notes[0] and notes[0].count("ic_ignored.cir:") == 2  # both lines named
    # a parallel RLC tank driven by R's noise: total kT/C (common practice), C = 100 nF
    assert netnoise.analyze(circuit).total_variance == pytest.approx(K_B * T27 / 100e-9, rel=1e-9, abs=0)


def test_subcircuit_nodes_are_shown_with_their_path_and_spelling():
    circuit = load("subckt_names.cir")
    voltages = operating_point(circuit).node_voltages
    assert set(voltages) == {"/SRC", "/Stage1", "X1.Mid", "unconnected-(U1-Pad8)"}
    # the node's capacitance at infinite frequency is C1 = 1 nF (C9 leads to a node with no
    # capacitance to ground): total kT/C1 (common practice for passive RC networks)
    assert netnoise.analyze(circuit).total_variance == pytest.approx(K_B * T27 / 1e-9, rel=1e-6, abs=0)


# --- amplifiers with supply pins ---------------------------------------------------------


def test_five_pin_amplifier_is_the_three_pin_one():
    five = load("opamp_supplies.cir")
    text = (CORPUS / "opamp_supplies.cir").read_text(encoding="utf-8")
    three = netnoise.parse_netlist(
        text.replace(
            "XU1 Net-(U1-Pad3) Net-(R2-Pad1) /+15V /-15V /OUT LNA1", "XU1 Net-(U1-Pad3) Net-(R2-Pad1) /OUT LNA1"
        )
    )
    a, b = netnoise.analyze(five), netnoise.analyze(three)
    assert a.total_variance == pytest.approx(b.total_variance, rel=1e-12, abs=0)
    assert not [n for n in a.notes if n.code == "outside-rails"]


def test_five_pin_amplifier_against_the_non_inverting_formula():
    # e_out² = G²[e_n² + (i_n R_s)² + 4kT R_s + (i_n R_p)² + 4kT R_p], G = 1 + R3/R2, R_p = R2 ∥ R3
    # (Motchenbacher & Connelly, Low-Noise Electronic System Design, 1993 -- from memory;
    # common practice), at 10 Hz, far below the poles; the finite aol = 200k lowers G by G/aol
    result = netnoise.analyze(load("opamp_supplies.cir"))
    en, i_n, rs, r2, r3 = 4e-9, 0.5e-12, 1e3, 1e3, 9e3
    g = 1 + r3 / r2
    rp = r2 * r3 / (r2 + r3)
    expected = g**2 * (en**2 + (i_n * rs) ** 2 + 4 * K_B * T27 * rs + (i_n * rp) ** 2 + 4 * K_B * T27 * rp)
    assert result.spot_density(10.0) ** 2 == pytest.approx(expected, rel=1e-3, abs=0)


def test_an_output_past_its_rail_is_noted():
    result = netnoise.analyze(load("opamp_rail_violation.cir"))
    notes = [n for n in result.notes if n.code == "outside-rails"]
    assert len(notes) == 1
    data = notes[0].data
    # DC: 2 V times the gain 1 + 9k/1k, less the loop's error G/aol (the non-inverting formula)
    assert data["voltage_V"] == pytest.approx(20.0 / (1 + 10 / 200e3), rel=1e-9, abs=0)
    assert (data["element"], data["pin"], data["node"]) == ("XU1", "out", "/OUT")
    assert (data["upper_node"], data["lower_node"], data["upper_V"], data["lower_V"]) == ("/VCC", "/VEE", 12.0, -12.0)
    assert "/OUT" in notes[0].text and "outside its supply rails" in notes[0].text


def test_rails_not_driven_or_swapped_are_said():
    base = "t\n.model A opamp (aol=1e5 gbw=1meg)\nV1 in 0 DC 0.1 AC 1\nR1 o 0 1k\n"
    undriven = netnoise.parse_netlist(base + "XU1 in o vcc vee o A\nVEE vee 0 -5\n")
    swapped = netnoise.parse_netlist(base + "XU1 in o vcc vee o A\nVCC vcc 0 -5\nVEE vee 0 5\n")
    inside = netnoise.parse_netlist(base + "XU1 in o vcc vee o A\nVCC vcc 0 5\nVEE vee 0 -5\n")
    first = [n for n in netnoise.analyze(undriven, output="o", band=(1, 10)).notes if n.code == "outside-rails"]
    assert len(first) == 1 and "not both driven" in first[0].text
    second = [n for n in netnoise.analyze(swapped, output="o", band=(1, 10)).notes if n.code == "outside-rails"]
    assert len(second) == 1 and "not above its lower rail" in second[0].text
    assert not [n for n in netnoise.analyze(inside, output="o", band=(1, 10)).notes if n.code == "outside-rails"]


def test_an_input_below_the_lower_rail_is_noted():
    # a single-supply amplifier (0 .. 5 V) whose input sits at -0.5 V
    circuit = netnoise.parse_netlist(
        "t\n.model A opamp (aol=1e5 gbw=1meg)\nVCC vcc 0 5\nV1 in 0 DC -0.5 AC 1\nXU1 in o vcc 0 o A\nR1 o 0 10k\n"
    )
    notes = [n for n in netnoise.analyze(circuit, output="o", band=(1, 10)).notes if n.code == "outside-rails"]
    pins = sorted(n.data["pin"] for n in notes)
    assert pins == ["in+", "in-", "out"]  # the follower's output and inverting input follow the input


# --- the user's spelling in every output -------------------------------------------------


def test_every_output_shows_the_netlist_spelling(tmp_path):
    netlist = CORPUS / "opamp_supplies.cir"
    out_json, out_csv = tmp_path / "r.json", tmp_path / "r.csv"
    run = cli("analyze", str(netlist), "--dc", "--json", str(out_json), "--csv", str(out_csv))
    assert run.returncode == 0, run.stderr
    for spelled in ("v(/OUT)", "v(Net-(U1-Pad3))", "v(Net-(R2-Pad1))", "v(/+15V)", "v(/-15V)", "v(/IN)"):
        assert spelled in run.stdout
    assert "/out" not in run.stdout and "net-(" not in run.stdout
    document = json.loads(out_json.read_text(encoding="utf-8"))
    assert document["output"]["node"] == "/OUT"
    voltages = document["operating_point"]["node_voltages_V"]
    assert set(voltages) == {"/+15V", "/-15V", "/IN", "Net-(U1-Pad3)", "Net-(R2-Pad1)", "/OUT"}
    # the CSV names sources (elements, as written) and no node at all
    header = out_csv.read_text(encoding="utf-8").splitlines()[0]
    assert "XU1" in header and "R1" in header and "/out" not in header.lower()


def test_out_and_ref_take_exported_names_in_any_case():
    run = cli("analyze", str(CORPUS / "opamp_supplies.cir"), "--out", "net-(r2-pad1)", "--ref", "/out")
    assert run.returncode == 0, run.stderr
    assert "v(Net-(R2-Pad1)) − v(/OUT)" in run.stdout
    bad = cli("analyze", str(CORPUS / "opamp_supplies.cir"), "--out", "Net-(R9-Pad1)")
    assert bad.returncode != 0 and "Net-(R9-Pad1)" in bad.stderr


def test_the_python_api_shows_the_spelling_too():
    circuit = load("rc_export.cir")
    assert circuit.shown_node("/out") == "/OUT"
    assert circuit.shown_node("net-(r1-pad1)") == "Net-(R1-Pad1)"
    result = netnoise.analyze(circuit, output="NET-(C1-PAD1)", band=(1.0, 1e3))
    assert result.output_node == "Net-(C1-Pad1)"
    assert "Net-(C1-Pad1)" in repr(result) or "Net-(C1-Pad1)" in result._repr_html_()
    assert np.isfinite(result.total_variance)

"""Standard element options (m=, ic=, tc1/tc2/tc=a,b, keyed values), the resistor's own
keyword 'quiet', RKM values and node names with parentheses: their forms, their bad forms
(each with file:line:column), and their physics against published formulas."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants

import netnoise
from netnoise.circuit import Capacitor, Inductor, Resistor
from netnoise.engine.dc import operating_point
from netnoise.errors import CircuitError, NetlistError
from netnoise.netlist.parser import parse_statements
from netnoise.text.values import parse_value

K_B = constants.Boltzmann
T27 = 300.15


def only(text: str):
    (statement,) = parse_statements(text).statements
    return statement


def element(text: str, name: str):
    return netnoise.parse_netlist(text).element(name)


# --- forms -------------------------------------------------------------------------------


def test_keyed_values_read_as_the_plain_ones():
    for plain, keyed in [
        ("R1 a b 1k", "R1 a b R=1k"),
        ("C1 a b 10n", "C1 a b c=10n"),
        ("L1 a b 1u", "L1 a b L=1u"),
    ]:
        assert only(f"t\n{plain}\n") == only(f"t\n{keyed}\n")
    assert only("t\nV1 a 0 DC 5 AC 1\n") == only("t\nV1 a 0 DC=5 AC=1\n")
    source = element("t\nV1 a 0 DC=5 AC=2 45\nR1 a 0 1k\n", "V1")
    assert (source.dc, source.ac_magnitude, source.ac_phase) == (5.0, 2.0, 45.0)


def test_options_reach_the_elements():
    circuit = netnoise.parse_netlist(
        "t\nV1 a 0 1\nR1 a b 10k m=2 tc1=100u tc2=1u temp=50 ni=-20\nR2 b 0 1k tc=200u,2u quiet\n"
        "C1 b 0 1n m=3 ic=0.5\nL1 b c 1m m=4 IC=1m\nR3 c 0 1\n"
    )
    r1, r2 = circuit.element("R1"), circuit.element("R2")
    assert (r1.resistance, r1.multiplier, r1.temperature_celsius) == (10e3, 2.0, 50.0)
    assert (r1.tc1, r1.tc2) == (pytest.approx(100e-6, rel=1e-12, abs=0), pytest.approx(1e-6, rel=1e-12, abs=0))
    assert (r2.tc1, r2.tc2, r2.quiet) == (
        pytest.approx(200e-6, rel=1e-12, abs=0),
        pytest.approx(2e-6, rel=1e-12, abs=0),
        True,
    )
    assert circuit.element("C1").effective_capacitance == pytest.approx(3e-9, rel=1e-12, abs=0)
    assert circuit.element("L1").effective_inductance == pytest.approx(0.25e-3, rel=1e-12, abs=0)
    (ic,) = [n for n in circuit.notices if "ic=" in n]  # one notice naming both elements
    assert ic.startswith("C1 (") and ", L1 (" in ic


def test_a_single_tc_value_is_tc1():
    r = element("t\nR1 a 0 1k tc=300u\n", "R1")
    assert (r.tc1, r.tc2) == (300e-6, 0.0)


def test_models_can_supply_resistor_defaults():
    # the seam a .model NAME R card uses: defaults filled in under the line's own options
    statement = only("t\nR1 a 0 1k tc1=5m\n")

    class Ctx:
        name, loc = "R1", None

        def number(self, value):
            return value.number

        def notice(self, text, loc=None):
            raise AssertionError(text)

        def fail(self, message, loc, hint=""):
            return NetlistError(message, loc, hint)

    options = Resistor.options_from(statement, Ctx(), defaults={"tc1": 1e-3, "tc2": 2e-6, "m": 3.0})
    assert (options.tc1, options.tc2, options.multiplier) == (5e-3, 2e-6, 3.0)


# node names as exports write them, and calls that must stay calls
def test_names_with_parentheses_and_calls_side_by_side():
    circuit = netnoise.parse_netlist(
        "t\nV1 Net-(V1-Pad1) 0 DC 1 SIN(0 1 1k) AC 1\nR1 Net-(V1-Pad1) unconnected-(U1-Pad8) 1k\n"
        "R2 unconnected-(U1-Pad8) 0 1k\nC1 unconnected-(U1-Pad8) 0 1n\n"
        ".noise v(unconnected-(U1-Pad8)) V1\n"
    )
    assert circuit.noise_card.output_node == "unconnected-(u1-pad8)"
    assert circuit.shown_node("UNCONNECTED-(u1-pad8)") == "unconnected-(U1-Pad8)"
    assert any("SIN(...) waveform is ignored" in n for n in circuit.notices)
    for card in ("v(a,Net-(X))", "v(a, Net-(X))", "v( a , Net-(X) )"):
        text = f"t\nV1 a 0 AC 1\nR1 a Net-(X) 1k\nR2 Net-(X) 0 1k\n.noise {card} V1\n"
        card_read = netnoise.parse_netlist(text).noise_card
        assert (card_read.output_node, card_read.reference_node) == ("a", "net-(x)")


def test_a_glued_call_is_a_name_in_node_position():
    # v(out) as a node: a schematic may name a net so; on .noise the same word is the call
    circuit = netnoise.parse_netlist("t\nV1 v(in) 0 AC 1\nR1 v(in) 0 1k\n.noise v(v(in)) V1 dec 1 1 10\n")
    assert circuit.noise_card.output_node == "v(in)"


@pytest.mark.parametrize(
    "text, fragment, line, column",
    [
        # (netlist, fragment of the message, line, column of the caret)
        ("t\nR1 a 0 1k m=0\n", "m=0 must be above 0", 2, 13),
        ("t\nR1 a 0 1k m=-2\n", "m=-2 must be above 0", 2, 13),
        ("t\nC1 a 0 1n m=0\n", "m=0 must be above 0", 2, 13),
        ("t\nR1 a 0 1k m=1 m=2\n", "R1 has two m= values", 2, 15),
        ("t\nR1 a 0 1k tc=1m,2u,3n\n", "tc= takes two coefficients (tc1,tc2), not 3", 2, 20),
        ("t\nR1 a 0 1k tc=1m tc1=2m\n", "gives tc= and tc1=/tc2= both", 2, 14),
        ("t\nR1 a 0 1k m=1,2\n", "m= takes one value (multiplier (parts in parallel)) on R1, not a list", 2, 15),
        ("t\nR1 a 0 1k ic=0\n", "unexpected extra field 'ic=...' on R1", 2, 11),
        ("t\nR1 a 0 1k noiseless\n", "'noiseless' is not a netnoise keyword: write 'quiet'", 2, 11),
        ("t\nR1 a 0 R=1k 2k\n", "unexpected extra field '2k' on R1", 2, 13),
        ("t\nC1 a 0 1n esr=1 m=2\n", "unexpected extra field 'm=...' on C1", 2, 17),
        ("t\nV1 a 0 DC=1 DC 2\nR1 a 0 1k\n", "V1 has two DC values", 2, 13),
        ("t\nV1 a 0 AC=1 AC 2\nR1 a 0 1k\n", "V1 has two AC specifications", 2, 13),
        ("t\nR1 a 0 1M5\n", "'1M5' is ambiguous", 2, 8),
        ("t\nC1 a 0 2m2\n", "write 2.2meg for 2.2e6 or 2.2m for 2.2e-3", 2, 8),
        ("t\n.subckt s a p=1\nR1 a 0 {p}\n.ends\nX1 n s p=1,2\nR2 n 0 1k\n", "p= takes one value", 5, 12),
        ("t\nR1 Net-(R1-Pad2 0 1k\n", "a '(' is not closed", 2, 21),
        ("t\nR1 a(b c) 0 1k\n", "parentheses in closed pairs", 2, 4),
        ("t\nR1 (a) 0 1k\n", "a name cannot start with '('", 2, 4),
        ("t\nE1 a 0 b POLY(1) 1\n", "expected POLY(n) here, not 'b'", 2, 8),
    ],
)
def test_bad_options(text, fragment, line, column):
    with pytest.raises(NetlistError) as info:
        netnoise.parse_netlist(text)
    error = info.value
    assert fragment in str(error)
    assert (error.location.line, error.location.column) == (line, column)


def test_temperature_coefficients_that_make_the_resistance_vanish_are_refused():
    # 1 + tc1·ΔT at 127 °C with tc1 = -0.01/K: 1 - 1 = 0 Ω
    circuit = netnoise.parse_netlist("t\nI1 0 a AC 1\nR1 a 0 1k tc1=-10m\nC1 a 0 1n\n")
    with pytest.raises(CircuitError, match="temperature coefficients"):
        netnoise.analyze(circuit, output="a", temperature_celsius=127.0)


# --- physics -----------------------------------------------------------------------------


def test_m_parts_are_m_independent_resistors_thermal_and_excess():
    # m=3 against three parts written out: thermal 3·4kT/R (Johnson–Nyquist, independent parts
    # add in power) and the excess noise of three parts each with the whole DC voltage across
    # them (independent: their powers add)
    dc = "V1 top 0 DC 10\nRs top a 10k\n"
    written = netnoise.parse_netlist(
        "t\n" + dc + "R1 a 0 30k ni=-10\nR2 a 0 30k ni=-10\nR3 a 0 30k ni=-10\nC1 a 0 1n\n"
    )
    multiplied = netnoise.parse_netlist("t\n" + dc + "R1 a 0 30k ni=-10 m=3\nC1 a 0 1n\n")
    band = (1.0, 1e4)
    a = netnoise.analyze(written, output="a", band=band)
    b = netnoise.analyze(multiplied, output="a", band=band)
    assert b.total_variance == pytest.approx(a.total_variance, rel=1e-9, abs=0)
    assert b.spot_density(10.0) == pytest.approx(a.spot_density(10.0), rel=1e-9, abs=0)
    # and the thermal part alone is that of one 10k resistor: its current 4kT/10k (Johnson–Nyquist)
    # into the node's 10k ∥ 10k = 5k, v² = 4kT/10k·(5k)²
    quiet = netnoise.parse_netlist("t\nV1 top 0 DC 10\nRs top a 10k quiet\nR1 a 0 30k m=3\n")
    low = netnoise.analyze(quiet, output="a", band=(1.0, 10.0))
    assert low.spot_density(1.0) ** 2 == pytest.approx(4 * K_B * T27 / 10e3 * 5e3**2, rel=1e-9, abs=0)


def test_capacitors_in_parallel_and_kT_over_C():
    # kT/C of the whole capacitance, C·m (common practice)
    circuit = netnoise.parse_netlist("t\nI1 0 a AC 1\nR1 a 0 4k7\nC1 a 0 2n2 m=3\n")
    assert netnoise.analyze(circuit, output="a").total_variance == pytest.approx(K_B * T27 / 6.6e-9, rel=1e-9, abs=0)


def test_coupled_inductors_see_the_parallel_inductance():
    # K between L1 (m=2) and L2: the mutual inductance is k·√(L1/m·L2); the same circuit with
    # L1 written as its parallel value gives the same noise
    base = "t\nI1 0 a AC 1\nR1 a 0 50\nR2 b 0 50\nL2 b 0 1m\nK1 L1 L2 0.5\n"
    a = netnoise.analyze(netnoise.parse_netlist(base + "L1 a 0 2m m=2\n"), output="b", band=(10.0, 1e5))
    b = netnoise.analyze(netnoise.parse_netlist(base + "L1 a 0 1m\n"), output="b", band=(10.0, 1e5))
    assert a.total_variance == pytest.approx(b.total_variance, rel=1e-12, abs=0)


def test_tc_and_a_sweep_of_the_value_keep_the_coefficients():
    # R(T) of the swept value: changing R1 to 20k at 85 °C gives 20k·(1 + tc1·58) (the tc formula,
    # common practice; IEC 60115-1 defines the coefficient)
    circuit = netnoise.parse_netlist("t\nI1 0 a AC 1\nR1 a 0 10k tc1=1m\n")
    prepared = netnoise.prepare(circuit, output="a", band=(1.0, 11.0), temperature_celsius=85.0)
    changed = prepared.with_values({"R1": 20e3}).analyze()
    # (white over 1 .. 11 Hz; the band integral is numerical, to about 1e-8)
    assert changed.total_variance == pytest.approx(4 * K_B * 358.15 * 20e3 * (1 + 1e-3 * 58) * 10.0, rel=1e-7, abs=0)


def test_dc_operating_point_of_a_tc_resistor_follows_the_temperature():
    circuit = netnoise.parse_netlist("t\nI1 0 a DC 1m\nR1 a 0 1k tc1=4m\n")
    # Ohm's law with R(T) = 1k·(1 + 0.004·(T - 27))
    assert operating_point(circuit).node_voltages["a"] == pytest.approx(1.0, rel=1e-12, abs=0)
    assert operating_point(circuit, 77.0).node_voltages["a"] == pytest.approx(1.2, rel=1e-12, abs=0)


def test_elements_built_in_code_keep_their_old_meaning():
    r = Resistor("R1", ("a", "0"), resistance=1e3)
    assert r.effective_resistance == 1e3 and r.at_temperature(85.0) is r
    assert Capacitor("C1", ("a", "0"), capacitance=1e-9).effective_capacitance == 1e-9
    assert Inductor("L1", ("a", "0"), inductance=1e-3).effective_inductance == 1e-3


# --- RKM values (IEC 60062 letter-and-digit code) ------------------------------------------


@pytest.mark.parametrize(
    "text, expected",
    [
        # the letter stands for the decimal point and scales the number (IEC 60062)
        ("4k7", 4.7e3),
        ("1k5", 1.5e3),
        ("10k0", 10e3),
        ("1R5", 1.5),
        ("0R1", 0.1),
        ("R47", 0.47),
        ("2n2", 2.2e-9),
        ("4u7", 4.7e-6),
        ("4\u00b57", 4.7e-6),
        ("6p8", 6.8e-12),
        ("1f5", 1.5e-15),
        ("2g2", 2.2e9),
        ("1t5", 1.5e12),
        ("4K7", 4.7e3),
        ("-4k7", -4.7e3),
        ("4k7Ohm", 4.7e3),
        ("2n2F", 2.2e-9),
        # what SPICE already read stays as it was
        ("1k", 1e3),
        ("1meg", 1e6),
        ("10MEG", 10e6),
        ("1e3", 1e3),
        ("1M", 1e-3),
        ("2.2n", 2.2e-9),
    ],
)
def test_rkm_values(text, expected):
    assert parse_value(text) == pytest.approx(expected, rel=1e-12, abs=0)


@pytest.mark.parametrize("text", ["1M5", "2m2", "0m5", "1m0"])
def test_rkm_m_is_refused_with_both_readings(text):
    with pytest.raises(ValueError) as info:
        parse_value(text)
    message = str(info.value)
    whole, fraction = text[0], text[2]
    assert f"{whole}.{fraction} mega" in message and f"{whole}.{fraction} milli" in message
    assert f"write {whole}.{fraction}meg" in message and f"or {whole}.{fraction}m" in message


@pytest.mark.parametrize("text", ["1R", "R", "n2", "4.7k5", "1k5k", "1meg5", "1R5R"])
def test_not_rkm(text):
    with pytest.raises(ValueError):
        parse_value(text)


def test_rkm_values_in_a_netlist():
    circuit = netnoise.parse_netlist("t\nR1 a b 4k7\nR2 b 0 R47\nC1 b 0 2n2\nL1 a c 4u7\nR3 c 0 1R5\nV1 a 0 1\n")
    assert circuit.element("R1").resistance == pytest.approx(4700.0, rel=1e-12, abs=0)
    assert circuit.element("R2").resistance == pytest.approx(0.47, rel=1e-12, abs=0)
    assert circuit.element("C1").capacitance == pytest.approx(2.2e-9, rel=1e-12, abs=0)
    assert circuit.element("L1").inductance == pytest.approx(4.7e-6, rel=1e-12, abs=0)
    assert math.isclose(circuit.element("R3").resistance, 1.5, rel_tol=1e-12)


# --- messages name nodes as the netlist spelled them ------------------------------------


def test_messages_name_nodes_as_spelled():
    with pytest.raises(NetlistError) as info:
        netnoise.parse_netlist("t\nV1 /IN 0 AC 1\nR1 /IN /OUT 1k\nC1 /OUT 0 1n\n.noise v(/OUTT) V1\n")
    assert "did you mean '/OUT'?" in str(info.value)
    floating = netnoise.parse_netlist(
        "t\nV1 /IN 0 AC 1\nR1 /IN /OUT 1k\nC1 /OUT Net-(C1-Pad2) 1n\nC2 Net-(C1-Pad2) 0 1n\n"
    )
    with pytest.raises(CircuitError) as found:
        netnoise.analyze(floating, output="/out", band=(1.0, 10.0))
    assert "Net-(C1-Pad2)" in str(found.value)
    with pytest.raises(CircuitError) as unknown:
        netnoise.analyze(floating, output="/OUTT", band=(1.0, 10.0))
    assert "'/OUTT' does not exist" in str(unknown.value) and "/OUT" in str(unknown.value)


@pytest.mark.parametrize("band", [(1.0, 11.0), None])
def test_monte_carlo_trials_follow_their_temperature(band):
    # each trial at its own temperature T_j: R(T_j) from the tc formula (common practice; IEC
    # 60115-1), so the variance is 4kT_j·R(T_j)·B over a white band B (Nyquist 1928); with no
    # band, kT_j/C for the RC node whatever R (common practice)
    circuit = netnoise.parse_netlist("t\nI1 0 a AC 1\nR1 a 0 10k tc1=3m tc2=10u\nC1 a 0 1n\n")
    study = netnoise.montecarlo(
        circuit, trials=6, temperature_range_celsius=(-40.0, 125.0), seed=7, output="a", band=band, jobs=1
    )
    t = study.temperature_K
    variance = study.source_variance.sum(axis=1)
    if band is None:
        expected = K_B * t / 1e-9
        assert variance == pytest.approx(expected, rel=1e-9, abs=0)
    else:
        dt = t - 273.15 - 27.0
        r = 10e3 * (1 + 3e-3 * dt + 10e-6 * dt**2)
        # the RC node: 4kTR/(1 + (f/fc)²), fc = 1/(2πRC), integrated by hand from 1 to 11 Hz:
        # 4kTR·fc·[atan(11/fc) - atan(1/fc)]
        fc = 1 / (2 * math.pi * r * 1e-9)
        expected = 4 * K_B * t * r * fc * (np.arctan(11.0 / fc) - np.arctan(1.0 / fc))
        assert variance == pytest.approx(expected, rel=1e-6, abs=0)


def test_one_notice_for_many_ignored_starting_values():
    # a simulator deck gives every capacitor a starting value: one notice names them, not eight
    lines = "".join(f"C{i} a 0 1n ic={i}\n" for i in range(1, 9))
    circuit = netnoise.parse_netlist(f"t\nV1 a 0 1\n{lines}R1 a 0 1k\n")
    (ic,) = [n for n in circuit.notices if "ic=" in n]
    assert ic.startswith("C1 (<text>:3), C2 (<text>:4)") and "C6 (<text>:8) and 2 more: ic=" in ic

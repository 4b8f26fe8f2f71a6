"""Statements -> flat Circuit: scopes, parameters, subcircuits, includes, cards."""

import math
from pathlib import Path

import pytest

from netnoise.circuit import (
    Capacitor,
    CurrentControlledCurrentSource,
    CurrentControlledVoltageSource,
    CurrentSource,
    Inductor,
    MutualCoupling,
    NoiseSpec,
    OpAmp,
    OpAmpModel,
    Resistor,
    VoltageControlledCurrentSource,
    VoltageControlledVoltageSource,
    VoltageSource,
)
from netnoise.errors import NetlistError
from netnoise.netlist import load_netlist, parse_netlist

REPO = Path(__file__).resolve().parent.parent


def by_name(circuit):
    return {e.name: e for e in circuit.elements}


def test_flat_circuit_elements_and_ground_alias():
    circuit = parse_netlist(
        "t\nV1 in GND DC 1 AC 2 45\nR1 in Out 1k\nC1 out gnd 1n\nL1 out 0 1u\n"
        "E1 e 0 out 0 10\nG1 g 0 out 0 1m\nRg g 0 1k\nRe e 0 1k\n"
    )
    elements = by_name(circuit)
    assert elements["V1"] == VoltageSource("V1", ("in", "0"), dc=1.0, ac_magnitude=2.0, ac_phase=45.0)
    assert elements["R1"].nodes == ("in", "out")  # node names are lower case
    assert isinstance(elements["C1"], Capacitor) and elements["C1"].nodes == ("out", "0")
    assert isinstance(elements["L1"], Inductor)
    assert isinstance(elements["E1"], VoltageControlledVoltageSource)
    assert elements["E1"].control_nodes == ("out", "0")
    assert isinstance(elements["G1"], VoltageControlledCurrentSource)
    assert elements["G1"].transconductance == pytest.approx(1e-3, rel=1e-12)  # m = 1e-3 (SI)
    assert circuit.title == "t"
    assert circuit.nodes == ("in", "out", "e", "g")


def test_element_names_keep_spelling_and_origin():
    circuit = parse_netlist("t\nrLoad out 0 1k\nV1 out 0 1\n", filename="<mine>")
    element = circuit.element("RLOAD")
    assert element.name == "rLoad"
    assert (element.origin.file, element.origin.line, element.origin.column) == ("<mine>", 2, 1)


def test_source_defaults():
    elements = by_name(parse_netlist("t\nV1 a 0\nV2 b 0 AC\nI1 a b 1m AC 2\nR1 a 0 1\nR2 b 0 1\n"))
    assert (elements["V1"].dc, elements["V1"].ac_magnitude) == (0.0, 0.0)
    assert elements["V2"].ac_magnitude == 1.0  # 'AC' alone means magnitude 1 (common practice)
    assert elements["I1"].dc == pytest.approx(1e-3, rel=1e-12)
    assert elements["I1"].ac_magnitude == pytest.approx(2.0, rel=1e-12)


def test_params_in_order_and_before_elements():
    circuit = parse_netlist("t\nR1 a 0 {r2/2}\n.param r1=1k r2={2*r1}\n.param r3 = r1 + r2\nR3 a 0 {r3}\n")
    elements = by_name(circuit)
    assert elements["R1"].resistance == pytest.approx(2e3 / 2, rel=1e-12)
    assert elements["R3"].resistance == pytest.approx(1e3 + 2e3, rel=1e-12)


SUBCKT_TEXT = """t
.param rtop=10k
.subckt div in out params: r=1k ratio=2
.param rlow = {r/ratio}
Rh in out {r}
Rl out 0 {rlow}
Cx out mid 1p
Rm mid 0 {rtop}
.ends div
V1 in 0 1
X1 in a div
X2 a b DIV r=4k ratio={4*2}
"""


def test_subcircuit_expansion_names_and_params():
    circuit = parse_netlist(SUBCKT_TEXT)
    elements = by_name(circuit)
    assert elements["X1.Rh"].nodes == ("in", "a")  # pins map to the outer nodes
    assert elements["X1.Rh"].resistance == pytest.approx(1e3, rel=1e-12)  # default r
    assert elements["X1.Rl"].resistance == pytest.approx(1e3 / 2, rel=1e-12)
    assert elements["X1.Cx"].nodes == ("a", "x1.mid")  # internal node gets the instance prefix
    assert elements["X1.Rm"].resistance == pytest.approx(10e3, rel=1e-12)  # global param seen inside
    assert elements["X2.Rh"].resistance == pytest.approx(4e3, rel=1e-12)  # override
    assert elements["X2.Rl"].resistance == pytest.approx(4e3 / 8, rel=1e-12)
    assert elements["X2.Rl"].nodes == ("b", "0")


def test_defaults_may_use_earlier_defaults_and_globals():
    circuit = parse_netlist(
        "t\n.param base=100\n.subckt s a params: r={base*2} r2={r+1}\nR1 a 0 {r2}\n.ends\nX1 n s\nX2 n s r=5\nV1 n 0 1\n"
    )
    elements = by_name(circuit)
    assert elements["X1.R1"].resistance == pytest.approx(201.0, rel=1e-12)
    assert elements["X2.R1"].resistance == pytest.approx(6.0, rel=1e-12)


def test_override_expressions_use_the_instantiating_scope():
    circuit = parse_netlist(
        "t\n.subckt inner a params: v=1\nR1 a 0 {v}\n.ends\n"
        ".subckt outer a params: v=10\nXi a inner v={v*3}\n.ends\n"
        "Xo n outer v=7\nV1 n 0 1\n"
    )
    assert circuit.element("Xo.Xi.R1").resistance == pytest.approx(21.0, rel=1e-12)
    assert circuit.element("Xo.Xi.R1").nodes == ("n", "0")


def test_nested_definitions_are_scoped():
    text = (
        "t\n.subckt outer a b\n.subckt leg p q params: r=1\nR1 p q {r}\n.ends leg\n"
        "X1 a m leg r=2\nX2 m b leg r=3\n.ends outer\nXo in 0 outer\nV1 in 0 1\n"
    )
    circuit = parse_netlist(text)
    assert circuit.element("Xo.X1.R1").nodes == ("in", "xo.m")
    assert circuit.element("Xo.X2.R1").resistance == pytest.approx(3.0, rel=1e-12)
    with pytest.raises(NetlistError, match="no subcircuit or amplifier model called 'leg'"):
        parse_netlist(text + "Xbad in 0 leg\n")


def test_controlled_by_current_and_coupling_resolve_in_scope():
    text = (
        "t\n.subckt sense a b\nVsense a m 0\nRm m b 1\nF1 b 0 vSENSE 2\nH1 h 0 Vsense 50\nRh h 0 1\n"
        "L1 a 0 1u\nL2 b 0 1u\nK1 l1 L2 0.5\n.ends\n"
        "V1 in 0 1\nX1 in out sense\nRo out 0 1k\nVsense out 0 0\nF2 out 0 Vsense 1\n"
    )
    elements = by_name(parse_netlist(text))
    assert isinstance(elements["X1.F1"], CurrentControlledCurrentSource)
    assert elements["X1.F1"].control_source == "X1.Vsense"  # the controlling source's own spelling
    assert isinstance(elements["X1.H1"], CurrentControlledVoltageSource)
    assert elements["X1.H1"].transresistance == pytest.approx(50.0, rel=1e-12)
    assert isinstance(elements["X1.K1"], MutualCoupling)
    assert elements["X1.K1"].inductors == ("X1.L1", "X1.L2")
    assert elements["X1.K1"].coupling == pytest.approx(0.5, rel=1e-12)
    assert elements["F2"].control_source == "Vsense"


def test_analysis_cards():
    circuit = parse_netlist(
        "t\n.param fmax=20k\nVin in 0 AC 1\nR1 in out 1k\nC1 out 0 1n\n"
        ".temp {25+2}\n.ac lin 101 0 {fmax}\n.noise V(OUT) vin dec 10 10 {fmax}\n.options foo=1 bar\n"
    )
    assert circuit.temperature_celsius == pytest.approx(27.0, rel=1e-12)
    assert (circuit.ac_sweep.kind, circuit.ac_sweep.points) == ("lin", 101)
    assert circuit.ac_sweep.stop == pytest.approx(20e3, rel=1e-12)
    card = circuit.noise_card
    assert (card.output_node, card.reference_node, card.input_source) == ("out", "0", "Vin")
    assert (card.sweep.kind, card.sweep.points) == ("dec", 10)
    assert card.sweep.start == pytest.approx(10.0, rel=1e-12)
    assert len(circuit.notices) == 1 and ".options ignored" in circuit.notices[0]


def test_noise_card_with_reference_and_no_source():
    circuit = parse_netlist("t\nV1 a 0 1\nR1 a b 1k\nR2 b c 1k\nR3 c 0 1k\n.noise v(b, c)\n")
    card = circuit.noise_card
    assert (card.output_node, card.reference_node, card.input_source, card.sweep) == ("b", "c", None, None)


def test_notices_for_waveforms_and_milliohm_resistors():
    circuit = parse_netlist("t\nV1 a 0 DC 0 PULSE(0 1 0 1n 1n 1u 2u)\nR1 a b 10M\nR2 b 0 1meg\n")
    assert len(circuit.notices) == 2
    assert "PULSE" in circuit.notices[0]
    assert "R1 = 10 mΩ: 'M' means milli; write 10meg for megohms" in circuit.notices[1]
    assert circuit.element("R1").resistance == pytest.approx(10e-3, rel=1e-12)  # value kept as written


def test_nonpositive_resistance_is_kept_for_the_engine():
    circuit = parse_netlist("t\nV1 a 0 1\nR1 a 0 0\nR2 a 0 -50\n")
    assert circuit.element("R1").resistance == 0.0
    assert circuit.element("R2").resistance == pytest.approx(-50.0, rel=1e-12)


def test_include_relative_to_including_file(tmp_path):
    (tmp_path / "lib").mkdir()
    (tmp_path / "lib" / "parts.inc").write_text(
        "* parts\n.include more/leaf.inc\n.subckt buf a b\nE1 b 0 a 0 {g}\n.ends\n", encoding="utf-8"
    )
    (tmp_path / "lib" / "more").mkdir()
    (tmp_path / "lib" / "more" / "leaf.inc").write_text(".param g=3\n", encoding="utf-8")
    top = tmp_path / "top.cir"
    top.write_text("top\n.include lib/parts.inc\nV1 a 0 1\nXb a b buf\nR1 b 0 1k\n", encoding="utf-8")
    circuit = load_netlist(top)
    assert circuit.element("Xb.E1").gain == pytest.approx(3.0, rel=1e-12)
    assert circuit.element("Xb.E1").origin.file.endswith("parts.inc")
    assert circuit.source_file == str(top)
    from_text = parse_netlist(top.read_text(encoding="utf-8"), base_dir=tmp_path)
    assert from_text.elements == circuit.elements


def _write(path: Path, text: str) -> Path:
    path.write_text(text, encoding="utf-8")
    return path


def test_hierarchical_netlist_matches_its_hand_flattened_twin(tmp_path):
    _write(
        tmp_path / "blocks.inc",
        "* library\n"
        ".subckt lowpass in out params: r=1k c=1n\n"
        "R1 in out {r}\nC1 out 0 {c}\n.ends lowpass\n"
        ".subckt amp in out params: g=10\n"
        ".param rout={g*5}\n"
        "Rin in 0 100k\nE1 mid 0 in 0 {g}\nRo mid out {rout}\n.ends amp\n",
    )
    hier = _write(
        tmp_path / "hier.cir",
        "hierarchical\n.include blocks.inc\n"
        ".param fc=10k rb=2.2k cb={1/(2*pi*fc*rb)} gain=25\n"
        "V1 src 0 AC 1\nRs src in 600\n"
        "X1 in a lowpass r={rb} c={cb}\nXa a b amp g={gain}\nX2 b out lowpass r={rb*2} c={cb/2}\n"
        ".noise v(out) V1 dec 10 10 100k\n",
    )
    cb = 1 / (2 * math.pi * 10e3 * 2.2e3)  # Python's math module as reference
    flat = (
        "flattened by hand\n"
        "V1 src 0 AC 1\nRs src in 600\n"
        f"R1 in a {2.2e3!r}\nC1 a 0 {cb!r}\n"
        f"Rin a 0 {100e3!r}\nE1 xa.mid 0 a 0 25\nRo xa.mid b {25 * 5!r}\n"
        f"R1b b out {2 * 2.2e3!r}\nC1b out 0 {cb / 2!r}\n"
        ".noise v(out) V1 dec 10 10 100k\n"
    )
    hierarchical = load_netlist(hier)
    flattened = parse_netlist(flat)
    assert len(hierarchical.elements) == len(flattened.elements)
    for h, f in zip(hierarchical.elements, flattened.elements):
        assert type(h) is type(f)
        assert h.nodes == f.nodes
        for attribute in ("resistance", "capacitance", "gain", "dc", "ac_magnitude"):
            if hasattr(f, attribute):
                assert getattr(h, attribute) == pytest.approx(getattr(f, attribute), rel=1e-12)
    assert hierarchical.noise_card == flattened.noise_card


def test_example_hierarchy_values():
    circuit = load_netlist(REPO / "circuits" / "hier_preamp.cir")
    cbase = 1 / (2 * math.pi * 20e3 * 3.3e3)  # Python's math module as reference
    assert circuit.element("X1.Cs").capacitance == pytest.approx(cbase, rel=1e-12)
    assert circuit.element("X2.Cs").capacitance == pytest.approx(cbase / 2, rel=1e-12)
    assert circuit.element("X2.Rs").resistance == pytest.approx(6.6e3, rel=1e-12)
    assert circuit.element("Xamp.Rout").resistance == pytest.approx(10 + 40 / 2, rel=1e-12)
    assert circuit.element("X3.Cs").capacitance == pytest.approx(1e-9, rel=1e-12)
    assert isinstance(circuit.element("Xamp.Egain"), VoltageControlledVoltageSource)
    assert all(
        isinstance(e, (Resistor, Capacitor, VoltageSource, VoltageControlledVoltageSource)) for e in circuit.elements
    )


# ---- issue 3: resistor options, source noise, amplifier models


def test_resistor_options_reach_the_circuit():
    circuit = parse_netlist(
        "t\n.param hot=85\nR1 a b 10k ni=-20 temp={hot}\nRload b 0 1meg quiet\nR3 a 0 1k\nV1 a 0 1\n"
    )
    elements = by_name(circuit)
    assert elements["R1"] == Resistor("R1", ("a", "b"), resistance=10e3, temperature_celsius=85.0, noise_index_dB=-20.0)
    assert elements["Rload"].quiet and elements["Rload"].temperature_celsius is None
    plain = elements["R3"]
    assert (plain.quiet, plain.temperature_celsius, plain.noise_index_dB) == (False, None, None)


def test_an_implausible_noise_index_is_used_with_a_notice():
    # plausible range: about -40 dB (metal foil) to +20 dB (carbon composition), from memory of
    # manufacturers' data; the tool widens it by 10 dB each way and only remarks outside it
    ok = parse_netlist("t\nR1 a 0 10k ni=-20\nV1 a 0 1\n")
    assert not any("noise index" in n for n in ok.notices)
    slip = parse_netlist("t\nR1 a 0 10k ni=200\nV1 a 0 1\n")
    assert by_name(slip)["R1"].noise_index_dB == 200.0
    (notice,) = [n for n in slip.notices if "noise index" in n]
    assert notice.startswith("<text>:2:") and "R1: noise index ni=200 dB is outside -50 .. +30 dB" in notice


def test_source_noise_spec_and_shot():
    circuit = parse_netlist(
        "t\n.param en0=5n\nVs a 0 AC 1 noise={2*en0} corner=10\nVr r 0 DC 2.5 noise=50n corner=1 slope=2\n"
        "Iph 0 a DC 2u AC 1 shot\nIn a 0 noise=1p\nR1 a 0 1k\nR2 r 0 1k\n"
    )
    elements = by_name(circuit)
    assert elements["Vs"].noise == NoiseSpec(white=pytest.approx(1e-8, rel=1e-12), corner_Hz=10.0, slope=1.0)
    assert elements["Vr"].noise == NoiseSpec(white=pytest.approx(50e-9, rel=1e-12), corner_Hz=1.0, slope=2.0)
    assert elements["Vr"].dc == pytest.approx(2.5, rel=1e-12)
    photo = elements["Iph"]
    assert isinstance(photo, CurrentSource) and photo.shot and photo.noise is None
    assert photo.dc == pytest.approx(2e-6, rel=1e-12)  # u = 1e-6 (SI)
    assert elements["In"].noise == NoiseSpec(white=pytest.approx(1e-12, rel=1e-12))  # defaults: no corner, slope 1
    assert not elements["In"].shot


def test_opamp_instance_from_a_model_card():
    circuit = parse_netlist(
        "t\n.model LNA1 opamp (en=4n en_corner=100 in=0.5p in_corner=1k aol=1e5 gbw=10meg fp2=50meg\n"
        "+ cin=5p cdiff=2p rout=50)\nXu1 inp inn out LNA1 en=3n gbw={2*10meg}\nR1 inn out 10k\nR2 inn 0 1k\nV1 inp 0 AC 1\n"
    )
    amp = circuit.element("XU1")
    assert isinstance(amp, OpAmp)
    assert amp.name == "Xu1" and amp.nodes == ("inp", "inn", "out")
    expected = OpAmpModel(
        name="LNA1",
        voltage_noise=3e-9,
        voltage_noise_corner_Hz=100.0,
        current_noise=0.5e-12,
        current_noise_corner_Hz=1e3,
        open_loop_gain=1e5,
        gain_bandwidth_Hz=20e6,
        second_pole_Hz=50e6,
        input_capacitance=5e-12,
        differential_capacitance=2e-12,
        output_resistance=50.0,
    )
    got = amp.model
    assert got.name == expected.name and got.second_pole_Hz == pytest.approx(50e6, rel=1e-12)
    for name in (
        "voltage_noise",
        "voltage_noise_corner_Hz",
        "current_noise",
        "current_noise_corner_Hz",
        "open_loop_gain",
        "gain_bandwidth_Hz",
        "input_capacitance",
        "differential_capacitance",
        "output_resistance",
    ):
        assert getattr(got, name) == pytest.approx(getattr(expected, name), rel=1e-12), name
    assert "out" in circuit.nodes


def test_model_defaults_are_the_data_model_defaults():
    circuit = parse_netlist("t\n.model bare opamp\nXu p n o bare\nR1 n o 1k\n")
    assert circuit.element("Xu").model == OpAmpModel(name="bare")


def test_models_are_scoped_like_subcircuits_and_use_their_scope():
    circuit = parse_netlist(
        "t\n.model amp opamp gbw=1meg\n"
        ".subckt stage in out params: bw=5meg\n"
        ".model amp opamp gbw={bw} en=2n\n"  # shadows the outer one inside 'stage'
        "Xu in fb out amp\nRf fb out 10k\nRg fb 0 1k\n.ends\n"
        "X1 a b stage bw=7meg\nX2 b c stage\nXtop a f g amp\nR1 a 0 1k\nR2 f g 1k\n"
    )
    inner1 = circuit.element("X1.Xu")
    inner2 = circuit.element("X2.Xu")
    outer = circuit.element("Xtop")
    assert inner1.nodes == ("a", "x1.fb", "b")
    assert inner1.model.gain_bandwidth_Hz == pytest.approx(7e6, rel=1e-12)  # the instance's bw
    assert inner2.model.gain_bandwidth_Hz == pytest.approx(5e6, rel=1e-12)  # the default bw
    assert inner1.model.voltage_noise == pytest.approx(2e-9, rel=1e-12)
    assert outer.model.gain_bandwidth_Hz == pytest.approx(1e6, rel=1e-12) and outer.model.voltage_noise == 0.0


def test_amplifier_library_loads(tmp_path):
    library = REPO / "circuits" / "lib" / "amplifiers.inc"
    text = library.read_text(encoding="utf-8")
    names = [line.split()[1] for line in text.splitlines() if line.lower().startswith(".model")]
    assert {"generic_bjt_lownoise", "generic_jfet_input", "generic_cmos_rrio", "generic_fast_vfb"} <= set(names)
    assert "None of these is a model of any real part" in text
    lines = ["amplifier library", f".include {library}"]
    for index, name in enumerate(names):
        lines.append(f"Xu{index} p n o{index} {name}")
        lines.append(f"R{index} n o{index} 10k")
    lines.append("Rp p 0 1k")
    circuit = parse_netlist("\n".join(lines) + "\n")
    models = {e.model.name: e.model for e in circuit.elements if isinstance(e, OpAmp)}
    assert set(models) == set(names)
    bjt, jfet = models["generic_bjt_lownoise"], models["generic_jfet_input"]
    # the library's story: the bipolar part is quieter in voltage, the JFET part in current
    assert bjt.voltage_noise < jfet.voltage_noise and bjt.current_noise > 100 * jfet.current_noise
    assert models["generic_cmos_rrio"].voltage_noise_corner_Hz > 10 * jfet.voltage_noise_corner_Hz
    assert models["generic_fast_vfb"].gain_bandwidth_Hz == max(m.gain_bandwidth_Hz for m in models.values())


# ---- an error inside a subcircuit names the instance it failed for


STAGE = """.subckt stage in out rval=1k
R1 in mid {rval}
C1 mid 0 {1n/rval*1k}
R2 mid out 1k
.ends
"""


def _error(text: str) -> NetlistError:
    with pytest.raises(NetlistError) as info:
        parse_netlist(text)
    return info.value


def test_a_definition_line_failing_for_one_instance_names_it():
    error = _error("t\n" + STAGE + "Vin a 0 AC 1\nX1 a b stage rval=2k\nX2 b c stage rval=0\n.end\n")
    assert "division by zero" in error.message
    assert (error.location.line, error.location.column) == (4, 14)  # the line in the definition
    assert error.instance == "X2, an instance of subcircuit 'stage' (<text>:9)"
    assert "\n  within X2, an instance of subcircuit 'stage' (<text>:9)" in str(error)


def test_nested_instances_name_the_whole_path():
    outer = ".subckt outer p q\nX3 p q stage rval=0\n.ends\n"
    error = _error("t\n" + STAGE + outer + "Vin a 0 AC 1\nX1 a b outer\n.end\n")
    assert error.instance.startswith("X1.X3, an instance of subcircuit 'stage'")


def test_a_bad_value_on_the_instance_line_is_located_there_not_inside():
    # the override is evaluated where the X line is: at top level no instance is named;
    # inside another subcircuit, that subcircuit's instance is
    top = _error("t\n" + STAGE + "Vin a 0 AC 1\nX1 a b stage rval={1/0}\n.end\n")
    assert top.location.line == 8 and top.instance == ""
    outer = ".subckt outer p q\nX3 p q stage rval={1/0}\n.ends\n"
    nested = _error("t\n" + STAGE + outer + "Vin a 0 AC 1\nX1 a b outer\n.end\n")
    assert nested.location.line == 8 and nested.instance.startswith("X1, an instance of subcircuit 'outer'")

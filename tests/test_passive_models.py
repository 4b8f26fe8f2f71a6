"""``.model NAME R|C|L (...)`` cards: the defaults they supply to R, C and L lines (the line's
own value and options win), their scope, their bad forms (with file:line:column), the one
notice per card for the parameters netnoise does not model, and the physics at temperature."""

from __future__ import annotations

from pathlib import Path

import pytest
from scipy import constants

import netnoise
from netnoise.errors import NetlistError

K_B = constants.Boltzmann
CORPUS = Path(__file__).parent / "corpus"


def element(text: str, name: str, **kw):
    return netnoise.parse_netlist(text, **kw).element(name)


def test_a_model_supplies_tc1_tc2_and_the_line_wins():
    text = (
        "t\n.model rhot R (TC1=1m TC2=10u)\nI1 0 a AC 1\n"
        "R1 a 0 1k rhot\nR2 a 0 2k rhot tc1=0\nR3 a 0 3k rhot tc=5m,0\nR4 a 0 4k\n"
    )
    r1, r2, r3, r4 = (element(text, n) for n in ("R1", "R2", "R3", "R4"))
    assert (r1.resistance, r1.tc1, r1.tc2) == (1e3, 1e-3, pytest.approx(10e-6, rel=1e-12, abs=0))
    assert (r2.tc1, r2.tc2) == (0.0, pytest.approx(10e-6, rel=1e-12, abs=0))  # tc1 from the line, tc2 from the card
    assert (r3.tc1, r3.tc2) == (pytest.approx(5e-3, rel=1e-12, abs=0), 0.0)  # tc=a,b on the line replaces both
    assert (r4.tc1, r4.tc2) == (0.0, 0.0)


def test_tc_from_a_model_at_85_C_gives_R_T_and_its_thermal_noise():
    # R(T) = R·(1 + TC1·ΔT + TC2·ΔT²), ΔT = 85 - 27 = 58 K (IEC 60115-1 defines the temperature
    # coefficient; common practice), and the thermal noise 4kT·R(T) (Johnson 1928, Nyquist 1928)
    # over a white band of 10 Hz with a current source driving the node (no capacitance)
    circuit = netnoise.parse_netlist("t\n.model rhot R (TC1=2m TC2=5u)\nI1 0 a AC 1\nR1 a 0 10k rhot\n")
    result = netnoise.analyze(circuit, output="a", band=(1.0, 11.0), temperature_celsius=85.0)
    r_t = 10e3 * (1 + 2e-3 * 58 + 5e-6 * 58**2)
    # (the band integral is numerical, to about 1e-8)
    assert result.total_variance == pytest.approx(4 * K_B * 358.15 * r_t * 10.0, rel=1e-7, abs=0)
    # the same with the coefficients written on the line: the same number
    line = netnoise.parse_netlist("t\nI1 0 a AC 1\nR1 a 0 10k tc1=2m tc2=5u\n")
    same = netnoise.analyze(line, output="a", band=(1.0, 11.0), temperature_celsius=85.0)
    assert result.total_variance == pytest.approx(same.total_variance, rel=1e-12, abs=0)


def test_the_value_from_the_card_and_with_values_and_monte_carlo():
    # no value on the line: the card's R= (one part, at 27 °C); with_values changes it and the
    # card's tc still applies: 20k·(1 + 1m·58) at 85 °C, 4kT·R(T)·B (Nyquist 1928; IEC 60115-1)
    circuit = netnoise.parse_netlist("t\n.model rdef R (R=10k TC1=1m)\nI1 0 a AC 1\nR1 a 0 rdef\n")
    r1 = circuit.element("R1")
    assert (r1.resistance, r1.tc1) == (10e3, 1e-3)
    keyed = element("t\n.model rdef R (R=10k TC1=1m)\nR1 a 0 rdef R=2k\n", "R1")
    assert (keyed.resistance, keyed.tc1) == (2e3, 1e-3)  # the line's keyed value wins
    prepared = netnoise.prepare(circuit, output="a", band=(1.0, 11.0), temperature_celsius=85.0)
    changed = prepared.with_values({"R1": 20e3}).analyze()
    assert changed.total_variance == pytest.approx(4 * K_B * 358.15 * 20e3 * (1 + 1e-3 * 58) * 10.0, rel=1e-7, abs=0)
    # each Monte Carlo trial at its own temperature T_j: 4kT_j·R(T_j)·B (same sources)
    study = netnoise.montecarlo(
        circuit, trials=4, temperature_range_celsius=(-40.0, 125.0), seed=3, output="a", band=(1.0, 11.0), jobs=1
    )
    t = study.temperature_K
    r = 10e3 * (1 + 1e-3 * (t - 273.15 - 27.0))
    assert study.source_variance.sum(axis=1) == pytest.approx(4 * K_B * t * r * 10.0, rel=1e-7, abs=0)


def test_c_and_l_models_with_m():
    # C·m and L/m (m parts in parallel, common practice); kT/C of the node's whole capacitance
    # (common practice): the card's C=2n2 with m=3 is 6n6
    text = "t\n.model cpart C (C=2n2)\n.model lpart L (L=3m)\nI1 0 a AC 1\nR1 a 0 4k7\nC1 a 0 cpart m=3\n"
    circuit = netnoise.parse_netlist(text + "L1 a b lpart m=2\nR2 b 0 1k\n")
    assert circuit.element("C1").effective_capacitance == pytest.approx(6.6e-9, rel=1e-12, abs=0)
    assert circuit.element("L1").effective_inductance == pytest.approx(1.5e-3, rel=1e-12, abs=0)
    assert element("t\n.model cpart C (C=2n2)\nC1 a 0 1n cpart\nR1 a 0 1k\n", "C1").capacitance == 1e-9
    rc = netnoise.parse_netlist(text)
    assert netnoise.analyze(rc, output="a").total_variance == pytest.approx(K_B * 300.15 / 6.6e-9, rel=1e-9, abs=0)


def test_one_notice_per_card_for_parameters_not_modelled():
    text = "t\n.model rm R (TC1=1m RES=1 TNOM=25)\nI1 0 a AC 1\nR1 a 0 1k rm\nR2 a 0 2k rm\nR3 a 0 3k rm\n"
    notices = [n for n in netnoise.parse_netlist(text).notices if "not modelled" in n]
    assert len(notices) == 1
    assert ":2:" in notices[0] and "RES, TNOM" in notices[0]


def test_a_model_inside_a_subckt_is_local():
    text = "t\n.subckt cell a\n.model rloc R (TC1=1m)\nR1 a 0 1k rloc\n.ends\nX1 n cell\nR2 n 0 1k rloc\n"
    with pytest.raises(NetlistError) as info:
        netnoise.parse_netlist(text)
    assert "no .model called 'rloc'" in str(info.value)
    assert (info.value.location.line, info.value.location.column) == (7, 11)
    inside = netnoise.parse_netlist(text.replace("R2 n 0 1k rloc", "R2 n 0 1k"))
    assert inside.element("X1.R1").tc1 == 1e-3


def test_models_from_a_library_section():
    text = f"t\n.lib {CORPUS / 'models' / 'passives.lib'} film\nI1 0 a AC 1\nR1 a 0 rfilm\nC1 a 0 cfilm\n"
    circuit = netnoise.parse_netlist(text)
    r1 = circuit.element("R1")
    assert (r1.resistance, r1.tc1, r1.tc2) == pytest.approx((10e3, 200e-6, -1e-6), rel=1e-12, abs=0)
    assert circuit.element("C1").capacitance == pytest.approx(4.7e-9, rel=1e-12, abs=0)
    # the other section's card is not brought in
    with pytest.raises(NetlistError, match="no .model called 'lwire'"):
        netnoise.parse_netlist(text + "L1 a 0 lwire\n")


@pytest.mark.parametrize(
    ("text", "fragment", "hint", "line", "column"),
    [
        (
            "t\n.model rm R (TC1=1m)\nR1 a 0 1k rnm\n",
            "extra field 'rnm' on R1: no .model called 'rnm'",
            "R models here: rm",
            3,
            11,
        ),
        ("t\n.model rm R (TC1=1m)\nR1 a 0 1k zzz\n", "'zzz' on R1: no .model called 'zzz'", "R models here: rm", 3, 11),
        ("t\n.model rm R (R=1k)\nR1 a 0 rx\n", "'rx' is not a number, and no .model called 'rx'", "{rx}", 3, 8),
        ("t\n.model dmod D (IS=1f)\nR1 a b 1k dmod\n", "'dmod' is a D model; this element takes R", "", 3, 11),
        ("t\n.model cm C (C=1n)\nR1 a b 1k cm\n", "'cm' is a C model; this element takes R", "", 3, 11),
        ("t\n.model rm R (TC1=1m)\nR1 a 0 rm\n", "R1 gives no value and its .model rm has no R=", "", 3, 8),
        ("t\n.model rm R (TC1=1m)\nR1 a 0 1k rm 2k\n", "unexpected extra field '2k' on R1", "", 3, 14),
        ("t\n.model rm R (TC1=1m)\nR1 a 0 1k rm rm\n", "unexpected extra field 'rm' on R1", "", 3, 14),
        ("t\n.model rm Q (TC1=1m)\n", "model type 'Q' is not supported", "R, C and L", 2, 11),
    ],
)
def test_bad_forms(text, fragment, hint, line, column):
    with pytest.raises(NetlistError) as info:
        netnoise.parse_netlist(text)
    error = info.value
    assert fragment in str(error)
    assert hint in (error.hint or "")
    assert (error.location.line, error.location.column) == (line, column)


def test_from_the_command_line(tmp_path, capsys):
    from netnoise.cli import main

    path = tmp_path / "m.cir"
    path.write_text("t\n.model rhot R (TC1=2m)\nI1 0 a AC 1\nR1 a 0 10k rhot\nC1 a 0 1n\n.temp 77\n")
    assert main(["analyze", str(path), "--out", "a"]) == 0
    # R(T) = 10k·(1 + 2m·50) = 11 kΩ (common practice; IEC 60115-1)
    assert "11 kΩ" in capsys.readouterr().out

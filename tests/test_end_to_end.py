"""The whole path, netlist text to exit status, with the real parser and engine."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import constants

import netnoise
from netnoise.cli import main

CIRCUITS = Path(__file__).resolve().parent.parent / "circuits"


def run(*args):
    return main([str(a) for a in args])


def test_hierarchy_gives_the_same_noise_as_its_hand_flattened_twin():
    # Same circuit written two ways must give identical budgets (a property of
    # elaboration, checked on the analysed result, not only on element values).
    hier = (
        "hier\n.subckt sec in out params: r=1k c=1n\nRs in out {r}\nCs out 0 {c}\n.ends\n"
        ".param rb=2.2k\nV1 a 0 AC 1\nX1 a b sec r={rb}\nX2 b c sec r={rb*2} c=470p\nRl c 0 100k\n"
        ".noise v(c) V1 dec 20 1 10meg\n"
    )
    flat = (
        "flat\nV1 a 0 AC 1\nR1 a b 2.2k\nC1 b 0 1n\nR2 b c 4.4k\nC2 c 0 470p\nRl c 0 100k\n"
        ".noise v(c) V1 dec 20 1 10meg\n"
    )
    a = netnoise.analyze(netnoise.parse_netlist(hier))
    b = netnoise.analyze(netnoise.parse_netlist(flat))
    assert a.source_names == ("X1.Rs", "X2.Rs", "Rl")
    assert b.source_names == ("R1", "R2", "Rl")
    np.testing.assert_allclose(a.source_density, b.source_density, rtol=1e-12)
    assert a.total_variance == pytest.approx(b.total_variance, rel=1e-12)
    assert a.enbw_Hz == pytest.approx(b.enbw_Hz, rel=1e-12)
    assert [c.share for c in a.contributions] == pytest.approx([c.share for c in b.contributions], rel=1e-12)


def test_syntax_error_reports_line_and_column(tmp_path, capsys):
    path = tmp_path / "bad.cir"
    path.write_text("bad value\nR1 a 0 1k\nC1 a 0 4.7kk\n.end\n")
    assert run("analyze", path, "--out", "a") == 2
    err = capsys.readouterr().err
    assert f"{path}:3:8" in err
    assert "4.7kk" in err and "^" in err
    assert "Traceback" not in err


def test_floating_node_exits_1_naming_it(tmp_path, capsys):
    path = tmp_path / "float.cir"
    path.write_text("float\nR1 a 0 1k\nC1 a mid 1n\nC2 mid 0 1n\n.end\n")
    assert run("analyze", path, "--out", "a", "--band", "1", "1k") == 1
    err = capsys.readouterr().err
    assert "mid" in err and "DC path" in err
    assert "Traceback" not in err


def test_unknown_output_node_suggests_close_names(tmp_path, capsys):
    path = tmp_path / "rc.cir"
    path.write_text("rc\nR1 vout 0 1k\nC1 vout 0 1n\n.end\n")
    assert run("analyze", path, "--out", "vuot") == 1
    assert "vout" in capsys.readouterr().err


@pytest.mark.parametrize("netlist", sorted(CIRCUITS.glob("*.cir")), ids=lambda p: p.name)
def test_every_shipped_circuit_runs_and_writes_the_json_shape(netlist, tmp_path, capsys):
    out = tmp_path / "r.json"
    assert run("analyze", netlist, "--json", out) == 0
    data = json.loads(out.read_text())
    assert set(data) >= {
        "title",
        "temperature_K",
        "output",
        "input_source",
        "band_Hz",
        "total_rms_V",
        "input_referred_rms",
        "input_referred_unit",
        "gain_at_max",
        "enbw_Hz",
        "contributions",
        "spectrum",
    }
    shares = [c["share"] for c in data["contributions"]]
    assert shares == sorted(shares, reverse=True)
    assert sum(shares) == pytest.approx(1.0, rel=1e-9)
    allowed = {
        "thermal",
        "shot",
        "excess",
        "amplifier-voltage",
        "amplifier-current",
        "source",
        "flicker",
        "channel-thermal",
    }
    assert {c["mechanism"] for c in data["contributions"]} <= allowed
    assert len(data["spectrum"]["frequency_Hz"]) == len(data["spectrum"]["output_density_V_per_rtHz"])
    assert data["total_rms_V"] > 0


def test_sample_hold_to_infinity_is_kT_over_C(capsys):
    # kT/C for 2 pF at 27 °C (equipartition; Razavi, noise chapter): 45.5 µV.
    assert run("analyze", CIRCUITS / "sample_hold.cir", "--band", "0", "inf", "--json", "-") == 0
    data = json.loads(capsys.readouterr().out)
    assert data["total_rms_V"] == pytest.approx(math.sqrt(constants.Boltzmann * 300.15 / 2e-12), rel=1e-9)
    # the signal path is one pole: ENBW = 1/(4RC) (common practice)
    assert data["enbw_Hz"] == pytest.approx(1 / (4 * 60 * 2e-12), rel=1e-6)


def test_front_end_examples_rank_what_their_scenarios_describe(capsys):
    # Each scenario's comment says which source should dominate; the engine must agree.
    def top(name, *args):
        assert run("analyze", CIRCUITS / f"{name}.cir", "--json", "-", *args) == 0
        return json.loads(capsys.readouterr().out)

    hiz = top("hiz_preamp")
    assert hiz["contributions"][0]["mechanism"] == "amplifier-current"  # i_n · 10 MΩ rules
    tia = top("photodiode_tia")
    assert {c["mechanism"] for c in tia["contributions"][:2]} == {"shot", "amplifier-voltage"}
    gauge = top("strain_gauge_inamp")
    assert "excess" in {c["mechanism"] for c in gauge["contributions"]}
    # 1/f: the low-frequency density is well above the density near the top of the band
    density = gauge["spectrum"]["output_density_V_per_rtHz"]
    assert density[0] > 10 * density[-1]
    adc = top("adc_driver", "--adc", "16", "4.096", "1meg")
    assert adc["adc"]["floor_set_by"] in ("analog chain", "converter")

"""The command line's issue-3 options (--source-resistor, --group, --dc, --signal,
--signal-at, --adc) and its issue-4 guarantees (nothing non-finite printed,
outputs checked before the analysis).

The engine and the DC solve are replaced by fakes (hand-built results from
``_output_samples``) except in the last tests, which run the real parser and
engine on small circuits whose answers are known in closed form.
"""

from __future__ import annotations

import importlib
import importlib.util
import json
import math
import os
import re
import types

import _output_samples as samples  # tests/ is on sys.path (conftest.py)
import pytest

from netnoise import cli

NETLIST_TEXT = "front end\nRs in a 50\nR1 a 0 10\n.end\n"


def _module(monkeypatch, name: str) -> types.ModuleType:
    """The netnoise module whose functions a test replaces."""
    return importlib.import_module(name)


class FakeEngine:
    """Returns ``self.result`` from analyze and ``self.op`` from the DC solve, and records calls."""

    def __init__(self, monkeypatch):
        from netnoise.engine.dc import OperatingPoint

        self.result = samples.front_end()
        self.op = OperatingPoint({"a": 0.5}, {"Rs": 1e-3, "R1": 1e-3}, {"Rs": 0.05, "R1": 0.01})
        self.calls: list[dict] = []
        self.dc_calls = 0
        self.circuit = types.SimpleNamespace(elements=(), source_file="fake", noise_card=None)
        monkeypatch.setattr(_module(monkeypatch, "netnoise.netlist"), "load_netlist", lambda path: self.circuit)
        monkeypatch.setattr(_module(monkeypatch, "netnoise.engine.analysis"), "analyze", self.analyze, raising=False)
        monkeypatch.setattr(
            _module(monkeypatch, "netnoise.engine.dc"), "operating_point", self.operating_point, raising=False
        )

    def analyze(self, circuit, **kwargs):
        assert circuit is self.circuit
        self.progress = kwargs.pop("progress")  # the terminal's progress line (netnoise.progress)
        self.calls.append(kwargs)
        return self.result

    def operating_point(self, circuit, temperature_celsius=None):
        assert circuit is self.circuit
        self.dc_calls += 1
        return self.op


@pytest.fixture
def engine(monkeypatch):
    monkeypatch.delenv("NETNOISE_DEBUG", raising=False)
    return FakeEngine(monkeypatch)


@pytest.fixture
def netlist(tmp_path):
    path = tmp_path / "front.cir"
    path.write_text(NETLIST_TEXT)
    return path


def run(*args) -> int:
    return cli.main([str(a) for a in args])


def _total_rms() -> float:
    # front_end(): 100 Ω of equivalent thermal noise at 290 K, gain 10, 10 Hz..100 kHz
    # (Johnson 1928 / Nyquist 1928: v² = 4kTR·gain²·Δf)
    from scipy.constants import k

    return math.sqrt(4 * k * 290.0 * 100.0 * 100.0 * (100e3 - 10.0))


# --- noise figure ---------------------------------------------------------------
def test_source_resistor_reaches_the_engine_and_the_report(engine, netlist, capsys):
    assert run("analyze", netlist, "--source-resistor", "Rs", "--json", "-") == 0
    assert engine.calls[-1]["source_resistor"] == "Rs"
    out, err = capsys.readouterr()
    data = json.loads(out)
    assert data["noise_figure_dB"] == pytest.approx(10 * math.log10(2), rel=1e-9)  # F = 2 (sample construction)
    assert len(data["noise_figure_spectrum_dB"]) == len(data["spectrum"]["frequency_Hz"])
    assert "NF = 3.01 dB" in err and "T0 = 290 K" in err


def test_without_source_resistor_the_engine_is_not_asked(engine, netlist, capsys):
    engine.result = samples.front_end(with_noise_figure=False)
    assert run("analyze", netlist, "--json", "-") == 0
    assert "source_resistor" not in engine.calls[-1]
    data = json.loads(capsys.readouterr().out)
    assert data["noise_figure_dB"] is None and data["noise_figure_spectrum_dB"] is None


def test_source_resistor_without_a_figure_from_the_engine_exits_1(engine, netlist, capsys):
    engine.result = samples.front_end(with_noise_figure=False)
    assert run("analyze", netlist, "--source-resistor", "Rs") == 1
    out, err = capsys.readouterr()
    assert out == "" and "no noise figure" in err and "Rs" in err


# --- grouping and DC ----------------------------------------------------------------
@pytest.mark.parametrize(
    "by, names, shares",
    [
        # shares by equivalent resistance (sample construction)
        ("element", ["Rs", "Xu1", "R1"], [0.5, 0.4, 0.1]),
        ("mechanism", ["thermal", "amplifier-voltage", "amplifier-current"], [0.6, 0.3, 0.1]),
    ],
)
def test_group_option(engine, netnoise_json, by, names, shares):
    out, err = netnoise_json("--group", by)
    assert out["group_by"] == by
    assert [g["name"] for g in out["groups"]] == names
    assert [g["share"] for g in out["groups"]] == pytest.approx(shares, rel=1e-12)
    assert f"Budget by {by}" in err
    assert len(out["contributions"]) == 4  # one row per source stays in the JSON


def test_group_option_refuses_other_words(engine, netlist, capsys):
    assert run("analyze", netlist, "--group", "colour") == 2
    assert "invalid choice" in capsys.readouterr().err
    assert engine.calls == []


def test_dc_appends_the_operating_point(engine, netnoise_json):
    out, err = netnoise_json("--dc")
    assert engine.dc_calls == 1
    assert out["operating_point"]["node_voltages_V"] == {"a": 0.5}
    assert "DC operating point" in err and "v(a)" in err and "500 mV" in err


def test_no_dc_solve_unless_asked(engine, netnoise_json):
    out, err = netnoise_json()
    assert engine.dc_calls == 0 and "operating_point" not in out and "DC operating point" not in err


@pytest.fixture
def netnoise_json(netlist, capsys):
    def call(*options):
        status = run("analyze", netlist, *options, "--json", "-")
        out, err = capsys.readouterr()
        assert status == 0, err
        return json.loads(out), err

    return call


# --- SNR and ADC --------------------------------------------------------------------
def test_signal_at_the_input_with_a_suffix(engine, netnoise_json):
    out, err = netnoise_json("--signal", "1m")  # m = milli (SPICE suffix)
    snr = out["snr"]
    assert snr["signal_at"] == "input" and snr["signal_rms"] == pytest.approx(1e-3, rel=1e-12)
    # gain 10: 10 mV at the output; SNR = 20·log10(S/N) (definition)
    assert snr["snr_dB"] == pytest.approx(20 * math.log10(10e-3 / _total_rms()), rel=1e-9)
    assert "Signal-to-noise" in err and "1 mV rms at the input (VS)" in err


def test_signal_at_the_output(engine, netnoise_json):
    out, _ = netnoise_json("--signal", "10m", "--signal-at", "output")
    assert out["snr"]["signal_output_rms_V"] == pytest.approx(10e-3, rel=1e-12)
    assert out["snr"]["snr_dB"] == pytest.approx(20 * math.log10(10e-3 / _total_rms()), rel=1e-9)


def test_adc_section_and_keys(engine, netnoise_json):
    out, err = netnoise_json("--adc", "16", "4.096", "1meg")
    adc = out["adc"]
    assert (adc["bits"], adc["full_scale_V"], adc["sample_rate_Hz"]) == (16, 4.096, 1e6)
    assert adc["ideal_snr_dB"] == pytest.approx(98.1, rel=1e-3)  # 6.02·16 + 1.76 dB (common practice)
    assert adc["floor_set_by"] == "converter"  # 4 µV analog against 18 µV of quantisation (arithmetic)
    assert "Converter (ideal 16-bit ADC" in err and "The converter sets the floor" in err


@pytest.mark.parametrize(
    "options, words",
    [
        (("--signal", "0"), "above zero"),
        (("--signal", "abc"), "cannot read 'abc'"),
        (("--signal=-1m",), "above zero"),
        (("--signal-at", "output"), "give --signal"),
        (("--adc", "0", "5", "1meg"), "1 to 32"),
        (("--adc", "16.5", "5", "1meg"), "whole number"),
        (("--adc", "16", "-5", "1meg"), "above zero"),
        (("--adc", "16", "5", "fast"), "sample rate"),
        (("--adc", "16", "5", "1M"), "write 1meg for mega"),  # M is milli in a netlist
        (("--adc", "16", "5"), "usage:"),
    ],
)
def test_bad_figure_options_exit_2_before_the_analysis(engine, netlist, capsys, options, words):
    assert run("analyze", netlist, *options) == 2
    out, err = capsys.readouterr()
    assert out == "" and words in err and "Traceback" not in err
    assert engine.calls == []


def test_signal_at_the_input_needs_an_input_source(engine, netlist, capsys):
    engine.result = samples.white()  # no input source
    assert run("analyze", netlist, "--signal", "1") == 2
    out, err = capsys.readouterr()
    assert out == "" and "input source" in err


# --- issue 4: never print or write a non-finite result --------------------------------
@pytest.mark.parametrize(
    "change",
    [
        dict(source_variance=[math.nan]),
        dict(gain_peak=math.inf),
        dict(noise_figure_dB=math.nan),
    ],
)
@pytest.mark.parametrize("json_target", ["-", "file"])
def test_non_finite_result_prints_and_writes_nothing(engine, netlist, tmp_path, capsys, change, json_target):
    engine.result = samples.white(**change)
    target = "-" if json_target == "-" else tmp_path / "r.json"
    assert run("analyze", netlist, "--json", target, "--csv", tmp_path / "r.csv") == 1
    out, err = capsys.readouterr()
    assert out == ""
    assert err.startswith("netnoise: error: the analysis result holds NaN or infinite values")
    assert err.count("\n") == 1 and "Traceback" not in err
    assert not re.search(r"\bnan\b", err.replace("NaN or infinite", ""), re.IGNORECASE)
    assert sorted(os.listdir(tmp_path)) == ["front.cir"]


# --- issue 4: output paths checked before any work ------------------------------------
@pytest.mark.parametrize("option, name", [("--json", "r.json"), ("--csv", "r.csv"), ("--plot", "r.png")])
def test_output_in_a_missing_folder_is_refused_before_the_analysis(engine, netlist, tmp_path, capsys, option, name):
    target = tmp_path / "no-such-folder" / name
    assert run("analyze", netlist, option, target) == 2
    out, err = capsys.readouterr()
    assert out == "" and "does not exist" in err and "no-such-folder" in err
    assert engine.calls == []


def test_output_over_an_included_file_is_refused(engine, netlist, tmp_path, capsys):
    included = tmp_path / "stages.inc"
    included.write_text("R9 a 0 1k\n")
    origin = types.SimpleNamespace(file=str(included))
    engine.circuit = types.SimpleNamespace(
        elements=(types.SimpleNamespace(origin=origin),), source_file=str(netlist), noise_card=None
    )
    assert run("analyze", netlist, "--csv", included) == 2
    assert "would overwrite a file the netlist includes" in capsys.readouterr().err
    assert included.read_text() == "R9 a 0 1k\n"
    assert engine.calls == []


# --- the real parser and engine ---------------------------------------------------------
@pytest.fixture
def real_engine(monkeypatch):
    pytest.importorskip("netnoise.netlist")
    pytest.importorskip("netnoise.engine.analysis")
    monkeypatch.delenv("NETNOISE_DEBUG", raising=False)


def test_real_engine_noise_figure_of_a_resistive_load(real_engine, tmp_path, capsys):
    """A 50 Ω source into a 200 Ω load, at 290 K: the output noise from the source is
    4kT·Rs·(RL/(Rs+RL))² and from the load 4kT·RL·(Rs/(Rs+RL))², so F = 1 + Rs/RL = 1.25
    (common practice, e.g. Motchenbacher & Connelly, Low-Noise Electronic System Design)."""
    path = tmp_path / "load.cir"
    path.write_text("source into a load\nV1 in 0 dc 1 ac 1\nRs in out 50\nRL out 0 200\n.end\n")
    status = run(
        "analyze",
        path,
        "--out",
        "out",
        "--input",
        "V1",
        "--band",
        "10",
        "10k",
        "--temp",
        "16.85",
        "--source-resistor",
        "Rs",
        "--group",
        "mechanism",
        "--dc",
        "--signal",
        "1m",
        "--adc",
        "16",
        "2",
        "48k",
        "--json",
        "-",
    )
    out, err = capsys.readouterr()
    assert status == 0, err
    data = json.loads(out)
    assert data["noise_figure_dB"] == pytest.approx(10 * math.log10(1.25), rel=1e-6)
    assert data["noise_figure_spectrum_dB"] == pytest.approx(
        [10 * math.log10(1.25)] * len(data["spectrum"]["frequency_Hz"]), rel=1e-6
    )
    # DC: 1 V across 250 Ω: 4 mA, v(out) = 0.8 V (Ohm's law)
    op = data["operating_point"]
    assert op["node_voltages_V"]["out"] == pytest.approx(0.8, rel=1e-9)
    assert op["element_currents_A"]["Rs"] == pytest.approx(4e-3, rel=1e-9)
    assert data["groups"][0]["name"] == "thermal" and data["groups"][0]["share"] == pytest.approx(1.0, rel=1e-12)
    # signal: 1 mV at the input, divider gain 0.8 (Ohm's law)
    assert data["snr"]["signal_output_rms_V"] == pytest.approx(0.8e-3, rel=1e-9)
    assert data["adc"]["floor_set_by"] == "converter"
    assert "NF = 0.97 dB" in err and "DC operating point" in err and "Converter (ideal 16-bit ADC" in err
    assert not re.search(r"\b(nan|inf)\b", err, re.IGNORECASE)


def test_real_engine_unknown_source_resistor_exits_with_a_message(real_engine, tmp_path, capsys):
    path = tmp_path / "load.cir"
    path.write_text("source into a load\nV1 in 0 dc 1 ac 1\nRs in out 50\nRL out 0 200\n.end\n")
    status = run("analyze", path, "--out", "out", "--input", "V1", "--band", "10", "10k", "--source-resistor", "R9")
    out, err = capsys.readouterr()
    assert status in (1, 2) and out == ""
    assert err.startswith("netnoise: error: ") and "R9" in err and "Traceback" not in err


def test_output_over_a_hard_link_of_the_netlist_is_refused(engine, netlist, tmp_path, capsys):
    link = tmp_path / "other-name.cir"
    os.link(netlist, link)
    assert run("analyze", netlist, "--json", link) == 2
    assert "would overwrite the input netlist" in capsys.readouterr().err
    assert link.read_text() == NETLIST_TEXT and engine.calls == []


def test_a_folder_given_as_the_netlist(engine, tmp_path, capsys):
    assert run("analyze", tmp_path) == 2
    assert "it is a folder" in capsys.readouterr().err

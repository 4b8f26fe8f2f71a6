"""JSON and CSV export (netnoise.export)."""

from __future__ import annotations

import dataclasses
import io
import json
import math
import os

import _output_samples as samples  # tests/ is on sys.path (conftest.py)
import numpy as np
import pytest

from netnoise.errors import CircuitError
from netnoise.outputs.export import atomic_write, csv_header, result_to_dict, to_json, write_csv, write_json

# The fixed part of the JSON document: key -> allowed types.
REQUIRED = {
    "title": (str,),
    "temperature_K": (float,),
    "output": (dict,),
    "input_source": (str, type(None)),
    "band_Hz": (dict,),
    "total_rms_V": (float,),
    "input_referred_rms": (float, type(None)),
    "input_referred_unit": (str, type(None)),
    "gain_at_max": (float, type(None)),
    "enbw_Hz": (float, type(None)),
    "contributions": (list,),
    "spectrum": (dict,),
}


def _refuse_constants(name):
    raise AssertionError(f"JSON holds {name}")


def _parsed(result) -> dict:
    return json.loads(to_json(result), parse_constant=_refuse_constants)


@pytest.mark.parametrize("build", [samples.white, samples.resistors, samples.rc_unbounded, samples.many])
def test_required_keys_and_types(build):
    data = _parsed(build())
    for key, types in REQUIRED.items():
        assert isinstance(data[key], types), key
    assert set(data["output"]) == {"node", "ref"}
    assert set(data["band_Hz"]) == {"low", "high"}
    assert isinstance(data["band_Hz"]["low"], float)
    assert data["input_referred_unit"] in ("V", "A", None)
    for row in data["contributions"]:
        assert isinstance(row["element"], str) and isinstance(row["mechanism"], str)
        assert isinstance(row["rms_V"], float) and isinstance(row["share"], float)
    spectrum = data["spectrum"]
    assert len(spectrum["frequency_Hz"]) == len(spectrum["output_density_V_per_rtHz"])
    assert all(isinstance(x, float) for x in spectrum["output_density_V_per_rtHz"])


def test_white_source_numbers():
    # 100 nV/√Hz over 4 Hz -> 200 nV rms (common practice)
    data = _parsed(samples.white())
    assert data["total_rms_V"] == pytest.approx(200e-9, rel=1e-12)
    assert data["band_Hz"] == {"low": 1.0, "high": 5.0}
    assert data["input_source"] is None and data["input_referred_rms"] is None
    assert data["input_referred_unit"] is None and data["gain_at_max"] is None and data["enbw_Hz"] is None
    assert data["contributions"] == [
        {
            "source": "R1",
            "element": "R1",
            "mechanism": "thermal",
            "value": 1e3,
            "unit": "Ω",
            "value_text": "1 kΩ",
            "rms_V": pytest.approx(200e-9, rel=1e-12),
            "share": 1.0,
            "cumulative_share": 1.0,
        }
    ]
    assert data["spectrum"]["output_density_V_per_rtHz"] == pytest.approx([100e-9] * 41, rel=1e-12)
    assert "input_referred_density_per_rtHz" not in data["spectrum"]


def test_shares_sorted_and_summing_to_one():
    data = _parsed(samples.resistors())
    shares = [row["share"] for row in data["contributions"]]
    assert shares == sorted(shares, reverse=True)
    assert math.fsum(shares) == pytest.approx(1.0, rel=1e-12)
    # R/ΣR with 1, 4, 15 kΩ (sample construction)
    assert shares == pytest.approx([0.75, 0.20, 0.05], rel=1e-12)
    assert [row["source"] for row in data["contributions"]] == ["R3", "R2", "R1"]
    assert data["contributions"][-1]["cumulative_share"] == pytest.approx(1.0, rel=1e-12)


def test_signal_path_fields():
    data = _parsed(samples.resistors())
    assert data["input_source"] == "VIN" and data["input_referred_unit"] == "V"
    assert data["gain_at_max"] == pytest.approx(2.0, rel=1e-12)
    assert data["input_referred_rms"] == pytest.approx(data["total_rms_V"] / 2.0, rel=1e-12)
    assert data["enbw_Hz"] == pytest.approx(10e3 - 1.0, rel=1e-12)  # flat gain: ENBW = band width (common practice)
    referred = data["spectrum"]["input_referred_density_per_rtHz"]
    assert referred == pytest.approx(np.array(data["spectrum"]["output_density_V_per_rtHz"]) / 2.0, rel=1e-12)
    assert data["output"] == {"node": "out", "ref": "ref"}
    assert data["temperature_C"] == pytest.approx(26.85, rel=1e-12)


def test_unbounded_band_high_is_null():
    data = _parsed(samples.rc_unbounded())
    assert data["band_Hz"] == {"low": 0.0, "high": None}
    # kT/C for 1 nF at 300 K: sqrt(k·300/1e-9) = 2.035 µV (common practice)
    assert data["total_rms_V"] == pytest.approx(2.035e-6, rel=1e-3)


def test_zero_gain_point_gives_null_input_referred_density():
    result = samples.resistors()
    gain = np.array(result.gain)
    gain[0] = 0.0
    data = _parsed(dataclasses.replace(result, gain=gain))
    referred = data["spectrum"]["input_referred_density_per_rtHz"]
    assert referred[0] is None and all(isinstance(x, float) for x in referred[1:])


def test_non_finite_number_is_refused():
    bad = samples.white(source_variance=np.array([math.inf]))
    with pytest.raises(CircuitError, match="finite"):
        result_to_dict(bad)
    nan_density = np.full((1, 41), 1e-14)
    nan_density[0, 3] = math.nan
    with pytest.raises(CircuitError):
        result_to_dict(samples.white(source_density=nan_density))


def test_refused_json_leaves_existing_file_alone(tmp_path):
    target = tmp_path / "out.json"
    target.write_text("previous\n")
    with pytest.raises(CircuitError):
        write_json(samples.white(source_variance=np.array([math.nan])), target)
    assert target.read_text() == "previous\n"
    assert os.listdir(tmp_path) == ["out.json"]


def test_write_json_to_file(tmp_path):
    target = tmp_path / "result.json"
    write_json(samples.resistors(), target)
    data = json.loads(target.read_text(encoding="utf-8"))
    assert data["title"] == "three resistors"
    umask = os.umask(0)
    os.umask(umask)
    assert (target.stat().st_mode & 0o777) == (0o666 & ~umask)  # like an ordinary open()


def test_write_json_dash_goes_to_stdout(capsys):
    write_json(samples.white(), "-")
    captured = capsys.readouterr()
    assert json.loads(captured.out)["total_rms_V"] == pytest.approx(200e-9, rel=1e-12)
    assert captured.err == ""


def test_csv_round_trips_through_loadtxt(tmp_path):
    result = samples.resistors()
    target = tmp_path / "spectrum.csv"
    write_csv(result, target)
    header = target.read_text(encoding="utf-8").splitlines()[0].split(",")
    assert header == csv_header(result)
    # issue 15: a source column is <name>__V_per_rtHz (export.column_name)
    assert header == [
        "frequency_Hz",
        "total_output_V_per_rtHz",
        "R3__V_per_rtHz",
        "R2__V_per_rtHz",
        "R1__V_per_rtHz",
        "input_referred_V_per_rtHz",
    ]
    table = np.loadtxt(target, delimiter=",", skiprows=1)
    assert table.shape == (result.frequency_Hz.size, 2 + 3 + 1)
    np.testing.assert_allclose(table[:, 0], result.frequency_Hz, rtol=1e-15)
    np.testing.assert_allclose(table[:, 1], result.output_density_rt, rtol=1e-15)
    for column, k in zip(range(2, 5), (2, 1, 0)):  # rank order: R3, R2, R1
        np.testing.assert_allclose(table[:, column], np.sqrt(result.source_density[k]), rtol=1e-15)
    # the columns' powers add up to the total (densities of independent sources add in power)
    np.testing.assert_allclose((table[:, 2:5] ** 2).sum(axis=1), table[:, 1] ** 2, rtol=1e-12)
    # the input-referred column is the total over |H| at each frequency
    np.testing.assert_allclose(table[:, 5], result.output_density_rt / np.abs(result.gain), rtol=1e-12)


def test_atomic_write_failure_leaves_nothing(tmp_path):
    target = tmp_path / "half.csv"

    def fail_midway(handle: io.TextIOBase) -> None:
        handle.write("frequency_Hz,")
        raise RuntimeError("disk on fire")

    with pytest.raises(RuntimeError):
        atomic_write(target, fail_midway)
    assert os.listdir(tmp_path) == []


def test_atomic_write_failure_keeps_the_old_file(tmp_path):
    target = tmp_path / "keep.csv"
    target.write_text("old contents\n")

    def fail(handle):
        handle.write("new")
        raise OSError("no space left")

    with pytest.raises(OSError):
        atomic_write(target, fail)
    assert target.read_text() == "old contents\n"
    assert os.listdir(tmp_path) == ["keep.csv"]


# --- noise figure, groups, SNR, converter, DC (issue 3) ------------------------------
MECHANISMS = {
    "thermal",
    "shot",
    "excess",
    "amplifier-voltage",
    "amplifier-current",
    "source",
    "flicker",
    "channel-thermal",
}  # issues 3 and 11


@pytest.mark.parametrize("build", [samples.white, samples.resistors, samples.rc_unbounded, samples.many])
def test_noise_figure_keys_are_null_without_a_source_resistor(build):
    data = _parsed(build())
    assert data["noise_figure_dB"] is None and data["noise_figure_spectrum_dB"] is None
    assert data["source_resistor"] is None
    for key in ("group_by", "groups", "snr", "adc", "operating_point"):
        assert key not in data


def test_noise_figure_keys():
    result = samples.front_end()
    data = _parsed(result)
    # F = 2 by construction: NF = 10·log10(2) = 3.0103 dB (common practice)
    assert data["noise_figure_dB"] == pytest.approx(3.0103, rel=1e-5)
    assert data["noise_figure_spectrum_dB"] == pytest.approx([3.0103] * result.frequency_Hz.size, rel=1e-5)
    assert data["source_resistor"] == "Rs"
    # one row per source, each mechanism one of the fixed strings
    assert [row["source"] for row in data["contributions"]] == ["Rs", "Xu1 (voltage)", "Xu1 (in+)", "R1"]
    assert {row["mechanism"] for row in data["contributions"]} <= MECHANISMS


def test_spot_noise_figure_without_gain_is_null_and_nan_is_refused():
    base = samples.front_end()
    nf = np.array(base.noise_figure_spectrum_dB)
    nf[0] = math.inf
    data = _parsed(dataclasses.replace(base, noise_figure_spectrum_dB=nf))
    assert data["noise_figure_spectrum_dB"][0] is None
    assert all(isinstance(x, float) for x in data["noise_figure_spectrum_dB"][1:])
    nf[0] = math.nan
    with pytest.raises(CircuitError, match="finite"):
        result_to_dict(dataclasses.replace(base, noise_figure_spectrum_dB=nf))
    with pytest.raises(CircuitError, match="finite"):
        result_to_dict(dataclasses.replace(base, noise_figure_dB=math.inf))
    with pytest.raises(CircuitError, match="noise_figure_dB"):
        to_json(dataclasses.replace(base, noise_figure_dB=math.inf))


def test_to_json_names_a_non_finite_field_the_encoder_refuses():
    # to_json leaves the walk over every number to the encoder (allow_nan=False) and,
    # when it refuses, names the field as result_to_dict does
    from netnoise.results.figures import SignalToNoise

    snr = SignalToNoise(signal_output_rms_V=math.nan, noise_rms_V=1e-6, snr_dB=math.nan)
    with pytest.raises(CircuitError, match=r"result\.snr\.signal_rms is nan"):
        to_json(samples.front_end(), snr=snr)


def test_groups_by_element_and_by_mechanism():
    result = samples.front_end()
    data = _parsed_with(result, group_by="element")
    assert data["group_by"] == "element"
    assert [(g["name"], g["sources"]) for g in data["groups"]] == [
        ("Rs", ["Rs"]),
        ("Xu1", ["Xu1 (voltage)", "Xu1 (in+)"]),
        ("R1", ["R1"]),
    ]
    assert data["groups"][1]["mechanisms"] == ["amplifier-voltage", "amplifier-current"]
    # shares by equivalent resistance (sample construction): 50, 40, 10 %
    assert [g["share"] for g in data["groups"]] == pytest.approx([0.5, 0.4, 0.1], rel=1e-12)
    assert len(data["contributions"]) == 4  # the per-source rows stay
    data = _parsed_with(result, group_by="mechanism")
    assert [g["name"] for g in data["groups"]] == ["thermal", "amplifier-voltage", "amplifier-current"]
    assert data["groups"][0]["sources"] == ["Rs", "R1"]
    assert math.fsum(g["share"] for g in data["groups"]) == pytest.approx(1.0, rel=1e-12)
    assert data["groups"][0]["rms_V"] == pytest.approx(math.sqrt(0.6) * result.total_rms, rel=1e-12)


def _parsed_with(result, **extras) -> dict:
    return json.loads(to_json(result, **extras), parse_constant=_refuse_constants)


def test_snr_adc_and_operating_point_keys():
    from netnoise.engine.dc import OperatingPoint
    from netnoise.results.figures import adc_comparison, signal_to_noise

    result = samples.front_end()
    snr = signal_to_noise(result, 1e-3, at="input")
    adc = adc_comparison(result, bits=16, full_scale_V=4.096, sample_rate_Hz=1e6)
    op = OperatingPoint({"out": 2.5}, {"R1": 1e-3}, {"R1": 1.0})
    data = _parsed_with(result, snr=snr, signal_at="input", adc=adc, operating_point=op)
    assert data["snr"]["signal_at"] == "input" and data["snr"]["signal_unit"] == "V"
    assert data["snr"]["signal_rms"] == pytest.approx(1e-3, rel=1e-12)
    assert data["snr"]["signal_output_rms_V"] == pytest.approx(10e-3, rel=1e-12)  # gain 10
    assert data["snr"]["snr_dB"] == pytest.approx(20 * math.log10(10e-3 / result.total_rms), rel=1e-12)
    assert data["adc"]["ideal_snr_dB"] == pytest.approx(98.1, rel=1e-3)  # 16 bits (common practice)
    assert data["adc"]["lsb_V"] == pytest.approx(62.5e-6, rel=1e-12)  # 4.096 V / 65536 (arithmetic)
    assert data["adc"]["nyquist_Hz"] == pytest.approx(500e3, rel=1e-12)
    assert data["adc"]["floor_set_by"] in ("analog chain", "converter")
    # ENOB of the ideal converter's own SNR is its resolution: (98.09 − 1.76)/6.02 ≈ 16.0 (common practice)
    from netnoise.outputs.report import enob_bits

    assert enob_bits(data["adc"]["ideal_snr_dB"]) == pytest.approx(16.0, rel=1e-3)
    assert data["operating_point"] == {
        "node_voltages_V": {"out": 2.5},
        "element_currents_A": {"R1": 1e-3},
        "element_voltages_V": {"R1": 1.0},
    }


def test_snr_without_noise_is_null_not_infinity():
    from netnoise.results.figures import signal_to_noise

    quiet = samples.white(
        source_density=np.zeros((1, 41)), source_variance=np.zeros(1), cumulative_variance=np.zeros(41)
    )
    data = _parsed_with(quiet, snr=signal_to_noise(quiet, 1.0, at="output"), signal_at="output")
    assert data["snr"]["snr_dB"] is None


def test_csv_spot_noise_figure_column(tmp_path):
    base = samples.front_end()
    nf = np.array(base.noise_figure_spectrum_dB)
    nf[2] = math.inf  # no signal gain at that grid point: an empty cell
    result = dataclasses.replace(base, noise_figure_spectrum_dB=nf)
    target = tmp_path / "nf.csv"
    write_csv(result, target)
    lines = target.read_text(encoding="utf-8").splitlines()
    assert lines[0].split(",")[-1] == "spot_noise_figure_dB"
    cells = [line.split(",")[-1] for line in lines[1:]]
    assert cells[2] == ""
    assert [float(c) for c in cells[:2]] == pytest.approx([3.0103, 3.0103], rel=1e-5)  # 10·log10(2)
    assert "spot_noise_figure_dB" not in csv_header(samples.front_end(with_noise_figure=False))

"""JSON and CSV export (netnoise.export)."""

from __future__ import annotations

import dataclasses
import importlib.util
import io
import json
import math
import os
import pathlib
import sys

import numpy as np
import pytest

from netnoise.errors import CircuitError
from netnoise.export import atomic_write, csv_header, result_to_dict, to_json, write_csv, write_json


def _load_samples():
    name = "_netnoise_output_samples"
    if name not in sys.modules:
        spec = importlib.util.spec_from_file_location(name, pathlib.Path(__file__).with_name("_output_samples.py"))
        module = importlib.util.module_from_spec(spec)
        sys.modules[name] = module
        spec.loader.exec_module(module)
    return sys.modules[name]


samples = _load_samples()

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
        {"element": "R1", "mechanism": "thermal", "value": "1 kΩ", "rms_V": pytest.approx(200e-9, rel=1e-12),
         "share": 1.0, "cumulative_share": 1.0}
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
    assert [row["element"] for row in data["contributions"]] == ["R3", "R2", "R1"]
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
    assert header == ["frequency_Hz", "total_output_V_per_rtHz", "R3_V_per_rtHz", "R2_V_per_rtHz", "R1_V_per_rtHz"]
    table = np.loadtxt(target, delimiter=",", skiprows=1)
    assert table.shape == (result.frequency_Hz.size, 2 + 3)
    np.testing.assert_allclose(table[:, 0], result.frequency_Hz, rtol=1e-15)
    np.testing.assert_allclose(table[:, 1], result.output_density_rt, rtol=1e-15)
    for column, k in zip(range(2, 5), (2, 1, 0)):  # rank order: R3, R2, R1
        np.testing.assert_allclose(table[:, column], np.sqrt(result.source_density[k]), rtol=1e-15)
    # the columns' powers add up to the total (densities of independent sources add in power)
    np.testing.assert_allclose((table[:, 2:] ** 2).sum(axis=1), table[:, 1] ** 2, rtol=1e-12)


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

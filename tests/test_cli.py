"""The command line (netnoise.cli), with the parser and engine stubbed out.

``load_netlist`` and ``analyze`` are replaced by fakes so these tests check
the command line alone: option handling, streams, exit codes and files.
"""

from __future__ import annotations

import importlib
import importlib.util
import json
import math
import os
import pathlib
import subprocess
import sys
import types

import _output_samples as samples  # tests/ is on sys.path (conftest.py)
import pytest

from netnoise import __version__, cli
from netnoise.errors import CircuitError, NetlistError, SourceLocation

REPO = pathlib.Path(__file__).resolve().parents[1]
NETLIST_TEXT = "test circuit\nR1 out 0 1k\n.end\n"


def _module(monkeypatch, name: str) -> types.ModuleType:
    """The netnoise module whose functions a test replaces."""
    return importlib.import_module(name)


class FakeEngine:
    """Records what the command line passed and returns (or raises) what it is told."""

    def __init__(self, monkeypatch):
        self.result = samples.resistors()
        self.error: BaseException | None = None
        self.load_error: BaseException | None = None
        self.loaded: list[str] = []
        self.calls: list[dict] = []
        self.circuit = object()
        monkeypatch.setattr(_module(monkeypatch, "netnoise.netlist"), "load_netlist", self.load_netlist, raising=False)
        monkeypatch.setattr(_module(monkeypatch, "netnoise.engine.analysis"), "analyze", self.analyze, raising=False)

    def load_netlist(self, path):
        self.loaded.append(os.fspath(path))
        if self.load_error is not None:
            raise self.load_error
        return self.circuit

    def analyze(self, circuit, **kwargs):
        assert circuit is self.circuit
        self.progress = kwargs.pop("progress")  # the terminal's progress line (netnoise.progress)
        self.calls.append(kwargs)
        if self.error is not None:
            raise self.error
        return self.result


@pytest.fixture
def engine(monkeypatch):
    monkeypatch.delenv("NETNOISE_DEBUG", raising=False)
    return FakeEngine(monkeypatch)


@pytest.fixture
def netlist(tmp_path):
    path = tmp_path / "amp.cir"
    path.write_text(NETLIST_TEXT)
    return path


def run(*args: str) -> int:
    return cli.main([str(a) for a in args])


# --- success paths ------------------------------------------------------------
def test_analyze_prints_the_report(engine, netlist, capsys):
    assert run("analyze", netlist) == 0
    out, err = capsys.readouterr()
    assert out.startswith("Noise budget: three resistors")
    assert "Dominant source: R3" in out
    assert err == ""
    assert engine.loaded == [str(netlist)]


def test_defaults_pass_none_to_the_engine(engine, netlist):
    run("analyze", netlist)
    assert engine.calls == [
        dict(
            output=None, reference=None, input_source=None, band=None, points_per_decade=None, temperature_celsius=None
        )
    ]


def test_options_reach_the_engine(engine, netlist):
    assert (
        run(
            "analyze",
            netlist,
            "--out",
            "vout",
            "--ref",
            "vref",
            "--input",
            "VIN",
            "--band",
            "1",
            "20",
            "--points",
            "25",
            "--temp",
            "-40",
        )
        == 0
    )
    assert engine.calls[-1] == dict(
        output="vout",
        reference="vref",
        input_source="VIN",
        band=(1.0, 20.0),
        points_per_decade=25,
        temperature_celsius=-40.0,
    )


def test_band_with_suffixes_and_infinity(engine, netlist):
    pytest.importorskip("netnoise.text.values")
    run("analyze", netlist, "--band", "10", "20k")
    assert engine.calls[-1]["band"] == (10.0, 20e3)  # k = 1e3 (SI prefix)
    run("analyze", netlist, "--band", "0", "inf")
    assert engine.calls[-1]["band"] == (0.0, math.inf)


def test_top_zero_lists_every_source(engine, netlist, capsys):
    engine.result = samples.many()
    run("analyze", netlist, "--top", "3")
    assert "(18 others)" in capsys.readouterr().out
    run("analyze", netlist, "--top", "0")
    out = capsys.readouterr().out
    assert "others)" not in out and " R1 " in out


def test_json_to_stdout_carries_only_json(engine, netlist, capsys):
    assert run("analyze", netlist, "--json", "-") == 0
    out, err = capsys.readouterr()
    data = json.loads(out)
    assert data["total_rms_V"] == pytest.approx(engine.result.total_rms, rel=1e-12)
    assert "Noise budget: three resistors" in err  # the report moves to stderr


def test_json_csv_and_plot_files(engine, netlist, tmp_path, capsys):
    pytest.importorskip("matplotlib")
    json_path, csv_path, plot_path = tmp_path / "r.json", tmp_path / "r.csv", tmp_path / "r.svg"
    assert run("analyze", netlist, "--json", json_path, "--csv", csv_path, "--plot", plot_path) == 0
    assert json.loads(json_path.read_text())["title"] == "three resistors"
    assert csv_path.read_text().startswith("frequency_Hz,")
    assert plot_path.read_bytes().startswith(b"<?xml")
    err = capsys.readouterr().err
    assert f"wrote {json_path}" in err and f"wrote {plot_path}" in err


def test_version(capsys):
    assert run("--version") == 0
    assert capsys.readouterr().out.strip() == f"netnoise {__version__}"


# --- errors and exit statuses ---------------------------------------------
def test_netlist_error_exits_2_with_location(engine, netlist, capsys):
    engine.load_error = NetlistError("unknown element 'Q1'", SourceLocation(str(netlist), 2, 1, "Q1 a b c"))
    assert run("analyze", netlist) == 2
    out, err = capsys.readouterr()
    assert out == ""
    assert err.startswith(f"netnoise: error: {netlist}:2:1: unknown element 'Q1'")
    assert "    Q1 a b c\n    ^" in err
    assert "Traceback" not in err


def test_circuit_error_exits_1(engine, netlist, capsys):
    engine.error = CircuitError("node 'mid' has no DC path to ground")
    assert run("analyze", netlist) == 1
    err = capsys.readouterr().err
    assert err == "netnoise: error: node 'mid' has no DC path to ground\n"


def test_internal_error_exits_3_in_one_line(engine, netlist, capsys):
    engine.error = ZeroDivisionError("float division by zero")
    assert run("analyze", netlist) == 3
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "internal error" in err and "ZeroDivisionError" in err
    assert "Traceback" not in err


def test_internal_error_traceback_with_debug(engine, netlist, capsys, monkeypatch):
    monkeypatch.setenv("NETNOISE_DEBUG", "1")
    engine.error = ZeroDivisionError("float division by zero")
    assert run("analyze", netlist) == 3
    assert "Traceback" in capsys.readouterr().err


@pytest.mark.parametrize(
    "args",
    [
        (),  # no command
        ("analyze",),  # no netlist
        ("analyze", "{netlist}", "--points", "many"),
        ("analyze", "{netlist}", "--points", "0"),
        ("analyze", "{netlist}", "--top", "-1"),
        ("analyze", "{netlist}", "--band", "1"),
        ("analyze", "{netlist}", "--frobnicate"),
    ],
)
def test_argparse_usage_errors_exit_2(engine, netlist, capsys, args):
    assert run(*(a.format(netlist=netlist) for a in args)) == 2
    assert "usage:" in capsys.readouterr().err
    assert engine.calls == []


@pytest.mark.parametrize(
    "band, words",
    [
        (("1", "x"), "cannot read 'x'"),
        (("10", "1"), "must be above LOW"),
        (("-1", "10"), "0 Hz or more"),
        (("inf", "inf"), "must be finite"),
    ],
)
def test_bad_band_exits_2(engine, netlist, capsys, band, words):
    assert run("analyze", netlist, "--band", *band) == 2
    err = capsys.readouterr().err
    assert err.startswith("netnoise: error: --band") and words in err
    assert engine.calls == []


def test_temperature_below_absolute_zero_exits_2(engine, netlist, capsys):
    assert run("analyze", netlist, "--temp", "-300") == 2
    assert "absolute zero" in capsys.readouterr().err


def test_missing_netlist_exits_2(engine, tmp_path, capsys):
    assert run("analyze", tmp_path / "nope.cir") == 2
    assert "cannot read netlist" in capsys.readouterr().err
    assert engine.loaded == []


@pytest.mark.parametrize("option", ["--json", "--csv", "--plot"])
def test_refuses_to_overwrite_the_netlist(engine, netlist, capsys, option, monkeypatch):
    monkeypatch.chdir(netlist.parent)
    assert run("analyze", netlist, option, "./amp.cir") == 2  # another spelling of the same file
    assert "would overwrite the input netlist" in capsys.readouterr().err
    assert netlist.read_text() == NETLIST_TEXT
    assert engine.calls == []


def test_refuses_two_outputs_on_one_file(engine, netlist, tmp_path, capsys):
    both = tmp_path / "same.out"
    assert run("analyze", netlist, "--json", both, "--csv", both) == 2
    assert "give each output its own file" in capsys.readouterr().err
    assert not both.exists()


def test_plot_extension_checked_before_the_analysis(engine, netlist, tmp_path, capsys):
    assert run("analyze", netlist, "--plot", tmp_path / "noise.jpg") == 2
    assert ".png" in capsys.readouterr().err
    assert engine.calls == []


def test_unwritable_output_exits_2_and_leaves_nothing(engine, netlist, tmp_path, capsys):
    target = tmp_path / "missing-folder" / "r.json"
    assert run("analyze", netlist, "--json", target) == 2
    assert "cannot write" in capsys.readouterr().err
    assert not target.parent.exists()


def test_export_refusal_leaves_no_file(engine, netlist, tmp_path, capsys):
    engine.result = samples.white(source_variance=[math.nan])
    target = tmp_path / "r.csv"
    assert run("analyze", netlist, "--csv", target) == 1  # a CircuitError from the export
    assert "finite" in capsys.readouterr().err
    assert sorted(os.listdir(tmp_path)) == ["amp.cir"]


def test_python_dash_m_netnoise():
    completed = subprocess.run(
        [sys.executable, "-m", "netnoise", "--version"],
        cwd=REPO,
        env={**os.environ, "PYTHONPATH": str(REPO)},
        capture_output=True,
        text=True,
        timeout=60,
    )
    assert completed.returncode == 0
    assert completed.stdout.strip() == f"netnoise {__version__}"


def test_end_to_end_with_the_real_parser_and_engine(tmp_path, capsys, monkeypatch):
    """A divider with a capacitor, integrated to infinite bandwidth: kT/C."""
    pytest.importorskip("netnoise.netlist")
    pytest.importorskip("netnoise.engine.analysis")
    from scipy.constants import k as BOLTZMANN

    monkeypatch.delenv("NETNOISE_DEBUG", raising=False)
    path = tmp_path / "divider.cir"
    path.write_text("divider\nV1 in 0 dc 0 ac 1\nR1 in out 10k\nR2 out 0 10k\nC1 out 0 10n\n.end\n")
    status = run("analyze", path, "--out", "out", "--input", "V1", "--band", "0", "inf", "--temp", "27", "--json", "-")
    out, err = capsys.readouterr()
    assert status == 0, err
    data = json.loads(out)
    # any resistive network across C: total output noise is sqrt(kT/C) (common practice)
    assert data["total_rms_V"] == pytest.approx(math.sqrt(BOLTZMANN * 300.15 / 10e-9), rel=1e-6)
    assert data["band_Hz"]["high"] is None
    assert [c["share"] for c in data["contributions"]] == pytest.approx([0.5, 0.5], rel=1e-6)  # equal resistors
    assert "Largest sources: R1 and R2 tie" in err

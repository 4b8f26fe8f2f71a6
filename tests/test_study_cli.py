"""The design studies from the command line: --response, --settle, --sensitivity, and sweep."""

from __future__ import annotations

import csv
import io
import json
import math
import pathlib

import pytest
from scipy import constants

from netnoise.cli import main, parse_settle
from netnoise.errors import UsageError

K_B = constants.Boltzmann
REPO = pathlib.Path(__file__).resolve().parents[1]
TRACK_HOLD = REPO / "circuits" / "track_hold.cir"


@pytest.mark.parametrize(
    "text, fraction", [("16bit", 2.0**-17), ("12 bits", 2.0**-13), ("0.01%", 1e-4), ("1e-3", 1e-3)]
)
def test_settle_accuracy_words(text, fraction):
    # half an LSB of an N-bit converter is 2^-(N+1) of full scale (common practice)
    assert parse_settle(text) == pytest.approx(fraction, rel=1e-15)


@pytest.mark.parametrize("text", ["0bit", "40bits", "150%", "fast", "0"])
def test_bad_settle_accuracies_are_refused(text):
    with pytest.raises(UsageError, match="--settle"):
        parse_settle(text)


def test_analyze_with_response_and_sensitivity_reports_and_exports(tmp_path, capsys):
    out = tmp_path / "r.json"
    assert main(["analyze", str(TRACK_HOLD), "--settle", "16bit", "--sensitivity", "--json", str(out)]) == 0
    text = capsys.readouterr().out
    assert "Response of the signal path" in text and "settles to 16 bits" in text
    assert "What to change" in text and "Largest lever: Chold" in text
    data = json.loads(out.read_text())
    r = data["response"]
    tau = 200 * 2e-12
    assert r["settling_time_s"] == pytest.approx(tau * 17 * math.log(2), rel=2e-4)  # RC·(N+1)·ln 2 (common practice)
    assert r["settle_accuracy"] == 2.0**-17 and r["overshoot"] == 0.0
    assert set(r) >= {"bandwidth_Hz", "rise_time_s", "overshoot", "settling_time_s", "settle_accuracy"}
    by = {s["element"]: s for s in data["sensitivities"]}
    assert by["Chold"]["rms_pct_per_pct"] == pytest.approx(-0.5, rel=1e-6)  # kT/C (equipartition)
    assert by["Chold"]["settling_pct_per_pct"] == pytest.approx(1.0, rel=1e-5)
    assert set(by["Ron"]) == {
        "element",
        "value",
        "unit",
        "rms_pct_per_pct",
        "bandwidth_pct_per_pct",
        "settling_pct_per_pct",
    }


def test_response_without_an_input_source_says_what_to_give(tmp_path, capsys):
    path = tmp_path / "rc.cir"
    path.write_text("rc\nR1 a 0 1k\nC1 a 0 1n\n.end\n")
    assert main(["analyze", str(path), "--out", "a", "--settle", "16bit"]) == 2
    assert "need an input source: give --input SOURCE" in capsys.readouterr().err


def test_sweep_with_a_noise_target(tmp_path, capsys):
    json_path, csv_path, plot = tmp_path / "s.json", tmp_path / "s.csv", tmp_path / "s.png"
    status = main(
        [
            "sweep",
            str(TRACK_HOLD),
            "--vary",
            "Chold",
            "1p",
            "10p",
            "--steps",
            "4",
            "--log",
            "--settle",
            "16bit",
            "--target",
            "32u",
            "--json",
            str(json_path),
            "--csv",
            str(csv_path),
            "--plot",
            str(plot),
        ]
    )
    assert status == 0
    text = capsys.readouterr().out
    c = K_B * 300.15 / 32e-6**2  # C = kT/σ² (equipartition)
    assert "Chold must be at least 4.047 pF for 32 µV rms" in text and f"{c * 1e12:.4g}" == "4.047"
    data = json.loads(json_path.read_text())
    assert data["vary"] == [
        {
            "name": "Chold",
            "values": pytest.approx([1e-12, 10**-11.666666666666666, 10**-11.333333333333334, 1e-11], rel=1e-12),
        }
    ]
    assert data["target"]["value"] == pytest.approx(c, rel=1e-3)
    point = data["points"][0]
    assert point["total_rms_V"] == pytest.approx(math.sqrt(K_B * 300.15 / 1e-12), rel=1e-9)
    assert set(point) == {"values", "total_rms_V", "dominant", "bandwidth_Hz", "settling_time_s"}
    rows = list(csv.DictReader(io.StringIO(csv_path.read_text())))
    assert len(rows) == 4 and float(rows[-1]["Chold"]) == pytest.approx(1e-11, rel=1e-12)
    assert plot.stat().st_size > 1000


def test_sweep_of_the_temperature_and_a_param_grid(tmp_path, capsys):
    status = main(
        [
            "sweep",
            str(TRACK_HOLD),
            "--vary",
            "chold",
            "1p",
            "4p",
            "--vary",
            "temp",
            "-73.15",
            "126.85",
            "--steps",
            "2",
            "--json",
            "-",
        ]
    )
    assert status == 0
    data = json.loads(capsys.readouterr().out)
    totals = [p["total_rms_V"] for p in data["points"]]  # (1p, 200 K), (1p, 400 K), (4p, 200 K), (4p, 400 K)
    assert totals[1] / totals[0] == pytest.approx(math.sqrt(2), rel=1e-9)  # ∝ √T (Johnson 1928; Nyquist 1928)
    assert totals[0] / totals[2] == pytest.approx(2.0, rel=1e-9)  # ∝ 1/√C


def test_sweep_refuses_what_it_cannot_vary(capsys):
    assert main(["sweep", str(TRACK_HOLD), "--vary", "Rnone", "1", "2"]) == 2
    assert "cannot vary 'Rnone'" in capsys.readouterr().err
    assert main(["sweep", str(TRACK_HOLD), "--vary", "Chold", "1p", "2p", "--target-settle", "1n"]) == 2
    assert "needs --settle" in capsys.readouterr().err


def test_the_trade_off_plot_draws_what_the_sweep_found():
    # checked by its data, not its pixels
    import netnoise
    from netnoise.outputs.study_plots import plot_tradeoff
    from netnoise.studies.sweep import Vary, sweep

    prepared = netnoise.prepare(netnoise.load_netlist(TRACK_HOLD), band=(0.0, math.inf))
    one = sweep(prepared, [Vary.span("Chold", 1e-12, 4e-12, 3)], settle=2.0**-17)
    drawn = plot_tradeoff(one, units={"Chold": "F"})
    x, y = drawn.lines[0].get_data()
    assert list(x) == pytest.approx(list(one.settling_time_s), rel=1e-12)
    assert drawn.axes[0].get_ylabel() == "total output noise (µV rms)"
    assert list(y) == pytest.approx(list(one.total_rms_V * 1e6), rel=1e-12)
    grid = sweep(prepared, [Vary("Chold", (1e-12, 2e-12)), Vary("temp", (0.0, 50.0))], speed=False)
    drawn = plot_tradeoff(grid, units={"Chold": "F"})
    labels = [line.get_label() for line in drawn.axes[1].get_lines()]
    assert labels == ["temp = 0 °C", "temp = 50 °C"]

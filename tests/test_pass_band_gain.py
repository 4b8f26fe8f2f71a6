"""Issue 15, item 4: input-referred noise uses the pass band's gain, not a
resonant peak -- and the designer can name the frequency (--gain-at)."""

from __future__ import annotations

import csv
import io
import json
import math

import numpy as np
import pytest
from scipy import constants

from netnoise import cli, parse_netlist
from netnoise.engine.analysis import analyze
from netnoise.errors import UsageError

K_B = constants.Boltzmann
T_KELVIN = 300.15

#: An invented series-RLC low-pass: w0 = 1/sqrt(LC) = 1e5 rad/s, Q = sqrt(L/C)/R = 5.
RLC = """\
series RLC low-pass with a resonant peak
V1 in 0 AC 1
R1 in a 20
L1 a out 1m
C1 out 0 100n
.noise v(out) V1 dec 20 10 1meg
.end
"""

#: An invented first-order high-pass: f_c = 1/(2 pi R C) = 159 Hz.
HIGH_PASS = """\
coupling capacitor into a resistor
V1 in 0 AC 1
C1 in out 1u
R1 out 0 1k
.noise v(out) V1 dec 20 10 100k
.end
"""


def _rlc_gain(f_Hz: float) -> float:
    """|H| of the series RLC low-pass, the second-order section of any filter text (common practice): 1/|1 - x^2 + j x/Q|, x = w/w0."""
    x = 2 * math.pi * f_Hz / 1e5
    return 1.0 / math.hypot(1.0 - x * x, x / 5.0)


def test_low_pass_with_peaking_is_referred_to_its_dc_gain():
    result = analyze(parse_netlist(RLC), band=(0.0, math.inf))
    # the resonant peak of a second-order low-pass is Q / sqrt(1 - 1/(4 Q^2)) (common practice, filter texts)
    assert result.gain_at_max == pytest.approx(5.0 / math.sqrt(1.0 - 1.0 / 100.0), rel=1e-6)
    assert result.pass_band_gain == pytest.approx(1.0, rel=1e-12)
    assert result.gain_reference_Hz == 0.0
    # over all frequencies the only resistor leaves kT/C on the capacitor (equipartition)
    assert result.total_rms == pytest.approx(math.sqrt(K_B * T_KELVIN / 100e-9), rel=1e-6)
    # referred through the DC gain of 1, not through the peak of 5
    assert result.input_referred_rms == pytest.approx(result.total_rms, rel=1e-12)


def test_a_named_frequency_sets_the_gain():
    result = analyze(parse_netlist(RLC), band=(0.0, math.inf), gain_at_Hz=10e3)
    assert result.gain_reference_Hz == 10e3
    assert result.pass_band_gain == pytest.approx(_rlc_gain(10e3), rel=1e-9)
    assert result.input_referred_rms == pytest.approx(result.total_rms / _rlc_gain(10e3), rel=1e-9)


def test_high_pass_is_referred_at_the_band_centre():
    result = analyze(parse_netlist(HIGH_PASS))
    assert result.gain_reference_Hz == pytest.approx(1e3, rel=1e-12)  # sqrt(10 Hz * 100 kHz)
    x = 2 * math.pi * 1e3 * 1e3 * 1e-6  # w R C at 1 kHz
    # a first-order high-pass passes x / sqrt(1 + x^2) (common practice)
    assert result.pass_band_gain == pytest.approx(x / math.hypot(1.0, x), rel=1e-9)


def test_a_frequency_that_is_no_frequency_is_refused():
    with pytest.raises(UsageError, match="0 Hz or more and finite"):
        analyze(parse_netlist(RLC), gain_at_Hz=math.inf)


@pytest.fixture
def rlc_file(tmp_path):
    path = tmp_path / "rlc.cir"
    path.write_text(RLC)
    return str(path)


def test_command_line_gain_at_reaches_the_report_and_json(rlc_file, tmp_path, capsys):
    target = tmp_path / "r.json"
    assert cli.main(["analyze", rlc_file, "--gain-at", "10k", "--json", str(target)]) == 0
    out = capsys.readouterr().out
    assert "gain referred to" in out and "at 10 kHz" in out
    data = json.loads(target.read_text())
    assert data["pass_band_gain_Hz"] == 10e3
    assert data["pass_band_gain"] == pytest.approx(_rlc_gain(10e3), rel=1e-9)
    assert data["input_referred_rms"] == pytest.approx(data["total_rms_V"] / _rlc_gain(10e3), rel=1e-9)


def test_command_line_gain_at_refuses_a_word(rlc_file, capsys):
    assert cli.main(["analyze", rlc_file, "--gain-at", "middle"]) != 0
    assert "--gain-at" in capsys.readouterr().err


def test_csv_input_referred_column_is_the_density_over_the_gain(rlc_file, tmp_path):
    target = tmp_path / "r.csv"
    assert cli.main(["analyze", rlc_file, "--csv", str(target)]) == 0
    rows = list(csv.reader(io.StringIO(target.read_text())))
    column = rows[0].index("input_referred_V_per_rtHz")
    table = np.array(rows[1:], dtype=float)
    expected = table[:, 1] / np.array([_rlc_gain(f) for f in table[:, 0]])
    np.testing.assert_allclose(table[:, column], expected, rtol=1e-9)

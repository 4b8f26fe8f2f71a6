"""The README's Python example works as written (on the shipped circuit)."""

import math
from pathlib import Path

import pytest
from scipy import constants

import netnoise

CIRCUITS = Path(__file__).resolve().parent.parent / "circuits"


def test_readme_python_example(tmp_path):
    circuit = netnoise.load_netlist(CIRCUITS / "sample_hold.cir")
    result = netnoise.analyze(circuit, band=(0.0, math.inf))
    # kT/C for the 2 pF hold capacitor at the netlist's 27 °C (equipartition;
    # Razavi, Design of Analog CMOS Integrated Circuits, noise chapter).
    assert result.total_rms == pytest.approx(math.sqrt(constants.Boltzmann * 300.15 / 2e-12), rel=1e-9)
    assert result.total_rms == pytest.approx(45.5e-6, rel=1e-3)
    assert result.source_density.shape == (len(result.source_names), result.frequency_Hz.size)
    assert result.contributions[0].element == "Ron"
    assert "Ron" in netnoise.format_report(result)
    netnoise.write_json(result, tmp_path / "hold.json")
    assert (tmp_path / "hold.json").stat().st_size > 0

"""Large circuits' densities from a checked reduced model (issue 16, item 6): a finite band with
many grid points, and the spectrum shown beside low-rank totals, take the low-rank Gramian's
reduced model in place of a sparse solve per frequency once it agrees with full solves at a few
frequencies; otherwise the full solves stay.  Correctness only (speed: benchmarks/run.py)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from circuit_builders import rc_grid_lines
from scipy import constants

import netnoise
from netnoise.engine import reduced
from netnoise.engine.options import SolverOptions

T27 = 300.15


def mesh(nx: int, ny: int) -> str:
    """An invented RC grid with grounded capacitors of five values (circuit_builders), one
    resistor to ground at the first corner."""
    return "\n".join([f"mesh {nx}x{ny}", *rc_grid_lines(nx, ny), "Rg m0_0 0 1meg", ".end"]) + "\n"


NX = NY = 30  # 900 unknowns: above the QZ limit (600); the symmetric limit is set to 0 below
C_OUT = (1 + ((NX - 1) * NY + NY - 1) % 5) * 1e-13
OUT = f"m{NX - 1}_{NY - 1}"
LARGE = SolverOptions(symmetric_limit=0)
FULL = SolverOptions(symmetric_limit=0, lowrank=False)


@pytest.fixture(scope="module")
def circuit():
    return netnoise.parse_netlist(mesh(NX, NY))


def test_a_wide_finite_band_meets_equipartition_from_the_model(circuit):
    # 0 Hz .. 1e16 Hz holds all but ~1e-7 of the noise of a node of a passive RC network, whose
    # variance is kT/C_node with grounded capacitors only (equipartition; Reif, common practice)
    result = netnoise.analyze(circuit, output=OUT, band=(0.0, 1e16), temperature_celsius=27.0, options=LARGE)
    assert result.total_method == "reduced-model"
    assert any(note.code == "reduced-model" for note in result.notes)
    assert result.total_variance == pytest.approx(constants.Boltzmann * T27 / C_OUT, rel=1e-5)
    assert 0 < result.total_tolerance < 1e-5


def test_a_finite_band_matches_the_full_solves_source_by_source(circuit):
    band = (1e3, 1e10)  # 7 decades at 20 points: above the 100 points where a model pays
    reduced = netnoise.analyze(circuit, output=OUT, band=band, options=LARGE)
    full = netnoise.analyze(circuit, output=OUT, band=band, options=FULL)
    assert (reduced.total_method, full.total_method) == ("reduced-model", "quadrature")
    # the reference: a sparse solve per frequency (the engine's own path, held against closed
    # forms throughout the suite); every source within 1e-6 of the total (the model's check)
    worst = np.max(np.abs(reduced.source_variance - full.source_variance)) / full.total_variance
    assert worst < 1e-6
    assert reduced.total_variance == pytest.approx(full.total_variance, rel=1e-6)


def test_a_narrow_band_or_a_small_circuit_keeps_the_full_solves(circuit):
    narrow = netnoise.analyze(circuit, output=OUT, band=(1e6, 1e7), options=LARGE)  # 20 points
    assert narrow.total_method == "quadrature"
    small = netnoise.parse_netlist(mesh(5, 5))
    assert netnoise.analyze(small, output="m4_4", band=(1e3, 1e10)).total_method == "quadrature"


def test_a_model_that_disagrees_is_not_used(circuit, monkeypatch):
    monkeypatch.setattr(reduced, "MODEL_MAX_ERROR", 0.0)  # no model can pass: the full solves stay
    band = (1e3, 1e10)
    kept = netnoise.analyze(circuit, output=OUT, band=band, options=LARGE)
    full = netnoise.analyze(circuit, output=OUT, band=band, options=FULL)
    assert kept.total_method == "quadrature" and not any(n.code == "reduced-model" for n in kept.notes)
    np.testing.assert_array_equal(kept.source_variance, full.source_variance)


def test_the_spectrum_beside_low_rank_totals_is_the_full_circuits(circuit):
    result = netnoise.analyze(circuit, output=OUT, band=(0.0, math.inf), temperature_celsius=27.0, options=LARGE)
    assert result.total_method == "low-rank"
    assert any(note.code == "reduced-model" for note in result.notes)
    # reference: the full circuit's density at the same frequencies, one sparse solve each
    full_density = netnoise.output_density_function(circuit, output=OUT, temperature_celsius=27.0)
    f = result.frequency_Hz[:: max(1, result.frequency_Hz.size // 12)]
    shown = np.interp(f, result.frequency_Hz, result.output_density)
    np.testing.assert_allclose(shown, full_density(f), rtol=1e-6)
    assert result.total_variance == pytest.approx(constants.Boltzmann * T27 / C_OUT, rel=1e-7)  # kT/C


def test_from_a_low_edge_to_infinity_through_the_model(circuit):
    band = (1e6, math.inf)
    reduced = netnoise.analyze(circuit, output=OUT, band=band, options=LARGE)
    full = netnoise.analyze(circuit, output=OUT, band=band, options=FULL)
    assert (reduced.total_method, full.total_method) == ("reduced-model", "quadrature")
    assert reduced.total_variance == pytest.approx(full.total_variance, rel=1e-6)

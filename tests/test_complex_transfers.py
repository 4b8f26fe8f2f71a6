"""Complex transfers on one factorisation per frequency, in either direction."""

from __future__ import annotations

import math

import numpy as np
import pytest
from circuit_builders import C, I, L, R, butterworth_ladder, circuit

from netnoise.engine.factor import factor, responses, transfers
from netnoise.engine.mna import assemble
from netnoise.engine.noise_sources import collect_noise_sources
from netnoise.engine.options import SolverOptions
from netnoise.engine.transfer import transfer_power
from netnoise.errors import CircuitError, UsageError


def _rc():
    return circuit(I("I1", "0", "a"), R("R1", "a", "0", 1e3), C("C1", "a", "0", 1e-9))


@pytest.mark.parametrize("method", [None, "dense", "sparse"])
def test_one_pole_transimpedance_with_its_phase(method):
    # A current into R ∥ C: Z(f) = R / (1 + j2πfRC) (complex impedance, common practice).
    system = assemble(_rc())
    f = np.array([10.0, 159.15e3, 10e6])
    out = system.node_pair_vector("a", "0")
    b, _ = system.excitation_vector("I1")
    h = transfers(system, out, b, f, SolverOptions(method=method))[:, 0, 0]
    expected = 1e3 / (1 + 2j * np.pi * f * 1e3 * 1e-9)
    np.testing.assert_allclose(h, expected, rtol=1e-12)


def test_adjoint_and_forward_agree_and_match_a_direct_solve():
    # cᵀ(Y⁻¹b) = (Y⁻ᵀc)ᵀb (the adjoint identity, Rohrer et al. 1971), checked
    # against numpy's dense solve of the same complex matrix (reference library).
    system = assemble(butterworth_ladder(5, 1e3, 1e3)[0])
    n = system.size
    rng = np.random.default_rng(3)
    b = rng.standard_normal((n, 3))
    c = rng.standard_normal((n, 2))
    for fi in (1.0, 1e3, 3e5):
        y = (system.G + 2j * np.pi * fi * system.C).toarray()
        lu = factor(system, fi)
        forward = lu.solve(b)
        adjoint = lu.solve(c, adjoint=True)
        np.testing.assert_allclose(forward, np.linalg.solve(y, b), rtol=1e-10, atol=1e-14 * np.abs(forward).max())
        np.testing.assert_allclose(adjoint, np.linalg.solve(y.T, c), rtol=1e-10, atol=1e-14 * np.abs(adjoint).max())
        np.testing.assert_allclose(c.T @ forward, adjoint.T @ b, rtol=1e-10)
    x = responses(system, b, [1e3])[0]
    np.testing.assert_allclose(x, factor(system, 1e3).solve(b), rtol=1e-13)


def test_power_of_the_complex_transfer_is_the_engines_power_transfer():
    ckt, last = butterworth_ladder(5, 50.0, 10e3)
    system = assemble(ckt)
    sources = collect_noise_sources(system, 300.0)
    out = system.node_pair_vector(last, "0")
    f = np.logspace(1, 6, 11)
    power, _ = transfer_power(system, out, sources.injection, None, f)
    h = transfers(system, out, sources.injection, f)[:, 0, :]  # (F, K)
    np.testing.assert_allclose(np.abs(h.T) ** 2, power, rtol=1e-10)


def test_a_lossless_tank_at_resonance_is_refused_naming_the_frequency():
    # L = 1 mH, C = 1 µF resonate at 1/(2π√(LC)) = 5032.9 Hz (common practice)
    tank = circuit(R("R1", "a", "0", 1.0), L("L2", "b", "0", 1e-3), C("C2", "b", "0", 1e-6))  # b: a bare tank
    f0 = 1 / (2 * math.pi * math.sqrt(1e-3 * 1e-6))
    with pytest.raises(CircuitError, match="singular"):
        factor(assemble(tank), f0)


def test_solver_options_are_checked():
    with pytest.raises(UsageError, match="solver method"):
        SolverOptions(method="fast")


def test_the_integrators_tolerance_is_an_option():
    # a single RC pole over a band: 4kTR·fc·(atan(f2/fc) - atan(f1/fc)) (Johnson 1928; Nyquist 1928);
    # a loose tolerance stops earlier, a tight one lands within it
    from scipy import constants

    import netnoise

    circuit = netnoise.parse_netlist("rc\nR1 a 0 1k\nC1 a 0 1n\n")
    fc = 1 / (2 * math.pi * 1e3 * 1e-9)
    exact = 4 * constants.Boltzmann * 300.15 * 1e3 * fc * (math.atan(1e7 / fc) - math.atan(10.0 / fc))
    loose = netnoise.analyze(
        circuit, output="a", band=(10.0, 1e7), points_per_decade=2, options=SolverOptions(rtol=1e-2)
    )
    tight = netnoise.analyze(
        circuit, output="a", band=(10.0, 1e7), points_per_decade=2, options=SolverOptions(rtol=1e-9)
    )
    assert tight.total_variance == pytest.approx(exact, rel=1e-8)
    assert loose.integration_rel_error <= 1e-2 and tight.integration_rel_error <= 1e-9

"""Numerical accuracy of the engine (issue 4 "Numbers", issue 5): extreme
element values and frequencies against an extended-precision reference,
singular and near-singular frequencies refused, band integration of one RC
pole, and the three solver paths agreeing."""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest

import netnoise
from netnoise.engine import transfer
from netnoise.engine.mna import assemble
from netnoise.engine.options import SolverOptions
from netnoise.errors import CircuitError

K_B = 1.380649e-23  # J/K, exact SI value (2019 redefinition)

# 1 fF .. 1 TΩ in one ladder: every section alternates extreme values
EXTREME = """extreme ladder
Vin in 0 AC 1
R1 in n1 1T
C1 n1 0 1f
R2 n1 n2 1
C2 n2 0 1u
R3 n2 n3 1meg
C3 n3 0 1p
R4 n3 n4 10
C4 n4 0 1n
R5 n4 n5 1T
C5 n5 0 1f
R6 n5 n6 100
C6 n6 n5 10u
R7 n6 0 1g
.end
"""


def _mp_adjoint(system, selector, f):
    """Y(f)ᵀ z = c solved with mpmath at 50 digits (extended-precision reference)."""
    mpmath.mp.dps = 50
    g, c = system.G.toarray(), system.C.toarray()
    n = system.size
    s = 2j * mpmath.pi * mpmath.mpf(f)
    y = mpmath.matrix(n, n)
    for i in range(n):
        for j in range(n):
            y[i, j] = mpmath.mpf(g[j, i]) + s * mpmath.mpf(c[j, i])
    z = mpmath.lu_solve(y, mpmath.matrix([mpmath.mpf(x) for x in selector]))
    return np.array([complex(z[i]) for i in range(n)])


@pytest.fixture(params=["dense", "banded", "sparse"])
def method(request):
    return request.param


@pytest.mark.parametrize("f", [1e-3, 1.0, 1e6, 1e11])
def test_extreme_ladder_matches_extended_precision(method, f):
    system = assemble(netnoise.parse_netlist(EXTREME))
    selector = system.node_pair_vector("n6", "0")
    options = SolverOptions(method=method)
    z = transfer.adjoint_solutions(system, selector, np.array([f]), options)[0]
    assert transfer.solver_for(system, options).method == method
    ref = _mp_adjoint(system, selector, f)
    # Y is ill-conditioned (2-norm condition 4e9 .. 4e10, numpy.linalg.cond), so the attainable
    # accuracy is about cond·eps ~ 1e-6 of the largest entry; measured: 1e-9 .. 1.5e-7 on the
    # equilibrated banded/sparse paths, 1e-9 .. 1.3e-6 on the dense one
    scale = np.abs(ref).max()
    for a, b in [("n1", "in"), ("n2", "n1"), ("n3", "n2"), ("n5", "n4"), ("n6", "0")]:
        pa, pb = system.node_row(a), system.node_row(b)
        got = z[pa] - (z[pb] if pb >= 0 else 0)
        want = ref[pa] - (ref[pb] if pb >= 0 else 0)
        assert abs(got - want) <= 3e-6 * scale, (a, b, got, want)
    np.testing.assert_allclose(z, ref, rtol=0, atol=3e-6 * scale)


def test_extreme_ladder_totals_are_finite_and_agree_across_paths():
    circuit = netnoise.parse_netlist(EXTREME)
    results = {}
    for m in ("dense", "banded", "sparse"):
        results[m] = netnoise.analyze(
            circuit,
            output="n6",
            input_source="Vin",
            band=(1e-3, 1e11),
            points_per_decade=10,
            options=SolverOptions(method=m),
        )
    base = np.asarray(results["dense"].source_variance)
    assert np.all(np.isfinite(base)) and base.sum() > 0
    for m in ("banded", "sparse"):
        np.testing.assert_allclose(results[m].source_variance, base, rtol=1e-5, atol=1e-9 * base.sum())


# a lossless tank seen through a buffer: det Y = -(s²LC + 1) vanishes at f0 = 1/(2π√(LC)) = 1 Hz
TANK = f"""lossless tank at 1 Hz
L1 x 0 {1 / (4 * math.pi**2)!r}
C1 x 0 1
E1 out 0 x 0 1
R1 out y 1k
Cy y 0 1n
Ry y 0 1meg
.end
"""


@pytest.mark.parametrize("forced", [None, "banded", "sparse"])
def test_lossless_resonance_on_a_grid_frequency_is_refused_naming_it(forced):
    circuit = netnoise.parse_netlist(TANK)
    # 0.1 .. 10 Hz at 20 points/decade: the grid's middle point is 1 Hz (to rounding)
    with pytest.raises(CircuitError) as info:
        netnoise.analyze(
            circuit, output="y", band=(0.1, 10.0), points_per_decade=20, options=SolverOptions(method=forced)
        )
    message = str(info.value)
    assert "singular" in message and "at 1 Hz" in message
    assert "add a realistic loss" in message


def test_near_resonance_off_the_grid_is_solved(monkeypatch):
    # the same tank between grid points (0.3 .. 3 Hz at 7/decade avoids 1 Hz): finite, not refused
    circuit = netnoise.parse_netlist(TANK)
    result = netnoise.analyze(circuit, output="y", band=(0.3, 3.1), points_per_decade=7)
    assert np.all(np.isfinite(result.source_density))


@pytest.mark.parametrize("points", [5, 20, 40])
@pytest.mark.parametrize("band", [(10.0, 10e6), (0.0, 1e9), (1e5, 2e5)])
def test_single_rc_pole_band_integral(points, band):
    # v² = 4kTR/(1+(f/fc)²) at the node of R ∥ C (Johnson 1928; Nyquist 1928), so
    # ∫ = 4kTR·fc·(atan(f2/fc) - atan(f1/fc)); the floor the engine promises is 0.1 %,
    # the integrator's tolerance (1e-6 on its error estimate) holds it near 1e-6
    r, c, t = 1e3, 1e-9, 300.15
    circuit = netnoise.parse_netlist(f"rc\nR1 out 0 {r:g}\nC1 out 0 {c:g}\n.temp 27\n.end\n")
    result = netnoise.analyze(circuit, output="out", band=band, points_per_decade=points)
    fc = 1 / (2 * math.pi * r * c)
    exact = 4 * K_B * t * r * fc * (math.atan(band[1] / fc) - math.atan(band[0] / fc))
    assert result.total_rms**2 == pytest.approx(exact, rel=1e-5)


def test_paths_agree_on_a_network_with_branches(monkeypatch):
    text = """network with sources and an inductor
Vin in 0 AC 1
R1 in a 1k
C1 a 0 1n
L1 a b 1m
R2 b 0 50
E1 c 0 b 0 10
R3 c d 2k
C2 d 0 10p
C3 d a 1p
R4 d 0 1meg
.end
"""
    circuit = netnoise.parse_netlist(text)
    system = assemble(circuit)
    selector = system.node_pair_vector("d", "0")
    f = np.logspace(0, 9, 37)
    out = {}
    for m in ("dense", "banded", "sparse"):
        out[m] = transfer.adjoint_solutions(system, selector, f, SolverOptions(method=m))
        if m == "banded":  # C3 and the controlled source widen the band: general zgbsv, not gtsv
            assert transfer.solver_for(system, SolverOptions(method=m))._gtsv is None
    for m in ("banded", "sparse"):
        np.testing.assert_allclose(out[m], out["dense"], rtol=1e-10, atol=1e-14 * np.abs(out["dense"]).max())


def test_tridiagonal_and_general_band_solvers_agree(monkeypatch):
    # the same ladder solved by zgtsv (tridiagonal) and, with one bridging capacitor added
    # (bandwidth 2), by zgbsv; both against the dense path at the same frequencies
    lines = ["ladder", "Vin in 0 AC 1"] + [
        f"R{i} {'in' if i == 1 else f'n{i - 1}'} n{i} {100 + 7 * i}\nC{i} n{i} 0 {i}p" for i in range(1, 60)
    ]
    f = np.logspace(0, 10, 21)
    small_dense = SolverOptions(dense_limit=10)
    for extra, tridiagonal in (([], True), (["Cb n10 n12 3p"], False)):
        system = assemble(netnoise.parse_netlist("\n".join(lines + extra + [".end"]) + "\n"))
        selector = system.node_pair_vector("n59", "0")
        solver = transfer.solver_for(system, small_dense)
        assert solver.method == "banded" and (solver._gtsv is not None) == tridiagonal
        z = transfer.adjoint_solutions(system, selector, f, small_dense)
        ref = transfer.adjoint_solutions(system, selector, f, SolverOptions(method="dense"))
        np.testing.assert_allclose(z, ref, rtol=1e-10, atol=1e-13 * np.abs(ref).max())

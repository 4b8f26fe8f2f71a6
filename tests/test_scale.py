"""Large-circuit behaviour (issue 5), correctness only (speed is measured in
benchmarks/run.py, never in a test): the solver path chosen by size, pattern
and ordering reused, the infinite-band total beyond the exact method's limit
checked against the exact method, and memory refused up front."""

from __future__ import annotations

import math

import numpy as np
import pytest
from circuit_builders import rc_grid_lines

import netnoise
from netnoise.engine import resources, transfer
from netnoise.engine.mna import assemble
from netnoise.engine.options import SolverOptions
from netnoise.errors import CircuitError


def ladder(sections: int, r: str = "100", c: str = "1p") -> str:
    lines = [f"ladder {sections}", "Vin in 0 AC 1"]
    prev = "in"
    for i in range(1, sections + 1):
        lines += [f"R{i} {prev} n{i} {r}", f"C{i} n{i} 0 {c}"]
        prev = f"n{i}"
    return "\n".join(lines + [".end"]) + "\n"


def mesh(nx: int, ny: int) -> str:
    lines = [f"mesh {nx}x{ny}", *rc_grid_lines(nx, ny), "Cf m0_0 m1_1 1p", "Rg m0_0 0 1meg", ".end"]
    return "\n".join(lines) + "\n"


def test_paths_by_size_and_structure():
    small = assemble(netnoise.parse_netlist(ladder(10)))
    long = assemble(netnoise.parse_netlist(ladder(400)))
    grid = assemble(netnoise.parse_netlist(mesh(40, 40)))
    assert transfer.solver_for(small).method == "dense"
    assert transfer.solver_for(long).method == "banded"
    assert transfer.solver_for(long)._gtsv is not None  # a ladder is tridiagonal: LAPACK gtsv
    assert transfer.solver_for(grid).method == "sparse"
    for system in (long, grid):  # no dense matrix is formed for a large circuit
        assert not hasattr(transfer.solver_for(system), "_gt")


def test_sparse_ordering_computed_once_and_reused():
    system = assemble(netnoise.parse_netlist(mesh(40, 40)))
    selector = system.node_pair_vector("m39_39", "0")
    solver = transfer.solver_for(system)
    z1 = transfer.adjoint_solutions(system, selector, np.array([1e3, 1e6]))
    order = solver._superlu_order
    assert order is not None
    z2 = transfer.adjoint_solutions(system, selector, np.array([1e6, 1e3]))
    assert transfer.solver_for(system) is solver and solver._superlu_order is order
    np.testing.assert_allclose(z2[::-1], z1, rtol=1e-9)  # first frequency pivots on the unpermuted pattern


@pytest.mark.parametrize("lowrank,method", [(False, "quadrature"), (True, "low-rank")])
@pytest.mark.parametrize("text,out", [(ladder(60), "n60"), (mesh(8, 8), "m7_7")])
def test_beyond_the_exact_limit_matches_the_exact_method(monkeypatch, text, out, lowrank, method):
    circuit = netnoise.parse_netlist(text)
    exact = netnoise.analyze(circuit, output=out, band=(0.0, math.inf), options=SolverOptions(symmetric_limit=0))
    assert exact.total_method == "exact-qz"  # the reference: QZ and a Lyapunov solve
    # beyond both exact limits: the low-rank Gramian, or quadrature + analytic tail
    options = SolverOptions(exact_limit=5, symmetric_limit=0, lowrank=lowrank)
    approx = netnoise.analyze(circuit, output=out, band=(0.0, math.inf), options=options)
    assert approx.total_method == method
    assert approx.total_rms**2 == pytest.approx(exact.total_rms**2, rel=1e-5)
    v_exact, v_approx = np.asarray(exact.source_variance), np.asarray(approx.source_variance)
    big = v_exact > 1e-6 * v_exact.max()
    np.testing.assert_allclose(v_approx[big], v_exact[big], rtol=1e-4)


def test_beyond_the_exact_limit_equipartition():
    # kT/C at the node of one RC, here through a 1600-unknown ladder whose last capacitor
    # dominates: every node of a passive RC network at one temperature has variance kT·[C⁻¹]_ii
    # (equipartition; any statistical-mechanics text).  With equal C to ground and no floating
    # capacitors [C⁻¹]_ii = 1/C.
    sections = 1600
    circuit = netnoise.parse_netlist(ladder(sections).replace("Vin in 0 AC 1", "Rin in 0 1"))
    kT_over_C = 1.380649e-23 * 300.15 / 1e-12
    # the quadrature path (the low-rank Gramian's own kT/C checks are in test_gramian.py; on this
    # ladder, poles seven decades apart, its shares do not settle within its basis and it hands over)
    options = SolverOptions(symmetric_limit=0)
    result = netnoise.analyze(
        circuit, output=f"n{sections}", band=(0.0, math.inf), temperature_celsius=27.0, options=options
    )
    assert result.total_method == "quadrature"
    assert any("low-rank method did not apply" in note.text for note in result.notes)
    assert result.total_rms**2 == pytest.approx(kT_over_C, rel=1e-4)


def test_memory_is_refused_up_front_with_an_estimate():
    circuit = netnoise.parse_netlist(ladder(3000))
    resources.set_available_memory(4 * 2**20)
    try:
        with pytest.raises(CircuitError) as info:
            netnoise.analyze(circuit, output="n3000", band=(1.0, 1e9), points_per_decade=40)
    finally:
        resources.set_available_memory(None)
    message = str(info.value)
    assert "memory" in message and "available" in message and "MiB" in message

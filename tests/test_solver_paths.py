"""The adjoint solver's path chosen by structure, not size alone (issue 16).

Correctness only: which path a circuit takes, and that every path gives the
same transfers as a plain reference solve.  The timings the choice rests on
are measured in benchmarks/run.py (figure ``paths``), never here."""

from __future__ import annotations

import numpy as np
import pytest
from circuit_builders import rc_grid_lines

import netnoise
from netnoise.engine import transfer
from netnoise.engine.mna import assemble
from netnoise.engine.options import SolverOptions


def small_network() -> str:
    """22 unknowns: an RC chain of 20 nodes with cross resistors, a source and its branch."""
    lines = ["small network", "Vin in 0 AC 1", "Rs in n1 1k"]
    lines += [f"R{i} n{i} n{i + 1} {1000 + 97 * i}" for i in range(1, 20)]
    lines += [f"C{i} n{i} 0 {1 + i % 5}p" for i in range(1, 21)]
    lines += [f"Rx{i} n{i} n{(7 * i) % 20 + 1} {10_000 + 31 * i}" for i in range(1, 10) if (7 * i) % 20 + 1 != i]
    return "\n".join(lines + ["Rl n20 0 100k", ".end"]) + "\n"


def ladder(sections: int) -> str:
    lines = [f"ladder {sections}", "Vin in 0 AC 1"]
    prev = "in"
    for i in range(1, sections + 1):
        lines += [f"R{i} {prev} n{i} {100 + 3 * (i % 7)}", f"C{i} n{i} 0 {1 + i % 3}p"]
        prev = f"n{i}"
    return "\n".join(lines + [".end"]) + "\n"


def mesh(nx: int, ny: int) -> str:
    # a leak at every node keeps it well conditioned
    return "\n".join([f"mesh {nx}x{ny}", *rc_grid_lines(nx, ny, leak="100k"), ".end"]) + "\n"


def coupled(nodes: int) -> str:
    """Every node joined to every other by a resistor: a dense nodal matrix."""
    lines = [f"all coupled {nodes}"]
    k = 0
    for i in range(1, nodes + 1):
        lines += [f"C{i} d{i} 0 {1 + i % 7}p", f"Rg{i} d{i} 0 1k"]
        for j in range(i + 1, nodes + 1):
            k += 1
            lines.append(f"R{k} d{i} d{j} {1000 + 13 * (k % 17)}")
    return "\n".join(lines + [".end"]) + "\n"


def scattered(nodes: int) -> str:
    """A chain with cross resistors between far-apart nodes: sparse, but no narrow band."""
    rng = np.random.default_rng(3)
    lines = [f"scattered {nodes}", "Rg x1 0 1k"]
    lines += [f"R{i} x{i} x{i + 1} {rng.uniform(100, 1e4):.4g}" for i in range(1, nodes)]
    lines += [f"C{i} x{i} 0 {rng.uniform(1e-12, 1e-9):.4g}" for i in range(1, nodes + 1)]
    for j in range(nodes // 2):
        a, b = rng.choice(np.arange(1, nodes + 1), size=2, replace=False)
        lines.append(f"Rx{j} x{a} x{b} {rng.uniform(1e3, 1e6):.4g}")
    return "\n".join(lines + [".end"]) + "\n"


CIRCUITS = {
    "small network": (small_network(), 22, "dense"),
    "ladder": (ladder(148), 150, "banded"),
    "mesh": (mesh(10, 15), 150, "banded"),
    "every node coupled": (coupled(150), 150, "dense"),
    "scattered": (scattered(150), 150, "sparse"),
}


@pytest.fixture(scope="module")
def systems():
    return {name: assemble(netnoise.parse_netlist(text)) for name, (text, _, _) in CIRCUITS.items()}


@pytest.mark.parametrize("name", list(CIRCUITS))
def test_the_path_follows_the_structure(systems, name):
    _, size, path = CIRCUITS[name]
    system = systems[name]
    assert system.size == size
    assert transfer.AdjointSolver(system).method == path


@pytest.mark.parametrize("name", list(CIRCUITS))
def test_every_path_agrees_with_a_plain_solve(systems, name):
    # reference: numpy.linalg.solve of Y(f)ᵀ z = c on the unscaled dense matrix (general-purpose
    # reference computation); every path, forced, within 1e-12 of it relative to ‖z‖ at each
    # frequency.  The circuits are conditioned so that 1e-12 is a fair demand of any stable solver
    # (relative error ~ condition number × 1.1e-16, common practice: Higham, "Accuracy and
    # Stability of Numerical Algorithms", ch. 7 and 9)
    system = systems[name]
    g, c = system.G.toarray(), system.C.toarray()
    selector = np.zeros(system.size)
    selector[-1] = 1.0
    f = np.logspace(1, 9, 9)
    assert max(np.linalg.cond(g + 2j * np.pi * fi * c) for fi in f) < 1e6
    ref = np.stack([np.linalg.solve((g + 2j * np.pi * fi * c).T, selector + 0j) for fi in f])
    for method in ("dense", "banded", "sparse"):
        z = transfer.AdjointSolver(system, SolverOptions(method=method)).solve(selector, f)
        error = np.linalg.norm(z - ref, axis=1) / np.linalg.norm(ref, axis=1)
        assert error.max() <= 1e-12, (method, error.max())


def test_dense_limit_bounds_the_dense_path(systems):
    # dense_limit is the largest size the dense path may be chosen at: 0 never, below 40 always
    small, full = systems["small network"], systems["every node coupled"]
    assert transfer.AdjointSolver(small, SolverOptions(dense_limit=0)).method != "dense"
    assert transfer.AdjointSolver(small, SolverOptions(dense_limit=22)).method == "dense"
    assert transfer.AdjointSolver(full, SolverOptions(dense_limit=149)).method != "dense"
    assert transfer.AdjointSolver(full, SolverOptions(dense_limit=0, method="dense")).method == "dense"


@pytest.mark.parametrize("method", ["dense", "banded", "sparse"])
def test_a_forced_path_is_taken_whatever_the_structure(systems, method):
    for system in systems.values():
        assert transfer.AdjointSolver(system, SolverOptions(method=method)).method == method


def test_a_small_circuit_is_not_ordered():
    # below 40 unknowns the structure is not analysed: no bandwidth, no graph ordering
    solver = transfer.AdjointSolver(assemble(netnoise.parse_netlist(small_network())))
    assert solver.method == "dense" and not hasattr(solver, "bandwidth")


@pytest.mark.parametrize("name", list(CIRCUITS))
def test_one_frequency_factorisations_follow_the_same_choice(systems, name):
    # engine/factor.py (complex transfers, sensitivities) factors densely exactly where the adjoint
    # solver would take its dense path; its transfers against numpy.linalg.solve (general-purpose
    # reference computation), within 1e-12 relative to their largest at each frequency
    from netnoise.engine.factor import factor, transfers

    system = systems[name]
    dense = transfer.AdjointSolver(system).method == "dense"
    assert factor(system, 1e5)._dense == dense
    g, c = system.G.toarray(), system.C.toarray()
    outputs = np.zeros((system.size, 1))
    outputs[-1, 0] = 1.0
    injections = np.eye(system.size)[:, :5]
    f = np.array([1e2, 1e5, 1e8])
    got = transfers(system, outputs, injections, f)[:, 0, :]  # (F, 5)
    ref = np.stack([np.linalg.solve((g + 2j * np.pi * fi * c).T, outputs[:, 0] + 0j)[:5] for fi in f])
    scale = np.abs(ref).max(axis=1, keepdims=True)
    assert (np.abs(got - ref) / scale).max() <= 1e-12


def test_sensitivities_agree_whichever_path_solves_them():
    # the sensitivity study's forward solves follow the path choice: a 60-section ladder is banded
    # (one factorisation per frequency there), and forced dense gives the same sensitivities;
    # reference: the dense batched path, to 1e-8 relative (both are exact adjoint formulas, Director
    # and Rohrer 1969; they differ by rounding only)
    from netnoise.studies.sensitivity import sensitivities

    text = ladder(59).replace(".end", ".noise v(n59) Vin dec 10 1k 1g\n.end")
    circuit = netnoise.parse_netlist(text)
    chosen = netnoise.prepare(circuit)
    assert transfer.solver_for(chosen._problem.system, chosen._problem.options).method == "banded"
    forced = netnoise.prepare(circuit, options=SolverOptions(method="dense"))
    got = {s.element: s.rms_pct_per_pct for s in sensitivities(chosen, speed=False)}
    ref = {s.element: s.rms_pct_per_pct for s in sensitivities(forced, speed=False)}
    assert got.keys() == ref.keys()
    for name, value in ref.items():
        assert got[name] == pytest.approx(value, rel=1e-8, abs=0), name

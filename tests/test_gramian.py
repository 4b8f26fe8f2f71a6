"""The low-rank Gramian total to infinite bandwidth (engine/gramian.py, issue 16): every source's
variance against the dense exact path (QZ + Lyapunov, engine/total_variance.py), against a dense
scipy.linalg.eigh reference, and against kT/C; and its refusals.  Correctness only: its speed is
measured in benchmarks/run.py (figure ``lowrank``)."""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest
import scipy.linalg as la

import netnoise
from netnoise.constants import BOLTZMANN
from netnoise.engine.gramian import LowRankUnsuitable, lowrank_model, lowrank_totals
from netnoise.engine.mna import assemble
from netnoise.engine.noise_sources import collect_noise_sources
from netnoise.engine.total_variance import infinite_band_totals

sys.path.insert(0, str(Path(__file__).parent.parent / "benchmarks"))
import generators as gen  # noqa: E402

T = 300.15  # K, the analysis default of 27 °C


def problem(text: str, out: str):
    """G, C, selector, injection columns and white densities, built as engine/analysis.py's
    _Problem builds them."""
    system = assemble(netnoise.parse_netlist(text))
    selector = system.node_pair_vector(out, "0")
    sources = collect_noise_sources(system, T, None)
    return system.G, system.C, selector, sources.injection, np.asarray(sources.white_density)


def exact(G, C, selector, B, density) -> np.ndarray:
    return infinite_band_totals(G.toarray(), C.toarray(), selector, B.toarray(), density).variance


def check_shares(found: np.ndarray, reference: np.ndarray, share: float, big_rel: float) -> None:
    """Every source's variance within ``share`` of the total, and the sources carrying at least
    1e-3 of the largest within ``big_rel`` of their own value."""
    total = float(reference.sum())
    assert found.sum() == pytest.approx(total, rel=share)
    assert float(np.max(np.abs(found - reference))) <= share * total
    big = reference >= 1e-3 * reference.max()
    np.testing.assert_allclose(found[big], reference[big], rtol=big_rel, atol=0)


def random_rc(nodes: int, seed: int) -> str:
    """An invented random RC network: a chain backbone, random cross resistors, a capacitor from
    every node to ground and random coupling capacitors."""
    rng = np.random.default_rng(seed)
    lines = [f"random RC {nodes} seed {seed}", "Rg n1 0 10k"]
    for i in range(1, nodes):
        lines.append(f"R{i} n{i} n{i + 1} {rng.uniform(50, 50e3):.5g}")
    for i in range(1, nodes + 1):
        lines.append(f"C{i} n{i} 0 {10 ** rng.uniform(-13, -9):.5g}")
    for j in range(nodes // 2):
        a, b = rng.choice(np.arange(1, nodes + 1), size=2, replace=False)
        lines.append(f"Rx{j} n{a} n{b} {10 ** rng.uniform(2, 6):.5g}")
        lines.append(f"Cx{j} n{a} n{b} {10 ** rng.uniform(-14, -11):.5g}")
    lines.append(".end")
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize("nodes,seed", [(150, 1), (300, 2), (400, 3)])
def test_random_rc_networks_match_the_exact_path(nodes, seed):
    # reference: the dense exact path (QZ + Lyapunov) on the same matrices
    G, C, c, B, S = problem(random_rc(nodes, seed), f"n{nodes // 2}")
    found = lowrank_totals(G, C, c, B, S)
    assert found.tolerance == 1e-8 and found.rank <= nodes
    check_shares(found.variance, exact(G, C, c, B, S), 1e-8, 1e-6)


def test_rc_mesh_matches_the_exact_path():
    # reference: the dense exact path; a mesh with unequal resistors and capacitors (tests/test_scale.py)
    from test_scale import mesh

    G, C, c, B, S = problem(mesh(18, 20), "m17_19")
    check_shares(lowrank_totals(G, C, c, B, S).variance, exact(G, C, c, B, S), 1e-8, 1e-6)


def test_one_rc_is_kt_over_c():
    # kT/C: equipartition at the node of one RC (Johnson 1928, Nyquist 1928)
    G, C, c, B, S = problem("one RC\nR1 a 0 10k\nC1 a 0 1n\n.end\n", "a")
    found = lowrank_totals(G, C, c, B, S)
    assert found.variance.sum() == pytest.approx(BOLTZMANN * T / 1e-9, rel=1e-10)
    assert found.poles_Hz[0] == pytest.approx(1 / (2 * np.pi * 10e3 * 1e-9), rel=1e-10)  # 1/(2πRC)


def test_mesh_equipartition():
    # kT/C at a node of a passive RC network whose capacitors all go to ground (equipartition,
    # Nyquist 1928: every resistor at one temperature), here 2,500 nodes
    G, C, c, B, S = problem(gen.rc_mesh(50, 50), "m49_49")
    found = lowrank_totals(G, C, c, B, S)
    assert found.variance.sum() == pytest.approx(BOLTZMANN * T / 1e-13, rel=1e-8)


def test_mesh_against_dense_eigh():
    # reference: scipy.linalg.eigh of the 1,600-node mesh's nodal G (C = c·I), the variances as
    # the modal double sum (S_k/2)·Σ_ij c̃_i c̃_j b̃_ki b̃_kj / (λ_i + λ_j).  1,600 nodes rather
    # than 5,000 keeps this test's dense eigh near 10 s on the loaded machine; the benchmark
    # (figure "lowrank") checks 5,000
    nx = ny = 40
    G, C = gen.mesh_matrices(nx, ny)
    B, S, c = gen.mesh_noise_columns(nx, ny, temperature_K=T)  # 4kT/R per resistor (Johnson–Nyquist)
    cap = 1e-13
    lam, U = la.eigh(G.toarray() / cap)
    U = U / np.sqrt(cap)
    ct, bt = U.T @ c, U.T @ B.toarray()
    reference = 0.5 * S * np.einsum("ik,ik->k", bt, (np.outer(ct, ct) / (lam[:, None] + lam[None, :])) @ bt)
    check_shares(lowrank_totals(G, C, c, B, S).variance, reference, 1e-8, 1e-6)


AMPLIFIER = """invented non-inverting stage: a transconductor into a dominant pole, a unity buffer, feedback
Rs inp 0 1k
G1 0 p inp inn 1m
Rp p 0 100meg
Cp p 0 1.6n
E2 out 0 p 0 1
Rf out inn 10k
Rg inn 0 1k
Cf out inn 2p
Cl out 0 10p
Rl out 0 2k
.end
"""


def lossy_lc_ladder(sections: int) -> str:
    lines = ["invented lossy LC ladder", "Rs in 0 50"]
    prev = "in"
    for i in range(1, sections + 1):
        lines += [f"L{i} {prev} m{i} 1u", f"R{i} m{i} n{i} 2", f"C{i} n{i} 0 400p"]
        prev = f"n{i}"
    lines += [f"Rl {prev} 0 50", ".end"]
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize(
    "text,out",
    [
        (AMPLIFIER, "out"),
        ("invented RLC\nR1 a 0 50\nL1 a b 1u\nC1 b 0 1n\nR2 b 0 1k\n.end\n", "b"),
        (lossy_lc_ladder(5), "n5"),
        (lossy_lc_ladder(40), "n40"),  # lightly damped: complex poles, 40 inductor branch currents
        (gen.rc_ladder(200), "n200"),  # RC with a voltage source: a branch current, G indefinite
    ],
)
def test_general_circuits_match_the_exact_path(text, out):
    # reference: the dense exact path (QZ, the algebraic part decoupled, Lyapunov)
    G, C, c, B, S = problem(text, out)
    found = lowrank_totals(G, C, c, B, S)
    check_shares(found.variance, exact(G, C, c, B, S), 1e-8, 1e-6)


def test_source_with_no_roll_off_is_infinite():
    # a resistor straight across an output with no capacitance: its white noise is flat to any
    # frequency (common practice), as the exact path finds
    G, C, c, B, S = problem("no roll-off\nR1 a b 1k\nC1 a 0 1n\nR2 b 0 1k\n.end\n", "b")
    found = lowrank_totals(G, C, c, B, S)
    reference = exact(G, C, c, B, S)
    assert np.array_equal(np.isinf(found.variance), np.isinf(reference)) and np.isinf(found.variance).any()


def test_refusals():
    G, C, c, B, S = problem("resistors only\nR1 a 0 1k\nR2 a b 1k\nR3 b 0 1k\n.end\n", "b")
    with pytest.raises(LowRankUnsuitable, match="no capacitance"):
        lowrank_totals(G, C, c, B, S)
    G, C, c, B, S = problem(gen.rc_mesh(20, 20), "m19_19")
    with pytest.raises(LowRankUnsuitable, match="did not settle"):
        lowrank_totals(G, C, c, B, S, max_rank=3)
    unstable = AMPLIFIER.replace("G1 0 p inp inn 1m", "G1 0 p inn inp 1m")  # positive feedback
    G, C, c, B, S = problem(unstable, "out")
    with pytest.raises(LowRankUnsuitable, match="unstable"):
        lowrank_totals(G, C, c, B, S)
    with pytest.raises(ValueError, match="tol"):
        lowrank_totals(G, C, c, B, S, tol=0.0)


@pytest.mark.parametrize("bad", [0.0, 1.0, -1e-8])
def test_solver_option_lowrank_tol_is_checked(bad):
    from netnoise.engine.options import SolverOptions
    from netnoise.errors import UsageError

    assert SolverOptions().lowrank_tol == 1e-8
    with pytest.raises(UsageError, match="lowrank_tol"):
        SolverOptions(lowrank_tol=bad)


def test_reduced_band_one_rc_is_the_arctangent():
    # ∫ S·R²/(1 + (2πfRC)²) df from f1 to f2 = S·R/(2πC)·[atan(2πRC f)] (elementary integral):
    # the thermal current 4kT/R of R in parallel with C, 1 kHz .. 100 kHz around the 15.9 kHz pole
    from netnoise.engine.gramian import reduced_band_totals

    R, Cap = 10e3, 1e-9
    G, C, c, B, S = problem(f"one RC\nR1 a 0 {R:g}\nC1 a 0 {Cap:g}\n.end\n", "a")
    band = reduced_band_totals(G, C, c, B, S, 1e3, 1e5)
    x = 2 * np.pi * R * Cap
    expected = S[0] * R / (2 * np.pi * Cap) * (np.arctan(x * 1e5) - np.arctan(x * 1e3))
    assert band.values[0] == pytest.approx(expected, rel=1e-6)
    assert band.model_error <= 1e-12


@pytest.mark.parametrize("text,out", [(random_rc(300, 2), "n150"), (lossy_lc_ladder(40), "n40"), (AMPLIFIER, "out")])
def test_reduced_band_matches_full_solves(text, out):
    # reference: the same band integrator on dense np.linalg.solve transfers of the full circuit,
    # so the difference is the reduced model's alone
    from netnoise.engine.gramian import reduced_band_totals
    from netnoise.engine.integrate import integrate_band

    G, C, c, B, S = problem(text, out)
    model = lowrank_model(G, C, c, B, S)
    band = reduced_band_totals(G, C, c, B, S, 1e3, 1e8, model=model)
    assert band.totals is model[0]
    g, cap, b = G.toarray(), C.toarray(), B.toarray()

    def full(f):
        rows = np.empty((S.size, f.size))
        for i, fi in enumerate(f):
            h = np.linalg.solve((g + 2j * np.pi * fi * cap).T, c.astype(complex)) @ b
            rows[:, i] = (h.real**2 + h.imag**2) * S
        return rows

    reference = integrate_band(full, 1e3, 1e8, points_per_decade=20, groups=[slice(0, S.size)]).values
    assert band.model_error <= 1e-6
    assert float(np.max(np.abs(band.values - reference))) <= 1e-7 * float(reference.sum())


def test_reduced_band_refuses_a_model_off_by_more_than_asked():
    from netnoise.engine.gramian import reduced_band_totals

    G, C, c, B, S = problem(random_rc(150, 1), "n75")
    with pytest.raises(LowRankUnsuitable, match="differ from the full circuit"):
        reduced_band_totals(G, C, c, B, S, 1e3, 1e8, max_error=1e-300)

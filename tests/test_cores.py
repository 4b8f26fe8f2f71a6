"""Issue 16, items 3 and 4: one analysis solves each frequency once (its memo of adjoint
solves), and frequencies are solved on threads (``SolverOptions.jobs``).  Correctness only:
solve counts and bit-identical results; speed is measured in benchmarks/run.py (figure
``cores``), never here."""

from __future__ import annotations

import contextlib
import math

import numpy as np
import pytest
from circuit_builders import rc_grid_lines

import netnoise
from netnoise import cli
from netnoise.constants import BOLTZMANN
from netnoise.engine import analysis, transfer
from netnoise.engine.options import SolverOptions
from netnoise.errors import UsageError


def mesh(nx: int, ny: int, with_input: bool = True) -> str:
    """An invented RC grid (uneven resistors and capacitors), driven at one corner through
    a source resistor when ``with_input``; output at the opposite corner."""
    ends = ["Rs in m0_0 50", "Vin in 0 AC 1"] if with_input else ["Rg m0_0 0 1meg"]
    return "\n".join([f"grid {nx}x{ny}", *rc_grid_lines(nx, ny), *ends, ".end"]) + "\n"


def ladder(sections: int) -> str:
    lines = [f"ladder {sections}", "Vin in 0 AC 1"]
    prev = "in"
    for i in range(1, sections + 1):
        lines += [f"R{i} {prev} n{i} {100 + i % 7}", f"C{i} n{i} 0 {1 + i % 3}p"]
        prev = f"n{i}"
    return "\n".join(lines + [".end"]) + "\n"


@pytest.fixture
def solved(monkeypatch):
    """Every frequency passed to an adjoint solve, in order (the solver instrumented)."""
    seen: list[float] = []
    plain = transfer.AdjointSolver.solve

    def counting(self, selector, frequency_Hz, progress=None, jobs=1):
        seen.extend(np.asarray(frequency_Hz, dtype=float).ravel().tolist())
        return plain(self, selector, frequency_Hz, progress, jobs)

    monkeypatch.setattr(transfer.AdjointSolver, "solve", counting)
    return seen


def _no_memo(monkeypatch):
    monkeypatch.setattr(analysis._Problem, "remembering", lambda self, keep_rows=True: contextlib.nullcontext())


def _same_bits(a, b) -> None:
    """Two results of one circuit equal to the last bit, every array and figure."""
    for name in ("frequency_Hz", "source_density", "source_variance", "cumulative_variance", "gain"):
        x, y = getattr(a, name), getattr(b, name)
        assert (x is None) == (y is None), name
        if x is not None:
            assert np.array_equal(np.asarray(x), np.asarray(y)), name
    for name in ("gain_peak", "gain_reference", "gain_reference_Hz", "gain_squared_integral", "total_rms"):
        assert getattr(a, name) == getattr(b, name), name


CASES = [
    # beyond the exact limit, to infinite bandwidth: the quadrature's grid is the spectrum's
    pytest.param(
        mesh(9, 9), "m8_8", (0.0, math.inf), dict(exact_limit=50, symmetric_limit=0, lowrank=False), id="wideband-mesh"
    ),
    # a band from above 0 Hz to infinity: grid, white tail above it, gain peak and pass band
    pytest.param(
        mesh(9, 9),
        "m8_8",
        (1e5, math.inf),
        dict(exact_limit=50, symmetric_limit=0, lowrank=False),
        id="from-low-to-infinity",
    ),
    # a finite band from 0 Hz: the pass-band gain is asked at 0 Hz, which the integrator solved
    pytest.param(ladder(300), "n300", (0.0, 1e9), {}, id="finite-band-ladder"),
    pytest.param(mesh(6, 6), "m5_5", (0.0, 1e10), {}, id="finite-band-dense"),
]


@pytest.mark.parametrize("text,out,band,options", CASES)
def test_every_frequency_is_solved_once_and_the_results_keep_their_bits(monkeypatch, solved, text, out, band, options):
    circuit = netnoise.parse_netlist(text)
    kwargs = dict(output=out, input_source="Vin", band=band, points_per_decade=20, options=SolverOptions(**options))
    remembered = netnoise.analyze(circuit, **kwargs)
    once = list(solved)
    assert len(once) == len(set(once))  # no frequency solved twice in one analysis
    solved.clear()
    _no_memo(monkeypatch)
    plain = netnoise.analyze(circuit, **kwargs)
    assert len(solved) > len(once)  # without the memo, the same analysis solves some again
    assert set(solved) == set(once)  # ... and the same frequencies, no others
    _same_bits(remembered, plain)


def test_the_wideband_total_still_meets_equipartition(solved):
    # kT/C: the variance of a node of a passive RC network with grounded capacitors is kT/C_node
    # (equipartition; common practice); here through the quadrature beyond the exact limit
    circuit = netnoise.parse_netlist(mesh(9, 9, with_input=False))
    result = netnoise.analyze(
        circuit,
        output="m8_8",
        band=(0.0, math.inf),
        temperature_celsius=27.0,
        options=SolverOptions(exact_limit=50, symmetric_limit=0, lowrank=False),
    )
    c_out = (1 + (8 * 9 + 8) % 5) * 1e-13
    assert result.total_rms**2 == pytest.approx(BOLTZMANN * 300.15 / c_out, rel=1e-4)
    assert len(solved) == len(set(solved))


def test_the_memo_lives_for_one_analysis_only(solved):
    circuit = netnoise.parse_netlist(mesh(9, 9))
    kwargs = dict(
        output="m8_8",
        input_source="Vin",
        band=(0.0, math.inf),
        options=SolverOptions(exact_limit=50, symmetric_limit=0, lowrank=False),
    )
    prepared = netnoise.prepare(circuit, **kwargs)
    first = prepared.analyze()
    assert prepared.problem._memo is None  # forgotten with the analysis
    count = len(solved)
    _same_bits(prepared.analyze(), first)  # a rerun solves everything again, to the same bits
    assert len(solved) == 2 * count
    changed = prepared.with_values({"R1": 2200.0, "C0_0": 4.7e-13}).analyze()
    fresh = netnoise.analyze(circuit.with_values({"R1": 2200.0, "C0_0": 4.7e-13}), **kwargs)
    _same_bits(changed, fresh)  # the refill sees no solve of the old values
    assert not np.array_equal(changed.source_density, first.source_density)


def _threads_used(monkeypatch) -> list[int]:
    """Record the thread count of every pool the solver starts, on a machine said to have
    4 cores (so that jobs=2 runs two threads even on a smaller one)."""
    used: list[int] = []
    plain = transfer._on_threads

    def recording(threads, *args):
        used.append(threads)
        return plain(threads, *args)

    monkeypatch.setattr(transfer, "_on_threads", recording)
    monkeypatch.setattr(transfer, "usable_cores", lambda: 4)
    return used


@pytest.mark.parametrize(
    "text,out,band",
    [
        pytest.param(mesh(30, 30), "m29_29", (1e3, 1e10), id="sparse"),
        pytest.param(ladder(400), "n400", (0.0, 1e9), id="tridiagonal"),
        pytest.param(mesh(9, 9), "m8_8", (0.0, math.inf), id="sparse-wideband"),
    ],
)
def test_two_jobs_give_the_bits_of_one(monkeypatch, text, out, band):
    used = _threads_used(monkeypatch)
    circuit = netnoise.parse_netlist(text)
    options = dict(exact_limit=50, symmetric_limit=0, lowrank=False, method="sparse") if math.isinf(band[1]) else {}
    kwargs = dict(output=out, input_source="Vin", band=band, points_per_decade=10)
    one = netnoise.analyze(circuit, **kwargs, options=SolverOptions(jobs=1, **options))
    assert used == []
    two = netnoise.analyze(circuit, **kwargs, options=SolverOptions(jobs=2, **options))
    assert used and set(used) == {2}  # (a block of one frequency runs in this thread, no pool)
    _same_bits(one, two)


def test_jobs_never_exceed_the_cores(monkeypatch):
    monkeypatch.setattr(transfer, "usable_cores", lambda: 2)
    assert transfer.thread_count(None) == 2
    assert transfer.thread_count(8) == 2
    assert transfer.thread_count(1) == 1


def test_the_general_banded_path_stays_on_one_thread(monkeypatch):
    # scipy's zgbsv wrapper holds the GIL (measured for issue 16): no pool is started there
    used = _threads_used(monkeypatch)
    lines = ["two-wide ladder", "Vin in 0 AC 1", "R0 in a1 100", "R00 in b1 100"]
    for i in range(1, 200):
        lines += [f"Ra{i} a{i} a{i + 1} 100", f"Rb{i} b{i} b{i + 1} 120", f"Rx{i} a{i} b{i + 1} 1k"]
        lines += [f"Ca{i} a{i} 0 1p", f"Cb{i} b{i} 0 2p"]
    circuit = netnoise.parse_netlist("\n".join(lines + [".end"]) + "\n")
    from netnoise.engine.mna import assemble

    solver = transfer.solver_for(assemble(circuit))
    assert solver.method == "banded" and solver._gtsv is None
    one = netnoise.analyze(circuit, output="a200", input_source="Vin", band=(1e3, 1e10), options=SolverOptions(jobs=1))
    two = netnoise.analyze(circuit, output="a200", input_source="Vin", band=(1e3, 1e10), options=SolverOptions(jobs=2))
    assert used == []
    _same_bits(one, two)


def test_a_failed_frequency_on_threads_is_raised_and_the_rest_dropped(monkeypatch):
    _threads_used(monkeypatch)
    circuit = netnoise.parse_netlist(mesh(30, 30))
    from netnoise.engine.mna import assemble

    system = assemble(circuit)
    calls: list[float] = []
    plain = transfer.AdjointSolver._sparse_one

    def failing(self, c, f):
        calls.append(f)
        if f == 3.0:
            raise netnoise.CircuitError("the circuit equations are singular at 3 Hz")
        return plain(self, c, f)

    monkeypatch.setattr(transfer.AdjointSolver, "_sparse_one", failing)
    solver = transfer.solver_for(system)
    with pytest.raises(netnoise.CircuitError, match="singular at 3 Hz"):
        solver.solve(system.node_pair_vector("m29_29", "0"), np.arange(1.0, 201.0), jobs=2)
    assert len(calls) < 200  # the frequencies not yet started when it failed were not solved


@pytest.mark.parametrize("jobs", [0, -1, True, 1.5, "2"])
def test_jobs_must_be_a_whole_number_of_one_or_more(jobs):
    with pytest.raises(UsageError, match="jobs"):
        SolverOptions(jobs=jobs)


def test_montecarlo_trials_run_on_one_thread_each(monkeypatch):
    # the study's own jobs spread the trials (processes): a trial's analysis must not add threads
    asked: list[int | None] = []
    plain = transfer.AdjointSolver.solve

    def recording(self, selector, frequency_Hz, progress=None, jobs=1):
        asked.append(jobs)
        return plain(self, selector, frequency_Hz, progress, jobs)

    monkeypatch.setattr(transfer.AdjointSolver, "solve", recording)
    circuit = netnoise.parse_netlist(mesh(12, 12))
    from netnoise.studies.montecarlo import montecarlo

    study = montecarlo(
        circuit,
        trials=2,
        tolerances={"R1": 0.05},
        seed=1,
        jobs=1,
        output="m11_11",
        band=(1e3, 1e9),
        options=SolverOptions(method="sparse", dense_limit=10, jobs=2),
    )
    assert study.method == "each trial analysed in full"
    nominal = asked.index(1)  # the nominal analysis asks for the caller's 2, every trial for 1
    assert nominal > 0 and set(asked[:nominal]) == {2} and set(asked[nominal:]) == {1}


def test_cli_jobs_on_analyze_and_sweep(tmp_path, capsys, monkeypatch):
    seen: list[SolverOptions | None] = []
    plain = analysis.prepare

    def watching(circuit, **kwargs):
        seen.append(kwargs.get("options"))
        return plain(circuit, **kwargs)

    monkeypatch.setattr(analysis, "prepare", watching)
    path = tmp_path / "ladder.cir"
    path.write_text(ladder(20))
    assert cli.main(["analyze", str(path), "--out", "n20", "--band", "1", "1g", "--jobs", "2"]) == 0
    assert cli.main(["sweep", str(path), "--out", "n20", "--band", "1", "1g", "--vary", "R1", "50", "200",
                     "--steps", "2", "--jobs", "1"]) == 0  # fmt: skip
    assert [o.jobs for o in seen if o is not None] == [2, 1]
    capsys.readouterr()
    assert cli.main(["analyze", str(path), "--out", "n20", "--jobs", "0"]) != 0
    assert "--jobs" in capsys.readouterr().err


def test_a_finite_band_keeps_no_per_source_rows(monkeypatch, solved):
    # a finite band's integrator never asks a frequency twice: only the signal's |H|² is kept
    from netnoise.engine import memo as memo_module

    made: list[memo_module.TransferMemo] = []
    plain = memo_module.TransferMemo.__init__

    def recording(self, sources, keep_rows=True):
        plain(self, sources, keep_rows)
        made.append(self)

    monkeypatch.setattr(memo_module.TransferMemo, "__init__", recording)
    circuit = netnoise.parse_netlist(ladder(300))
    netnoise.analyze(circuit, output="n300", input_source="Vin", band=(0.0, 1e9))
    assert len(made) == 1 and not made[0].keep_rows and made[0]._blocks == []
    assert made[0].solved == len(solved) == len(set(solved))
    netnoise.analyze(circuit, output="n300", input_source="Vin", band=(0.0, math.inf))
    assert len(made) == 2 and made[1].keep_rows


def test_a_small_circuit_never_loads_threadpoolctl():
    # the dense batched path is one call: no threads, no BLAS limits, nothing imported for them
    import os
    import pathlib
    import subprocess
    import sys

    repo = pathlib.Path(__file__).resolve().parents[1]
    # (some scipy releases import concurrent.futures themselves: the pool is caught being made, not imported)
    code = (
        "import sys, concurrent.futures as cf, netnoise\n"
        "made = []\n"
        "original = cf.ThreadPoolExecutor.__init__\n"
        "cf.ThreadPoolExecutor.__init__ = lambda self, *a, **k: (made.append(1), original(self, *a, **k))[1]\n"
        "c = netnoise.parse_netlist('rc\\nV1 in 0 AC 1\\nR1 in out 1k\\nC1 out 0 1n\\n.end\\n')\n"
        "netnoise.analyze(c, output='out', input_source='V1', band=(1, 1e6))\n"
        "print('TPC:', 'threadpoolctl' in sys.modules, bool(made))\n"
    )
    completed = subprocess.run(
        [sys.executable, "-c", code],
        cwd=repo,
        env={**os.environ, "PYTHONPATH": str(repo)},
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert completed.returncode == 0, completed.stderr
    assert completed.stdout.strip() == "TPC: False False"


def test_the_memo_keeps_no_rows_beyond_its_memory_share(monkeypatch, solved):
    # with little memory the memo keeps no per-source rows: the frequencies are solved again,
    # to the same bits as an analysis without the memo
    from netnoise.engine import resources

    circuit = netnoise.parse_netlist(mesh(9, 9))
    kwargs = dict(
        output="m8_8",
        input_source="Vin",
        band=(0.0, math.inf),
        options=SolverOptions(exact_limit=50, symmetric_limit=0, lowrank=False),
    )
    plenty = netnoise.analyze(circuit, **kwargs)
    with_room = len(solved)
    resources.set_available_memory(2**19)  # the memo's share (a fifth) is below one grid's rows
    try:
        solved.clear()
        tight = netnoise.analyze(circuit, **kwargs)
        tight_solves = len(solved)
        _no_memo(monkeypatch)
        solved.clear()
        bare = netnoise.analyze(circuit, **kwargs)
    finally:
        resources.set_available_memory(None)
    assert tight_solves > with_room and tight_solves < len(solved)  # the signal's |H|² is still kept
    _same_bits(tight, bare)
    assert plenty.total_rms == pytest.approx(tight.total_rms, rel=1e-6)  # the same analysis, less memory

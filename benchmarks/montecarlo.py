"""Monte Carlo speed (issue 13), each figure beside a reference measured in the same run.

    python benchmarks/montecarlo.py            # 10,000 trials of a 20-node circuit, 200 frequencies
    python benchmarks/montecarlo.py --quick    # 1,000 trials (not comparable to the targets)

1. netnoise.montecarlo with jobs=1 against a bare batched ``numpy.linalg.solve``
   of the same number of trial × frequency systems (the 22×22 adjoint
   matrices of the same trials, built beforehand, outside the timing).
   Target: at most 2×.  Both run with BLAS held to one thread.
2. jobs=1 against jobs=2 (worker processes, BLAS one thread each).
   Target: at least 1.7× on 2 cores.

Timings are the best of ``--repeat`` runs; the machine is shared.  Nothing
here is a test.
"""

from __future__ import annotations

import argparse
import datetime
import os
import platform
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).absolute().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent))

import generators as gen  # noqa: E402

import netnoise  # noqa: E402
from netnoise.studies import montecarlo as mc  # noqa: E402

BAND = (10.0, 1e6)  # 5 decades
POINTS = 40  # per decade: a grid of 201 frequencies
TOLERANCES = {"R*": 0.01, "C*": 0.05}


def best(fn, repeat):
    """Best wall time and best CPU time (this process) of ``repeat`` runs."""
    walls, cpus, out = [], [], None
    for _ in range(repeat):
        c0 = time.process_time()
        t = time.perf_counter()
        out = fn()
        walls.append(time.perf_counter() - t)
        cpus.append(time.process_time() - c0)
    return min(walls), min(cpus), out


def run_study(circuit, trials, jobs):
    return netnoise.montecarlo(
        circuit,
        trials=trials,
        tolerances=TOLERANCES,
        seed=2026,
        band=BAND,
        points_per_decade=POINTS,
        jobs=jobs,
        keep_density=False,
    )


def bare_reference(circuit, result, frequencies_per_trial):
    """The same trials' G and C stacks (built untimed), then only the batched solves, timed."""
    prepared = netnoise.prepare(circuit, band=BAND, points_per_decade=POINTS)
    targets = mc._match(circuit, mc._as_tolerances(TOLERANCES))
    model = mc._Model(
        prepared, targets.names, targets.kinds, "band", np.zeros(0), BAND[0], BAND[1], POINTS, None, False
    )
    trials = [mc._dense_trial(model, result.values[j], result.temperature_K[j]) for j in range(result.trials)]
    G = np.stack([t.G.T for t in trials])
    C = np.stack([t.C.T for t in trials])
    c = prepared._problem.selector
    n = G.shape[1]
    f = np.geomspace(BAND[0], BAND[1], frequencies_per_trial)
    s = 2j * np.pi * f
    per = max(1, mc._BATCH_BYTES // (16 * n * n * f.size))

    def solve():
        for a in range(0, G.shape[0], per):
            y = G[a : a + per, None] + s[None, :, None, None] * C[a : a + per, None]
            np.linalg.solve(y, np.broadcast_to(c, y.shape[:3])[..., None])

    return solve


def main() -> None:  # under a main guard: the jobs=2 workers start fresh interpreters that import this module
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--quick", action="store_true")
    parser.add_argument("--repeat", type=int, default=2)
    args = parser.parse_args()
    trials = 1000 if args.quick else 10_000
    from threadpoolctl import threadpool_limits

    circuit = netnoise.parse_netlist(gen.small_circuit(20))
    print(
        f"# netnoise Monte Carlo benchmark, {datetime.date.today()}, {platform.processor() or platform.machine()}, "
        f"{os.cpu_count()} cores, Python {platform.python_version()}, numpy {np.__version__}"
    )
    with threadpool_limits(limits=1):
        t1, c1, result = best(lambda: run_study(circuit, trials, 1), args.repeat)
        per_trial = result.batched_solves / trials
        solve = bare_reference(circuit, result, int(round(per_trial)))
        tb, cb, _ = best(solve, args.repeat)
    print(
        f"{trials} trials of {len(result.nominal.source_names)} sources, "
        f"{netnoise.prepare(circuit, band=BAND).system.size} unknowns, "
        f"{per_trial:.0f} frequencies per trial ({result.batched_solves} systems); "
        f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores"
    )
    print("                            wall        CPU")
    print(f"montecarlo jobs=1          {t1:7.2f} s  {c1:7.2f} s")
    print(
        f"bare batched numpy.solve   {tb:7.2f} s  {cb:7.2f} s   ratio {t1 / tb:.2f} wall, {c1 / cb:.2f} CPU "
        "(target <= 2)"
    )
    t2, _, result2 = best(lambda: run_study(circuit, trials, 2), args.repeat)
    same = np.array_equal(result.total_rms_V, result2.total_rms_V)
    print(
        f"montecarlo jobs=2          {t2:7.2f} s              speed-up {t1 / t2:.2f} wall (target >= 1.7); "
        f"same totals: {same}"
    )
    # on a shared machine the wall speed-up depends on the others' load; the CPU the trials took
    # (summed over the workers) says what idle cores would give if the chunks balance
    print(
        f"  CPU in the trials: jobs=1 {result.cpu_seconds:.2f} s, jobs=2 {result2.cpu_seconds:.2f} s over both "
        f"workers: on idle cores a speed-up of about {2 * result.cpu_seconds / result2.cpu_seconds:.2f} "
        f"(start-up of the workers not counted)"
    )
    print(f"load average at end {os.getloadavg()[0]:.1f}")


if __name__ == "__main__":
    main()

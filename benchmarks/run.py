"""netnoise speed and memory figures, each beside a bare numpy/scipy reference
measured in the same run on the same machine.

    python benchmarks/run.py            # the figures of issue 5 (about 10 minutes on 2 cores)
    python benchmarks/run.py --quick    # smaller circuits, a minute or two

Timings are the best of a few repetitions (the machines are shared and noisy);
ratios compare netnoise with the reference taken in the same run.  Nothing
here is a pass/fail test: the unit tests check correctness only.
"""

from __future__ import annotations

import argparse
import compileall
import datetime
import json
import math
import os
import platform
import resource
import subprocess
import sys
import tempfile
import textwrap
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).absolute().parent
REPO = HERE.parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(REPO))

import generators as gen  # noqa: E402

ENV = {**os.environ, "PYTHONPATH": str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", "")}


def best(fn, repeat=3):
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def run_child(code: str) -> dict:
    """Run ``code`` in a fresh interpreter; it prints one JSON line last."""
    out = subprocess.run(
        [sys.executable, "-c", textwrap.dedent(code)], env=ENV, capture_output=True, text=True, check=False
    )
    if out.returncode != 0:
        raise RuntimeError(out.stderr)
    return json.loads(out.stdout.strip().splitlines()[-1])


def wall(cmd: list[str]) -> float:
    t = time.perf_counter()
    subprocess.run(cmd, env=ENV, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=True)
    return time.perf_counter() - t


def line(label: str, value: str, ref: str = "", ratio: float | None = None, target: str = "") -> None:
    r = f"{ratio:6.2f}x" if ratio is not None else "       "
    print(f"  {label:<46} {value:>12}  {ref:>14}  {r}  {target}")


# --- the figures --------------------------------------------------------------------------
def ladder(sections: int, tmp: Path) -> dict:
    """Whole CLI run on an RC ladder vs a bare splu loop on its nodal matrix."""
    import scipy.sparse.linalg as spla

    path = tmp / "ladder.cir"
    path.write_text(gen.rc_ladder(sections))
    f = np.logspace(0, 9, 9 * 40 + 1)  # 1 Hz .. 1 GHz at 40/decade: the grid netnoise reports
    G, C = gen.ladder_matrices(sections)
    c = np.zeros(sections)
    c[-1] = 1.0

    def bare():
        for fi in f:
            lu = spla.splu((G + 2j * np.pi * fi * C).tocsc())
            lu.solve(c + 0j, trans="T")

    cmd = [
        sys.executable,
        "-m",
        "netnoise",
        "analyze",
        str(path),
        "--band",
        "1",
        "1g",
        "--points",
        "40",
        "--out",
        f"n{sections}",
        "--input",
        "Vin",
        "--json",
        str(tmp / "ladder.json"),
    ]
    refs, clis = [], []
    for _ in range(3):  # interleaved, so both see the same machine load
        refs.append(best(bare, 1))
        clis.append(wall(cmd))
    ref, cli = min(refs), min(clis)
    median_ratio = float(np.median(clis) / np.median(refs))
    parts = run_child(f"""
        import json, time, resource
        import netnoise
        t = time.perf_counter(); c = netnoise.load_netlist({str(path)!r}); parse = time.perf_counter() - t
        t = time.perf_counter()
        r = netnoise.analyze(c, band=(1, 1e9), points_per_decade=40, output="n{sections}", input_source="Vin")
        analyze = time.perf_counter() - t
        from netnoise.engine.transfer import solver_for
        print(json.dumps(dict(parse=parse, analyze=analyze, sources=len(r.source_names), grid=len(r.frequency_Hz),
              rel_error=r.integration_rel_error, rss=resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024)))
    """)
    return dict(ref=ref, cli=cli, median_ratio=median_ratio, **parts)


def mesh(nx: int, ny: int, counts=(25, 49, 101)) -> dict:
    """A 2-D RC mesh: analyze() over 1 kHz..10 GHz at three grid densities (every solved
    frequency counted); peak memory of the whole process."""
    code = f"""
        import json, time, resource, sys
        sys.path.insert(0, {str(HERE)!r})
        import numpy as np, generators as gen, netnoise
        from netnoise.engine import transfer
        solved = [0]
        plain_solve = transfer.AdjointSolver.solve
        def counting(self, selector, f, progress=None):  # count every frequency solved, refinements included
            solved[0] += len(f)
            return plain_solve(self, selector, f, progress)
        transfer.AdjointSolver.solve = counting
        t = time.perf_counter(); c = netnoise.parse_netlist(gen.rc_mesh({nx}, {ny})); parse = time.perf_counter() - t
        solved[0] = 0
        t = time.perf_counter()
        r = netnoise.analyze(c, band=(1e3, 1e10), points_per_decade=12.5)  # 1 kHz .. 10 GHz, 88 grid intervals
        full = (solved[0], time.perf_counter() - t, len(r.frequency_Hz))
        # linearity: the engine's work (setup, solves, every source's gain) at 25/50/100 frequencies
        from netnoise.engine.analysis import _Problem, _resolve
        problem = _Problem(c, _resolve(c, None, None, None, (1e3, 1e10), 10, None))
        rows = []
        for count in (25, 50, 100):
            transfer._SOLVERS.clear()  # a fresh solver each time: setup included
            t = time.perf_counter()
            transfer.transfer_power(problem.system, problem.selector, problem.sources.injection, None,
                                    np.logspace(3, 10, count))
            rows.append((count, time.perf_counter() - t))
        from netnoise.engine.transfer import solver_for
        from netnoise.engine.mna import assemble
        print(json.dumps(dict(parse=parse, full=full, runs=rows, sources=len(r.source_names),
              method=solver_for(assemble(c)).method, rss=resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024)))
    """
    out = run_child(code)
    # the bare reference: splu + solve of the nodal matrix at a few of the same frequencies
    import scipy.sparse.linalg as spla

    G, C = gen.mesh_matrices(nx, ny)
    c = np.zeros(G.shape[0])
    c[-1] = 1.0
    fs = np.logspace(3, 10, 5)
    t = time.perf_counter()
    for fi in fs:
        spla.splu((G + 2j * np.pi * fi * C).tocsc()).solve(c + 0j, trans="T")
    out["ref_per_frequency"] = (time.perf_counter() - t) / fs.size
    return out


def small(tmp: Path) -> dict:
    import netnoise

    circuit = netnoise.parse_netlist(gen.small_circuit(20))
    ppd = 1000 / 9  # 1 Hz .. 1 GHz in 1000 intervals: 1001 frequencies

    def run():
        return netnoise.analyze(circuit, band=(1, 1e9), points_per_decade=ppd)

    result = run()
    engine = best(run, 7)
    from netnoise.engine.mna import assemble

    system = assemble(circuit)
    g, cc = system.G.toarray(), system.C.toarray()
    f = result.frequency_Hz
    sel = np.zeros(system.size)
    sel[0] = 1.0

    def bare():
        yt = g.T[None] + (2j * np.pi * f)[:, None, None] * cc.T[None]
        np.linalg.solve(yt, np.broadcast_to(sel + 0j, (f.size, system.size))[..., None])

    ref = best(bare, 7)
    return dict(engine=engine, ref=ref, n=system.size, frequencies=int(f.size), evaluations=None)


def rerun() -> dict:
    """A 50-element circuit: a first analysis (parse + analyze) against a
    re-analysis after one value changes (prepared, refilled, no re-parse)."""
    import netnoise

    text = gen.small_circuit(16)  # 50 elements
    circuit = netnoise.parse_netlist(text)
    prepared = netnoise.prepare(circuit)
    first = best(lambda: netnoise.analyze(netnoise.parse_netlist(text)), 9)
    again = best(lambda: prepared.with_values({"R3": 2.2e3}).analyze(), 9)
    refill = best(lambda: prepared.with_values({"R3": 2.2e3}), 9)
    return dict(first=first, again=again, refill=refill, elements=len(circuit.elements))


def sweep_points(points: int) -> dict:
    """A sweep of one capacitor over ``points`` values of a 30-element circuit (noise only),
    against the same number of bare batched solves over the frequencies each point solved."""
    import netnoise
    from netnoise.engine.mna import assemble
    from netnoise.studies.sweep import Vary, sweep

    circuit = netnoise.parse_netlist(gen.small_circuit(10))  # 30 elements
    prepared = netnoise.prepare(circuit)
    vary = [Vary.span("C3", 0.1e-12, 10e-12, points, log=True)]
    counted: list[int] = []
    counting = netnoise.prepare(circuit, progress=counted.append)
    counting.analyze()
    frequencies = sum(counted)  # what one point solves: grid plus the integrator's refinements
    t_sweep = best(lambda: sweep(prepared, vary, speed=False), 3)
    system = assemble(circuit)
    g, cc = system.G.toarray(), system.C.toarray()
    f = np.logspace(0, 9, frequencies)
    sel = np.zeros(system.size)
    sel[0] = 1.0

    def bare():
        for _ in range(points):
            yt = g.T[None] + (2j * np.pi * f)[:, None, None] * cc.T[None]
            np.linalg.solve(yt, np.broadcast_to(sel + 0j, (f.size, system.size))[..., None])

    return dict(
        sweep=t_sweep, ref=best(bare, 3), points=points, elements=len(circuit.elements), frequencies=frequencies
    )


# the third-party modules a start-up may load; the bare reference imports exactly those the CLI's
# run loaded (issue 16: once a small circuit stopped loading scipy.sparse.linalg, a fixed
# "import numpy, scipy.sparse.linalg, lark" would have credited netnoise with scipy's time)
STARTUP_MODULES = ("numpy", "scipy.sparse", "scipy.sparse.linalg", "scipy.linalg", "scipy.sparse.csgraph", "lark")


def startup(tmp: Path, repeat: int) -> dict:
    path = tmp / "four.cir"
    path.write_text(gen.four_element())
    loaded = run_child(f"""
        import json, sys, contextlib, io
        from netnoise.cli import main
        with contextlib.redirect_stdout(io.StringIO()):
            main(["analyze", {str(path)!r}])
        print(json.dumps([m for m in {STARTUP_MODULES!r} if m in sys.modules]))
    """)
    bare_code = "import " + ", ".join(loaded)
    bare_cmd = [sys.executable, "-c", bare_code]
    cli_cmd = [sys.executable, "-m", "netnoise", "analyze", str(path)]
    bare, cli = [], []
    for _ in range(repeat):  # interleaved, so both see the same machine load
        bare.append(wall(bare_cmd))
        cli.append(wall(cli_cmd))
    return dict(
        bare=float(np.median(bare)),
        cli=float(np.median(cli)),
        bare_min=min(bare),
        cli_min=min(cli),
        bare_code=bare_code,
    )


def paths() -> list[dict]:
    """Issue 16: the adjoint path each circuit takes, and every path's time per frequency
    (361 frequencies, solver setup included, best of 3): the chosen one should be the quickest
    or near it."""
    code = f"""
        import json, sys, time
        sys.path.insert(0, {str(HERE)!r})
        import numpy as np, generators as gen, netnoise
        from netnoise.engine import transfer
        from netnoise.engine.mna import assemble
        from netnoise.engine.options import SolverOptions
        circuits = [("RC network, 20 nodes", gen.small_circuit(20)), ("RC ladder, 149 sections", gen.rc_ladder(149)),
                    ("RC mesh 12x12", gen.rc_mesh(12, 12)), ("every node coupled, 150", gen.coupled_network(150)),
                    ("scattered sparse, 150", gen.scattered_network(150))]
        f = np.logspace(0, 9, 361)
        rows = []
        for label, text in circuits:
            system = assemble(netnoise.parse_netlist(text))
            selector = np.zeros(system.size)
            selector[-1] = 1.0
            times = {{}}
            for method in ("dense", "banded", "sparse"):
                best = []
                for _ in range(3):
                    t = time.perf_counter()
                    transfer.AdjointSolver(system, SolverOptions(method=method)).solve(selector, f)
                    best.append(time.perf_counter() - t)
                times[method] = min(best) / f.size
            rows.append(dict(label=label, n=system.size, chosen=transfer.AdjointSolver(system).method, times=times))
        print(json.dumps(rows))
    """
    return run_child(code)


def parsing(lines: int) -> dict:
    text = gen.rc_ladder(lines // 2, source=False)
    return run_child(f"""
        import json, time, sys
        sys.path.insert(0, {str(HERE)!r})
        import generators as gen, netnoise
        text = gen.rc_ladder({lines // 2}, source=False)
        t = time.perf_counter(); netnoise.parse_netlist(text); parse = time.perf_counter() - t
        t = time.perf_counter(); [l.split() for l in text.splitlines()]; split = time.perf_counter() - t
        print(json.dumps(dict(parse=parse, split=split, lines={len(text.splitlines())})))
    """)


def exact_cost(sizes) -> list[dict]:
    """analyze() to infinite bandwidth (dense QZ + Lyapunov) vs a bare scipy ordqz of the same pencil."""
    import scipy.linalg as la

    import netnoise
    from netnoise.engine.options import SolverOptions

    qz = SolverOptions(symmetric_limit=0)  # the QZ path itself (an RC ladder would take the symmetric one)
    rows = []
    for n in sizes:
        circuit = netnoise.parse_netlist(gen.rc_ladder(n, source=False))
        repeat = 3 if n <= 300 else 1  # the first small one would otherwise carry first-call costs
        t_engine = best(lambda: netnoise.analyze(circuit, output=f"n{n}", band=(0, math.inf), options=qz), repeat)
        G, C = gen.ladder_matrices(n)
        t_ref = best(lambda: la.ordqz(-G.toarray(), C.toarray(), sort="lhp", output="real"), repeat)
        rows.append(dict(n=n, engine=t_engine, ref=t_ref))
    return rows


def wideband(n_check: int, n_large: int) -> dict:
    """Beyond the exact limit: the quadrature + tail total; its accuracy against the exact method."""
    import netnoise
    from netnoise.engine.options import SolverOptions

    circuit = netnoise.parse_netlist(gen.rc_ladder(n_check, source=False))
    # the exact method as the reference, whatever its size
    exact = netnoise.analyze(
        circuit, output=f"n{n_check}", band=(0, math.inf), options=SolverOptions(exact_limit=10**9)
    )
    t = time.perf_counter()
    approx = netnoise.analyze(
        circuit,
        output=f"n{n_check}",
        band=(0, math.inf),
        options=SolverOptions(exact_limit=0, symmetric_limit=0, lowrank=False),
    )
    t_small = time.perf_counter() - t
    big = netnoise.parse_netlist(gen.rc_ladder(n_large, source=False))
    t = time.perf_counter()
    netnoise.analyze(
        big, output=f"n{n_large}", band=(0, math.inf), options=SolverOptions(symmetric_limit=0, lowrank=False)
    )
    t_large = time.perf_counter() - t
    v_e, v_a = np.asarray(exact.source_variance), np.asarray(approx.source_variance)
    return dict(
        total_rel=abs(approx.total_rms**2 / exact.total_rms**2 - 1),
        worst_source_rel=float(np.max(np.abs(v_a / v_e - 1))),
        t_small=t_small,
        t_large=t_large,
        n_check=n_check,
        n_large=n_large,
    )


# --- symmetric exact path (issue 16) ----------------------------------------------------
def symmetric_cost(shape_large: tuple[int, int], shape_small: tuple[int, int]) -> dict:
    """Exact totals to infinity of an RC mesh through analyze() (symmetric path) against one bare
    scipy.linalg.eigh of its (G, C) pencil; at the small size also the old QZ path."""
    import scipy.linalg as la

    import netnoise
    from netnoise.engine.options import SolverOptions

    out = {}
    for key, (nx, ny) in (("large", shape_large), ("small", shape_small)):
        circuit = netnoise.parse_netlist(gen.rc_mesh(nx, ny))
        G, C = gen.mesh_matrices(nx, ny)
        g, c = G.toarray(), C.toarray()
        repeat = 2 if key == "large" else 3
        found = []
        t_engine = best(lambda: found.append(netnoise.analyze(circuit, band=(0, math.inf))), repeat)
        t_ref = best(lambda: la.eigh(g, c), repeat)
        row = dict(
            n=nx * ny, engine=t_engine, ref=t_ref, method=found[-1].total_method, sources=len(found[-1].source_names)
        )
        if key == "small":
            qz = []
            row["qz"] = best(
                lambda: qz.append(
                    netnoise.analyze(circuit, band=(0, math.inf), options=SolverOptions(symmetric_limit=0))
                ),
                1,
            )
            row["agree"] = abs(found[-1].total_variance / qz[-1].total_variance - 1)
        out[key] = row
    return out


def cores(nx: int, ny: int, repeat: int = 3) -> dict:
    """Issue 16: analyze() of an RC mesh over a finite band with jobs=2 against jobs=1, runs
    interleaved in one fresh process; wall and CPU time (every thread of the process) of each.
    Beside it, the bare ceiling: the same number of splu + solve of the mesh's nodal matrix on
    2 threads against 1 (BLAS on one thread), measured in the same run."""
    code = f"""
        import json, os, sys, time
        sys.path.insert(0, {str(HERE)!r})
        import numpy as np, generators as gen, netnoise
        from concurrent.futures import ThreadPoolExecutor
        import scipy.sparse.linalg as spla
        from threadpoolctl import threadpool_limits
        from netnoise.engine import transfer
        from netnoise.engine.options import SolverOptions
        circuit = netnoise.parse_netlist(gen.rc_mesh({nx}, {ny}))
        solved = [0]
        plain_solve = transfer.AdjointSolver.solve
        def counting(self, selector, f, progress=None, jobs=1):
            solved[0] += len(f)
            return plain_solve(self, selector, f, progress, jobs)
        transfer.AdjointSolver.solve = counting
        load = [os.getloadavg()[0]]
        runs = {{1: [], 2: []}}
        results = {{}}
        for _ in range({repeat}):
            for jobs in (1, 2):  # interleaved: both see the same load
                solved[0] = 0
                t, c = time.perf_counter(), time.process_time()
                results[jobs] = netnoise.analyze(circuit, band=(1e3, 1e10), options=SolverOptions(jobs=jobs, lowrank=False))
                runs[jobs].append((time.perf_counter() - t, time.process_time() - c))
            load.append(os.getloadavg()[0])
        frequencies = solved[0]  # what one analysis solved
        # item 3 of the issue: to infinite bandwidth (beyond the exact limit: a quadrature, then the
        # spectrum shown on a grid it shares), with the memo and without it (patched out)
        import contextlib
        from netnoise.engine import analysis
        wide = {{}}
        for label in ("memo", "none"):
            if label == "none":
                analysis._Problem.remembering = lambda self, keep_rows=True: contextlib.nullcontext()
            solved[0] = 0
            t = time.perf_counter()
            r = netnoise.analyze(circuit, band=(0.0, float("inf")), options=SolverOptions(jobs=1, lowrank=False))
            wide[label] = (solved[0], time.perf_counter() - t, r.source_variance)
        wide_same = bool(np.array_equal(wide["memo"][2], wide["none"][2]))
        wide = {{label: value[:2] for label, value in wide.items()}}
        same = np.array_equal(results[1].source_density, results[2].source_density) and np.array_equal(
            results[1].source_variance, results[2].source_variance
        )
        # the share of a jobs=1 analysis spent inside SuperLU's factor and solve (the GIL released
        # there): Amdahl's bound on what two threads can give, whatever the machine's load
        inside = [0.0]
        plain_splu = spla.splu
        class Timed:
            def __init__(self, lu):
                self.lu = lu
            def solve(self, rhs):
                t = time.perf_counter()
                out = self.lu.solve(rhs)
                inside[0] += time.perf_counter() - t
                return out
            def __getattr__(self, name):
                return getattr(self.lu, name)
        def timed_splu(*args, **kwargs):
            t = time.perf_counter()
            lu = plain_splu(*args, **kwargs)
            inside[0] += time.perf_counter() - t
            return Timed(lu)
        spla.splu = timed_splu
        t = time.perf_counter()
        netnoise.analyze(circuit, band=(1e3, 1e10), options=SolverOptions(jobs=1, lowrank=False))
        share = inside[0] / (time.perf_counter() - t)
        spla.splu = plain_splu
        G, C = gen.mesh_matrices({nx}, {ny})
        c = np.zeros(G.shape[0]) + 0j
        c[-1] = 1.0
        fs = np.logspace(3, 10, 24)
        def one(fi):
            spla.splu((G + 2j * np.pi * fi * C).tocsc()).solve(c, trans="T")
        bare = {{1: [], 2: []}}
        with threadpool_limits(limits=1):
            for _ in range({repeat}):
                for jobs in (1, 2):
                    t, cp = time.perf_counter(), time.process_time()
                    with ThreadPoolExecutor(jobs) as pool:
                        list(pool.map(one, fs))
                    bare[jobs].append((time.perf_counter() - t, time.process_time() - cp))
        print(json.dumps(dict(runs=runs, bare=bare, solved=frequencies, wide=wide, wide_same=wide_same, same=bool(same), load=load, share=share,
              cores=len(os.sched_getaffinity(0)), nodes={nx} * {ny})))
    """
    return run_child(code)


def lowrank(nx: int, ny: int, n_check: tuple[int, int]) -> dict:
    """Issue 16: every source's total to infinity on an RC mesh by the low-rank Gramian
    (engine/gramian.py), in a fresh process for its peak memory, vs the bare reference of the
    mesh figure (splu + solve of the nodal matrix, per frequency, x 100); and its accuracy
    against a dense scipy.linalg.eigh reference on a smaller mesh."""
    code = f"""
        import json, time, resource, sys
        sys.path.insert(0, {str(HERE)!r})
        import numpy as np, generators as gen
        from netnoise.engine.gramian import lowrank_model
        G, C = gen.mesh_matrices({nx}, {ny})
        B, S, c = gen.mesh_noise_columns({nx}, {ny})
        t = time.perf_counter()
        r, model = lowrank_model(G, C, c, B, S)
        elapsed = time.perf_counter() - t
        kt_c = 1.380649e-23 * 300.15 / 1e-13
        from netnoise.engine.gramian import reduced_band_totals
        t = time.perf_counter()
        band = reduced_band_totals(G, C, c, B, S, 1e3, 1e10, model=(r, model))  # the mesh figure's band
        band_time = time.perf_counter() - t
        print(json.dumps(dict(time=elapsed, rank=r.rank, factorizations=r.factorizations, sources=int(S.size),
              kt_c_rel=abs(float(r.variance.sum()) / kt_c - 1), band_time=band_time,
              band_model_error=band.model_error, band_rel_error=band.rel_error,
              rss=resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024)))
    """
    out = run_child(code)
    import scipy.linalg as la
    import scipy.sparse.linalg as spla

    from netnoise.engine.gramian import lowrank_totals

    G, C = gen.mesh_matrices(nx, ny)
    c = np.zeros(G.shape[0])
    c[-1] = 1.0
    fs = np.logspace(3, 10, 5)
    t = time.perf_counter()
    for fi in fs:
        spla.splu((G + 2j * np.pi * fi * C).tocsc()).solve(c + 0j, trans="T")
    out["ref"] = (time.perf_counter() - t) / fs.size * 100
    # the same loop with the ordering the engine's sparse path uses (minimum degree on Aᵀ + A,
    # symmetric mode): scipy's default column ordering fills far more on a mesh
    t = time.perf_counter()
    for fi in fs:
        spla.splu(
            (G + 2j * np.pi * fi * C).tocsc(),
            permc_spec="MMD_AT_PLUS_A",
            diag_pivot_thresh=0.1,
            options=dict(SymmetricMode=True),
        ).solve(c + 0j, trans="T")
    out["ref_mmd"] = (time.perf_counter() - t) / fs.size * 100
    # accuracy: the modal double sum of a dense eigh of G/c (C = c·I) as the reference
    mx, my = n_check
    G, C = gen.mesh_matrices(mx, my)
    B, S, c = gen.mesh_noise_columns(mx, my)
    found = lowrank_totals(G, C, c, B, S).variance
    cap = 1e-13
    lam, U = la.eigh(G.toarray() / cap)
    U = U / np.sqrt(cap)
    ct, bt = U.T @ c, U.T @ B.toarray()
    ref = 0.5 * S * np.einsum("ik,ik->k", bt, (np.outer(ct, ct) / (lam[:, None] + lam[None, :])) @ bt)
    total = float(ref.sum())
    big = ref >= 1e-3 * ref.max()
    out.update(
        n_check=mx * my,
        share_err=float(np.max(np.abs(found - ref))) / total,
        big_rel=float(np.max(np.abs(found[big] / ref[big] - 1))),
    )
    return out


def lowrank_cli(nx: int, ny: int, tmp: Path) -> dict:
    """Issue 16: the whole CLI run on the RC mesh to infinite bandwidth (the default band), report
    and JSON with every source's share, in a child process; its wall time and peak memory."""
    path = tmp / "mesh.cir"
    path.write_text(gen.rc_mesh(nx, ny))
    cmd = [sys.executable, "-m", "netnoise", "analyze", str(path), "--json", str(tmp / "mesh.json")]
    runs = [wall(cmd) for _ in range(2)]
    data = json.loads((tmp / "mesh.json").read_text())
    rss = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss * 1024  # the largest child so far
    return dict(cli=min(runs), rss=rss, method=data["total_method"], sources=len(data["contributions"]))


def machine() -> str:
    cpu = platform.processor() or ""
    try:
        for text in Path("/proc/cpuinfo").read_text().splitlines():
            if text.startswith("model name"):
                cpu = text.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    try:
        mem = int(Path("/proc/meminfo").read_text().split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        mem = 0
    import scipy

    return (
        f"{cpu}, {os.cpu_count()} cores, {mem / 2**30:.1f} GiB; Python {platform.python_version()}, "
        f"numpy {np.__version__}, scipy {scipy.__version__}, {platform.system()} {platform.release()}"
    )


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--quick", action="store_true", help="smaller circuits (figures not comparable to the targets)")
    ap.add_argument(
        "--only",
        nargs="*",
        default=None,
        choices=[
            "startup",
            "paths",
            "small",
            "rerun",
            "sweep",
            "ladder",
            "mesh",
            "parse",
            "exact",
            "wideband",
            "symmetric",
            "cores",
            "lowrank",
        ],
        help="run only these figures",
    )
    args = ap.parse_args(argv)
    q = args.quick
    # pip compiles an installed package's bytecode; a checkout under PYTHONDONTWRITEBYTECODE=1 would
    # compile every netnoise module at every start (~100 ms, a quarter of the bare start-up), while
    # numpy, scipy and lark load theirs: compile ours first, as an installation has it
    compileall.compile_dir(str(REPO / "netnoise"), quiet=1)
    want = lambda name: args.only is None or name in args.only
    print(f"netnoise benchmarks, {datetime.date.today().isoformat()}{' (--quick)' if q else ''}")
    print(f"machine: {machine()}")
    print(f"  {'figure':<46} {'netnoise':>12}  {'bare reference':>14}  {'ratio':>7}  target")
    with tempfile.TemporaryDirectory() as tmpdir:
        tmp = Path(tmpdir)

        if want("startup"):
            s = startup(tmp, 5 if q else 11)
            line(
                "CLI start-up, 4-element circuit (median)",
                f"{s['cli'] * 1e3:.0f} ms",
                f"{s['bare'] * 1e3:.0f} ms",
                s["cli"] / s["bare"],
                f"<= 1.15x  (bare: python -c '{s['bare_code']}', what the run loaded; min {s['cli_min'] * 1e3:.0f} / "
                f"{s['bare_min'] * 1e3:.0f} ms)",
            )

        if want("paths"):
            for row in paths():
                t = row["times"]
                quickest = min(t, key=t.get)
                line(
                    f"path '{row['chosen']}': {row['label']} ({row['n']} unkn.)",
                    f"{t[row['chosen']] * 1e3:.3f} ms/f",
                    f"{t[quickest] * 1e3:.3f} ms/f",
                    t[row["chosen"]] / t[quickest],
                    f"(reference: the quickest path, '{quickest}'; "
                    + ", ".join(f"{m} {v * 1e3:.3f}" for m, v in t.items())
                    + " ms per frequency)",
                )

        if want("small"):
            sm = small(tmp)
            line(
                f"engine, {sm['n']} unknowns x {sm['frequencies']} frequencies",
                f"{sm['engine'] * 1e3:.1f} ms",
                f"{sm['ref'] * 1e3:.1f} ms",
                sm["engine"] / sm["ref"],
                "< 30 ms  (bare: one batched np.linalg.solve)",
            )

        if want("rerun"):
            r = rerun()
            line(
                f"re-analysis after one value change, {r['elements']} elements",
                f"{r['again'] * 1e3:.1f} ms",
                f"{r['first'] * 1e3:.1f} ms",
                r["again"] / r["first"],
                f"<= 0.3x  (reference: first analysis, parse + analyze; refill alone {r['refill'] * 1e3:.2f} ms)",
            )

        if want("sweep"):
            sw = sweep_points(200)
            line(
                f"sweep, {sw['points']} points of a {sw['elements']}-element circuit",
                f"{sw['sweep']:.2f} s",
                f"{sw['ref']:.2f} s",
                sw["sweep"] / sw["ref"],
                f"<= 3x  (bare: {sw['points']} batched np.linalg.solve over the {sw['frequencies']} frequencies a point solves)",
            )

        if want("ladder"):
            sections = 2000 if q else 20000
            lad = ladder(sections, tmp)
            line(
                f"CLI, RC ladder {sections} sections, {lad['grid']} freq.",
                f"{lad['cli']:.2f} s",
                f"{lad['ref']:.2f} s",
                lad["cli"] / lad["ref"],
                f"<= 1.5x  (bare: splu + solve per frequency; best of 3 interleaved, "
                f"ratio of medians {lad['median_ratio']:.2f}x)",
            )
            line("  of which parse + elaborate", f"{lad['parse']:.2f} s", "", lad["parse"] / lad["ref"])
            line(
                f"  of which analyze() ({lad['sources']} sources)",
                f"{lad['analyze']:.2f} s",
                "",
                lad["analyze"] / lad["ref"],
            )
            line(
                "  peak memory (analysis process)",
                f"{lad['rss'] / 2**30:.2f} GiB",
                "",
                None,
                f"integration error estimate {lad['rel_error']:.1e}",
            )

        if want("mesh"):
            nx, ny = (60, 60) if q else (316, 317)
            m = mesh(nx, ny)
            solved, t_full, grid = m["full"]
            ref_full = m["ref_per_frequency"] * solved
            line(
                f"RC mesh {nx}x{ny} ({nx * ny} nodes), analyze(), {solved} freq.",
                f"{t_full:.1f} s",
                f"{ref_full:.1f} s",
                t_full / ref_full,
                f"(bare: splu + solve x {solved}; path '{m['method']}'; {grid} grid points + refinements)",
            )
            line("  peak memory (parse + analyses)", f"{m['rss'] / 2**30:.2f} GiB", "", None, "< 4 GiB")
            (f1, t1), (f2, t2), (f3, t3) = m["runs"]
            slope, intercept = np.polyfit([f1, f2, f3], [t1, t2, t3], 1)
            fit = max(abs(t - (intercept + slope * f)) / t for f, t in ((f1, t1), (f2, t2), (f3, t3)))
            line(
                f"  solves + gains at {f1}/{f2}/{f3} frequencies",
                f"{t1:.1f}/{t2:.1f}/{t3:.1f} s",
                f"{m['ref_per_frequency'] * 1e3:.0f} ms/freq",
                None,
                f"linear fit {intercept:.1f} s + {slope * 1e3:.0f} ms/freq, worst deviation {100 * fit:.0f} %",
            )
            line("  parse + elaborate of the mesh", f"{m['parse']:.1f} s")

        if want("parse"):
            p = parsing(20000 if q else 100000)
            line(
                f"parse + elaborate {p['lines']} lines",
                f"{p['parse']:.2f} s",
                f"{p['split']:.2f} s",
                p["parse"] / p["split"],
                "< 5 s  (bare: str.split of every line)",
            )

        if want("exact"):
            for row in exact_cost((50, 100, 200) if q else (100, 300, 600)):
                line(
                    f"exact total to infinity, {row['n']} unknowns",
                    f"{row['engine']:.2f} s",
                    f"{row['ref']:.2f} s",
                    row["engine"] / row["ref"],
                    "(bare: scipy.linalg.ordqz of the pencil)",
                )

        if want("wideband"):
            w = wideband(100 if q else 1000, 2000 if q else 5000)
            line(f"beyond the exact limit: {w['n_large']} unknowns to infinity", f"{w['t_large']:.2f} s")
            line(
                f"  its accuracy vs exact at {w['n_check']} unknowns",
                f"{w['total_rel']:.1e}",
                "",
                None,
                f"worst single source {w['worst_source_rel']:.1e}",
            )
        if want("symmetric"):
            sy = symmetric_cost((20, 25) if q else (40, 50), (10, 10) if q else (24, 25))
            big, little = sy["large"], sy["small"]
            line(
                f"exact total, RC mesh {big['n']} unknowns ({big['method']})",
                f"{big['engine']:.2f} s",
                f"{big['ref']:.2f} s",
                big["engine"] / big["ref"],
                f"<= 2x  (bare: scipy.linalg.eigh(G, C); {big['sources']} sources, analyze() whole)",
            )
            line(
                f"  at {little['n']} unknowns ({little['method']})",
                f"{little['engine']:.2f} s",
                f"{little['ref']:.2f} s",
                little["engine"] / little["ref"],
                "(bare: scipy.linalg.eigh(G, C))",
            )
            line(
                f"  the QZ path at {little['n']} unknowns",
                f"{little['qz']:.2f} s",
                f"{little['engine']:.2f} s",
                little["qz"] / little["engine"],
                f"(reference: the symmetric path; totals agree to {little['agree']:.1e})",
            )
        if want("cores"):
            nx, ny = (40, 40) if q else (100, 100)
            k = cores(nx, ny)
            (w1, c1), (w2, c2) = (min(k["runs"][j], key=lambda run: run[0]) for j in ("1", "2"))
            (b1, bc1), (b2, bc2) = (min(k["bare"][j], key=lambda run: run[0]) for j in ("1", "2"))
            line(
                f"RC mesh {k['nodes']} nodes, analyze() jobs=2 vs jobs=1",
                f"{w1 / w2:.2f}x",
                f"{b1 / b2:.2f}x",
                (w1 / w2) / (b1 / b2),
                f">= 1.7x on 2 cores  (bare: splu + solve on 2 threads vs 1; {k['solved']} freq.; "
                f"same bits: {k['same']})",
            )
            line(
                "  jobs=1: wall / CPU (all threads)",
                f"{w1:.2f} s",
                f"{c1:.2f} s",
                None,
                f"best of {len(k['runs']['1'])}; {100 * k['share']:.0f} % of it in splu/solve (GIL released): "
                f"Amdahl's bound on 2 cores {1 / ((1 - k['share']) + k['share'] / 2):.2f}x",
            )
            line(
                "  jobs=2: wall / CPU (all threads)",
                f"{w2:.2f} s",
                f"{c2:.2f} s",
                None,
                f"CPU/wall {c2 / w2:.2f} (2.0 = both cores busy throughout); CPU vs jobs=1 {c2 / c1:.2f}x",
            )
            line(
                "  bare 2 threads: wall / CPU",
                f"{b2:.2f} s",
                f"{bc2:.2f} s",
                None,
                f"1 thread {b1:.2f} s / {bc1:.2f} s; load (1 min) {', '.join(f'{x:.1f}' for x in k['load'])} "
                f"on {k['cores']} cores",
            )
            (n_memo, t_memo), (n_none, t_none) = k["wide"]["memo"], k["wide"]["none"]
            line(
                "  to infinity (jobs=1): solves with / without memo",
                f"{n_memo}",
                f"{n_none}",
                n_memo / n_none,
                f"{t_memo:.2f} s vs {t_none:.2f} s; same bits: {k['wide_same']}",
            )

        if want("lowrank"):
            nx, ny = (60, 60) if q else (316, 317)
            lr = lowrank(nx, ny, (30, 30) if q else (70, 72))
            line(
                f"low-rank Gramian, RC mesh {nx}x{ny} to infinity",
                f"{lr['time']:.1f} s",
                f"{lr['ref']:.1f} s",
                lr["time"] / lr["ref"],
                f"(bare: splu + solve x 100 frequencies; {lr['factorizations']} LUs, rank {lr['rank']}, "
                f"{lr['sources']} sources, kT/C to {lr['kt_c_rel']:.1e})",
            )
            line(
                "  against the same loop, minimum-degree ordering",
                f"{lr['time']:.1f} s",
                f"{lr['ref_mmd']:.1f} s",
                lr["time"] / lr["ref_mmd"],
                "(bare: splu(permc_spec='MMD_AT_PLUS_A', symmetric mode) + solve x 100)",
            )
            line(
                "  + a finite band 1 kHz..10 GHz from that model",
                f"{lr['band_time']:.1f} s",
                f"{lr['ref_mmd']:.1f} s",
                lr["band_time"] / lr["ref_mmd"],
                f"(the model above reused + 7 full checking LUs; model error {lr['band_model_error']:.1e} of the "
                f"total density, integrator {lr['band_rel_error']:.1e})",
            )
            line("  peak memory (its own process)", f"{lr['rss'] / 2**30:.2f} GiB")
            whole = lowrank_cli(nx, ny, tmp)
            line(
                "  whole CLI run to infinity (report + JSON)",
                f"{whole['cli']:.1f} s",
                f"{lr['ref_mmd']:.1f} s",
                whole["cli"] / lr["ref_mmd"],
                f"<= 0.25x  (bare: the minimum-degree loop above; totals {whole['method']}, "
                f"{whole['sources']} sources; peak memory of the largest child so far "
                f"{whole['rss'] / 2**30:.2f} GiB, < 3 GB)",
            )
            line(
                f"  its accuracy vs dense eigh at {lr['n_check']} nodes",
                f"{lr['share_err']:.1e}",
                "",
                None,
                f"worst source vs total; sources >= 1e-3 of the largest: {lr['big_rel']:.1e} relative",
            )
    print(
        f"peak memory of this benchmark process: {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 2**20:.2f} GiB"
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())

"""matplotlib is loaded only when a plot is drawn (checked in fresh interpreters)."""

from __future__ import annotations

import os
import pathlib
import subprocess
import sys
import textwrap

REPO = pathlib.Path(__file__).resolve().parents[1]


def _run(code: str) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-c", textwrap.dedent(code)],
        cwd=REPO,
        env={**os.environ, "PYTHONPATH": str(REPO)},
        capture_output=True,
        text=True,
        timeout=120,
    )


def test_importing_the_package_and_cli_does_not_import_matplotlib():
    completed = _run(
        """
        import sys
        import netnoise, netnoise.cli, netnoise.outputs.report, netnoise.outputs.export, netnoise.outputs.plotting, netnoise.results.figures
        loaded = sorted(name for name in sys.modules if name.split(".")[0] == "matplotlib")
        print("LOADED:" + ",".join(loaded))
        """
    )
    assert completed.returncode == 0, completed.stderr
    assert completed.stdout.strip() == "LOADED:"


def test_a_run_without_plot_does_not_import_matplotlib(tmp_path):
    # a real run of the command line, parser and engine included, with JSON and CSV output
    netlist = tmp_path / "c.cir"
    netlist.write_text("rc\nR1 out 0 1k\nC1 out 0 1n\n.noise v(out) dec 10 1 1meg\n.end\n")
    completed = _run(
        f"""
        import sys
        from netnoise.cli import main
        status = main(["analyze", {str(netlist)!r}, "--json", {str(tmp_path / "r.json")!r},
                       "--csv", {str(tmp_path / "r.csv")!r}, "--group", "mechanism", "--dc",
                       "--adc", "16", "4.096", "1meg", "--signal", "1m", "--signal-at", "output"])
        print("STATUS:", status, file=sys.stderr)
        print("MPL:", any(n.split(".")[0] == "matplotlib" for n in sys.modules), file=sys.stderr)
        """
    )
    assert "STATUS: 0" in completed.stderr, completed.stderr
    assert "MPL: False" in completed.stderr


def test_the_cli_module_imports_neither_the_engine_nor_matplotlib():
    # cli.py's docstring promises it: both load when a command needs them
    completed = _run(
        """
        import sys
        import netnoise.cli
        engine = sorted(n for n in sys.modules if n.startswith(("netnoise.engine", "netnoise.netlist", "scipy", "matplotlib")))
        print("LOADED:" + ",".join(engine))
        """
    )
    assert completed.returncode == 0, completed.stderr
    assert completed.stdout.strip() == "LOADED:"


def test_the_public_api_loads_on_first_use_and_the_version_comes_from_metadata():
    import importlib.metadata

    import netnoise

    assert callable(netnoise.analyze) and callable(netnoise.prepare) and netnoise.NoiseResult.__name__ == "NoiseResult"
    assert set(netnoise.__all__) <= set(dir(netnoise))
    try:
        expected = importlib.metadata.version("netnoise")
    except importlib.metadata.PackageNotFoundError:
        expected = "0+unknown"
    assert netnoise.__version__ == expected


def test_the_package_is_marked_typed():
    import netnoise

    assert (pathlib.Path(netnoise.__file__).parent / "py.typed").is_file()


def test_every_lazy_name_is_public_and_every_public_name_resolves():
    import netnoise

    assert set(netnoise._LAZY) <= set(netnoise.__all__)
    for name in netnoise.__all__:
        assert getattr(netnoise, name) is not None


def test_a_small_circuit_loads_only_what_it_needs(tmp_path):
    # a real run of the command line on a four-element circuit: its 4 unknowns are solved dense by
    # numpy, its topology checked by union-find, so none of scipy's linear algebra, graph
    # routines, the thread-pool control or matplotlib is imported
    netlist = tmp_path / "four.cir"
    netlist.write_text(
        "four\nVin in 0 AC 1\nR1 in out 1k\nC1 out 0 1n\nR2 out 0 1meg\n.noise v(out) Vin dec 20 10 10meg\n.end\n"
    )
    completed = _run(
        f"""
        import sys
        from netnoise.cli import main
        status = main(["analyze", {str(netlist)!r}, "--json", {str(tmp_path / "r.json")!r}])
        heavy = ("scipy.linalg", "scipy.sparse.linalg", "scipy.sparse.csgraph", "scipy.integrate",
                 "scipy.optimize", "threadpoolctl", "matplotlib", "netnoise.engine.gramian")
        loaded = sorted(n for n in sys.modules if n in heavy or n.startswith(tuple(h + "." for h in heavy)))
        print("STATUS:", status, file=sys.stderr)
        print("LOADED:" + ",".join(loaded), file=sys.stderr)
        print("NUMPY:", "numpy" in sys.modules, file=sys.stderr)
        """
    )
    assert "STATUS: 0" in completed.stderr, completed.stderr
    assert "LOADED:\n" in completed.stderr, completed.stderr
    assert "NUMPY: True" in completed.stderr  # the run did solve: numpy is loaded


def test_a_circuit_with_a_banded_structure_loads_the_graph_ordering(tmp_path):
    # the other side of the same choice: 60 sections of a ladder are ordered (reverse Cuthill-McKee)
    # and solved banded, which needs scipy.sparse.csgraph and LAPACK from scipy.linalg
    lines = ["ladder", "Vin in 0 AC 1"]
    lines += [f"R{i} {'in' if i == 1 else f'n{i - 1}'} n{i} 100\nC{i} n{i} 0 1p" for i in range(1, 61)]
    netlist = tmp_path / "ladder.cir"
    netlist.write_text("\n".join(lines + [".noise v(n60) Vin dec 10 1k 1g", ".end"]) + "\n")
    completed = _run(
        f"""
        import sys
        from netnoise.cli import main
        status = main(["analyze", {str(netlist)!r}])
        print("STATUS:", status, file=sys.stderr)
        print("GRAPH:", "scipy.sparse.csgraph" in sys.modules, "scipy.linalg" in sys.modules, file=sys.stderr)
        """
    )
    assert "STATUS: 0" in completed.stderr, completed.stderr
    assert "GRAPH: True True" in completed.stderr

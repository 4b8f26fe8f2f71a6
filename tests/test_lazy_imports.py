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

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
        import netnoise, netnoise.cli, netnoise.report, netnoise.export, netnoise.plotting
        loaded = sorted(name for name in sys.modules if name.split(".")[0] == "matplotlib")
        print("LOADED:" + ",".join(loaded))
        """
    )
    assert completed.returncode == 0, completed.stderr
    assert completed.stdout.strip() == "LOADED:"


def test_a_run_without_plot_does_not_import_matplotlib(tmp_path):
    # the engine and parser are stubbed, so this checks the command line's own imports
    netlist = tmp_path / "c.cir"
    netlist.write_text("stub\n.end\n")
    completed = _run(
        f"""
        import importlib.util, pathlib, sys, types
        spec = importlib.util.spec_from_file_location("samples", {str(REPO / "tests" / "_output_samples.py")!r})
        samples = importlib.util.module_from_spec(spec)
        spec.loader.exec_module(samples)
        for name, attr, fn in [
            ("netnoise.netlist", "load_netlist", lambda path: object()),
            ("netnoise.analysis", "analyze", lambda circuit, **kw: samples.resistors()),
        ]:
            module = types.ModuleType(name)
            setattr(module, attr, fn)
            sys.modules[name] = module
        from netnoise.cli import main
        status = main(["analyze", {str(netlist)!r}, "--json", {str(tmp_path / "r.json")!r},
                       "--csv", {str(tmp_path / "r.csv")!r}])
        print("STATUS:", status, file=sys.stderr)
        print("MPL:", any(n.split(".")[0] == "matplotlib" for n in sys.modules), file=sys.stderr)
        """
    )
    assert "STATUS: 0" in completed.stderr, completed.stderr
    assert "MPL: False" in completed.stderr

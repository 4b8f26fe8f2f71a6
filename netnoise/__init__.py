"""netnoise: noise budgets for linear analog circuits from SPICE-style netlists.

    >>> import netnoise
    >>> circuit = netnoise.load_netlist("circuits/sample_hold.cir")
    >>> result = netnoise.analyze(circuit)
    >>> print(netnoise.format_report(result))

Results are design estimates.  For mains-connected or safety-related
equipment, follow local codes and licensed engineering practice.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

from netnoise.errors import CircuitError, NetlistError, NetlistProblems, NetnoiseError, UsageError

# The public API, loaded when first used: ``import netnoise`` (and the command
# line, which imports this package) stays light until a name is asked for.
_LAZY = {
    "dc": ("netnoise.engine.dc", None),
    "figures": ("netnoise.results.figures", None),
    "analyze": ("netnoise.engine.analysis", "analyze"),
    "prepare": ("netnoise.engine.analysis", "prepare"),
    "PreparedAnalysis": ("netnoise.engine.analysis", "PreparedAnalysis"),
    "output_density_function": ("netnoise.engine.analysis", "output_density_function"),
    "operating_point": ("netnoise.engine.dc", "operating_point"),
    "load_netlist": ("netnoise.netlist.load", "load_netlist"),
    "parse_netlist": ("netnoise.netlist.load", "parse_netlist"),
    "format_report": ("netnoise.outputs.report", "format_report"),
    "plot_noise": ("netnoise.outputs.plotting", "plot_noise"),  # matplotlib itself loads only when a plot is drawn
    "plot_density": ("netnoise.outputs.plotting", "plot_density"),
    "plot_cumulative": ("netnoise.outputs.plotting", "plot_cumulative"),
    "NoisePlot": ("netnoise.outputs.plotting", "NoisePlot"),
    "save_plot": ("netnoise.outputs.plotting", "save_plot"),
    "write_json": ("netnoise.outputs.export", "write_json"),
    "write_csv": ("netnoise.outputs.export", "write_csv"),
    "result_to_dict": ("netnoise.outputs.export", "result_to_dict"),
    "Circuit": ("netnoise.circuit.flat", "Circuit"),
    "NoiseResult": ("netnoise.results.result", "NoiseResult"),
    "Contribution": ("netnoise.results.result", "Contribution"),
    "montecarlo": ("netnoise.studies.montecarlo", "montecarlo"),
    "MonteCarloResult": ("netnoise.studies.montecarlo", "MonteCarloResult"),
    "Tolerance": ("netnoise.studies.montecarlo", "Tolerance"),
}

__all__ = [
    "dc",
    "figures",
    "analyze",
    "prepare",
    "PreparedAnalysis",
    "output_density_function",
    "operating_point",
    "load_netlist",
    "parse_netlist",
    "format_report",
    "plot_noise",
    "plot_density",
    "plot_cumulative",
    "NoisePlot",
    "save_plot",
    "write_json",
    "write_csv",
    "result_to_dict",
    "Circuit",
    "NoiseResult",
    "Contribution",
    "NetnoiseError",
    "NetlistError",
    "NetlistProblems",
    "UsageError",
    "CircuitError",
    "montecarlo",
    "MonteCarloResult",
    "Tolerance",
    "__version__",
]


def __getattr__(name: str) -> Any:
    if name == "__version__":
        from importlib import metadata

        try:  # the one place the version is written is pyproject.toml; the installed metadata carries it
            value: Any = metadata.version("netnoise")
        except metadata.PackageNotFoundError:  # a source tree that was never installed
            value = "0+unknown"
    elif name in _LAZY:
        module, attribute = _LAZY[name]
        value = importlib.import_module(module)
        if attribute is not None:
            value = getattr(value, attribute)
    else:
        raise AttributeError(f"module 'netnoise' has no attribute {name!r}")
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))


if TYPE_CHECKING:  # what the lazy names are, for type checkers and readers
    from netnoise.circuit.flat import Circuit
    from netnoise.engine import dc
    from netnoise.engine.analysis import PreparedAnalysis, analyze, output_density_function, prepare
    from netnoise.engine.dc import operating_point
    from netnoise.netlist.load import load_netlist, parse_netlist
    from netnoise.outputs.export import result_to_dict, write_csv, write_json
    from netnoise.outputs.plotting import NoisePlot, plot_cumulative, plot_density, plot_noise, save_plot
    from netnoise.outputs.report import format_report
    from netnoise.results import figures
    from netnoise.results.result import Contribution, NoiseResult
    from netnoise.studies.montecarlo import MonteCarloResult, Tolerance, montecarlo

"""netnoise: noise budgets for linear analog circuits from SPICE-style netlists.

    >>> import netnoise
    >>> circuit = netnoise.load_netlist("circuits/sample_hold.cir")
    >>> result = netnoise.analyze(circuit)
    >>> print(netnoise.format_report(result))

Results are design estimates.  For mains-connected or safety-related
equipment, follow local codes and licensed engineering practice.
"""

from netnoise.engine import dc
from netnoise.results import figures
from netnoise.engine.analysis import PreparedAnalysis, analyze, output_density_function, prepare
from netnoise.circuit import Circuit
from netnoise.engine.dc import operating_point
from netnoise.errors import CircuitError, NetlistError, NetnoiseError, UsageError
from netnoise.outputs.export import result_to_dict, write_csv, write_json
from netnoise.netlist import load_netlist, parse_netlist
from netnoise.outputs.plotting import plot_noise, save_plot  # matplotlib itself loads only when a plot is drawn
from netnoise.outputs.report import format_report
from netnoise.results.result import Contribution, NoiseResult
from netnoise.studies.montecarlo import MonteCarloResult, Tolerance, montecarlo

__version__ = "0.1.0"

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
    "save_plot",
    "write_json",
    "write_csv",
    "result_to_dict",
    "Circuit",
    "NoiseResult",
    "Contribution",
    "NetnoiseError",
    "NetlistError",
    "UsageError",
    "CircuitError",
    "montecarlo",
    "MonteCarloResult",
    "Tolerance",
]

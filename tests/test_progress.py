"""The progress line of long runs: counts what the engine solves, shows it
on a terminal only, after a delay, throttled, and wipes it before the report."""

from __future__ import annotations

import io

import netnoise
from netnoise.engine import transfer
from netnoise.engine.mna import assemble
from netnoise.engine.options import SolverOptions
from netnoise.outputs.progress import ProgressLine

LADDER = (
    "ladder\nVin in 0 AC 1\n"
    + "".join(f"R{i} {'in' if i == 1 else f'n{i - 1}'} n{i} 1k\nC{i} n{i} 0 1n\n" for i in range(1, 301))
    + ".end\n"
)


class Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


class Clock:
    def __init__(self) -> None:
        self.now = 0.0

    def __call__(self) -> float:
        return self.now


def test_nothing_is_shown_off_a_terminal_but_the_count_is_kept():
    stream = io.StringIO()
    line = ProgressLine(stream, delay_s=0.0, interval_s=0.0)
    line(5)
    line(7)
    line.clear()
    assert line.solved == 12 and stream.getvalue() == ""


def test_shown_after_the_delay_at_most_once_an_interval_then_wiped():
    stream, clock = Terminal(), Clock()
    line = ProgressLine(stream, delay_s=1.0, interval_s=0.25, clock=clock)
    line(10)  # t = 0: a short run shows nothing
    assert stream.getvalue() == ""
    clock.now = 1.5
    line(10)
    assert stream.getvalue() == "\rnetnoise: 20 frequencies solved, 2 s"
    clock.now = 1.6  # within the interval: counted, not shown
    line(1)
    assert stream.getvalue().count("\r") == 1 and line.solved == 21
    clock.now = 2.0
    line(1)
    assert stream.getvalue().endswith("\rnetnoise: 22 frequencies solved, 2 s")
    line.clear()
    width = len("netnoise: 22 frequencies solved, 2 s")
    assert stream.getvalue().endswith("\r" + " " * width + "\r")


def test_analyze_reports_every_frequency_it_solves(monkeypatch):
    # 301 unknowns: the banded path, one call per frequency; every grid point is solved, and
    # the integrator's extra frequencies, if any, come on top
    counts: list[int] = []
    circuit = netnoise.parse_netlist(LADDER)
    result = netnoise.analyze(circuit, output="n300", band=(1.0, 1e6), points_per_decade=10, progress=counts.append)
    assert transfer.solver_for(assemble(circuit)).method == "banded"
    assert set(counts) == {1}
    assert len(counts) >= len(result.frequency_Hz)
    # the dense path reports a whole batch at once
    batches: list[int] = []
    netnoise.analyze(
        circuit,
        output="n300",
        band=(1.0, 1e6),
        points_per_decade=10,
        progress=batches.append,
        options=SolverOptions(method="dense"),
    )
    assert sum(batches) == len(counts)

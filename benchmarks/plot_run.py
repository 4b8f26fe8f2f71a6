"""The cost of a plot run (issue 15), beside its bare reference in the same run.

    python benchmarks/plot_run.py              # 9 interleaved repetitions
    python benchmarks/plot_run.py --repeat 15

Three fresh interpreters, interleaved so they see the same machine load:

* bare -- ``import numpy, scipy.sparse.linalg`` and matplotlib's ``Figure``
  and Agg canvas, nothing drawn: the least any plot run must pay;
* plot -- ``netnoise analyze four.cir --plot out.png`` (analysis, report, PNG);
* text -- ``netnoise analyze four.cir`` (no plot), for scale.

The target is plot / bare <= 2.  Medians are reported (the machines are
shared); nothing here is a test.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).absolute().parent
REPO = HERE.parent
sys.path.insert(0, str(HERE))

import generators as gen  # noqa: E402

ENV = {**os.environ, "PYTHONPATH": str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""), "MPLBACKEND": "Agg"}

BARE = "import numpy, scipy.sparse.linalg; from matplotlib.figure import Figure; from matplotlib.backends.backend_agg import FigureCanvasAgg"


def wall(cmd: list[str]) -> float:
    t = time.perf_counter()
    subprocess.run(cmd, env=ENV, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=True)
    return time.perf_counter() - t


DRAW = """
import sys, time, tempfile, os
import netnoise
result = netnoise.analyze(netnoise.parse_netlist(open(sys.argv[1]).read()))
target = os.path.join(tempfile.mkdtemp(), "p.png")
t = time.perf_counter(); netnoise.save_plot(result, target); first = time.perf_counter() - t
times = []
for _ in range(5):
    t = time.perf_counter(); netnoise.save_plot(result, target); times.append(time.perf_counter() - t)
print(first, min(times))
"""


def draw_times(netlist: Path) -> tuple[float, float]:
    """(first save_plot in a process, best later one), seconds: the drawing alone."""
    out = subprocess.run(
        [sys.executable, "-c", DRAW, str(netlist)], env=ENV, capture_output=True, text=True, check=True
    )
    first, later = out.stdout.split()
    return float(first), float(later)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--repeat", type=int, default=9)
    args = ap.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        netlist = Path(tmp) / "four.cir"
        netlist.write_text(gen.four_element())
        png = Path(tmp) / "out.png"
        commands = {
            "bare": [sys.executable, "-c", BARE],
            "plot": [sys.executable, "-m", "netnoise", "analyze", str(netlist), "--plot", str(png)],
            "text": [sys.executable, "-m", "netnoise", "analyze", str(netlist)],
        }
        for cmd in commands.values():  # warm the disk cache and the parser's table cache
            wall(cmd)
        times: dict[str, list[float]] = {name: [] for name in commands}
        for _ in range(args.repeat):
            for name, cmd in commands.items():
                times[name].append(wall(cmd))
        first, later = draw_times(netlist)
    median = {name: float(np.median(values)) for name, values in times.items()}
    print(f"plot run, median of {args.repeat} (interleaved):")
    print(f"  bare imports (numpy, scipy.sparse.linalg, Figure, Agg)  {median['bare']:.3f} s")
    print(
        f"  netnoise analyze four.cir --plot out.png              {median['plot']:.3f} s   {median['plot'] / median['bare']:.2f}x bare (target <= 2)"
    )
    print(
        f"  netnoise analyze four.cir                             {median['text']:.3f} s   {median['text'] / median['bare']:.2f}x bare"
    )
    print(f"  save_plot to PNG in-process: first {first * 1e3:.0f} ms (fonts, first draw), then {later * 1e3:.0f} ms")
    return 0


if __name__ == "__main__":
    sys.exit(main())

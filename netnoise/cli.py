"""The ``netnoise`` command line.

::

    netnoise analyze NETLIST [--out NODE] [--ref NODE] [--input SOURCE]
                             [--band LOW HIGH] [--points N] [--temp CELSIUS]
                             [--json PATH|-] [--csv PATH] [--plot PATH] [--top N]
    netnoise --version

The text report goes to standard output.  With ``--json -`` standard output
carries the JSON document alone and the text report goes to standard error
instead, so ``netnoise analyze c.cir --json - | python -m json.tool`` works
while the designer still sees the budget in the terminal.  Messages about
written files go to standard error.

Exit status: 0 success; 1 the circuit cannot be analysed as asked; 2 a
netlist error or a bad option (including argparse's own usage errors); 3 an
internal error (a bug: one line, with the traceback only when the environment
variable ``NETNOISE_DEBUG=1``).

This module imports neither matplotlib nor the engine at import time; both
are loaded when a command needs them.
"""

from __future__ import annotations

import argparse
import math
import os
import sys
import traceback
from collections.abc import Sequence

from . import __version__
from .errors import NetnoiseError, UsageError

__all__ = ["main", "build_parser"]

PROG = "netnoise"
ERROR_PREFIX = f"{PROG}: error: "
DEFAULT_TOP = 15
_INFINITY_WORDS = {"inf", "infinity", "+inf", "∞"}

_EPILOG = """\
output streams:
  The text report is printed to standard output.  With --json - the JSON
  document is the only thing on standard output and the report is printed
  to standard error.

exit status:
  0 success, 1 circuit cannot be analysed, 2 netlist or usage error,
  3 internal error (set NETNOISE_DEBUG=1 for a traceback).
"""


# --- argument types -----------------------------------------------------------
def _count(minimum: int):
    def parse(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected a whole number, got '{text}'") from None
        if value < minimum:
            raise argparse.ArgumentTypeError(f"must be {minimum} or more, got {value}")
        return value

    return parse


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog=PROG,
        description="Noise budgets for linear analog circuits described by a netlist.",
    )
    parser.add_argument("--version", action="version", version=f"{PROG} {__version__}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)

    analyze = commands.add_parser(
        "analyze",
        help="integrate the output noise and rank its sources",
        description="Integrate a circuit's output noise over a band and rank every noise source's share.",
        epilog=_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    analyze.add_argument("netlist", metavar="NETLIST", help="netlist file to read")
    where = analyze.add_argument_group("what to analyse (defaults come from the netlist's .noise card)")
    where.add_argument("--out", metavar="NODE", help="output node")
    where.add_argument("--ref", metavar="NODE", help="reference node of the output (default ground)")
    where.add_argument("--input", metavar="SOURCE", help="signal input source, for gain and input-referred noise")
    where.add_argument(
        "--band",
        nargs=2,
        metavar=("LOW", "HIGH"),
        help="integration band in Hz; engineering suffixes allowed (10k), HIGH may be 'inf'",
    )
    where.add_argument("--points", type=_count(1), metavar="N", help="grid points per decade")
    where.add_argument("--temp", metavar="CELSIUS", help="analysis temperature in °C")
    out = analyze.add_argument_group("outputs")
    out.add_argument("--json", metavar="PATH", help="write the result as JSON ('-' for standard output)")
    out.add_argument("--csv", metavar="PATH", help="write the noise spectrum as CSV")
    out.add_argument("--plot", metavar="PATH", help="write a plot (.png, .svg or .pdf)")
    out.add_argument(
        "--top",
        type=_count(0),
        default=DEFAULT_TOP,
        metavar="N",
        help=f"rows in the budget table, the rest lumped together (default {DEFAULT_TOP}; 0 lists all)",
    )
    return parser


# --- option values --------------------------------------------------------
def _frequency(text: str, which: str, *, allow_infinite: bool) -> float:
    if text.strip().lower() in _INFINITY_WORDS:
        if allow_infinite:
            return math.inf
        raise UsageError(f"--band {which} must be finite, got '{text}'")
    from .values import parse_value

    try:
        value = float(parse_value(text))
    except ValueError as error:
        raise UsageError(f"--band {which}: cannot read '{text}' as a frequency ({error})") from None
    if math.isnan(value) or (math.isinf(value) and not allow_infinite):
        raise UsageError(f"--band {which} must be a finite number of hertz, got '{text}'")
    return value


def parse_band(pair: Sequence[str] | None) -> tuple[float, float] | None:
    """``--band LOW HIGH`` as (low, high) in Hz; high may be ``math.inf``."""
    if pair is None:
        return None
    low = _frequency(pair[0], "LOW", allow_infinite=False)
    high = _frequency(pair[1], "HIGH", allow_infinite=True)
    if low < 0:
        raise UsageError(f"--band LOW must be 0 Hz or more, got {pair[0]}")
    if not high > low:
        hint = ""
        if pair[1].rstrip().rstrip("zZ").rstrip("hH").endswith("M"):
            hint = "; note that M means milli (1M = 1 mHz), write meg for mega"
        raise UsageError(f"--band HIGH ({pair[1]}) must be above LOW ({pair[0]}){hint}")
    return low, high


def parse_temperature(text: str | None) -> float | None:
    if text is None:
        return None
    try:
        celsius = float(text)
    except ValueError:
        raise UsageError(f"--temp: cannot read '{text}' as degrees Celsius") from None
    if not math.isfinite(celsius) or celsius <= -273.15:
        raise UsageError(f"--temp must be above absolute zero (-273.15 °C), got {text}")
    return celsius


def check_outputs(args: argparse.Namespace) -> None:
    """Refuse outputs that would overwrite the netlist or each other, before any work."""
    from .plotting import SAVE_FORMATS

    netlist = os.path.realpath(args.netlist)
    seen: dict[str, str] = {}
    for option, path in (("--json", args.json), ("--csv", args.csv), ("--plot", args.plot)):
        if path is None:
            continue
        if path == "-":
            if option != "--json":
                raise UsageError(f"{option} needs a file name; only --json can write to standard output ('-')")
            continue
        real = os.path.realpath(path)
        if real == netlist:
            raise UsageError(f"{option} {path} would overwrite the input netlist; choose another file name")
        if real in seen:
            raise UsageError(f"{seen[real]} and {option} both name {path}; give each output its own file")
        if os.path.isdir(real):
            raise UsageError(f"{option} {path} is a folder; give a file name")
        seen[real] = option
    if args.plot is not None and os.path.splitext(args.plot)[1].lower() not in SAVE_FORMATS:
        raise UsageError(f"--plot {args.plot}: use a file name ending in {', '.join(SAVE_FORMATS)}")


# --- the command ------------------------------------------------------------
def _load(path: str):
    from . import netlist

    if not os.path.isfile(path):
        raise UsageError(f"cannot read netlist '{path}': no such file")
    try:
        return netlist.load_netlist(path)
    except OSError as error:
        raise UsageError(f"cannot read netlist '{path}': {error.strerror or error}") from None


def _write(option: str, path: str, write) -> None:
    try:
        write()
    except OSError as error:
        raise UsageError(f"{option}: cannot write '{path}': {error.strerror or error}") from None
    if path != "-":
        print(f"{PROG}: wrote {path}", file=sys.stderr)


def run_analyze(args: argparse.Namespace) -> int:
    from .export import write_csv, write_json
    from .report import format_report

    check_outputs(args)
    band = parse_band(args.band)
    temperature = parse_temperature(args.temp)
    circuit = _load(args.netlist)
    from . import analysis

    result = analysis.analyze(
        circuit,
        output=args.out,
        reference=args.ref,
        input_source=args.input,
        band=band,
        points_per_decade=args.points,
        temperature_celsius=temperature,
    )
    report = format_report(result, top=None if args.top == 0 else args.top)
    report_stream = sys.stderr if args.json == "-" else sys.stdout
    report_stream.write(report)
    report_stream.flush()
    if args.json is not None:
        _write("--json", args.json, lambda: write_json(result, args.json))
    if args.csv is not None:
        _write("--csv", args.csv, lambda: write_csv(result, args.csv))
    if args.plot is not None:
        from .plotting import save_plot

        _write("--plot", args.plot, lambda: save_plot(result, args.plot))
    return 0


def _internal_error(error: BaseException) -> int:
    if os.environ.get("NETNOISE_DEBUG") == "1":
        traceback.print_exception(error, file=sys.stderr)
    detail = " ".join(f"{type(error).__name__}: {error}".split())
    print(
        f"{PROG}: internal error ({detail}); please report it. Set NETNOISE_DEBUG=1 to see the traceback.",
        file=sys.stderr,
    )
    return 3


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as stop:  # --help, --version, or argparse's usage error (2)
        return stop.code if isinstance(stop.code, int) else (0 if stop.code is None else 2)
    try:
        if args.command == "analyze":
            return run_analyze(args)
        raise UsageError(f"unknown command {args.command!r}")  # argparse rejects these first
    except NetnoiseError as error:
        print(f"{ERROR_PREFIX}{error}", file=sys.stderr)
        return error.exit_status
    except KeyboardInterrupt:
        print(f"{PROG}: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:  # e.g. `netnoise analyze c.cir | head`
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return 1
    except Exception as error:  # noqa: BLE001 -- the last line of defence
        return _internal_error(error)

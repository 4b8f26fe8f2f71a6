"""The ``netnoise`` command line.

::

    netnoise analyze NETLIST [--out NODE] [--ref NODE] [--input SOURCE]
                             [--band LOW HIGH] [--points N] [--temp CELSIUS]
                             [--source-resistor NAME] [--signal RMS [--signal-at input|output]]
                             [--adc BITS RANGE RATE] [--group element|mechanism] [--dc]
                             [--json PATH|-] [--csv PATH] [--plot PATH] [--top N]
    netnoise --version

The text report goes to standard output.  With ``--json -`` standard output
carries the JSON document alone and the text report goes to standard error
instead, so ``netnoise analyze c.cir --json - | python -m json.tool`` works
while the designer still sees the budget in the terminal.  Messages about
written files go to standard error.

Nothing is printed or written until every figure asked for has been
computed and checked: a result holding NaN or an infinity is refused with
the reason (exit 1), never printed.  Output paths are checked before the
analysis (not the netlist or a file it includes, not two outputs on one
file, the folder must exist).

Exit status: 0 success; 1 the circuit cannot be analysed as asked; 2 a
netlist error or a bad option (including argparse's own usage errors); 3 an
internal error (a bug: one line, with the traceback only when the environment
variable ``NETNOISE_DEBUG=1``).

This module imports neither matplotlib nor the engine at import time; both
are loaded when a command needs them.
"""

from __future__ import annotations

import argparse
import gc
import math
import os
import sys
import traceback
from collections.abc import Sequence

from netnoise import __version__
from netnoise.errors import CircuitError, NetnoiseError, UsageError

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
    merit = analyze.add_argument_group("figures of merit")
    merit.add_argument(
        "--source-resistor",
        metavar="NAME",
        help="resistor the noise figure is referred to (its noise taken at 290 K, IEEE definition)",
    )
    merit.add_argument(
        "--signal",
        metavar="RMS",
        help="signal rms (V, or A for a current input source; suffixes allowed: 10m) for the SNR",
    )
    merit.add_argument(
        "--signal-at",
        choices=("input", "output"),
        help="where the --signal level is stated: at the input source (default) or at the output",
    )
    merit.add_argument(
        "--adc",
        nargs=3,
        metavar=("BITS", "RANGE", "RATE"),
        help="compare with an ideal ADC: resolution in bits, full-scale range peak-to-peak in V, "
        "sample rate in Hz (suffixes allowed: 16 4.096 1meg)",
    )
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
    out.add_argument(
        "--group",
        choices=("element", "mechanism"),
        help="merge the budget's rows by element or by mechanism (default: one row per noise source)",
    )
    out.add_argument("--dc", action="store_true", help="append the DC operating point to the report")
    from netnoise import cli_montecarlo  # the montecarlo subcommand, in a module of its own

    cli_montecarlo.add_parser(commands, _EPILOG, _count)
    return parser


# --- option values --------------------------------------------------------
def _frequency(text: str, which: str, *, allow_infinite: bool) -> float:
    if text.strip().lower() in _INFINITY_WORDS:
        if allow_infinite:
            return math.inf
        raise UsageError(f"--band {which} must be finite, got '{text}'")
    from netnoise.text.values import parse_value

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


def _positive_value(option: str, text: str, what: str) -> tuple[float, str]:
    """A positive finite value with engineering suffixes: (value, the letters
    after the number as written)."""
    from netnoise.text.values import parse_value

    try:
        value = parse_value(text)
    except ValueError as error:
        raise UsageError(f"{option}: cannot read '{text}' as {what} ({error})") from None
    if not (value > 0 and math.isfinite(value)):
        raise UsageError(f"{option}: {what} must be above zero, got '{text}'")
    return value, text.strip().lstrip("+-.0123456789eE")


def parse_signal(text: str | None) -> float | None:
    """``--signal RMS`` in V (or A), > 0."""
    if text is None:
        return None
    return _positive_value("--signal", text, "a signal rms")[0]


def parse_adc(triple: Sequence[str] | None) -> tuple[int, float, float] | None:
    """``--adc BITS RANGE RATE`` as (bits, full scale V peak-to-peak, sample rate Hz)."""
    if triple is None:
        return None
    bits_text, range_text, rate_text = triple
    try:
        bits = int(bits_text)
    except ValueError:
        raise UsageError(f"--adc BITS must be a whole number of bits (1 to 32), got '{bits_text}'") from None
    if not 1 <= bits <= 32:
        raise UsageError(f"--adc BITS must be 1 to 32, got {bits}")
    full_scale, _ = _positive_value("--adc RANGE", range_text, "a full-scale range in volts")
    rate, written = _positive_value("--adc RATE", rate_text, "a sample rate in hertz")
    if written[:1] == "M" and not written.lower().startswith(("meg", "mil")):
        raise UsageError(
            f"--adc RATE '{rate_text}' reads as {rate:g} Hz: M means milli, as in a netlist; "
            f"write {rate_text.strip()[: -len(written)]}meg for mega"
        )
    return bits, full_scale, rate


def _same_file(a: str, b: str) -> bool:
    """True when both paths exist and are one file (a hard link, for one)."""
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False


def check_outputs(args: argparse.Namespace) -> None:
    """Refuse outputs that would overwrite the netlist or each other, before any work."""
    from netnoise.outputs.plotting import SAVE_FORMATS

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
        if real == netlist or _same_file(real, netlist):
            raise UsageError(f"{option} {path} would overwrite the input netlist; choose another file name")
        if real in seen:
            raise UsageError(f"{seen[real]} and {option} both name {path}; give each output its own file")
        if os.path.isdir(real):
            raise UsageError(f"{option} {path} is a folder; give a file name")
        folder = os.path.dirname(real)
        if not os.path.isdir(folder):
            raise UsageError(
                f"{option} {path}: cannot write there, the folder '{os.path.dirname(path) or folder}' "
                "does not exist; create it first or choose another path"
            )
        seen[real] = option
    if args.plot is not None and os.path.splitext(args.plot)[1].lower() not in SAVE_FORMATS:
        raise UsageError(f"--plot {args.plot}: use a file name ending in {', '.join(SAVE_FORMATS)}")


# --- the command ------------------------------------------------------------
def _load(path: str):
    from netnoise import netlist

    if os.path.isdir(path):
        raise UsageError(f"cannot read netlist '{path}': it is a folder; give the netlist file")
    if not os.path.isfile(path):
        raise UsageError(f"cannot read netlist '{path}': no such file")
    try:
        return netlist.load_netlist(path)
    except OSError as error:
        raise UsageError(f"cannot read netlist '{path}': {error.strerror or error}") from None


def _read_files(circuit) -> set[str]:
    """Real paths of the files the netlist was read from (itself and its .include files)."""
    files = {getattr(circuit, "source_file", None)}
    for element in getattr(circuit, "elements", ()):
        origin = getattr(element, "origin", None)
        files.add(getattr(origin, "file", None))
    card = getattr(circuit, "noise_card", None)
    files.add(getattr(getattr(card, "origin", None), "file", None))
    return {os.path.realpath(f) for f in files if isinstance(f, str) and f and not f.startswith("<")}


def check_outputs_against_includes(args: argparse.Namespace, circuit) -> None:
    """Refuse an output that would overwrite a file the netlist includes."""
    read = _read_files(circuit)
    for option, path in (("--json", args.json), ("--csv", args.csv), ("--plot", args.plot)):
        if path not in (None, "-") and os.path.realpath(path) in read:
            raise UsageError(f"{option} {path} would overwrite a file the netlist includes; choose another file name")


def _write(option: str, path: str, write) -> None:
    try:
        write()
    except OSError as error:
        raise UsageError(f"{option}: cannot write '{path}': {error.strerror or error}") from None
    if path != "-":
        print(f"{PROG}: wrote {path}", file=sys.stderr)


def _engine_options(args: argparse.Namespace, band, temperature) -> dict:
    options = dict(
        output=args.out,
        reference=args.ref,
        input_source=args.input,
        band=band,
        points_per_decade=args.points,
        temperature_celsius=temperature,
    )
    if args.source_resistor is not None:  # only when asked: the noise figure costs an extra solve
        options["source_resistor"] = args.source_resistor
    return options


def run_analyze(args: argparse.Namespace) -> int:
    from netnoise.outputs.export import atomic_write, to_csv, to_json
    from netnoise.outputs.report import format_report

    # everything the user typed is checked before the (possibly long) analysis
    check_outputs(args)
    band = parse_band(args.band)
    temperature = parse_temperature(args.temp)
    signal = parse_signal(args.signal)
    if args.signal_at is not None and signal is None:
        raise UsageError("--signal-at says where the --signal level is stated; give --signal RMS too")
    signal_at = args.signal_at or "input"
    converter = parse_adc(args.adc)
    circuit = _load(args.netlist)
    check_outputs_against_includes(args, circuit)
    from netnoise.engine import analysis
    from netnoise.outputs.progress import ProgressLine

    progress = ProgressLine(sys.stderr)  # a count of solved frequencies, on a terminal, for long runs
    try:
        result = analysis.analyze(circuit, **_engine_options(args, band, temperature), progress=progress)
    finally:
        progress.clear()
    if args.source_resistor is not None and result.noise_figure_dB is None:
        raise CircuitError(f"the analysis gave no noise figure for --source-resistor {args.source_resistor}")
    extras: dict = {"group_by": args.group, "signal_at": signal_at}
    if signal is not None:
        from netnoise.results.figures import signal_to_noise

        extras["snr"] = signal_to_noise(result, signal, at=signal_at)
    if converter is not None:
        from netnoise.results.figures import adc_comparison

        bits, full_scale, rate = converter
        extras["adc"] = adc_comparison(result, bits=bits, full_scale_V=full_scale, sample_rate_Hz=rate)
    if args.dc:
        from netnoise.engine.dc import operating_point

        extras["operating_point"] = operating_point(circuit)

    # build every text first: a refusal (a NaN, an infinity) prints and writes nothing
    report = format_report(result, top=None if args.top == 0 else args.top, **extras)
    json_text = to_json(result, **extras) if args.json is not None else None
    csv_text = to_csv(result) if args.csv is not None else None

    if args.json == "-":
        sys.stdout.write(json_text)
        sys.stdout.flush()
        report_stream = sys.stderr
    else:
        report_stream = sys.stdout
    report_stream.write(report)
    report_stream.flush()
    if json_text is not None and args.json != "-":
        _write("--json", args.json, lambda: atomic_write(args.json, lambda handle: handle.write(json_text)))
    if csv_text is not None:
        _write("--csv", args.csv, lambda: atomic_write(args.csv, lambda handle: handle.write(csv_text)))
    if args.plot is not None:
        from netnoise.outputs.plotting import save_plot

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
    # One command builds the circuit, its noise sources and the result, none of them
    # cyclic, and all alive until the end: the cycle collector would only rescan them
    # (about 0.3 s of a 40,000-element ladder's run).  Memory is freed by reference counts.
    collecting = gc.isenabled()
    gc.disable()
    try:
        if args.command == "analyze":
            return run_analyze(args)
        if args.command == "montecarlo":
            from netnoise import cli_montecarlo

            return cli_montecarlo.run(args)
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
    finally:
        if collecting:
            gc.enable()

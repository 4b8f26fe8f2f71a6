"""The ``netnoise`` command line.

::

    netnoise analyze NETLIST [--out NODE] [--ref NODE] [--input SOURCE]
                             [--band LOW HIGH] [--points N] [--temp CELSIUS]
                             [--source-resistor NAME] [--gain-at FREQ]
                             [--signal RMS [--signal-at input|output]] [--adc BITS RANGE RATE]
                             [--group element|mechanism] [--dc]
                             [--json PATH|-] [--csv PATH] [--plot PATH]... [--plot-input-referred]
                             [--html PATH] [--top N]
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
import contextlib
import errno
import gc
import math
import os
import re
import stat
import sys
import traceback
import warnings
from collections.abc import Sequence

from netnoise.errors import CircuitError, NetnoiseError, UsageError

__all__ = ["main", "build_parser"]

PROG = "netnoise"
ERROR_PREFIX = f"{PROG}: error: "
DEFAULT_TOP = 15
_INFINITY_WORDS = {"inf", "infinity", "+inf", "∞"}

# what the command line adds to the notes of a result, by note code (netnoise.results.notes)
ADVICE = {
    "band-default": "choose one with --band LOW HIGH",
    "band-from-ac": "choose another with --band LOW HIGH",
    "temperature-default": "set it with --temp CELSIUS",
    "integration-accuracy": "raise --points",
    "flicker-band-start": "choose the low edge with --band LOW HIGH",
    "sweep-linear": "set the density with --points",
    "outside-rails": "check the bias network and the supply voltages",
}

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


def add_netlist_arguments(parser: argparse.ArgumentParser) -> None:
    """NETLIST and ``--confine-includes``, as every command that reads a netlist takes them."""
    parser.add_argument("netlist", metavar="NETLIST", help="netlist file to read")
    parser.add_argument(
        "--confine-includes",
        action="store_true",
        help="refuse any .include (at any depth) whose file, links followed, is outside the netlist's own folder tree",
    )


def add_where_arguments(
    parser: argparse.ArgumentParser,
    *,
    input_help: str | None,
    temp_help: str = "analysis temperature in °C",
    title: str = "what to analyse (defaults come from the netlist's .noise card)",
):
    """The output, reference, input source (unless ``input_help`` is None), band, grid and
    temperature options, in one group on ``parser``; returns the group."""
    where = parser.add_argument_group(title)
    where.add_argument("--out", metavar="NODE", help="output node")
    where.add_argument("--ref", metavar="NODE", help="reference node of the output (default ground)")
    if input_help is not None:
        where.add_argument("--input", metavar="SOURCE", help=input_help)
    where.add_argument(
        "--band",
        nargs=2,
        metavar=("LOW", "HIGH"),
        help="integration band in Hz; engineering suffixes allowed (10k), HIGH may be 'inf'",
    )
    where.add_argument("--points", type=_count(1), metavar="N", help="grid points per decade")
    where.add_argument("--temp", metavar="CELSIUS", help=temp_help)
    return where


MESSAGE_LINE_LIMIT = 400  # characters of one line of a message; a longer one is cut in the middle


def shorten_line(line: str, limit: int = MESSAGE_LINE_LIMIT) -> str:
    """``line`` cut in the middle to at most about ``limit`` characters, saying
    how many were left out (an option value can be 100,000 characters long)."""
    if len(line) <= limit:
        return line
    keep = limit - 40
    head, tail = line[: keep * 2 // 3], line[len(line) - keep // 3 :]
    return f"{head} … [{len(line) - len(head) - len(tail):,} characters left out] … {tail}"


def _message(error: BaseException) -> str:
    return "\n".join(shorten_line(line) for line in str(error).split("\n"))


class _Parser(argparse.ArgumentParser):
    """argparse with its errors as one line ``netnoise: error: ...`` (exit 2)
    instead of the usage block, as every other error of the command."""

    def error(self, message: str):  # type: ignore[override]
        line = " ".join(message.split())
        option = re.match(r"argument (--[\w-]+): expected one argument", line)
        if option:  # argparse reads a value such as -1e3 or -inf as an option
            line += f"; a value starting with '-' is written with '=' ({option.group(1)}=-1e3)"
        self.exit(
            2,
            f"{ERROR_PREFIX}{shorten_line(line)} (usage: {self.prog} ...; '{self.prog} --help' lists the options)\n",
        )


class _ShowVersion(argparse.Action):
    """``--version``: the installed metadata is read only when asked (reading it costs ~5 ms
    of every start)."""

    def __call__(self, parser, namespace, values, option_string=None):
        from netnoise import __version__

        print(f"{PROG} {__version__}")
        parser.exit()


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog=PROG,
        description="Noise budgets for linear analog circuits described by a netlist.",
    )
    parser.add_argument("--version", action=_ShowVersion, nargs=0, help="show the program's version number and exit")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)

    analyze = commands.add_parser(
        "analyze",
        help="integrate the output noise and rank its sources",
        description="Integrate a circuit's output noise over a band and rank every noise source's share.",
        epilog=_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    add_netlist_arguments(analyze)
    add_where_arguments(analyze, input_help="signal input source, for gain and input-referred noise")
    merit = analyze.add_argument_group("figures of merit")
    merit.add_argument(
        "--source-resistor",
        metavar="NAME",
        help="resistor the noise figure is referred to (its noise taken at 290 K, IEEE definition)",
    )
    merit.add_argument(
        "--gain-at",
        metavar="FREQ",
        help="refer the noise to the input with the signal gain at FREQ Hz (suffixes allowed: 1k); "
        "default: the pass band's gain (DC for a path that passes DC, else the band's geometric centre)",
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
    out.add_argument(
        "--plot",
        metavar="PATH",
        action="append",
        help="write a plot (.png, .svg or .pdf); give it again for more files",
    )
    out.add_argument(
        "--plot-input-referred",
        action="store_true",
        help="plot the density divided by the signal gain |H(f)|² (needs an input source)",
    )
    out.add_argument(
        "--html",
        metavar="PATH",
        help="write a self-contained HTML report (tables, inline plots) for a design review",
    )
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
    _add_speed_options(analyze)
    _add_jobs_option(analyze)
    analyze.add_argument_group("what to change").add_argument(
        "--sensitivity",
        action="store_true",
        help="rank every value by its effect on the rms noise (and on the speed, with an input source)",
    )
    _add_sweep_command(commands)
    from netnoise import cli_montecarlo  # the montecarlo subcommand, in a module of its own

    cli_montecarlo.add_parser(commands, _EPILOG)
    return parser


def _add_speed_options(command: argparse.ArgumentParser) -> None:
    speed = command.add_argument_group("speed of the signal path (needs an input source)")
    speed.add_argument("--response", action="store_true", help="add the bandwidth, rise time and overshoot")
    speed.add_argument(
        "--settle",
        metavar="ACCURACY",
        help="settling accuracy: a fraction of the step as a percentage (0.01%%) or a converter's "
        "resolution (16bit: within half an LSB, 2^-17 of the step); implies --response",
    )


def _add_jobs_option(command: argparse.ArgumentParser) -> None:
    command.add_argument_group("computing").add_argument(
        "--jobs",
        type=_count(1),
        metavar="N",
        help="threads solving frequencies at once on large circuits, each with one BLAS thread "
        "(default: every core; never more than the cores)",
    )


def _add_sweep_command(commands) -> None:
    sweep = commands.add_parser(
        "sweep",
        help="vary one or two values and show the noise against the speed",
        description="Vary element values, .param values or the temperature, and show at each point the total "
        "noise, the dominant source, the bandwidth and the settling time: the noise-speed trade-off.",
        epilog=_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    add_netlist_arguments(sweep)
    sweep.add_argument(
        "--vary",
        nargs=3,
        action="append",
        required=True,
        metavar=("NAME", "FROM", "TO"),
        help="an element, a .param or 'temp' (°C), from FROM to TO (suffixes allowed); give it twice for a grid",
    )
    sweep.add_argument("--steps", type=_count(2), default=11, metavar="N", help="points along each --vary (default 11)")
    sweep.add_argument("--log", action="store_true", help="space the points logarithmically")
    sweep.add_argument("--target", metavar="RMS", help="find the value that just meets this total rms noise (V)")
    sweep.add_argument(
        "--target-settle", metavar="TIME", help="find the value that just settles in TIME (s); needs --settle"
    )
    add_where_arguments(
        sweep, input_help="signal input source, for the speed of response", title="what to analyse (as for analyze)"
    )
    speed = sweep.add_argument_group("speed")
    speed.add_argument("--settle", metavar="ACCURACY", help="settling accuracy (0.01%%, or 16bit)")
    _add_jobs_option(sweep)
    out = sweep.add_argument_group("outputs")
    out.add_argument("--json", metavar="PATH", help="write the sweep as JSON ('-' for standard output)")
    out.add_argument("--csv", metavar="PATH", help="write the sweep's points as CSV")
    out.add_argument(
        "--plot", metavar="PATH", action="append", help="write the trade-off plot (.png, .svg or .pdf); may repeat"
    )


# --- option values --------------------------------------------------------
def _frequency(text: str, which: str, *, allow_infinite: bool) -> float:
    """A frequency in Hz read from an option; ``which`` names it in messages ("--band LOW")."""
    if text.strip().lower() in _INFINITY_WORDS:
        if allow_infinite:
            return math.inf
        raise UsageError(f"{which} must be finite, got '{text}'")
    from netnoise.text.values import parse_value

    try:
        value = float(parse_value(text))
    except ValueError as error:
        raise UsageError(f"{which}: cannot read '{text}' as a frequency ({error})") from None
    if math.isnan(value) or (math.isinf(value) and not allow_infinite):
        raise UsageError(f"{which} must be a finite number of hertz, got '{text}'")
    if value < 0.0:
        raise UsageError(f"{which} must be 0 Hz or more, got '{text}'")
    return value


def parse_band(pair: Sequence[str] | None) -> tuple[float, float] | None:
    """``--band LOW HIGH`` as (low, high) in Hz; high may be ``math.inf``."""
    if pair is None:
        return None
    low = _frequency(pair[0], "--band LOW", allow_infinite=False)
    high = _frequency(pair[1], "--band HIGH", allow_infinite=True)
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
    if math.isnan(celsius):
        raise UsageError(f"--temp: '{text}' is not a number; give degrees Celsius (27, -40)")
    if math.isinf(celsius):
        raise UsageError(f"--temp must be a finite temperature in degrees Celsius, got '{text}'")
    if celsius <= -273.15:
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
    from netnoise.results.figures import ADC_FULL_SCALE_V, ADC_SAMPLE_RATE_HZ

    if not ADC_FULL_SCALE_V[0] <= full_scale <= ADC_FULL_SCALE_V[1]:
        raise UsageError(f"--adc RANGE must be 1 nV to 1 MV peak-to-peak, got '{range_text}'")
    if not ADC_SAMPLE_RATE_HZ[0] <= rate <= ADC_SAMPLE_RATE_HZ[1]:
        raise UsageError(f"--adc RATE must be 1 mHz to 10 THz, got '{rate_text}'")
    if written[:1] == "M" and not written.lower().startswith(("meg", "mil")):
        raise UsageError(
            f"--adc RATE '{rate_text}' reads as {rate:g} Hz: M means milli, as in a netlist; "
            f"write {rate_text.strip()[: -len(written)]}meg for mega"
        )
    return bits, full_scale, rate


def parse_settle(text: str | None) -> float | None:
    """``--settle`` as a fraction of the step: '0.01%' -> 1e-4, '16bit' -> 2^-17 (half an LSB)."""
    if text is None:
        return None
    clean = text.strip().lower().replace(" ", "")
    for suffix in ("bits", "bit", "b"):
        if clean.endswith(suffix) and clean[: -len(suffix)].isdigit():
            bits = int(clean[: -len(suffix)])
            if not 1 <= bits <= 32:
                raise UsageError(f"--settle: a converter resolution of 1 to 32 bits, not {bits}")
            return 2.0 ** -(bits + 1)
    try:
        value = float(clean[:-1]) / 100.0 if clean.endswith("%") else float(clean)
    except ValueError:
        raise UsageError(
            f"--settle: cannot read '{text}'; write a percentage (0.01%) or a resolution (16bit)"
        ) from None
    if not 0 < value < 1:
        raise UsageError(f"--settle: the accuracy must lie between 0 and 100 %, got '{text}'")
    return value


def _same_file(a: str, b: str) -> bool:
    """True when both paths exist and are one file (a hard link, for one)."""
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False


def _check_writable(option: str, path: str, real: str, folder: str) -> None:
    """The output can be written: a regular file (new or old) is replaced by
    a new one made in its folder, so the folder must be writable; a device
    or FIFO is written to directly, so it must be."""
    try:
        info = os.stat(real)
    except FileNotFoundError:  # a new file, or a link to one
        info = None
    except OSError as error:  # a loop of links, a path through a file
        raise UsageError(
            f"{option} {path}: cannot write there ({error.strerror or error}); choose another path"
        ) from None
    if info is not None and not stat.S_ISREG(info.st_mode):
        if not os.access(real, os.W_OK):
            raise UsageError(f"{option} {path}: cannot write to it (no permission); choose another path")
        return
    if not os.access(folder, os.W_OK | os.X_OK):
        raise UsageError(
            f"{option} {path}: cannot write in the folder '{os.path.dirname(path) or folder}' (no permission); "
            "choose another path"
        )


def _output_paths(args: argparse.Namespace) -> list[tuple[str, str | None]]:
    """(option, path) of every output asked for, each --plot on its own."""
    plots = [("--plot", path) for path in (args.plot or [])]
    return [("--json", args.json), ("--csv", args.csv), *plots, ("--html", getattr(args, "html", None))]


def check_outputs(args: argparse.Namespace) -> None:
    """Refuse outputs that would overwrite the netlist or each other, before any work."""
    from netnoise.outputs.plotting import SAVE_FORMATS

    netlist = os.path.realpath(args.netlist)
    seen: dict[str, str] = {}
    for option, path in _output_paths(args):
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
        _check_writable(option, path, real, folder)
        seen[real] = option
    for plot in args.plot or []:
        if os.path.splitext(plot)[1].lower() not in SAVE_FORMATS:
            raise UsageError(f"--plot {plot}: use a file name ending in {', '.join(SAVE_FORMATS)}")


# --- the command ------------------------------------------------------------
def _confinement(args: argparse.Namespace) -> str | None:
    """The folder includes are confined to with --confine-includes: the netlist's own."""
    return os.path.dirname(os.path.abspath(args.netlist)) if args.confine_includes else None


def _load(path: str, confine: str | None = None):
    from netnoise import netlist
    from netnoise.text.source import not_a_file

    shown = shorten_line(path, 200)
    if path == "-":
        raise UsageError("'-' (standard input) is not read; give a netlist file")
    try:
        info = os.stat(path)
    except FileNotFoundError:
        raise UsageError(f"cannot read netlist '{shown}': no such file") from None
    except OSError as error:
        if error.errno == errno.ELOOP:
            raise UsageError(
                f"cannot read netlist '{shown}': a loop of symbolic links (each names the next); "
                "point the link at the netlist file"
            ) from None
        raise UsageError(f"cannot read netlist '{shown}': {error.strerror or error}") from None
    what = not_a_file(info.st_mode)
    if what is not None:
        raise UsageError(f"cannot read netlist '{shown}': it {what}")
    try:
        if confine is None:
            return netlist.load_netlist(path)
        return netlist.load_netlist(path, includes_within=confine)
    except OSError as error:
        raise UsageError(f"cannot read netlist '{shown}': {error.strerror or error}") from None


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
    for option, path in _output_paths(args):
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
    if args.gain_at is not None:
        options["gain_at_Hz"] = _frequency(args.gain_at, "--gain-at", allow_infinite=False)
    if args.jobs is not None:
        options["options"] = _solver_options(args)
    return options


def _solver_options(args: argparse.Namespace):
    """The solver options the command line sets (--jobs); None when it sets none."""
    if args.jobs is None:
        return None
    from netnoise.engine.options import SolverOptions

    return SolverOptions(jobs=args.jobs)


def _studies(args: argparse.Namespace, circuit, band, temperature, result) -> dict:
    """The Response and What-to-change sections, when asked for."""
    settle = parse_settle(args.settle)
    wants_response = args.response or settle is not None
    if not (wants_response or args.sensitivity):
        return {}
    if wants_response and result.input_source is None:
        raise UsageError("--response and --settle need an input source: give --input SOURCE (or name it on .noise)")
    from netnoise.engine import analysis

    options = _engine_options(args, band, temperature)
    options.pop("source_resistor", None)
    prepared = analysis.prepare(circuit, **options)
    out: dict = {}
    problem = prepared.problem
    if wants_response and problem.input_vector is not None:
        from netnoise.studies.response import speed_of_response

        out["response"] = speed_of_response(
            problem.system, problem.selector, problem.input_vector, settle, problem.options
        )
    if args.sensitivity:
        from netnoise.studies.sensitivity import sensitivities

        out["sensitivities"] = sensitivities(prepared, settle=settle)
    return out


def run_sweep(args: argparse.Namespace) -> int:
    from netnoise.outputs.export import atomic_write
    from netnoise.outputs.progress import ProgressLine
    from netnoise.outputs.study_export import sweep_to_csv, sweep_to_json
    from netnoise.outputs.study_text import sweep_table, target_sentence
    from netnoise.studies.sweep import Vary, meet_target, sweep

    check_outputs(args)
    band = parse_band(args.band)
    temperature = parse_temperature(args.temp)
    settle = parse_settle(args.settle)
    if len(args.vary) > 2:
        raise UsageError("--vary at most twice (a grid of two quantities)")
    from netnoise.text.values import parse_value

    vary = []
    for name, start, stop in args.vary:
        try:
            low, high = parse_value(start), parse_value(stop)
        except ValueError as error:
            raise UsageError(f"--vary {name}: cannot read '{start}' or '{stop}' ({error})") from None
        vary.append(Vary.span(name, low, high, args.steps, args.log))
    target = _positive_value("--target", args.target, "a noise rms")[0] if args.target else None
    deadline = (
        _positive_value("--target-settle", args.target_settle, "a settling time")[0] if args.target_settle else None
    )
    if target is not None and deadline is not None:
        raise UsageError("give --target or --target-settle, not both")
    if deadline is not None and settle is None:
        raise UsageError("--target-settle needs --settle ACCURACY (the accuracy the settling time is taken to)")
    circuit = _load(args.netlist, _confinement(args))
    check_outputs_against_includes(args, circuit)
    from netnoise.engine import analysis

    options = dict(
        output=args.out,
        reference=args.ref,
        input_source=args.input,
        band=band,
        points_per_decade=args.points,
        temperature_celsius=temperature,
        options=_solver_options(args),
    )
    prepared = analysis.prepare(circuit, **options)
    if settle is not None and not prepared.problem.has_input:
        raise UsageError("--settle needs an input source: give --input SOURCE (or name it on .noise)")
    progress = ProgressLine(sys.stderr, unit="points")
    try:
        with _numeric_warnings_refused():  # numbers from an overflow are never printed, nor the warning
            result = sweep(prepared, vary, settle=settle, progress=lambda done, total: progress(1, total))
            answer = None
            if target is not None or deadline is not None:
                first = vary[0]
                answer = meet_target(
                    prepared,
                    first.name,
                    min(first.values),
                    max(first.values),
                    noise_rms_V=target,
                    settling_time_s=deadline,
                    settle=settle,
                )
    finally:
        progress.clear()
    units = {v.name: _unit_of(circuit, v.name) for v in vary}
    lines = [circuit.title or args.netlist] + sweep_table(result, units)
    if answer is not None:
        noise = result.total_rms_V
        falling = noise[-1] < noise[0]  # noise falls as the value rises: the answer is a least value
        if deadline is not None:
            settling = result.settling_time_s
            falling = settling[-1] > settling[0]
            direction = "at most" if falling else "at least"
        else:
            direction = "at least" if falling else "at most"
        lines += ["", target_sentence(answer, direction, units, settle)]
    lines += ["", "Results are design estimates."]
    text = "\n".join(lines) + "\n"
    json_text = sweep_to_json(result, answer) if args.json is not None else None
    if json_text is not None and args.json == "-":
        sys.stdout.write(json_text)
        report_stream = sys.stderr
    else:
        report_stream = sys.stdout
    report_stream.write(text)
    report_stream.flush()
    if json_text is not None and args.json != "-":
        _write("--json", args.json, lambda: atomic_write(args.json, lambda handle: handle.write(json_text)))
    if args.csv is not None:
        csv_text = sweep_to_csv(result)
        _write("--csv", args.csv, lambda: atomic_write(args.csv, lambda handle: handle.write(csv_text)))
    if args.plot:
        from netnoise.outputs.plotting import save_figure
        from netnoise.outputs.study_plots import plot_tradeoff

        drawn = plot_tradeoff(result, units=units, target_rms=target, answer=answer)
        for path in args.plot:
            _write("--plot", path, lambda path=path: save_figure(drawn.figure, path))
    return 0


def _unit_of(circuit, name: str) -> str:
    try:
        return circuit.element(name).unit
    except KeyError:
        return ""


def _compute(args: argparse.Namespace, circuit, band, temperature, signal, signal_at, converter):
    """The analysis and every text made from it: (result, report, JSON or None, CSV or None)."""
    from netnoise.engine import analysis
    from netnoise.outputs.export import to_csv, to_json
    from netnoise.outputs.progress import ProgressLine
    from netnoise.outputs.report import format_report

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
    if args.dc or getattr(circuit, "operating_point_requested", False):  # --dc, or an .op card
        from netnoise.constants import ZERO_CELSIUS_K
        from netnoise.engine.dc import operating_point

        extras["operating_point"] = operating_point(circuit, temperature_celsius=result.temperature_K - ZERO_CELSIUS_K)
    extras.update(_studies(args, circuit, band, temperature, result))

    # build every text first: a refusal (a NaN, an infinity) prints and writes nothing
    report = format_report(result, top=None if args.top == 0 else args.top, advice=ADVICE, **extras)
    json_text = to_json(result, **extras) if args.json is not None else None
    csv_text = to_csv(result, args.group) if args.csv is not None else None
    plots = _plot_files(result, args)
    html_text = None
    if args.html is not None:
        from netnoise.outputs.html_report import to_html

        html_text = to_html(result, top=None if args.top == 0 else args.top, **extras)
    return result, report, json_text, csv_text, plots, html_text


@contextlib.contextmanager
def _numeric_warnings_refused():
    """No numpy RuntimeWarning (overflow, invalid value) reaches standard
    error: one raised while computing means a figure may be wrong even when it
    is finite, so the run ends in a CircuitError that says so (exit 1)."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", RuntimeWarning)
        try:
            yield
        except (OverflowError, FloatingPointError) as error:  # Python's own float arithmetic (x**2)
            raise CircuitError(_OUT_OF_RANGE.format(what=error.args[-1] if error.args else error)) from None
    numeric = [w for w in caught if issubclass(w.category, RuntimeWarning)]
    for w in caught:
        if not issubclass(w.category, RuntimeWarning):
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    if numeric:
        what = sorted({str(w.message) for w in numeric})
        raise CircuitError(_OUT_OF_RANGE.format(what="; ".join(what[:3])))


_OUT_OF_RANGE = (
    "the arithmetic went out of range while solving ({what}), so no figures are reported: an element "
    "value many orders of magnitude away from the others (a resistance of 1e-300 Ω or 1e300 Ω, a gain "
    "of 1e300) is the usual cause; check the values"
)


def run_analyze(args: argparse.Namespace) -> int:
    from netnoise.outputs.export import atomic_write

    # everything the user typed is checked before the (possibly long) analysis
    check_outputs(args)
    band = parse_band(args.band)
    temperature = parse_temperature(args.temp)
    signal = parse_signal(args.signal)
    if args.signal_at is not None and signal is None:
        raise UsageError("--signal-at says where the --signal level is stated; give --signal RMS too")
    signal_at = args.signal_at or "input"
    converter = parse_adc(args.adc)
    circuit = _load(args.netlist, _confinement(args))
    check_outputs_against_includes(args, circuit)
    with _numeric_warnings_refused():  # numbers from an overflow are never printed, nor the warning
        result, report, json_text, csv_text, plots, html_text = _compute(
            args, circuit, band, temperature, signal, signal_at, converter
        )

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
    for path, data in plots:
        _write("--plot", path, lambda path=path, data=data: atomic_write(path, lambda h: h.write(data), binary=True))
    if html_text is not None:
        _write("--html", args.html, lambda: atomic_write(args.html, lambda handle: handle.write(html_text)))
    return 0


def _plot_files(result, args: argparse.Namespace) -> list[tuple[str, bytes]]:
    """(path, file contents) of every --plot, drawn once per format, before anything is written."""
    if args.plot_input_referred and not args.plot:
        raise UsageError("--plot-input-referred changes what --plot draws; give --plot PATH too")
    if not args.plot:
        return []
    from netnoise.outputs.plotting import SAVE_FORMATS, plot_bytes

    drawn: dict[str, bytes] = {}
    files = []
    for path in args.plot:
        fmt = SAVE_FORMATS[os.path.splitext(path)[1].lower()]
        if fmt not in drawn:
            drawn[fmt] = plot_bytes(result, fmt, input_referred=args.plot_input_referred)
        files.append((path, drawn[fmt]))
    return files


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
        if args.command == "sweep":
            return run_sweep(args)
        if args.command == "montecarlo":
            from netnoise import cli_montecarlo

            return cli_montecarlo.run(args)
        raise UsageError(f"unknown command {args.command!r}")  # argparse rejects these first
    except NetnoiseError as error:
        print(f"{ERROR_PREFIX}{_message(error)}", file=sys.stderr)
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

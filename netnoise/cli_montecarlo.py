"""``netnoise montecarlo``: the spread of a noise budget over tolerances and temperature.

::

    netnoise montecarlo NETLIST --trials N [--tol PATTERN=PCT]... [--tol-dist uniform|gauss]
                        [--temp-range LOW HIGH] [--seed S] [--target RMS] [--jobs N]
                        [--cluster ADDRESS] [--out NODE] [--ref NODE] [--band LOW HIGH]
                        [--points N] [--temp CELSIUS] [--json PATH|-] [--csv PATH] [--plot PATH]
                        [--top N]

Same streams and checks as ``analyze`` (:mod:`netnoise.cli`): every option
is checked before the trials run; with ``--json -`` the JSON alone goes to
standard output and the report to standard error.  ``--csv`` writes one row
per trial.  Nothing heavy is imported until the command runs.
"""

from __future__ import annotations

import argparse
import math
import sys

from netnoise.errors import UsageError

__all__ = ["add_parser", "run"]

DEFAULT_TOP = 10


def add_parser(commands, epilog: str) -> None:
    """The ``montecarlo`` subcommand on ``commands`` (argparse subparsers)."""
    from netnoise.cli import _count as count
    from netnoise.cli import add_netlist_arguments, add_where_arguments

    mc = commands.add_parser(
        "montecarlo",
        help="spread of the output noise over part tolerances and temperature",
        description="Draw toleranced values (and temperature) for many trials, integrate each trial's "
        "output noise, and report its distribution, yield against a target, dominant sources and sensitivities.",
        epilog=epilog,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    add_netlist_arguments(mc)
    study = mc.add_argument_group("the trials")
    study.add_argument("--trials", type=count(1), required=True, metavar="N", help="number of trials")
    study.add_argument(
        "--tol",
        action="append",
        default=[],
        metavar="PATTERN=PCT",
        help="tolerance of the values whose element or .param name matches PATTERN (R*, C3, X1.*; "
        "case-insensitive), in percent; repeat for more; a later one wins for a name two match",
    )
    study.add_argument(
        "--tol-dist",
        choices=("uniform", "gauss"),
        default="uniform",
        help="uniform within ±PCT (default), or gaussian with ±PCT = ±3σ",
    )
    study.add_argument(
        "--temp-range",
        nargs=2,
        metavar=("LOW", "HIGH"),
        help="draw each trial's temperature uniformly between LOW and HIGH °C",
    )
    study.add_argument(
        "--seed", type=count(0), metavar="S", help="seed of the random draws (default: a fresh one, reported)"
    )
    study.add_argument(
        "--target", metavar="RMS", help="largest acceptable total output noise, V rms (suffixes: 5u), for the yield"
    )
    study.add_argument(
        "--jobs",
        type=count(1),
        metavar="N",
        help="local worker processes (default: 1 for small circuits, solved batched; every core for larger ones)",
    )
    study.add_argument(
        "--cluster",
        metavar="ADDRESS",
        help="run the trials on the dask scheduler at ADDRESS (pip install 'netnoise[cluster]')",
    )
    add_where_arguments(mc, input_help=None, temp_help="temperature of every trial (without --temp-range), °C")
    out = mc.add_argument_group("outputs")
    out.add_argument("--json", metavar="PATH", help="write the study as JSON ('-' for standard output)")
    out.add_argument("--csv", metavar="PATH", help="write one row per trial as CSV")
    out.add_argument(
        "--plot",
        metavar="PATH",
        action="append",
        help="write the histogram and density band (.png, .svg or .pdf); may repeat",
    )
    out.add_argument(
        "--top",
        type=count(0),
        default=DEFAULT_TOP,
        metavar="N",
        help=f"sources listed (default {DEFAULT_TOP}; 0 lists all)",
    )


def _temperature_range(pair) -> tuple[float, float] | None:
    if pair is None:
        return None
    out = []
    for which, text in zip(("LOW", "HIGH"), pair):
        try:
            value = float(text)
        except ValueError:
            raise UsageError(f"--temp-range {which}: cannot read '{text}' as degrees Celsius") from None
        if not math.isfinite(value) or value <= -273.15:
            raise UsageError(f"--temp-range {which} must be above absolute zero (-273.15 °C), got {text}")
        out.append(value)
    if out[1] < out[0]:
        raise UsageError(f"--temp-range HIGH ({pair[1]}) is below LOW ({pair[0]})")
    return out[0], out[1]


def run(args: argparse.Namespace) -> int:
    from netnoise import cli

    cli.check_outputs(args)
    band = cli.parse_band(args.band)
    temperature = cli.parse_temperature(args.temp)
    temperature_range = _temperature_range(args.temp_range)
    if temperature is not None and temperature_range is not None:
        raise UsageError("--temp fixes the temperature and --temp-range draws it; give one of them")
    target = cli._positive_value("--target", args.target, "a noise rms in volts")[0] if args.target else None
    from netnoise.studies.montecarlo import parse_tolerance

    tolerances = [parse_tolerance(text) for text in args.tol]
    if args.cluster is not None and args.jobs is not None:
        raise UsageError("--jobs is for this machine and --cluster sends the trials to a scheduler; give one of them")
    circuit = cli._load(args.netlist, cli._confinement(args))
    cli.check_outputs_against_includes(args, circuit)

    from netnoise.outputs.export import atomic_write
    from netnoise.outputs.montecarlo_text import format_montecarlo_report, montecarlo_to_csv, montecarlo_to_json
    from netnoise.outputs.progress import ProgressLine
    from netnoise.studies.montecarlo import montecarlo

    client = None
    if args.cluster is not None:
        from netnoise.studies.execution import connect

        client = connect(args.cluster)
    progress = ProgressLine(sys.stderr, unit="trials", total=args.trials)
    try:
        with cli._numeric_warnings_refused():  # numbers from an overflow are never printed
            result = montecarlo(
                circuit,
                trials=args.trials,
                tolerances=tolerances,
                distribution=args.tol_dist,
                temperature_range_celsius=temperature_range,
                seed=args.seed,
                target_rms=target,
                output=args.out,
                reference=args.ref,
                band=band,
                points_per_decade=args.points,
                temperature_celsius=temperature,
                jobs=args.jobs,
                client=client,
                progress=progress,
                keep_density=bool(args.plot),
            )
    finally:
        progress.clear()
        if client is not None:
            client.close()

    report = format_montecarlo_report(result, top=None if args.top == 0 else args.top)
    json_text = montecarlo_to_json(result) if args.json is not None else None
    csv_text = montecarlo_to_csv(result) if args.csv is not None else None
    if json_text is not None and args.json == "-":
        sys.stdout.write(json_text)
        sys.stdout.flush()
        report_stream = sys.stderr
    else:
        report_stream = sys.stdout
    report_stream.write(report)
    report_stream.flush()
    if json_text is not None and args.json != "-":
        cli._write("--json", args.json, lambda: atomic_write(args.json, lambda handle: handle.write(json_text)))
    if csv_text is not None:
        cli._write("--csv", args.csv, lambda: atomic_write(args.csv, lambda handle: handle.write(csv_text)))
    if args.plot:
        from netnoise.outputs.montecarlo_plots import save_montecarlo_plot

        for path in args.plot:
            cli._write("--plot", path, lambda path=path: save_montecarlo_plot(result, path))
    return 0

"""Machine-readable exports of a :class:`~netnoise.result.NoiseResult`.

* :func:`result_to_dict` -- a plain dict of SI numbers (the JSON document);
* :func:`write_json` -- that dict as JSON, to a file or to stdout (``"-"``);
* :func:`write_csv` -- the spectrum: frequency, total output density and each
  source's output density (amplitude, V/√Hz), one row per grid point.

JSON shape (fixed keys; more may be added, none removed)::

    {"title", "temperature_K", "temperature_C",
     "output": {"node", "ref"}, "input_source",
     "band_Hz": {"low", "high"},            # high is null for an unbounded band
     "total_rms_V", "input_referred_rms", "input_referred_unit",
     "gain_at_max", "enbw_Hz",
     "pass_band_gain", "pass_band_gain_Hz",   # the gain input-referred figures use, and where
     "contributions": [{"source", "element", "mechanism",
                        "value", "unit", "value_text",   # value: the number that sets the source, in unit (or null)
                        "rms_V", "share", "cumulative_share"}, ...],   # largest share first
     "spectrum": {"frequency_Hz", "output_density_V_per_rtHz",
                  "cumulative_rms_V",
                  "input_referred_density_per_rtHz"},  # last one only with an input source
     "notes": [{"code", "text", "data"}, ...], "integration_rel_error",
     "total_method": "exact-qz"|"exact-symmetric"|"low-rank"|"quadrature"|"reduced-model",   # how the totals were found
     "total_tolerance": float,                 # their stated relative error
     "noise_figure_dB": float|null,            # null without a source resistor
     "noise_figure_spectrum_dB": [float|null]|null,   # null entry: no signal gain there
     "source_resistor": str|null}

Keys present only when asked for (:func:`result_to_dict` arguments)::

    "group_by": "element"|"mechanism",
    "groups": [{"name", "sources": [...], "mechanisms": [...], "rms_V", "share",
                "cumulative_share"}, ...],          # largest share first
    "snr": {"signal_at", "signal_rms", "signal_unit", "signal_output_rms_V",
            "noise_rms_V", "snr_dB"},               # snr_dB null when there is no noise
    "adc": {"bits", "full_scale_V", "sample_rate_Hz", "nyquist_Hz", "lsb_V",
            "quantisation_rms_V", "ideal_snr_dB", "analog_rms_V", "analog_snr_dB",
            "combined_snr_dB", "enob_bits", "floor_set_by"},   # "analog chain"|"converter"
    "operating_point": {"node_voltages_V": {node: V}, "element_currents_A": {name: A},
                        "element_voltages_V": {name: V},
                        "devices": {name: {quantity_unit: value}},   # diodes and transistors only
                        "solved_by": "Newton"|"gmin stepping"|"source stepping"},
    "response": {...}, "sensitivities": [...]   # see netnoise.outputs.study_export

Shares sum to 1 (unless the circuit has no noise at all, when every share is
0).  JSON may not hold NaN or infinity: a non-finite number anywhere is a
:class:`~netnoise.errors.CircuitError`.  The one exception is the
input-referred density at a frequency where the signal gain is exactly zero:
that entry is ``null``.

Every file is written atomically (a temporary file in the same folder, then
``os.replace``), so a failure never leaves a half-written file behind; a
symbolic link is followed (the file it names is replaced), and a device or
FIFO (``/dev/null``, a named pipe) is written to directly, never replaced.
"""

from __future__ import annotations

import csv
import errno
import io
import json
import math
import os
import stat
import sys
import tempfile
from collections.abc import Callable
from typing import IO, TYPE_CHECKING, Any

import numpy as np

from netnoise.constants import celsius
from netnoise.errors import CircuitError, UsageError
from netnoise.outputs.labels import row_value_texts
from netnoise.outputs.merit_text import enob_bits
from netnoise.results.result import NoiseResult
from netnoise.results.validation import check_finite

if TYPE_CHECKING:  # pragma: no cover
    from netnoise.engine.dc import OperatingPoint
    from netnoise.results.figures import AdcComparison, SignalToNoise

__all__ = [
    "result_to_dict",
    "to_json",
    "to_csv",
    "write_json",
    "write_csv",
    "csv_header",
    "column_name",
    "spectrum_columns",
    "atomic_write",
    "NOISE_FIGURE_COLUMN",
]


# --- atomic file writing ----------------------------------------------------
def atomic_write(path: str | os.PathLike, write: Callable[[IO], object], *, binary: bool = False) -> None:
    """Call ``write(file)`` on a temporary file beside ``path``, then move it
    into place.  On any failure the temporary file is removed and ``path`` is
    left as it was.

    Only a regular file (or a new one) is replaced so: a symbolic link is
    followed and the file it names is replaced (the link stays); a device
    (``/dev/null``), a FIFO or a pipe (``/dev/stdout``) is written to
    directly, never replaced by a regular file; a folder is an
    IsADirectoryError."""
    target = os.fspath(path)
    mode = "wb" if binary else "w"
    kwargs: dict[str, Any] = {} if binary else {"encoding": "utf-8", "newline": ""}
    try:
        info: os.stat_result | None = os.stat(target)  # links followed
    except FileNotFoundError:
        info = None
    if info is not None and stat.S_ISDIR(info.st_mode):
        raise IsADirectoryError(errno.EISDIR, os.strerror(errno.EISDIR), target)
    if info is not None and not stat.S_ISREG(info.st_mode):
        with open(target, mode, **kwargs) as handle:  # a device, FIFO or pipe: no rename
            write(handle)
        return
    target = os.path.realpath(target)  # a link: replace the file it names, keep the link
    folder = os.path.dirname(target)
    fd, tmp = tempfile.mkstemp(dir=folder, prefix=f".{os.path.basename(target)}.", suffix=".part")
    try:
        with os.fdopen(fd, mode, **kwargs) as handle:
            write(handle)
            handle.flush()
            os.fsync(handle.fileno())
        if info is not None:  # the file replaced keeps its permissions
            os.chmod(tmp, stat.S_IMODE(info.st_mode))
        else:
            _give_default_permissions(tmp)
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise


def _give_default_permissions(path: str) -> None:
    """mkstemp makes files readable by the owner only; give the new file the
    permissions an ordinary ``open(path, "w")`` would."""
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(path, 0o666 & ~umask)


# --- the dict ---------------------------------------------------------------
def _floats(array: np.ndarray) -> list[float]:
    return [float(x) for x in np.asarray(array, dtype=float)]


def _amplitude(power_density: np.ndarray) -> np.ndarray:
    """√ of a power density, tiny negative round-off clipped to zero."""
    return np.sqrt(np.maximum(np.asarray(power_density, dtype=float), 0.0))


def _note_data(data) -> dict[str, Any]:
    """A note's data for JSON: numbers as they are, an infinity as null."""
    return {k: (None if isinstance(v, float) and not math.isfinite(v) else v) for k, v in data.items()}


def _optional(value: float | None) -> float | None:
    return None if value is None else float(value)


def _finite_or_none(value: float) -> float | None:
    """An infinite figure that means "unbounded" (an SNR with no noise) as null."""
    return float(value) if not math.isinf(value) else None


def _noise_figure_spectrum(result: NoiseResult) -> list[float | None] | None:
    spectrum = result.noise_figure_spectrum_dB
    if spectrum is None:
        return None
    # +inf: no signal gain at that frequency -> null; NaN and -inf are refused by _check_finite
    return [None if x == math.inf else float(x) for x in np.asarray(spectrum, dtype=float)]


def _groups(result: NoiseResult, group_by: str) -> list[dict[str, Any]]:
    keys = result.source_elements if group_by == "element" else result.source_mechanisms
    rows = []
    for c in result.grouped(group_by):
        members = [k for k, key in enumerate(keys) if key == c.label]
        rows.append(
            {
                "name": c.label,
                "sources": [result.source_names[k] for k in members],
                "mechanisms": list(dict.fromkeys(result.source_mechanisms[k] for k in members)),
                "rms_V": c.rms_V,
                "share": c.share,
                "cumulative_share": c.cumulative_share,
            }
        )
    return rows


def _snr(result: NoiseResult, snr: SignalToNoise, signal_at: str) -> dict[str, Any]:
    gain = result.gain_at_max or 0.0
    at_input = signal_at == "input" and gain > 0.0
    return {
        "signal_at": signal_at,
        "signal_rms": snr.signal_output_rms_V / gain if at_input else snr.signal_output_rms_V,
        "signal_unit": (result.input_unit or "V") if at_input else "V",
        "signal_output_rms_V": snr.signal_output_rms_V,
        "noise_rms_V": snr.noise_rms_V,
        "snr_dB": _finite_or_none(snr.snr_dB),
    }


def _adc(adc: AdcComparison) -> dict[str, Any]:
    return {
        "bits": adc.bits,
        "full_scale_V": adc.full_scale_V,
        "sample_rate_Hz": adc.sample_rate_Hz,
        "nyquist_Hz": adc.sample_rate_Hz / 2.0,
        "lsb_V": adc.lsb_V,
        "quantisation_rms_V": adc.quantisation_rms_V,
        "ideal_snr_dB": adc.ideal_snr_dB,
        "analog_rms_V": adc.analog_rms_V,
        "analog_snr_dB": _finite_or_none(adc.analog_snr_dB),
        "combined_snr_dB": adc.combined_snr_dB,
        "enob_bits": enob_bits(adc.combined_snr_dB),
        "floor_set_by": adc.floor_set_by,
    }


def _operating_point(op: OperatingPoint) -> dict[str, Any]:
    return {
        "node_voltages_V": {k: float(v) for k, v in op.node_voltages.items()},
        "element_currents_A": {k: float(v) for k, v in op.element_currents.items()},
        "element_voltages_V": {k: float(v) for k, v in op.element_voltages.items()},
        **({"devices": {name: dict(values) for name, values in op.devices.items()}} if op.devices else {}),
        **({"solved_by": op.method} if op.method else {}),
    }


def result_to_dict(
    result: NoiseResult,
    *,
    group_by: str | None = None,
    snr: SignalToNoise | None = None,
    signal_at: str = "input",
    adc: AdcComparison | None = None,
    operating_point: OperatingPoint | None = None,
    response: Any = None,
    sensitivities: Any = None,
    _check: bool = True,
) -> dict[str, Any]:
    """The result as a dict of plain Python values, ready for ``json.dumps``.

    ``group_by`` (``"element"``/``"mechanism"``) adds ``group_by`` and
    ``groups``; ``snr``, ``adc`` and ``operating_point`` add their keys.
    Raises :class:`CircuitError` if any number in it is NaN or infinite.
    """
    if group_by not in (None, "source", "element", "mechanism"):
        raise UsageError(f"group by 'element' or 'mechanism', not {group_by!r}")
    check_finite(result)
    referred = result.input_referred_rms
    spectrum: dict[str, Any] = {
        "frequency_Hz": _floats(result.frequency_Hz),
        "output_density_V_per_rtHz": _floats(result.output_density_rt),
        "cumulative_rms_V": _floats(result.cumulative_rms),
    }
    if result.input_source is not None and result.gain is not None:
        referred_density = result.input_referred_density
        assert referred_density is not None  # there is a gain
        density = _amplitude(np.where(result.gain > 0, referred_density, 0.0))
        spectrum["input_referred_density_per_rtHz"] = [
            float(d) if g > 0 else None for d, g in zip(density, result.gain)
        ]
    data: dict[str, Any] = {
        "title": result.title,
        "temperature_K": float(result.temperature_K),
        "temperature_C": round(celsius(float(result.temperature_K)), 9),
        "output": {"node": result.output_node, "ref": result.reference_node},
        "input_source": result.input_source,
        "band_Hz": {
            "low": float(result.band_low_Hz),
            "high": None if result.band_is_unbounded else float(result.band_high_Hz),
        },
        "total_rms_V": result.total_rms,
        "input_referred_rms": _optional(referred),
        "input_referred_unit": (result.input_unit or "V") if referred is not None else None,
        "gain_at_max": _optional(result.gain_at_max),
        "pass_band_gain": _optional(result.pass_band_gain),
        "pass_band_gain_Hz": _optional(result.gain_reference_Hz),
        "enbw_Hz": _optional(result.enbw_Hz),
        "contributions": [
            {
                "source": c.source,
                "element": c.element,
                "mechanism": c.mechanism,
                "value": c.value,
                "unit": c.unit or None,
                "value_text": text,
                "rms_V": c.rms_V,
                "share": c.share,
                "cumulative_share": c.cumulative_share,
            }
            for c, text in zip(result.contributions, row_value_texts(result.contributions))
        ],
        "spectrum": spectrum,
        "notes": [{"code": n.code, "text": n.text, "data": _note_data(n.data)} for n in result.notes],
        "integration_rel_error": float(result.integration_rel_error),
        "total_method": result.total_method,
        "total_tolerance": float(result.total_tolerance),
        "noise_figure_dB": _optional(result.noise_figure_dB),
        "noise_figure_spectrum_dB": _noise_figure_spectrum(result),
        "source_resistor": result.source_resistor,
    }
    if group_by in ("element", "mechanism"):
        data["group_by"] = group_by
        data["groups"] = _groups(result, group_by)
    if snr is not None:
        data["snr"] = _snr(result, snr, signal_at)
    if adc is not None:
        data["adc"] = _adc(adc)
    if operating_point is not None:
        data["operating_point"] = _operating_point(operating_point)
    if response is not None:
        from netnoise.outputs.study_export import response_to_dict

        data["response"] = response_to_dict(response)
    if sensitivities is not None:
        from netnoise.outputs.study_export import sensitivities_to_list

        data["sensitivities"] = sensitivities_to_list(sensitivities)
    if _check:
        _check_finite(data, "result")
    return data


def _check_finite(value: Any, where: str) -> None:
    if isinstance(value, float):
        if not math.isfinite(value):
            raise CircuitError(f"cannot export: {where} is {value!r}; JSON holds finite numbers only")
    elif isinstance(value, dict):
        for key, item in value.items():
            _check_finite(item, f"{where}.{key}")
    elif isinstance(value, list):
        for index, item in enumerate(value):
            _check_finite(item, f"{where}[{index}]")


# --- JSON -------------------------------------------------------------------
def to_json(result: NoiseResult, **extras: Any) -> str:
    """The JSON text (UTF-8 friendly, ending with a newline); ``extras`` are
    :func:`result_to_dict`'s keyword arguments.

    One top-level key per line and one contribution per line: readable, and
    written by json's C encoder (an ``indent`` would switch json to its
    pure-Python encoder, seconds for a budget of 20,000 sources).
    """
    data = result_to_dict(result, **extras, _check=False)
    try:
        return _readable_json(data) + "\n"
    except ValueError:  # the encoder refuses NaN and infinities (allow_nan=False): say where
        _check_finite(data, "result")
        raise


# one encoder for every piece: json.dumps with options builds a new JSONEncoder per call
# (~40 % of the time for one line per contribution of 20,000 sources)
_ENCODER = json.JSONEncoder(ensure_ascii=False, allow_nan=False, separators=(", ", ": "))


def _compact(value: Any) -> str:
    return _ENCODER.encode(value)


def _readable_json(data: dict) -> str:
    lines = []
    for key, value in data.items():
        if isinstance(value, list) and value and all(isinstance(item, dict) for item in value):
            items = ",\n".join(f"    {_compact(item)}" for item in value)
            text = f"[\n{items}\n  ]"
        elif isinstance(value, dict) and value:
            members = ",\n".join(f"    {_compact(k)}: {_compact(v)}" for k, v in value.items())
            text = f"{{\n{members}\n  }}"
        else:
            text = _compact(value)
        lines.append(f"  {_compact(key)}: {text}")
    return "{\n" + ",\n".join(lines) + "\n}"


def write_json(result: NoiseResult, path: str | os.PathLike, **extras: Any) -> None:
    """Write the JSON document to ``path``, or to standard output for ``"-"``;
    ``extras`` are :func:`result_to_dict`'s keyword arguments."""
    text = to_json(result, **extras)  # build it first: a refusal writes nothing
    if os.fspath(path) == "-":
        sys.stdout.write(text)
        sys.stdout.flush()
        return
    atomic_write(path, lambda handle: handle.write(text))


# --- CSV --------------------------------------------------------------------
#: Name of the CSV column of the spot noise figure (last column, when present).
NOISE_FIGURE_COLUMN = "spot_noise_figure_dB"


#: Separates a source's name from the unit in a CSV column name; a cleaned
#: name never holds two underscores in a row, so the split is unambiguous.
UNIT_SEPARATOR = "__"

_SIGN_WORDS = {"+": "plus", "-": "minus"}


def column_name(label: str, unit: str = "V_per_rtHz") -> str:
    """The CSV column of a budget row: ``<name>__<unit>``.

    The rule, so a spreadsheet or ``pandas.read_csv`` reads every header
    without quoting and code can split it: a ``+`` or ``-`` that ends a word
    is spelled ``plus``/``minus`` (pins: ``in+`` -> ``in_plus``); every other
    character outside ``A-Z a-z 0-9 _`` (spaces, parentheses, the dots of
    hierarchical names, other hyphens) becomes ``_``; runs of ``_`` become
    one and the ends are trimmed; an empty name becomes ``source``.  So
    ``Xpre (in+)`` -> ``Xpre_in_plus__V_per_rtHz`` and ``X1.R2 (excess)``
    -> ``X1_R2_excess__V_per_rtHz``.  :func:`csv_header` then makes the
    names unique by appending ``_2``, ``_3`` ... in rank order.
    """
    import re

    text = re.sub(r"([+-])(?![A-Za-z0-9])", lambda m: f"_{_SIGN_WORDS[m.group(1)]}_", label)
    text = re.sub(r"[^A-Za-z0-9_]", "_", text)
    text = re.sub(r"_+", "_", text).strip("_") or "source"
    return f"{text}{UNIT_SEPARATOR}{unit}"


def _unique(names: list[str]) -> list[str]:
    seen: set[str] = set()
    out = []
    for name in names:
        candidate, n = name, 1
        while candidate in seen:
            n += 1
            head, _, unit = name.rpartition(UNIT_SEPARATOR)
            candidate = f"{head}_{n}{UNIT_SEPARATOR}{unit}"
        seen.add(candidate)
        out.append(candidate)
    return out


def _grouped_power(result: NoiseResult, group_by: str) -> tuple[list[str], list[np.ndarray]]:
    """(labels, power densities V²/Hz) of the budget rows, in rank order."""
    if group_by in (None, "source"):
        order = np.argsort(-result.source_variance, kind="stable")  # the ranking of result.contributions
        return [result.source_names[k] for k in order], [result.source_density[k] for k in order]
    if group_by not in ("element", "mechanism"):
        raise UsageError(f"group by 'element' or 'mechanism', not {group_by!r}")
    keys = result.source_elements if group_by == "element" else result.source_mechanisms
    labels, powers = [], []
    for row in result.grouped(group_by):
        members = [k for k, key in enumerate(keys) if key == row.label]
        labels.append(row.label)
        powers.append(result.source_density[members].sum(axis=0))
    return labels, powers


def spectrum_columns(
    result: NoiseResult, *, group_by: str | None = None, power: bool = False
) -> tuple[list[str], list[np.ndarray]]:
    """(column names, columns) of the spectrum table: frequency, total, then
    each source (or element/mechanism group with ``group_by``) in rank order;
    amplitudes in V/√Hz, or with ``power`` power densities in V²/Hz."""
    labels, powers = _grouped_power(result, group_by or "source")
    unit = "V2_per_Hz" if power else "V_per_rtHz"
    total = result.output_density if power else result.output_density_rt
    names = ["frequency_Hz", f"total_output_{unit}"] + _unique([column_name(label, unit) for label in labels])
    columns = [result.frequency_Hz, total] + [p if power else _amplitude(p) for p in powers]
    return names, columns


def csv_header(result: NoiseResult, group_by: str | None = None) -> list[str]:
    """Column names: frequency, total output density, then each source (or
    group, with ``group_by``) in rank order, named by :func:`column_name`
    (all densities are output-referred amplitudes, V/√Hz), then the spot
    noise figure in dB when the result has one."""
    names = spectrum_columns(result, group_by=group_by)[0]
    if result.input_source is not None and result.gain is not None:
        names.append(REFERRED_COLUMN_V if (result.input_unit or "V") == "V" else REFERRED_COLUMN_A)
    if result.noise_figure_spectrum_dB is not None:
        names.append(NOISE_FIGURE_COLUMN)
    return names


#: The input-referred density column, S_out/|H(f)|² as an amplitude, beside the sources (empty where |H| = 0).
REFERRED_COLUMN_V = "input_referred_V_per_rtHz"
REFERRED_COLUMN_A = "input_referred_A_per_rtHz"


def _referred_cells(result: NoiseResult) -> list[str] | None:
    if result.input_source is None or result.gain is None:
        return None
    density = result.input_referred_density
    assert density is not None
    with np.errstate(invalid="ignore"):
        amplitude = np.sqrt(density)
    return ["" if not math.isfinite(float(x)) else repr(float(x)) for x in amplitude]


def _csv_columns(result: NoiseResult, group_by: str | None = None) -> np.ndarray:
    check_finite(result)
    table = np.column_stack(spectrum_columns(result, group_by=group_by)[1])
    if not np.all(np.isfinite(table)):
        raise CircuitError("cannot export CSV: the spectrum holds a NaN or infinite value")
    return table


def frequency_text(value: float) -> str:
    """A grid frequency as written in the CSV: 15 significant digits, trimmed,
    when that reads back within 4 units in the last place (a log grid's
    ``0.10000000000000002`` is written ``0.1``), else the exact ``repr``."""
    text = format(value, ".15g")
    if abs(float(text) - value) <= 4 * math.ulp(value):
        return text
    return repr(float(value))


def to_csv(result: NoiseResult, group_by: str | None = None) -> str:
    """The CSV text: one header line, then one row per grid frequency.

    ``group_by`` (``"element"``/``"mechanism"``) gives one column per group
    (the power sum of its sources) instead of one per source.  A spot noise
    figure cell is empty where the signal gain is zero (the figure is
    unbounded there); NaN anywhere is refused."""
    table = _csv_columns(result, group_by)
    figure = _noise_figure_spectrum(result)
    if figure is not None and any(x is not None and not math.isfinite(x) for x in figure):
        raise CircuitError("cannot export CSV: the spot noise figure holds a NaN or -inf value")
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(csv_header(result, group_by))
    referred = _referred_cells(result)
    for i, row in enumerate(table):
        cells = [frequency_text(float(row[0]))] + [repr(float(x)) for x in row[1:]]
        if referred is not None:
            cells.append(referred[i])
        if figure is not None:
            cells.append("" if figure[i] is None else repr(figure[i]))
        writer.writerow(cells)
    return buffer.getvalue()


def write_csv(result: NoiseResult, path: str | os.PathLike, group_by: str | None = None) -> None:
    """Write the spectrum table to ``path`` (atomically)."""
    text = to_csv(result, group_by)
    atomic_write(path, lambda handle: handle.write(text))

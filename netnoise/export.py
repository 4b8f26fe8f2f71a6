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
     "contributions": [{"element", "mechanism", "value", "rms_V", "share",
                        "cumulative_share"}, ...],   # largest share first
     "spectrum": {"frequency_Hz", "output_density_V_per_rtHz",
                  "cumulative_rms_V",
                  "input_referred_density_per_rtHz"},  # last one only with an input source
     "notes": [...], "integration_rel_error"}

Shares sum to 1 (unless the circuit has no noise at all, when every share is
0).  JSON may not hold NaN or infinity: a non-finite number anywhere is a
:class:`~netnoise.errors.CircuitError`.  The one exception is the
input-referred density at a frequency where the signal gain is exactly zero:
that entry is ``null``.

Every file is written atomically (a temporary file in the same folder, then
``os.replace``), so a failure never leaves a half-written file behind.
"""

from __future__ import annotations

import csv
import io
import json
import math
import os
import sys
import tempfile
from collections.abc import Callable
from typing import IO, Any

import numpy as np

from .errors import CircuitError
from .result import NoiseResult

__all__ = ["result_to_dict", "write_json", "write_csv", "csv_header", "atomic_write"]


# --- atomic file writing ----------------------------------------------------
def atomic_write(path: str | os.PathLike, write: Callable[[IO], None], *, binary: bool = False) -> None:
    """Call ``write(file)`` on a temporary file beside ``path``, then move it
    into place.  On any failure the temporary file is removed and ``path`` is
    left as it was."""
    target = os.fspath(path)
    folder = os.path.dirname(os.path.abspath(target))
    fd, tmp = tempfile.mkstemp(dir=folder, prefix=f".{os.path.basename(target)}.", suffix=".part")
    try:
        mode = "wb" if binary else "w"
        kwargs = {} if binary else {"encoding": "utf-8", "newline": ""}
        with os.fdopen(fd, mode, **kwargs) as handle:
            write(handle)
            handle.flush()
            os.fsync(handle.fileno())
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


def _optional(value: float | None) -> float | None:
    return None if value is None else float(value)


def result_to_dict(result: NoiseResult) -> dict[str, Any]:
    """The result as a dict of plain Python values, ready for ``json.dumps``.

    Raises :class:`CircuitError` if any number in it is NaN or infinite.
    """
    _check_stored_arrays(result)
    referred = result.input_referred_rms
    spectrum: dict[str, Any] = {
        "frequency_Hz": _floats(result.frequency_Hz),
        "output_density_V_per_rtHz": _floats(result.output_density_rt),
        "cumulative_rms_V": _floats(result.cumulative_rms),
    }
    if result.input_source is not None and result.gain is not None:
        density = _amplitude(np.where(result.gain > 0, result.input_referred_density, 0.0))
        spectrum["input_referred_density_per_rtHz"] = [
            float(d) if g > 0 else None for d, g in zip(density, result.gain)
        ]
    data: dict[str, Any] = {
        "title": result.title,
        "temperature_K": float(result.temperature_K),
        "temperature_C": round(float(result.temperature_K) - 273.15, 9),
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
        "enbw_Hz": _optional(result.enbw_Hz),
        "contributions": [
            {
                "element": c.element,
                "mechanism": c.mechanism,
                "value": c.value,
                "rms_V": c.rms_V,
                "share": c.share,
                "cumulative_share": c.cumulative_share,
            }
            for c in result.contributions
        ],
        "spectrum": spectrum,
        "notes": list(result.notes),
        "integration_rel_error": float(result.integration_rel_error),
    }
    _check_finite(data, "result")
    return data


def _check_stored_arrays(result: NoiseResult) -> None:
    """Refuse non-finite stored numbers before deriving anything from them."""
    arrays = {
        "frequency_Hz": result.frequency_Hz,
        "source_density": result.source_density,
        "source_variance": result.source_variance,
        "cumulative_variance": result.cumulative_variance,
    }
    if result.gain is not None:
        arrays["gain"] = result.gain
    for name, array in arrays.items():
        if not np.all(np.isfinite(array)):
            raise CircuitError(
                f"cannot export: the result's {name} holds NaN or infinite values; "
                "JSON and CSV hold finite numbers only"
            )


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
def to_json(result: NoiseResult) -> str:
    """The JSON text (UTF-8 friendly, indented, ending with a newline)."""
    return json.dumps(result_to_dict(result), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def write_json(result: NoiseResult, path: str | os.PathLike) -> None:
    """Write the JSON document to ``path``, or to standard output for ``"-"``."""
    text = to_json(result)  # build it first: a refusal writes nothing
    if os.fspath(path) == "-":
        sys.stdout.write(text)
        sys.stdout.flush()
        return
    atomic_write(path, lambda handle: handle.write(text))


# --- CSV --------------------------------------------------------------------
def csv_header(result: NoiseResult) -> list[str]:
    """Column names: frequency, total output density, then each source in
    rank order (all densities are output-referred amplitudes, V/√Hz)."""
    return ["frequency_Hz", "total_output_V_per_rtHz"] + [
        f"{c.element}_V_per_rtHz" for c in result.contributions
    ]


def _csv_columns(result: NoiseResult) -> np.ndarray:
    _check_stored_arrays(result)
    order = np.argsort(-result.source_variance, kind="stable")  # the ranking of result.contributions
    columns = [result.frequency_Hz, result.output_density_rt]
    columns += [_amplitude(result.source_density[k]) for k in order]
    table = np.column_stack(columns)
    if not np.all(np.isfinite(table)):
        raise CircuitError("cannot export CSV: the spectrum holds a NaN or infinite value")
    return table


def to_csv(result: NoiseResult) -> str:
    """The CSV text: one header line, then one row per grid frequency."""
    table = _csv_columns(result)
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(csv_header(result))
    for row in table:
        writer.writerow([repr(float(x)) for x in row])
    return buffer.getvalue()


def write_csv(result: NoiseResult, path: str | os.PathLike) -> None:
    """Write the spectrum table to ``path`` (atomically)."""
    text = to_csv(result)
    atomic_write(path, lambda handle: handle.write(text))

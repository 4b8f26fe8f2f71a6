"""The short text of a budget row's value, made at the edge from its numbers.

"10 kΩ", "10 kΩ, NI -10 dB at 5 V", "1 mA DC", "10 nV/√Hz, corner 1 kHz",
"lnamp: 4 nV/√Hz".
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping

from netnoise.engformat import format_quantity
from netnoise.noise.mechanisms import SHOT

__all__ = ["value_text", "row_value_text", "total_method_text"]

# how each way of finding the totals reads in the report (keys: results.result.TOTAL_METHODS)
_TOTAL_METHOD_WORDS = {
    "exact-symmetric": "exact symmetric eigen-solution",
    "exact-qz": "exact state-space solution (QZ)",
    "low-rank": "low-rank Gramian",
    "quadrature": "numerical integration",
    "reduced-model": "numerical integration of a checked reduced model",
}


def value_text(
    value: float | None, unit: str, mechanism: str = "", details: Mapping[str, float | str] | None = None
) -> str:
    """The value of a noise source as a designer reads it ('' when there is none)."""
    details = details or {}
    if value is None or (isinstance(value, float) and math.isnan(value)):
        text = ""
    else:
        text = format_quantity(value, unit) + (" DC" if mechanism == SHOT else "")
    if "noise_index_dB" in details:
        text += f", NI {float(details['noise_index_dB']):g} dB at {format_quantity(abs(float(details['dc_voltage_V'])), 'V')}"
    if float(details.get("corner_Hz", 0.0) or 0.0) > 0:  # type: ignore[arg-type]
        text += f", corner {format_quantity(float(details['corner_Hz']), 'Hz')}"
    if "model" in details:
        text = f"{details['model']}: {text}" if text else str(details["model"])
    return text


def row_value_text(row) -> str:
    """The value column of a budget row (a :class:`~netnoise.results.result.Contribution`)."""
    return value_text(row.value, row.unit, row.mechanism, row.details)


def row_value_texts(rows: Iterable) -> list[str]:
    """:func:`row_value_text` of every row; rows without details that share a value, unit and
    mechanism share one text (a mesh's 200,000 resistors have three values: ~0.7 s saved)."""
    texts: dict[tuple, str] = {}
    out = []
    for row in rows:
        if row.details:
            out.append(row_value_text(row))
            continue
        key = (row.value, row.unit, row.mechanism)
        text = texts.get(key)
        if text is None:
            text = texts[key] = row_value_text(row)
        out.append(text)
    return out


def total_method_text(method: str, tolerance: float) -> str:
    """How the totals were found, e.g. "exact symmetric eigen-solution (rounding ≈ 1e-12)" or
    "numerical integration (est. rel. error 3e-08)"."""
    words = _TOTAL_METHOD_WORDS.get(method, method)
    if method.startswith("exact"):
        return f"{words} (rounding ≈ {tolerance:.0e})" if tolerance > 0 else words
    return f"{words} (est. rel. error {tolerance:.0e})" if tolerance > 0 else words

"""Engineering-unit formatting for reports and plots (SI prefixes).

Everything inside netnoise is in SI base units; only the edges (report, plot
labels) call these functions.
"""

from __future__ import annotations

import math
from functools import lru_cache

__all__ = ["format_quantity", "si_prefix_scale"]

_PREFIXES = [
    (1e12, "T"),
    (1e9, "G"),
    (1e6, "M"),
    (1e3, "k"),
    (1.0, ""),
    (1e-3, "m"),
    (1e-6, "µ"),
    (1e-9, "n"),
    (1e-12, "p"),
    (1e-15, "f"),
    (1e-18, "a"),
]


def si_prefix_scale(value: float) -> tuple[float, str]:
    """The (scale, prefix) that puts ``abs(value)`` in [1, 1000)."""
    magnitude = abs(value)
    if magnitude == 0.0 or not math.isfinite(magnitude):
        return 1.0, ""
    for scale, prefix in _PREFIXES:
        # a tiny margin so 999.9999 rounds into the next prefix consistently
        if magnitude >= scale * (1 - 1e-12):
            return scale, prefix
    return _PREFIXES[-1]


@lru_cache(maxsize=4096)  # large circuits repeat a few values many times
def format_quantity(value: float, unit: str = "", digits: int = 3) -> str:
    """``value`` with an SI prefix and ``digits`` significant digits.

    >>> format_quantity(4.07e-9, "V/√Hz")
    '4.07 nV/√Hz'
    >>> format_quantity(10e3, "Ω")
    '10 kΩ'
    """
    if value is None:
        return "—"
    if math.isnan(value):
        return "nan"
    if math.isinf(value):
        return ("-" if value < 0 else "") + "∞" + (f" {unit}" if unit else "")
    scale, prefix = si_prefix_scale(value)
    scaled = value / scale
    text = f"{scaled:.{digits}g}"
    if abs(float(text)) >= 1000 and prefix != "T":  # rounding pushed it up a prefix
        scale, prefix = si_prefix_scale(float(text) * scale)
        text = f"{value / scale:.{digits}g}"
    if "e" in text:  # beyond the prefix table
        text = f"{scaled:.{digits - 1}e}"
    space = " " if (unit or prefix) else ""
    return f"{text}{space}{prefix}{unit}"

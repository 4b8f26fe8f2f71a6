"""Small pieces of the plain-text layout shared by the report's sections."""

from __future__ import annotations

import math

from netnoise.engformat import format_quantity
from netnoise.results.result import NoiseResult

__all__ = [
    "BAR_WIDTH",
    "RULE",
    "MAX_SPOT_ROWS",
    "decade_frequencies",
    "percent",
    "bar",
    "hz",
    "wrapped",
    "section",
    "field",
    "output_text",
    "gain_unit",
]

#: Width of the share bar in characters for a 100 % share.
BAR_WIDTH = 24
RULE = "─"

#: Most decade spot frequencies listed (a very wide grid keeps the report short).
MAX_SPOT_ROWS = 16


def percent(fraction: float) -> str:
    return f"{100.0 * fraction:.1f} %"


def bar(fraction: float) -> str:
    """``#`` characters proportional to ``fraction``; a visible ``.`` for a
    non-zero share too small to earn one ``#``."""
    count = int(round(max(0.0, min(1.0, fraction)) * BAR_WIDTH))
    if count == 0 and fraction > 0.0:
        return "."
    return "#" * count


def hz(value: float) -> str:
    return format_quantity(value, "Hz", 4)


def wrapped(text: str, indent: str = "  ", width: int = 100) -> list[str]:
    """A sentence wrapped to ``width`` columns, every line indented."""
    import re
    import textwrap

    glued = re.sub(r"(?<=\d) (?=[^\W\d_]|%)", "\0", text)  # never split "3.99 dB" or "125 kHz"
    lines = textwrap.wrap(glued, width=width, initial_indent=indent, subsequent_indent=indent, break_on_hyphens=False)
    return [line.replace("\0", " ") for line in lines]


def section(name: str) -> list[str]:
    return ["", name, RULE * len(name)]


def field(label: str, text: str, width: int = 24) -> str:
    return f"  {label:<{width}}{text}"


def output_text(result: NoiseResult) -> str:
    if result.reference_node in ("0", ""):
        return f"v({result.output_node}), referred to ground"
    return f"v({result.output_node}) − v({result.reference_node})"


def gain_unit(input_unit: str | None) -> tuple[str, str]:
    """(unit of |H|, reference of its dB value)."""
    if input_unit == "A":
        return "V/A", "dB re 1 V/A"
    return "V/V", "dB"


def decade_frequencies(result: NoiseResult) -> list[float]:
    """Powers of ten on the grid (positive part only)."""
    f = result.frequency_Hz
    positive = f[f > 0]
    if positive.size == 0:
        return []
    first = math.ceil(math.log10(positive[0]) - 1e-9)
    last = math.floor(math.log10(f[-1]) + 1e-9)
    decades = [10.0**k for k in range(first, last + 1)]
    # guard against rounding at the grid's ends
    decades = [d for d in decades if positive[0] * (1 - 1e-9) <= d <= f[-1] * (1 + 1e-9)]
    if len(decades) > MAX_SPOT_ROWS:
        step = math.ceil(len(decades) / MAX_SPOT_ROWS)
        decades = decades[::step]
    return decades

"""Plain-text noise budget for a terminal.

:func:`format_report` turns a :class:`~netnoise.result.NoiseResult` into the
text a designer reads after ``netnoise analyze``.  The layout, top to bottom:

1. a heading with the netlist title;
2. *Conditions*: output, temperature (°C and K), integration band;
3. *Totals*: output rms and a peak-to-peak estimate; with an input source,
   the signal gain at its maximum, the input-referred rms and the noise
   bandwidth;
4. *Spot densities*: the total output density at each decade on the grid;
5. *Budget*: the ranked table of noise sources with a share bar, the tail
   lumped into one row when there are more than ``top`` sources;
6. a headline naming the dominant source, then notes, then one caution line.

Numbers arrive in SI units; all engineering formatting happens here.
"""

from __future__ import annotations

import math

from .engformat import format_quantity
from .errors import UsageError
from .result import Contribution, NoiseResult

__all__ = ["format_report", "PEAK_TO_PEAK_SIGMAS", "CAUTION"]

#: rms-to-peak-to-peak multiple for Gaussian noise (common practice: the
#: ±3.3 σ window is exceeded about 0.1 % of the time).
PEAK_TO_PEAK_SIGMAS = 6.6

#: Width of the share bar in characters for a 100 % share.
BAR_WIDTH = 24

#: Integration error above which the report states the integrator's accuracy.
ACCURACY_NOTE_THRESHOLD = 1e-4

#: Most decade spot frequencies listed (a very wide grid keeps the report short).
MAX_SPOT_ROWS = 16

CAUTION = (
    "Caution: design estimates only; mains-connected or safety-related "
    "equipment follows local codes and licensed practice."
)

_RULE = "─"


# --- small formatting helpers ----------------------------------------------
def _percent(fraction: float) -> str:
    return f"{100.0 * fraction:.1f} %"


def _bar(fraction: float) -> str:
    """``#`` characters proportional to ``fraction``; a visible ``.`` for a
    non-zero share too small to earn one ``#``."""
    count = int(round(max(0.0, min(1.0, fraction)) * BAR_WIDTH))
    if count == 0 and fraction > 0.0:
        return "."
    return "#" * count


def _hz(value: float) -> str:
    return format_quantity(value, "Hz", 4)


def _section(name: str) -> list[str]:
    return ["", name, _RULE * len(name)]


def _field(label: str, text: str, width: int = 24) -> str:
    return f"  {label:<{width}}{text}"


def _output_text(result: NoiseResult) -> str:
    if result.reference_node in ("0", ""):
        return f"v({result.output_node}), referred to ground"
    return f"v({result.output_node}) − v({result.reference_node})"


def _gain_unit(input_unit: str | None) -> tuple[str, str]:
    """(unit of |H|, reference of its dB value)."""
    if input_unit == "A":
        return "V/A", "dB re 1 V/A"
    return "V/V", "dB"


# --- sections ---------------------------------------------------------------
def _heading(result: NoiseResult) -> list[str]:
    title = result.title.strip() or "(untitled netlist)"
    head = f"Noise budget: {title}"
    return [head, "═" * min(len(head), 78)]


def _conditions(result: NoiseResult) -> list[str]:
    kelvin = result.temperature_K
    lines = _section("Conditions")
    lines.append(_field("output", _output_text(result)))
    lines.append(_field("temperature", f"{kelvin - 273.15:.2f} °C  ({kelvin:.2f} K)"))
    low = _hz(result.band_low_Hz)
    if result.band_is_unbounded:
        band = f"{low} .. ∞, to infinite bandwidth (exact)"
    else:
        band = f"{low} .. {_hz(result.band_high_Hz)}"
    lines.append(_field("integration band", band))
    return lines


def _totals(result: NoiseResult) -> list[str]:
    rms = result.total_rms
    lines = _section("Totals")
    lines.append(_field("output noise", f"{format_quantity(rms, 'V')} rms"))
    lines.append(
        _field(
            "peak-to-peak estimate",
            f"≈ {format_quantity(PEAK_TO_PEAK_SIGMAS * rms, 'V')} "
            f"(≈ {PEAK_TO_PEAK_SIGMAS:g} σ peak-to-peak, common practice)",
        )
    )
    if result.input_source is None:
        return lines
    unit = result.input_unit or "V"
    gain_unit, db_ref = _gain_unit(unit)
    gain = result.gain_at_max
    lines.append(_field("signal input", f"{result.input_source} ({'current' if unit == 'A' else 'voltage'} source)"))
    if gain is None or gain <= 0.0:
        lines.append(_field("signal gain", "zero in the band: no input-referred figures"))
        return lines
    magnitude = f"{gain:.4g} V/V" if gain_unit == "V/V" else format_quantity(gain, gain_unit, 4)
    decibels = round(20.0 * math.log10(gain), 2) + 0.0  # + 0.0: no "-0.00"
    lines.append(_field("gain at maximum", f"|H| = {magnitude}  ({decibels:.2f} {db_ref})"))
    referred = result.input_referred_rms
    if referred is not None:
        lines.append(_field("input-referred noise", f"{format_quantity(referred, unit)} rms"))
    enbw = result.enbw_Hz
    if enbw is not None:
        lines.append(_field("noise bandwidth (ENBW)", _hz(enbw)))
    return lines


def _decade_frequencies(result: NoiseResult) -> list[float]:
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


def _spot_densities(result: NoiseResult) -> list[str]:
    lines = _section("Spot output density")
    frequencies = _decade_frequencies(result)
    if not frequencies:  # a grid inside one decade: show its ends
        f = result.frequency_Hz
        frequencies = sorted({float(f[0]), float(f[-1])} - {0.0})
    width = max((len(_hz(x)) for x in frequencies), default=0)
    for x in frequencies:
        f = result.frequency_Hz
        value = result.spot_density(min(max(x, float(f[0])), float(f[-1])))
        lines.append(f"  at {_hz(x):>{width}}   {format_quantity(value, 'V/√Hz')}")
    return lines


def _lump(rest: list[Contribution]) -> Contribution:
    mechanisms = {c.mechanism for c in rest}
    return Contribution(
        element=f"({len(rest)} others)",
        mechanism=mechanisms.pop() if len(mechanisms) == 1 else "mixed",
        value="",
        variance_V2=sum(c.variance_V2 for c in rest),
        share=sum(c.share for c in rest),
        cumulative_share=rest[-1].cumulative_share,
    )


def _budget_rows(result: NoiseResult, top: int | None) -> list[tuple[str, Contribution]]:
    rows = list(result.contributions)
    ranked = [(str(i + 1), c) for i, c in enumerate(rows)]
    if top is not None and len(rows) > top:
        ranked = ranked[: top - 1] if top > 1 else []
        ranked.append(("…", _lump(rows[len(ranked) :])))
    return ranked


def _budget(result: NoiseResult, top: int | None) -> list[str]:
    lines = _section("Budget (ranked by share of output noise power)")
    rows = _budget_rows(result, top)
    if not rows:
        lines.append("  (no noise sources)")
        return lines
    header = ("#", "source", "mechanism", "value", "rms at output", "share", "cumul.", "")
    cells = [
        (
            rank,
            c.element,
            c.mechanism,
            c.value,
            format_quantity(c.rms_V, "V"),
            _percent(c.share),
            _percent(c.cumulative_share),
            _bar(c.share),
        )
        for rank, c in rows
    ]
    widths = [max(len(header[j]), *(len(row[j]) for row in cells)) for j in range(len(header))]
    right = {0, 4, 5, 6}  # numeric columns right-aligned

    def line(row: tuple[str, ...]) -> str:
        parts = [f"{cell:>{widths[j]}}" if j in right else f"{cell:<{widths[j]}}" for j, cell in enumerate(row)]
        return ("  " + "  ".join(parts)).rstrip()

    lines.append(line(header))
    lines.append("  " + "  ".join(_RULE * w for w in widths[:-1]) + "  " + _RULE * BAR_WIDTH)
    lines.extend(line(row) for row in cells)
    return lines


def _headline(result: NoiseResult) -> list[str]:
    rows = result.contributions
    if not rows or result.total_variance <= 0.0:
        return ["", "No noise source contributes to this output."]
    lead = rows[0]
    tied = [c for c in rows if math.isclose(c.share, lead.share, rel_tol=1e-6)]
    if len(tied) > 1:
        names = ", ".join(c.element for c in tied[:-1]) + f" and {tied[-1].element}"
        return ["", f"Largest sources: {names} tie at {_percent(lead.share)} of the output noise power each."]
    value = f", {lead.value}" if lead.value else ""
    return [
        "",
        f"Dominant source: {lead.element} ({lead.mechanism}{value}) gives "
        f"{_percent(lead.share)} of the output noise power "
        f"({format_quantity(lead.rms_V, 'V')} rms of {format_quantity(result.total_rms, 'V')}).",
    ]


def _notes(result: NoiseResult) -> list[str]:
    notes = list(result.notes)
    if result.integration_rel_error > ACCURACY_NOTE_THRESHOLD:
        notes.append(
            f"Band integral accurate to about {100.0 * result.integration_rel_error:.2g} % "
            "(integrator's own estimate)."
        )
    if not notes:
        return []
    lines = _section("Notes")
    lines.extend(f"  - {note}" for note in notes)
    return lines


def format_report(result: NoiseResult, *, top: int | None = 15) -> str:
    """The noise budget of ``result`` as plain text (ends with a newline).

    ``top`` limits the budget table to that many rows, the last of them
    lumping the remaining sources together; ``None`` lists every source.
    """
    if top is not None and top < 1:
        raise UsageError(f"the budget table needs at least one row (top={top})")
    lines: list[str] = []
    lines += _heading(result)
    lines += _conditions(result)
    lines += _totals(result)
    lines += _spot_densities(result)
    lines += _budget(result, top)
    lines += _headline(result)
    lines += _notes(result)
    lines += ["", CAUTION]
    return "\n".join(lines) + "\n"

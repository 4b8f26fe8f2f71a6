"""Plain-text noise budget for a terminal.

:func:`format_report` turns a :class:`~netnoise.result.NoiseResult` into the
text a designer reads after ``netnoise analyze``.  The layout, top to bottom:

1. a heading with the netlist title;
2. *Conditions*: output, temperature (°C and K), integration band;
3. *Totals*: output rms and a peak-to-peak estimate; with an input source,
   the signal gain at its maximum, the input-referred rms and the noise
   bandwidth;
4. *Spot densities*: the total output density at each decade on the grid;
5. *Noise figure* (when the analysis named a source resistor): the band
   figure, the equivalent noise temperature and the spot figure per decade;
6. *Signal-to-noise* (for a stated signal) and *Converter* (against an ideal
   ADC) when asked;
7. *Spot densities*: the total output density at each decade on the grid;
8. *Budget*: the ranked table of noise sources (or of elements or mechanisms
   with ``group_by``) with a share bar, the tail lumped into one row when
   there are more than ``top`` rows;
9. a headline naming the dominant row; the *DC operating point* when asked;
   then notes, then one caution line.

Numbers arrive in SI units; all engineering formatting happens here.  A
result holding NaN or an infinity where a number is expected is refused with
a :class:`~netnoise.errors.CircuitError` before anything is formatted
(:func:`check_finite`): the report never prints a number that is not finite.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

from netnoise.constants import celsius
from netnoise.engformat import format_quantity
from netnoise.errors import CircuitError, UsageError
from netnoise.outputs import study_text
from netnoise.outputs.labels import row_value_text, total_method_text, value_text
from netnoise.outputs.merit_text import (
    T0_K,
    converter_section,
    enob_bits,
    noise_figure_section,
    signal_to_noise_section,
)
from netnoise.outputs.text_layout import BAR_WIDTH
from netnoise.outputs.text_layout import RULE as _RULE
from netnoise.outputs.text_layout import bar as _bar
from netnoise.outputs.text_layout import decade_frequencies as _decade_frequencies
from netnoise.outputs.text_layout import field as _field
from netnoise.outputs.text_layout import gain_unit as _gain_unit
from netnoise.outputs.text_layout import hz as _hz
from netnoise.outputs.text_layout import output_text as _output_text
from netnoise.outputs.text_layout import percent as _percent
from netnoise.outputs.text_layout import section as _section
from netnoise.results.result import Contribution, NoiseResult
from netnoise.results.validation import check_finite, non_finite_fields

if TYPE_CHECKING:  # pragma: no cover
    from netnoise.engine.dc import OperatingPoint
    from netnoise.results.figures import AdcComparison, SignalToNoise

__all__ = [
    "format_report",
    "check_finite",
    "enob_bits",
    "non_finite_fields",
    "PEAK_TO_PEAK_SIGMAS",
    "CAUTION",
    "T0_K",
    "GROUPINGS",
    "BAR_WIDTH",
]

#: rms-to-peak-to-peak multiple for Gaussian noise (common practice: the
#: ±3.3 σ window is exceeded about 0.1 % of the time).
PEAK_TO_PEAK_SIGMAS = 6.6

#: Integration error above which the report states the integrator's accuracy.
ACCURACY_NOTE_THRESHOLD = 1e-4

#: ``group_by`` values: one row per noise source, or merged by element or mechanism.
GROUPINGS = ("source", "element", "mechanism")

#: In the DC section a value below this fraction of the largest of its kind
#: is solver round-off and is shown as 0.
DC_ROUND_OFF = 1e-12

CAUTION = (
    "Caution: design estimates only; mains-connected or safety-related "
    "equipment follows local codes and licensed practice."
)


def _check_operating_point(op: OperatingPoint) -> None:
    for kind, values in (
        ("node voltage", op.node_voltages),
        ("element current", op.element_currents),
        ("element voltage", op.element_voltages),
    ):
        bad = [name for name, value in values.items() if not math.isfinite(value)]
        if bad:
            raise CircuitError(
                f"the DC operating point is not finite ({kind} of {', '.join(bad[:5])}); "
                "check for extreme element values"
            )


# --- sections ---------------------------------------------------------------
def _heading(result: NoiseResult) -> list[str]:
    title = result.title.strip() or "(untitled netlist)"
    head = f"Noise budget: {title}"
    return [head, "═" * min(len(head), 78)]


def _conditions(result: NoiseResult) -> list[str]:
    kelvin = result.temperature_K
    lines = _section("Conditions")
    lines.append(_field("output", _output_text(result)))
    lines.append(_field("temperature", f"{celsius(kelvin):.2f} °C  ({kelvin:.2f} K)"))
    low = _hz(result.band_low_Hz)
    if result.band_is_unbounded:
        band = f"{low} .. ∞, to infinite bandwidth"
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
    lines.append(_field("totals found by", total_method_text(result.total_method, result.total_tolerance)))
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
    reference = result.gain_reference
    # shown when taken above DC, or when it differs from the peak by more than the 0.01 dB printed
    differs = reference is not None and not math.isclose(reference, gain, rel_tol=1e-3)
    if reference is not None and reference > 0.0 and (differs or result.gain_reference_Hz):
        where = "0 Hz" if not result.gain_reference_Hz else _hz(result.gain_reference_Hz)
        text = f"{reference:.4g} V/V" if gain_unit == "V/V" else format_quantity(reference, gain_unit, 4)
        level = round(20.0 * math.log10(reference), 2) + 0.0  # + 0.0: no "-0.00"
        lines.append(_field("gain referred to", f"|H| = {text} at {where}  ({level:.2f} {db_ref})"))
    referred = result.input_referred_rms
    if referred is not None:
        lines.append(_field("input-referred noise", f"{format_quantity(referred, unit)} rms"))
    enbw = result.enbw_Hz
    if enbw is not None:
        lines.append(_field("noise bandwidth (ENBW)", _hz(enbw)))
    return lines


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


def _lump(rest: Sequence[Contribution]) -> _Row:
    """The rows below the shown ones, as one."""
    mechanisms = {r.mechanism for r in rest}
    return _Row(
        f"({len(rest)} others)",
        mechanisms.pop() if len(mechanisms) == 1 else "mixed",
        "",
        sum(r.rms_V**2 for r in rest) ** 0.5,
        sum(r.share for r in rest),
        rest[-1].cumulative_share,
    )


@dataclasses.dataclass(frozen=True)
class _Row:
    """A budget row as printed: its label, mechanism and value text, and its numbers."""

    label: str
    mechanism: str
    value: str
    rms_V: float
    share: float
    cumulative_share: float


def _element_value(result: NoiseResult, element: str) -> str:
    """What an element row's value column shows: the members' common value, or
    the part before the first ': ' / ', ' they share ("lnamp: 4 nV/√Hz" and
    "lnamp: 1 pA/√Hz" -> "lnamp")."""
    values = {
        value_text(
            float(result.source_values[k]),
            result.source_units[k],
            result.source_mechanisms[k],
            result.source_details[k],
        )
        for k, e in enumerate(result.source_elements)
        if e == element
    }
    if len(values) <= 1:
        return values.pop() if values else ""
    heads = {v.replace(": ", ", ").split(", ")[0] for v in values}
    return heads.pop() if len(heads) == 1 else ""


def _rows_of(result: NoiseResult, group_by: str, shown: int | None = None) -> list[_Row]:
    """The budget's first ``shown`` rows (all of them when None) as printed, value texts
    included: a budget of 200,000 sources prints a dozen rows, and its texts cost ~1 s."""
    rows = result.grouped(group_by)[:shown]
    if group_by == "source":
        return [_Row(c.label, c.mechanism, row_value_text(c), c.rms_V, c.share, c.cumulative_share) for c in rows]
    if group_by == "element":
        return [
            _Row(c.label, c.mechanism, _element_value(result, c.label), c.rms_V, c.share, c.cumulative_share)
            for c in rows
        ]
    return [
        _Row(
            c.label, c.mechanism, f"{c.count} source{'s' if c.count > 1 else ''}", c.rms_V, c.share, c.cumulative_share
        )
        for c in rows
    ]


def _budget_rows(result: NoiseResult, top: int | None, group_by: str = "source") -> list[tuple[str, _Row]]:
    everything = result.grouped(group_by)
    if top is None or len(everything) <= top:
        return [(str(i + 1), c) for i, c in enumerate(_rows_of(result, group_by))]
    kept = max(top - 1, 0)
    ranked = [(str(i + 1), c) for i, c in enumerate(_rows_of(result, group_by, kept))]
    ranked.append(("…", _lump(everything[kept:])))
    return ranked


_BUDGET_TITLES = {
    "source": "Budget (ranked by share of output noise power)",
    "element": "Budget by element (each element's sources together, ranked by share)",
    "mechanism": "Budget by mechanism (sources of one kind together, ranked by share)",
}


def _budget(result: NoiseResult, top: int | None, group_by: str = "source") -> list[str]:
    lines = _section(_BUDGET_TITLES[group_by])
    rows = _budget_rows(result, top, group_by)
    if not rows:
        lines.append("  (no noise sources)")
        return lines
    numbers = lambda c: (format_quantity(c.rms_V, "V"), _percent(c.share), _percent(c.cumulative_share), _bar(c.share))  # noqa: E731
    header: tuple[str, ...]
    cells: list[tuple[str, ...]]
    if group_by == "mechanism":  # a mechanism row is named by its mechanism
        header = ("#", "mechanism", "sources", "rms at output", "share", "cumul.", "")
        cells = [(rank, c.label, c.value, *numbers(c)) for rank, c in rows]
        right = {0, 3, 4, 5}
    else:
        first = "element" if group_by == "element" else "source"
        header = ("#", first, "mechanism", "value", "rms at output", "share", "cumul.", "")
        cells = [(rank, c.label, c.mechanism, c.value, *numbers(c)) for rank, c in rows]
        right = {0, 4, 5, 6}  # numeric columns right-aligned
    widths = [max(len(header[j]), *(len(row[j]) for row in cells)) for j in range(len(header))]

    def line(row: tuple[str, ...]) -> str:
        parts = [f"{cell:>{widths[j]}}" if j in right else f"{cell:<{widths[j]}}" for j, cell in enumerate(row)]
        return ("  " + "  ".join(parts)).rstrip()

    lines.append(line(header))
    lines.append("  " + "  ".join(_RULE * w for w in widths[:-1]) + "  " + _RULE * BAR_WIDTH)
    lines.extend(line(row) for row in cells)
    return lines


NAMES_SHOWN = 10  # names listed in a line of the report before the rest are counted


def name_list(names: list[str], shown: int = NAMES_SHOWN) -> str:
    """'R1, R2 and R3'; a long list keeps its first ``shown`` names and counts
    the rest ('R1, R2, … and 9,990 more'), so a line stays a line."""
    if len(names) <= 1:
        return "".join(names)
    if len(names) <= shown:
        return ", ".join(names[:-1]) + f" and {names[-1]}"
    return ", ".join(names[:shown]) + f", … and {len(names) - shown:,} more"


def _headline(result: NoiseResult, group_by: str = "source") -> list[str]:
    rows = _rows_of(result, group_by, 1)  # the lead's value is shown; ties are named only
    if not rows or result.total_variance <= 0.0:
        return ["", "No noise source contributes to this output."]
    lead = rows[0]
    # largest first, so the ties are the rows from the top down to the first that differs
    tied = list(
        itertools.takewhile(lambda c: math.isclose(c.share, lead.share, rel_tol=1e-6), result.grouped(group_by))
    )
    kind = {"source": "sources", "element": "elements", "mechanism": "mechanisms"}[group_by]
    if len(tied) > 1:
        names = name_list([c.label for c in tied])
        return ["", f"Largest {kind}: {names} tie at {_percent(lead.share)} of the output noise power each."]
    if group_by == "mechanism":
        subject = f"Dominant mechanism: {lead.label} ({lead.value})"
    else:
        value = f", {lead.value}" if lead.value else ""
        subject = f"Dominant {'element' if group_by == 'element' else 'source'}: {lead.label} ({lead.mechanism}{value})"
    return [
        "",
        f"{subject} gives "
        f"{_percent(lead.share)} of the output noise power "
        f"({format_quantity(lead.rms_V, 'V')} rms of {format_quantity(result.total_rms, 'V')}).",
    ]


# --- DC operating point ---------------------------------------------------------
def _dc_value(value: float, largest: float, unit: str) -> str:
    if abs(value) <= DC_ROUND_OFF * largest:
        value = 0.0
    return format_quantity(value, unit, 4)


def _operating_point(op: OperatingPoint) -> list[str]:
    lines = _section("DC operating point")
    if op.node_voltages:
        largest = max(abs(v) for v in op.node_voltages.values())
        labels = [f"v({node})" for node in op.node_voltages]
        width = max(len(label) for label in labels)
        texts = [_dc_value(v, largest, "V") for v in op.node_voltages.values()]
        value_width = max(len(t) for t in texts)
        lines.append("  node voltages (to ground)")
        lines.extend(f"    {label:<{width}}  {text:>{value_width}}" for label, text in zip(labels, texts))
    names = list(dict.fromkeys([*op.element_currents, *op.element_voltages]))
    if names:
        top_v = max((abs(v) for v in op.element_voltages.values()), default=0.0)
        top_i = max((abs(i) for i in op.element_currents.values()), default=0.0)
        rows = [
            (
                name,
                _dc_value(op.element_voltages[name], top_v, "V") if name in op.element_voltages else "—",
                _dc_value(op.element_currents[name], top_i, "A") if name in op.element_currents else "—",
            )
            for name in names
        ]
        header = ("element", "voltage", "current")
        widths = [max(len(header[j]), *(len(row[j]) for row in rows)) for j in range(3)]
        lines.append("  elements (voltage: first node minus second; current: from the first node through")
        lines.append("  the element to the second, so a source delivering power shows a negative current)")
        lines.append(f"    {header[0]:<{widths[0]}}  {header[1]:>{widths[1]}}  {header[2]:>{widths[2]}}")
        lines.append("    " + "  ".join(_RULE * w for w in widths))
        lines.extend(f"    {a:<{widths[0]}}  {b:>{widths[1]}}  {c:>{widths[2]}}" for a, b, c in rows)
    lines += _devices(op)
    if len(lines) == 3:
        lines.append("  (no nodes besides ground)")
    return lines


# the device quantities of the operating point, as the report names them
_DEVICE_LABELS = {
    "current": "I",
    "junction_voltage": "V",
    "conductance": "g",
    "resistance": "r_d",
    "capacitance": "C",
    "collector_current": "Ic",
    "base_current": "Ib",
    "base_emitter": "Vbe",
    "collector_emitter": "Vce",
    "current_gain": "β",
    "drain_current": "Id",
    "gate_current": "Ig",
    "gate_source": "Vgs",
    "drain_source": "Vds",
    "threshold": "Vth",
    "transconductance": "gm",
    "body_transconductance": "gmb",
    "r_pi": "rπ",
    "output_resistance": "ro",
    "base_resistance": "rb",
    "c_pi": "Cπ",
    "c_mu": "Cμ",
    "c_gs": "Cgs",
    "c_gd": "Cgd",
    "c_gb": "Cgb",
}
_UNIT_SUFFIXES = {"_A": "A", "_V": "V", "_S": "S", "_ohm": "Ω", "_F": "F"}


def _device_quantity(key: str, value: float) -> str | None:
    if key == "temperature_K":
        return None  # shown once in the heading line
    for suffix, unit in _UNIT_SUFFIXES.items():
        if key.endswith(suffix):
            label = _DEVICE_LABELS.get(key[: -len(suffix)], key[: -len(suffix)])
            return f"{label} {format_quantity(value, unit, 4)}"
    return f"{_DEVICE_LABELS.get(key, key)} {value:.4g}"


def _devices(op: OperatingPoint) -> list[str]:
    if not op.devices:
        return []
    lines = [
        f"  devices (solved by {op.method}; this is a solution of the nonlinear equations: a circuit with",
        "  several stable states, such as a latch, has others)",
    ]
    for name, values in op.devices.items():
        head = f"    {name}"
        if "temperature_K" in values:
            head += f"  at {celsius(values['temperature_K']):.2f} °C"
        lines.append(head)
        parts = [text for key, value in values.items() if (text := _device_quantity(key, value)) is not None]
        line = "     "
        for part in parts:
            if len(line) + len(part) + 3 > 78 and line.strip():
                lines.append(line.rstrip())
                line = "     "
            line += " " + part + "  "
        if line.strip():
            lines.append(line.rstrip())
    return lines


def _notes(result: NoiseResult, advice: Mapping[str, str] | None = None) -> list[str]:
    """The Notes section; ``advice`` adds a sentence to the notes of the codes it names
    (the command line says which of its options would change them)."""
    advice = advice or {}
    notes = [note.text + (f" ({advice[note.code]})" if note.code in advice else "") for note in result.notes]
    if result.integration_rel_error > ACCURACY_NOTE_THRESHOLD:
        notes.append(
            f"Band integral accurate to about {100.0 * result.integration_rel_error:.2g} % (integrator's own estimate)."
        )
    if not notes:
        return []
    lines = _section("Notes")
    lines.extend(f"  - {note}" for note in notes)
    return lines


def format_report(
    result: NoiseResult,
    *,
    top: int | None = 15,
    group_by: str | None = None,
    snr: SignalToNoise | None = None,
    signal_at: str = "input",
    adc: AdcComparison | None = None,
    operating_point: OperatingPoint | None = None,
    response: Any = None,
    sensitivities: Any = None,
    advice: Mapping[str, str] | None = None,
) -> str:
    """The noise budget of ``result`` as plain text (ends with a newline).

    ``top`` limits the budget table to that many rows, the last of them
    lumping the remaining rows together; ``None`` lists every row.
    ``group_by``: ``None``/``"source"`` (one row per noise source),
    ``"element"`` or ``"mechanism"``.  ``snr`` (from
    :func:`netnoise.figures.signal_to_noise`, with ``signal_at`` saying where
    the signal was stated), ``adc`` (from :func:`netnoise.figures.adc_comparison`)
    and ``operating_point`` (from :func:`netnoise.dc.operating_point`) add
    their sections, as do ``response`` (the signal path's speed) and
    ``sensitivities`` (what to change) from :mod:`netnoise.studies`.
    ``advice`` maps note codes to a hint added to those notes (the command
    line's options).  Raises :class:`CircuitError` for a result holding NaN
    or infinite values (nothing that is not finite is ever printed).
    """
    if top is not None and top < 1:
        raise UsageError(f"the budget table needs at least one row (top={top})")
    group_by = group_by or "source"
    if group_by not in GROUPINGS:
        raise UsageError(f"group the budget by {', '.join(GROUPINGS)}, not {group_by!r}")
    if signal_at not in ("input", "output"):
        raise UsageError(f"the signal is stated at the 'input' or the 'output', not {signal_at!r}")
    check_finite(result)
    if operating_point is not None:
        _check_operating_point(operating_point)
    lines: list[str] = []
    lines += _heading(result)
    lines += _conditions(result)
    lines += _totals(result)
    lines += noise_figure_section(result)
    if snr is not None:
        lines += signal_to_noise_section(result, snr, signal_at)
    if adc is not None:
        lines += converter_section(result, adc, snr)
    lines += _spot_densities(result)
    lines += _budget(result, top, group_by)
    lines += _headline(result, group_by)
    if response is not None:
        lines += study_text.response_section(
            response, result.input_source or "the input", _output_text(result), result.input_unit
        )
    if sensitivities is not None:
        lines += study_text.sensitivity_section(sensitivities, result.temperature_K)
    if operating_point is not None:
        lines += _operating_point(operating_point)
    lines += _notes(result, advice)
    lines += ["", CAUTION]
    return "\n".join(lines) + "\n"

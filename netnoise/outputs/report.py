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
import math
from typing import TYPE_CHECKING

import numpy as np

from netnoise.engformat import format_quantity
from netnoise.errors import CircuitError, UsageError
from netnoise.results.result import Contribution, NoiseResult

if TYPE_CHECKING:  # pragma: no cover
    from netnoise.engine.dc import OperatingPoint
    from netnoise.results.figures import AdcComparison, SignalToNoise

__all__ = ["format_report", "check_finite", "enob_bits", "non_finite_fields", "PEAK_TO_PEAK_SIGMAS", "CAUTION", "T0_K", "GROUPINGS"]

#: rms-to-peak-to-peak multiple for Gaussian noise (common practice: the
#: ±3.3 σ window is exceeded about 0.1 % of the time).
PEAK_TO_PEAK_SIGMAS = 6.6

#: Width of the share bar in characters for a 100 % share.
BAR_WIDTH = 24

#: Integration error above which the report states the integrator's accuracy.
ACCURACY_NOTE_THRESHOLD = 1e-4

#: Most decade spot frequencies listed (a very wide grid keeps the report short).
MAX_SPOT_ROWS = 16

#: IEEE standard noise temperature of the source, kelvin (noise figure definition).
T0_K = 290.0

#: ``group_by`` values: one row per noise source, or merged by element or mechanism.
GROUPINGS = ("source", "element", "mechanism")

#: In the DC section a value below this fraction of the largest of its kind
#: is solver round-off and is shown as 0.
DC_ROUND_OFF = 1e-12

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


def _wrapped(text: str, indent: str = "  ", width: int = 100) -> list[str]:
    """A sentence wrapped to ``width`` columns, every line indented."""
    import re
    import textwrap

    glued = re.sub(r"(?<=\d) (?=[^\W\d_]|%)", "\0", text)  # never split "3.99 dB" or "125 kHz"
    lines = textwrap.wrap(glued, width=width, initial_indent=indent, subsequent_indent=indent, break_on_hyphens=False)
    return [line.replace("\0", " ") for line in lines]


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


# --- refusing what cannot be printed ------------------------------------------
def non_finite_fields(result: NoiseResult) -> list[str]:
    """Names of the result's numbers that are NaN or infinite where a finite
    value is required ([] when the result can be reported).

    Allowed: an infinite band high edge (the band reaches infinity), and
    ``+inf`` points of the spot noise-figure spectrum (no signal gain at that
    frequency; shown as such, never as a number).
    """
    bad: list[str] = []
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
            bad.append(name)
    scalars = {
        "temperature_K": result.temperature_K,
        "band_low_Hz": result.band_low_Hz,
        "gain_peak": result.gain_peak,
        "gain_squared_integral": result.gain_squared_integral,
        "integration_rel_error": result.integration_rel_error,
        "noise_figure_dB": result.noise_figure_dB,
    }
    for name, value in scalars.items():
        if value is not None and not math.isfinite(value):
            bad.append(name)
    if math.isnan(result.band_high_Hz):
        bad.append("band_high_Hz")
    spectrum = result.noise_figure_spectrum_dB
    if spectrum is not None and (np.any(np.isnan(spectrum)) or np.any(spectrum == -np.inf)):
        bad.append("noise_figure_spectrum_dB")
    if not bad and not math.isfinite(result.total_variance):
        bad.append("total output noise (the sum of the sources overflows)")
    return bad


def check_finite(result: NoiseResult) -> None:
    """Raise :class:`CircuitError` naming the fields that are NaN or infinite."""
    bad = non_finite_fields(result)
    if bad:
        raise CircuitError(
            f"the analysis result holds NaN or infinite values ({', '.join(bad)}), so no figures are "
            "reported: a number that is not finite would be wrong. This comes from a near-singular "
            "circuit or extreme element values; check for a lossless resonance or an element many "
            "orders of magnitude away from the rest"
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


def _db(value: float, digits: int = 2) -> str:
    return f"{round(value, digits) + 0.0:.{digits}f} dB"  # + 0.0: no "-0.00"


# --- noise figure -------------------------------------------------------------
def _source_resistor_value(result: NoiseResult) -> str:
    name = result.source_resistor or ""
    for element, value in zip(result.source_elements, result.source_values):
        if element.lower() == name.lower() and value:
            return value
    return ""


def _spot_noise_figure(result: NoiseResult, frequency: float) -> float:
    """Spot noise figure (dB) at ``frequency``: the grid value there, else
    interpolated linearly in log frequency; +inf when a neighbour has no gain."""
    f = result.frequency_Hz
    nf = np.asarray(result.noise_figure_spectrum_dB, dtype=float)
    positive = f > 0
    f, nf = f[positive], nf[positive]
    i = int(np.searchsorted(f, frequency))
    for j in (i - 1, i):
        if 0 <= j < f.size and math.isclose(f[j], frequency, rel_tol=1e-9):
            return float(nf[j])
    i = min(max(i, 1), f.size - 1)
    a, b = nf[i - 1], nf[i]
    if not (math.isfinite(a) and math.isfinite(b)):
        return math.inf
    t = (math.log(frequency) - math.log(f[i - 1])) / (math.log(f[i]) - math.log(f[i - 1]))
    return float(a + t * (b - a))


def _noise_figure(result: NoiseResult) -> list[str]:
    if result.noise_figure_dB is None and result.noise_figure_spectrum_dB is None:
        return []
    lines = _section("Noise figure")
    value = _source_resistor_value(result)
    lines.append(
        _field(
            "referred to",
            f"{result.source_resistor or 'the source resistor'}{f' ({value})' if value else ''}, "
            f"its noise taken at T0 = {T0_K:g} K (IEEE definition)",
        )
    )
    if result.noise_figure_dB is not None:
        nf = result.noise_figure_dB
        lines.append(_field("over the band", f"NF = {_db(nf)}"))
        factor = 10.0 ** (nf / 10.0)
        kelvin = T0_K * (factor - 1.0)
        kelvin_text = f"{kelvin:,.0f}" if kelvin >= 1000 else f"{kelvin:.4g}"
        lines.append(_field("noise temperature", f"Te = {T0_K:g} K × (F − 1) = {kelvin_text} K"))
    if result.noise_figure_spectrum_dB is not None and result.noise_figure_spectrum_dB.size:
        frequencies = _decade_frequencies(result)
        if not frequencies:
            f = result.frequency_Hz
            frequencies = sorted({float(f[0]), float(f[-1])} - {0.0})
        width = max((len(_hz(x)) for x in frequencies), default=0)
        lines.append("  spot noise figure")
        for x in frequencies:
            spot = _spot_noise_figure(result, x)
            text = _db(spot) if math.isfinite(spot) else "— (no signal gain at this frequency)"
            lines.append(f"    at {_hz(x):>{width}}   {text}")
    return lines


# --- signal-to-noise and the converter --------------------------------------------
def enob_bits(snr_dB: float) -> float:
    """Effective number of bits of a full-scale-sine SNR: (SNR − 1.76 dB) / 6.02 dB
    (common practice; the inverse of 6.02N + 1.76 dB)."""
    return (snr_dB - 1.76) / 6.02


def _snr_text(snr_dB: float) -> str:
    return _db(snr_dB) if math.isfinite(snr_dB) else "unbounded (no noise at the output)"


def _signal_to_noise(result: NoiseResult, snr: SignalToNoise, at: str) -> list[str]:
    lines = _section("Signal-to-noise")
    gain = result.gain_at_max or 0.0
    if at == "input" and gain > 0.0:
        unit = result.input_unit or "V"
        gain_text = f"{gain:.4g} V/V" if unit == "V" else format_quantity(gain, "V/A", 4)
        signal_in = snr.signal_output_rms_V / gain
        lines.append(_field("signal", f"{format_quantity(signal_in, unit)} rms at the input ({result.input_source})"))
        lines.append(
            _field("at the output", f"{format_quantity(snr.signal_output_rms_V, 'V')} rms (pass-band gain {gain_text})")
        )
    else:
        lines.append(_field("signal", f"{format_quantity(snr.signal_output_rms_V, 'V')} rms at the output"))
    lines.append(_field("noise at the output", f"{format_quantity(snr.noise_rms_V, 'V')} rms over the band"))
    lines.append(_field("SNR", _snr_text(snr.snr_dB)))
    if math.isfinite(snr.snr_dB) and snr.snr_dB <= 0.0:
        lines.append("  The signal is no larger than the noise in this band.")
    return lines


def _converter(result: NoiseResult, adc: AdcComparison, snr: SignalToNoise | None) -> list[str]:
    rate = adc.sample_rate_Hz
    nyquist = rate / 2.0
    lines = _section(
        f"Converter (ideal {adc.bits}-bit ADC, {format_quantity(adc.full_scale_V, 'V', 4)} peak-to-peak full scale, "
        f"sampled at {_hz(rate)})"
    )
    lines.append(_field("LSB  q = FS / 2^N", format_quantity(adc.lsb_V, "V"), 30))
    lines.append(
        _field(
            "quantisation noise  q/√12",
            f"{format_quantity(adc.quantisation_rms_V, 'V')} rms "
            f"(as {format_quantity(adc.quantisation_density_V_per_rtHz, 'V/√Hz')} over 0 .. {_hz(nyquist)})",
            30,
        )
    )
    lines.append(_field("ideal SNR  6.02N + 1.76 dB", f"{_db(adc.ideal_snr_dB)} (full-scale sine, common practice)", 30))
    lsb_fraction = adc.analog_rms_V / adc.lsb_V
    lines.append(
        _field("analog chain noise", f"{format_quantity(adc.analog_rms_V, 'V')} rms = {lsb_fraction:.3g} LSB rms", 30)
    )
    lines.append(_field("SNR, analog chain alone", _snr_text(adc.analog_snr_dB), 30))
    lines.append(_field("SNR, both together", f"{_db(adc.combined_snr_dB)} (full-scale sine)", 30))
    enob = enob_bits(adc.combined_snr_dB)
    lines.append(_field("effective resolution", f"{enob:.2f} bits (ENOB, from the combined SNR)", 30))
    lines.append(_field("floor set by", adc.floor_set_by, 30))
    cost = adc.ideal_snr_dB - adc.combined_snr_dB
    if adc.analog_rms_V == 0.0:
        verdict = "The converter sets the floor: the analog chain adds no noise."
    else:
        ratio_dB = 20.0 * math.log10(adc.analog_rms_V / adc.quantisation_rms_V)
        if adc.floor_set_by == "analog chain":
            verdict = (
                f"The analog chain sets the floor: its noise is {_db(abs(ratio_dB), 1)} above the quantisation "
                f"noise and costs {_db(cost)} of the converter's ideal SNR."
            )
        else:
            verdict = (
                f"The converter sets the floor: its quantisation noise is {_db(abs(ratio_dB), 1)} above the "
                f"analog chain's noise, which costs {_db(cost)} of the ideal SNR."
            )
    lines.append("")
    lines += _wrapped(verdict)
    if math.isfinite(result.band_high_Hz) and result.band_high_Hz < nyquist * (1 - 1e-9):
        lines += _wrapped(
            f"Note: the band ends at {_hz(result.band_high_Hz)}, below the Nyquist frequency {_hz(nyquist)}; "
            "analog noise between them also reaches the converter but is not counted here "
            "(analyse up to the anti-alias filter's roll-off, or to infinity)."
        )
    elif result.band_high_Hz > nyquist * (1 + 1e-9):
        lines += _wrapped(
            f"Analog noise above the Nyquist frequency {_hz(nyquist)} aliases into 0 .. {_hz(nyquist)}: "
            "the whole band's noise is counted."
        )
    if snr is not None:
        signal = snr.signal_output_rms_V
        combined = 10.0 * math.log10(signal**2 / (adc.analog_rms_V**2 + adc.quantisation_rms_V**2))
        lines += _wrapped(
            f"The stated signal ({format_quantity(signal, 'V')} rms at the converter) against both: SNR {_db(combined)}."
        )
        if signal > adc.full_scale_sine_rms_V * (1 + 1e-9):
            lines += _wrapped(
                f"Warning: as a sine that signal exceeds the full scale ({format_quantity(adc.full_scale_sine_rms_V, 'V')} "
                "rms for a full-scale sine) and would clip."
            )
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


def _element_value(result: NoiseResult, element: str, first: str) -> str:
    """What an element row's value column shows: the members' common value, or
    the part before the first ': ' / ', ' they share ("lnamp: 4 nV/√Hz" and
    "lnamp: 1 pA/√Hz" -> "lnamp")."""
    values = {v for e, v in zip(result.source_elements, result.source_values) if e == element}
    if len(values) <= 1:
        return first
    heads = {v.replace(": ", ", ").split(", ")[0] for v in values}
    return heads.pop() if len(heads) == 1 else ""


def _rows_of(result: NoiseResult, group_by: str) -> tuple[Contribution, ...]:
    if group_by == "source":
        return result.contributions
    rows = result.grouped(group_by)
    if group_by == "element":
        rows = tuple(dataclasses.replace(c, value=_element_value(result, c.element, c.value)) for c in rows)
    return rows


def _budget_rows(result: NoiseResult, top: int | None, group_by: str = "source") -> list[tuple[str, Contribution]]:
    rows = list(_rows_of(result, group_by))
    ranked = [(str(i + 1), c) for i, c in enumerate(rows)]
    if top is not None and len(rows) > top:
        ranked = ranked[: top - 1] if top > 1 else []
        ranked.append(("…", _lump(rows[len(ranked) :])))
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
    if group_by == "mechanism":  # a mechanism row is named by its mechanism (its ``element`` field)
        header = ("#", "mechanism", "sources", "rms at output", "share", "cumul.", "")
        cells = [(rank, c.element, c.value, *numbers(c)) for rank, c in rows]
        right = {0, 3, 4, 5}
    else:
        first = "element" if group_by == "element" else "source"
        header = ("#", first, "mechanism", "value", "rms at output", "share", "cumul.", "")
        cells = [(rank, c.element, c.mechanism, c.value, *numbers(c)) for rank, c in rows]
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
    rows = _rows_of(result, group_by)
    if not rows or result.total_variance <= 0.0:
        return ["", "No noise source contributes to this output."]
    lead = rows[0]
    tied = [c for c in rows if math.isclose(c.share, lead.share, rel_tol=1e-6)]
    kind = {"source": "sources", "element": "elements", "mechanism": "mechanisms"}[group_by]
    if len(tied) > 1:
        names = name_list([c.element for c in tied])
        return ["", f"Largest {kind}: {names} tie at {_percent(lead.share)} of the output noise power each."]
    if group_by == "mechanism":
        subject = f"Dominant mechanism: {lead.element} ({lead.value})"
    else:
        value = f", {lead.value}" if lead.value else ""
        subject = f"Dominant {'element' if group_by == 'element' else 'source'}: {lead.element} ({lead.mechanism}{value})"
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
    if len(lines) == 3:
        lines.append("  (no nodes besides ground)")
    return lines


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


def format_report(
    result: NoiseResult,
    *,
    top: int | None = 15,
    group_by: str | None = None,
    snr: SignalToNoise | None = None,
    signal_at: str = "input",
    adc: AdcComparison | None = None,
    operating_point: OperatingPoint | None = None,
) -> str:
    """The noise budget of ``result`` as plain text (ends with a newline).

    ``top`` limits the budget table to that many rows, the last of them
    lumping the remaining rows together; ``None`` lists every row.
    ``group_by``: ``None``/``"source"`` (one row per noise source),
    ``"element"`` or ``"mechanism"``.  ``snr`` (from
    :func:`netnoise.figures.signal_to_noise`, with ``signal_at`` saying where
    the signal was stated), ``adc`` (from :func:`netnoise.figures.adc_comparison`)
    and ``operating_point`` (from :func:`netnoise.dc.operating_point`) add
    their sections.  Raises :class:`CircuitError` for a result holding NaN
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
    lines += _noise_figure(result)
    if snr is not None:
        lines += _signal_to_noise(result, snr, signal_at)
    if adc is not None:
        lines += _converter(result, adc, snr)
    lines += _spot_densities(result)
    lines += _budget(result, top, group_by)
    lines += _headline(result, group_by)
    if operating_point is not None:
        lines += _operating_point(operating_point)
    lines += _notes(result)
    lines += ["", CAUTION]
    return "\n".join(lines) + "\n"

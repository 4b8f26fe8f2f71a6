"""The text of the design studies: the Response section, the What-to-change
section, and a sweep's table with its target answer.  Engineering units here
only; the studies themselves hold SI numbers."""

from __future__ import annotations

import math
from collections.abc import Sequence

from netnoise.constants import celsius
from netnoise.engformat import format_quantity

__all__ = ["accuracy_text", "response_section", "sensitivity_section", "sweep_table", "target_sentence"]

_RULE = "─"


def _section(title: str) -> list[str]:
    return ["", title, _RULE * len(title)]


def accuracy_text(fraction: float) -> str:
    """'16 bits' when the accuracy is half an LSB of a converter (2^-(N+1)), else a percentage."""
    bits = -math.log2(fraction) - 1
    if abs(bits - round(bits)) < 1e-9 and 1 <= round(bits) <= 32:
        return f"{int(round(bits))} bits"
    return f"{100 * fraction:.3g} %"


def _time(value: float | None) -> str:
    if value is None:
        return "—"
    if math.isinf(value):
        return "does not settle"
    return format_quantity(value, "s", 4)


def response_section(speed, input_source: str, output_text: str, input_unit: str | None) -> list[str]:
    """The Response section: bandwidth, rise, overshoot, settling, DC transfer."""
    lines = _section(f"Response of the signal path ({input_source} to {output_text})")
    unit = "V/A" if input_unit == "A" else "V/V"
    rows = [
        (
            "−3 dB bandwidth",
            format_quantity(speed.bandwidth_Hz, "Hz", 4) if speed.bandwidth_Hz else "does not fall 3 dB",
        ),
        ("rise time (10–90 %)", _time(speed.rise_time_s)),
        ("overshoot", f"{100 * speed.overshoot:.2f} %"),
    ]
    if speed.settle_accuracy is not None:
        rows.append((f"settles to {accuracy_text(speed.settle_accuracy)}", _time(speed.settling_time_s)))
    rows.append(("DC transfer", f"{format_quantity(speed.dc_gain, unit, 4)}"))
    rows.append(
        ("step found", "exactly, from the state space" if speed.method == "exact" else "by time-stepping (BDF2)")
    )
    lines += [f"  {label:<24}{text}" for label, text in rows]
    return lines


def _signed(value: float | None) -> str:
    return "—" if value is None else f"{value:+.2f} %"


def sensitivity_section(sensitivities: Sequence, temperature_K: float, limit: int = 12) -> list[str]:
    """What to change: every lever's effect on the rms noise, and on the speed, per +1 % of its value."""
    lines = _section("What to change (effect of +1 % on each value)")
    if not sensitivities:
        return lines + ["  (no value changes the output noise)"]
    show_speed = any(s.bandwidth_pct_per_pct is not None for s in sensitivities)
    header = ["value", "now", "rms noise"] + (["bandwidth", "settling"] if show_speed else [])
    rows = []
    for s in list(sensitivities)[:limit]:
        now = f"{celsius(temperature_K):.4g} °C" if s.element == "temp" else format_quantity(s.value, s.unit, 4)
        name = "temperature" if s.element == "temp" else s.element
        row = [name, now, _signed(s.rms_pct_per_pct)]
        if show_speed:
            row += [_signed(s.bandwidth_pct_per_pct), _signed(s.settling_pct_per_pct)]
        rows.append(row)
    widths = [max(len(header[j]), *(len(r[j]) for r in rows)) for j in range(len(header))]
    fmt = lambda r: "  " + "  ".join(c.ljust(widths[j]) if j < 2 else c.rjust(widths[j]) for j, c in enumerate(r))  # noqa: E731
    lines.append(fmt(header).rstrip())
    lines.append("  " + "  ".join(_RULE * w for w in widths))
    lines += [fmt(r).rstrip() for r in rows]
    if len(sensitivities) > limit:
        lines.append(f"  ... and {len(sensitivities) - limit} more with smaller effects")
    lead = next((s for s in sensitivities if s.element != "temp"), None)
    if lead is not None and abs(lead.rms_pct_per_pct) > 1e-6:
        way = "lowering" if lead.rms_pct_per_pct > 0 else "raising"
        text = f"  Largest lever: {lead.element}; {way} it by 1 % lowers the rms noise by {abs(lead.rms_pct_per_pct):.2f} %"
        if lead.settling_pct_per_pct is not None:
            change = -lead.settling_pct_per_pct if lead.rms_pct_per_pct > 0 else lead.settling_pct_per_pct
            text += f" and {'lengthens' if change > 0 else 'shortens'} the settling time by {abs(change):.2f} %"
        lines.append("")
        lines.append(text + ".")
    return lines


def _value(name: str, value: float, units: dict[str, str]) -> str:
    if name.lower() == "temp":
        return f"{value:.4g} °C"
    return format_quantity(value, units.get(name, ""), 4)


def sweep_table(result, units: dict[str, str]) -> list[str]:
    """One row per point: the values, total rms noise, dominant source, bandwidth, settling time."""
    names = [v.name for v in result.vary]
    title = "Sweep of " + " and ".join(names) + f" ({len(result.points)} points)"
    lines = _section(title)
    settle = f"settles ({accuracy_text(result.settle_accuracy)})" if result.settle_accuracy else None
    header = names + ["total rms", "dominant", "bandwidth"] + ([settle] if settle else [])
    rows = []
    for p in result.points:
        row = [_value(n, v, units) for n, v in zip(names, p.values)]
        row += [
            format_quantity(p.total_rms_V, "V", 4),
            p.dominant,
            format_quantity(p.bandwidth_Hz, "Hz", 4) if p.bandwidth_Hz else "—",
        ]
        if settle:
            row.append(_time(p.settling_time_s))
        rows.append(row)
    widths = [max(len(header[j]), *(len(r[j]) for r in rows)) for j in range(len(header))]
    lines.append("  " + "  ".join(h.ljust(widths[j]) for j, h in enumerate(header)).rstrip())
    lines.append("  " + "  ".join(_RULE * w for w in widths))
    lines += ["  " + "  ".join(c.ljust(widths[j]) for j, c in enumerate(r)).rstrip() for r in rows]
    return lines


def target_sentence(answer, direction: str, units: dict[str, str], settle_accuracy: float | None) -> str:
    """'Chold must be at least 4.047 pF for 32 µV rms; it then settles to 16 bits in 83.1 ns.'"""
    value = _value(answer.name, answer.value, units)
    point = answer.point
    if answer.target == "noise":
        text = f"{answer.name} must be {direction} {value} for {format_quantity(point.total_rms_V, 'V', 4)} rms"
        if point.settling_time_s is not None and settle_accuracy is not None:
            text += f"; it then settles to {accuracy_text(settle_accuracy)} in {_time(point.settling_time_s)}"
    else:
        text = (
            f"{answer.name} must be {direction} {value} to settle to {accuracy_text(settle_accuracy or 0.0)} "
            f"in {_time(point.settling_time_s)}; the lowest noise that allows is {format_quantity(point.total_rms_V, 'V', 4)} rms"
        )
    return text + "."

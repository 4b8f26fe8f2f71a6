"""The design studies as plain dicts of SI numbers, for JSON (and a sweep as CSV).

JSON shapes::

    "response": {"bandwidth_Hz", "rise_time_s", "overshoot", "settling_time_s",
                 "settle_accuracy", "dc_gain", "method"}
    "sensitivities": [{"element", "value", "unit", "rms_pct_per_pct",
                       "bandwidth_pct_per_pct", "settling_pct_per_pct"}, ...]
    sweep document: {"vary": [{"name", "values"}], "points": [{"values",
        "total_rms_V", "dominant", "bandwidth_Hz", "settling_time_s"}],
        "settle_accuracy", "target": {"name", "value", "kind", "total_rms_V",
        "settling_time_s", "bandwidth_Hz"} | null}

Quantities that do not exist (no input source, no accuracy asked for) are null.
"""

from __future__ import annotations

import json
import math
from typing import Any

__all__ = ["response_to_dict", "sensitivities_to_list", "sweep_to_dict", "sweep_to_json", "sweep_to_csv"]


def _number(value: float | None) -> float | None:
    return None if value is None or not math.isfinite(value) else float(value)


def response_to_dict(speed) -> dict[str, Any]:
    return {
        "bandwidth_Hz": _number(speed.bandwidth_Hz),
        "rise_time_s": _number(speed.rise_time_s),
        "overshoot": float(speed.overshoot),
        "settling_time_s": _number(speed.settling_time_s),
        "settle_accuracy": _number(speed.settle_accuracy),
        "dc_gain": float(speed.dc_gain),
        "method": speed.method,
    }


def sensitivities_to_list(sensitivities) -> list[dict[str, Any]]:
    return [
        {
            "element": s.element,
            "value": float(s.value),
            "unit": s.unit,
            "rms_pct_per_pct": float(s.rms_pct_per_pct),
            "bandwidth_pct_per_pct": _number(s.bandwidth_pct_per_pct),
            "settling_pct_per_pct": _number(s.settling_pct_per_pct),
        }
        for s in sensitivities
    ]


def _point(p) -> dict[str, Any]:
    return {
        "values": [float(v) for v in p.values],
        "total_rms_V": float(p.total_rms_V),
        "dominant": p.dominant,
        "bandwidth_Hz": _number(p.bandwidth_Hz),
        "settling_time_s": _number(p.settling_time_s),
    }


def sweep_to_dict(result, target=None) -> dict[str, Any]:
    answer = None
    if target is not None:
        answer = {"name": target.name, "value": float(target.value), "kind": target.target, **_point(target.point)}
        del answer["values"]
    return {
        "vary": [{"name": v.name, "values": [float(x) for x in v.values]} for v in result.vary],
        "points": [_point(p) for p in result.points],
        "settle_accuracy": _number(result.settle_accuracy),
        "target": answer,
    }


def sweep_to_json(result, target=None) -> str:
    return json.dumps(sweep_to_dict(result, target), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def sweep_to_csv(result) -> str:
    """One row per point: the swept values, then the figures (SI units in the headers)."""
    names = [f"{v.name}" for v in result.vary]
    header = names + ["total_rms_V", "dominant", "bandwidth_Hz", "settling_time_s"]
    lines = [",".join(header)]
    for p in result.points:
        cells = [repr(float(v)) for v in p.values] + [repr(float(p.total_rms_V)), p.dominant]
        cells += [
            "" if p.bandwidth_Hz is None else repr(float(p.bandwidth_Hz)),
            "" if p.settling_time_s is None else repr(float(p.settling_time_s)),
        ]
        lines.append(",".join(cells))
    return "\n".join(lines) + "\n"

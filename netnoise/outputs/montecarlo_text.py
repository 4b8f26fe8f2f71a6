"""A Monte Carlo result as text: the report section, JSON, CSV and a notebook table.

Numbers come from :class:`netnoise.studies.montecarlo.MonteCarloResult`
(SI units); engineering units (µV rms) appear only here.  The JSON document
has one key, ``montecarlo``; per-trial arrays are in SI units (V, V², K).
"""

from __future__ import annotations

import html
import io
import json
import math

import numpy as np

from netnoise.engformat import format_quantity
from netnoise.errors import CircuitError

__all__ = [
    "format_montecarlo_report",
    "montecarlo_to_dict",
    "montecarlo_to_json",
    "montecarlo_to_csv",
    "montecarlo_html",
]

_ENCODER = json.JSONEncoder(ensure_ascii=False, allow_nan=False, separators=(", ", ": "))


def _volts(value: float) -> str:
    return format_quantity(value, "V")


def _pct(fraction: float) -> str:
    return f"{100 * fraction:.1f} %"


def format_montecarlo_report(result, *, top: int | None = 10) -> str:
    """The study as a text section, in µV-style engineering units."""
    if not np.all(np.isfinite(result.total_rms_V)):
        raise CircuitError("a trial's total is not finite; nothing is reported")
    lines = []
    title = result.nominal.title or "circuit"
    lines.append(f"Spread of the noise budget: {title}")
    lines.append("=" * len(lines[0]))
    spread = "uniform within ±tolerance" if result.distribution == "uniform" else "gaussian, ±tolerance = ±3σ"
    lines.append(f"{result.trials} trials ({spread}), seed {result.seed}, run in {result.ran_on}")
    lines.append(f"method: {result.method}")
    band_high = "∞" if math.isinf(result.nominal.band_high_Hz) else format_quantity(result.nominal.band_high_Hz, "Hz")
    lines.append(
        f"output v({result.nominal.output_node}), band {format_quantity(result.nominal.band_low_Hz, 'Hz')} "
        f"to {band_high}"
    )
    if result.temperature_range_K is not None:
        low, high = (t - 273.15 for t in result.temperature_range_K)
        lines.append(f"temperature drawn uniformly from {low:g} °C to {high:g} °C")
    else:
        lines.append(f"temperature fixed at {result.nominal.temperature_K - 273.15:g} °C")
    if result.targets:
        lines.append("")
        lines.append("Varied values")
        for tol in result.tolerances:
            lines.append(f"  {tol.pattern:<14} ±{100 * tol.fraction:g} %")
        lines.append(f"  ({len(result.targets)} values: {', '.join(result.targets)})")

    lines.append("")
    lines.append("Total output noise over the trials")
    lines.append(f"  at nominal values   {_volts(result.nominal.total_rms)} rms")
    lines.append(f"  mean                {_volts(result.mean)} rms")
    lines.append(f"  standard deviation  {_volts(result.std)}")
    for p, v in result.percentiles.items():
        lines.append(f"  {p:>4g} % of trials at or below  {_volts(v)} rms")
    if result.target_rms_V is not None:
        passed = int(np.count_nonzero(result.total_rms_V <= result.target_rms_V))
        lines.append(
            f"  target {_volts(result.target_rms_V)} rms met by {passed} of {result.trials} trials: "
            f"yield {_pct(result.yield_fraction)}"
        )
    j = result.worst_trial
    lines.append(f"  highest: trial {j}, {_volts(float(result.total_rms_V[j]))} rms, with")
    for name, value in result.worst_values.items():
        if name == "temperature_K":
            lines.append(f"      temperature = {value - 273.15:.4g} °C")
        else:
            p = result.targets.index(name)
            change = value / result.nominal_values[p] - 1.0
            lines.append(f"      {name} = {value:.5g} ({100 * change:+.2f} % from nominal)")

    lines.append("")
    lines.append("Noise sources over the trials (share of the total power)")
    counts = result.dominant_counts
    share = result.share_percentiles
    order = np.lexsort((-share[1], -counts))
    shown = order if top is None else order[:top]
    width = max([len("source")] + [len(result.source_names[k]) for k in shown])
    lines.append(f"  {'source':<{width}}  largest in   share 1 %   50 %    99 %")
    for k in shown:
        lines.append(
            f"  {result.source_names[k]:<{width}}  {_pct(counts[k] / result.trials):>10}  "
            f"{_pct(share[0, k]):>8} {_pct(share[1, k]):>7} {_pct(share[2, k]):>7}"
        )
    if len(shown) < len(order):
        lines.append(f"  ... {len(order) - len(shown)} more sources")

    lines.append("")
    lines.append("Sensitivity of the total rms (relative change per relative change, fitted over the trials)")
    slopes = result.sensitivities
    if slopes is None:
        lines.append("  not estimated: it needs more trials than varied values + 1")
    else:
        names = result.sensitivity_names
        for i in np.argsort(-np.abs(slopes)):
            lines.append(f"  {names[i]:<14} {slopes[i]:+.3f}")
    lines.append("")
    lines.append(
        "These are design estimates from the stated tolerances; the statistics hold only as far "
        "as the drawn distributions describe the parts bought."
    )
    return "\n".join(lines) + "\n"


def montecarlo_to_dict(result) -> dict:
    """The study as plain JSON-ready data under the key ``montecarlo``."""
    percentiles = result.percentiles
    slopes = result.sensitivities
    data = {
        "trials": result.trials,
        "seed": result.seed,
        "distribution": result.distribution,
        "tolerances": [{"pattern": t.pattern, "fraction": t.fraction} for t in result.tolerances],
        "varied": [
            {"name": n, "kind": k, "nominal": float(v)}
            for n, k, v in zip(result.targets, result.target_kinds, result.nominal_values)
        ],
        "temperature_range_K": list(result.temperature_range_K) if result.temperature_range_K else None,
        "method": result.method,
        "nominal_total_rms_V": result.nominal.total_rms,
        "total_rms_V": result.total_rms_V.tolist(),
        "mean": result.mean,
        "std": result.std,
        "percentiles": {f"{p:g}": v for p, v in percentiles.items()},
        "target_rms_V": result.target_rms_V,
        "yield": result.yield_fraction,
        "worst_trial": result.worst_trial,
        "worst_values": result.worst_values,
        "values": result.values.tolist(),
        "temperature_K": result.temperature_K.tolist(),
        "sources": [
            {
                "name": name,
                "element": element,
                "mechanism": mechanism,
                "dominant_trials": int(count),
                "share_percentiles": {f"{p:g}": float(s) for p, s in zip((1, 50, 99), result.share_percentiles[:, k])},
            }
            for k, (name, element, mechanism, count) in enumerate(
                zip(result.source_names, result.source_elements, result.source_mechanisms, result.dominant_counts)
            )
        ],
        "sensitivities": None if slopes is None else dict(zip(result.sensitivity_names, slopes.tolist())),
    }
    return {"montecarlo": data}


def montecarlo_to_json(result) -> str:
    try:
        return _ENCODER.encode(montecarlo_to_dict(result)) + "\n"
    except ValueError:
        raise CircuitError("the Monte Carlo result holds a non-finite number; no JSON written") from None


def montecarlo_to_csv(result) -> str:
    """One row per trial: its total rms, temperature and drawn values (SI units)."""
    out = io.StringIO()
    header = ["trial", "total_rms_V", "temperature_K"] + list(result.targets)
    out.write(",".join(header) + "\n")
    totals = result.total_rms_V
    for j in range(result.trials):
        row = [str(j), repr(float(totals[j])), repr(float(result.temperature_K[j]))]
        row += [repr(float(v)) for v in result.values[j]]
        out.write(",".join(row) + "\n")
    return out.getvalue()


def montecarlo_html(result) -> str:
    """A short table for notebooks."""
    rows = [
        ("trials", str(result.trials)),
        ("seed", str(result.seed)),
        ("mean", f"{_volts(result.mean)} rms"),
        ("std", _volts(result.std)),
    ]
    rows += [(f"{p:g} %", f"{_volts(v)} rms") for p, v in result.percentiles.items()]
    if result.target_rms_V is not None:
        rows.append(("yield", _pct(result.yield_fraction)))
    body = "".join(f"<tr><th>{html.escape(a)}</th><td>{html.escape(b)}</td></tr>" for a, b in rows)
    return f"<table><caption>Monte Carlo noise spread</caption>{body}</table>"

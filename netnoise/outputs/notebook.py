"""A noise result in a notebook: a short ``repr``, an HTML budget table and
pandas tables (the edge of the package: numbers become text here).

:class:`~netnoise.results.result.NoiseResult` calls these lazily from its
``__repr__``, ``_repr_html_`` and ``to_dataframe``; pandas is imported only
when a table is asked for, and is optional (``pip install 'netnoise[tables]'``).
"""

from __future__ import annotations

import html
from typing import TYPE_CHECKING

import numpy as np

from netnoise.engformat import format_quantity
from netnoise.errors import UsageError
from netnoise.outputs.labels import row_value_text

if TYPE_CHECKING:  # pragma: no cover
    from netnoise.results.result import NoiseResult

__all__ = ["short_repr", "budget_html", "budget_table_html", "to_dataframe", "TABLES_INSTALL", "HTML_ROWS"]

#: What to install for :meth:`NoiseResult.to_dataframe`.
TABLES_INSTALL = "pip install 'netnoise[tables]'"

#: Rows of the notebook's budget table; the rest are counted in one line.
HTML_ROWS = 20


def _band_text(result: NoiseResult) -> str:
    high = "∞" if result.band_is_unbounded else format_quantity(result.band_high_Hz, "Hz", 4)
    return f"{format_quantity(result.band_low_Hz, 'Hz', 4)}..{high}"


def _output_text(result: NoiseResult) -> str:
    if result.reference_node in ("0", ""):
        return f"v({result.output_node})"
    return f"v({result.output_node}, {result.reference_node})"


def short_repr(result: NoiseResult) -> str:
    """One line: title, output, band, total and the dominant source."""
    ranked = result.contributions
    if ranked and result.total_variance > 0.0:
        lead = ranked[0]
        dominant = f"dominant {lead.label} ({lead.mechanism}, {100.0 * lead.share:.1f} %)"
    else:
        dominant = "no noise"
    total = format_quantity(result.total_rms, "V") if np.isfinite(result.total_rms) else "not finite"
    return (
        f"<NoiseResult {result.title.strip()!r}: {_output_text(result)}, {_band_text(result)}, "
        f"{total} rms, {len(result.source_names)} source{'' if len(result.source_names) == 1 else 's'}, {dominant}>"
    )


def _cell(text: str, numeric: bool = False) -> str:
    style = ' style="text-align:right"' if numeric else ""
    return f"<td{style}>{html.escape(text)}</td>"


def budget_table_html(result: NoiseResult, *, group_by: str = "source", rows: int | None = HTML_ROWS) -> str:
    """The ranked budget as an HTML ``<table>`` (every name escaped)."""
    contributions = result.grouped(group_by)
    first = {"source": "source", "element": "element", "mechanism": "mechanism"}[group_by]
    head = ["#", first, "mechanism", "value", "rms at output", "share", "cumulative"]
    lines = [
        '<table class="netnoise-budget">',
        "<thead><tr>" + "".join(f"<th>{h}</th>" for h in head) + "</tr></thead>",
        "<tbody>",
    ]
    shown = contributions if rows is None else contributions[:rows]
    for rank, row in enumerate(shown, start=1):
        value = row_value_text(row) if group_by != "mechanism" else f"{row.count} source{'s' if row.count > 1 else ''}"
        lines.append(
            "<tr>"
            + _cell(str(rank), True)
            + _cell(row.label)
            + _cell(row.mechanism)
            + _cell(value)
            + _cell(f"{format_quantity(row.rms_V, 'V')}", True)
            + _cell(f"{100.0 * row.share:.1f} %", True)
            + _cell(f"{100.0 * row.cumulative_share:.1f} %", True)
            + "</tr>"
        )
    if len(shown) < len(contributions):
        rest = contributions[len(shown) :]
        share = sum(r.share for r in rest)
        lines.append(
            f'<tr><td></td><td colspan="4">({len(rest)} more row{"s" if len(rest) > 1 else ""})</td><td style="text-align:right">{100.0 * share:.1f} %</td><td></td></tr>'
        )
    lines += ["</tbody>", "</table>"]
    return "\n".join(lines)


def budget_html(result: NoiseResult) -> str:
    """The notebook's rich display: a heading line and the budget table."""
    title = html.escape(result.title.strip() or "noise budget")
    total = format_quantity(result.total_rms, "V") if np.isfinite(result.total_rms) else "not finite"
    summary = html.escape(
        f"{_output_text(result)}, band {_band_text(result)}, {result.temperature_K - 273.15:.1f} °C: {total} rms"
    )
    return f'<div class="netnoise-result"><p><b>{title}</b><br>{summary}</p>\n{budget_table_html(result)}\n</div>'


def _pandas():
    try:
        import pandas
    except ImportError:
        raise UsageError(f"tables need pandas, which is not installed: {TABLES_INSTALL}") from None
    return pandas


def to_dataframe(result: NoiseResult, kind: str = "budget", *, group_by: str = "source"):
    """See :meth:`NoiseResult.to_dataframe`.

    ``kind="budget"``: columns ``rank, label, source, element, mechanism,
    value, unit, count, variance_V2, rms_V, share, cumulative_share`` (shares
    as fractions 0..1; ``value`` is in the row's ``unit``, NaN where none).
    ``kind="spectrum"``: index ``frequency_Hz``; columns ``total_V2_per_Hz``
    then one ``<name>_V2_per_Hz`` column per source (or group) in rank order,
    named by the CSV header rule (:func:`netnoise.outputs.export.column_name`)."""
    if kind not in ("budget", "spectrum"):
        raise UsageError(f"to_dataframe makes a 'budget' or a 'spectrum' table, not {kind!r}")
    if group_by not in ("source", "element", "mechanism"):
        raise UsageError(f"group by 'source', 'element' or 'mechanism', not {group_by!r}")
    pandas = _pandas()
    rows = result.grouped(group_by)
    if kind == "budget":
        return pandas.DataFrame(
            {
                "rank": np.arange(1, len(rows) + 1),
                "label": [r.label for r in rows],
                "source": [r.source for r in rows],
                "element": [r.element for r in rows],
                "mechanism": [r.mechanism for r in rows],
                "value": np.array([np.nan if r.value is None else r.value for r in rows], dtype=float),
                "unit": [r.unit for r in rows],
                "count": np.array([r.count for r in rows], dtype=int),
                "variance_V2": np.array([r.variance_V2 for r in rows], dtype=float),
                "rms_V": np.array([r.rms_V for r in rows], dtype=float),
                "share": np.array([r.share for r in rows], dtype=float),
                "cumulative_share": np.array([r.cumulative_share for r in rows], dtype=float),
            }
        )
    from netnoise.outputs.export import spectrum_columns

    names, columns = spectrum_columns(result, group_by=group_by, power=True)
    frame = pandas.DataFrame(dict(zip(names[1:], columns[1:])), index=pandas.Index(columns[0], name=names[0]))
    return frame

"""A self-contained HTML report for a design review (``--html PATH``).

One file that opens offline: the text report's sections as tables, the plots
as inline SVG (text kept as text, so it can be searched and copied), our own
small style sheet, no scripts and nothing fetched.  The sections and their
wording come from :func:`netnoise.outputs.report.format_report`, so the HTML
and the text report never disagree; the budget is built from the numbers.
The caution closes the page, as it closes the text report.
"""

from __future__ import annotations

import html
import os
import re

from netnoise.outputs.export import atomic_write
from netnoise.outputs.notebook import budget_table_html
from netnoise.outputs.report import CAUTION, format_report
from netnoise.results.result import NoiseResult

__all__ = ["to_html", "write_html"]

_STYLE = """
body { font-family: system-ui, sans-serif; color: #1c2433; max-width: 62rem; margin: 1.5rem auto; padding: 0 1rem; }
h1 { font-size: 1.35rem; border-bottom: 3px double #1c2433; padding-bottom: .3rem; }
h2 { font-size: 1.05rem; margin-top: 1.6rem; color: #2f7f7a; }
table { border-collapse: collapse; margin: .3rem 0; }
th, td { padding: .15rem .7rem; border-bottom: 1px solid #e2e2e2; text-align: left; vertical-align: top; }
th { background: #f3f1ec; }
.fields th { background: none; font-weight: normal; color: #555; }
.headline { font-weight: 600; }
.figure svg { max-width: 100%; height: auto; }
.caution { margin-top: 2rem; padding: .6rem .9rem; border-left: 4px solid #b5473a; background: #faf3f1; }
pre { background: #f7f7f7; padding: .5rem; overflow-x: auto; }
"""

_RULE = "─"
_SPOT = re.compile(r"^\s+at\s+(\S.*?)\s{2,}(\S.*)$")


def _sections(text: str) -> tuple[list[str], list[tuple[str, list[str], list[str]]]]:
    """(heading lines, [(section name, body lines, paragraphs after it)]) of a
    text report.  A paragraph is a block of lines after a section's body (a
    wrapped sentence, the headline under the budget), joined into one; the
    caution is left out (the page ends with it)."""
    lines = text.rstrip("\n").split("\n")
    heading: list[str] = []
    sections: list[tuple[str, list[str], list[str]]] = []
    i = 0
    while i < len(lines) and lines[i].strip():
        heading.append(lines[i])
        i += 1
    while i < len(lines):
        line = lines[i]
        rule = lines[i + 1].strip() if i + 1 < len(lines) else ""
        if line.strip() and rule and set(rule) == {_RULE} and len(rule) == len(line.strip()):
            body: list[str] = []
            i += 2
            while i < len(lines) and lines[i].strip():
                body.append(lines[i])
                i += 1
            sections.append((line.strip(), body, []))
            continue
        block = []
        while i < len(lines) and lines[i].strip():
            block.append(lines[i].strip())
            i += 1
        for paragraph in _sentences(block):
            if paragraph != CAUTION:
                if not sections:
                    sections.append(("", [], []))
                sections[-1][2].append(paragraph)
        i += 1
    return heading, sections


def _sentences(block: list[str]) -> list[str]:
    """Wrapped lines joined back into their sentences (a line ending in a full
    stop ends one)."""
    out, current = [], []
    for line in block:
        current.append(line)
        if line.endswith("."):
            out.append(" ".join(current))
            current = []
    if current:
        out.append(" ".join(current))
    return out


def _value_column(body: list[str]) -> int | None:
    """The column where a section's values start: the end of a run of two or
    more spaces shared by most of its lines (``_field`` pads every label of a
    section to one width)."""
    counts: dict[int, int] = {}
    for line in body:
        for match in re.finditer(r"\S( {2,})(?=\S)", line):
            counts[match.end()] = counts.get(match.end(), 0) + 1
    if not counts:
        return None
    return max(sorted(counts), key=lambda column: counts[column])


def _field_table(body: list[str]) -> str:
    rows = []
    column = _value_column(body)
    for line in body:
        label, value = (line[:column].strip(), line[column:].strip()) if column else ("", "")
        if column and label and value and line[column - 2 : column] == "  " and len(line) - len(line.lstrip()) == 2:
            rows.append(f"<tr><th>{html.escape(label)}</th><td>{html.escape(value)}</td></tr>")
        else:  # a wrapped sentence: a row of its own across the table
            rows.append(f'<tr><td colspan="2">{html.escape(line.strip())}</td></tr>')
    return '<table class="fields">\n' + "\n".join(rows) + "\n</table>"


def _spot_table(body: list[str]) -> str:
    rows = ["<tr><th>frequency</th><th>output density</th></tr>"]
    for line in body:
        match = _SPOT.match(line)
        if match:
            rows.append(
                f'<tr><td style="text-align:right">{html.escape(match.group(1))}</td><td>{html.escape(match.group(2))}</td></tr>'
            )
    return "<table>\n" + "\n".join(rows) + "\n</table>"


def _section_html(name: str, body: list[str], result: NoiseResult, top: int | None, group_by: str) -> str:
    if name.startswith("Budget"):
        content = budget_table_html(result, group_by=group_by, rows=top)
    elif name == "Spot output density":
        content = _spot_table(body)
    elif name == "Notes":
        content = (
            "<ul>\n"
            + "\n".join(f"<li>{html.escape(line.strip()[2:])}</li>" for line in body if line.strip().startswith("- "))
            + "\n</ul>"
        )
    elif name == "DC operating point":
        content = "<pre>" + html.escape("\n".join(body)) + "</pre>"
    else:
        content = _field_table(body)
    return f"<section>\n<h2>{html.escape(name)}</h2>\n{content}\n</section>"


def _svg(result: NoiseResult, *, input_referred: bool, salt: str, top: int) -> str:
    """The plot as an ``<svg>`` element to inline (no XML prolog), text as text."""
    import io

    import matplotlib
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    from netnoise.outputs.plotting import plot_density, plot_noise

    with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": salt}):
        # the input-referred view is the density panel alone: the integrated panel is the output's
        drawn = plot_density(result, top=top, input_referred=True) if input_referred else plot_noise(result, top=top)
        FigureCanvasAgg(drawn.figure)
        buffer = io.BytesIO()
        drawn.figure.savefig(buffer, format="svg", metadata={"Date": None})
    data = buffer.getvalue().decode("utf-8")
    return data[data.index("<svg") :]


def to_html(
    result: NoiseResult, *, top: int | None = 15, group_by: str | None = None, plot_top: int = 5, **extras
) -> str:
    """The HTML report of ``result`` (a complete page).  ``top``, ``group_by``
    and ``extras`` (``snr``, ``signal_at``, ``adc``, ``operating_point``) are
    those of :func:`~netnoise.outputs.report.format_report`; a result with an
    input source gets a second, input-referred plot."""
    group_by = group_by or "source"
    text = format_report(result, top=top, group_by=group_by, **extras)
    heading, sections = _sections(text)
    title = heading[0] if heading else "Noise budget"
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en">',
        "<head>",
        '<meta charset="utf-8">',
        f"<title>{html.escape(title)}</title>",
        f"<style>{_STYLE}</style>",
        "</head>",
        "<body>",
        f"<h1>{html.escape(title)}</h1>",
    ]
    for name, body, paragraphs in sections:
        if name:
            parts.append(_section_html(name, body, result, top, group_by))
        kind = "headline" if name.startswith("Budget") else "remark"  # the budget's verdict stands out
        parts += [f'<p class="{kind}">{html.escape(paragraph)}</p>' for paragraph in paragraphs]
    parts.append('<section class="figure">\n<h2>Output noise</h2>')
    parts.append(_svg(result, input_referred=False, salt="netnoise-output", top=plot_top))
    parts.append("</section>")
    if (
        result.input_source is not None
        and result.input_referred_density is not None
        and (result.gain is not None and (result.gain > 0).any())
    ):
        parts.append('<section class="figure">\n<h2>Input-referred noise</h2>')
        parts.append(_svg(result, input_referred=True, salt="netnoise-input", top=plot_top))
        parts.append("</section>")
    parts.append(f'<p class="caution">{html.escape(CAUTION)}</p>')
    parts += ["</body>", "</html>"]
    return "\n".join(parts) + "\n"


def write_html(result: NoiseResult, path: str | os.PathLike, **options) -> None:
    """Write :func:`to_html` to ``path`` (atomically)."""
    text = to_html(result, **options)
    atomic_write(path, lambda handle: handle.write(text))

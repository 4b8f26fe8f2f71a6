"""Behavioural sources, recognised and refused with the linear parts to write
instead.

A behavioural source sets its output by an expression of the circuit's
voltages and currents (``B1 x 0 V={v(a)*v(b)}``), a table, a polynomial or a
Laplace transfer function (``E1 out 0 LAPLACE {v(in)} = {1/(1+s*1m)}``).
A linear noise analysis cannot take one, but what it stands for usually has a
linear equivalent: a constant gain is an E or G line, a filter is R and C.
Such lines often do not fit the grammar at all (``V = v(a)*2``), so a line
that fails to parse is checked here first and refused as what it is.
"""

from __future__ import annotations

import re

from netnoise.errors import NetlistError, SourceLocation
from netnoise.text.source import SourceText, fail

__all__ = ["BEHAVIOURAL_FORMS", "behavioural_refusal", "behavioural_line"]

# the keyword that makes an E/G/F/H line behavioural -> what it describes
BEHAVIOURAL_FORMS = {
    "value": "an expression",
    "table": "a table",
    "poly": "a polynomial",
    "laplace": "a Laplace transfer function",
    "freq": "a frequency table",
    "vol": "an expression",
    "cur": "an expression",
}

_GAIN_HINT = (
    "write a constant gain as a linear controlled source: 'E1 out 0 in 0 10' (voltage gain 10, V/V) "
    "or 'G1 out 0 in 0 1m' (1 mA/V); a sum of voltages as one E line per term into series nodes"
)
_FILTER_HINT = (
    "write the filter with R and C: a buffer 'E1 mid 0 in 0 1' then 'R1 mid out 1k' and 'C1 out 0 159n' "
    "give one pole at 1/(2*pi*R*C) = 1 kHz; an amplifier's roll-off is '.model NAME opamp gbw=...'"
)


def behavioural_refusal(name: str, form: str, loc: SourceLocation) -> NetlistError:
    """The refusal of element ``name`` written as a behavioural source
    (``form``: 'B' for a B line, else the keyword that made it one)."""
    if form.upper() == "B":
        return fail(
            f"{name} is a behavioural source (its output is an expression of the circuit's voltages and "
            "currents): behavioural sources are not supported by a linear noise analysis",
            loc,
            _GAIN_HINT + "; a filter as R and C",
        )
    what = BEHAVIOURAL_FORMS.get(form.lower(), "an expression")
    return fail(
        f"{name}: '{form}' makes a behavioural source (its output is {what}): behavioural sources are not "
        "supported by a linear noise analysis",
        loc,
        _FILTER_HINT if form.lower() in ("laplace", "freq") else _GAIN_HINT,
    )


_KEYWORD = re.compile(r"(?<![\w.])(" + "|".join(BEHAVIOURAL_FORMS) + r")(?=\s*[={(]|\s)", re.IGNORECASE)


def behavioural_line(lines: list[str], first: int, source: SourceText) -> NetlistError | None:
    """The refusal for the logical line starting at physical line ``first``
    (1-based, of the prepared text ``lines``) if it is a behavioural source,
    else None."""
    text = lines[first - 1]
    stripped = text.lstrip()
    if not stripped or not stripped[0].isalpha():
        return None
    name = stripped.split()[0].split("=")[0]
    column = len(text) - len(stripped) + 1
    letter = name[0].upper()
    if letter == "B":
        return behavioural_refusal(name, "B", source.location(first, column))
    if letter not in "EGFH":
        return None
    number = first
    while number <= len(lines):
        line = lines[number - 1]
        if number > first and not line.lstrip().startswith("+") and line.strip():
            break
        found = _KEYWORD.search(line, column + len(name) - 1 if number == first else 0)
        if found is not None:
            return behavioural_refusal(name, found.group(1), source.location(number, found.start() + 1))
        number += 1
    return None

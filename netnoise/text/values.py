"""Numbers as netlists write them: ``4.7k``, ``100n``, ``1e-12``, ``10kOhm``.

A value is a decimal number (``47``, ``4.7``, ``.5``, ``1e-12``), then an
optional scale suffix, then an optional unit name.  Letters are not case
sensitive.

======  ==========  ==================================================
suffix  scale       note
======  ==========  ==================================================
f       1e-15       so a bare ``1F`` is one *femto*, not one farad
p       1e-12
n       1e-9
u, µ    1e-6        the micro sign and the Greek mu are both accepted
m       1e-3        ``M`` too: ``1M`` is one *milli*, as SPICE has it
k       1e3
meg     1e6         write ``1meg`` for a megohm
g       1e9
t       1e12
mil     25.4e-6     a thousandth of an inch
======  ==========  ==================================================

Units recognised after the suffix (and ignored, since the element letter
already says what the value is): ``ohm``, ``ohms``, ``Ω``, ``f``, ``h``,
``v``, ``a``, ``hz``, ``s``.  So ``10kOhm``, ``4.7uF``, ``1mH`` and ``1kHz``
read as expected, while ``1F`` is 1 fF and ``1MHz`` is 1 mHz.  Any other
trailing letters are an error rather than silently dropped.
"""

from __future__ import annotations

import functools
import math
import re
import sys

from netnoise.engformat import format_quantity

__all__ = ["SUFFIXES", "UNITS", "parse_value", "split_value", "milli_slip_notice", "exact", "SMALLEST_NORMAL"]

SUFFIXES: dict[str, float] = {
    "meg": 1e6,
    "mil": 25.4e-6,
    "f": 1e-15,
    "p": 1e-12,
    "n": 1e-9,
    "u": 1e-6,
    "\u00b5": 1e-6,  # micro sign
    "\u03bc": 1e-6,  # Greek small letter mu
    "m": 1e-3,
    "k": 1e3,
    "g": 1e9,
    "t": 1e12,
}

UNITS = frozenset({"ohm", "ohms", "\u03c9", "f", "h", "v", "a", "hz", "s"})

_NUMBER = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")
_BAD_EXPONENT = re.compile(r"[eE][+-]?(?!\d)")
# longest suffixes first, so 'meg' and 'mil' win over 'm'
_SUFFIX_ORDER = sorted(SUFFIXES, key=len, reverse=True)


# the whole of a well-formed value in one match (the common case, and fast);
# anything this refuses goes through the step-by-step checks for its message
_WELL_FORMED = re.compile(
    r"\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)(meg|mil|[fpnum\u00b5\u03bckgt])?"
    r"(ohms|ohm|\u03c9|hz|[fhvas])?\s*\Z",
    re.IGNORECASE,
)


@functools.lru_cache(maxsize=4096)
def split_value(text: str) -> tuple[float, str, str]:
    """Split ``text`` into (number, suffix, unit), all checked.

    ``suffix`` and ``unit`` are returned lower case ('' when absent).
    Raises ValueError with a short reason when ``text`` is not a value.
    (Cached: a large netlist repeats its few values many times.)
    """
    match = _WELL_FORMED.match(text)
    if match is not None:
        number, suffix, unit = match.groups()
        suffix = (suffix or "").lower()
        value = float(number) * SUFFIXES.get(suffix, 1.0)
        if math.isfinite(value) and (abs(value) >= SMALLEST_NORMAL or (value == 0 and _written_zero(number))):
            return value, suffix, (unit or "").lower()
    return _split_checked(text)


SMALLEST_NORMAL = sys.float_info.min  # 2.2e-308: below it a double loses digits, then reads 0


def _written_zero(number: str) -> bool:
    """True when the digits before any exponent are all zeros ('0', '0.0e-5')."""
    mantissa = re.split("[eE]", number)[0]
    return not any(ch in "123456789" for ch in mantissa)


def exact(x: float) -> str:
    """``x`` for a message: as short as ``:g`` when that reads back as ``x``,
    else with every digit needed (1.0000001, not 1), so the value shown is the
    one written."""
    short = f"{x:g}"
    return short if float(short) == x else repr(float(x))


def _shown(text: str) -> str:
    return text if len(text) <= 40 else text[:37] + "..."


def _split_checked(text: str) -> tuple[float, str, str]:
    stripped = text.strip()
    said = _shown(stripped)
    if not stripped:
        raise ValueError("empty value")
    match = _NUMBER.match(stripped)
    if match is None:
        raise ValueError(f"'{said}' is not a number")
    number = float(match.group())
    rest = stripped[match.end() :]
    if _BAD_EXPONENT.match(rest):
        raise ValueError(f"'{said}' has an exponent without digits")
    lowered = rest.lower()
    suffix = next((s for s in _SUFFIX_ORDER if lowered.startswith(s)), "")
    unit = lowered[len(suffix) :]
    if unit and unit not in UNITS:
        extra = rest[len(suffix) :]
        if suffix and _starts_suffix(unit):
            raise ValueError(f"'{said}' has two scale suffixes")
        raise ValueError(f"'{said}' ends in '{_shown(extra)}', which is neither a scale suffix nor a unit")
    value = number * SUFFIXES.get(suffix, 1.0)
    if not math.isfinite(value):
        raise ValueError(f"'{said}' is too large to represent")
    if abs(value) < SMALLEST_NORMAL and not (value == 0 and _written_zero(match.group())):
        raise ValueError(
            f"'{said}' underflows: its size is below {SMALLEST_NORMAL:.3g}, the smallest a double holds "
            "in full precision (it would read as 0 or lose digits); write 0 for zero"
        )
    return value, suffix, unit


def _starts_suffix(text: str) -> bool:
    return any(text.startswith(candidate) for candidate in _SUFFIX_ORDER)


def parse_value(text: str) -> float:
    """The value of a netlist number such as ``4.7k`` or ``10kOhm``, in SI units.

    >>> parse_value("4.7k")
    4700.0
    >>> parse_value("1meg")
    1000000.0

    Raises ValueError (with a short reason) for anything else.
    """
    return split_value(text)[0]


def milli_slip_notice(name: str, text: str, value: float) -> str | None:
    """A notice when resistor ``name`` was probably meant in megohms.

    ``1M`` means one milliohm in a netlist; a resistor below 1 Ω written with
    an ``m``/``M`` suffix is almost always a slip for ``meg``.
    """
    try:
        _, suffix, _ = split_value(text)
    except ValueError:
        return None
    if suffix != "m" or abs(value) >= 1.0:
        return None
    stripped = text.strip()
    match = _NUMBER.match(stripped)
    written_as = stripped[: match.end()] if match else stripped
    return f"{name} = {format_quantity(value, 'Ω')}: 'M' means milli; write {written_as}meg for megohms"

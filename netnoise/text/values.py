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

RKM code (IEC 60062, the letter-and-digit code printed on parts lists and
schematics): a scale letter standing for the decimal point, ``4k7`` = 4.7k,
``2n2`` = 2.2n, ``4u7`` = 4.7u, ``1k5`` = 1.5k, ``1g5`` = 1.5g, ``1f5`` =
1.5f; ``R`` marks the decimal point of a plain number: ``1R5`` = 1.5,
``0R1`` = 0.1, ``R47`` = 0.47.  Digits must stand on both sides of the
letter (``R47`` aside), a unit may follow (``4k7Ohm``, ``2n2F``).  An ``m``
or ``M`` in this position is refused: the code reads ``1M5`` as 1.5 mega and
``2m2`` as 2.2 milli, a netlist reads ``m`` in any case as milli, so the
message shows both readings and what to write (``1.5meg`` or ``1.5m``).

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

__all__ = [
    "SUFFIXES",
    "UNITS",
    "RKM_LETTERS",
    "parse_value",
    "split_value",
    "milli_slip_notice",
    "exact",
    "SMALLEST_NORMAL",
]

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


# RKM code (IEC 60062): the letters that stand for the decimal point, and their scale; 'r' is 1
RKM_LETTERS: dict[str, float] = {"r": 1.0, **{s: SUFFIXES[s] for s in "fpnu\u00b5\u03bckgt"}}
_RKM = re.compile(
    r"([+-]?)(\d*)([rfpnu\u00b5\u03bckgtm])(\d+)(ohms|ohm|\u03c9|hz|[fhvas])?\Z",
    re.IGNORECASE,
)


def _rkm(text: str) -> tuple[float, str, str] | None:
    """``text`` read in the RKM code (``4k7``, ``1R5``, ``R47``), or None when it is not one.
    ValueError for ``1M5`` and ``2m2``, which that code and a netlist read differently."""
    match = _RKM.match(text)
    if match is None:
        return None
    sign, whole, letter, fraction, unit = match.groups()
    lowered = letter.lower()
    if not whole and lowered != "r":  # 'n2' is a word, not a value; only R47 stands without a leading digit
        return None
    number = float(f"{sign}{whole or '0'}.{fraction}")
    if lowered == "m":
        said = f"{sign}{whole}.{fraction}"
        raise ValueError(
            f"'{_shown(text)}' is ambiguous: in the letter-and-digit code of parts lists (IEC 60062) it "
            f"reads {said} mega (an upper-case M) or {said} milli (a lower-case m), and in a netlist m or M "
            f"in any case means milli; write {said}meg for {said}e6 or {said}m for {said}e-3"
        )
    value = number * RKM_LETTERS[lowered]
    return value, "" if lowered == "r" else lowered, (unit or "").lower()


def _split_checked(text: str) -> tuple[float, str, str]:
    stripped = text.strip()
    said = _shown(stripped)
    if not stripped:
        raise ValueError("empty value")
    coded = _rkm(stripped)
    if coded is not None:
        return coded
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

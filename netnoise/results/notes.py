"""Structured notes: what a result says about how it was found.

A note is a code (fixed; it appears in JSON), its data (numbers, names) and
a sentence in plain words that names no command-line option.  The command
line adds its own advice to the codes it knows (:data:`netnoise.cli.ADVICE`);
the Python API reads the code and data.

Codes: ``netlist`` (a remark about the netlist: ignored cards, suspicious
values), ``band-default``, ``band-from-ac`` (the band and grid of the ``.ac`` card), ``sweep-linear``, ``temperature-default``,
``flicker-band-start``, ``spectrum-range``, ``integration-accuracy``,
``signal-unbounded``, ``stability-unchecked``, ``outside-rails`` (an amplifier's
pin outside its supply rails at DC), ``other``.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

__all__ = ["Note", "as_note"]


@dataclass(frozen=True)
class Note:
    """``code`` (fixed), ``text`` (a sentence), ``data`` (its numbers, SI units)."""

    code: str
    text: str
    data: Mapping[str, Any] = field(default_factory=dict)

    def __str__(self) -> str:
        return self.text


def as_note(item: Note | str) -> Note:
    """A note as it is, or a plain sentence as a note of code ``other``."""
    return item if isinstance(item, Note) else Note("other", str(item))

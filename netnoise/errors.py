"""Exceptions raised to the user.

Every error a user can cause is a :class:`NetnoiseError`.  The command line
prints ``str(error)`` and exits with :attr:`NetnoiseError.exit_status`; it
never shows a traceback for one of these.

* :class:`NetlistError` -- something wrong in the text: carries the file,
  line and column, and prints the offending line with a caret under it.
* :class:`UsageError` -- a bad option or argument (band, temperature, ...).
* :class:`CircuitError` -- the netlist reads fine but the circuit cannot be
  analysed (singular matrix, missing node, unbounded noise); names the
  elements or nodes involved.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = [
    "SourceLocation",
    "NetnoiseError",
    "NetlistError",
    "UsageError",
    "CircuitError",
]


@dataclass(frozen=True)
class SourceLocation:
    """Where a piece of netlist text came from (1-based line and column)."""

    file: str
    line: int
    column: int
    text: str = ""  # the whole physical line, for the caret display

    def __str__(self) -> str:
        return f"{self.file}:{self.line}:{self.column}"

    def excerpt(self) -> str:
        """The source line with a caret under the column ('' if unknown)."""
        if not self.text:
            return ""
        line = self.text.rstrip("\r\n").expandtabs(1)
        if len(line) > 200:  # keep very long lines readable around the column
            start = max(0, self.column - 100)
            shown = line[start : start + 200]
            caret_at = self.column - 1 - start
            return f"    {shown}\n    {' ' * caret_at}^"
        return f"    {line}\n    {' ' * max(0, self.column - 1)}^"


class NetnoiseError(Exception):
    """Base class of every error netnoise reports to its user."""

    exit_status = 1


class NetlistError(NetnoiseError, ValueError):
    """A problem in the netlist text, located by file, line and column."""

    exit_status = 2

    def __init__(self, message: str, location: SourceLocation | None = None, hint: str = ""):
        self.message = message
        self.location = location
        self.hint = hint
        # for a line inside a subcircuit: the instance whose expansion failed, e.g.
        # "X2, an instance of subcircuit 'stage' (amp.cir:9)"; set by netnoise.elaborate
        self.instance = ""
        super().__init__(message)

    def __str__(self) -> str:
        head = f"{self.location}: {self.message}" if self.location else self.message
        parts = [head]
        if self.location is not None and self.location.excerpt():
            parts.append(self.location.excerpt())
        if self.instance:
            parts.append(f"  within {self.instance}")
        if self.hint:
            parts.append(f"  hint: {self.hint}")
        return "\n".join(parts)


class UsageError(NetnoiseError, ValueError):
    """A bad option value or combination of options."""

    exit_status = 2


class CircuitError(NetnoiseError, RuntimeError):
    """The circuit cannot be analysed as asked; the message says why."""

    exit_status = 1

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
    "NetlistProblems",
    "PROBLEMS_SHOWN",
    "raise_problems",
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


PROBLEMS_SHOWN = 20
"""How many problems of one reading are shown in full; the rest are counted."""


class NetlistProblems(NetlistError):
    """Every problem one reading of a netlist found, in the order found.

    ``message``, ``location`` and ``hint`` are the first problem's (so code
    that handles one :class:`NetlistError` still works); ``problems`` holds
    them all.  ``str()`` shows the first :data:`PROBLEMS_SHOWN` in full and
    counts the rest.
    """

    def __init__(self, problems: tuple[NetlistError, ...]):
        first = problems[0]
        super().__init__(first.message, first.location, first.hint)
        self.instance = first.instance
        self.problems = problems

    def __str__(self) -> str:
        blocks = [NetlistError.__str__(problem) for problem in self.problems[:PROBLEMS_SHOWN]]
        hidden = len(self.problems) - PROBLEMS_SHOWN
        if hidden > 0:
            blocks.append(f"and {hidden} more problem{'s' if hidden > 1 else ''}")
        blocks.append(f"{len(self.problems)} problems in all")
        return "\n".join(blocks)


def raise_problems(problems: list[NetlistError]) -> None:
    """Raise what ``problems`` holds: nothing when empty, the problem itself
    when alone, else a :class:`NetlistProblems` in the order of the files'
    lines (repeats left out)."""
    unique: dict[tuple[str, str], NetlistError] = {}
    for problem in problems:
        if isinstance(problem, NetlistProblems):
            for inner in problem.problems:
                unique.setdefault((str(inner.location), inner.message), inner)
        else:
            unique.setdefault((str(problem.location), problem.message), problem)
    if not unique:
        return
    if len(unique) == 1:
        raise next(iter(unique.values()))
    # in file order: the files as they first appear, each from its first line to its last
    files: dict[str, int] = {}
    for problem in unique.values():
        files.setdefault(problem.location.file if problem.location else "", len(files))

    def place(problem: NetlistError) -> tuple[int, int, int]:
        loc = problem.location
        return (files[loc.file], loc.line, loc.column) if loc else (files[""], 0, 0)

    raise NetlistProblems(tuple(sorted(unique.values(), key=place)))


class UsageError(NetnoiseError, ValueError):
    """A bad option value or combination of options."""

    exit_status = 2


class CircuitError(NetnoiseError, RuntimeError):
    """The circuit cannot be analysed as asked; the message says why."""

    exit_status = 1

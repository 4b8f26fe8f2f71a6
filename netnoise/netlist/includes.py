"""``.include`` cards replaced by the statements of the files they name.

Paths are relative to the including file; cycles, nesting deeper than
:data:`MAX_INCLUDE_DEPTH`, loops of symbolic links and (on request) files
outside a confining folder are refused with the ``.include`` line named.
"""

from __future__ import annotations

import os
from pathlib import Path

from netnoise.errors import NetlistError, SourceLocation
from netnoise.netlist.parser import parse_statements
from netnoise.netlist.statements import IncludeCard, ParsedFile, Statement
from netnoise.text.source import bounded, read_netlist_text


def _fail(message: str, location: SourceLocation | None, hint: str = "") -> NetlistError:
    # names can be very long; a message stays a line or two
    return NetlistError(bounded(message), location, bounded(hint))


def _where(location: SourceLocation | None) -> str:
    return f"{location.file}:{location.line}" if location is not None else "(unknown place)"


__all__ = ["MAX_INCLUDE_DEPTH", "expand_includes"]

MAX_INCLUDE_DEPTH = 16


def expand_includes(
    parsed: ParsedFile, directory: Path, chain: tuple[Path, ...], depth: int = 0, within: Path | None = None
) -> list[Statement]:
    """``parsed`` with its includes expanded; ``depth`` counts include levels;
    ``within`` (resolved): the folder every included file must be in."""
    out: list[Statement] = []
    for statement in parsed.statements:
        if not isinstance(statement, IncludeCard):
            out.append(statement)
            continue
        try:
            target = (directory / statement.path).resolve()
        except (RuntimeError, OSError):  # Path.resolve: "Symlink loop" (RuntimeError before 3.13)
            raise _fail(
                f"'.include {statement.path}' names a loop of symbolic links (each names the next)",
                statement.loc,
                "point the link at the file to include",
            ) from None
        if within is not None and not target.is_relative_to(within):
            raise _fail(
                f"'.include {statement.path}' is outside the folder includes are confined to",
                statement.loc,
                f"it is {target}, not within {within} (links followed); copy the file there, "
                "or drop the confinement (--confine-includes) if you trust this netlist",
            )
        if target in chain:
            names = " -> ".join(p.name for p in (*chain[chain.index(target) :], target))
            raise _fail(f"'.include {statement.path}' makes a cycle: {names}", statement.loc)
        if depth >= MAX_INCLUDE_DEPTH:
            raise _fail(
                f"includes are nested more than {MAX_INCLUDE_DEPTH} deep",
                statement.loc,
                "an included file includes another, and so on; is there a loop through copies?",
            )
        if not os.path.lexists(target):
            raise _fail(
                f"cannot find the included file '{statement.path}'",
                statement.loc,
                f"looked for {target}",
            )
        text = read_netlist_text(target, statement.loc)  # says what a folder, device or FIFO is
        included = parse_statements(text, str(target), has_title=False)
        out.extend(expand_includes(included, target.parent, (*chain, target), depth + 1, within))
    return out

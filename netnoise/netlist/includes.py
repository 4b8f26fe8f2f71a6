"""``.include`` and ``.lib`` cards replaced by the statements they name.

``.include FILE`` (or ``.inc``) reads a whole file; ``.lib FILE SECTION`` the
lines between ``.lib SECTION`` and ``.endl`` in that file.  A file's own
sections are read only when a ``.lib`` card names them (a library file
often names its own sections, ``.lib models.lib tt`` inside section
``corners``).  Paths are relative to the including file; cycles, nesting
deeper than :data:`MAX_INCLUDE_DEPTH`, loops of symbolic links and (on
request) files outside a confining folder are refused with the card's line
named.  Problems are collected (the reading goes on past each).
"""

from __future__ import annotations

import os
from pathlib import Path

from netnoise.errors import NetlistError, SourceLocation
from netnoise.netlist.parser import parse_statements
from netnoise.netlist.statements import (
    EndlCard,
    IncludeCard,
    LibCard,
    LibSection,
    ParsedFile,
    ReaderNotice,
    Statement,
)
from netnoise.text.source import bounded, read_netlist_text


def _fail(message: str, location: SourceLocation | None, hint: str = "") -> NetlistError:
    # names can be very long; a message stays a line or two
    return NetlistError(bounded(message), location, bounded(hint))


__all__ = ["MAX_INCLUDE_DEPTH", "expand_includes"]

MAX_INCLUDE_DEPTH = 16

# what a chain of includes holds: a file (.include) or a file's section (.lib)
_Key = tuple[Path, str]


class _Reader:
    """One expansion: the files read so far (a library read once however
    many sections are taken from it) and the problems found."""

    def __init__(self, within: Path | None, problems: list[NetlistError]) -> None:
        self.within = within
        self.problems = problems
        self.files: dict[Path, ParsedFile] = {}

    def parsed(self, target: Path, loc: SourceLocation) -> ParsedFile:
        if target not in self.files:
            text = read_netlist_text(target, loc)  # says what a folder, device or FIFO is
            parsed = parse_statements(text, str(target), has_title=False, collect=True)
            if parsed.problems:
                # an included file is read up to its first problem only: a file that is not a
                # netlist (a key, a password file) never shows more than its first bad line
                first = parsed.problems[0]
                stop = first.location.line if first.location is not None else 0
                kept = tuple(s for s in parsed.statements if _line(s) < stop)
                parsed = ParsedFile(parsed.title, kept, parsed.source, (first,))
                self.problems.append(first)
            self.files[target] = parsed
        return self.files[target]

    def target(self, card: IncludeCard | LibCard, directory: Path, chain: tuple[_Key, ...], depth: int) -> Path:
        written = f".include {card.path}" if isinstance(card, IncludeCard) else f".lib {card.path}"
        try:
            target = (directory / card.path).resolve()
        except (RuntimeError, OSError):  # Path.resolve: "Symlink loop" (RuntimeError before 3.13)
            raise _fail(
                f"'{written}' names a loop of symbolic links (each names the next)",
                card.loc,
                "point the link at the file to include",
            ) from None
        if self.within is not None and not target.is_relative_to(self.within):
            raise _fail(
                f"'{written}' is outside the folder includes are confined to",
                card.loc,
                f"it is {target}, not within {self.within} (links followed); copy the file there, "
                "or drop the confinement (--confine-includes) if you trust this netlist",
            )
        key = (target, card.section.text.lower() if isinstance(card, LibCard) else "")
        if key in chain:
            names = " -> ".join(_shown(k) for k in (*chain[chain.index(key) :], key))
            raise _fail(f"'{written}' makes a cycle: {names}", card.loc)
        if depth >= MAX_INCLUDE_DEPTH:
            raise _fail(
                f"includes are nested more than {MAX_INCLUDE_DEPTH} deep",
                card.loc,
                "an included file includes another, and so on; is there a loop through copies?",
            )
        if not os.path.lexists(target):
            raise _fail(f"cannot find the included file '{card.path}'", card.loc, f"looked for {target}")
        return target

    def expand(
        self, statements: tuple[Statement, ...] | list[Statement], directory: Path, chain: tuple[_Key, ...], depth: int
    ) -> list[Statement]:
        out: list[Statement] = []
        for statement in _outside_sections(_whole_files(statements, directory), self.problems):
            if not isinstance(statement, (IncludeCard, LibCard)):
                out.append(statement)
                continue
            try:
                target = self.target(statement, directory, chain, depth)
                parsed = self.parsed(target, statement.loc)
                if isinstance(statement, LibCard):
                    body: tuple[Statement, ...] | list[Statement] = _section(parsed, statement)
                    key = (target, statement.section.text.lower())
                else:
                    body, key = parsed.statements, (target, "")
            except NetlistError as problem:
                self.problems.append(problem)
                continue
            out.extend(self.expand(body, target.parent, (*chain, key), depth + 1))
        return out


def _line(statement: Statement) -> int:
    loc = getattr(statement, "loc", None)
    return loc.line if loc is not None else 0


def _shown(key: _Key) -> str:
    return f"{key[0].name}[{key[1]}]" if key[1] else key[0].name


def _outside_sections(statements, problems: list[NetlistError]) -> list[Statement]:
    """The statements outside ``.lib SECTION`` ... ``.endl`` blocks (those are
    read only when a ``.lib FILE SECTION`` card names them)."""
    if not any(isinstance(s, (LibSection, EndlCard)) for s in statements):
        return list(statements)
    out: list[Statement] = []
    open_section: LibSection | None = None
    for statement in statements:
        if isinstance(statement, LibSection):
            if open_section is not None:
                problems.append(_unclosed(open_section))
            open_section = statement
        elif isinstance(statement, EndlCard):
            if open_section is None:
                problems.append(_fail("'.endl' without a '.lib SECTION' to close", statement.loc))
            open_section = None
        elif open_section is None:
            out.append(statement)
    if open_section is not None:
        problems.append(_unclosed(open_section))
    return out


def _whole_files(statements, directory: Path):
    """``.lib FILE`` with no section, no ``.endl`` after it and a file of
    that name: read as ``.include FILE`` (as some programs read it), with a notice."""
    if not any(isinstance(s, LibSection) for s in statements):
        return statements
    out: list[Statement] = []
    for index, statement in enumerate(statements):
        if (
            isinstance(statement, LibSection)
            and not any(isinstance(s, EndlCard) for s in statements[index + 1 :])
            and (directory / statement.name.text).is_file()
        ):
            out.append(
                ReaderNotice(
                    f"'.lib {statement.name.text}' names no section: the whole file is read, as with '.include'",
                    statement.loc,
                )
            )
            out.append(IncludeCard(statement.name.text, statement.loc))
        else:
            out.append(statement)
    return out


def _unclosed(section: LibSection) -> NetlistError:
    return _fail(
        f"library section '.lib {section.name.text}' is never closed",
        section.loc,
        f"end it with '.endl {section.name.text}'; to read a library file write '.lib FILE SECTION' "
        "(or '.include FILE' for the whole file)",
    )


def _section(parsed: ParsedFile, card: LibCard) -> list[Statement]:
    """The statements of section ``card.section`` of ``parsed``."""
    wanted = card.section.text.lower()
    names: list[str] = []
    taking = False
    body: list[Statement] = []
    for statement in parsed.statements:
        if isinstance(statement, LibSection):
            names.append(statement.name.text)
            taking = statement.name.text.lower() == wanted
        elif isinstance(statement, EndlCard):
            if taking:
                return body
            taking = False
        elif taking:
            body.append(statement)
    if taking:
        return body  # not closed: _outside_sections reports it where the file is read whole
    hint = ("its sections: " + ", ".join(names)) if names else "it has no '.lib SECTION' ... '.endl' sections"
    raise _fail(f"the library '{card.path}' has no section '{card.section.text}'", card.section.loc, bounded(hint))


def expand_includes(
    parsed: ParsedFile,
    directory: Path,
    chain: tuple[Path, ...],
    depth: int = 0,
    within: Path | None = None,
    problems: list[NetlistError] | None = None,
) -> list[Statement]:
    """``parsed`` with its includes expanded; ``depth`` counts include levels;
    ``within`` (resolved): the folder every included file must be in;
    ``problems``: where the problems found are put (raised at once if None)."""
    collect = problems if problems is not None else []
    reader = _Reader(within, collect)
    out = reader.expand(parsed.statements, directory, tuple((path, "") for path in chain), depth)
    if problems is None and collect:
        from netnoise.errors import raise_problems

        raise_problems(collect)
    return out

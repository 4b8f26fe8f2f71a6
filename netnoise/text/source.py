"""A netlist file's text: reading it, blanking what the grammar never sees,
and building source locations.

Before lark sees the text we blank, without moving anything else:

* the title line (the first line of a top-level file; included files have none),
* comment lines (first non-blank character ``*``),
* inline comments: from ``;`` to the end of the line, and from a ``$`` that
  starts the line or follows a blank,
* the ``.end`` line and everything after it.

Lines starting with ``+`` continue the previous line; the grammar skips the
line break.
"""

from __future__ import annotations

import errno
import os
import re
import stat
from dataclasses import dataclass
from pathlib import Path

from lark import Token, Tree

from netnoise.errors import NetlistError, SourceLocation

__all__ = [
    "SourceText",
    "MAX_NETLIST_BYTES",
    "not_a_file",
    "read_netlist_text",
    "prepare",
    "bounded",
    "fail",
    "first_token",
    "last_token",
]


@dataclass(frozen=True)
class SourceText:
    """A file's name and physical lines, to build SourceLocations from."""

    file: str
    lines: tuple[str, ...]

    def location(self, line: int, column: int) -> SourceLocation:
        text = self.lines[line - 1] if 1 <= line <= len(self.lines) else ""
        return SourceLocation(self.file, line, max(1, column), text)

    def at(self, node: Tree | Token) -> SourceLocation:
        token = first_token(node)
        return self.location(token.line or 1, token.column or 1)

    def after(self, node: Tree | Token) -> SourceLocation:
        """Just past the end of ``node`` (for 'missing ...' messages)."""
        token = last_token(node)
        return self.location(token.end_line or 1, token.end_column or 1)


def first_token(node: Tree | Token) -> Token:
    """The first token under ``node`` (every tree of the grammar has one)."""
    while not isinstance(node, Token):
        node = node.children[0]
    return node


def last_token(node: Tree | Token) -> Token:
    while not isinstance(node, Token):
        node = node.children[-1]
    return node


MESSAGE_LIMIT = 300
_LONG_RUN = re.compile(r"\S{120,}")


def bounded(text: str) -> str:
    """``text`` for a message: a run of 120 or more non-blanks (a megabyte
    name, say) keeps its start and end only, and the whole stays short."""
    text = _LONG_RUN.sub(lambda m: m.group()[:60] + "..." + m.group()[-20:], text)
    return text if len(text) <= MESSAGE_LIMIT else text[: MESSAGE_LIMIT - 3] + "..."


def fail(message: str, location: SourceLocation | None, hint: str = "") -> NetlistError:
    # a name or a word can be a megabyte long; a message stays a line or two
    message = bounded(message)
    hint = bounded(hint)
    return NetlistError(message, location, hint)


# --------------------------------------------------------------------------
# reading files


def _too_big(size: str) -> str:
    return (
        f"is {size}, over the limit of {_size(MAX_NETLIST_BYTES)} for a netlist file "
        "(is it a netlist?); split a real netlist into .include files"
    )


_BINARY_WINDOW = 40  # bytes of a binary file's line shown before the offending byte (and half that after)


def _visible(text: str) -> str:
    """Control characters as the Unicode pictures of them (␀, ␛, ␡): a binary
    file's bytes never reach the terminal as they are."""
    return "".join(
        chr(0x2400 + ord(ch)) if ord(ch) < 0x20 and ch != "\t" else "\u2421" if ch == "\x7f" else ch for ch in text
    )


def _offset_location(raw: bytes, offset: int, file: str) -> SourceLocation:
    """Where byte ``offset`` is, with at most a short stretch of its line
    around it (the file may be a secret one that is not a netlist at all)."""
    line = raw.count(b"\n", 0, offset) + 1
    line_start = max(raw.rfind(b"\n", 0, offset) + 1, offset - _BINARY_WINDOW)
    line_end = raw.find(b"\n", offset)
    line_end = min(line_end if line_end >= 0 else len(raw), offset + _BINARY_WINDOW // 2)
    text = raw[line_start:line_end].decode("utf-8", "replace")
    column = len(raw[line_start:offset].decode("utf-8", "replace")) + 1
    return SourceLocation(file, line, column, _visible(text))


# A netlist of a million elements is about 30 MB; a file beyond this is not a
# netlist (a disk image, a log) and is refused before it is read.
MAX_NETLIST_BYTES = 256 * 2**20


def _size(nbytes: int) -> str:
    return f"{nbytes:,} bytes ({nbytes / 2**20:,.1f} MiB)" if nbytes >= 2**20 else f"{nbytes:,} bytes"


def not_a_file(mode: int) -> str | None:
    """What a path of this ``st_mode`` is when it is not a regular file, with
    what to do ('is a folder, ...'); None for a regular file."""
    if stat.S_ISREG(mode):
        return None
    if stat.S_ISDIR(mode):
        return "is a folder, not a netlist file; give the netlist file in it"
    if stat.S_ISFIFO(mode):
        return (
            "is a FIFO (named pipe), not a netlist file; netnoise reads regular files only "
            "(a pipe could block forever): save the netlist to a file"
        )
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "is a device, not a netlist file; give a netlist file"
    if stat.S_ISSOCK(mode):
        return "is a socket, not a netlist file; give a netlist file"
    return "is not a regular file; give a netlist file"


def _open_error(exc: OSError) -> str:
    if exc.errno == errno.ELOOP:
        return "is a loop of symbolic links (each names the next); point the link at the netlist file"
    return f"cannot be read: {exc.strerror or exc}"


def _read_bounded(handle, size_hint: int) -> bytes:
    """At most MAX_NETLIST_BYTES + 1 bytes: a file that says size 0 (in /proc)
    or grows while read is read in pieces, never past the limit."""
    pieces: list[bytes] = []
    total = 0
    want = max(size_hint + 1, 1 << 16)
    while total <= MAX_NETLIST_BYTES:
        piece = handle.read(min(want, MAX_NETLIST_BYTES + 1 - total))
        if not piece:
            break
        pieces.append(piece)
        total += len(piece)
        want = 1 << 20
    return b"".join(pieces)


def read_netlist_text(path: Path, included_from: SourceLocation | None = None) -> str:
    """The text of a netlist file, as UTF-8 (a leading byte-order mark is dropped).

    Missing or unreadable files, anything but a regular file (a folder, a
    device, a FIFO: never waited on), files over :data:`MAX_NETLIST_BYTES`
    (checked before they are read), NUL bytes and invalid UTF-8 are
    NetlistErrors (placed at the ``.include`` line when ``included_from`` is
    given).
    """
    shown = bounded(str(path))
    try:
        # O_NONBLOCK: opening a FIFO with no writer would wait forever; it is
        # refused below, by what fstat says the opened file is
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_CLOEXEC", 0))
    except FileNotFoundError:
        raise fail(f"netlist file '{shown}' does not exist", included_from) from None
    except IsADirectoryError:
        raise fail(f"'{shown}' is a folder, not a netlist file", included_from) from None
    except OSError as exc:
        raise fail(f"'{shown}' {_open_error(exc)}", included_from) from None
    try:
        info = os.fstat(fd)
        what = not_a_file(info.st_mode)
        if what is None and info.st_size > MAX_NETLIST_BYTES:
            what = _too_big(_size(info.st_size))
    except BaseException:
        os.close(fd)
        raise
    if what is not None:
        os.close(fd)
        raise fail(f"'{shown}' {what}", included_from)
    with os.fdopen(fd, "rb", buffering=0) as handle:
        try:
            raw = _read_bounded(handle, info.st_size)
        except OSError as exc:
            raise fail(f"cannot read '{shown}': {exc.strerror or exc}", included_from) from None
        if len(raw) > MAX_NETLIST_BYTES:
            raise fail(f"'{shown}' {_too_big(f'more than {_size(MAX_NETLIST_BYTES)}')}", included_from)
    nul = raw.find(b"\x00")
    if nul >= 0:
        where = _offset_location(raw, nul, shown)
        raise fail(
            f"byte {nul} (line {where.line}) is a NUL character: this is not a text netlist",
            where,
        )
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        where = _offset_location(raw, exc.start, shown)
        raise fail(
            f"byte {exc.start} (0x{raw[exc.start]:02X}, line {where.line}) is not valid UTF-8",
            where,
            "save the netlist as UTF-8 text",
        ) from None
    return text.removeprefix("\ufeff")


# --------------------------------------------------------------------------
# blanking comments, title and what follows .end

_COMMENT_LINE = re.compile(r"\s*\*")
_END_CARD = re.compile(r"\s*\.end(?!\S)", re.IGNORECASE)
_CONTINUATION = re.compile(r"\s*\+")


def _strip_inline_comment(line: str) -> str:
    if ";" not in line and "$" not in line:
        return line
    quote = ""
    for index, char in enumerate(line):
        if quote:
            if char == quote:
                quote = ""
        elif char in "\"'":
            quote = char
        elif char == ";":
            return line[:index]
        elif char == "$" and (index == 0 or line[index - 1] in " \t"):
            return line[:index]
    return line


_ANY_LINE_END = re.compile(r"\r\n|\r|\n")


def _lone_cr_line_ends(text: str) -> bool:
    """True when lone carriage returns outnumber line feeds: the file's lines
    end in CR (classic Mac OS), not a stray CR here and there."""
    lone = text.count("\r") - text.count("\r\n")
    return lone > 0 and lone > text.count("\n")


def prepare(text: str, file: str, has_title: bool) -> tuple[str, str, SourceText]:
    """(text for lark, title, source) -- every kept character stays in place."""
    if _lone_cr_line_ends(text):  # old Mac files: a lone carriage return ends each line
        physical = _ANY_LINE_END.split(text)
    else:
        physical = [line.removesuffix("\r") for line in text.split("\n")]
    source = SourceText(file, tuple(physical))
    title = ""
    kept: list[str] = []
    seen_statement = False
    for number, line in enumerate(physical, start=1):
        if number == 1 and has_title:
            title = line.strip()
            kept.append("")
            continue
        if _COMMENT_LINE.match(line):
            kept.append("")
            continue
        if _END_CARD.match(line):
            break
        line = _strip_inline_comment(line)
        if _CONTINUATION.match(line) and not seen_statement:
            raise fail(
                "a '+' line continues the line before it, but there is none",
                source.location(number, line.index("+") + 1),
            )
        if line.strip():
            seen_statement = True
        kept.append(line)
    prepared = "\n".join(kept) + "\n"
    bad = _HIDDEN.search(prepared)
    if bad is not None:
        raise _hidden_character(prepared, bad.start(), source)
    return prepared, title, source


# control characters (other than blanks) and the invisible text-direction
# controls: they have no place in a netlist outside its comments, and a name
# holding one would print as something else than it is
_HIDDEN = re.compile("[\x00-\x08\x0e-\x1b\x7f-\x84\x86-\x9f\u200b-\u200f\u202a-\u202e\u2066-\u2069\ufeff]")


def _hidden_character(prepared: str, index: int, source: SourceText) -> NetlistError:
    line = prepared.count("\n", 0, index) + 1
    column = index - prepared.rfind("\n", 0, index)
    code = f"U+{ord(prepared[index]):04X}"
    kind = "control character" if ord(prepared[index]) < 0xA0 else "invisible formatting character"
    return fail(
        f"the {kind} {code} is not allowed in a netlist line",
        source.location(line, column),
        "netlists are plain text; delete it (a binary file or a copy-paste accident?)",
    )

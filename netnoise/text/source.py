"""A netlist file's text: reading it, blanking what the grammar never sees,
and building source locations.

Before lark sees the text we blank, without moving anything else:

* the title line (the first line of a top-level file; included files have none),
* comment lines (first non-blank character ``*``),
* inline comments: from ``;`` to the end of the line, and from a ``$`` that
  starts the line or follows a blank,
* the ``.end`` line and everything after it,
* ``.title`` cards (their text is the title) and ``.control`` ... ``.endc``
  blocks (commands for an interactive simulator; reported as set aside).

Lines starting with ``+`` continue the previous line; the grammar skips the
line break.  Bytes that are not UTF-8 reach :func:`prepare` as lone
surrogates (``surrogateescape``): inside a comment they are tolerated with a
notice, elsewhere they are a problem that says which encoding to save in.
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
    "Prepared",
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
        lines = self.lines
        text = lines[line - 1] if 0 < line <= len(lines) else ""
        return SourceLocation(self.file, line, column if column > 1 else 1, text)

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
    for bom, codec in _WIDE_BOMS:  # UTF-32 and UTF-16 with a byte-order mark (they are full of NUL bytes)
        if raw.startswith(bom):
            try:
                return raw[len(bom) :].decode(codec)
            except UnicodeDecodeError as exc:
                raise fail(
                    f"'{shown}' starts with a {codec.upper()} byte-order mark, but byte {exc.start + len(bom)} "
                    f"is not valid {codec.upper()}",
                    included_from,
                    "save the netlist as UTF-8 text",
                ) from None
    nul = raw.find(b"\x00")
    if nul >= 0:
        where = _offset_location(raw, nul, shown)
        if _wide_without_mark(raw):
            raise fail(
                f"byte {nul} (line {where.line}) is a NUL character: the file looks like UTF-16 text "
                "without a byte-order mark",
                where,
                "save the netlist as UTF-8 text (or as UTF-16 with a byte-order mark)",
            )
        raise fail(
            f"byte {nul} (line {where.line}) is a NUL character: this is not a text netlist",
            where,
        )
    # bytes that are not UTF-8 become lone surrogates: prepare() tolerates them in comments only
    return raw.decode("utf-8", "surrogateescape").removeprefix("\ufeff")


def _wide_without_mark(raw: bytes) -> bool:
    """True when the first bytes alternate NUL and printable ASCII (UTF-16 of
    ASCII text, either byte order, with no byte-order mark)."""
    head = raw[:200] if len(raw) % 2 == 0 else raw[:199]
    if len(head) < 8:
        return False
    for zeros, chars in ((head[1::2], head[0::2]), (head[0::2], head[1::2])):
        if zeros.count(0) == len(zeros) and all(32 <= c < 127 or c in (9, 10, 13) for c in chars):
            return True
    return False


_WIDE_BOMS = (
    (b"\xff\xfe\x00\x00", "utf-32-le"),
    (b"\x00\x00\xfe\xff", "utf-32-be"),
    (b"\xff\xfe", "utf-16-le"),
    (b"\xfe\xff", "utf-16-be"),
)


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


@dataclass(frozen=True)
class Prepared:
    """A file's text made ready for lark, and what was taken out of it.

    ``text``: every kept character in its place; ``title``: the first line's
    text, or the last ``.title`` card's; ``set_aside``: (card, location, last
    line) of each ``.control`` block skipped; ``notices``: remarks for the
    user; ``problems``: what is wrong in the lines themselves (the reading
    goes on: each bad character is blanked)."""

    text: str
    title: str
    source: SourceText
    set_aside: tuple[tuple[str, SourceLocation, int], ...] = ()
    notices: tuple[str, ...] = ()
    problems: tuple[NetlistError, ...] = ()


_SPECIAL_CARD = re.compile(r"\s*\.(title|control)(?!\S)", re.IGNORECASE)
_CONTROL_END = re.compile(r"\s*\.endc(?!\S)", re.IGNORECASE)
_NOT_UTF8 = re.compile("[\udc80-\udcff]")


def _readable(line: str) -> str:
    """``line`` with each byte that was not UTF-8 shown as U+FFFD."""
    return _NOT_UTF8.sub("\ufffd", line)


def _not_utf8(line: str, number: int, column: int, source: SourceText) -> NetlistError:
    byte = ord(line[column - 1]) - 0xDC00
    return fail(
        f"the byte 0x{byte:02X} is not valid UTF-8",
        source.location(number, column),
        "save the netlist as UTF-8 text (the file looks like Latin-1 or Windows-1252: "
        "in the editor, save it again with the encoding UTF-8)",
    )


def prepare(text: str, file: str, has_title: bool) -> Prepared:
    """The text for lark, the title and what was set aside -- every kept
    character stays in place."""
    if _lone_cr_line_ends(text):  # old Mac files: a lone carriage return ends each line
        physical = _ANY_LINE_END.split(text)
    else:
        physical = [line.removesuffix("\r") for line in text.split("\n")]
    undecoded = _NOT_UTF8.search(text) is not None  # bytes that were not UTF-8 (rare: checked line by line then)
    source = SourceText(file, tuple(_readable(line) for line in physical) if undecoded else tuple(physical))
    title = ""
    kept: list[str] = []
    problems: list[NetlistError] = []
    set_aside: list[tuple[str, SourceLocation, int]] = []
    comment_bytes: list[int] = []  # lines whose comments hold bytes that are not UTF-8
    seen_statement = False
    control: SourceLocation | None = None  # the open .control card
    for number, line in enumerate(physical, start=1):
        if control is not None:  # inside a .control block: skipped whole
            kept.append("")
            if _CONTROL_END.match(line):
                set_aside.append((".control", control, number))
                control = None
            continue
        special = _SPECIAL_CARD.match(line)  # .title or .control
        if (number == 1 and has_title) or (special is not None and special.group(1).lower() == "title"):
            if undecoded and _NOT_UTF8.search(line):
                comment_bytes.append(number)
            words = _readable(line).strip()
            title = words[len(".title") :].strip() if special is not None else words
            kept.append("")
            continue
        if _COMMENT_LINE.match(line):
            if undecoded and _NOT_UTF8.search(line):
                comment_bytes.append(number)
            kept.append("")
            continue
        if special is not None:  # .control: the block is skipped whole
            control = source.location(number, line.index(".") + 1)
            kept.append("")
            continue
        if _END_CARD.match(line):
            break
        stripped = _strip_inline_comment(line)
        if undecoded:
            if len(stripped) < len(line) and _NOT_UTF8.search(line, len(stripped)):
                comment_bytes.append(number)
            bad = _NOT_UTF8.search(stripped)
            if bad is not None:  # reported once; the line is not read (its words would be wrong anyway)
                problems.append(_not_utf8(stripped, number, bad.start() + 1, source))
                stripped = ""
        line = stripped
        if _CONTINUATION.match(line) and not seen_statement:
            problems.append(
                fail(
                    "a '+' line continues the line before it, but there is none",
                    source.location(number, line.index("+") + 1),
                )
            )
            line = ""
        if line.strip():
            seen_statement = True
        kept.append(line)
    if control is not None:
        problems.append(
            fail(
                "this '.control' block is never closed",
                control,
                "end it with a '.endc' line (netnoise skips the whole block: its commands drive other programs)",
            )
        )
    prepared = "\n".join(kept) + "\n"
    if _HIDDEN.search(prepared) is not None:  # reported, and the line is not read (its words would be wrong)
        for number, line in enumerate(kept, start=1):
            bad = _HIDDEN.search(line)
            if bad is not None:
                problems.append(_hidden_character(line, number, bad.start() + 1, source))
                kept[number - 1] = ""
        prepared = "\n".join(kept) + "\n"
    notices: list[str] = []
    if comment_bytes:
        lines = ", ".join(str(n) for n in comment_bytes[:10]) + (", ..." if len(comment_bytes) > 10 else "")
        notices.append(
            f"{file}: comments on line{'s' if len(comment_bytes) > 1 else ''} {lines} hold bytes that are not "
            "UTF-8; they were skipped with the comments (save the file as UTF-8 to keep them readable)"
        )
    return Prepared(prepared, title, source, tuple(set_aside), tuple(notices), tuple(problems))


# control characters (other than blanks) and the invisible text-direction
# controls: they have no place in a netlist outside its comments, and a name
# holding one would print as something else than it is
_HIDDEN = re.compile("[\x00-\x08\x0e-\x1b\x7f-\x84\x86-\x9f\u200b-\u200f\u202a-\u202e\u2066-\u2069\ufeff]")


def _hidden_character(text: str, line: int, column: int, source: SourceText) -> NetlistError:
    char = text[column - 1]
    code = f"U+{ord(char):04X}"
    kind = "control character" if ord(char) < 0xA0 else "invisible formatting character"
    return fail(
        f"the {kind} {code} is not allowed in a netlist line",
        source.location(line, column),
        "netlists are plain text; delete it (a binary file or a copy-paste accident?)",
    )

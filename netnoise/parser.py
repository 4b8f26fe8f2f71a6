"""Netlist text -> lark tree -> a list of statements.

This module knows the *shape* of each line (which fields an ``R`` line has,
what follows ``.noise``); :mod:`netnoise.elaborate` gives the statements their
meaning (scopes, parameters, subcircuits).

Before lark sees the text we blank, without moving anything else:

* the title line (the first line of a top-level file; included files have none),
* comment lines (first non-blank character ``*``),
* inline comments: from ``;`` to the end of the line, and from a ``$`` that
  starts the line or follows a blank,
* the ``.end`` line and everything after it.

Lines starting with ``+`` continue the previous line; the grammar skips the
line break.  Keywords and element letters are not case sensitive.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Union

from lark import Token, Tree
from lark.exceptions import UnexpectedCharacters, UnexpectedEOF, UnexpectedInput, UnexpectedToken

from .errors import NetlistError, SourceLocation
from .grammar import netlist_parser
from .values import split_value

__all__ = [
    "SourceText",
    "Word",
    "Quoted",
    "Braced",
    "Keyed",
    "Call",
    "Value",
    "Assignment",
    "Sweep",
    "Passive",
    "Coupling",
    "IndependentSource",
    "VoltageControlled",
    "CurrentControlled",
    "Instance",
    "ParamCard",
    "ModelCard",
    "OPAMP_PARAMS",
    "SubcktCard",
    "EndsCard",
    "IncludeCard",
    "TempCard",
    "AcCard",
    "NoiseCard",
    "OptionsCard",
    "Statement",
    "ParsedFile",
    "parse_statements",
    "parse_expression",
    "read_netlist_text",
    "SUPPORTED_LETTERS",
    "SUPPORTED_CARDS",
    "bounded",
    "shown",
]


# --------------------------------------------------------------------------
# where things are


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
        return self.location(token.line, token.column)

    def after(self, node: Tree | Token) -> SourceLocation:
        """Just past the end of ``node`` (for 'missing ...' messages)."""
        token = last_token(node)
        return self.location(token.end_line, token.end_column)


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


def _fail(message: str, location: SourceLocation | None, hint: str = "") -> NetlistError:
    # a name or a word can be a megabyte long; a message stays a line or two
    message = bounded(message)
    hint = bounded(hint)
    return NetlistError(message, location, hint)


# --------------------------------------------------------------------------
# fields: the loose pieces of an element line or dot-card


class Word:
    """One blank-separated word (a node, a value, a keyword).

    Its locations are built only when asked for (a message, an origin):
    a large netlist has hundreds of thousands of words.
    """

    __slots__ = ("text", "_source", "_line", "_column")

    def __init__(self, text: str, source: SourceText, line: int, column: int) -> None:
        self.text = text
        self._source = source
        self._line = line
        self._column = column

    @property
    def loc(self) -> SourceLocation:
        return self._source.location(self._line, self._column)

    @property
    def end(self) -> SourceLocation:
        return self._source.location(self._line, self._column + len(self.text))

    def __eq__(self, other: object) -> bool:
        return isinstance(other, Word) and other.text == self.text

    def __hash__(self) -> int:
        return hash(self.text)

    def __repr__(self) -> str:
        return f"Word({self.text!r})"


@dataclass(frozen=True)
class Quoted:
    text: str  # without the quotes
    loc: SourceLocation = field(compare=False)
    end: SourceLocation = field(compare=False, repr=False)


@dataclass(frozen=True)
class Braced:
    tree: Tree
    source: SourceText = field(compare=False, repr=False)
    loc: SourceLocation = field(compare=False)
    end: SourceLocation = field(compare=False, repr=False)


@dataclass(frozen=True)
class Keyed:
    key: str
    value: Union[Word, Braced, Quoted]
    loc: SourceLocation = field(compare=False)
    end: SourceLocation = field(compare=False, repr=False)


@dataclass(frozen=True)
class Call:
    name: str
    args: tuple[Union[Word, Braced, "Keyed"], ...]
    loc: SourceLocation = field(compare=False)
    end: SourceLocation = field(compare=False, repr=False)


Field = Union[Word, Quoted, Braced, Keyed, Call]


def shown(text: str, limit: int = 40) -> str:
    """``text`` for a message: control characters by code point, long text cut."""
    if len(text) > limit:
        text = text[: limit - 3] + "..."
    if not text.isprintable():
        text = "".join(ch if ch.isprintable() else f"U+{ord(ch):04X}" for ch in text)
    return text


def _describe(item: Field) -> str:
    if isinstance(item, Word):
        return f"'{shown(item.text)}'"
    if isinstance(item, Quoted):
        return f'"{shown(item.text)}"'
    if isinstance(item, Braced):
        return "a {...} expression"
    if isinstance(item, Keyed):
        return f"'{shown(item.key)}=...'"
    return f"'{shown(item.name)}(...)'"


class Value:
    """A value field: a plain number (already converted) or an expression.

    ``text`` is the number as written, or ``'{...}'``; ``loc`` is where it
    is (built when asked for, from the word it came from).
    """

    __slots__ = ("text", "number", "tree", "source", "_loc", "_word")

    def __init__(
        self,
        text: str,
        loc: SourceLocation | None,
        number: float | None = None,
        tree: Tree | None = None,
        source: SourceText | None = None,
        word: Word | None = None,
    ) -> None:
        self.text = text
        self.number = number
        self.tree = tree
        self.source = source
        self._loc = loc
        self._word = word

    @property
    def loc(self) -> SourceLocation:
        if self._loc is None:
            self._loc = self._word.loc  # type: ignore[union-attr]
        return self._loc

    def __eq__(self, other: object) -> bool:
        return isinstance(other, Value) and (other.text, other.number) == (self.text, self.number)

    def __hash__(self) -> int:
        return hash((self.text, self.number))

    def __repr__(self) -> str:
        return f"Value({self.text!r}, number={self.number!r})"


_IDENTIFIER = re.compile(r"[A-Za-z_][A-Za-z0-9_]*\Z")


def _value(item: Field, what: str) -> Value:
    """``item`` as a value; ``what`` names it in messages ('the value of R1')."""
    if isinstance(item, Word):
        try:
            number = split_value(item.text)[0]
        except ValueError as exc:
            hint = ""
            if _IDENTIFIER.match(item.text):
                hint = f"to use a parameter, put it in braces: {{{item.text}}}"
            raise _fail(f"bad {what}: {exc}", item.loc, hint) from None
        return Value(item.text, None, number, word=item)
    if isinstance(item, Braced):
        return Value("{...}", item.loc, None, item.tree, item.source)
    hint = "write expressions in braces: {...}" if isinstance(item, Quoted) else ""
    raise _fail(f"expected {what} here, not {_describe(item)}", item.loc, hint)


@dataclass(frozen=True)
class Assignment:
    """``name = value`` from .param, a .subckt header or an X line."""

    name: str
    value: Value
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class Sweep:
    """``dec|oct|lin points start stop`` as written (evaluated later)."""

    kind: str  # lower case
    points: Value
    start: Value
    stop: Value
    loc: SourceLocation = field(compare=False)


# --------------------------------------------------------------------------
# statements


@dataclass(frozen=True)
class Passive:
    """R, C or L.  Resistors may carry ``noiseless``, ``temp=`` and ``ni=``."""

    letter: str
    name: str
    nodes: tuple[Word, Word]
    value: Value
    loc: SourceLocation = field(compare=False)
    noiseless: bool = False
    temperature: Value | None = None  # temp=, °C
    noise_index: Value | None = None  # ni=, dB


@dataclass(frozen=True)
class Coupling:
    """K: two inductor names and a coupling coefficient."""

    name: str
    inductors: tuple[Word, Word]
    value: Value
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class IndependentSource:
    """V or I.  Absent values are None (DC 0, no AC; AC alone means 1)."""

    letter: str
    name: str
    nodes: tuple[Word, Word]
    dc: Value | None
    ac_magnitude: Value | None
    ac_phase: Value | None
    has_ac: bool
    waveform: str | None  # name of an ignored transient spec, e.g. 'SIN'
    loc: SourceLocation = field(compare=False)
    noise: Value | None = None  # noise=, V/√Hz or A/√Hz
    corner: Value | None = None  # corner=, Hz
    slope: Value | None = None  # slope=, the exponent of 1/f
    shot: bool = False  # I only


@dataclass(frozen=True)
class VoltageControlled:
    """E or G."""

    letter: str
    name: str
    nodes: tuple[Word, Word]
    control_nodes: tuple[Word, Word]
    gain: Value
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class CurrentControlled:
    """F or H: controlled by the current through a named V source."""

    letter: str
    name: str
    nodes: tuple[Word, Word]
    control: Word
    gain: Value
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class Instance:
    """X: a subcircuit instance."""

    name: str
    nodes: tuple[Word, ...]
    subckt: Word
    overrides: tuple[Assignment, ...]
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class ModelCard:
    """``.model NAME opamp [(] param=value ... [)]`` (only amplifier models)."""

    name: Word
    kind: str  # lower case: 'opamp'
    params: tuple[Assignment, ...]
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class ParamCard:
    assignments: tuple[Assignment, ...]
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class SubcktCard:
    name: Word
    pins: tuple[Word, ...]
    defaults: tuple[Assignment, ...]
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class EndsCard:
    name: Word | None
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class IncludeCard:
    path: str
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class TempCard:
    value: Value
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class AcCard:
    sweep: Sweep
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class NoiseCard:
    output: Word
    reference: Word | None
    source: Word | None
    sweep: Sweep | None
    loc: SourceLocation = field(compare=False)


@dataclass(frozen=True)
class OptionsCard:
    loc: SourceLocation = field(compare=False)


Statement = Union[
    ModelCard,
    Passive,
    Coupling,
    IndependentSource,
    VoltageControlled,
    CurrentControlled,
    Instance,
    ParamCard,
    SubcktCard,
    EndsCard,
    IncludeCard,
    TempCard,
    AcCard,
    NoiseCard,
    OptionsCard,
]


@dataclass(frozen=True)
class ParsedFile:
    """One file's statements, in order."""

    title: str
    statements: tuple[Statement, ...]
    source: SourceText = field(repr=False)


# --------------------------------------------------------------------------
# reading files


def _offset_location(raw: bytes, offset: int, file: str) -> SourceLocation:
    line = raw.count(b"\n", 0, offset) + 1
    line_start = raw.rfind(b"\n", 0, offset) + 1
    line_end = raw.find(b"\n", offset)
    text = raw[line_start : line_end if line_end >= 0 else len(raw)].decode("utf-8", "replace")
    column = len(raw[line_start:offset].decode("utf-8", "replace")) + 1
    return SourceLocation(file, line, column, text.replace("\x00", "\u2400"))


def read_netlist_text(path: Path, included_from: SourceLocation | None = None) -> str:
    """The text of a netlist file, as UTF-8 (a leading byte-order mark is dropped).

    Missing or unreadable files, NUL bytes and invalid UTF-8 are NetlistErrors
    (placed at the ``.include`` line when ``included_from`` is given).
    """
    shown = str(path)
    try:
        raw = Path(path).read_bytes()
    except FileNotFoundError:
        raise _fail(f"netlist file '{shown}' does not exist", included_from) from None
    except IsADirectoryError:
        raise _fail(f"'{shown}' is a folder, not a netlist file", included_from) from None
    except OSError as exc:
        raise _fail(f"cannot read '{shown}': {exc.strerror or exc}", included_from) from None
    nul = raw.find(b"\x00")
    if nul >= 0:
        where = _offset_location(raw, nul, shown)
        raise _fail(
            f"byte {nul} (line {where.line}) is a NUL character: this is not a text netlist",
            where,
        )
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        where = _offset_location(raw, exc.start, shown)
        raise _fail(
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


def _prepare(text: str, file: str, has_title: bool) -> tuple[str, str, SourceText]:
    """(text for lark, title, source) -- every kept character stays in place."""
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
            raise _fail(
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
    return _fail(
        f"the {kind} {code} is not allowed in a netlist line",
        source.location(line, column),
        "netlists are plain text; delete it (a binary file or a copy-paste accident?)",
    )


# --------------------------------------------------------------------------
# lark's exceptions, in plain words

_TERMINAL_WORDS = {
    "WORDS": "a node name or a value",
    "WORD": "a node name or a value",
    "ELEMENT_NAME": "an element name",
    "PLAIN_LINE": "an element name",
    "DOT_WORD": "a dot-card",
    "DOT_PARAM": "a dot-card",
    "NUMBER": "a number",
    "NAME": "a parameter name",
    "STRING": "a quoted file name",
    "LBRACE": "'{'",
    "RBRACE": "'}' to close the expression",
    "LPAR": "'('",
    "RPAR": "')'",
    "EQUAL": "'='",
    "COMMA": "','",
    "PLUS": "an operator",
    "MINUS": "an operator",
    "STAR": "an operator",
    "SLASH": "an operator",
    "POWER": "an operator",
    "_NL": "the end of the line",
    "$END": "the end of the file",
}
# when the first is expected, the others are details not worth listing
_SUBSUMED = {
    "WORD": {"STRING", "LBRACE", "LPAR", "EQUAL"},
    "WORDS": {"STRING", "LBRACE", "LPAR", "EQUAL"},
    "NUMBER": {"LPAR", "MINUS", "PLUS", "LBRACE"},
    "ELEMENT_NAME": {"_NL", "$END"},
}


def _or_list(items: list[str]) -> str:
    if len(items) <= 1:
        return "".join(items)
    return ", ".join(items[:-1]) + " or " + items[-1]


def _expected_words(expected: set[str] | frozenset[str]) -> str:
    names = set(expected)
    for key, dropped in _SUBSUMED.items():
        if key in names:
            names -= dropped
    phrases: list[str] = []
    order = list(_TERMINAL_WORDS)
    for name in sorted(names, key=lambda n: order.index(n) if n in order else len(order)):
        phrase = _TERMINAL_WORDS.get(name, name.lower())
        if phrase not in phrases:
            phrases.append(phrase)
    return _or_list(phrases)


def _token_words(token: Token) -> str:
    if token.type in ("_NL", "$END"):
        return "the line ends"
    text = "".join(ch if ch.isprintable() else f"U+{ord(ch):04X}" for ch in str(token))
    if len(text) > 20:
        text = text[:17] + "..."
    return f"'{text}'"


def _unwrap(exc: UnexpectedInput, source: SourceText) -> NetlistError:
    """A NetlistError in plain words for one of lark's parse exceptions."""
    if isinstance(exc, UnexpectedToken):
        token = exc.token
        if token.type in ("WORDS", "PLAIN_LINE"):  # show its first word, where that word starts
            text = str(token)
            first = text.split()[0]
            token = Token("WORD", first, line=token.line, column=token.column + text.index(first))
        if token.type == "$END":
            last = len(source.lines)
            loc = source.location(last, len(source.lines[-1]) + 1 if source.lines else 1)
        else:
            loc = source.location(token.line, token.column)
        # exc.accepts asks the parser which tokens really fit; exc.expected
        # can hold extras from LALR's merged states
        expected = set(exc.accepts or exc.expected)
        if token.type in ("RPAR", "RBRACE") and expected & {"WORD", "WORDS", "_NL"}:
            opener = "(" if token.type == "RPAR" else "{"
            return _fail(f"'{token}' without a matching '{opener}'", loc)
        if "ELEMENT_NAME" in expected:
            return _fail(
                f"{_token_words(token)} cannot start a line",
                loc,
                "a line starts with an element name (R1, C2, X3, ...) or a dot-card (.param, ...)",
            )
        message = f"{_token_words(token)} is not allowed here; expected {_expected_words(expected)}"
        if token.type in ("_NL", "$END"):
            message = f"the line ends too early; expected {_expected_words(expected)}"
        return _fail(message, loc)
    if isinstance(exc, UnexpectedCharacters):
        loc = source.location(exc.line, exc.column)
        allowed = set(exc.allowed or ())
        if "ELEMENT_NAME" in allowed:
            return _fail(
                f"'{exc.char}' cannot start a line",
                loc,
                "a line starts with an element name (R1, C2, X3, ...) or a dot-card (.param, ...)",
            )
        expected = f"; expected {_expected_words(allowed)}" if allowed else ""
        char = exc.char if exc.char.isprintable() else f"U+{ord(exc.char):04X}"
        return _fail(f"unexpected character '{char}'{expected}", loc)
    if isinstance(exc, UnexpectedEOF):
        last = len(source.lines)
        return _fail("the file ends in the middle of a line", source.location(last, 1))
    return _fail(f"cannot read this line ({type(exc).__name__})", None)


def _parse_tree(prepared: str, start: str, source: SourceText) -> Tree:
    try:
        return netlist_parser().parse(prepared, start=start)
    except UnexpectedInput as exc:
        raise _unwrap(exc, source) from None


def parse_expression(text: str, filename: str = "<expression>"):
    """Parse one expression; returns (tree, locator)."""
    source = SourceText(filename, tuple(text.split("\n")))
    tree = _parse_tree(text, "expression", source)
    return tree, source.location


# --------------------------------------------------------------------------
# tree -> fields


class _Fields:
    """Turns the loose field trees of one line into Field objects."""

    def __init__(self, source: SourceText) -> None:
        self.source = source

    def word(self, token: Token) -> Word:
        return Word(str(token), self.source, token.line, token.column)

    def words(self, token: Token) -> list[Word]:
        """The words of a WORDS or PLAIN_LINE token (blank-separated, one line)."""
        text = str(token)
        line = token.line
        column = token.column
        out: list[Word] = []
        position = 0
        for piece in text.split():
            position = text.find(piece, position)
            out.append(Word(piece, self.source, line, column + position))
            position += len(piece)
        return out

    def braced(self, tree: Tree) -> Braced:
        inner = tree.children[1]  # LBRACE expression RBRACE
        return Braced(inner, self.source, self.source.at(tree), self.source.after(tree))

    def fields(self, children: list) -> list[Field]:
        """Every field of a line, in order (a WORDS token gives several)."""
        out: list[Field] = []
        for child in children:
            if isinstance(child, Token):
                if child.type == "WORDS":
                    out.extend(self.words(child))
                else:
                    out.append(self.word(child))
            else:
                out.append(self.field(child))
        return out

    def keyed(self, node: Tree) -> Keyed:
        key, raw = node.children
        if isinstance(raw, Tree):
            value: Union[Word, Braced, Quoted] = self.braced(raw)
        elif raw.type == "STRING":
            value = Quoted(str(raw)[1:-1], self.source.at(raw), self.source.after(raw))
        else:
            value = self.word(raw)
        return Keyed(str(key), value, self.source.at(key), self.source.after(node))

    def field(self, node: Tree) -> Field:
        kind = node.data
        if kind == "word":
            return self.word(node.children[0])
        if kind == "quoted":
            token = node.children[0]
            return Quoted(str(token)[1:-1], self.source.at(token), self.source.after(token))
        if kind == "braced":
            return self.braced(node)
        if kind == "keyed":
            return self.keyed(node)
        if kind == "call":
            name = node.children[0]
            args: list[Union[Word, Braced, Keyed]] = []
            if len(node.children) > 3:  # name LPAR call_args RPAR
                for arg in node.children[2].children:
                    if arg.data == "word":
                        args.append(self.word(arg.children[0]))
                    elif arg.data == "keyed":
                        args.append(self.keyed(arg))
                    else:
                        args.append(self.braced(arg))
            return Call(str(name), tuple(args), self.source.at(name), self.source.after(node))
        raise _fail(f"unexpected '{kind}'", self.source.at(node))  # grammar and code disagree


# --------------------------------------------------------------------------
# element lines

SUPPORTED_LETTERS = "RCLKVIEGFHX"

_FORMS = {
    "R": "Rname node1 node2 value [noiseless] [temp=CELSIUS] [ni=DB]",
    "C": "Cname node1 node2 value",
    "L": "Lname node1 node2 value",
    "K": "Kname Lfirst Lsecond coupling",
    "V": "Vname node+ node- [DC] [value] [AC magnitude [phase]] [noise=V/rtHz [corner=HZ] [slope=N]]",
    "I": "Iname node+ node- [DC] [value] [AC magnitude [phase]] [noise=A/rtHz [corner=HZ] [slope=N]] [shot]",
    "E": "Ename out+ out- in+ in- gain",
    "G": "Gname out+ out- in+ in- transconductance",
    "F": "Fname out+ out- Vcontrol gain",
    "H": "Hname out+ out- Vcontrol transresistance",
    "X": "Xname node ... subcircuit [param=value ...]  or  Xname in+ in- out opamp_model [param=value ...]",
}

_UNSUPPORTED = {
    "D": "diodes are not supported",
    "Q": "bipolar transistors are not supported",
    "M": "MOS transistors are not supported",
    "J": "junction FETs are not supported",
    "Z": "MESFETs are not supported",
    "B": "behavioural sources are not supported",
    "S": "switches are not supported",
    "W": "switches are not supported",
    "T": "transmission lines are not supported",
    "O": "transmission lines are not supported",
    "U": "transmission lines are not supported",
}

_WAVEFORMS = {"sin", "pulse", "exp", "pwl", "sffm", "am"}
_BEHAVIOURAL_KEYS = {"value", "table", "laplace", "freq", "vol", "cur"}


class _Line:
    """The fields of one element line, consumed left to right."""

    def __init__(self, name: str, letter: str, name_word: Word, fields: list[Field]) -> None:
        self.name = name
        self.letter = letter
        self.fields = fields
        self.position = 0
        self.last: Field = name_word  # the last field taken; its .end is where a missing one goes

    @property
    def last_end(self) -> SourceLocation:
        return self.last.end

    def form_hint(self) -> str:
        return f"the form is: {_FORMS[self.letter]}"

    def peek(self) -> Field | None:
        return self.fields[self.position] if self.position < len(self.fields) else None

    def take(self, what: str) -> Field:
        item = self.peek()
        if item is None:
            raise _fail(f"{self.name} is missing its {what}", self.last_end, self.form_hint())
        self._check_unsupported_form(item)
        self.position += 1
        self.last = item
        return item

    def _check_unsupported_form(self, item: Field) -> None:
        if isinstance(item, Call) and item.name.lower() == "poly":
            raise _fail(
                f"{self.name}: POLY forms are not supported",
                item.loc,
                "netnoise takes one linear gain per controlled source",
            )
        if isinstance(item, Keyed) and item.key.lower() in _BEHAVIOURAL_KEYS:
            raise _fail(f"{self.name}: behavioural sources are not supported", item.loc)

    def node(self, what: str) -> Word:
        item = self.take(what)
        if not isinstance(item, Word):
            raise _fail(f"expected {what} of {self.name} here, not {_describe(item)}", item.loc, self.form_hint())
        return item

    def value(self, what: str) -> Value:
        item = self.take(what)
        return _value(item, f"{what} of {self.name}")

    def done(self) -> None:
        item = self.peek()
        if item is not None:
            self._check_unsupported_form(item)
            raise _fail(f"unexpected extra field {_describe(item)} on {self.name}", item.loc, self.form_hint())


def _element(tree: Tree, fields: _Fields) -> Statement:
    """An element line with keyed, called, braced or quoted fields."""
    name_word = fields.word(tree.children[0])
    _check_letter(name_word)
    return _element_statement(name_word, fields.fields(tree.children[1:]))


def _plain_element(token: Token, fields: _Fields) -> Statement:
    """An element line of plain words only (one PLAIN_LINE token)."""
    name_word, *items = fields.words(token)
    name = name_word.text
    letter = name[0].upper()
    if letter in "RCL" and len(items) == 3:  # most lines of a large netlist: no options to take
        what = "value of " + name
        return Passive(letter, name, (items[0], items[1]), _value(items[2], what), name_word.loc)
    _check_letter(name_word)
    return _element_statement(name_word, items)


def _check_letter(name_word: Word) -> None:
    name = name_word.text
    if name[0].upper() not in SUPPORTED_LETTERS:
        reason = _UNSUPPORTED.get(name[0].upper(), f"element letter '{name[0]}' is not supported")
        raise _fail(
            f"{name}: {reason}",
            name_word.loc,
            "netnoise reads linear circuits: R, C, L, K, V, I, E, G, F, H and X lines",
        )


def _element_statement(name_word: Word, items: list[Field]) -> Statement:
    name = name_word.text
    letter = name[0].upper()
    line = _Line(name, letter, name_word, items)
    loc = name_word.loc
    if letter in "RCL":
        nodes = (line.node("first node"), line.node("second node"))
        value = line.value("value")
        if letter == "R" and line.peek() is not None:
            return _resistor_options(line, name, nodes, value, loc)
        line.done()
        return Passive(letter, name, nodes, value, loc)
    if letter == "K":
        inductors = (line.node("first inductor name"), line.node("second inductor name"))
        value = line.value("coupling coefficient")
        line.done()
        return Coupling(name, inductors, value, loc)
    if letter in "EG":
        nodes = (line.node("positive output node"), line.node("negative output node"))
        control = (line.node("positive control node"), line.node("negative control node"))
        gain = line.value("gain" if letter == "E" else "transconductance")
        line.done()
        return VoltageControlled(letter, name, nodes, control, gain, loc)
    if letter in "FH":
        nodes = (line.node("positive output node"), line.node("negative output node"))
        control = line.node("controlling voltage source")
        gain = line.value("gain" if letter == "F" else "transresistance")
        line.done()
        return CurrentControlled(letter, name, nodes, control, gain, loc)
    if letter in "VI":
        return _source(line, letter, name, loc)
    return _instance(line, name, loc)


def _is_value(item: Field | None) -> bool:
    if isinstance(item, Braced):
        return True
    if isinstance(item, Word):
        try:
            split_value(item.text)
        except ValueError:
            return False
        return True
    return False


RESISTOR_KEYS = ("noiseless", "temp", "ni")
SOURCE_NOISE_KEYS = ("noise", "corner", "slope")


def _keyed_value(line: _Line, item: Keyed, what: str) -> Value:
    line.take(what)
    return _value(item.value, f"{what} of {line.name}")


def _resistor_options(line: _Line, name: str, nodes: tuple[Word, Word], value: Value, loc: SourceLocation) -> Passive:
    """``noiseless``, ``temp=°C``, ``ni=dB`` after a resistor's value, in any order."""
    noiseless = False
    temperature: Value | None = None
    noise_index: Value | None = None
    hint = "after the value a resistor takes: noiseless, temp=CELSIUS, ni=DB (noise index)"
    while (item := line.peek()) is not None:
        if isinstance(item, Word) and item.text.lower() == "noiseless":
            if noiseless:
                raise _fail(f"{name} says 'noiseless' twice", item.loc)
            line.take("noiseless")
            noiseless = True
            continue
        key = item.key.lower() if isinstance(item, Keyed) else ""
        if key == "temp":
            if temperature is not None:
                raise _fail(f"{name} has two temp= values", item.loc)
            temperature = _keyed_value(line, item, "temperature")  # type: ignore[arg-type]
        elif key == "ni":
            if noise_index is not None:
                raise _fail(f"{name} has two ni= values", item.loc)
            noise_index = _keyed_value(line, item, "noise index")  # type: ignore[arg-type]
        else:
            line._check_unsupported_form(item)
            raise _fail(f"unexpected extra field {_describe(item)} on {name}", item.loc, hint)
    return Passive("R", name, nodes, value, loc, noiseless, temperature, noise_index)


def _is_value(item: Field | None) -> bool:
    if isinstance(item, Braced):
        return True
    if isinstance(item, Word):
        try:
            split_value(item.text)
        except ValueError:
            return False
        return True
    return False


def _source(line: _Line, letter: str, name: str, loc: SourceLocation) -> IndependentSource:
    nodes = (line.node("positive node"), line.node("negative node"))
    dc: Value | None = None
    ac_magnitude: Value | None = None
    ac_phase: Value | None = None
    has_ac = False
    waveform: str | None = None
    noise: dict[str, Value] = {}
    noise_at: dict[str, Keyed] = {}
    shot = False
    while (item := line.peek()) is not None:
        keyword = item.text.lower() if isinstance(item, Word) else ""
        key = item.key.lower() if isinstance(item, Keyed) else ""
        if keyword == "dc":
            if dc is not None:
                raise _fail(f"{name} has two DC values", item.loc, line.form_hint())
            line.take("DC keyword")
            dc = line.value("DC value")
        elif keyword == "ac":
            if has_ac:
                raise _fail(f"{name} has two AC specifications", item.loc, line.form_hint())
            line.take("AC keyword")
            has_ac = True
            if _is_value(line.peek()):
                ac_magnitude = line.value("AC magnitude")
                if _is_value(line.peek()):
                    ac_phase = line.value("AC phase")
        elif keyword == "shot":
            if letter != "I":
                raise _fail(
                    f"{name}: 'shot' applies to current sources only",
                    item.loc,
                    "mark the junction current (an I source) with shot; give a V source noise=DENSITY",
                )
            if shot:
                raise _fail(f"{name} says 'shot' twice", item.loc)
            line.take("shot")
            shot = True
        elif key in SOURCE_NOISE_KEYS:
            if key in noise:
                raise _fail(f"{name} has two {key}= values", item.loc)
            what = {"noise": "noise density", "corner": "noise corner frequency", "slope": "noise slope"}[key]
            noise[key] = _keyed_value(line, item, what)  # type: ignore[arg-type]
            noise_at[key] = item  # type: ignore[assignment]
        elif isinstance(item, Call) and item.name.lower() in _WAVEFORMS:
            if waveform is not None:
                raise _fail(f"{name} has two waveforms", item.loc, line.form_hint())
            line.take("waveform")
            waveform = item.name.upper()
        elif dc is None and _is_value(item):
            dc = line.value("DC value")
        else:
            line.done()
    if "noise" not in noise:
        for key in ("corner", "slope"):
            if key in noise:
                unit = "V/√Hz" if letter == "V" else "A/√Hz"
                raise _fail(
                    f"{name}: {key}= shapes a noise density, but there is no noise=",
                    noise_at[key].loc,
                    f"add noise=DENSITY ({unit}), e.g. noise=10n {key}=...",
                )
    return IndependentSource(
        letter, name, nodes, dc, ac_magnitude, ac_phase, has_ac, waveform, loc,
        noise.get("noise"), noise.get("corner"), noise.get("slope"), shot,
    )


def _assignment(item: Keyed, what: str) -> Assignment:
    key = item.key
    if key.lower().startswith("params:"):
        key = key[len("params:") :]
    if not _IDENTIFIER.match(key):
        raise _fail(
            f"'{key}' is not a parameter name",
            item.loc,
            "parameter names are letters, digits and '_', starting with a letter",
        )
    return Assignment(key, _value(item.value, f"value of parameter '{key}' {what}"), item.loc)


def _instance(line: _Line, name: str, loc: SourceLocation) -> Instance:
    words: list[Word] = []
    overrides: list[Assignment] = []
    for item in line.fields:
        line._check_unsupported_form(item)
        if isinstance(item, Word) and not overrides:
            if item.text.lower() == "params:":
                continue
            words.append(item)
        elif isinstance(item, Keyed):
            overrides.append(_assignment(item, f"on {name}"))
        else:
            raise _fail(
                f"unexpected {_describe(item)} on {name}",
                item.loc,
                line.form_hint(),
            )
    if not words:
        raise _fail(f"{name} is missing its subcircuit name", line.last_end, line.form_hint())
    return Instance(name, tuple(words[:-1]), words[-1], tuple(overrides), loc)


# --------------------------------------------------------------------------
# dot-cards

SUPPORTED_CARDS = (".subckt", ".ends", ".model", ".param", ".include", ".temp", ".ac", ".noise", ".options", ".end")
_NOT_YET = {
    ".lib": "'.lib' is not supported; use .include FILE",
    ".inc": "write '.include' in full",
    ".global": "'.global' is not supported: only ground (0) is shared between subcircuits",
}


class _Card:
    def __init__(self, name: str, loc: SourceLocation, end: SourceLocation, fields: list[Field]) -> None:
        self.name = name
        self.loc = loc
        self.fields = fields
        self.position = 0
        self.last_end = end

    def peek(self) -> Field | None:
        return self.fields[self.position] if self.position < len(self.fields) else None

    def take(self, what: str, form: str) -> Field:
        item = self.peek()
        if item is None:
            raise _fail(f"{self.name} is missing its {what}", self.last_end, f"the form is: {form}")
        self.position += 1
        self.last_end = item.end
        return item

    def word(self, what: str, form: str) -> Word:
        item = self.take(what, form)
        if not isinstance(item, Word):
            raise _fail(f"expected {what} here, not {_describe(item)}", item.loc, f"the form is: {form}")
        return item

    def done(self, form: str) -> None:
        item = self.peek()
        if item is not None:
            raise _fail(f"unexpected extra field {_describe(item)} on {self.name}", item.loc, f"the form is: {form}")


_SWEEP_FORM = "dec|oct|lin points fstart fstop"


def _sweep(card: _Card, form: str) -> Sweep:
    kind = card.word("sweep kind (dec, oct or lin)", form)
    if kind.text.lower() not in ("dec", "oct", "lin"):
        raise _fail(f"unknown sweep kind '{kind.text}'; expected dec, oct or lin", kind.loc, f"the form is: {form}")
    points = _value(card.take("number of points", form), "number of points")
    start = _value(card.take("start frequency", form), "start frequency")
    stop = _value(card.take("stop frequency", form), "stop frequency")
    return Sweep(kind.text.lower(), points, start, stop, kind.loc)


def _card(tree: Tree, fields: _Fields) -> Statement:
    name_token = tree.children[0]
    source = fields.source
    loc = source.at(name_token)
    name = str(name_token).lower()
    items = fields.fields(tree.children[1:])
    card = _Card(name, loc, source.after(name_token), items)
    if name == ".subckt":
        return _subckt(card)
    if name == ".ends":
        form = ".ends [name]"
        label = card.word("name", form) if card.peek() is not None else None
        card.done(form)
        return EndsCard(label, loc)
    if name == ".include":
        form = ".include FILE"
        item = card.take("file name", form)
        if not isinstance(item, (Word, Quoted)):
            raise _fail(f"expected a file name here, not {_describe(item)}", item.loc)
        card.done(form)
        return IncludeCard(item.text, loc)
    if name == ".temp":
        form = ".temp degrees_celsius"
        value = _value(card.take("temperature", form), "temperature")
        card.done(form)
        return TempCard(value, loc)
    if name == ".ac":
        form = f".ac {_SWEEP_FORM}"
        sweep = _sweep(card, form)
        card.done(form)
        return AcCard(sweep, loc)
    if name == ".noise":
        return _noise(card)
    if name == ".model":
        return _model(card)
    if name in (".options", ".option"):
        return OptionsCard(loc)
    if name in _NOT_YET:
        raise _fail(_NOT_YET[name], loc)
    raise _fail(
        f"unknown dot-card '{name_token}'",
        loc,
        "netnoise reads " + " ".join(SUPPORTED_CARDS),
    )


def _subckt(card: _Card) -> SubcktCard:
    form = ".subckt NAME pin ... [params:] [name=default ...]"
    name = card.word("subcircuit name", form)
    pins: list[Word] = []
    defaults: list[Assignment] = []
    while (item := card.peek()) is not None:
        card.take("pin", form)
        if isinstance(item, Word) and not defaults:
            if item.text.lower() == "params:":
                continue
            pins.append(item)
        elif isinstance(item, Keyed):
            defaults.append(_assignment(item, f"in .subckt {name.text}"))
        else:
            raise _fail(f"unexpected {_describe(item)} on .subckt {name.text}", item.loc, f"the form is: {form}")
    return SubcktCard(name, tuple(pins), tuple(defaults), card.loc)


def _noise(card: _Card) -> NoiseCard:
    form = ".noise v(out[,ref]) [SOURCE [dec|oct|lin points fstart fstop]]"
    probe = card.take("output v(node) or v(node,ref)", form)
    if not isinstance(probe, Call) or probe.name.lower() != "v":
        raise _fail(
            f"expected the output as v(node) or v(node,ref), not {_describe(probe)}",
            probe.loc,
            "only voltage outputs are supported",
        )
    if not 1 <= len(probe.args) <= 2 or not all(isinstance(arg, Word) for arg in probe.args):
        raise _fail("v(...) takes one node, or an output node and a reference node", probe.loc, f"the form is: {form}")
    output = probe.args[0]
    reference = probe.args[1] if len(probe.args) == 2 else None
    # the source may be left out before a sweep: element names start with V or I,
    # so a sweep keyword here cannot be a source's name
    upcoming = card.peek()
    names_sweep = isinstance(upcoming, Word) and upcoming.text.lower() in ("dec", "oct", "lin")
    source = card.word("input source name", form) if upcoming is not None and not names_sweep else None
    sweep = _sweep(card, form) if card.peek() is not None else None
    card.done(form)
    return NoiseCard(output, reference, source, sweep, card.loc)  # type: ignore[arg-type]


# .model NAME opamp parameters: our name -> (OpAmpModel field, what it is)
OPAMP_PARAMS: dict[str, tuple[str, str]] = {
    "en": ("voltage_noise", "input voltage noise density, V/√Hz (white)"),
    "en_corner": ("voltage_noise_corner_Hz", "1/f corner of en, Hz"),
    "in": ("current_noise", "input current noise density on each input, A/√Hz (white)"),
    "in_corner": ("current_noise_corner_Hz", "1/f corner of in, Hz"),
    "aol": ("open_loop_gain", "open-loop DC gain, V/V"),
    "gbw": ("gain_bandwidth_Hz", "gain-bandwidth product, Hz"),
    "fp2": ("second_pole_Hz", "second pole, Hz"),
    "cin": ("input_capacitance", "common-mode capacitance of each input to ground, F"),
    "cdiff": ("differential_capacitance", "capacitance between the inputs, F"),
    "rout": ("output_resistance", "output resistance, Ω"),
}
_MODEL_FORM = ".model NAME opamp [(] en=... in=... aol=... gbw=... [)]"
_MODEL_TYPES_REFUSED = {
    "d": "diode",
    "npn": "bipolar transistor",
    "pnp": "bipolar transistor",
    "nmos": "MOS transistor",
    "pmos": "MOS transistor",
    "njf": "junction FET",
    "pjf": "junction FET",
}


def opamp_param_list() -> str:
    return ", ".join(OPAMP_PARAMS)


def check_opamp_param(item: Assignment, owner: str) -> None:
    """Refuse a parameter name that an amplifier model does not have."""
    if item.name.lower() not in OPAMP_PARAMS:
        raise _fail(
            f"{owner}: an opamp model has no parameter '{shown(item.name)}'",
            item.loc,
            f"its parameters: {opamp_param_list()}",
        )


def _model(card: _Card) -> ModelCard:
    name = card.word("model name", _MODEL_FORM)
    kind_item = card.take("model type", _MODEL_FORM)
    raw_params: list[Field] = []
    if isinstance(kind_item, Word):
        kind = kind_item.text
        kind_loc = kind_item.loc
    elif isinstance(kind_item, Call):
        kind = kind_item.name
        kind_loc = kind_item.loc
        raw_params.extend(kind_item.args)
    else:
        raise _fail(f"expected the model type here, not {_describe(kind_item)}", kind_item.loc, f"the form is: {_MODEL_FORM}")
    if kind.lower() != "opamp":
        what = _MODEL_TYPES_REFUSED.get(kind.lower())
        reason = f"{what} models are not supported" if what else f"model type '{shown(kind)}' is not supported"
        raise _fail(
            f".model {shown(name.text)}: {reason}",
            kind_loc,
            "netnoise has amplifier models only: .model NAME opamp (en=... gbw=...)",
        )
    while card.peek() is not None:
        raw_params.append(card.take("parameter", _MODEL_FORM))
    owner = f".model {shown(name.text)}"
    params: list[Assignment] = []
    seen: set[str] = set()
    for item in raw_params:
        if not isinstance(item, Keyed):
            raise _fail(
                f"expected a name=value parameter on {owner}, not {_describe(item)}",
                item.loc,
                f"its parameters: {opamp_param_list()}",
            )
        assignment = _assignment(item, f"on {owner}")
        check_opamp_param(assignment, owner)
        key = assignment.name.lower()
        if key in seen:
            raise _fail(f"{owner}: parameter '{assignment.name}' is given twice", item.loc)
        seen.add(key)
        params.append(assignment)
    return ModelCard(name, "opamp", tuple(params), card.loc)


def _param_card(tree: Tree, source: SourceText) -> ParamCard:
    assignments = []
    for node in tree.children[1:]:
        name_token, expression = node.children
        key = str(name_token)
        value = Value("{...}", source.at(expression), None, expression, source)
        assignments.append(Assignment(key, value, source.at(name_token)))
    return ParamCard(tuple(assignments), source.at(tree.children[0]))


# --------------------------------------------------------------------------
# the entry point


def parse_statements(text: str, filename: str = "<text>", has_title: bool = True) -> ParsedFile:
    """Parse netlist ``text`` into statements.

    ``has_title``: the first line is the title (true for the top-level file,
    false for included files).
    """
    prepared, title, source = _prepare(text, filename, has_title)
    tree = _parse_tree(prepared, "netlist", source)
    fields = _Fields(source)
    statements: list[Statement] = []
    for node in tree.children:
        if isinstance(node, Token):  # PLAIN_LINE
            statements.append(_plain_element(node, fields))
        elif node.data == "element_line":
            statements.append(_element(node, fields))
        elif node.data == "param_line":
            statements.append(_param_card(node, source))
        else:
            statements.append(_card(node, fields))
    return ParsedFile(title, tuple(statements), source)

"""The loose pieces of an element line or dot-card: words, quoted text,
braced expressions, ``key=value`` pairs and calls, each with its place in
the file; values (a number already converted, or an expression to evaluate
later) and ``name = value`` assignments."""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Union

from lark import Token, Tree

from netnoise.errors import SourceLocation
from netnoise.text.behavioural import behavioural_refusal
from netnoise.text.source import SourceText
from netnoise.text.source import fail as _fail
from netnoise.text.values import split_value

__all__ = [
    "Word",
    "Quoted",
    "Braced",
    "Keyed",
    "Call",
    "KeyedCall",
    "Field",
    "Value",
    "Assignment",
    "FieldReader",
    "LineReader",
    "BEHAVIOURAL_KEYS",
    "shown",
    "describe",
    "as_value",
    "as_assignment",
    "refuse_list",
    "is_value",
    "IDENTIFIER",
    "glued_call",
]


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
    """``key=value``; ``rest``: the further values of a list ``key=a,b`` (``tc=1e-3,2e-6``)."""

    key: str
    value: Word | Braced | Quoted
    loc: SourceLocation = field(compare=False)
    end: SourceLocation = field(compare=False, repr=False)
    rest: tuple[Word, ...] = ()


def refuse_list(item: Keyed, what: str) -> None:
    """A ``key=a,b`` list where one value is wanted: refused, naming the key."""
    if item.rest:
        raise _fail(
            f"{item.key}= takes one value {what}, not a list",
            item.rest[0].loc,
            f"write {item.key}=VALUE",
        )


@dataclass(frozen=True)
class Call:
    name: str
    args: tuple[Word | Braced | Keyed, ...]
    loc: SourceLocation = field(compare=False)
    end: SourceLocation = field(compare=False, repr=False)


@dataclass(frozen=True)
class KeyedCall:
    """``v(out)=1.5`` on ``.ic``/``.nodeset``, ``f(x)={x*2}`` on ``.func``."""

    call: Call
    value: Word | Braced
    loc: SourceLocation = field(compare=False)
    end: SourceLocation = field(compare=False, repr=False)


Field = Union[Word, Quoted, Braced, Keyed, Call, KeyedCall]


def shown(text: str, limit: int = 40) -> str:
    """``text`` for a message: control characters by code point, long text cut."""
    if len(text) > limit:
        text = text[: limit - 3] + "..."
    if not text.isprintable():
        text = "".join(ch if ch.isprintable() else f"U+{ord(ch):04X}" for ch in text)
    return text


def describe(item: Field) -> str:
    if isinstance(item, Word):
        return f"'{shown(item.text)}'"
    if isinstance(item, Quoted):
        return f'"{shown(item.text)}"'
    if isinstance(item, Braced):
        return "a {...} expression"
    if isinstance(item, Keyed):
        return f"'{shown(item.key)}=...'"
    if isinstance(item, KeyedCall):
        return f"'{shown(item.call.name)}(...)=...'"
    return f"'{shown(item.name)}(...)'"


class Value:
    """A value field: a plain number (already converted) or an expression.

    ``text`` is the number or the braced expression as written (``'{...}'``
    when the expression spans lines); ``loc`` is where it
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


def braced_text(item: Braced) -> str:
    """The braced expression as written, when it stands on one line."""
    start, end = item.loc, item.end
    if start.line != end.line or not start.text:
        return "{...}"
    return start.text[start.column - 1 : end.column - 1]


IDENTIFIER = re.compile(r"[A-Za-z_][A-Za-z0-9_]*\Z")
_GLUED = re.compile(r"([A-Za-z_][A-Za-z0-9_]*)\((.+)\)\Z", re.DOTALL)


def glued_call(word: Word) -> Call | None:
    """``v(out)``, ``poly(1)``, ``v(Net-(R1-Pad2))``: a word that is a name and one
    parenthesised argument glued to it, as a call with that argument (the grammar
    keeps such a word whole, since in node position it is a name); None for any
    other word (``Net-(R1-Pad2)``: a '(' that does not close at the end)."""
    match = _GLUED.match(word.text)
    if match is None:
        return None
    name, inner = match.groups()
    depth = 0
    for ch in inner:  # the first '(' must close at the very end
        depth += {"(": 1, ")": -1}.get(ch, 0)
        if depth < 0:
            return None
    arg = Word(inner, word._source, word._line, word._column + len(name) + 1)
    return Call(name, (arg,), word.loc, word.end)


def as_value(item: Field, what: str) -> Value:
    """``item`` as a value; ``what`` names it in messages ('the value of R1')."""
    if isinstance(item, Word):
        try:
            number = split_value(item.text)[0]
        except ValueError as exc:
            hint = ""
            if IDENTIFIER.match(item.text):
                hint = f"to use a parameter, put it in braces: {{{item.text}}}"
            raise _fail(f"bad {what}: {exc}", item.loc, hint) from None
        return Value(item.text, None, number, word=item)
    if isinstance(item, Braced):
        return Value(braced_text(item), item.loc, None, item.tree, item.source)
    hint = "write expressions in braces: {...}" if isinstance(item, Quoted) else ""
    raise _fail(f"expected {what} here, not {describe(item)}", item.loc, hint)


@dataclass(frozen=True)
class Assignment:
    """``name = value`` from .param, a .subckt header or an X line."""

    name: str
    value: Value
    loc: SourceLocation = field(compare=False)


def is_value(item: Field | None) -> bool:
    if isinstance(item, Braced):
        return True
    if isinstance(item, Word):
        try:
            split_value(item.text)
        except ValueError:
            return False
        return True
    return False


def as_assignment(item: Keyed, what: str) -> Assignment:
    refuse_list(item, what)
    key = item.key
    if key.lower().startswith("params:"):
        key = key[len("params:") :]
    if not IDENTIFIER.match(key):
        raise _fail(
            f"'{key}' is not a parameter name",
            item.loc,
            "parameter names are letters, digits and '_', starting with a letter",
        )
    return Assignment(key, as_value(item.value, f"value of parameter '{key}' {what}"), item.loc)


class FieldReader:
    """Turns the loose field trees of one line into Field objects."""

    def __init__(self, source: SourceText) -> None:
        self.source = source

    def word(self, token: Token) -> Word:
        return Word(str(token), self.source, token.line or 1, token.column or 1)

    def words(self, token: Token) -> list[Word]:
        """The words of a WORDS or PLAIN_LINE token (blank-separated, one line)."""
        text = str(token)
        line = token.line or 1
        column = token.column or 1
        source = self.source
        pieces = text.split()
        out: list[Word] = []
        if text.startswith(" ".join(pieces)):  # most lines: one blank between words, columns by their lengths
            for piece in pieces:
                out.append(Word(piece, source, line, column))
                column += len(piece) + 1
            return out
        position = 0
        for piece in pieces:
            position = text.find(piece, position)
            out.append(Word(piece, source, line, column + position))
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
        key, raw, *more = node.children  # more: the further values of key=a,b
        if more:
            rest = tuple(self.word(token) for token in more)  # type: ignore[arg-type]
            first = self.word(raw)  # type: ignore[arg-type]
            return Keyed(str(key), first, self.source.at(key), self.source.after(node), rest)
        if isinstance(raw, Tree):
            value: Word | Braced | Quoted = self.braced(raw)
        elif raw.type == "STRING":
            value = Quoted(str(raw)[1:-1], self.source.at(raw), self.source.after(raw))
        else:
            value = self.word(raw)
        return Keyed(str(key), value, self.source.at(key), self.source.after(node))

    def call(self, children: list, last: Tree | Token) -> Call:
        name = children[0]
        args: list[Word | Braced | Keyed] = []
        if len(children) > 3:  # name LPAR call_args RPAR
            for arg in children[2].children:
                if arg.data == "word":
                    args.append(self.word(arg.children[0]))  # type: ignore[arg-type]
                elif arg.data == "keyed":
                    args.append(self.keyed(arg))
                else:
                    args.append(self.braced(arg))
        return Call(str(name), tuple(args), self.source.at(name), self.source.after(last))

    def field(self, node: Tree) -> Field:
        kind = node.data
        if kind == "word":
            return self.word(node.children[0])  # type: ignore[arg-type]
        if kind == "quoted":
            token = node.children[0]
            return Quoted(str(token)[1:-1], self.source.at(token), self.source.after(token))
        if kind == "braced":
            return self.braced(node)
        if kind in ("keyed", "keyed_list"):
            return self.keyed(node)
        if kind == "call":
            return self.call(node.children, node)
        if kind == "keyed_call":  # name LPAR [call_args] RPAR value
            *call_part, raw = node.children
            call = self.call(call_part, call_part[-1])
            value: Word | Braced = self.braced(raw) if isinstance(raw, Tree) else self.word(raw)
            return KeyedCall(call, value, call.loc, self.source.after(node))
        raise _fail(f"unexpected '{kind}'", self.source.at(node))  # grammar and code disagree


BEHAVIOURAL_KEYS = frozenset({"value", "table", "laplace", "freq", "vol", "cur"})


class LineReader:
    """The fields of one element line, consumed left to right.

    ``form`` is the line's usage text, shown in messages as "the form is: ...".
    """

    def __init__(self, name_word: Word, fields: list[Field], form: str) -> None:
        self.name = name_word.text
        self.letter = self.name[0].upper()
        self.name_word = name_word
        self.fields = fields
        self.form = form
        self.position = 0
        self.last: Field = name_word  # the last field taken; its .end is where a missing one goes

    @property
    def loc(self) -> SourceLocation:
        return self.name_word.loc

    @property
    def last_end(self) -> SourceLocation:
        return self.last.end

    def form_hint(self) -> str:
        return f"the form is: {self.form}"

    def peek(self) -> Field | None:
        """The next field; a glued word such as ``poly(1)`` as a call (out of node position)."""
        item = self.fields[self.position] if self.position < len(self.fields) else None
        if isinstance(item, Word) and "(" in item.text:
            return glued_call(item) or item
        return item

    def has_key(self, key: str) -> bool:
        """True if a ``key=value`` field with this key (any case) is on the line."""
        return any(isinstance(item, Keyed) and item.key.lower() == key for item in self.fields)

    def take(self, what: str, node: bool = False) -> Field:
        """The next field (``node``: as written, a glued ``name(...)`` word being a node name)."""
        item = self.peek() if not node else (self.fields[self.position] if self.position < len(self.fields) else None)
        if item is None:
            raise _fail(f"{self.name} is missing its {what}", self.last_end, self.form_hint())
        self.check_unsupported_form(self.peek() or item if node else item)  # POLY(1) refused where a node goes
        self.position += 1
        self.last = item
        return item

    def check_unsupported_form(self, item: Field) -> None:
        if isinstance(item, Call) and item.name.lower() == "poly":
            raise _fail(
                f"{self.name}: POLY forms are not supported here",
                item.loc,
                "POLY(n) is read on E, G, F and H lines, right after the output nodes",
            )
        if isinstance(item, Keyed) and item.key.lower() in BEHAVIOURAL_KEYS:
            raise behavioural_refusal(self.name, item.key, item.loc)

    def node(self, what: str) -> Word:
        item = self.take(what, node=True)
        if isinstance(item, Call):
            raise _fail(
                f"expected {what} of {self.name} here, not {describe(item)}",
                item.loc,
                "a node name may hold parentheses in closed pairs with no blank, ',' or '=' inside, "
                "such as Net-(R1-Pad2)",
            )
        if not isinstance(item, Word):
            raise _fail(f"expected {what} of {self.name} here, not {describe(item)}", item.loc, self.form_hint())
        return item

    def value(self, what: str) -> Value:
        item = self.take(what)
        return as_value(item, f"{what} of {self.name}")

    def keyed_value(self, item: Keyed, what: str) -> Value:
        """Take ``item`` (a key=value field, the next one) as the value of ``what``."""
        self.take(what)
        refuse_list(item, f"({what}) on {self.name}")
        return as_value(item.value, f"{what} of {self.name}")

    def keyed_values(self, item: Keyed, what: str) -> tuple[Value, ...]:
        """Take ``item`` (``key=a`` or ``key=a,b,...``, the next field) as the values of ``what``."""
        self.take(what)
        return tuple(as_value(x, f"{what} of {self.name}") for x in (item.value, *item.rest))

    def done(self) -> None:
        item = self.peek()
        if item is not None:
            self.check_unsupported_form(item)
            raise _fail(f"unexpected extra field {describe(item)} on {self.name}", item.loc, self.form_hint())

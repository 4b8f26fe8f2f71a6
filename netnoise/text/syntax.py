"""lark's parse exceptions, in plain words, and the one call that parses."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from lark import Token, Tree
from lark.exceptions import UnexpectedCharacters, UnexpectedEOF, UnexpectedInput, UnexpectedToken

from netnoise.errors import NetlistError
from netnoise.text.behavioural import behavioural_line
from netnoise.text.grammar import netlist_parser
from netnoise.text.source import SourceText
from netnoise.text.source import fail as _fail

__all__ = ["parse_tree", "parse_lines", "parse_expression", "MAX_PROBLEMS"]

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
    "COMPARE": "an operator",
    "AND": "an operator",
    "OR": "an operator",
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


_NAMES_WITH_PARENTHESES = (
    "a node name may hold parentheses in closed pairs with no blank, ',' or '=' inside, such as Net-(R1-Pad2)"
)


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
        hint = ""
        if token.type in ("_NL", "$END"):
            message = f"the line ends too early; expected {_expected_words(expected)}"
            if "RPAR" in expected:
                hint = f"a '(' is not closed; {_NAMES_WITH_PARENTHESES}"
        elif token.type == "LPAR" and expected & {"WORD", "WORDS"}:
            hint = f"a name cannot start with '('; {_NAMES_WITH_PARENTHESES}"
        return _fail(message, loc, hint)
    if isinstance(exc, UnexpectedCharacters):
        loc = source.location(exc.line, exc.column)
        allowed = set(exc.allowed or ())
        if "ELEMENT_NAME" in allowed:
            return _fail(
                f"'{exc.char}' cannot start a line",
                loc,
                "a line starts with an element name (R1, C2, X3, ...) or a dot-card (.param, ...)",
            )
        hint = f"; expected {_expected_words(allowed)}" if allowed else ""
        char = exc.char if exc.char.isprintable() else f"U+{ord(exc.char):04X}"
        return _fail(f"unexpected character '{char}'{hint}", loc)
    if isinstance(exc, UnexpectedEOF):
        last = len(source.lines)
        return _fail("the file ends in the middle of a line", source.location(last, 1))
    return _fail(f"cannot read this line ({type(exc).__name__})", None)


def parse_tree(prepared: str, start: str, source: SourceText) -> Tree:
    try:
        return netlist_parser().parse(prepared, start=start)
    except UnexpectedInput as exc:
        raise _unwrap(exc, source) from None


MAX_PROBLEMS = 1000
"""A file with more lines that cannot be read than this is not read further
(it is probably not a netlist); what was found is reported."""


def _error_line(exc: UnexpectedInput, lines: list[str]) -> int:
    """The physical line (1-based) lark stopped at."""
    if isinstance(exc, UnexpectedToken) and exc.token.type == "$END" or isinstance(exc, UnexpectedEOF):
        return max((n for n, line in enumerate(lines, start=1) if line.strip()), default=1)
    line = exc.token.line if isinstance(exc, UnexpectedToken) else exc.line
    return max(1, min(line or 1, len(lines)))


def _logical_line(lines: list[str], line: int) -> tuple[int, int]:
    """First and last physical line (1-based) of the logical line holding
    ``line``: back over '+' continuations (and the blank lines between), and
    forward over the ones that follow."""

    def continues(n: int) -> bool:
        return lines[n - 1].lstrip().startswith("+")

    first = line
    while continues(first) and first > 1:
        first -= 1
        while first > 1 and not lines[first - 1].strip():
            first -= 1
    last = line
    probe = line + 1
    while probe <= len(lines):
        if not lines[probe - 1].strip():
            probe += 1
            continue
        if not continues(probe):
            break
        last = probe
        probe += 1
    return first, last


def _stretch(prepared: str, starts: list[int], done: int, end: int | None) -> Any:
    """Lines ``done + 1`` .. ``end`` (to the end if None) of ``prepared``, for
    lark, keeping their line numbers: a slice of the text itself where lark
    reads slices (1.3 and later: no copy, lines counted from the text's
    start), else a copy with the lines before blanked to line breaks."""
    stop = starts[end] if end is not None else len(prepared)
    try:
        from lark.utils import TextSlice  # type: ignore[attr-defined,unused-ignore]
    except ImportError:  # pragma: no cover - lark before 1.3
        return "\n" * done + prepared[starts[done] : stop]
    return TextSlice(prepared, starts[done], stop)


def parse_lines(
    prepared: str,
    source: SourceText,
    problems: list[NetlistError],
    forgive: Callable[[int, str], bool] | None = None,
) -> list:
    """The children of the netlist tree (one per line) for every logical line
    that reads; a line that does not is reported in ``problems`` (unless
    ``forgive(line number, text)`` says it can be left out unread), left out,
    and the reading goes on at the next line.

    lark stops at the first token that cannot follow; every line before the
    logical line holding it is complete, so that stretch is parsed again
    alone, and the parse restarts after the bad line (on a slice of the same
    text: lark counts lines from the text's start, so line and column numbers
    stay the file's).  Each line is read at most three times, whatever the
    number of problems."""
    parser = netlist_parser()
    try:
        return parser.parse(prepared, start="netlist").children
    except UnexpectedInput as exc:
        failure: UnexpectedInput | None = exc
    lines = prepared.split("\n")
    starts = [0]
    for line in lines:
        starts.append(starts[-1] + len(line) + 1)
    children: list = []
    done = 0  # lines 1..done are read (or reported) already
    while failure is not None:
        bad = _error_line(failure, lines)
        first, last = _logical_line(lines, bad)
        first = max(first, done + 1)
        last = max(last, first)
        if forgive is None or not forgive(first, lines[first - 1]):  # forgiven: a card set aside anyway
            problems.append(behavioural_line(lines, first, source) or _unwrap(failure, source))
        if first - 1 > done:  # the complete lines before the bad one
            try:
                children.extend(parser.parse(_stretch(prepared, starts, done, first - 1), start="netlist").children)
            except UnexpectedInput:  # pragma: no cover - lark stopped later than the first bad line
                return children
        done = last
        if done >= len(lines) or len(problems) >= MAX_PROBLEMS:
            return children
        try:
            children.extend(parser.parse(_stretch(prepared, starts, done, None), start="netlist").children)
            failure = None
        except UnexpectedInput as exc:
            failure = exc
    return children


def parse_expression(text: str, filename: str = "<expression>"):
    """Parse one expression; returns (tree, locator)."""
    source = SourceText(filename, tuple(text.split("\n")))
    tree = parse_tree(text, "expression", source)
    return tree, source.location

"""lark's parse exceptions, in plain words, and the one call that parses."""

from __future__ import annotations

from lark import Token, Tree
from lark.exceptions import UnexpectedCharacters, UnexpectedEOF, UnexpectedInput, UnexpectedToken

from netnoise.errors import NetlistError
from netnoise.text.grammar import netlist_parser
from netnoise.text.source import SourceText
from netnoise.text.source import fail as _fail

__all__ = ["parse_tree", "parse_expression"]

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


def parse_expression(text: str, filename: str = "<expression>"):
    """Parse one expression; returns (tree, locator)."""
    source = SourceText(filename, tuple(text.split("\n")))
    tree = parse_tree(text, "expression", source)
    return tree, source.location

"""Netlist text -> lark tree -> a list of statements.

This module knows the *shape* of each line (which fields an ``R`` line has,
what follows ``.noise``); :mod:`netnoise.netlist.elaborate` gives the
statements their meaning (scopes, parameters, subcircuits).  Keywords and
element letters are not case sensitive.
"""

from __future__ import annotations

__all__ = ["parse_statements", "OPAMP_PARAMS", "SUPPORTED_LETTERS", "SUPPORTED_CARDS", "check_opamp_param"]

from lark import Token, Tree

from netnoise.circuit.elements.amplifier import OPAMP_PARAMS, check_opamp_param, opamp_param_list
from netnoise.circuit.registry import LINE_LETTERS, forms, kind_for_line, kinds_for
from netnoise.errors import NetlistError, SourceLocation, raise_problems
from netnoise.netlist.statements import (
    AcCard,
    Assignment,
    EndlCard,
    EndsCard,
    FuncCard,
    IncludeCard,
    InitialCard,
    Instance,
    LeftOutLine,
    LibCard,
    LibSection,
    ModelCard,
    NoiseCard,
    OperatingPointCard,
    OptionsCard,
    ParamCard,
    ParsedFile,
    Passive,
    ReaderNotice,
    SetAsideCard,
    Statement,
    SubcktCard,
    Sweep,
    TempCard,
    Toleranced,
)
from netnoise.text.behavioural import behavioural_refusal
from netnoise.text.fields import (
    IDENTIFIER,
    Braced,
    Call,
    Field,
    FieldReader,
    Keyed,
    KeyedCall,
    LineReader,
    Quoted,
    Value,
    Word,
    as_assignment,
    as_value,
    describe,
    glued_call,
    shown,
)
from netnoise.text.source import SourceText, prepare
from netnoise.text.source import fail as _fail
from netnoise.text.syntax import parse_lines, parse_tree

# --------------------------------------------------------------------------
# element lines

# --------------------------------------------------------------------------
# element lines: each kind reads its own form (netnoise.circuit.registry)

SUPPORTED_LETTERS = LINE_LETTERS
X_FORM = "Xname node ... subcircuit [param=value ...]  or  Xname in+ in- out opamp_model [param=value ...]"

_UNSUPPORTED = {
    "Z": "MESFETs are not supported",
    "B": "behavioural sources are not supported",
    "S": "switches are not supported",
    "W": "switches are not supported",
    "T": "transmission lines are not supported",
    "O": "transmission lines are not supported",
    "U": "transmission lines are not supported",
}


def _element(tree: Tree, fields: FieldReader) -> Statement:
    """An element line with keyed, called, braced or quoted fields."""
    name_word = fields.word(tree.children[0])  # type: ignore[arg-type]
    _check_letter(name_word)
    return _element_statement(name_word, fields.fields(tree.children[1:]))


def _plain_element(token: Token, fields: FieldReader) -> Statement:
    """An element line of plain words only (one PLAIN_LINE token)."""
    text = str(token)
    pieces = text.split()
    # most lines of a large netlist: 'R1 a b 1k', one blank between the words (their columns
    # follow from their lengths), a number in the value's place (a word there names a model)
    if len(pieces) == 4 and pieces[0][0].upper() in "RCL" and not pieces[3][:1].isalpha():
        joined = " ".join(pieces)
        if text.startswith(joined):
            return _plain_passive(token, pieces, fields.source)
    name_word, *items = fields.words(token)
    name = name_word.text
    letter = name[0].upper()
    # most lines of a large netlist: no options to take (a word in the value's place names a model)
    if letter in "RCL" and len(items) == 3 and not items[2].text[:1].isalpha():
        what = "value of " + name
        return Passive(letter, name, (items[0], items[1]), as_value(items[2], what), name_word.loc, kind=_PLAIN[letter])
    _check_letter(name_word)
    return _element_statement(name_word, list[Field](items))


_PLAIN = {letter: kinds_for(letter)[0] for letter in "RCL"}


def _plain_passive(token: Token, pieces: list[str], source: SourceText) -> Passive:
    """``Rname node node number`` (words one blank apart): the statement
    :func:`_plain_element` makes of it, without its general reading."""
    name, first, second, value = pieces
    line = token.line or 1
    column = token.column or 1
    letter = name[0].upper()
    at = column + len(name) + 1
    nodes = (Word(first, source, line, at), Word(second, source, line, at + len(first) + 1))
    value_word = Word(value, source, line, at + len(first) + len(second) + 2)
    number = as_value(value_word, "value of " + name)
    return Passive(letter, name, nodes, number, source.location(line, column), kind=_PLAIN[letter])


def _check_letter(name_word: Word) -> None:
    name = name_word.text
    if name[0].upper() == "B":
        raise behavioural_refusal(name, "B", name_word.loc)
    if name[0].upper() not in SUPPORTED_LETTERS:
        reason = _UNSUPPORTED.get(name[0].upper(), f"element letter '{name[0]}' is not supported")
        raise _fail(
            f"{name}: {reason}",
            name_word.loc,
            "netnoise reads " + ", ".join(SUPPORTED_LETTERS[:-1]) + f" and {SUPPORTED_LETTERS[-1]} lines",
        )


def _element_statement(name_word: Word, items: list[Field]) -> Statement:
    letter = name_word.text[0].upper()
    if letter == "X":
        return _instance(LineReader(name_word, items, X_FORM))
    marks = [item for item in items if isinstance(item, Keyed) and item.key.lower() == TOLERANCE_KEY]
    if marks:
        items = [item for item in items if item not in marks]
    line = LineReader(name_word, items, forms(letter))

    def selects(key: str) -> bool:  # a kind's selector: a key=value field, or a call such as POLY(n)
        calls = (glued_call(i) if isinstance(i, Word) else i for i in items)  # POLY(2): one word, glued
        return line.has_key(key) or any(isinstance(i, Call) and i.name.lower() == key for i in calls)

    kind = kind_for_line(letter, selects)
    statement = kind.parse(line)
    if not marks:
        return statement
    if kind.value_field is None:
        raise _fail(
            f"{name_word.text}: {TOLERANCE_KEY}= applies to an element's value, and this element has none",
            marks[0].loc,
            "give a model parameter a tolerance through a .param it uses",
        )
    if len(marks) > 1:
        raise _fail(f"{name_word.text} has two {TOLERANCE_KEY}= values", marks[1].loc)
    return Toleranced(statement, _tolerance(marks[0], name_word.text), marks[0].loc)


# an element's tolerance for Monte Carlo studies: `R1 a b 10k tolerance=1%`
TOLERANCE_KEY = "tolerance"


def _tolerance(item: Keyed, owner: str) -> float:
    """``tolerance=1%`` as a fraction (0.01), from 0 % to below 100 %."""
    text = item.value.text if isinstance(item.value, Word) else ""
    hint = f"write the tolerance as a percentage: {TOLERANCE_KEY}=1%"
    if not text.endswith("%"):
        raise _fail(f"{owner}: {TOLERANCE_KEY}= takes a percentage, not {describe(item.value)}", item.loc, hint)
    try:
        fraction = float(text[:-1]) / 100.0
    except ValueError:
        raise _fail(f"{owner}: cannot read '{shown(text)}' as a percentage", item.loc, hint) from None
    if not 0.0 <= fraction < 1.0:
        raise _fail(f"{owner}: a tolerance must be from 0 % to below 100 %, not {shown(text)}", item.loc, hint)
    return fraction


def _instance(line: LineReader) -> Instance:
    name, loc = line.name, line.loc
    words: list[Word] = []
    overrides: list[Assignment] = []
    for item in line.fields:
        line.check_unsupported_form(item)
        if isinstance(item, Word) and not overrides:
            if item.text.lower() == "params:":
                continue
            words.append(item)
        elif isinstance(item, Keyed):
            overrides.append(as_assignment(item, f"on {name}"))
        else:
            raise _fail(
                f"unexpected {describe(item)} on {name}",
                item.loc,
                line.form_hint(),
            )
    if not words:
        raise _fail(f"{name} is missing its subcircuit name", line.last_end, line.form_hint())
    return Instance(name, tuple(words[:-1]), words[-1], tuple(overrides), loc)


# --------------------------------------------------------------------------
# dot-cards


# --------------------------------------------------------------------------
# dot-cards

SUPPORTED_CARDS = (
    ".subckt",
    ".ends",
    ".model",
    ".param",
    ".func",
    ".include",
    ".lib",
    ".temp",
    ".ac",
    ".noise",
    ".op",
    ".title",
    ".options",
    ".end",
)
# cards for other analyses and for output: a small-signal noise analysis does
# not depend on them, so they are read and set aside (one notice names them)
SET_ASIDE_CARDS = frozenset(
    {".tran", ".dc", ".print", ".plot", ".probe", ".save", ".meas", ".measure", ".four", ".tf", ".sens", ".width"}
)
_NOT_YET = {
    ".global": "'.global' is not supported: only ground (0) is shared between subcircuits",
}


class _Card:
    def __init__(
        self, name: str, loc: SourceLocation, end: SourceLocation, fields: list[Field], source: SourceText
    ) -> None:
        self.source = source
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
            raise _fail(f"expected {what} here, not {describe(item)}", item.loc, f"the form is: {form}")
        return item

    def done(self, form: str) -> None:
        item = self.peek()
        if item is not None:
            raise _fail(f"unexpected extra field {describe(item)} on {self.name}", item.loc, f"the form is: {form}")


_SWEEP_FORM = "dec|oct|lin points fstart fstop"


def _sweep(card: _Card, form: str) -> Sweep:
    kind = card.word("sweep kind (dec, oct or lin)", form)
    if kind.text.lower() not in ("dec", "oct", "lin"):
        raise _fail(f"unknown sweep kind '{kind.text}'; expected dec, oct or lin", kind.loc, f"the form is: {form}")
    points = as_value(card.take("number of points", form), "number of points")
    start = as_value(card.take("start frequency", form), "start frequency")
    stop = as_value(card.take("stop frequency", form), "stop frequency")
    return Sweep(kind.text.lower(), points, start, stop, kind.loc)


def _card(tree: Tree, fields: FieldReader) -> Statement:
    name_token = tree.children[0]
    source = fields.source
    loc = source.at(name_token)
    name = str(name_token).lower()
    items = fields.fields(tree.children[1:])
    card = _Card(name, loc, source.after(name_token), items, source)
    if name == ".subckt":
        return _subckt(card)
    if name == ".ends":
        form = ".ends [name]"
        label = card.word("name", form) if card.peek() is not None else None
        card.done(form)
        return EndsCard(label, loc)
    if name in (".include", ".inc"):
        form = f"{name} FILE"
        item = card.take("file name", form)
        if not isinstance(item, (Word, Quoted)):
            raise _fail(f"expected a file name here, not {describe(item)}", item.loc)
        card.done(form)
        return IncludeCard(item.text, loc)
    if name in SET_ASIDE_CARDS:
        return SetAsideCard(name, loc)
    if name == ".op":
        card.done(".op")
        return OperatingPointCard(loc)
    if name in (".ic", ".nodeset"):
        return _initial(card)
    if name == ".lib":
        return _lib(card)
    if name == ".endl":
        form = ".endl [section]"
        label = card.word("section name", form) if card.peek() is not None else None
        card.done(form)
        return EndlCard(label, loc)
    if name == ".func":
        return _func(card)
    if name == ".temp":
        form = ".temp degrees_celsius"
        value = as_value(card.take("temperature", form), "temperature")
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


def _glued_key(item: Field, source: SourceText) -> Field:
    """``v(out)=1`` or ``f(x)={x}`` read as one keyed word (the grammar keeps a word with a
    glued group whole, since in node position it is a name): as the keyed call it is here."""
    if isinstance(item, Keyed) and not item.rest and isinstance(item.value, (Word, Braced)):
        call = glued_call(Word(item.key, source, item.loc.line, item.loc.column))
        if call is not None:
            return KeyedCall(call, item.value, item.loc, item.end)
    if isinstance(item, Word):
        return glued_call(item) or item
    return item


def _initial(card: _Card) -> InitialCard:
    """``.ic v(n)=value ...`` / ``.nodeset v(n)=value ...``."""
    form = f"{card.name} v(node)=value ..."
    voltages: list[tuple[Word, Value]] = []
    while card.peek() is not None:
        item = _glued_key(card.take("node voltage", form), card.source)
        node = item.call.args[0] if isinstance(item, KeyedCall) and len(item.call.args) == 1 else None
        if not isinstance(item, KeyedCall) or item.call.name.lower() != "v" or not isinstance(node, Word):
            raise _fail(
                f"expected a node voltage v(node)=value on {card.name}, not {describe(item)}",
                item.loc,
                f"the form is: {form}",
            )
        voltages.append((node, as_value(item.value, f"voltage of node '{shown(node.text)}'")))
    if not voltages:
        card.take("node voltage", form)
    return InitialCard(card.name, tuple(voltages), card.loc)


def _lib(card: _Card) -> LibCard | LibSection:
    """``.lib FILE SECTION`` reads a section; ``.lib SECTION`` (in a library file) starts one."""
    form = ".lib FILE SECTION  (or, inside a library file, .lib SECTION ... .endl)"
    first = card.take("file name and section name", form)
    if not isinstance(first, (Word, Quoted)):
        raise _fail(f"expected a file name here, not {describe(first)}", first.loc, f"the form is: {form}")
    if card.peek() is None:
        if isinstance(first, Quoted):
            raise _fail(
                f'.lib "{shown(first.text)}" names a file but no section of it',
                card.last_end,
                f"write '.lib \"{shown(first.text)}\" SECTION', or '.include \"{shown(first.text)}\"' for the whole file",
            )
        return LibSection(first, card.loc)  # type: ignore[arg-type]
    section = card.word("section name", form)
    card.done(form)
    return LibCard(first.text, section, card.loc)


def _func(card: _Card) -> FuncCard:
    """``.func name(a, b) {expression}`` (also ``= {expression}`` or ``= expression``)."""
    form = ".func name(arg, ...) {expression}"
    head = _glued_key(card.take("name(arguments)", form), card.source)
    body: Field | None
    if isinstance(head, KeyedCall):
        call: Field = head.call
        body = head.value
    else:
        call = head
        body = card.take("expression", form) if card.peek() is not None else None
    if not isinstance(call, Call):
        raise _fail(
            f"expected the function as name(arg, ...) here, not {describe(call)}", call.loc, f"the form is: {form}"
        )
    if not IDENTIFIER.match(call.name):
        raise _fail(f"'{shown(call.name)}' is not a function name", call.loc, "names are letters, digits and '_'")
    params: list[Word] = []
    for arg in call.args:
        if not isinstance(arg, Word) or not IDENTIFIER.match(arg.text):
            raise _fail(
                f".func {shown(call.name)}: an argument is a name, not {describe(arg)}", arg.loc, f"the form is: {form}"
            )
        if arg.text.lower() in {p.text.lower() for p in params}:
            raise _fail(f".func {shown(call.name)}: argument '{arg.text}' is named twice", arg.loc)
        params.append(arg)
    if body is None:
        raise _fail(f".func {shown(call.name)} is missing its expression", card.last_end, f"the form is: {form}")
    card.done(form)
    if isinstance(body, Braced):
        value = as_value(body, "expression")
    elif isinstance(body, Word):
        value = _word_expression(body, card)
    else:
        raise _fail(f"expected the expression here, not {describe(body)}", body.loc, f"the form is: {form}")
    name = Word(call.name, card.source, call.loc.line, call.loc.column)
    return FuncCard(name, tuple(params), value, card.loc)


def _word_expression(word: Word, card: _Card) -> Value:
    """An expression written without braces (``= x*2``): parsed in place, so
    its tokens keep their line and column."""
    loc = word.loc
    # the line breaks before it as continuation marks (skipped like blanks), then blanks to its column
    padded = "\n+" * (loc.line - 1) + " " * (loc.column - (2 if loc.line > 1 else 1)) + word.text
    tree = parse_tree(padded, "expression", card.source)
    return Value(word.text, loc, None, tree, card.source)


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
            defaults.append(as_assignment(item, f"in .subckt {name.text}"))
        else:
            raise _fail(f"unexpected {describe(item)} on .subckt {name.text}", item.loc, f"the form is: {form}")
    return SubcktCard(name, tuple(pins), tuple(defaults), card.loc)


def _noise(card: _Card) -> NoiseCard:
    form = ".noise v(out[,ref]) [SOURCE [dec|oct|lin points fstart fstop]]"
    probe = card.take("output v(node) or v(node,ref)", form)
    if isinstance(probe, Word):  # v(out), v(Net-(R1-Pad2)): one word, read as the call it is here
        probe = glued_call(probe) or probe
    if not isinstance(probe, Call) or probe.name.lower() != "v":
        raise _fail(
            f"expected the output as v(node) or v(node,ref), not {describe(probe)}",
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
    # a last number after the sweep (points per summary) shapes another program's printout only
    summary = as_value(card.take("points per summary", form), "points per summary") if sweep and card.peek() else None
    card.done(form)
    return NoiseCard(output, reference, source, sweep, card.loc, summary)  # type: ignore[arg-type]


_MODEL_FORM = ".model NAME opamp|D|NPN|PNP|NJF|PJF|NMOS|PMOS|R|C|L [(] param=value ... [)]"
# device model types and the element letter that uses them (their parameters are checked by the kind)
DEVICE_MODEL_TYPES = {
    "d": "D",
    "npn": "Q",
    "pnp": "Q",
    "njf": "J",
    "pjf": "J",
    "nmos": "M",
    "pmos": "M",
    "r": "R",
    "c": "C",
    "l": "L",
}


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
        raise _fail(
            f"expected the model type here, not {describe(kind_item)}", kind_item.loc, f"the form is: {_MODEL_FORM}"
        )
    device = kind.lower() in DEVICE_MODEL_TYPES
    if kind.lower() != "opamp" and not device:
        raise _fail(
            f".model {shown(name.text)}: model type '{shown(kind)}' is not supported",
            kind_loc,
            "netnoise reads amplifier models (opamp), the device models D, NPN, PNP, NJF, PJF, NMOS and PMOS, "
            "and R, C and L models",
        )
    while card.peek() is not None:
        raw_params.append(card.take("parameter", _MODEL_FORM))
    owner = f".model {shown(name.text)}"
    params: list[Assignment] = []
    seen: set[str] = set()
    for item in raw_params:
        if not isinstance(item, Keyed):
            raise _fail(
                f"expected a name=value parameter on {owner}, not {describe(item)}",
                item.loc,
                "write each model parameter as NAME=value" if device else f"its parameters: {opamp_param_list()}",
            )
        assignment = as_assignment(item, f"on {owner}")
        if not device:
            check_opamp_param(assignment, owner)
        key = assignment.name.lower()
        if key in seen:
            raise _fail(f"{owner}: parameter '{assignment.name}' is given twice", item.loc)
        seen.add(key)
        params.append(assignment)
    return ModelCard(name, kind.lower() if device else "opamp", tuple(params), card.loc)


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


def _element_name(node: Tree | Token, fields: FieldReader) -> Word | None:
    """The name of an element line (None for a dot-card)."""
    if isinstance(node, Token):  # PLAIN_LINE
        return fields.words(node)[0]
    if node.data == "element_line":
        return fields.word(node.children[0])  # type: ignore[arg-type]
    return None


def parse_statements(
    text: str, filename: str = "<text>", has_title: bool = True, *, collect: bool = False
) -> ParsedFile:
    """Parse netlist ``text`` into statements.

    ``has_title``: the first line is the title (true for the top-level file,
    false for included files).  A line that cannot be read is left out and
    the reading goes on; its problem is raised at the end (with the others),
    or, with ``collect``, kept in the result's ``problems``.
    """
    prepared = prepare(text, filename, has_title)
    source = prepared.source
    problems: list[NetlistError] = list(prepared.problems)
    unread: list[Statement] = []  # set-aside cards the grammar could not read: set aside all the same

    def forgive(number: int, text: str) -> bool:
        name = text.split(maxsplit=1)[0].lower() if text.strip() else ""
        if name not in SET_ASIDE_CARDS:
            return False
        unread.append(SetAsideCard(name, source.location(number, text.index(".") + 1)))
        return True

    children = parse_lines(prepared.text, source, problems, forgive)
    fields = FieldReader(source)
    statements: list[Statement] = [ReaderNotice(text) for text in prepared.notices]
    statements.extend(unread)
    statements.extend(SetAsideCard(name, loc, last) for name, loc, last in prepared.set_aside)
    for node in children:
        try:
            if isinstance(node, Token):  # PLAIN_LINE
                statements.append(_plain_element(node, fields))
            elif node.data == "element_line":
                statements.append(_element(node, fields))
            elif node.data == "param_line":
                statements.append(_param_card(node, source))
            else:
                statements.append(_card(node, fields))
        except NetlistError as problem:  # the line is left out; the reading goes on
            problems.append(problem)
            name = _element_name(node, fields)
            if name is not None:
                statements.append(LeftOutLine(name, name.loc))
    if problems:
        problems.sort(key=lambda p: (p.location.line, p.location.column) if p.location else (0, 0))
        if not collect:
            raise_problems(problems)
    return ParsedFile(prepared.title, tuple(statements), source, tuple(problems))

"""Evaluate ``{expression}`` values and ``.param`` right-hand sides.

We walk the lark parse tree ourselves; nothing is ever handed to Python's
``eval``.  What an expression may contain:

* numbers with the usual suffixes (``4.7k``, ``1e-9``, ``2meg``)
* parameter names (case-insensitive) and the constant ``pi``
* ``+ - * /``, unary ``-`` and ``+``, powers ``**`` or ``^`` (right
  associative and tighter than a sign: ``-2**2`` is -4), parentheses
* functions: ``sqrt exp log ln log10 sin cos tan abs`` (one argument), ``pow``
  (two), ``min max`` (two or more); ``log`` and ``ln`` are the natural
  logarithm and the trigonometric functions take radians
* comparisons ``== != < <= > >=`` (1 when true, 0 when false), ``&&`` and
  ``||`` (on non-zero as true), and ``if(condition, a, b)``, which evaluates
  only the branch it takes
* functions of the netlist's ``.func`` cards (:class:`Function`): their
  arguments, and the parameters visible where they are called; a function
  that calls itself, directly or through others, is refused.

Every failure is a :class:`~netnoise.errors.NetlistError` at the place in the
file where it happened.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field

from lark import Token, Tree

from netnoise.errors import NetlistError, SourceLocation
from netnoise.text.values import split_value

__all__ = [
    "CONSTANTS",
    "FUNCTIONS",
    "MAX_DEPTH",
    "Function",
    "Locator",
    "evaluate",
    "evaluate_text",
    "referenced_names",
]

Locator = Callable[[int, int], SourceLocation]
"""Turns a (line, column) of the parsed text into a SourceLocation."""

CONSTANTS: dict[str, float] = {"pi": math.pi}


def _domain(check: Callable[..., bool], why: str, func: Callable[..., float]) -> Callable[..., float]:
    def guarded(*args: float) -> float:
        if not check(*args):
            raise _DomainError(why)
        return func(*args)

    return guarded


class _DomainError(Exception):
    pass


# name -> (smallest, largest number of arguments (None: any), function)
FUNCTIONS: dict[str, tuple[int, int | None, Callable[..., float]]] = {
    "sqrt": (1, 1, _domain(lambda x: x >= 0, "sqrt of a negative number", math.sqrt)),
    "exp": (1, 1, math.exp),
    "log": (1, 1, _domain(lambda x: x > 0, "log of a number that is not positive", math.log)),
    "ln": (1, 1, _domain(lambda x: x > 0, "ln of a number that is not positive", math.log)),
    "log10": (1, 1, _domain(lambda x: x > 0, "log10 of a number that is not positive", math.log10)),
    "sin": (1, 1, math.sin),
    "cos": (1, 1, math.cos),
    "tan": (1, 1, math.tan),
    "abs": (1, 1, abs),
    "min": (2, None, min),
    "max": (2, None, max),
    "pow": (2, 2, lambda x, y: _power(x, y)),
}


@dataclass(frozen=True)
class Function:
    """A ``.func`` card: ``name(params) = tree``; ``locate`` places the
    tree's tokens in its file."""

    name: str
    params: tuple[str, ...]  # lower case
    tree: Tree
    locate: Locator = field(compare=False, repr=False)


# names an expression reads specially (a function or its condition form)
_IF = "if"
_COMPARISONS: dict[str, Callable[[float, float], bool]] = {
    "==": lambda a, b: a == b,
    "!=": lambda a, b: a != b,
    "<": lambda a, b: a < b,
    "<=": lambda a, b: a <= b,
    ">": lambda a, b: a > b,
    ">=": lambda a, b: a >= b,
}


def _power(base: float, exponent: float) -> float:
    if base == 0.0 and exponent < 0:
        raise _DomainError("zero raised to a negative power")
    if base < 0 and not float(exponent).is_integer():
        raise _DomainError("a negative number raised to a fractional power")
    return math.pow(base, exponent)


def _arity_text(low: int, high: int | None) -> str:
    if high is None:
        return f"at least {low} arguments"
    return "1 argument" if low == 1 else f"{low} arguments"


def _start(node: Tree | Token) -> tuple[int, int]:
    while not isinstance(node, Token):  # a tree starts where its first token does
        node = node.children[0]
    return node.line or 1, node.column or 1


MAX_DEPTH = 200
"""Deepest nesting of operations an expression may have (``-(-(-(...)))``,
``1+(1+(1+...))``); deeper input is refused rather than exhausting the stack."""


class _Evaluator:
    def __init__(
        self, params: Mapping[str, float], locate: Locator, functions: Mapping[str, Function] | None = None
    ) -> None:
        self.params = params
        self.locate = locate
        self.functions = functions or {}
        self.calling: list[str] = []  # .func functions being evaluated, outermost first
        self.depth = 0

    def fail(self, node: Tree | Token, message: str, hint: str = "") -> NetlistError:
        return NetlistError(message, self.locate(*_start(node)), hint)

    def checked(self, node: Tree | Token, value: float) -> float:
        if not math.isfinite(value):
            raise self.fail(node, "the expression overflows (its value is not a finite number)")
        return value

    def value(self, node: Tree | Token) -> float:
        if isinstance(node, Token):  # only reached through malformed trees
            raise self.fail(node, f"unexpected '{node}' in an expression")
        method = getattr(self, "do_" + node.data, None)
        if method is None:
            raise self.fail(node, f"cannot evaluate '{node.data}'")
        self.depth += 1
        if self.depth > MAX_DEPTH:
            raise self.fail(
                node,
                f"the expression is nested more than {MAX_DEPTH} operations deep",
                "split it with .param steps",
            )
        try:
            return self.checked(node, method(node))
        except OverflowError:
            raise self.fail(node, "the expression overflows (its value is too large)") from None
        finally:
            self.depth -= 1

    # ---- leaves
    def do_number(self, node: Tree) -> float:
        token = node.children[0]
        try:
            return split_value(str(token))[0]
        except ValueError as exc:
            raise self.fail(token, f"bad number: {exc}") from None

    def do_name(self, node: Tree) -> float:
        token = node.children[0]
        key = str(token).lower()
        if key in self.params:
            return self.params[key]
        if key in CONSTANTS:
            return CONSTANTS[key]
        if key in FUNCTIONS:
            raise self.fail(token, f"'{token}' is a function; call it as {token}(...)")
        known = sorted(set(self.params) | set(CONSTANTS))
        close = difflib.get_close_matches(key, known, n=3, cutoff=0.6)
        hint = "did you mean " + " or ".join(f"'{c}'" for c in close) + "?" if close else ""
        raise self.fail(token, f"undefined parameter '{token}'", hint)

    # ---- operators
    def do_braced(self, node: Tree) -> float:
        return self.value(node.children[1])  # LBRACE expression RBRACE

    def do_neg(self, node: Tree) -> float:
        return -self.value(node.children[-1])  # MINUS operand

    def do_pos(self, node: Tree) -> float:
        return self.value(node.children[-1])  # PLUS operand

    def do_add(self, node: Tree) -> float:
        return self.value(node.children[0]) + self.value(node.children[1])

    def do_sub(self, node: Tree) -> float:
        return self.value(node.children[0]) - self.value(node.children[1])

    def do_mul(self, node: Tree) -> float:
        return self.value(node.children[0]) * self.value(node.children[1])

    def do_div(self, node: Tree) -> float:
        numerator = self.value(node.children[0])
        denominator = self.value(node.children[1])
        if denominator == 0.0:
            raise self.fail(node.children[1], "division by zero")
        return numerator / denominator

    def do_pow(self, node: Tree) -> float:
        base_node, _, exponent_node = node.children
        base = self.value(base_node)
        exponent = self.value(exponent_node)
        try:
            return _power(base, exponent)
        except _DomainError as exc:
            raise self.fail(base_node, str(exc)) from None

    def do_compare(self, node: Tree) -> float:
        left, operator, right = node.children
        return 1.0 if _COMPARISONS[str(operator)](self.value(left), self.value(right)) else 0.0

    def do_both(self, node: Tree) -> float:  # && : the right side only when the left is true
        return 1.0 if self.value(node.children[0]) != 0.0 and self.value(node.children[2]) != 0.0 else 0.0

    def do_either(self, node: Tree) -> float:  # || : the right side only when the left is false
        return 1.0 if self.value(node.children[0]) != 0.0 or self.value(node.children[2]) != 0.0 else 0.0

    def do_function(self, node: Tree) -> float:
        name_token = node.children[0]
        arguments = node.children[1].children if len(node.children) > 1 else []
        key = str(name_token).lower()
        if key == _IF:
            if len(arguments) != 3:
                raise self.fail(
                    name_token,
                    f"if() takes 3 arguments (condition, value if true, value if false), not {len(arguments)}",
                )
            return self.value(arguments[1] if self.value(arguments[0]) != 0.0 else arguments[2])
        if key in self.functions:
            return self.call(node, self.functions[key], arguments)
        if key not in FUNCTIONS:
            known = ", ".join(sorted({*FUNCTIONS, _IF, *self.functions}))
            raise self.fail(name_token, f"unknown function '{name_token}'", f"the functions are: {known}")
        low, high, func = FUNCTIONS[key]
        if len(arguments) < low or (high is not None and len(arguments) > high):
            raise self.fail(
                name_token,
                f"{key}() takes {_arity_text(low, high)}, not {len(arguments)}",
            )
        values = [self.value(argument) for argument in arguments]
        try:
            return func(*values)
        except _DomainError as exc:
            raise self.fail(name_token, str(exc)) from None
        except ValueError:
            raise self.fail(name_token, f"{key}() is not defined for these arguments") from None

    def call(self, name_token: Tree | Token, function: Function, arguments: list) -> float:
        """A ``.func`` function: its body, with its arguments bound, where it is written."""
        if function.name.lower() in self.calling:
            cycle = " -> ".join([*self.calling[self.calling.index(function.name.lower()) :], function.name.lower()])
            raise self.fail(
                name_token,
                f"the function '{function.name}' calls itself ({cycle}): a .func cannot be recursive",
                "write the function out without calling itself (a netlist function has no loops to end one)",
            )
        if len(arguments) != len(function.params):
            raise self.fail(
                name_token, f"{function.name}() takes {len(function.params)} argument(s), not {len(arguments)}"
            )
        values = [self.value(argument) for argument in arguments]
        bound = {**self.params, **dict(zip(function.params, values))}
        outer = (self.params, self.locate)
        self.params, self.locate = bound, function.locate
        self.calling.append(function.name.lower())
        try:
            return self.value(function.tree)
        finally:
            self.calling.pop()
            self.params, self.locate = outer


def evaluate(
    tree: Tree, params: Mapping[str, float], locate: Locator, functions: Mapping[str, Function] | None = None
) -> float:
    """The value of the expression ``tree``; ``params`` keys are lower case;
    ``functions``: the ``.func`` functions, by lower-case name."""
    return _Evaluator(params, locate, functions).value(tree)


def referenced_names(tree: Tree) -> set[str]:
    """The (lower-case) parameter names ``tree`` uses, constants excluded."""
    names = set()
    for node in tree.iter_subtrees():
        if node.data == "name":
            key = str(node.children[0]).lower()
            if key not in CONSTANTS:
                names.add(key)
    return names


def evaluate_text(text: str, params: Mapping[str, float] | None = None, filename: str = "<expression>") -> float:
    """Parse and evaluate one expression, e.g. ``evaluate_text("2*pi*1k")``."""
    from netnoise.text.syntax import parse_expression  # the parser owns lark's error messages

    tree, locate = parse_expression(text, filename)
    lowered = {key.lower(): value for key, value in (params or {}).items()}
    return evaluate(tree, lowered, locate)

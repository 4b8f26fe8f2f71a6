"""The expression evaluator: arithmetic, functions, parameters, errors."""

import math

import pytest

from netnoise.errors import NetlistError
from netnoise.text.expressions import FUNCTIONS, evaluate_text, referenced_names
from netnoise.text.syntax import parse_expression

# (expression, params, expected).  References are Python's math module or
# ordinary arithmetic written out by hand (from memory).
GOOD = [
    ("1+2*3", {}, 1 + 2 * 3),
    ("(1+2)*3", {}, (1 + 2) * 3),
    ("10/4", {}, 10 / 4),
    ("7-2-1", {}, 7 - 2 - 1),  # left associative
    ("16/4/2", {}, 16 / 4 / 2),  # left associative
    ("2**3**2", {}, 2 ** (3**2)),  # right associative (as in Python)
    ("2^3^2", {}, 2 ** (3**2)),
    ("-2**2", {}, -(2**2)),  # power binds tighter than the sign (as in Python)
    ("2**-1", {}, 2**-1),
    ("--3", {}, 3.0),
    ("+4", {}, 4.0),
    ("2*-3", {}, -6.0),
    ("4.7k*2", {}, 9.4e3),  # k = 1e3 (SI prefix)
    ("1/(2*pi*1k*1u)", {}, 1 / (2 * math.pi * 1e3 * 1e-6)),  # math.pi as reference
    ("sqrt(2)", {}, math.sqrt(2)),
    ("exp(1)", {}, math.e),
    ("log(10)", {}, math.log(10)),  # natural log
    ("log10(1000)", {}, 3.0),
    ("sin(pi/6)", {}, math.sin(math.pi / 6)),
    ("cos(0.3)", {}, math.cos(0.3)),
    ("tan(0.3)", {}, math.tan(0.3)),
    ("abs(-3)", {}, 3.0),
    ("min(3, 1, 2)", {}, 1.0),
    ("max(3, 1)", {}, 3.0),
    ("pow(2, 10)", {}, 2.0**10),
    ("pow(-2, 3)", {}, (-2.0) ** 3),
    ("R1*2", {"r1": 1e3}, 2e3),  # parameter names are case-insensitive
    ("gain + Gain", {"gain": 2.0}, 4.0),
    ("SQRT(16)", {}, 4.0),  # function names are case-insensitive
    ("PI", {}, math.pi),
]


@pytest.mark.parametrize("text, params, expected", GOOD)
def test_good_expressions(text, params, expected):
    assert evaluate_text(text, params) == pytest.approx(expected, rel=1e-12)


# (expression, params, message fragment, column of the caret)
BAD = [
    ("r2*2", {"r1": 1.0, "r22": 2.0}, "undefined parameter 'r2'", 1),
    ("1/0", {}, "division by zero", 3),
    ("1/(x-x)", {"x": 2.0}, "division by zero", 4),
    ("sqrt(-1)", {}, "sqrt of a negative number", 1),
    ("log(0)", {}, "log of a number that is not positive", 1),
    ("log10(-5)", {}, "log10 of a number that is not positive", 1),
    ("frob(1)", {}, "unknown function 'frob'", 1),
    ("sqrt(1, 2)", {}, "sqrt() takes 1 argument, not 2", 1),
    ("pow(2)", {}, "pow() takes 2 arguments, not 1", 1),
    ("max(2)", {}, "max() takes at least 2 arguments, not 1", 1),
    ("exp(1000)", {}, "overflows", 1),
    ("10**400", {}, "overflows", 1),
    ("1e300*1e300", {}, "overflows", 1),
    ("0**-1", {}, "zero raised to a negative power", 1),
    ("(-8)**(1/3)", {}, "negative number raised to a fractional power", 2),
    ("2 + 3x", {}, "bad number", 5),
    ("sqrt", {}, "is a function", 1),
    ("1 +", {}, "the line ends too early", 4),
    ("(1", {}, "the line ends too early", 3),
]


@pytest.mark.parametrize("text, params, fragment, column", BAD)
def test_bad_expressions(text, params, fragment, column):
    with pytest.raises(NetlistError) as info:
        evaluate_text(text, params)
    error = info.value
    assert fragment in error.message
    assert error.location is not None
    assert (error.location.line, error.location.column) == (1, column)


def test_undefined_parameter_suggests_close_names():
    with pytest.raises(NetlistError) as info:
        evaluate_text("rbias*2", {"rbais": 1.0, "cload": 1.0})
    assert "rbais" in info.value.hint
    assert "cload" not in info.value.hint


def test_unknown_function_lists_known_ones():
    with pytest.raises(NetlistError) as info:
        evaluate_text("lg(2)")
    for name in FUNCTIONS:
        assert name in info.value.hint


def test_referenced_names():
    tree, _ = parse_expression("a*B + sqrt(c) + pi")
    assert referenced_names(tree) == {"a", "b", "c"}


def test_no_python_eval_reachable():
    # a Python expression that is not in our grammar must not be evaluated
    with pytest.raises(NetlistError):
        evaluate_text("__import__('os')")


def test_nesting_limit_boundary():
    from netnoise.text.expressions import MAX_DEPTH

    # MAX_DEPTH - 1 signs and a number: MAX_DEPTH operations, still evaluated
    assert evaluate_text("-" * (MAX_DEPTH - 1) + "2") == pytest.approx((-1) ** (MAX_DEPTH - 1) * 2, rel=1e-12)
    with pytest.raises(NetlistError, match=f"nested more than {MAX_DEPTH} operations deep"):
        evaluate_text("-" * (MAX_DEPTH + 5) + "2")
    # parentheses alone add no operations: a thousand of them are fine
    assert evaluate_text("(" * 1000 + "3" + ")" * 1000) == pytest.approx(3.0, rel=1e-12)


# ---- comparisons, conditions and ln (issue 10, item 3): 1 for true, 0 for false, as in C (common practice)
@pytest.mark.parametrize(
    "text, expected",
    [
        ("2 == 2", 1.0),
        ("1 != 1", 0.0),
        ("1 + 2 > 2", 1.0),  # comparisons are looser than arithmetic
        ("-2 < -1", 1.0),
        ("3 <= 3 && 2 > 1", 1.0),
        ("0 || 0", 0.0),
        ("1 || 1/0", 1.0),  # the right side of || is not evaluated when the left is true
        ("0 && 1/0", 0.0),
        ("if(1 > 2, 1/0, 5)", 5.0),  # only the branch taken is evaluated
        ("if(2k >= 1k, 10, 20)", 10.0),
        ("(1 < 2) + (2 < 1)", 1.0),
        ("ln(exp(3))", 3.0),
        ("ln(2)", math.log(2.0)),  # ln is the natural logarithm, like log
    ],
)
def test_conditions(text, expected):
    assert evaluate_text(text) == pytest.approx(expected, rel=1e-15)


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("if(1, 2)", "if() takes 3 arguments"),
        ("ln(0)", "ln of a number that is not positive"),
        ("1 < 2 < 3", "is not allowed here"),  # comparisons do not chain
    ],
)
def test_bad_conditions(text, fragment):
    with pytest.raises(NetlistError) as info:
        evaluate_text(text)
    assert fragment in info.value.message


def test_param_card_takes_comparisons_without_braces():
    from netnoise.netlist import parse_netlist

    circuit = parse_netlist("t\n.param rl=2k big=rl>1k\nR1 a 0 {if(big, rl, 1)}\n")
    assert circuit.parameters["big"] == 1.0
    assert circuit.element("R1").resistance == 2e3

"""Property tests: whatever text arrives, the front end answers with a
NetlistError or a circuit -- never another exception, never a hang.

Random text, and random mutations (cuts, insertions, swapped and doubled
lines, hostile fragments) of the shipped circuits, go through
``parse_netlist``.  Kept fast: 200 examples each, no per-example deadline.
"""

from __future__ import annotations

from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from netnoise.circuit import Circuit
from netnoise.errors import NetlistError
from netnoise.netlist import parse_netlist

REPO = Path(__file__).resolve().parent.parent
CIRCUITS = REPO / "circuits"
SHIPPED = sorted(CIRCUITS.glob("*.cir"))
TEXTS = [path.read_text(encoding="utf-8") for path in SHIPPED]

SETTINGS = settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])

# pieces that netlists are made of, and pieces that break them
FRAGMENTS = [
    "R1",
    "C2",
    "X1",
    "Xu1",
    "V1",
    "I1",
    "K1",
    "E1",
    "F1",
    "a",
    "0",
    "gnd",
    "1k",
    "1kk",
    "1e",
    "abc",
    "{",
    "}",
    "(",
    ")",
    "=",
    ",",
    "+",
    "-",
    "*",
    "/",
    "**",
    "^",
    "'",
    '"',
    ";",
    "$",
    "\n",
    "\n+",
    "\t",
    ".subckt",
    ".ends",
    ".model",
    "opamp",
    ".param",
    ".include",
    ".temp",
    ".ac",
    ".noise",
    ".end",
    "v(out)",
    "dec",
    "10",
    "params:",
    "noise=",
    "corner=",
    "slope=",
    "shot",
    "quiet",
    "noiseless",
    "m=",
    "tc=",
    "Net-(R1-Pad2)",
    "4k7",
    "temp=",
    "ni=",
    "{x}",
    "{1/0}",
    "{10**10**10}",
    "{__import__('os')}",
    "((((",
    "))))",
    "\u00b5",
    "\u03a9",
    "\x07",
    "\u202e",
    "\u00a0",
    "\r",
    "en=",
    "gbw=0",
    "aol=-1",
]

text_strategy = st.text(alphabet=st.characters(blacklist_categories=("Cs",)), max_size=400) | st.lists(
    st.sampled_from(FRAGMENTS), max_size=60
).map(" ".join)


def _answer(text: str) -> None:
    try:
        circuit = parse_netlist(text, filename="<hypothesis>", base_dir=CIRCUITS)
    except NetlistError as error:
        shown = str(error)  # the message itself must build
        assert shown and len(shown) < 3000
        assert error.exit_status == 2
    else:
        assert isinstance(circuit, Circuit)
        assert circuit.elements  # an empty circuit is an error, never returned


@SETTINGS
@given(text_strategy)
def test_random_text_gets_a_netlist_error_or_a_circuit(text):
    _answer(text)


@st.composite
def mutated(draw):
    text = draw(st.sampled_from(TEXTS))
    lines = text.split("\n")
    for _ in range(draw(st.integers(1, 4))):
        kind = draw(st.sampled_from(["cut", "insert", "swap", "double", "drop", "truncate"]))
        if kind == "cut" and text:
            joined = "\n".join(lines)
            start = draw(st.integers(0, len(joined)))
            stop = draw(st.integers(start, min(len(joined), start + 40)))
            lines = (joined[:start] + joined[stop:]).split("\n")
        elif kind == "insert":
            joined = "\n".join(lines)
            at = draw(st.integers(0, len(joined)))
            piece = draw(st.sampled_from(FRAGMENTS) | st.text(max_size=8))
            lines = (joined[:at] + piece + joined[at:]).split("\n")
        elif kind == "swap" and len(lines) > 1:
            i = draw(st.integers(0, len(lines) - 1))
            j = draw(st.integers(0, len(lines) - 1))
            lines[i], lines[j] = lines[j], lines[i]
        elif kind == "double" and lines:
            i = draw(st.integers(0, len(lines) - 1))
            lines.insert(i, lines[i])
        elif kind == "drop" and lines:
            del lines[draw(st.integers(0, len(lines) - 1))]
        elif kind == "truncate":
            joined = "\n".join(lines)
            lines = joined[: draw(st.integers(0, len(joined)))].split("\n")
    return "\n".join(lines)


@SETTINGS
@given(mutated())
def test_mutated_shipped_circuits_get_a_netlist_error_or_a_circuit(text):
    _answer(text)


def test_the_shipped_circuits_are_there_to_mutate():
    assert len(TEXTS) >= 5
    for path, text in zip(SHIPPED, TEXTS):
        assert parse_netlist(text, filename=str(path)).elements

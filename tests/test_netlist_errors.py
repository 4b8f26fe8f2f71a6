"""Every way a netlist can be refused, and the message each must produce.

One table, one test: each row is a netlist (with any files it includes), the
fragment the message must contain, and where the caret must point.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import pytest

from netnoise.errors import NetlistError
from netnoise.netlist import load_netlist, parse_netlist


@dataclass(frozen=True)
class Bad:
    id: str
    text: str | bytes  # the top-level file, top.cir (its first line is the title)
    fragment: str
    line: int
    column: int
    file: str = "top.cir"  # the file the error points into
    files: dict = field(default_factory=dict)  # other files: relative path -> text


def _include_chain(length: int) -> dict:
    files = {f"f{i}.inc": f".include f{i + 1}.inc\n" for i in range(length)}
    files[f"f{length}.inc"] = "R1 a 0 1\n"
    return files


BAD = [
    # ---- element lines: shape
    Bad("missing value", "t\nR1 a b\n", "R1 is missing its value", 2, 7),
    Bad("missing node", "t\nC1 a\n", "C1 is missing its second node", 2, 5),
    Bad("missing after continuation", "t\nE1 o 0\n+ p\n", "E1 is missing its negative control node", 3, 4),
    Bad("extra field", "t\nR1 a b 1k 2k\n", "unexpected extra field '2k' on R1", 2, 11),
    Bad("keyed extra on C", "t\nC1 a b 1n IC=1\n", "unexpected extra field 'IC=...' on C1", 2, 11),
    Bad("node in braces", "t\nR1 {a} b 1k\n", "expected first node of R1 here", 2, 4),
    Bad("bad suffix", "t\nR1 a b 3x\n", "'3x' ends in 'x'", 2, 8),
    Bad("double suffix", "t\nR1 a b 1kk\n", "two scale suffixes", 2, 8),
    Bad("bare parameter", "t\nR1 a b rval\n", "bad value of R1: 'rval' is not a number", 2, 8),
    Bad("two dc values", "t\nV1 a 0 DC 1 DC 2\n", "V1 has two DC values", 2, 13),
    Bad("source extra", "t\nV1 a 0 1 2\n", "unexpected extra field '2' on V1", 2, 10),
    Bad("instance without subckt", "t\nX1\n", "X1 is missing its subcircuit name", 2, 3),
    # ---- element letters outside the subset
    Bad("diode", "t\nD1 a 0 dmod\n", "diodes are not supported", 2, 1),
    Bad("bjt", "t\nQ1 c b e npn\n", "bipolar transistors are not supported", 2, 1),
    Bad("mosfet", "t\nM1 d g s b nmos\n", "MOS transistors are not supported", 2, 1),
    Bad("jfet", "t\nJ1 d g s jmod\n", "junction FETs are not supported", 2, 1),
    Bad("behavioural B", "t\nB1 a 0 V={2*v(b)}\n", "behavioural sources are not supported", 2, 1),
    Bad("behavioural E", "t\nE1 a 0 value={2}\n", "behavioural sources are not supported", 2, 8),
    Bad("poly", "t\nE1 a 0 POLY(1) b 0 1\n", "POLY forms are not supported", 2, 8),
    Bad("unknown letter", "t\nY1 a b 1\n", "element letter 'Y' is not supported", 2, 1),
    # ---- dot-cards
    Bad("unknown card", "t\n.tran 1n 1u\n", "unknown dot-card '.tran'", 2, 1),
    Bad("diode model card", "t\n.model dmod d\n", ".model dmod: diode models are not supported", 2, 13),
    Bad("param without value", "t\n.param x\n", "the line ends too early; expected '='", 2, 9),
    Bad("param bad start", "t\n.param 1=2\n", "'1' is not allowed here", 2, 8),
    Bad("include without file", "t\n.include\n", ".include is missing its file name", 2, 9),
    Bad("temp missing", "t\n.temp\n", ".temp is missing its temperature", 2, 6),
    Bad("ac bad kind", "t\n.ac log 10 1 1k\n", "unknown sweep kind 'log'", 2, 5),
    Bad("ac short", "t\n.ac dec 10 1\n", ".ac is missing its stop frequency", 2, 13),
    Bad("noise current output", "t\nR1 a 0 1\n.noise i(R1)\n", "expected the output as v(node)", 3, 8),
    Bad("noise three nodes", "t\nR1 a 0 1\n.noise v(a,b,c)\n", "v(...) takes one node", 3, 8),
    Bad("noise extra", "t\nR1 a 0 1\nV1 a 0 1\n.noise v(a) V1 dec 10 1 10 20\n", "unexpected extra field '20'", 4, 28),
    # ---- lark's own errors, in plain words
    Bad("line starts with a digit", "t\n1 a b\n", "'1' cannot start a line", 2, 1),
    Bad("stray close paren", "t\nR1 a b 1k)\n", "')' without a matching '('", 2, 10),
    Bad("stray close brace", "t\nR1 a b }\n", "'}' without a matching '{'", 2, 8),
    Bad("unclosed brace", "t\nR1 a b {1+2\n", "the line ends too early; expected '}'", 2, 12),
    Bad("operator without operand", "t\nR1 a b {1+}\n", "expected a number or a parameter name", 2, 11),
    Bad("two numbers", "t\nR1 a b {1 2}\n", "'2' is not allowed here; expected '}'", 2, 11),
    Bad("bad char in expression", "t\nR1 a b {#}\n", "'#' is not allowed here", 2, 9),
    Bad("unclosed quote", 't\n.include "abc\n', "unexpected character '\"'", 2, 10),
    Bad("control character", "t\nR1 a b {1\x07}\n", "the control character U+0007 is not allowed", 2, 10),
    Bad("quoted value", "t\nR1 a b '2*r'\n", "expected value of R1 here", 2, 8),
    Bad("continuation with nothing before", "t\n+ R1 a 0 1\n", "a '+' line continues the line before it", 2, 1),
    # ---- expressions
    Bad("undefined parameter", "t\n.param rb=1k\nR1 a 0 {rc*2}\n", "undefined parameter 'rc'", 3, 9),
    Bad("parameter used before definition", "t\n.param a={b} b=1\n", "undefined parameter 'b'", 2, 11),
    Bad("division by zero", "t\n.param z=0\nR1 a 0 {1/z}\n", "division by zero", 3, 11),
    Bad("unknown function", "t\nR1 a 0 {ln(2)}\n", "unknown function 'ln'", 2, 9),
    Bad("arity", "t\nR1 a 0 {sqrt(1,2)}\n", "sqrt() takes 1 argument, not 2", 2, 9),
    Bad("sqrt domain", "t\nR1 a 0 {sqrt(-4)}\n", "sqrt of a negative number", 2, 9),
    Bad("log domain", "t\nR1 a 0 {log(0)}\n", "log of a number that is not positive", 2, 9),
    Bad("overflow", "t\nR1 a 0 {1e200*1e200}\n", "overflows", 2, 9),
    Bad("suffix in expression", "t\nR1 a 0 {2*3q}\n", "bad number", 2, 11),
    Bad("param redefined", "t\n.param a=1\n.param A=2\n", "parameter 'A' is already defined", 3, 8),
    Bad("pi redefined", "t\n.param pi=3\n", "'pi' is a built-in constant", 2, 8),
    Bad("bad parameter name", "t\n.subckt s a 2x=1\n.ends\n", "'2x' is not a parameter name", 2, 13),
    # ---- names and scopes
    Bad("duplicate element", "t\nR1 a 0 1\nr1 b 0 2\n", "duplicate element name 'r1'", 3, 1),
    Bad(
        "duplicate inside subckt",
        "t\n.subckt s a\nR1 a 0 1\nR1 a 0 2\n.ends\nX1 n s\n",
        "duplicate element name 'X1.R1'",
        4,
        1,
    ),
    Bad("duplicate instance", "t\n.subckt s a\nR1 a 0 1\n.ends\nX1 n s\nx1 m s\n", "duplicate element name 'x1.R1'", 3, 1),
    Bad("undefined subckt", "t\n.subckt amp a\nR1 a 0 1\n.ends\nX1 a b ampp\n", "no subcircuit or amplifier model called 'ampp'", 5, 8),
    Bad("wrong pin count", "t\n.subckt s a b\nR1 a b 1\n.ends\nX1 n s\n", "X1 connects 1 node(s) but subcircuit 's' has 2", 5, 1),
    Bad("recursive", "t\n.subckt s a\nX2 a s\n.ends\nX1 n s\n", "subcircuit 's' instantiates itself", 3, 1),
    Bad(
        "mutually recursive",
        "t\n.subckt p a\nXq a q\n.ends\n.subckt q a\nXp a p\n.ends\nX1 n p\n",
        "instantiates itself (p -> q -> p)",
        6,
        1,
    ),
    Bad("unterminated subckt", "t\nR0 a 0 1\n.subckt s a\nR1 a 0 1\n", "'.subckt s' is never closed", 3, 1),
    Bad("ends without subckt", "t\n.ends\n", "'.ends' without a .subckt", 2, 1),
    Bad("ends mismatch", "t\n.subckt s a\n.ends t\n", "'.ends t' does not match the open '.subckt s'", 3, 7),
    Bad("subckt defined twice", "t\n.subckt s a\n.ends\n.subckt S b\n.ends\n", "subcircuit 'S' is defined twice", 4, 9),
    Bad("ground pin", "t\n.subckt s a gnd\n.ends\n", "ground ('gnd') cannot be a pin", 2, 13),
    Bad("repeated pin", "t\n.subckt s a a\n.ends\n", "pin 'a' appears twice", 2, 13),
    Bad("unknown override", "t\n.subckt s a params: r=1\nR1 a 0 {r}\n.ends\nX1 n s q=2\n", "subcircuit 's' has no parameter 'q'", 5, 8),
    Bad("card inside subckt", "t\n.subckt s a\n.temp 30\n.ends\n", "'.temp' belongs at the top level", 3, 1),
    Bad("nested definition out of scope", "t\n.subckt o a\n.subckt i b\n.ends i\n.ends o\nX1 n i\n", "no subcircuit or amplifier model called 'i'", 6, 6),
    Bad("F without its source", "t\nV1 a 0 1\nF1 a 0 Vx 2\n", "F1: 'Vx' names no voltage source in this scope", 3, 8),
    Bad("F controlled by a resistor", "t\nR1 a 0 1\nF1 a 0 R1 2\n", "F1: 'R1' is not a voltage source", 3, 8),
    Bad(
        "scoped control source",
        "t\nVs a 0 0\n.subckt s p\nH1 p 0 Vs 1\n.ends\nX1 a s\n",
        "X1.H1: 'Vs' names no voltage source in this scope",
        4,
        8,
    ),
    Bad("K without inductor", "t\nL1 a 0 1u\nK1 L1 L9 0.5\n", "K1: 'L9' names no inductor", 3, 7),
    Bad("K too strong", "t\nL1 a 0 1u\nL2 b 0 1u\nK1 L1 L2 1.5\n", "coupling coefficient of K1 must satisfy 0 < |k| <= 1", 4, 10),
    Bad("K zero", "t\nL1 a 0 1u\nL2 b 0 1u\nK1 L1 L2 0\n", "0 < |k| <= 1", 4, 10),
    # ---- analysis cards
    Bad("second noise card", "t\nR1 a 0 1\n.noise v(a)\n.noise v(a)\n", "a second '.noise' card", 4, 1),
    Bad("noise node missing", "t\nR1 out 0 1\n.noise v(outt)\n", "node 'outt' is not connected to any element", 3, 10),
    Bad("noise output ground", "t\nR1 a 0 1\n.noise v(gnd)\n", "the .noise output cannot be ground", 3, 10),
    Bad("noise source missing", "t\nR1 a 0 1\n.noise v(a) Vin\n", "the .noise input 'Vin' is not a voltage or current source", 3, 13),
    Bad("noise points fraction", "t\nR1 a 0 1\n.noise v(a) R1 dec 2.5 1 10\n", "the .noise input 'R1'", 3, 13),
    Bad("sweep points fraction", "t\nR1 a 0 1\n.ac dec 2.5 1 10\n", "whole number of at least 1", 3, 9),
    Bad("dec from zero", "t\nR1 a 0 1\n.ac dec 10 0 10\n", "needs a start frequency above 0 Hz", 3, 12),
    Bad("sweep backwards", "t\nR1 a 0 1\n.ac lin 10 1k 10\n", "stop frequency (10 Hz) is below the start", 3, 15),
    Bad("below absolute zero", "t\nR1 a 0 1\n.temp -300\n", "at or below absolute zero", 3, 7),
    # ---- files
    Bad("missing include", "t\n.include nothere.inc\n", "cannot find the included file 'nothere.inc'", 2, 1),
    Bad(
        "error inside included file",
        "t\n.include lib/a.inc\n",
        "R9 is missing its value",
        2,
        7,
        file="a.inc",
        files={"lib/a.inc": "* first line is not a title in an include\nR9 a b\n"},
    ),
    Bad(
        "include cycle",
        "t\n.include a.inc\n",
        "makes a cycle: a.inc -> b.inc -> a.inc",
        1,
        1,
        file="b.inc",
        files={"a.inc": ".include b.inc\n", "b.inc": ".include a.inc\n"},
    ),
    Bad("include itself", "t\n.include top.cir\n", "makes a cycle: top.cir -> top.cir", 2, 1),
    Bad("include too deep", "t\n.include f0.inc\n", "nested more than 16 deep", 1, 1, file="f15.inc", files=_include_chain(20)),
    Bad("NUL byte", b"t\nR1 a 0 1\nR2 a\x00 0 1\n", "is a NUL character", 3, 5),
    Bad("not UTF-8", "t\nR1 a 0 1 ; caf\u00e9\n".encode("utf-8") + b"R2 \xe9 0 1\n", "is not valid UTF-8", 3, 4),
]


@pytest.mark.parametrize("case", BAD, ids=lambda case: case.id)
def test_bad_netlist(case: Bad, tmp_path):
    for relative, content in case.files.items():
        target = tmp_path / relative
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_text(content, encoding="utf-8")
    top = tmp_path / "top.cir"
    if isinstance(case.text, bytes):
        top.write_bytes(case.text)
    else:
        top.write_text(case.text, encoding="utf-8")
    with pytest.raises(NetlistError) as info:
        load_netlist(top)
    error = info.value
    assert case.fragment in error.message
    assert error.location is not None
    assert error.location.file.endswith(case.file)
    assert (error.location.line, error.location.column) == (case.line, case.column)
    shown = str(error)
    lines = shown.splitlines()
    assert lines[0].startswith(f"{error.location}: ")
    caret_line = next(line for line in lines if line.strip() == "^")
    assert caret_line.index("^") - 4 == case.column - 1  # excerpt lines are indented by 4
    assert "lark" not in shown.lower() and "Unexpected" not in shown


def test_missing_file_is_a_netlist_error(tmp_path):
    with pytest.raises(NetlistError, match="does not exist"):
        load_netlist(tmp_path / "absent.cir")


def test_folder_is_a_netlist_error(tmp_path):
    with pytest.raises(NetlistError, match="is a folder"):
        load_netlist(tmp_path)


def test_text_errors_name_the_given_filename():
    with pytest.raises(NetlistError) as info:
        parse_netlist("t\nR1 a b\n", filename="<pasted>")
    assert str(info.value).startswith("<pasted>:2:7: R1 is missing its value")

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
    caret: bool = True  # False only where there is no text to show (an empty file)


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
    Bad("keyed extra on C", "t\nC1 a b 1n IQ=1\n", "unexpected extra field 'IQ=...' on C1", 2, 11),
    Bad("node in braces", "t\nR1 {a} b 1k\n", "expected first node of R1 here", 2, 4),
    Bad("bad suffix", "t\nR1 a b 3x\n", "'3x' ends in 'x'", 2, 8),
    Bad("double suffix", "t\nR1 a b 1kk\n", "two scale suffixes", 2, 8),
    Bad("bare parameter", "t\nR1 a b rval\n", "bad value of R1: 'rval' is not a number", 2, 8),
    Bad("two dc values", "t\nV1 a 0 DC 1 DC 2\n", "V1 has two DC values", 2, 13),
    Bad("source extra", "t\nV1 a 0 1 2\n", "unexpected extra field '2' on V1", 2, 10),
    Bad("instance without subckt", "t\nX1\n", "X1 is missing its subcircuit name", 2, 3),
    # ---- element letters outside the subset
    Bad("mesfet", "t\nZ1 d g s zmod\n", "MESFETs are not supported", 2, 1),
    # ---- device lines
    Bad("diode without model", "t\nD1 a 0\n", "D1 is missing its model name", 2, 7),
    Bad("diode three nodes", "t\nD1 a b c dmod\n", "D1 connects 3 node(s) before its model 'dmod'; it takes 2", 2, 10),
    Bad("diode option", "t\nD1 a 0 dmod foo=1\n", "D1: 'foo=' is not an option of this element", 2, 13),
    Bad("diode two areas", "t\nD1 a 0 dmod 2 3\n", "unexpected extra field '3' on D1", 2, 15),
    Bad("device tolerance", "t\nD1 a 0 dmod tolerance=5%\n", "D1: tolerance= applies to an element's value", 2, 13),
    Bad("behavioural B", "t\nB1 a 0 V={2*v(b)}\n", "behavioural sources are not supported", 2, 1),
    Bad("behavioural E", "t\nE1 a 0 value={2}\n", "behavioural sources are not supported", 2, 8),
    Bad("poly on a resistor", "t\nR1 a 0 POLY(1) b 0 1\n", "POLY forms are not supported", 2, 8),
    Bad("poly controls short", "t\nE1 a 0 POLY(2) b 0 1\n", "E1: POLY(2) needs 2 controlling node pairs", 2, 21),
    Bad("poly dimension", "t\nG1 a 0 POLY(x) b 0 1\n", "POLY(n) takes a whole number of controls", 2, 8),
    Bad("unknown letter", "t\nY1 a b 1\n", "element letter 'Y' is not supported", 2, 1),
    # ---- dot-cards
    Bad("unknown card", "t\n.transient 1n 1u\n", "unknown dot-card '.transient'", 2, 1),
    Bad(
        "device model bare parameter", "t\n.model dmod d is\n", "expected a name=value parameter on .model dmod", 2, 15
    ),
    Bad("param without value", "t\n.param x\n", "the line ends too early; expected '='", 2, 9),
    Bad("param bad start", "t\n.param 1=2\n", "'1' is not allowed here", 2, 8),
    Bad("include without file", "t\n.include\n", ".include is missing its file name", 2, 9),
    Bad("temp missing", "t\n.temp\n", ".temp is missing its temperature", 2, 6),
    Bad("ac bad kind", "t\n.ac log 10 1 1k\n", "unknown sweep kind 'log'", 2, 5),
    Bad("ac short", "t\n.ac dec 10 1\n", ".ac is missing its stop frequency", 2, 13),
    Bad("noise current output", "t\nR1 a 0 1\n.noise i(R1)\n", "expected the output as v(node)", 3, 8),
    Bad("noise three nodes", "t\nR1 a 0 1\n.noise v(a,b,c)\n", "v(...) takes one node", 3, 8),
    Bad(
        "noise extra", "t\nR1 a 0 1\nV1 a 0 1\n.noise v(a) V1 dec 10 1 10 1 20\n", "unexpected extra field '20'", 4, 30
    ),
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
    Bad("unknown function", "t\nR1 a 0 {lg(2)}\n", "unknown function 'lg'", 2, 9),
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
    Bad(
        "duplicate instance",
        "t\n.subckt s a\nR1 a 0 1\n.ends\nX1 n s\nx1 m s\n",
        "duplicate element name 'x1.R1'",
        3,
        1,
    ),
    Bad(
        "undefined subckt",
        "t\n.subckt amp a\nR1 a 0 1\n.ends\nX1 a b ampp\n",
        "no subcircuit or amplifier model called 'ampp'",
        5,
        8,
    ),
    Bad(
        "wrong pin count",
        "t\n.subckt s a b\nR1 a b 1\n.ends\nX1 n s\n",
        "X1 connects 1 node(s) but subcircuit 's' has 2",
        5,
        1,
    ),
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
    Bad(
        "unknown override",
        "t\n.subckt s a params: r=1\nR1 a 0 {r}\n.ends\nX1 n s q=2\n",
        "subcircuit 's' has no parameter 'q'",
        5,
        8,
    ),
    Bad("card inside subckt", "t\n.subckt s a\n.temp 30\n.ends\n", "'.temp' belongs at the top level", 3, 1),
    Bad(
        "nested definition out of scope",
        "t\n.subckt o a\n.subckt i b\n.ends i\n.ends o\nX1 n i\n",
        "no subcircuit or amplifier model called 'i'",
        6,
        6,
    ),
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
    Bad(
        "K too strong",
        "t\nL1 a 0 1u\nL2 b 0 1u\nK1 L1 L2 1.5\n",
        "coupling coefficient of K1 must satisfy 0 < |k| <= 1",
        4,
        10,
    ),
    Bad("K zero", "t\nL1 a 0 1u\nL2 b 0 1u\nK1 L1 L2 0\n", "0 < |k| <= 1", 4, 10),
    # ---- analysis cards
    Bad("second noise card", "t\nR1 a 0 1\n.noise v(a)\n.noise v(a)\n", "a second '.noise' card", 4, 1),
    Bad("noise node missing", "t\nR1 out 0 1\n.noise v(outt)\n", "node 'outt' is not connected to any element", 3, 10),
    Bad("noise output ground", "t\nR1 a 0 1\n.noise v(gnd)\n", "the .noise output cannot be ground", 3, 10),
    Bad(
        "noise source missing",
        "t\nR1 a 0 1\n.noise v(a) Vin\n",
        "the .noise input 'Vin' is not a voltage or current source",
        3,
        13,
    ),
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
    Bad(
        "include too deep",
        "t\n.include f0.inc\n",
        "nested more than 16 deep",
        1,
        1,
        file="f15.inc",
        files=_include_chain(20),
    ),
    Bad("NUL byte", b"t\nR1 a 0 1\nR2 a\x00 0 1\n", "is a NUL character", 3, 5),
    Bad("binary garbage", b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR", "is a NUL character", 3, 1),
    Bad("binary garbage, valid UTF-8", "t\n\x1b[31mR1 a 0 1\n", "the control character U+001B is not allowed", 2, 1),
    Bad("text-direction control", "t\nR1 a\u202eb 0 1\n", "invisible formatting character U+202E", 2, 5),
    Bad("latin-1 file", "t\nR1 a 0 1k\nR2 a 0 4\u00b5\n".encode("latin-1"), "is not valid UTF-8", 3, 9),
    # ---- nothing to analyse
    Bad("empty file", "", "the netlist is empty", 1, 1, caret=False),
    Bad("title only", "just a title\n", "the netlist has no elements", 1, 1),
    Bad("single element line is the title", "R1 a 0 1k\n", "the netlist has no elements", 1, 1),
    Bad("definitions only", "t\n.subckt s a\nR1 a 0 1\n.ends\n", "the netlist has no elements", 1, 1),
    # ---- malformed values
    Bad("letters for a value", "t\nR1 a b abc\n", "'abc' is not a number", 2, 8),
    Bad("exponent without digits", "t\nR1 a b 1e\n", "'1e' has an exponent without digits", 2, 8),
    Bad("kk in an expression", "t\nR1 a b {2*1kk}\n", "two scale suffixes", 2, 11),
    Bad(
        "unclosed paren in expression",
        "t\nR1 a b {(1+2}\n",
        "'}' is not allowed here; expected ')'",
        2,
        13,
    ),
    Bad("extra close paren in expression", "t\nR1 a b {(1+2))}\n", "')' is not allowed here", 2, 14),
    Bad(
        "continuation after a comment only",
        "t\n* opening remark\n+ R1 a 0 1\n",
        "a '+' line continues the line before it",
        3,
        1,
    ),
    # ---- very long lines: no crash, a bounded message
    Bad("megabyte word", "t\nR1 a b 1k " + "x" * 1_000_000 + "\n", "unexpected extra field 'xxxxx", 2, 11),
    Bad("megabyte value", "t\nR1 a b 1" + "k" * 1_000_000 + "\n", "two scale suffixes", 2, 8),
    Bad("megabyte name", "t\nR" + "x" * 1_000_000 + " a b\n", "is missing its value", 2, 1_000_006),
    # ---- hostile expressions: our evaluator refuses them, nothing is run
    Bad("import in expression", "t\nR1 a b {__import__('os')}\n", "is not allowed here", 2, 20),
    Bad("attribute access", "t\nR1 a b {().__class__}\n", "')' is not allowed here", 2, 10),
    Bad("dunder name", "t\nR1 a b {__builtins__}\n", "undefined parameter '__builtins__'", 2, 9),
    Bad("call of a parameter", "t\n.param f=1\nR1 a b {f(2)}\n", "unknown function 'f'", 3, 9),
    Bad("tower of powers", "t\nR1 a b {10**10**10}\n", "overflows", 2, 9),
    Bad("huge pow()", "t\nR1 a b {pow(9, 9e99)}\n", "overflows", 2, 9),
    Bad("huge exp()", "t\n.param x={exp(1e6)}\n", "overflows", 2, 11),
    Bad(
        "deep signs",
        "t\nR1 a b {" + "-(" * 5000 + "1" + ")" * 5000 + "}\n",
        "nested more than 200 operations deep",
        2,
        409,
    ),
    Bad("long sum", "t\nR1 a b {" + "+".join(["1"] * 5000) + "}\n", "nested more than 200 operations deep", 2, 9),
    Bad("deep unclosed parens", "t\nR1 a b {" + "(" * 5000 + "\n", "the line ends too early", 2, 5009),
    # ---- resistor options
    Bad("resistor unknown option", "t\nR1 a 0 1k tk=1\n", "unexpected extra field 'tk=...' on R1", 2, 11),
    Bad("resistor temp twice", "t\nR1 a 0 1k temp=1 temp=2\n", "R1 has two temp= values", 2, 18),
    Bad("resistor quiet twice", "t\nR1 a 0 1k quiet quiet\n", "R1 says 'quiet' twice", 2, 17),
    Bad(
        "resistor old keyword",
        "t\nR1 a 0 1k noiseless\n",
        "R1: 'noiseless' is not a netnoise keyword: write 'quiet'",
        2,
        11,
    ),
    Bad("resistor below absolute zero", "t\nR1 a 0 1k temp=-274\n", "temp=-274 °C is at or below absolute zero", 2, 16),
    Bad("resistor bad noise index", "t\nR1 a 0 1k ni=abc\n", "bad noise index of R1", 2, 14),
    Bad("capacitor quiet", "t\nC1 a 0 1n quiet\n", "unexpected extra field 'quiet' on C1", 2, 11),
    # ---- source noise
    Bad(
        "corner without noise", "t\nV1 a 0 corner=10\n", "corner= shapes a noise density, but there is no noise=", 2, 8
    ),
    Bad("slope without noise", "t\nI1 a 0 1u slope=2\n", "slope= shapes a noise density", 2, 11),
    Bad("negative noise density", "t\nV1 a 0 noise=-1n\n", "the noise density cannot be negative", 2, 14),
    Bad("negative corner", "t\nV1 a 0 noise=1n corner=-1\n", "the noise corner cannot be negative", 2, 24),
    Bad("zero slope", "t\nV1 a 0 noise=1n slope=0\n", "0 < slope <= 3, not 0", 2, 23),
    Bad("steep slope", "t\nI1 a 0 noise=1p slope={2+2}\n", "0 < slope <= 3, not 4", 2, 23),
    Bad("noise twice", "t\nV1 a 0 noise=1n noise=2n\n", "V1 has two noise= values", 2, 17),
    Bad("shot on a voltage source", "t\nV1 a 0 1 shot\n", "'shot' applies to current sources only", 2, 10),
    Bad("shot twice", "t\nI1 a 0 1m shot shot\n", "I1 says 'shot' twice", 2, 16),
    # ---- amplifier models
    Bad("model unknown parameter", "t\n.model m opamp(en=1n foo=2)\n", "an opamp model has no parameter 'foo'", 2, 22),
    Bad("model unknown parameter, no parens", "t\n.model m opamp gain=2\n", "no parameter 'gain'", 2, 16),
    Bad("device model twice", "t\n.model q1 npn(bf=100 BF=50)\n", "parameter 'BF' is given twice", 2, 22),
    Bad("unknown model type", "t\n.model x weird\n", "model type 'weird' is not supported", 2, 10),
    Bad("model without type", "t\n.model m\n", ".model is missing its model type", 2, 9),
    Bad(
        "model bare parameter", "t\n.model m opamp en\n", "expected a name=value parameter on .model m, not 'en'", 2, 16
    ),
    Bad("model parameter twice", "t\n.model m opamp en=1n EN=2n\n", "parameter 'EN' is given twice", 2, 22),
    Bad("model defined twice", "t\n.model m opamp\n.model M opamp\n", "model 'M' is defined twice", 3, 8),
    Bad(
        "model named like a subckt",
        "t\n.subckt amp a\n.ends\n.model amp opamp\n",
        "'amp' is both a subcircuit and a .model",
        4,
        8,
    ),
    Bad(
        "subckt named like a model",
        "t\n.model amp opamp\n.subckt AMP a\n.ends\n",
        "'AMP' is both a subcircuit and a .model",
        3,
        9,
    ),
    Bad(
        "model and subckt both visible",
        "t\n.subckt amp a b c\n.ends\n.subckt stage p\n.model amp opamp\nXu p 0 p amp\n.ends\nX1 n stage\n",
        "'amp' names both a subcircuit and a .model",
        6,
        10,
    ),
    Bad(
        "model scoped to its subckt",
        "t\n.subckt s p\n.model m opamp\n.ends\nXu a b c m\n",
        "no subcircuit or amplifier model called 'm'",
        5,
        10,
    ),
    Bad(
        "amplifier with two pins",
        "t\n.model m opamp\nXu a b m\n",
        "Xu connects 2 node(s) but the amplifier 'm' has 3 pins (in+, in-, out)",
        3,
        1,
    ),
    Bad("amplifier with four pins", "t\n.model m opamp\nXu a b c d m\n", "has 3 pins (in+, in-, out) or 5", 3, 1),
    Bad(
        "amplifier with six pins",
        "t\n.model m opamp\nXu a b c d e f m\n",
        "or 5 with its supplies (in+, in-, v+, v-, out)",
        3,
        1,
    ),
    Bad(
        "amplifier unknown override",
        "t\n.model m opamp\nXu a b c m bw=1\n",
        "Xu: an opamp model has no parameter 'bw'",
        3,
        12,
    ),
    Bad(
        "amplifier override twice",
        "t\n.model m opamp\nXu a b c m en=1n en=2n\n",
        "parameter 'en' is given twice on Xu",
        3,
        18,
    ),
    Bad(
        "zero open-loop gain",
        "t\n.model m opamp aol=0\nXu a b c m\n",
        "aol (open-loop DC gain, V/V) must be above 0",
        2,
        20,
    ),
    Bad(
        "negative gbw override",
        "t\n.model m opamp\nXu a b c m gbw=-1\n",
        "gbw (gain-bandwidth product, Hz) must be above 0",
        3,
        16,
    ),
    Bad(
        "negative input noise",
        "t\n.model m opamp (en={-1n})\nXu a b c m\n",
        "Xu: en (input voltage noise density",
        2,
        20,
    ),
    Bad("model value undefined parameter", "t\n.model m opamp gbw={f}\nXu a b c m\n", "undefined parameter 'f'", 2, 21),
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
    if case.caret:
        caret_line = next(line for line in lines if line.strip() == "^")
        shown_line = lines[lines.index(caret_line) - 1]
        if len(error.location.text) <= 200:
            assert caret_line.index("^") - 4 == case.column - 1  # excerpt lines are indented by 4
        else:  # a long line is shown as a window around the column
            caret_at = caret_line.index("^")
            assert (shown_line + " ")[caret_at] == (error.location.text + " ")[case.column - 1]
    assert "lark" not in shown.lower() and "Unexpected" not in shown
    assert len(shown) < 2000  # bounded, whatever the length of the line


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


def _write_case(case: Bad, tmp_path):
    for relative, content in case.files.items():
        target = tmp_path / relative
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_text(content, encoding="utf-8")
    top = tmp_path / "top.cir"
    if isinstance(case.text, bytes):
        top.write_bytes(case.text)
    else:
        top.write_text(case.text, encoding="utf-8")
    return top


# a sample of the table through the command line: exit status 2, the place, no traceback
CLI_ROWS = [
    "missing value",
    "title only",
    "unknown letter",
    "double suffix",
    "unclosed brace",
    "not UTF-8",
    "binary garbage, valid UTF-8",
    "megabyte word",
    "import in expression",
    "deep signs",
    "include cycle",
    "amplifier with two pins",
]


@pytest.mark.parametrize("case", [c for c in BAD if c.id in CLI_ROWS], ids=lambda case: case.id)
def test_bad_netlist_through_the_cli(case: Bad, tmp_path, capsys):
    from netnoise.cli import main

    top = _write_case(case, tmp_path)
    status = main(["analyze", str(top)])
    captured = capsys.readouterr()
    assert status == 2
    assert f"{case.file}:{case.line}:{case.column}: " in captured.err
    assert case.fragment in captured.err
    assert "Traceback" not in captured.err and "Traceback" not in captured.out
    assert len(captured.err) < 3000


def test_cli_rows_are_in_the_table():
    assert {c.id for c in BAD} >= set(CLI_ROWS)


HOSTILE = [
    "{__import__('os').system('echo hi')}",
    "{().__class__.__bases__[0].__subclasses__()}",
    "{eval('1')}",
    "{exec('x=1')}",
    "{open('/etc/passwd')}",
    "{lambda: 1}",
    "{[1, 2]}",
    "{1 if 1 else 2}",
    "{10**10**10**10}",
    "{9**9**9}",
    "{" + "(" * 3000 + "1" + ")" * 3000 + "}",
    "{" + "-" * 3000 + "1}",
    "{" + "*".join(["2"] * 3000) + "}",
    "{" + "sqrt(" * 1000 + "4" + ")" * 1000 + "}",
]


@pytest.mark.parametrize("expression", HOSTILE, ids=range(len(HOSTILE)))
def test_hostile_expressions_never_reach_python(expression, monkeypatch):
    import builtins

    from netnoise.text.grammar import netlist_parser

    netlist_parser()  # built before the trap is set

    def trap(*args, **kwargs):
        raise AssertionError("an expression reached Python's eval/exec/compile")

    for name in ("eval", "exec", "compile"):
        monkeypatch.setattr(builtins, name, trap)
    try:
        circuit = parse_netlist(f"t\nR1 a 0 {expression}\n")
    except NetlistError as error:
        assert error.location is not None and error.location.line == 2
    else:  # only the harmless deep parentheses evaluate (to 1)
        assert circuit.element("R1").resistance == 1.0

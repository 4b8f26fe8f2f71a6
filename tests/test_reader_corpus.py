"""Netlists as designers already have them (issue 10, items 1-3, 8-10).

The corpus in ``tests/corpus/`` holds circuits of our own invention written
the way schematic exports and hand-written simulator decks look: other
analyses' cards, ``.control`` blocks, sectioned libraries, ``.func`` and
``if()``, UTF-16 and Latin-1 files, several problems in one file.  Each is
read and analysed, and its figure checked against an independent
computation, or refused with every problem listed.

The thermal noise of a resistance R is 4kTR V²/Hz (Johnson 1928, Nyquist
1928).  Behind one capacitor C it is shaped by the one-pole
|H|² = 1/(1 + (f/fc)²), fc = 1/(2πRC), and its integral over f1..f2 is
4kTR·fc·[atan(f2/fc) - atan(f1/fc)] = (kT/C)(2/π)[atan(f2/fc) - atan(f1/fc)]
(the Lorentzian's antiderivative; to infinity it is kT/C, common practice).
A resistive divider seen from its middle node is R1 || R2 (Thévenin, common
practice).  Each closed form is cross-checked with ``scipy.integrate.quad``.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from scipy import constants, integrate

import netnoise
from netnoise.cli import main
from netnoise.errors import PROBLEMS_SHOWN, NetlistError, NetlistProblems
from netnoise.netlist.parser import parse_statements
from netnoise.netlist.statements import InitialCard

CORPUS = Path(__file__).resolve().parent / "corpus"
K = constants.k  # Boltzmann constant, exact SI (CODATA 2018)
T27 = 300.15  # 27 °C, the analysis default


def _rc_band(R: float, C: float, f1: float, f2: float, T: float = T27) -> float:
    """Thermal noise of R behind C over f1..f2 (V²): the Lorentzian integral (Johnson 1928 / Nyquist 1928)."""
    fc = 1.0 / (2 * math.pi * R * C)
    return (K * T / C) * (2 / math.pi) * (math.atan(f2 / fc) - math.atan(f1 / fc))


def _rc_quad(R: float, C: float, f1: float, f2: float, T: float = T27) -> float:
    """The same integral by quadrature of 4kTR/(1 + (f/fc)²), in ln f (independent check)."""
    fc = 1.0 / (2 * math.pi * R * C)
    value, _ = integrate.quad(
        lambda u: 4 * K * T * R / (1 + (math.exp(u) / fc) ** 2) * math.exp(u),
        math.log(f1),
        math.log(f2),
        epsabs=0.0,
        epsrel=1e-10,
        limit=200,
    )
    return value


def _analyze(name: str, **kwargs):
    circuit = netnoise.load_netlist(CORPUS / name)
    return circuit, netnoise.analyze(circuit, **kwargs)


def _codes(result) -> list[str]:
    return [note.code for note in result.notes]


def _netlist_notes(result) -> str:
    return "\n".join(note.text for note in result.notes if note.code == "netlist")


def run(*args) -> int:
    return main([str(a) for a in args])


# ---- item 2: the .ac card gives the band; item 1: other analyses' cards set aside


def test_export_rc_takes_its_band_from_the_ac_card():
    circuit, result = _analyze("export_sensor_rc.cir")
    R, C, f1, f2 = 4.7e3, 22e-9, 10.0, 100e3  # as written in the file
    expected = _rc_band(R, C, f1, f2)
    assert expected == pytest.approx(_rc_quad(R, C, f1, f2), rel=1e-9)  # closed form and quadrature agree
    assert (result.band_low_Hz, result.band_high_Hz) == (f1, f2)
    assert result.total_variance == pytest.approx(expected, rel=1e-6)
    # the whole band to infinity would be kT/C: visibly more, so the .ac band was used
    assert result.total_variance < 0.999 * K * T27 / C
    assert "band-from-ac" in _codes(result) and "band-default" not in _codes(result)
    assert circuit.title == "Sensor RC anti-alias, rev B"
    notes = _netlist_notes(result)
    for card in (".tran", ".probe", ".save", ".print", ".plot"):
        assert f"{card} (" in notes
    assert notes.count("set aside") == 1  # one notice names them all


def test_the_noise_cards_own_sweep_and_the_command_line_band_win_over_ac(tmp_path):
    text = (CORPUS / "export_sensor_rc.cir").read_text()
    own = tmp_path / "own.cir"
    own.write_text(text.replace(".noise v(/sense_out) V1", ".noise v(/sense_out) V1 dec 10 100 1k"))
    result = netnoise.analyze(netnoise.load_netlist(own))
    assert (result.band_low_Hz, result.band_high_Hz) == (100.0, 1e3)
    assert "band-from-ac" not in _codes(result)
    given = netnoise.analyze(netnoise.load_netlist(CORPUS / "export_sensor_rc.cir"), band=(0.0, math.inf))
    assert given.total_variance == pytest.approx(K * T27 / 22e-9, rel=1e-6)  # kT/C (common practice)


def test_hand_deck_divider_over_a_linear_ac_band(capsys):
    circuit, result = _analyze("deck_bias_divider.cir")
    Rp = 33e3 * 15e3 / (33e3 + 15e3)  # Thévenin resistance at mid (common practice)
    expected = 4 * K * T27 * Rp * (10e3 - 100.0)  # white: 4kTR·Δf (Johnson 1928 / Nyquist 1928)
    assert result.total_variance == pytest.approx(expected, rel=1e-6)
    assert circuit.title == "Bias divider for an invented sensor bridge"  # the .title card replaces line 1
    notes = _netlist_notes(result)
    for card in (".dc (", ".meas (", ".four (", ".tf (", ".sens (", ".width ("):
        assert card in notes
    assert "deck_bias_divider.cir:16-21" in notes  # the .control block, skipped whole
    assert circuit.operating_point_requested
    assert run("analyze", CORPUS / "deck_bias_divider.cir") == 0
    out = capsys.readouterr().out
    assert "DC operating point" in out and "3.75 V" in out  # 12 V · 15k/48k (Ohm's law)


def test_start_up_cards_are_read_as_node_voltages_then_set_aside():
    parsed = parse_statements((CORPUS / "divider_rc_octave.cir").read_text())
    cards = [s for s in parsed.statements if isinstance(s, InitialCard)]
    assert [c.name for c in cards] == [".ic", ".nodeset"]
    assert [(w.text, v.number) for w, v in cards[0].voltages] == [("out", 1.87)]
    assert [(w.text, v.number) for w, v in cards[1].voltages] == [("out", 1.8), ("src", 2.5)]
    circuit, result = _analyze("divider_rc_octave.cir")
    Rp = 22e3 * 68e3 / 90e3
    expected = _rc_band(Rp, 3.3e-9, 20.0, 20e3)
    assert expected == pytest.approx(_rc_quad(Rp, 3.3e-9, 20.0, 20e3), rel=1e-9)
    assert result.total_variance == pytest.approx(expected, rel=1e-6)
    assert ".ic (" in _netlist_notes(result) and ".nodeset (" in _netlist_notes(result)
    assert not circuit.operating_point_requested


def test_summary_field_on_noise_is_accepted_with_a_notice():
    _, result = _analyze("noise_summary_field.cir")
    expected = _rc_band(100e3, 47e-12, 1.0, 1e6)
    assert expected == pytest.approx(_rc_quad(100e3, 47e-12, 1.0, 1e6), rel=1e-9)
    assert result.total_variance == pytest.approx(expected, rel=1e-6)
    assert "points per summary" in _netlist_notes(result)


@pytest.mark.parametrize(
    "text",
    [".title Low-noise RC\nR1 a 0 1k\nC1 a 0 1n\n", "first line\nR1 a 0 1k\n.TITLE   Low-noise RC\nC1 a 0 1n\n"],
    ids=["first line", "later"],
)
def test_title_card_sets_the_title(text):
    assert netnoise.parse_netlist(text).title == "Low-noise RC"


def test_control_block_never_closed_is_refused():
    with pytest.raises(NetlistError) as info:
        netnoise.parse_netlist("t\nR1 a 0 1k\n.control\nrun\n")
    assert "never closed" in info.value.message and (info.value.location.line, info.value.location.column) == (3, 1)
    assert ".endc" in info.value.hint


@pytest.mark.parametrize(
    "card, fragment, column",
    [
        (".ic out=1", "expected a node voltage v(node)=value on .ic", 5),
        (".nodeset v(a,b)=1", "expected a node voltage v(node)=value on .nodeset", 10),
        (".ic", ".ic is missing its node voltage", 4),
        (".ic v(a)=1x", "bad voltage of node 'a'", 10),
    ],
)
def test_bad_start_up_cards(card, fragment, column):
    with pytest.raises(NetlistError) as info:
        netnoise.parse_netlist(f"t\nR1 a 0 1k\n{card}\n")
    assert fragment in info.value.message
    assert (info.value.location.line, info.value.location.column) == (3, column)


# ---- item 3: libraries, functions


def test_library_section_nominal():
    circuit, result = _analyze("lib_sections_top.cir")
    assert circuit.element("X1.R1").resistance == 10e3  # from section 'nominal'
    assert circuit.element("X1.R1").origin.file.endswith("networks.lib")
    expected = _rc_band(10e3, 1e-9, 1.0, 1e6)
    assert expected == pytest.approx(_rc_quad(10e3, 1e-9, 1.0, 1e6), rel=1e-9)
    assert result.total_variance == pytest.approx(expected, rel=1e-6)


def test_library_section_hot_at_its_temperature():
    circuit, result = _analyze("lib_sections_hot.cir")
    assert circuit.element("X1.R1").resistance == 12e3  # from section 'hot'
    T = 85.0 + 273.15
    expected = _rc_band(12e3, 1e-9, 1.0, 1e6, T)
    assert expected == pytest.approx(_rc_quad(12e3, 1e-9, 1.0, 1e6, T), rel=1e-9)
    assert result.total_variance == pytest.approx(expected, rel=1e-6)


def test_library_problems(tmp_path):
    (tmp_path / "lib.lib").write_text(".lib typ\nR1 a 0 1k\n.endl typ\n.lib fast\n.param x=1\n.endl\n")
    with pytest.raises(NetlistError) as info:
        netnoise.parse_netlist("t\n.lib lib.lib slow\n", base_dir=tmp_path)
    assert "has no section 'slow'" in info.value.message and "typ, fast" in info.value.hint
    assert (info.value.location.line, info.value.location.column) == (2, 14)
    (tmp_path / "open.lib").write_text(".lib typ\nR1 a 0 1k\n")
    with pytest.raises(NetlistError) as info:
        netnoise.parse_netlist("t\nR9 b 0 1\n.include open.lib\n", base_dir=tmp_path)
    assert "'.lib typ' is never closed" in info.value.message
    with pytest.raises(NetlistError) as info:
        netnoise.parse_netlist('t\n.lib "lib.lib"\n', base_dir=tmp_path)
    assert "names a file but no section" in info.value.message


def test_library_sections_obey_include_confinement(tmp_path):
    inside = tmp_path / "inside"
    inside.mkdir()
    (tmp_path / "out.lib").write_text(".lib typ\nR1 a 0 1k\n.endl\n")
    with pytest.raises(NetlistError) as info:
        netnoise.parse_netlist("t\n.lib ../out.lib typ\n", base_dir=inside, includes_within=inside)
    assert "outside the folder includes are confined to" in info.value.message
    (inside / "self.lib").write_text(".lib a\n.lib self.lib b\n.endl\n.lib b\n.lib self.lib a\n.endl\n")
    with pytest.raises(NetlistError) as info:
        netnoise.parse_netlist("t\n.lib self.lib a\n", base_dir=inside)
    assert "makes a cycle: self.lib[a] -> self.lib[b] -> self.lib[a]" in info.value.message


def test_short_include_card():
    _, result = _analyze("inc_short_form.cir")
    R, C = 1e3, 10e-9

    # two RC sections in a ladder, written out by hand: nodal equations at mid and out
    def density(f: float) -> float:
        y = 2j * math.pi * f * C
        g = 1.0 / R
        Y = np.array([[2 * g + y, -g], [-g, g + y]])
        inv = np.linalg.inv(Y)
        # R1's noise is a current 4kT/R between in (driven, 0 V AC) and mid; R2's between mid and out
        h1 = inv[1, 0]  # current injected at mid -> v(out)
        h2 = inv[1, 1] - inv[1, 0]  # current from mid into out -> v(out)
        return 4 * K * T27 / R * (abs(h1) ** 2 + abs(h2) ** 2)

    expected, _ = integrate.quad(lambda u: density(math.exp(u)) * math.exp(u), math.log(10), math.log(1e6), limit=200)
    assert result.total_variance == pytest.approx(expected, rel=1e-6)


def test_functions_and_conditions():
    circuit, result = _analyze("func_gain_set.cir")
    assert circuit.element("R1").resistance == 20e3  # if(mode == 1, 10k, 20k) with mode=2
    assert circuit.element("R2").resistance == 20e3  # mode >= 2 && ra > 15k
    C = 1 / (2 * math.pi * 10e3 * 1e3)  # pole_c(par(20k, 20k), 1k) * ln(e)
    assert circuit.element("C1").capacitance == pytest.approx(C, rel=1e-12)
    expected = _rc_band(10e3, C, 1.0, 100e3)
    assert expected == pytest.approx(_rc_quad(10e3, C, 1.0, 100e3), rel=1e-9)
    assert result.total_variance == pytest.approx(expected, rel=1e-6)


def test_recursive_function_is_refused(capsys):
    with pytest.raises(NetlistError) as info:
        netnoise.load_netlist(CORPUS / "func_recursive.cir")
    assert "the function 'fact' calls itself (fact -> fact)" in info.value.message
    assert (info.value.location.line, info.value.location.column) == (2, 32)
    assert run("analyze", CORPUS / "func_recursive.cir") == 2


@pytest.mark.parametrize(
    "text, fragment",
    [
        (".func log(x) {x}\n", "'log' is a built-in function"),
        (".func f(x) {x}\n.func F(y) {y}\n", "function 'F' is defined twice"),
        (".func f(x, x) {x}\n", "argument 'x' is named twice"),
        (".func f(x)\n", ".func f is missing its expression"),
        (".func f(x) {x}\nR2 b 0 {f(1, 2)}\n", "f() takes 1 argument(s), not 2"),
        (".func f(x) {x/0}\nR2 b 0 {f(1)}\n", "division by zero"),
        (".func f(x) {g(x)}\n.func g(x) {f(x)}\nR2 b 0 {f(1)}\n", "calls itself (f -> g -> f)"),
    ],
)
def test_bad_functions(text, fragment):
    with pytest.raises(NetlistError) as info:
        netnoise.parse_netlist("t\nR1 a 0 1k\n" + text)
    assert fragment in info.value.message


# ---- item 8: encodings


@pytest.mark.parametrize(
    "name, capacitance, title",
    [
        ("utf16le_bom.cir", 3.3e-9, "Sensor RC saved by a Windows editor (UTF-16)"),
        ("utf16be_bom.cir", 4.7e-9, "Sensor RC saved by a big-endian tool (UTF-16)"),
        ("utf8_bom.cir", 1e-9, "RC saved with a UTF-8 byte-order mark"),
        ("latin1_comments.cir", 100e-9, "Thermocouple input filter, exported in Latin-1"),
    ],
)
def test_encodings_are_read(name, capacitance, title):
    circuit, result = _analyze(name)
    assert circuit.title == title
    # a resistor behind a capacitor over all frequencies: kT/C (common practice)
    assert result.total_variance == pytest.approx(K * T27 / capacitance, rel=1e-6)


def test_latin1_bytes_in_comments_give_one_notice():
    circuit = netnoise.load_netlist(CORPUS / "latin1_comments.cir")
    (notice,) = [n for n in circuit.notices if "UTF-8" in n]
    assert "lines 2, 4, 5" in notice


def test_non_utf8_outside_a_comment_says_how_to_save(tmp_path):
    path = tmp_path / "cp1252.cir"
    path.write_bytes("t\nR1 a 0 1k\nC\u00b51 a 0 1n\nR2 a 0 4\u00b5\n".encode("cp1252"))
    with pytest.raises(NetlistProblems) as info:
        netnoise.load_netlist(path)
    places = [(p.location.line, p.location.column) for p in info.value.problems]
    assert places == [(3, 2), (4, 9)]
    assert all(
        "0xB5 is not valid UTF-8" in p.message and "save the netlist as UTF-8" in p.hint for p in info.value.problems
    )


def test_utf16_with_a_broken_tail(tmp_path):
    path = tmp_path / "odd.cir"
    path.write_bytes(b"\xff\xfe" + "t\nR1 a 0 1\n".encode("utf-16-le") + b"\x00\xd8")  # a lone high surrogate
    with pytest.raises(NetlistError) as info:
        netnoise.load_netlist(path)
    assert "UTF-16-LE byte-order mark" in info.value.message and "UTF-8" in info.value.hint


# ---- item 9: every problem in one pass; item 10: behavioural sources


def test_every_problem_of_an_export_is_listed(capsys):
    with pytest.raises(NetlistProblems) as info:
        netnoise.load_netlist(CORPUS / "many_problems.cir")
    found = [(p.location.line, p.location.column, p.message) for p in info.value.problems]
    assert [(line, column) for line, column, _ in found] == [
        (4, 11),
        (5, 18),
        (6, 14),
        (7, 1),
        (8, 1),
        (9, 1),
        (10, 16),
    ]
    messages = [m for _, _, m in found]
    assert "two scale suffixes" in messages[0]
    assert "undefined parameter 'rfb'" in messages[1]
    assert "unexpected extra field '22n' on C1" in messages[2]
    assert "B1 is a behavioural source" in messages[3]
    # R1 on line 4 could not be read, but its name stays taken: the second R1 is found in the same pass
    assert "duplicate element name 'R1'" in messages[4]
    assert "a line with a problem of its own" in info.value.problems[4].hint
    assert "unknown dot-card '.foo'" in messages[5]
    assert "E1 is missing its gain" in messages[6]
    # the first problem is the error's own message, so code that handles one error still works
    assert info.value.message == messages[0]
    assert run("analyze", CORPUS / "many_problems.cir") == 2
    err = capsys.readouterr().err
    assert err.count("^") == 7 and "7 problems in all" in err
    assert err.index("many_problems.cir:4:11") < err.index("many_problems.cir:10:16")


def test_behavioural_sources_are_named_with_the_linear_parts_to_write():
    with pytest.raises(NetlistProblems) as info:
        netnoise.load_netlist(CORPUS / "behavioural_export.cir")
    b, e, g = info.value.problems
    assert (b.location.line, b.location.column) == (4, 1) and "B1 is a behavioural source" in b.message
    assert "'E1 out 0 in 0 10'" in b.hint and "R and C" in b.hint
    assert (e.location.line, e.location.column) == (5, 8) and "'LAPLACE' makes a behavioural source" in e.message
    assert "R1 mid out 1k" in e.hint and "1/(2*pi*R*C)" in e.hint
    assert (g.location.line, g.location.column) == (6, 8) and "'VALUE' makes a behavioural source" in g.message
    assert "'G1 out 0 in 0 1m'" in g.hint


def test_more_than_twenty_problems_are_counted(tmp_path, capsys):
    path = tmp_path / "many.cir"
    path.write_text("t\n" + "".join(f"R{i} a{i} 0 {i}kk\n" for i in range(25)))
    with pytest.raises(NetlistProblems) as info:
        netnoise.load_netlist(path)
    assert len(info.value.problems) == 25
    text = str(info.value)
    assert f"{path}:{PROBLEMS_SHOWN + 1}:" in text and f"{path}:{PROBLEMS_SHOWN + 2}:" not in text
    assert "and 5 more problems" in text and "25 problems in all" in text
    assert run("analyze", path) == 2


@pytest.mark.parametrize(
    "text, places",
    [
        # a syntax error does not hide the lines after it
        ("t\nR1 a b {1+}\nR2 a b 1kk\nC1 a 0 (\n+ 2)\nC2 a 0 1n 2\n", [(2, 11), (3, 8), (4, 6), (6, 11)]),
        # a bad parameter is reported once, not again at each use
        ("t\n.param r={1/0}\nR1 a 0 {r}\nR2 a 0 {2*r}\nC1 a 0 1x\n", [(2, 13), (5, 8)]),
        # a line left out keeps its name: the same name again is a duplicate, whichever line fails
        ("t\nR1 a 0 1kk\nR1 b 0 2k\nC1 a 0 1n\nC1 b 0 2x\n", [(2, 8), (3, 1), (5, 1), (5, 8)]),
        # a subcircuit defined twice keeps its lines to itself; each bad instance line is named
        ("t\n.subckt s a\nR1 a 0 1\n.ends\n.subckt s a\nR1 a 0 1\n.ends\nX1 n s\nX2 n q\n", [(5, 9), (9, 6)]),
        # lines left out do not make the .noise node or an F line's source look missing
        ("t\nR1 out 0 1kk\nF1 a 0 Vx 2\nVx a 0 1x\n.noise v(out)\n", [(2, 10), (4, 8)]),
        # problems in an included file come after the top file's, each file in line order
        ("t\nR1 a 0 1kk\n.include bad.inc\nR2 a 0 1kk\n", [(2, 8), (4, 8), (2, 5)]),
    ],
    ids=["syntax", "parameter", "duplicate", "subckt", "cascade", "include"],
)
def test_reading_goes_on_after_a_problem(text, places, tmp_path):
    (tmp_path / "bad.inc").write_text("* part\nR7 a\nR8 b\n")
    with pytest.raises(NetlistProblems) as info:
        netnoise.parse_netlist(text, base_dir=tmp_path)
    assert [(p.location.line, p.location.column) for p in info.value.problems] == places


def test_an_included_file_stops_at_its_first_problem(tmp_path):
    # a file that is not a netlist shows its first bad line only (the include test above: R8 is not reported)
    (tmp_path / "bad.inc").write_text("* part\nR7 a\nR8 b\n")
    with pytest.raises(NetlistError) as info:
        netnoise.parse_netlist("t\nR1 a 0 1\n.include bad.inc\n", base_dir=tmp_path)
    assert not isinstance(info.value, NetlistProblems)
    assert "R7 is missing" in info.value.message


def test_one_problem_alone_is_a_plain_error():
    with pytest.raises(NetlistError) as info:
        netnoise.parse_netlist("t\nR1 a 0 1kk\nR2 a 0 1k\n")
    assert type(info.value) is NetlistError


REFUSED = {"many_problems.cir", "behavioural_export.cir", "func_recursive.cir"}


@pytest.mark.parametrize("path", sorted(CORPUS.glob("*.cir")), ids=lambda p: p.name)
def test_every_corpus_netlist_from_the_command_line(path, capsys):
    status = run("analyze", path)
    out, err = capsys.readouterr()
    if path.name in REFUSED:
        assert status == 2 and f"{path}:" in err and "^" in err
    else:
        assert status == 0, err
        assert "Noise budget" in out and "Traceback" not in err


def test_function_written_without_braces_keeps_its_place():
    circuit = netnoise.parse_netlist("t\n.func twice(x) = x*2k\nR1 a 0 {twice(3)}\n")
    assert circuit.element("R1").resistance == 6e3
    with pytest.raises(NetlistError) as info:
        netnoise.parse_netlist("t\nR1 a 0 1k\n.func g(y)=y/0\nR2 a 0 {g(3)}\n")
    assert "division by zero" in info.value.message
    assert (info.value.location.line, info.value.location.column) == (3, 14)  # the 0 of y/0 on the .func line


def test_lib_without_a_section_naming_a_file_reads_it_whole(tmp_path):
    (tmp_path / "parts.lib").write_text("* two parts, no sections\nR1 a 0 1k\nC1 a 0 1n\n")
    circuit = netnoise.parse_netlist("t\n.lib parts.lib\n.noise v(a)\n", base_dir=tmp_path)
    assert [e.name for e in circuit.elements] == ["R1", "C1"]
    assert any("names no section: the whole file is read" in n for n in circuit.notices)


def test_a_line_with_a_hidden_character_is_reported_once():
    # the character is reported and its line not read: no second problem made up from the rest of the line
    with pytest.raises(NetlistProblems) as info:
        netnoise.parse_netlist("t\nR1 a\u202eb 0 1\nR2 a 0 1\x07\nR3 a 0 1kk\n")
    assert [(p.location.line, p.location.column) for p in info.value.problems] == [(2, 5), (3, 9), (4, 8)]


def test_set_aside_cards_the_grammar_cannot_read_are_set_aside_all_the_same():
    circuit = netnoise.parse_netlist(
        "t\nR1 a 0 1k\n.plot v(a) (0,1)\n.meas tran t1 WHEN v(a)=0.5 RISE=1\n.print tran (i(r1)\nC1 a 0 1n\n"
    )
    (notice,) = circuit.notices
    assert notice.endswith(".plot (<text>:3), .meas (<text>:4), .print (<text>:5)")
    with pytest.raises(NetlistError) as info:  # a start-up card is read as what it is: its problems count
        netnoise.parse_netlist("t\nR1 a 0 1k\n.ic v(a)=(1\n")
    assert (info.value.location.line, info.value.location.column) == (3, 10)


@pytest.mark.parametrize("codec", ["utf-16-le", "utf-16-be"])
def test_utf16_without_a_byte_order_mark_says_how_to_save(codec, tmp_path):
    path = tmp_path / "nomark.cir"
    path.write_bytes("RC\nR1 a 0 1k\nC1 a 0 1n\n".encode(codec))
    with pytest.raises(NetlistError) as info:
        netnoise.load_netlist(path)
    assert "looks like UTF-16 text without a byte-order mark" in info.value.message
    assert "save the netlist as UTF-8" in info.value.hint

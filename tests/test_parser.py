"""Netlist text -> statements: lines, comments, continuations, field shapes."""

import os
from pathlib import Path

import pytest

from netnoise.circuit.elements.amplifier import OPAMP_PARAMS
from netnoise.netlist import load_netlist, parse_netlist
from netnoise.netlist.parser import parse_statements
from netnoise.netlist.statements import (
    Coupling,
    CurrentControlled,
    IndependentSource,
    Instance,
    ModelCard,
    NoiseCard,
    ParamCard,
    Passive,
    SubcktCard,
    VoltageControlled,
)
from netnoise.text.grammar import START_SYMBOLS, grammar_path, netlist_parser

REPO = Path(__file__).resolve().parent.parent
EXAMPLES = sorted((REPO / "circuits").glob("*.cir"))


def only(text: str):
    (statement,) = parse_statements(text).statements
    return statement


# ---- the grammar file and parser


def test_grammar_found_and_headed_by_start_symbols():
    path = grammar_path()
    assert path.name == "netlist.lark"
    header = path.read_text(encoding="utf-8").splitlines()[:12]
    for symbol in START_SYMBOLS:
        assert any(symbol in line for line in header if line.startswith("//"))


def test_parser_built_once():
    assert netlist_parser() is netlist_parser()


# ---- lines


def _parse_in_fresh_process(cache_home: Path) -> str:
    import subprocess
    import sys

    code = (
        "import netnoise; from netnoise.text.grammar import parser_cache_path; "
        "c = netnoise.parse_netlist('t\\nR1 a 0 1k\\nC1 a 0 {2p}\\n'); "
        "print(len(c.elements), parser_cache_path())"
    )
    env = {**os.environ, "XDG_CACHE_HOME": str(cache_home)}
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True)
    assert out.stderr == ""
    return out.stdout.split()


def test_parser_tables_are_cached_between_runs(tmp_path):
    count, path = _parse_in_fresh_process(tmp_path)
    cache = Path(path)
    assert count == "2" and cache.parent == tmp_path / "netnoise" and cache.is_file()
    first = cache.stat().st_mtime_ns
    assert _parse_in_fresh_process(tmp_path)[0] == "2"
    assert cache.stat().st_mtime_ns == first  # loaded, not rebuilt
    cache.write_bytes(b"not a parser")  # a broken file is rebuilt over, silently
    assert _parse_in_fresh_process(tmp_path)[0] == "2"
    assert cache.read_bytes() != b"not a parser"


def test_parser_works_without_a_usable_cache_folder(tmp_path):
    blocker = tmp_path / "a-file"
    blocker.write_text("")
    count, path = _parse_in_fresh_process(blocker)  # the cache folder cannot be made under a file
    assert count == "2" and path == "None"


def test_title_line_is_not_a_statement():
    parsed = parse_statements("R1 a b 1k is only a title\nR2 a 0 2k\n")
    assert parsed.title == "R1 a b 1k is only a title"
    (statement,) = parsed.statements
    assert statement.name == "R2"
    assert statement.loc.line == 2  # line numbers count the title line


def test_included_files_have_no_title():
    parsed = parse_statements("R1 a b 1k\n", has_title=False)
    assert parsed.title == ""
    assert [s.name for s in parsed.statements] == ["R1"]


def test_comments_are_skipped_and_columns_kept():
    text = "t\n* a comment line\n   * indented comment\nR1 a b 1k ; inline\nR2 a b 2k $ dollar comment\n"
    r1, r2 = parse_statements(text).statements
    assert r1.value.number == pytest.approx(1e3, rel=1e-12)  # k = 1e3 (SI)
    assert r2.value.number == pytest.approx(2e3, rel=1e-12)
    assert (r2.value.loc.line, r2.value.loc.column) == (5, 8)
    assert r2.value.loc.text == "R2 a b 2k $ dollar comment"  # the caret line shows the original


def test_dollar_inside_a_word_is_not_a_comment():
    statement = only("t\nR1 a$b 0 1k\n")
    assert statement.nodes[0].text == "a$b"


def test_continuation_lines():
    text = "t\nV1 in 0\n* a comment between\n\n+ DC 2\n   + AC 1 90\n"
    source = only(text)
    assert isinstance(source, IndependentSource)
    assert source.dc.number == pytest.approx(2.0, rel=1e-12)
    assert source.ac_magnitude.number == pytest.approx(1.0, rel=1e-12)
    assert source.ac_phase.number == pytest.approx(90.0, rel=1e-12)
    assert source.ac_phase.loc.line == 6


def test_end_stops_the_deck():
    parsed = parse_statements("t\nR1 a 0 1k\n.END\nthis is not a netlist line ((\n")
    assert [s.name for s in parsed.statements] == ["R1"]


def test_ends_is_not_end():
    parsed = parse_statements("t\n.subckt s a\nR1 a 0 1\n.ends\nR2 a 0 1\n")
    assert len(parsed.statements) == 4


def test_windows_line_endings():
    parsed = parse_statements("t\r\nR1 a 0 1k\r\nR2 a 0 2k\r\n")
    assert [s.name for s in parsed.statements] == ["R1", "R2"]
    assert parsed.statements[1].loc.text == "R2 a 0 2k"


def test_other_blanks_separate_fields():
    # no-break space, form feed and a lone carriage return count as blanks
    parsed = parse_statements("t\nR1\u00a0a b 1k\f\nV1 a 0 1\r\n\u00a0+ AC 1\n")
    r1, v1 = parsed.statements
    assert [w.text for w in r1.nodes] == ["a", "b"]
    assert v1.has_ac


def test_keywords_are_case_insensitive():
    parsed = parse_statements("t\n.PARAM A=1\n.SubCkt S a\n.ENDS s\nv1 a 0 dc 1 ac 2\n.NOISE V(a) v1\n")
    kinds = [type(s).__name__ for s in parsed.statements]
    assert kinds == ["ParamCard", "SubcktCard", "EndsCard", "IndependentSource", "NoiseCard"]
    assert parsed.statements[3].has_ac


# ---- field shapes


def test_passive_with_expression_value():
    statement = only("t\nC1 a b {2*cval}\n")
    assert isinstance(statement, Passive)
    assert statement.letter == "C"
    assert statement.value.number is None and statement.value.tree is not None


def test_sources_forms():
    plain = only("t\nV1 a 0 5\n")
    assert plain.dc.number == pytest.approx(5.0, rel=1e-12) and not plain.has_ac
    ac_only = only("t\nI1 a 0 AC\n")
    assert ac_only.has_ac and ac_only.ac_magnitude is None and ac_only.dc is None
    waveform = only("t\nV1 a 0 DC 0 SIN(0 1 1k) AC 1\n")
    assert waveform.waveform == "SIN"


def test_controlled_sources():
    e = only("t\nE1 o 0 p n 100\n")
    assert isinstance(e, VoltageControlled)
    assert [w.text for w in e.control_nodes] == ["p", "n"]
    h = only("t\nH1 o 0 Vsense 1k\n")
    assert isinstance(h, CurrentControlled) and h.control.text == "Vsense"
    k = only("t\nK1 L1 L2 0.9\n")
    assert isinstance(k, Coupling) and [w.text for w in k.inductors] == ["L1", "L2"]


def test_instance_and_subckt_header():
    x = only("t\nX1 a b rc r=1k c={cval}\n")
    assert isinstance(x, Instance)
    assert [w.text for w in x.nodes] == ["a", "b"] and x.subckt.text == "rc"
    assert [a.name for a in x.overrides] == ["r", "c"]
    s = only("t\n.subckt rc in out params: r=1k c=1n\n")
    assert isinstance(s, SubcktCard)
    assert [p.text for p in s.pins] == ["in", "out"]
    assert [a.name for a in s.defaults] == ["r", "c"]
    without_keyword = only("t\n.subckt rc in out r=1k\n")
    assert [a.name for a in without_keyword.defaults] == ["r"]


def test_param_card_bare_and_braced():
    card = only("t\n.param a=1 b = {a*2} c=a^2\n+ d=-a\n")
    assert isinstance(card, ParamCard)
    assert [a.name for a in card.assignments] == ["a", "b", "c", "d"]


def test_noise_card_forms():
    short = only("t\n.noise v(out)\n")
    assert isinstance(short, NoiseCard)
    assert short.output.text == "out" and short.reference is None and short.source is None
    full = only("t\n.noise V(out, ref) Vin oct 8 1 1meg\n")
    assert full.reference.text == "ref" and full.source.text == "Vin"
    assert full.sweep.kind == "oct"


def test_include_quoted_and_bare():
    assert only('t\n.include "lib/a b.inc"\n').path == "lib/a b.inc"
    assert only("t\n.include lib/a.inc\n").path == "lib/a.inc"


# ---- the shipped examples


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_examples_parse_cleanly(path):
    circuit = load_netlist(path)
    assert circuit.title
    assert circuit.elements
    assert circuit.noise_card is not None
    assert circuit.notices == ()
    assert circuit.source_file == str(path)
    again = parse_netlist(path.read_text(encoding="utf-8"), filename=str(path))
    assert again.elements == circuit.elements


def test_examples_exist():
    names = {p.name for p in EXAMPLES}
    assert {"adc_antialias.cir", "sample_hold.cir", "bridge_amp.cir", "lc_filter.cir", "hier_preamp.cir"} <= names
    assert any(load_netlist(p).temperature_celsius is not None for p in EXAMPLES)


def test_noise_card_without_source_before_sweep():
    # element names start with their letter, so 'dec' here is the sweep, not a source
    from netnoise.netlist import parse_netlist

    circuit = parse_netlist("rc\nR1 out 0 1k\nC1 out 0 1n\n.noise v(out) dec 10 1 1meg\n.end\n")
    card = circuit.noise_card
    assert card.input_source is None
    assert (card.sweep.kind, card.sweep.points, card.sweep.start, card.sweep.stop) == ("dec", 10, 1.0, 1e6)


# ---- runs of plain words (one token) keep every word's place


def test_words_in_a_run_keep_their_columns():
    r1 = only("t\nR1   a\tbb  10k\n")
    assert [(w.text, w.loc.column) for w in r1.nodes] == [("a", 6), ("bb", 8)]
    assert r1.value.text == "10k" and r1.value.loc.column == 12
    assert r1.value.loc.text == "R1   a\tbb  10k"


def test_a_word_before_equals_or_parenthesis_is_not_in_the_run():
    x = only("t\nX1 a b rc r =1k c= {2}\n")
    assert [w.text for w in x.nodes] == ["a", "b"] and x.subckt.text == "rc"
    assert [(a.name, a.loc.column) for a in x.overrides] == [("r", 11), ("c", 17)]
    v = only("t\nV1 a 0 DC 1 SIN (0 1 1k) AC 1\n")
    assert v.waveform == "SIN" and v.has_ac


def test_plain_lines_read_as_the_general_form_does():
    # a line of plain words is one token (PLAIN_LINE) with its own code path; the same
    # elements written with a braced value take the general path: same statements
    plain = parse_statements("t\nR1 a b 1k\nC1 b 0 2p\nL1 b c 3u\nV1 a 0 DC 1 AC 1\nR2 c 0 4k quiet\n")
    braced = parse_statements("t\nR1 a b {1k}\nC1 b 0 {2p}\nL1 b c {3u}\nV1 a 0 DC {1} AC 1\nR2 c 0 {4k} quiet\n")
    assert [type(s) for s in plain.statements] == [type(s) for s in braced.statements]
    for p, b in zip(plain.statements, braced.statements):
        assert p.name == b.name and (p.loc.line, p.loc.column) == (b.loc.line, b.loc.column)
    r2 = plain.statements[-1]
    assert r2.quiet and [w.text for w in r2.nodes] == ["c", "0"]


def test_a_plain_line_continued_after_blank_and_comment_lines():
    # the whole-line token must not swallow a line a '+' continues, however far below
    r1 = only("t\nR1 a b\n* the value follows\n\n   \n+ 1k\n")
    assert r1.value.number == pytest.approx(1e3, rel=1e-12)
    assert (r1.value.loc.line, r1.value.loc.column) == (6, 3)


def test_errors_in_plain_lines_point_at_the_word():
    from netnoise.errors import NetlistError

    with pytest.raises(NetlistError) as bad_value:
        parse_statements("t\nR1 a b\t1x\n")
    assert (bad_value.value.location.line, bad_value.value.location.column) == (2, 8)
    with pytest.raises(NetlistError) as missing:
        parse_statements("t\nC7 a\n\nR1 a 0 1k\n")
    assert "C7 is missing its second node" in str(missing.value)
    assert (missing.value.location.line, missing.value.location.column) == (2, 5)
    with pytest.raises(NetlistError) as letter:
        parse_statements("t\nZ1 c b e\n")
    assert "MESFETs are not supported" in str(letter.value)


# ---- resistor options (issue 3)


def test_resistor_options_any_order():
    r = only("t\nR1 a b 10k ni=-20 temp=85\n")
    assert isinstance(r, Passive)
    assert r.option("ni").number == pytest.approx(-20.0, rel=1e-12)
    assert r.option("temp").number == pytest.approx(85.0, rel=1e-12)
    assert not r.quiet
    load = only("t\nRload out 0 1meg QUIET\n")
    assert load.quiet and load.option("temp") is None and load.option("ni") is None
    braced = only("t\nR2 a 0 1k temp={t0+10} quiet\n")
    assert braced.quiet and braced.option("temp").tree is not None


# ---- source noise and shot (issue 3)


def test_source_noise_fields():
    v = only("t\nV1 a 0 DC 1 AC 1 noise=4n corner=10 slope=1.5\n")
    assert isinstance(v, IndependentSource)
    assert v.dc.number == pytest.approx(1.0, rel=1e-12) and v.has_ac
    assert v.noise.number == pytest.approx(4e-9, rel=1e-12)  # n = 1e-9 (SI)
    assert v.corner.number == pytest.approx(10.0, rel=1e-12)
    assert v.slope.number == pytest.approx(1.5, rel=1e-12)
    assert not v.shot
    i = only("t\nIph 0 in DC 2u AC 1 shot\n")
    assert i.shot and i.noise is None and i.ac_magnitude.number == pytest.approx(1.0, rel=1e-12)
    before = only("t\nI2 a 0 noise={2*in0} 1m\n")
    assert before.noise.tree is not None and before.dc.number == pytest.approx(1e-3, rel=1e-12)


# ---- .model cards (issue 3)


def test_model_card_forms():
    spaced = only("t\n.model LNA1 opamp (en=4n en_corner=100 in=0.5p gbw=10meg)\n")
    assert isinstance(spaced, ModelCard)
    assert spaced.name.text == "LNA1" and spaced.kind == "opamp"
    assert [a.name for a in spaced.params] == ["en", "en_corner", "in", "gbw"]
    bare = only("t\n.MODEL lna2 OPAMP en=4n gbw={f0*10}\n")
    assert [a.name for a in bare.params] == ["en", "gbw"] and bare.params[1].value.tree is not None
    glued = only("t\n.model lna3 opamp(aol=1e5, gbw=1meg)\n")
    assert [a.name for a in glued.params] == ["aol", "gbw"]
    continued = only("t\n.model lna4 opamp (en=1n\n+ in=1p\n+ rout=50)\n")
    assert [a.name for a in continued.params] == ["en", "in", "rout"]
    assert continued.params[2].loc.line == 4
    empty = only("t\n.model lna5 opamp\n")
    assert empty.params == ()


def test_model_parameter_names_are_ours():
    assert list(OPAMP_PARAMS) == ["en", "en_corner", "in", "in_corner", "aol", "gbw", "fp2", "cin", "cdiff", "rout"]


def test_amplifier_instance_is_an_instance_line():
    x = only("t\nXu1 inp inn out LNA1 en=3n gbw=20meg\n")
    assert isinstance(x, Instance)
    assert [w.text for w in x.nodes] == ["inp", "inn", "out"] and x.subckt.text == "LNA1"
    assert [a.name for a in x.overrides] == ["en", "gbw"]

"""Notes are structured: a code, its data and a sentence; only the command line
turns them into advice about its options."""

from __future__ import annotations

import json

import pytest

import netnoise
from netnoise.cli import ADVICE, main
from netnoise.results.notes import Note

RC = "rc\n.options reltol=1e-4\nR1 a 0 1k\nC1 a 0 1n\n.end\n"


def _codes(result):
    return [n.code for n in result.notes]


def test_notes_carry_codes_and_data_and_name_no_option():
    result = netnoise.analyze(netnoise.parse_netlist(RC), output="a")
    assert _codes(result)[:3] == ["netlist", "band-default", "temperature-default"]
    temperature = next(n for n in result.notes if n.code == "temperature-default")
    assert temperature.data["temperature_K"] == pytest.approx(300.15, rel=1e-12)
    assert all(isinstance(n, Note) and "--" not in n.text for n in result.notes)
    assert "--temp" not in netnoise.format_report(result)  # the API's report gives no command-line advice


def test_the_command_line_adds_its_advice_and_json_keeps_the_structure(tmp_path, capsys):
    path = tmp_path / "rc.cir"
    path.write_text(RC)
    assert main(["analyze", str(path), "--out", "a", "--json", "-"]) == 0
    captured = capsys.readouterr()
    data = json.loads(captured.out)
    notes = {n["code"]: n for n in data["notes"]}
    assert set(notes["band-default"]) == {"code", "text", "data"}
    assert notes["band-default"]["data"] == {"low_Hz": 0.0, "high_Hz": None}  # infinity as null
    assert f"({ADVICE['temperature-default']})" in captured.err  # the report, on standard error with --json -


def test_a_plain_sentence_given_to_a_result_becomes_a_note():
    import _output_samples as samples

    result = samples.resistors()
    assert result.notes[0] == Note("other", "temperature taken from the netlist")
    assert str(result.notes[0]) == "temperature taken from the netlist"

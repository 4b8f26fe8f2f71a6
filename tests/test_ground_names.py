"""Ground is one node, whatever its spelling: 0, gnd, GND, Gnd (one canonical name, "0")."""

from __future__ import annotations

import json

import pytest

from netnoise import parse_netlist
from netnoise.cli import main
from netnoise.constants import GROUND, canonical_node, is_ground
from netnoise.engine.analysis import analyze
from netnoise.errors import UsageError

NETLIST = "divider\nV1 in 0 ac 1\nR1 in out 1k\nR2 out GND 1k\n.end\n"


@pytest.mark.parametrize("spelling", ["0", "gnd", "GND", "Gnd"])
def test_every_spelling_is_the_one_ground(spelling):
    assert canonical_node(spelling) == GROUND and is_ground(spelling)


@pytest.mark.parametrize("reference", ["0", "gnd", "GND", "Gnd"])
def test_reference_spelled_any_way_is_ground_in_the_result(reference):
    result = analyze(parse_netlist(NETLIST), output="OUT", reference=reference, band=(1.0, 1e3))
    plain = analyze(parse_netlist(NETLIST), output="out", band=(1.0, 1e3))
    assert result.reference_node == "0" and result.output_node == "out"
    assert result.total_rms == pytest.approx(plain.total_rms, rel=1e-12)


@pytest.mark.parametrize("output", ["0", "gnd", "GND"])
def test_ground_as_the_output_is_refused_alike(output):
    with pytest.raises(UsageError, match="same"):
        analyze(parse_netlist(NETLIST), output=output, band=(1.0, 1e3))


def test_cli_ref_GND_writes_ref_0(tmp_path, capsys):
    path = tmp_path / "d.cir"
    path.write_text(NETLIST)
    assert main(["analyze", str(path), "--out", "out", "--ref", "GND", "--band", "1", "1k", "--json", "-"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["output"] == {"node": "out", "ref": "0"}
    assert main(["analyze", str(path), "--out", "gnd", "--band", "1", "1k"]) == 2
    assert main(["analyze", str(path), "--out", "0", "--band", "1", "1k"]) == 2

"""Circuits that read fine but cannot be analysed: one table, each case run
through the command line, asserting the exit status, that the message names
the element or node, and that no traceback is shown (issue: hard inputs)."""

from __future__ import annotations

import pytest

from netnoise.cli import main

# (case, netlist body after the title line, extra CLI args, exit status, fragments the message must contain)
CASES = [
    ("no ground", "R1 a b 1k\nC1 a b 1n\n", ["--out", "a"], 1, ["ground", "node 0"]),
    (
        "floating node",
        "R1 a 0 1k\nC1 a mid 1n\nC2 mid 0 1n\n",
        ["--out", "a", "--band", "1", "1k"],
        1,
        ["mid", "no DC path"],
    ),
    (
        "current-source cut-set",
        "I1 0 a DC 1m\nI2 a b DC 1m\nR1 b 0 1k\n",
        ["--out", "b", "--band", "1", "1k"],
        1,
        ["a", "no DC path", "current sources"],
    ),
    (
        "unconnected part",
        "R1 a 0 1k\nR2 x y 1k\nC1 x y 1n\n",
        ["--out", "a", "--band", "1", "1k"],
        1,
        ["not connected", "x"],
    ),
    (
        "voltage-source loop",
        "V1 a 0 DC 1\nV2 a 0 DC 2\nR1 a 0 1k\n",
        ["--out", "a", "--band", "1", "1k"],
        1,
        ["V2", "loop"],
    ),
    (
        "inductor across a source",
        "V1 a 0 DC 1\nL1 a 0 1m\nR1 a 0 1k\n",
        ["--out", "a", "--band", "1", "1k"],
        1,
        ["L1", "loop"],
    ),
    (
        "zero inductance loop",
        "L1 a 0 0\nL2 a 0 1u\nR1 a 0 1k\n",
        ["--out", "a", "--band", "1", "1k"],
        1,
        ["L2", "loop"],
    ),
    (
        "zero capacitance leaves a node floating",
        "R1 a 0 1k\nC1 a b 0\nR2 b c 1k\nC2 c 0 0\n",
        ["--out", "a", "--band", "1", "1k"],
        1,
        ["no DC path"],
    ),
    (
        "zero resistance",
        "R1 a 0 0\nC1 a 0 1n\n",
        ["--out", "a", "--band", "1", "1k"],
        1,
        ["R1", "zero resistance", "thermal noise"],
    ),
    (
        "negative resistance",
        "R1 a 0 -1k\nC1 a 0 1n\n",
        ["--out", "a", "--band", "1", "1k"],
        1,
        ["R1", "negative resistance", "Thermal noise"],
    ),
    (
        "missing output node",
        "R1 vout 0 1k\nC1 vout 0 1n\n",
        ["--out", "vuot", "--band", "1", "1k"],
        1,
        ["vuot", "did you mean", "vout"],
    ),
    (
        "missing input source",
        "Vin in 0 AC 1\nR1 in 0 1k\n",
        ["--out", "in", "--input", "Vni", "--band", "1", "1k"],
        1,
        ["Vni", "Vin"],
    ),
    (
        "input source that is not a source",
        "Vin in 0 AC 1\nR1 in 0 1k\n",
        ["--out", "in", "--input", "R1", "--band", "1", "1k"],
        1,
        ["R1", "V or I source"],
    ),
    (
        "white noise unbounded to infinity",
        "R1 a 0 1k\nR2 a b 1k\nR3 b 0 1k\n",
        ["--out", "b", "--band", "0", "inf"],
        1,
        ["unbounded", "R", "--band"],
    ),
    # an LC tank read through a buffer: nothing damps it
    (
        "lossless resonance to infinity",
        "L1 a 0 1u\nC1 a 0 1n\nE1 b 0 a 0 1\nR1 b c 1k\nC2 c 0 1n\n",
        ["--out", "c", "--band", "0", "inf"],
        1,
        ["lossless", "Hz"],
    ),
    # a lossless tank resonating exactly on a grid frequency (1 kHz) makes the matrix singular there
    (
        "lossless resonance on a grid point",
        "L1 a 0 {1/((2*pi*1k)**2*1u)}\nC1 a 0 1u\nE1 b 0 a 0 1\nR1 b 0 1k\n",
        ["--out", "b", "--band", "100", "10k", "--points", "20"],
        1,
        ["singular", "1000 Hz", "loss"],
    ),
    ("band low above high", "R1 a 0 1k\n", ["--out", "a", "--band", "10k", "1k"], 2, ["band", "above"]),
    ("negative band edge", "R1 a 0 1k\n", ["--out", "a", "--band", "-1", "1k"], 2, ["band", "0"]),
    (
        "temperature below absolute zero",
        "R1 a 0 1k\n",
        ["--out", "a", "--band", "1", "1k", "--temp", "-300"],
        2,
        ["absolute zero"],
    ),
    ("no output at all", "R1 a 0 1k\n", [], 2, ["--out", ".noise"]),
    (
        "output equals reference",
        "R1 a 0 1k\nR2 a b 1k\n",
        ["--out", "a", "--ref", "a", "--band", "1", "2"],
        2,
        ["same"],
    ),
    (
        "source resistor that is not a resistor",
        "V1 a 0 AC 1\nR1 a b 1k\nC1 b 0 1n\n",
        ["--out", "b", "--band", "1", "1k", "--source-resistor", "C1"],
        2,
        ["C1", "not a resistor"],
    ),
    (
        "1/f noise integrated from 0 Hz",
        "V1 a 0 AC 1 noise=10n corner=10\nR1 a b 1k\nC1 b 0 1n\n",
        ["--out", "b", "--band", "0", "1k"],
        1,
        ["1/f", "0 Hz", "--band"],
    ),
]


@pytest.mark.parametrize("case, body, args, status, fragments", CASES, ids=[c[0] for c in CASES])
def test_circuit_problem_gets_one_clear_message(tmp_path, capsys, case, body, args, status, fragments):
    path = tmp_path / "case.cir"
    path.write_text(f"{case}\n{body}.end\n", encoding="utf-8")
    assert main(["analyze", str(path), *args]) == status
    captured = capsys.readouterr()
    err = captured.err
    assert "Traceback" not in err and "Traceback" not in captured.out
    for fragment in fragments:
        assert fragment in err, f"{fragment!r} missing from: {err}"
    assert "nan" not in captured.out.lower()


def test_nodes_cut_off_from_ground_found_alike_by_union_find_and_by_the_graph_routine(monkeypatch):
    # the small-circuit union-find and the large-circuit scipy.sparse.csgraph branch of the same
    # check, on one random graph, against a breadth-first search written here (reference computation)
    import random

    from netnoise.circuit import topology

    rng = random.Random(5)
    nodes = tuple(f"n{i}" for i in range(300))
    edges = [(rng.choice(nodes + ("0",)), rng.choice(nodes)) for _ in range(260)]
    reach, todo = {"0"}, ["0"]
    while todo:
        here = todo.pop()
        for a, b in edges:
            for x, y in ((a, b), (b, a)):
                if x == here and y not in reach:
                    reach.add(y)
                    todo.append(y)
    expected = [node for node in nodes if node not in reach]
    assert expected  # the graph does leave some nodes apart
    assert topology._cut_off_from_ground(nodes, edges) == expected
    monkeypatch.setattr(topology, "_SMALL_GRAPH", 0)
    assert topology._cut_off_from_ground(nodes, edges) == expected

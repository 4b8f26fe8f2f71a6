"""R and C members stamped, checked and given noise in batches: the same matrices, sources and
messages as one element at a time (the invented circuits are ours)."""

from __future__ import annotations

import numpy as np
import pytest

from netnoise.circuit.elements.capacitor import Capacitor
from netnoise.circuit.elements.resistor import Resistor
from netnoise.circuit.topology import check_element_values
from netnoise.constants import BOLTZMANN
from netnoise.engine.mna import assemble
from netnoise.engine.noise_sources import collect_noise_sources
from netnoise.errors import CircuitError
from netnoise.netlist.load import parse_netlist

BODY = "R1 a 0 1k\nR2 a b 2.2k m=2\nR3 b c 470 tc1=1m\nC1 b 0 1n m=3\nC2 c a 10p\nR4 c 0 10k\n"


def test_batched_stamps_are_the_textbook_two_terminal_stamps():
    # the two-terminal stamp (common practice in nodal analysis): +y on both diagonals, -y off them,
    # ground rows left out; written here one element at a time as the reference
    circuit = parse_netlist(f"batches\n{BODY}.end\n").at_temperature(60.0)
    system = assemble(circuit)
    expected = {"G": np.zeros((system.size, system.size)), "C": np.zeros((system.size, system.size))}
    for element in circuit.elements:
        if isinstance(element, Resistor):
            matrix, y = expected["G"], 1.0 / element.effective_resistance
        else:
            assert isinstance(element, Capacitor)
            matrix, y = expected["C"], element.effective_capacitance
        a, b = (system.node_row(node) for node in element.nodes)
        for r, c, v in ((a, a, y), (b, b, y), (a, b, -y), (b, a, -y)):
            if r >= 0 and c >= 0:
                matrix[r, c] += v
    assert np.array_equal(system.G.toarray(), expected["G"])
    assert np.array_equal(system.C.toarray(), expected["C"])


def test_node_rows_gives_ground_as_minus_one_and_refuses_a_stray_name():
    system = assemble(parse_netlist(f"batches\n{BODY}.end\n"))
    rows = system.stamps.node_rows(["b", "0", "a"])
    assert rows.tolist() == [system.node_row("b"), -1, system.node_row("a")]
    with pytest.raises(KeyError):
        system.stamps.node_rows(["a", "nowhere"])


@pytest.mark.parametrize(
    "body, named, words",
    [
        # the first refused member in netlist order is the one named, as one at a time
        ("R1 a 0 1k\nR2 a b 1e70\nR3 b 0 1e-70\n", "R2", "outside the range"),
        ("R1 a 0 1k\nR2 a b 100 tc1=-1\nR3 b 0 1e70\n", "R2", "temperature coefficients"),
        ("R1 a 0 1k\nC1 a b 1e70\nC2 b 0 -1n\nR2 b 0 1k\n", "C1", "outside the range"),
        ("R1 a 0 1k\nC1 a b 1n\nC2 b 0 -1n\nR2 b 0 1k\n", "C2", "negative capacitance"),
    ],
)
def test_batched_value_checks_name_the_first_refused_member(body, named, words):
    circuit = parse_netlist(f"checks\n{body}.end\n").at_temperature(200.0)
    with pytest.raises(CircuitError) as caught:
        check_element_values(circuit)
    assert str(caught.value).startswith(f"{named}:") and words in str(caught.value)


@pytest.mark.parametrize(
    "body, named, words",
    [
        ("R1 a 0 1k\nR2 a b 0\nR3 b 0 -5\n", "R2", "zero resistance"),
        ("R1 a 0 1k\nR2 a b -5\nR3 b 0 0\n", "R2", "negative resistance"),
    ],
)
def test_batched_stamp_names_the_first_resistance_it_cannot_stamp(body, named, words):
    with pytest.raises(CircuitError) as caught:
        assemble(parse_netlist(f"stamps\n{body}.end\n"))
    assert str(caught.value).startswith(f"{named}:") and words in str(caught.value)


def test_thermal_sources_keep_their_rows_and_4kT_over_R():
    # 4kT/R, Johnson 1928 and Nyquist 1928; a resistor to ground injects into one row only
    circuit = parse_netlist(f"noise\n{BODY}.end\n")
    system = assemble(circuit)
    sources = collect_noise_sources(system, 300.0)
    assert [s.name for s in sources.sources] == ["R1", "R2", "R3", "R4"]
    a, b, c = (system.node_row(node) for node in "abc")
    assert [s.injection for s in sources.sources] == [
        ((a, 1.0),),
        ((a, 1.0), (b, -1.0)),
        ((b, 1.0), (c, -1.0)),
        ((c, 1.0),),
    ]
    resistances = np.array([1e3, 2.2e3 / 2, 470.0, 10e3])
    assert np.allclose(sources.white_density, 4 * BOLTZMANN * 300.0 / resistances, rtol=1e-15, atol=0.0)
    dense = sources.injection.toarray()
    for k, source in enumerate(sources.sources):
        column = np.zeros(system.size)
        for row, coefficient in source.injection:
            column[row] += coefficient
        assert np.array_equal(dense[:, k], column)

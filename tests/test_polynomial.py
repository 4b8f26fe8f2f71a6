"""Polynomial controlled sources (POLY) against direct evaluation and independent solves.

Every reference value names its source.  Tolerances are relative.
"""

from __future__ import annotations

import pytest
from scipy.optimize import brentq

from netnoise.engine.analysis import analyze
from netnoise.engine.dc import operating_point
from netnoise.netlist.load import parse_netlist


def _net(body: str) -> str:
    return "poly test\n" + body + "\n.end\n"


def test_two_dimensional_poly_follows_the_spice2_term_order():
    # P = p0 + p1·a + p2·b + p3·a² + p4·a·b + p5·b² (the SPICE2 POLY(2) term order, from memory),
    # evaluated by hand; the small-signal gain from a is ∂P/∂a = p1 + 2p3·a + p4·b.
    a, b = 0.5, 2.0
    circuit = parse_netlist(
        _net(f"V1 a 0 DC {a} AC 1\nV2 b 0 {b}\nE1 o 0 POLY(2) a 0 b 0 1 2 3 0.5 0.25 0.125\nR1 o 0 1k")
    )
    op = operating_point(circuit)
    assert op.node_voltages["o"] == pytest.approx(
        1 + 2 * a + 3 * b + 0.5 * a * a + 0.25 * a * b + 0.125 * b * b, rel=1e-12
    )
    result = analyze(circuit, output="o", input_source="V1", band=(1.0, 10.0))
    assert result.gain_at_max == pytest.approx(2 + 2 * 0.5 * a + 0.25 * b, rel=1e-9)


def test_current_controlled_poly_and_the_lone_coefficient():
    # F: i = 1000·i(VM)²; H with one coefficient: v = 5·i(VM) (a lone coefficient is p1, from memory).
    circuit = parse_netlist(
        _net("VS x 0 1\nRS x y 1k\nVM y 0 0\nF1 0 o3 POLY(1) VM 0 0 1000\nR3 o3 0 1\nH1 o4 0 POLY(1) VM 5\nR4 o4 0 1k")
    )
    op = operating_point(circuit)
    assert op.node_voltages["o3"] == pytest.approx(1000 * 1e-3**2 * 1.0, rel=1e-12)
    assert op.node_voltages["o4"] == pytest.approx(5 * 1e-3, rel=1e-12)


def test_poly_in_a_loop_is_solved_with_the_circuit():
    # v(o) = −v(a)² with v(a) = (1 + v(o))/2 (the midpoint of a divider from 1 V to o):
    # a² + 2a − 1 = 0, solved by scipy.optimize.brentq; the loop's small-signal gain from the 1 V
    # source is checked against a central difference of two operating points (independent).
    def f(a):
        return 2 * a - (1 - a * a)

    a = brentq(f, 0.0, 1.0)
    text = "V1 s 0 DC {v} AC 1\nR1 s a 1k\nR2 a o 1k\nE1 o 0 POLY(1) a 0 0 0 -1"
    op = operating_point(parse_netlist(_net(text.format(v=1.0))))
    assert op.node_voltages["a"] == pytest.approx(a, rel=1e-9)
    step = 1e-5
    up = operating_point(parse_netlist(_net(text.format(v=1.0 + step)))).node_voltages["o"]
    down = operating_point(parse_netlist(_net(text.format(v=1.0 - step)))).node_voltages["o"]
    result = analyze(parse_netlist(_net(text.format(v=1.0))), output="o", input_source="V1", band=(1.0, 10.0))
    assert result.gain_at_max == pytest.approx(abs(up - down) / (2 * step), rel=1e-6)  # |H|

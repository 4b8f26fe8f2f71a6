"""Values that can change: where each value came from, new values without
reading the text again, and an assembled system refilled in place."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants

import netnoise
from netnoise import parse_netlist
from netnoise.engine.analysis import analyze, prepare
from netnoise.engine.mna import assemble
from netnoise.errors import CircuitError, UsageError

K_B = constants.Boltzmann

NETLIST = """values
.param rbase=1k cload=10p
.subckt stage in out params: rs=100
R1 in out {rs}
C1 out 0 {cload}
.ends
V1 in 0 ac 1
R1 in a 4.7k
R2 a 0 {rbase}
R3 a b {2*rbase}
X1 b out stage rs=220
X2 out o2 stage
R4 o2 0 1meg
.noise v(o2) V1
.end
"""


def test_every_value_remembers_where_it_came_from():
    circuit = parse_netlist(NETLIST)
    assert circuit.value_origin("R1").kind == "literal" and circuit.value_origin("R1").text == "4.7k"
    r2 = circuit.value_origin("R2")
    assert r2.kind == "param" and r2.parameters == ("rbase",) and r2.text == "{rbase}"
    r3 = circuit.value_origin("R3")
    assert r3.kind == "expression" and r3.parameters == ("rbase",) and r3.text == "{2*rbase}"
    assert circuit.value_origin("X1.R1").kind == "override"  # rs=220 written on the X line
    assert circuit.value_origin("X2.R1").kind == "param"  # the .subckt default
    assert circuit.parameters == {"rbase": 1e3, "cload": 10e-12}


def test_with_values_replaces_primary_values_and_keeps_the_original():
    circuit = parse_netlist(NETLIST)
    changed = circuit.with_values({"r2": 2.2e3, "X1.C1": 22e-12})
    assert changed.element("R2").resistance == 2.2e3
    assert changed.element("X1.C1").capacitance == 22e-12
    assert circuit.element("R2").resistance == 1e3  # immutable: the original is untouched
    assert changed.value_origin("R2").kind == "changed"
    with pytest.raises(UsageError, match="did you mean r2"):
        circuit.with_values({"R22": 1.0})


def test_with_params_evaluates_what_depends_on_them_without_parsing(monkeypatch):
    circuit = parse_netlist(NETLIST)
    import netnoise.netlist.parser as parser

    def no_parsing(*args, **kwargs):  # the statements already read are used again
        raise AssertionError("the text was parsed again")

    monkeypatch.setattr(parser, "parse_statements", no_parsing)
    changed = circuit.with_params({"rbase": 3e3, "CLOAD": 1e-12})
    assert changed.element("R2").resistance == pytest.approx(3e3, rel=1e-15)
    assert changed.element("R3").resistance == pytest.approx(6e3, rel=1e-15)
    assert changed.element("X2.C1").capacitance == pytest.approx(1e-12, rel=1e-15)
    assert changed.element("R1").resistance == pytest.approx(4.7e3, rel=1e-15)
    with pytest.raises(UsageError, match="rbase"):
        circuit.with_params({"nosuch": 1.0})


def test_a_refilled_system_equals_a_fresh_assembly():
    circuit = parse_netlist(NETLIST)
    changed = circuit.with_params({"rbase": 3e3, "cload": 1e-12})
    refilled = assemble(circuit).refilled(changed)
    fresh = assemble(changed)
    assert refilled.unknowns == fresh.unknowns
    np.testing.assert_array_equal(refilled.G.toarray(), fresh.G.toarray())
    np.testing.assert_array_equal(refilled.C.toarray(), fresh.C.toarray())
    other = parse_netlist("other\nR1 a 0 1k\nC1 a 0 1n\n")
    with pytest.raises(CircuitError, match="structure changed"):
        assemble(circuit).refilled(other)


def test_prepared_rerun_equals_a_fresh_analysis():
    circuit = parse_netlist(NETLIST)
    prepared = prepare(circuit, band=(10.0, 1e6))
    rerun = prepared.with_values({"R2": 2.2e3}).analyze()
    fresh = analyze(circuit.with_values({"R2": 2.2e3}), band=(10.0, 1e6))
    np.testing.assert_allclose(rerun.source_variance, fresh.source_variance, rtol=1e-12)
    np.testing.assert_allclose(rerun.source_density, fresh.source_density, rtol=1e-12)
    assert rerun.total_rms != pytest.approx(prepared.analyze().total_rms, rel=1e-6)  # the change shows


@pytest.mark.parametrize("cap", [1e-12, 4.7e-12, 100e-12])
def test_rc_rerun_follows_kT_over_C(cap):
    # Equipartition: kT/C on an RC node whatever R (Johnson 1928; Nyquist 1928).
    prepared = prepare(
        parse_netlist("rc\nR1 a 0 10k\nC1 a 0 1p\n"), output="a", band=(0.0, math.inf), temperature_celsius=26.85
    )
    result = prepared.with_values({"C1": cap}).analyze()
    assert result.total_variance == pytest.approx(K_B * 300.0 / cap, rel=1e-9)


def test_public_api_exports_prepare():
    assert netnoise.prepare is prepare

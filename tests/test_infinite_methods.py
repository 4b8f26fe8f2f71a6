"""The ways of finding the total to infinite bandwidth: the symmetric eigen-solution against the QZ
path and against published results, what the symmetric method refuses (and that the QZ path then
gives the same answer as before), and the method each result says it used."""

from __future__ import annotations

import json
import math

import mpmath
import numpy as np
import pytest
import scipy.integrate
import scipy.linalg
from circuit_builders import C, E, L, R, V, circuit
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy import constants

from netnoise.circuit import Resistor
from netnoise.engine import analysis
from netnoise.engine import infinite as infinite_module
from netnoise.engine.analysis import analyze, prepare
from netnoise.engine.mna import assemble
from netnoise.engine.noise_sources import collect_noise_sources
from netnoise.engine.options import SolverOptions
from netnoise.engine.symmetric import (
    NotSymmetricDefinite,
    symmetric_pencil,
    symmetric_totals,
)
from netnoise.engine.total_variance import finite_poles_Hz, infinite_band_totals
from netnoise.errors import CircuitError
from netnoise.outputs.export import result_to_dict
from netnoise.outputs.labels import total_method_text
from netnoise.outputs.report import format_report
from netnoise.results.result import TOTAL_METHODS

QZ = SolverOptions(symmetric_limit=0)  # the symmetric path switched off: the QZ path as before
KELVIN = 300.0
KT = constants.Boltzmann * KELVIN


def _both(ckt, **kw):
    kw.setdefault("band", (0.0, math.inf))
    kw.setdefault("temperature_celsius", KELVIN - 273.15)
    return analyze(ckt, **kw), analyze(ckt, options=QZ, **kw)


def _quiet(name, a, b, value):
    return Resistor(name=name, nodes=(a, b), resistance=value, quiet=True)


# --- random RC networks: symmetric path against the QZ path --------------------------------
@st.composite
def rc_networks(draw):
    """A connected RC network: a spanning tree of resistors to ground, grounded capacitors on most
    nodes (some left without: the Schur complement), extra resistors and floating capacitors, and
    sometimes a voltage source driving the first node.  Values within two decades (R) and one (C):
    poles a few decades apart, where both exact methods hold 1e-9 (wider spreads: below)."""
    n = draw(st.integers(2, 7))
    nodes = [f"n{i}" for i in range(n)]
    values = st.floats(1e3, 1e5)
    caps = st.floats(1e-9, 1e-8)
    parts = []
    bare = set()
    for i, node in enumerate(nodes):
        parent = "0" if i == 0 else nodes[draw(st.integers(0, i - 1))]
        parts.append(R(f"Rt{i}", node, parent, draw(values)))
        if i == n - 1 or draw(st.integers(0, 3)):  # about one node in four without capacitance
            parts.append(C(f"Cg{i}", node, "0", draw(caps)))
        else:
            bare.add(node)
    for j in range(draw(st.integers(0, 5))):
        a, b = draw(st.sampled_from(nodes)), draw(st.sampled_from(nodes + ["0"]))
        if a != b:
            parts.append(R(f"Rx{j}", a, b, draw(values)))
            if a not in bare and b not in bare and draw(st.booleans()):
                parts.append(C(f"Cx{j}", a, b, draw(caps)))
    if draw(st.booleans()):
        parts.append(V("Vd", "drv", "0"))
        parts.append(R("Rd", "drv", nodes[0], draw(values)))
    return circuit(*parts), nodes, bare


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(rc_networks(), st.data())
def test_symmetric_path_matches_qz_per_source(network, data):
    # Reference: the QZ + Lyapunov path (scipy.linalg.ordqz / solve_continuous_lyapunov), the
    # general method for any circuit.  Every source whose share is above 1e-6 agrees to 1e-9;
    # smaller shares carry the rounding of the larger ones, in both methods.
    ckt, nodes, bare = network
    out = data.draw(st.sampled_from([x for x in nodes if x not in bare]))
    try:
        fast, slow = _both(ckt, output=out)
    except CircuitError as err:  # a source reaching the output unfiltered: refused by both
        with pytest.raises(CircuitError, match="unbounded"):
            analyze(ckt, output=out, band=(0.0, math.inf), options=QZ)
        assert "unbounded" in str(err)
        return
    assert fast.total_method == "exact-symmetric" and slow.total_method == "exact-qz"
    big = slow.shares > 1e-6
    assert fast.source_variance[big] == pytest.approx(slow.source_variance[big], rel=1e-9)
    assert fast.total_variance == pytest.approx(slow.total_variance, rel=1e-9)


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(2, 6), st.integers(0, 2**32 - 1))
def test_symmetric_path_meets_equipartition_to_its_stated_tolerance(n, seed):
    # Equipartition: a passive RC network in equilibrium has node-voltage covariance kT·C⁻¹
    # (C the nodal capacitance matrix; Reif, Fundamentals of Statistical and Thermal Physics),
    # C⁻¹ taken here in 40-digit arithmetic (mpmath).  Values spread over six decades of R and
    # four of C: poles up to ten decades apart.  The stated tolerance must hold.
    rng = np.random.default_rng(seed)
    nodes = [f"n{i}" for i in range(n)]
    parts, cap = [], mpmath.zeros(n, n)
    for i, node in enumerate(nodes):
        parent = "0" if i == 0 else nodes[int(rng.integers(0, i))]
        parts.append(R(f"Rt{i}", node, parent, 10 ** rng.uniform(0, 6)))
        value = 10 ** rng.uniform(-13, -9)
        parts.append(C(f"Cg{i}", node, "0", value))
        cap[i, i] += value
    for j in range(n // 2):
        a, b = (int(x) for x in rng.integers(0, n, 2))
        if a != b:
            value = 10 ** rng.uniform(-13, -9)
            parts.append(C(f"Cx{j}", nodes[a], nodes[b], value))
            cap[a, a] += value
            cap[b, b] += value
            cap[a, b] -= value
            cap[b, a] -= value
    mpmath.mp.dps = 40
    out = int(rng.integers(0, n))
    expected = KT * float(mpmath.inverse(cap)[out, out])
    res = analyze(circuit(*parts), output=nodes[out], band=(0.0, math.inf), temperature_celsius=KELVIN - 273.15)
    assert res.total_method == "exact-symmetric" and 1e-12 <= res.total_tolerance < 1e-3
    assert res.total_variance == pytest.approx(expected, rel=res.total_tolerance)


# --- published results --------------------------------------------------------------------
def test_one_rc_pole_gives_kT_over_C_and_noise_bandwidth_one_over_4RC():
    # kT/C (common practice: the kT/C noise of a sampled RC) and the noise bandwidth of one RC
    # pole, 1/(4RC) (common practice), both from the symmetric path.
    r, c = 4.7e3, 2.2e-9
    ckt = circuit(V("Vin", "in", "0"), R("R1", "in", "out", r), C("C1", "out", "0", c))
    fast, slow = _both(ckt, output="out", input_source="Vin")
    assert fast.total_method == "exact-symmetric"
    assert fast.total_variance == pytest.approx(KT / c, rel=1e-12)
    assert fast.gain_squared_integral == pytest.approx(1.0 / (4 * r * c), rel=1e-12)
    assert fast.enbw_Hz == pytest.approx(1.0 / (4 * r * c), rel=1e-9)
    assert fast.total_variance == pytest.approx(slow.total_variance, rel=1e-12)


def _ladder_transfer(resistors, capacitors, f):
    """|H(f)|² of an RC ladder driven by a voltage source, by a dense complex solve per
    frequency (numpy), for the scipy.integrate.quad reference."""
    n = len(resistors)
    y = np.zeros((n, n), dtype=complex)
    w = 2j * math.pi * f
    for i in range(n):
        y[i, i] += w * capacitors[i] + (1 / resistors[0] if i == 0 else 0.0)
        if i + 1 < n:
            g = 1 / resistors[i + 1]
            y[i, i] += g
            y[i + 1, i + 1] += g
            y[i, i + 1] -= g
            y[i + 1, i] -= g
    rhs = np.zeros(n, dtype=complex)
    rhs[0] = 1 / resistors[0]
    return abs(np.linalg.solve(y, rhs)[-1]) ** 2


def test_rc_ladder_signal_integral_against_quadrature():
    # Reference: scipy.integrate.quad of |H(f)|² (a general-purpose reference computation),
    # over [0, ∞) split at the poles' decade.
    resistors, capacitors = (1e3, 2.2e3, 4.7e3), (10e-9, 3.3e-9, 1e-9)
    parts = [V("Vin", "in", "0")]
    prev = "in"
    for i, (r, c) in enumerate(zip(resistors, capacitors)):
        parts += [R(f"R{i}", prev, f"n{i}", r), C(f"C{i}", f"n{i}", "0", c)]
        prev = f"n{i}"
    res = analyze(circuit(*parts), output=prev, input_source="Vin", band=(0.0, math.inf))
    assert res.total_method == "exact-symmetric"
    # up to 10 GHz: above it |H|² < (100 kHz / f)⁶ leaves less than 1e-25 of the integral
    edges = [0.0, *np.geomspace(1e2, 1e10, 17)]
    pieces = list(zip(edges[:-1], edges[1:]))
    reference = sum(
        scipy.integrate.quad(lambda f: _ladder_transfer(resistors, capacitors, f), a, b, epsabs=0, epsrel=1e-11)[0]
        for a, b in pieces
    )
    assert res.gain_squared_integral == pytest.approx(reference, rel=1e-9)


def test_voltage_source_and_floating_capacitors_meet_equipartition():
    # A voltage source holds its node at AC ground; the other nodes (with grounded and floating
    # capacitors) are in equilibrium: covariance kT·C⁻¹ over the free nodes (equipartition, Reif).
    # Values invented.
    ckt = circuit(
        V("V1", "s", "0"),
        R("R1", "s", "a", 1e3),
        R("R2", "a", "b", 10e3),
        R("R3", "b", "0", 47e3),
        C("Ca", "a", "0", 1e-9),
        C("Cb", "b", "0", 470e-12),
        C("Cab", "a", "b", 220e-12),
        C("Cbc", "b", "c", 100e-12),
        R("R4", "c", "0", 4.7e3),
        C("Cc", "c", "0", 330e-12),
    )
    cap = np.array(
        [
            [1e-9 + 220e-12, -220e-12, 0.0],
            [-220e-12, 470e-12 + 220e-12 + 100e-12, -100e-12],
            [0.0, -100e-12, 100e-12 + 330e-12],
        ]
    )
    inverse = np.linalg.inv(cap)
    for out, ref, e in (("b", "0", np.array([0, 1.0, 0])), ("a", "c", np.array([1.0, 0, -1.0]))):
        fast, slow = _both(ckt, output=out, reference=ref)
        assert fast.total_method == "exact-symmetric"
        assert fast.total_variance == pytest.approx(KT * e @ inverse @ e, rel=1e-9)
        assert fast.source_variance == pytest.approx(slow.source_variance, rel=1e-9)


def test_capacitance_free_nodes_are_eliminated_exactly():
    # Nodes m and k carry no capacitance (eliminated by the Schur complement); all the
    # capacitance is C1 at the output: the total is still kT/C (equipartition, common practice),
    # and the resistors share it by their conductance seen from the capacitor.
    ckt = circuit(
        V("V1", "s", "0"),
        R("R1", "s", "m", 1e3),
        R("R2", "m", "0", 3.3e3),
        R("R3", "m", "k", 2.2e3),
        R("R4", "k", "out", 680.0),
        R("R5", "k", "0", 10e3),
        C("C1", "out", "0", 4.7e-9),
    )
    prepared = prepare(ckt, output="out", band=(0.0, math.inf), temperature_celsius=KELVIN - 273.15)
    pencil = prepared.problem.symmetric()
    assert pencil is not None and pencil.algebraic.size == 4 and pencil.size == 1  # s, m, k, V1's branch
    fast = prepared.analyze()
    slow = analyze(ckt, output="out", band=(0.0, math.inf), temperature_celsius=KELVIN - 273.15, options=QZ)
    assert fast.total_method == "exact-symmetric"
    assert fast.total_variance == pytest.approx(KT / 4.7e-9, rel=1e-12)
    assert fast.source_variance == pytest.approx(slow.source_variance, rel=1e-9)


def test_inductors_alone_negated_pencil_noise_bandwidth():
    # An RL low-pass, τ = L/(R1+R2): noise bandwidth 1/(4τ) (common practice, as one RC pole)
    # and DC gain R2/(R1+R2), so R1's noise gives 4kTR1·(R2/Rt)²·Rt/(4L) at the output (R2 quiet).
    r1, r2, ind = 100.0, 330.0, 10e-6
    ckt = circuit(R("R1", "a", "0", r1), L("L1", "a", "out", ind), _quiet("R2", "out", "0", r2))
    fast, slow = _both(ckt, output="out")
    rt = r1 + r2
    assert fast.total_method == "exact-symmetric"
    assert fast.total_variance == pytest.approx(KT * r1 * r2**2 / (rt * ind), rel=1e-12)
    assert slow.total_variance == pytest.approx(fast.total_variance, rel=1e-9)


def test_poles_match_qz_poles():
    # Reference: the QZ pole magnitudes (scipy.linalg.eigvals of the pencil).
    parts = [V("Vin", "in", "0")]
    prev = "in"
    for i in range(12):
        parts += [R(f"R{i}", prev, f"n{i}", 1e3 * (1 + i)), C(f"C{i}", f"n{i}", "0", 1e-9 / (1 + i))]
        prev = f"n{i}"
    prepared = prepare(circuit(*parts), output=prev, band=(0.0, math.inf))
    system = prepared.system
    qz = np.sort(finite_poles_Hz(system.G.toarray(), system.C.toarray()))
    assert np.sort(prepared.problem.poles_Hz()) == pytest.approx(qz, rel=1e-9)


def test_rc_network_needs_no_qz(monkeypatch):
    # Poles for a finite band from 0 Hz, and the totals to infinity, without any QZ.
    def no_qz(*args, **kwargs):
        raise AssertionError("QZ run on a symmetric circuit")

    monkeypatch.setattr(analysis, "finite_scaled_eigenvalues", no_qz)
    monkeypatch.setattr(infinite_module, "infinite_band_totals", no_qz)
    ckt = circuit(V("Vin", "in", "0"), R("R1", "in", "a", 1e3), C("C1", "a", "0", 1e-9), R("R2", "a", "b", 1e3))
    ckt = circuit(*ckt.elements, C("C2", "b", "0", 1e-9))
    finite = analyze(ckt, output="b", band=(0.0, 1e6))
    infinite = analyze(ckt, output="b", band=(0.0, math.inf))
    assert finite.total_method == "quadrature" and infinite.total_method == "exact-symmetric"
    # equipartition (Reif): a and b each hold 1 nF to ground, the source holds "in": kT/C at b,
    # at the default 27 °C (300.15 K)
    assert infinite.total_variance == pytest.approx(constants.Boltzmann * 300.15 / 1e-9, rel=1e-9)
    assert finite.total_variance < infinite.total_variance


# --- what the symmetric method refuses, and the QZ path answering instead ------------------
def _pencil_of(ckt):
    return symmetric_pencil(assemble(ckt).G, assemble(ckt).C)


def test_refusals_name_their_reason():
    buffer = circuit(V("V1", "in", "0"), R("R1", "in", "a", 1e3), C("C1", "a", "0", 1e-9))
    buffer = circuit(*buffer.elements, E("E1", "b", "0", "a", "0", 1.0), R("R2", "b", "out", 1e3))
    buffer = circuit(*buffer.elements, C("C2", "out", "0", 1e-9))
    with pytest.raises(NotSymmetricDefinite, match="G is not symmetric"):
        _pencil_of(buffer)
    lc = circuit(R("R1", "a", "0", 50.0), L("L1", "a", "b", 1e-6), C("C1", "b", "0", 1e-9), R("R2", "b", "0", 50.0))
    with pytest.raises(NotSymmetricDefinite, match="not definite"):
        _pencil_of(lc)
    coupling = circuit(R("R1", "a", "0", 1e3), C("C1", "a", "b", 1e-9), R("R2", "b", "0", 1e3))
    with pytest.raises(NotSymmetricDefinite, match="not reaching ground"):
        _pencil_of(coupling)
    floating = circuit(
        V("V1", "a", "b"), C("Ca", "a", "0", 1e-9), C("Cb", "b", "0", 1e-9), R("R1", "a", "0", 1e3),
        R("R2", "b", "0", 1e3),
    )  # fmt: skip
    with pytest.raises(NotSymmetricDefinite, match="singular"):  # a floating source between capacitors' nodes
        _pencil_of(floating)


def test_unfiltered_source_is_refused_by_the_symmetric_method():
    # R2's noise at the output sees R2 ∥ R1 at any frequency: no roll-off (common practice)
    ckt = circuit(R("R1", "a", "out", 1e3), R("R2", "out", "0", 1e3), C("C1", "a", "0", 1e-9))
    system = assemble(ckt)
    sources = collect_noise_sources(system, KELVIN)
    out = system.node_pair_vector("out", "0")
    with pytest.raises(NotSymmetricDefinite, match="no roll-off"):
        symmetric_totals(symmetric_pencil(system.G, system.C), out, sources.injection, sources.white_density)
    qz = infinite_band_totals(
        system.G.toarray(), system.C.toarray(), out, sources.injection.toarray(), sources.white_density
    )
    assert np.isinf(qz.variance).any()
    with pytest.raises(CircuitError, match="unbounded"):
        analyze(ckt, output="out", band=(0.0, math.inf))


@pytest.mark.parametrize("name", ["buffer", "lc", "coupling"])
def test_refused_circuits_go_to_qz_with_unchanged_results(name):
    # The fallback: the same answer as with the symmetric path switched off.  Published checks
    # beside: a unity buffer copies kT/C of C1 and adds kT/C2 of R2 (common practice); an RLC
    # with the inductor's current as the only state path still meets equipartition, and so does
    # a coupling capacitor between two resistors, kT/C across it (Reif).
    if name == "buffer":
        ckt = circuit(V("V1", "in", "0"), R("R1", "in", "a", 1e3), C("C1", "a", "0", 1e-9))
        ckt = circuit(*ckt.elements, E("E1", "b", "0", "a", "0", 1.0), R("R2", "b", "out", 1e3))
        ckt = circuit(*ckt.elements, C("C2", "out", "0", 2.2e-9))
        output, reference = "out", "0"
        # R1 through both buffered poles: 4kTR1·∫|H1 H2|² df with ∫ = 1/(4(τ1+τ2)) (partial
        # fractions of 1/((1+ω²τ1²)(1+ω²τ2²)); from memory), τ1 = 1 µs, τ2 = 2.2 µs; R2 alone kT/C2
        expected = KT / 1e-9 * 1e-6 / (1e-6 + 2.2e-6) + KT / 2.2e-9
    elif name == "lc":
        ckt = circuit(
            R("R1", "a", "0", 50.0), L("L1", "a", "b", 1e-6), C("C1", "b", "0", 1e-9), R("R2", "b", "0", 50.0)
        )
        output, reference = "b", "0"
        expected = KT / 1e-9
    else:
        ckt = circuit(R("R1", "a", "0", 1e3), C("C1", "a", "b", 1e-9), R("R2", "b", "0", 2.2e3))
        output, reference = "a", "b"
        expected = KT / 1e-9
    fast, slow = _both(ckt, output=output, reference=reference)
    assert fast.total_method == "exact-qz" and slow.total_method == "exact-qz"
    assert fast.source_variance == pytest.approx(slow.source_variance, rel=1e-15)
    assert fast.total_variance == pytest.approx(expected, rel=1e-6)


def test_unstable_symmetric_circuit_is_refused_as_before():
    # A controlled conductance of −2/R on the capacitor's node (a VCCS from its own node, a
    # symmetric stamp) makes the net conductance −1/R: a pole at +1/(2πRC) (common practice).
    from netnoise.netlist.load import parse_netlist

    r, c = 1e3, 1e-9
    ckt = parse_netlist(f"t\nR1 a 0 {r!r}\nC1 a 0 {c!r}\nG1 a 0 a 0 {-2 / r!r}\n.end\n")
    assert _pencil_of(ckt).size == 1  # symmetric: the symmetric eigenvalues judge it, no QZ
    for band in ((0.0, math.inf), (0.0, 1e6)):
        with pytest.raises(CircuitError, match="unstable") as err:
            analyze(ckt, output="a", band=band)
        assert f"{1 / (2 * math.pi * r * c):.4g} Hz" in str(err.value)


def test_symmetric_limit_sends_large_circuits_elsewhere():
    # equipartition (Reif): three grounded 1 nF capacitors, output at the last: kT/C at 27 °C
    ckt = circuit(
        R("R1", "a", "0", 1e3), C("C1", "a", "0", 1e-9), R("R2", "a", "b", 1e3), C("C2", "b", "0", 1e-9),
        R("R3", "b", "c", 1e3), C("C3", "c", "0", 1e-9),
    )  # fmt: skip
    res = analyze(
        ckt, output="c", band=(0.0, math.inf), options=SolverOptions(symmetric_limit=0, exact_limit=0, lowrank=False)
    )
    assert res.total_method == "quadrature" and 0 < res.total_tolerance < 1e-3
    assert res.total_variance == pytest.approx(constants.Boltzmann * 300.15 / 1e-9, rel=1e-5)
    sym = analyze(ckt, output="c", band=(0.0, math.inf), options=SolverOptions(exact_limit=0))
    assert sym.total_method == "exact-symmetric"  # above the QZ limit, within the symmetric one


# --- method labels ------------------------------------------------------------------------
def test_every_method_has_words_and_keys():
    import _output_samples

    base = _output_samples.rc_unbounded()
    import dataclasses

    seen = set()
    for method, tolerance in (
        ("exact-symmetric", 1e-9),
        ("exact-qz", 1e-6),
        ("low-rank", 3e-7),
        ("quadrature", 2e-3),
        ("reduced-model", 5e-7),
    ):
        result = dataclasses.replace(base, total_method=method, total_tolerance=tolerance)
        text = format_report(result)
        line = next(x for x in text.splitlines() if "totals found by" in x)
        assert total_method_text(method, tolerance) in line
        seen.add(line)
        data = json.loads(json.dumps(result_to_dict(result)))
        assert data["total_method"] == method and data["total_tolerance"] == tolerance
    assert len(seen) == len(TOTAL_METHODS)
    assert "est. rel. error 3e-07" in total_method_text("low-rank", 3e-7)
    assert "exact" not in total_method_text("quadrature", 2e-3)
    with pytest.raises(ValueError, match="total_method"):
        dataclasses.replace(base, total_method="guessed")


def test_analysis_reports_how_its_totals_were_found():
    ckt = circuit(V("Vin", "in", "0"), R("R1", "in", "out", 1e3), C("C1", "out", "0", 1e-9))
    infinite = analyze(ckt, output="out", band=(0.0, math.inf))
    shifted = analyze(ckt, output="out", band=(10.0, math.inf))
    finite = analyze(ckt, output="out", band=(0.0, 1e5))
    assert infinite.total_method == "exact-symmetric"
    assert "totals found by" in format_report(infinite) and "eigen-solution" in format_report(infinite)
    assert shifted.total_method == "quadrature" and shifted.total_tolerance == shifted.integration_rel_error
    assert finite.total_method == "quadrature" and finite.total_tolerance == finite.integration_rel_error
    assert "(exact)" not in format_report(infinite)
    defaulted = analyze(ckt, output="out")
    assert all("(exact)" not in note.text for note in defaulted.notes)


def test_bare_eigh_closed_form_matches_symmetric_totals():
    # The closed form ½ Σ a_i a_j / (λ_i + λ_j) written out from a bare scipy.linalg.eigh of the
    # pencil (a general-purpose reference), on a small RC network with every node capacitive.
    ckt = circuit(
        R("R1", "a", "0", 1e3), R("R2", "a", "b", 2.2e3), R("R3", "b", "c", 4.7e3), R("R4", "c", "0", 10e3),
        C("C1", "a", "0", 1e-9), C("C2", "b", "0", 2.2e-9), C("C3", "c", "0", 470e-12), C("C4", "a", "c", 100e-12),
    )  # fmt: skip
    system = assemble(ckt)
    sources = collect_noise_sources(system, KELVIN)
    out = system.node_pair_vector("c", "0")
    lam, vec = scipy.linalg.eigh(system.G.toarray(), system.C.toarray())
    p = vec.T @ out
    q = vec.T @ sources.injection.toarray()
    reference = [
        0.5 * s * float(np.sum(np.outer(p * q[:, k], p * q[:, k]) / (lam[:, None] + lam[None, :])))
        for k, s in enumerate(sources.white_density)
    ]
    pencil = symmetric_pencil(system.G, system.C)
    found = symmetric_totals(pencil, out, sources.injection, sources.white_density)
    assert found.variance == pytest.approx(np.array(reference), rel=1e-12)
    assert found.poles_Hz == pytest.approx(lam / (2 * math.pi), rel=1e-12)
    # fewer columns than poles: the other way of forming the quadratic forms (qᵀ M q per column)
    few = symmetric_totals(pencil, out, sources.injection[:, :2], sources.white_density[:2])
    assert few.variance == pytest.approx(np.array(reference[:2]), rel=1e-12)


def _reference_variances(G, C, c, B, S):
    """Every column's ∫0^∞ |H_k|² S_k df in 40 digits (mpmath, a general-purpose reference):
    the unknowns without capacitance eliminated exactly, then the Lyapunov equation
    AᵀW + WA + ccᵀ = 0 (A = −C⁻¹G) solved as one Kronecker linear system, var_k = (S_k/2) b'ᵀWb'
    (b' = C⁻¹b): no eigenvalues at all."""
    mpmath.mp.dps = 40
    n = G.shape[0]
    dyn = [i for i in range(n) if np.any(C[i] != 0)]
    alg = [i for i in range(n) if i not in dyn]

    def block(a, rows, cols):
        return mpmath.matrix([[mpmath.mpf(float(a[i, j])) for j in cols] for i in rows])

    every = range(B.shape[1])
    gr, cr, br = block(G, dyn, dyn), block(c[:, None], dyn, [0]), block(B, dyn, every)
    if alg:
        inv = mpmath.inverse(block(G, alg, alg))
        gr -= block(G, dyn, alg) * inv * block(G, alg, dyn)
        cr -= block(G, dyn, alg) * inv * block(c[:, None], alg, [0])
        br -= block(G, dyn, alg) * inv * block(B, alg, every)
    m = len(dyn)
    c_inv = mpmath.inverse(block(C, dyn, dyn))
    a = -c_inv * gr
    kron, rhs = mpmath.zeros(m * m, m * m), mpmath.zeros(m * m, 1)
    for i in range(m):
        for j in range(m):
            for k in range(m):  # (AᵀW + WA)_ij = Σ_k A_ki W_kj + W_ik A_kj
                kron[i * m + j, k * m + j] += a[k, i]
                kron[i * m + j, i * m + k] += a[k, j]
            rhs[i * m + j] = -cr[i] * cr[j]
    w = mpmath.lu_solve(kron, rhs)
    gramian = mpmath.matrix([[w[i * m + j] for j in range(m)] for i in range(m)])
    bp = c_inv * br
    return np.array([float(mpmath.mpf(S[k]) / 2 * (bp[:, k].T * gramian * bp[:, k])[0]) for k in every])


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(0, 2**32 - 1))
def test_both_exact_paths_per_source_within_stated_tolerance_on_stiff_networks(seed):
    # Resistors from 30 Ω to 1 MΩ, capacitors from 1 pF to 10 nF, nodes without capacitance:
    # poles up to ~9 decades apart.  The total, and every source to the same absolute error
    # (the stated tolerance is of the total), is within the stated tolerance of the 40-digit
    # reference (_reference_variances), on both exact paths.
    rng = np.random.default_rng(seed)
    n = int(rng.integers(3, 6))
    nodes = [f"n{i}" for i in range(n)]
    parts = []
    for i, node in enumerate(nodes):
        parent = "0" if i == 0 else nodes[int(rng.integers(0, i))]
        parts.append(R(f"Rt{i}", node, parent, 10 ** rng.uniform(1.5, 6)))
        if i == n - 1 or rng.random() < 0.8:
            parts.append(C(f"Cg{i}", node, "0", 10 ** rng.uniform(-12, -8)))
    for j in range(n):
        a, b = int(rng.integers(0, n)), int(rng.integers(-1, n))
        if a != b:
            parts.append(R(f"Rx{j}", nodes[a], "0" if b < 0 else nodes[b], 10 ** rng.uniform(1.5, 6)))
    ckt = circuit(*parts)
    out = nodes[-1]
    try:
        fast, slow = _both(ckt, output=out)
    except CircuitError:  # a source reaching the output unfiltered: refused by both (tested above)
        return
    system = assemble(ckt)
    sources = collect_noise_sources(system, KELVIN)
    reference = _reference_variances(
        system.G.toarray(), system.C.toarray(), system.node_pair_vector(out, "0"),
        sources.injection.toarray(), np.asarray(sources.white_density),
    )  # fmt: skip
    total = reference.sum()
    for res in (fast, slow):
        assert res.total_variance == pytest.approx(total, rel=res.total_tolerance)
        assert np.all(np.abs(res.source_variance - reference) <= res.total_tolerance * total)


def test_voltage_source_on_a_capacitor_node_is_pinned():
    # V1 drives s, which has capacitance (C1 to a, Cs to ground): s is pinned, not refused.  The
    # noise meets equipartition over the free nodes (Reif): C1 counts as a capacitor to ground at
    # a, so var(b) = kT/C2.  The signal path s → a (high-pass) → b (low-pass) rolls off: its
    # ∫|H|² df against scipy.integrate.quad of |H|² from a dense complex solve (numpy).
    c1, ca, c2, r1, r2 = 1e-9, 220e-12, 1e-9, 1e3, 1e3
    ckt = circuit(
        V("V1", "s", "0"), C("Cs", "s", "0", 4.7e-9), C("C1", "s", "a", c1), R("R1", "a", "0", r1),
        R("R2", "a", "b", r2), C("C2", "b", "0", c2), C("Ca", "a", "0", ca),
    )  # fmt: skip
    pencil = _pencil_of(ckt)
    assert pencil.pinned.size == 1 and pencil.size == 2  # s pinned; a and b kept
    fast, slow = _both(ckt, output="b", input_source="V1")
    assert fast.total_method == "exact-symmetric"
    assert fast.total_variance == pytest.approx(KT / c2, rel=1e-12)
    assert fast.gain_squared_integral == pytest.approx(slow.gain_squared_integral, rel=1e-9)

    def power(f):
        s = 2j * math.pi * f
        y = np.array([[s * (c1 + ca) + 1 / r1 + 1 / r2, -1 / r2], [-1 / r2, 1 / r2 + s * c2]])
        return abs(np.linalg.solve(y, np.array([s * c1, 0.0]))[1]) ** 2

    edges = [0.0, *np.geomspace(1e2, 1e10, 17)]  # piecewise up to 10 GHz, above it in u = 1/f
    reference = sum(scipy.integrate.quad(power, a, b, epsabs=0, epsrel=1e-11)[0] for a, b in zip(edges, edges[1:]))
    reference += scipy.integrate.quad(lambda u: power(1 / u) / u**2, 0.0, 1e-10, epsabs=0, epsrel=1e-11)[0]
    assert fast.gain_squared_integral == pytest.approx(reference, rel=1e-9)


def test_driven_source_without_roll_off_goes_to_qz():
    # A high-pass from the driven node straight to the output: its ∫|H|² df is unbounded (no
    # roll-off, common practice); the symmetric method refuses the input column, QZ says so.
    ckt = circuit(V("V1", "s", "0"), C("C1", "s", "a", 1e-9), R("R1", "a", "0", 1e3), C("C2", "a", "0", 1e-9))
    fast, slow = _both(ckt, output="a", input_source="V1")
    assert fast.total_method == "exact-qz" and fast.gain_squared_integral is None
    assert fast.source_variance == pytest.approx(slow.source_variance, rel=1e-15)
    noise_only = analyze(ckt, output="a", band=(0.0, math.inf))
    assert noise_only.total_method == "exact-symmetric"
    # equipartition (Reif): a holds C1 (to the pinned node) and C2: kT/(C1 + C2) at 27 °C
    assert noise_only.total_variance == pytest.approx(constants.Boltzmann * 300.15 / 2e-9, rel=1e-12)


def test_biased_diode_is_a_symmetric_stamp():
    # A diode linearised at its operating point is a conductance and a junction capacitance
    # between its two terminals: symmetric G and C, so the symmetric path takes it; reference:
    # the QZ path on the same circuit.  Values invented.
    from netnoise.netlist.load import parse_netlist

    ckt = parse_netlist(
        "diode bias\nV1 vdd 0 DC 5\nR1 vdd a 10k\nD1 a 0 DMOD\nC1 a 0 1n\nR2 a out 1k\nC2 out 0 100p\n"
        ".model DMOD D IS=1e-14 CJO=2p\n.end\n"
    )
    fast, slow = _both(ckt, output="out")
    assert fast.total_method == "exact-symmetric" and "D1 (shot)" in fast.source_names
    assert fast.source_variance == pytest.approx(slow.source_variance, rel=1e-9)


def test_too_little_memory_for_the_eigenproblem_falls_back():
    # With room for no dense matrix the symmetric method steps aside (NotSymmetricDefinite, which
    # the dispatch answers with the next method) instead of refusing the whole analysis.
    from netnoise.engine import resources

    ckt = circuit(R("R1", "a", "0", 1e3), C("C1", "a", "0", 1e-9), R("R2", "a", "b", 1e3), C("C2", "b", "0", 1e-9))
    with pytest.raises(NotSymmetricDefinite, match="memory"):
        resources.set_available_memory(100)
        try:
            _pencil_of(ckt)
        finally:
            resources.set_available_memory(None)

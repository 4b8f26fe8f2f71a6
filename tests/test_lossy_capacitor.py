"""The capacitor with its equivalent series resistance (``C ... esr=``): a kind
added through the element protocol (one module, one registry line).

Reference: Nyquist's theorem -- the open-circuit noise voltage of a passive
one-port in thermal equilibrium at temperature T has the one-sided density
4kT·Re Z(f) (Nyquist 1928).  Integrals of it come from scipy.integrate.quad.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants, integrate

from netnoise import parse_netlist
from netnoise.circuit import Capacitor, LossyCapacitor
from netnoise.circuit.registry import KINDS, kind_for_line
from netnoise.engine.analysis import analyze
from netnoise.errors import NetlistError

K_B = constants.Boltzmann
T = 300.0


def _z(f, r_load, c, esr, c_shunt=0.0):
    """Impedance at the node: R_load ∥ (ESR + 1/(jωC)) ∥ 1/(jωC_shunt)."""
    w = 2 * np.pi * np.asarray(f, dtype=float)
    y = 1 / r_load + 1 / (esr + 1 / (1j * w * c)) + 1j * w * c_shunt
    return 1 / y


def test_registry_has_one_line_for_the_kind_and_selects_it_by_its_keyword():
    assert LossyCapacitor in KINDS
    assert kind_for_line("C", lambda key: key == "esr") is LossyCapacitor
    assert kind_for_line("C", lambda key: False) is Capacitor


def test_a_c_line_with_esr_builds_the_lossy_kind():
    circuit = parse_netlist("esr\nR1 a 0 10k\nC1 a 0 10u esr=0.05\nC2 a 0 1n\n")
    c1 = circuit.element("C1")
    assert isinstance(c1, LossyCapacitor)
    assert c1.capacitance == pytest.approx(10e-6, rel=1e-12) and c1.esr == pytest.approx(0.05, rel=1e-12)
    assert isinstance(circuit.element("C2"), Capacitor)


@pytest.mark.parametrize(
    "line, fragment",
    [
        ("C1 a 0 1n esr=0", "esr= must be above 0"),
        ("C1 a 0 1n esr=-2", "esr= must be above 0"),
        ("C1 a 0 1n esr=1 esr=2", "unexpected extra field"),
        ("C1 a 0 1n foo=1", "Cname node1 node2 value esr=OHMS"),  # the hint shows both forms of a C line
    ],
)
def test_bad_esr_lines_are_refused_with_their_place(line, fragment):
    with pytest.raises(NetlistError) as info:
        parse_netlist(f"esr\nR1 a 0 1k\n{line}\n")
    assert fragment in str(info.value)
    assert info.value.location is not None and info.value.location.line == 3


@pytest.mark.parametrize("f", [10.0, 1e3, 31.6e3, 1e6])
def test_node_density_is_4kT_re_z(f):
    # Nyquist 1928: S_v = 4kT·Re Z at every frequency, the ESR's noise included.
    r_load, c, esr = 10e3, 100e-9, 50.0
    res = analyze(
        parse_netlist(f"esr\nR1 a 0 {r_load}\nC1 a 0 {c} esr={esr}\n"),
        output="a",
        band=(1.0, 1e7),
        temperature_celsius=T - 273.15,
    )
    expected = 4 * K_B * T * np.real(_z(f, r_load, c, esr))
    assert res.spot_density(f) ** 2 == pytest.approx(expected, rel=1e-3)  # log-log interpolation between grid points
    grid = res.frequency_Hz
    exact = 4 * K_B * T * np.real(_z(grid, r_load, c, esr))
    np.testing.assert_allclose(res.output_density, exact, rtol=1e-9)


def test_esr_row_is_thermal_and_named_for_its_part():
    res = analyze(parse_netlist("esr\nR1 a 0 10k\nC1 a 0 100n esr=50\n"), output="a", band=(1.0, 1e6))
    row = res.source("C1 (esr)")
    assert row.mechanism == "thermal" and row.element == "C1"
    assert row.value == pytest.approx(50.0, rel=1e-12) and row.unit == "Ω"


def test_infinite_band_total_matches_quadrature_of_nyquist_density():
    # With a shunt capacitance the node rolls off, so the total to infinity is
    # finite: ∫0^∞ 4kT·Re Z df by scipy.integrate.quad (Nyquist 1928).
    r_load, c, esr, cp = 10e3, 100e-9, 50.0, 1e-9
    res = analyze(
        parse_netlist(f"esr\nR1 a 0 {r_load}\nC1 a 0 {c} esr={esr}\nCp a 0 {cp}\n"),
        output="a",
        band=(0.0, math.inf),
        temperature_celsius=T - 273.15,
    )

    def density(x):
        return 4 * K_B * T * float(np.real(_z(x, r_load, c, esr, cp)))

    # quad's default absolute tolerance (1.5e-8) is far above these V² values: epsabs=0, so that
    # the relative tolerance decides
    breaks = [0.0, 1.0, 10.0, 100.0, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9]
    pieces = zip(breaks, breaks[1:])
    reference = sum(integrate.quad(density, a, b, limit=200, epsabs=0, epsrel=1e-10)[0] for a, b in pieces)
    # the tail in x = 1/f, where the integrand S(1/x)/x² stays finite at x = 0
    tail = integrate.quad(lambda x: density(1 / x) / x**2, 1e-30, 1 / breaks[-1], limit=200, epsabs=0, epsrel=1e-10)
    reference += tail[0]
    assert res.total_variance == pytest.approx(reference, rel=1e-7)
    # and equipartition: a passive RC network's node voltage holds kT/C of the capacitance
    # across it, here Cp (Nyquist 1928; kT/C, common practice)
    assert res.total_variance == pytest.approx(K_B * T / cp, rel=1e-9)

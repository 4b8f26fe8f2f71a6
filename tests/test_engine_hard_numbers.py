"""Issue 14, class 2 ("wrong answers printed as right") and the engine side of
class 1 (overflow): each fix checked for its whole class against a published
closed form or a general-purpose reference library (scipy, mpmath), with the
source and a relative tolerance beside every number."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.integrate import quad

import netnoise
from netnoise.engine.analysis import analyze, output_density_function
from netnoise.errors import CircuitError

from circuit_builders import C, L, R, V, circuit

K_B = 1.380649e-23  # J/K, exact SI value (2019 redefinition)
T = 300.0  # K, the temperature every test here analyses at


def _at_T(ckt, **kwargs):
    return analyze(ckt, temperature_celsius=T - 273.15, **kwargs)


# --- 1. a band [low, inf) far above the poles ---------------------------------------------

def _one_pole_tail(r, c, f1):
    """4kTR·fc·(π/2 − atan(f1/fc)): the one-sided density 4kTR/(1+(f/fc)²) of R ∥ C
    (Johnson 1928; Nyquist 1928) integrated from f1 to infinity (the arctan integral),
    written with atan(fc/f1) = π/2 − atan(f1/fc) so it keeps its digits for f1 ≫ fc."""
    fc = 1.0 / (2 * math.pi * r * c)
    return 4 * K_B * T * r * fc * math.atan(fc / f1)


@pytest.mark.parametrize("ratio", [1e-3, 1e-2, 0.3, 1.0, 3.0, 1e2, 1e4, 1e6])
@pytest.mark.parametrize("r, c", [(1e3, 1e-9), (1e6, 10e-9)])
def test_band_to_infinity_matches_the_arctan_integral_wherever_it_starts(r, c, ratio):
    fc = 1.0 / (2 * math.pi * r * c)
    result = _at_T(circuit(R("R1", "a", "0", r), C("C1", "a", "0", c)), output="a", band=(ratio * fc, math.inf))
    # the arctan integral of a one-pole spectrum, relative tolerance 1e-6
    assert result.total_variance == pytest.approx(_one_pole_tail(r, c, ratio * fc), rel=1e-6)


def test_band_far_above_the_pole_is_not_zero():
    # the example: 1 kΩ ∥ 1 nF from 10 THz to infinity, 0.205 nV (arctan integral)
    result = _at_T(circuit(R("R1", "a", "0", 1e3), C("C1", "a", "0", 1e-9)), output="a", band=(1e13, math.inf))
    assert result.total_rms == pytest.approx(math.sqrt(_one_pole_tail(1e3, 1e-9, 1e13)), rel=1e-6)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    st.floats(1.0, 1e7), st.floats(1e-12, 1e-6), st.floats(-3.0, 6.0),
)
def test_band_to_infinity_any_one_pole_circuit(r, c, decades):
    fc = 1.0 / (2 * math.pi * r * c)
    f1 = fc * 10.0**decades
    result = _at_T(circuit(R("R1", "a", "0", r), C("C1", "a", "0", c)), output="a", band=(f1, math.inf))
    # the arctan integral of a one-pole spectrum, relative tolerance 1e-6
    assert result.total_variance == pytest.approx(_one_pole_tail(r, c, f1), rel=1e-6)


def _three_pole():
    return circuit(
        R("R1", "a", "0", 1e3), C("C1", "a", "0", 1e-9),
        R("R2", "a", "b", 4.7e3), C("C2", "b", "0", 220e-12),
        L("L1", "b", "c", 1e-3), R("R3", "c", "0", 10e3), C("C3", "c", "0", 47e-12),
    )


@pytest.mark.parametrize("low", [1e3, 1e5, 3e6, 1e8, 1e10])
def test_band_to_infinity_of_a_three_pole_network_matches_quad(low):
    ckt = _three_pole()
    result = _at_T(ckt, output="c", band=(low, math.inf))
    density = output_density_function(ckt, output="c", temperature_celsius=T - 273.15)
    # reference: scipy.integrate.quad of the density, decade by decade, the last piece in
    # u = 1/f (∫_F^∞ S df = ∫_0^{1/F} S(1/u)/u² du); relative tolerance 1e-6
    edges = [low * 10.0**k for k in range(0, 7)]
    pieces = [quad(lambda f: float(density(np.array([f]))[0]), a, b, limit=200, epsabs=0, epsrel=1e-10)[0]
              for a, b in zip(edges[:-1], edges[1:])]
    top = edges[-1]
    pieces.append(quad(lambda u: float(density(np.array([1.0 / u]))[0]) / u**2, 0.0, 1.0 / top,
                       limit=200, epsabs=0, epsrel=1e-10)[0])
    assert result.total_variance == pytest.approx(sum(pieces), rel=1e-6)

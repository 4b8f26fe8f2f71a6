"""Issue 14, class 2 ("wrong answers printed as right") and the engine side of
class 1 (overflow): each fix checked for its whole class against a published
closed form or a general-purpose reference library (scipy, mpmath), with the
source and a relative tolerance beside every number."""

from __future__ import annotations

import math

import numpy as np
import pytest
from circuit_builders import C, L, R, V, circuit
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.integrate import quad

import netnoise
from netnoise.engine.analysis import analyze, output_density_function
from netnoise.errors import CircuitError

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
    st.floats(1.0, 1e7),
    st.floats(1e-12, 1e-6),
    st.floats(-3.0, 6.0, allow_subnormal=False),
)
def test_band_to_infinity_any_one_pole_circuit(r, c, decades):
    fc = 1.0 / (2 * math.pi * r * c)
    f1 = fc * 10.0**decades
    result = _at_T(circuit(R("R1", "a", "0", r), C("C1", "a", "0", c)), output="a", band=(f1, math.inf))
    # the arctan integral of a one-pole spectrum, relative tolerance 1e-6
    assert result.total_variance == pytest.approx(_one_pole_tail(r, c, f1), rel=1e-6)


def _three_pole():
    return circuit(
        R("R1", "a", "0", 1e3),
        C("C1", "a", "0", 1e-9),
        R("R2", "a", "b", 4.7e3),
        C("C2", "b", "0", 220e-12),
        L("L1", "b", "c", 1e-3),
        R("R3", "c", "0", 10e3),
        C("C3", "c", "0", 47e-12),
    )


@pytest.mark.parametrize("low", [1e3, 1e5, 3e6, 1e8, 1e10])
def test_band_to_infinity_of_a_three_pole_network_matches_quad(low):
    ckt = _three_pole()
    result = _at_T(ckt, output="c", band=(low, math.inf))
    density = output_density_function(ckt, output="c", temperature_celsius=T - 273.15)
    # reference: scipy.integrate.quad of the density, decade by decade, the last piece in
    # u = 1/f (∫_F^∞ S df = ∫_0^{1/F} S(1/u)/u² du); relative tolerance 1e-6
    edges = [low * 10.0**k for k in range(0, 7)]
    pieces = [
        quad(lambda f: float(density(np.array([f]))[0]), a, b, limit=200, epsabs=0, epsrel=1e-10)[0]
        for a, b in zip(edges[:-1], edges[1:])
    ]
    top = edges[-1]
    pieces.append(
        quad(
            lambda u: float(density(np.array([1.0 / u]))[0]) / u**2, 0.0, 1.0 / top, limit=200, epsabs=0, epsrel=1e-10
        )[0]
    )
    assert result.total_variance == pytest.approx(sum(pieces), rel=1e-6)


# --- 2. underflow and overflow: refused naming the element, never shown as a number ------------


def _analyze_text(text, **kwargs):
    return netnoise.analyze(netnoise.parse_netlist(text), temperature_celsius=T - 273.15, **kwargs)


# (netlist, band, words the message must contain): every value whose noise or its square
# would leave the doubles is refused by name, whatever the band
OUT_OF_RANGE = [
    ("R1 a 0 1e308\nC1 a 0 1n\n", (1.0, 1e3), ["R1", "1e+308 Ω", "1e-60 Ω to 1e+60 Ω"]),
    ("R1 a 0 1e-300\nR2 a 0 1e300\nC1 a 0 1n\n", (1.0, 1e3), ["R1", "1e-300 Ω"]),
    ("R1 a 0 1e-300\nR2 a 0 1e300\nC1 a 0 1n\n", (0.0, math.inf), ["R1", "1e-300 Ω"]),
    ("R1 a 0 1e50\nC1 a 0 1e300\n", (0.0, math.inf), ["C1", "1e+300 F"]),
    ("R1 a 0 1k\nL1 a 0 1e-200\n", (1.0, 1e3), ["L1", "1e-200 H"]),
    (
        ".model big opamp (en=1e300)\nR1 in 0 1k\nXu1 in a a big\nR2 a 0 1k\nC1 a 0 1n\n",
        (1.0, 1e3),
        ["Xu1", "model big", "en = 1e+300 V/√Hz"],
    ),
    (
        ".model big opamp (in=1e200)\nR1 in 0 1k\nXu1 in a a big\nR2 a 0 1k\nC1 a 0 1n\n",
        (1.0, 1e3),
        ["Xu1", "in = 1e+200 A/√Hz"],
    ),
    ("V1 in 0 noise=1e200\nR1 in a 1k\nC1 a 0 1n\n", (1.0, 1e3), ["V1", "1e+200 V/√Hz"]),
    ("V1 in 0 noise=1e-170\nR1 in a 1k\nC1 a 0 1n\n", (1.0, 1e3), ["V1", "1e-170 V/√Hz"]),
    ("V1 in 0 noise=1n corner=1e300 slope=2\nR1 in a 1k\nC1 a 0 1n\n", (1.0, 1e3), ["V1", "corner"]),
    ("V1 in 0 DC 1\nR1 in a 1k ni=1e300\nC1 a 0 1n\nR2 a 0 1k\n", (1.0, 1e3), ["R1", "noise index 1e+300 dB"]),
    ("R1 in 0 1k\nE1 b 0 in 0 1e308\nR2 b a 1k\nC1 a 0 1n\n", (0.0, math.inf), ["E1", "gain 1e+308 V/V"]),
    ("R1 in 0 1k\nE1 b 0 in 0 1e300\nR2 b a 1k\nC1 a 0 1n\n", (1.0, 1e3), ["E1", "1e+300"]),
    ("R1 in 0 1k\nG1 a 0 in 0 -1e100\nR2 a 0 1k\nC1 a 0 1n\n", (1.0, 1e3), ["G1", "transconductance"]),
]


@pytest.mark.parametrize("body, band, words", OUT_OF_RANGE)
def test_values_beyond_the_doubles_are_refused_by_name(body, band, words):
    with pytest.raises(CircuitError) as info:
        _analyze_text("t\n" + body + ".end\n", output="a", band=band)
    for word in words:
        assert word in str(info.value)


@pytest.mark.parametrize("r", [1e-60, 1e-30, 1e30, 1e60])
def test_the_ends_of_the_resistance_range_are_computed_correctly(r):
    # kT/C equipartition (any statistical-mechanics text) for R ∥ C at the ends of the range
    # netnoise accepts; relative tolerance 1e-9
    c = 1e-9
    result = _at_T(circuit(R("R1", "a", "0", r), C("C1", "a", "0", c)), output="a", band=(0.0, math.inf))
    assert result.total_variance == pytest.approx(K_B * T / c, rel=1e-9)
    # the one-pole spectrum at its corner: 4kTR/2 (Johnson 1928; Nyquist 1928), relative 1e-9
    fc = 1.0 / (2 * math.pi * r * c)
    spot = _at_T(circuit(R("R1", "a", "0", r), C("C1", "a", "0", c)), output="a", band=(fc / 10, fc * 10))
    assert spot.spot_density(fc) ** 2 == pytest.approx(2 * K_B * T * r, rel=1e-6)


def test_a_source_that_cannot_reach_the_output_prints_zero_not_a_stand_in():
    # a network of quiet parts: the density is exactly 0 and the spot value must say 0, not 1e-150
    result = _analyze_text("t\nR1 a 0 1k quiet\nC1 a 0 1n\n.end\n", output="a", band=(1.0, 1e3))
    assert result.spot_density(10.0) == 0.0 and result.total_rms == 0.0


# --- 3. couplings that cannot exist --------------------------------------------------------

COUPLED = "k\nV1 in 0 AC 1\nR1 in a 50\nL1 a 0 1m\nL2 b 0 4m\nR2 b 0 1k\nL3 c 0 9u\nR3 c 0 10\n"

BAD_COUPLINGS = [
    ("K1 L1 L1 0.5\n", ["K1", "L1", "with itself"]),
    ("K1 L1 L2 0.5\nK2 L2 L1 0.3\n", ["K1", "K2", "L1", "L2", "one coupling"]),
    ("K1 L1 L2 0.5\nK2 L1 L2 0.5\n", ["K1", "K2"]),
    # k12 = k23 = 0.9, k13 = -0.9: det of the coefficient matrix 1 - 3·0.81 - 2·0.729 < 0
    ("K1 L1 L2 0.9\nK2 L2 L3 0.9\nK3 L1 L3 -0.9\n", ["K1", "K2", "K3", "L1", "L2", "L3", "positive semidefinite"]),
    # 0.8, 0.8, 0.1: det = 1 - 1.29 + 2·0.064 < 0
    ("K1 L1 L2 0.8\nK2 L2 L3 0.8\nK3 L1 L3 0.1\n", ["K1, K2, K3", "L1, L2, L3"]),
]


@pytest.mark.parametrize("couplings, words", BAD_COUPLINGS)
def test_impossible_couplings_are_refused_naming_them(couplings, words):
    with pytest.raises(CircuitError) as info:
        _analyze_text(COUPLED + couplings + ".end\n", output="b", band=(1.0, 1e6))
    for word in words:
        assert word in str(info.value)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(-1.0, 1.0, allow_subnormal=False), min_size=3, max_size=3))  # subnormals are refused as text
def test_three_coil_couplings_accepted_exactly_when_the_inductance_matrix_can_exist(k):
    # reference: numpy.linalg.eigvalsh of the inductance matrix [[L_i, k_ij·√(L_i·L_j)]] built
    # here (a physical set of coils stores non-negative energy ½ iᵀ L i: L positive semidefinite)
    from netnoise.circuit.topology import check_element_values as check_couplings  # the couplings' checks among them

    values = [1e-3, 4e-3, 9e-6]
    matrix = np.diag(values)
    for (i, j), kij in zip([(0, 1), (1, 2), (0, 2)], k):
        matrix[i, j] = matrix[j, i] = kij * math.sqrt(values[i] * values[j])
    d = 1 / np.sqrt(values)
    lowest = np.linalg.eigvalsh(d[:, None] * matrix * d[None, :])[0]
    if abs(lowest) < 1e-9:  # on the boundary either answer is right
        return
    text = COUPLED + "".join(
        f"K{n} {a} {b} {kij!r}\n"
        for n, ((a, b), kij) in enumerate(zip([("L1", "L2"), ("L2", "L3"), ("L1", "L3")], k), 1)
        if kij != 0
    )
    ckt = netnoise.parse_netlist(text + ".end\n")
    if lowest > 0:
        check_couplings(ckt)
    else:
        with pytest.raises(CircuitError):
            check_couplings(ckt)


def test_a_perfect_transformer_is_accepted():
    # k = 1: the inductance matrix is singular but positive semidefinite (an ideal transformer)
    from netnoise.circuit.topology import check_element_values as check_couplings  # the couplings' checks among them

    check_couplings(netnoise.parse_netlist(COUPLED + "K1 L1 L2 1\n.end\n"))


# --- 4 (part). negative capacitance and inductance, refused like a negative resistance ---------


@pytest.mark.parametrize(
    "line, words",
    [
        ("R2 a 0 -1k\n", ["R2", "negative resistance"]),
        ("C2 a 0 -1n\n", ["C2", "negative capacitance"]),
        ("L2 a 0 -1m\n", ["L2", "negative inductance"]),
    ],
)
def test_negative_r_c_l_are_refused_alike(line, words):
    with pytest.raises(CircuitError) as info:
        _analyze_text("t\nR1 a 0 1k\nC1 a 0 1n\n" + line + ".end\n", output="a", band=(1.0, 1e3))
    for word in words:
        assert word in str(info.value)
    assert "active" in str(info.value)


# --- 6. the gain peak between grid points, and the noise bandwidth that depends on it ------------


def _second_order_low_pass(q, f0=5e3, l_value=1e-3):
    """V1 – R – L – out, C from out to ground: H = 1/(1 − ω²LC + jωRC), Q = √(L/C)/R."""
    c_value = 1.0 / ((2 * math.pi * f0) ** 2 * l_value)
    r_value = math.sqrt(l_value / c_value) / q
    return circuit(
        V("V1", "in", "0"), R("R1", "in", "m", r_value), L("L1", "m", "out", l_value), C("C1", "out", "0", c_value)
    )


@pytest.mark.parametrize("points", [1, 2, 3, 7])
def test_peak_of_a_q2_low_pass_on_a_coarse_grid(points):
    q = 2.0
    result = _at_T(
        _second_order_low_pass(q), output="out", input_source="V1", band=(10.0, 1e6), points_per_decade=points
    )
    # the standard second-order result: |H|max = Q/√(1 − 1/(4Q²)); relative tolerance 1e-6
    assert result.gain_at_max == pytest.approx(q / math.sqrt(1 - 1 / (4 * q * q)), rel=1e-6)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.floats(0.75, 100.0), st.floats(1.0, 4.0), st.floats(1e2, 1e7))
def test_peak_and_noise_bandwidth_of_any_second_order_low_pass(q, points, f0):
    result = _at_T(
        _second_order_low_pass(q, f0=f0),
        output="out",
        input_source="V1",
        band=(0.0, math.inf),
        points_per_decade=points,
    )
    peak = q / math.sqrt(1 - 1 / (4 * q * q))  # standard second-order result, relative 1e-6
    assert result.gain_at_max == pytest.approx(peak, rel=1e-6)
    # ∫0^∞ |H|² df = Q·f0·π/2 for H = 1/(1 − (f/f0)² + j f/(Q f0)) (the standard integral of a
    # second-order low-pass, e.g. by residues); ENBW = that / peak², relative 1e-6
    assert result.enbw_Hz == pytest.approx(q * f0 * math.pi / 2 / peak**2, rel=1e-6)


# --- 5. the exact infinite-band total: finite noise is not declared unbounded -------------------

# an improved current pump (Howland type: one amplifier, negative feedback through R3/R4, positive
# feedback from the load node through R2) driving a parallel RC load; invented values, with a
# fast, high-gain amplifier model.  The decoupling of its pencil is ill-separated, which made the
# rounding in the output vector look like a direct path from R3 to the output.
PUMP = """improved current pump into R || C
.model fast opamp (aol=2.18e8 gbw=396k cin=1p)
Vin in 0 AC 1
R1 in p 3.37k
R2 p x 100u
Rs o x 2864.09
R3 0 m 364
R4 m o 309.356
Xu1 p m o fast
RL x 0 364
CL x 0 1.14p
"""


def _quad_to_infinity(density, top_decade=12):
    """scipy.integrate.quad of ``density`` from 0 to infinity: decade pieces up to 10^top_decade Hz,
    then the rest in u = 1/f (∫_F^∞ S df = ∫_0^{1/F} S(1/u)/u² du)."""
    edges = [0.0] + [10.0**k for k in range(0, top_decade + 1)]
    pieces = [
        quad(lambda f: float(density(np.array([f]))[0]), a, b, limit=200, epsabs=0, epsrel=1e-10)[0]
        for a, b in zip(edges[:-1], edges[1:])
    ]
    pieces.append(
        quad(
            lambda u: float(density(np.array([1.0 / u]))[0]) / u**2,
            0.0,
            1.0 / edges[-1],
            limit=200,
            epsabs=0,
            epsrel=1e-10,
        )[0]
    )
    return sum(pieces)


def test_current_pump_into_rc_has_a_finite_total_matching_quad():
    ckt = netnoise.parse_netlist(PUMP + ".end\n")
    result = _at_T(ckt, output="x", band=(0.0, math.inf))
    density = output_density_function(ckt, output="x", temperature_celsius=T - 273.15)
    # reference: scipy.integrate.quad of the output density; relative tolerance 1e-6
    assert result.total_variance == pytest.approx(_quad_to_infinity(density), rel=1e-6)


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.floats(1e5, 1e9), st.floats(1e5, 1e7), st.floats(1e2, 1e5), st.floats(1e-13, 1e-9))
def test_current_pumps_into_rc_are_never_declared_unbounded(aol, gbw, rl, cl):
    # every source reaches x only through CL: the total to infinite bandwidth is finite
    text = PUMP.replace("aol=2.18e8 gbw=396k", f"aol={aol!r} gbw={gbw!r}")
    text = text.replace("RL x 0 364", f"RL x 0 {rl!r}").replace("CL x 0 1.14p", f"CL x 0 {cl!r}")
    result = _at_T(netnoise.parse_netlist(text + ".end\n"), output="x", band=(0.0, math.inf))
    assert math.isfinite(result.total_variance) and result.total_variance > 0


@pytest.mark.parametrize(
    "extra, named",
    [
        ("Ry x y 1k\n", ["Ry"]),
        ("Ry x y 1k\nRz y 0 2k\n", ["Ry", "Rz"]),
    ],
)
def test_unbounded_names_exactly_the_sources_that_reach_the_output_unfiltered(extra, named):
    # output y behind resistors with no capacitance at y: their white noise is unfiltered
    # (4kTR flat to any frequency); every other source is filtered by CL
    with pytest.raises(CircuitError) as info:
        _at_T(netnoise.parse_netlist(PUMP + extra + ".end\n"), output="y", band=(0.0, math.inf))
    message = str(info.value)
    listed = message.split("the white noise of ")[1].split(" reaches")[0]
    assert sorted(listed.split(", ")) == sorted(named)


# --- 4. unstable circuits are refused, with the pole and its growth rate ---------------------


@pytest.mark.parametrize("band", [(1.0, 1e6), (1e3, 2e3), (0.0, math.inf), (10.0, math.inf)])
@pytest.mark.parametrize("r, c", [(1e3, 1e-9), (47e3, 2.2e-6)])
def test_negative_net_conductance_is_refused_with_its_pole(band, r, c):
    # G1 draws -2/R from node a: the node's net conductance is -1/R, so its one pole is at
    # p = +1/(RC) (first-order RC node, common practice): frequency 1/(2πRC), growth rate 1/(RC)
    text = f"t\nR1 a 0 {r!r}\nC1 a 0 {c!r}\nG1 a 0 a 0 {-2 / r!r}\n.end\n"
    with pytest.raises(CircuitError) as info:
        _analyze_text(text, output="a", band=band)
    message = str(info.value)
    # printed to 4 significant digits: equal to the closed form to 5e-4 relative
    assert f"{1 / (2 * math.pi * r * c):.4g} Hz" in message
    assert f"{1 / (r * c):.4g} /s" in message
    assert "right half-plane" in message and "G1" in message


def test_positive_feedback_around_an_amplifier_is_refused_naming_it():
    # feedback to the non-inverting input: the loop gain is positive and above 1
    text = ".model a1 opamp (aol=1e5 gbw=1meg)\nR1 o p 10k\nR2 p 0 10k\nC1 p 0 1n\nXu1 p 0 o a1\n"
    with pytest.raises(CircuitError) as info:
        _analyze_text("t\n" + text + ".end\n", output="o", band=(1.0, 1e5))
    assert "right half-plane" in str(info.value) and "Xu1" in str(info.value)


def test_the_same_amplifier_with_negative_feedback_is_accepted():
    # the mirror image (feedback to the inverting input) is stable: analysed, not refused
    text = ".model a1 opamp (aol=1e5 gbw=1meg)\nR1 o m 10k\nR2 m 0 10k\nC1 m 0 1n\nXu1 0 m o a1\n"
    result = _analyze_text("t\n" + text + ".end\n", output="o", band=(1.0, 1e5))
    assert result.total_variance > 0


# --- 2 (continued). the whole accepted range, and what must not be refused ------------------


@settings(max_examples=40, deadline=None)
@given(st.floats(-60.0, 60.0), st.floats(-15.0, 3.0))
def test_any_accepted_resistance_gives_kt_over_c(log_r, log_c):
    # kT/C equipartition (any statistical-mechanics text), relative tolerance 1e-9, for R ∥ C with
    # R anywhere in the accepted range: no underflow, no overflow, no warning
    r, c = 10.0**log_r, 10.0**log_c
    result = _at_T(circuit(R("R1", "a", "0", r), C("C1", "a", "0", c)), output="a", band=(0.0, math.inf))
    assert result.total_variance == pytest.approx(K_B * T / c, rel=1e-9)


def test_a_source_filtered_below_the_doubles_is_no_error():
    # 40 RC sections, band far above their corners: the first resistors' shares underflow (their
    # transfer falls as f^-40), which is right: the total is carried by the last sections.
    # Reference: scipy.integrate.quad of the output density over the band, relative 1e-6
    parts = [V("V1", "n0", "0")]
    for i in range(1, 41):
        parts += [R(f"R{i}", f"n{i - 1}", f"n{i}", 1e3), C(f"C{i}", f"n{i}", "0", 1e-9)]
    ckt = circuit(*parts)
    result = _at_T(ckt, output="n40", band=(1e10, 1e11))
    assert result.source_variance[0] < 1e-300  # R1: filtered away, not refused
    density = output_density_function(ckt, output="n40", temperature_celsius=T - 273.15)
    reference = quad(lambda f: float(density(np.array([f]))[0]), 1e10, 1e11, epsabs=0, epsrel=1e-10, limit=200)[0]
    assert result.total_variance == pytest.approx(reference, rel=1e-6)


def test_a_time_scale_beyond_the_doubles_is_refused_by_the_exact_method():
    # the exact method's own check (below the element checks): ‖G‖/‖C‖ = 1e300 / 1e-300 overflows
    from netnoise.engine.total_variance import infinite_band_totals

    with pytest.raises(CircuitError) as info:
        infinite_band_totals(
            np.array([[1e300]]), np.array([[1e-300]]), np.array([1.0]), np.array([[1.0]]), np.array([1.0])
        )
    assert "time scale" in str(info.value)


@settings(max_examples=40, deadline=None)
@given(
    st.floats(1e2, 1e6),
    st.floats(1e-12, 1e-6),
    st.floats(-3.0, 3.0).filter(lambda x: abs(x + 1.0) > 1e-3 and (x == 0 or abs(x) > 1e-200)),
)
def test_a_node_with_a_controlled_conductance_is_refused_exactly_when_it_grows(r, c, share):
    # G1 adds the conductance share/R at node a: net g = (1 + share)/R.  Negative: one pole at
    # p = -g/C > 0, refused with its frequency |g|/(2πC).  Positive: the noise 4kT/R into g ∥ C
    # integrates to (4kT/R)/(4gC) (the arctan integral of a one-pole spectrum), relative 1e-8
    g = (1.0 + share) / r
    text = f"t\nR1 a 0 {r!r}\nC1 a 0 {c!r}\nG1 a 0 a 0 {share / r!r}\n.end\n"
    if g < 0:
        with pytest.raises(CircuitError) as info:
            _analyze_text(text, output="a", band=(1.0, 1e3))
        assert f"{-g / (2 * math.pi * c):.4g} Hz" in str(info.value)  # printed to 4 digits
    else:
        result = _analyze_text(text, output="a", band=(0.0, math.inf))
        assert result.total_variance == pytest.approx(4 * K_B * T / r / (4 * g * c), rel=1e-8)

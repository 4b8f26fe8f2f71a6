"""Design studies: speed of response, sensitivities, sweeps and targets, each
against a published or closed-form value (named beside it)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy import constants

import netnoise
from netnoise.engine.options import SolverOptions
from netnoise.errors import CircuitError, UsageError
from netnoise.studies.response import bits_accuracy, speed_of_response, step_response
from netnoise.studies.sensitivity import sensitivities
from netnoise.studies.sweep import Vary, meet_target, sweep

K_B = constants.Boltzmann
T = 300.15  # 27 °C, the default


def _path(text, output="out", source="V1", **kwargs):
    prepared = netnoise.prepare(netnoise.parse_netlist(text), output=output, input_source=source, **kwargs)
    problem = prepared.problem
    return prepared, (problem.system, problem.selector, problem.input_vector)


RC = "rc\nV1 in 0 ac 1\nR1 in out 1k\nC1 out 0 1n\n"
TAU = 1e3 * 1e-9


# --- speed of response ----------------------------------------------------------


@pytest.mark.parametrize("exact_limit", [600, 0])  # the exact path, and time-stepping (BDF2)
def test_one_pole_rise_settle_and_bandwidth(exact_limit):
    _, path = _path(RC, band=(1.0, 1e6))
    options = SolverOptions(exact_limit=exact_limit)
    speed = speed_of_response(*path, settle=bits_accuracy(16), options=options)
    tolerance = 2e-4 if exact_limit else 2e-3
    # 10-90 % rise of one pole: RC·ln 9 = 2.197 RC (common practice), ≈ 0.35/f3dB
    assert speed.rise_time_s == pytest.approx(TAU * math.log(9), rel=tolerance)
    assert speed.rise_time_s == pytest.approx(0.35 / speed.bandwidth_Hz, rel=5e-3)
    # settling to half an LSB of 16 bits, 2^-17: RC·17·ln 2 (common practice)
    assert speed.settling_time_s == pytest.approx(TAU * 17 * math.log(2), rel=tolerance)
    assert speed.bandwidth_Hz == pytest.approx(1 / (2 * math.pi * TAU), rel=1e-9)  # f3dB = 1/(2πRC)
    assert speed.overshoot == 0.0 and speed.dc_gain == pytest.approx(1.0, rel=1e-12)
    assert speed.method == ("exact" if exact_limit else "time-stepping")


def _series_rlc(q):
    # series R-L into C, output across C: Q = (1/R)·sqrt(L/C) (standard second-order section)
    inductance, capacitance = 1e-3, 1e-9
    r = math.sqrt(inductance / capacitance) / q
    return f"rlc\nV1 in 0 ac 1\nR1 in a {r!r}\nL1 a out {inductance}\nC1 out 0 {capacitance}\n"


def test_second_order_butterworth_overshoots_4_32_percent():
    # Q = 1/√2: overshoot exp(-π) = 4.32 % (standard filter tables)
    _, path = _path(_series_rlc(1 / math.sqrt(2)), band=(1.0, 1e6))
    assert speed_of_response(*path).overshoot == pytest.approx(math.exp(-math.pi), rel=1e-4)


def test_critically_damped_pair_does_not_overshoot():
    # Q = 1/2: a double real pole, no overshoot (common practice)
    _, path = _path(_series_rlc(0.5), band=(1.0, 1e6))
    speed = speed_of_response(*path)
    assert speed.overshoot < 1e-9


def test_an_unstable_path_is_named_as_such():
    # G1 injects 2 mS·v(x) into x, against R1's 1 mS: a net negative conductance, a pole at +1e6 /s
    text = "unstable\nV1 in 0 ac 1\nRin in x 1meg\nR1 x 0 1k\nC1 x 0 1n\nG1 0 x x 0 2m\n"
    _, path = _path(text, output="x", band=(1.0, 1e3))
    with pytest.raises(CircuitError, match="does not settle.*unstable"):
        step_response(*path)


def test_a_path_that_blocks_dc_has_no_settling_time():
    _, path = _path("high-pass\nV1 in 0 ac 1\nC1 in out 1n\nR1 out 0 1k\n", band=(1.0, 1e6))
    with pytest.raises(CircuitError, match="blocks DC"):
        speed_of_response(*path)


# --- sensitivities -------------------------------------------------------------


def _by_name(prepared, **kwargs):
    return {s.element: s for s in sensitivities(prepared, **kwargs)}


def test_rc_to_infinity_depends_on_c_only():
    # kT/C whatever R (equipartition): rms ∝ C^-1/2 and T^1/2, independent of R
    prepared, _ = _path(RC, band=(0.0, math.inf))
    s = _by_name(prepared, settle=bits_accuracy(12))
    assert s["C1"].rms_pct_per_pct == pytest.approx(-0.5, rel=1e-6)
    assert abs(s["R1"].rms_pct_per_pct) < 1e-6
    assert s["temp"].rms_pct_per_pct == pytest.approx(0.5, rel=1e-9)
    # one pole: bandwidth ∝ 1/(RC), settling time ∝ RC (common practice)
    for name in ("R1", "C1"):
        assert s[name].bandwidth_pct_per_pct == pytest.approx(-1.0, rel=1e-5)
        assert s[name].settling_pct_per_pct == pytest.approx(1.0, rel=1e-5)


def test_far_below_the_pole_the_noise_is_4kTRB():
    # 4kTR·B: rms ∝ R^1/2 (Johnson 1928; Nyquist 1928); the capacitor hardly matters there
    prepared, _ = _path(RC, band=(1.0, 1e3))
    s = _by_name(prepared, speed=False)
    assert s["R1"].rms_pct_per_pct == pytest.approx(0.5, rel=1e-4)
    assert abs(s["C1"].rms_pct_per_pct) < 1e-4
    assert s["R1"].bandwidth_pct_per_pct is None


def _total(text, band, values=None, **kwargs):
    circuit = netnoise.parse_netlist(text)
    if values:
        circuit = circuit.with_values(values)
    return netnoise.analyze(circuit, band=band, **kwargs).total_rms


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    r1=st.floats(100, 1e5),
    r2=st.floats(100, 1e5),
    rf=st.floats(1e3, 1e6),
    c1=st.floats(1e-12, 1e-8),
    cf=st.floats(1e-12, 1e-9),
    en=st.floats(1e-9, 30e-9),
    noise=st.floats(1e-9, 100e-9),
    finite=st.booleans(),
)
def test_every_sensitivity_matches_central_differences_of_the_full_analysis(r1, r2, rf, c1, cf, en, noise, finite):
    # the adjoint sensitivities against central differences of the whole analysis
    # (reference: the definition of the derivative, step 1e-4 relative)
    text = (
        "amp\n.model lna opamp en={en!r} in=1p aol=1e5 gbw=10meg\n"
        f"Vs s 0 noise={noise!r}\nR1 s a {r1!r}\nC1 a 0 {c1!r}\nR2 a m {r2!r}\n"
        f"Rf m out {rf!r}\nCf m out {cf!r}\nXU1 0 m out lna\nRl out 0 10k\nCl out 0 1n\n"
    ).replace("{en!r}", repr(en))
    band = (10.0, 1e6) if finite else (0.0, math.inf)
    prepared = netnoise.prepare(netnoise.parse_netlist(text), output="out", band=band)
    s = _by_name(prepared, speed=False)
    step = 1e-4
    for name, value in (("R1", r1), ("C1", c1), ("R2", r2), ("Rf", rf), ("Cf", cf)):
        up = _total(text, band, {name: value * (1 + step)}, output="out")
        down = _total(text, band, {name: value * (1 - step)}, output="out")
        fd = (math.log(up) - math.log(down)) / (2 * step)
        assert s[name].rms_pct_per_pct == pytest.approx(fd, rel=2e-3, abs=2e-5), name


# --- sweeps and targets ------------------------------------------------------------

TRACK_HOLD = "track and hold\nVin in 0 ac 1\nRon in hold 200\nChold hold 0 2p\n"


def test_a_capacitor_sweep_trades_noise_for_settling_time():
    prepared, _ = _path(TRACK_HOLD, output="hold", source="Vin", band=(0.0, math.inf))
    result = sweep(prepared, [Vary.span("Chold", 1e-12, 10e-12, 4, log=True)], settle=bits_accuracy(16))
    caps = np.array([p.values[0] for p in result.points])
    # kT/C (equipartition) and settling 17·ln2·RC (common practice)
    np.testing.assert_allclose(result.total_rms_V, np.sqrt(K_B * T / caps), rtol=1e-9)
    np.testing.assert_allclose(result.settling_time_s, 200 * caps * 17 * math.log(2), rtol=2e-4)
    assert all(p.dominant == "Ron" for p in result.points)


def test_the_capacitor_that_just_meets_a_noise_target_is_kT_over_sigma_squared():
    prepared, _ = _path(TRACK_HOLD, output="hold", source="Vin", band=(0.0, math.inf))
    sigma = 32e-6
    answer = meet_target(prepared, "Chold", 0.1e-12, 100e-12, noise_rms_V=sigma, settle=bits_accuracy(16))
    assert answer.value == pytest.approx(K_B * T / sigma**2, rel=1e-3)  # C = kT/σ² (equipartition)
    assert answer.point.settling_time_s == pytest.approx(200 * answer.value * 17 * math.log(2), rel=2e-4)


def test_the_fastest_settling_allowed_gives_the_lowest_noise_that_meets_it():
    prepared, _ = _path(TRACK_HOLD, output="hold", source="Vin", band=(0.0, math.inf))
    deadline = 10e-9
    answer = meet_target(prepared, "Chold", 0.1e-12, 100e-12, settling_time_s=deadline, settle=bits_accuracy(16))
    c = deadline / (200 * 17 * math.log(2))  # RC·17·ln 2 = deadline (common practice)
    assert answer.value == pytest.approx(c, rel=2e-4)
    assert answer.point.total_rms_V == pytest.approx(math.sqrt(K_B * T / c), rel=2e-4)


def test_a_target_out_of_reach_says_what_the_range_gives():
    prepared, _ = _path(TRACK_HOLD, output="hold", source="Vin", band=(0.0, math.inf))
    with pytest.raises(UsageError, match="not reached.*widen"):
        meet_target(prepared, "Chold", 1e-12, 2e-12, noise_rms_V=1e-6)


def test_sweeping_a_param_or_the_temperature():
    text = "rc\n.param cval=1n\nV1 in 0 ac 1\nR1 in out 1k\nC1 out 0 {cval}\n"
    prepared = netnoise.prepare(netnoise.parse_netlist(text), output="out", band=(0.0, math.inf))
    by_param = sweep(prepared, [Vary("cval", (1e-9, 4e-9))], speed=False)
    assert by_param.total_rms_V[0] / by_param.total_rms_V[1] == pytest.approx(2.0, rel=1e-9)  # kT/C
    by_temp = sweep(prepared, [Vary("temp", (-73.15, 126.85))], speed=False)  # 200 K and 400 K
    assert by_temp.total_rms_V[1] / by_temp.total_rms_V[0] == pytest.approx(math.sqrt(2.0), rel=1e-9)  # ∝ √T
    grid = sweep(prepared, [Vary("cval", (1e-9, 4e-9)), Vary("temp", (26.85, 126.85))], speed=False)
    assert len(grid.points) == 4 and grid.points[1].values == (1e-9, 126.85)
    with pytest.raises(UsageError, match="cannot vary"):
        sweep(prepared, [Vary("nosuch", (1.0, 2.0))])

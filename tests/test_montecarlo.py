"""Monte Carlo over tolerances and temperature (issue 13).

Every numeric check is against a closed form or scipy.stats, named beside
it, with a relative tolerance.  Statistical checks take their tolerance from
the standard error of what is estimated (5 standard errors: a false failure
about once in 1.7 million runs, for a normal estimate), and the seeds are
fixed, so the tests are deterministic.
"""

from __future__ import annotations

import dataclasses
import json
import math
import os
import subprocess
import sys

import numpy as np
import pytest
import scipy.stats

import netnoise
from netnoise.errors import UsageError
from netnoise.studies.montecarlo import Tolerance, parse_tolerance

K_B = 1.380649e-23  # J/K, exact (SI 2019)
T_DEFAULT = 300.15  # K, netnoise's default 27 °C

RC = "an RC node of our own\nR1 n1 0 10k\nC1 n1 0 1n\n.end\n"
RC_PARAM = "an RC node set by a parameter\n.param cval=2n\nR1 n1 0 4.7k\nC1 n1 0 {cval}\n.end\n"


def _rc():
    return netnoise.parse_netlist(RC)


# --- infinite band: kT/C ------------------------------------------------------------
def test_mean_power_with_uniform_capacitance_is_kt_times_mean_of_inverse_c():
    t, c0, n = 0.5, 1e-9, 1000
    result = netnoise.montecarlo(_rc(), trials=n, tolerances={"C1": t}, seed=11, output="n1", keep_density=False)
    power = result.total_variance
    # equipartition (kT/C whatever R) and the mean of 1/C for C uniform on [C0(1-t), C0(1+t)]:
    # E[1/C] = ln((1+t)/(1-t)) / (2 t C0)  (closed form of the integral of 1/C)
    expected = K_B * T_DEFAULT * math.log((1 + t) / (1 - t)) / (2 * t * c0)
    standard_error = power.std(ddof=1) / math.sqrt(n)
    rtol = 5 * standard_error / expected  # 5 standard errors of the sample mean, about 5 %
    assert rtol < 0.06
    assert power.mean() == pytest.approx(expected, rel=rtol)
    # each trial: kT/C of its own C (equipartition), to rounding
    np.testing.assert_allclose(power, K_B * T_DEFAULT / result.values[:, 0], rtol=1e-9)


def test_a_tolerance_on_r_leaves_kt_over_c_unchanged():
    result = netnoise.montecarlo(_rc(), trials=50, tolerances={"R1": 0.2}, seed=3, output="n1", keep_density=False)
    assert np.ptp(result.values[:, 0]) > 0.1 * 10e3  # R did vary
    # equipartition: kT/C whatever R; the spread is rounding only
    np.testing.assert_allclose(result.total_variance, K_B * T_DEFAULT / 1e-9, rtol=1e-9)
    assert result.std / result.mean < 1e-9


def test_temperature_range_scales_the_mean_power_with_the_mean_absolute_temperature():
    n, low_c, high_c = 400, -40.0, 85.0
    result = netnoise.montecarlo(
        _rc(), trials=n, temperature_range_celsius=(low_c, high_c), seed=5, output="n1", keep_density=False
    )
    power = result.total_variance
    # Johnson 1928 / Nyquist 1928: thermal noise power proportional to T; here kT/C per trial
    np.testing.assert_allclose(power, K_B * result.temperature_K / 1e-9, rtol=1e-9)
    mean_T = 273.15 + 0.5 * (low_c + high_c)  # mean of the uniform distribution of T
    expected = K_B * mean_T / 1e-9
    rtol = 5 * power.std(ddof=1) / math.sqrt(n) / expected  # 5 standard errors
    assert power.mean() == pytest.approx(expected, rel=rtol)
    assert result.temperature_K.min() >= 273.15 + low_c and result.temperature_K.max() <= 273.15 + high_c


def test_percentiles_of_kt_over_c_for_a_gaussian_capacitance():
    n, t, c0 = 4000, 0.3, 1e-9
    result = netnoise.montecarlo(
        _rc(), trials=n, tolerances=["C1=30%"], distribution="gauss", seed=2024, output="n1", keep_density=False
    )
    sigma = c0 * t / 3  # ±PCT is ±3σ
    power = np.sort(result.total_variance)
    for p in (0.01, 0.5, 0.99):
        # common practice: a quantile of a decreasing function of a normal variable, with scipy.stats:
        # the p-point of kT/C is kT / C_(1-p)
        def analytic(q):
            return K_B * T_DEFAULT / scipy.stats.norm.ppf(1 - q, loc=c0, scale=sigma)

        # distribution-free bound (common practice): the empirical p-point lies between the true
        # (p ∓ 5·sqrt(p(1-p)/n))-points, 5 binomial standard errors; as a relative tolerance:
        se = math.sqrt(p * (1 - p) / n)
        rtol = max(abs(analytic(p - 5 * se) / analytic(p) - 1), abs(analytic(p + 5 * se) / analytic(p) - 1))
        empirical = float(np.percentile(power, 100 * p))
        assert empirical == pytest.approx(analytic(p), rel=rtol)
    # and the report's rms points are numpy's percentiles of the rms values (numpy as the reference;
    # not the square roots of the power points: between two samples the interpolation differs)
    assert result.percentiles[50.0] == pytest.approx(float(np.percentile(np.sqrt(power), 50)), rel=1e-12)


# --- finite band: batched path ------------------------------------------------------
def test_every_trial_of_a_finite_band_matches_the_rc_closed_form():
    result = netnoise.montecarlo(
        _rc(),
        trials=120,
        tolerances={"R1": 0.05, "C*": 0.2},
        seed=9,
        output="n1",
        band=(10.0, 100e3),
    )
    r = result.values[:, result.targets.index("R1")]
    c = result.values[:, result.targets.index("C1")]
    # ∫ 4kTR / (1 + (2πfRC)²) df from f1 to f2 = (2kT/πC)·(atan(2πf2RC) - atan(2πf1RC))  (closed form)
    expected = (
        2
        * K_B
        * T_DEFAULT
        / (math.pi * c)
        * (np.arctan(2 * math.pi * 100e3 * r * c) - np.arctan(2 * math.pi * 10 * r * c))
    )
    np.testing.assert_allclose(result.total_variance, expected, rtol=1e-5)
    # per-trial densities on the grid: 4kTR/(1 + (2πfRC)²)  (Johnson–Nyquist through a first-order RC)
    f = result.frequency_Hz
    density = 4 * K_B * T_DEFAULT * r[:, None] / (1 + (2 * math.pi * f[None, :] * r[:, None] * c[:, None]) ** 2)
    np.testing.assert_allclose(result.output_density, density, rtol=1e-9)


def test_band_from_above_zero_to_infinity_analyses_each_trial_in_full():
    result = netnoise.montecarlo(
        _rc(), trials=12, tolerances={"R1": 0.1, "C1": 0.1}, seed=21, output="n1", band=(1e3, math.inf)
    )
    assert result.method == "each trial analysed in full"
    from netnoise.studies.execution import usable_cores  # trial-by-trial studies spread over the cores

    cores = min(usable_cores(), 6)  # 12 trials in 6 chunks
    assert result.ran_on == ("this process" if cores == 1 else f"{cores} local processes")
    r, c = result.values[:, 0], result.values[:, 1]
    # kT/C minus the stretch below 1 kHz: (2kT/πC)·(π/2 - atan(2π·1k·RC))  (closed form of the RC integral)
    expected = 2 * K_B * T_DEFAULT / (math.pi * c) * (math.pi / 2 - np.arctan(2 * math.pi * 1e3 * r * c))
    np.testing.assert_allclose(result.total_variance, expected, rtol=1e-5)
    assert result.output_density.shape == (12, result.frequency_Hz.size)


FOLLOWER = """a unity-gain buffer of our own whose amplifier noise is a parameter
.param en_u1=5n
.model amp opamp (en={en_u1} gbw=10meg aol=1e6)
.subckt load a
R1 a 0 1k
C1 a 0 1n
.ends
V1 in 0 0
Xu1 in out out amp
Xl out load
Xm in load
.end
"""


def test_amplifier_noise_varied_through_a_param_and_hierarchical_patterns():
    circuit = netnoise.parse_netlist(FOLLOWER)
    result = netnoise.montecarlo(
        circuit,
        trials=40,
        tolerances={"en_u1": 0.3, "xl.*": 0.1},
        seed=1,
        output="out",
        band=(1.0, 1e3),
        keep_density=False,
    )
    assert result.targets == ("Xl.R1", "Xl.C1", "en_u1")  # X1.* style patterns reach inside instances only
    en = result.values[:, 2]
    # a voltage follower passes its amplifier's eₙ with the closed-loop gain A0/(1 + A0) (common practice,
    # feedback theory); 1 kHz is 1e-4 of the gain-bandwidth, so the roll-off is below 1e-8
    a0 = 1e6
    expected = en**2 * (a0 / (1 + a0)) ** 2 * (1e3 - 1.0)
    np.testing.assert_allclose(result.total_variance, expected, rtol=1e-6)


def test_a_gaussian_draw_that_would_change_a_sign_is_refused():
    with pytest.raises(UsageError, match="changes sign"):
        netnoise.montecarlo(_rc(), trials=2000, tolerances={"C1": 0.95}, distribution="gauss", seed=1, output="n1")


def test_sensitivity_of_kt_over_c_is_minus_one_half_for_c_and_zero_for_r():
    result = netnoise.montecarlo(
        _rc(), trials=200, tolerances={"R1": 0.01, "C1": 0.01}, seed=1, output="n1", keep_density=False
    )
    slopes = dict(zip(result.sensitivity_names, result.sensitivities))
    # rms = sqrt(kT/C): d ln(rms) / d ln(C) = -1/2 (closed form); the linear fit of a ±1 % spread
    # is off by the curvature, of order the tolerance: 2 % relative
    assert slopes["C1"] == pytest.approx(-0.5, rel=2e-2)
    # equipartition: R has no effect; what the fit gives R is the chance correlation of R's draws with
    # the curvature C's slope leaves in the residual ((3/8)δ², about 4e-5 at ±1 %): far below 1 % of C's
    assert abs(slopes["R1"]) <= 1e-2 * abs(slopes["C1"])


def test_a_param_tolerance_changes_what_depends_on_it():
    circuit = netnoise.parse_netlist(RC_PARAM)
    result = netnoise.montecarlo(circuit, trials=30, tolerances={"cval": 0.1}, seed=4, output="n1", keep_density=False)
    assert result.targets == ("cval",) and result.target_kinds == ("param",)
    np.testing.assert_allclose(result.total_variance, K_B * T_DEFAULT / result.values[:, 0], rtol=1e-9)  # kT/C


# --- reproducibility across execution --------------------------------------------------
def _repro_run(**where):
    # default chunks (of 64 trials: 3 here), as a user gets them
    return netnoise.montecarlo(
        _rc(),
        trials=150,
        tolerances={"R1": 0.05, "C1": 0.1},
        seed=77,
        output="n1",
        band=(10.0, 1e5),
        temperature_range_celsius=(0, 50),
        keep_density=False,
        **where,
    )


def test_one_seed_gives_bit_identical_trials_in_process_on_processes_and_on_a_cluster():
    from dask.distributed import Client, LocalCluster

    here = _repro_run(jobs=1)
    two = _repro_run(jobs=2)
    with LocalCluster(n_workers=1, threads_per_worker=2, processes=False, dashboard_address=None) as cluster:
        with Client(cluster) as client:
            remote = _repro_run(client=client)
    assert two.ran_on == "2 local processes" and remote.ran_on == "a dask cluster"
    for other in (two, remote):
        assert np.array_equal(here.values, other.values)
        assert np.array_equal(here.temperature_K, other.temperature_K)
        assert np.array_equal(here.total_rms_V, other.total_rms_V)
    other_seed = netnoise.montecarlo(
        _rc(), trials=150, tolerances={"C1": 0.1}, seed=78, output="n1", keep_density=False
    )
    assert not np.array_equal(other_seed.values[:, 0], here.values[:, 1])


def test_execution_layer_returns_parts_in_chunk_order_wherever_they_ran():
    import operator

    from dask.distributed import Client, LocalCluster

    from netnoise.studies.execution import run_chunks

    chunks = [np.arange(i, i + 3) for i in range(0, 30, 3)]
    expected = [100 + c for c in chunks]  # operator.add(shared, chunk): shared sent once per worker
    seen = []
    here = run_chunks(operator.add, 100, chunks, jobs=1, on_done=lambda i, part: seen.append(i))
    two = run_chunks(operator.add, 100, chunks, jobs=2)
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=False, dashboard_address=None) as cluster:
        with Client(cluster) as client:
            remote = run_chunks(operator.add, 100, chunks, client=client)
    for parts in (here, two, remote):
        assert [p.tolist() for p in parts] == [e.tolist() for e in expected]
    assert seen == list(range(10))
    with pytest.raises(UsageError, match="jobs"):
        run_chunks(operator.add, 1, chunks, jobs=0)


# --- the result set ---------------------------------------------------------------------
def test_result_is_immutable_and_its_statistics_follow_its_arrays():
    result = netnoise.montecarlo(
        _rc(), trials=40, tolerances={"C1": 0.2}, seed=8, output="n1", target_rms=2.0e-6, band=(1.0, 1e6)
    )
    for name in ("values", "temperature_K", "source_variance", "frequency_Hz", "output_density", "total_rms_V"):
        with pytest.raises(ValueError):
            getattr(result, name)[0] = 0.0
    with pytest.raises(dataclasses.FrozenInstanceError):
        result.trials = 3
    totals = result.total_rms_V
    assert result.yield_fraction == np.mean(totals <= 2.0e-6)
    assert result.worst_trial == int(np.argmax(totals))
    assert result.worst_values == {"C1": float(result.values[result.worst_trial, 0])}
    assert result.dominant_counts.tolist() == [40]  # the only source
    assert "trials=40" in repr(result) and "<table>" in result._repr_html_()


@pytest.mark.parametrize(
    "text, message",
    [
        ("R1", "write PATTERN=PCT"),
        ("=5%", "write PATTERN=PCT"),
        ("R1=abc", "write PATTERN=PCT"),
        ("R1=100%", "below 100 %"),
        ("R1=-1", "from 0 %"),
    ],
)
def test_bad_tolerances_are_refused_with_the_reason(text, message):
    with pytest.raises(UsageError, match=message):
        parse_tolerance(text)


def test_patterns_match_case_insensitively_and_a_pattern_matching_nothing_is_refused():
    assert parse_tolerance("r*=1%") == Tolerance("r*", 0.01)
    result = netnoise.montecarlo(_rc(), trials=2, tolerances=["r*=1%", "C1=0"], seed=1, output="n1", keep_density=False)
    assert result.targets == ("R1",)  # a later 0 % pattern takes C1 out
    with pytest.raises(UsageError, match="matches no element value and no .param"):
        netnoise.montecarlo(_rc(), trials=2, tolerances=["L*=5%"], seed=1, output="n1")
    with pytest.raises(UsageError, match="trials"):
        netnoise.montecarlo(_rc(), trials=0, output="n1")


# --- the command line ---------------------------------------------------------------------
def test_command_line_writes_report_json_and_csv(tmp_path, capsys):
    from netnoise.cli import main

    netlist = tmp_path / "rc.cir"
    netlist.write_text(RC)
    status = main(
        [
            "montecarlo",
            str(netlist),
            "--trials",
            "30",
            "--tol",
            "C*=10%",
            "--out",
            "n1",
            "--seed",
            "12",
            "--target",
            "2.1u",
            "--json",
            "-",
            "--csv",
            str(tmp_path / "t.csv"),
            "--plot",
            str(tmp_path / "spread.png"),
        ]
    )
    captured = capsys.readouterr()
    assert status == 0, captured.err
    data = json.loads(captured.out)["montecarlo"]
    assert data["trials"] == 30 and data["seed"] == 12 and len(data["total_rms_V"]) == 30
    totals = np.array(data["total_rms_V"])
    c = np.array(data["values"])[:, 0]
    np.testing.assert_allclose(totals, np.sqrt(K_B * T_DEFAULT / c), rtol=1e-9)  # sqrt(kT/C), equipartition
    assert data["yield"] == np.mean(totals <= 2.1e-6)
    assert set(data["percentiles"]) == {"1", "50", "99"}
    assert "yield" in captured.err and "µV rms" in captured.err
    rows = (tmp_path / "t.csv").read_text().splitlines()
    assert rows[0] == "trial,total_rms_V,temperature_K,C1" and len(rows) == 31
    assert (tmp_path / "spread.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_command_line_sends_the_trials_to_a_cluster(tmp_path, capsys):
    from dask.distributed import LocalCluster

    from netnoise.cli import main

    netlist = tmp_path / "rc.cir"
    netlist.write_text(RC)
    args = [
        "montecarlo",
        str(netlist),
        "--trials",
        "20",
        "--tol",
        "C1=10%",
        "--out",
        "n1",
        "--seed",
        "3",
        "--json",
        "-",
    ]
    assert main(args) == 0
    here = json.loads(capsys.readouterr().out)["montecarlo"]
    with LocalCluster(n_workers=1, threads_per_worker=1, processes=False, dashboard_address=None) as cluster:
        assert main(args + ["--cluster", cluster.scheduler_address]) == 0
        captured = capsys.readouterr()
    remote = json.loads(captured.out)["montecarlo"]
    assert "run in a dask cluster" in captured.err
    assert remote["total_rms_V"] == here["total_rms_V"]  # one seed, the same trials wherever they ran


@pytest.mark.parametrize(
    "extra, message",
    [
        (["--tol", "Q9=5%"], "matches no element"),
        (["--tol", "R1"], "PATTERN=PCT"),
        (["--temp-range", "50", "10"], "below LOW"),
        (["--temp", "20", "--temp-range", "0", "10"], "give one of them"),
        (["--jobs", "2", "--cluster", "tcp://127.0.0.1:1"], "give one of them"),
        (["--target=-1u"], "above zero"),
    ],
)
def test_command_line_refuses_bad_options(tmp_path, capsys, extra, message):
    from netnoise.cli import main

    netlist = tmp_path / "rc.cir"
    netlist.write_text(RC)
    status = main(["montecarlo", str(netlist), "--trials", "3", "--out", "n1", *extra])
    assert status == 2
    assert message in capsys.readouterr().err


# --- plots, progress, imports ------------------------------------------------------------------
def test_plots_draw_the_trials_and_mark_the_target():
    from netnoise.outputs.montecarlo_plots import plot_density_band, plot_total_histogram

    result = netnoise.montecarlo(
        _rc(), trials=60, tolerances={"C1": 0.2}, seed=6, output="n1", band=(10.0, 1e5), target_rms=1.9e-6
    )
    histogram = plot_total_histogram(result, bins=10)
    assert histogram.artists["counts"].sum() == 60
    assert histogram.artists["target"].get_xdata()[0] == pytest.approx(1.9, rel=1e-12)  # µV
    band = plot_density_band(result, ax=histogram.figure.add_subplot(2, 1, 2))
    median = np.sqrt(np.percentile(result.output_density, 50, axis=0)) * 1e9  # nV/√Hz
    np.testing.assert_allclose(band.artists["median"].get_ydata(), median, rtol=1e-12)


def test_trial_progress_is_shown_on_a_terminal_only():
    from netnoise.outputs.progress import ProgressLine

    class Terminal(list):
        def isatty(self):
            return True

        def write(self, text):
            self.append(text)

        def flush(self):
            pass

    times = iter([0.0, 2.0, 2.1, 3.0])
    shown = Terminal()
    progress = ProgressLine(shown, unit="trials", total=100, clock=lambda: next(times))
    progress(25)  # at 2 s: 25 of 100 done, 6 s left at that pace
    progress(5)  # 0.1 s later: too soon to redraw
    assert shown == ["\rnetnoise: 25 of 100 trials, about 6 s left"]
    progress.clear()
    assert shown[-1].startswith("\r ") and shown[-1].endswith("\r")

    class File(Terminal):
        def isatty(self):
            return False

    quiet = File()
    silent = ProgressLine(quiet, unit="trials", total=10, clock=iter([0.0, 5.0]).__next__)
    silent(10)
    assert quiet == []


def test_importing_netnoise_loads_neither_matplotlib_nor_dask():
    code = (
        "import sys, netnoise, netnoise.cli, netnoise.studies.montecarlo, netnoise.outputs.montecarlo_plots; "
        "print(sorted({n.split('.')[0] for n in sys.modules} & {'matplotlib', 'dask', 'distributed'}))"
    )
    repo = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    completed = subprocess.run(
        [sys.executable, "-c", code],
        capture_output=True,
        text=True,
        timeout=120,
        cwd=repo,
        env={**os.environ, "PYTHONPATH": repo},
    )
    assert completed.returncode == 0, completed.stderr
    assert completed.stdout.strip() == "[]"


# --- a tolerance written on the element line ------------------------------------------
def test_a_tolerance_written_on_the_line_is_drawn_and_a_given_one_overrides_it():
    text = "an RC node with its parts' tolerances\nR1 n1 0 10k tolerance=1%\nC1 n1 0 1n tolerance=50%\n.end\n"
    circuit = netnoise.parse_netlist(text)
    assert circuit.tolerances == {"R1": 0.01, "C1": 0.5}
    result = netnoise.montecarlo(circuit, trials=1000, seed=11, output="n1", keep_density=False)
    assert set(result.targets) == {"R1", "C1"}
    c = result.values[:, list(result.targets).index("C1")]
    assert c.min() >= 0.5e-9 and c.max() <= 1.5e-9 and np.ptp(c) > 0.9e-9  # uniform within ±50 %
    # equipartition: each trial's total is kT/C of its own C (kT/C whatever R)
    np.testing.assert_allclose(result.total_variance, K_B * T_DEFAULT / c, rtol=1e-9)
    tight = netnoise.montecarlo(circuit, trials=200, tolerances={"C1": 0.0}, seed=11, output="n1", keep_density=False)
    assert tight.std / tight.mean < 1e-9  # the given 0 % replaced the line's 50 %


@pytest.mark.parametrize(
    "line, fragment",
    [
        ("R1 n1 0 10k tolerance=1", "takes a percentage"),
        ("R1 n1 0 10k tolerance=abc%", "cannot read 'abc%'"),
        ("R1 n1 0 10k tolerance=150%", "below 100 %"),
        ("R1 n1 0 10k tolerance=1% tolerance=2%", "two tolerance= values"),
    ],
)
def test_bad_line_tolerances_are_refused_with_their_place(line, fragment):
    with pytest.raises(netnoise.NetlistError) as info:
        netnoise.parse_netlist(f"t\n{line}\nC1 n1 0 1n\n")
    assert fragment in str(info.value) and info.value.location.line == 2

"""Monte Carlo over part tolerances and temperature: the spread of a noise budget.

:func:`montecarlo` draws every toleranced value (element values and
top-level ``.param`` values) and, if asked, the temperature, once per trial;
refills the assembled circuit with them (never parsing it again) and
integrates each trial's output noise.  The answer is a
:class:`MonteCarloResult`: per-trial arrays, and the statistics a designer
signs off on (percentiles, yield against a target, which source dominates,
sensitivities) as properties.

Random numbers.  Trial ``j`` draws from its own stream,
``SeedSequence(seed).spawn(trials)[j]``, in a fixed order (the toleranced
values in the order of :attr:`MonteCarloResult.targets`, then the
temperature).  All draws are made here, before any work is sent out, so a
seed gives the same trials bit for bit in one process, on N local processes
and on a cluster.

Distributions.  ``"uniform"``: a value within ±PCT of nominal, uniformly.
``"gauss"``: normal about nominal with ±PCT = ±3σ.

How a trial is solved.  Trials are solved in chunks.  Within a chunk every
trial's values are stamped in the nominal system's ordering of unknowns
(straight into dense matrices for small circuits, ``MnaSystem.refilled``
otherwise); then, for circuits up to ``DENSE_LIMIT`` unknowns:

* finite band: the trials × frequencies adjoint systems are solved by one
  batched ``numpy.linalg.solve`` on a stack of matrices, and the band is
  integrated adaptively for every trial of the chunk at once (the
  frequencies one trial needs are solved for all; chunks of a size set by
  the circuit alone, so the totals do not depend on where they ran);
* band to infinity, white noise from 0 Hz: each trial's exact state-space
  total (:mod:`netnoise.engine.total_variance`), the density for the plots
  batched as above;
* anything else (1/f noise to infinity, large circuits): each trial's full
  analysis, as :func:`netnoise.analyze` does it.

Chunks run in this process, on local processes (``jobs``) or on a Dask
cluster (``client``), see :mod:`netnoise.studies.execution`.
"""

from __future__ import annotations

import dataclasses
import fnmatch
import math
import re
import time
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from netnoise import circuit as ck
from netnoise.constants import ZERO_CELSIUS_K
from netnoise.errors import CircuitError, UsageError
from netnoise.results.result import NoiseResult

__all__ = [
    "Tolerance",
    "parse_tolerance",
    "montecarlo",
    "MonteCarloResult",
    "DISTRIBUTIONS",
    "PERCENTILES",
]

DISTRIBUTIONS = ("uniform", "gauss")
PERCENTILES = (1.0, 50.0, 99.0)
_BATCH_BYTES = 32 * 2**20  # one stacked (trials, frequencies, n, n) block of the batched solve


# --- tolerances ---------------------------------------------------------------
@dataclass(frozen=True)
class Tolerance:
    """``pattern`` (fnmatch, case-insensitive) over element names and
    top-level ``.param`` names; ``fraction`` the tolerance (0.01 for 1 %)."""

    pattern: str
    fraction: float

    def __post_init__(self) -> None:
        if not self.pattern.strip():
            raise UsageError("a tolerance needs a name pattern before '=' (e.g. R*=1%)")
        if not (0.0 <= self.fraction < 1.0) or math.isnan(self.fraction):
            raise UsageError(
                f"tolerance of '{self.pattern}' must be from 0 % to below 100 %, got {100 * self.fraction:g} %"
            )


_TOLERANCE = re.compile(r"^\s*([^=\s]+)\s*=\s*([-+0-9.eE]+)\s*%?\s*$")


def parse_tolerance(text: str) -> Tolerance:
    """``"R*=1%"`` or ``"C3=5"`` (percent) as a :class:`Tolerance`."""
    match = _TOLERANCE.match(text)
    if not match:
        raise UsageError(f"--tol '{text}': write PATTERN=PCT, e.g. 'R*=1%' or 'C3=10'")
    try:
        pct = float(match.group(2))
    except ValueError:
        raise UsageError(f"--tol '{text}': cannot read '{match.group(2)}' as a percentage") from None
    return Tolerance(match.group(1), pct / 100.0)


def _as_tolerances(tolerances) -> tuple[Tolerance, ...]:
    if tolerances is None:
        return ()
    if isinstance(tolerances, Mapping):
        return tuple(Tolerance(str(k), float(v)) for k, v in tolerances.items())
    out = []
    for item in tolerances:
        out.append(item if isinstance(item, Tolerance) else parse_tolerance(str(item)))
    return tuple(out)


def _netlist_tolerances(circuit: ck.Circuit) -> tuple[Tolerance, ...]:
    """The tolerances written on element lines (``tolerance=1%``), each for its element alone."""
    import glob

    return tuple(Tolerance(glob.escape(name), fraction) for name, fraction in circuit.tolerances.items())


@dataclass(frozen=True)
class _Targets:
    names: tuple[str, ...]  # element names as the circuit spells them, then .param names
    kinds: tuple[str, ...]  # "element" or "param"
    nominal: np.ndarray  # (P,)
    fraction: np.ndarray  # (P,)


def _match(circuit: ck.Circuit, tolerances: tuple[Tolerance, ...]) -> _Targets:
    """Every toleranced value; a later pattern overrides an earlier one for the same name."""
    chosen: dict[tuple[str, str], float] = {}
    for tol in tolerances:
        pattern = tol.pattern.lower()
        hits = [
            ("element", e.name)
            for e in circuit.elements
            if e.value_field is not None and fnmatch.fnmatchcase(ck.name_key(e.name), pattern)
        ]
        hits += [("param", name) for name in circuit.parameters if fnmatch.fnmatchcase(name.lower(), pattern)]
        if not hits:
            names = ", ".join(e.name for e in circuit.elements if e.value_field is not None)
            params = ", ".join(circuit.parameters) or "none"
            raise UsageError(
                f"tolerance pattern '{tol.pattern}' matches no element value and no .param "
                f"(elements with a value: {names}; parameters: {params})"
            )
        for hit in hits:
            chosen.pop(hit, None)
            chosen[hit] = tol.fraction
    items = sorted(chosen.items(), key=lambda kv: kv[0][0] != "element")  # elements first, stable
    chosen_names: list[str] = []
    kinds: list[str] = []
    nominal: list[float] = []
    fraction: list[float] = []
    for (kind, name), frac in items:
        value = circuit.element(name).primary_value if kind == "element" else circuit.parameters[name]
        if frac == 0.0:
            continue
        if value is None or not math.isfinite(value) or value == 0.0:
            raise UsageError(f"'{name}' has no non-zero nominal value to apply a tolerance to")
        chosen_names.append(name)
        kinds.append(kind)
        nominal.append(float(value))
        fraction.append(frac)
    return _Targets(tuple(chosen_names), tuple(kinds), np.array(nominal, dtype=float), np.array(fraction, dtype=float))


# --- the draws ----------------------------------------------------------------
def _draw(
    targets: _Targets,
    trials: int,
    seed: int,
    distribution: str,
    temperature_range_K: tuple[float, float] | None,
    nominal_K: float,
) -> tuple[np.ndarray, np.ndarray]:
    """(trials, P) values and (trials,) temperatures (K), trial j from stream j."""
    p = len(targets.names)
    unit = np.empty((trials, p))
    uniform_T = np.empty(trials)
    for j, child in enumerate(np.random.SeedSequence(seed).spawn(trials)):
        rng = np.random.Generator(np.random.PCG64(child))
        unit[j] = rng.uniform(-1.0, 1.0, p) if distribution == "uniform" else rng.standard_normal(p)
        uniform_T[j] = rng.random() if temperature_range_K is not None else 0.0
    scale = targets.fraction if distribution == "uniform" else targets.fraction / 3.0  # ±PCT is ±3σ
    factor = 1.0 + unit * scale[None, :]
    if factor.size and not np.all(factor > 0):
        j, k = (int(i) for i in np.argwhere(~(factor > 0))[0])
        raise UsageError(
            f"trial {j}: the drawn value of {targets.names[k]} changes sign (a gaussian draw of "
            f"{100 * unit[j, k] * scale[k]:+.0f} %): lower its tolerance"
        )
    values = targets.nominal[None, :] * factor
    if temperature_range_K is None:
        temperature = np.full(trials, nominal_K)
    else:
        low, high = temperature_range_K
        temperature = low + (high - low) * uniform_T
    return values, temperature


# --- the work of one chunk of trials (runs wherever execution sends it) --------------
@dataclass(frozen=True, eq=False)
class _Model:
    """What every chunk needs, sent once per worker."""

    prepared: Any  # PreparedAnalysis, progress display removed
    names: tuple[str, ...]
    kinds: tuple[str, ...]
    mode: str  # "band", "exact" or "full"
    grid_Hz: np.ndarray  # the frequencies of the per-trial density
    low: float
    high: float
    points_per_decade: float
    linear_below: float | None
    keep_density: bool


def _trial_circuit(model: _Model, values: np.ndarray, temperature_K: float) -> ck.Circuit:
    """The nominal circuit with one trial's values, at its temperature (resistors' tc1, tc2)."""
    circuit = model.prepared.circuit
    params = {n: float(v) for n, v, k in zip(model.names, values, model.kinds) if k == "param"}
    elements = {n: float(v) for n, v, k in zip(model.names, values, model.kinds) if k == "element"}
    if params:
        circuit = circuit.with_params(params)
    if elements:
        circuit = circuit.with_values(elements)
    return circuit.at_temperature(float(temperature_K) - ZERO_CELSIUS_K)


def _biased(circuit: ck.Circuit, temperature_K: float):
    """The trial circuit with its diodes and transistors biased at the trial's own operating point."""
    from netnoise.engine.operating_point import biased

    return biased(circuit, float(temperature_K))


def _trial_problem(model: _Model, values: np.ndarray, temperature_K: float):
    """The engine's full per-circuit state for one trial (the "full" mode)."""
    from netnoise.engine.analysis import _Problem

    nominal = model.prepared._problem
    circuit, solution = _biased(_trial_circuit(model, values, temperature_K), temperature_K)
    settings = dataclasses.replace(nominal.settings, temperature_K=float(temperature_K))
    options = dataclasses.replace(nominal.options, jobs=1)  # the study's jobs spread the trials: one thread each
    return _Problem(circuit, settings, None, nominal.system.refilled(circuit), options, solution)


@dataclass(frozen=True, eq=False)
class _Trial:
    """One trial's dense matrices and noise sources (the batched modes)."""

    G: np.ndarray  # (n, n)
    C: np.ndarray  # (n, n)
    B: np.ndarray  # (n, K) injection columns
    sources: Any  # NoiseSources at the trial's temperature


def _dense_trial(model: _Model, values: np.ndarray, temperature_K: float) -> _Trial:
    """One trial stamped straight into dense G and C, in the nominal system's
    ordering of unknowns (what ``MnaSystem.refilled`` does, without building
    sparse matrices: for small circuits their construction costs more than
    the stamping).  Element kinds stamp exactly as in assembly."""
    from netnoise.engine.mna import _Layout, _Stamps
    from netnoise.engine.noise_sources import collect_noise_sources

    system = model.prepared.system
    circuit, solution = _biased(_trial_circuit(model, values, temperature_K), temperature_K)
    n = system.size
    stamps = _Stamps(circuit, _Layout(system.node_index, system.branch_index, system.internal_index, system.unknowns))
    by_kind: dict[type, list] = {}
    for element in circuit.elements:
        by_kind.setdefault(type(element), []).append(element)
    for kind, members in by_kind.items():
        kind.stamp_all(members, stamps)  # type: ignore[attr-defined]
    dense = []
    for which in ("G", "C"):
        rows, cols, vals = stamps.scalar[which]
        pieces = [(np.asarray(rows, dtype=np.int64), np.asarray(cols, dtype=np.int64), np.asarray(vals, dtype=float))]
        pieces += stamps.parts[which]
        r = np.concatenate([p[0] for p in pieces])
        c = np.concatenate([p[1] for p in pieces])
        v = np.concatenate([p[2] for p in pieces])
        dense.append(np.bincount(r * n + c, weights=v, minlength=n * n).reshape(n, n))
    # the noise sources need the circuit's rows and elements, and the DC solution only for
    # excess noise: then (only then) the trial is assembled as a sparse system too
    view = dataclasses.replace(system, circuit=circuit)

    def dc_solution():
        from netnoise.engine.dc import solve_operating_point

        return solve_operating_point(system.refilled(circuit)) if solution is None else solution.x

    sources = collect_noise_sources(view, float(temperature_K), dc_solution)
    return _Trial(dense[0], dense[1], sources.injection.toarray(), sources)


def _pow2(x: np.ndarray) -> np.ndarray:
    """1/x rounded to a power of two (exact scaling), 1 where x is 0."""
    _, exponent = np.frexp(np.where(x > 0, x, 1.0))
    return np.ldexp(1.0, 1 - exponent)


def _batched_power(G: np.ndarray, C: np.ndarray, B: np.ndarray, c: np.ndarray, f: np.ndarray, first: int) -> np.ndarray:
    """(t, K, F) |zᵀ b_k|² for a stack of t circuits at F frequencies, where
    (G + j2πfC)ᵀ z = c: one ``numpy.linalg.solve`` over the stack of t·F
    matrices (in blocks of ``_BATCH_BYTES``).  Rows are scaled by powers of
    two first, from the row maxima of |G| and |s|·|C| (within 2x of those of
    |G + sC|): that steers the partial pivoting; a column scaling by powers
    of two would not change it, so there is none."""
    t, n, _ = G.shape
    out = np.empty((t, B.shape[2], f.size))
    s = 2j * np.pi * f
    w_abs = np.abs(s)
    per = max(1, _BATCH_BYTES // (16 * n * n * max(1, f.size)))
    for a in range(0, t, per):
        g, cc = G[a : a + per], C[a : a + per]
        row_g, row_c = np.abs(g).max(axis=1), np.abs(cc).max(axis=1)  # (tb, n): rows of the transposes
        dr = _pow2(np.maximum(row_g[:, None, :], w_abs[None, :, None] * row_c[:, None, :]))  # (tb, F, n)
        # Y(f)ᵀ as a transposed view of the contiguous G + sC, its rows scaled in memory order
        full = g[:, None, :, :] + s[None, :, None, None] * cc[:, None, :, :]
        full *= dr[:, :, None, :]
        y = np.swapaxes(full, 2, 3)
        with np.errstate(all="ignore"):
            try:
                z = np.linalg.solve(y, (dr * c[None, None, :])[..., None])[..., 0]
            except np.linalg.LinAlgError:
                z = np.full(y.shape[:3], np.nan, dtype=complex)
        bad = ~np.isfinite(z).all(axis=2)
        if bad.any():
            j, i = (int(v) for v in np.argwhere(bad)[0])
            raise CircuitError(
                f"trial {first + a + j}: the circuit equations are singular at {f[i]:.6g} Hz with that trial's values"
            )
        b = B[a : a + per]  # real: two real products, not one complex one with a cast (much slower)
        re, im = np.matmul(np.ascontiguousarray(z.real), b), np.matmul(np.ascontiguousarray(z.imag), b)
        out[a : a + per] = np.swapaxes(re * re + im * im, 1, 2)  # (tb, K, F)
    return out


def _run_trials(model: _Model, chunk: tuple[int, np.ndarray, np.ndarray]) -> dict:
    """Per-trial source variances (t, K) and output densities (t, F) of one chunk,
    and the CPU seconds this thread spent on it."""
    start = time.thread_time()
    part = _trials_of_chunk(model, chunk)
    part["cpu_s"] = time.thread_time() - start
    return part


def _trials_of_chunk(model: _Model, chunk: tuple[int, np.ndarray, np.ndarray]) -> dict:
    first, values, temperature = chunk
    if model.mode == "full":
        from netnoise.engine.analysis import PreparedAnalysis

        problems = [_trial_problem(model, values[j], temperature[j]) for j in range(values.shape[0])]
        _same_sources([p.sources for p in problems], first)
        variance = np.array([PreparedAnalysis(p, None).analyze().source_variance for p in problems])
        density = None
        if model.keep_density:  # the engine's own solver path (sparse or banded for large circuits)
            k = len(problems[0].sources)
            density = np.array([p.densities(model.grid_Hz)[:k].sum(axis=0) for p in problems])
        return {"variance": variance, "density": density}
    trials = [_dense_trial(model, values[j], temperature[j]) for j in range(values.shape[0])]
    _same_sources([t.sources for t in trials], first)
    selector = model.prepared._problem.selector
    if model.mode == "exact":
        from netnoise.engine.total_variance import infinite_band_totals

        variance = np.array(
            [
                infinite_band_totals(t.G, t.C, selector, t.B, np.asarray(t.sources.white_density)).variance
                for t in trials
            ]
        )
        if not np.all(np.isfinite(variance)):
            j = int(np.argwhere(~np.isfinite(variance))[0][0])
            raise CircuitError(
                f"trial {first + j}: the output noise to infinite bandwidth is unbounded with that trial's values; "
                "give a finite band"
            )
        density = _densities(model, trials, first).sum(axis=1) if model.keep_density else None
        return {"variance": variance, "density": density}
    from netnoise.engine.integrate import integrate_band

    t, k = len(trials), len(trials[0].sources)
    G, C, B = (np.stack([getattr(x, name) for x in trials]) for name in ("G", "C", "B"))

    def evaluate(f: np.ndarray) -> np.ndarray:
        power = _batched_power(G, C, B, selector, f, first)  # (t, K, F)
        for j, x in enumerate(trials):
            power[j] *= x.sources.density(f, "full")
        return power.reshape(t * k, f.size)

    band = integrate_band(
        evaluate,
        model.low,
        model.high,
        points_per_decade=model.points_per_decade,
        groups=[slice(j * k, (j + 1) * k) for j in range(t)],
        linear_below=model.linear_below,
        rtol=model.prepared._problem.options.rtol,
    )
    variance = band.values.reshape(t, k)
    density = band.grid_density.reshape(t, k, -1).sum(axis=1) if model.keep_density else None
    return {"variance": variance, "density": density, "solves": t * band.evaluations}


def _same_sources(all_sources, first: int) -> None:
    names = tuple(s.name for s in all_sources[0].sources)
    for j, sources in enumerate(all_sources):
        if tuple(s.name for s in sources.sources) != names:
            raise CircuitError(f"trial {first + j}: the circuit's noise sources changed with its values")


def _densities(model: _Model, trials: list[_Trial], first: int) -> np.ndarray:
    """(t, K, F) per-source output densities on the model's grid."""
    G, C, B = (np.stack([getattr(x, name) for x in trials]) for name in ("G", "C", "B"))
    power = _batched_power(G, C, B, model.prepared._problem.selector, model.grid_Hz, first)
    for j, x in enumerate(trials):
        power[j] *= x.sources.density(model.grid_Hz, "full")
    return power


# --- the result -----------------------------------------------------------------
def _frozen(array, dtype=float) -> np.ndarray:
    out = np.array(array, dtype=dtype, copy=True)
    out.setflags(write=False)
    return out


@dataclass(frozen=True, eq=False)
class MonteCarloResult:
    """The trials of a Monte Carlo study, stacked; statistics derived.

    Per trial ``j``: ``values[j, p]`` the value drawn for ``targets[p]``
    (SI units), ``temperature_K[j]``, ``source_variance[j, k]`` (V², source
    ``k`` integrated over the band) and, where kept, ``output_density[j, i]``
    (V²/Hz at ``frequency_Hz[i]``).  ``nominal`` is the analysis at nominal
    values and temperature.  Arrays are read-only.
    """

    trials: int
    seed: int
    distribution: str
    tolerances: tuple[Tolerance, ...]
    targets: tuple[str, ...]
    target_kinds: tuple[str, ...]
    nominal_values: np.ndarray
    values: np.ndarray
    temperature_K: np.ndarray
    temperature_range_K: tuple[float, float] | None
    source_names: tuple[str, ...]
    source_elements: tuple[str, ...]
    source_mechanisms: tuple[str, ...]
    source_variance: np.ndarray
    frequency_Hz: np.ndarray
    output_density: np.ndarray | None
    nominal: NoiseResult
    target_rms_V: float | None = None
    method: str = ""
    ran_on: str = ""
    batched_solves: int = 0  # trial × frequency systems solved in the batched modes
    cpu_seconds: float = 0.0  # CPU time spent on the trials, summed over wherever they ran

    def __post_init__(self) -> None:
        for name in ("nominal_values", "values", "temperature_K", "source_variance", "frequency_Hz", "output_density"):
            value = getattr(self, name)
            if value is not None:
                object.__setattr__(self, name, _frozen(value))

    # totals
    @property
    def total_variance(self) -> np.ndarray:
        """(trials,) total output noise power of each trial, V²."""
        return _frozen(self.source_variance.sum(axis=1))

    @property
    def total_rms_V(self) -> np.ndarray:
        """(trials,) total output rms noise of each trial, V."""
        return _frozen(np.sqrt(self.source_variance.sum(axis=1)))

    @property
    def mean(self) -> float:
        """Mean of the total rms over the trials, V."""
        return float(np.mean(self.total_rms_V))

    @property
    def std(self) -> float:
        """Sample standard deviation (ddof=1) of the total rms, V (0 for one trial)."""
        return float(np.std(self.total_rms_V, ddof=1)) if self.trials > 1 else 0.0

    @property
    def percentiles(self) -> dict[float, float]:
        """{1: ..., 50: ..., 99: ...}: points of the total rms (V) below which
        that percentage of the trials lie (numpy's linear interpolation)."""
        points = np.percentile(self.total_rms_V, PERCENTILES)
        return {p: float(v) for p, v in zip(PERCENTILES, points)}

    @property
    def yield_fraction(self) -> float | None:
        """Fraction of trials whose total rms is at or below the target (None without one)."""
        if self.target_rms_V is None:
            return None
        return float(np.mean(self.total_rms_V <= self.target_rms_V))

    @property
    def worst_trial(self) -> int:
        """Index of the trial with the largest total."""
        return int(np.argmax(self.source_variance.sum(axis=1)))

    @property
    def worst_values(self) -> dict[str, float]:
        """The worst trial's drawn values (SI units), and its temperature in K
        under the key ``"temperature_K"`` when the temperature varies."""
        j = self.worst_trial
        out = {name: float(v) for name, v in zip(self.targets, self.values[j])}
        if self.temperature_range_K is not None:
            out["temperature_K"] = float(self.temperature_K[j])
        return out

    # sources
    @property
    def shares(self) -> np.ndarray:
        """(trials, K) each source's share of its trial's total power."""
        total = self.source_variance.sum(axis=1, keepdims=True)
        with np.errstate(invalid="ignore", divide="ignore"):
            return _frozen(np.where(total > 0, self.source_variance / np.where(total > 0, total, 1.0), 0.0))

    @property
    def dominant_counts(self) -> np.ndarray:
        """(K,) how many trials each source dominated (had the largest share in)."""
        return _frozen(np.bincount(np.argmax(self.source_variance, axis=1), minlength=len(self.source_names)), int)

    @property
    def share_percentiles(self) -> np.ndarray:
        """(3, K) the 1 %, 50 % and 99 % points of each source's share."""
        return _frozen(np.percentile(self.shares, PERCENTILES, axis=0))

    # sensitivities
    @property
    def sensitivity_names(self) -> tuple[str, ...]:
        """The varied quantities of :attr:`sensitivities`: targets, then "temperature"."""
        return self.targets + (("temperature",) if self.temperature_range_K is not None else ())

    @property
    def sensitivities(self) -> np.ndarray | None:
        """Least-squares slopes of the total rms's relative change on each
        varied quantity's relative change (targets, then the absolute
        temperature), with an intercept: about d ln(rms) / d ln(value).
        None when there are not more trials than unknowns + 1."""
        columns = [self.values / self.nominal_values[None, :] - 1.0]
        if self.temperature_range_K is not None:
            middle = 0.5 * sum(self.temperature_range_K)
            columns.append((self.temperature_K / middle - 1.0)[:, None])
        x = np.hstack(columns)
        if x.shape[1] == 0 or self.trials <= x.shape[1] + 1:
            return None
        rms = self.total_rms_V
        y = rms / rms.mean() - 1.0
        design = np.hstack([x, np.ones((self.trials, 1))])
        coefficients, *_ = np.linalg.lstsq(design, y, rcond=None)
        return _frozen(coefficients[:-1])

    # spectra
    def density_percentiles(self, percentiles: Sequence[float] = PERCENTILES) -> np.ndarray:
        """(len(percentiles), F) points of the output density (V²/Hz) over the trials, per frequency."""
        if self.output_density is None:
            raise UsageError("the per-trial densities were not kept (keep_density=False)")
        return _frozen(np.percentile(self.output_density, list(percentiles), axis=0))

    def __repr__(self) -> str:
        extra = f", yield={self.yield_fraction:.3f}" if self.target_rms_V is not None else ""
        return (
            f"MonteCarloResult(trials={self.trials}, seed={self.seed}, mean={self.mean:.4g} V, "
            f"std={self.std:.3g} V{extra})"
        )

    def _repr_html_(self) -> str:
        from netnoise.outputs.montecarlo_text import montecarlo_html

        return montecarlo_html(self)


# --- the study ----------------------------------------------------------------------
def _mode(prepared, options) -> tuple[str, str]:
    problem = prepared._problem
    settings = problem.settings
    dense = problem.system.size <= options.dense_limit
    if math.isfinite(settings.high) and dense:
        return "band", "trials × frequencies solved in batches; band integrated adaptively for every trial"
    if (
        not math.isfinite(settings.high)
        and dense
        and settings.low == 0.0
        and not problem.sources.colored.any()
        and problem.system.size <= options.exact_limit
    ):
        return "exact", "each trial's total exact to infinite bandwidth"
    return "full", "each trial analysed in full"


def montecarlo(
    circuit: ck.Circuit,
    *,
    trials: int,
    tolerances: Mapping[str, float] | Sequence[Tolerance | str] | None = None,
    distribution: str = "uniform",
    temperature_range_celsius: tuple[float, float] | None = None,
    seed: int | None = None,
    target_rms: float | None = None,
    output: str | None = None,
    reference: str | None = None,
    band: tuple[float, float] | None = None,
    points_per_decade: float | None = None,
    temperature_celsius: float | None = None,
    jobs: int | None = None,
    client: Any = None,
    chunk_trials: int | None = None,
    keep_density: bool = True,
    progress: Callable[[int], None] | None = None,
    options=None,
) -> MonteCarloResult:
    """A Monte Carlo study of ``circuit``'s output noise over part tolerances
    and temperature.

    ``tolerances``: ``{"R*": 0.01, "C3": 0.05}`` (fractions) or a sequence of
    ``"R*=1%"`` strings / :class:`Tolerance`; patterns match element names
    (hierarchical: ``X1.*``) and top-level ``.param`` names, case-insensitive;
    a later pattern wins for a name two patterns match.  ``distribution``:
    ``"uniform"`` (within ±tolerance) or ``"gauss"`` (±tolerance = ±3σ).
    ``temperature_range_celsius``: (low, high), each trial's temperature
    uniform over it; else every trial runs at ``temperature_celsius`` (or the
    netlist's/the default).  ``seed``: the root of every trial's random stream
    (None: a fresh one, recorded in the result).  ``target_rms``: V, for the
    yield.  ``jobs``: local worker processes (None: one for circuits solved
    batched, every usable core for those analysed trial by trial); ``client``: a
    ``dask.distributed.Client`` (wins over ``jobs``).  ``progress`` is called
    with the number of trials just finished.  ``chunk_trials`` overrides the
    trials per chunk (with a finite band it changes the integrator's shared
    frequencies, so the totals' last digits).  ``keep_density=False`` keeps no
    per-trial spectrum.  The other arguments are those of
    :func:`netnoise.analyze`.
    """
    from netnoise.engine.analysis import _linear_start, _positive, prepare
    from netnoise.engine.options import SolverOptions
    from netnoise.studies.execution import run_chunks

    if isinstance(trials, bool) or not isinstance(trials, (int, np.integer)) or trials < 1:
        raise UsageError(f"trials must be a whole number of 1 or more, got {trials!r}")
    trials = int(trials)
    if distribution not in DISTRIBUTIONS:
        raise UsageError(f"distribution must be one of {', '.join(DISTRIBUTIONS)}, got {distribution!r}")
    if target_rms is not None and not (target_rms > 0 and math.isfinite(target_rms)):
        raise UsageError(f"target rms must be a positive number of volts, got {target_rms!r}")
    if jobs is not None and (isinstance(jobs, bool) or int(jobs) != jobs or jobs < 1):
        raise UsageError(f"jobs must be a whole number of 1 or more, got {jobs!r}")
    range_K = None
    if temperature_range_celsius is not None:
        low_c, high_c = (float(x) for x in temperature_range_celsius)
        if not (math.isfinite(low_c) and math.isfinite(high_c)) or low_c <= -ZERO_CELSIUS_K:
            raise UsageError(f"temperature range must be finite and above -273.15 °C, got {low_c:g} to {high_c:g}")
        if not high_c >= low_c:
            raise UsageError(f"temperature range: HIGH ({high_c:g} °C) is below LOW ({low_c:g} °C)")
        range_K = (low_c + ZERO_CELSIUS_K, high_c + ZERO_CELSIUS_K)
        if temperature_celsius is None:
            temperature_celsius = 0.5 * (low_c + high_c)  # the nominal analysis: the middle of the range
    if seed is None:
        seed = int(np.random.SeedSequence().entropy)  # type: ignore[arg-type]  # an int when drawn
    elif isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or int(seed) != seed or seed < 0:
        raise UsageError(f"seed must be a whole number of 0 or more, got {seed!r}")
    seed = int(seed)
    options = options or SolverOptions()

    prepared = prepare(
        circuit,
        output=output,
        reference=reference,
        band=band,
        points_per_decade=points_per_decade,
        temperature_celsius=temperature_celsius,
        options=options,
    )
    nominal = prepared.analyze()
    tolerances = _netlist_tolerances(circuit) + _as_tolerances(tolerances)  # the netlist's first: a later one wins
    targets = _match(circuit, tolerances)
    values, temperature = _draw(targets, trials, seed, distribution, range_K, prepared._problem.settings.temperature_K)

    if keep_density:
        from netnoise.engine.resources import require_memory

        require_memory(trials * nominal.frequency_Hz.size * 8 * 2, "the per-trial output densities (keep_density)")
    mode, method = _mode(prepared, options)
    settings = prepared._problem.settings
    linear_below = None
    if mode == "band" and settings.low == 0.0:
        linear_below = _linear_start(_positive(prepared._problem.poles_Hz()), settings.high)
    model = _Model(
        prepared=prepared,
        names=targets.names,
        kinds=targets.kinds,
        mode=mode,
        grid_Hz=np.asarray(nominal.frequency_Hz, dtype=float),
        low=settings.low,
        high=settings.high,
        points_per_decade=settings.points_per_decade,
        linear_below=linear_below,
        keep_density=keep_density,
    )
    if jobs is None:  # small circuits: batched in one process; larger ones: spread over the cores
        from netnoise.studies.execution import usable_cores

        jobs = usable_cores() if mode == "full" and trials > 1 else 1
    workers = _worker_count(client, jobs)
    size = chunk_trials or _chunk_size(trials, workers, prepared._problem.system.size, mode)
    chunks = [(a, values[a : a + size], temperature[a : a + size]) for a in range(0, trials, size)]

    def on_done(i, part):
        if progress is not None:
            progress(chunks[i][1].shape[0])

    parts = run_chunks(_run_trials, model, chunks, jobs=int(jobs), client=client, on_done=on_done)
    variance = np.concatenate([p["variance"] for p in parts])
    density = np.concatenate([p["density"] for p in parts]) if keep_density else None
    if not np.all(np.isfinite(variance)) or (density is not None and not np.all(np.isfinite(density))):
        raise CircuitError("a trial produced non-finite noise values; check for extreme values or tolerances")
    if mode == "band" and density is not None and density.shape[1] != nominal.frequency_Hz.size:
        raise CircuitError("internal error: trial densities and the nominal grid differ")  # pragma: no cover
    ran_on = (
        "a dask cluster"
        if client is not None
        else f"{min(int(jobs), len(chunks))} local processes"
        if jobs > 1 and len(chunks) > 1
        else "this process"
    )
    return MonteCarloResult(
        trials=trials,
        seed=seed,
        distribution=distribution,
        tolerances=_as_tolerances(tolerances),
        targets=targets.names,
        target_kinds=targets.kinds,
        nominal_values=targets.nominal,
        values=values,
        temperature_K=temperature,
        temperature_range_K=range_K,
        source_names=nominal.source_names,
        source_elements=nominal.source_elements,
        source_mechanisms=nominal.source_mechanisms,
        source_variance=variance,
        frequency_Hz=nominal.frequency_Hz,
        output_density=density,
        nominal=nominal,
        target_rms_V=None if target_rms is None else float(target_rms),
        method=method,
        ran_on=ran_on,
        batched_solves=int(sum(p.get("solves", 0) for p in parts)),
        cpu_seconds=float(sum(p["cpu_s"] for p in parts)),
    )


def _worker_count(client, jobs: int) -> int:
    if client is None:
        return int(jobs)
    try:
        return max(1, sum(client.nthreads().values()))
    except Exception:  # noqa: BLE001 -- only a guess for the chunk size
        return 1


def _chunk_size(trials: int, workers: int, unknowns: int, mode: str) -> int:
    """Trials per chunk: enough to amortise sending a chunk and a batched
    solve's set-up, small enough for a few chunks per worker (balance, progress).

    In the "band" mode the trials of a chunk share the integrator's
    frequencies (a refinement one trial needs is solved for all), so a trial's
    total depends, in its last digits, on its chunk: there the size is fixed
    by the circuit alone, never by where the chunks run, so that a seed gives
    the same totals bit for bit in one process, on N processes or a cluster."""
    if mode == "band":
        return int(max(1, min(64, max(8, 20000 // max(1, unknowns)), trials)))
    cap = max(8, min(256, 20000 // max(1, unknowns)))
    per_worker = math.ceil(trials / (4 * workers)) if workers > 1 else cap
    return int(max(1, min(cap, per_worker, trials)))

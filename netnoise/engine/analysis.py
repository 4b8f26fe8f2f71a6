"""The noise analysis: settings resolved, circuit solved, band integrated.

:func:`analyze` is the one entry point.  It resolves the output, input
source, band, grid density and temperature (arguments first, then the
netlist's ``.noise`` / ``.temp`` cards, then defaults, each choice recorded
in the result's notes), assembles the MNA system, collects the noise
sources, and integrates the output density over the band:

* finite band: adaptive integration on the reported grid (:mod:`netnoise.integrate`);
* band from 0 Hz to infinity: the exact total, by one symmetric eigendecomposition for
  symmetric G and C (:mod:`netnoise.engine.symmetric`), else from the state space by QZ
  (:mod:`netnoise.engine.total_variance`), else (large circuits) by quadrature
  (:mod:`netnoise.engine.wideband`); :func:`totals_to_infinity` says which;
* band from low > 0 to infinity: integrated itself, adaptively up to 100x the highest pole and
  in u = 1/f above (never as the exact total minus the stretch below low, which cancels).

Before any of it, values the doubles cannot carry, impossible couplings and unstable circuits
are refused by name (:mod:`netnoise.circuit.topology`, :func:`_Problem.check_stable`).
"""

from __future__ import annotations

import contextlib
import difflib
import math
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import Any

import numpy as np

from netnoise import circuit as ck
from netnoise.circuit.topology import check_element_values, check_topology
from netnoise.constants import DEFAULT_TEMPERATURE_C, MAX_TEMPERATURE_C, T0_KELVIN, ZERO_CELSIUS_K, canonical_node
from netnoise.engformat import format_quantity
from netnoise.engine.infinite import totals_to_infinity
from netnoise.engine.integrate import integrate_band
from netnoise.engine.memo import TransferMemo
from netnoise.engine.mna import MnaSystem, assemble
from netnoise.engine.noise_sources import NoiseSources, collect_noise_sources
from netnoise.engine.operating_point import NonlinearSolution, biased
from netnoise.engine.options import SolverOptions
from netnoise.engine.rails import rail_notes
from netnoise.engine.reduced import adopt_model, band_model
from netnoise.engine.resources import require_memory
from netnoise.engine.symmetric import (
    NotSymmetricDefinite,
    SymmetricPencil,
    symmetric_pencil,
    symmetric_rates,
)
from netnoise.engine.total_variance import (
    UnstableCircuit,
    finite_scaled_eigenvalues,
    unstable_pole,
)
from netnoise.errors import CircuitError, UsageError
from netnoise.results.notes import Note
from netnoise.results.result import NoiseResult

__all__ = [
    "analyze",
    "prepare",
    "PreparedAnalysis",
    "output_density_function",
    "DEFAULT_TEMPERATURE_C",
    "DEFAULT_POINTS_PER_DECADE",
]

DEFAULT_POINTS_PER_DECADE = 20
DEFAULT_FLICKER_LOW_HZ = 0.1  # low band edge when 1/f noise is present and no band is given


@dataclass(frozen=True)
class _Settings:
    output: str
    reference: str
    input_source: str | None
    low: float
    high: float
    points_per_decade: float
    temperature_K: float
    notes: tuple[Note, ...]
    band_defaulted: bool = False


def _resolve(circuit, output, reference, input_source, band, points_per_decade, temperature_celsius) -> _Settings:
    notes = [Note("netlist", text) for text in circuit.notices]
    card = circuit.noise_card
    if output is None:
        if card is None:
            raise UsageError(
                "no output given: name the output node with --out NODE (API: output=...) "
                "or add a card such as '.noise v(out) Vin dec 20 1 100k' to the netlist"
            )
        output, reference = card.output_node, reference if reference is not None else card.reference_node
    if reference is None:
        reference = ck.GROUND
    output, reference = _known_node(circuit, output), _known_node(circuit, reference)  # 'GND', 'gnd', '0': one node
    if output == reference:
        raise UsageError(f"output node and reference node are the same ('{output}')")
    if input_source is None and card is not None and card.input_source:
        input_source = card.input_source

    sweep = card.sweep if card is not None else None
    if sweep is None and circuit.ac_sweep is not None:  # the usual pairing: the sweep is on the .ac card
        sweep = circuit.ac_sweep
        if band is None or points_per_decade is None:
            notes.append(
                Note(
                    "band-from-ac",
                    f"band and grid from the .ac card: {format_quantity(sweep.start, 'Hz')} to "
                    f"{format_quantity(sweep.stop, 'Hz')}, {sweep.kind} {sweep.points}",
                    {"low_Hz": sweep.start, "high_Hz": sweep.stop},
                )
            )
    band_defaulted = band is None and sweep is None
    if band is None:
        if sweep is not None:
            band = (sweep.start, sweep.stop)
        else:
            band = (0.0, math.inf)
            notes.append(
                Note(
                    "band-default",
                    "no band given: integrating from 0 Hz to infinite bandwidth",
                    {"low_Hz": 0.0, "high_Hz": math.inf},
                )
            )
    low, high = (float(x) for x in band)
    if math.isnan(low) or math.isnan(high) or low < 0 or math.isinf(low):
        raise UsageError(f"band low edge must be a finite frequency >= 0 Hz, got {low:g}")
    if not high > low:
        raise UsageError(f"band high edge ({high:g} Hz) must be above the low edge ({low:g} Hz)")

    if points_per_decade is None:
        if sweep is not None and sweep.kind == "dec":
            points_per_decade = sweep.points
        elif sweep is not None and sweep.kind == "oct":
            points_per_decade = sweep.points * math.log2(10.0)
        else:
            points_per_decade = DEFAULT_POINTS_PER_DECADE
            if sweep is not None:
                notes.append(
                    Note(
                        "sweep-linear",
                        f"linear sweep on the noise card: reported on a log grid of {points_per_decade} points/decade",
                        {"points_per_decade": points_per_decade},
                    )
                )
    if not (points_per_decade >= 1):
        raise UsageError(f"points per decade must be at least 1, got {points_per_decade}")

    if temperature_celsius is None:
        temperature_celsius = circuit.temperature_celsius
    if temperature_celsius is None:
        temperature_celsius = DEFAULT_TEMPERATURE_C
        notes.append(
            Note(
                "temperature-default",
                f"temperature not given: {DEFAULT_TEMPERATURE_C:g} °C (300.15 K), the customary default",
                {"temperature_K": DEFAULT_TEMPERATURE_C + ZERO_CELSIUS_K},
            )
        )
    temperature_K = float(temperature_celsius) + ZERO_CELSIUS_K
    if not temperature_K > 0 or not math.isfinite(temperature_K):
        raise UsageError(f"temperature {temperature_celsius:g} °C is below absolute zero (-273.15 °C)")
    if temperature_celsius > MAX_TEMPERATURE_C:
        raise UsageError(
            f"temperature {temperature_celsius:g} °C is above {MAX_TEMPERATURE_C:g} °C, beyond any circuit's: "
            "give the temperature in degrees Celsius"
        )
    return _Settings(
        output,
        reference,
        input_source,
        low,
        high,
        float(points_per_decade),
        temperature_K,
        tuple(notes),
        band_defaulted,
    )


def _known_node(circuit: ck.Circuit, given: str) -> str:
    """The canonical name of node ``given`` (any case); CircuitError, in the user's spelling and
    with the netlist's close names, when the circuit has no such node."""
    key = canonical_node(given)
    if key == ck.GROUND or key in circuit.node_set:
        return key
    close = difflib.get_close_matches(key, list(circuit.node_set), n=3)
    hint = f"; did you mean {', '.join(circuit.shown_node(n) for n in close)}?" if close else ""
    raise CircuitError(f"node '{given}' does not exist in the circuit{hint}")


class _Problem:
    """The assembled circuit with its output selector, sources and input."""

    def __init__(
        self,
        circuit: ck.Circuit,
        settings: _Settings,
        progress: Callable[[int], None] | None = None,
        system: MnaSystem | None = None,
        options: SolverOptions | None = None,
        solution: NonlinearSolution | None = None,
    ):
        self.progress = progress
        self.settings = settings
        self.options = options or SolverOptions()
        if system is None:
            check_topology(circuit)
            # nonlinear elements: linearised at their DC operating point (a linear circuit is returned as it is)
            circuit, solution = biased(circuit, settings.temperature_K)
        check_element_values(circuit)  # values can change on a refill: checked every time
        if system is None:
            system = assemble(circuit)
        self.system: MnaSystem = system
        self.solution = solution
        self.selector = self.system.node_pair_vector(settings.output, settings.reference)
        dc = None if solution is None else (lambda: solution.x)
        self.sources: NoiseSources = collect_noise_sources(self.system, settings.temperature_K, dc)
        self.input_vector = None
        self.input_unit = None
        if settings.input_source is not None:
            self.input_vector, self.input_unit = self.system.excitation_vector(settings.input_source)
        self._memo: TransferMemo | None = None  # set for the length of one analysis (remembering)
        # a reduced model (netnoise.engine.gramian.ReducedModel) standing in for the full solves
        # in densities(), once checked against them (adopt_model)
        self.model: Any = None

    @contextlib.contextmanager
    def remembering(self, keep_rows: bool = True) -> Iterator[TransferMemo]:
        """Within: every frequency solved is kept (:class:`~netnoise.engine.memo.TransferMemo`)
        and not solved again -- the per-source rows only with ``keep_rows``, the signal's |H|²
        always; after: forgotten, so that no later analysis (a refill with other values, a
        rerun) sees these solves.  Nested uses share the outer memo."""
        if self._memo is not None:
            yield self._memo
            return
        self._memo = TransferMemo(len(self.sources), keep_rows)
        try:
            yield self._memo
        finally:
            self._memo = None

    def refilled(self, circuit: ck.Circuit) -> _Problem:
        """The same problem for ``circuit``, a copy of this one's circuit with
        other values: topology, ordering and output kept; G, C and the noise
        densities stamped anew."""
        circuit, solution = biased(circuit, self.settings.temperature_K)
        return _Problem(circuit, self.settings, self.progress, self.system.refilled(circuit), self.options, solution)

    @property
    def has_input(self) -> bool:
        return self.input_vector is not None

    def densities(self, frequency_Hz: np.ndarray, part: str = "full", extra_colored: bool = False) -> np.ndarray:
        """Rows of output density (V²/Hz) at ``frequency_Hz``: every source's
        ``part`` ("full", "white" or "colored"); then, with ``extra_colored``,
        the 1/f part of each colored source again; then |H|² of the input."""
        from netnoise.engine.transfer import transfer_power  # blocks of frequencies, never all (F, n) solutions at once

        k = len(self.sources)
        colored = np.flatnonzero(self.sources.colored) if extra_colored else np.zeros(0, dtype=np.intp)
        rows = k + colored.size + self.has_input
        require_memory(rows * np.size(frequency_Hz) * 8, "the per-source transfer at every frequency")
        out = np.empty((rows, np.size(frequency_Hz)))  # filled in place: no stacking copy
        with np.errstate(over="ignore", invalid="ignore"):  # an overflow here is refused just below, by name
            if self.model is not None:  # a checked reduced model: a small dense solve per frequency
                reduced = self.model.power(np.asarray(frequency_Hz, dtype=float))
                out[:k] = reduced[:k]
                signal = reduced[k] if self.has_input else None
                if self.progress is not None:
                    self.progress(int(np.size(frequency_Hz)))
            elif self._memo is None:
                _, signal = transfer_power(
                    self.system,
                    self.selector,
                    self.sources.injection,
                    self.input_vector,
                    frequency_Hz,
                    power_out=out[:k],
                    progress=self.progress,
                    options=self.options,
                )
            else:
                signal = self._remembered_power(np.asarray(frequency_Hz, dtype=float), out[:k])
            power = out[:k]
            if colored.size:
                out[k : k + colored.size] = power[colored] * self.sources.density(frequency_Hz, "colored")[colored]
            power *= self.sources.density(frequency_Hz, part)
            if signal is not None:
                out[-1] = signal
        if not np.isfinite(out).all():
            self._refuse_overflow(out[:k], signal)
        return out

    def _remembered_power(self, f: np.ndarray, power_out: np.ndarray) -> np.ndarray | None:
        """Every source's power transfer at ``f`` into ``power_out`` (K, F) and |H|² of the input
        (F,) or None, solving only the frequencies the memo does not hold."""
        from netnoise.engine.transfer import transfer_power

        memo = self._memo
        assert memo is not None
        new = memo.unknown(f)
        if new.size == f.size:  # all new (the grid, the integrator's refinements): solved in place
            _, signal = transfer_power(
                self.system,
                self.selector,
                self.sources.injection,
                self.input_vector,
                f,
                power_out=power_out,
                progress=self.progress,
                options=self.options,
            )
            memo.keep(f, power_out.copy() if memo.keep_rows else None, signal)  # power_out is scaled in place
            return signal
        fresh: dict[float, tuple[np.ndarray, int]] = {}
        if new.size:
            require_memory(len(self.sources) * new.size * 8, "the per-source transfer at every frequency")
            block = np.empty((len(self.sources), new.size))
            _, new_signal = transfer_power(
                self.system,
                self.selector,
                self.sources.injection,
                self.input_vector,
                new,
                power_out=block,
                progress=self.progress,
                options=self.options,
            )
            memo.keep(new, block, new_signal)
            fresh = {fi: (block, j) for j, fi in enumerate(new.tolist())}
        memo.fill(f, power_out, fresh)
        return memo.signal(f) if self.has_input else None

    def _refuse_overflow(self, power: np.ndarray, signal: np.ndarray | None) -> None:
        """CircuitError naming the sources (or the signal path) whose output density overflowed:
        a squared transfer times a source density beyond the largest double (~1.8e308)."""
        bad = np.flatnonzero(~np.isfinite(power).all(axis=1))
        names = [f"{self.sources.sources[i].name} ({self.sources.sources[i].value})" for i in bad]
        what = ", ".join(names[:5]) + (f" and {len(names) - 5} more" if len(names) > 5 else "")
        if not what:
            what = "the signal input" if signal is not None and not np.isfinite(signal).all() else "a source"
        raise CircuitError(
            f"the output noise density of {what} overflows (above ~1e308 V²/Hz): a transfer to the output is "
            f"too large to square (largest element values: {_extreme_values(self.system.circuit)}). "
            "Check the gains and element values"
        )

    def groups(self, extra_colored: bool = False) -> list[slice]:
        """Row ranges judged together by the integrator, matching :meth:`densities`."""
        k = len(self.sources)
        out = [slice(0, k)]
        if extra_colored:
            kc = int(np.count_nonzero(self.sources.colored))
            out.append(slice(k, k + kc))
            k += kc
        return out + ([slice(k, k + 1)] if self.has_input else [])

    def symmetric(self) -> SymmetricPencil | None:
        """The reduced symmetric-definite pencil (:func:`netnoise.engine.symmetric.symmetric_pencil`)
        when G and C are symmetric, C definite where it is not zero, and the circuit has at most
        ``symmetric_limit`` unknowns; else None.  Cached."""
        if "_symmetric" not in self.__dict__:
            pencil = None
            if self.system.size <= self.options.symmetric_limit:
                try:
                    pencil = symmetric_pencil(self.system.G, self.system.C)
                except NotSymmetricDefinite:
                    pencil = None
            self.__dict__["_symmetric"] = pencil
        return self.__dict__["_symmetric"]

    def symmetric_rates(self) -> np.ndarray | None:
        """The rates λ_i (1/s, poles at −λ_i) of the symmetric pencil, None without one; not
        checked for sign (:meth:`check_stable` judges them).  Cached; the exact total's
        decomposition fills the cache too."""
        if "_rates" not in self.__dict__:
            pencil = self.symmetric()
            self.__dict__["_rates"] = None if pencil is None else symmetric_rates(pencil)
        return self.__dict__["_rates"]

    def poles_Hz(self) -> np.ndarray | None:
        """Magnitudes of the finite poles (Hz): all of them up to the exact limit of
        unknowns (the symmetric eigenvalues for symmetric G and C, else dense QZ), or
        when the symmetric decomposition is at hand; beyond it, estimates of the lowest and highest
        only (:func:`netnoise.wideband.pole_range_Hz`, sparse, no dense matrix)."""
        rates = self.__dict__.get("_rates")
        if rates is None and self.system.size <= self.options.exact_limit and self.symmetric() is not None:
            rates = self.symmetric_rates()
        if rates is not None:
            return np.abs(rates) / (2 * math.pi)
        if self.system.size > self.options.exact_limit:
            from netnoise.engine.wideband import pole_range_Hz

            cached = self.__dict__.get("_pole_range")
            if cached is None:
                cached = self.__dict__["_pole_range"] = pole_range_Hz(self.system.G, self.system.C)
            return None if cached is None else np.array(cached)
        lam, s0 = self.scaled_eigenvalues()
        return np.abs(lam) * s0 / (2 * math.pi)

    def scaled_eigenvalues(self) -> tuple[np.ndarray, float]:
        """The finite generalized eigenvalues of (−G, C), scaled, and their time scale s0
        (poles p = λ·s0 rad/s): the negated symmetric rates (s0 = 1) for symmetric G and C,
        else dense QZ, for circuits up to the exact limit of unknowns; cached."""
        if self.symmetric() is not None:
            rates = self.symmetric_rates()
            assert rates is not None
            return -rates, 1.0
        cached = self.__dict__.get("_eigenvalues")
        if cached is None:
            cached = self.__dict__["_eigenvalues"] = finite_scaled_eigenvalues(
                self.system.G.toarray(), self.system.C.toarray()
            )
        return cached

    def refuse_unstable(self, found: UnstableCircuit) -> None:
        """Raise ``found`` again with the elements that can supply gain named (the loop that
        makes a pole grow runs through one of them: the passive ones are positive)."""
        active = self.active_elements()
        who = (
            f"; the loop runs through one of the elements that can supply gain: {', '.join(active[:8])}"
            + (f" and {len(active) - 8} more" if len(active) > 8 else "")
            + " (check the feedback signs and gains)"
            if active
            else ""
        )
        raise CircuitError(str(found) + who) from None

    def active_elements(self) -> list[str]:
        """Names of the elements that can supply gain: controlled sources and amplifiers."""
        return [e.name for e in self.system.circuit.elements if e.supplies_gain]

    def check_stable(self, notes: list[Note]) -> None:
        """Refuse a circuit with a pole right of the imaginary axis (positive feedback): its noise
        grows without limit, so no band total of it means anything.  Checked with the symmetric
        eigenvalues up to the symmetric limit (symmetric G and C), else with the dense QZ
        up to the exact limit of unknowns; beyond, said in the notes that it was not checked.  A network
        of positive R, C, L and realisable couplings alone (values checked before) is passive: its
        stored energy can only decay, so it needs no check (and large ladders no QZ)."""
        if not self.active_elements():
            return
        if self.system.size > self.options.exact_limit and self.symmetric() is None:
            notes.append(
                Note(
                    "stability-unchecked",
                    f"stability not checked: {self.system.size} unknowns, above the {self.options.exact_limit} of the dense pole "
                    "computation (a circuit with positive feedback would give meaningless totals)",
                    {"unknowns": self.system.size, "exact_limit": self.options.exact_limit},
                )
            )
            return
        lam, s0 = self.scaled_eigenvalues()
        found = unstable_pole(lam, s0, lossless_too=False)
        if found is not None:
            self.refuse_unstable(found)


def _decade_floor(x: float) -> float:
    return 10.0 ** math.floor(math.log10(x))


def _decade_ceil(x: float) -> float:
    return 10.0 ** math.ceil(math.log10(x))


def _positive(poles):
    return poles[poles > 0] if poles is not None else np.zeros(0)


def analyze(
    circuit: ck.Circuit,
    *,
    output: str | None = None,
    reference: str | None = None,
    input_source: str | None = None,
    band: tuple[float, float] | None = None,
    points_per_decade: float | None = None,
    temperature_celsius: float | None = None,
    source_resistor: str | None = None,
    progress: Callable[[int], None] | None = None,
    options: SolverOptions | None = None,
    gain_at_Hz: float | None = None,
) -> NoiseResult:
    """Output noise of ``circuit`` at v(output) - v(reference).

    ``band`` is (low, high) in Hz, high may be ``math.inf``; ``temperature_celsius``
    in °C.  Arguments left None come from the netlist's ``.noise``/``.temp``
    cards, else defaults (0 Hz to infinity -- from 0.1 Hz when there is 1/f
    noise --, 20 points/decade, 27 °C).  ``source_resistor`` names the
    resistor the noise figure is referred to (its noise taken at T0 = 290 K).
    ``progress``, for a progress display, is called with the number of
    frequencies just solved (grid points first, then the integrator's extra ones).
    ``options`` (:class:`~netnoise.engine.options.SolverOptions`) chooses the
    solver path, the dense and exact limits and the integrator's tolerance.
    ``gain_at_Hz``: the frequency whose signal gain the input-referred figures
    use (default: the pass band's gain, see :func:`_pass_band_gain`).
    """
    return prepare(
        circuit,
        output=output,
        reference=reference,
        input_source=input_source,
        band=band,
        points_per_decade=points_per_decade,
        temperature_celsius=temperature_celsius,
        source_resistor=source_resistor,
        progress=progress,
        options=options,
        gain_at_Hz=gain_at_Hz,
    ).analyze()


class PreparedAnalysis:
    """An analysis set up once -- settings resolved, topology checked,
    system assembled, sources collected -- to run, and to run again with
    other values without reading or checking the circuit again.

    >>> prepared = prepare(circuit, output="out", band=(10, 100e3))
    >>> first = prepared.analyze()
    >>> second = prepared.with_values({"C1": 22e-12}).analyze()
    """

    def __init__(self, problem: _Problem, source_resistor: str | None, gain_at_Hz: float | None = None) -> None:
        self._problem = problem
        self._source_resistor = source_resistor
        self._gain_at_Hz = gain_at_Hz

    @property
    def circuit(self) -> ck.Circuit:
        return self._problem.system.circuit

    @property
    def problem(self) -> _Problem:
        """The assembled problem (system, output selector, sources, input), for studies."""
        return self._problem

    @property
    def system(self) -> MnaSystem:
        return self._problem.system

    def analyze(self) -> NoiseResult:
        """The noise result of this circuit with these settings."""
        # every frequency solved once in this analysis, forgotten after it; the per-source rows are
        # asked again only on a band to infinity (a finite band's later questions are the signal's)
        with self._problem.remembering(keep_rows=math.isinf(self._problem.settings.high)):
            return _analyze(self._problem, self._source_resistor, self._gain_at_Hz)

    def with_circuit(self, circuit: ck.Circuit) -> PreparedAnalysis:
        """This analysis for ``circuit``, the same circuit with other values
        (CircuitError if its structure differs)."""
        circuit = circuit.at_temperature(self._problem.settings.temperature_K - ZERO_CELSIUS_K)
        return PreparedAnalysis(self._problem.refilled(circuit), self._source_resistor, self._gain_at_Hz)

    def with_values(self, values: dict[str, float]) -> PreparedAnalysis:
        """This analysis with the primary values of named elements replaced (SI units)."""
        return self.with_circuit(self.circuit.with_values(values))

    def with_params(self, params: dict[str, float]) -> PreparedAnalysis:
        """This analysis with top-level ``.param`` values replaced."""
        return self.with_circuit(self.circuit.with_params(params))


def prepare(
    circuit: ck.Circuit,
    *,
    output: str | None = None,
    reference: str | None = None,
    input_source: str | None = None,
    band: tuple[float, float] | None = None,
    points_per_decade: float | None = None,
    temperature_celsius: float | None = None,
    source_resistor: str | None = None,
    progress: Callable[[int], None] | None = None,
    options: SolverOptions | None = None,
    gain_at_Hz: float | None = None,
) -> PreparedAnalysis:
    """An analysis of ``circuit`` set up to run (and rerun with other values);
    the arguments are those of :func:`analyze`."""
    settings = _resolve(circuit, output, reference, input_source, band, points_per_decade, temperature_celsius)
    if gain_at_Hz is not None and not (math.isfinite(gain_at_Hz) and gain_at_Hz >= 0.0):
        raise UsageError(f"the frequency the gain is taken at must be 0 Hz or more and finite, got {gain_at_Hz!r}")
    circuit = circuit.at_temperature(settings.temperature_K - ZERO_CELSIUS_K)  # resistors' tc1, tc2
    return PreparedAnalysis(_Problem(circuit, settings, progress, options=options), source_resistor, gain_at_Hz)


def _analyze(problem: _Problem, source_resistor: str | None, gain_at_Hz: float | None = None) -> NoiseResult:
    settings = problem.settings
    circuit = problem.system.circuit
    notes = list(settings.notes)
    notes += rail_notes(problem.system)  # amplifiers drawn with supply pins: pins within the rails at DC
    low, high = settings.low, settings.high
    sources = problem.sources
    k = len(sources)
    colored = bool(sources.colored.any())
    if colored and low == 0.0:
        if not settings.band_defaulted:
            names = [s.name for s, c in zip(sources.sources, sources.colored) if c]
            shown_names = ", ".join(names[:4]) + (f" and {len(names) - 4} more" if len(names) > 4 else "")
            raise CircuitError(
                f"the 1/f noise of {shown_names} integrated from 0 Hz is unbounded (its power grows "
                "without limit as the band reaches down to DC): start the band above 0 Hz, "
                "e.g. --band 0.1 HIGH"
            )
        low = DEFAULT_FLICKER_LOW_HZ
        notes.append(
            Note(
                "flicker-band-start",
                f"1/f noise present: the default band starts at {DEFAULT_FLICKER_LOW_HZ:g} Hz "
                "(1/f noise integrated from 0 Hz is unbounded)",
                {"low_Hz": DEFAULT_FLICKER_LOW_HZ},
            )
        )
    if math.isinf(high):
        if problem.system.size > problem.options.exact_limit:  # the exact method below checks the smaller ones
            problem.check_stable(notes)
        infinite = totals_to_infinity(problem)  # white parts, from 0 Hz to infinity
        poles = _positive(infinite.poles_Hz)
        method, total_method, total_tolerance = infinite.note, infinite.method, infinite.tolerance
        top = _decade_ceil(poles.max() * 100) if poles.size else 1e9
        start = low if low > 0 else (_decade_floor(poles.min() / 100) if poles.size else top * 1e-9)
        top = max(top, start * 1e3)
        model = problem.__dict__.pop("_lowrank_model", None)  # the low-rank totals' reduced model
        model_note = adopt_model(problem, model, low, top, start) if model is not None else None
        try:
            shown = integrate_band(
                lambda f: problem.densities(f, "full", extra_colored=colored),
                low,
                top,
                points_per_decade=settings.points_per_decade,
                groups=problem.groups(extra_colored=colored),
                linear_below=start if low == 0.0 else None,
                rtol=problem.options.rtol,
            )
        finally:
            problem.model = None  # checked up to top only: the tail above it is solved in full
        rel_error = 0.0
        if low > 0.0:
            # [low, inf) integrated itself, never as the exact [0, inf) total minus a numerical [0, low]
            # (that difference cancels catastrophically for a band far above the poles): the full
            # densities over [low, top] (`shown`, 1/f parts included), plus the white parts above top,
            # which fall at least as 1/f² there, integrated in u = 1/f (:func:`_white_tail`).
            # Above top the 1/f parts are negligible (and unbounded where a path does not roll off).
            tail, tail_error = _white_tail(problem, top)
            first_row = k + (int(sources.colored.sum()) if colored else 0)
            totals = np.concatenate([shown.values[:k], shown.values[first_row:]]) + tail
            rel_error = shown.rel_error + tail_error
            total_method, total_tolerance = "quadrature", rel_error
            if model_note is not None:
                total_method, total_tolerance = "reduced-model", rel_error + model_note.data["error"]
            method = (
                f"from {format_quantity(low, 'Hz')} to infinite bandwidth: integrated numerically up to there, "
                "and above it in the variable 1/f"
            )
        else:
            totals = infinite.variance
        totals = np.maximum(totals, 0.0)
        notes.append(
            Note(
                "spectrum-range",
                f"spectrum shown up to {format_quantity(top, 'Hz')} "
                + ("(100x the highest pole); " if low * 1e3 < top else "(3 decades above the band's low edge); ")
                + method
                + ("; 1/f parts are integrated up to there" if colored else ""),
                {"top_Hz": top},
            )
        )
        gain_row = k + (int(sources.colored.sum()) if colored else 0)
    else:
        problem.check_stable(notes)
        poles = _positive(problem.poles_Hz()) if low == 0.0 else None
        model_note = band_model(problem, low, high)  # large circuits, many frequencies
        try:
            shown = integrate_band(
                problem.densities,
                low,
                high,
                points_per_decade=settings.points_per_decade,
                groups=problem.groups(),
                linear_below=_linear_start(poles, high) if low == 0.0 else None,
                rtol=problem.options.rtol,
            )
        finally:
            problem.model = None
        totals = shown.values
        rel_error = shown.rel_error
        total_method, total_tolerance = "quadrature", rel_error
        if model_note is not None:
            total_method, total_tolerance = "reduced-model", rel_error + model_note.data["error"]
        gain_row = k
    if model_note is not None:
        notes.append(model_note)
    if rel_error > 1e-4:
        notes.append(
            Note(
                "integration-accuracy",
                f"band integral converged only to about {rel_error:.1e} relative; "
                "a denser grid (more points per decade) tightens it",
                {"rel_error": rel_error},
            )
        )

    source_variance = totals[:k]
    source_density = shown.grid_density[:k]
    gain = gain_integral = gain_peak = reference = reference_Hz = None
    if problem.has_input:
        gain = np.sqrt(shown.grid_density[gain_row])
        gain_peak = math.sqrt(_gain_peak_power(problem, shown, gain_row, low, high, settings.points_per_decade))
        reference, reference_Hz = _pass_band_gain(problem, gain_at_Hz, low, high, gain_peak)
        gain_integral = float(totals[-1]) if math.isfinite(totals[-1]) else None
        if gain_integral is None:
            notes.append(Note("signal-unbounded", "the signal path has no roll-off: its noise bandwidth is unbounded"))
    _refuse_non_finite(source_variance, source_density)
    _refuse_underflow(problem, source_variance)
    figure = _noise_figure(problem, source_resistor, source_variance, source_density) if source_resistor else None
    return NoiseResult(
        title=circuit.title,
        temperature_K=settings.temperature_K,
        output_node=circuit.shown_node(settings.output),  # as the netlist spelled it
        reference_node=circuit.shown_node(settings.reference),
        input_source=problem.system.circuit.element(settings.input_source).name
        if settings.input_source and problem.has_input
        else None,
        input_unit=problem.input_unit,
        band_low_Hz=low,
        band_high_Hz=high,
        frequency_Hz=shown.grid_Hz,
        source_names=tuple(s.name for s in sources.sources),
        source_mechanisms=tuple(s.mechanism for s in sources.sources),
        source_values=np.array([s.value for s in sources.sources], dtype=float),
        source_units=tuple(s.unit for s in sources.sources),
        source_details=tuple(s.details for s in sources.sources),
        source_elements=tuple(s.element for s in sources.sources),
        source_density=source_density,
        source_variance=source_variance,
        cumulative_variance=shown.grid_cumulative[0],
        gain=gain,
        gain_squared_integral=gain_integral,
        gain_peak=gain_peak,
        gain_reference=reference,
        gain_reference_Hz=reference_Hz,
        source_resistor=figure.resistor if figure else None,
        noise_figure_spectrum_dB=figure.spectrum_dB if figure else None,
        noise_figure_dB=figure.integrated_dB if figure else None,
        integration_rel_error=rel_error,
        total_method=total_method,
        total_tolerance=total_tolerance,
        notes=tuple(notes),
    )


# the peak search stops within this distance in ln f of the peak: the peak value is then
# within ~(this · Q)² relative of the true maximum (|H|² is quadratic in ln f at its top, with
# curvature ~Q²), i.e. rounding for any Q up to 1e3
_PEAK_POINTS = 17  # frequencies solved together in each round of the peak search
# bracket width in ln f below which the last round's parabola gives the vertex: its samples are
# 6e-5 apart, where a peak of any Q short of a lossless one is a parabola to far below 1e-6
_PEAK_BRACKET = 1e-3
_PEAK_MAX_ROUNDS = 12  # each round narrows the bracket eightfold


def _gain_peak_power(problem: _Problem, shown, row: int, low: float, high: float, points_per_decade: float) -> float:
    """The largest |H|² of the signal path in the band: the largest sample of the integrator
    (grid, refinements, 0 Hz), refined by a parabolic search in ln f between its
    neighbours, which lie within one grid step on either side (a sample is never further than
    that from the next one): a peak between grid points is found, not its nearest sample."""
    best = float(shown.sample_max[row])
    at = float(shown.sample_argmax_Hz[row]) if shown.sample_argmax_Hz is not None else float("nan")
    if not (at > 0.0 and math.isfinite(at)):  # at 0 Hz, or not known: the band edge is the peak
        return best
    step = 10.0 ** (1.0 / points_per_decade)
    lo, hi = math.log(max(at / step, low if low > 0 else at / step)), math.log(min(at * step, high))
    if not hi > lo:
        return best

    # zoom in batches: each round solves _PEAK_POINTS frequencies at once across the bracket and
    # keeps the two intervals around the largest; then the parabola through the best three
    # samples gives the vertex (|H|² is a parabola in ln f at its top), solved once more.
    # A few batched solves, not dozens of single ones.
    found = best
    a, c = lo, hi
    vertex: float | None = None
    for _ in range(_PEAK_MAX_ROUNDS):
        u = np.linspace(a, c, _PEAK_POINTS)
        points = np.append(u, vertex) if vertex is not None else u  # last round's vertex solved beside them
        _, values = _transfer_signal(problem, np.exp(points))
        found = max(found, float(values.max()))
        values = values[: u.size]
        i = int(np.argmax(values))
        vertex = None
        if 0 < i < u.size - 1:
            y0, y1, y2 = values[i - 1], values[i], values[i + 1]
            den = y0 - 2.0 * y1 + y2
            if den < 0.0:  # a maximum: the vertex of the parabola through the three samples
                vertex = float(u[i] + 0.5 * (u[1] - u[0]) * (y0 - y2) / den)
        a, c = u[max(i - 1, 0)], u[min(i + 1, u.size - 1)]
        if c - a <= _PEAK_BRACKET:  # narrow enough that |H|² is a parabola across it
            break
    if vertex is not None:
        _, top = _transfer_signal(problem, np.array([math.exp(vertex)]))
        found = max(found, float(top[0]))
    return max(best, found)


# a path whose DC gain is at least this fraction of its peak passes DC: its pass band starts there
_PASSES_DC = 1e-3


def _pass_band_gain(
    problem: _Problem, at_Hz: float | None, low: float, high: float, peak: float
) -> tuple[float, float | None]:
    """(|H|, f in Hz) the input-referred figures use: at ``at_Hz`` when given; else the
    pass band's gain -- the low-frequency (DC) gain of a path that passes DC (a low-pass, a
    transimpedance stage: not its peaking), else the gain at the band's geometric centre
    (a band-pass, a high-pass), else the peak for a band from 0 Hz or to infinity."""
    if at_Hz is None:
        _, dc_power = _transfer_signal(problem, np.array([0.0]))
        dc = math.sqrt(float(dc_power[0]))
        if dc >= _PASSES_DC * peak:
            return dc, 0.0
        if not (low > 0.0 and math.isfinite(high)):
            return peak, None  # the peak's frequency lies between samples
        at_Hz = math.sqrt(low * high)
    _, power = _transfer_signal(problem, np.array([at_Hz]))
    return math.sqrt(float(power[0])), at_Hz


def _transfer_signal(problem: _Problem, frequency_Hz: np.ndarray):
    """(None, |H|²) of the signal path alone (no noise sources) at ``frequency_Hz``: the
    adjoint solution against the input vector, on the problem's own (cached) solver; within
    an analysis, only at frequencies its memo does not hold yet."""
    from netnoise.engine.transfer import transfer_power

    assert problem.input_vector is not None  # called for a signal path only
    f = np.asarray(frequency_Hz, dtype=float).ravel()
    memo = problem._memo
    new = f if memo is None else memo.unknown_signal(f)
    with np.errstate(over="ignore", invalid="ignore"):  # an overflow is refused by the callers, by name
        _, signal = transfer_power(
            problem.system, problem.selector, None, problem.input_vector, new, options=problem.options
        )
    assert signal is not None
    if memo is None:
        return None, signal
    memo.keep(new, None, signal)
    return None, memo.signal(f)


def _linear_start(poles: np.ndarray | None, high: float) -> float:
    """Where the log grid starts for a band from 0 Hz: well below the lowest pole."""
    if poles is not None and poles.size:
        return min(high / 10.0, _decade_floor(poles.min() / 100.0))
    return high * 1e-4


# Gauss–Legendre nodes for the white noise above `top` in u = 1/f: top is at least 100x the
# highest pole, so S(1/u)/u² is analytic on [0, 1/top] with its nearest singularity 100 interval
# lengths away; 16 nodes then reach rounding, and 8 nodes give the error estimate.
_TAIL_NODES = 16


def _white_tail(problem: _Problem, top: float) -> tuple[np.ndarray, float]:
    """∫_top^∞ of every white row of :meth:`_Problem.densities` (sources, then |H|² of the input),
    in u = 1/f: ∫_0^{1/top} S(1/u) u⁻² du (no node at u = 0, i.e. no solve at infinite
    frequency); and the estimated relative error of the largest group total."""
    rules = []
    for nodes in (_TAIL_NODES, _TAIL_NODES // 2):
        x, w = np.polynomial.legendre.leggauss(nodes)
        u = (x + 1.0) / (2.0 * top)
        density = problem.densities(1.0 / u, "white")
        rules.append(density @ (w / (2.0 * top) / u**2))
    fine, coarse = rules
    error = 0.0
    for rows in problem.groups():
        total = float(np.sum(fine[rows]))
        if total > 0:
            error = max(error, float(np.sum(np.abs(fine[rows] - coarse[rows]))) / total)
    return fine, error


def _extreme_values(circuit: ck.Circuit, most: int = 3) -> str:
    """The elements whose values lie furthest from 1 in decades, e.g. "E1 = 1e+45, R2 = 1e-40",
    to name in a message about overflow or underflow."""
    values = []
    for element in circuit.elements:
        value = element.primary_value
        if value is not None and value != 0.0 and math.isfinite(value):
            values.append((abs(math.log10(abs(value))), f"{element.name} = {value:g}"))
    values.sort(key=lambda pair: -pair[0])
    return ", ".join(text for _, text in values[:most]) or "none"


# below the smallest normal double a value has lost digits (subnormal) or is 0 by underflow
_SMALLEST_NORMAL = float(np.finfo(float).tiny)


def _refuse_underflow(problem: _Problem, variance: np.ndarray) -> None:
    """CircuitError naming the sources whose noise underflowed: a source density below the
    smallest normal double (2.2e-308), or every source when the positive total at the output is.
    (One source's share may underflow where it is filtered away, e.g. far up a ladder while its
    neighbours carry the total: that is no error, its share is rightly negligible.)"""
    white = np.asarray(problem.sources.white_density)
    small = (white > 0) & (white < _SMALLEST_NORMAL)
    total = float(variance.sum())
    if 0.0 < total < _SMALLEST_NORMAL:
        small |= variance > 0
    if small.any():
        names = [problem.sources.sources[i].name for i in np.flatnonzero(small)]
        raise CircuitError(
            f"the output noise of {', '.join(names[:5])}{' and more' if len(names) > 5 else ''} underflows: it is "
            f"below {_SMALLEST_NORMAL:.3g} (V²/Hz or V²), the smallest number computed with full precision, so it "
            f"would be shown as 0 or with wrong digits (most extreme values: {_extreme_values(problem.system.circuit)}). "
            "Bring the element values closer to those of the real parts"
        )


def _refuse_non_finite(variance: np.ndarray, density: np.ndarray) -> None:
    if not (np.all(np.isfinite(variance)) and np.all(np.isfinite(density))):
        raise CircuitError(
            "the analysis produced non-finite noise values (overflow or a near-singular circuit); "
            "check for extreme element values or a resonance without loss"
        )


def output_density_function(
    circuit: ck.Circuit, *, output: str, reference: str = ck.GROUND, temperature_celsius: float = DEFAULT_TEMPERATURE_C
):
    """A function f (Hz, array) -> total output noise density (V²/Hz), for
    users who integrate or plot it themselves."""
    settings = _resolve(circuit, output, reference, None, (1.0, 2.0), 1, temperature_celsius)
    problem = _Problem(circuit.at_temperature(temperature_celsius), settings)

    def density(frequency_Hz):
        return problem.densities(np.atleast_1d(np.asarray(frequency_Hz, dtype=float))).sum(axis=0)

    return density


@dataclass(frozen=True)
class _NoiseFigure:
    resistor: str
    spectrum_dB: np.ndarray
    integrated_dB: float


def _noise_figure(problem: _Problem, name: str, variance: np.ndarray, density: np.ndarray) -> _NoiseFigure:
    """Noise figure referred to resistor ``name``, its noise taken at T0 = 290 K
    whatever the circuit's temperature (IEEE definition; Friis 1944)."""
    sources = problem.sources.sources
    key = ck.name_key(name)
    try:
        element = problem.system.circuit.element(name)
    except KeyError:
        raise UsageError(f"source resistor '{name}' does not exist in the circuit") from None
    if type(element).letter != "R":
        raise UsageError(f"source resistor '{name}' is a {type(element).__name__}, not a resistor")
    found = [i for i, s in enumerate(sources) if s.mechanism == "thermal" and ck.name_key(s.element) == key]
    if not found or variance[found[0]] <= 0.0:
        raise CircuitError(
            f"the noise figure needs the thermal noise of '{name}' to reach the output, and it does not "
            "(marked quiet, or not connected to the signal path)"
        )
    i = found[0]
    to_t0 = T0_KELVIN / (sources[i].temperature_K or T0_KELVIN)
    source_power = variance[i] * to_t0
    total = float(variance.sum()) - variance[i] + source_power
    source_density = density[i] * to_t0
    with np.errstate(divide="ignore", invalid="ignore"):
        spot = 10.0 * np.log10((density.sum(axis=0) - density[i] + source_density) / source_density)
    return _NoiseFigure(element.name, spot, 10.0 * math.log10(total / source_power))

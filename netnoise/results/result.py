"""The immutable result of a noise analysis.

Axis order, fixed for the whole project: **sources first, then frequency**.
``source_density[k, i]`` is the one-sided output noise power density (V²/Hz)
that noise source ``k`` produces at ``frequency[i]`` (Hz).

The object stores the minimum (grid, per-source densities, per-source band
integrals, the cumulative total) and derives everything else as properties.
All arrays are read-only.  Units are SI throughout; engineering units belong
to :mod:`netnoise.report` and :mod:`netnoise.plotting`.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from netnoise.results.notes import Note, as_note

__all__ = ["Contribution", "NoiseResult", "SourceBudget", "TOTAL_METHODS"]

#: How a result's totals were found: exact by the state space (QZ), exact by one symmetric
#: eigendecomposition, by a low-rank Gramian, by numerical integration, or by numerical
#: integration of a reduced model checked against the full circuit.
TOTAL_METHODS = ("exact-qz", "exact-symmetric", "low-rank", "quadrature", "reduced-model")


def _frozen(array, dtype=float) -> np.ndarray:
    out = np.array(array, dtype=dtype, copy=True)
    out.setflags(write=False)
    return out


@dataclass(frozen=True)
class Contribution:
    """One row of the ranked noise budget.

    ``label`` names the row as the budget is grouped (a source, an element
    or a mechanism); ``source``, ``element`` and ``mechanism`` say what it is
    (``source`` is None for a merged row, ``element`` None for a row merging
    several elements).  ``value`` (in ``unit``) is the number that sets the
    source -- a resistance in Ω, a density in V/√Hz, a DC current in A --
    or None; ``details`` further numbers keyed with their units.
    ``index`` is the row of this source in the per-source arrays
    (``source_density[index]``), None for a merged row; ``count`` the number
    of sources in the row.
    """

    label: str
    source: str | None
    element: str | None
    mechanism: str
    value: float | None
    unit: str
    variance_V2: float  # band-integrated output noise power, V²
    share: float  # fraction of the total output noise power, 0..1
    cumulative_share: float  # running sum of shares down the ranking
    index: int | None = None
    details: Mapping[str, float | str] = field(default_factory=dict)
    count: int = 1

    @property
    def rms_V(self) -> float:
        return math.sqrt(self.variance_V2)


@dataclass(frozen=True, eq=False)
class SourceBudget(Contribution):
    """One noise source's budget row (:meth:`NoiseResult.source`) with its
    spectrum: ``density`` (F,) its output noise power density on the grid,
    V²/Hz (read-only), and ``rank`` its place in the ranked budget (1 is the
    largest)."""

    density: np.ndarray = field(default_factory=lambda: np.zeros(0), repr=False)
    rank: int = 0

    @property
    def density_rt(self) -> np.ndarray:
        """(F,) the source's output amplitude density, V/√Hz."""
        return np.sqrt(self.density)


@dataclass(frozen=True, eq=False)
class NoiseResult:
    """Output noise of one circuit, one output, one band, one temperature.

    Parameters (all stored read-only)
    ----------
    title : netlist title line.
    temperature_K : analysis temperature, kelvin.
    output_node, reference_node : the output is v(output_node) - v(reference_node).
    input_source : name of the signal input source, or None.
    input_unit : "V" for a voltage input source, "A" for a current one, None.
    band_low_Hz, band_high_Hz : integration band; ``band_high_Hz`` may be ``inf``.
    frequency_Hz : (F,) the reported spectrum grid, increasing, Hz.
    source_names, source_mechanisms : (K,) per noise source.
    source_values : (K,) the number that sets each source (Ω, V/√Hz, A/√Hz, A;
        NaN where none), in ``source_units``.
    source_density : (K, F) output noise power density per source, V²/Hz.
    source_variance : (K,) band-integrated output noise power per source, V².
        Computed by the engine to full accuracy (adaptive or exact), not by
        summing ``source_density`` on the grid.
    cumulative_variance : (F,) total output noise power integrated from
        ``band_low_Hz`` (or from the grid's first point when the band starts
        below it) up to each grid frequency, V².
    gain : (F,) |H(f)| from the input source to the output (V/V or V/A), or None.
    gain_squared_integral : ∫|H|² df over the band (V²·Hz/V² or V²·Hz/A²), or None.
    gain_peak : the largest |H| in the band: the largest of every sample the
        engine took (grid, refinements, 0 Hz), refined between its neighbours by
        a search in log frequency, so a peak between grid points is found; or None.
    integration_rel_error : the integrator's estimate of its relative error.
    total_method : how ``source_variance`` was found, one of :data:`TOTAL_METHODS`
        (a finite band: "quadrature").
    total_tolerance : the stated relative error of the totals: the rounding level of an exact
        method, the estimate of the low-rank or numerical one (for a reduced model, the
        integrator's estimate plus the model's largest checked difference).
    notes : :class:`~netnoise.results.notes.Note` remarks (a code, its data and a
        sentence: defaults chosen, warnings), in order; plain strings are taken as notes.
    source_elements : (K,) the element each source belongs to (an amplifier
        has several sources); empty means the same as ``source_names``.
    source_units : (K,) the unit of each ``source_values`` entry; empty: none.
    source_details : (K,) further numbers that set each source, keyed with
        their units (``{"noise_index_dB": -10.0}``); empty: none.
    source_resistor : the resistor noise figure is referred to, or None.
    noise_figure_spectrum_dB : (F,) spot noise figure on the grid, or None.
    noise_figure_dB : band-integrated noise figure, or None.
    """

    title: str
    temperature_K: float
    output_node: str
    reference_node: str
    input_source: str | None
    input_unit: str | None
    band_low_Hz: float
    band_high_Hz: float
    frequency_Hz: np.ndarray
    source_names: tuple[str, ...]
    source_mechanisms: tuple[str, ...]
    source_values: np.ndarray
    source_density: np.ndarray
    source_variance: np.ndarray
    cumulative_variance: np.ndarray
    gain: np.ndarray | None = None
    gain_squared_integral: float | None = None
    gain_peak: float | None = None
    gain_reference: float | None = None
    gain_reference_Hz: float | None = None
    integration_rel_error: float = 0.0
    total_method: str = "quadrature"
    total_tolerance: float = 0.0
    notes: tuple[Note, ...] = field(default=())
    source_elements: tuple[str, ...] = ()
    source_resistor: str | None = None
    noise_figure_spectrum_dB: np.ndarray | None = None
    noise_figure_dB: float | None = None
    source_units: tuple[str, ...] = ()
    source_details: tuple[Mapping[str, float | str], ...] = ()

    def __post_init__(self) -> None:
        set_ = object.__setattr__
        set_(self, "frequency_Hz", _frozen(self.frequency_Hz))
        set_(self, "source_density", _frozen(self.source_density))
        set_(self, "source_variance", _frozen(self.source_variance))
        set_(self, "cumulative_variance", _frozen(self.cumulative_variance))
        if self.gain is not None:
            set_(self, "gain", _frozen(self.gain))
        set_(self, "source_names", tuple(self.source_names))
        set_(self, "source_mechanisms", tuple(self.source_mechanisms))
        set_(self, "source_values", _frozen(self.source_values))
        k = len(self.source_names)
        set_(self, "source_units", tuple(self.source_units) or ("",) * k)
        set_(self, "source_details", tuple(self.source_details) or ({},) * k)
        set_(self, "notes", tuple(as_note(n) for n in self.notes))
        set_(self, "source_elements", tuple(self.source_elements) or tuple(self.source_names))
        if self.noise_figure_spectrum_dB is not None:
            set_(self, "noise_figure_spectrum_dB", _frozen(self.noise_figure_spectrum_dB))
        k, f = len(self.source_names), len(self.frequency_Hz)
        if self.total_method not in TOTAL_METHODS:
            raise ValueError(f"total_method must be one of {', '.join(TOTAL_METHODS)}, not {self.total_method!r}")
        if self.source_density.shape != (k, f):
            raise ValueError(f"source_density has shape {self.source_density.shape}, expected {(k, f)}")
        if self.source_variance.shape != (k,):
            raise ValueError(f"source_variance has shape {self.source_variance.shape}, expected {(k,)}")

    # --- totals -----------------------------------------------------------
    @cached_property
    def output_density(self) -> np.ndarray:
        """(F,) total output noise power density, V²/Hz."""
        out = self.source_density.sum(axis=0)
        out.setflags(write=False)
        return out

    @property
    def output_density_rt(self) -> np.ndarray:
        """(F,) total output noise amplitude density, V/√Hz."""
        return np.sqrt(self.output_density)

    @property
    def total_variance(self) -> float:
        """Band-integrated output noise power, V²."""
        return float(self.source_variance.sum())

    @property
    def total_rms(self) -> float:
        """Band-integrated output noise, V rms."""
        return math.sqrt(self.total_variance)

    @property
    def shares(self) -> np.ndarray:
        """(K,) each source's fraction of the total output noise power."""
        total = self.total_variance
        if total <= 0.0:
            return np.zeros_like(self.source_variance)
        return self.source_variance / total

    def _row(self, k: int, share: float, cumulative: float, variance: float) -> Contribution:
        value = float(self.source_values[k])
        return Contribution(
            self.source_names[k],
            self.source_names[k],
            self.source_elements[k],
            self.source_mechanisms[k],
            None if math.isnan(value) else value,
            self.source_units[k],
            variance,
            share,
            cumulative,
            index=k,
            details=self.source_details[k],
        )

    @cached_property
    def contributions(self) -> tuple[Contribution, ...]:
        """The noise budget, largest share first."""
        order = np.argsort(-self.source_variance, kind="stable")
        shares = self.shares[order]
        # Python floats in one go (.tolist()), not one numpy scalar at a time: 20,000 rows
        variance, share = self.source_variance[order].tolist(), shares.tolist()
        cumulative = np.minimum(np.cumsum(shares), 1.0).tolist()
        return tuple(self._row(k, share[i], cumulative[i], variance[i]) for i, k in enumerate(order.tolist()))

    def grouped(self, by: str) -> tuple[Contribution, ...]:
        """The budget with rows merged by ``"element"`` or ``"mechanism"``,
        largest first.  An element row keeps its value where its sources
        share one; a mechanism row counts its sources."""
        if by == "source":
            return self.contributions
        if by not in ("element", "mechanism"):
            raise ValueError(f"group by 'source', 'element' or 'mechanism', not {by!r}")
        keys = self.source_elements if by == "element" else self.source_mechanisms
        merged: dict[str, list[int]] = {}
        for k, key in enumerate(keys):
            merged.setdefault(key, []).append(k)
        total = self.total_variance
        rows = []
        for key, members in merged.items():
            variance = float(self.source_variance[members].sum())
            rows.append((variance, key, members))
        rows.sort(key=lambda row: -row[0])
        running = 0.0
        out = []
        for variance, key, members in rows:
            share = variance / total if total > 0 else 0.0
            running += share
            if len(members) == 1:
                row = self._row(members[0], share, min(running, 1.0), variance)
                out.append(dataclasses.replace(row, label=key, source=None if by == "mechanism" else row.source))
                continue
            first = members[0]
            values = {(float(self.source_values[k]), self.source_units[k]) for k in members}
            value, unit = values.pop() if len(values) == 1 else (math.nan, "")
            elements = {self.source_elements[k] for k in members}
            out.append(
                Contribution(
                    key,
                    None,
                    elements.pop() if len(elements) == 1 else None,
                    "+".join(dict.fromkeys(self.source_mechanisms[k] for k in members)),
                    None if math.isnan(value) or by == "mechanism" else value,
                    unit if by == "element" else "",
                    variance,
                    share,
                    min(running, 1.0),
                    details=self.source_details[first] if by == "element" else {},
                    count=len(members),
                )
            )
        return tuple(out)

    def source(self, name: str) -> SourceBudget:
        """The budget row of noise source ``name`` (case-insensitive) with its
        density on the grid (V²/Hz), variance, share and rank; KeyError if none."""
        key = name.lower()
        for rank, row in enumerate(self.contributions, start=1):
            if row.source is not None and row.source.lower() == key:
                fields = {f.name: getattr(row, f.name) for f in dataclasses.fields(Contribution)}
                return SourceBudget(**fields, density=self.source_density[row.index], rank=rank)
        raise KeyError(name)

    # --- notebooks ------------------------------------------------------
    def __repr__(self) -> str:
        from netnoise.outputs.notebook import short_repr

        return short_repr(self)

    def _repr_html_(self) -> str:
        from netnoise.outputs.notebook import budget_html

        return budget_html(self)

    def to_dataframe(self, kind: str = "budget", *, group_by: str = "source"):
        """The budget (``kind="budget"``, one row per source or group, ranked)
        or the spectrum (``kind="spectrum"``, one row per grid frequency) as a
        pandas DataFrame of numbers, units in the column names.  pandas is
        imported here; without it a UsageError says how to install it."""
        from netnoise.outputs.notebook import to_dataframe

        return to_dataframe(self, kind, group_by=group_by)

    @property
    def cumulative_rms(self) -> np.ndarray:
        """(F,) integrated output noise from the band's low edge to each grid point, V rms.
        (On a coarse grid the interpolated running integral can dip a round-off
        below zero near the low edge: clipped to zero, not a NaN.)"""
        return np.sqrt(np.maximum(self.cumulative_variance, 0.0))

    # --- signal path ----------------------------------------------------
    @property
    def band_is_unbounded(self) -> bool:
        return math.isinf(self.band_high_Hz)

    @property
    def gain_at_max(self) -> float | None:
        """Largest |H| from the input source to the output within the band."""
        if self.gain is None or self.gain.size == 0:
            return None
        return max(float(np.max(self.gain)), self.gain_peak or 0.0)

    @property
    def pass_band_gain(self) -> float | None:
        """The gain the noise is referred to: ``gain_reference`` (the pass band's, or the one
        at a frequency the caller named), else the peak ``gain_at_max``."""
        return self.gain_reference if self.gain_reference is not None else self.gain_at_max

    @property
    def input_referred_rms(self) -> float | None:
        """Total output rms divided by ``pass_band_gain`` (V or A, see ``input_unit``)."""
        g = self.pass_band_gain
        if g is None or g == 0.0:
            return None
        return self.total_rms / g

    @property
    def input_referred_density(self) -> np.ndarray | None:
        """(F,) output density divided by |H(f)|², point by point (V²/Hz or A²/Hz)."""
        if self.gain is None:
            return None
        with np.errstate(divide="ignore"):
            out = np.where(self.gain > 0, self.output_density / np.where(self.gain > 0, self.gain, 1.0) ** 2, np.inf)
        return out

    @property
    def enbw_Hz(self) -> float | None:
        """Equivalent noise bandwidth of the signal path: ∫|H|²df / gain_at_max², Hz."""
        g = self.gain_at_max
        if g is None or g == 0.0 or self.gain_squared_integral is None:
            return None
        return self.gain_squared_integral / g**2

    def spot_density(self, frequency_Hz: float) -> float:
        """Total output amplitude density at ``frequency_Hz`` (V/√Hz), interpolated
        log-log on the grid; ValueError outside the grid."""
        f = self.frequency_Hz
        if not (f[0] <= frequency_Hz <= f[-1]):
            raise ValueError(f"{frequency_Hz} Hz is outside the analysed grid {f[0]:g}..{f[-1]:g} Hz")
        d = self.output_density
        i = int(np.clip(np.searchsorted(f, frequency_Hz), 1, f.size - 1)) if f.size > 1 else 0
        pair = f[max(i - 1, 0) : i + 1], d[max(i - 1, 0) : i + 1]
        if f.size > 1 and np.all(pair[0] > 0) and np.all(pair[1] > 0):  # log-log between two positive samples
            return float(math.sqrt(math.exp(np.interp(math.log(frequency_Hz), np.log(pair[0]), np.log(pair[1])))))
        # a zero density (no source reaches the output there) is interpolated linearly, never
        # replaced by a small stand-in value that would be printed as the circuit's
        return float(math.sqrt(max(float(np.interp(frequency_Hz, f, d)), 0.0)))

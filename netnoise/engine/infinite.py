"""The totals from 0 Hz to infinite bandwidth, by the first method that takes the circuit.

Exact for symmetric G and C by one symmetric eigendecomposition (:mod:`netnoise.engine.symmetric`),
exact from the state space by QZ (:mod:`netnoise.engine.total_variance`), every source to a
stated tolerance by a low-rank Gramian (:mod:`netnoise.engine.gramian`), else by quadrature with
an analytic tail (:mod:`netnoise.engine.wideband`).  Each method that cannot take a circuit
returns None and the next is tried; :class:`InfiniteTotals` says which one ran and to what
relative error.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from netnoise.engformat import format_quantity
from netnoise.engine.symmetric import NotSymmetricDefinite, symmetric_totals
from netnoise.engine.total_variance import (
    QZ_TOLERANCE_MARGIN,
    UnstableCircuit,
    infinite_band_totals,
    rounding_tolerance,
)
from netnoise.errors import CircuitError

if TYPE_CHECKING:
    from netnoise.engine.analysis import _Problem as Problem

__all__ = ["InfiniteTotals", "totals_to_infinity", "noise_columns"]


@dataclass(frozen=True, eq=False)
class InfiniteTotals:
    """How the totals from 0 Hz to infinite bandwidth were found.  ``variance`` (K[+1],): every
    source's white-noise variance (V²), then ∫|H|² df of the input when there is one;
    ``poles_Hz``: the finite pole magnitudes (Hz), or None; ``method``: one of
    :data:`~netnoise.results.result.TOTAL_METHODS`; ``tolerance``: the stated relative error of
    the totals; ``note``: a sentence for the notes."""

    variance: np.ndarray
    poles_Hz: np.ndarray | None
    method: str
    tolerance: float
    note: str


def totals_to_infinity(problem: Problem) -> InfiniteTotals:
    """The white-noise totals from 0 Hz to infinity, by the first method that applies: one
    symmetric eigendecomposition (symmetric G and C, up to ``symmetric_limit`` unknowns), the
    state space by QZ (up to ``exact_limit``), a low-rank Gramian (:mod:`netnoise.engine.gramian`,
    unless ``lowrank`` is off), else quadrature with an analytic tail (:mod:`netnoise.wideband`).  A method that cannot take the circuit returns None and the next
    one is tried.  CircuitError when a source's white noise reaches the output unfiltered."""
    found = None
    if problem.symmetric() is not None:
        found = _symmetric_totals(problem)
    if found is None and problem.system.size <= problem.options.exact_limit:
        found = _qz_totals(problem)
    refused = ""
    if found is None and problem.options.lowrank:
        found, refused = _lowrank_totals(problem)
    if found is None:
        found = _quadrature_totals(problem, refused)
    _refuse_unbounded(problem, found.variance)
    return found


def noise_columns(problem: Problem, dense: bool) -> tuple[Any, np.ndarray]:
    """The injection columns (sparse, or dense with ``dense``) with the input's vector last, and
    their one-sided white densities (1 for the input)."""
    import scipy.sparse as sp

    columns = problem.sources.injection
    density = np.asarray(problem.sources.white_density)
    if problem.input_vector is not None:
        columns = sp.hstack([columns, sp.csc_matrix(problem.input_vector[:, None])], format="csc")
        density = np.append(density, 1.0)
    return (columns.toarray() if dense else columns), density


def _white_only(problem: Problem) -> str:
    return " for white noise" if problem.sources.colored.any() else ""


def _symmetric_totals(problem: Problem) -> InfiniteTotals | None:
    """Exact, by :func:`netnoise.engine.symmetric.symmetric_totals`; None when the method refuses
    (a source reaching the output unfiltered, a rate not clearly positive): the QZ path then
    reports those by name."""
    pencil = problem.symmetric()
    assert pencil is not None
    columns, density = noise_columns(problem, dense=False)
    try:
        exact = symmetric_totals(pencil, problem.selector, columns, density)
    except NotSymmetricDefinite:
        return None
    problem.__dict__["_rates"] = 2 * math.pi * exact.poles_Hz  # for poles_Hz, check_stable
    return InfiniteTotals(
        exact.variance,
        exact.poles_Hz,
        "exact-symmetric",
        exact.tolerance,
        "the total to infinite bandwidth is exact" + _white_only(problem) + " (one symmetric eigendecomposition)",
    )


def _qz_totals(problem: Problem) -> InfiniteTotals:
    """Exact, from the state space by QZ and a Lyapunov solve (:mod:`netnoise.total_variance`);
    an unstable circuit refused with the elements that can supply gain named."""
    system = problem.system
    columns, density = noise_columns(problem, dense=True)
    try:
        exact = infinite_band_totals(system.G.toarray(), system.C.toarray(), problem.selector, columns, density)
    except UnstableCircuit as found:
        if found.lossless:
            raise
        problem.refuse_unstable(found)
    return InfiniteTotals(
        exact.variance,
        exact.poles_Hz,
        "exact-qz",
        rounding_tolerance(exact.poles_Hz, QZ_TOLERANCE_MARGIN),
        "the total to infinite bandwidth is exact" + _white_only(problem) + " (the state space, by QZ)",
    )


def _lowrank_totals(problem: Problem) -> tuple[InfiniteTotals | None, str]:
    """Every source's total from a low-rank Gramian (:func:`netnoise.engine.gramian.lowrank_totals`),
    stated to ``lowrank_tol`` of the total; (None, why) when the circuit falls outside the method."""
    from netnoise.engine.gramian import LowRankUnsuitable, lowrank_model

    system, tol = problem.system, problem.options.lowrank_tol
    columns, density = noise_columns(problem, dense=False)
    try:
        low, model = lowrank_model(system.G, system.C, problem.selector, columns, density, tol)
    except LowRankUnsuitable as why:
        return None, str(why)
    problem.__dict__["_lowrank_model"] = model  # the spectrum shown may come from it (adopt_model)
    note = (
        f"circuit of {system.size} unknowns, beyond the exact methods: the total to infinite bandwidth is "
        f"found from a low-rank Gramian (a reduced model of {low.rank} states from {low.factorizations} "
        f"factorisations), each source to {tol:.0e} of the total"
    )
    return InfiniteTotals(low.variance, low.poles_Hz, "low-rank", tol, note), ""


def _quadrature_totals(problem: Problem, refused: str = "") -> InfiniteTotals:
    """Numerical integration up to 100x the estimated highest pole plus an analytic tail
    (:func:`netnoise.wideband.wideband_totals`); its error estimate is the stated tolerance.
    ``refused``: why the low-rank method did not take the circuit, said in the note."""
    from netnoise.engine.wideband import wideband_totals

    system = problem.system
    k = len(problem.sources)
    poles = problem.poles_Hz()
    if poles is None:
        raise CircuitError(
            f"the total to infinite bandwidth of this circuit ({system.size} unknowns) cannot be "
            "estimated: its pole range is not defined. Give a finite band with --band LOW HIGH"
        )
    wide = wideband_totals(
        lambda f: problem.densities(f, "white"), problem.groups(), float(poles.min()), float(poles.max())
    )
    unbounded_rows = np.flatnonzero(wide.unbounded[:k])
    variance = wide.values
    if unbounded_rows.size:
        variance = variance.copy()
        variance[unbounded_rows] = np.inf
    tolerance = max(wide.rel_error, 1e-2 * wide.tail_share)
    note = (
        f"circuit of {system.size} unknowns, beyond the exact methods (up to {problem.options.exact_limit} "
        f"unknowns, {problem.options.symmetric_limit} for symmetric G and C): the total to "
        f"infinite bandwidth is integrated numerically up to {format_quantity(wide.top_Hz, 'Hz')} "
        f"(100x the estimated highest pole) plus an analytic tail ({100 * wide.tail_share:.2g} % of the "
        f"total); estimated relative error {tolerance:.1e}"
        + (f" (the low-rank method did not apply: {refused})" if refused else "")
    )
    return InfiniteTotals(variance, poles, "quadrature", tolerance, note)


def _refuse_unbounded(problem: Problem, variance: np.ndarray) -> None:
    """CircuitError naming the sources whose white noise reaches the output with no roll-off."""
    k = len(problem.sources)
    unbounded = [problem.sources.sources[i].name for i in np.flatnonzero(np.isinf(variance[:k]))]
    if unbounded:
        shown = ", ".join(unbounded[:5]) + (f" and {len(unbounded) - 5} more" if len(unbounded) > 5 else "")
        raise CircuitError(
            "the output noise integrated to infinite bandwidth is unbounded: the white noise of "
            f"{shown} reaches the output with no roll-off (nothing limits the bandwidth). "
            "Give a finite band (--band LOW HIGH, or a .noise card), or add the capacitance "
            "that limits the real circuit's bandwidth"
        )

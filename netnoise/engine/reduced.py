"""A reduced model standing in for a large circuit's sparse solves, once checked against them.

The low-rank Gramian (:mod:`netnoise.engine.gramian`) leaves a small model of the circuit's
transfers; :func:`adopt_model` lets it give the densities of an analysis (a small dense solve per
frequency) only after it agrees with full solves at a few frequencies of the band;
:func:`band_model` builds one for a finite band where that pays.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from netnoise.engformat import format_quantity
from netnoise.engine.infinite import noise_columns
from netnoise.results.notes import Note

if TYPE_CHECKING:
    from netnoise.engine.analysis import _Problem as Problem

__all__ = ["adopt_model", "band_model", "MODEL_MAX_ERROR"]


# a reduced model stands in for the full solves only where it differs from them by at most this
# much of the total density at every checked frequency (the 1e-6 of the integrator's own rtol)
MODEL_MAX_ERROR = 1e-6
MODEL_CHECKS = 5  # full solves that check it, log-spaced over the band
# a finite band's grid must have at least this many points before a model is built for it: the
# model costs about 30 real factorisations (benchmarks/README.md, "Low-rank Gramian")
MODEL_MIN_POINTS = 100


def adopt_model(problem: Problem, model: Any, low: float, high: float, first: float | None = None) -> Note | None:
    """Let ``model`` (a :class:`~netnoise.engine.gramian.ReducedModel`) stand in for the full
    solves of ``problem`` over [low, high] Hz once it agrees with them at :data:`MODEL_CHECKS`
    frequencies log-spaced from ``first`` (default: low, or 1e-9·high) to high, and at 0 Hz when
    low is 0, to :data:`MODEL_MAX_ERROR` of the total density; a note saying so (its ``error``
    in the data), or None, the full solves kept, when it does not agree."""
    from netnoise.engine.gramian import model_error
    from netnoise.engine.transfer import transfer_power

    k = len(problem.sources)
    f = np.geomspace(first or max(low, high * 1e-9), high, MODEL_CHECKS)
    f = np.concatenate([[0.0], f]) if low == 0.0 else f
    full = np.empty((k, f.size))
    _, signal = transfer_power(
        problem.system,
        problem.selector,
        problem.sources.injection,
        problem.input_vector,
        f,
        power_out=full,
        options=problem.options,
    )
    reduced = model.power(f)
    error = model_error(reduced[:k], full, problem.sources.density(f, "full"))
    if signal is not None:  # the signal path judged on its own scale
        error = max(error, model_error(reduced[k:], signal[None, :], np.ones(1)))
    if not error <= MODEL_MAX_ERROR:
        return None
    problem.model = model
    rank = model.g.shape[0]
    return Note(
        "reduced-model",
        f"densities from a reduced model of {rank} states, checked against the full circuit at "
        f"{f.size} frequencies from {format_quantity(f[0], 'Hz')} to {format_quantity(f[-1], 'Hz')}: "
        f"largest difference {error:.1e} of the total density",
        {"states": rank, "error": error},
    )


def band_model(problem: Problem, low: float, high: float) -> Note | None:
    """For a large circuit on the sparse path over a finite band of many grid points: a reduced
    model of its transfers (:func:`netnoise.engine.gramian.lowrank_model`) adopted in place of a sparse solve
    per frequency (:func:`adopt_model`); None where it does not pay or does not apply."""
    options, system = problem.options, problem.system
    if not options.lowrank or system.size <= options.exact_limit:
        return None
    from netnoise.engine.gramian import LowRankUnsuitable, lowrank_model  # large circuits only
    from netnoise.engine.integrate import log_grid_intervals
    from netnoise.engine.transfer import solver_for

    if solver_for(system, options).method != "sparse":  # dense and banded solves cost less than a model
        return None
    points = log_grid_intervals(max(low, high * 1e-9), high, problem.settings.points_per_decade)
    if points < MODEL_MIN_POINTS:
        return None
    columns, density = noise_columns(problem, dense=False)
    try:  # a basis of at most half the grid's size: a model that needs more would not pay
        _, model = lowrank_model(
            system.G, system.C, problem.selector, columns, density, options.lowrank_tol, max_rank=points // 2
        )
    except LowRankUnsuitable:
        return None
    return adopt_model(problem, model, low, high)

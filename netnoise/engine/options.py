"""How the engine solves: a choice a caller passes, not a module global."""

from __future__ import annotations

from dataclasses import dataclass
from numbers import Integral

from netnoise.engine.symmetric import SYMMETRIC_LIMIT
from netnoise.engine.total_variance import EXACT_LIMIT
from netnoise.errors import UsageError

__all__ = ["SolverOptions", "METHODS"]

METHODS = ("dense", "banded", "sparse")


@dataclass(frozen=True)
class SolverOptions:
    """Solver settings of an analysis.

    ``method``: "dense", "banded" or "sparse" to force a path of the adjoint
    solver, None to let the circuit's size and structure decide.
    ``dense_limit``: unknowns up to which the dense batched path may be chosen
    (it is always below 40 unknowns; above 40, only when its estimated cost beats
    the banded or sparse path's); above it no dense matrix is formed unless
    ``method`` forces it.  0: never dense unless forced.
    ``exact_limit``: unknowns up to which the total to infinite bandwidth is
    exact (dense QZ, O(n³)); beyond it, quadrature plus an analytic tail.
    ``symmetric_limit``: unknowns up to which a circuit with symmetric G and C
    (RC networks) gets its exact total from one symmetric eigendecomposition
    (:mod:`netnoise.engine.symmetric`), whatever ``exact_limit`` says.
    ``rtol``: the band integrator's relative tolerance on its error estimate.
    ``jobs``: threads solving frequencies at once (sparse and tridiagonal paths), each with
    BLAS on one thread; None: every core this process may use.  Never more than those
    cores; the results are the same bits whatever the number.
    ``lowrank``: beyond the exact limits, take the total to infinite bandwidth from a low-rank
    Gramian (True) before falling back on quadrature; False: quadrature straight away.
    ``lowrank_tol``: beyond the exact limit, the accuracy of every source's share of the total
    to infinite bandwidth by the low-rank Gramian (:mod:`netnoise.engine.gramian`), relative to
    the total.
    """

    method: str | None = None
    dense_limit: int = 200
    exact_limit: int = EXACT_LIMIT
    symmetric_limit: int = SYMMETRIC_LIMIT
    rtol: float = 1e-6
    jobs: int | None = None
    lowrank: bool = True
    lowrank_tol: float = 1e-8

    def __post_init__(self) -> None:
        if self.method is not None and self.method not in METHODS:
            raise UsageError(f"solver method must be one of {', '.join(METHODS)} or None, not {self.method!r}")
        if self.dense_limit < 0 or self.exact_limit < 0 or self.symmetric_limit < 0:
            raise UsageError("dense_limit, exact_limit and symmetric_limit must be >= 0")
        if not 0 < self.rtol < 1:
            raise UsageError(f"rtol must lie between 0 and 1, not {self.rtol!r}")
        if self.jobs is not None and (
            isinstance(self.jobs, bool) or not isinstance(self.jobs, Integral) or self.jobs < 1
        ):
            raise UsageError(f"jobs must be a whole number of 1 or more, or None for every core, not {self.jobs!r}")
        if not 0 < self.lowrank_tol < 1:
            raise UsageError(f"lowrank_tol must lie between 0 and 1, not {self.lowrank_tol!r}")

"""Complex transfers on one factorisation per frequency, in either direction.

``Y(f) = G + j2πf·C`` is factored once at each frequency and then solved for
any number of right-hand sides, forward (``Y x = b``: node responses to
excitations) or adjoint (``Yᵀ z = c``: the transfer from every injection
point to the outputs ``c``).  The complex transfer from injection ``b`` to
output ``c`` is ``cᵀ Y⁻¹ b = zᵀ b`` either way (Rohrer, Nagel, Meyer and
Weber, IEEE JSSC 1971); correlated sources and sensitivities build on the
complex values, not only on |zᵀb|².

Small circuits are solved batched across frequency (numpy's stacked LU, one
factorisation per matrix for all right-hand sides); larger ones by SuperLU,
one factorisation per frequency.  Every path equilibrates rows and columns by
powers of two and refuses a frequency whose matrix is singular to working
precision (see :mod:`netnoise.engine.transfer`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from netnoise.engine.mna import MnaSystem
from netnoise.engine.options import SolverOptions
from netnoise.engine.resources import require_memory
from netnoise.engine.transfer import RCOND_MIN, _pow2, _singular, solver_for

__all__ = ["Factorization", "factor", "transfers", "responses"]


def _dense_matrix(m) -> np.ndarray:
    return m.toarray() if sp.issparse(m) else np.asarray(m)


@dataclass(frozen=True, eq=False)
class Factorization:
    """``Y(f)`` factored at one frequency; :meth:`solve` takes any number of
    right-hand sides in either direction."""

    frequency_Hz: float
    _lu: object  # scipy.linalg LU tuple (dense) or SuperLU (sparse)
    _dense: bool
    _dr: np.ndarray  # row scaling of Y
    _dc: np.ndarray  # column scaling of Y

    def solve(self, rhs: np.ndarray, adjoint: bool = False) -> np.ndarray:
        """``Y⁻¹ rhs`` (or ``Y⁻ᵀ rhs`` with ``adjoint``), rhs (n,) or (n, m), complex."""
        b = np.asarray(rhs, dtype=complex)
        one = b.ndim == 1
        b = b[:, None] if one else b
        # the factored matrix is A = Dr·Y·Dc: Y⁻¹b = Dc·A⁻¹·(Dr b), Y⁻ᵀb = Dr·A⁻ᵀ·(Dc b)
        if adjoint:
            x = self._solve_scaled(self._dc[:, None] * b, True) * self._dr[:, None]
        else:
            x = self._solve_scaled(self._dr[:, None] * b, False) * self._dc[:, None]
        return x[:, 0] if one else x

    def _solve_scaled(self, b: np.ndarray, adjoint: bool) -> np.ndarray:
        if self._dense:
            import scipy.linalg

            return scipy.linalg.lu_solve(self._lu, b, trans=1 if adjoint else 0, check_finite=False)
        return self._lu.solve(b, trans="T" if adjoint else "N")  # type: ignore[attr-defined]


def factor(system: MnaSystem, frequency_Hz: float, options: SolverOptions | None = None) -> Factorization:
    """``Y(frequency_Hz)`` of ``system`` equilibrated and factored; CircuitError if singular."""
    options = options or SolverOptions()
    f = float(frequency_Hz)
    s = 2j * math.pi * f
    # the adjoint solver's choice by structure (a sparse circuit of 150 unknowns factors faster
    # by SuperLU than densely); a forced "banded" is served by SuperLU here
    dense = options.method == "dense" or (options.method is None and solver_for(system, options).method == "dense")
    y = (system.G + s * system.C).tocsr()
    mag = (abs(system.G) + abs(s) * abs(system.C)).tocsr()
    dr = _pow2(np.asarray(mag.max(axis=1).todense()).ravel())
    scaled_mag = sp.diags(dr) @ mag
    dc = _pow2(np.asarray(scaled_mag.max(axis=0).todense()).ravel())
    a = sp.diags(dr) @ y @ sp.diags(dc)
    probe = np.random.default_rng(20240917).standard_normal(system.size) + 0j
    if dense:
        import scipy.linalg

        matrix = a.toarray()
        try:
            lu = scipy.linalg.lu_factor(matrix, check_finite=False)
        except (ValueError, np.linalg.LinAlgError):
            raise _singular(f) from None
        if np.any(np.diag(lu[0]) == 0):
            raise _singular(f)
        w = scipy.linalg.lu_solve(lu, probe, check_finite=False)
        out = Factorization(f, lu, True, dr, dc)
    else:
        import scipy.sparse.linalg as spla

        try:
            lu = spla.splu(a.tocsc(), permc_spec="MMD_AT_PLUS_A")
        except RuntimeError:
            raise _singular(f) from None
        w = lu.solve(probe)
        out = Factorization(f, lu, False, dr, dc)
    norm = 0.5  # every scaled column's largest entry is at least ~1/2 (geequ)
    with np.errstate(invalid="ignore", over="ignore"):
        inverse = float(np.abs(w).max(initial=0.0)) / float(np.abs(probe).max())
    if not math.isfinite(inverse) or norm * inverse * RCOND_MIN > 1.0:
        raise _singular(f, None if not math.isfinite(inverse) else 1.0 / (norm * inverse))
    return out


def _columns(m) -> np.ndarray:
    out = _dense_matrix(m).astype(complex)
    return out[:, None] if out.ndim == 1 else out


def transfers(system: MnaSystem, outputs, injections, frequency_Hz, options: SolverOptions | None = None) -> np.ndarray:
    """(F, m, k) complex ``cᵀ Y(f)⁻¹ b`` from every injection column ``b`` of
    ``injections`` (n, k) to every output column ``c`` of ``outputs`` (n, m),
    by adjoint solves: one factorisation per frequency for all of them."""
    f = np.atleast_1d(np.asarray(frequency_Hz, dtype=float))
    c, b = _columns(outputs), _columns(injections)
    require_memory(f.size * c.shape[1] * (b.shape[1] + system.size) * 16, "the complex transfers")
    out = np.empty((f.size, c.shape[1], b.shape[1]), dtype=complex)
    for i, fi in enumerate(f):
        z = factor(system, fi, options).solve(c, adjoint=True)  # (n, m)
        out[i] = z.T @ b
    return out


def responses(system: MnaSystem, excitations, frequency_Hz, options: SolverOptions | None = None) -> np.ndarray:
    """(F, n, k) complex ``Y(f)⁻¹ b``: every unknown's response to every
    excitation column (forward solves, one factorisation per frequency)."""
    f = np.atleast_1d(np.asarray(frequency_Hz, dtype=float))
    b = _columns(excitations)
    require_memory(f.size * system.size * b.shape[1] * 16, "the responses")
    out = np.empty((f.size, system.size, b.shape[1]), dtype=complex)
    for i, fi in enumerate(f):
        out[i] = factor(system, fi, options).solve(b)
    return out

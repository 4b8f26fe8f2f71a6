"""Adjoint solves: the transfer from every injection point to one output.

For an output ``y = cᵀx`` of ``Y(f) x = b`` with ``Y(f) = G + j2πf·C``, the
transfer from any excitation ``b`` is ``zᵀ b`` where ``Y(f)ᵀ z = c`` (plain
transpose, not conjugate).  One solve per frequency therefore gives the
gain from *every* noise source (Rohrer, Nagel, Meyer and Weber, IEEE JSSC
1971).

Two paths with the same result:

* dense and batched across frequency for small circuits (numpy's batched
  LU solve over a stack of matrices, in chunks bounded in memory);
* sparse (SuperLU) one factorisation per frequency for large circuits, never
  forming a dense matrix.
"""

from __future__ import annotations

import numpy as np
import scipy.linalg
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from .errors import CircuitError
from .mna import MnaSystem

__all__ = ["adjoint_solutions", "DENSE_LIMIT"]

DENSE_LIMIT = 200  # unknowns; above this the sparse path is used
_CHUNK_BYTES = 64 * 2**20  # memory for one batch of dense complex matrices


def adjoint_solutions(system: MnaSystem, selector: np.ndarray, frequency_Hz: np.ndarray) -> np.ndarray:
    """(F, n) complex ``z(f)`` with ``Y(f)ᵀ z(f) = selector`` at every frequency."""
    frequency_Hz = np.asarray(frequency_Hz, dtype=float)
    if system.size <= DENSE_LIMIT:
        return _dense(system, selector, frequency_Hz)
    return _sparse(system, selector, frequency_Hz)


def _singular(system: MnaSystem, f: float) -> CircuitError:
    where = "at DC (0 Hz)" if f == 0.0 else f"at {f:.6g} Hz"
    advice = (
        "a node may lack a DC path to ground, or voltage sources/inductors form a loop"
        if f == 0.0
        else "a lossless resonance or a loop of ideal sources makes the circuit singular there; "
        "add a realistic loss (series or parallel resistance) or move the band/grid"
    )
    return CircuitError(f"the circuit equations are singular {where}: {advice}")


def _dense(system: MnaSystem, selector: np.ndarray, frequency_Hz: np.ndarray) -> np.ndarray:
    n = system.size
    gt = system.G.T.toarray()
    ct = system.C.T.toarray()
    out = np.empty((frequency_Hz.size, n), dtype=complex)
    chunk = max(1, _CHUNK_BYTES // (16 * n * n))
    for start in range(0, frequency_Hz.size, chunk):
        f = frequency_Hz[start : start + chunk]
        yt = gt[None, :, :] + (2j * np.pi * f)[:, None, None] * ct[None, :, :]
        rhs = np.broadcast_to(selector.astype(complex), (f.size, n))[..., None]
        try:
            z = np.linalg.solve(yt, rhs)[..., 0]
        except np.linalg.LinAlgError:
            z = _dense_one_by_one(system, yt, selector, f)
        bad = ~np.all(np.isfinite(z), axis=1)
        if bad.any():
            raise _singular(system, float(f[np.argmax(bad)]))
        out[start : start + f.size] = z
    return out


def _dense_one_by_one(system, yt, selector, f):
    z = np.empty((f.size, yt.shape[1]), dtype=complex)
    for i in range(f.size):
        try:
            lu = scipy.linalg.lu_factor(yt[i], check_finite=False)
        except (np.linalg.LinAlgError, ValueError):
            raise _singular(system, float(f[i])) from None
        if np.any(np.diag(lu[0]) == 0):
            raise _singular(system, float(f[i]))
        z[i] = scipy.linalg.lu_solve(lu, selector.astype(complex), check_finite=False)
    return z


def _sparse(system: MnaSystem, selector: np.ndarray, frequency_Hz: np.ndarray) -> np.ndarray:
    pattern = _CommonPattern(system.G, system.C)
    rhs = selector.astype(complex)
    out = np.empty((frequency_Hz.size, system.size), dtype=complex)
    for i, f in enumerate(frequency_Hz):
        try:
            lu = spla.splu(pattern.matrix(2j * np.pi * f))
        except RuntimeError:
            raise _singular(system, float(f)) from None
        z = lu.solve(rhs, trans="T")
        if not np.all(np.isfinite(z)):
            raise _singular(system, float(f))
        out[i] = z
    return out


class _CommonPattern:
    """The union sparsity pattern of G and C in CSC order, so that each
    frequency only refills the data array of ``G + sC``."""

    def __init__(self, g: sp.spmatrix, c: sp.spmatrix):
        n = g.shape[0]
        gc, cc = g.tocoo(), c.tocoo()
        lin_g = gc.col.astype(np.int64) * n + gc.row
        lin_c = cc.col.astype(np.int64) * n + cc.row
        lin = np.unique(np.concatenate([lin_g, lin_c]))  # column-major order = CSC
        self.shape = (n, n)
        self.indices = (lin % n).astype(np.int32 if n < 2**31 else np.int64)
        self.indptr = np.searchsorted(lin // n, np.arange(n + 1)).astype(self.indices.dtype)
        self.g_data = np.zeros(lin.size)
        self.c_data = np.zeros(lin.size)
        np.add.at(self.g_data, np.searchsorted(lin, lin_g), gc.data)
        np.add.at(self.c_data, np.searchsorted(lin, lin_c), cc.data)

    def matrix(self, s: complex) -> sp.csc_matrix:
        """``G + s·C`` as a CSC matrix on the common pattern."""
        return sp.csc_matrix((self.g_data + s * self.c_data, self.indices, self.indptr), shape=self.shape)

"""Adjoint solves: the transfer from every injection point to one output.

For an output ``y = cᵀx`` of ``Y(f) x = b`` with ``Y(f) = G + j2πf·C``, the
transfer from any excitation ``b`` is ``zᵀ b`` where ``Y(f)ᵀ z = c`` (plain
transpose, not conjugate).  One solve per frequency therefore gives the
gain from *every* noise source (Rohrer, Nagel, Meyer and Weber, IEEE JSSC
1971).

Three paths with the same result, chosen by structure once per circuit
(:class:`AdjointSolver`, cached per system and :class:`~netnoise.engine.options.SolverOptions`):

* ``dense``: batched across frequency (numpy's stacked LU solve), in chunks
  bounded in memory.  Taken below 40 unknowns whatever the structure, and up to
  ``SolverOptions.dense_limit`` unknowns when a cost model on the reverse
  Cuthill–McKee bandwidth and the nonzero count finds it quicker than the
  banded or sparse path (a network with most nodes coupled); never above;
* ``banded``: a sparse circuit whose reverse Cuthill–McKee ordering has a
  narrow band (ladders, chains, lines): LAPACK ``zgbsv`` on the band,
  O(n·bandwidth²) per frequency;
* ``sparse``: SuperLU.  The fill-reducing ordering (minimum degree on
  ``Aᵀ + A``) is computed once, at the first frequency; the pattern is
  permuted symmetrically once, and later frequencies factor it with the
  ``NATURAL`` ordering, symmetric mode and threshold pivoting.

Every path works on the equilibrated matrix ``Dr·Y(f)ᵀ·Dc`` (LAPACK
``geequ``-style row then column scaling by powers of two, at each
frequency), so element values spanning 1 fF to 1 TΩ and frequencies from mHz
to 100 GHz keep their accuracy.  Every path also solves for one fixed random
probe vector beside ``c``; ``‖Ã‖·‖Ã⁻¹p‖/‖p‖`` is a lower bound of the
condition number (the probe meets the near-null direction of a singular
matrix with probability one), and a frequency where it exceeds
``1/RCOND_MIN`` is refused as singular with the frequency named: exact and
near singularity (a lossless resonance on a grid point) alike.

Memory: no dense matrix is formed above the dense limit; the band
and the sparse factors are checked against the available memory before they
are formed (:mod:`netnoise.resources`).
"""

from __future__ import annotations

import dataclasses
import math
import weakref

import numpy as np

from netnoise.engine.mna import MnaSystem
from netnoise.engine.options import SolverOptions
from netnoise.engine.resources import require_memory, usable_cores
from netnoise.errors import CircuitError

__all__ = ["adjoint_solutions", "transfer_power", "AdjointSolver", "solver_for", "RCOND_MIN"]

RCOND_MIN = 1e-13  # estimated reciprocal condition number (equilibrated) below which a frequency is refused
# one batch of dense complex matrices: cache-sized (22 unknowns x 1001 frequencies: 18.5 ms in
# 64 MB batches, 14.8 ms in 4 MB ones), but at least 4 frequencies (190 unknowns: 2 a batch is 20 % slower)
_CHUNK_BYTES = 4 * 2**20
_CHUNK_MIN_FREQUENCIES = 4
_BAND_ALWAYS = 16  # kl + ku up to which the banded path is taken without comparing costs
# The path by structure (issue 16).  Seconds per frequency of each path, fitted to solves of RC
# ladders, meshes, scattered sparse networks and networks with every node coupled, 12..300
# unknowns, 361 frequencies, setup included (the table is in benchmarks/README.md, "Path by
# structure and start-up"; the machine's load moved single figures by 2x, the ranking rarely):
#   dense   ~ 20 µs + 0.2 ns·n³                        (62 unknowns 56 µs, 152 unknowns 0.68 ms)
#   banded  ~ 45 µs + 0.4 ns·n·(kl+1)·(kl+ku+1)        (one LAPACK call per frequency and its Python)
#   sparse  ~ 120 µs + 1 ns·nnz²/n                     (SuperLU; nnz²/n ~ the fill's flops: n³ when dense)
# Below _DENSE_ALWAYS unknowns even a tridiagonal system is about as quick dense (42 unknowns:
# 44 µs dense, 43 µs banded; 36-unknown mesh 32 µs dense, 55 µs banded), so the structure is not
# analysed there (no graph ordering, no scipy.sparse.csgraph or scipy.linalg to load).
_DENSE_ALWAYS = 40
_DENSE_COST = (20e-6, 0.2e-9)
_BANDED_COST = (45e-6, 0.4e-9)
_SPARSE_COST = (120e-6, 1e-9)
_PIVOT_THRESHOLD = 0.1  # SuperLU threshold partial pivoting (1.0 = classical partial pivoting)
_GAIN_CHUNK = 32  # frequencies per block when gathering source gains

_SOLVERS: weakref.WeakKeyDictionary[MnaSystem, dict[SolverOptions, AdjointSolver]] = weakref.WeakKeyDictionary()


def solver_for(system: MnaSystem, options: SolverOptions | None = None) -> AdjointSolver:
    """The (cached) solver of ``system`` under ``options``: path, pattern and
    ordering are decided once per circuit and reused for every later frequency."""
    options = options or SolverOptions()
    if options.jobs is not None:  # how many threads solve is the caller's, not the solver's: one solver
        options = dataclasses.replace(options, jobs=None)
    by_options = _SOLVERS.setdefault(system, {})
    solver = by_options.get(options)
    if solver is None:
        solver = by_options[options] = AdjointSolver(system, options)
    return solver


def adjoint_solutions(
    system: MnaSystem, selector: np.ndarray, frequency_Hz: np.ndarray, options: SolverOptions | None = None
) -> np.ndarray:
    """(F, n) complex ``z(f)`` with ``Y(f)ᵀ z(f) = selector`` at every frequency."""
    jobs = options.jobs if options is not None else None
    return solver_for(system, options).solve(selector, np.asarray(frequency_Hz, dtype=float), jobs=jobs)


def transfer_power(
    system,
    selector,
    injection,
    input_vector,
    frequency_Hz,
    power_out=None,
    progress=None,
    options: SolverOptions | None = None,
):
    """``(|zᵀB|² (K, F), |zᵀu|² (F,) or None)``: the power transfer from every
    column of the sparse injection matrix ``B`` (n, K; None: no sources) and from the input
    vector ``u``, in blocks of frequencies (the (F, n) solutions are never
    all held at once for a large circuit).  ``power_out``: a (K, F) array to
    fill and return as the first; ``progress``: see :meth:`AdjointSolver.solve`."""
    f = np.asarray(frequency_Hz, dtype=float)
    solver = solver_for(system, options)
    jobs = options.jobs if options is not None else None
    bt = injection.T.tocsr() if injection is not None else None  # (K, n)
    k = bt.shape[0] if bt is not None else 0
    power = power_out
    if power is None:
        require_memory(f.size * (k * 8 + 8), "the per-source transfer at every frequency")
        power = np.empty((k, f.size))
    signal = np.empty(f.size) if input_vector is not None else None
    # zᵀu summed over u's few nonzeros in a fixed order, elementwise: the same bits however many
    # frequencies are solved together (a BLAS matrix-vector product need not be), which the
    # analysis's memo relies on
    u = np.asarray(input_vector, dtype=float) if signal is not None else np.zeros(0)
    u_at = np.flatnonzero(u)
    # a block per thread-pool run: 32 frequencies per thread, so that the threads' uneven finish
    # at the end of each block costs little
    chunk = max(1, f.size) if solver.method == "dense" else _GAIN_CHUNK * solver.threads_for(jobs)
    for start in range(0, f.size, chunk):
        stop = min(f.size, start + chunk)
        z = solver.solve(selector, f[start:stop], progress, jobs=jobs)  # (Fc, n)
        if bt is not None and k:
            gains = bt @ z.T  # (K, Fc)
            power[:, start:stop] = gains.real**2 + gains.imag**2
        if signal is not None:
            s = np.zeros(stop - start, dtype=complex)
            for j in u_at:
                s += z[:, j] * u[j]
            signal[start:stop] = s.real**2 + s.imag**2
    return power, signal


def _singular(f: float, rcond: float | None = None) -> CircuitError:
    where = "at DC (0 Hz)" if f == 0.0 else f"at {f:.6g} Hz"
    how = (
        "singular"
        if rcond is None or rcond == 0.0
        else f"singular to working precision (estimated condition number {1 / rcond:.1e})"
    )
    advice = (
        "a node may lack a DC path to ground, or voltage sources/inductors form a loop"
        if f == 0.0
        else "a lossless resonance or a loop of ideal sources makes the circuit singular there; "
        "add a realistic loss (series or parallel resistance) or move the band/grid"
    )
    return CircuitError(f"the circuit equations are {how} {where}: {advice}")


def _probe(n: int) -> np.ndarray:
    """The fixed random probe vector (reproducible; entries of size ~1)."""
    return np.random.default_rng(20240917).standard_normal(n) + 0j


def _pow2(x: np.ndarray) -> np.ndarray:
    """1/x rounded to a power of two (scaling by it is exact), 1 where x is 0."""
    _, exponent = np.frexp(np.where(x > 0, x, 1.0))  # x = m·2^e, 0.5 <= m < 1
    return np.ldexp(1.0, 1 - exponent)  # 2^(1-e): x times it lies in [1, 2)


class _Pattern:
    """The union pattern of Gᵀ and Cᵀ (the adjoint matrix), in CSC order,
    optionally permuted symmetrically by ``order``; each frequency refills
    only the data array."""

    def __init__(self, gt, ct, order: np.ndarray | None = None):
        import scipy.sparse as sp

        n = gt.shape[0]
        gc, cc = sp.coo_matrix(gt), sp.coo_matrix(ct)
        if order is not None:
            where = np.empty(n, dtype=np.int64)
            where[order] = np.arange(n)
            gr, gcol, crow, ccol = where[gc.row], where[gc.col], where[cc.row], where[cc.col]
        else:
            gr, gcol, crow, ccol = gc.row, gc.col, cc.row, cc.col
        lin_g = gcol.astype(np.int64) * n + gr
        lin_c = ccol.astype(np.int64) * n + crow
        lin = np.unique(np.concatenate([lin_g, lin_c]))  # column-major order = CSC
        self.n = n
        self.shape = (n, n)
        index_type = np.int32 if n < 2**31 - 1 else np.int64
        self.rows = (lin % n).astype(index_type)
        self.cols = (lin // n).astype(index_type)
        self.indptr = np.searchsorted(self.cols, np.arange(n + 1)).astype(index_type)
        # the same indices as numpy's own index type: gathering with int32 indices converts them
        # on every call (about half the cost of each gather in scaled())
        self._rows_ip, self._cols_ip = self.rows.astype(np.intp), self.cols.astype(np.intp)
        self.g_data = np.zeros(lin.size)
        self.c_data = np.zeros(lin.size)
        np.add.at(self.g_data, np.searchsorted(lin, lin_g), gc.data)
        np.add.at(self.c_data, np.searchsorted(lin, lin_c), cc.data)
        self.g_abs, self.c_abs = np.abs(self.g_data), np.abs(self.c_data)
        by_row = np.argsort(self.rows, kind="stable")
        row_ptr = np.searchsorted(self.rows[by_row], np.arange(n + 1))
        self.by_row, self.row_ptr = by_row, row_ptr
        self.empty = bool(np.any(np.diff(self.indptr) == 0) or np.any(np.diff(row_ptr) == 0))
        self._row_max = _SegmentMax(by_row, row_ptr)
        self._col_max = _SegmentMax(np.arange(lin.size), self.indptr)

    def scaled(self, s: complex):
        """(data of Dr·(G + sC)ᵀ·Dc on the pattern, dr, dc, a lower bound of ‖·‖∞).

        Row then column scaling by powers of two (LAPACK ``geequ``): every
        row and column of the result has its largest entry near 1."""
        if self.empty:
            raise _singular(s.imag / (2 * math.pi))
        data = self.g_data + s * self.c_data
        mag = self.g_abs + abs(s) * self.c_abs  # a cheap bound of |data|, safe against cancellation
        dr = _pow2(self._row_max(mag))
        scale = dr[self._rows_ip]
        mag *= scale
        dc = _pow2(self._col_max(mag))
        scale *= dc[self._cols_ip]
        data *= scale
        return data, dr, dc, 0.5  # every column's largest |entry| is at least ~1/√2 of its bound


class _SegmentMax:
    """Maxima of consecutive segments of a gathered array: a padded 2-D
    maximum when the segments are of similar length (fast), else reduceat."""

    def __init__(self, order: np.ndarray, ptr: np.ndarray):
        lengths = np.diff(ptr)
        width = int(lengths.max(initial=0))
        self._order, self._ptr = order, ptr[:-1]
        self._padded = None
        if lengths.size and width * lengths.size <= 4 * max(1, order.size):
            slot = np.arange(width)[None, :]
            index = ptr[:-1, None] + slot
            index = np.where(slot < lengths[:, None], index, order.size)  # the pad points at an appended 0
            self._padded = np.ascontiguousarray(np.concatenate([order, [order.size]])[index].T)  # (width, segments)

    def __call__(self, values: np.ndarray) -> np.ndarray:
        if self._padded is not None:
            padded = np.append(values, 0.0)
            out = padded[self._padded[0]]
            for slot in self._padded[1:]:  # a few elementwise maxima of gathers beat a short-axis reduction
                np.maximum(out, padded[slot], out=out)
            return out
        return np.maximum.reduceat(values[self._order], self._ptr)


class AdjointSolver:
    """Solves ``Y(f)ᵀ z = c`` for one circuit at any frequencies; see the
    module docstring for the paths.  ``method`` is "dense", "banded" or
    "sparse"."""

    def __init__(self, system: MnaSystem, options: SolverOptions | None = None):
        options = options or SolverOptions()
        self.n = system.size
        self.options = options
        forced = options.method
        self._probe = _probe(self.n)
        self._probe_norm = float(np.abs(self._probe).max(initial=0.0))
        self._superlu_order: np.ndarray | None = None
        if forced == "dense" or (forced is None and self.n <= min(options.dense_limit, _DENSE_ALWAYS)):
            self._use_dense(_Pattern(system.G.T, system.C.T))
            return
        from scipy.sparse.csgraph import reverse_cuthill_mckee

        plain = _Pattern(system.G.T, system.C.T)
        import scipy.sparse as sp

        sym = sp.csr_matrix((np.ones(plain.rows.size), (plain.rows, plain.cols)), shape=plain.shape)
        order = np.asarray(reverse_cuthill_mckee((sym + sym.T).tocsr(), symmetric_mode=True), dtype=np.int64)
        banded = _Pattern(system.G.T, system.C.T, order)
        kl = int(np.max(banded.rows.astype(np.int64) - banded.cols, initial=0))
        ku = int(np.max(banded.cols.astype(np.int64) - banded.rows, initial=0))
        self.bandwidth = (kl, ku)
        band_bytes = (2 * kl + ku + 1) * self.n * 16
        band_flops = self.n * (kl + 1) * (kl + ku + 1)
        # SuperLU's cost is only known after a factorisation; on MNA patterns its fill is
        # rarely below ~5 entries per unknown and its per-column overhead is ~1000 flops
        narrow = kl + ku <= _BAND_ALWAYS or band_flops <= 1000 * self.n
        if forced is None and self.n <= options.dense_limit:
            # between _DENSE_ALWAYS and dense_limit: dense when the cost model says it is quicker
            # than the path the structure would take (a network with most nodes coupled)
            fixed, per = _BANDED_COST if narrow else _SPARSE_COST
            other = fixed + per * (band_flops if narrow else plain.rows.size**2 / self.n)
            if _DENSE_COST[0] + _DENSE_COST[1] * float(self.n) ** 3 <= other:
                self._use_dense(plain)
                return
        if (narrow and forced is None) or forced == "banded":
            self.method = "banded"
            require_memory(band_bytes, f"the banded LU of {self.n} unknowns (bandwidth {kl}+{ku})")
            self._pattern = banded
            self._order = order
            self._kl, self._ku = kl, ku
            from scipy.linalg import lapack

            r, c = banded.rows.astype(np.intp), banded.cols.astype(np.intp)
            self._gtsv = None
            if kl <= 1 and ku <= 1 and self.n > 1:
                # tridiagonal (ladders, chains, lines): LAPACK zgtsv, about half zgbsv's time at
                # bandwidth 1 (no BLAS call per column); the sub-, main and super-diagonals are
                # the three thirds of one array
                self._gtsv = lapack.get_lapack_funcs("gtsv", dtype=np.complex128)
                n = self.n
                self._tri_index = np.where(r == c, n + r, np.where(r > c, c, 2 * n + r))
            else:
                # position of each pattern entry in the band array, which is Fortran-ordered (what
                # zgbsv takes: a C-ordered one is copied by the wrapper at every frequency)
                self._gbsv = lapack.get_lapack_funcs("gbsv", dtype=np.complex128)
                self._band_index = c * (2 * kl + ku + 1) + (kl + ku + r - c)
        else:
            self.method = "sparse"
            self._pattern = plain
            self._plain = plain
            self._system = system

    def _use_dense(self, pattern: _Pattern) -> None:
        self.method = "dense"
        self._dense_pattern = pattern

    # -- public --------------------------------------------------------------
    def solve(self, selector: np.ndarray, frequency_Hz: np.ndarray, progress=None, jobs: int | None = 1) -> np.ndarray:
        """(F, n) complex z(f) with Y(f)ᵀ z(f) = selector.  ``progress``, if
        given, is called with the number of frequencies just solved.  ``jobs``:
        threads solving frequencies at once on the sparse and tridiagonal paths
        (None: every core this process may use; never more than those cores),
        each with BLAS held to one thread.  The result does not depend on it:
        every frequency is solved alone, the same way whatever the order."""
        f = np.asarray(frequency_Hz, dtype=float).ravel()
        if self.n == 0:
            return np.zeros((f.size, 0), dtype=complex)
        c = np.asarray(selector, dtype=float)
        if self.method == "dense":
            out = self._dense(c, f)
            if progress is not None:
                progress(f.size)
            return out
        require_memory(f.size * self.n * 16, "the adjoint solutions at every frequency")
        out = np.empty((f.size, self.n), dtype=complex)
        if self.method == "banded" and self._gtsv is None:
            # scipy's zgbsv wrapper holds the GIL (measured): threads would only take turns
            _one_by_one(self._banded_one, c, f, out, progress)
            return out
        from threadpoolctl import threadpool_limits  # imported on these paths only (large circuits)

        # BLAS on one thread, whatever the jobs: SuperLU's many small BLAS calls gain nothing from
        # a BLAS pool (on 2 cores one analysis took 2-5x the CPU time with it), and a multithreaded
        # BLAS sums in an order that depends on its threads, so jobs=1 and jobs=2 would differ in the
        # last bits; with one BLAS thread each, threads x BLAS threads never exceed the cores
        threads = min(thread_count(jobs), f.size)
        with threadpool_limits(limits=1):
            if self.method == "sparse" and self._superlu_order is None and f.size:
                self._choose_superlu_order(float(f[0]))  # once per circuit, before any thread starts
            one = self._banded_one if self.method == "banded" else self._sparse_one
            if threads <= 1:
                _one_by_one(one, c, f, out, progress)
            else:
                _on_threads(threads, one, c, f, out, progress)
        return out

    def threads_for(self, jobs: int | None) -> int:
        """Threads :meth:`solve` runs for ``jobs`` on this path (1 on the dense and the general
        banded paths)."""
        if self.method == "dense" or (self.method == "banded" and self._gtsv is None):
            return 1
        return thread_count(jobs)

    # -- checks --------------------------------------------------------------
    def _check(self, f: float, w_c: np.ndarray, w_p: np.ndarray, rhs_norm: float, norm: float) -> None:
        """Refuse frequency ``f`` if the scaled system is singular: a non-finite
        solution, or ``norm·‖w‖/‖rhs‖`` (a lower bound of the condition
        number, ``norm`` a lower bound of the scaled matrix's norm) above 1/RCOND_MIN."""
        with np.errstate(invalid="ignore", over="ignore"):
            peak_c, peak_p = float(np.abs(w_c).max(initial=0.0)), float(np.abs(w_p).max(initial=0.0))
        if not (math.isfinite(peak_c) and math.isfinite(peak_p)):
            raise _singular(f)
        inv_norm = max(peak_p / self._probe_norm, peak_c / rhs_norm if rhs_norm else 0.0)
        if norm * inv_norm * RCOND_MIN > 1.0:
            raise _singular(f, 1.0 / (norm * inv_norm))

    # -- dense ---------------------------------------------------------------
    def _dense(self, c: np.ndarray, f: np.ndarray) -> np.ndarray:
        n = self.n
        out = np.empty((f.size, n), dtype=complex)
        chunk = max(_CHUNK_MIN_FREQUENCIES, _CHUNK_BYTES // (48 * n * n))
        probe = self._probe
        p = self._dense_pattern
        if p.empty:
            raise _singular(float(f[0]))
        # the equilibration works on the pattern's nonzeros (a few per row), not on n² entries
        rows, cols = p._rows_ip, p._cols_ip
        by_row, row_ptr = p.by_row, p.row_ptr
        for start in range(0, f.size, chunk):
            fc = f[start : start + chunk]
            s = 2j * np.pi * fc
            w_abs = np.abs(s)
            # row scaling from the row maxima of |G| + |s|·|C| (a bound of |G + sC|, safe against
            # cancellation), then column scaling of the row-scaled magnitudes (geequ)
            mag = p.g_abs[None, :] + w_abs[:, None] * p.c_abs[None, :]  # (Fc, nnz)
            dr = _pow2(np.maximum.reduceat(mag[:, by_row], row_ptr[:-1].astype(np.intp), axis=1))  # (Fc, n)
            mag *= dr[:, rows]
            dc = _pow2(np.maximum.reduceat(mag, p.indptr[:-1].astype(np.intp), axis=1))  # CSC order: columns
            data = p.g_data[None, :] + s[:, None] * p.c_data[None, :]
            data *= dr[:, rows] * dc[:, cols]
            flat = np.zeros((fc.size, n * n), dtype=complex)
            flat[:, rows * n + cols] = data
            yt = flat.reshape(fc.size, n, n)
            rhs = np.empty((fc.size, n, 2), dtype=complex)
            rhs[:, :, 0] = dr * c[None, :]
            rhs[:, :, 1] = probe[None, :]
            try:
                w = np.linalg.solve(yt, rhs)
            except np.linalg.LinAlgError:
                w = self._dense_one_by_one(yt, rhs, fc)
            self._check_batch(fc, w, rhs)
            out[start : start + fc.size] = dc * w[:, :, 0]
        return out

    def _check_batch(self, f: np.ndarray, w: np.ndarray, rhs: np.ndarray) -> None:
        """:meth:`_check` for a stack (F, n, 2) of solutions of scaled systems
        (every scaled entry below 2, every column's largest at least 1)."""
        finite = np.isfinite(w).all(axis=(1, 2))
        with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
            peak = np.abs(w).max(axis=1)  # (F, 2)
            rn = np.abs(rhs).max(axis=1)
            inv_norm = np.max(np.where(rn > 0, peak / np.where(rn > 0, rn, 1.0), 0.0), axis=1)
        bad = ~finite | (inv_norm * RCOND_MIN > 1.0)
        if bad.any():
            i = int(np.argmax(bad))
            raise _singular(float(f[i]), None if not finite[i] else 1.0 / inv_norm[i])

    @staticmethod
    def _dense_one_by_one(yt, rhs, f):
        import scipy.linalg

        w = np.empty(rhs.shape, dtype=complex)
        for i in range(f.size):
            try:
                lu = scipy.linalg.lu_factor(yt[i], check_finite=False)
            except (np.linalg.LinAlgError, ValueError):
                raise _singular(float(f[i])) from None
            if np.any(np.diag(lu[0]) == 0):
                raise _singular(float(f[i]))
            w[i] = scipy.linalg.lu_solve(lu, rhs[i], check_finite=False)
        return w

    # -- banded --------------------------------------------------------------
    def _banded_one(self, c: np.ndarray, f: float) -> np.ndarray:
        p = self._pattern
        data, dr, dc, norm = p.scaled(2j * math.pi * f)
        kl, ku, n = self._kl, self._ku, self.n
        rhs = np.empty((n, 2), dtype=complex, order="F")
        rhs[:, 0] = dr * c[self._order]
        rhs[:, 1] = self._probe
        rn = float(np.abs(rhs[:, 0]).max())
        if self._gtsv is not None:
            tri = np.zeros(3 * n, dtype=complex)
            tri[self._tri_index] = data
            *_, w, info = self._gtsv(
                tri[: n - 1],
                tri[n : 2 * n],
                tri[2 * n : 3 * n - 1],
                rhs,
                overwrite_dl=True,
                overwrite_d=True,
                overwrite_du=True,
                overwrite_b=True,
            )
        else:
            ab = np.zeros((2 * kl + ku + 1, n), dtype=complex, order="F")
            ab.T.ravel()[self._band_index] = data  # ab.T is C-contiguous: its ravel() is a view
            _, _, w, info = self._gbsv(kl, ku, ab, rhs, overwrite_ab=True, overwrite_b=True)
        if info > 0:
            raise _singular(f)
        self._check(f, w[:, 0], w[:, 1], rn, norm)
        z = np.empty(n, dtype=complex)
        z[self._order] = dc * w[:, 0]
        return z

    # -- sparse --------------------------------------------------------------
    def _choose_superlu_order(self, f: float) -> None:
        """The fill-reducing ordering (minimum degree on Aᵀ + A) from a factorisation at ``f``,
        and the pattern permuted by it.  That factor is dropped: every frequency, ``f`` too, is
        then factored the same way (the permuted pattern, ``NATURAL``), so a frequency's solution
        does not depend on which one came first (a factor under the minimum-degree ordering
        differs from the refactored one in the last bits)."""
        import scipy.sparse as sp
        import scipy.sparse.linalg as spla

        p = self._plain
        data, *_ = p.scaled(2j * math.pi * f)
        a = sp.csc_matrix((data, p.rows, p.indptr), shape=p.shape)
        try:
            lu = spla.splu(
                a, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=_PIVOT_THRESHOLD, options=dict(SymmetricMode=True)
            )
        except RuntimeError:
            raise _singular(f) from None
        require_memory(3 * 20 * (lu.L.nnz + lu.U.nnz), "the sparse LU factors")
        self._pattern = _Pattern(self._system.G.T, self._system.C.T, np.argsort(lu.perm_c))
        self._superlu_order = np.argsort(lu.perm_c)
        self._system = None  # type: ignore[assignment]  # not needed once the ordering is known

    def _sparse_one(self, c: np.ndarray, f: float) -> np.ndarray:
        """z at ``f`` on the permuted pattern (:meth:`_choose_superlu_order` first).  Runs on
        worker threads: reads the solver, never changes it, and its SuperLU factor lives and
        dies in the calling thread (a factor kept past its thread is what scipy's allocation
        tracking handles worst)."""
        import scipy.sparse as sp
        import scipy.sparse.linalg as spla

        p, order = self._pattern, self._superlu_order
        assert order is not None  # chosen by solve() before the first frequency
        data, dr, dc, norm = p.scaled(2j * math.pi * f)
        a = sp.csc_matrix((data, p.rows, p.indptr), shape=p.shape)
        try:
            lu = spla.splu(
                a, permc_spec="NATURAL", diag_pivot_thresh=_PIVOT_THRESHOLD, options=dict(SymmetricMode=True)
            )
        except RuntimeError:
            raise _singular(f) from None
        rhs = np.stack([dr * c[order], self._probe], axis=1)
        rn = float(np.abs(rhs[:, 0]).max())
        w = lu.solve(rhs)
        self._check(f, w[:, 0], w[:, 1], rn, norm)
        z = np.empty(self.n, dtype=complex)
        z[order] = dc * w[:, 0]
        return z


def thread_count(jobs: int | None) -> int:
    """Threads for ``jobs`` (None: all): never more than the cores this process may run on,
    so that threads x one BLAS thread each do not oversubscribe them."""
    cores = usable_cores()
    return cores if jobs is None else max(1, min(int(jobs), cores))


def _one_by_one(one, c: np.ndarray, f: np.ndarray, out: np.ndarray, progress) -> None:
    """``out[i] = one(c, f[i])`` in this thread."""
    for i, fi in enumerate(f):
        out[i] = one(c, float(fi))
        if progress is not None:
            progress(1)


def _on_threads(threads: int, one, c: np.ndarray, f: np.ndarray, out: np.ndarray, progress) -> None:
    """``out[i] = one(c, f[i])`` on ``threads`` threads; ``progress`` is called from this thread,
    in frequency order.  The first error (a singular frequency) is raised here and the
    frequencies not yet started are dropped."""
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(max_workers=threads) as pool:
        futures = [pool.submit(one, c, float(fi)) for fi in f]
        try:
            for i, future in enumerate(futures):
                out[i] = future.result()
                if progress is not None:
                    progress(1)
        except BaseException:
            for future in futures:
                future.cancel()
            raise

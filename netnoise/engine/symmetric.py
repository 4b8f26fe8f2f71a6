"""Exact noise to infinite bandwidth for circuits whose G and C are symmetric.

A network of resistors and capacitors (also with grounded or floating voltage sources, biased
diodes, and -- on their own, without capacitors -- inductors) stamps symmetric G and C.  Then
the noise to infinite bandwidth needs no QZ: a real symmetric-definite eigenproblem gives every
source's variance in closed form.

1. **Reduction.**  Unknowns with no capacitance (zero rows and columns of C: nodes touching no
   capacitor, branch currents of voltage sources) are algebraic; they are eliminated by the
   Schur complement ``G_r = G_dd − G_da G_aa⁻¹ G_ad`` (one sparse LU of ``G_aa``), which keeps
   the symmetry.  Sources and the output are carried over:
   ``b_r = b_d − G_da G_aa⁻¹ b_a``, ``c_r = c_d − G_da G_aa⁻¹ c_a``, and a source whose
   input reaches the output through the algebraic part alone, ``d_k = c_aᵀ G_aa⁻¹ b_a``,
   does so with no roll-off (unbounded total).  A grounded voltage source on a node with
   capacitance pins that node: the pair (node voltage, branch current) is dropped, and a column
   that drives the source (its own noise, the signal input) enters the rest as
   ``−(G_·s + sC_·s)·u``; its ``s`` part adds a direct term that must cancel (else unbounded).
2. **Definiteness.**  ``C_r = C_dd`` must be definite: positive for capacitances, negative for
   a network of inductors alone (their branch rows stamp −L; the pencil is then negated, which
   keeps its eigenvalues).  Rows and columns are scaled by ``1/√|C_ii|``, and a Cholesky
   factor ``C_r = L Lᵀ`` is the test.  Capacitors and inductors together (complex poles),
   a group of capacitors that does not reach ground (C_r singular), a floating voltage source
   between nodes with capacitance (G_aa singular), controlled sources,
   amplifiers and transistors (G not symmetric) are refused here: the caller falls back on the
   QZ path.
3. **Eigen-coordinates.**  ``G_r v_i = λ_i C_r v_i`` with ``Vᵀ C_r V = I`` makes
   ``(G_r + sC_r)⁻¹ = V (Λ + s)⁻¹ Vᵀ``, so each transfer is a sum of real first-order terms,
   ``H_k(s) = Σ_i a_ik / (s + λ_i)`` with ``a_ik = p_i q_ik``, ``p = Vᵀc_r``, ``q_k = Vᵀb_r,k``;
   the poles are ``−λ_i`` (rad/s), all real.
4. **Closed form.**  With ``∫_{−∞}^{∞} dω / ((jω + λ_i)(−jω + λ_j)) = 2π / (λ_i + λ_j)``
   (Parseval: ``∫_0^∞ e^{−(λ_i+λ_j)t} dt``) and f = ω/2π,

       ∫_0^∞ |H_k(j2πf)|² df = ½ Σ_ij a_ik a_jk / (λ_i + λ_j),

   so a white source of one-sided density ``S_k`` gives ``var_k = (S_k/2) q_kᵀ M q_k`` with
   ``M_ij = p_i p_j / (λ_i + λ_j)`` -- the observability Gramian in eigen-coordinates, the same
   ``(S_k/2) b_kᵀ W b_k`` as :func:`netnoise.engine.total_variance.infinite_band_totals`.  One RC
   pole (``a = 1/C``, ``λ = 1/RC``, ``S = 4kT/R``) gives kT/C.

Anything the method cannot do raises :class:`NotSymmetricDefinite` with the reason; the caller
then takes the QZ path (or the quadrature), never a wrong answer.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from netnoise.engine.resources import require_memory
from netnoise.engine.total_variance import rounding_tolerance
from netnoise.errors import CircuitError

__all__ = [
    "SYMMETRIC_LIMIT",
    "NotSymmetricDefinite",
    "SymmetricPencil",
    "SymmetricTotals",
    "symmetric_pencil",
    "symmetric_rates",
    "symmetric_totals",
]

SYMMETRIC_LIMIT = 3000  # unknowns; eigh is O(n³) too but ~30-90x cheaper than QZ (benchmarks/README.md)

# G and C count as symmetric when every entry matches its mirror to this share of the larger of
# the two: the stamps place the same value on both sides, and only the order of summing several
# stamps into one entry can differ (rounding of a few eps)
_SYMMETRY_RTOL = 1e-13
# a source reaches the output unfiltered when its direct term c_aᵀG_aa⁻¹b_a exceeds this share of
# the sum of the magnitudes it cancels from (rounding is ~eps·cond(G_aa) of it)
_DIRECT_SHARE = 1e-9
# a stiff pencil (rounding of the rates, eps times their spread, above this) up to this many kept
# unknowns is decomposed again by one-sided Jacobi (LAPACK dgejsv on the Cholesky factor of
# L⁻¹gL⁻ᵀ): rates to relative accuracy eps·cond(H), H the matrix scaled to unit diagonal, instead of
# eps·spread (measured: 3e-12 against 1.6e-8 on a network with rates 7e7 apart), at about 3.5x the
# time of the symmetric QR (1.7 s against 0.2 s on a 600-node mesh under load: kept below that);
# beyond the limit the stated tolerance says what the rounding costs
_STIFF_TOLERANCE = 1e-10
_JACOBI_LIMIT = 400
# the slowest rate must exceed this share of the fastest: below it the slowest pole is not known
# from zero (a lossless or DC mode), which the QZ path reports by name
_SLOWEST_SHARE = 1e-13


class NotSymmetricDefinite(Exception):
    """The circuit is outside what the symmetric method can do; ``reason`` says why."""

    def __init__(self, reason: str):
        super().__init__(reason)
        self.reason = reason


@dataclass(frozen=True, eq=False)
class SymmetricPencil:
    """The reduced, scaled pencil of a symmetric circuit.

    ``dynamic``, ``algebraic``: the unknowns kept and eliminated; ``scale`` (m,): the row and
    column scaling 1/√|C_ii| of the kept ones; ``sign``: +1, or −1 when the pencil was negated
    (inductors alone); ``coupling``: G_da (m, n_a), sparse; ``solve_algebraic``: x ↦ G_aa⁻¹x
    (None without algebraic unknowns); ``pinned`` (P,), ``pinned_branch``, ``pinned_sign``: the
    nodes held by grounded voltage sources (v = sign·b at the branch row) and their branch rows,
    ``g_pinned``, ``c_pinned`` (n, P): their columns of G and C; ``standard``: L⁻¹ g L⁻ᵀ (m, m) with ``factor`` L the
    Cholesky factor of the scaled C_r (its diagonal alone, (m,), when C_r is diagonal: grounded
    capacitors only), whose eigenvalues are the rates λ_i (1/s)."""

    dynamic: np.ndarray
    algebraic: np.ndarray
    pinned: np.ndarray
    scale: np.ndarray
    sign: float
    coupling: sp.csr_matrix
    solve_algebraic: object
    factor: np.ndarray
    standard: np.ndarray
    pinned_branch: np.ndarray
    pinned_sign: np.ndarray
    g_pinned: sp.csc_matrix
    c_pinned: sp.csc_matrix

    @property
    def size(self) -> int:
        return int(self.dynamic.size)


@dataclass(frozen=True, eq=False)
class SymmetricTotals:
    """``variance`` (K,): ∫0^∞ |H_k|² S_k df per input column; ``poles_Hz``: the pole
    magnitudes λ_i/2π, Hz, ascending; ``tolerance``: the stated relative error of the
    variances (:func:`~netnoise.engine.total_variance.rounding_tolerance`: rounding, growing
    with the spread of the poles)."""

    variance: np.ndarray
    poles_Hz: np.ndarray
    tolerance: float


def _is_symmetric(m: sp.spmatrix) -> bool:
    diff = abs(m - m.T).tocoo()
    if diff.nnz == 0 or not diff.data.any():
        return True
    size = abs(m).maximum(abs(m.T)).tocsr()
    bound = np.asarray(size[diff.row, diff.col]).ravel()
    return bool(np.all(diff.data <= _SYMMETRY_RTOL * bound))


def symmetric_pencil(G, C) -> SymmetricPencil:
    """The reduced pencil of G + sC (sparse or dense, (n, n)); NotSymmetricDefinite when G or C
    is not symmetric, C is not definite on the unknowns with capacitance, or G_aa is singular."""
    import scipy.linalg as la  # loaded on first use: keeps the command line's start-up short
    import scipy.sparse.linalg as spla

    G = sp.csr_matrix(G, dtype=float)
    C = sp.csr_matrix(C, dtype=float, copy=True)
    C.eliminate_zeros()
    if not _is_symmetric(G):
        raise NotSymmetricDefinite("G is not symmetric (a controlled source, amplifier or transistor)")
    if not _is_symmetric(C):
        raise NotSymmetricDefinite("C is not symmetric")
    has_c = np.diff(C.indptr) > 0
    pinned, branch, pin_sign = _pinned(G, has_c)
    keep = np.ones(has_c.size, dtype=bool)
    keep[pinned] = keep[branch] = False
    dynamic = np.flatnonzero(has_c & keep)
    algebraic = np.flatnonzero(~has_c & keep)
    m = dynamic.size
    if m == 0:
        raise NotSymmetricDefinite("no capacitance or inductance: no poles")
    # g, c, L, L⁻¹gL⁻ᵀ here; eigenvectors, V, the Cauchy matrix and the Gramian in the totals
    try:
        require_memory(8 * m * m * 8, "the dense symmetric eigenproblem to infinite bandwidth")
    except CircuitError:  # the next method may fit where this one does not
        raise NotSymmetricDefinite("not enough memory for the dense eigenproblem") from None
    c_dd = C[dynamic][:, dynamic].toarray()
    diag = np.diag(c_dd)
    if np.all(diag > 0):
        sign = 1.0
    elif np.all(diag < 0):  # inductors alone: −L on their branch rows; negated, same eigenvalues
        sign = -1.0
    else:
        raise NotSymmetricDefinite("C is not definite (capacitors and inductors together, or a zero diagonal)")
    g_dd = G[dynamic][:, dynamic].toarray()
    coupling = G[dynamic][:, algebraic].tocsr()
    solve = None
    if algebraic.size:
        g_aa = G[algebraic][:, algebraic].tocsc()
        try:
            lu = spla.splu(g_aa)
        except RuntimeError:
            raise NotSymmetricDefinite("the unknowns without capacitance form a singular block") from None
        solve = lu.solve
        if coupling.nnz:
            g_dd = g_dd - coupling @ solve(coupling.T.toarray())
    if not np.all(np.isfinite(g_dd)):
        raise NotSymmetricDefinite("the reduction overflowed")
    scale = 1.0 / np.sqrt(sign * diag)
    g = sign * scale[:, None] * g_dd * scale[None, :]
    c = sign * scale[:, None] * c_dd * scale[None, :]
    g = 0.5 * (g + g.T)
    c = 0.5 * (c + c.T)
    if not np.any(c - np.diag(np.diag(c))):  # grounded capacitors only: L is a diagonal, ~1 after scaling
        factor = np.sqrt(np.diag(c))
        standard = g / np.outer(factor, factor)
    else:
        try:
            factor = la.cholesky(c, lower=True, check_finite=False)
        except la.LinAlgError:
            raise NotSymmetricDefinite(
                "C is not definite on the unknowns with capacitance (a group of capacitors not reaching ground)"
            ) from None
        # L⁻¹ g L⁻ᵀ: the standard symmetric matrix with the pencil's eigenvalues
        half = la.solve_triangular(factor, g, lower=True, check_finite=False)
        standard = la.solve_triangular(factor, half.T, lower=True, check_finite=False)
    standard = 0.5 * (standard + standard.T)
    return SymmetricPencil(
        dynamic,
        algebraic,
        pinned,
        scale,
        sign,
        coupling,
        solve,
        factor,
        standard,
        branch,
        pin_sign,
        G.tocsc()[:, pinned],
        C.tocsc()[:, pinned],
    )


def _pinned(G: sp.csr_matrix, has_c: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(nodes, branch rows, signs) of grounded voltage sources on nodes with capacitance: a row
    without capacitance whose only entry of G is ±1 at such a node (v_node = sign·b_branch)."""
    count = np.diff(G.indptr)
    rows = np.flatnonzero(~has_c & (count == 1))
    cols = G.indices[G.indptr[rows]]
    values = G.data[G.indptr[rows]]
    ok = has_c[cols] & (cols != rows) & (np.abs(values) == 1.0)
    rows, cols, values = rows[ok], cols[ok], values[ok]
    _, first = np.unique(cols, return_index=True)  # one source per node (two would be a loop)
    return cols[first], rows[first], np.sign(values[first])


def _checked_rates(rates: np.ndarray) -> np.ndarray:
    top = float(np.max(np.abs(rates), initial=0.0))
    if rates.size and not rates.min() > _SLOWEST_SHARE * top:
        raise NotSymmetricDefinite("a rate at or below zero (to rounding): an unstable or lossless mode")
    return rates


def symmetric_rates(pencil: SymmetricPencil) -> np.ndarray:
    """The rates λ_i (1/s, ascending) of the pencil: the poles are −λ_i (a rate at or below zero:
    a mode that does not decay, for the caller to judge)."""
    import scipy.linalg as la

    return la.eigh(pencil.standard, eigvals_only=True, check_finite=False)


def symmetric_totals(pencil: SymmetricPencil, c: np.ndarray, B, density: np.ndarray) -> SymmetricTotals:
    """∫0^∞ |cᵀ(G + j2πfC)⁻¹ b_k|² S_k df for every column b_k of ``B`` ((n, K), sparse or dense)
    with one-sided white densities ``density`` (K,).  NotSymmetricDefinite when a source with
    S_k > 0 reaches the output with no roll-off, or a rate is not clearly positive."""
    import scipy.linalg as la

    c = np.asarray(c, dtype=float)
    B = sp.csc_matrix(B, dtype=float)
    sk = np.asarray(density, dtype=float)
    k = B.shape[1]
    # columns that drive a pinned node (a voltage source's own noise, the signal input): apart
    driven = np.zeros(0, dtype=np.intp)
    u = np.zeros((0, k))
    given = B
    if pencil.pinned.size:
        u = pencil.pinned_sign[:, None] * B[pencil.pinned_branch].toarray()
        driven = np.flatnonzero(np.any(u != 0, axis=0))
        if driven.size:
            mask = np.ones(k)
            mask[driven] = 0.0
            B = (B @ sp.diags(mask)).tocsc()
    dyn, alg = pencil.dynamic, pencil.algebraic
    c_r = c[dyn]
    b_r = B[dyn]
    z_a = np.zeros(alg.size)
    if alg.size:
        solve = pencil.solve_algebraic
        assert callable(solve)
        z_a = solve(c[alg])
        b_a = B[alg].tocsc()
        direct = np.asarray(b_a.T @ z_a).ravel()
        size = np.asarray(abs(b_a).T @ np.abs(z_a)).ravel()
        if np.any((np.abs(direct) > _DIRECT_SHARE * size) & (sk > 0)):
            raise NotSymmetricDefinite("a source reaches the output with no roll-off")
        c_r = c_r - pencil.coupling @ z_a
        reach = np.flatnonzero(np.diff(b_a.indptr) > 0)  # columns with a part on the algebraic unknowns
        if reach.size:
            carried = pencil.coupling @ solve(b_a[:, reach].toarray())
            correction = sp.csc_matrix(
                (np.asarray(carried).ravel(order="F"), _dense_pattern(pencil.size, reach)),
                shape=b_r.shape,
            )
            b_r = (b_r - correction).tocsc()
    # eigen-coordinates: scaled unknowns y = x_d / scale; (g + s c) with c = L Lᵀ;
    # u = Lᵀ y: (L⁻¹ g L⁻ᵀ + s) u = L⁻¹ (scale · b_r)
    rates, vectors, tolerance = _decomposed(pencil.standard)
    # V = L⁻ᵀ U maps eigen-coordinates back to the scaled unknowns: H_k = pᵀ (Λ + s)⁻¹ q_k
    if pencil.factor.ndim == 1:
        v = vectors / pencil.factor[:, None]
    else:
        v = la.solve_triangular(pencil.factor, vectors, lower=True, trans="T", check_finite=False)
    p = v.T @ (pencil.scale * c_r)
    cauchy = 1.0 / (rates[:, None] + rates[None, :])
    m = pencil.size
    scaled_b = sp.diags(pencil.scale) @ b_r  # sign: |H|² does not see it
    if k < m:  # q = Vᵀ b per column, then qᵀ M q: 2 m² K flops
        q = np.asarray((scaled_b.T @ v).T)
        weighted = (p[:, None] * p[None, :] * cauchy) @ q
        quad = np.einsum("ik,ik->k", q, weighted)
    else:  # the Gramian W = Y Cauchy Yᵀ (Y = V diag p) only where the sparse columns need it: 2 m³
        quad = _sparse_quadratic_forms(v * p[None, :], cauchy, sp.csc_matrix(scaled_b))
    for j in driven[sk[driven] > 0]:
        column = given[:, [j]].toarray().ravel()
        quad[j] = _driven_quadratic_form(pencil, c, column, u[:, j], z_a, v, p, rates, cauchy)
    variance = np.maximum(0.5 * sk * quad, 0.0)
    return SymmetricTotals(variance=variance, poles_Hz=rates / (2 * math.pi), tolerance=tolerance)


def _decomposed(standard: np.ndarray) -> tuple[np.ndarray, np.ndarray, float]:
    """(rates ascending, orthonormal eigenvectors, stated relative tolerance) of the symmetric
    positive definite ``standard``: divide and conquer (several times faster than the default MRRR
    on meshes' clustered rates), or one-sided Jacobi for a stiff one up to the Jacobi limit."""
    import scipy.linalg as la
    from scipy.linalg import lapack

    m = standard.shape[0]
    if m <= _JACOBI_LIMIT:
        rates = _checked_rates(la.eigh(standard, eigvals_only=True, check_finite=False))
        if rounding_tolerance(rates) > _STIFF_TOLERANCE:
            try:
                upper = la.cholesky(standard, lower=False, check_finite=False)  # standard = RᵀR
            except la.LinAlgError:
                upper = None
            if upper is not None:
                sva, _, right, work, _, info = lapack.dgejsv(upper, joba=1, jobu=3, jobv=0)
                if info == 0 and work[1] != 0:
                    values = (sva * (work[0] / work[1])) ** 2  # σ² of R: the eigenvalues of RᵀR
                    order = np.argsort(values)
                    diag = np.sqrt(np.diag(standard))
                    unit = upper / diag[None, :]  # Cholesky factor of the unit-diagonal H
                    norm = float(np.abs(standard / np.outer(diag, diag)).sum(axis=0).max())
                    rcond, status = lapack.dpocon(unit, norm)
                    if status == 0 and rcond > 0:
                        tolerance = min(1.0, max(1e-12, 64.0 * float(np.finfo(float).eps) / rcond))
                        return _checked_rates(values[order]), right[:, order], tolerance
    rates, vectors = la.eigh(standard, driver="evd", check_finite=False)
    rates = _checked_rates(rates)
    return rates, vectors, rounding_tolerance(rates)


def _driven_quadratic_form(
    pencil: SymmetricPencil,
    c: np.ndarray,
    b: np.ndarray,
    u: np.ndarray,
    z_a: np.ndarray,
    v: np.ndarray,
    p: np.ndarray,
    rates: np.ndarray,
    cauchy: np.ndarray,
) -> float:
    """aᵀ·cauchy·a (twice ∫0^∞|H|² df) of a column ``b`` that holds the pinned nodes at ``u`` (P,):
    the rest sees ``b − G_·s u`` and, times s, ``−C_·s u``, so
    H = d + sign·pᵀ(Λ + s)⁻¹(q0 + s q1) = d + sign·pᵀq1 + sign·Σ_i p_i (q0_i − λ_i q1_i)/(s + λ_i);
    the direct part must cancel (NotSymmetricDefinite otherwise: no roll-off)."""
    dyn, alg = pencil.dynamic, pencil.algebraic
    b0 = b - pencil.g_pinned @ u
    b1 = -(pencil.c_pinned @ u)
    direct = float(c[pencil.pinned] @ u)  # the output on a pinned node
    size = float(np.abs(c[pencil.pinned]) @ np.abs(u))
    b0_r = b0[dyn]
    if alg.size:
        solve = pencil.solve_algebraic
        assert callable(solve)
        direct += float(z_a @ b0[alg])
        size += float(np.abs(z_a) @ np.abs(b0[alg]))
        b0_r = b0_r - pencil.coupling @ solve(b0[alg])
    q0 = v.T @ (pencil.scale * b0_r)
    q1 = v.T @ (pencil.scale * b1[dyn])
    through = pencil.sign * float(p @ q1)
    size += float(np.abs(p) @ np.abs(q1))
    if abs(direct + through) > _DIRECT_SHARE * size:
        raise NotSymmetricDefinite("a source reaches the output with no roll-off")
    a = p * (q0 - rates * q1)
    return float(a @ cauchy @ a)


def _sparse_quadratic_forms(y: np.ndarray, cauchy: np.ndarray, b: sp.csc_matrix) -> np.ndarray:
    """(K,) b_kᵀ W b_k with W = Y·cauchy·Yᵀ, for sparse columns b_k: (W b_k)_i = z_i · t_k with
    z = Y·cauchy (one product) and t_k = Yᵀ b_k, needed only at the rows where b_k is non-zero."""
    z = y @ cauchy
    t = np.asarray(b.T @ y)  # (K, m)
    coo = b.tocoo()
    quad = np.zeros(b.shape[1])
    step = 4096
    for start in range(0, coo.nnz, step):
        rows, cols, data = (a[start : start + step] for a in (coo.row, coo.col, coo.data))
        np.add.at(quad, cols, data * np.einsum("ij,ij->i", z[rows], t[cols]))
    return quad


def _dense_pattern(rows: int, columns: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(row, column) indices of a dense block of ``rows`` rows in the given columns, column-major."""
    return np.tile(np.arange(rows), columns.size), np.repeat(columns, rows)

"""Every source's white-noise variance to infinite bandwidth for large circuits, from a low-rank
approximation of the observability Gramian.

The exact method (:mod:`netnoise.engine.total_variance`) gives
``var_k = (S_k/2)·b_kᵀ W b_k`` with ``W`` the observability Gramian of the descriptor system
``E = C``, ``A = −G``, output ``c``: dense QZ, O(n³).  Here ``W`` is approximated on a small
space: the output is one column, so one basis ``V`` (n × r, orthonormal) of the rational Krylov
space spanned by the adjoint solutions ``z(σ) = (G + σC)⁻ᵀ c`` at a few shifts σ serves every
source.  ``G``, ``C``, ``c`` and the K injection columns are projected onto ``V`` (one-sided,
Galerkin: the reduced transfer ``cᵣᵀ(Gᵣ + sCᵣ)⁻¹bᵣ`` equals the full one at every shift, for
every column at once) and the small problem is solved exactly:

* symmetric ``G`` and ``C`` whose projections are positive definite (RC networks): a symmetric
  eigen-solution ``Gᵣ u = λ Cᵣ u``, ``UᵀCᵣU = I``, gives ``H_k(s) = Σ_i (c̃_i b̃_ki)/(λ_i + s)``
  and ``var_k = (S_k/2)·Σ_ij c̃_i c̃_j b̃_ki b̃_kj / (λ_i + λ_j)``; the projection of such a
  network is itself a stable RC network, so it cannot fail;
* passive circuits with branch currents (inductors, voltage sources): the branch rows negated
  (``JG = [[Gn, E], [−Eᵀ, 0]]``, ``JC = [[Cn, 0], [0, L]]``), then the same congruence
  projection, which keeps ``Cᵣ ⪰ 0`` and ``Gᵣ + Gᵣᵀ ⪰ 0`` (PRIMA): stable by construction;
* otherwise (controlled sources, amplifiers): a Petrov–Galerkin projection (test space
  ``orth((G + σ0C)ᵀV)``, never singular at σ0).
  Both go through :func:`~netnoise.engine.total_variance.infinite_band_totals` on the projected
  pencil, which handles its algebraic part as the exact path does; when that finds a pole on or
  right of the axis, the modal sum without the modes the output does not see; a reduced model
  with an unstable mode that counts is not accepted.

Shifts: σ = 0 (the DC moment) and σ at the Gershgorin bound of the highest pole first; then, one
factorisation at a time, the shift where the rational function ``∏_j |s − σ_j| / |s + θ_j|``
(θ_j the reduced model's poles mirrored into the right half-plane) is largest over the spectral
range — where the current space explains the circuit worst (Druskin and Simoncini, Systems &
Control Letters 60 (2011) 546: adaptive rational Krylov subspaces).  A complex shift adds the
real and imaginary parts of its solution, so the basis stays real.  Each sparse LU can serve
``_MOMENTS`` solves (``z``, then ``(G + σC)⁻ᵀ Cᵀ z``: Hermite interpolation at σ); on RC meshes a
second moment did not save factorisations, so one is used (a complex shift: two vectors).

Stop: when every source's variance changes by at most ``tol/10`` of the total between two
enlargements of the basis, twice in a row; the result is stated to ``tol`` relative to the
total (each source's share ``var_k / Σ var`` to ``tol`` absolute).  A column whose white input
reaches the output with no roll-off is found on the full circuit (two solves far above the
highest pole, the exact path's test) and gets ``inf``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from netnoise.errors import CircuitError

__all__ = [
    "LowRankTotals",
    "LowRankUnsuitable",
    "ReducedModel",
    "ReducedBand",
    "lowrank_totals",
    "lowrank_model",
    "reduced_band_totals",
    "model_error",
]

_MOMENTS = 2  # solves per factorisation: z(σ) and the next moment (G + σC)⁻ᵀ Cᵀ z(σ)
_ORTHO_DROP = 1e-10  # a new vector keeping less than this share of its norm after orthogonalisation adds nothing
_CANDIDATES = 240  # real candidate shifts, log-spaced over the spectral range
_CONFIRM_FACTOR = 1e4  # the no-roll-off test: |H| at 1e4 and 1e6 x the highest pole bound (as the exact path)
_POWER_BLOCK = 2048  # columns per block of ReducedModel.power: its (block, 2F) product stays in cache
_STABLE_ROUNDS = 2  # enlargements in a row whose change is within tol/10


@dataclass(frozen=True, eq=False)
class LowRankTotals:
    """``variance`` (K,) V² (or the column's unit squared): ∫0^∞ |H_k(f)|² S_k df per column, the
    convention of :func:`~netnoise.engine.total_variance.infinite_band_totals`, ``inf`` where the
    white input reaches the output without roll-off; ``tolerance``: the stated accuracy of each
    finite variance relative to the total of the finite ones; ``rank``: the basis size;
    ``factorizations``: sparse LU factorisations used; ``poles_Hz``: the reduced model's pole
    magnitudes, Hz."""

    variance: np.ndarray
    tolerance: float
    rank: int
    factorizations: int
    poles_Hz: np.ndarray


@dataclass(frozen=True, eq=False)
class ReducedModel:
    """The projected circuit: ``g``, ``c`` (r × r), ``output`` (r,), ``columns`` (r × K); its
    transfer ``outputᵀ(g + j2πf·c)⁻¹ columns_k`` stands for the full one of every column."""

    g: np.ndarray
    c: np.ndarray
    output: np.ndarray
    columns: np.ndarray

    def power(self, frequency_Hz) -> np.ndarray:
        """(K, F) |H_k(f)|² of the reduced model (multiply by the densities for V²/Hz)."""
        f = np.atleast_1d(np.asarray(frequency_Hz, dtype=float))
        # every frequency's small solve at once, then one real product for the real and imaginary parts
        a = (self.g[None, :, :] + 2j * math.pi * f[:, None, None] * self.c[None, :, :]).transpose(0, 2, 1)
        rhs = np.broadcast_to(self.output.astype(complex)[None, :, None], (f.size, self.output.size, 1))
        y = np.linalg.solve(a, rhs)[:, :, 0]  # (F, r)
        parts = np.concatenate([y.real, y.imag]).T  # (r, 2F): real and imaginary parts in one product
        columns = self.columns
        out = np.empty((columns.shape[1], f.size))
        # a block of columns at a time, written straight into the (K, F) result: no (2F, K)
        # product and no transposed copy of it (200,000 columns x 330 frequencies: 2.1 s -> 0.4 s)
        for start in range(0, columns.shape[1], _POWER_BLOCK):
            h = columns[:, start : start + _POWER_BLOCK].T @ parts  # (block, 2F)
            block = out[start : start + _POWER_BLOCK]
            np.square(h[:, : f.size], out=block)
            block += np.square(h[:, f.size :])
        return out


class LowRankUnsuitable(Exception):
    """The circuit falls outside the low-rank method (the message says why); the caller falls back
    on another method."""


@dataclass
class _Reduced:
    variance: np.ndarray | None  # None: the reduced model is not usable (unstable), only its poles guide the shifts
    poles: np.ndarray  # complex poles of the reduced model, rad/s (mirrored into the left half-plane if unstable)


class _Basis:
    """An orthonormal basis V, grown one vector at a time, with the projections Vᵀ G V,
    Vᵀ C V, Vᵀ c and Vᵀ B kept up to date (each new vector costs two sparse products with G
    and with C and one with B; nothing of size n × r is formed but V)."""

    def __init__(self, G, C, c: np.ndarray, B, capacity: int):
        self.G, self.C, self.c, self.B = G, C, c, B
        self.Gt, self.Ct = G.T.tocsc(), C.T.tocsc()
        self.capacity = capacity
        self.V = np.empty((c.size, min(capacity, 16)), order="F")  # columns contiguous
        self.gr = np.empty((capacity, capacity))
        self.cr = np.empty((capacity, capacity))
        self.cv = np.empty(capacity)
        self.BtV: list[np.ndarray] = []
        self.r = 0

    def add(self, w: np.ndarray) -> bool:
        """Orthogonalise ``w`` (classical Gram–Schmidt, twice) and append it; False if it adds
        nothing new or the basis is full."""
        r = self.r
        if r >= self.capacity:
            return False
        w = np.asarray(w, dtype=float).copy()
        size = float(np.linalg.norm(w))
        if not (size > 0 and math.isfinite(size)):
            return False
        w /= size
        V = self.V[:, :r]
        for _ in range(2):
            w -= V @ (V.T @ w)
        kept = float(np.linalg.norm(w))
        if kept < _ORTHO_DROP:
            return False
        w /= kept
        if r == self.V.shape[1]:  # grow by doubling
            grown = np.empty((self.V.shape[0], min(self.capacity, 2 * r)), order="F")
            grown[:, :r] = V
            self.V = grown
        self.V[:, r] = w
        V = self.V[:, : r + 1]
        for small, M, Mt in ((self.gr, self.G, self.Gt), (self.cr, self.C, self.Ct)):
            small[: r + 1, r] = V.T @ (M @ w)  # column r: v_iᵀ M w
            small[r, :r] = (Mt @ w) @ V[:, :r]  # row r: wᵀ M v_i
        self.cv[r] = w @ self.c
        self.BtV.append(np.asarray(self.B.T @ w).ravel())
        self.r = r + 1
        return True

    def projected(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """Galerkin: Vᵀ G V, Vᵀ C V, Vᵀ c, Vᵀ B."""
        r = self.r
        return self.gr[:r, :r].copy(), self.cr[:r, :r].copy(), self.cv[:r].copy(), np.stack(self.BtV)

    def petrov(self, sigma0: float) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """Petrov–Galerkin for a general pencil: the adjoint equation tested on
        W = orth((G + σ0 C)ᵀ V), i.e. the reduced system Vᵀ G W, Vᵀ C W, Wᵀ c, Vᵀ B.  Its
        matrix at σ0 is (G + σ0C)(G + σ0C)ᵀ projected, never singular, where a Galerkin
        projection of a saddle-point pencil (branch currents) can be singular for every s;
        the reduced transfer still equals the full one at every shift."""
        r = self.r
        V = self.V[:, :r]
        W, _ = np.linalg.qr((self.Gt + sigma0 * self.Ct) @ V)
        return V.T @ (self.G @ W), V.T @ (self.C @ W), W.T @ self.c, np.stack(self.BtV)


def _equilibrated(G, C, c, B):
    """D G D, D C D, D c, D B with D diagonal (powers of two) so that every row and column of
    |G| + s0|C| (s0 = ‖G‖/‖C‖) has its largest entry near 1: the transfers are unchanged, and
    node voltages (conductances ~1e-3 S) and branch currents (entries ±1) weigh alike in the
    basis's inner product.  Symmetric scaling keeps a symmetric pencil symmetric."""
    import scipy.sparse as sp

    norm_g = float(abs(G).sum(axis=0).max()) if G.nnz else 0.0
    norm_c = float(abs(C).sum(axis=0).max())
    s0 = norm_g / norm_c if norm_g > 0 and norm_c > 0 else 1.0
    m = sp.csr_matrix(abs(G) + s0 * abs(C))
    d = np.ones(G.shape[0])
    for _ in range(6):  # symmetric Ruiz passes: d_i /= sqrt(max_j |m_ij| d_i d_j)
        scaled = sp.diags(d) @ m @ sp.diags(d)
        top = np.asarray(abs(scaled).max(axis=1).todense()).ravel()
        d = d / np.sqrt(np.where(top > 0, top, 1.0))
    _, exponent = np.frexp(d)
    d = np.ldexp(1.0, exponent - 1)  # a power of two: the scaling is exact
    D = sp.diags(d)
    scaled_b = (D @ B).tocsc() if sp.issparse(B) else d[:, None] * B
    return (D @ G @ D).tocsc(), (D @ C @ D).tocsc(), d * c, scaled_b


def _passive_form(G, C):
    """Row signs J (±1) that put a passive MNA pencil in the form JG = [[Gn, E], [−Eᵀ, 0]],
    JC = [[Cn, 0], [0, L]] (branch rows of inductors and voltage sources negated), when both
    symmetric parts are positive semidefinite by diagonal dominance; None otherwise (controlled
    sources, amplifiers, mutual inductance).  A congruence projection of that form keeps
    Cᵣ ⪰ 0 and Gᵣ + Gᵣᵀ ⪰ 0: the reduced model cannot be unstable (Odabasioglu, Celik and
    Pileggi, IEEE TCAD 17 (1998) 645, PRIMA)."""
    import scipy.sparse as sp

    c_diag, g_diag = C.diagonal(), G.diagonal()
    c_rows = np.asarray(abs(C).sum(axis=1)).ravel()
    flip = (c_diag < 0) | ((c_rows == 0) & (g_diag == 0))
    J = sp.diags(np.where(flip, -1.0, 1.0))
    jg, jc = (J @ G).tocsc(), (J @ C).tocsc()
    for m, need_symmetric in ((jg, False), (jc, True)):
        sym = 0.5 * (m + m.T)
        if need_symmetric and not _symmetric(m):
            return None
        diag = sym.diagonal()
        off = np.asarray(abs(sym).sum(axis=1)).ravel() - np.abs(diag)
        top = float(abs(sym).max()) if sym.nnz else 0.0
        if np.any(diag < off - 1e-12 * max(top, 1e-300)):
            return None
    return J


def _symmetric(M) -> bool:
    d = abs(M - M.T)
    top = float(abs(M).max()) if M.nnz else 0.0
    return d.nnz == 0 or float(d.max()) <= 1e-14 * top


_SUPERLU = dict(diag_pivot_thresh=0.1, options=dict(SymmetricMode=True))  # options of every splu here


class _Shifted:
    """Sparse LUs of G + σC for any shift σ, all under one fill-reducing ordering: minimum degree
    on Aᵀ + A from the first factorisation; every later shift's matrix is permuted into that order
    and factored with ``NATURAL``, which spares SuperLU the ordering each time (on a 100,000-node
    mesh 0.35 s -> 0.30 s a factorisation)."""

    def __init__(self, G, C):
        self.G, self.C = G, C
        self.order: np.ndarray | None = None  # q: row and column i of the permuted matrix are q[i]

    def factor(self, sigma: complex):
        """The LU of G + σC (real when σ is real), with ``solve(rhs, trans)``; None when it is
        singular."""
        import scipy.sparse.linalg as spla

        a = (self.G + sigma * self.C) if sigma.imag else (self.G + sigma.real * self.C)
        if self.order is None:
            try:
                first = spla.splu(a.tocsc(), permc_spec="MMD_AT_PLUS_A", **_SUPERLU)
            except RuntimeError:
                return None
            self.order = np.argsort(first.perm_c)
            return first  # the shifts come in a fixed order: this factor is as good as a refactored one
        q = self.order
        try:
            lu = spla.splu(a.tocsr()[q][:, q].tocsc(), permc_spec="NATURAL", **_SUPERLU)
        except RuntimeError:
            return None
        return _PermutedLU(lu, q)


class _PermutedLU:
    """A factor of the permuted matrix, solving for the original unknowns."""

    def __init__(self, lu, order: np.ndarray):
        self.lu, self.order = lu, order

    def solve(self, rhs: np.ndarray, trans: str = "N") -> np.ndarray:
        """(G + σC)⁻¹ rhs, or its transpose's with ``trans="T"``."""
        z = self.lu.solve(np.ascontiguousarray(rhs[self.order]), trans=trans)
        out = np.empty_like(z)
        out[self.order] = z
        return out


def _reduce_symmetric(gr, cr, cv, br, density) -> _Reduced | None:
    """The reduced variances by the symmetric eigen-solution; None when the projected pencil is
    not positive definite."""
    import scipy.linalg as la

    try:
        lam, U = la.eigh(0.5 * (gr + gr.T), 0.5 * (cr + cr.T))
    except (la.LinAlgError, ValueError):
        return None
    if not (lam.size and np.all(lam > 0) and np.all(np.isfinite(lam))):
        return None
    ct = U.T @ cv
    bt = U.T @ br  # (r, K)
    w = np.outer(ct, ct) / (lam[:, None] + lam[None, :])
    variance = 0.5 * density * np.einsum("ik,ik->k", bt, w @ bt)
    return _Reduced(np.maximum(variance, 0.0), -lam.astype(complex))


def _reduce_general(gr, cr, cv, br, density, tol: float) -> _Reduced | None:
    """The reduced variances by the exact dense path; when that refuses a pole on or right of
    the imaginary axis, by the modal sum with the modes the output does not see left out (a
    one-sided projection can add such a mode, cancelled in every transfer); None when a mode
    the output sees is unstable or the reduced model cannot be solved."""
    import scipy.linalg as la

    from netnoise.engine.total_variance import UnstableCircuit, finite_scaled_eigenvalues, infinite_band_totals

    try:
        exact = infinite_band_totals(gr, cr, cv, br, density)
        lam, s0 = finite_scaled_eigenvalues(gr, cr)
        return _Reduced(exact.variance, lam * s0)
    except UnstableCircuit:
        pass
    except (CircuitError, la.LinAlgError, ValueError):
        return None
    modal = _reduce_modal(gr, cr, cv, br, density, tol)
    if modal is None:
        try:  # its poles, mirrored into the left half-plane, still tell where the basis is poor
            lam, s0 = finite_scaled_eigenvalues(gr, cr)
        except (la.LinAlgError, ValueError, CircuitError):
            return None
        lam = lam * s0
        return _Reduced(None, -np.abs(lam.real) + 1j * lam.imag)
    return modal


def _reduce_modal(gr, cr, cv, br, density, tol: float) -> _Reduced | None:
    """var_k = (S_k/2)·Σ_ij a_ik ā_jk / (−λ_i − λ̄_j) over the finite modes λ_i of
    (−Gᵣ, Cᵣ) with residues a_ik = (cᵣᵀx_i)(y_iᴴbᵣ_k)/(y_iᴴCᵣx_i); a mode whose output weight
    is below ``tol``·1e-3 of the largest is left out; None if one that counts is unstable or
    the pencil is not diagonalisable to working accuracy."""
    import scipy.linalg as la

    try:
        w, vl, vr = la.eig(-gr, cr, left=True, right=True, homogeneous_eigvals=True)
    except (la.LinAlgError, ValueError):
        return None
    alpha, beta = w
    scale = float(np.abs(gr).max() / max(np.abs(cr).max(), 1e-300))
    finite = np.abs(beta) * 1e13 * scale > np.abs(alpha)
    lam = alpha[finite] / beta[finite]
    x, y = vr[:, finite], vl[:, finite]
    norm = np.einsum("ij,ik,kj->j", y.conj(), cr, x)  # y_iᴴ Cᵣ x_i
    if np.any(np.abs(norm) < 1e-10 * np.linalg.norm(y, axis=0) * np.linalg.norm(cr, 2) * np.linalg.norm(x, axis=0)):
        return None  # defective or ill-conditioned: the modal sum is not reliable
    seen = cv @ x / norm  # output weight of each mode, per unit of y_iᴴ b
    weight = np.abs(seen) * np.linalg.norm(y.conj().T @ br, axis=1)
    keep = weight > 1e-3 * tol * weight.max(initial=0.0)
    stable = lam.real < -1e-9 * np.abs(lam)
    if np.any(keep & ~stable):
        return None
    lam, seen, y = lam[keep], seen[keep], y[:, keep]
    a = seen[:, None] * (y.conj().T @ br)  # (m, K) residues
    m = 1.0 / (-lam[:, None] - lam.conj()[None, :])
    variance = 0.5 * density * np.real(np.einsum("ik,ij,jk->k", a, m, a.conj()))
    return _Reduced(np.maximum(variance, 0.0), lam)


def _next_shift(shifts: list[complex], poles: np.ndarray, low: float, high: float, real_only: bool) -> complex:
    """The candidate shift where ∏|s − σ_j| / ∏|s + θ_j| is largest (θ_j = −pole_j): real
    candidates log-spaced over [low, high] rad/s and, unless ``real_only``, the mirrored complex
    poles."""
    candidates = np.logspace(math.log10(low), math.log10(high), _CANDIDATES).astype(complex)
    mirrored = -poles[np.abs(poles.imag) > 1e-3 * np.abs(poles)] if not real_only else np.zeros(0, complex)
    mirrored = mirrored[mirrored.imag > 0]
    candidates = np.concatenate([candidates, mirrored])
    sigma = np.array(shifts, dtype=complex)
    sigma = np.concatenate([sigma, np.conj(sigma[sigma.imag != 0])])
    with np.errstate(divide="ignore"):
        score = np.log(np.abs(candidates[:, None] - sigma[None, :])).sum(axis=1) - np.log(
            np.abs(candidates[:, None] + (-poles)[None, :])
        ).sum(axis=1)
    return complex(candidates[int(np.argmax(score))])


def lowrank_totals(G, C, selector, columns, density, tol: float = 1e-8, max_rank: int | None = None) -> LowRankTotals:
    """∫0^∞ |cᵀ(G + j2πfC)⁻¹ b_k|² S_k df for every column b_k of ``columns`` (n × K, sparse or
    dense), ``density`` (K,) one-sided white densities (see :func:`lowrank_model`)."""
    return lowrank_model(G, C, selector, columns, density, tol, max_rank)[0]


def lowrank_model(
    G, C, selector, columns, density, tol: float = 1e-8, max_rank: int | None = None
) -> tuple[LowRankTotals, ReducedModel]:
    """The totals of :func:`lowrank_totals` and the reduced model they came from.  ∫0^∞ |cᵀ(G + j2πfC)⁻¹ b_k|² S_k df for every column b_k of ``columns`` (n × K, sparse or
    dense), ``density`` (K,) one-sided white densities, from a rational Krylov basis of the
    adjoint solutions (module docstring).  ``tol``: the accuracy of each variance relative to the
    total; ``max_rank``: the largest basis (default min(n, 400)).  LowRankUnsuitable when the
    circuit falls outside the method (no DC solution at σ = 0, an unstable reduced model, no
    convergence within ``max_rank``)."""
    import scipy.sparse as sp

    if not 0 < tol < 1:
        raise ValueError(f"tol must lie between 0 and 1, not {tol!r}")
    G = sp.csc_matrix(G, dtype=float)
    C = sp.csc_matrix(C, dtype=float)
    n = G.shape[0]
    c = np.asarray(selector, dtype=float).ravel()
    B = sp.csc_matrix(columns, dtype=float) if sp.issparse(columns) else np.asarray(columns, dtype=float)
    if B.ndim == 1:
        B = B[:, None]
    density = np.asarray(density, dtype=float).ravel()
    if n == 0 or C.nnz == 0:
        raise LowRankUnsuitable("the circuit has no capacitance or inductance: no pole to reduce to")
    G, C, c, B = _equilibrated(G, C, c, B)
    J = _passive_form(G, C)
    passive = J is not None
    if J is not None and np.any(J.diagonal() < 0):  # the same transfers: (JG + sJC) x = J b
        G, C = (J @ G).tocsc(), (J @ C).tocsc()
        B = (J @ B).tocsc() if sp.issparse(B) else J.diagonal()[:, None] * B
    capacity = min(n, max_rank if max_rank is not None else 400)
    symmetric = _symmetric(G) and _symmetric(C)

    c_diag = np.abs(C.diagonal())
    dynamic = c_diag > 0
    if not dynamic.any():
        raise LowRankUnsuitable("no unknown has its own capacitance, so the pole range cannot be bounded")
    g_rows = np.asarray(abs(G).sum(axis=1)).ravel()
    top = float(np.max(g_rows[dynamic] / c_diag[dynamic]))  # rad/s, Gershgorin bound of the highest pole

    basis = _Basis(G, C, c, B, capacity)
    shifted = _Shifted(G, C)
    factorizations = 0

    def enlarge(sigma: complex) -> bool | None:
        """Factor G + σC and add its solutions: None when it is singular, else whether the basis grew."""
        nonlocal factorizations
        lu = shifted.factor(sigma)
        factorizations += 1
        if lu is None:
            return None
        rhs = c.astype(complex) if sigma.imag else c
        grew = False
        for _ in range(_MOMENTS):
            z = lu.solve(rhs, trans="T")
            parts = (z.real, z.imag) if sigma.imag else (z,)
            for part in parts:
                grew |= basis.add(part)
            rhs = C.T @ z
        return grew

    # no roll-off, on the full circuit: |H| far above the highest pole stays flat (exact path's test)
    high_gain = []
    b_norm = np.sqrt(np.asarray(B.multiply(B).sum(axis=0)).ravel()) if sp.issparse(B) else np.linalg.norm(B, axis=0)
    for w in (_CONFIRM_FACTOR * top, 100 * _CONFIRM_FACTOR * top):
        lu = shifted.factor(complex(w))
        factorizations += 1
        if lu is None:
            raise LowRankUnsuitable(f"G + sC is singular at s = {w:.3g} /s, far above the poles")
        z = lu.solve(c, trans="T")
        # below 1e-9 of ‖z‖·‖b_k‖ a gain is rounding, not a path (the exact path's threshold)
        gain = np.abs(np.asarray(B.T @ z).ravel())
        high_gain.append(np.where(gain > 1e-9 * np.linalg.norm(z) * b_norm, gain, 0.0))
    unbounded = (high_gain[0] > 0) & (high_gain[1] >= 0.1 * high_gain[0]) & (density > 0)

    if enlarge(0j) is None:
        raise LowRankUnsuitable("G is singular (no DC solution), so the basis cannot start at 0 Hz")
    shifts: list[complex] = [0j]
    enlarge(complex(top))
    shifts.append(complex(top))

    previous: np.ndarray | None = None
    steady = 0
    reduced: _Reduced | None = None
    failed: set[complex] = set()
    while True:
        projection = basis.projected()
        reduced = _reduce_symmetric(*projection, density) if symmetric else None
        if reduced is None:
            positive = [x.real for x in shifts if x.real > 0]
            sigma0 = math.exp(sum(math.log(x) for x in positive) / len(positive)) if positive else top
            if not passive:
                projection = basis.petrov(sigma0)
            reduced = _reduce_general(*projection, density, tol)
        if reduced is not None and reduced.variance is not None:
            finite = ~unbounded
            variance = np.where(finite, reduced.variance, np.inf)
            ok = bool(np.all(np.isfinite(variance[finite])))
            total = float(variance[finite].sum())
            if ok and previous is not None and total > 0:
                change = float(np.max(np.abs(variance[finite] - previous[finite]), initial=0.0))
                steady = steady + 1 if change <= 0.1 * tol * total else 0
            if ok and (steady >= _STABLE_ROUNDS or basis.r == n):  # r = n: the projection is exact
                poles = np.sort(np.abs(reduced.poles)) / (2 * math.pi)
                totals = LowRankTotals(variance, tol, basis.r, factorizations, poles)
                return totals, ReducedModel(*projection)
            previous = variance if ok else None
            if not ok:
                steady = 0
        else:
            steady = 0
            previous = None
        if basis.r >= capacity:
            break
        poles = reduced.poles if reduced is not None else np.zeros(0, complex)
        poles = poles[poles.real < 0] if poles.size else poles
        low = float(np.min(np.abs(poles))) / 10 if poles.size else top * 1e-9
        high = max(top, float(np.max(np.abs(poles), initial=0.0))) * 10
        sigma = _next_shift(shifts + list(failed), poles, max(low, 1e-30), high, symmetric)
        shifts.append(sigma)
        if not enlarge(sigma):  # singular there, or nothing new
            failed.add(sigma)
            if len(failed) > 8:
                break
    why = (
        "its reduced model stayed unstable"
        if reduced is None or reduced.variance is None
        else f"every source's share did not settle to {tol:.0e} of the total"
    )
    raise LowRankUnsuitable(f"{why} within a basis of {basis.r} vectors ({factorizations} factorisations)")


@dataclass(frozen=True, eq=False)
class ReducedBand:
    """``values`` (K,) ∫ S_k |H_k|² df over the band from the reduced model; ``rel_error`` the
    band integrator's estimate; ``model_error`` the largest difference between the reduced and
    the full density, any source, relative to the full total density, at ``checked_Hz``;
    ``totals`` the infinite-band result of the same model."""

    values: np.ndarray
    rel_error: float
    model_error: float
    checked_Hz: np.ndarray
    totals: LowRankTotals


def model_error(reduced: np.ndarray, full: np.ndarray, density: np.ndarray) -> float:
    """The largest difference between the reduced and the full circuit's densities, any column,
    relative to the full total density at its frequency: ``reduced``, ``full`` (K, F) power
    transfers |H_k|², ``density`` (K,) one-sided densities, or (K, F) at each frequency."""
    weighted = np.asarray(density, dtype=float)
    weighted = weighted.ravel()[:, None] if weighted.ndim < 2 else weighted  # (K,) or per frequency (K, F)
    full, reduced = full * weighted, reduced * weighted
    total = full.sum(axis=0)
    seen = total > 0
    if not seen.any():
        return 0.0
    return float(np.max(np.max(np.abs(reduced - full), axis=0)[seen] / total[seen]))


def reduced_band_totals(
    G,
    C,
    selector,
    columns,
    density,
    low: float,
    high: float,
    *,
    points_per_decade: float = 20.0,
    tol: float = 1e-8,
    checks: int = 5,
    max_error: float = 1e-6,
    model: tuple[LowRankTotals, ReducedModel] | None = None,
) -> ReducedBand:
    """Every source's white noise over ``[low, high]`` Hz from the reduced model of
    :func:`lowrank_model` (a small dense solve per frequency in place of a sparse LU), with the
    adaptive band integrator; the model is then checked against full sparse solves at ``checks``
    log-spaced frequencies of the band (and its edges): LowRankUnsuitable when it differs there
    by more than ``max_error`` of the total density.  ``model``: what :func:`lowrank_model` returned
    for the same circuit, to reuse it (the infinite-band totals and a band share one model)."""
    import scipy.sparse as sp
    import scipy.sparse.linalg as spla

    from netnoise.engine.integrate import integrate_band

    if not (0.0 <= low < high < math.inf):
        raise ValueError(f"band must satisfy 0 <= low < high < inf, got {low}, {high}")
    totals, reduced_model = model if model is not None else lowrank_model(G, C, selector, columns, density, tol)
    S = np.asarray(density, dtype=float).ravel()
    band = integrate_band(
        lambda f: reduced_model.power(f) * S[:, None],
        low,
        high,
        points_per_decade=points_per_decade,
        groups=[slice(0, S.size)],
        linear_below=(min(high * 1e-3, max(low, 1e-3 * high)) if low == 0 else None),
    )
    first = max(low, high * 1e-9)
    checked = np.unique(np.concatenate([[low, high], np.geomspace(first, high, checks)]))
    G, C = sp.csc_matrix(G, dtype=float), sp.csc_matrix(C, dtype=float)
    B = sp.csc_matrix(columns, dtype=float) if sp.issparse(columns) else np.asarray(columns, dtype=float)
    c = np.asarray(selector, dtype=float).ravel()
    full = np.empty((S.size, checked.size))
    for i, f in enumerate(checked):
        lu = spla.splu((G + 2j * math.pi * f * C).tocsc(), permc_spec="MMD_AT_PLUS_A")
        z = lu.solve(c.astype(complex), trans="T")
        h = np.asarray(B.T @ z).ravel()
        full[:, i] = h.real**2 + h.imag**2
    error = model_error(reduced_model.power(checked), full, S)
    if error > max_error:
        raise LowRankUnsuitable(
            f"the reduced model's densities differ from the full circuit's by {error:.1e} of the total "
            f"(more than {max_error:.0e}) at a checked frequency"
        )
    return ReducedBand(band.values, band.rel_error, error, checked, totals)

"""Noise to infinite bandwidth for circuits too large for the exact method.

Up to :data:`~netnoise.total_variance.EXACT_LIMIT` unknowns the total to
infinite bandwidth is exact (dense QZ and a Lyapunov solve, O(n³)).  Beyond
that this module is used, and never forms a dense matrix:

1. **Pole range, cheaply.**  The lowest pole from the largest eigenvalue of
   ``G⁻¹C`` (ARPACK on one sparse real LU of ``G``); the highest from a
   Gershgorin-type bound of ``C⁻¹G`` over the nodes with capacitance,
   ``max_i Σ_j |G_ij| / C_ii``.
2. **Quadrature** of every source's white density from 0 Hz to
   ``f_top = 100 ×`` the highest pole (rounded up to a decade) with the
   adaptive band integrator (linear in f from 0 to a hundredth of the lowest
   pole, logarithmic above).
3. **Analytic tail.**  Above the highest pole each transfer is a power law;
   the local log-log slope ``m_k`` of each row at ``f_top`` gives the tail
   ``S_k(f_top)·f_top / (−m_k − 1)``, added to the quadrature.  A row that
   does not fall faster than 1/f (``m_k > −1.5``) at ``f_top`` is tried a
   decade higher, up to three times; if it still does not, its white noise
   reaches the output without roll-off and the total is unbounded.

The result carries the largest tail share and the integration error, for the
note that tells the user the total is not exact.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from netnoise.engine.integrate import integrate_band

__all__ = ["pole_range_Hz", "WidebandTotals", "wideband_totals"]

TOP_FACTOR = 100.0  # f_top over the highest-pole estimate
MAX_EXTENSIONS = 3  # decades tried above f_top before a row is declared unbounded
_SLOPE_PROBE = 1.05  # frequency ratio of the two samples that give the tail slope


def pole_range_Hz(G, C) -> tuple[float, float] | None:
    """(lowest, highest) pole magnitude estimates in Hz of ``det(G + sC) = 0``
    for sparse G, C; None when they cannot be estimated (no capacitance, or
    G singular)."""
    import scipy.sparse as sp
    import scipy.sparse.linalg as spla

    G = sp.csc_matrix(G)
    C = sp.csc_matrix(C)
    n = G.shape[0]
    if n == 0 or C.nnz == 0:
        return None
    c_diag = np.abs(C.diagonal())
    g_rows = np.asarray(abs(G).sum(axis=1)).ravel()
    dynamic = c_diag > 0
    if not dynamic.any():
        return None
    high = float(np.max(g_rows[dynamic] / c_diag[dynamic])) / (2 * math.pi)
    try:
        lu = spla.splu(G)
    except RuntimeError:
        return None
    op = spla.LinearOperator((n, n), matvec=lambda x: lu.solve(np.asarray(C @ x, dtype=float)), dtype=float)
    try:
        mu = spla.eigs(op, k=1, which="LM", tol=1e-3, maxiter=max(300, n // 10), return_eigenvectors=False)
        low = 1.0 / (2 * math.pi * float(np.abs(mu).max()))
    except (spla.ArpackNoConvergence, spla.ArpackError) as err:  # fall back on the partial result
        values = getattr(err, "eigenvalues", np.zeros(0))
        low = 1.0 / (2 * math.pi * float(np.abs(values).max())) if np.size(values) else high * 1e-9
    if not (math.isfinite(low) and low > 0):
        low = high * 1e-9
    return min(low, high), high


@dataclass(frozen=True, eq=False)
class WidebandTotals:
    """``values`` (R,) integrals from 0 Hz to infinity; ``top_Hz`` where the
    quadrature stopped; ``tail_share`` the largest share of the analytic tail
    in a group total; ``rel_error`` the quadrature's estimated error;
    ``unbounded`` (R,) rows that do not roll off."""

    values: np.ndarray
    top_Hz: float
    tail_share: float
    rel_error: float
    unbounded: np.ndarray


def _decade_ceil(x: float) -> float:
    return 10.0 ** math.ceil(math.log10(x))


def _decade_floor(x: float) -> float:
    return 10.0 ** math.floor(math.log10(x))


def wideband_totals(
    evaluate: Callable[[np.ndarray], np.ndarray],
    groups: Sequence[slice],
    low_pole_Hz: float,
    high_pole_Hz: float,
    *,
    points_per_decade: float = 20.0,
) -> WidebandTotals:
    """∫0^∞ of every row of ``evaluate(f)`` (R, F), by quadrature up to
    ``f_top`` and an analytic power-law tail above it."""
    top = _decade_ceil(high_pole_Hz * TOP_FACTOR)
    start = min(_decade_floor(low_pole_Hz / 100.0), top * 1e-3)
    band = integrate_band(evaluate, 0.0, top, points_per_decade=points_per_decade, groups=groups, linear_below=start)
    values = band.values.copy()
    tail = np.zeros_like(values)
    pending = np.ones(values.size, dtype=bool)
    edge = top
    for _ in range(MAX_EXTENSIONS + 1):
        pair = evaluate(np.array([edge, edge * _SLOPE_PROBE]))
        s0, s1 = pair[:, 0], pair[:, 1]
        with np.errstate(divide="ignore", invalid="ignore"):
            slope = np.where((s0 > 0) & (s1 > 0), np.log(s1 / s0) / math.log(_SLOPE_PROBE), -np.inf)
        ok = pending & (slope <= -1.5)
        tail[ok] = np.where(np.isfinite(slope[ok]), s0[ok] * edge / (-slope[ok] - 1.0), 0.0)
        pending &= ~ok
        if not pending.any():
            break
        nxt = edge * 10.0  # integrate the rows still rising or flat over one more decade
        more = integrate_band(evaluate, edge, nxt, points_per_decade=points_per_decade, groups=groups)
        values[pending] += more.values[pending]
        edge = nxt
    values += tail
    tail_share = 0.0
    for rows in groups:
        total = float(np.sum(values[rows]))
        if total > 0:
            tail_share = max(tail_share, float(np.sum(tail[rows])) / total)
    return WidebandTotals(values=values, top_Hz=top, tail_share=tail_share, rel_error=band.rel_error, unbounded=pending)

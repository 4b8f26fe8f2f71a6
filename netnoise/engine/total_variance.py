"""Exact noise power to infinite bandwidth, from the circuit's state space.

The MNA equations ``(G + sC) x = B w`` are the descriptor system
``E x' = A x + B w`` with ``E = C``, ``A = -G``.  For white inputs of
one-sided density ``S_k`` (two-sided intensity ``S_k / 2``) the output
``y = cᵀx`` has finite variance only if no source reaches the output
without roll-off.  Then

    var_k = (S_k / 2) · b_kᵀ W b_k,    Aᵀ W + W A + c cᵀ = 0

on the finite (dynamic) part of the pencil, with W the observability
Gramian: one Lyapunov solve gives every source's share.

Steps: scale (time by s0 = ‖G‖/‖C‖, rows and columns to unit size); QZ with
the finite eigenvalues ordered first (``scipy.linalg.ordqz``, a callable
sort: the built-in ones place infinite eigenvalues in neither half); a
generalized Sylvester equation (LAPACK ``dtgsyl``) decouples the finite and
infinite blocks; the infinite block must contribute nothing (otherwise the
variance is infinite); a Lyapunov solve (``solve_continuous_lyapunov``) on
the finite block.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from netnoise.errors import CircuitError

__all__ = [
    "InfiniteBandTotals",
    "infinite_band_totals",
    "EXACT_LIMIT",
    "finite_poles_Hz",
    "finite_scaled_eigenvalues",
    "unstable_pole",
    "UnstableCircuit",
    "rounding_tolerance",
    "QZ_TOLERANCE_MARGIN",
]

EXACT_LIMIT = 600  # unknowns; dense QZ costs O(n³): ~1.3 s at 500, ~1 min at 1500 (benchmarks/)
# |alpha/beta| beyond this (after scaling) is an infinite eigenvalue.  The rounding of a true
# infinite eigenvalue leaves |beta| ~ eps·‖E‖, |alpha/beta| ≳ 1e15; a finite pole 1e11 above the
# time scale s0 is real (an improved current pump with a 100 µΩ resistor between two pF nodes has
# poles from 50 kHz to 1.75e16 Hz), so the line is drawn 100x below the rounding level
_INFINITE_RATIO = 1e13


@dataclass(frozen=True, eq=False)
class InfiniteBandTotals:
    """``variance`` (K,): ∫0^∞ |H_k|² S_k df per input column; ``poles_Hz``:
    the magnitudes of the finite poles, Hz."""

    variance: np.ndarray
    poles_Hz: np.ndarray


@dataclass(frozen=True, eq=False)
class _Scaled:
    a: np.ndarray
    e: np.ndarray
    c: np.ndarray
    b: np.ndarray
    s0: float  # rad/s per unit of scaled frequency


def _scale(G: np.ndarray, C: np.ndarray, c: np.ndarray, B: np.ndarray) -> _Scaled:
    norm_g = np.abs(G).sum(axis=0).max() if G.size else 0.0
    norm_c = np.abs(C).sum(axis=0).max() if C.size else 0.0
    with np.errstate(over="ignore"):
        s0 = norm_g / norm_c if norm_c > 0 and norm_g > 0 else 1.0
    if not (math.isfinite(s0) and s0 > 0.0):  # overflow or underflow of the time scale: refused, not NaN
        raise CircuitError(
            f"the circuit's time scale ‖G‖/‖C‖ ({norm_g:.3g} / {norm_c:.3g}) lies beyond the range of "
            "floating-point numbers, so its noise to infinite bandwidth cannot be computed: check for extreme "
            "element values (gains, capacitances, inductances)"
        )
    m = np.abs(G) + s0 * np.abs(C)
    dr = np.ones(G.shape[0])
    dc = np.ones(G.shape[0])
    for _ in range(3):  # a few passes of max-norm equilibration
        row = (m * dc[None, :] * dr[:, None]).max(axis=1)
        dr = dr / np.where(row > 0, np.sqrt(row), 1.0)
        col = (m * dc[None, :] * dr[:, None]).max(axis=0)
        dc = dc / np.where(col > 0, np.sqrt(col), 1.0)
    a = -(dr[:, None] * G * dc[None, :])
    e = s0 * (dr[:, None] * C * dc[None, :])
    return _Scaled(a=a, e=e, c=dc * c, b=dr[:, None] * B, s0=s0)


def _finite_first(alpha, beta):
    return np.abs(beta) * _INFINITE_RATIO > np.abs(alpha)


def finite_poles_Hz(G: np.ndarray, C: np.ndarray) -> np.ndarray:
    """Magnitudes |p|/2π (Hz) of the finite poles of ``det(G + sC) = 0``."""
    import scipy.linalg as la  # loaded on first use: keeps the command line's start-up short

    n = G.shape[0]
    sc = _scale(G, C, np.zeros(n), np.zeros((n, 0)))
    w = la.eigvals(sc.a, sc.e, homogeneous_eigvals=True)
    alpha, beta = w[0], w[1]
    finite = _finite_first(alpha, beta)
    return np.abs(alpha[finite] / beta[finite]) * sc.s0 / (2 * math.pi)


def infinite_band_totals(
    G: np.ndarray, C: np.ndarray, c: np.ndarray, B: np.ndarray, density: np.ndarray
) -> InfiniteBandTotals:
    """∫0^∞ |cᵀ(G + j2πfC)⁻¹ b_k|² S_k df for every column b_k of ``B``.

    ``density`` (K,) are one-sided white densities S_k.  A column whose white
    input reaches the output without roll-off gets ``inf``; CircuitError for
    a pole on or right of the imaginary axis.
    """
    import scipy.linalg as la  # loaded on first use: keeps the command line's start-up short
    from scipy.linalg import lapack

    n = G.shape[0]
    sc = _scale(np.asarray(G, float), np.asarray(C, float), np.asarray(c, float), np.asarray(B, float))
    aa, ee, alpha, beta, q, z = la.ordqz(sc.a, sc.e, sort=_finite_first, output="real")
    nf = int(np.count_nonzero(_finite_first(alpha, beta)))
    bt = q.T @ sc.b
    ct = z.T @ sc.c
    b1, b2 = bt[:nf], bt[nf:]
    c1, c2 = ct[:nf], ct[nf:]
    if 0 < nf < n:
        # [[I, L],[0, I]] (AA, EE) [[I, R],[0, I]] block diagonal:
        # A11 R - L' A22 = -A12, E11 R - L' E22 = -E12 with L = -L'
        r, l_neg, scale, _, info = lapack.dtgsyl(
            aa[:nf, :nf], aa[nf:, nf:], -aa[:nf, nf:], ee[:nf, :nf], ee[nf:, nf:], -ee[:nf, nf:]
        )
        if info < 0 or scale == 0:
            raise CircuitError("internal error: could not separate the circuit's finite and infinite modes")
        r, l_neg = r / scale, l_neg / scale
        b1 = b1 - l_neg @ b2
        c2 = c2 + r.T @ c1
        # c2 carries the decoupling's rounding, amplified by R (an ill-separated pencil: R large)
        c_scale = np.linalg.norm(sc.c) + np.linalg.norm(r, 2) * np.linalg.norm(c1)
    else:
        c_scale = np.linalg.norm(sc.c)
    sk = np.asarray(density, float)
    # the threshold is scaled by each source's whole column, not by its part in the infinite block
    # (which is itself rounding for a source that reaches only the dynamic part)
    unbounded = _direct_paths(aa[nf:, nf:], ee[nf:, nf:], c2, b2, c_scale, np.linalg.norm(sc.b, axis=0)) & (sk > 0)
    if unbounded.any():  # confirmed on the transfer itself, far above the poles
        unbounded[unbounded] = _flat_at_high_frequency(sc, alpha, beta, np.flatnonzero(unbounded))

    variance = np.zeros(B.shape[1])
    poles = np.zeros(0)
    if nf:
        e11, a11 = ee[:nf, :nf], aa[:nf, :nf]
        af = la.solve_triangular(e11, a11)  # E11 is upper triangular in the real QZ form
        bf = la.solve_triangular(e11, b1)
        lam = np.linalg.eigvals(af)
        poles = np.abs(lam) * sc.s0 / (2 * math.pi)
        _refuse_unstable(lam, sc.s0)
        w = la.solve_continuous_lyapunov(af.T, -np.outer(c1, c1))
        w = 0.5 * (w + w.T)
        variance = sc.s0 * 0.5 * sk * np.einsum("ik,ij,jk->k", bf, w, bf)
        variance = np.maximum(variance, 0.0)
    variance[unbounded] = np.inf
    return InfiniteBandTotals(variance=variance, poles_Hz=poles)


# far above the highest finite pole (this factor), a transfer that rolls off falls at least 100x over
# two decades; one that reaches the output unfiltered stays flat (or rises): the confirmation of
# the decoupled test in :func:`_flat_at_high_frequency`
_CONFIRM_FACTOR = 1e4


def _flat_at_high_frequency(sc: _Scaled, alpha, beta, columns: np.ndarray) -> np.ndarray:
    """(len(columns),) True where |H_k| does not roll off: solved directly (equilibrated, dense)
    at ω1 = 1e4 × the highest finite pole and ω2 = 100·ω1 in scaled frequency; a direct path
    keeps |H(ω2)| ≥ 0.1·|H(ω1)|, a filtered one has |H(ω2)| ≲ 0.01·|H(ω1)|."""
    finite = _finite_first(alpha, beta)
    top = float(np.max(np.abs(alpha[finite] / beta[finite]), initial=0.0))
    w1 = _CONFIRM_FACTOR * top if top > 0 else 1.0
    gains = []
    for w in (w1, 100.0 * w1):
        try:
            z = np.linalg.solve((-sc.a + 1j * w * sc.e).T, sc.c.astype(complex))
        except np.linalg.LinAlgError:  # singular there: no confirmation, the decoupled verdict stands
            return np.ones(columns.size, dtype=bool)
        gains.append(np.abs(z @ sc.b[:, columns]))
    low, high = gains
    return (low > 0) & (high >= 0.1 * low)


def _direct_paths(a22, e22, c2, b2, c_norm, b_norm) -> np.ndarray:
    """(K,) True where the infinite block's transfer -Σ s^k c2ᵀ N^k A22⁻¹ b_k
    does not vanish, i.e. white input reaches the output unfiltered.  ``c_norm``: the size of
    the output vector (with what the decoupling added), ``b_norm`` (K,) of each whole input column."""
    m = a22.shape[0]
    if m == 0:
        return np.zeros(b2.shape[1], dtype=bool)
    row = np.linalg.solve(a22.T, c2)  # c2ᵀ A22⁻¹ as a column
    nil = np.linalg.solve(a22, e22)  # N = A22⁻¹ E22, nilpotent
    a22_inv_norm = np.linalg.norm(np.linalg.inv(a22), 2)
    reach = np.zeros(b2.shape[1])
    coefficient = row
    for _ in range(m):
        reach = np.maximum(reach, np.abs(coefficient @ b2))
        coefficient = nil.T @ coefficient
        if not np.any(np.abs(coefficient) > 1e-14 * np.abs(row).max(initial=1e-300)):
            break
    threshold = 1e-9 * c_norm * a22_inv_norm * b_norm
    return reach > threshold


# the stated relative error of an exact total: eigenvalues come with absolute errors of about eps
# times the largest, so the slowest poles carry a relative error of eps times the spread of the
# pole magnitudes, and the totals with them.  Measured (tests/test_infinite_methods.py, against
# 40-digit references on random RC networks with poles up to ten decades apart): at most 8x
# that for the symmetric path's QR route, 115x for QZ (2.4e-10 at a spread of 9.5e3); stated with
# these margins, never below the floor
_TOLERANCE_MARGIN = 64.0
QZ_TOLERANCE_MARGIN = 1024.0
_TOLERANCE_FLOOR = 1e-12


def rounding_tolerance(poles: np.ndarray, margin: float = _TOLERANCE_MARGIN) -> float:
    """The stated relative error of an exact total from the circuit's pole magnitudes (any unit):
    ``margin``·eps·(largest/smallest), at least 1e-12, at most 1."""
    poles = np.abs(np.asarray(poles, dtype=float))
    poles = poles[poles > 0]
    spread = float(poles.max() / poles.min()) if poles.size else 1.0
    return min(1.0, max(_TOLERANCE_FLOOR, margin * float(np.finfo(float).eps) * spread))


class UnstableCircuit(CircuitError):
    """A pole on or right of the imaginary axis.  ``pole_Hz``: the pole p/2π (complex, Hz);
    ``growth_per_s``: Re(p) in 1/s; ``lossless``: on the axis (to rounding) rather than right of it."""

    def __init__(self, message: str, pole_Hz: complex, growth_per_s: float, lossless: bool):
        super().__init__(message)
        self.pole_Hz = pole_Hz
        self.growth_per_s = growth_per_s
        self.lossless = lossless


# a pole counts as right of the axis when Re p exceeds this share of |p| plus the rounding of the
# eigenvalues (QZ is backward stable: errors ~ eps times the largest eigenvalue after scaling,
# with _ROUNDING_MARGIN for moderate ill-conditioning); a stiff circuit's slow poles (1.75 kHz
# beside 1.75e16 Hz) are then judged on their own size, not the largest one's
_UNSTABLE_SHARE = 1e-9
_LOSSLESS_SHARE = 1e-13
_ROUNDING_MARGIN = 64.0


def unstable_pole(lam: np.ndarray, s0: float, lossless_too: bool = True) -> UnstableCircuit | None:
    """The worst pole of scaled eigenvalues ``lam`` (p = lam·s0 rad/s) right of the imaginary
    axis, or on it (to rounding) when ``lossless_too``; None when every pole is stable."""
    lam = np.asarray(lam, dtype=complex)
    if lam.size == 0:
        return None
    rounding = _ROUNDING_MARGIN * np.finfo(float).eps * float(np.abs(lam).max())
    size = np.abs(lam)
    right = lam.real > _UNSTABLE_SHARE * size + rounding
    on_axis = (lam.real >= -(_LOSSLESS_SHARE * size + rounding)) & ~right
    bad = right | (on_axis if lossless_too else False)
    if not np.any(bad):
        return None
    worst = lam[bad][np.argmax(lam[bad].real)]
    lossless = not right[bad][np.argmax(lam[bad].real)]
    pole_Hz = complex(worst) * s0 / (2 * math.pi)
    growth = float(worst.real) * s0
    f = abs(pole_Hz)
    if lossless:
        message = (
            f"the circuit has a lossless mode (a pole on the imaginary axis) near {f:.4g} Hz, so its noise to "
            "infinite bandwidth is not defined; add the loss the real circuit has, or integrate over a finite band"
        )
    else:
        message = (
            f"the circuit is unstable: it has a pole in the right half-plane at {f:.4g} Hz growing at "
            f"{growth:.4g} /s (its response multiplies by e every {1 / growth:.3g} s), so it has no steady noise "
            "to analyse"
        )
    return UnstableCircuit(message, pole_Hz, growth, lossless)


def finite_scaled_eigenvalues(G: np.ndarray, C: np.ndarray) -> tuple[np.ndarray, float]:
    """The finite generalized eigenvalues of (−G, C) after scaling, and the time scale s0: the
    poles are p = λ·s0 rad/s."""
    import scipy.linalg as la

    n = G.shape[0]
    sc = _scale(G, C, np.zeros(n), np.zeros((n, 0)))
    w = la.eigvals(sc.a, sc.e, homogeneous_eigvals=True)
    alpha, beta = w[0], w[1]
    finite = _finite_first(alpha, beta)
    return alpha[finite] / beta[finite], sc.s0


def _refuse_unstable(lam: np.ndarray, s0: float) -> None:
    found = unstable_pole(lam, s0)
    if found is not None:
        raise found

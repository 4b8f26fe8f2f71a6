"""How fast the signal path responds: its −3 dB bandwidth and its step response.

The step response comes from the same MNA system ``C x' = −G x + b u``,
``y = cᵀx``, for a unit step ``u`` of the input source:

* **exact** (up to the exact limit of unknowns): the descriptor system is
  reduced to an ordinary one.  With ``C = U Σ Vᵀ`` (SVD, rank r) and
  ``x = V [x1; x2]``, the rows ``Uᵀ`` split it into ``Σ1 x1' = −G11 x1 −
  G12 x2 + b1 u`` and ``0 = −G21 x1 − G22 x2 + b2 u``; the algebraic part
  is eliminated (index 1: G22 invertible), leaving ``x1' = M x1 + N u``,
  ``y = P x1 + D u``.  A step held constant is integrated exactly on any
  time grid by ``expm([[M, N], [0, 0]]·h)`` (zero-order hold is exact for a
  step; Van Loan 1978), on steps that double from a fraction of the fastest
  pole's time constant to many of the slowest one's.
* **time-stepping** (larger circuits, or index above 1): the second-order
  backward-difference formula (BDF2, L-stable) on the same doubling steps,
  restarted with one backward-Euler step at each step change, on sparse LU.

From the step: 10–90 % rise time, overshoot (fraction of the final value),
and the settling time to a stated accuracy (a fraction of the final value:
within half an LSB of an N-bit converter is 2^−(N+1)).  The bandwidth is the
frequency above the pass band where |H| first falls to 1/√2 of the pass-band
gain (the DC gain of a low-pass; the peak of a band-pass).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np

from netnoise.engine.factor import transfers
from netnoise.engine.mna import MnaSystem
from netnoise.engine.options import SolverOptions
from netnoise.errors import CircuitError

__all__ = ["StepResponse", "SpeedOfResponse", "step_response", "speed_of_response", "bits_accuracy"]

_STEPS_PER_SEGMENT = 96  # uniform steps between two doublings of the step size
_FIRST_STEP = 0.02  # the first step, as a fraction of the fastest pole's time constant
_SLOWEST_SPAN = 40.0  # the response is followed to this many time constants of the slowest pole


def bits_accuracy(bits: int) -> float:
    """Half an LSB of an N-bit converter, as a fraction of full scale: 2^−(N+1)."""
    return 2.0 ** -(bits + 1)


@dataclass(frozen=True, eq=False)
class StepResponse:
    """Output (V per V, or V per A) after a unit step of the input at t = 0.

    ``time_s`` (T,) from 0; ``output`` (T,); ``final`` the value it settles
    to (the DC transfer); ``method`` "exact" or "time-stepping"."""

    time_s: np.ndarray
    output: np.ndarray
    final: float
    method: str

    def __post_init__(self) -> None:
        for name in ("time_s", "output"):
            array = np.array(getattr(self, name), dtype=float)
            array.setflags(write=False)
            object.__setattr__(self, name, array)

    def crossing(self, level: float) -> float:
        """The first time the output reaches ``level`` (linear interpolation), s."""
        y = self.output if self.final >= 0 else -self.output
        level = level if self.final >= 0 else -level
        above = np.flatnonzero(y >= level)
        if not above.size:
            return math.nan
        i = int(above[0])
        if i == 0:
            return float(self.time_s[0])
        t0, t1, y0, y1 = self.time_s[i - 1], self.time_s[i], y[i - 1], y[i]
        return float(t0 + (level - y0) * (t1 - t0) / (y1 - y0))

    @property
    def rise_time_s(self) -> float:
        """10–90 % rise time of the final value, s."""
        return self.crossing(0.9 * self.final) - self.crossing(0.1 * self.final)

    @property
    def overshoot(self) -> float:
        """Largest excursion beyond the final value, as a fraction of it (0 when none)."""
        if self.final == 0.0:
            return 0.0
        beyond = (self.output - self.final) / self.final
        return max(0.0, float(np.max(beyond)))

    def settling_time_s(self, accuracy: float) -> float:
        """The time after which the output stays within ``accuracy`` × |final|
        of the final value, s (interpolated)."""
        band = accuracy * abs(self.final)
        outside = np.flatnonzero(np.abs(self.output - self.final) > band)
        if not outside.size:
            return 0.0
        i = int(outside[-1])
        if i + 1 >= self.output.size:
            return math.inf
        t0, t1 = self.time_s[i], self.time_s[i + 1]
        e0, e1 = abs(self.output[i] - self.final), abs(self.output[i + 1] - self.final)
        if e1 > 0 and e0 > e1:  # the error decays about exponentially: interpolate its logarithm
            return float(t0 + math.log(e0 / band) / math.log(e0 / e1) * (t1 - t0))
        return float(t0 + (e0 - band) * (t1 - t0) / (e0 - e1)) if e0 != e1 else float(t1)


@dataclass(frozen=True)
class SpeedOfResponse:
    """The speed of the signal path: bandwidth (Hz), rise time (s), overshoot
    (fraction), settling time (s) to ``settle_accuracy`` (a fraction of the
    step; None when none was asked for), and the DC transfer."""

    bandwidth_Hz: float | None
    rise_time_s: float
    overshoot: float
    settling_time_s: float | None
    settle_accuracy: float | None
    dc_gain: float
    method: str


def _time_grid(fast: float, slow: float) -> list[tuple[float, int]]:
    """(step, count) segments: steps doubling from a fraction of the fastest
    time constant to cover many of the slowest one."""
    h = _FIRST_STEP * fast
    end = _SLOWEST_SPAN * slow
    segments = []
    t = 0.0
    while t < end:
        segments.append((h, _STEPS_PER_SEGMENT))
        t += h * _STEPS_PER_SEGMENT
        h *= 2.0
        if len(segments) > 200:  # pragma: no cover - a span of 2^200 is beyond any circuit
            break
    return segments


def _reduced(
    system: MnaSystem, c: np.ndarray, b: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray, float] | None:
    """(M, N, P, D): the ordinary system x1' = M x1 + N u, y = P x1 + D u, or None above index 1."""
    import scipy.linalg as la

    g, cap = system.G.toarray(), system.C.toarray()
    u, sigma, vt = la.svd(cap)
    tol = max(cap.shape) * np.finfo(float).eps * (sigma[0] if sigma.size else 0.0)
    r = int(np.count_nonzero(sigma > tol))
    gt = u.T @ g @ vt.T
    bt = u.T @ b
    ct = vt @ c
    g11, g12, g21, g22 = gt[:r, :r], gt[:r, r:], gt[r:, :r], gt[r:, r:]
    if g22.size:
        try:
            with warnings.catch_warnings():  # an exactly singular block is judged by its condition below
                warnings.simplefilter("ignore", la.LinAlgWarning)
                lu = la.lu_factor(g22, check_finite=False)
        except (ValueError, np.linalg.LinAlgError):
            return None
        if np.linalg.cond(g22) > 1e13:
            return None
        k_x = la.lu_solve(lu, g21, check_finite=False)  # x2 = G22⁻¹ (b2 u − G21 x1)
        k_u = la.lu_solve(lu, bt[r:], check_finite=False)
    else:
        k_x = np.zeros((0, r))
        k_u = np.zeros(0)
    s_inv = 1.0 / sigma[:r]
    m = -s_inv[:, None] * (g11 - g12 @ k_x)
    n = s_inv * (bt[:r] - g12 @ k_u)
    p = ct[:r] - ct[r:] @ k_x
    d = float(ct[r:] @ k_u)
    return m, n, p, d


def step_response(
    system: MnaSystem, output: np.ndarray, excitation: np.ndarray, options: SolverOptions | None = None
) -> StepResponse:
    """The unit-step response from ``excitation`` (right-hand side of the
    input) to ``output`` (selector); CircuitError if it does not settle."""
    options = options or SolverOptions()
    dc = complex(transfers(system, output, excitation, [0.0], options)[0, 0, 0]).real
    reduced = _reduced(system, output, excitation) if system.size <= options.exact_limit else None
    if reduced is not None:
        m, n, p, d = reduced
        return _exact(m, n, p, d, dc)
    return _stepped(system, output, excitation, dc)


def _poles(m: np.ndarray) -> np.ndarray:
    return np.linalg.eigvals(m) if m.size else np.zeros(0, dtype=complex)


def _check_settles(poles: np.ndarray) -> None:
    if not poles.size:
        return
    scale = float(np.abs(poles).max())
    worst = poles[np.argmax(poles.real)]
    if worst.real > 1e-9 * scale:
        raise CircuitError(
            f"the step response does not settle: the circuit is unstable (a pole at "
            f"{abs(worst) / (2 * math.pi):.4g} Hz grows as exp({worst.real:.3g}·t))"
        )
    if worst.real >= -1e-12 * scale:
        raise CircuitError(
            "the step response does not settle: the signal path has a pole at zero or on the "
            "imaginary axis (an integrator, or a lossless resonance); add the loss or the DC path "
            "the real circuit has"
        )


def _exact(m, n, p, d, dc: float) -> StepResponse:
    import scipy.linalg as la

    poles = _poles(m)
    _check_settles(poles)
    if not poles.size:  # no dynamics: the output follows the input at once
        return StepResponse(np.array([0.0, 1.0]), np.array([d, d]), d, "exact")
    rates = np.abs(poles.real)
    fast, slow = 1.0 / np.abs(poles).max(), 1.0 / rates.min()
    r = m.shape[0]
    times: list[float] = [0.0]
    values: list[float] = [float(d)]  # at t = 0+ the states are still 0: the direct part only
    x = np.zeros(r)
    t = 0.0
    for h, count in _time_grid(fast, slow):
        aug = np.zeros((r + 1, r + 1))
        aug[:r, :r], aug[:r, r] = m * h, n * h
        e = la.expm(aug)
        phi, gamma = e[:r, :r], e[:r, r]
        for _ in range(count):
            x = phi @ x + gamma
            t += h
            times.append(t)
            values.append(float(p @ x) + d)
    return StepResponse(np.array(times), np.array(values), dc, "exact")


def _stepped(system: MnaSystem, c: np.ndarray, b: np.ndarray, dc: float) -> StepResponse:
    import scipy.sparse.linalg as spla

    from netnoise.engine.wideband import pole_range_Hz

    poles = pole_range_Hz(system.G, system.C)
    if poles is None:
        raise CircuitError("the step response cannot be found: the circuit's pole range is not defined")
    low, high = poles
    fast, slow = 1.0 / (2 * math.pi * high), 1.0 / (2 * math.pi * low)
    g, cap = system.G.tocsc(), system.C.tocsc()
    x_prev2 = None
    x_prev = np.zeros(system.size)
    try:
        x_prev = spla.splu(g).solve(np.zeros(system.size))  # the state before the step: all zero
    except RuntimeError:
        raise CircuitError("the DC equations are singular; the step response is not defined") from None
    times, values = [0.0], [0.0]
    t = 0.0
    for h, count in _time_grid(fast, slow):
        euler = spla.splu((cap / h + g).tocsc())
        bdf2 = spla.splu((1.5 * cap / h + g).tocsc())
        x_prev2 = None
        for _ in range(count):
            if x_prev2 is None:  # restart: one backward-Euler step
                x = euler.solve(cap @ x_prev / h + b)
            else:
                x = bdf2.solve(cap @ (2.0 * x_prev - 0.5 * x_prev2) / h + b)
            x_prev2, x_prev = x_prev, x
            t += h
            times.append(t)
            values.append(float(c @ x))
    values_arr = np.array(values)
    tail = values_arr[-_STEPS_PER_SEGMENT:]
    if not np.all(np.isfinite(values_arr)) or abs(tail[-1] - dc) > 1e-3 * max(abs(dc), np.abs(values_arr).max()):
        raise CircuitError("the step response does not settle within the time followed (unstable, or an integrator)")
    return StepResponse(np.array(times), values_arr, dc, "time-stepping")


def bandwidth_Hz(
    system: MnaSystem, output: np.ndarray, excitation: np.ndarray, options: SolverOptions | None = None
) -> float | None:
    """The −3 dB bandwidth of the signal path, Hz (None: it never falls 3 dB)."""
    from scipy.optimize import brentq

    f = np.logspace(-3, 12, 301)

    def gain(x: np.ndarray) -> np.ndarray:
        return np.abs(transfers(system, output, excitation, x, options)[:, 0, 0])

    g = gain(f)
    dc = abs(complex(transfers(system, output, excitation, [0.0], options)[0, 0, 0]))
    reference = dc if dc > 0 else float(g.max())
    start = 0 if dc > 0 else int(np.argmax(g))
    below = np.flatnonzero(g[start:] < reference / math.sqrt(2.0))
    if not below.size:
        return None
    i = start + int(below[0])
    if i == 0:
        return None
    lo, hi = math.log(f[i - 1]), math.log(f[i])
    target = reference / math.sqrt(2.0)
    return math.exp(brentq(lambda u: float(gain(np.array([math.exp(u)]))[0]) - target, lo, hi, xtol=1e-12, rtol=1e-12))


def speed_of_response(
    system: MnaSystem,
    output: np.ndarray,
    excitation: np.ndarray,
    settle: float | None = None,
    options: SolverOptions | None = None,
) -> SpeedOfResponse:
    """Bandwidth, rise time, overshoot and (with ``settle``, a fraction of the
    step) settling time of the path from ``excitation`` to ``output``."""
    step = step_response(system, output, excitation, options)
    if step.final == 0.0:
        raise CircuitError(
            "the signal path has no DC transfer (it blocks DC): its step response returns to zero, "
            "so rise and settling times are not defined"
        )
    return SpeedOfResponse(
        bandwidth_Hz=bandwidth_Hz(system, output, excitation, options),
        rise_time_s=step.rise_time_s,
        overshoot=step.overshoot,
        settling_time_s=step.settling_time_s(settle) if settle is not None else None,
        settle_accuracy=settle,
        dc_gain=step.final,
        method=step.method,
    )

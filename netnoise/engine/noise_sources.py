"""Noise sources of a circuit, stacked as injections into the MNA equations.

Each source ``k`` is a column ``B[:, k]`` of the injection matrix (a unit
noise current between two nodes, or a unit noise voltage in a branch row)
with a one-sided power density ``S_k(f) = W_k + F_k · (1 Hz / f)^α_k``
(A²/Hz or V²/Hz): a white level ``W_k`` and a 1/f^α part of density
``F_k`` at 1 Hz (a part with corner fc has ``F = W · fc^α``).  The output
density it causes is ``|zᵀ B[:, k]|² · S_k(f)`` where ``z`` solves the
adjoint system (see :mod:`netnoise.engine.transfer`).  Sources are
uncorrelated.

Every element kind states its own sources (``Element.noise_sources``; the
mechanisms' physics is in :mod:`netnoise.noise.mechanisms`); rows come
grouped by mechanism, in netlist order within each.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from netnoise import circuit as ck
from netnoise.engine.mna import MnaSystem
from netnoise.noise.mechanisms import ROW_ORDER, NoiseSource

__all__ = ["NoiseSource", "NoiseSources", "NoiseContext", "collect_noise_sources"]


@dataclass(frozen=True, eq=False)
class NoiseSources:
    """All noise sources of a circuit, stacked column-wise."""

    sources: tuple[NoiseSource, ...]
    injection: sp.csc_matrix  # (n, K)
    white_density: np.ndarray  # (K,)
    flicker_at_1Hz: np.ndarray  # (K,)
    slope: np.ndarray  # (K,)

    def __len__(self) -> int:
        return len(self.sources)

    @property
    def colored(self) -> np.ndarray:
        """(K,) True for sources with a 1/f part."""
        return self.flicker_at_1Hz > 0

    def density(self, frequency_Hz: np.ndarray, part: str = "full") -> np.ndarray:
        """(K, F) one-sided source densities: ``part`` "full", "white" (the
        white level only) or "colored" (the 1/f part only; infinite at 0 Hz).
        White levels come as a read-only broadcast view."""
        if part not in ("full", "white", "colored"):
            raise ValueError(f"part must be 'full', 'white' or 'colored', not {part!r}")
        f = np.asarray(frequency_Hz, dtype=float)
        white = np.broadcast_to(self.white_density[:, None], (len(self), f.size))
        rows = np.flatnonzero(self.colored)
        if part == "white" or (part == "full" and not rows.size):
            return white
        colored = np.zeros((len(self), f.size))
        if rows.size:
            with np.errstate(divide="ignore"):
                inverse_f = np.where(f > 0, 1.0 / np.where(f > 0, f, 1.0), np.inf)
            colored[rows] = self.flicker_at_1Hz[rows, None] * inverse_f[None, :] ** self.slope[rows, None]
        return colored if part == "colored" else white + colored


@dataclass(frozen=True, eq=False)
class NoiseContext:
    """What the element kinds need to state their noise (see
    :class:`netnoise.circuit.elements.base.NoiseView`): rows of the system,
    the analysis temperature (K) and, on demand, the DC solution vector."""

    system: MnaSystem
    temperature_K: float
    dc_solution: Callable[[], np.ndarray]

    def node(self, name: str) -> int:
        return self.system.node_row(name)

    def branch(self, element) -> int:
        return self.system.branch_index[ck.name_key(element.name)]

    def internal(self, element, label: str) -> int:
        return self.system.internal_index[f"{ck.name_key(element.name)}#{label}"]

    def current_between(self, a: str, b: str) -> tuple[tuple[int, float], ...]:
        """Injection of a noise current in parallel with nodes ``a`` and ``b``:
        +1 at a's row, -1 at b's (ground rows left out)."""
        index = self.system.node_index
        ra, rb = index.get(a), index.get(b)
        if ra is not None and rb is not None:  # two canonical nodes off ground: the common case
            return ((ra, 1.0), (rb, -1.0))
        rows = []
        for node, sign in ((a, 1.0), (b, -1.0)):
            row = self.system.node_row(node)
            if row >= 0:
                rows.append((row, sign))
        return tuple(rows)

    def dc_voltage(self, a: str, b: str) -> float:
        x = self.dc_solution()
        ra, rb = self.system.node_row(a), self.system.node_row(b)
        return float((x[ra] if ra >= 0 else 0.0) - (x[rb] if rb >= 0 else 0.0))


def collect_noise_sources(
    system: MnaSystem, temperature_K: float, dc_solution: Callable[[], np.ndarray] | None = None
) -> NoiseSources:
    """Every noise source of the circuit at ``temperature_K`` kelvin.

    ``dc_solution`` returns the DC solution vector; it is called only if an
    element's noise needs it (excess noise).
    """
    if dc_solution is None:
        from netnoise.engine.dc import solve_operating_point

        def dc_solution():
            return solve_operating_point(system)

    ctx = NoiseContext(system=system, temperature_K=temperature_K, dc_solution=_once(dc_solution))
    found = [s for element in system.circuit.elements for s in element.noise_sources(ctx)]  # type: ignore[arg-type]
    found.sort(key=lambda s: ROW_ORDER[s.mechanism])  # stable: netlist order within a mechanism
    sources = tuple(found)
    entries = [(row, k, coefficient) for k, source in enumerate(sources) for row, coefficient in source.injection]
    rows = [e[0] for e in entries]
    cols = [e[1] for e in entries]
    vals = [e[2] for e in entries]
    injection = sp.csc_matrix((vals, (rows, cols)), shape=(system.size, len(sources)))

    def column(values):
        out = np.array(values, dtype=float)
        out.setflags(write=False)
        return out

    return NoiseSources(
        sources=sources,
        injection=injection,
        white_density=column([s.white_density for s in sources]),
        flicker_at_1Hz=column([s.flicker_at_1Hz for s in sources]),
        slope=column([s.slope for s in sources]),
    )


def _once(function):
    cache = []

    def wrapper():
        if not cache:
            cache.append(function())
        return cache[0]

    return wrapper

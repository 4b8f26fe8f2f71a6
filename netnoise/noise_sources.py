"""Noise sources of a circuit, as injections into the MNA equations.

Each source ``k`` is a column ``B[:, k]`` of the injection matrix (a unit
noise current between two nodes, or a unit noise voltage in a branch row)
with a one-sided power density ``S_k(f)`` (A²/Hz or V²/Hz).  The output
density it causes is ``|zᵀ B[:, k]|² · S_k(f)`` where ``z`` solves the
adjoint system (see :mod:`netnoise.transfer`).

Mechanisms implemented here:

* ``thermal`` -- a resistor's Johnson–Nyquist noise: a current source of
  density 4kT/R in parallel with it (Johnson 1928; Nyquist 1928).

Reactive elements, controlled sources and independent sources are
noiseless.  New mechanisms add a function that yields :class:`NoiseSource`
objects and register it in :data:`MECHANISMS`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Iterator

import numpy as np
import scipy.sparse as sp
from scipy import constants

from . import circuit as ck
from .engformat import format_quantity
from .mna import MnaSystem

__all__ = ["NoiseSource", "NoiseSources", "collect_noise_sources", "BOLTZMANN"]

BOLTZMANN = constants.Boltzmann  # J/K, exact SI value


@dataclass(frozen=True)
class NoiseSource:
    """One noise generator: where it enters the equations and how strong it is.

    ``injection`` lists (row, coefficient) pairs of its unit excitation;
    ``white_density`` is its one-sided density (A²/Hz or V²/Hz), constant in
    frequency for the mechanisms implemented so far.
    """

    element: str
    mechanism: str
    value: str
    injection: tuple[tuple[int, float], ...]
    white_density: float


@dataclass(frozen=True, eq=False)
class NoiseSources:
    """All noise sources of a circuit, stacked column-wise."""

    sources: tuple[NoiseSource, ...]
    injection: sp.csc_matrix  # (n, K)
    white_density: np.ndarray  # (K,)

    def __len__(self) -> int:
        return len(self.sources)

    def density(self, frequency_Hz: np.ndarray) -> np.ndarray:
        """(K, F) one-sided source densities at the given frequencies."""
        return np.broadcast_to(self.white_density[:, None], (len(self), len(frequency_Hz)))


def _current_between(system: MnaSystem, nodes: tuple[str, str]) -> tuple[tuple[int, float], ...]:
    rows = []
    for node, sign in zip(nodes, (1.0, -1.0)):
        row = system.node_row(node)
        if row >= 0:
            rows.append((row, sign))
    return tuple(rows)


def thermal_sources(system: MnaSystem, temperature_K: float) -> Iterator[NoiseSource]:
    """Johnson–Nyquist current noise 4kT/R of every resistor."""
    for element in system.circuit.elements:
        if isinstance(element, ck.Resistor):
            injection = _current_between(system, element.nodes)
            if not injection:  # both ends on ground: it cannot reach the output
                continue
            yield NoiseSource(
                element=element.name,
                mechanism="thermal",
                value=format_quantity(element.resistance, "Ω"),
                injection=injection,
                white_density=4.0 * BOLTZMANN * temperature_K / element.resistance,
            )


MECHANISMS: tuple[Callable[[MnaSystem, float], Iterator[NoiseSource]], ...] = (thermal_sources,)


def collect_noise_sources(system: MnaSystem, temperature_K: float) -> NoiseSources:
    """Every noise source of the circuit at ``temperature_K`` kelvin."""
    sources = tuple(s for mechanism in MECHANISMS for s in mechanism(system, temperature_K))
    rows, cols, vals = [], [], []
    for k, source in enumerate(sources):
        for row, coefficient in source.injection:
            rows.append(row)
            cols.append(k)
            vals.append(coefficient)
    injection = sp.csc_matrix((vals, (rows, cols)), shape=(system.size, len(sources)))
    density = np.array([s.white_density for s in sources], dtype=float)
    density.setflags(write=False)
    return NoiseSources(sources=sources, injection=injection, white_density=density)

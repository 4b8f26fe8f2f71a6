"""Noise sources of a circuit, as injections into the MNA equations.

Each source ``k`` is a column ``B[:, k]`` of the injection matrix (a unit
noise current between two nodes, or a unit noise voltage in a branch row)
with a one-sided power density ``S_k(f) = W_k + F_k · (1 Hz / f)^α_k``
(A²/Hz or V²/Hz): a white level ``W_k`` and a 1/f^α part of density
``F_k`` at 1 Hz (a part with corner fc has ``F = W · fc^α``).  The output density it causes is ``|zᵀ B[:, k]|² · S_k(f)``
where ``z`` solves the adjoint system (see :mod:`netnoise.transfer`).
Sources are uncorrelated.

Mechanisms (the strings are fixed; they appear in the JSON):

* ``thermal`` -- a resistor's Johnson–Nyquist noise, a current 4kT/R in
  parallel with it (Johnson 1928; Nyquist 1928), at the resistor's own
  temperature if it has one; none for a resistor marked noiseless.
* ``excess`` -- a resistor's 1/f current noise from its noise index NI (dB re
  1 µV per volt of DC across it per decade): a voltage density
  (NI_lin · V_dc)² / (ln 10 · f) in series, i.e. that over R² as a current.
* ``shot`` -- 2q|I_dc| for a current source marked as a junction current
  (Schottky 1918).
* ``source`` -- an explicit density given to an independent V or I source.
* ``amplifier-voltage`` / ``amplifier-current`` -- an amplifier's input
  voltage noise (at its first stage, equivalent to a source in series with
  its input) and the current noise of each input to ground.

Reactive elements and controlled sources are noiseless.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable, Iterator

import numpy as np
import scipy.sparse as sp
from scipy import constants

from netnoise import circuit as ck
from netnoise.engformat import format_quantity
from netnoise.engine.mna import MnaSystem
from netnoise.errors import CircuitError

__all__ = ["NoiseSource", "NoiseSources", "NoiseContext", "collect_noise_sources", "MECHANISMS", "BOLTZMANN"]

BOLTZMANN = constants.Boltzmann  # J/K, exact SI value
ELEMENTARY_CHARGE = constants.e  # C, exact SI value
ZERO_CELSIUS_K = 273.15


@dataclass(frozen=True)
class NoiseSource:
    """One noise generator: where it enters the equations and how strong it is.

    ``name`` labels its row in the budget (the element name, with a suffix
    where one element has several sources); ``element`` is the element.
    ``injection`` lists (row, coefficient) pairs of its unit excitation.
    Density ``white_density + flicker_at_1Hz · (1 Hz / f)^slope``, in A²/Hz
    or V²/Hz as its injection is a current or a voltage.
    """

    name: str
    element: str
    mechanism: str
    value: str
    injection: tuple[tuple[int, float], ...]
    white_density: float
    flicker_at_1Hz: float = 0.0
    slope: float = 1.0
    temperature_K: float | None = None  # thermal sources: the temperature used


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
    """What the mechanisms need: the system, the analysis temperature (K)
    and, on demand, the DC solution vector."""

    system: MnaSystem
    temperature_K: float
    dc_solution: Callable[[], np.ndarray]

    def dc_voltage(self, nodes: tuple[str, str]) -> float:
        x = self.dc_solution()
        a, b = (self.system.node_row(n) for n in nodes)
        return float((x[a] if a >= 0 else 0.0) - (x[b] if b >= 0 else 0.0))


# V/√Hz or A/√Hz: the amplitude densities netnoise computes with (the noise of a resistor in
# topology.RESISTANCE_RANGE lies well inside).  The square (the power density) of a value outside
# underflows to 0 or overflows, and its products with squared transfers leave the doubles.
AMPLITUDE_RANGE = (1e-60, 1e30)


def _power_density(owner: str, what: str, amplitude: float, unit: str, corner_Hz: float = 0.0, slope: float = 1.0):
    """(white, 1/f part at 1 Hz) power densities of the amplitude density ``amplitude`` with a
    1/f^slope part below ``corner_Hz``: amplitude² and amplitude²·corner^slope, checked where
    they are formed; CircuitError naming ``owner`` and the value when they would not be
    normal floating-point numbers."""
    low, high = AMPLITUDE_RANGE
    if not (low <= amplitude <= high):
        raise CircuitError(
            f"{owner}: {what} {amplitude:g} {unit} is outside the range netnoise computes correctly "
            f"({low:g} to {high:g} {unit}): its square, the noise power density, would be shown as 0 or "
            "overflow. Give a value in the range (leave the noise out for a noiseless part)"
        )
    white = amplitude**2
    if corner_Hz <= 0.0:
        return white, 0.0
    if 2.0 * math.log10(amplitude) + slope * math.log10(corner_Hz) > 2.0 * math.log10(high):
        raise CircuitError(
            f"{owner}: {what} {amplitude:g} {unit} with a 1/f corner at {corner_Hz:g} Hz gives a density at "
            f"1 Hz above ({high:g} {unit})², beyond what netnoise computes correctly: lower the corner frequency"
        )
    return white, white * corner_Hz**slope


def _current_between(system: MnaSystem, nodes) -> tuple[tuple[int, float], ...]:
    rows = []
    for node, sign in zip(nodes, (1.0, -1.0)):
        row = system.node_row(node)
        if row >= 0:
            rows.append((row, sign))
    return tuple(rows)


def thermal_sources(ctx: NoiseContext) -> Iterator[NoiseSource]:
    """Johnson–Nyquist current noise 4kT/R of every resistor not marked noiseless."""
    for element in ctx.system.circuit.elements:
        if isinstance(element, ck.Resistor) and not element.noiseless:
            injection = _current_between(ctx.system, element.nodes)
            if not injection:  # both ends on ground: it cannot reach the output
                continue
            t = ctx.temperature_K if element.temperature_celsius is None else element.temperature_celsius + ZERO_CELSIUS_K
            yield NoiseSource(
                name=element.name,
                element=element.name,
                mechanism="thermal",
                value=format_quantity(element.resistance, "Ω"),
                injection=injection,
                white_density=4.0 * BOLTZMANN * t / element.resistance,
                temperature_K=t,
            )


def excess_sources(ctx: NoiseContext) -> Iterator[NoiseSource]:
    """1/f excess noise of resistors with a noise index, from their DC voltage."""
    for element in ctx.system.circuit.elements:
        if isinstance(element, ck.Resistor) and element.noise_index_dB is not None and not element.noiseless:
            injection = _current_between(ctx.system, element.nodes)
            v_dc = ctx.dc_voltage(element.nodes)
            if not injection or v_dc == 0.0:
                continue
            # V rms per V of DC, per decade; the exponent checked before it is raised (ni=1e300 overflows)
            log_noise = element.noise_index_dB / 20.0 - 6.0 + math.log10(abs(v_dc))
            low, high = AMPLITUDE_RANGE
            if not (math.log10(low) <= log_noise <= math.log10(high)):
                raise CircuitError(
                    f"{element.name}: noise index {element.noise_index_dB:g} dB at {abs(v_dc):g} V of DC gives an "
                    f"excess noise {'above 1e300' if log_noise > 300 else 'below 1e-300' if log_noise < -300 else f'of {10.0**log_noise:.3g}'} "
                    "V per decade, outside the range netnoise computes "
                    f"correctly ({low:g} to {high:g} V): give a noise index in the makers' range (about -50 to +30 dB)"
                )
            per_volt = 10.0 ** (element.noise_index_dB / 20.0) * 1e-6
            # voltage density K/f with ∫_f^{10f} K/f df = K·ln 10 = (per_volt·V_dc)²;
            # in parallel as a current: K/R²
            k_voltage = (per_volt * v_dc) ** 2 / math.log(10.0)
            yield NoiseSource(
                name=f"{element.name} (excess)",
                element=element.name,
                mechanism="excess",
                value=f"{format_quantity(element.resistance, 'Ω')}, NI {element.noise_index_dB:g} dB at {format_quantity(abs(v_dc), 'V')}",
                injection=injection,
                white_density=0.0,
                flicker_at_1Hz=k_voltage / element.resistance**2,
            )


def shot_sources(ctx: NoiseContext) -> Iterator[NoiseSource]:
    """Shot noise 2q|I| of current sources marked as junction currents (Schottky 1918)."""
    for element in ctx.system.circuit.elements:
        if isinstance(element, ck.CurrentSource) and element.shot:
            injection = _current_between(ctx.system, element.nodes)
            if injection and element.dc != 0.0:
                yield NoiseSource(
                    name=element.name,
                    element=element.name,
                    mechanism="shot",
                    value=format_quantity(element.dc, "A") + " DC",
                    injection=injection,
                    white_density=2.0 * ELEMENTARY_CHARGE * abs(element.dc),
                )


def _spec_density(spec: ck.NoiseSpec, owner: str, unit: str) -> tuple[float, float, float]:
    white, flicker = _power_density(owner, "noise density", spec.white, unit, spec.corner_Hz, spec.slope)
    return white, flicker, spec.slope


def explicit_sources(ctx: NoiseContext) -> Iterator[NoiseSource]:
    """Densities given in the netlist to independent V (in series) and I sources."""
    for element in ctx.system.circuit.elements:
        spec = getattr(element, "noise", None)
        if spec is None or spec.white <= 0.0:
            continue
        if isinstance(element, ck.VoltageSource):
            injection = ((ctx.system.branch_index[ck.name_key(element.name)], 1.0),)
            unit = "V/√Hz"
        else:
            injection = _current_between(ctx.system, element.nodes)
            unit = "A/√Hz"
        white, flicker, slope = _spec_density(spec, element.name, unit)
        corner = f", corner {format_quantity(spec.corner_Hz, 'Hz')}" if spec.corner_Hz > 0 else ""
        shot_too = isinstance(element, ck.CurrentSource) and element.shot
        yield NoiseSource(
            name=f"{element.name} (noise)" if shot_too else element.name,
            element=element.name,
            mechanism="source",
            value=format_quantity(spec.white, unit) + corner,
            injection=injection,
            white_density=white,
            flicker_at_1Hz=flicker,
            slope=slope,
        )


def amplifier_sources(ctx: NoiseContext) -> Iterator[NoiseSource]:
    """Input voltage noise and the two input current noises of each amplifier."""
    system = ctx.system
    for element in system.circuit.elements:
        if not isinstance(element, ck.OpAmp):
            continue
        model = element.model
        if model.voltage_noise > 0:
            white, flicker = _power_density(
                f"{element.name} (model {model.name})", "en =", model.voltage_noise, "V/√Hz", model.voltage_noise_corner_Hz
            )
            p1 = system.internal_index[f"{ck.name_key(element.name)}#p1"]
            yield NoiseSource(
                name=f"{element.name} (voltage)",
                element=element.name,
                mechanism="amplifier-voltage",
                value=f"{model.name}: {format_quantity(model.voltage_noise, 'V/√Hz')}",
                injection=((p1, system.amplifier_input_transconductance(element)),),
                white_density=white,
                flicker_at_1Hz=flicker,
            )
        if model.current_noise > 0:
            white, flicker = _power_density(
                f"{element.name} (model {model.name})", "in =", model.current_noise, "A/√Hz", model.current_noise_corner_Hz
            )
            for pin, label in zip(element.nodes[:2], ("in+", "in-")):
                injection = _current_between(system, (pin, ck.GROUND))
                if injection:
                    yield NoiseSource(
                        name=f"{element.name} ({label})",
                        element=element.name,
                        mechanism="amplifier-current",
                        value=f"{model.name}: {format_quantity(model.current_noise, 'A/√Hz')}",
                        injection=injection,
                        white_density=white,
                        flicker_at_1Hz=flicker,
                    )


MECHANISMS: tuple[Callable[[NoiseContext], Iterator[NoiseSource]], ...] = (
    thermal_sources,
    excess_sources,
    shot_sources,
    explicit_sources,
    amplifier_sources,
)


def collect_noise_sources(
    system: MnaSystem, temperature_K: float, dc_solution: Callable[[], np.ndarray] | None = None
) -> NoiseSources:
    """Every noise source of the circuit at ``temperature_K`` kelvin.

    ``dc_solution`` returns the DC solution vector; it is called only if a
    mechanism needs it (excess noise).
    """
    if dc_solution is None:
        from netnoise.engine.dc import solve_operating_point

        def dc_solution():
            return solve_operating_point(system)

    ctx = NoiseContext(system=system, temperature_K=temperature_K, dc_solution=_once(dc_solution))
    sources = tuple(s for mechanism in MECHANISMS for s in mechanism(ctx))
    rows, cols, vals = [], [], []
    for k, source in enumerate(sources):
        for row, coefficient in source.injection:
            rows.append(row)
            cols.append(k)
            vals.append(coefficient)
    injection = sp.csc_matrix((vals, (rows, cols)), shape=(system.size, len(sources)))

    def column(attribute):
        out = np.array([getattr(s, attribute) for s in sources], dtype=float)
        out.setflags(write=False)
        return out

    return NoiseSources(
        sources=sources,
        injection=injection,
        white_density=column("white_density"),
        flicker_at_1Hz=column("flicker_at_1Hz"),
        slope=column("slope"),
    )


def _once(function):
    cache = []

    def wrapper():
        if not cache:
            cache.append(function())
        return cache[0]

    return wrapper

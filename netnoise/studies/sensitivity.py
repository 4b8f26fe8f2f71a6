"""What to change: the sensitivity of the output noise to every element value.

For the output noise power ``P = ∫ Σ_k S_k |t_k|² df`` with ``t_k = zᵀb_k``
(``Yᵀz = c``), a change of one value p changes Y and the source densities:

    ∂P/∂p = ∫ [ −2 Re( zᵀ (∂Y/∂p) y ) + Σ_k (∂S_k/∂p) |t_k|² ] df,
    y = Y⁻¹ v,   v = Σ_k S_k conj(t_k) b_k,

so one extra (forward) solve per frequency serves every element at once
(the adjoint method; Director and Rohrer, IEEE Trans. Circuit Theory 1969).
∂Y/∂p is each element's own stamp differentiated (central difference of
its stamps, which are smooth in p); ∂S/∂p the same of its noise densities.
With diodes or transistors a value also moves the operating point: ∂Y/∂p and
∂S/∂p are then central differences of the whole circuit linearised again.
The temperature enters through the thermal densities, ∝ T.

Reported as the percent change of the rms total per percent change of the
value: (p / 2P) · ∂P/∂p.  The speed of response beside it (bandwidth and
settling time, per percent of the value) comes from central differences of
the response, which is cheap next to the noise.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from netnoise.circuit.elements.base import Element
from netnoise.engine.analysis import PreparedAnalysis
from netnoise.engine.integrate import integrate_band
from netnoise.engine.mna import _Layout, _Stamps
from netnoise.engine.noise_sources import collect_noise_sources
from netnoise.engine.operating_point import biased, is_nonlinear
from netnoise.engine.transfer import solver_for

__all__ = ["Sensitivity", "sensitivities", "TEMPERATURE"]

TEMPERATURE = "temp"  # the name of the analysis temperature among the sensitivities
_STEP = 1e-6  # relative step of the central differences of stamps and densities
_TOP_FACTOR = 1000.0  # infinite band: integrate to this many times the highest pole, then a 1/f² tail


@dataclass(frozen=True)
class Sensitivity:
    """How the output noise (and the speed) follow one value.

    ``element`` the element (or ``"temp"``), ``value`` its value in ``unit``;
    ``rms_pct_per_pct``: % change of the rms output noise per % change of
    the value; ``bandwidth_pct_per_pct`` and ``settling_pct_per_pct`` the same
    for the signal path's bandwidth and settling time (None without an input
    source, or a settling accuracy)."""

    element: str
    value: float
    unit: str
    rms_pct_per_pct: float
    bandwidth_pct_per_pct: float | None = None
    settling_pct_per_pct: float | None = None


def _stamp_entries(element: Element, stamps: _Stamps):
    """(G entries, C entries) of one element alone, each (rows, cols, values)."""
    probe = _Stamps(stamps.circuit, stamps.layout)
    type(element).stamp_all([element], probe)  # type: ignore[attr-defined]
    out = []
    for matrix in ("G", "C"):
        m = probe.matrix(matrix, stamps.layout.size).tocoo()
        out.append((m.row, m.col, m.data))
    return out


def _rebiased(prepared: PreparedAnalysis, element: Element, factor: float):
    """The system and DC solution with ``element``'s value times ``factor`` and every
    diode and transistor biased again at the operating point that value gives."""
    problem = prepared.problem
    p = float(element.primary_value or 0.0)
    changed = problem.system.circuit.with_values({element.name: p * factor})
    circuit, solution = biased(changed, problem.settings.temperature_K)
    return problem.system.refilled(circuit), solution


def _fixed(x: np.ndarray):
    """A DC solution already found, as the noise collection asks for it."""
    return lambda: x


def _system_entries(system) -> list[tuple[np.ndarray, np.ndarray, np.ndarray]]:
    out = []
    for m in (system.G.tocoo(), system.C.tocoo()):
        out.append((m.row, m.col, m.data))
    return out


def _derivative_stamps(elements: list[Element], stamps: _Stamps, n: int, prepared: PreparedAnalysis | None = None):
    """Stacked p·∂G/∂p and p·∂C/∂p of every element: (rows, cols, values, element index) each.
    With diodes or transistors (``prepared`` given), the whole linearised system's change:
    a value moves the operating point and with it every device's small-signal model."""
    parts: dict[str, list[tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]]] = {"G": [], "C": []}
    for index, element in enumerate(elements):
        p = float(element.primary_value or 0.0)
        if prepared is not None:
            entries_up = _system_entries(_rebiased(prepared, element, 1 + _STEP)[0])
            entries_down = _system_entries(_rebiased(prepared, element, 1 - _STEP)[0])
        else:
            up, down = element.with_value(p * (1 + _STEP)), element.with_value(p * (1 - _STEP))
            entries_up, entries_down = _stamp_entries(up, stamps), _stamp_entries(down, stamps)
        for (matrix, plus), (_, minus) in zip(zip("GC", entries_up), zip("GC", entries_down)):
            diff = (
                sp.coo_matrix((plus[2], (plus[0], plus[1])), shape=(n, n))
                - sp.coo_matrix((minus[2], (minus[0], minus[1])), shape=(n, n))
            ).tocoo()
            parts[matrix].append((diff.row, diff.col, diff.data / (2 * _STEP), np.full(diff.nnz, index)))
    return {
        m: tuple(np.concatenate([x[i] for x in parts[m]]) if parts[m] else np.zeros(0) for i in range(4)) for m in parts
    }


def _density_derivatives(prepared: PreparedAnalysis, elements: list[Element]):
    """p·∂W/∂p and p·∂F/∂p (E, K): the change of every source's white and 1/f level."""
    problem = prepared.problem
    k = len(problem.sources)
    dw, df = np.zeros((len(elements), k)), np.zeros((len(elements), k))
    base = problem.system
    circuit = base.circuit
    t = problem.settings.temperature_K
    for index, element in enumerate(elements):
        p = float(element.primary_value or 0.0)
        levels: list[tuple[np.ndarray, np.ndarray]] = []
        for factor in (1 + _STEP, 1 - _STEP):
            if is_nonlinear(circuit):  # the devices' noise follows their operating point
                changed, solution = _rebiased(prepared, element, factor)
                sources = collect_noise_sources(changed, t, None if solution is None else _fixed(solution.x))
            else:
                changed = base.refilled(circuit.with_values({element.name: p * factor}))
                sources = collect_noise_sources(changed, t)
            if len(sources) != k:  # a source appeared or vanished (a DC voltage through zero)
                levels = []
                break
            levels.append((sources.white_density, sources.flicker_at_1Hz))
        if levels:
            dw[index] = (levels[0][0] - levels[1][0]) / (2 * _STEP)
            df[index] = (levels[0][1] - levels[1][1]) / (2 * _STEP)
    return dw, df


def noise_sensitivities(prepared: PreparedAnalysis) -> tuple[list[Element], np.ndarray, float]:
    """(elements, p·∂P/∂p per element and then T·∂P/∂T (V²), P (V²))."""
    problem = prepared.problem
    system = problem.system
    settings = problem.settings
    elements = [e for e in system.circuit.elements if e.value_field is not None and e.primary_value]
    layout = _Layout(system.node_index, system.branch_index, system.internal_index, system.unknowns)
    stamps = _Stamps(system.circuit, layout)
    nonlinear = is_nonlinear(system.circuit)
    derivs = _derivative_stamps(elements, stamps, system.size, prepared if nonlinear else None)
    dw, dflick = _density_derivatives(prepared, elements)
    if nonlinear:  # the temperature moves the operating point too: a further column, like an element's
        derivs, dw, dflick = _with_temperature(prepared, derivs, dw, dflick, len(elements))
    sources = problem.sources
    injection = sources.injection.tocsc()
    thermal = np.array(
        [
            s.temperature_K is not None and s.temperature_K == settings.temperature_K and s.mechanism == "thermal"
            for s in sources.sources
        ]
    )
    solver = solver_for(system, problem.options)
    count = len(elements)
    columns = count + 1 if nonlinear else count  # element columns, and the temperature's when it is one

    def rows(f: np.ndarray) -> np.ndarray:
        z = solver.solve(problem.selector, f)  # (F, n)
        t = (injection.T @ z.T).T  # (F, K)
        s = sources.density(f, "full")  # (K, F)
        power = np.abs(t) ** 2  # (F, K)
        out = np.zeros((count + 2, f.size))
        out[0] = np.einsum("kf,fk->f", s, power)
        weights = s.T * np.conj(t)  # (F, K)
        v = (injection @ weights.T).T  # (F, n)
        y = _forward(system, f, v, problem.options)
        sj = 2j * np.pi * f
        for matrix, scale in (("G", None), ("C", sj)):
            r, c, val, e = derivs[matrix]
            if not val.size:
                continue
            term = z[:, r] * val[None, :] * y[:, c]  # (F, entries)
            if scale is not None:
                term = term * scale[:, None]
            summed = np.zeros((f.size, columns), dtype=complex)
            np.add.at(summed.T, e, term.T)
            out[1 : columns + 1] += -2.0 * summed.real.T
        inverse_f = np.where(f > 0, 1.0 / np.where(f > 0, f, 1.0), 0.0)
        flick = dflick[:, :, None] * inverse_f[None, None, :] ** sources.slope[None, :, None]  # (E, K, F)
        out[1 : columns + 1] += np.einsum("ek,fk->ef", dw, power) + np.einsum("ekf,fk->ef", flick, power)
        if not nonlinear:
            out[count + 1] = np.einsum("kf,fk->f", s * thermal[:, None], power)  # T·∂P/∂T: thermal ∝ T
        return out

    low, high = settings.low, settings.high
    if math.isinf(high):
        poles = problem.poles_Hz()
        positive = poles[poles > 0] if poles is not None else np.zeros(0)
        top = float(np.max(positive)) * _TOP_FACTOR if positive.size else 1e9
        start = max(low, 0.0)
        band = integrate_band(
            rows,
            start,
            top,
            points_per_decade=settings.points_per_decade,
            groups=[slice(0, 1)],
            linear_below=(float(np.min(positive)) / 100 if positive.size else None) if start == 0 else None,
        )
        values = band.values + top * rows(np.array([top]))[:, 0]  # the tail beyond top, as 1/f²
    else:
        band = integrate_band(
            rows,
            low,
            high,
            points_per_decade=settings.points_per_decade,
            groups=[slice(0, 1)],
            linear_below=high * 1e-4 if low == 0 else None,
        )
        values = band.values
    return elements, values[1:], float(values[0])


def _with_temperature(prepared: PreparedAnalysis, derivs, dw: np.ndarray, dflick: np.ndarray, index: int):
    """``derivs``, ``dw``, ``dflick`` with T·∂/∂T appended as column ``index``: the circuit biased
    again at T(1 ± step), its matrices and its noise sources at that temperature."""
    problem = prepared.problem
    system, t = problem.system, problem.settings.temperature_K
    k = len(problem.sources)
    found = []
    for factor in (1 + _STEP, 1 - _STEP):
        circuit, solution = biased(system.circuit, t * factor)
        changed = system.refilled(circuit)
        sources = collect_noise_sources(changed, t * factor, None if solution is None else _fixed(solution.x))
        found.append((_system_entries(changed), sources))
    n = system.size
    out = {}
    for which, matrix in enumerate("GC"):
        plus, minus = found[0][0][which], found[1][0][which]
        diff = (
            sp.coo_matrix((plus[2], (plus[0], plus[1])), shape=(n, n))
            - sp.coo_matrix((minus[2], (minus[0], minus[1])), shape=(n, n))
        ).tocoo()
        r, c, v, e = derivs[matrix]
        out[matrix] = (
            np.concatenate([r, diff.row]),
            np.concatenate([c, diff.col]),
            np.concatenate([v, diff.data / (2 * _STEP)]),
            np.concatenate([e, np.full(diff.nnz, index)]).astype(int),
        )
    row_w, row_f = np.zeros((1, k)), np.zeros((1, k))
    if len(found[0][1]) == k and len(found[1][1]) == k:
        row_w[0] = (found[0][1].white_density - found[1][1].white_density) / (2 * _STEP)
        row_f[0] = (found[0][1].flicker_at_1Hz - found[1][1].flicker_at_1Hz) / (2 * _STEP)
    return out, np.vstack([dw, row_w]), np.vstack([dflick, row_f])


def _forward(system, f: np.ndarray, v: np.ndarray, options) -> np.ndarray:
    """(F, n) y = Y(f)⁻¹ v(f): batched dense where the adjoint solver takes its dense path (small
    or densely coupled systems), one factorisation per frequency else."""
    if solver_for(system, options).method == "dense":
        g, c = system.G.toarray(), system.C.toarray()
        y = g[None] + (2j * np.pi * f)[:, None, None] * c[None]
        return np.linalg.solve(y, v[..., None])[..., 0]
    from netnoise.engine.factor import factor

    return np.stack([factor(system, fi, options).solve(v[i]) for i, fi in enumerate(f)])


def sensitivities(
    prepared: PreparedAnalysis, settle: float | None = None, speed: bool = True
) -> tuple[Sensitivity, ...]:
    """The sensitivity of the output noise to every element value and to the
    temperature, largest effect first; with an input source (and ``speed``),
    the bandwidth's and (with ``settle``) the settling time's beside it."""
    from netnoise.studies.response import speed_of_response

    elements, scaled, total = noise_sensitivities(prepared)
    if total <= 0:
        return ()
    problem = prepared.problem
    path = problem.input_vector if speed else None
    base = (
        speed_of_response(problem.system, problem.selector, path, settle, problem.options) if path is not None else None
    )
    out = []
    for index, element in enumerate(elements):
        bw = settling = None
        if base is not None and path is not None:
            p = float(element.primary_value or 0.0)
            varied = []
            for factor in (1 + 1e-4, 1 - 1e-4):
                system = problem.system.refilled(problem.system.circuit.with_values({element.name: p * factor}))
                try:
                    varied.append(speed_of_response(system, problem.selector, path, settle, problem.options))
                except Exception:  # noqa: BLE001 - a change that breaks the response leaves its figure out
                    varied = []
                    break
            if varied:
                if base.bandwidth_Hz and varied[0].bandwidth_Hz and varied[1].bandwidth_Hz:
                    bw = (math.log(varied[0].bandwidth_Hz) - math.log(varied[1].bandwidth_Hz)) / (2e-4)
                if base.settling_time_s and varied[0].settling_time_s and varied[1].settling_time_s:
                    settling = (math.log(varied[0].settling_time_s) - math.log(varied[1].settling_time_s)) / (2e-4)
        out.append(
            Sensitivity(
                element.name,
                float(element.primary_value or 0.0),
                element.unit,
                scaled[index] / (2 * total),
                bw,
                settling,
            )
        )
    out.append(Sensitivity(TEMPERATURE, problem.settings.temperature_K, "K", scaled[-1] / (2 * total)))
    out.sort(key=lambda s: -abs(s.rms_pct_per_pct))
    return tuple(out)

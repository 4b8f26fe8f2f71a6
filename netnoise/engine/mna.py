"""Modified nodal analysis: the circuit as ``(G + j2πf·C) x = b``.

Unknowns ``x`` are the non-ground node voltages (in ``Circuit.nodes`` order)
followed by one branch current for every element whose current the equations
need (V, E, H and L elements, in netlist order).  Row ``i`` of a node is its
Kirchhoff current law: the sum of currents leaving the node through elements
equals the current injected into it.

Stamps (``a``, ``b`` the element's nodes, ``k`` its branch):

=========  =====================================================================
R          G[a,a] += 1/R, G[b,b] += 1/R, G[a,b] -= 1/R, G[b,a] -= 1/R
C          the same pattern in the C matrix
L          KCL: G[a,k] += 1, G[b,k] -= 1;  branch: v_a - v_b - sL·i_k = 0
K          C[k1,k2] -= M, C[k2,k1] -= M with M = k·sqrt(L1·L2)
V          KCL as L;  branch: v_a - v_b = V
E          KCL as L;  branch: v_a - v_b - gain·(v_c - v_d) = 0
G          KCL rows a, b: ±gm at columns c, d
F          KCL rows a, b: ±gain at the controlling V's branch column
H          KCL as L;  branch: v_a - v_b - r·i_ctrl = 0
amplifier  internal node p1: gm·(v+ - v-) into g1 ∥ c1 (DC gain gm/g1 = A0,
           pole GBW/A0); optional p2: unity-gain g2 ∥ c2 stage (second pole);
           output branch: v_out - v_p - r_out·i_k = 0; input capacitances in C
=========  =====================================================================

Amplifier internal unknowns (``internal_index``, keys ``"<name>#p1"``,
``"<name>#p2"``) come after the branch currents.  Their conductances are
``AMPLIFIER_STAGE_CONDUCTANCE``; a unit noise voltage at the amplifier's
input is the current ``gm`` injected at p1.

The sign of the C entries of branch rows is negative (``-L``), so the whole
system is ``G + sC`` with ``s = j2πf``.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp

from netnoise import circuit as ck
from netnoise.errors import CircuitError

__all__ = ["MnaSystem", "assemble", "BRANCH_ELEMENTS"]

AMPLIFIER_STAGE_CONDUCTANCE = 1e-3  # S, internal pole nodes of the amplifier model

BRANCH_ELEMENTS = (
    ck.OpAmp,
    ck.VoltageSource,
    ck.VoltageControlledVoltageSource,
    ck.CurrentControlledVoltageSource,
    ck.Inductor,
)


def _frozen_csr(m: sp.spmatrix) -> sp.csr_matrix:
    out = sp.csr_matrix(m)
    out.sum_duplicates()
    out.eliminate_zeros()
    out.data.setflags(write=False)
    return out


@dataclass(frozen=True, eq=False)
class MnaSystem:
    """Assembled MNA matrices of a circuit.

    ``G`` (siemens and dimensionless) and ``C`` (farads, henries) are CSR
    matrices of shape (n, n), read-only.  ``unknowns[i]`` labels unknown i:
    ``"v(node)"`` or ``"i(element)"``.
    """

    circuit: ck.Circuit
    G: sp.csr_matrix
    C: sp.csr_matrix
    node_index: dict[str, int]  # canonical node name -> row; ground absent
    branch_index: dict[str, int]  # name_key(element) -> row of its branch current
    unknowns: tuple[str, ...] = field(default=())
    internal_index: dict[str, int] = field(default_factory=dict)  # "<name>#p1" -> row

    def amplifier_input_transconductance(self, amplifier: ck.OpAmp) -> float:
        """gm of an amplifier's first stage (S): a unit input noise voltage
        is the current gm injected at its internal node p1."""
        return amplifier.model.open_loop_gain * AMPLIFIER_STAGE_CONDUCTANCE

    @property
    def size(self) -> int:
        return self.G.shape[0]

    def node_row(self, node: str) -> int:
        """Row of ``node``'s voltage; -1 for ground.  CircuitError if unknown."""
        row = self.node_index.get(node)  # canonical names: the common case, one look-up
        if row is not None:
            return row
        key = ck.name_key(node)
        if key in ("0", "gnd"):
            return -1
        try:
            return self.node_index[key]
        except KeyError:
            close = difflib.get_close_matches(key, list(self.node_index), n=3)
            hint = f"; did you mean {', '.join(close)}?" if close else ""
            raise CircuitError(f"node '{node}' does not exist in the circuit{hint}") from None

    def node_pair_vector(self, plus: str, minus: str) -> np.ndarray:
        """Dense vector e with e·x = v(plus) - v(minus)."""
        out = np.zeros(self.size)
        for node, sign in ((plus, 1.0), (minus, -1.0)):
            row = self.node_row(node)
            if row >= 0:
                out[row] += sign
        return out

    def excitation_vector(self, source_name: str) -> tuple[np.ndarray, str]:
        """Right-hand side of a unit excitation of independent source
        ``source_name`` and its unit ("V" or "A")."""
        try:
            element = self.circuit.element(source_name)
        except KeyError:
            names = [e.name for e in self.circuit.elements if isinstance(e, (ck.VoltageSource, ck.CurrentSource))]
            close = difflib.get_close_matches(source_name, names, n=3, cutoff=0.5)
            known = ", ".join(names) if names else "none in this circuit"
            hint = f"did you mean {', '.join(close)}?" if close else f"independent sources: {known}"
            raise CircuitError(f"input source '{source_name}' does not exist; {hint}") from None
        out = np.zeros(self.size)
        if isinstance(element, ck.VoltageSource):
            out[self.branch_index[ck.name_key(element.name)]] = 1.0
            return out, "V"
        if isinstance(element, ck.CurrentSource):
            a, b = (self.node_row(n) for n in element.nodes)
            # positive current flows from a through the source to b
            if a >= 0:
                out[a] -= 1.0
            if b >= 0:
                out[b] += 1.0
            return out, "A"
        raise CircuitError(
            f"input source '{source_name}' is a {type(element).__name__}; "
            "the input must be an independent V or I source"
        )


def assemble(circuit: ck.Circuit) -> MnaSystem:
    """Build the MNA matrices of ``circuit``; CircuitError names bad elements."""
    node_index = {node: i for i, node in enumerate(circuit.nodes)}
    n_nodes = len(node_index)
    branch_index: dict[str, int] = {}
    labels = [f"v({node})" for node in node_index]
    for element in circuit.elements:
        if isinstance(element, BRANCH_ELEMENTS):
            branch_index[ck.name_key(element.name)] = n_nodes + len(branch_index)
            labels.append(f"i({element.name})")
    internal_index: dict[str, int] = {}
    for element in circuit.elements:
        if isinstance(element, ck.OpAmp):
            stages = ("p1", "p2") if element.model.second_pole_Hz else ("p1",)
            for stage in stages:
                internal_index[f"{ck.name_key(element.name)}#{stage}"] = n_nodes + len(branch_index) + len(internal_index)
                labels.append(f"v({element.name}#{stage})")
    n = n_nodes + len(branch_index) + len(internal_index)

    g_rows: list[int] = []
    g_cols: list[int] = []
    g_vals: list[float] = []
    c_rows: list[int] = []
    c_cols: list[int] = []
    c_vals: list[float] = []

    def node(name: str) -> int:
        return -1 if name == ck.GROUND else node_index[name]

    def put(rows, cols, vals, r, c, v):
        if r >= 0 and c >= 0 and v != 0.0:
            rows.append(r)
            cols.append(c)
            vals.append(v)

    def g(r, c, v):
        put(g_rows, g_cols, g_vals, r, c, v)

    def cap(r, c, v):
        put(c_rows, c_cols, c_vals, r, c, v)

    def admittance(stamp, a, b, y):
        stamp(a, a, y)
        stamp(b, b, y)
        stamp(a, b, -y)
        stamp(b, a, -y)

    def branch_kcl(a, b, k):
        g(a, k, 1.0)
        g(b, k, -1.0)
        g(k, a, 1.0)
        g(k, b, -1.0)

    def controlling_branch(element) -> int:
        key = ck.name_key(element.control_source)
        target = branch_index.get(key)
        if target is None or not isinstance(circuit.element(element.control_source), ck.VoltageSource):
            raise CircuitError(
                f"{element.name}: controlling source '{element.control_source}' is not a voltage source "
                "of this circuit (F and H elements sense the current through a named V source)"
            )
        return target

    inductances: dict[str, tuple[int, float]] = {}
    # resistors and capacitors, the bulk of a large circuit, are stamped in one vectorised step
    passive = {ck.Resistor: ([], [], []), ck.Capacitor: ([], [], [])}
    for element in circuit.elements:
        kind = type(element)
        if kind in passive:
            ends, others, values = passive[kind]
            ends.append(node(element.nodes[0]))
            others.append(node(element.nodes[1]))
            if kind is ck.Resistor:
                _check_resistance(element)
                values.append(1.0 / element.resistance)
            else:
                values.append(element.capacitance)
            continue
        if isinstance(element, ck.MutualCoupling):
            continue
        a, b = (node(x) for x in element.nodes[:2])
        k = branch_index.get(ck.name_key(element.name), -1)
        if isinstance(element, ck.Inductor):
            branch_kcl(a, b, k)
            cap(k, k, -element.inductance)
            inductances[ck.name_key(element.name)] = (k, element.inductance)
        elif isinstance(element, ck.VoltageSource):
            branch_kcl(a, b, k)
        elif isinstance(element, ck.CurrentSource):
            pass  # only a right-hand side
        elif isinstance(element, ck.VoltageControlledVoltageSource):
            branch_kcl(a, b, k)
            c, d = (node(x) for x in element.control_nodes)
            g(k, c, -element.gain)
            g(k, d, element.gain)
        elif isinstance(element, ck.VoltageControlledCurrentSource):
            c, d = (node(x) for x in element.control_nodes)
            gm = element.transconductance
            g(a, c, gm)
            g(a, d, -gm)
            g(b, c, -gm)
            g(b, d, gm)
        elif isinstance(element, ck.CurrentControlledCurrentSource):
            kc = controlling_branch(element)
            g(a, kc, element.gain)
            g(b, kc, -element.gain)
        elif isinstance(element, ck.CurrentControlledVoltageSource):
            kc = controlling_branch(element)
            branch_kcl(a, b, k)
            g(k, kc, -element.transresistance)
        elif isinstance(element, ck.OpAmp):
            _stamp_amplifier(element, [node(x) for x in element.nodes], k, internal_index, g, cap, admittance)
        else:  # pragma: no cover - the elaborator only produces the types above
            raise CircuitError(f"{element.name}: element type {type(element).__name__} is not supported")

    for element in circuit.elements:
        if isinstance(element, ck.MutualCoupling):
            (k1, l1), (k2, l2) = (_coupled(element, name, inductances) for name in element.inductors)
            m = element.coupling * np.sqrt(l1 * l2)
            cap(k1, k2, -m)
            cap(k2, k1, -m)

    G = _coo(n, (g_rows, g_cols, g_vals), _admittance_stamps(*passive[ck.Resistor]))
    C = _coo(n, (c_rows, c_cols, c_vals), _admittance_stamps(*passive[ck.Capacitor]))
    return MnaSystem(
        circuit=circuit,
        G=_frozen_csr(G),
        C=_frozen_csr(C),
        node_index=node_index,
        branch_index=branch_index,
        unknowns=tuple(labels),
        internal_index=internal_index,
    )


def _admittance_stamps(a: list[int], b: list[int], y: list[float]):
    """(rows, cols, values) of two-terminal admittances y between nodes a and b (-1: ground)."""
    a, b, y = np.asarray(a, dtype=np.int64), np.asarray(b, dtype=np.int64), np.asarray(y, dtype=float)
    rows = np.concatenate([a, b, a, b])
    cols = np.concatenate([a, b, b, a])
    vals = np.concatenate([y, y, -y, -y])
    keep = (rows >= 0) & (cols >= 0) & (vals != 0.0)
    return rows[keep], cols[keep], vals[keep]


def _coo(n: int, *parts) -> sp.coo_matrix:
    rows = np.concatenate([np.asarray(p[0], dtype=np.int64) for p in parts])
    cols = np.concatenate([np.asarray(p[1], dtype=np.int64) for p in parts])
    vals = np.concatenate([np.asarray(p[2], dtype=float) for p in parts])
    return sp.coo_matrix((vals, (rows, cols)), shape=(n, n))


def _stamp_amplifier(element: ck.OpAmp, pins: list[int], k: int, internal_index, g, cap, admittance) -> None:
    """The amplifier macro-model; see the stamp table in the module docstring."""
    model = element.model
    plus, minus, out = pins
    key = ck.name_key(element.name)
    g1 = AMPLIFIER_STAGE_CONDUCTANCE
    gm = model.open_loop_gain * g1
    p1 = internal_index[f"{key}#p1"]
    g(p1, p1, g1)
    cap(p1, p1, g1 * model.open_loop_gain / (2 * np.pi * model.gain_bandwidth_Hz))  # pole at GBW/A0
    g(p1, plus, -gm)  # current gm·(v+ - v-) flows into p1
    g(p1, minus, gm)
    last = p1
    if model.second_pole_Hz:
        p2 = internal_index[f"{key}#p2"]
        g(p2, p2, g1)
        cap(p2, p2, g1 / (2 * np.pi * model.second_pole_Hz))
        g(p2, p1, -g1)
        last = p2
    g(out, k, 1.0)  # KCL: the output branch current leaves node out into the amplifier
    g(k, out, 1.0)
    g(k, last, -1.0)
    g(k, k, -model.output_resistance)
    for pin in (plus, minus):
        admittance(cap, pin, -1, model.input_capacitance)
    admittance(cap, plus, minus, model.differential_capacitance)


def _check_resistance(element: ck.Resistor) -> None:
    r = element.resistance
    if not np.isfinite(r):
        raise CircuitError(f"{element.name}: resistance {r} is not a finite number")
    if r == 0.0:
        raise CircuitError(
            f"{element.name}: zero resistance. A 0 Ω resistor has no defined thermal noise "
            "(its noise current 4kT/R is infinite); replace it by a wire (merge the nodes) "
            "or give it a small positive value"
        )
    if r < 0.0:
        raise CircuitError(
            f"{element.name}: negative resistance ({r:g} Ω). Thermal noise 4kT/R is defined only "
            "for a passive, positive resistance; model active behaviour with a controlled source"
        )


def _coupled(element: ck.MutualCoupling, name: str, inductances: dict[str, tuple[int, float]]):
    try:
        return inductances[ck.name_key(name)]
    except KeyError:
        raise CircuitError(f"{element.name}: '{name}' is not an inductor of this circuit") from None

"""Modified nodal analysis: the circuit as ``(G + j2πf·C) x = b``.

Unknowns ``x`` are the non-ground node voltages (in ``Circuit.nodes`` order),
then one branch current for every element whose current the equations need
(V, E, H, L and amplifier outputs, in netlist order: ``"i(name)"``), then
the internal unknowns elements declare (``"v(name#label)"``, in netlist
order).  Row ``i`` of a node is its Kirchhoff current law: the sum of
currents leaving the node through elements equals the current injected
into it.

Each element kind stamps itself (see :mod:`netnoise.circuit.elements` and
the stamp table in each kind's docstring) through the :class:`_Stamps`
assembler below; kinds with many members (R, C) stamp them in one
vectorised step.  The sign of the C entries of branch rows is negative
(``-L``), so the whole system is ``G + sC`` with ``s = j2πf``.

The assembled system keeps its pattern: :meth:`MnaSystem.refilled` stamps a
circuit of the same structure with new values into the same sparsity
pattern, keeping the ordering of unknowns (and so every solver's setup).
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass, field
from itertools import repeat

import numpy as np
import scipy.sparse as sp

from netnoise import circuit as ck
from netnoise.circuit.elements.base import Element
from netnoise.constants import canonical_node
from netnoise.errors import CircuitError

__all__ = ["MnaSystem", "assemble"]


def _frozen_csr(m: sp.spmatrix) -> sp.csr_matrix:
    out = sp.csr_matrix(m)
    out.sum_duplicates()
    out.eliminate_zeros()
    out.data.setflags(write=False)
    return out


@dataclass(frozen=True)
class _Layout:
    """The ordering of unknowns: fixed by the circuit's structure alone."""

    node_index: dict[str, int]  # canonical node name -> row; ground absent
    branch_index: dict[str, int]  # name_key(element) -> row of its branch current
    internal_index: dict[str, int]  # "<name_key>#<label>" -> row
    unknowns: tuple[str, ...]

    @property
    def size(self) -> int:
        return len(self.unknowns)


def _layout(circuit: ck.Circuit) -> _Layout:
    node_index = {node: i for i, node in enumerate(circuit.nodes)}
    labels = [f"v({node})" for node in node_index]
    branch_index: dict[str, int] = {}
    for element in circuit.elements:
        if element.branch_count:
            branch_index[ck.name_key(element.name)] = len(labels)
            labels.append(f"i({element.name})")
    internal_index: dict[str, int] = {}
    for element in circuit.elements:
        for label in element.internal_nodes():
            internal_index[f"{ck.name_key(element.name)}#{label}"] = len(labels)
            labels.append(f"v({element.name}#{label})")
    return _Layout(node_index, branch_index, internal_index, tuple(labels))


class _Stamps:
    """Collects G and C entries as the element kinds stamp (see
    :class:`netnoise.circuit.elements.base.Stamper`)."""

    def __init__(self, circuit: ck.Circuit, layout: _Layout) -> None:
        self.circuit = circuit
        self.layout = layout
        self.parts: dict[str, list[tuple[np.ndarray, np.ndarray, np.ndarray]]] = {"G": [], "C": []}
        self.scalar: dict[str, tuple[list[int], list[int], list[float]]] = {"G": ([], [], []), "C": ([], [], [])}

    # rows
    def node(self, name: str) -> int:
        return -1 if name == ck.GROUND else self.layout.node_index[name]

    def node_rows(self, names: list[str]) -> np.ndarray:
        """Rows of ``names`` as one int64 array (-1: ground); KeyError as :meth:`node`."""
        rows = np.fromiter(map(self.layout.node_index.get, names, repeat(-1)), dtype=np.int64, count=len(names))
        strays = [names[at] for at in np.flatnonzero(rows < 0).tolist() if names[at] != ck.GROUND]
        if strays:
            self.node(strays[0])  # a name not in the circuit: its KeyError
        return rows

    def branch(self, element: Element) -> int:
        return self.layout.branch_index[ck.name_key(element.name)]

    def internal(self, element: Element, label: str) -> int:
        return self.layout.internal_index[f"{ck.name_key(element.name)}#{label}"]

    def element(self, name: str) -> Element:
        return self.circuit.element(name)

    def fail(self, message: str) -> CircuitError:
        return CircuitError(message)

    # entries
    def _put(self, matrix: str, r: int, c: int, v: float) -> None:
        if r >= 0 and c >= 0 and v != 0.0:
            rows, cols, vals = self.scalar[matrix]
            rows.append(r)
            cols.append(c)
            vals.append(v)

    def g(self, row: int, col: int, value: float) -> None:
        self._put("G", row, col, value)

    def c(self, row: int, col: int, value: float) -> None:
        self._put("C", row, col, value)

    def admittances(self, matrix: str, a: np.ndarray, b: np.ndarray, y: np.ndarray) -> None:
        """Two-terminal admittances ``y`` between rows ``a`` and ``b`` (-1: ground)."""
        rows = np.concatenate([a, b, a, b])
        cols = np.concatenate([a, b, b, a])
        vals = np.concatenate([y, y, -y, -y])
        keep = (rows >= 0) & (cols >= 0) & (vals != 0.0)
        self.parts[matrix].append((rows[keep], cols[keep], vals[keep]))

    def matrix(self, matrix: str, n: int) -> sp.coo_matrix:
        rows, cols, vals = self.scalar[matrix]
        pieces = [(np.asarray(rows, dtype=np.int64), np.asarray(cols, dtype=np.int64), np.asarray(vals, dtype=float))]
        pieces += self.parts[matrix]
        r = np.concatenate([p[0] for p in pieces])
        c = np.concatenate([p[1] for p in pieces])
        v = np.concatenate([p[2] for p in pieces])
        return sp.coo_matrix((v, (r, c)), shape=(n, n))


def _stamp(circuit: ck.Circuit, layout: _Layout) -> tuple[sp.coo_matrix, sp.coo_matrix]:
    stamps = _Stamps(circuit, layout)
    by_kind: dict[type, list[Element]] = {}
    for element in circuit.elements:
        by_kind.setdefault(type(element), []).append(element)
    for kind, members in by_kind.items():
        kind.stamp_all(members, stamps)  # type: ignore[attr-defined]
    return stamps.matrix("G", layout.size), stamps.matrix("C", layout.size)


@dataclass(frozen=True, eq=False)
class MnaSystem:
    """Assembled MNA matrices of a circuit.

    ``G`` (siemens and dimensionless) and ``C`` (farads, henries) are CSR
    matrices of shape (n, n), read-only.  ``unknowns[i]`` labels unknown i:
    ``"v(node)"``, ``"i(element)"`` or ``"v(element#label)"``.
    """

    circuit: ck.Circuit
    G: sp.csr_matrix
    C: sp.csr_matrix
    node_index: dict[str, int]  # canonical node name -> row; ground absent
    branch_index: dict[str, int]  # name_key(element) -> row of its branch current
    unknowns: tuple[str, ...] = field(default=())
    internal_index: dict[str, int] = field(default_factory=dict)  # "<name>#p1" -> row

    @property
    def size(self) -> int:
        return self.G.shape[0]

    @property
    def stamps(self) -> _Stamps:
        """A stamper over this system's ordering (for right-hand sides)."""
        return _Stamps(self.circuit, _Layout(self.node_index, self.branch_index, self.internal_index, self.unknowns))

    def node_row(self, node: str) -> int:
        """Row of ``node``'s voltage; -1 for ground.  CircuitError if unknown."""
        row = self.node_index.get(node)  # canonical names: the common case, one look-up
        if row is not None:
            return row
        key = canonical_node(node)
        if key == ck.GROUND:
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
        stamps = self.stamps
        try:
            element = self.circuit.element(source_name)
        except KeyError:
            probe = np.zeros(self.size)
            names = [e.name for e in self.circuit.elements if e.excitation(stamps, probe) is not None]
            close = difflib.get_close_matches(source_name, names, n=3, cutoff=0.5)
            known = ", ".join(names) if names else "none in this circuit"
            hint = f"did you mean {', '.join(close)}?" if close else f"independent sources: {known}"
            raise CircuitError(f"input source '{source_name}' does not exist; {hint}") from None
        out = np.zeros(self.size)
        unit = element.excitation(stamps, out)
        if unit is None:
            raise CircuitError(
                f"input source '{source_name}' is a {type(element).__name__}; "
                "the input must be an independent V or I source"
            )
        return out, unit

    def refilled(self, circuit: ck.Circuit) -> MnaSystem:
        """This system with ``circuit``'s values: same elements, nodes and
        ordering (CircuitError if the structure differs), new G and C."""
        if len(circuit.elements) != len(self.circuit.elements) or any(
            type(a) is not type(b)
            or a.name != b.name
            or a.terminals() != b.terminals()
            or a.internal_nodes() != b.internal_nodes()
            for a, b in zip(circuit.elements, self.circuit.elements)
        ):
            raise CircuitError("the circuit's structure changed; assemble it anew")
        layout = _Layout(self.node_index, self.branch_index, self.internal_index, self.unknowns)
        G, C = _stamp(circuit, layout)
        return MnaSystem(
            circuit,
            _frozen_csr(G),
            _frozen_csr(C),
            self.node_index,
            self.branch_index,
            self.unknowns,
            self.internal_index,
        )


def assemble(circuit: ck.Circuit) -> MnaSystem:
    """Build the MNA matrices of ``circuit``; CircuitError names bad elements."""
    layout = _layout(circuit)
    G, C = _stamp(circuit, layout)
    return MnaSystem(
        circuit=circuit,
        G=_frozen_csr(G),
        C=_frozen_csr(C),
        node_index=layout.node_index,
        branch_index=layout.branch_index,
        unknowns=layout.unknowns,
        internal_index=layout.internal_index,
    )

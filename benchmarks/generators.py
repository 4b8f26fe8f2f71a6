"""Netlist generators for the benchmarks (and the scale tests).

Each returns netlist text in the subset netnoise reads.  The circuits are
invented and regular, so that a bare scipy reference can build the same
nodal matrix directly.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "rc_ladder",
    "rc_mesh",
    "small_circuit",
    "four_element",
    "coupled_network",
    "scattered_network",
    "ladder_matrices",
    "mesh_matrices",
    "mesh_noise_columns",
]

LADDER_R = 100.0  # ohms per section
LADDER_C = 1e-12  # farads per section


def rc_ladder(sections: int, *, source: bool = True, card: str | None = None) -> str:
    """An RC ladder: Vin -> R1 -> n1 (C1 to ground) -> R2 -> n2 ... -> n<sections>.

    ``2·sections`` elements (plus the input source); output v(n<sections>).
    """
    lines = [f"RC ladder of {sections} sections"]
    if source:
        lines.append("Vin in 0 DC 0 AC 1")
    prev = "in" if source else "0"
    r, c = f"{LADDER_R:g}", f"{LADDER_C:g}"
    for i in range(1, sections + 1):
        lines.append(f"R{i} {prev} n{i} {r}")
        lines.append(f"C{i} n{i} 0 {c}")
        prev = f"n{i}"
    if card:
        lines.append(card)
    lines.append(".end")
    return "\n".join(lines) + "\n"


def ladder_matrices(sections: int):
    """The ladder's nodal G and C (node voltages only, the source shorted):
    what a bare reference factors at each frequency."""
    import scipy.sparse as sp

    g = 1.0 / LADDER_R
    main = np.full(sections, 2 * g)
    main[-1] = g
    off = np.full(sections - 1, -g)
    G = sp.diags([off, main, off], [-1, 0, 1], format="csc")
    C = sp.diags([np.full(sections, LADDER_C)], [0], format="csc")
    return G, C


def rc_mesh(nx: int, ny: int, *, r: float = 1e3, c: float = 1e-13, r_ground: float = 1e6) -> str:
    """A 2-D grid of nx·ny nodes: resistors between neighbours, a capacitor
    from every node to ground, a resistor to ground at the first corner (the
    DC path).  About 3·nx·ny elements; output at the opposite corner."""
    lines = [f"RC mesh {nx}x{ny}"]
    name = lambda i, j: f"m{i}_{j}"  # noqa: E731
    k = 0
    for i in range(nx):
        for j in range(ny):
            if i + 1 < nx:
                k += 1
                lines.append(f"R{k} {name(i, j)} {name(i + 1, j)} {r:g}")
            if j + 1 < ny:
                k += 1
                lines.append(f"R{k} {name(i, j)} {name(i, j + 1)} {r:g}")
            lines.append(f"C{i}_{j} {name(i, j)} 0 {c:g}")
    lines.append(f"Rgnd {name(0, 0)} 0 {r_ground:g}")
    lines.append(f".noise v({name(nx - 1, ny - 1)})")
    lines.append(".end")
    return "\n".join(lines) + "\n"


def mesh_matrices(nx: int, ny: int, *, r: float = 1e3, c: float = 1e-13, r_ground: float = 1e6):
    """Nodal G and C of :func:`rc_mesh` (row-major node order i*ny + j)."""
    import scipy.sparse as sp

    n = nx * ny
    idx = np.arange(n).reshape(nx, ny)
    a = np.concatenate([idx[:-1, :].ravel(), idx[:, :-1].ravel()])
    b = np.concatenate([idx[1:, :].ravel(), idx[:, 1:].ravel()])
    g = np.full(a.size, 1.0 / r)
    rows = np.concatenate([a, b, a, b, [0]])
    cols = np.concatenate([a, b, b, a, [0]])
    vals = np.concatenate([g, g, -g, -g, [1.0 / r_ground]])
    G = sp.csc_matrix((vals, (rows, cols)), shape=(n, n))
    C = sp.diags([np.full(n, c)], [0], format="csc")
    return G, C


def mesh_noise_columns(nx: int, ny: int, *, r: float = 1e3, r_ground: float = 1e6, temperature_K: float = 300.15):
    """The thermal noise of :func:`rc_mesh`'s resistors in :func:`mesh_matrices`' order: injection
    columns B (n x K, sparse: each resistor's current between its nodes, the ground resistor
    last), one-sided densities 4kT/R (A²/Hz) and the output selector (the last node)."""
    import scipy.sparse as sp

    n = nx * ny
    idx = np.arange(n).reshape(nx, ny)
    a = np.concatenate([idx[:-1, :].ravel(), idx[:, :-1].ravel()])
    b = np.concatenate([idx[1:, :].ravel(), idx[:, 1:].ravel()])
    k = a.size
    rows = np.concatenate([a, b, [0]])
    cols = np.concatenate([np.arange(k), np.arange(k), [k]])
    vals = np.concatenate([np.ones(k), -np.ones(k), [1.0]])
    B = sp.csc_matrix((vals, (rows, cols)), shape=(n, k + 1))
    kt4 = 4 * 1.380649e-23 * temperature_K
    density = np.append(np.full(k, kt4 / r), kt4 / r_ground)
    selector = np.zeros(n)
    selector[-1] = 1.0
    return B, density, selector


def small_circuit(nodes: int = 20, seed: int = 1) -> str:
    """A 20-node RC network with an input source: a ladder backbone plus a
    few random cross resistors and coupling capacitors."""
    rng = np.random.default_rng(seed)
    lines = [f"small RC network of {nodes} nodes", "Vin in 0 AC 1", "Rs in n1 1k"]
    for i in range(1, nodes):
        lines.append(f"R{i} n{i} n{i + 1} {rng.uniform(100, 10e3):.4g}")
    for i in range(1, nodes + 1):
        lines.append(f"C{i} n{i} 0 {rng.uniform(1e-12, 1e-9):.4g}")
    for j in range(nodes // 2):
        a, b = rng.choice(np.arange(1, nodes + 1), size=2, replace=False)
        lines.append(f"Rx{j} n{a} n{b} {rng.uniform(1e3, 1e6):.4g}")
        lines.append(f"Cx{j} n{a} n{b} {rng.uniform(1e-13, 1e-11):.4g}")
    lines.append(f"Rload n{nodes} 0 100k")
    lines.append(f".noise v(n{nodes}) Vin dec 20 1 1g")
    lines.append(".end")
    return "\n".join(lines) + "\n"


def four_element() -> str:
    """The smallest useful circuit for the start-up figure."""
    return (
        "start-up\nVin in 0 AC 1\nR1 in out 1k\nC1 out 0 1n\nR2 out 0 1meg\n.noise v(out) Vin dec 20 10 10meg\n.end\n"
    )


def coupled_network(nodes: int) -> str:
    """Every node joined to every other by a resistor, a capacitor and a resistor to ground at
    each: a dense nodal matrix (the dense path's case).  Output at the last node."""
    lines = [f"all coupled, {nodes} nodes"]
    k = 0
    for i in range(1, nodes + 1):
        lines += [f"C{i} d{i} 0 {1 + i % 7}p", f"Rg{i} d{i} 0 1k"]
        for j in range(i + 1, nodes + 1):
            k += 1
            lines.append(f"R{k} d{i} d{j} {1000 + 13 * (k % 17)}")
    lines.append(f".noise v(d{nodes})")
    return "\n".join(lines + [".end"]) + "\n"


def scattered_network(nodes: int, seed: int = 3) -> str:
    """An RC chain with nodes/2 cross resistors between random nodes: sparse, but no narrow
    band after reordering (the sparse path's case).  Output at the last node."""
    rng = np.random.default_rng(seed)
    lines = [f"scattered, {nodes} nodes", "Rg x1 0 1k"]
    lines += [f"R{i} x{i} x{i + 1} {rng.uniform(100, 1e4):.4g}" for i in range(1, nodes)]
    lines += [f"C{i} x{i} 0 {rng.uniform(1e-12, 1e-9):.4g}" for i in range(1, nodes + 1)]
    for j in range(nodes // 2):
        a, b = rng.choice(np.arange(1, nodes + 1), size=2, replace=False)
        lines.append(f"Rx{j} x{a} x{b} {rng.uniform(1e3, 1e6):.4g}")
    lines.append(f".noise v(x{nodes})")
    return "\n".join(lines + [".end"]) + "\n"

"""The front door: netlist text or file -> :class:`~netnoise.circuit.Circuit`.

>>> circuit = parse_netlist("divider\\nV1 in 0 1\\nR1 in out 1k\\nR2 out 0 1k\\n")
>>> [e.name for e in circuit.elements]
['V1', 'R1', 'R2']

Every problem with the text is a :class:`~netnoise.errors.NetlistError`
carrying file, line and column.
"""

from __future__ import annotations

import gc
import os
from pathlib import Path

from netnoise.circuit import Circuit
from netnoise.netlist.elaborate import elaborate
from netnoise.netlist.parser import parse_statements
from netnoise.text.source import read_netlist_text

__all__ = ["parse_netlist", "load_netlist"]


def parse_netlist(
    text: str,
    filename: str = "<text>",
    base_dir: str | os.PathLike | None = None,
    *,
    includes_within: str | os.PathLike | None = None,
) -> Circuit:
    """The circuit described by netlist ``text`` (its first line is the title).

    ``filename`` is used in messages.  ``.include`` paths are taken relative
    to ``base_dir``; by default the folder of ``filename`` when that names a
    file, else the current folder.  ``includes_within``: a folder; an
    ``.include`` (at any depth) whose file is outside that folder's tree,
    symbolic links followed, is refused (for netlists from others: by default
    an include may read any file the process can).
    """
    own_path = None if filename.startswith("<") and filename.endswith(">") else Path(filename)
    if base_dir is None:
        base_dir = own_path.parent if own_path is not None else Path.cwd()
    # Parsing builds hundreds of thousands of small objects for a large netlist
    # and none of them form cycles, so the cycle collector only slows it down
    # (by a third, measured on a 100,000-element ladder); it is back on after.
    collecting = gc.isenabled()
    gc.disable()
    try:
        parsed = parse_statements(text, filename, has_title=True, collect=True)
        return elaborate(
            parsed,
            Path(base_dir),
            source_file=filename,
            own_path=own_path,
            includes_within=None if includes_within is None else Path(includes_within),
        )
    finally:
        if collecting:
            gc.enable()


def load_netlist(path: str | os.PathLike, *, includes_within: str | os.PathLike | None = None) -> Circuit:
    """Read a netlist file (UTF-8) and elaborate it.  ``includes_within``: see
    :func:`parse_netlist` (the netlist's own folder, say)."""
    path = Path(path)
    text = read_netlist_text(path)
    return parse_netlist(text, filename=str(path), base_dir=path.parent, includes_within=includes_within)

"""One analysis's transfers by frequency, so that no frequency is solved twice.

An analysis asks for some frequencies more than once: beyond the exact limit the total to
infinite bandwidth is a quadrature on the same grid as the spectrum shown; the gain-peak
search and the pass-band gain ask for the signal path at frequencies the integrator has
often solved already (0 Hz, the band's centre).  :class:`TransferMemo` keeps what one adjoint
solve gives at a frequency -- every source's power transfer ``|zᵀb_k|²`` and the signal
path's ``|zᵀu|²`` -- keyed by the exact float frequency, for the length of one analysis
(``_Problem.remembering`` in :mod:`netnoise.engine.analysis`).  It holds transfers, not
densities: the densities are the transfers times each source's density at that frequency,
whichever part (full, white, 1/f) a caller asks for.

Memory: the per-source rows are kept only when the analysis will ask for them again
(``keep_rows``: a band to infinity, where a quadrature and the spectrum shown share their
frequencies; a finite band's integrator never asks twice, and its later questions are the
signal path's alone), and only while they fit in a quarter of the share of the available
memory one array may take (:mod:`netnoise.engine.resources`); past it a frequency is solved
again rather than kept.  A frequency's values are the same bits whether they come
from here or from a new solve (every solver path solves each frequency alone).
"""

from __future__ import annotations

import numpy as np

from netnoise.engine.resources import MEMORY_FRACTION, available_memory

__all__ = ["TransferMemo"]

_MEMO_SHARE = 0.25  # of the memory one array may take (MEMORY_FRACTION of the available)


class TransferMemo:
    """Per-source power transfers (K,) and the signal's |H|² by exact frequency (Hz).

    ``solved`` counts the frequencies solved while this memo was in use (each one once,
    unless the memory bound dropped its rows)."""

    def __init__(self, sources: int, keep_rows: bool = True) -> None:
        self.sources = sources
        self.keep_rows = keep_rows
        self._column: dict[float, tuple[int, int]] = {}  # f -> (block, column) of its per-source row
        self._blocks: list[np.ndarray] = []  # (K, M) power transfers, as solved together
        self._signal: dict[float, float] = {}  # f -> |H|² of the input (when there is one)
        self._bytes = 0
        self.solved = 0

    def unknown(self, frequency_Hz: np.ndarray) -> np.ndarray:
        """The distinct frequencies of ``frequency_Hz`` with no per-source row kept, in order of first appearance."""
        return _missing(frequency_Hz, self._column)

    def unknown_signal(self, frequency_Hz: np.ndarray) -> np.ndarray:
        """The distinct frequencies of ``frequency_Hz`` with no signal value kept."""
        return _missing(frequency_Hz, self._signal)

    def keep(self, frequency_Hz: np.ndarray, power: np.ndarray | None, signal: np.ndarray | None) -> None:
        """Keep the solves at ``frequency_Hz`` (M,): ``power`` (K, M) (None: the signal alone
        was solved) and ``signal`` (M,) or None.  The memo keeps ``power`` itself: the caller
        must not change it afterwards."""
        keys = frequency_Hz.tolist()
        self.solved += len(keys)
        if signal is not None:
            self._signal.update(zip(keys, signal.tolist()))
        if power is None or not keys or not self.keep_rows:
            return
        if self._bytes + power.nbytes > _MEMO_SHARE * MEMORY_FRACTION * available_memory():
            return  # solved again if asked again: slower, never wrong
        block = len(self._blocks)
        self._blocks.append(power)
        self._bytes += power.nbytes
        self._column.update((f, (block, j)) for j, f in enumerate(keys))

    def fill(self, frequency_Hz: np.ndarray, power_out: np.ndarray, fresh: dict[float, tuple[np.ndarray, int]]) -> None:
        """``power_out[:, i]`` = the per-source row at ``frequency_Hz[i]``, from this memo or
        from ``fresh`` (f -> (block, column) of rows just solved and not kept)."""
        by_block: dict[int, tuple[np.ndarray, list[int], list[int]]] = {}
        for i, f in enumerate(frequency_Hz.tolist()):
            found = self._column.get(f)
            block, j = (self._blocks[found[0]], found[1]) if found is not None else fresh[f]
            _, rows_out, columns = by_block.setdefault(id(block), (block, [], []))
            rows_out.append(i)
            columns.append(j)
        for block, rows_out, columns in by_block.values():  # one gather per block
            power_out[:, rows_out] = block[:, columns]

    def signal(self, frequency_Hz: np.ndarray) -> np.ndarray:
        """|H|² of the input at every frequency of ``frequency_Hz`` (all kept)."""
        return np.array([self._signal[f] for f in frequency_Hz.tolist()], dtype=float)


def _missing(frequency_Hz: np.ndarray, known) -> np.ndarray:
    """The distinct frequencies of ``frequency_Hz`` not in ``known``, in order of first appearance."""
    return np.array([f for f in dict.fromkeys(frequency_Hz.tolist()) if f not in known], dtype=float)

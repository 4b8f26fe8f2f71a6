"""Memory bounds: refuse up front what the machine cannot hold.

A circuit that would need more memory than is available (a dense path on a
huge circuit, per-source arrays over too many frequencies, sparse factors
with too much fill) is refused with a :class:`~netnoise.errors.CircuitError`
that gives the estimate, instead of being left to swap.
"""

from __future__ import annotations

import os

from netnoise.errors import CircuitError

__all__ = ["available_memory", "require_memory", "MEMORY_FRACTION"]

MEMORY_FRACTION = 0.8  # of the available memory that one array (or group of arrays) may take
_override: int | None = None  # tests set this through set_available_memory


def available_memory() -> int:
    """Bytes available to this process: MemAvailable on Linux, else the
    physical memory, else a large number (no bound known)."""
    if _override is not None:
        return _override
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        pass
    try:
        return os.sysconf("SC_AVPHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")
    except (ValueError, OSError, AttributeError):
        return 1 << 62


def set_available_memory(nbytes: int | None) -> None:
    """Pretend the machine has ``nbytes`` available (None: measure again)."""
    global _override
    _override = nbytes


def _gib(nbytes: float) -> str:
    return f"{nbytes / 2**30:.3g} GiB" if nbytes >= 2**27 else f"{nbytes / 2**20:.3g} MiB"


def require_memory(nbytes: float, what: str) -> None:
    """CircuitError if ``nbytes`` exceeds the allowed share of available memory."""
    limit = MEMORY_FRACTION * available_memory()
    if nbytes > limit:
        raise CircuitError(
            f"this analysis would need about {_gib(nbytes)} of memory for {what}, but only about "
            f"{_gib(available_memory())} is available: use fewer points per decade (--points) or a "
            "narrower band, or split the circuit"
        )

"""Memory bounds: refuse up front what the machine cannot hold.

A circuit that would need more memory than is available (a dense path on a
huge circuit, per-source arrays over too many frequencies, sparse factors
with too much fill) is refused with a :class:`~netnoise.errors.CircuitError`
that gives the estimate, instead of being left to swap.
"""

from __future__ import annotations

import os
import time

from netnoise.errors import CircuitError

__all__ = ["available_memory", "require_memory", "usable_cores", "MEMORY_FRACTION"]

MEMORY_FRACTION = 0.8  # of the available memory that one array (or group of arrays) may take
_override: int | None = None  # tests set this through set_available_memory


def usable_cores() -> int:
    """Cores this process may run on (its CPU affinity where the system has one)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


def available_memory() -> int:
    """Bytes available to this process: the smallest of the machine's free
    memory (MemAvailable on Linux, else the free physical pages), the room
    left under the process's address-space limit (``ulimit -v``) and under
    its cgroup's memory limit (containers, systemd units); a large number
    when none is known."""
    if _override is not None:
        return _override
    now = time.monotonic()
    if _measured and now - _measured[0] < _REMEASURE_S and _measured[1] == CGROUP_ROOT:
        return _measured[2]
    bounds = [b for b in (_machine_free(), _rlimit_room(), _cgroup_room()) if b is not None]
    room = max(0, min(bounds)) if bounds else 1 << 62
    _measured[:] = [now, CGROUP_ROOT, room]
    return room


# reading /proc and the cgroup files costs about half a millisecond, and an analysis asks
# for every block of frequencies: a measurement is reused for this long
_REMEASURE_S = 0.25
_measured: list = []


def _machine_free() -> int | None:
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
        return None


def _rlimit_room() -> int | None:
    """RLIMIT_AS less the address space in use (None: no limit)."""
    try:
        import resource

        soft, _ = resource.getrlimit(resource.RLIMIT_AS)
    except (ImportError, OSError, ValueError, AttributeError):
        return None
    if soft == resource.RLIM_INFINITY or soft < 0:
        return None
    return soft - _own_address_space()


def _own_address_space() -> int:
    try:
        with open("/proc/self/statm", encoding="ascii") as fh:
            return int(fh.read().split()[0]) * os.sysconf("SC_PAGE_SIZE")
    except (OSError, ValueError, IndexError, AttributeError):
        return 0


CGROUP_ROOT = "/sys/fs/cgroup"  # tests point this at a folder of their own


def _cgroup_room() -> int | None:
    """memory.max less memory.current of this process's cgroup (v2), or the
    v1 limit less usage; None when there is no limit."""
    v2 = [CGROUP_ROOT]
    v1 = [os.path.join(CGROUP_ROOT, "memory")]
    try:
        with open("/proc/self/cgroup", encoding="ascii") as fh:
            for line in fh:
                parts = line.rstrip("\n").split(":", 2)
                if len(parts) != 3 or parts[2] in ("", "/"):
                    continue
                if parts[0] == "0":
                    v2.insert(0, os.path.join(CGROUP_ROOT, parts[2].lstrip("/")))
                elif "memory" in parts[1].split(","):
                    v1.insert(0, os.path.join(CGROUP_ROOT, "memory", parts[2].lstrip("/")))
    except OSError:
        pass
    rooms = [_room(os.path.join(f, "memory.max"), os.path.join(f, "memory.current")) for f in v2]
    rooms += [_room(os.path.join(f, "memory.limit_in_bytes"), os.path.join(f, "memory.usage_in_bytes")) for f in v1]
    known = [r for r in rooms if r is not None]
    return min(known) if known else None


def _room(limit_file: str, usage_file: str) -> int | None:
    try:
        with open(limit_file, encoding="ascii") as fh:
            limit_text = fh.read().strip()
    except OSError:
        return None
    if limit_text == "max":
        return None
    try:
        limit = int(limit_text)
    except ValueError:
        return None
    if limit >= 1 << 60:  # cgroup v1 writes a huge number for "no limit"
        return None
    try:
        with open(usage_file, encoding="ascii") as fh:
            usage = int(fh.read().strip())
    except (OSError, ValueError):
        usage = 0
    return limit - usage


def set_available_memory(nbytes: int | None) -> None:
    """Pretend the machine has ``nbytes`` available (None: measure again)."""
    global _override
    _override = nbytes
    _measured.clear()


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

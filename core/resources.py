"""How much memory the dense paths may use (shared by the adapters' checks and the solvers' own)."""

from __future__ import annotations

import os

from .errors import InputError


def available_memory() -> int:
    """Bytes of memory available now (MemAvailable), or a large number if unknown."""
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    return 1 << 62


def memory_limit() -> int:
    """Bytes the dense paths may assume are free: SPINWARD_MEMORY_LIMIT, else 80% of MemAvailable."""
    raw = os.environ.get("SPINWARD_MEMORY_LIMIT", "")
    try:
        return int(raw) if raw else int(0.8 * available_memory())
    except ValueError:
        raise InputError(f"SPINWARD_MEMORY_LIMIT must be an integer number of bytes, got {raw!r}") from None

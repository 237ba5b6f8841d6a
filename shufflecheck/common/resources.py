"""Memory estimates before large work: refuse (or let the caller switch methods) up front.

Large work states what it will need (:func:`check_memory`) before it allocates anything, so
that a run too big for the machine ends at once with one line saying what was asked, what
it needs and what is available, instead of exhausting memory half-way.

The memory available is the smallest of: the system's available memory
(``MemAvailable`` of ``/proc/meminfo``), what the address-space limit (``ulimit -v``)
leaves above the process's current size, what a control group's memory limit leaves
(cgroup v2 ``memory.max`` or v1 ``memory.limit_in_bytes``), and the environment variable
``SHUFFLECHECK_MAX_MEMORY`` (bytes, or with a suffix ``K``, ``M``, ``G``, ``T``: ``4G``),
which lets a user keep the tool to a share of a shared machine. Where none can be read
the check passes.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

from shufflecheck.common.errors import InputError

__all__ = [
    "MEMORY_VARIABLE",
    "available_memory",
    "check_memory",
    "format_bytes",
    "memory_room",
    "release_free_memory",
]

#: the environment variable capping the memory the tool plans to use
MEMORY_VARIABLE = "SHUFFLECHECK_MAX_MEMORY"

#: share of the available memory a single piece of work may plan to use
_HEADROOM = 0.8

_UNITS = {"": 1, "B": 1, "K": 1 << 10, "M": 1 << 20, "G": 1 << 30, "T": 1 << 40}


def format_bytes(count: int | float) -> str:
    """``3.1 GB``-style text for a number of bytes (powers of 1,000)."""
    count = float(count)
    for unit, scale in (("TB", 1e12), ("GB", 1e9), ("MB", 1e6), ("kB", 1e3)):
        if count >= scale:
            return f"{count / scale:.3g} {unit}"
    return f"{int(count)} bytes"


def _read_int(path: str | Path) -> int | None:
    try:
        text = Path(path).read_text().strip()
    except (OSError, UnicodeDecodeError):
        return None
    return int(text) if text.isdigit() else None


def _meminfo_available() -> int | None:
    try:
        text = Path("/proc/meminfo").read_text()
    except OSError:
        return None
    match = re.search(r"^MemAvailable:\s+(\d+)\s+kB", text, re.MULTILINE)
    return int(match.group(1)) * 1024 if match else None


def _address_space_left() -> int | None:
    try:
        import resource
    except ImportError:  # pragma: no cover - not on POSIX
        return None
    soft, _ = resource.getrlimit(resource.RLIMIT_AS)
    if soft == resource.RLIM_INFINITY or soft < 0:
        return None
    try:
        pages = int(Path("/proc/self/statm").read_text().split()[0])
        size = pages * os.sysconf("SC_PAGE_SIZE")
    except (OSError, ValueError, IndexError):
        size = 0
    return max(0, soft - size)


def _cgroup_left() -> int | None:
    limit = _read_int("/sys/fs/cgroup/memory.max")
    used = _read_int("/sys/fs/cgroup/memory.current")
    if limit is None:
        limit = _read_int("/sys/fs/cgroup/memory/memory.limit_in_bytes")
        used = _read_int("/sys/fs/cgroup/memory/memory.usage_in_bytes")
    if limit is None or limit >= 1 << 60:
        return None
    return max(0, limit - (used or 0))


def _variable() -> int | None:
    text = os.environ.get(MEMORY_VARIABLE, "").strip().upper()
    if not text:
        return None
    match = re.fullmatch(r"(\d+(?:\.\d+)?)\s*([KMGT]?)I?B?", text)
    if match is None:
        raise InputError(
            f"{MEMORY_VARIABLE}={os.environ[MEMORY_VARIABLE]!r} is not a size like 4G or 512M"
        )
    return int(float(match.group(1)) * _UNITS[match.group(2)])


def available_memory() -> int | None:
    """Bytes a new piece of work may still allocate (see the module notes), or None."""
    found = [
        value
        for value in (_meminfo_available(), _address_space_left(), _cgroup_left(), _variable())
        if value is not None
    ]
    return min(found) if found else None


def check_memory(
    needed: int | float,
    what: str,
    *,
    argument: str | tuple[str, ...] | None = None,
    advice: str = "",
) -> None:
    """Refuse work that needs more memory than is available, before it starts.

    ``what`` says what the memory is for (``"3,000,000,000 simulated decks of 52 cards"``);
    ``advice`` what the user can do instead (``"simulate at most 1,200,000 decks"``). The
    work may plan to use at most 80% of the available memory.
    """
    available = available_memory()
    if available is None:
        return
    allowed = int(available * _HEADROOM)
    if needed <= allowed:
        return
    tail = f"; {advice}" if advice else ""
    raise InputError(
        f"{what} need about {format_bytes(needed)} of memory, more than the "
        f"{format_bytes(allowed)} this run may use ({format_bytes(available)} available){tail}",
        argument=argument,
    )


def memory_room() -> int | None:
    """Bytes a piece of work may plan to use (80% of :func:`available_memory`), or None."""
    available = available_memory()
    return None if available is None else int(available * _HEADROOM)


def release_free_memory() -> None:
    """Hand memory that this process has freed back to the system (glibc's
    ``malloc_trim``; nothing elsewhere).

    Between two phases of large array work (reading a log, then the battery's exact
    convolutions) the C heap keeps the pages the first phase freed, scattered between the
    arrays that stay; the second phase then adds its own on top. Trimming in between
    returns those pages at once. No value changes; it costs a few milliseconds.
    """
    import ctypes
    import ctypes.util

    name = ctypes.util.find_library("c")
    if name is None:
        return
    try:
        trim = ctypes.CDLL(name).malloc_trim
    except (OSError, AttributeError):
        return
    trim.argtypes = [ctypes.c_size_t]
    trim(0)

"""Keeps the memory the analysis frees for its next arrays (glibc's allocator).

What it is for: the analysis allocates and frees the same large arrays stage
after stage (a step response recorded at 4000 instants for 2000 samples is
66 MB; sweeps, step matrices and their solver copies are megabytes). glibc
serves blocks above its threshold (at most 32 MB) with mmap and hands them back
to the system when they are freed, so each stage met its arrays as fresh pages:
about 30 000 page faults and 0.6-0.9 s of system time on the 40-stage bench
board, 5-7 % of the analysis. With mmap off for the allocator and the heap
trimmed only past TRIM_BYTES of free space at its top, a freed block serves the
next one of its size without a fault (the board's peak memory is unchanged).
Numbers are unaffected: only where the memory comes from changes.

What it must not do: anything but set the allocator's two parameters, once per
process, and only where the C library is glibc (elsewhere it does nothing).
"""

from __future__ import annotations

import ctypes
import sys

__all__ = ["TRIM_BYTES", "reuse_freed_memory"]

# mallopt's parameter numbers, from glibc's malloc.h.
_M_TRIM_THRESHOLD = -1
_M_MMAP_MAX = -4
#: Free space at the top of the heap kept for the next arrays before it goes back
#: to the system (a few of the largest arrays of a stage at 2000 samples).
TRIM_BYTES = 256 * 2**20

_state: list[bool] = []          # the outcome of the first call, once made


def reuse_freed_memory() -> bool:
    """Ask glibc to serve large blocks from the heap and keep freed ones (once per
    process; later calls return the first call's outcome). Returns whether the
    allocator took both parameters (False off Linux or where mallopt is missing)."""
    if not _state:
        _state.append(_set())
    return _state[0]


def _set() -> bool:
    if not sys.platform.startswith("linux"):
        return False
    try:
        libc = ctypes.CDLL(None)     # the process's own C library
        mallopt = libc.mallopt
    except (OSError, AttributeError):
        return False
    if not hasattr(libc, "gnu_get_libc_version"):    # glibc only (musl's mallopt does nothing)
        return False
    mallopt.argtypes = [ctypes.c_int, ctypes.c_int]
    mallopt.restype = ctypes.c_int
    # The trim threshold first: with it set, glibc no longer moves it with mmap's
    # threshold; mallopt returns 1 on success.
    return mallopt(_M_TRIM_THRESHOLD, TRIM_BYTES) == 1 and mallopt(_M_MMAP_MAX, 0) == 1

"""Large numpy arrays kept on the C heap between uses instead of mapped and
unmapped each time (glibc's malloc, Linux).

What it is for: the analysis makes many temporaries of a few megabytes (a chunk
of 4 000 rows by 301 frequencies is 9.6 MB). glibc serves blocks above its mmap
threshold (at most 32 MB, adjusted as blocks are freed) with fresh pages from
the kernel and returns them on free, so every such temporary paid its page
faults again: about a tenth of a 20 000-sample check's CPU, in the kernel
(measured: 0.24-0.38 s of system time against 0.06-0.12 s with the heap
kept). Setting the mmap threshold above those sizes and the trim threshold
higher still keeps freed blocks for the next array.

What it must not do: override a choice the environment made (any MALLOC_*
variable set: glibc reads those itself), or fail where the C library is not
glibc (nothing happens there). Memory freed stays with the process until it
exits; the peak is no higher (bench/floor.py section c reports it: 225 MiB for
200 000 samples, against 286 MiB before).
"""

from __future__ import annotations

import os
import sys

_M_TRIM_THRESHOLD = -1      # glibc's mallopt parameters (malloc.h)
_M_MMAP_THRESHOLD = -3
MMAP_THRESHOLD = 256 << 20  # blocks above this still come from mmap
TRIM_THRESHOLD = 512 << 20  # free memory above this at the heap's top goes back


def keep_heap() -> bool:
    """Raise glibc's mmap and trim thresholds; True where that was done."""
    if not sys.platform.startswith("linux") or any(k.startswith("MALLOC_") for k in os.environ):
        return False
    try:
        import ctypes
        libc = ctypes.CDLL("libc.so.6")
        mallopt = libc.mallopt
    except (OSError, AttributeError):
        return False
    mallopt.argtypes = (ctypes.c_int, ctypes.c_int)
    mallopt.restype = ctypes.c_int
    return bool(mallopt(_M_MMAP_THRESHOLD, MMAP_THRESHOLD)) and \
        bool(mallopt(_M_TRIM_THRESHOLD, TRIM_THRESHOLD))

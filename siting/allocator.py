"""Keep freed memory in the process, so that big temporary arrays are not page-faulted anew.

An analysis allocates and frees many arrays of a few hundred kilobytes to a
few megabytes (field chunks, band-search state, contour inputs).  With
glibc's defaults such blocks are mapped from the kernel when allocated and
returned when freed, or returned when the top of the heap is trimmed, so each
new one is paged in again: thousands of page faults per check (measured
2 800 per check of the hospital example), a fifth or more of its time.
:func:`keep_freed_memory` raises glibc's mmap and trim thresholds
(``mallopt(3)``: ``M_MMAP_THRESHOLD``, ``M_TRIM_THRESHOLD``) so that blocks
below 64 MiB come from the heap and up to 128 MiB of freed heap stays mapped
for reuse.  It changes the whole process, so the command line calls it once
at start (and ``benchmarks/site.py``, which times what the command does); a
program that imports the library decides for itself.  Elsewhere than glibc
it does nothing.
"""

from __future__ import annotations

import ctypes
import ctypes.util

#: Blocks below this come from the heap rather than their own mapping [bytes].
MMAP_THRESHOLD = 64 * 2**20
#: Freed memory at the top of the heap kept mapped up to this [bytes].
TRIM_THRESHOLD = 128 * 2**20

# mallopt parameter numbers, from glibc's <malloc.h>
_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD = -1, -3


def keep_freed_memory() -> bool:
    """Set the thresholds above; True when glibc accepted both."""
    name = ctypes.util.find_library("c")
    try:
        libc = ctypes.CDLL(name)
        mallopt = libc.mallopt
    except (OSError, AttributeError, TypeError):
        return False  # not glibc (or no C library found): leave the allocator alone
    mallopt.argtypes, mallopt.restype = [ctypes.c_int, ctypes.c_int], ctypes.c_int
    ok = mallopt(_M_MMAP_THRESHOLD, MMAP_THRESHOLD) == 1
    return mallopt(_M_TRIM_THRESHOLD, TRIM_THRESHOLD) == 1 and ok

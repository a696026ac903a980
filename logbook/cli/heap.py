"""Let batch commands reuse the memory they free, file after file (glibc only).

A batch reads, analyses and drops one file after another: every file allocates and
frees the same few megabytes. By default glibc's allocator hands freed memory at
the top of the heap back to the system at once, so the next file faults every page
in again; on a 10,000-row capture that is about a fifth of the time of its whole
analysis (``benchmarks/bench_analysis.py``). Asking it to keep some freed memory
(``M_TOP_PAD``, see mallopt(3)) removes that cost. The memory kept is reused by the
next file, so a batch's peak does not grow.
"""

from __future__ import annotations

import ctypes
import sys

#: mallopt(3) parameter number of M_TOP_PAD in glibc's <malloc.h>.
M_TOP_PAD = -2
#: Freed memory kept at the top of the heap: a few files' worth of working memory.
KEPT_BYTES = 16 << 20


def keep_freed_memory(size: int = KEPT_BYTES) -> bool:
    """Ask the C library to keep up to ``size`` bytes of freed heap for reuse;
    True when it took the setting (glibc), False elsewhere."""
    if not sys.platform.startswith("linux"):
        return False
    try:
        mallopt = ctypes.CDLL(None).mallopt
    except (OSError, AttributeError):  # not glibc (musl has no such knob)
        return False
    mallopt.argtypes = (ctypes.c_int, ctypes.c_int)
    mallopt.restype = ctypes.c_int
    return mallopt(M_TOP_PAD, size) == 1

"""Let batch commands reuse the memory they free, file after file (glibc only).

A batch reads, analyses and drops one file after another: every file allocates and
frees the same few megabytes. By default glibc's allocator maps each block of more
than 128 KiB (a file's bytes, say) afresh and hands freed memory at the top of the
heap back to the system at once, so every file faults its pages in again; on a
10,000-row capture that is about a fifth of the time of its whole analysis
(``benchmarks/bench_analysis.py``). Asking it to serve blocks of up to
``MAPPED_FROM`` from the heap and to keep ``KEPT_BYTES`` of freed heap (mallopt(3):
``M_MMAP_THRESHOLD``, ``M_TOP_PAD``) removes that cost. The memory kept is reused
by the next file, so a batch's peak does not grow; larger blocks are still mapped
and returned at once.
"""

from __future__ import annotations

import ctypes
import sys

#: mallopt(3) parameter numbers in glibc's <malloc.h>.
M_TOP_PAD = -2
M_MMAP_THRESHOLD = -3
#: Freed memory kept at the top of the heap: a few files' worth of working memory.
KEPT_BYTES = 16 << 20
#: Blocks from this size on are mapped on their own (a large capture's columns).
MAPPED_FROM = 4 << 20


def keep_freed_memory() -> bool:
    """Ask the C library to keep freed memory for reuse (module docstring); True
    when it took the settings (glibc), False elsewhere."""
    if not sys.platform.startswith("linux"):
        return False
    try:
        mallopt = ctypes.CDLL(None).mallopt
    except (OSError, AttributeError):  # not glibc (musl has no such knob)
        return False
    mallopt.argtypes = (ctypes.c_int, ctypes.c_int)
    mallopt.restype = ctypes.c_int
    return mallopt(M_MMAP_THRESHOLD, MAPPED_FROM) == 1 and mallopt(M_TOP_PAD, KEPT_BYTES) == 1

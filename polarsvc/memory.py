"""Keeping a server process's memory close to what its bounded caches hold.

Large responses and tables are allocated and freed all the time (a 200-station blade set
is a few MB per array). With glibc's defaults such blocks are soon served from the heap
(the mmap threshold rises after each large free, up to 32 MB) and from one arena per
thread, so freed memory stays with the process and its resident size grows well beyond
the live data. :func:`limit_allocator_retention` fixes the mmap threshold (blocks of 1 MB
and more are mapped and returned to the system when freed) and caps the number of arenas;
both are glibc ``mallopt`` settings (glibc manual, "Malloc Tunable Parameters"). On other C
libraries it does nothing.
"""

from __future__ import annotations

import ctypes
import ctypes.util

M_MMAP_THRESHOLD = -3  # glibc malloc.h
M_ARENA_MAX = -8  # glibc malloc.h
MMAP_THRESHOLD_BYTES = 1 << 20
ARENA_MAX = 2

_done = False


def limit_allocator_retention() -> bool:
    """Apply the settings of the module docstring once per process; whether they applied."""
    global _done
    if _done:
        return True
    name = ctypes.util.find_library("c")
    if not name:
        return False
    try:
        libc = ctypes.CDLL(name)
        mallopt = libc.mallopt
    except (OSError, AttributeError):
        return False
    mallopt.argtypes = (ctypes.c_int, ctypes.c_int)
    mallopt.restype = ctypes.c_int
    applied = bool(mallopt(M_MMAP_THRESHOLD, MMAP_THRESHOLD_BYTES)) and bool(
        mallopt(M_ARENA_MAX, ARENA_MAX)
    )
    _done = applied
    return applied

"""Keep freed memory in the process heap, so large temporaries reuse warm pages.

The analysis makes many short-lived arrays of one to a few megabytes (one
burst's samples, its mixed-down copies, running sums).  glibc's allocator
hands blocks above its mmap threshold (128 kB by default, raised adaptively)
straight back to the kernel when they are freed, so the next array of that
size is fresh memory that the kernel must fault in and zero -- with
transparent huge pages, 2 MB at a time.  On the machines this was measured
on that made a running sum over a burst five times slower than the sum
itself.  Raising the mmap and trim thresholds keeps such blocks in the heap
for reuse.  The process's peak memory is unchanged (the blocks were in use
at the peak anyway); only the return of freed memory to the system waits
until the process ends.

Elsewhere than glibc (macOS, musl, Windows) this does nothing.
"""

from __future__ import annotations

import ctypes
import ctypes.util

__all__ = ["keep_freed_memory", "release_freed_memory"]

_M_TRIM_THRESHOLD = -1
_M_TOP_PAD = -2
_M_MMAP_THRESHOLD = -3

#: Largest mmap threshold glibc accepts on 64-bit systems (32 MB).
MMAP_THRESHOLD = 32 << 20
#: Free memory kept at the top of the heap before it is given back.
TRIM_THRESHOLD = 1 << 30

_done = False


def _libc():
    """glibc's entry points, or None elsewhere."""
    try:
        return ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
    except OSError:
        return None


def keep_freed_memory() -> bool:
    """Raise glibc's mmap and trim thresholds once per process.

    Returns
    -------
    bool
        True if the allocator accepted the settings (now or on an earlier call).
    """
    global _done
    if _done:
        return True
    mallopt = getattr(_libc(), "mallopt", None)
    if mallopt is None:
        return False
    mallopt.argtypes = [ctypes.c_int, ctypes.c_int]
    mallopt.restype = ctypes.c_int
    ok = bool(mallopt(_M_MMAP_THRESHOLD, MMAP_THRESHOLD)) and bool(mallopt(_M_TRIM_THRESHOLD, TRIM_THRESHOLD))
    mallopt(_M_TOP_PAD, 16 << 20)
    _done = ok
    return ok


def release_freed_memory() -> None:
    """Give the heap's free blocks back to the system now (glibc ``malloc_trim``).

    Called before forking worker processes: a child that reused free blocks
    inherited from the parent would copy every page it touched (with
    transparent huge pages, 2 MB at a time); fresh pages cost it less, and it
    then keeps its own freed blocks.
    """
    trim = getattr(_libc(), "malloc_trim", None)
    if trim is None:
        return
    trim.argtypes = [ctypes.c_size_t]
    trim(0)

"""The C heap kept by a command's process between its many large temporaries (glibc's malloc only).

A Monte Carlo chunk of the rig model allocates and frees dozens of arrays of 0.1–5 MB per call. glibc's
malloc maps the largest from the system, raises its threshold after freeing one (so later ones come from
its heap), and gives the heap's top back to the system whenever more than twice that threshold lies free
there; every page given back faults again, at about 4 ns a value, when the next array is written
(:mod:`budget.scratch`). How often that happens depends on the order of allocations, not on the work: a
51-point sweep's Monte Carlo measured 62 000 or 181 000 faults for the same arithmetic arranged two ways.

:func:`keep_heap` fixes both thresholds for the process (mallopt, M_MMAP_THRESHOLD = 32 MiB, glibc's
largest, and M_TRIM_THRESHOLD = 128 MiB): arrays below 32 MiB come from the heap, and up to 128 MiB of
free heap is kept for the next call. Arrays of 32 MiB and more (a 10^7-trial output is 80 MB) are still
mapped and returned when freed. The command line calls it once per command; a program using the Python
API may call it too. Elsewhere than Linux with glibc it does nothing.
"""

from __future__ import annotations

import sys

__all__ = ["keep_heap", "MMAP_FROM", "TRIM_FROM"]

MMAP_FROM = 32 * 1024 * 1024
"""Bytes from which an allocation is mapped from the system (glibc's largest M_MMAP_THRESHOLD on 64 bits)."""
TRIM_FROM = 128 * 1024 * 1024
"""Free bytes at the heap's top beyond which glibc gives memory back to the system."""

_kept = False


def keep_heap() -> bool:
    """Set glibc's malloc thresholds for this process (once); True if they are set."""
    global _kept
    if _kept:
        return True
    if not sys.platform.startswith("linux"):
        return False
    try:
        import ctypes

        libc = ctypes.CDLL("libc.so.6")
        m_trim_threshold, m_mmap_threshold = -1, -3  # malloc.h
        _kept = libc.mallopt(m_mmap_threshold, MMAP_FROM) == 1 and libc.mallopt(m_trim_threshold, TRIM_FROM) == 1
    except (OSError, AttributeError):  # not glibc
        _kept = False
    return _kept

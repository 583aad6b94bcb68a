"""Work arrays kept between calls, per thread: the hot loops' temporaries without fresh allocations.

On the 2-core machines here fresh arrays of some 10^4–10^5 values are mapped from the system again on
most allocations (glibc's malloc maps them, or trims its heap after them), and each page faults when
first written: about 4 ns a value, more than the arithmetic on it (``choose`` over 10^4 options: 3.6·10^5
faults, about a second). A loop that asks for its work arrays by name gets the same memory each time
(the ADC's rounding in :mod:`budget.imaging.rounding`, the rig's angle blocks in :mod:`budget.rig.trig`).
Each thread has its own. (What the command's process keeps of its heap: :mod:`budget.heap`.)
"""

from __future__ import annotations

import threading

import numpy as np

__all__ = ["scratch", "WORK_MAX"]

_WORK = threading.local()
"""Each thread's work arrays, by name."""
WORK_MAX = 1 << 16
"""Largest work array kept (512 kB of float): larger requests allocate afresh."""


def scratch(name: str, n: int, dtype=float) -> np.ndarray:
    """A work array of n values kept between calls under ``name`` in this thread (grown when too small, up to
    :data:`WORK_MAX`); its contents are undefined. Two callers that may be alive at once use two names."""
    if n > WORK_MAX:
        return np.empty(n, dtype=dtype)
    work = _WORK.__dict__
    buf = work.get(name)
    if buf is None or buf.size < n or buf.dtype != dtype:
        buf = np.empty(max(n, 1 << 12), dtype=dtype)
        work[name] = buf
    return buf[:n]

"""budget/heap.py: with glibc's thresholds fixed, a large temporary freed and allocated again reuses the heap
instead of faulting in fresh pages (minor page faults counted by the kernel, getrusage).

Common practice (glibc's documented mallopt parameters M_MMAP_THRESHOLD and M_TRIM_THRESHOLD, man 3 mallopt;
from memory); the effect on the rig's run is in benchmarks/README.md.
"""

from __future__ import annotations

import subprocess
import sys

import pytest

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"), reason="glibc's malloc: Linux only")

CHILD = """
import resource, sys
import numpy as np
if sys.argv[1] == "keep":
    from budget.heap import keep_heap
    assert keep_heap()
np.ones(150_000)  # 1.2 MB, mapped and freed: glibc's threshold rises to it, its trim threshold to twice that
faults = []
for _ in range(4):
    before = resource.getrusage(resource.RUSAGE_SELF).ru_minflt
    temps = [np.ones(140_000) for _ in range(4)]  # 4.5 MB from the heap, then freed: more than the trim threshold
    del temps
    faults.append(resource.getrusage(resource.RUSAGE_SELF).ru_minflt - before)
print(faults[-1])
"""


def _faults(mode: str) -> int:
    out = subprocess.run([sys.executable, "-c", CHILD, mode], capture_output=True, text=True, check=True)
    return int(out.stdout)


def test_a_freed_temporary_is_reused_without_page_faults():
    pages = 4 * 140_000 * 8 // 4096
    kept = _faults("keep")
    if _faults("default") < pages // 2:
        pytest.skip("this malloc already reuses the freed array (not glibc, or other defaults)")
    assert kept < pages // 20, kept  # about 1100 pages faulted afresh each time without it


def test_keep_heap_is_idempotent():
    from budget.heap import keep_heap
    assert keep_heap() is keep_heap()

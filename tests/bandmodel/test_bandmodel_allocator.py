"""The C allocator readied for a fit's megabyte arrays (``deposit.ready_allocator``): after
it, allocating and freeing an array of a few megabytes again and again takes no fresh pages
from the system (glibc only; the counts are the kernel's minor page faults of this process,
read with ``resource.getrusage``). Checks the allocator's documented behaviour (the
mallopt(3) manual page, M_MMAP_THRESHOLD: when blocks larger than the threshold, up to its
ceiling, are freed, the threshold is adjusted upward to the size of the freed block; quoted
from memory), with a counter-check in a fresh interpreter that does not ready it; no
timings."""

import os
import platform
import subprocess
import sys

import numpy as np
import pytest

from widgetkit.bandmodel import deposit

_FIXED = any(k in os.environ for k in ("MALLOC_MMAP_THRESHOLD_", "MALLOC_TRIM_THRESHOLD_",
                                        "GLIBC_TUNABLES"))
pytestmark = pytest.mark.skipif(
    platform.system() != "Linux" or platform.libc_ver()[0] != "glibc" or _FIXED,
    reason="glibc's adaptive malloc thresholds only (not fixed in the environment)")


_LOOP = """
import resource
import numpy as np

def faults():
    return resource.getrusage(resource.RUSAGE_SELF).ru_minflt

counts = []
for _ in range(4):
    before = faults()
    a = np.ones(1 << 19)  # 4 MiB, every page written
    a[::512] += 1.0
    del a
    counts.append(faults() - before)
"""


def _counts(ready: bool) -> list[int]:
    """Page faults of each of four 4 MiB arrays in a fresh interpreter."""
    code = ("from widgetkit.bandmodel.deposit import ready_allocator\nready_allocator()\n"
            if ready else "") + _LOOP + "print(counts)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return [int(v) for v in out.stdout.strip().strip("[]").split(",")]


def test_after_ready_allocator_a_repeated_4_mib_array_takes_no_fresh_pages():
    counts = _counts(ready=True)
    # the first may grow the heap; the others reuse it
    assert max(counts[1:]) < 64, counts


def test_counter_check_without_it_the_second_array_takes_fresh_pages():
    # the first is freed to the system and raises the threshold to 4 MiB only; the second
    # then grows the heap by its own pages (hundreds of faults)
    counts = _counts(ready=False)
    assert max(counts[1:]) >= 64, counts


def test_ready_allocator_runs_once_per_process(monkeypatch):
    calls = []
    monkeypatch.setattr(deposit, "_allocator_ready", False)
    monkeypatch.setattr(deposit.np, "empty", lambda *a, **k: calls.append(a) or np.zeros(1))
    deposit.ready_allocator()
    deposit.ready_allocator()
    assert calls == [(deposit.ALLOCATOR_BLOCK,)]

"""Timing helper shared by the benchmarks (they run as scripts, so this folder is on sys.path)."""

from __future__ import annotations

import time
from collections.abc import Callable


def best_of(fn: Callable[[], object], repeat: int = 3) -> float:
    """The shortest wall time in seconds of ``repeat`` calls of ``fn`` (least disturbed by load)."""
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)

"""Benchmarks of the spectrum readers (run: ``python benchmarks/bench_io.py``).

1. Reading a 1,000,000-row two-column CSV with :func:`widgetkit.io.read_text`, against
   ``numpy.loadtxt`` on the same file (baseline). Target: at least 3x faster.
2. Peak memory of that read, against the size of the resulting x and y arrays (16 MB).
   Measured two ways: tracemalloc (Python allocations) and the growth of peak RSS in a fresh
   subprocess (everything, including pandas' C buffers). Target: under 4x.
3. Decoding a 1,000,000-point DIFDUP JCAMP-DX file with :func:`widgetkit.io.read_jcamp`,
   against reading the same data as CSV with :func:`widgetkit.io.read_text` (baseline).
   Target: within 5x.

The data are a demo spectrum (invented: three bands on a sloping baseline), not a check value.
Times are the best of a few runs; they vary with the machine, the ratios matter.
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
import tracemalloc

import numpy as np

N = 1_000_000


def best(fn, repeat: int = 3) -> tuple[float, float]:
    """Best wall time and best CPU time (process_time, less sensitive to a busy machine)."""
    wall = cpu = float("inf")
    for _ in range(repeat):
        t0, c0 = time.perf_counter(), time.process_time()
        fn()
        wall = min(wall, time.perf_counter() - t0)
        cpu = min(cpu, time.process_time() - c0)
    return wall, cpu


def demo_spectrum():
    from widgetkit import Spectrum

    x = np.linspace(400.0, 4000.0, N)
    y = (0.02 + 1e-5 * x + 0.8 * np.exp(-0.5 * ((x - 2886.0) / 4.0) ** 2)
         + 0.3 / (1 + ((x - 1650.0) / 6.0) ** 2) + 0.5 * np.exp(-0.5 * ((x - 3400.0) / 60.0) ** 2))
    return Spectrum(x, y, y_kind="absorbance", meta={"title": "bench demo"})


_RSS_CHILD = r"""
import io, resource, sys
import pandas as pd
from widgetkit.io import read_text

def status(key):
    with open("/proc/self/status") as f:
        for line in f:
            if line.startswith(key):
                return int(line.split()[1]) * 1024
    return None

pd.read_csv(io.StringIO("1,2\n3,4\n"), header=None)  # load pandas' machinery first
try:  # reset the peak-RSS mark (Linux); else fall back to ru_maxrss
    with open("/proc/self/clear_refs", "w") as f:
        f.write("5")
    base, peak = status("VmRSS"), None
except OSError:
    base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
s = read_text(sys.argv[1])
peak = status("VmHWM") if status("VmHWM") is not None else (
    resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024)
print(peak - base)
"""


def main() -> None:
    from widgetkit.io import read_jcamp, read_text, write_csv, write_jcamp

    spec = demo_spectrum()
    with tempfile.TemporaryDirectory() as tmp:
        csv = os.path.join(tmp, "bench.csv")
        jdx = os.path.join(tmp, "bench.jdx")
        write_csv(spec, csv)
        t0 = time.perf_counter()
        write_jcamp(spec, jdx, form="DIFDUP")
        t_write = time.perf_counter() - t0
        print(f"files: CSV {os.path.getsize(csv) / 1e6:.1f} MB, DIFDUP "
              f"{os.path.getsize(jdx) / 1e6:.1f} MB ({N:,} points; DIFDUP written in "
              f"{t_write:.2f} s)")

        (t_ours, c_ours) = best(lambda: read_text(csv))
        (t_loadtxt, c_loadtxt) = best(lambda: np.loadtxt(csv, delimiter=",", skiprows=2), 2)
        print(f"[1] CSV read: widgetkit.read_text {t_ours * 1e3:.0f} ms, numpy.loadtxt "
              f"{t_loadtxt * 1e3:.0f} ms -> {t_loadtxt / t_ours:.1f}x faster (target >= 3x); "
              f"CPU time {c_ours * 1e3:.0f} vs {c_loadtxt * 1e3:.0f} ms -> "
              f"{c_loadtxt / c_ours:.1f}x")

        arrays = 2 * N * 8
        tracemalloc.start()
        read_text(csv)
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        out = subprocess.run([sys.executable, "-c", _RSS_CHILD, csv], capture_output=True,
                             text=True, check=True)
        rss = int(out.stdout.strip())
        print(f"[2] peak memory of the read: tracemalloc {peak / 1e6:.1f} MB = "
              f"{peak / arrays:.2f}x, RSS growth {rss / 1e6:.1f} MB = {rss / arrays:.2f}x the "
              f"{arrays / 1e6:.0f} MB of x and y (target < 4x)")

        (t_jdx, c_jdx) = best(lambda: read_jcamp(jdx))
        print(f"[3] DIFDUP read: widgetkit.read_jcamp {t_jdx * 1e3:.0f} ms, same data as CSV "
              f"{t_ours * 1e3:.0f} ms -> {t_jdx / t_ours:.2f}x the CSV time (target <= 5x); "
              f"CPU time {c_jdx * 1e3:.0f} vs {c_ours * 1e3:.0f} ms -> {c_jdx / c_ours:.2f}x")


if __name__ == "__main__":
    main()

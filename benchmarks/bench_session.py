"""Session save, load and verify with a 1,000,000-point spectrum and 10 steps.

Run: ``python benchmarks/bench_session.py``. Targets (issue 2): each under 2 s here.
Baseline measured in the same run: writing and reading the same two arrays with
``numpy.save``/``numpy.load`` (raw binary, no JSON, no hashing, no replay) — the floor
for moving that many bytes through the file system.
"""

from __future__ import annotations

import os
import tempfile

import numpy as np
from _timing import best_of

import widgetkit as wk

N = 1_000_000


def spectrum(n: int = N) -> wk.Spectrum:
    """Invented benchmark data: 25 Gaussian lines on a slope with seeded noise."""
    rng = np.random.default_rng(0)
    x = np.linspace(2000.0, 3200.0, n)
    y = 0.05 + 2e-5 * (x - 2000.0)
    for c in np.linspace(2100, 3100, 25):
        y += 0.8 * np.exp(-0.5 * ((x - c) / 0.4) ** 2)
    y += rng.normal(0, 0.002, n)
    return wk.Spectrum(x, y, meta={"title": "benchmark band"})


def ten_steps(sp: wk.Spectrum) -> wk.Session:
    """The benchmark's 10 steps (numbered from 0, the load); peaks added between the lines."""
    s = wk.Session(sp)                              # 0 load
    s.crop(2050, 3150)                              # 1
    s.subtract_baseline("poly", degree=1)           # 2
    s.find_peaks(min_snr=20, min_separation=5)      # 3
    s.add_peak(2537.5, snap=False)                  # 4
    s.add_peak(2637.5, snap=False)                  # 5
    s.remove_peak(int(s.peaks["peak_id"].iloc[0]))  # 6
    s.note("benchmark")                             # 7
    s.add_peak(2737.5, snap=False)                  # 8
    s.note("ten steps")                             # 9
    return s


def main() -> None:
    sp = spectrum()
    s = ten_steps(sp)
    assert len(s.history) == 10
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "s.json")
        raw = os.path.join(tmp, "raw.npy")
        t_save = best_of(lambda: s.save(path))
        t_load = best_of(lambda: wk.Session.load(path))
        loaded = wk.Session.load(path)
        t_verify = best_of(lambda: loaded.verify())
        assert loaded.verify().ok
        both = np.stack([sp.x, sp.y])
        t_npsave = best_of(lambda: np.save(raw, both))
        t_npload = best_of(lambda: np.load(raw))
        size = os.path.getsize(path)
    print(f"session with {N:,} points and {len(s.history)} steps; file {size / 1e6:.1f} MB")
    print(f"  save    {t_save:7.3f} s   (target < 2 s)   {t_save / t_npsave:6.1f}x numpy.save")
    print(f"  load    {t_load:7.3f} s   (target < 2 s)   {t_load / t_npload:6.1f}x numpy.load"
          "  (load restores the recorded states; bench_load.py times a fresh process)")
    print(f"  verify  {t_verify:7.3f} s   (target < 2 s)   replays and compares 10 steps")
    print(f"  baseline numpy.save {t_npsave * 1e3:.1f} ms, numpy.load {t_npload * 1e3:.1f} ms")


if __name__ == "__main__":
    main()

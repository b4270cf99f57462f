"""One recipe over 1,000 simulated spectra of about 40 lines each (issue 15).

Run: ``python benchmarks/bench_series.py [--n 1000] [--small 100]``. Figures:

* spectra per second with 1 worker (in this process) and with 2 worker processes, and the
  parallel efficiency rate₂ / (2 rate₁) (target ≥ 0.8 on a two-core machine);
* the Dask ``LocalCluster`` (2 worker processes × 1 thread) against the process pool, wall
  time ratio (target ≤ 1.2), and the ratio of the processor time per spectrum in the workers
  (which other load on the machine disturbs less than the wall time);
* peak memory of the driver and of a worker for ``--small`` and ``--n`` spectra (it must not
  grow with the number of spectra: the spectra are streamed);
* the per-spectrum cost measured inside the workers, the overhead per spectrum of each
  executor and of the driver (writing the session files), and from them the throughput to
  expect on a cluster of W workers: min(W / (cost + overhead), 1 / driver time).

Each measurement runs in a fresh process (so that peak memory is its own). The machine's load
average is printed beside every figure: on a shared machine other work slows the parallel runs.
The spectra (HCl, natural isotopologues, 280-360 K, 0.1 cm⁻¹ steps, 6,501 points, noise and a
baseline, from ``widgetkit.simulate``; invented benchmark data) are written once to
``benchmarks/_work/series-<n>/`` and reused.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).parent
WORK = HERE / "_work"


def _spectra(n: int) -> Path:
    """Write (once) n simulated spectra; returns their folder."""
    import numpy as np

    import widgetkit as wk
    from widgetkit.demo.make_data import write_labelled_jcamp

    folder = WORK / f"series-{n}"
    done = folder / ".complete"
    if done.exists():
        return folder
    folder.mkdir(parents=True, exist_ok=True)
    hcl = wk.Diatomic("H", "Cl")
    rng = np.random.default_rng(15)
    for i in range(n):
        T = float(rng.uniform(280.0, 360.0))
        sp = wk.simulate.rovibrational(
            hcl, wk.simulate.HANDBOOK["1H-35Cl"], x_range=(2550.0, 3200.0), step=0.1,
            resolution=0.5, temperature=T, strength=0.9, lorentz_hwhm=0.15, noise=0.002,
            seed=10_000 + i, baseline=(0.04, 0.015, 0.006), y_kind="absorbance",
            title=f"benchmark cell {i} at {T:.1f} K")
        write_labelled_jcamp(sp, folder / f"cell_{i:04d}.jdx", {"$SET TEMPERATURE": f"{T:.1f} K"})
    done.write_text("ok")
    return folder


def _recipe(folder: Path):
    import widgetkit as wk

    s = wk.Session.from_file(sorted(folder.glob("*.jdx"))[0])
    s.subtract_baseline("poly", degree=2)
    s.find_peaks(min_snr=10)
    s.fit_lines(shape="voigt", shared_width=True, baseline="linear")
    s.assign_band(wk.Diatomic("H", "Cl"), temperature=300)
    return s.recipe(), len(s.lines)


def _child(mode: str, n: int, out: str) -> dict:
    """One run in this (fresh) process; returns its figures."""
    import widgetkit as wk
    from widgetkit.series import runner

    folder = _spectra(n)
    recipe, nlines = _recipe(folder)
    files = sorted(folder.glob("*.jdx"))[:n]
    driver = {"seconds": 0.0, "calls": 0}
    record = runner._Store.record

    def timed_record(self, res, src):  # the driver's share: writing sessions and the file
        t = time.perf_counter()
        record(self, res, src)
        driver["seconds"] += time.perf_counter() - t
        driver["calls"] += 1

    runner._Store.record = timed_record
    load0 = os.getloadavg()[0]
    t0 = time.perf_counter()
    if mode == "dask":
        from distributed import Client, LocalCluster

        with LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                          dashboard_address=":0") as cluster, Client(cluster) as client:
            t0 = time.perf_counter()  # the cluster's start-up is not part of the run
            res = wk.run_series(recipe, files, client=client, progress=False, out=out,
                                warm_start=False)
            wall = time.perf_counter() - t0
    else:
        res = wk.run_series(recipe, files, workers=1 if mode == "serial" else 2,
                            progress=False, out=out, warm_start=False)
        wall = time.perf_counter() - t0
    sp = res.spectra
    cpu = [e.get("cpu_seconds") or 0.0 for e in res.entries]
    self_kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    child_kb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    return {"mode": mode, "n": n, "lines": nlines, "wall": wall, "rate": n / wall,
            "cost": float(sp["seconds"].astype(float).mean()), "cpu": sum(cpu) / max(1, len(cpu)),
            "ok": int((sp["status"] == "ok").sum()), "driver": driver["seconds"] / max(1, n),
            "driver_peak_mb": self_kb / 1024, "worker_peak_mb": child_kb / 1024,
            "load": [load0, os.getloadavg()[0]]}


def _run(mode: str, n: int) -> dict:
    import tempfile

    with tempfile.TemporaryDirectory(prefix="bench-series-") as out:
        text = subprocess.run([sys.executable, __file__, "--child", mode, str(n), out],
                              check=True, capture_output=True, text=True).stdout
    return json.loads(text.strip().splitlines()[-1])


def _line(r: dict) -> str:
    return (f"{r['mode']:>7s} n={r['n']:5d}: {r['wall']:7.1f} s, {r['rate']:6.2f} spectra/s, "
            f"cost {1e3 * r['cost']:5.0f} ms/spectrum in the worker ({1e3 * r['cpu']:4.0f} ms "
            f"processor time), driver {1e3 * r['driver']:5.1f} "
            f"ms/spectrum, peak RSS driver {r['driver_peak_mb']:5.0f} MB worker "
            f"{r['worker_peak_mb']:5.0f} MB, {r['ok']}/{r['n']} ok, load {r['load'][0]:.1f}->"
            f"{r['load'][1]:.1f}")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--n", type=int, default=1000)
    ap.add_argument("--small", type=int, default=100)
    ap.add_argument("--child", nargs=3, metavar=("MODE", "N", "OUT"))
    args = ap.parse_args()
    if args.child:
        print(json.dumps(_child(args.child[0], int(args.child[1]), args.child[2])))
        return
    t = time.perf_counter()
    _spectra(args.n)
    print(f"spectra ready ({args.n}, {time.perf_counter() - t:.0f} s); cores {os.cpu_count()}, "
          f"load {os.getloadavg()[0]:.1f}", flush=True)
    runs = {}
    for mode, n in (("serial", args.n), ("pool", args.n), ("dask", args.n), ("pool", args.small)):
        r = _run(mode, n)
        runs[(mode, n)] = r
        print(_line(r), flush=True)
    s, p, d, small = (runs[("serial", args.n)], runs[("pool", args.n)], runs[("dask", args.n)],
                      runs[("pool", args.small)])
    eff = p["rate"] / (2 * s["rate"])
    print(f"\nlines per spectrum: {s['lines']} (the worked-out spectrum)")
    print(f"parallel efficiency, 2 workers vs 1: {eff:.2f} (target >= 0.8)")
    print(f"Dask LocalCluster / process pool wall time: {d['wall'] / p['wall']:.2f} (target <= 1.2); "
          f"processor time per spectrum in the workers {d['cpu'] / p['cpu']:.2f} (the work itself, "
          "less sensitive to other load on the machine)")
    print(f"peak memory {args.small} -> {args.n} spectra: driver {small['driver_peak_mb']:.0f} -> "
          f"{p['driver_peak_mb']:.0f} MB, worker {small['worker_peak_mb']:.0f} -> "
          f"{p['worker_peak_mb']:.0f} MB")
    cost = s["cost"]
    over_pool = 2 * p["wall"] / p["n"] - p["cost"]
    over_dask = 2 * d["wall"] / d["n"] - d["cost"]
    drv = max(p["driver"], d["driver"])
    print(f"per spectrum: cost {1e3 * cost:.0f} ms wall, {1e3 * s['cpu']:.0f} ms processor time "
          f"(serial, in the worker); overhead per task "
          f"{1e3 * over_pool:.0f} ms in the pool, {1e3 * over_dask:.0f} ms on Dask; the driver "
          f"{1e3 * drv:.1f} ms (session file and series file)")
    print("expected on a cluster of W workers (Dask; the driver writes every session): "
          "rate = min(W / (cost + overhead), 1 / driver)")
    c = d["cost"] + max(over_dask, 0.0)
    for w in (8, 32, 128, 512):
        rate = min(w / c, 1 / drv)
        print(f"  W = {w:4d}: {rate:7.1f} spectra/s, 1000 spectra in {1000 / rate:6.1f} s")
    print(f"  the driver saturates near W = {c / drv:.0f} workers")


if __name__ == "__main__":
    main()

"""Benchmark of the line-fitting fast path against the naive lmfit composite.

Run: ``python benchmarks/bench_lines.py`` (8- and 20-line naive baselines, a few
minutes) or ``python benchmarks/bench_lines.py --full`` (adds the naive 40-line
composite, which takes many minutes on its own). ``--large`` runs only the
large cases (500 lines on 10⁵ points, 5,000 lines on 10⁶ points, each in its own
process for its peak memory; targets < 5 s, and < 60 s and < 2 GB), with a
500-line floor and the cost per line against the 500-line case measured in the
same run.

Baselines measured in the same run:

* **naive composite**: an lmfit CompositeModel of VoigtModels plus a
  LinearModel, numerical derivatives (``Model.fit``, default leastsq), from
  the same starting values: how most users write this fit;
* **floor**: the fast path's own iteration count times the cost of one
  windowed model evaluation plus one sparse Jacobian.

The band is invented: a P/R-like progression of Voigt lines in an invented gas
cell (our own simulator, seeded noise), not a measured spectrum.
"""

from __future__ import annotations

import argparse
import time

import lmfit
import numpy as np

import widgetkit.lines as wl
from widgetkit.lines import solver


def band(n_lines: int, n_points: int, seed: int = 1):
    """Invented P/R progression nu(m) = nu0 + (B1+B0) m + (B1-B0) m^2, Voigt lines."""
    rng = np.random.default_rng(seed)
    half = n_lines // 2
    m = np.r_[-half:0, 1:n_lines - half + 1]
    nu0, b1, b0 = 2886.0, 10.14, 10.44
    # beyond 40 lines B1 - B0 shrinks so the band head (lines piling up) stays outside
    db = (b1 - b0) * min(1.0, (40 / n_lines) ** 2)
    pos = nu0 + (b1 + b0) * m + db * m**2
    j = np.where(m > 0, m - 1, -m)
    # Boltzmann-like envelope, widened beyond 40 lines so every line stays above the noise
    area = (np.abs(m) + 1.0) * np.exp(-b0 * j * (j + 1) / (2000.0 * max(1.0, n_lines / 40) ** 2))
    area /= area.max()
    sigma, gamma = 0.05, 0.08
    x = np.linspace(pos.min() - 15.0, pos.max() + 15.0, n_points)
    y = 0.02 + 1e-5 * (x - x.mean())
    for a, p in zip(area, pos):
        y = y + wl.voigt(x, a, p, sigma, gamma)
    y = y + rng.normal(0.0, 0.01 * float(wl.voigt(0.0, 1.0, 0.0, sigma, gamma)), x.size)
    start = pos + rng.normal(0.0, 0.03, pos.size)
    return x, y, start


def fast(x, y, start):
    t = time.perf_counter()
    res = wl.fit(x, y, start)
    return time.perf_counter() - t, res


def naive(x, y, start):
    """CompositeModel of VoigtModels + linear baseline, numerical derivatives.

    Started from the same estimated heights and widths the fast path starts from.
    """
    from widgetkit.lines.baselines import BASELINES
    from widgetkit.lines.start import starting_values

    st = starting_values(x, y, start, BASELINES["linear"], 0.5 * (x[0] + x[-1]))
    sh = wl.SHAPES["voigt"]
    sig0, gam0 = sh.widths_from_fwhm(st.fwhm)
    area0 = st.heights / sh.height(1.0, sig0, gam0)
    model = lmfit.models.LinearModel(prefix="bl_")
    for i in range(len(start)):
        model = model + lmfit.models.VoigtModel(prefix=f"v{i}_")
    slope = st.baseline[1]
    params = model.make_params(bl_slope=slope,
                               bl_intercept=st.baseline[0] - slope * 0.5 * (x[0] + x[-1]))
    for i, p in enumerate(start):
        params[f"v{i}_center"].set(value=p)
        params[f"v{i}_sigma"].set(value=sig0[i], min=1e-4)
        params[f"v{i}_gamma"].set(value=gam0[i], min=1e-4, vary=True, expr="")
        params[f"v{i}_amplitude"].set(value=area0[i])
    t = time.perf_counter()
    res = model.fit(y, params, x=x)
    return time.perf_counter() - t, res


def floor(x, y, start, res):
    """Iterations (Jacobian evaluations, both stages) x (one windowed model + one sparse
    Jacobian, at a new point) of the fast path."""
    captured = {}
    orig = solver.levenberg_marquardt

    def spy(model, v, *a, **k):
        captured["model"] = model
        out = orig(model, v, *a, **k)
        captured["v"] = out[0]
        return out

    solver.levenberg_marquardt = spy
    try:
        wl.fit(x, y, start)
    finally:
        solver.levenberg_marquardt = orig
    model, v = captured["model"], captured["v"]
    n = 5
    # each at a new point (a relative 1e-9 apart), as in a fit: the model keeps its last
    # values and derivatives, and the same point again would cost nothing
    rng = np.random.default_rng(0)
    points = [v * (1.0 + 1e-9 * rng.standard_normal(v.size)) for _ in range(n)]
    t = time.perf_counter()
    for u in points:
        model.residual_vec(u)
        model.jacobian_vec(u)
    one = (time.perf_counter() - t) / n
    return one, res.njev * one


def big_band(n_lines: int, n_points: int, seed: int = 2):
    """Invented dense band for the large cases: evenly spread Voigt lines of FWHM about
    8 points (sigma 0.025, gamma 0.03 cm-1 on a 0.01 cm-1 grid), a smooth envelope, a
    sloping baseline, noise 1 % of the strongest peak; starts off by half a point."""
    rng = np.random.default_rng(seed)
    x = 2000.0 + 0.01 * np.arange(n_points)
    spacing = (x[-1] - x[0]) / (n_lines + 1)
    k = np.arange(1, n_lines + 1)
    pos = x[0] + spacing * k + 0.2 * spacing * np.sin(0.7 * k)
    area = 0.3 + 0.7 * np.exp(-(((k - n_lines / 2) / (0.4 * n_lines)) ** 2))
    sigma, gamma = 0.025, 0.03
    y = 0.05 + 1e-4 * (x - x.mean()) / (x[-1] - x[0])
    for a, p in zip(area, pos):  # each line simulated out to 3000 HWHM
        lo, hi = np.searchsorted(x, [p - 120.0, p + 120.0])
        y[lo:hi] += wl.voigt(x[lo:hi], a, p, sigma, gamma)
    y += rng.normal(0.0, 0.01 * float(wl.voigt(0.0, 1.0, 0.0, sigma, gamma)), x.size)
    return x, y, pos + rng.normal(0.0, 0.005, pos.size)


def large_one(n_lines: int, n_points: int) -> dict:
    """One large fit in this process: wall and CPU time, peak RSS, and its floor
    (Jacobian evaluations x the CPU time of one residual plus one structured
    normal-equation assembly and solve at the solution)."""
    import resource

    from widgetkit.lines import structured

    x, y, start = big_band(n_lines, n_points)
    captured = {}
    orig = solver.levenberg_marquardt

    def spy(model, v, *a, **k):
        captured["model"] = model
        return orig(model, v, *a, **k)

    solver.levenberg_marquardt = spy
    t, c = time.perf_counter(), time.process_time()
    res = wl.fit(x, y, start, time_limit=None)  # the natural time, not the default budget
    wall, cpu = time.perf_counter() - t, time.process_time() - c
    solver.levenberg_marquardt = orig
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # kB -> MB (Linux)
    model = captured["model"]
    v = model.variables(res.params)
    t = time.process_time()  # CPU time: the machine is shared, wall time is not ours
    r = model.residual_vec(v + 0.0)
    model._last_values = model._last_grad = model._last_normal = None
    hess, g = structured.normal_equations(model, v, r)
    hess.solve(g, np.ones(v.size, dtype=bool), 1e-3)
    one = time.process_time() - t
    pos_err = np.abs(res.table.position.to_numpy() - np.sort(start)).max()
    return dict(n_lines=n_lines, n_points=n_points, wall=wall, cpu=cpu, rss_mb=rss,
                njev=res.njev, nfev=res.nfev, converged=res.converged, one=one,
                floor=res.njev * one, max_shift=float(pos_err),
                cov_nnz=int(res.result.covar.nnz) if res.result.covar is not None else 0)


def large(cases=((500, 100_000), (5000, 1_000_000))):
    """Each large case in its own process (clean peak memory); prints one line each."""
    import json
    import subprocess
    import sys

    base = None
    for n_lines, n_points in cases:
        out = subprocess.run([sys.executable, __file__, "--one", str(n_lines), str(n_points)],
                             capture_output=True, text=True, check=True).stdout
        d = json.loads(out.strip().splitlines()[-1])
        base = base or d
        print(f"{n_lines:5d} lines {n_points:8d} points: {d['wall']:7.2f} s wall, "
              f"{d['cpu']:7.2f} s CPU, peak RSS {d['rss_mb']:6.0f} MB, converged "
              f"{d['converged']}, njev {d['njev']}, nfev {d['nfev']}; CPU floor {d['floor']:.2f} s "
              f"({d['njev']} x {d['one']:.3f} s) -> {d['cpu'] / d['floor']:.1f}x floor; "
              f"CPU per line {d['cpu'] / n_lines * 1e3:.2f} ms = "
              f"{(d['cpu'] / n_lines) / (base['cpu'] / base['n_lines']):.2f}x the "
              f"{base['n_lines']}-line case; covariance entries kept {d['cov_nnz']}", flush=True)


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--full", action="store_true", help="also run the naive 40-line fit")
    ap.add_argument("--large", action="store_true",
                    help="only the 500-line and 5,000-line cases")
    ap.add_argument("--one", nargs=2, type=int, metavar=("LINES", "POINTS"),
                    help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    import os

    if args.one:
        import json

        print(json.dumps(large_one(*args.one)))
        return
    if args.large:
        print(f"large fits; load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")
        large()
        return

    print(f"lmfit {lmfit.__version__}; times are wall-clock seconds of one fit (best of 3 for "
          f"the fast path); OPENBLAS_NUM_THREADS={os.environ.get('OPENBLAS_NUM_THREADS')}, "
          f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")
    cases = [(8, 5000, True), (20, 12000, True), (40, 28000, args.full)]
    for n_lines, n_points, run_naive in cases:
        x, y, start = band(n_lines, n_points)
        wl.fit(x, y, start)  # warm-up
        t_fast, res = min((fast(x, y, start) for _ in range(3)), key=lambda r: r[0])
        one, fl = floor(x, y, start, res)
        line = (f"{n_lines:3d} lines {n_points:6d} points: fast {t_fast:7.3f} s "
                f"(chi2 {res.chisqr:.6g}, nfev {res.nfev}, njev {res.njev}, converged "
                f"{res.converged}); floor {fl:.3f} s ({res.njev} iterations x {one * 1e3:.1f} ms) "
                f"-> {t_fast / fl:.1f}x floor")
        print(line, flush=True)
        if run_naive:
            t_naive, nres = naive(x, y, start)
            print(f"    naive composite {t_naive:8.2f} s (chi2 {nres.chisqr:.6g}, nfev "
                  f"{nres.nfev}, success {nres.success}) -> fast is {t_naive / t_fast:.0f}x "
                  f"faster; chi2 fast/naive = {res.chisqr / nres.chisqr:.6f}", flush=True)
        else:
            print("    naive composite not run at this size (use --full)")
    print("scaling of the fast path (350 points per line, same band recipe):")
    base = None
    for n_lines in (10, 20, 40, 80):
        x, y, start = band(n_lines, 350 * n_lines)
        t, res = min((fast(x, y, start) for _ in range(3)), key=lambda r: r[0])
        base = base or t / n_lines
        print(f"    {n_lines:3d} lines {x.size:6d} points: {t:7.3f} s, {t / n_lines * 1e3:6.2f} "
              f"ms/line ({t / n_lines / base:.2f}x the 10-line cost per line), converged "
              f"{res.converged}", flush=True)


if __name__ == "__main__":
    main()

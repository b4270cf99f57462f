"""Benchmarks of the numerical oscillator and the spectrum simulator.

Run: ``python benchmarks/bench_oscillator.py``. Prints best-of-N wall times
and ratios against baselines measured in the same run:

1. 30 Morse levels (12C16O constants) on a 2,000-point grid with
   ``wk.oscillator.solve`` (coarse solve, sinc interpolation and a verified
   Rayleigh–Ritz refinement on the full grid), against the baselines of a full
   dense diagonalisation of the same Hamiltonian (``numpy.linalg.eigh``) and
   of LAPACK's partial eigensolver for the 30 lowest (``scipy.linalg.eigh``,
   driver evx).
   Target (issue 5): under 0.5 s.
2. A 40-line two-isotopologue band (H35Cl and H37Cl 1-0) on 100,000 points:
   windowed Voigt lines (``render_lines``) and the whole
   ``wk.simulate.rovibrational`` call, against the baseline of evaluating
   ``scipy.special.voigt_profile`` of every line on every point.
   Target (issue 5): under 0.2 s.

Times depend on the machine and on its load; no test gates on them. The
script runs BLAS single-threaded (unless OPENBLAS_NUM_THREADS / OMP_NUM_THREADS
are set) because on a shared machine busy-waiting BLAS threads dominate the
dense eigensolves; the setting is printed.
"""

from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # before numpy is imported
os.environ.setdefault("OMP_NUM_THREADS", "1")


import numpy as np  # noqa: E402
import scipy.linalg  # noqa: E402
from _timing import best_of  # noqa: E402
from scipy.special import voigt_profile  # noqa: E402

import widgetkit as wk  # noqa: E402
from widgetkit.oscillator import KINETIC, morse, sinc_dvr_kinetic, solve  # noqa: E402
from widgetkit.simulate import HANDBOOK, doppler_sigma, line_list, render_lines, rovibrational  # noqa: E402


def best(func, repeat: int = 5) -> float:
    return best_of(func, repeat)


def bench_morse() -> None:
    co = HANDBOOK["12C-16O"]
    mu = wk.Diatomic("12C", "16O").main.reduced_mass
    pot = morse(co["omega_e"], co["omega_e_x_e"], r_e=co["r_e"])
    grid = (0.70, 2.45, 2000)
    t_solve = best(lambda: solve(pot, mu, n_levels=30, grid=grid))
    r = np.linspace(*grid)
    h = sinc_dvr_kinetic(r.size, r[1] - r[0], KINETIC / mu)
    h[np.diag_indices(r.size)] += pot.energy(r, mu)
    t_full = best(lambda: np.linalg.eigh(h), repeat=3)
    t_part = best(lambda: scipy.linalg.eigh(h, subset_by_index=[0, 29], driver="evx"), repeat=3)
    t_auto = best(lambda: solve(pot, mu, n_levels=30))
    auto = solve(pot, mu, n_levels=30)
    print("30 Morse levels of 12C16O")
    print(f"  solve on a 2,000-point grid        {t_solve * 1e3:8.1f} ms   (target < 500 ms)")
    print(f"  baseline numpy.linalg.eigh (full)  {t_full * 1e3:8.1f} ms   ratio {t_full / t_solve:5.2f}x")
    print(f"  baseline scipy eigh, 30 lowest     {t_part * 1e3:8.1f} ms   ratio {t_part / t_solve:5.2f}x")
    print(f"  solve, automatic grid ({auto.r.size} pts)  {t_auto * 1e3:8.1f} ms   "
          f"ratio to the 2,000-point solve {t_solve / t_auto:5.2f}x")


def bench_band() -> None:
    hcl = wk.Diatomic("H", "Cl")
    c = HANDBOOK["1H-35Cl"]
    lines = line_list(hcl, c, J_max=10, min_relative=0.0)
    lines = lines.nlargest(40, "intensity")
    x = np.linspace(2600.0, 3100.0, 100_000)
    pos = lines["position"].to_numpy()
    area = lines["intensity"].to_numpy()
    sigma = doppler_sigma(pos, 296.0, lines["mass"].to_numpy())
    gamma = 0.05
    t_win = best(lambda: render_lines(x, pos, area, sigma, gamma))
    t_naive = best(lambda: sum(a * voigt_profile(x - p, s, gamma)
                               for p, a, s in zip(pos, area, sigma, strict=True)), repeat=3)
    err = np.max(np.abs(render_lines(x, pos, area, sigma, gamma)
                        - sum(a * voigt_profile(x - p, s, gamma)
                              for p, a, s in zip(pos, area, sigma, strict=True))))
    t_sim = best(lambda: rovibrational(hcl, c, x=x, J_max=10, min_relative=0.0, noise=0.001, seed=1))
    n_sim = rovibrational(hcl, c, x=x, J_max=10, min_relative=0.0).meta["simulated"]["n_lines"]
    print(f"40-line two-isotopologue band (HCl 1-0) on {x.size:,} points")
    print(f"  windowed Voigt lines (render_lines)  {t_win * 1e3:8.1f} ms   (target < 200 ms)")
    print(f"  baseline voigt_profile everywhere    {t_naive * 1e3:8.1f} ms   "
          f"ratio {t_naive / t_win:5.2f}x   max difference {err:.1e} (peak ~{area.max() / 0.05 / np.pi:.0f})")
    print(f"  rovibrational() end to end, {n_sim} lines {t_sim * 1e3:8.1f} ms   "
          f"ratio to the baseline {t_naive / t_sim:5.2f}x")


if __name__ == "__main__":
    print(f"OPENBLAS_NUM_THREADS={os.environ['OPENBLAS_NUM_THREADS']} "
          f"OMP_NUM_THREADS={os.environ['OMP_NUM_THREADS']}")
    bench_morse()
    bench_band()

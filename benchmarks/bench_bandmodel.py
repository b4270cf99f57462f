"""Benchmark of the band-model fit (issue 13).

A 100-line two-isotopologue band (12C16O and 13C16O 1-0, J'' <= 25, simulated from the
handbook constants of :data:`widgetkit.simulate.HANDBOOK`, recalled from memory) on 5·10⁴
points, Gaussian instrument of 0.02 cm⁻¹, seeded noise. Targets: the fit under 1 s, and at
least 50 times faster than the same model fitted through a generic lmfit ``Model`` with
numerical derivatives, measured in the same run.

The baseline model is the same physics written the straightforward way: each evaluation
asks the simulator for the line list (``wk.simulate.line_list``) at the trial constants and
temperature, scales the intensities to the band area, and sums the Voigt lines over the grid
(``wk.simulate.render_lines``), plus a linear baseline; lmfit's default least-squares
solver differentiates it numerically. Both fit the same nine parameters (band origin, B_e,
α_e, D_e, T, band area, Lorentzian HWHM, two baseline terms) from the same start values;
ω_e x_e is held at the value simulated.

Run: ``python benchmarks/bench_bandmodel.py`` (``--quick`` for a 10⁴-point grid).
"""

from __future__ import annotations

import math
import sys
import time

import lmfit
import numpy as np
from _timing import best_of

import widgetkit as wk
from widgetkit.simulate import HANDBOOK
from widgetkit.simulate.spectra import doppler_sigma, render_lines

CO = HANDBOOK["12C-16O"]
MOL = wk.Diatomic("C", "O")
RES = 0.02
SIGMA_INST = RES / (2.0 * math.sqrt(2.0 * math.log(2.0)))


def data(n: int):
    x = np.linspace(2040.0, 2250.0, n)
    sp = wk.simulate.rovibrational(MOL, CO, x=x, temperature=296.0, resolution=RES, noise=0.002,
                                   seed=3, J_max=25, baseline=(0.01, 0.001), lorentz_hwhm=0.05)
    return sp, int(sp.meta["simulated"]["n_lines"])


def ours(sp):
    return wk.bandmodel.fit(sp.x, sp.y, MOL, resolution=RES, y_kind="absorbance",
                            fix={"omega_e_x_e": CO["omega_e_x_e"]})


def lmfit_model(x, band_origin, B_e, alpha_e, D_e, temperature, band_area, lorentz_hwhm, c0, c1):
    wexe = CO["omega_e_x_e"]
    consts = {"omega_e": band_origin + 2.0 * wexe, "omega_e_x_e": wexe, "B_e": B_e,
              "alpha_e": alpha_e, "D_e": max(D_e, 0.0)}
    lines = wk.simulate.line_list(MOL, consts, temperature=max(temperature, 1.0), J_max=25,
                                  min_relative=0.0)
    pos = lines["position"].to_numpy()
    area = band_area * lines["intensity"].to_numpy() / lines["intensity"].sum()
    sig = np.sqrt(doppler_sigma(pos, max(temperature, 1.0), lines["mass"].to_numpy()) ** 2
                  + SIGMA_INST**2)
    t = (x - 0.5 * (x[0] + x[-1])) / (0.5 * (x[-1] - x[0]))
    return render_lines(x, pos, area, sig, max(lorentz_hwhm, 1e-6)) + c0 + c1 * t


def baseline_fit(sp, start):
    model = lmfit.Model(lmfit_model)
    params = model.make_params(**start)
    return model.fit(sp.y, params, x=sp.x)


def main() -> None:
    n = 10_000 if "--quick" in sys.argv else 50_000
    sp, n_lines = data(n)
    res = ours(sp)
    t_ours = best_of(lambda: ours(sp), 3)
    th = res.theta
    print(f"band model: {n_lines} lines of 2 isotopologues on {n} points, status {res.status}, "
          f"{res.nfev} evaluations, {res.njev} Jacobians")
    print(f"  wk.bandmodel.fit        {t_ours * 1e3:9.1f} ms  (target < 1000 ms)")
    # the same start values for the baseline (those our fit begins from)
    p = res.parameters.set_index("name")["start"]
    start = {"band_origin": p["band_origin"], "B_e": p["B_e"], "alpha_e": p["alpha_e"],
             "D_e": p["D_e"], "temperature": p["temperature"], "band_area": p["band_area"],
             "lorentz_hwhm": p["lorentz_hwhm"], "c0": p["baseline_0"], "c1": p["baseline_1"]}
    t0 = time.perf_counter()
    base = baseline_fit(sp, start)
    t_base = time.perf_counter() - t0
    print(f"  lmfit Model, numerical  {t_base * 1e3:9.1f} ms  ({base.nfev} evaluations)")
    print(f"  ratio lmfit/ours        {t_base / t_ours:9.1f}  (target >= 50)")
    for name in ("band_origin", "B_e", "temperature"):
        print(f"  {name:12s} ours {th[name]:.7g} ± {res.stderr(name):.2g}, "
              f"lmfit {base.params[name].value:.7g} ± {base.params[name].stderr or float('nan'):.2g}")


if __name__ == "__main__":
    main()

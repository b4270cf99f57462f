"""Benchmarks of widgetkit.levels (issue 4).

1. Assignment and constants of a 120-line band with two isotopologues
   (12C16O and 13C16O, simulated from handbook constants, from memory,
   Huber & Herzberg 1979), at least 5 predict–match–refit rounds; target
   under 0.5 s. Baseline measured in the same run: one weighted linear
   least-squares band fit of the same 120 lines with their labels known
   (:func:`widgetkit.levels.fit_band`, both isotopologues).
2. Progression labelling of 8 band centres (H35Cl fundamental, overtones and
   hot bands); target under 0.1 s. Baseline: one three-term weighted least
   squares fit of the 8 centres with their labels known.

Run: ``python benchmarks/bench_levels.py``.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from _timing import best_of  # noqa: E402
from levels.synth import CO, HCL, line_list  # noqa: E402

from widgetkit.levels import (  # noqa: E402
    Diatomic,
    assign_rovibrational,
    fit_band,
    fit_progression,
    vib_term,
)
from widgetkit.levels._lsq import weighted_lstsq  # noqa: E402


def main() -> None:
    mol = Diatomic("C", "O")
    # P(1..30) and R(0..30) of 12C16O and of 13C16O (124 lines), 4 left out at random -> 120
    df = line_list(mol, CO, J_max=30, sigma=0.002, area_noise=0.02, seed=4).iloc[:120]
    res = assign_rovibrational(df, mol, min_rounds=5)
    truth = df.set_index("line_id")
    a = res.assignments.set_index("line_id")
    n_right = int(((a["isotopologue"] == truth["iso"]) & (a["J_upper"] == truth["Ju"])
                   & (a["J_lower"] == truth["Jl"])).sum())
    t_assign = best_of(lambda: assign_rovibrational(df, mol, min_rounds=5), 5)

    def baseline_band():
        for iso in ("12C-16O", "13C-16O"):
            d = df[df["iso"] == iso]
            fit_band(d["Ju"], d["Jl"], d["position"], d["position_err"])

    t_base = best_of(baseline_band, 20)
    print(f"rovibrational: {len(df)} lines, 2 isotopologues, {res.rounds} rounds, "
          f"{n_right} assigned as simulated")
    print(f"  assign_rovibrational   {t_assign * 1e3:8.1f} ms  (target < 500 ms)")
    print(f"  baseline: fit_band x2  {t_base * 1e3:8.3f} ms  (labels known)")
    print(f"  ratio assign/baseline  {t_assign / t_base:8.0f}")

    G = lambda v: vib_term(v, HCL["omega_e"], HCL["omega_e_x_e"], HCL["omega_e_y_e"])  # noqa: E731
    labels = [(1, 0), (2, 0), (3, 0), (4, 0), (5, 0), (2, 1), (3, 2), (3, 1)]
    x = np.array([G(a) - G(b) for a, b in labels])
    s = np.full(len(x), 0.01)
    p = fit_progression(x, uncertainties=s, molecule=Diatomic("1H", "35Cl"))
    assert list(p.assignments["label"]) == [f"{a}-{b}" for a, b in labels]
    t_prog = best_of(lambda: fit_progression(x, uncertainties=s, molecule=Diatomic("1H", "35Cl")),
                     5)
    h = np.array(labels, dtype=float) + 0.5
    A = np.column_stack([h[:, 0] - h[:, 1], -(h[:, 0] ** 2 - h[:, 1] ** 2), h[:, 0] ** 3 - h[:, 1] ** 3])
    t_pbase = best_of(lambda: weighted_lstsq(A, x, s), 50)
    print(f"progression: {len(x)} band centres")
    print(f"  fit_progression        {t_prog * 1e3:8.1f} ms  (target < 100 ms)")
    print(f"  baseline: one lstsq    {t_pbase * 1e3:8.3f} ms  (labels known)")
    print(f"  ratio search/baseline  {t_prog / t_pbase:8.0f}")


if __name__ == "__main__":
    main()

"""Line lists for the levels tests, generated from published constants.

Positions come from :func:`widgetkit.levels.terms.line_position` with the
equilibrium constants given (scaled to each isotopologue by ρ); areas from
abundance × ν̃ × Hönl–London × Boltzmann (÷ Q_rot) × (1 − exp(−c₂ν̃/T)); noise is
seeded and Gaussian with a known σ. Nothing here is a check value by itself:
the tests compare what the assignment recovers with what went in.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from widgetkit.levels import Diatomic, line_position, rotational_partition, scale_constants
from widgetkit.levels.candidates import C2

# handbook values, from memory (Huber & Herzberg 1979)
HCL = dict(omega_e=2990.946, omega_e_x_e=52.8186, omega_e_y_e=0.2243, B_e=10.59341,
           alpha_e=0.30718, D_e=5.3194e-4)
CO = dict(omega_e=2169.81358, omega_e_x_e=13.28831, omega_e_y_e=0.010511, B_e=1.93128087,
          alpha_e=0.01750441, D_e=6.12147e-6)
DCL = dict(omega_e=2145.163, omega_e_x_e=27.1825, B_e=5.448794, alpha_e=0.113291, D_e=1.39e-4)


def band_constants(c: dict, v_upper: int = 1, v_lower: int = 0) -> dict:
    """Band constants implied by equilibrium constants (what a band fit should recover)."""
    Bv = lambda v: c["B_e"] - c["alpha_e"] * (v + 0.5)  # noqa: E731
    return {"band_origin": float(line_position(v_upper, 0, v_lower, 0, c)),
            "B_upper": Bv(v_upper), "B_lower": Bv(v_lower),
            "D_upper": c["D_e"], "D_lower": c["D_e"], "B_e": c["B_e"], "alpha_e": c["alpha_e"]}


def line_list(molecule: Diatomic, constants: dict, *, temperature: float = 296.0,
              sigma: float = 0.002, area_noise: float = 0.0, J_max: int = 12,
              min_area: float = 0.0, band=(1, 0), seed: int = 1, shuffle: bool = True) -> pd.DataFrame:
    """Simulated fitted lines: line_id, position, position_err, area, area_err (+ truth columns).

    Truth columns: ``iso, Ju, Jl, true`` (exact position).
    """
    rng = np.random.default_rng(seed)
    vu, vl = band
    mu0 = molecule.main.reduced_mass
    rows = []
    for iso in molecule.isotopologues:
        c = scale_constants(constants, np.sqrt(mu0 / iso.reduced_mass))
        Bl = c["B_e"] - c["alpha_e"] * (vl + 0.5)
        Q = rotational_partition(Bl, c["D_e"], temperature)
        for Jl in range(J_max + 1):
            for Ju in (Jl + 1, Jl - 1):
                if Ju < 0:
                    continue
                nu = float(line_position(vu, Ju, vl, Jl, c))
                E = float(line_position(vl, Jl, vl, 0, c))
                L = Jl + 1 if Ju > Jl else Jl
                a = (iso.abundance * nu * L * np.exp(-C2 * E / temperature) / Q
                     * -np.expm1(-C2 * nu / temperature))
                rows.append((iso.name, Ju, Jl, nu, a))
    df = pd.DataFrame(rows, columns=["iso", "Ju", "Jl", "true", "area"])
    df["area"] /= df["area"].max()
    df = df[df["area"] > min_area].copy()
    df["position"] = df["true"] + rng.normal(0.0, sigma, len(df))
    df["position_err"] = sigma
    df["area_err"] = area_noise * df["area"] if area_noise > 0 else np.nan
    if area_noise > 0:
        df["area"] = df["area"] * (1 + rng.normal(0.0, area_noise, len(df)))
    if shuffle:
        df = df.iloc[rng.permutation(len(df))]
    df = df.reset_index(drop=True)
    df.insert(0, "line_id", np.arange(1, len(df) + 1))
    return df


def correct(result, truth: pd.DataFrame) -> pd.Series:
    """Per line: did the assignment give the true isotopologue and J values?"""
    a = result.assignments.merge(truth[["line_id", "iso", "Ju", "Jl"]], on="line_id")
    return ((a["isotopologue"] == a["iso"]) & (a["J_upper"] == a["Ju"])
            & (a["J_lower"] == a["Jl"])).fillna(False).astype(bool)


def every_other_line_band(*, B_lower: float, B_upper: float, band_origin: float,
                          temperature: float = 296.0, J_max: int = 60, parity: int = 0,
                          sigma: float = 0.002, seed: int = 1, min_area: float = 2e-3,
                          hot: dict | None = None) -> pd.DataFrame:
    """P and R lines from lower levels of one J parity only, as in a parallel band of a linear
    molecule with identical spin-0 end nuclei (CO2-like: lines 4B apart, one set missing by
    spin statistics). ``hot`` (band_origin, B_lower, B_upper, scale) adds a weaker band of the
    other parity. Areas ∝ ν L(J″) exp(−c₂E″/T). Columns as :func:`line_list` (no truth columns)."""
    rng = np.random.default_rng(seed)
    rows = []
    bands = [(band_origin, B_lower, B_upper, 1.0, parity)]
    if hot:
        bands.append((hot["band_origin"], hot["B_lower"], hot["B_upper"], hot["scale"], 1 - parity))
    for nu0, bl, bu, scale, par in bands:
        for Jl in range(par, J_max + 1, 2):
            for Ju in (Jl + 1, Jl - 1):
                L = Jl + 1 if Ju > Jl else Jl
                if Ju < 0 or L == 0:
                    continue
                nu = nu0 + bu * Ju * (Ju + 1) - bl * Jl * (Jl + 1)
                rows.append((nu, scale * nu * L * np.exp(-C2 * bl * Jl * (Jl + 1) / temperature)))
    df = pd.DataFrame(rows, columns=["position", "area"])
    df["area"] /= df["area"].max()
    df = df[df["area"] > min_area].copy()
    df["position"] += rng.normal(0.0, sigma, len(df))
    df["position_err"] = sigma
    df = df.sort_values("position").reset_index(drop=True)
    df.insert(0, "line_id", np.arange(1, len(df) + 1))
    return df

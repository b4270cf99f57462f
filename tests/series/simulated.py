"""A small simulated temperature series for the series tests.

Spectra of HCl (natural isotopologues) from ``widgetkit.simulate`` with the handbook
constants of H35Cl (Huber & Herzberg, *Constants of Diatomic Molecules*, 1979; values in
``wk.simulate.HANDBOOK``, from memory) at known temperatures: the truth the tests compare
with is what went into the simulator. Files are JCAMP-DX with a user-defined label
``##$SET TEMPERATURE=`` (JCAMP-DX 4.24, McDonald & Wilks, Appl. Spectrosc. 42 (1988) 151).
"""

from __future__ import annotations

import numpy as np

import widgetkit as wk
from widgetkit.demo.make_data import write_labelled_jcamp

HCL = wk.Diatomic("H", "Cl")
CONSTANTS = {k: v for k, v in wk.simulate.HANDBOOK["1H-35Cl"].items() if k != "r_e"}
#: temperatures of the test series (K), invented
TEMPERATURES = (280.0, 328.0, 376.0, 424.0, 472.0, 520.0)


def simulate(temperature: float, seed: int, *, strength: float = 0.9) -> wk.Spectrum:
    """One spectrum of the test series (absorbance, a curved baseline, seeded noise)."""
    return wk.simulate.rovibrational(
        HCL, CONSTANTS, x_range=(2550.0, 3200.0), step=0.1, resolution=0.5,
        temperature=float(temperature), strength=strength, lorentz_hwhm=0.15, noise=0.002,
        seed=seed, baseline=(0.04, 0.015, 0.006), y_kind="absorbance",
        title=f"test cell at {temperature:.0f} K")


def write_series(folder, temperatures=TEMPERATURES, seed0: int = 100) -> list:
    folder.mkdir(parents=True, exist_ok=True)
    paths = []
    for i, T in enumerate(temperatures):
        paths.append(write_labelled_jcamp(simulate(T, seed0 + i), folder / f"cell_{i:02d}_{T:.0f}K.jdx",
                                          {"$SET TEMPERATURE": f"{T:.0f} K"}))
    return paths


def work_out(spectrum_or_path) -> wk.Session:
    """The analysis worked out on one spectrum (the recipe of the tests)."""
    s = (wk.Session(spectrum_or_path) if isinstance(spectrum_or_path, wk.Spectrum)
         else wk.Session.from_file(spectrum_or_path))
    s.subtract_baseline("poly", degree=2)
    s.find_peaks(min_snr=10)
    s.fit_lines(shape="voigt", shared_width=True, baseline="linear")
    s.assign_band(HCL, temperature=296.0)
    return s


def constants_of(result, names=("band_origin", "B_lower", "B_upper", "T_rot")) -> np.ndarray:
    t = result.table
    t = t[t["name"].isin(names)].sort_values(["spectrum", "isotopologue", "name"])
    return t[["value", "stderr"]].to_numpy(float)

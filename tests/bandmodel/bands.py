"""Shared helpers of the band-model tests: simulated bands and their true band constants.

The bands are made by widgetkit's own simulator (self-consistency); the molecular constants
behind them are handbook values recalled from memory (Huber and Herzberg, *Constants of
Diatomic Molecules*, 1979), used only to make realistic test bands: the check values are
the constants the simulator was given, not the handbook's.
"""

from __future__ import annotations

import widgetkit as wk
from widgetkit.levels.terms import rot_constant, vib_term
from widgetkit.simulate import HANDBOOK

#: H79Br X 1Sigma+ (Huber and Herzberg 1979, from memory; test bands only)
HBR = {"omega_e": 2648.975, "omega_e_x_e": 45.218, "B_e": 8.46488, "alpha_e": 0.23328,
       "D_e": 3.457e-4, "r_e": 1.41444}
#: D35Cl X 1Sigma+ (Huber and Herzberg 1979, from memory; test bands only)
DCL = {"omega_e": 2145.163, "omega_e_x_e": 27.1825, "B_e": 5.448794, "alpha_e": 0.113291,
       "D_e": 1.39e-4, "r_e": 1.274581}
CO = HANDBOOK["12C-16O"]
HCL = HANDBOOK["1H-35Cl"]


def truth(c: dict, band=(1, 0)) -> dict:
    """band_origin, B_upper, B_lower of the constants ``c`` (the simulator's term formulas)."""
    vu, vl = band
    g = lambda v: vib_term(v, c["omega_e"], c.get("omega_e_x_e", 0.0),  # noqa: E731
                           c.get("omega_e_y_e", 0.0))
    b = lambda v: float(rot_constant(v, c["B_e"], c.get("alpha_e", 0.0),  # noqa: E731
                                     c.get("gamma_e", 0.0)))
    return {"band_origin": float(g(vu) - g(vl)), "B_upper": b(vu), "B_lower": b(vl)}


def simulate(molecule, constants, **kw):
    """A simulated absorbance band with seeded noise and a sloping baseline (defaults)."""
    opts = {"temperature": 296.0, "noise": 0.003, "seed": 11, "baseline": (0.02, 0.005)}
    opts.update(kw)
    return wk.simulate.rovibrational(molecule, constants, **opts)


def assert_within(fit, constants, *, names=("band_origin", "B_lower", "B_upper"), k=3.0,
                  temperature=None, band=(1, 0)):
    """Every named constant of the main isotopologue within k standard errors of the truth."""
    t = truth(constants, band)
    for n in names:
        v, e = fit.constant(n)
        assert e > 0, n
        assert abs(v - t[n]) < k * e, f"{n}: {v} ± {e}, true {t[n]} ({(v - t[n]) / e:+.1f} σ)"
    if temperature is not None:
        v, e = fit.constant("T_rot")
        assert e > 0 and abs(v - temperature) < k * e, f"T: {v} ± {e}, true {temperature}"


def transmittance_band(x, *, band_area: float, lorentz_hwhm: float, resolution: float,
                       seed: int, noise: float = 0.002):
    """CO 1-0 (with 13CO) made by the band model itself in the transmittance domain (the
    physics of a spectrometer: ILS ⊛ 10^-A) at 296 K, with seeded Gaussian noise
    (self-consistency); returns the transmittance."""
    import numpy as np

    from widgetkit.bandmodel.build import ModelOptions, build_model

    opts = ModelOptions(bands=((1, 0),), joint=True, centrifugal="shared",
                        isotopologues=("12C-16O", "13C-16O"), abundance_ratios=(1.0, 0.0107),
                        free_abundances=False, shape="doppler", instrument="gaussian",
                        domain="transmittance", baseline_degree=1, y_kind="transmittance")
    st = dict(truth(CO), D=CO["D_e"], temperature=296.0, band_area=band_area,
              lorentz_hwhm=lorentz_hwhm, resolution=resolution,
              omega_e_x_e=CO["omega_e_x_e"], baseline=[0.0, 0.0])
    model, params = build_model(x, wk.Diatomic("C", "O"), opts, st, structure_temperature=450.0)
    y, _ = model.evaluate(np.array([p.value for p in params]), [], jac=False)
    return y + np.random.default_rng(seed).normal(0, noise, np.size(x))


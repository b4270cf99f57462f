"""Assembling a :class:`~.model.BandModel` and its parameters from the options (private).

Start values of the joint constants from band constants (one band v′ ← v″):
α_e = (B″ − B′)/(v′ − v″), B_e = B″ + α_e(v″ + ½); ω_e x_e from the Pekeris relation
of a Morse oscillator, α_e = 6 √(ω_e x_e B_e³)/ω_e − 6 B_e²/ω_e (Pekeris, Phys. Rev. 45
(1934) 98), i.e. ω_e x_e = ((α_e ω_e + 6 B_e²)/(6 B_e^{3/2}))²; the centrifugal
constant from the Kratzer relation D = 4B³/ω² (Kratzer 1920; Herzberg, *Spectra of
Diatomic Molecules*, 1950, ch. III).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..levels.molecule import Diatomic
from ..simulate.linesystem import BandMap, DunhamMap, diatomic_system, j_limit, partition_levels
from .linear import apply_spin_weights, is_linear_polyatomic
from .model import BandModel
from .params import Param, constant_map, spectroscopic_params

__all__ = ["ModelOptions", "build_model", "pekeris_wexe", "kratzer_d", "joint_starts"]


@dataclass(frozen=True)
class ModelOptions:
    """What the model is made of (checked values; see :func:`widgetkit.bandmodel.fit`)."""

    bands: tuple
    joint: bool
    centrifugal: str
    isotopologues: tuple  # names used
    abundance_ratios: tuple  # natural (or given) ratio to the main, per name
    free_abundances: bool
    shape: str
    instrument: str
    domain: str
    baseline_degree: int | None
    y_kind: str
    #: the fit's rule for implausible secondary constants (:meth:`.stages.Run._estimate_again`)
    second_look: bool = False


class _Selection:
    """A molecule restricted to some isotopologues (what the line-system builder reads)."""

    def __init__(self, molecule: Diatomic, names):
        self.isotopologues = tuple(molecule.isotopologue(n) for n in names)


def kratzer_d(B: float, nu: float) -> float:
    """D ≈ 4B³/ν² (Kratzer relation with the band origin for ω_e)."""
    return 4.0 * B**3 / nu**2 if nu > 0 and B > 0 else 0.0


def pekeris_wexe(B_e: float, alpha_e: float, nu0: float, band) -> float:
    """ω_e x_e from the Pekeris relation, iterated with ω_e = (ν₀ + a ω_e x_e)/Δv."""
    vu, vl = band
    dv = vu - vl
    a = (vu + 0.5) ** 2 - (vl + 0.5) ** 2
    wexe = 0.01 * nu0 / dv
    if not (B_e > 0 and alpha_e > 0):
        return wexe
    for _ in range(20):
        we = (nu0 + a * wexe) / dv
        wexe = ((alpha_e * we + 6.0 * B_e**2) / (6.0 * B_e**1.5)) ** 2
        if not math.isfinite(wexe) or wexe > 0.1 * we:
            return 0.01 * nu0 / dv
    return wexe


def joint_starts(st: dict, band) -> dict:
    """B_e, α_e, ω_e x_e (and ω_e) from ``band_origin``, ``B_upper``, ``B_lower``."""
    vu, vl = band
    alpha = (st["B_lower"] - st["B_upper"]) / (vu - vl)
    Be = st["B_lower"] + alpha * (vl + 0.5)
    wexe = st.get("omega_e_x_e") or pekeris_wexe(Be, alpha, st["band_origin"], band)
    a = (vu + 0.5) ** 2 - (vl + 0.5) ** 2
    return {"alpha_e": alpha, "B_e": Be, "omega_e_x_e": wexe,
            "omega_e": (st["band_origin"] + a * wexe) / (vu - vl)}


def _dunham_dict(st: dict, rho: float) -> dict:
    c = {"omega_e": st["omega_e"] * rho, "omega_e_x_e": st["omega_e_x_e"] * rho**2,
         "omega_e_y_e": 0.0, "B_e": st["B_e"] * rho**2, "alpha_e": st["alpha_e"] * rho**3,
         "gamma_e": 0.0, "D_e": st["D"] * rho**4, "beta_e": 0.0}
    return c


def _rotor(B: float, D: float) -> dict:
    return {"omega_e": 1.0, "omega_e_x_e": 0.0, "omega_e_y_e": 0.0, "B_e": B, "alpha_e": 0.0,
            "gamma_e": 0.0, "D_e": D, "beta_e": 0.0}


def build_model(x, molecule: Diatomic, opts: ModelOptions, st: dict, *,
                structure_temperature: float) -> tuple[BandModel, list[Param]]:
    """The model and its parameter list (start values from ``st``; nothing fixed yet)."""
    main = molecule.isotopologue(opts.isotopologues[0])
    isos = [molecule.isotopologue(n) for n in opts.isotopologues]
    rhos = [1.0] if len(isos) == 1 else [math.sqrt(main.reduced_mass / i.reduced_mass) for i in isos]
    band = opts.bands[0]
    js = joint_starts(st, band)
    st = {**st, **{k: v for k, v in js.items() if k not in st or k == "omega_e"}}
    Tq = float(structure_temperature)
    j_max, partition = {}, {}
    if opts.joint:
        term_map = DunhamMap(rhos)
        for ii, rho in enumerate(rhos):
            c = _dunham_dict(st, rho)
            for b in opts.bands:
                j_max[(ii, b)] = j_limit(c, b[1], Tq, 1e-7)
            partition[ii] = partition_levels(c, Tq)
    else:
        term_map = BandMap(opts.isotopologues, band)
        for ii, rho in enumerate(rhos):
            j_max[(ii, band)] = j_limit(_rotor(st["B_lower"] * rho**2, st["D"] * rho**4), 0, Tq, 1e-7)
        partition = None
    system = diatomic_system(_Selection(molecule, opts.isotopologues), term_map, opts.bands, j_max,
                             partition=partition, abundances=[1.0] * len(isos))
    if is_linear_polyatomic(molecule):
        system = apply_spin_weights(system, molecule)
    minor = {}
    for iso, rho in zip(opts.isotopologues[1:], rhos[1:], strict=True):
        c = _dunham_dict(st, rho)
        g = lambda v, c=c: c["omega_e"] * (v + 0.5) - c["omega_e_x_e"] * (v + 0.5) ** 2  # noqa: E731
        minor[iso] = {"band_origin": g(band[0]) - g(band[1]),
                      "B_upper": st["B_upper"] * rho**2, "B_lower": st["B_lower"] * rho**2,
                      "D": st["D"] * rho**4}
    params = spectroscopic_params(opts.joint, list(opts.isotopologues), opts.centrifugal,
                                  {**st, "minor": minor})
    params.append(Param("temperature", st["temperature"], lower=1.0, upper=1e5))
    params.append(Param("band_area", st["band_area"], lower=0.0))
    for iso, ratio in zip(opts.isotopologues[1:], opts.abundance_ratios[1:], strict=True):
        params.append(Param(f"abundance_ratio({iso})", ratio, vary=opts.free_abundances,
                            lower=0.0, secondary=True,
                            source="estimated" if opts.free_abundances else "natural abundance"))
    params.append(Param("lorentz_hwhm", st["lorentz_hwhm"], lower=0.0, upper=50.0, secondary=True))
    if opts.shape == "voigt":
        params.append(Param("gauss_fwhm", st["gauss_fwhm"], lower=1e-5, secondary=True))
    params.append(Param("resolution", st["resolution"], lower=0.0, upper=1e3, secondary=True))
    params.append(Param("herman_wallis", st.get("herman_wallis", 0.0), vary=False, secondary=True,
                        source="default"))
    if opts.baseline_degree is not None:
        base = list(st.get("baseline", [])) + [0.0] * (opts.baseline_degree + 1)
        for j in range(opts.baseline_degree + 1):
            params.append(Param(f"baseline_{j}", base[j], secondary=True))
    names = [p.name for p in params]
    C = constant_map(opts.joint, list(opts.isotopologues), opts.centrifugal, names, band)
    theta0 = np.array([p.value for p in params])
    model = BandModel(x, opts.y_kind, system, names, C, domain=opts.domain,
                      instrument=opts.instrument, shape=opts.shape,
                      baseline_degree=opts.baseline_degree, theta0=theta0)
    return model, params

"""Raman line lists and spectra (Raman-shift axis) of diatomic and linear molecules.

Lines (selection rules and Placzek–Teller factors b of
:mod:`widgetkit.levels.linear_terms`): a band (upper, lower) with upper ≠ lower is
a vibrational Raman band with O (ΔJ = −2), Q (ΔJ = 0) and S (ΔJ = +2) branches;
a band (level, level) is the pure rotational spectrum of that level, S(J) lines
at F(J+2) − F(J) (the Q "lines" of a pure rotational spectrum are the Rayleigh
line and are left out).

Scattered intensity of a Stokes line at shift Δ = E′ − E″ (Long, *The Raman
Effect*, 2002, ch. 5–6; from memory), relative::

    I ∝ a_iso · g_ns (2J″+1) exp(−c₂ E″/T) / Q(T) · S_b · [δ_Q + κ b] · (ν̃₀ − Δ)^n

with δ_Q = 1 for Q lines of a vibrational band (the isotropic part of the
polarisability derivative, a′²) and 0 otherwise, κ = (4/45)(γ′/a′)² the
anisotropic share (``anisotropy``; for pure rotational bands only b counts),
S_b a band strength and n = 4 for a detector that measures energy, 3 for one
that counts photons (the scattered power goes as ν̃⁴; a photon counter counts
power / hcν̃). The anti-Stokes partner (the same two levels, shift −Δ) has the
population of the upper level: by detailed balance (2J′+1) b(J′→J″) =
(2J″+1) b(J″→J′), so I_aS / I_S = ((ν̃₀ + Δ)/(ν̃₀ − Δ))^n exp(−c₂ Δ/T).
Anti-Stokes lines keep the label of their Stokes partner (``S(J)`` by the lower
level's J) and have ``side = "anti-Stokes"``.

Line widths: Gaussian instrument function of FWHM ``resolution``, the Doppler
width of light scattered at 90° (σ_D = √2 ν̃₀ √(kT/(mc²))), and a Lorentzian
``lorentz_hwhm``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd

from ..errors import ProcessingError, SimulationError
from ..levels.linear import as_linear
from ..oscillator import C2
from ..processing.transform import excitation_wavenumber as _laser
from ..spectrum import Spectrum
from .linear import (
    _normalise,
    _plain_levels,
    check_bands,
    linear_levels,
    partition_sums,
    transitions,
)
from .lines import check_temperature
from .spectra import check_render_params, doppler_sigma, render_spectrum

__all__ = ["DETECTORS", "detector_exponent", "raman_line_list", "raman_spectrum"]

#: detector kind -> exponent n of the frequency factor (ν̃₀ − Δ)^n
DETECTORS = {"energy": 4, "photon_counting": 3}


def detector_exponent(detector: str) -> int:
    """4 for ``"energy"`` (power-measuring) detectors, 3 for ``"photon_counting"`` ones."""
    if detector not in DETECTORS:
        raise SimulationError(
            f"detector must be 'energy' (it measures scattered power: frequency factor ν^4) or "
            f"'photon_counting' (a CCD or photomultiplier counting photons: ν^3), got {detector!r}")
    return DETECTORS[detector]


def raman_line_list(molecule, levels: Mapping, *, excitation_wavenumber: float,
                    bands: Sequence | None = None, detector: str = "photon_counting",
                    temperature: float = 296.0, anti_stokes: bool = True, anisotropy: float = 0.05,
                    J_max: int | None = None, min_relative: float = 1e-4) -> pd.DataFrame:
    """Raman lines (module docstring) of ``bands`` of a diatomic or linear molecule.

    Parameters
    ----------
    molecule : Linear, Diatomic or atoms (``"NN"``)
    levels : mapping
        As for :func:`widgetkit.simulate.linear_line_list` (Σ levels only), e.g. from
        :func:`widgetkit.simulate.levels_from_equilibrium`.
    excitation_wavenumber : float
        Vacuum wavenumber ν̃₀ of the laser line, cm⁻¹.
    bands : sequence, optional
        ``(upper, lower[, strength])``; ``(level, level)`` is a pure rotational spectrum.
        Default: the pure rotational spectrum of the lowest level given.
    detector : {"photon_counting", "energy"}
        Frequency factor ν³ or ν⁴.
    temperature : float
        K.
    anti_stokes : bool
        Add the anti-Stokes lines (negative shifts).
    anisotropy : float
        κ = (4/45)(γ′/a′)² of vibrational bands (illustrative default 0.05).

    Returns
    -------
    DataFrame sorted by shift (``position``, cm⁻¹): the columns of
    :func:`widgetkit.simulate.linear.transitions` plus ``side`` ("Stokes" or "anti-Stokes")
    and ``intensity`` (strongest = 1).
    """
    mol = as_linear(molecule)
    t = check_temperature(temperature)
    n = detector_exponent(detector)
    nu0 = float(excitation_wavenumber)
    if not (math.isfinite(nu0) and nu0 > 0):
        raise SimulationError(f"excitation_wavenumber must be a positive number of cm-1, got "
                              f"{excitation_wavenumber!r}")
    if not (math.isfinite(anisotropy) and anisotropy >= 0):
        raise SimulationError(f"anisotropy must be a number >= 0, got {anisotropy!r}")
    lv = linear_levels(mol, levels)
    if bands is None:
        low = min(lv[mol.main.name].values(), key=lambda v: v.energy) if mol.main.name in lv else None
        if low is None:
            raise SimulationError(f"give levels of {mol.main.name} or name the bands")
        bands = [(low.name, low.name)]
    bl = check_bands(bands)
    table = transitions(mol, lv, bl, t, J_max=J_max, min_relative=min_relative, process="raman")
    rot = (table["upper"] == table["lower"]).to_numpy()
    table = table[~rot | (table["branch"] == "S").to_numpy()]
    rot = (table["upper"] == table["lower"]).to_numpy()
    q = table["isotopologue"].map(partition_sums(mol, lv, t)).to_numpy()
    shift = table["position"].to_numpy()
    iso_part = np.where((table["branch"] == "Q").to_numpy() & ~rot, 1.0, 0.0)
    aniso = np.where(rot, 1.0, anisotropy) * table["factor"].to_numpy()
    base = (table["abundance"] * table["spin_weight"] * (2 * table["J_lower"] + 1)
            * table["strength"]).to_numpy() * (iso_part + aniso) / q
    stokes = table.assign(side="Stokes", intensity=base * np.exp(-C2 * table["E_lower"].to_numpy() / t)
                          * (nu0 - shift) ** n)
    parts = [stokes]
    if anti_stokes:
        parts.append(table.assign(side="anti-Stokes", position=-shift,
                                  intensity=base * np.exp(-C2 * table["E_upper"].to_numpy() / t)
                                  * (nu0 + shift) ** n))
    out = pd.concat(parts, ignore_index=True)
    out = out[(out["intensity"] > 0) & (np.abs(out["position"]) < nu0)]
    return _normalise(out, min_relative)


def raman_spectrum(molecule, levels: Mapping, *, excitation: float, unit: str = "nm",
                   medium: str | None = None, detector: str = "photon_counting",
                   bands: Sequence | None = None, anti_stokes: bool = True, anisotropy: float = 0.05,
                   temperature: float = 296.0, x=None, x_range=None, step: float | None = None,
                   strength: float = 1000.0, lorentz_hwhm: float = 0.05, resolution: float = 1.0,
                   noise: float = 0.0, baseline=None, seed: int | None = None, J_max: int | None = None,
                   min_relative: float = 1e-4, window: float = 50.0, title: str | None = None) -> Spectrum:
    """Simulated Raman spectrum on a Raman-shift axis (cm⁻¹, Stokes positive).

    Parameters
    ----------
    excitation, unit, medium
        The laser line (see :func:`widgetkit.processing.excitation_wavenumber`: a wavelength
        needs ``medium="air"`` or ``"vacuum"``).
    strength : float
        Counts at the peak of the tallest single line (default 1000).
    baseline : float or sequence, optional
        Background counts (polynomial in t = (x − centre)/half-range).
    Others
        As for :func:`raman_line_list` and :func:`widgetkit.simulate.rovibrational`.

    Returns
    -------
    Spectrum (``y_kind="intensity"``) with ``meta`` ``x_axis="raman_shift"``,
    ``technique="raman"``, ``excitation_wavenumber`` and ``detector``.
    """
    mol = as_linear(molecule)
    try:
        nu0 = _laser(excitation, unit, medium)
    except ProcessingError as exc:
        raise SimulationError(str(exc)) from None
    p = check_render_params(dict(
        molecule=mol, levels=_plain_levels(levels), bands=None if bands is None else
        [list(b) for b in check_bands(bands)], excitation=excitation, unit=unit, medium=medium,
        detector=detector, anti_stokes=anti_stokes, anisotropy=anisotropy, temperature=temperature,
        x=x, x_range=x_range, step=step, strength=strength, lorentz_hwhm=lorentz_hwhm,
        resolution=resolution, noise=noise, baseline=baseline, seed=seed, y_kind="intensity",
        J_max=J_max, min_relative=min_relative, window=window), y_kinds=("intensity",))
    lines = raman_line_list(mol, levels, excitation_wavenumber=nu0, bands=bands, detector=detector,
                            temperature=temperature, anti_stokes=anti_stokes, anisotropy=anisotropy,
                            J_max=J_max, min_relative=min_relative)
    sig_d = doppler_sigma(np.full(len(lines), math.sqrt(2.0) * nu0), p["temperature"],
                          lines["mass"].to_numpy())
    name = title or f"simulated Raman spectrum of {''.join(mol.atoms)} at {temperature:g} K"
    return render_spectrum(lines, sig_d, p, function="raman_spectrum", title=name,
                           meta={"x_axis": "raman_shift", "technique": "raman",
                                 "excitation_wavenumber": nu0, "detector": detector})

"""Infrared line lists and spectra of linear molecules (``wk.Linear``) from the
constants of their vibrational levels.

Each isotopologue has named vibrational levels (:class:`widgetkit.levels.VibLevel`:
energy G, B, D, ℓ, ℓ-type doubling q, inversion symmetry); a band is a pair
(upper, lower) of level names. Lines come from the selection rules of
:func:`widgetkit.levels.allowed_lines` (parallel Δℓ = 0 and perpendicular
Δℓ = ±1 bands, hot bands between excited levels, nuclear-spin weights).

Integrated line intensity (absorption, relative), the diatomic simulator's
formula with the nuclear-spin weight g_ns of the lower level and a band
strength S_b (the squared vibrational transition moment relative to the
strongest band, given per band)::

    I ∝ a_iso · g_ns · L · S_b · ν · exp(−c₂ E″/T) · (1 − exp(−c₂ ν/T)) / Q(T)

L the Hönl–London factor, E″ the lower level's energy above the isotopologue's
lowest level, and Q(T) = Σ g_ns (2J+1) exp(−c₂ E/T) summed directly over every
J and e/f component of the levels given for that isotopologue (levels not given,
such as unlisted bending levels, are missing from Q: a common factor per
isotopologue). Intensities are divided by the strongest line's.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd

from ..errors import AssignmentError, SimulationError
from ..levels.linear import Linear, as_linear
from ..levels.linear_terms import VibLevel, allowed_lines, components, term_value
from ..levels.molecule import scale_constants
from ..levels.spin import parity
from ..levels.terms import rot_constant, vib_term
from ..oscillator import C2
from ..spectrum import Spectrum
from .lines import check_temperature, normalise_intensities
from .spectra import check_render_params, doppler_sigma, render_spectrum

__all__ = ["linear_levels", "levels_from_equilibrium", "transitions", "linear_line_list",
           "partition_sums", "check_bands", "linear_spectrum"]

_J_CAP = 400


def linear_levels(molecule: Linear, levels: Mapping) -> dict[str, dict[str, VibLevel]]:
    """Checked :class:`VibLevel` objects per isotopologue.

    ``levels`` is either ``{isotopologue name: {level name: {energy, B, ...}}}`` or, for the
    main isotopologue alone, ``{level name: {energy, B, ...}}``; values may also be
    :class:`VibLevel` objects. Isotopologues without levels are left out of the simulation.
    """
    if not isinstance(levels, Mapping) or not levels:
        raise SimulationError("levels must be a mapping of level names to {'energy': ..., 'B': ...} "
                              "(cm-1), per isotopologue or for the main one")
    names = {i.name for i in molecule.isotopologues}
    per_iso = levels if set(levels) <= names else {molecule.main.name: levels}
    out = {}
    for iso in molecule.isotopologues:
        if iso.name not in per_iso:
            continue
        out[iso.name] = {}
        for name, spec in per_iso[iso.name].items():
            try:
                lev = spec if isinstance(spec, VibLevel) else VibLevel.from_mapping(
                    name, spec, centrosymmetric=iso.centrosymmetric, reflection=molecule.reflection)
            except AssignmentError as exc:
                raise SimulationError(f"{iso.name}: {exc}") from None
            out[iso.name][str(name)] = lev
    if not out:
        raise SimulationError(f"levels name no isotopologue of {molecule!r}; known: "
                              f"{', '.join(sorted(names))}")
    return out


def levels_from_equilibrium(molecule, constants: Mapping[str, float], *, v_max: int = 2) -> dict:
    """Levels v = 0..v_max of every isotopologue of a diatomic from the main one's equilibrium
    constants (ω_e, ω_e x_e, B_e, α_e, D_e, ...), mass-scaled as for :class:`~widgetkit.Diatomic`
    (:func:`widgetkit.levels.scale_constants`); names ``"v=0"``, ``"v=1"``, ...; energies
    G(v) − G(0)."""
    mol = as_linear(molecule)
    if not mol.diatomic:
        raise SimulationError("levels_from_equilibrium is for diatomics; give the levels of a "
                              "polyatomic molecule explicitly")
    c0 = {"omega_e_x_e": 0.0, "omega_e_y_e": 0.0, "alpha_e": 0.0, "gamma_e": 0.0, "D_e": 0.0,
          **{k: float(v) for k, v in constants.items() if k != "r_e"}}
    mu0 = mol.main.reduced_mass
    out = {}
    for iso in mol.isotopologues:
        c = scale_constants(c0, math.sqrt(mu0 / iso.reduced_mass))
        g = vib_term(np.arange(v_max + 1), c["omega_e"], c["omega_e_x_e"], c["omega_e_y_e"])
        b = rot_constant(np.arange(v_max + 1), c["B_e"], c["alpha_e"], c["gamma_e"])
        out[iso.name] = {f"v={v}": {"energy": float(g[v] - g[0]), "B": float(b[v]), "D": c["D_e"],
                                    **({"inversion": "g"} if iso.centrosymmetric else {})}
                         for v in range(v_max + 1)}
    return out


def check_bands(bands) -> list[tuple[str, str, float]]:
    """``[(upper, lower)]`` or ``[(upper, lower, strength)]`` -> list of (upper, lower, strength)."""
    out = []
    try:
        for b in bands:
            b = tuple(b)
            out.append((str(b[0]), str(b[1]), float(b[2]) if len(b) > 2 else 1.0))
            if len(b) not in (2, 3):
                raise ValueError
    except (TypeError, ValueError, IndexError):
        raise SimulationError(f"bands must be (upper, lower) or (upper, lower, strength) level names, "
                              f"e.g. [('00^01', '00^00')], got {bands!r}") from None
    if not out:
        raise SimulationError("bands is empty; give at least one (upper, lower) pair of level names")
    return out


def _j_limit(level: VibLevel, comps, temperature: float, rel: float) -> int:
    """Highest J worth keeping: (2J+1) exp(−c₂F/T) below ``rel`` of its maximum, or the J where
    F stops rising (centrifugal turnover)."""
    J = np.arange(level.l, _J_CAP + 1)
    F = np.min([term_value(level, J, c) for c in comps], axis=0)
    rising = np.flatnonzero(np.diff(F) <= 0)
    top = int(rising[0]) if rising.size else len(J) - 1
    w = (2 * J[: top + 1] + 1) * np.exp(-C2 * (F[: top + 1] - level.energy) / temperature)
    big = np.flatnonzero(w >= rel * np.max(w))
    return int(J[big[-1]] + 1 if big.size and big[-1] < top else J[top])


def _terms(level: VibLevel, J: np.ndarray, comps: np.ndarray) -> np.ndarray:
    """Term values of levels given by J and e/f component arrays."""
    out = np.empty(len(J))
    for c in ("e", "f"):
        m = comps == c
        if m.any():
            out[m] = term_value(level, J[m], c)
    return out


def partition_sums(molecule: Linear, levels: dict, temperature: float) -> dict[str, float]:
    """Q(T) = Σ g_ns (2J+1) exp(−c₂ E/T) over the given levels of each isotopologue."""
    out = {}
    for iso in molecule.isotopologues:
        if iso.name not in levels:
            continue
        q = 0.0
        for lev in levels[iso.name].values():
            comps = components(lev)
            J = np.arange(lev.l, _j_limit(lev, comps, temperature, 1e-16) + 1)
            for c in comps:
                g = iso.spin_weight(parity(J, c), lev.inversion)
                q += float(np.sum(g * (2 * J + 1) * np.exp(-C2 * term_value(lev, J, c) / temperature)))
        out[iso.name] = q
    return out


def transitions(molecule: Linear, levels: dict, bands, temperature: float, *, J_max: int | None,
                min_relative: float, process: str = "ir") -> pd.DataFrame:
    """Every allowed line of ``bands`` for each isotopologue with levels, before intensities.

    Columns: ``isotopologue, band, upper, lower, J_upper, J_lower, comp_upper, comp_lower,
    branch, label, position, E_lower, E_upper, factor`` (Hönl–London or Placzek–Teller),
    ``spin_weight, strength`` (band), ``abundance, mass``.
    """
    frames = []
    for iso in molecule.isotopologues:
        if iso.name not in levels:
            continue
        lv = levels[iso.name]
        for upper, lower, strength in bands:
            if upper not in lv or lower not in lv:
                if iso is not molecule.main:
                    continue  # a minor isotopologue without constants for this band
                missing = upper if upper not in lv else lower
                raise SimulationError(f"{iso.name}: band {upper}-{lower} names level {missing!r}, which "
                                      f"is not given; known: {', '.join(lv)}")
            lo, up = lv[lower], lv[upper]
            jm = int(J_max) if J_max is not None else _j_limit(
                lo, components(lo), temperature, 1e-3 * max(min_relative, 1e-12))
            try:
                ls = allowed_lines(lo, up, iso, jm, process=process)
            except AssignmentError as exc:
                raise SimulationError(f"{iso.name}: {exc}") from None
            if not len(ls):
                continue
            e_low = _terms(lo, ls.J_lower, ls.comp_lower)
            e_up = _terms(up, ls.J_upper, ls.comp_upper)
            both = lo.l >= 1 and up.l >= 1
            labels = [f"{b}({j}){c if both else ''}" for b, j, c in zip(ls.branch, ls.J_lower,
                                                                        ls.comp_lower)]
            frames.append(pd.DataFrame({
                "isotopologue": iso.name, "band": f"{upper}-{lower}", "upper": upper, "lower": lower,
                "J_upper": ls.J_upper, "J_lower": ls.J_lower, "comp_upper": ls.comp_upper,
                "comp_lower": ls.comp_lower, "branch": ls.branch, "label": labels,
                "position": e_up - e_low, "E_lower": e_low, "E_upper": e_up, "factor": ls.factor,
                "spin_weight": ls.weight, "strength": strength, "abundance": iso.abundance,
                "mass": iso.mass}))
    if not frames:
        raise SimulationError("no allowed line in these bands (check the levels' symmetry: an infrared "
                              "band of a centrosymmetric molecule needs g <-> u)")
    return pd.concat(frames, ignore_index=True)


def _normalise(table: pd.DataFrame, min_relative: float) -> pd.DataFrame:
    return normalise_intensities(table, min_relative, "bands, strengths and temperature")


def linear_line_list(molecule, levels: Mapping, *, bands: Sequence, temperature: float = 296.0,
                     J_max: int | None = None, min_relative: float = 1e-4) -> pd.DataFrame:
    """Infrared lines of ``bands`` of a linear molecule (module docstring for the intensity).

    Parameters
    ----------
    molecule : Linear (or Diatomic, or atoms such as ``"OCO"``)
    levels : mapping
        See :func:`linear_levels`; e.g. ``{"00^00": {"energy": 0, "B": 0.3902}, ...}``.
    bands : sequence
        ``(upper, lower)`` or ``(upper, lower, strength)`` level names.
    temperature : float
        K (default 296).
    J_max : int, optional
        Highest lower J; default where (2J+1)exp(−c₂E/T) of the lower level falls below
        1e-3 × ``min_relative`` of its maximum.
    min_relative : float
        Lines weaker than this fraction of the strongest are left out.

    Returns
    -------
    DataFrame sorted by position: the columns of :func:`transitions` and ``intensity``.
    """
    mol = as_linear(molecule)
    t = check_temperature(temperature)
    lv = linear_levels(mol, levels)
    table = transitions(mol, lv, check_bands(bands), t, J_max=J_max, min_relative=min_relative)
    q = partition_sums(mol, lv, t)
    nu = table["position"].to_numpy()
    inten = (table["abundance"] * table["spin_weight"] * table["factor"] * table["strength"] * nu
             * np.exp(-C2 * table["E_lower"] / t) * -np.expm1(-C2 * nu / t)
             / table["isotopologue"].map(q))
    table = table.assign(intensity=np.where(nu > 0, inten, 0.0))
    return _normalise(table[table["position"] > 0], min_relative)


def linear_spectrum(molecule, levels: Mapping, *, bands: Sequence, x=None, x_range=None,
                    step: float | None = None, temperature: float = 296.0, strength: float = 1.0,
                    lorentz_hwhm: float = 0.05, resolution: float = 0.0, noise: float = 0.0,
                    baseline=None, seed: int | None = None, y_kind: str = "absorbance",
                    J_max: int | None = None, min_relative: float = 1e-4, window: float = 50.0,
                    title: str | None = None) -> Spectrum:
    """Simulated infrared absorption spectrum of a linear molecule.

    Lines from :func:`linear_line_list` (``molecule, levels, bands, temperature, J_max,
    min_relative``); the grid, line shape (Doppler of each isotopologue's mass, Gaussian
    instrument ``resolution`` FWHM, Lorentzian ``lorentz_hwhm``), ``strength`` (peak
    absorbance of the tallest single line), ``baseline``, ``noise``, ``seed`` and ``y_kind``
    as for :func:`widgetkit.simulate.rovibrational`.

    Returns
    -------
    Spectrum with ``meta["simulated"]`` recording every argument (molecule as its
    ``to_dict()``) and ``meta["technique"] = "infrared"``.
    """
    mol = as_linear(molecule)
    p = check_render_params(dict(
        molecule=mol, levels=_plain_levels(levels), bands=[list(b) for b in check_bands(bands)], x=x,
        x_range=x_range, step=step, temperature=temperature, strength=strength,
        lorentz_hwhm=lorentz_hwhm, resolution=resolution, noise=noise, baseline=baseline, seed=seed,
        y_kind=y_kind, J_max=J_max, min_relative=min_relative, window=window))
    lines = linear_line_list(mol, levels, bands=bands, temperature=temperature, J_max=J_max,
                             min_relative=min_relative)
    sig_d = doppler_sigma(lines["position"].to_numpy(), p["temperature"], lines["mass"].to_numpy())
    name = title or (f"simulated {''.join(mol.atoms)} "
                     f"{', '.join(f'{u}-{lo}' for u, lo, _ in check_bands(bands))} at {temperature:g} K")
    return render_spectrum(lines, sig_d, p, function="linear_spectrum", title=name,
                           meta={"technique": "infrared"})


def _plain_levels(levels: Mapping) -> dict:
    """Levels as JSON-able dicts (VibLevel objects as their fields) for ``meta``."""
    def one(v):
        return v.to_dict() if isinstance(v, VibLevel) else {k: one(w) if isinstance(w, Mapping) else w
                                                            for k, w in v.items()}
    return {str(k): one(v) for k, v in levels.items()}

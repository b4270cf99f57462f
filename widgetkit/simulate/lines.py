"""Rovibrational line lists of a diatomic from molecular constants.

Term values (Herzberg, *Spectra of Diatomic Molecules*), for each
isotopologue with its constants scaled from the main one by
:func:`widgetkit.levels.scale_constants` (ρ = sqrt(μ_main/μ_iso)):

    G(v)   = ω_e(v+½) − ω_e x_e(v+½)² + ω_e y_e(v+½)³
    B_v    = B_e − α_e(v+½) + γ_e(v+½)²,   D_v = D_e + β_e(v+½)
    F_v(J) = B_v J(J+1) − D_v J²(J+1)²
    ν      = G(v′) − G(v″) + F_v′(J′) − F_v″(J″)

Integrated line intensity (absorption, relative), per line:

    I ∝ a_iso · ν · L(J″) · (1 + C m)² · |M_v′v″|²/|M_10|² · exp(−c₂ E″/T) · (1 − exp(−c₂ ν/T)) / Q(T)

with a_iso the isotopologue's abundance, E″ = G(v″) − G(0) + F_v″(J″) (each
isotopologue from its own lowest level), Q(T) = Σ_v Σ_J (2J+1) exp(−c₂ E/T)
summed directly, c₂ = hc/k, the Hönl–London factors of a ¹Σ–¹Σ band
L = J″+1 for R(J″) and J″ for P(J″) (the 2J″+1 cancels against the
degeneracy), m = J″+1 for R and −J″ for P, C the Herman–Wallis coefficient,
and the band factor from the numerical oscillator (see :func:`line_list`).
Intensities are then divided by the strongest line's, so the strongest is 1.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd

from ..errors import SimulationError
from ..levels.molecule import Diatomic, scale_constants
from ..levels.terms import rot_constant, rot_term, vib_term
from ..oscillator import (
    C2,
    OscillatorError,
    harmonic,
    morse,
    solve,
    transition_moments,
)
from .linesystem import DUNHAM_NAMES, DunhamMap, diatomic_system, j_limit, line_weights, partition_levels

__all__ = ["SimulationError", "CONSTANT_NAMES", "line_list", "check_constants", "partition_sum",
           "rotational_populations", "normalise_intensities"]

#: names understood in a constants mapping (cm⁻¹; r_e in Å)
CONSTANT_NAMES = ("omega_e", "omega_e_x_e", "omega_e_y_e", "B_e", "alpha_e", "gamma_e",
                  "D_e", "beta_e", "r_e")
_J_CAP = 400


def check_constants(constants: Mapping[str, float]) -> dict[str, float]:
    """Validate names and values; return a full dict with absent names as 0."""
    if not isinstance(constants, Mapping):
        raise SimulationError(
            f"constants must be a mapping of names to cm-1 values, got {type(constants).__name__}"
        )
    unknown = [k for k in constants if k not in CONSTANT_NAMES]
    if unknown:
        raise SimulationError(
            f"unknown constant name(s) {', '.join(map(repr, unknown))}; the simulator knows "
            f"{', '.join(CONSTANT_NAMES)} (D_e is the centrifugal constant)"
        )
    out = dict.fromkeys(CONSTANT_NAMES, 0.0)
    for k, v in constants.items():
        try:
            out[k] = float(v)
        except (TypeError, ValueError):
            raise SimulationError(f"constant {k!r} must be a number, got {v!r}") from None
        if not math.isfinite(out[k]):
            raise SimulationError(f"constant {k!r} must be finite, got {v!r}")
    for k in ("omega_e", "B_e"):
        if not out[k] > 0:
            raise SimulationError(f"constant {k!r} is required and must be > 0, got {constants.get(k)!r}")
    if out["omega_e_x_e"] < 0 or out["D_e"] < 0:
        raise SimulationError("omega_e_x_e and D_e must not be negative")
    return out


def check_temperature(temperature) -> float:
    try:
        t = float(temperature)
    except (TypeError, ValueError):
        raise SimulationError(f"temperature must be a number of kelvin, got {temperature!r}") from None
    if not (math.isfinite(t) and t > 0):
        raise SimulationError(
            f"temperature must be a positive number of kelvin, got {temperature!r}"
        )
    return t


def check_bands(bands) -> tuple[tuple[int, int], ...]:
    try:
        out = tuple((int(a), int(b)) for a, b in bands)
    except (TypeError, ValueError):
        raise SimulationError(
            f"bands must be pairs (v_upper, v_lower) such as ((1, 0), (2, 0)), got {bands!r}"
        ) from None
    for a, b in out:
        if b < 0 or a <= b:
            raise SimulationError(
                f"band ({a}, {b}) is not an absorption band: need v_upper > v_lower >= 0"
            )
    if not out:
        raise SimulationError("bands is empty; give at least one (v_upper, v_lower)")
    return out


def _terms(c: Mapping[str, float]):
    def g(v):
        return vib_term(v, c["omega_e"], c["omega_e_x_e"], c["omega_e_y_e"])

    def f(v, J):
        d = c["D_e"] + c["beta_e"] * (np.asarray(v, dtype=float) + 0.5)
        return rot_term(J, rot_constant(v, c["B_e"], c["alpha_e"], c["gamma_e"]), d)

    return g, f


def _j_limit(c: Mapping[str, float], v: int, temperature: float, rel: float) -> int:
    """Highest J worth keeping in v: population below rel × its maximum, or where F stops rising."""
    return j_limit(c, v, temperature, rel, cap=_J_CAP)


def partition_sum(c: Mapping[str, float], temperature: float) -> float:
    """Q(T) = Σ_v Σ_J (2J+1) exp(−c₂ (G(v) − G(0) + F_v(J)) / T), summed to 1e-16
    over the levels of :func:`widgetkit.simulate.linesystem.partition_levels`."""
    v, J = partition_levels(c, temperature)
    g, f = _terms(c)
    e = g(v) - g(0) + f(v, J)
    return float(np.sum((2 * J + 1) * np.exp(-C2 * e / temperature)))


def rotational_populations(constants: Mapping[str, float], temperature: float, *, v: int = 0,
                           J_max: int | None = None) -> pd.DataFrame:
    """Boltzmann populations of the rotational levels of one vibrational level.

    p(J) = (2J+1) exp(−c₂ F_v(J)/T) / q_rot with q_rot = Σ_J (2J+1) exp(−c₂ F_v(J)/T)
    summed directly (to 1e-16 of the largest term, or to ``J_max``).

    Returns
    -------
    DataFrame with ``J``, ``energy`` (F_v(J), cm⁻¹), ``population`` (fraction),
    and ``attrs["q_rot"]``.
    """
    c = check_constants(constants)
    t = check_temperature(temperature)
    jm = _j_limit(c, int(v), t, 1e-16) if J_max is None else int(J_max)
    _, f = _terms(c)
    J = np.arange(jm + 1)
    F = f(int(v), J)
    w = (2 * J + 1) * np.exp(-C2 * F / t)
    q = float(w.sum())
    out = pd.DataFrame({"J": J, "energy": F, "population": w / q})
    out.attrs["q_rot"] = q
    return out


def _band_factors(c: Mapping[str, float], reduced_mass: float, bands, dipole) -> dict:
    """|M_v'v''|² (D²) from the oscillator for the potential implied by ω_e (and ω_e x_e)."""
    n = max(a for a, _ in bands) + 1
    re = c["r_e"] if c["r_e"] > 0 else 1.0
    pot = (morse(c["omega_e"], c["omega_e_x_e"], r_e=re) if c["omega_e_x_e"] > 0
           else harmonic(c["omega_e"], r_e=re))
    try:
        lv = solve(pot, reduced_mass, n_levels=n)
    except OscillatorError as exc:
        raise SimulationError(f"cannot compute band strengths: {exc}") from exc
    if lv.n_levels < n:
        raise SimulationError(
            f"the Morse potential of these constants has only {lv.n_levels} bound levels; "
            f"a band up to v={n - 1} cannot be simulated"
        )
    m = transition_moments(lv, dipole)
    return {(a, b): float(m[a, b]) ** 2 for a, b in bands} | {(1, 0): float(m[1, 0]) ** 2}


def build_system(molecule: Diatomic, constants: Mapping[str, float], bands, temperature: float, *,
                 J_max: int | None = None, min_relative: float = 1e-4, q_branch: bool = False,
                 dipole: Sequence[float] | None = None, term_map=None):
    """The :class:`~widgetkit.simulate.linesystem.LineSystem` of :func:`line_list` and its
    constant vector ``c`` (ordered as :data:`~widgetkit.simulate.linesystem.DUNHAM_NAMES`).

    ``constants`` are checked ones (:func:`check_constants`) of the main isotopologue.
    J″ runs to ``J_max`` or to where the rotational population of the lower level falls
    below 1e-3 × ``min_relative`` of its maximum at ``temperature``; partition sums cover
    the levels of :func:`~widgetkit.simulate.linesystem.partition_levels`. With ``dipole``
    the band factors |M_v′v″|²/|M_10|² come from the numerical oscillator (normalised by
    the main isotopologue's |M_10|²); without, they are 1. ``term_map`` defaults to the
    equilibrium (Dunham-type) map of the molecule's isotopologues.
    """
    main = molecule.isotopologues[0]
    rhos = [math.sqrt(main.reduced_mass / iso.reduced_mass) for iso in molecule.isotopologues]
    tm = DunhamMap(rhos) if term_map is None else term_map
    j_max, factors, partition = {}, {}, {}
    ref_m10 = None
    for ii, (iso, rho) in enumerate(zip(molecule.isotopologues, rhos, strict=True)):
        ci = check_constants(scale_constants({k: v for k, v in constants.items() if k != "r_e"},
                                             rho))
        ci["r_e"] = constants["r_e"]
        if dipole is not None:
            bf = _band_factors(ci, iso.reduced_mass, bands, dipole)
            if ref_m10 is None:
                ref_m10 = bf[(1, 0)]
            for band in bands:
                factors[(ii, band)] = bf[band] / ref_m10
        for vu, vl in bands:
            j_max[(ii, (vu, vl))] = (int(J_max) if J_max is not None else
                                     _j_limit(ci, vl, temperature, 1e-3 * max(min_relative, 1e-12)))
        partition[ii] = partition_levels(ci, temperature)
    system = diatomic_system(molecule, tm, bands, j_max, band_factors=factors or None,
                             q_branch=q_branch, partition=partition)
    c = np.array([constants[n] for n in DUNHAM_NAMES])
    return system, c


def line_list(molecule: Diatomic, constants: Mapping[str, float], *,
              bands: Sequence[tuple[int, int]] = ((1, 0),), temperature: float = 296.0,
              J_max: int | None = None, min_relative: float = 1e-4, herman_wallis: float = 0.0,
              q_branch: bool = False, dipole: Sequence[float] | None = None) -> pd.DataFrame:
    """Lines of the given bands for every isotopologue of ``molecule``.

    Parameters
    ----------
    molecule : Diatomic
        Its isotopologues and natural abundances are used.
    constants : mapping
        Constants (cm⁻¹, r_e Å) of the MOST ABUNDANT isotopologue
        (``molecule.isotopologues[0]``), names from :data:`CONSTANT_NAMES`;
        ``omega_e`` and ``B_e`` are required.
    bands : sequence of (v_upper, v_lower)
        Default the fundamental ((1, 0),).
    temperature : float
        K (default 296).
    J_max : int, optional
        Highest lower-level J; default where the rotational population falls
        below 1e-3 × ``min_relative`` of its maximum.
    min_relative : float
        Lines weaker than this fraction of the strongest are left out.
    herman_wallis : float
        C in the factor (1 + C m)².
    q_branch : bool
        Add a Q branch (ΔJ = 0). All branches then take the Hönl–London
        factors of a ΔΛ = +1 (¹Π←¹Σ-like) band: R (J″+2)/2, Q (2J″+1)/2,
        P (J″−1)/2; by default there is no Q branch (¹Σ–¹Σ).
    dipole : sequence of float, optional
        (c_0, c_1, ...) of μ(r) in D/Å^k for the band factor
        |M_v′v″|²/|M_10|², computed per isotopologue by :func:`widgetkit.oscillator.solve`
        on the Morse potential of its ω_e and ω_e x_e (harmonic if ω_e x_e = 0)
        and normalised by the main isotopologue's |M_10|². Default: a linear
        dipole when ``bands`` holds more than the fundamental; with only (1, 0)
        and no dipole the band factor is 1 for every isotopologue.

    Returns
    -------
    DataFrame sorted by position with columns ``isotopologue, v_upper,
    v_lower, J_upper, J_lower, branch, label, band, position`` (cm⁻¹),
    ``intensity`` (relative integrated, strongest = 1; formula in the module
    docstring), ``E_lower`` (cm⁻¹ above the isotopologue's lowest level),
    ``mass`` (u, of the isotopologue).
    """
    if not isinstance(molecule, Diatomic):
        raise SimulationError(f"molecule must be a widgetkit Diatomic, got {type(molecule).__name__}")
    c0 = check_constants(constants)
    t = check_temperature(temperature)
    bands = check_bands(bands)
    if J_max is not None and (isinstance(J_max, bool) or int(J_max) != J_max or J_max < 1):
        raise SimulationError(f"J_max must be a positive integer, got {J_max!r}")
    if not (0 <= float(min_relative) < 1):
        raise SimulationError(f"min_relative must be in [0, 1), got {min_relative!r}")
    use_osc = dipole is not None or any(b != (1, 0) for b in bands)
    dip = (0.0, 1.0) if dipole is None else dipole
    system, c = build_system(molecule, c0, bands, t, J_max=J_max, min_relative=min_relative,
                             q_branch=q_branch, dipole=dip if use_osc else None)
    pos, e_low, inten = line_weights(system, c, t, herman_wallis=herman_wallis)
    table = pd.DataFrame({
        "isotopologue": np.asarray(system.isotopologues, dtype=object)[system.iso],
        "v_upper": system.v_upper, "v_lower": system.v_lower, "J_upper": system.J_upper,
        "J_lower": system.J_lower, "branch": system.branch, "label": system.labels(),
        "band": [f"{a}-{b}" for a, b in zip(system.v_upper.tolist(), system.v_lower.tolist(),
                                             strict=True)],
        "position": pos, "intensity": inten, "E_lower": e_low, "mass": system.mass,
    })
    table = table[(table["intensity"] > 0) & (table["position"] > 0)]
    return normalise_intensities(table, min_relative, "bands, dipole and temperature")


def normalise_intensities(table: pd.DataFrame, min_relative: float, check: str) -> pd.DataFrame:
    """Intensities divided by the strongest line's, lines weaker than ``min_relative`` dropped,
    sorted by position; ``check`` says what to check when no line has a positive intensity."""
    top = float(table["intensity"].max()) if len(table) else 0.0
    if not top > 0:
        raise SimulationError(f"no line has a positive intensity; check {check}")
    table = table.assign(intensity=table["intensity"] / top)
    table = table[table["intensity"] >= min_relative]
    return table.sort_values("position", kind="stable").reset_index(drop=True)

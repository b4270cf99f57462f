"""Line labels, populations and candidate transitions of a diatomic.

Selection rules used here (Herzberg, *Spectra of Diatomic Molecules*, ch. III):

* vibration: Δv = ±1 is the harmonic rule (the transition dipole of a harmonic
  oscillator with a linear dipole vanishes otherwise); overtones Δv = 2, 3 are
  allowed only through anharmonicity of the potential and non-linearity of
  the dipole, and are much weaker; hot bands start from v″ ≥ 1, which are
  listed only when a temperature is given and the Boltzmann population of v″
  passes a threshold;
* rotation (¹Σ–¹Σ): ΔJ = ±1 (R: J′ = J″+1, P: J′ = J″−1); ΔJ = 0 (Q) only
  when asked for, for band types that have it.

Populations: N(v, J)/N ∝ (2J+1) exp(−c₂ E(v, J)/T), c₂ = hc/k, summed directly.
"""

from __future__ import annotations

import re
from collections.abc import Mapping

import numpy as np
import pandas as pd
from scipy import constants as sc

from ..errors import AssignmentError
from .molecule import Diatomic, scale_constants
from .terms import rot_constant, rot_term, vib_term

__all__ = [
    "C2", "parse_label", "format_label", "band_label", "honl_london",
    "rotational_partition", "candidate_transitions",
]

#: second radiation constant c₂ = hc/k in cm K (CODATA via scipy.constants)
C2 = sc.h * sc.c * 100.0 / sc.k

_LABEL_RE = re.compile(r"^\s*([PQR])\s*\(\s*(\d+)\s*\)\s*$")


def parse_label(label: str) -> tuple[int, int]:
    """``"R(3)"`` -> (J_upper, J_lower) = (4, 3); ``"P(2)"`` -> (1, 2); ``"Q(1)"`` -> (1, 1).

    The number in brackets is J″ (the lower level), as is the custom.
    """
    m = _LABEL_RE.match(str(label))
    if not m:
        raise AssignmentError(
            f"cannot read the line label {label!r}; write it like 'R(0)', 'P(3)' or 'Q(1)' "
            "(branch letter and the lower-level J in brackets)"
        )
    br, jl = m.group(1), int(m.group(2))
    ju = jl + {"P": -1, "Q": 0, "R": 1}[br]
    if ju < 0 or (br == "P" and jl == 0) or (br == "Q" and jl == 0):
        raise AssignmentError(f"{label!r} does not exist (J′ would be {ju}); the lowest are R(0), P(1)")
    return ju, jl


def format_label(J_upper: int, J_lower: int) -> str:
    """(J′, J″) -> ``"R(J″)"``, ``"P(J″)"`` or ``"Q(J″)"``."""
    d = int(J_upper) - int(J_lower)
    if d not in (-1, 0, 1):
        raise AssignmentError(f"ΔJ = {d} is not a P, Q or R line (J′={J_upper}, J″={J_lower})")
    return f"{'PQR'[d + 1]}({int(J_lower)})"


def band_label(v_upper: int, v_lower: int) -> str:
    """(1, 0) -> ``"1-0"``."""
    return f"{int(v_upper)}-{int(v_lower)}"


def honl_london(J_upper, J_lower):
    """Hönl–London factor of a ¹Σ–¹Σ line: J″+1 for R(J″), J″ for P(J″), 0 for Q."""
    ju = np.asarray(J_upper)
    jl = np.asarray(J_lower, dtype=float)
    return np.where(ju > jl, jl + 1.0, np.where(ju < jl, jl, 0.0))


def rotational_partition(B: float, D: float, temperature: float, *, tol: float = 1e-13) -> float:
    """Q_rot = Σ_J (2J+1) exp(−c₂ F(J)/T), summed directly until the terms fall below ``tol``."""
    if not temperature > 0 or not B > 0:
        raise AssignmentError(f"need B > 0 and T > 0 for a partition function, got B={B}, T={temperature}")
    jmax = int(10 + 10 * np.sqrt(temperature / (C2 * B)) + 10)
    J = np.arange(jmax + 1)
    F = rot_term(J, B, D)
    with np.errstate(over="ignore"):
        w = (2 * J + 1) * np.exp(-C2 * F / temperature)
    # a term that grows again (negative D dominating) would be unphysical: stop at the first rise
    keep = np.ones_like(w, dtype=bool)
    rise = np.nonzero(np.diff(F) < 0)[0]
    if rise.size:
        keep[rise[0] + 1:] = False
    w = w[keep]
    return float(np.sum(w[w > tol * w.max()]))


def _vib_populations(c: Mapping[str, float], v: np.ndarray, T: float) -> np.ndarray:
    G = vib_term(np.arange(0, 60), c["omega_e"], c.get("omega_e_x_e", 0.0), c.get("omega_e_y_e", 0.0))
    G = G[: int(np.argmax(np.diff(G) <= 0)) + 1] if np.any(np.diff(G) <= 0) else G
    w = np.exp(-C2 * (G - G[0]) / T)
    w /= w.sum()
    out = np.zeros(len(v))
    ok = v < len(w)
    out[ok] = w[v[ok]]
    return out


def candidate_transitions(
    molecule: Diatomic,
    constants: Mapping[str, float],
    *,
    v_max: int = 3,
    J_max: int = 30,
    temperature: float | None = None,
    q_branch: bool = False,
    population_threshold: float = 1e-3,
) -> pd.DataFrame:
    """All candidate rovibrational transitions of a diatomic, with selection rules.

    Parameters
    ----------
    molecule : Diatomic
        Every isotopologue in ``molecule.isotopologues`` is listed.
    constants : mapping
        Equilibrium constants of the most abundant isotopologue
        (``molecule.main``) in cm⁻¹: ``omega_e`` and optionally
        ``omega_e_x_e, omega_e_y_e, B_e, alpha_e, gamma_e, D_e``. Other
        isotopologues are scaled by ρ = sqrt(μ_main/μ_iso) (ωe ∝ ρ, ωexe ∝ ρ²,
        Be ∝ ρ², αe ∝ ρ³, D ∝ ρ⁴).
    v_max : int
        Highest upper vibrational level; bands v′ ← v″ with v″ < v′ ≤ v_max.
    J_max : int
        Highest lower-level J.
    temperature : float, optional
        K. Without it only v″ = 0 is listed (no hot bands) and there is no
        population column worth using (all NaN). With it, a lower level v″ ≥ 1
        is listed when its fractional vibrational population
        exp(−c₂(G(v″)−G(0))/T)/Q_vib ≥ ``population_threshold``.
    q_branch : bool
        List ΔJ = 0 lines too (off for a ¹Σ–¹Σ band, which has none).
    population_threshold : float
        See ``temperature``.

    Returns
    -------
    DataFrame
        One row per line: ``isotopologue, v_upper, v_lower, J_upper, J_lower,
        band, label, branch, m, position`` (cm⁻¹), ``kind`` ("fundamental" for
        1-0, "overtone" for Δv ≥ 2 from v″ = 0, "hot" for v″ ≥ 1),
        ``allowed_harmonic`` (Δv = 1), ``lower_energy`` (cm⁻¹ above v=0, J=0),
        ``population`` (fraction of molecules of that isotopologue in the lower
        level, NaN without a temperature) and ``relative_intensity``
        (abundance × population × Hönl–London/(2J″+1) × ν̃ × (1 − exp(−c₂ν̃/T)),
        without the vibrational transition moment, so only comparable within
        one band; NaN without a temperature). Sorted by isotopologue, band and
        position. Lines at ν̃ ≤ 0 are dropped.
    """
    if "omega_e" not in constants:
        raise AssignmentError("constants need at least 'omega_e' (cm-1), e.g. {'omega_e': 2990.9, ...}")
    if v_max < 1 or J_max < 1:
        raise AssignmentError(f"v_max and J_max must be >= 1, got v_max={v_max}, J_max={J_max}")
    T = None if temperature is None else float(temperature)
    if T is not None and not T > 0:
        raise AssignmentError(f"temperature must be > 0 K, got {temperature}")
    base = {"omega_e_x_e": 0.0, "omega_e_y_e": 0.0, "B_e": 0.0, "alpha_e": 0.0, "gamma_e": 0.0,
            "D_e": 0.0, **constants}
    mu0 = molecule.main.reduced_mass
    frames = []
    dJs = (-1, 0, 1) if q_branch else (-1, 1)
    for iso in molecule.isotopologues:
        c = scale_constants(base, np.sqrt(mu0 / iso.reduced_mass))
        v_lows = np.arange(0, v_max)
        if T is None:
            v_lows = v_lows[:1]
            vpop = np.array([np.nan])
        else:
            vpop = _vib_populations(c, v_lows, T)
            v_lows = v_lows[(vpop >= population_threshold) | (v_lows == 0)]
            vpop = vpop[: len(v_lows)]
        G = lambda v, c=c: vib_term(v, c["omega_e"], c["omega_e_x_e"], c["omega_e_y_e"])  # noqa: E731
        Bv = lambda v, c=c: rot_constant(v, c["B_e"], c["alpha_e"], c["gamma_e"])  # noqa: E731
        for vl, pv in zip(v_lows, vpop, strict=True):
            El = rot_term(np.arange(J_max + 1), Bv(vl), c["D_e"]) + G(vl) - G(0)
            Q = rotational_partition(Bv(vl), c["D_e"], T) if (T is not None and Bv(vl) > 0) else np.nan
            for vu in range(int(vl) + 1, v_max + 1):
                for dJ in dJs:
                    Jl = np.arange(J_max + 1)
                    Jl = Jl[(Jl + dJ >= 0) & ~((dJ == 0) & (Jl == 0))]
                    Ju = Jl + dJ
                    pos = (G(vu) - G(vl) + rot_term(Ju, Bv(vu), c["D_e"])
                           - rot_term(Jl, Bv(vl), c["D_e"]))
                    El_j = El[Jl]
                    # Q lines have no ¹Σ–¹Σ Hönl–London factor: their intensity is left NaN
                    hl = np.where(dJ == 1, Jl + 1.0, np.where(dJ == -1, Jl * 1.0, np.nan))
                    if T is None:
                        pop = np.full(len(Jl), np.nan)
                        inten = pop
                    else:
                        Erot = El_j - (G(vl) - G(0))
                        pop = pv * (2 * Jl + 1) * np.exp(-C2 * Erot / T) / Q
                        inten = (iso.abundance * pop * hl / (2 * Jl + 1) * pos
                                 * (1 - np.exp(-C2 * np.abs(pos) / T)))
                    dv = vu - int(vl)
                    kind = "hot" if vl > 0 else ("fundamental" if dv == 1 else "overtone")
                    frames.append(pd.DataFrame({
                        "isotopologue": iso.name, "v_upper": vu, "v_lower": int(vl),
                        "J_upper": Ju, "J_lower": Jl, "band": band_label(vu, vl),
                        "label": [f"{'PQR'[dJ + 1]}({j})" for j in Jl],
                        "branch": "PQR"[dJ + 1], "m": np.where(dJ == 1, Jl + 1, -Jl) if dJ else 0,
                        "position": pos, "kind": kind, "allowed_harmonic": dv == 1,
                        "lower_energy": El_j, "population": pop, "relative_intensity": inten,
                    }))
    out = pd.concat(frames, ignore_index=True)
    out = out[out["position"] > 0]
    order = {iso.name: k for k, iso in enumerate(molecule.isotopologues)}
    out = out.assign(_o=out["isotopologue"].map(order)).sort_values(
        ["_o", "v_lower", "v_upper", "position"], kind="stable").drop(columns="_o")
    return out.reset_index(drop=True)

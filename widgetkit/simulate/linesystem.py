"""Line systems: the one implementation of line positions, lower-state energies,
line-strength factors and partition sums, shared by the simulator
(:func:`widgetkit.simulate.line_list`) and the band model (:mod:`widgetkit.bandmodel`).

A *line system* is the list of transitions of one or more bands of every
isotopologue, with everything that does not depend on the molecular constants
or the temperature fixed when it is built, and everything that does written as
**linear** functions of a vector ``c`` of constants:

    position_k   = (P c)_k                      (cm⁻¹)
    E″_k         = (E c)_k                      (cm⁻¹ above the isotopologue's reference level)
    E_level      = (Q c)_l   for every level l of the partition sums

Level energies are linear in the constants because every term value is
(Herzberg, *Spectra of Diatomic Molecules*, 1950)

    T(v, J) = G(v) + B_v x − D_v x²,   x = J(J+1),

and, in the equilibrium (Dunham-type) form, G(v) = ω_e h − ω_e x_e h² + ω_e y_e h³,
B_v = B_e − α_e h + γ_e h², D_v = D_e + β_e h (h = v + ½), with each constant of an
isotopologue the main one's times ρ^p (ρ = sqrt(μ_main/μ_iso), the powers in
:data:`widgetkit.levels.molecule.MASS_EXPONENTS`). A *term map* (:class:`DunhamMap`,
:class:`BandMap`) says how a level's (G, B, D) follow from ``c``; the builder
(:func:`diatomic_system`) turns J values into the rows of P, E and Q.

Line intensity (absorption, relative; the simulator's formula):

    w_k = f_k · ν_k · exp(−c₂ E″_k / T) · (1 − exp(−c₂ ν_k / T)) · (1 + C m_k)² / Q_iso(T)

with f_k the temperature-independent factor (natural abundance × Hönl–London
factor × vibrational band factor, and for other molecule kinds their
nuclear-spin weight), C the Herman–Wallis coefficient, m_k the running number
(J″+1 for R, −J″ for P, 0 for Q) and Q_iso(T) = Σ_l g_l exp(−c₂ E_l / T) summed
directly over the levels of the isotopologue.

Extension point: another molecule kind plugs in by building a
:class:`LineSystem` of its own (its Hönl–London factors and spin weights in
``factor``, its term values as linear rows of P, E and Q); the simulator's
intensity formula and the band model then work on it unchanged.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from ..levels.molecule import MASS_EXPONENTS, Diatomic
from ..oscillator import C2

__all__ = ["LineSystem", "DunhamMap", "BandMap", "diatomic_system", "line_weights",
           "partition_levels", "DUNHAM_NAMES", "BAND_NAMES"]

#: the constants of the equilibrium term map, in the order of ``c``
DUNHAM_NAMES = ("omega_e", "omega_e_x_e", "omega_e_y_e", "B_e", "alpha_e", "gamma_e", "D_e", "beta_e")
#: the constants of one isotopologue's single band in the band term map
BAND_NAMES = ("band_origin", "B_upper", "B_lower", "D_upper", "D_lower")


@dataclass(frozen=True)
class LineSystem:
    """Transitions with their constant-independent data and linear term rows.

    Attributes (L lines, n constants, n_q partition levels)
    ----------
    names : tuple of str
        The constants ``c`` the rows refer to (n).
    isotopologues : tuple of str
        Isotopologue names; ``iso`` indexes them.
    iso_mass : ndarray (n_iso,)
        Total mass of each isotopologue in u (Doppler widths).
    iso : ndarray of int (L,)
    v_upper, v_lower, J_upper, J_lower : ndarray of int (L,)
    branch : ndarray of str (L,)
        ``"P"``, ``"Q"`` or ``"R"``.
    m : ndarray (L,)
        Running number J″+1 (R), −J″ (P), 0 (Q).
    factor : ndarray (L,)
        Temperature-independent line factor (abundance × Hönl–London × band factor).
    P, E : ndarray (L, n)
        Rows giving positions and lower-state energies from ``c``.
    q_iso : ndarray of int (n_q,)
    q_weight : ndarray (n_q,)
        Degeneracy of each partition level (2J+1, times spin weights for other kinds).
    Q : ndarray (n_q, n)
        Rows giving each partition level's energy above its isotopologue's reference.
    """

    names: tuple
    isotopologues: tuple
    iso_mass: np.ndarray
    iso: np.ndarray
    v_upper: np.ndarray
    v_lower: np.ndarray
    J_upper: np.ndarray
    J_lower: np.ndarray
    branch: np.ndarray
    m: np.ndarray
    factor: np.ndarray
    P: np.ndarray
    E: np.ndarray
    q_iso: np.ndarray
    q_weight: np.ndarray
    Q: np.ndarray

    @property
    def n_lines(self) -> int:
        return int(self.iso.size)

    @property
    def mass(self) -> np.ndarray:
        """Mass (u) of each line's isotopologue, shape (L,)."""
        return self.iso_mass[self.iso]

    def labels(self) -> list[str]:
        """``"R(0)"``-style labels of the lines."""
        return [f"{b}({j})" for b, j in zip(self.branch.tolist(), self.J_lower.tolist(), strict=True)]

    def subset(self, keep: np.ndarray) -> LineSystem:
        """The same system with only the lines ``keep`` (boolean or index array)."""
        per_line = ("iso", "v_upper", "v_lower", "J_upper", "J_lower", "branch", "m", "factor",
                    "P", "E")
        kw = {f: getattr(self, f) for f in self.__dataclass_fields__}
        for f in per_line:
            kw[f] = kw[f][keep]
        return LineSystem(**kw)


# ---------------------------------------------------------------------- term maps
class DunhamMap:
    """(G, B, D) of level (isotopologue, v) from the main isotopologue's equilibrium constants.

    ``c`` is ordered as :data:`DUNHAM_NAMES`; the reference level of every
    isotopologue is its own v = 0, J = 0 (so E″ includes G(v″) − G(0)).
    """

    names = DUNHAM_NAMES

    def __init__(self, rho: Sequence[float]):
        self.rho = tuple(float(r) for r in rho)

    def rows(self, iso: int, v: int) -> np.ndarray:
        """Shape (3, 8): the rows of G(v), B_v and D_v for ``c``."""
        r = self.rho[iso]
        p = [r ** MASS_EXPONENTS[n] for n in DUNHAM_NAMES]
        h = v + 0.5
        out = np.zeros((3, len(DUNHAM_NAMES)))
        out[0, 0:3] = (p[0] * h, -p[1] * h * h, p[2] * h**3)
        out[1, 3:6] = (p[3], -p[4] * h, p[5] * h * h)
        out[2, 6:8] = (p[6], p[7] * h)
        return out

    def reference(self, iso: int) -> np.ndarray:
        """Row of the reference energy G(0) of the isotopologue."""
        return self.rows(iso, 0)[0]


class BandMap:
    """(G, B, D) of the two levels of one band per isotopologue, each with its own constants.

    ``c`` holds, for each isotopologue in turn, :data:`BAND_NAMES`
    (band_origin, B_upper, B_lower, D_upper, D_lower). The lower level is the
    reference (G = 0), so E″ is the rotational energy F″(J″) only; the
    vibrational Boltzmann factor of a single band is a common constant.
    """

    def __init__(self, isotopologues: Sequence[str], band: tuple[int, int]):
        self.band = (int(band[0]), int(band[1]))
        self.names = tuple(n if i == 0 else f"{n}({iso})" for i, iso in enumerate(isotopologues)
                           for n in BAND_NAMES)
        self._n = len(isotopologues)

    def rows(self, iso: int, v: int) -> np.ndarray:
        out = np.zeros((3, 5 * self._n))
        k = 5 * iso
        if v == self.band[0]:
            out[0, k], out[1, k + 1], out[2, k + 3] = 1.0, 1.0, 1.0
        elif v == self.band[1]:
            out[1, k + 2], out[2, k + 4] = 1.0, 1.0
        else:
            raise ValueError(f"the band term map knows only v = {self.band}, not v = {v}")
        return out

    def reference(self, iso: int) -> np.ndarray:
        return np.zeros(5 * self._n)


def _term_rows(rows: np.ndarray, J) -> np.ndarray:
    """Rows of T(v, J) = G + B x − D x² for the J values (shape (len(J), n))."""
    x = np.asarray(J, dtype=float)
    x = x * (x + 1.0)
    return rows[0][None, :] + x[:, None] * rows[1][None, :] - (x * x)[:, None] * rows[2][None, :]


# ---------------------------------------------------------------------- partition sums
def _level_energy(c: Mapping[str, float], v, J):
    h = np.asarray(v, dtype=float) + 0.5
    g = c["omega_e"] * h - c["omega_e_x_e"] * h**2 + c["omega_e_y_e"] * h**3
    b = c["B_e"] - c["alpha_e"] * h + c["gamma_e"] * h**2
    d = c["D_e"] + c["beta_e"] * h
    x = np.asarray(J, dtype=float)
    x = x * (x + 1.0)
    return g, b * x - d * x * x


def j_limit(c: Mapping[str, float], v: int, temperature: float, rel: float, cap: int = 400) -> int:
    """Highest J of level v worth keeping: weight (2J+1) e^{−c₂F/T} above ``rel`` × its maximum,
    or the J where F_v(J) stops rising (centrifugal turnover), whichever comes first."""
    J = np.arange(cap + 1)
    _, F = _level_energy(c, v, J)
    rising = np.flatnonzero(np.diff(F) <= 0)
    top = int(rising[0]) if rising.size else cap
    w = (2 * J[: top + 1] + 1) * np.exp(-C2 * (F[: top + 1] - F[0]) / temperature)
    big = np.flatnonzero(w >= rel * w.max())
    return int(big[-1]) + 1 if big.size and big[-1] < top else top


def partition_levels(c: Mapping[str, float], temperature: float) -> tuple[np.ndarray, np.ndarray]:
    """(v, J) of every level of the direct partition sum at ``temperature``.

    Vibrational levels from v = 0 while below the Morse limit ω_e/(2ω_e x_e) − ½ and while
    e^{−c₂(G(v)−G(0))/T} ≥ 1e-16; in each, J up to :func:`j_limit` with ``rel`` = 1e-16.
    """
    vs, Js = [], []
    vmax = (c["omega_e"] / (2 * c["omega_e_x_e"]) - 0.5) if c["omega_e_x_e"] > 0 else 1e9
    g0 = _level_energy(c, 0, 0)[0]
    v = 0
    while v < vmax:
        ev = float(_level_energy(c, v, 0)[0] - g0)
        if v > 0 and math.exp(-C2 * ev / temperature) < 1e-16:
            break
        jm = j_limit(c, v, temperature, 1e-16)
        Js.append(np.arange(jm + 1))
        vs.append(np.full(jm + 1, v))
        v += 1
    return np.concatenate(vs), np.concatenate(Js)


# ---------------------------------------------------------------------- builder
def diatomic_system(molecule: Diatomic, term_map, bands: Sequence[tuple[int, int]],
                    j_max: Mapping[tuple[int, tuple[int, int]], int], *,
                    band_factors: Mapping[tuple[int, tuple[int, int]], float] | None = None,
                    q_branch: bool = False,
                    partition: Mapping[int, tuple[np.ndarray, np.ndarray]] | None = None,
                    abundances: Sequence[float] | None = None) -> LineSystem:
    """Build the line system of ``bands`` of every isotopologue of a diatomic.

    Parameters
    ----------
    molecule : Diatomic
    term_map : DunhamMap or BandMap
    bands : sequence of (v_upper, v_lower)
    j_max : mapping (isotopologue index, band) -> highest J″
    band_factors : mapping (isotopologue index, band) -> |M_v′v″|²/|M_10|², optional (default 1)
    q_branch : bool
        Add Q lines; all branches then take the Hönl–London factors of a ΔΛ = +1 band,
        R (J″+2)/2, Q (2J″+1)/2, P (J″−1)/2 (Herzberg 1950, ch. IV); otherwise those of a
        ¹Σ–¹Σ band, R J″+1 and P J″.
    partition : mapping isotopologue index -> (v, J) arrays of its partition levels, optional
        Default: the lower levels of the bands only (J = 0 .. j_max of each lower v).
    abundances : sequence of float, optional
        Per isotopologue; default the natural abundances of ``molecule``.
    """
    isos = molecule.isotopologues
    ab = [i.abundance for i in isos] if abundances is None else [float(a) for a in abundances]
    cols = {k: [] for k in ("iso", "vu", "vl", "ju", "jl", "br", "m", "f", "P", "E")}
    q_iso, q_w, q_rows = [], [], []
    for ii in range(len(isos)):
        ref = term_map.reference(ii)
        for vu, vl in bands:
            jm = int(j_max[(ii, (vu, vl))])
            Jl = np.arange(0, jm + 1)
            parts = [("R", Jl, Jl + 1), ("P", Jl[Jl >= 1], Jl[Jl >= 1] - 1)]
            if q_branch:
                parts.append(("Q", Jl[Jl >= 1], Jl[Jl >= 1]))
            bf = 1.0 if band_factors is None else float(band_factors[(ii, (vu, vl))])
            ru, rl = term_map.rows(ii, vu), term_map.rows(ii, vl)
            for branch, jl, ju in parts:
                if q_branch:
                    hl = {"R": (jl + 2) / 2, "Q": (2 * jl + 1) / 2, "P": (jl - 1) / 2}[branch]
                else:
                    hl = {"R": jl + 1.0, "P": jl * 1.0}[branch]
                m = {"R": jl + 1.0, "P": -jl * 1.0, "Q": 0.0 * jl}[branch]
                low = _term_rows(rl, jl)
                cols["P"].append(_term_rows(ru, ju) - low)
                cols["E"].append(low - ref[None, :])
                n = jl.size
                cols["iso"].append(np.full(n, ii))
                cols["vu"].append(np.full(n, vu))
                cols["vl"].append(np.full(n, vl))
                cols["ju"].append(ju.astype(int))
                cols["jl"].append(jl.astype(int))
                cols["br"].append(np.full(n, branch))
                cols["m"].append(m)
                cols["f"].append(ab[ii] * hl * bf)
        if partition is not None and ii in partition:
            pv, pJ = (np.asarray(a, dtype=int) for a in partition[ii])
            levels = [(int(v), pJ[pv == v]) for v in np.unique(pv)]
        else:  # the lower levels of the bands, to the highest J″ used
            top: dict[int, int] = {}
            for vu, vl in bands:
                top[vl] = max(top.get(vl, 0), int(j_max[(ii, (vu, vl))]))
            levels = [(v, np.arange(j + 1)) for v, j in sorted(top.items())]
        for v, J in levels:
            q_rows.append(_term_rows(term_map.rows(ii, int(v)), J) - ref[None, :])
            q_iso.append(np.full(J.size, ii))
            q_w.append(2.0 * J + 1.0)
    cat = {k: np.concatenate(v) if v else np.zeros(0) for k, v in cols.items()}
    return LineSystem(
        names=tuple(term_map.names), isotopologues=tuple(i.name for i in isos),
        iso_mass=np.array([i.mass for i in isos]), iso=cat["iso"].astype(int),
        v_upper=cat["vu"].astype(int), v_lower=cat["vl"].astype(int),
        J_upper=cat["ju"].astype(int), J_lower=cat["jl"].astype(int), branch=cat["br"].astype(str),
        m=cat["m"].astype(float), factor=cat["f"].astype(float), P=np.vstack(cols["P"]),
        E=np.vstack(cols["E"]), q_iso=np.concatenate(q_iso).astype(int),
        q_weight=np.concatenate(q_w), Q=np.vstack(q_rows))


# ---------------------------------------------------------------------- intensities
def partition_sums(system: LineSystem, c: np.ndarray, temperature: float) -> np.ndarray:
    """Q_iso(T) = Σ_l g_l exp(−c₂ E_l / T) for every isotopologue (shape (n_iso,))."""
    e = system.Q @ np.asarray(c, dtype=float)
    terms = system.q_weight * np.exp(-C2 * e / temperature)
    return np.bincount(system.q_iso, weights=terms, minlength=len(system.isotopologues))


def line_weights(system: LineSystem, c: np.ndarray, temperature: float, *,
                 herman_wallis: float = 0.0) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Positions, lower-state energies and intensities w_k (module formula) of every line.

    Returns
    -------
    position, E_lower, w : ndarray (L,)
        cm⁻¹, cm⁻¹, and the relative integrated absorption intensity (not normalised).
    """
    c = np.asarray(c, dtype=float)
    pos = system.P @ c
    e_low = system.E @ c
    q = partition_sums(system, c, temperature)
    w = (system.factor * pos * (1.0 + herman_wallis * system.m) ** 2
         * np.exp(-C2 * e_low / temperature) * -np.expm1(-C2 * pos / temperature) / q[system.iso])
    return pos, e_low, w

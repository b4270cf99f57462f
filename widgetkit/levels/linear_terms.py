"""Vibrational levels of linear molecules, their rotational term values, and the
rotational selection rules and intensity factors of infrared and Raman bands.

Term values (Herzberg, *Infrared and Raman Spectra of Polyatomic Molecules*,
1945, ch. IV; from memory), for a vibrational level of energy G, vibrational
angular momentum ℓ, rotational constant B, centrifugal constant D and, for
ℓ ≥ 1, ℓ-type doubling constant q::

    x = J(J+1) − ℓ²
    F(J) = G + B x − D x² ± (q/2) J(J+1)      (+ for the e level, − for the f level)

so the e component lies q J(J+1) above the f component when q > 0 (our
statement of the sign; conventions differ). J ≥ ℓ.

Selection rules (parity ± and the e/f labels of :mod:`widgetkit.levels.spin`):

* infrared (electric dipole): ΔJ = 0, ±1 (not J = 0 ↔ 0), parity changes,
  Δℓ = 0 (parallel band) or ±1 (perpendicular band); for a centrosymmetric
  molecule g ↔ u;
* Raman (polarisability): ΔJ = 0, ±2, parity unchanged, Δℓ = 0 between Σ levels
  (all this module models); g ↔ g, u ↔ u.

Hönl–London factors, line strengths for one lower level (Herzberg, *Spectra of
Diatomic Molecules*, 1950, eqs. for the Hönl–London formulae, with ℓ in place of
Λ; from memory), for lower J and ℓ = ℓ″:

* Δℓ = 0: R (J+1+ℓ)(J+1−ℓ)/(J+1), Q (2J+1) ℓ²/(J(J+1)), P (J+ℓ)(J−ℓ)/J
  (Σ–Σ: J+1, 0, J);
* Δℓ = +1: R (J+2+ℓ)(J+1+ℓ)/(2(J+1)), Q (J+1+ℓ)(J−ℓ)(2J+1)/(2J(J+1)),
  P (J−1−ℓ)(J−ℓ)/(2J) (Π←Σ: (J+2)/2, (2J+1)/2, (J−1)/2);
* Δℓ = −1: R (J+2−ℓ)(J+1−ℓ)/(2(J+1)), Q (J+1−ℓ)(J+ℓ)(2J+1)/(2J(J+1)),
  P (J−1+ℓ)(J+ℓ)/(2J).

The overall factor of a perpendicular band (½ here) only scales its band strength.

Placzek–Teller factors of a Σ state of a linear molecule (Placzek and Teller,
Z. Phys. 81 (1933) 209; as tabulated by Long, *The Raman Effect*, 2002, from
memory), the anisotropic part of the polarisability for lower J:
S (ΔJ = +2) 3(J+1)(J+2)/(2(2J+1)(2J+3)), Q (ΔJ = 0) J(J+1)/((2J−1)(2J+3)),
O (ΔJ = −2) 3J(J−1)/(2(2J+1)(2J−1)).
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass, fields

import numpy as np

from ..errors import AssignmentError
from .spin import parity
from .terms import rot_term

__all__ = ["VibLevel", "term_value", "honl_london_linear", "placzek_teller", "components",
           "allowed_lines", "triatomic_level", "BRANCH_LETTERS"]

#: ΔJ -> branch letter
BRANCH_LETTERS = {-2: "O", -1: "P", 0: "Q", 1: "R", 2: "S"}

_TRIATOMIC = re.compile(r"^\s*(\d+)\s*(\d+)\s*[\^]?\s*(\d+)\s*(\d+)\s*$")
_SUPERSCRIPTS = str.maketrans("⁰¹²³⁴⁵⁶⁷⁸⁹", "0123456789")


@dataclass(frozen=True)
class VibLevel:
    """One vibrational level of one isotopologue (cm⁻¹).

    Attributes
    ----------
    name : str
        Label, e.g. ``"00^01"`` (v1 v2^ℓ v3 of a triatomic) or ``"v=1"``.
    energy : float
        G above the isotopologue's lowest level, cm⁻¹.
    B, D : float
        Rotational and centrifugal constants, cm⁻¹.
    l : int
        Vibrational angular momentum ℓ (0 for Σ levels).
    q : float
        ℓ-type doubling constant (ℓ ≥ 1), cm⁻¹.
    inversion : {"g", "u"} or None
        Vibronic inversion symmetry of a centrosymmetric molecule (None otherwise).
    reflection : {"+", "-"}
        Σ⁺ or Σ⁻ (only for ℓ = 0).
    H : float
        Sextic centrifugal constant (+H x³), cm⁻¹.
    """

    name: str
    energy: float
    B: float
    D: float = 0.0
    l: int = 0
    q: float = 0.0
    inversion: str | None = None
    reflection: str = "+"
    H: float = 0.0

    def __post_init__(self):
        if not (np.isfinite(self.energy) and np.isfinite(self.B) and self.B > 0):
            raise AssignmentError(f"level {self.name!r}: energy must be finite and B > 0 (cm-1), "
                                  f"got energy={self.energy!r}, B={self.B!r}")
        if int(self.l) != self.l or self.l < 0:
            raise AssignmentError(f"level {self.name!r}: l must be a whole number >= 0, got {self.l!r}")
        if self.inversion not in (None, "g", "u"):
            raise AssignmentError(f"level {self.name!r}: inversion must be 'g', 'u' or None, "
                                  f"got {self.inversion!r}")
        if self.reflection not in ("+", "-"):
            raise AssignmentError(f"level {self.name!r}: reflection must be '+' or '-', "
                                  f"got {self.reflection!r}")

    def to_dict(self) -> dict:
        return {f.name: getattr(self, f.name) for f in fields(self)}

    @classmethod
    def from_mapping(cls, name: str, values: Mapping, *, centrosymmetric: bool = False,
                     reflection: str = "+") -> VibLevel:
        """Build from a mapping (``energy``, ``B``, optional ``D, H, l, q, inversion``).

        For a triatomic label ``"v1 v2^l v3"`` (``"01^11"``, ``"01¹1"``, ``"0111"``) ℓ is read from
        the label when not given and, for a centrosymmetric molecule, the inversion symmetry
        is (−1)^(v2+v3) (ν2 πu and ν3 σu⁺ of a symmetric triatomic X–Y–X; Herzberg 1945).
        """
        known = {"energy", "B", "D", "H", "l", "q", "inversion", "reflection"}
        extra = set(values) - known
        if extra:
            raise AssignmentError(f"level {name!r}: unknown field(s) {sorted(extra)}; use "
                                  + ", ".join(sorted(known)))
        if "energy" not in values or "B" not in values:
            raise AssignmentError(f"level {name!r} needs 'energy' and 'B' (cm-1)")
        tri = triatomic_level(name)
        l = int(values.get("l", tri[1] if tri else 0))
        inv = values.get("inversion")
        if inv is None and centrosymmetric:
            if tri is None:
                raise AssignmentError(
                    f"level {name!r} of a centrosymmetric molecule needs inversion='g' or 'u' "
                    "(or a label 'v1 v2^l v3' of a symmetric triatomic)")
            inv = "g" if (tri[0][1] + tri[0][2]) % 2 == 0 else "u"
        return cls(name=str(name), energy=float(values["energy"]), B=float(values["B"]),
                   D=float(values.get("D", 0.0)), l=l, q=float(values.get("q", 0.0)),
                   inversion=inv if centrosymmetric else None,
                   reflection=str(values.get("reflection", reflection)), H=float(values.get("H", 0.0)))


def triatomic_level(label: str):
    """``"01^11"`` -> ((v1, v2, v3), ℓ) = ((0, 1, 1), 1); None when the label is not of that form."""
    m = _TRIATOMIC.match(str(label).translate(_SUPERSCRIPTS))
    if not m:
        return None
    v1, v2, l, v3 = (int(g) for g in m.groups())
    if l > v2 or (v2 - l) % 2:
        return None
    return (v1, v2, v3), l


def components(level: VibLevel) -> tuple[str, ...]:
    """The e/f components of a level: ("e",) for Σ⁺, ("f",) for Σ⁻, ("e", "f") for ℓ ≥ 1."""
    if level.l >= 1:
        return ("e", "f")
    return ("e",) if level.reflection == "+" else ("f",)


def term_value(level: VibLevel, J, component: str = "e"):
    """F(J) of one component, cm⁻¹ (module docstring); NaN where J < ℓ."""
    J = np.asarray(J, dtype=float)
    x = J * (J + 1.0) - level.l**2
    F = level.energy + rot_term(J, level.B, level.D, level.l) + level.H * x**3
    if level.l >= 1:
        F = F + (0.5 if component == "e" else -0.5) * level.q * J * (J + 1.0)
    return np.where(J >= level.l, F, np.nan)


def honl_london_linear(l_lower: int, l_upper: int, J_lower, dJ: int):
    """Hönl–London factor of a line (module docstring), lower J, ΔJ = J′ − J″ ∈ {−1, 0, 1}."""
    J = np.asarray(J_lower, dtype=float)
    l = float(l_lower)
    dl = int(l_upper) - int(l_lower)
    with np.errstate(divide="ignore", invalid="ignore"):
        if dl == 0:
            out = {1: (J + 1 + l) * (J + 1 - l) / (J + 1), 0: (2 * J + 1) * l * l / (J * (J + 1)),
                   -1: (J + l) * (J - l) / J}[dJ]
        elif dl == 1:
            out = {1: (J + 2 + l) * (J + 1 + l) / (2 * (J + 1)),
                   0: (J + 1 + l) * (J - l) * (2 * J + 1) / (2 * J * (J + 1)),
                   -1: (J - 1 - l) * (J - l) / (2 * J)}[dJ]
        elif dl == -1:
            out = {1: (J + 2 - l) * (J + 1 - l) / (2 * (J + 1)),
                   0: (J + 1 - l) * (J + l) * (2 * J + 1) / (2 * J * (J + 1)),
                   -1: (J - 1 + l) * (J + l) / (2 * J)}[dJ]
        else:
            raise AssignmentError(f"Δℓ = {dl} is not an infrared band (Δℓ must be 0 or ±1)")
    return np.where(np.isfinite(out) & (out > 0), out, 0.0)


def placzek_teller(J_lower, dJ: int):
    """Placzek–Teller factor b(J → J+ΔJ) of a Σ state (module docstring), ΔJ ∈ {−2, 0, 2}."""
    J = np.asarray(J_lower, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        if dJ == 2:
            out = 3 * (J + 1) * (J + 2) / (2 * (2 * J + 1) * (2 * J + 3))
        elif dJ == 0:
            out = J * (J + 1) / ((2 * J - 1) * (2 * J + 3))
        elif dJ == -2:
            out = 3 * J * (J - 1) / (2 * (2 * J + 1) * (2 * J - 1))
        else:
            raise AssignmentError(f"ΔJ = {dJ} is not a Raman branch of a Σ state (O, Q or S: -2, 0, 2)")
    return np.where(np.isfinite(out) & (out > 0), out, 0.0)


@dataclass(frozen=True)
class LineSet:
    """Allowed lines between two levels, arrays of equal length (lower J order)."""

    J_lower: np.ndarray
    J_upper: np.ndarray
    comp_lower: np.ndarray
    comp_upper: np.ndarray
    branch: np.ndarray
    factor: np.ndarray
    weight: np.ndarray

    def __len__(self) -> int:
        return len(self.J_lower)


def _no_lines() -> LineSet:
    return LineSet(*(np.zeros(0, dtype=t) for t in (int, int, object, object, object, float, float)))


def allowed_lines(lower: VibLevel, upper: VibLevel, isotopologue, J_max: int, *,
                  process: str = "ir") -> LineSet:
    """Every allowed line between ``lower`` and ``upper`` up to lower J = ``J_max``.

    ``factor`` is the Hönl–London (``process="ir"``) or Placzek–Teller (``"raman"``, the
    anisotropic part; Q lines are kept for their isotropic part even where it is 0) factor,
    ``weight`` the nuclear-spin weight of the lower level (0-weight levels are left out).
    """
    if process == "ir":
        dJs, change = (-1, 0, 1), True
        if abs(upper.l - lower.l) > 1:
            raise AssignmentError(f"{upper.name}-{lower.name}: Δℓ = {upper.l - lower.l} is not "
                                  "an infrared band (Δℓ = 0 or ±1)")
    elif process == "raman":
        dJs, change = (-2, 0, 2), False
        if lower.l or upper.l:
            raise AssignmentError(f"{upper.name}-{lower.name}: Raman bands are modelled between Σ "
                                  "levels only (ℓ = 0)")
    else:
        raise AssignmentError(f"process must be 'ir' or 'raman', got {process!r}")
    if isotopologue.centrosymmetric and (lower.inversion == upper.inversion) == change:
        return _no_lines()  # infrared needs g <-> u, Raman g <-> g or u <-> u
    parts = []
    Jl = np.arange(int(lower.l), int(J_max) + 1)
    for cl in components(lower):
        pl = parity(Jl, cl)
        wl = np.asarray(isotopologue.spin_weight(pl, lower.inversion))
        for dJ in dJs:
            Ju = Jl + dJ
            for cu in components(upper):
                pu = parity(Ju, cu)
                ok = (wl > 0) & (Ju >= upper.l) & ((pu != pl) == change)
                if change:  # J = 0 <-> 0 is forbidden for a dipole transition
                    ok &= ~((Ju == 0) & (Jl == 0))
                if process == "ir":
                    f = honl_london_linear(lower.l, upper.l, Jl, dJ)
                else:
                    f = placzek_teller(Jl, dJ)
                # a Raman Q line also carries the isotropic part (J = 0 included)
                ok &= (f > 0) | (process == "raman" and dJ == 0)
                n = int(ok.sum())
                if n:
                    parts.append((Jl[ok], Ju[ok], np.full(n, cl, dtype=object),
                                  np.full(n, cu, dtype=object),
                                  np.full(n, BRANCH_LETTERS[dJ], dtype=object), f[ok],
                                  wl[ok].astype(float)))
    if not parts:
        return _no_lines()
    cols = [np.concatenate([p[k] for p in parts]) for k in range(7)]
    order = np.lexsort((cols[1], cols[0]))
    return LineSet(*(c[order] for c in cols))

"""Diatomic molecules, their isotopologues and mass scaling of constants.

Isotope masses (u) and natural abundances come from the ``periodictable``
package (masses from the Atomic Mass Evaluation, abundances from IUPAC).

Mass scaling (Born–Oppenheimer; Herzberg, *Spectra of Diatomic Molecules*):
with ρ = sqrt(μ/μ_iso), ωe ∝ ρ, ωexe ∝ ρ², ωeye ∝ ρ³, Be ∝ ρ², αe ∝ ρ³,
γe ∝ ρ⁴, D ∝ ρ⁴.
"""

from __future__ import annotations

import itertools
import re
from collections.abc import Mapping
from dataclasses import dataclass

import periodictable

from ..errors import AssignmentError

__all__ = ["Diatomic", "Isotopologue", "isotope", "scale_constants", "MASS_EXPONENTS"]

#: power of ρ by which each named constant scales to another isotopologue
MASS_EXPONENTS = {
    "omega_e": 1, "omega_e_x_e": 2, "omega_e_y_e": 3,
    "B_e": 2, "alpha_e": 3, "gamma_e": 4, "D_e": 4, "D": 4, "beta_e": 5,
    "r_e": 0,
}

_ISOTOPE_RE = re.compile(r"^\s*(\d+)\s*([A-Z][a-z]?)\s*$")


@dataclass(frozen=True)
class Isotope:
    """One isotope: ``symbol`` (``"35Cl"``), element, mass number, mass (u), abundance (fraction)."""

    symbol: str
    element: str
    mass_number: int
    mass: float
    abundance: float


def isotope(symbol: str, mass_number: int | None = None) -> Isotope:
    """Look up an isotope in ``periodictable`` (``"35Cl"``, ``"D"``, or ``("Cl", 35)``)."""
    s = str(symbol).strip()
    if s in ("D", "T"):
        s = {"D": "2H", "T": "3H"}[s]
    m = _ISOTOPE_RE.match(s)
    if m:
        mass_number, s = int(m.group(1)), m.group(2)
    try:
        el = periodictable.elements.symbol(s)
    except ValueError:
        raise AssignmentError(
            f"unknown element {symbol!r}; give an element symbol like 'Cl' or an isotope like '35Cl'"
        ) from None
    if mass_number is None:
        raise AssignmentError(f"{symbol!r} is an element; give a mass number, e.g. '{el[el.isotopes[0]]}'")
    if mass_number not in el.isotopes:
        raise AssignmentError(
            f"{el.symbol} has no isotope of mass number {mass_number} in periodictable; "
            f"known: {el.isotopes[0]}..{el.isotopes[-1]}"
        )
    iso = el[mass_number]
    return Isotope(
        symbol=f"{mass_number}{el.symbol}",
        element=el.symbol,
        mass_number=mass_number,
        mass=float(iso.mass),
        abundance=float(iso.abundance) / 100.0,
    )


def _isotopes_of(atom: str, min_abundance: float) -> list[Isotope]:
    s = str(atom).strip()
    if _ISOTOPE_RE.match(s) or s in ("D", "T"):
        iso = isotope(s)
        # an explicitly chosen isotope is taken as pure
        return [Isotope(iso.symbol, iso.element, iso.mass_number, iso.mass, 1.0)]
    try:
        el = periodictable.elements.symbol(s)
    except ValueError:
        raise AssignmentError(
            f"unknown atom {atom!r}; give an element symbol ('Cl') or an isotope ('35Cl', 'D')"
        ) from None
    out = [isotope(el.symbol, a) for a in el.isotopes if el[a].abundance > 0]
    out = [i for i in out if i.abundance >= min_abundance]
    if not out:
        raise AssignmentError(
            f"no isotope of {el.symbol} has a natural abundance >= {min_abundance}; "
            "lower min_abundance or name an isotope"
        )
    return out


@dataclass(frozen=True)
class Isotopologue:
    """One isotopic form of a diatomic.

    Attributes
    ----------
    name : str
        ``"1H-35Cl"`` style (mass number and symbol of each atom, joined by ``-``).
    atoms : tuple of Isotope
    abundance : float
        Product of the atoms' fractional abundances (1 for named isotopes).
    reduced_mass : float
        μ = m₁m₂/(m₁+m₂) in u.
    mass : float
        Total mass m₁ + m₂ in u (for Doppler widths).
    """

    name: str
    atoms: tuple[Isotope, Isotope]
    abundance: float
    reduced_mass: float
    mass: float


class Diatomic:
    """A diatomic molecule and its isotopologues.

    Parameters
    ----------
    a, b : str
        Atoms as element symbols (``"H"``: all natural isotopes above
        ``min_abundance``) or isotopes (``"1H"``, ``"35Cl"``, ``"D"``: that one only).
    min_abundance : float
        Isotopes of an element below this natural abundance (fraction) are left out.

    Examples
    --------
    >>> hcl = Diatomic("H", "Cl")
    >>> [i.name for i in hcl.isotopologues]
    ['1H-35Cl', '1H-37Cl']
    """

    def __init__(self, a: str, b: str, *, min_abundance: float = 0.01):
        self.atoms = (str(a), str(b))
        self.min_abundance = float(min_abundance)
        isos = []
        for ia, ib in itertools.product(
            _isotopes_of(a, min_abundance), _isotopes_of(b, min_abundance)
        ):
            isos.append(
                Isotopologue(
                    name=f"{ia.symbol}-{ib.symbol}",
                    atoms=(ia, ib),
                    abundance=ia.abundance * ib.abundance,
                    reduced_mass=ia.mass * ib.mass / (ia.mass + ib.mass),
                    mass=ia.mass + ib.mass,
                )
            )
        isos.sort(key=lambda i: -i.abundance)
        self.isotopologues: tuple[Isotopologue, ...] = tuple(isos)

    @classmethod
    def parse(cls, formula: str, *, min_abundance: float = 0.01) -> Diatomic:
        """Build from a formula such as ``"HCl"``, ``"CO"``, ``"H35Cl"``, ``"12C16O"``, ``"N2"``."""
        text = str(formula).replace(" ", "")
        m = re.fullmatch(r"((?:\d*[A-Z][a-z]?)+?)(\d*)", text)
        atoms = re.findall(r"\d*[A-Z][a-z]?", m.group(1)) if m else []
        if m and m.group(2):
            atoms = atoms * int(m.group(2))
        if len(atoms) != 2:
            raise AssignmentError(
                f"cannot read {formula!r} as a diatomic; write it like 'HCl', 'CO', 'H35Cl' or 'N2', "
                "or use Diatomic('H', 'Cl')"
            )
        return cls(atoms[0], atoms[1], min_abundance=min_abundance)

    @property
    def main(self) -> Isotopologue:
        """The most abundant isotopologue."""
        return self.isotopologues[0]

    def isotopologue(self, name: str) -> Isotopologue:
        """The isotopologue called ``name``: its key (``"1H-35Cl"``) or as the trade writes it
        (``"H35Cl"``, ``"H³⁵Cl"``, ``"D35Cl"``, ``"35Cl-1H"``; an atom without mass number
        matches any isotope of it when that leaves one isotopologue)."""
        for i in self.isotopologues:
            if i.name == name:
                return i
        found = [i for i in self.isotopologues if _spelt_as(str(name), i)]
        if len(found) == 1:
            return found[0]
        raise AssignmentError(
            f"{name!r} is not {'one' if not found else 'a single'} isotopologue of {self}; "
            "known: " + ", ".join(i.name for i in self.isotopologues)
        )

    def to_dict(self) -> dict:
        """JSON-able specification (for session files)."""
        return {"atoms": list(self.atoms), "min_abundance": self.min_abundance}

    @classmethod
    def from_dict(cls, d: Mapping) -> Diatomic:
        return cls(*d["atoms"], min_abundance=d.get("min_abundance", 0.01))

    def __eq__(self, other) -> bool:
        return isinstance(other, Diatomic) and self.to_dict() == other.to_dict()

    def __hash__(self) -> int:
        return hash((self.atoms, self.min_abundance))

    def __repr__(self) -> str:
        return f"Diatomic({self.atoms[0]!r}, {self.atoms[1]!r})"


_SUPERSCRIPTS = str.maketrans("⁰¹²³⁴⁵⁶⁷⁸⁹", "0123456789")
_ATOM_RE = re.compile(r"(\d*)([A-Z][a-z]?)")


def _spelt_as(text: str, iso: Isotopologue) -> bool:
    """Whether ``text`` (e.g. "H35Cl", "H³⁵Cl", "D-35Cl") names the two atoms of ``iso``."""
    t = text.translate(_SUPERSCRIPTS).replace("-", "").replace(" ", "")
    atoms = _ATOM_RE.findall(t)
    if "".join(a + b for a, b in atoms) != t or len(atoms) != 2:
        return False
    want = [(a.mass_number, a.element) for a in iso.atoms]
    got = [(int(n) if n else {"D": 2, "T": 3}.get(e), "H" if e in ("D", "T") else e)
           for n, e in atoms]

    def same(g, w) -> bool:
        return g[1] == w[1] and (g[0] is None or g[0] == w[0])

    return (same(got[0], want[0]) and same(got[1], want[1])) or \
        (same(got[0], want[1]) and same(got[1], want[0]))


def scale_constants(constants: Mapping[str, float], rho: float) -> dict[str, float]:
    """Scale named constants from one isotopologue to another.

    Parameters
    ----------
    constants : mapping
        Names from :data:`MASS_EXPONENTS` (others are copied unchanged).
    rho : float
        ρ = sqrt(μ/μ_iso), μ of the isotopologue the constants belong to.

    Returns
    -------
    dict with each value multiplied by ρ**exponent.
    """
    return {k: v * rho ** MASS_EXPONENTS.get(k, 0) for k, v in constants.items()}

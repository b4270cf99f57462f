"""Linear molecules (``wk.Linear``): atoms in order along the axis, isotopologues,
centre of symmetry and nuclear-spin statistics.

Isotope masses and natural abundances come from ``periodictable`` through the
same code as :class:`~widgetkit.levels.Diatomic`; nuclear spins from
:mod:`widgetkit.levels.spin`. An isotopologue and its mirror image
(¹⁶O¹²C¹⁸O and ¹⁸O¹²C¹⁶O) are one molecule: their abundances are added.

Electronic ground states are taken as ¹Σ⁺ (¹Σg⁺ with a centre of symmetry)
except for the homonuclear diatomics O₂ and S₂, whose ground state is ³Σg⁻
(Huber and Herzberg, *Constants of Diatomic Molecules*, 1979, from memory). For
³Σg⁻ the rotational quantum number used is N (rotation without electron spin);
the small triplet splitting of each N level is not modelled.
"""

from __future__ import annotations

import itertools
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import periodictable
from scipy import constants as sc

from ..errors import AssignmentError
from .molecule import Isotope, _isotopes_of
from .spin import SpinStatistics, nuclear_spin, spin_statistics

__all__ = ["Linear", "LinearIsotopologue", "as_linear", "moment_of_inertia", "rotational_constant"]

_TOKEN = re.compile(r"\d*[A-Z][a-z]?|D|T")
#: electronic ground states that are not ¹Σ⁺: element sequence -> Σ reflection symmetry
_SIGMA_MINUS = {("O", "O"): "3Σg⁻", ("S", "S"): "3Σg⁻"}


@dataclass(frozen=True)
class LinearIsotopologue:
    """One isotopic form of a linear molecule.

    Attributes
    ----------
    name : str
        ``"16O-12C-16O"`` (mass number and symbol of each atom along the axis, joined by ``-``).
    atoms : tuple of Isotope
    abundance : float
        Product of the atoms' fractional abundances, summed over the two
        orientations of a molecule that is not its own mirror image.
    mass : float
        Total mass in u.
    spins : tuple of Fraction
        Nuclear spin of each atom.
    statistics : SpinStatistics
        Centre of symmetry and the spin weights N_s, N_a.
    reduced_mass : float
        μ = m₁m₂/(m₁+m₂) in u for two atoms; NaN for more (no single reduced mass).
    """

    name: str
    atoms: tuple[Isotope, ...]
    abundance: float
    mass: float
    spins: tuple
    statistics: SpinStatistics
    reduced_mass: float

    @property
    def centrosymmetric(self) -> bool:
        return self.statistics.centrosymmetric

    def spin_weight(self, p: int, inversion: str | None) -> int:
        """Nuclear-spin weight of a level of parity ``p`` in vibronic state ``inversion``."""
        return self.statistics.weight(p, inversion)


def _split_atoms(atoms) -> list[str]:
    if isinstance(atoms, str):
        text = atoms.replace(" ", "").replace("-", "")
        m = re.fullmatch(r"((?:\d*[A-Z][a-z]?)+?)(\d*)", text)
        tokens = _TOKEN.findall(m.group(1)) if m else []
        if not m or "".join(tokens) != m.group(1) or not tokens:
            raise AssignmentError(
                f"cannot read {atoms!r} as atoms along an axis; write them in order, e.g. 'OCO', "
                "'HCN', 'HCCH', '16O12C16O', or give a list ['O', 'C', 'O']")
        if m.group(2):
            if len(tokens) != 1 or int(m.group(2)) != 2:
                raise AssignmentError(
                    f"{atoms!r} is a formula, not atoms in order along the axis; write e.g. 'OCO' "
                    "for carbon dioxide, 'NNO' for nitrous oxide, 'HCCH' for acetylene")
            tokens = tokens * 2
        return tokens
    try:
        out = [str(a).strip() for a in atoms]
    except TypeError:
        raise AssignmentError(f"atoms must be a string such as 'OCO' or a list of atoms, got {atoms!r}") \
            from None
    return out


def _element_of(iso: Isotope) -> int:
    return int(periodictable.elements.symbol(iso.element).number)


class Linear:
    """A linear molecule and its isotopologues.

    Parameters
    ----------
    atoms : str or sequence of str
        The atoms in order along the axis: ``"OCO"``, ``"NNO"``, ``"HCN"``,
        ``"HCCH"``, ``"N2"``, ``"16O12C16O"``, or ``["O", "C", "O"]``. Each
        atom is an element (all its natural isotopes above ``min_abundance``)
        or an isotope (``"13C"``, ``"D"``: that one only, taken as pure).
    min_abundance : float
        Isotopes of an element below this natural abundance (fraction) are left out.
    spins : mapping, optional
        Nuclear spins for isotopes missing from :data:`widgetkit.levels.spin.NUCLEAR_SPINS`.

    Examples
    --------
    >>> co2 = Linear("OCO")
    >>> co2.main.name, co2.main.centrosymmetric, co2.main.statistics.n_antisymmetric
    ('16O-12C-16O', True, 0)
    """

    kind = "linear"

    def __init__(self, atoms, *, min_abundance: float = 0.01, spins: Mapping[str, float] | None = None):
        names = _split_atoms(atoms)
        if len(names) < 2:
            raise AssignmentError(f"a linear molecule needs at least two atoms, got {atoms!r}")
        self.atoms = tuple(names)
        self.min_abundance = float(min_abundance)
        self.spins = {str(k): float(v) for k, v in (spins or {}).items()}
        per_atom = [_isotopes_of(a, min_abundance) for a in names]
        found: dict[tuple, list] = {}
        for combo in itertools.product(*per_atom):
            syms = tuple(i.symbol for i in combo)
            key = min(syms, syms[::-1])
            ab = float(np.prod([i.abundance for i in combo]))
            if key in found:  # the mirror image of one already listed
                found[key][1] += ab
            else:
                found[key] = [syms, ab, combo]
        isos = []
        for syms, ab, combo in found.values():
            spin = tuple(nuclear_spin(i.symbol, _element_of(i), i.mass_number, self.spins) for i in combo)
            mu = (combo[0].mass * combo[1].mass / (combo[0].mass + combo[1].mass)
                  if len(combo) == 2 else float("nan"))
            isos.append(LinearIsotopologue(
                name="-".join(syms), atoms=tuple(combo), abundance=ab,
                mass=float(sum(i.mass for i in combo)), spins=spin,
                statistics=spin_statistics(spin, syms), reduced_mass=mu))
        isos.sort(key=lambda i: -i.abundance)
        self.isotopologues: tuple[LinearIsotopologue, ...] = tuple(isos)

    # ------------------------------------------------------------------ properties
    @property
    def main(self) -> LinearIsotopologue:
        """The most abundant isotopologue."""
        return self.isotopologues[0]

    @property
    def elements(self) -> tuple[str, ...]:
        return tuple(i.element for i in self.main.atoms)

    @property
    def electronic_state(self) -> str:
        """The electronic ground state: ``"1Σ+"``, ``"1Σg+"`` or ``"3Σg⁻"`` (O₂, S₂)."""
        if self.elements in _SIGMA_MINUS:
            return _SIGMA_MINUS[self.elements]
        return "1Σg+" if self.main.centrosymmetric else "1Σ+"

    @property
    def reflection(self) -> str:
        """Σ reflection symmetry of the electronic ground state, ``"+"`` or ``"-"``."""
        return "-" if self.elements in _SIGMA_MINUS else "+"

    @property
    def diatomic(self) -> bool:
        return len(self.atoms) == 2

    def isotopologue(self, name: str) -> LinearIsotopologue:
        for i in self.isotopologues:
            if i.name == name:
                return i
        raise AssignmentError(f"{name!r} is not an isotopologue of {self}; known: "
                              + ", ".join(i.name for i in self.isotopologues))

    @classmethod
    def parse(cls, formula: str, **kwargs) -> Linear:
        """Same as ``Linear(formula)``."""
        return cls(formula, **kwargs)

    def to_dict(self) -> dict:
        """JSON-able specification (for session files); ``kind`` tells it from a Diatomic."""
        d = {"kind": "linear", "atoms": list(self.atoms), "min_abundance": self.min_abundance}
        if self.spins:
            d["spins"] = dict(self.spins)
        return d

    @classmethod
    def from_dict(cls, d: Mapping) -> Linear:
        return cls(list(d["atoms"]), min_abundance=d.get("min_abundance", 0.01), spins=d.get("spins"))

    def __eq__(self, other) -> bool:
        return isinstance(other, Linear) and self.to_dict() == other.to_dict()

    def __hash__(self) -> int:
        return hash((self.atoms, self.min_abundance))

    def __repr__(self) -> str:
        short = all(len(a) <= 2 for a in self.atoms)
        return f"Linear({''.join(self.atoms) if short else list(self.atoms)!r})"


def as_linear(molecule) -> Linear:
    """A :class:`Linear` from a Linear, a :class:`~widgetkit.levels.Diatomic` or atoms/formula text."""
    if isinstance(molecule, Linear):
        return molecule
    if hasattr(molecule, "atoms") and hasattr(molecule, "min_abundance"):
        return Linear(list(molecule.atoms), min_abundance=molecule.min_abundance)
    return Linear(molecule)


def moment_of_inertia(isotopologue: LinearIsotopologue, bond_lengths: Sequence[float]) -> float:
    """I = Σ mᵢ (zᵢ − z_cm)² in u Å² for bond lengths (Å) between neighbouring atoms."""
    r = np.asarray(bond_lengths, dtype=float)
    if r.shape != (len(isotopologue.atoms) - 1,) or not np.all(r > 0):
        raise AssignmentError(f"{isotopologue.name} needs {len(isotopologue.atoms) - 1} positive bond "
                              f"lengths (Å), got {list(np.atleast_1d(bond_lengths))}")
    z = np.concatenate([[0.0], np.cumsum(r)])
    m = np.array([a.mass for a in isotopologue.atoms])
    zc = float(np.sum(m * z) / np.sum(m))
    return float(np.sum(m * (z - zc) ** 2))


def rotational_constant(inertia: float) -> float:
    """B = h / (8π² c I) in cm⁻¹ for I in u Å² (CODATA constants via scipy)."""
    return float(sc.h / (8 * np.pi**2 * sc.c * 100.0 * inertia * sc.atomic_mass * 1e-20))

"""Nuclear spins and the nuclear-spin statistical weights of linear molecules.

A centrosymmetric linear molecule (¹⁶O¹²C¹⁶O, ¹H¹²C¹²C¹H, ¹⁴N₂) is unchanged
by the permutation P that exchanges every pair of identical nuclei placed
symmetrically about its centre. The total wavefunction must be symmetric under
P when it exchanges an even number of pairs of fermions (half-integer nuclear
spin) and antisymmetric when the number is odd (Pauli principle):
ε = (−1)^(number of fermion pairs).

Nuclear-spin functions (closed form, Herzberg, *Spectra of Diatomic Molecules*,
1950, ch. III; Bernath, *Spectra of Atoms and Molecules*, ch. 9 — both from
memory): with pairs k of spin I_k, P1 = Π_k (2I_k+1) and P2 = Π_k (2I_k+1)²,
there are

* N_s = (P2 + P1)/2 spin functions symmetric under P and
* N_a = (P2 − P1)/2 antisymmetric ones

(the trace of P on the spin space is P1), each multiplied by 2I_c+1 of a
central nucleus that P leaves in place. For one pair, N_s : N_a = (I+1) : I.

A rotation–vibration level is *s* or *a* under P: its parity p (±1 under
inversion E*) times the g/u character of its vibronic state (+1 g, −1 u).
Its spin weight is N_s when p·(g/u)·ε = +1 and N_a otherwise; a weight of 0
means the level does not exist (¹⁶O: I = 0, so N_a = 0 and only half the
levels of ¹⁶O¹²C¹⁶O exist: even J in the ground state Σg⁺).

Parity of linear-molecule levels (Brown et al., J. Mol. Spectrosc. 55 (1975)
500, the e/f convention, integer J): e levels have p = (−1)^J, f levels
p = −(−1)^J; a Σ⁺ vibronic level has only e levels, a Σ⁻ only f levels, a
level with ℓ ≥ 1 (Π, Δ) one e and one f level at each J ≥ ℓ.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from ..errors import AssignmentError

__all__ = ["NUCLEAR_SPINS", "nuclear_spin", "SpinStatistics", "spin_statistics", "parity"]

#: nuclear ground-state spins I (in units of ħ) of common isotopes; N. J. Stone, *Table of
#: nuclear magnetic dipole and electric quadrupole moments*, At. Data Nucl. Data Tables 90
#: (2005) 75 (values from memory). Nuclei with even Z and even N have I = 0 (nuclear shell
#: model, common practice) and need no entry.
NUCLEAR_SPINS: dict[str, Fraction] = {k: Fraction(v) for k, v in {
    "1H": "1/2", "2H": "1", "3H": "1/2", "3He": "1/2", "6Li": "1", "7Li": "3/2", "9Be": "3/2",
    "10B": "3", "11B": "3/2", "13C": "1/2", "14N": "1", "15N": "1/2", "17O": "5/2", "19F": "1/2",
    "21Ne": "3/2", "23Na": "3/2", "25Mg": "5/2", "27Al": "5/2", "29Si": "1/2", "31P": "1/2",
    "33S": "3/2", "35Cl": "3/2", "37Cl": "3/2", "39K": "3/2", "41K": "3/2", "77Se": "1/2",
    "79Br": "3/2", "81Br": "3/2", "127I": "5/2", "129Xe": "1/2", "131Xe": "3/2",
}.items()}


def nuclear_spin(symbol: str, Z: int, A: int, spins: Mapping[str, float] | None = None) -> Fraction:
    """Nuclear spin I of the isotope ``symbol`` (``"14N"``) with atomic number Z and mass number A.

    ``spins`` overrides or extends :data:`NUCLEAR_SPINS` (``{"14N": 1}``).
    """
    if spins and symbol in spins:
        val = Fraction(spins[symbol]).limit_denominator(2)
        if val < 0 or (2 * val).denominator != 1:
            raise AssignmentError(f"nuclear spin of {symbol} must be a whole or half-whole number >= 0, "
                                  f"got {spins[symbol]!r}")
        return val
    if symbol in NUCLEAR_SPINS:
        return NUCLEAR_SPINS[symbol]
    if Z % 2 == 0 and (A - Z) % 2 == 0:
        return Fraction(0)
    raise AssignmentError(
        f"the nuclear spin of {symbol} is not in widgetkit's table; give it, e.g. "
        f"Linear(..., spins={{'{symbol}': 1.5}}) (value from a table of nuclear moments)")


def parity(J, component: str):
    """Parity (+1 or −1) of levels with rotational quantum number J (int or array) and e/f
    ``component``."""
    if component not in ("e", "f"):
        raise AssignmentError(f"component must be 'e' or 'f', got {component!r}")
    sign = 1 - 2 * (np.asarray(J, dtype=int) % 2)
    sign = sign if component == "e" else -sign
    return int(sign) if np.ndim(sign) == 0 else sign


@dataclass(frozen=True)
class SpinStatistics:
    """Nuclear-spin weights of one isotopologue.

    Attributes
    ----------
    centrosymmetric : bool
        True when the isotopologue has a centre of symmetry (identical isotopes
        at mirror positions along the axis).
    n_symmetric, n_antisymmetric : int
        N_s and N_a (module docstring), central nucleus included; for a molecule
        without a centre of symmetry both equal the number of spin states.
    epsilon : int
        +1 or −1: the symmetry of the total wavefunction under P.
    """

    centrosymmetric: bool
    n_symmetric: int
    n_antisymmetric: int
    epsilon: int

    def weight(self, p, inversion: str | None):
        """Spin weight of levels of parity ``p`` (±1, int or array) in a vibronic state
        ``inversion`` ("g", "u", None).

        For a molecule without a centre of symmetry every level has the same weight.
        """
        if not self.centrosymmetric:
            w = np.full(np.shape(p), self.n_symmetric)
        else:
            if inversion not in ("g", "u"):
                raise AssignmentError(
                    "a vibrational level of a centrosymmetric molecule needs its inversion symmetry "
                    f"'g' or 'u', got {inversion!r}")
            chi = np.asarray(p) * (1 if inversion == "g" else -1) * self.epsilon
            w = np.where(chi > 0, self.n_symmetric, self.n_antisymmetric)
        return int(w) if np.ndim(w) == 0 else w

    @property
    def ratio(self) -> float:
        """N_s / N_a (inf when N_a = 0; 1 for a molecule without a centre of symmetry)."""
        if not self.centrosymmetric:
            return 1.0
        return float("inf") if self.n_antisymmetric == 0 else self.n_symmetric / self.n_antisymmetric


def spin_statistics(spins: Sequence[Fraction], symbols: Sequence[str]) -> SpinStatistics:
    """Spin statistics of a linear chain of nuclei with spins ``spins`` and isotope ``symbols``
    in order along the axis (module docstring for the closed form)."""
    n = len(symbols)
    total = 1
    for s in spins:
        total *= int(2 * s + 1)
    centro = n >= 2 and list(symbols) == list(symbols)[::-1]
    if not centro:
        return SpinStatistics(False, total, total, 1)
    p1, p2, fermion_pairs = 1, 1, 0
    for k in range(n // 2):
        d = int(2 * spins[k] + 1)
        p1 *= d
        p2 *= d * d
        fermion_pairs += int(2 * spins[k]) % 2
    centre = int(2 * spins[n // 2] + 1) if n % 2 else 1
    return SpinStatistics(True, centre * (p2 + p1) // 2, centre * (p2 - p1) // 2,
                          -1 if fermion_pairs % 2 else 1)

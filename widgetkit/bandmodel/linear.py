"""Parallel (Σ–Σ) bands of linear polyatomic molecules in the band model (private).

The lines are those of a ¹Σ–¹Σ band (P and R branches, Hönl–London factors J″+1 and J″,
F(J) = B J(J+1) − D J²(J+1)², each level with its own band constants), as for a diatomic in
the band term map (:class:`widgetkit.simulate.linesystem.BandMap`); what a linear molecule
adds is its nuclear-spin statistics (:mod:`widgetkit.levels.spin`): each line and each level
of the partition sum is weighted by the spin weight of its lower level, the Σg⁺ (or Σ⁺)
ground state, whose levels are all e (parity (−1)^J). For ¹⁶O¹²C¹⁶O (spin-0 identical end
nuclei) the odd-J levels have weight 0, so their lines are dropped and every other line of
the band is missing, as in the spectrum.

Limits (refused with a message): only the ground vibrational state as the lower level (a
fundamental or overtone of a parallel band, not a hot band from a bending level), only the
main isotopologue, band constants (no equilibrium constants, no r_e from one B of a molecule
with two bond lengths), no perpendicular (Π–Σ) bands.
"""

from __future__ import annotations

import numpy as np

from ..errors import FitError
from ..levels.spin import parity
from ..simulate.linesystem import LineSystem

__all__ = ["check_kind", "is_linear_polyatomic", "check_linear_options", "apply_spin_weights", "spacing_in_B"]


def is_linear_polyatomic(molecule) -> bool:
    """True for a :class:`widgetkit.Linear` of three or more atoms."""
    return getattr(molecule, "kind", None) == "linear" and len(getattr(molecule, "atoms", ())) > 2


def check_linear_options(molecule, bands, isotopologues, joint) -> tuple:
    """(bands, isotopologues, joint) for a linear polyatomic molecule, or a FitError naming
    what is supported."""
    name = "".join(molecule.atoms)
    if len(bands) != 1:
        raise FitError(f"the band model of a linear polyatomic molecule ({name}) fits one parallel "
                       "(Σ–Σ) band from the ground state; give band=(1, 0)")
    if isotopologues not in ("natural", "main") and list(isotopologues) != [molecule.main.name]:
        raise FitError(f"the band model of a linear polyatomic molecule ({name}) fits its main "
                       f"isotopologue only ({molecule.main.name}); give isotopologues='main'")
    return bands, "main", False


def _ground_weights(molecule, J) -> np.ndarray:
    """Spin weight of the levels J of the ground Σ⁺ state (e levels; 'g' when centrosymmetric)."""
    st = molecule.main.statistics
    return np.asarray(st.weight(parity(np.asarray(J, dtype=int), "e"),
                                "g" if st.centrosymmetric else None), dtype=float)


def apply_spin_weights(system: LineSystem, molecule) -> LineSystem:
    """Lines and partition levels of the main isotopologue weighted by the ground-state spin
    weights; lines of weight zero are dropped. The partition levels of a band-map system are
    J = 0, 1, ... of the lower level in order (see ``diatomic_system``)."""
    if len(system.isotopologues) != 1 or np.any(system.v_lower != system.v_lower[0]):
        raise FitError("spin weights of a linear molecule need one isotopologue and one lower level")
    w_line = _ground_weights(molecule, system.J_lower)
    J_q = np.arange(system.q_iso.size)
    w_q = _ground_weights(molecule, J_q)
    kw = {f: getattr(system, f) for f in system.__dataclass_fields__}
    kw["factor"] = system.factor * w_line
    kw["q_weight"] = system.q_weight * w_q
    out = LineSystem(**kw)
    keep = w_line > 0
    if not keep.any():
        raise FitError("no line of this band has a non-zero nuclear-spin weight")
    return out.subset(keep)


def spacing_in_B(molecule) -> float:
    """The line spacing of a parallel band in units of B: 4 when the ground state's levels of
    one parity have zero spin weight (every other line missing), else 2."""
    if not is_linear_polyatomic(molecule):
        return 2.0
    w = _ground_weights(molecule, np.arange(4))
    return 4.0 if np.any(w == 0) else 2.0


def check_kind(kind, molecule) -> None:
    """Only parallel bands are modelled: ``kind`` None or "parallel"."""
    if kind in (None, "parallel"):
        return
    what = "".join(getattr(molecule, "atoms", ())) or str(molecule)
    if kind == "perpendicular":
        raise FitError(
            f"kind='perpendicular': the band model fits parallel (Σ–Σ) bands only, P and R "
            f"branches of a diatomic or of a linear molecule's ground state; a perpendicular band "
            f"of {what} (Q branch, ℓ-type doubling) is assigned line by line with "
            "s.assign_band(molecule, kind='perpendicular')")
    raise FitError(f"kind must be None, 'parallel' or 'perpendicular', got {kind!r}")

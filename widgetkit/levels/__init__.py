"""Level assignment and molecular constants (issue 4): molecules and
isotopologues, term models, candidate transitions, rovibrational band and
progression fits."""

from .molecule import Diatomic, Isotope, Isotopologue, isotope, scale_constants
from .terms import line_position, rot_constant, rot_term, vib_term

__all__ = [
    "Diatomic", "Isotope", "Isotopologue", "isotope", "scale_constants",
    "vib_term", "rot_constant", "rot_term", "line_position",
]

"""Level assignment and molecular constants (issue 4): molecules and
isotopologues, term models, candidate transitions, rovibrational band and
progression fits; linear polyatomic molecules, their spin statistics and the
infrared and Raman selection rules (issue 14)."""

from .bandfit import (
    BandFit,
    combination_differences,
    equilibrium_constants,
    fit_band,
    rotational_temperature,
)
from .candidates import (
    band_label,
    candidate_transitions,
    format_label,
    honl_london,
    parse_label,
    rotational_partition,
)
from .joint import JointFit, fit_joint
from .linear import Linear, LinearIsotopologue, as_linear, moment_of_inertia, rotational_constant
from .linear_assign import KINDS as LINEAR_KINDS
from .linear_assign import LinearAssignment, assign_linear
from .linear_terms import (
    VibLevel,
    allowed_lines,
    honl_london_linear,
    placzek_teller,
    term_value,
)
from .molecule import Diatomic, Isotope, Isotopologue, isotope, scale_constants
from .progression import Progression, assign_progression, birge_sponer, fit_progression
from .raman import RamanTemperature, stokes_anti_stokes_temperature
from .rovib import BandAssignment, assign_rovibrational
from .spin import NUCLEAR_SPINS, SpinStatistics, nuclear_spin, spin_statistics
from .terms import line_position, rot_constant, rot_term, vib_term

__all__ = [
    "Diatomic", "Isotope", "Isotopologue", "isotope", "scale_constants",
    "LinearAssignment", "assign_linear", "LINEAR_KINDS", "RamanTemperature",
    "stokes_anti_stokes_temperature",
    "Linear", "LinearIsotopologue", "as_linear", "moment_of_inertia", "rotational_constant",
    "VibLevel", "term_value", "allowed_lines", "honl_london_linear", "placzek_teller",
    "NUCLEAR_SPINS", "SpinStatistics", "nuclear_spin", "spin_statistics",
    "vib_term", "rot_constant", "rot_term", "line_position",
    "candidate_transitions", "parse_label", "format_label", "band_label", "honl_london",
    "rotational_partition",
    "BandFit", "fit_band", "combination_differences", "equilibrium_constants",
    "rotational_temperature",
    "BandAssignment", "assign_rovibrational", "JointFit", "fit_joint",
    "Progression", "fit_progression", "assign_progression", "birge_sponer",
]

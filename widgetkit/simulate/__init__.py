"""Spectrum simulator (issues 5 and 14): line lists and synthetic vibrational and
rovibrational spectra of diatomics from molecular constants, infrared bands of
linear molecules from level constants (:mod:`.linear`) and Raman spectra on a
Raman-shift axis (:mod:`.raman`), for demo data and tests.

>>> import widgetkit as wk
>>> hcl = wk.Diatomic("H", "Cl")
>>> s = wk.simulate.rovibrational(hcl, wk.simulate.HANDBOOK["1H-35Cl"],
...                               x_range=(2600, 3100), step=0.01, seed=1, noise=0.002)
>>> s.meta["simulated"]["function"]
'widgetkit.simulate.rovibrational'

Every returned :class:`~widgetkit.Spectrum` records in ``meta["simulated"]``
the function, all its arguments (JSON-able) and the widgetkit version.
"""

from .demos import DEMOS, demo
from .handbook import HANDBOOK
from .handbook_linear import LINEAR_HANDBOOK
from .linear import levels_from_equilibrium, linear_levels, linear_line_list, linear_spectrum
from .lines import (
    CONSTANT_NAMES,
    SimulationError,
    check_constants,
    line_list,
    partition_sum,
    rotational_populations,
)
from .raman import DETECTORS, detector_exponent, raman_line_list, raman_spectrum
from .spectra import (
    doppler_fwhm,
    doppler_sigma,
    render_lines,
    rovibrational,
    vibrational,
    voigt_fwhm,
)

__all__ = [
    "DEMOS", "demo", "HANDBOOK", "CONSTANT_NAMES", "SimulationError", "check_constants", "line_list",
    "partition_sum", "rotational_populations", "rovibrational", "vibrational", "render_lines",
    "doppler_sigma", "doppler_fwhm", "voigt_fwhm",
    "LINEAR_HANDBOOK", "linear_levels", "levels_from_equilibrium", "linear_line_list",
    "linear_spectrum", "DETECTORS", "detector_exponent", "raman_line_list", "raman_spectrum",
]

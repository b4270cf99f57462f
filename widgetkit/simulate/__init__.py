"""Spectrum simulator (issue 5): line lists and synthetic vibrational and
rovibrational spectra of diatomics from molecular constants, for demo data
and tests.

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
from .lines import (
    CONSTANT_NAMES,
    SimulationError,
    check_constants,
    line_list,
    partition_sum,
    rotational_populations,
)
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
]

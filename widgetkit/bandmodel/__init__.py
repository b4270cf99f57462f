"""Band model (issue 13): molecular constants from the whole band contour, at any resolution.

A spectrum of one or more v′ ← v″ bands of a diatomic is computed from molecular
constants, the temperature, the isotopologue abundances, a line shape and the
instrument, and fitted to the data::

    import widgetkit as wk
    res = wk.bandmodel.fit(x, y, "CO", resolution=4.0, fix={"temperature": 296})
    res.constants            # band_origin, B_upper, B_lower, B_e, alpha_e, r_e, T_rot, ...
    res.correlation          # of the free parameters

One physics: the lines are the simulator's (:mod:`widgetkit.simulate.linesystem`: term
values, Hönl–London and Boltzmann factors, isotopologue scaling); :mod:`.render` turns
them into an observed spectrum through the instrument (:mod:`.instrument`); :mod:`.fit`
fits it with an analytic Jacobian; :mod:`.quick` gives B or T from the P–R separation.

Extension point for other molecule kinds: the model works on a
:class:`~widgetkit.simulate.linesystem.LineSystem` (per-line factors such as Hönl–London
factors and nuclear-spin weights, and linear rows giving positions and lower-state
energies from a vector of constants). A linear polyatomic (parallel or perpendicular
bands, Q branches, spin statistics) plugs in by building its own line system and term
map; :class:`~.model.BandModel` and the fit take it unchanged.
"""

from .fitting import fit, fit_spectrum
from .instrument import INSTRUMENTS, profile
from .quick import (
    PR_COEFFICIENT,
    PR_COEFFICIENT_PRINTED,
    PRSeparation,
    pr_separation,
    rotational_constant_from_separation,
    temperature_from_separation,
)
from .restore import restore_fit
from .result import BandFit

__all__ = ["fit", "fit_spectrum", "restore_fit", "BandFit", "INSTRUMENTS", "profile", "PR_COEFFICIENT",
           "PR_COEFFICIENT_PRINTED", "PRSeparation", "pr_separation",
           "rotational_constant_from_separation", "temperature_from_separation"]

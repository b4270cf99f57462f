"""Secondary parameters of a band-model fit (private): when the data do not determine
them (:func:`relevance`), when a value is implausible (:data:`IMPLAUSIBLE_SHIFT`), and
their physical estimates made again from the fitted constants (:func:`estimate_again`).
Split from :mod:`.stages`."""

from __future__ import annotations

import math

from .build import kratzer_d, pekeris_wexe

__all__ = ["relevance", "IMPLAUSIBLE_SHIFT", "PLAUSIBILITY_NAMES", "estimate_again"]

#: a secondary parameter of :data:`PLAUSIBILITY_NAMES` that ends further than this many of its
#: relevance scales (:func:`relevance`) from its start is held there: its start comes from
#: the handbook or a physical estimate (Pekeris), and a value that far off is the model's
#: misfit taken up, not a measurement (measured: CO 1-0 with natural 13CO at 2 cm⁻¹, started
#: from a line width that ran over the neighbours, gave ω_e x_e = −179 ± 3 cm⁻¹ against 13.3,
#: with B and T right; that start is mended, :func:`.start._observed_fwhm`)
IMPLAUSIBLE_SHIFT = 4.0
#: the parameters judged so (an abundance ratio or a line width may legitimately move far)
PLAUSIBILITY_NAMES = ("omega_e_x_e", "D", "D_e", "D_upper", "D_lower")


def relevance(name: str, value: float, start: float, B: float, step: float) -> float:
    """The scale above which the standard error of secondary parameter ``name`` means
    "not determined" (cm⁻¹ or the parameter's unit)."""
    base = name.split("(")[0]
    if base in ("D", "D_e", "D_upper", "D_lower"):
        return max(abs(start), 1e-12)
    if base == "lorentz_hwhm":
        return max(abs(value), 0.005)
    if base == "resolution":
        return max(abs(value), step)
    if base == "gauss_fwhm":
        return max(abs(value), step)
    if base == "omega_e_x_e":
        return 0.5 * max(abs(start), 1e-6)
    if base.startswith("abundance_ratio"):
        return 0.5 * max(abs(start), 1e-6)
    if base == "band_origin":
        return 0.5 * B
    if base in ("B_upper", "B_lower"):
        return 0.05 * B
    if base == "herman_wallis":
        return 0.05
    return math.inf


def estimate_again(name: str, theta: dict, band) -> float | None:
    """The estimate of ω_e x_e (Pekeris) or D (Kratzer) from the fitted B, α_e and band
    origin ``theta`` (name -> value), None for other parameters or when it cannot be made.

    The first estimates come from the first B, and a start taken from a wrong spacing (half
    the true B at 4 cm-1 resolution, say) made the plausibility test hold ω_e x_e of CO at
    2.6 cm-1 (13.3), which biased B by 5 standard errors with the fit "ok"."""
    nu = theta.get("band_origin", 0.0)
    B = theta.get("B_e", theta.get("B_lower", 0.0))
    if name == "omega_e_x_e" and "alpha_e" in theta:
        new = pekeris_wexe(B, theta["alpha_e"], nu, band)
    elif name in ("D", "D_e", "D_upper", "D_lower"):
        new = kratzer_d(B, nu)
    else:
        return None
    return float(new) if new > 0 and math.isfinite(new) else None

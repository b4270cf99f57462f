"""What acts in Fourier space when a line list is rendered (private): the :class:`Kernel`,
the Gaussian width every deposit carries (:func:`deposit_extra`), the auxiliary width of a
band-limited instrument (:func:`auxiliary_tau`) and the share of a wide Gaussian instrument
applied as its transform (:func:`fourier_sigma`). Split from :mod:`.render` (no change of
behaviour); see its notes."""

from __future__ import annotations

import math
from dataclasses import dataclass

from .instrument import SIGMA_PER_FWHM

__all__ = ["Kernel", "deposit_extra", "auxiliary_tau", "fourier_sigma", "GAUSS_SPLIT_STEPS",
           "GAUSS_DEPOSIT_STEPS"]


@dataclass(frozen=True)
class Kernel:
    """What acts in Fourier space: Lorentz HWHM, instrument kind and resolution, τ, domain."""

    gamma: float
    instrument: str
    resolution: float
    tau: float
    domain: str  # "absorbance" or "transmittance"
    smooth: float = 0.0  # σ of an extra Gaussian smoothing (coarse stages of a fit)
    #: Gaussian instrument, absorbance domain: σ of the part of the instrument (and of the
    #: smoothing) applied in Fourier space; the rest goes into the deposits (0: all of it)
    fourier_sigma: float = 0.0


def deposit_extra(kernel: Kernel) -> float:
    """The Gaussian width every deposit carries besides the line's own σ (in quadrature)."""
    if kernel.domain != "absorbance":
        return kernel.tau
    if kernel.instrument == "gaussian":
        total = math.hypot(kernel.resolution * SIGMA_PER_FWHM, kernel.smooth)
        if not kernel.fourier_sigma > 0:
            return total  # (to the last bit as before the split existed)
        return math.sqrt(max(total * total - kernel.fourier_sigma ** 2, 0.0))
    return math.hypot(kernel.tau, kernel.smooth)


#: a Gaussian instrument whose σ exceeds this many steps of the data is split: all of it
#: in the deposits made each line's window 7 σ_instrument wide (4 cm-1 on data every 0.02
#: cm-1 took 0.12 s per deposit and a fit ran past its 60 s). Below it (up to about 19
#: points per resolution FWHM) nothing changes: such fits are computed as before
GAUSS_SPLIT_STEPS = 8.0
#: ... then this many steps of it go into the deposits (enough to sample them), the rest
#: is applied in Fourier space
GAUSS_DEPOSIT_STEPS = 2.0


def fourier_sigma(instrument: str, resolution: float, smooth: float, step: float) -> float:
    """σ of a Gaussian instrument (with the extra smoothing) applied in Fourier space, for
    data every ``step`` cm⁻¹: 0 unless the instrument's σ exceeds GAUSS_SPLIT_STEPS steps,
    else all but GAUSS_DEPOSIT_STEPS steps of it."""
    if instrument != "gaussian" or not step > 0:
        return 0.0
    if not resolution * SIGMA_PER_FWHM > GAUSS_SPLIT_STEPS * step:
        # (the instrument alone decides, so that no stage of a fit on data sampled as
        # usual is computed otherwise than before the split existed: records replay)
        return 0.0
    keep = GAUSS_DEPOSIT_STEPS * step
    total = math.hypot(resolution * SIGMA_PER_FWHM, smooth)
    return math.sqrt(total * total - keep * keep)


def auxiliary_tau(instrument: str, resolution: float) -> float:
    """τ of a band-limited instrument: 0.3 L⁻¹ = 0.3 Δ (keeps exp(2π²τ²t²) ≤ e^{1.8})."""
    return 0.3 * resolution if instrument != "gaussian" and resolution > 0 else 0.0

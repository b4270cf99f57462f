"""The convolution domain of a band-model fit (private): whether the absorbance
approximation holds, or the exact transmittance convolution is fitted from the approximate
result (:func:`exact_for_transmittance`); what the data look like (:func:`guess_y_kind`).
Split from :mod:`.stages` (no change of behaviour)."""

from __future__ import annotations

import numpy as np

from ..errors import FitError
from .build import ModelOptions
from .instrument import fwhm_factor
from .stages import Run

__all__ = ["exact_for_transmittance", "note_approximation", "guess_y_kind"]


def _peak_monochromatic(run: Run) -> tuple[float, float]:
    """(highest monochromatic peak absorbance, instrument FWHM / line FWHM)."""
    th = run.fitter.theta
    m = run.model
    pos, area, sig, *_ = m.lines(th)
    gamma = max(m._get(th, "lorentz_hwhm"), 0.0)
    from scipy.special import voigt_profile

    peak = float(np.max(area * voigt_profile(0.0, np.maximum(sig, 1e-9), gamma)))
    line_fwhm = float(np.median(2.3548 * sig)) + 2 * gamma
    inst = fwhm_factor(m.instrument) * m._get(th, "resolution")
    return peak, inst / max(line_fwhm, 1e-12)


def note_approximation(run: Run, simulated: bool) -> Run:
    """Say where the absorbance approximation stands for absorbance data."""
    peak, ratio = _peak_monochromatic(run)
    if simulated:
        return run
    if peak > 0.5 and ratio > 1.0:
        run.messages.append(
            f"absorbance approximation used with lines narrower than the instrument "
            f"(instrument/line width {ratio:.2g}) and a monochromatic peak absorbance of "
            f"{peak:.2g}: a real spectrometer would saturate such lines and the approximation "
            "fails (intensities, T and the band area are biased); for a measured spectrum fit "
            "its transmittance, or give convolve='transmittance' and the pressure width "
            "lorentz_hwhm")
    else:
        run.messages.append(f"absorbance approximation used (monochromatic peak absorbance "
                            f"{peak:.2g}{'' if ratio > 1 else ', lines wider than the instrument'}"
                            "): it holds here")
    return run


def exact_for_transmittance(run: Run, *, force: bool = False) -> Run:
    """Transmittance data: after the (fast) absorbance approximation, when lines are strong
    and narrower than the instrument, fit the exact transmittance convolution from there and
    keep it unless the approximation fits better by Δχ² > 9 (in units of the noise).
    ``force``: always fit and keep the transmittance convolution (``convolve="transmittance"``)."""
    peak, ratio = _peak_monochromatic(run)
    f = run.fitter
    if not force and not (peak > 0.1 and ratio > 1.0):
        run.messages.append(f"absorbance approximation used: the lines are weak or resolved "
                            f"(monochromatic peak absorbance {peak:.2g}), where it equals the "
                            "transmittance convolution")
        return run
    opts = ModelOptions(**{**run.opts.__dict__, "domain": "transmittance"})
    try:
        alt = Run(run.x, run.y, run.mol, opts, run.st, run.sources, run.t_struct,
                   run.user_start, run.fix, run.free_opt, run.resolution, run.lorentz,
                   run.max_nfev, run.max_time, run.progress, run.t0, run.messages)
    except FitError as exc:
        if force:
            raise
        run.messages.append(f"the transmittance convolution could not be set up ({exc}); the "
                            "absorbance approximation is kept and may bias T and the band area")
        return run
    for p_new, p_old in zip(alt.params, run.params, strict=True):
        p_new.vary, p_new.note, p_new.source = p_old.vary, p_old.note, p_old.source
    alt.fitter.theta = f.theta.copy()
    alt.held = dict(run.held)
    alt.final_stage()
    c_abs, c_tr = f.chisqr(), alt.fitter.chisqr()
    s2 = c_tr / max(run.y.size - len(alt.fitter.free()), 1)
    if not force and c_abs < c_tr - 9.0 * s2:
        run.messages.append(
            f"the absorbance approximation fits better than the transmittance convolution "
            f"(chi-square {c_abs:.4g} against {c_tr:.4g}): kept; the spectrum behaves as if the "
            "instrument acted on absorbance (as in widgetkit.simulate)")
        return run
    alt.messages.append(f"convolved in transmittance (lines narrower than the instrument, "
                        f"monochromatic peak absorbance {peak:.2g}; chi-square {c_tr:.4g}, the "
                        f"absorbance approximation {c_abs:.4g})")
    return alt


def guess_y_kind(y: np.ndarray) -> str:
    """Transmittance when the band dips below a baseline near 1, else absorbance."""
    med = float(np.median(y))
    up, down = float(np.max(y)) - med, med - float(np.min(y))
    if 0.3 < med <= 1.05 and float(np.max(y)) <= 1.1 and down > 2.0 * up:
        return "transmittance"
    return "absorbance"

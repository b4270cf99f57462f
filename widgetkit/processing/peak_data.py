"""What a peak search measures before it looks for peaks: noise, local baseline, typical
line width and the smoothed and matched-filtered data (:class:`PeakContext`); the reasons
are in the docstring of :mod:`.peaks`."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import ndimage, signal

from ._common import ProcessingError, as_xy
from .envelope import NARROW, baseline_window, local_baseline, three_point_width, typical_width
from .fringe import MIN_PERIOD_WIDTHS, Fringe, find_fringe
from .noise import NoiseEstimate, measure_noise
from .threshold import MIN_PROMINENCE, default_threshold

__all__ = ["PeakContext", "peak_context", "SMOOTH_FROM", "WIDTH_PROMINENCE", "MATCH_FROM"]

#: smoothing starts for lines at least this many samples wide (FWHM)
SMOOTH_FROM = 8.0
#: a feature must stand this many σ out to give the typical width
WIDTH_PROMINENCE = 10.0
#: the matched-filter channel runs for lines at least this many samples wide (FWHM)
MATCH_FROM = 1.5


def _rho(kernel: np.ndarray) -> float:
    """Correlation of neighbouring samples of white noise filtered by ``kernel``."""
    return float(np.sum(kernel[:-1] * kernel[1:]) / np.sum(kernel * kernel))


@dataclass(frozen=True)
class PeakContext:
    """What a peak search measures before looking for peaks (reused for hand-placed peaks).

    Attributes
    ----------
    noise : NoiseEstimate
    direction : str
        ``"up"`` (peaks) or ``"down"`` (dips).
    baseline : ndarray, shape (n,)
        The local baseline in y units.
    width : float
        Typical FWHM of the strongest lines, in samples (NaN when none stands out).
    smoothing : int
        Savitzky–Golay window in samples (1: no smoothing).
    gain : float
        Noise of the smoothed data in units of σ (1 without smoothing).
    signal : ndarray, shape (n,)
        Smoothed data above the baseline, peaks up: what the search looks at.
    matched : ndarray, shape (n,) or None
        The data above the baseline filtered with a Gaussian of the typical
        width, scaled to estimate the height of such a line (None when the width
        is unknown): the second channel, for weak lines.
    matched_gain : float
        Noise of ``matched`` in units of σ.
    gentle : ndarray, shape (n,) or None
        The data above the baseline smoothed with a Gaussian of half the typical
        width (no overshoot at the edges of flat tops, unlike the quadratic
        smoothing); it decides whether a valley between two peaks is real.
    gentle_gain : float
        Noise of ``gentle`` in units of σ.
    baseline_variance : ndarray, shape (n,) or None
        Variance of the local baseline in units of σ²; it adds to the noise of
        every height (it matters once smoothing has lowered the data's own noise).
    rho, matched_rho : float or None
        Correlation of neighbouring noise samples in ``signal`` and ``matched``
        (None: not filtered), for the false-alarm rule (:func:`default_threshold`).
    fringe : Fringe or None
        An interference fringe found in the baseline (:mod:`.fringe`) and set aside: it is
        part of ``baseline``, and the noise, widths and heights are measured without it.
    """

    noise: NoiseEstimate
    direction: str
    baseline: np.ndarray = field(repr=False)
    width: float
    smoothing: int
    gain: float
    signal: np.ndarray = field(repr=False)
    matched: np.ndarray | None = field(default=None, repr=False)
    matched_gain: float = 1.0
    rho: float | None = None
    matched_rho: float | None = None
    gentle: np.ndarray | None = field(default=None, repr=False)
    gentle_gain: float = 1.0
    baseline_variance: np.ndarray | None = field(default=None, repr=False)
    fringe: Fringe | None = None

    @property
    def sign(self) -> float:
        return 1.0 if self.direction == "up" else -1.0



def _noise(x, y, noise, noise_region) -> NoiseEstimate:
    if noise is None:
        return measure_noise(x, y, noise_region=noise_region)
    if isinstance(noise, NoiseEstimate):
        return noise
    try:
        sigma = float(noise)
    except (TypeError, ValueError):
        sigma = math.nan
    if not (math.isfinite(sigma) and sigma > 0):
        raise ProcessingError(f"noise must be a positive number in y units, got {noise!r}")
    return NoiseEstimate(sigma=sigma, method="given", n_used=0)


def _savgol(s: np.ndarray, width: float) -> tuple[np.ndarray, int, float, float | None]:
    """Quadratic Savitzky–Golay smoothing over about 0.6 FWHM (odd, at least 5 points)."""
    if not (math.isfinite(width) and width >= SMOOTH_FROM):
        return s, 1, 1.0, None
    win = max(5, int(round(0.6 * width)) | 1)
    if win > s.size:
        return s, 1, 1.0, None
    coef = signal.savgol_coeffs(win, 2)
    return (signal.savgol_filter(s, win, 2, mode="interp"), win,
            float(np.sqrt(np.sum(coef**2))), _rho(coef))


def _matched(s: np.ndarray, width: float) -> tuple[np.ndarray | None, float, float | None]:
    """Gaussian matched filter of FWHM ``width`` samples, scaled so that a line of
    that shape centred on a sample gives its height; returns it, its noise gain
    and its neighbour correlation."""
    if not (math.isfinite(width) and width >= MATCH_FROM) or s.size < 3 * width:
        return None, 1.0, None
    half = int(math.ceil(1.5 * width))
    i = np.arange(-half, half + 1, dtype=np.float64)
    p = np.exp(-4.0 * math.log(2.0) * i * i / (width * width))
    k = p / np.sum(p * p)
    out = signal.oaconvolve(s, k, mode="same")
    return out, float(np.sqrt(np.sum(k * k))), _rho(k)


def _first_pass_width(s: np.ndarray, sigma, n: int) -> float:
    """Median width (samples, at half prominence) of what a raw search finds, when
    at least three peaks stand out; NaN otherwise."""
    t = default_threshold(n)
    idx, _ = signal.find_peaks(s, height=t * sigma, prominence=MIN_PROMINENCE * sigma)
    if idx.size < 3:
        return math.nan
    width = float(np.median(signal.peak_widths(s, idx, rel_height=0.5)[0]))
    return three_point_width(s, idx, 0.0, width) if width < NARROW else width


def peak_context(x, y, *, noise=None, noise_region=None, direction: str = "up",
                 width: float | None = None, fringe: bool = True) -> PeakContext:
    """Noise, local baseline, typical width and smoothing of a spectrum (module docstring).

    Parameters
    ----------
    x, y : array_like, shape (n,)
        Ascending wavenumber (cm⁻¹) and values.
    noise : float or NoiseEstimate, optional
        σ in y units; default measured (:func:`~.noise.measure_noise`).
    noise_region : (lo, hi), optional
        Flat region for the noise, cm⁻¹.
    direction : {"up", "down"}
        Peaks point up, or dips point down (transmittance).
    width : float, optional
        A known line FWHM in cm⁻¹ (for example the instrument resolution); used
        when no feature stands out enough to measure it.
    fringe : bool, default True
        Look for an interference fringe in the baseline (:func:`~.fringe.find_fringe`) and
        set it aside: the noise is measured, and the peaks are sought, on the data without
        it, and the local baseline follows it. A fringe whose period is under
        :data:`~.fringe.MIN_PERIOD_WIDTHS` typical line widths is not set aside (such a
        ripple cannot be told from lines).
    """
    xa, ya = as_xy(x, y)
    if direction not in ("up", "down"):
        raise ProcessingError(f"direction must be 'up' (peaks) or 'down' (dips), got "
                              f"{direction!r}")
    wf = None
    if width is not None:
        wf = float(width)
        if not (math.isfinite(wf) and wf > 0):
            raise ProcessingError(f"width must be a positive FWHM in cm-1, got {width!r}")
    found = None
    if fringe:
        est = _noise(xa, ya, noise, noise_region)
        found = find_fringe(xa, ya, est.sigma)
    if found is not None:
        ctx = _context(xa, ya - found.at(xa), noise, noise_region, direction, wf, found)
        dx = float(np.median(np.diff(xa)))
        if not (math.isfinite(ctx.width)
                and float(np.min(found.periods)) < MIN_PERIOD_WIDTHS * ctx.width * dx):
            return ctx
    return _context(xa, ya, est if fringe else noise, noise_region, direction, wf, None)


def _context(xa, ya, noise, noise_region, direction: str, wf: float | None,
             fringe: Fringe | None) -> PeakContext:
    """:func:`peak_context` of data from which ``fringe`` (if any) was taken away."""
    est = _noise(xa, ya, noise, noise_region)
    sigma = est.sigma
    s0 = ya if direction == "up" else -ya
    # where the spectrum is noisier, its noise must not pass as the strongest lines
    local = est.at(xa)
    w = typical_width(s0, local, min_prominence=WIDTH_PROMINENCE)
    dx = float(np.median(np.diff(xa)))
    if wf is not None and not math.isfinite(w):
        w = wf / dx
    wb = w if math.isfinite(w) else 1.0
    base, _, base_var = local_baseline(s0, sigma, window=baseline_window(wb, ya.size), width=wb)
    above = s0 - base
    if not math.isfinite(w):
        w = _first_pass_width(above, local, ya.size)
    sm, win, gain, rho = _savgol(above, w)
    mf, mgain, mrho = _matched(above, w)
    gentle, ggain = None, 1.0
    if win > 1:
        sd = 0.5 * w / (2.0 * math.sqrt(2.0 * math.log(2.0)))
        gentle = ndimage.gaussian_filter1d(above, sd, mode="nearest")
        ggain = float(np.sqrt(np.sum(ndimage.gaussian_filter1d(_unit(int(8 * sd) + 1), sd,
                                                                 mode="constant") ** 2)))
    baseline = base if direction == "up" else -base
    if fringe is not None:
        baseline = baseline + fringe.at(xa)
    return PeakContext(noise=est, direction=direction, baseline=baseline, width=w,
                       smoothing=win, gain=gain, signal=sm, matched=mf, matched_gain=mgain,
                       rho=rho, matched_rho=mrho, gentle=gentle, gentle_gain=ggain,
                       baseline_variance=base_var, fringe=fringe)


def _unit(half: int) -> np.ndarray:
    e = np.zeros(2 * half + 1)
    e[half] = 1.0
    return e


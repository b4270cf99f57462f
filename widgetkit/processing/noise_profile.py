"""Where the noise of a spectrum is higher than its overall σ (:func:`noise_profile`).

An FTIR spectrum is not equally noisy everywhere: near the ends of the detector's range,
and where the sample absorbs most of the light, fewer photons arrive and the noise grows.
Measured on a public gas-phase survey spectrum (575-3975 cm⁻¹, 0.48 cm⁻¹ resolution, 14,104
points): σ of its overall line-free points 1.85·10⁻⁷, by segment from 2.6 times that at
575-787 cm⁻¹ down to 0.6 times at 1850-2060 cm⁻¹. Judged against the overall σ, the noise
at the low end passed as lines: seven "peaks" of 3.7-8.4 σ below 625 cm⁻¹, each 2-4
samples wide.

The spectrum is cut into segments of :data:`SEGMENT_POINTS` points or more (at most
:data:`SEGMENTS`), and σ is measured on each as on the whole spectrum: the line-free mask
and the clipped RMS of the line-free differences (at the lag the whole spectrum uses, their
local mean removed) iterated from the overall σ (:mod:`.noise`). Weak lines left among the
line-free points of a segment crowded with lines give the differences heavy tails, which
raise their RMS but not their Gaussian core (the normal-scaled median absolute difference):
the segment's σ is the smaller of the two (on simulated spectra of uniform noise, dense
rotational bands raised the RMS of a segment up to 2.1 times, its core up to 1.4 times, and
only where under half of the segment was line-free). A segment counts as noisier only when
at least :data:`MIN_FREE_FRACTION` of it is line-free, when its differences do not spread
more at two and three times the lag (:data:`STRUCTURE_LAGS`: a band of lines a few samples
wide that passed as line-free once σ was raised), and when its σ exceeds the overall one by
more than :data:`SIGNIFICANCE` standard errors (σ measured on m differences scatters by
about :data:`SE_GAIN`/√(2m) of itself for Gaussian noise; with :data:`SEGMENTS` segments,
four standard errors keep a uniformly noisy spectrum from showing a profile but in about one
in a thousand). Only raised segments that run without a break from an end of the spectrum
are kept: the noise of a spectrometer grows toward the ends of its range, where the detector
and the beamsplitter pass less light, and a single segment inside the range that looks
noisier is far more often a band of lines one or two samples wide, which no statistic of the
differences tells from noise (on the public survey spectra tried, the C-H stretch band of a
gas at 0.24 cm⁻¹ sampling looked 28 times noisier than the rest, and with it 243 of its
lines would have been lost). The profile is the overall σ times the factor of each segment,
at least 1, interpolated between segment centres: it only ever raises σ, so a spectrum whose
noise is uniform is searched exactly as before, and weak lines where the noise is low are
judged against the overall σ as before.
"""

from __future__ import annotations

import math

import numpy as np

from ._noise_stats import lag_sigma, line_free_mask

__all__ = ["noise_profile", "SEGMENT_POINTS", "SEGMENTS", "SIGNIFICANCE", "MIN_FREE_FRACTION"]

#: points of a segment at least
SEGMENT_POINTS = 400
#: segments at most
SEGMENTS = 16
#: a segment is noisier when its σ exceeds the overall σ by this many standard errors
SIGNIFICANCE = 4.0
#: the standard error of a segment's σ in units of 1/√(2m) for m differences: neighbouring
#: lag-1 differences of white noise correlate by −1/2, which makes the variance of their
#: mean square 1.5 times that of independent ones (√1.5 ≈ 1.22), and clipping adds a little;
#: the median-based core scatters 1.65 times more (the median absolute deviation has an
#: asymptotic efficiency of 37 % for Gaussian data, common statistics)
SE_GAIN = 1.25 * 1.65
#: a segment needs this fraction of its points line-free to be measured
MIN_FREE_FRACTION = 0.5
#: ... and at least this many
MIN_FREE_POINTS = 100
#: a segment whose differences spread more at these multiples of the lag holds lines, not
#: noise (a row of lines P samples apart spreads its lag-k differences as 1 − cos(2πk/P):
#: lag 2 shows every row with P > 3 against lag 1, lag 3 the broad structure; lag 3 alone
#: misses rows 4 samples apart, measured on a gas-phase band of lines 1 cm⁻¹ apart sampled
#: every 0.24 cm⁻¹)
STRUCTURE_LAGS = (2, 3)
#: rounds of mask and spread in a segment at most
ITERATIONS = 20


def _segment_sigma(y: np.ndarray, sigma: float, lag: int) -> tuple[float, int]:
    """σ of one segment and the line-free differences it rests on (NaN when too few are):
    the line-free mask and the clipped RMS iterated from the overall σ (from below for a
    noisier segment, as the overall estimate is, :mod:`.noise` part 4), then the smaller of
    that RMS and the Gaussian core (module docstring), unless the differences spread more
    at a longer lag (lines, not noise)."""
    s, core, m = sigma, math.nan, 0
    free = np.ones(y.size, dtype=bool)
    for _ in range(ITERATIONS):
        free = line_free_mask(y, s)
        rms, core, m = lag_sigma(y, free, lag, MIN_FREE_POINTS)
        if not math.isfinite(rms):
            s *= 1.25  # too few line-free pairs at this σ: look less strictly
            continue
        done = abs(rms - s) <= 1e-3 * s
        s = rms
        if done:
            break
    if not math.isfinite(core) or m < MIN_FREE_FRACTION * (y.size - lag):
        return math.nan, m
    # noise is white: its differences spread alike at any lag; lines (smooth over a few
    # points) that passed as line-free once σ was raised spread more at a longer lag
    tol = core * (1.0 + SIGNIFICANCE * SE_GAIN / math.sqrt(2.0 * m))
    for k in STRUCTURE_LAGS:
        if not lag_sigma(y, free, k * lag, MIN_FREE_POINTS)[1] <= tol:
            return math.nan, m
    return min(s, core), m


def noise_profile(x: np.ndarray, y: np.ndarray, sigma: float, lag: int = 1):
    """Segments noisier than ``sigma`` (module docstring).

    Parameters
    ----------
    x, y : ndarray, shape (n,)
        Ascending wavenumber (cm⁻¹) and values.
    sigma : float
        The overall noise σ (:func:`~.noise.measure_noise`).
    lag : int
        Lag of the differences the overall σ used.

    Returns
    -------
    tuple of (tuple of float, tuple of float) or None
        Segment centres (cm⁻¹) and factors (≥ 1) by which σ is raised there; None when
        no segment is significantly noisier (or the spectrum is too short to cut).
    """
    n = y.size
    nseg = min(SEGMENTS, n // SEGMENT_POINTS)
    if nseg < 2 or not (sigma > 0):
        return None
    edges = np.linspace(0, n - lag, nseg + 1).astype(int)
    centres, factors = [], []
    for a, b in zip(edges[:-1], edges[1:]):
        s, m = _segment_sigma(y[a:b + lag], sigma, lag)
        factor = 1.0
        if math.isfinite(s) and s > sigma * (1.0 + SIGNIFICANCE * SE_GAIN / math.sqrt(2.0 * m)):
            factor = s / sigma
        centres.append(float(x[(a + b) // 2]))
        factors.append(float(factor))
    factors = _from_the_ends(factors)
    if max(factors) <= 1.0:
        return None
    return tuple(centres), tuple(factors)


def _from_the_ends(factors: list[float]) -> list[float]:
    """Keep the raised segments that run without a break from an end of the spectrum;
    the others are set back to 1 (module docstring: inside the range, a segment that looks
    noisier is a dense band far more often than noise)."""
    keep = [1.0] * len(factors)
    for order in (range(len(factors)), range(len(factors) - 1, -1, -1)):
        for k in order:
            if factors[k] <= 1.0:
                break
            keep[k] = factors[k]
    return keep

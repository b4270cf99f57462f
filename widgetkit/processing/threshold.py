"""The automatic peak threshold: false alarms held to a budget for the length of a spectrum.

On pure white Gaussian noise every sample is a candidate, and a local maximum
exceeds t σ with probability about Q(t), the Gaussian upper tail. With N
independent samples the expected number of noise peaks is N·Q(t). The default
threshold t solves

    N·Q(t) = 0.05·N / (2·max(N, 10⁵)),

so that pure noise gives on average at most 0.05 peaks per spectrum and at
most 0.05 per 10⁵ points, with a safety factor of two for the uncertainty of
σ and of the local baseline. Filtered (smoothed) noise follows Rice's formula
instead (:func:`default_threshold`). See :mod:`.peaks` for how the searches use it.
"""

from __future__ import annotations

import math

from scipy.stats import norm

__all__ = ["default_threshold", "FALSE_PEAKS", "FALSE_PEAKS_PER", "SAFETY", "MIN_PROMINENCE"]

#: expected noise peaks allowed per spectrum, and per this many points
FALSE_PEAKS, FALSE_PEAKS_PER = 0.05, 100_000
#: safety factor on the false-alarm budget (σ and the baseline are estimates)
SAFETY = 2.0
#: default minimum prominence, in units of the (smoothed) noise σ
MIN_PROMINENCE = 4.0


def default_threshold(n: float, channels: int = 1, rho: float | None = None) -> float:
    """The automatic threshold t, in units of the searched data's own noise σ.

    The allowed expected number of noise peaks is
    ``E = 0.05·n / (2·channels·max(n, 10⁵))`` (0.05 per spectrum and per 10⁵
    points, a safety factor of two, shared between ``channels`` searches). For
    raw white noise (``rho=None``) t solves ``n·Q(t) = E`` (5.03 up to 10⁵ points).
    For filtered noise whose neighbouring samples correlate by ``rho``, the
    number of maxima above t follows Rice's formula for a smooth Gaussian
    process, ``n·√(2(1−ρ))/(2π)·exp(−t²/2)`` (Rice, Bell Syst. Tech. J. 24
    (1945) 46, with the discrete second spectral moment 2(1−ρ)), and t solves
    that equal to E.
    """
    n = max(float(n), 1.0)
    allowed = FALSE_PEAKS * n / (SAFETY * channels * max(n, FALSE_PEAKS_PER))
    if rho is None:
        return float(norm.isf(allowed / n))
    rate = n * math.sqrt(max(2.0 * (1.0 - rho), 1e-12)) / (2.0 * math.pi)
    return math.sqrt(2.0 * math.log(max(rate / allowed, 1.0)))

"""Quick estimate for unresolved bands: the P and R branch maxima of a contour and their
separation, from which B or T follow by Δν_PR ≈ K √(B T) (the formula, its source and its
limits are in :mod:`widgetkit.levels.contour`, its one implementation).

It is a starting point, not a result: fit the band contour for B or T with an
honest error.
"""

from __future__ import annotations

import bisect
import dataclasses
import math
from dataclasses import dataclass

import numpy as np
from scipy import fft as sfft
from scipy.ndimage import gaussian_filter1d
from scipy.signal import find_peaks

from ..errors import FitError
from ..levels.contour import (
    PR_COEFFICIENT,
    PR_COEFFICIENT_PRINTED,
    rotational_constant_from_separation,
    temperature_from_separation,
)

__all__ = ["PR_COEFFICIENT", "PR_COEFFICIENT_PRINTED", "PRSeparation", "pr_separation",
           "rotational_constant_from_separation", "temperature_from_separation", "line_spacing",
           "strong_peaks", "quick_estimate_text", "smooth", "point_noise", "contour_like",
           "pr_from_transmittance", "saturated"]

@dataclass(frozen=True)
class PRSeparation:
    """The P and R branch maxima of a band contour.

    Attributes
    ----------
    p_max, r_max : float
        Positions (cm⁻¹) of the P- and R-branch maxima of the smoothed contour.
    separation : float
        r_max − p_max (cm⁻¹).
    centre : float
        The lowest point of the contour between them (near the band origin), cm⁻¹.
    uncertainty : float
        A rough standard uncertainty of ``separation`` (cm⁻¹): the smoothing width,
        the sampling and the line spacing, whichever is largest, over √2.
    line_spacing : float or None
        The rotational line spacing found in the contour (≈ 2B, cm⁻¹) when the lines are
        resolved, else None.
    smoothing : float
        FWHM (cm⁻¹) of the Gaussian smoothing used.
    """

    p_max: float
    r_max: float
    separation: float
    centre: float
    uncertainty: float
    line_spacing: float | None
    smoothing: float

    def rotational_constant(self, temperature: float) -> float:
        """B (cm⁻¹) at the given temperature (K)."""
        return rotational_constant_from_separation(self.separation, temperature)

    def temperature(self, B: float) -> float:
        """T (K) for the given rotational constant (cm⁻¹)."""
        return temperature_from_separation(self.separation, B)

    def to_dict(self) -> dict:
        return {k: getattr(self, k) for k in self.__dataclass_fields__}


def smooth(a: np.ndarray, sigma: float) -> np.ndarray:
    """``gaussian_filter1d(a, sigma, mode="nearest")`` (same kernel: the Gaussian sampled to
    4σ and normalised; the ends continued by their values), convolved by FFT when the kernel
    is long (the direct sum costs points × kernel length)."""
    a = np.asarray(a, dtype=float)
    radius = int(4.0 * float(sigma) + 0.5)
    if radius < 32:
        return gaussian_filter1d(a, sigma, mode="nearest")
    k = np.arange(-radius, radius + 1, dtype=float)
    w = np.exp(-0.5 / float(sigma) ** 2 * k * k)
    w /= w.sum()
    p = np.pad(a, radius, mode="edge")
    n = sfft.next_fast_len(p.size + w.size - 1, real=True)
    c = sfft.irfft(sfft.rfft(p, n, workers=1) * sfft.rfft(w, n, workers=1), n, workers=1)
    return c[2 * radius:2 * radius + a.size]


#: the contour analysis runs on at most this many points (longer spectra are binned)
MAX_POINTS = 16384


def _uniform(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray, float]:
    """``y`` on a uniform grid of the median step; spectra longer than :data:`MAX_POINTS`
    are binned keeping the largest value of each bin (so line peaks survive)."""
    step = float(np.median(np.diff(x)))
    n = int(round((x[-1] - x[0]) / step)) + 1
    xu = x[0] + step * np.arange(n)
    yu = np.interp(xu, x, y)
    b = int(math.ceil(n / MAX_POINTS))
    if b > 1:
        m = n // b
        top = yu[0: m * b: b].copy()  # the largest of each bin of b (as max(axis=1), faster)
        for j in range(1, b):
            np.maximum(top, yu[j: m * b: b], out=top)
        yu = top
        xu = xu[: m * b].reshape(m, b).mean(axis=1)
        step *= b
    return xu, yu, step


def point_noise(y: np.ndarray) -> float:
    """Standard deviation of white noise per point, from the spread of successive
    differences (median absolute deviation scaled to a standard deviation, over √2: common
    practice; lines, baselines and smooth contours barely move it)."""
    d = np.diff(np.asarray(y, dtype=float))
    return float(1.4826 * np.median(np.abs(d - np.median(d))) / math.sqrt(2.0))


def _absorbance_like(y: np.ndarray, y_kind: str) -> np.ndarray:
    if y_kind == "transmittance":
        return -np.log10(np.clip(y, 1e-6, None))
    return np.asarray(y, dtype=float)


#: transmittance within this many noise standard deviations of zero is saturated
SATURATED_SIGMAS = 3.0


def saturated(y: np.ndarray, y_kind: str) -> bool:
    """Transmittance data that reach zero within the noise (:data:`SATURATED_SIGMAS`),
    where the logarithm of noisy values breaks down (:func:`contour_like`)."""
    if y_kind != "transmittance":
        return False
    y = np.asarray(y, dtype=float)
    return bool(np.min(y) < SATURATED_SIGMAS * point_noise(y))


def contour_like(y: np.ndarray, y_kind: str) -> np.ndarray:
    """What the branch maxima are read from: absorbance, or for transmittance data the
    absorptance 1 − T. Linear in T, it keeps the noise of saturated lines unbiased and
    bounded, where a logarithm turns noise around T = 0 (negative values included) into
    spikes of absorbance up to 6 that the smoothing cannot remove (measured: a CO band at
    0.5 cm-1 whose lines reach T = 0 under noise 0.03 gave "maxima" 10.8 cm-1 apart, two
    lines of its R branch). For weak bands the two are proportional (1 − T ≈ A ln 10)."""
    if y_kind == "transmittance":
        return 1.0 - np.asarray(y, dtype=float)
    return np.asarray(y, dtype=float)


def baseline_line(x: np.ndarray, a: np.ndarray) -> tuple[float, float]:
    """(value at the centre, slope per half-range) of a straight baseline under a band.

    The median of each of 16 bins, then a straight line through the lower half of those
    points (refitted twice): between resolved lines the absorbance returns to the baseline
    (so a bin's median sits near it, even with the negative side lobes of an unapodised
    instrument), and an unresolved contour leaves its outer bins low."""
    n_bins = 16
    edges = np.linspace(0, x.size, n_bins + 1).astype(int)
    size = int(edges[1])
    if size > 0 and np.all(np.diff(edges) == size):  # equal bins: one call (the same values)
        bx = x[:n_bins * size].reshape(n_bins, size).mean(axis=1)
        by = np.median(a[:n_bins * size].reshape(n_bins, size), axis=1)
    else:
        bx = np.array([x[i:j].mean() for i, j in zip(edges[:-1], edges[1:], strict=True)
                       if j > i])
        by = np.array([np.median(a[i:j]) for i, j in zip(edges[:-1], edges[1:], strict=True)
                       if j > i])
    mid, half = 0.5 * (x[0] + x[-1]), 0.5 * (x[-1] - x[0])
    t = (bx - mid) / half
    keep = np.ones(t.size, dtype=bool)
    for _ in range(3):
        c1, c0 = np.polyfit(t[keep], by[keep], 1)
        r = by - (c0 + c1 * t)
        keep = r <= np.median(r)
        keep[np.argmin(r)] = True
        if keep.sum() < 3:
            break
    return float(c0), float(c1)


def _detrend(x: np.ndarray, a: np.ndarray, coef: tuple[float, float] | None = None) -> np.ndarray:
    """``a`` minus its :func:`baseline_line` (``coef`` when already known)."""
    c0, c1 = baseline_line(x, a) if coef is None else coef
    mid, half = 0.5 * (x[0] + x[-1]), 0.5 * (x[-1] - x[0])
    return a - (c0 + c1 * (x - mid) / half)


def strong_peaks(x: np.ndarray, a: np.ndarray, spacing: float, *, floor: float = 0.0,
                 radius: float = 0.3) -> np.ndarray:
    """Indices of the local maxima of ``a`` (uniform ``x``) that are the strongest within
    ±``radius`` × ``spacing`` and above ``floor`` (isotopologue satellites, instrument
    side lobes and noise drop out)."""
    pk = np.flatnonzero((a[1:-1] > a[:-2]) & (a[1:-1] >= a[2:])) + 1
    pk = pk[a[pk] > floor]
    r = radius * spacing
    xs = x[pk].tolist()  # ascending (Python floats: a few dozen peaks, no array calls each)
    near = [False] * len(xs)  # within r of a peak taken
    taken: list[int] = []
    for q in np.argsort(-a[pk]).tolist():  # strongest first
        if near[q]:
            continue
        taken.append(int(pk[q]))
        xq = xs[q]
        lo = bisect.bisect_left(xs, xq - 2.0 * abs(r))
        hi = bisect.bisect_right(xs, xq + 2.0 * abs(r))
        for i in range(lo, hi):
            if abs(xs[i] - xq) <= r:
                near[i] = True
    return np.array(sorted(taken), dtype=int)


def _regular(x: np.ndarray, a: np.ndarray, d: float) -> bool:
    """True when the strong peaks of the band are spaced by about ``d`` (a comb of lines)."""
    top = float(a.max())
    pk = strong_peaks(x, a, d, floor=0.1 * top)
    if pk.size < 6:
        return False
    sp = np.diff(x[pk])
    ok = (sp > 0.7 * d) & (sp < 1.3 * d)
    return int(ok.sum()) >= 5 and ok.mean() >= 0.5


def line_spacing(x: np.ndarray, a: np.ndarray, *, min_period: float, max_period: float
                 ) -> float | None:
    """The rotational line spacing (cm⁻¹) of a band in ``a`` (uniform ``x``), or None.

    The detrended, Hann-windowed contour's power spectrum, after removing the smooth
    envelope (Gaussian smoothing over ``max_period``), must peak at one period between
    ``min_period`` and ``max_period`` with at least 12 times the median power there, and
    the strongest peaks of the contour must be spaced by about that period.
    """
    step = x[1] - x[0]
    env = smooth(a, max_period / step / 2.0)
    hp = (a - env) * np.hanning(a.size)
    n = 1 << int(math.ceil(math.log2(4 * a.size)))
    p = np.abs(sfft.rfft(hp, n=n, workers=1)) ** 2
    f = np.fft.rfftfreq(n, d=step)
    band = (f >= 1.0 / max_period) & (f <= 1.0 / min_period)
    if band.sum() < 5:
        return None
    pb = p[band]
    k = int(np.argmax(pb))
    if pb[k] < 12.0 * np.median(pb):
        return None
    d = float(1.0 / f[band][k])
    light = gaussian_filter1d(a, 1.0, mode="nearest")
    return d if _regular(x, light, d) else None


def pr_separation(x, y, *, y_kind: str = "absorbance", smoothing: float | None = None,
                  resolution: float | None = None) -> PRSeparation:
    """Find the P- and R-branch maxima of a band and their separation.

    Parameters
    ----------
    x, y : array_like
        The spectrum (cm⁻¹ ascending; absorbance, or transmittance with ``y_kind``),
        cropped around one band.
    y_kind : {"absorbance", "transmittance"}
    smoothing : float, optional
        FWHM (cm⁻¹) of the Gaussian smoothing of the contour. Default: the rotational
        line spacing when the lines are resolved (so the contour becomes smooth), else
        twice the larger of the sampling step and ``resolution``.
    resolution : float, optional
        Instrument resolution (cm⁻¹), used for the default smoothing.

    Raises
    ------
    FitError
        When no two maxima separated by a dip are found (no P–R structure).
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    if x.ndim != 1 or x.size != y.size or x.size < 16:
        raise FitError("pr_separation needs x and y of equal length, at least 16 points")
    if np.any(np.diff(x) <= 0):
        order = np.argsort(x)
        x, y = x[order], y[order]
    xu, au, step = _uniform(x, _detrend(x, _absorbance_like(y, y_kind)))
    if not saturated(y, y_kind):
        return _pr_from_uniform(xu, au, step, smoothing=smoothing, resolution=resolution)
    cu = _uniform(x, _detrend(x, contour_like(y, y_kind)))[1]
    return pr_from_transmittance(xu, au, cu, step, smoothing=smoothing, resolution=resolution)


def pr_from_transmittance(xu: np.ndarray, au: np.ndarray, cu: np.ndarray, step: float, *,
                          smoothing: float | None = None,
                          resolution: float | None = None) -> PRSeparation:
    """Saturated transmittance data (:func:`saturated`) on a uniform grid: the line spacing
    and the smoothing from the absorbance ``au`` (its lines stand out best), the maxima from
    the absorptance ``cu`` (:func:`contour_like`: no spikes from noisy saturated lines); the
    absorptance alone when the absorbance shows no band."""
    try:
        first = _pr_from_uniform(xu, au, step, smoothing=smoothing, resolution=resolution)
    except FitError:
        return _pr_from_uniform(xu, cu, step, smoothing=smoothing, resolution=resolution)
    try:
        found = _pr_from_uniform(xu, cu, step, smoothing=first.smoothing, find_spacing=False)
    except FitError:
        return first
    return dataclasses.replace(found, line_spacing=first.line_spacing,
                              uncertainty=max(found.uncertainty, first.uncertainty))


#: a smoothed contour with this many maxima above a quarter of the highest holds resolved
#: lines, not the two branches
RESOLVED_MAXIMA = 6
#: ... maxima that stand this many standard deviations of the smoothed noise above the
#: higher of their neighbouring minima (scipy's prominence)
LINE_PROMINENCE = 5.0


def _pr_from_uniform(xu: np.ndarray, yu: np.ndarray, step: float, *,
                     smoothing: float | None = None, resolution: float | None = None,
                     find_spacing: bool = True) -> PRSeparation:
    """:func:`pr_separation` on the detrended absorbance on a uniform grid (:func:`_uniform`);
    ``find_spacing=False`` (with ``smoothing``): the line spacing is not looked for."""
    span = xu[-1] - xu[0]
    spacing = line_spacing(xu, yu, min_period=max(4 * step, 1.5 * (resolution or 0.0)),
                           max_period=span / 12.0) if find_spacing or smoothing is None else None
    if smoothing is None:
        smoothing = (1.2 * spacing if spacing is not None
                     else max(3.0 * step, 0.5 * (resolution or 0.0)))
    sig_pts = max(smoothing / step / 2.3548, 0.5)
    sm = smooth(yu, sig_pts)
    # maxima closer to the ends than the smoothing are edge effects of a cropped band
    edge = int(math.ceil(1.5 * sig_pts)) + 1
    inner = slice(edge, sm.size - edge)
    if sm.size <= 2 * edge + 4:
        raise FitError("the spectrum is too short for its smoothing; give a wider range")
    i_max = edge + int(np.argmax(sm[inner]))
    top = sm[i_max]
    # the noise left after smoothing: σ of the raw data over sqrt(2√π σ_points)
    noise = point_noise(yu) / math.sqrt(2.0 * math.sqrt(math.pi) * sig_pts)
    if top - float(np.median(sm)) < 8.0 * noise:
        raise FitError("no band found: the contour does not rise above the noise; crop the "
                       "spectrum to the band, or give start values")
    # local maxima that stand out from the dip between them
    peaks = np.flatnonzero((sm[1:-1] > sm[:-2]) & (sm[1:-1] >= sm[2:])) + 1
    peaks = peaks[(sm[peaks] > 0.25 * top) & (peaks >= edge) & (peaks < sm.size - edge)]
    # lines, not wiggles of the noise (a smooth 4 cm-1 band sampled every 0.02 cm-1 and
    # smoothed over 0.06 cm-1 "had" maxima 0.16 cm-1 apart)
    lines = np.intersect1d(peaks, find_peaks(sm, prominence=LINE_PROMINENCE * noise)[0])
    gap = float(np.median(np.diff(xu[lines]))) if lines.size >= RESOLVED_MAXIMA else 0.0
    if spacing is None and smoothing < 0.5 * gap:
        # resolved lines whose spacing the periodogram missed (it drifts along a hot band's
        # many J): smoothed to a contour over the spacing of the maxima found (measured on HCl
        # at 600 K and 0.01 cm-1: two neighbouring R lines were taken for the P-R maxima)
        found = _pr_from_uniform(xu, yu, step, resolution=resolution, smoothing=1.2 * gap)
        return dataclasses.replace(found, line_spacing=gap)
    best = None
    for j in peaks:
        if j == i_max:
            continue
        lo, hi = sorted((i_max, j))
        dip = int(lo + np.argmin(sm[lo:hi + 1]))
        if sm[dip] < 0.9 * min(sm[i_max], sm[j]) and (best is None or sm[j] > sm[best[0]]):
            best = (j, dip)
    if best is None:
        raise FitError("no P and R branch maxima found: the contour has one maximum only (or "
                       "the band is not in the range); crop the spectrum to the band")
    j, dip = best
    lo, hi = sorted((i_max, j))
    pm, rm = _refine(xu, sm, lo), _refine(xu, sm, hi)
    unc = max(smoothing, step, spacing or 0.0) / math.sqrt(2.0) / 2.0
    return PRSeparation(p_max=pm, r_max=rm, separation=rm - pm, centre=_refine(xu, -sm, dip),
                        uncertainty=unc, line_spacing=spacing, smoothing=float(smoothing))


def _refine(x: np.ndarray, y: np.ndarray, i: int) -> float:
    """Vertex of the parabola through the maximum and its neighbours."""
    if 0 < i < x.size - 1:
        a, b, c = y[i - 1], y[i], y[i + 1]
        den = a - 2 * b + c
        if den < 0:
            return float(x[i] + 0.5 * (a - c) / den * (x[1] - x[0]))
    return float(x[i])


def quick_estimate_text(x, y, *, y_kind: str = "absorbance", resolution: float | None = None,
                        temperature: float | None = None) -> str:
    """One sentence offering the quick P–R estimate of B measured on a spectrum, for the
    refusal of a line-by-line assignment of an unresolved band (empty-handed but polite when
    no P–R structure is found). T defaults to 296 K (said so)."""
    try:
        pr = pr_separation(x, y, y_kind="transmittance" if y_kind == "transmittance" else "absorbance",
                           resolution=resolution)
    except FitError:
        return ("No P and R branch maxima could be found on this spectrum for a quick estimate; "
                "crop it around one band and try s.fit_band_model.")
    T = float(temperature) if temperature else 296.0
    B = pr.rotational_constant(T)
    eB = 2.0 * B * pr.uncertainty / pr.separation
    return (f"Quick estimate from this spectrum (widgetkit.bandmodel.pr_separation): P and R "
            f"branch maxima at {pr.p_max:.1f} and {pr.r_max:.1f} cm-1, Δν = {pr.separation:.1f} ± "
            f"{pr.uncertainty:.1g} cm-1, so B ≈ {B:.3g} ± {eB:.1g} cm-1 at {T:g} K"
            + ("" if temperature else " (assumed)")
            + "; a starting point for s.fit_band_model, not a result.")

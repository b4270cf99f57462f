"""Peak finding with a significance that means what it says.

A peak's **snr** is its height above the local baseline divided by the noise
σ, both measured on the data: σ on the line-free points
(:mod:`.noise`), the local baseline from the line-free points around the
peak (:mod:`.envelope`). Peaks point up; ``direction="down"`` finds dips
(transmittance).

**The default threshold.** On pure white Gaussian noise every sample is a
candidate, and a local maximum exceeds t σ with probability about Q(t), the
Gaussian upper tail. With N independent samples the expected number of noise
peaks is N·Q(t). The default threshold t solves

    N·Q(t) = 0.05·N / (2·max(N, 10⁵)),

so that pure noise gives on average at most 0.05 peaks per spectrum and at
most 0.05 per 10⁵ points, with a safety factor of two for the uncertainty of
σ and of the local baseline (t = 5.03 up to 10⁵ points, 5.16 at 2·10⁵, 5.45
at 10⁶). That is extreme-value statistics of the number of independent
samples: the longer the spectrum, the higher the largest noise excursion,
and the higher the threshold.

**Lines wider than a few samples.** When the strongest features are
``w`` ≥ 8 samples wide (FWHM, at half prominence), the data are smoothed
with a quadratic Savitzky–Golay filter over about 0.6 w points before the
search. That keeps the top of a line (a quadratic over ±0.3 FWHM lowers a
Gaussian's peak by under 0.5 %) while the noise falls to g·σ, g = √(Σ cᵢ²)
for the filter's coefficients cᵢ (0.58 for 7 points). Smoothed noise is no
longer independent from sample to sample: the expected number of its maxima
above t·g·σ follows Rice's formula (:func:`default_threshold`), which sets t
for the same false-alarm budget. The local baseline has noise of its own
(the variance of a local quadratic fit, a few per cent of σ²); it is added
point by point to the searched data's noise. In snr units (raw σ) the automatic
threshold is ``t·g``: for lines 12 samples wide about 2.6, as certain as a
5 σ single-sample spike. This is how lines of height 6 σ are found ≥ 95 %
of the time while noise stays out.

**Weak lines.** When the line width w is known (from the strongest
features, or a first search, or the instrument resolution), the data above
the baseline are also searched after a Gaussian filter of FWHM w scaled to
give a line's height (a matched filter: noise √(Σk²)·σ, 0.66 σ for w = 3
samples), with the false-alarm budget shared between the two searches; it
adds the lines the first search missed. This finds undersampled weak lines
(FWHM 2–5 samples) that a single sample cannot show. Their ``snr`` (the height the
filter estimates over σ) can be below ``PeakSearch.min_snr``, which is the first
search's threshold: the filter's own noise is lower (0.66 σ for lines 3 samples wide),
so a line 4 σ high stands 6 of the filter's σ out.

**Noise that varies along the spectrum.** Where a stretch of the spectrum is
significantly noisier than the overall σ (the ends of a detector's range, strong
absorption), σ there is raised to what that stretch shows (:mod:`.noise_profile`,
``NoiseEstimate.profile``), and its peaks (threshold, prominence, snr) are judged against
it; elsewhere σ stays the overall one.

**Fringes.** An interference fringe in the baseline (a sinusoid of constant period,
:mod:`.fringe`) is found first and set aside: its maxima are not reported as peaks, the
noise is measured without it, and the local baseline (the ``baseline`` column) follows it.

**Blends and noise on tops.** A maximum also needs a prominence (the depth
of the valley that separates it from higher ground, :func:`scipy.signal.
peak_prominences`, on the searched data) of at least ``min_prominence``
times that data's noise (default 4), so noise wiggles on the top of a
strong line do not count as separate peaks, while two lines with a real
dip between them are split. Two neighbouring peaks whose valley is not that
deep on the data smoothed gently (a Gaussian of half the line width, which
unlike the quadratic filter does not overshoot at the edges of a flat,
saturated top) are one peak: the higher is kept.

The table has the columns of :data:`PEAK_COLUMNS`:

``peak_id`` (1..n ascending), ``position`` (cm⁻¹, vertex of the parabola
through the three highest smoothed samples), ``height`` (the data's value
there, y units: where a marker sits on the curve), ``snr`` (|height −
baseline| / σ, σ where the peak is), ``prominence`` (y units), ``fwhm`` (cm⁻¹, full width at half
height above the local baseline, stopping at the valleys to the neighbours),
``baseline`` (the local baseline at the peak, y units), ``index`` (sample of
the maximum).
"""


from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import signal

from ._common import ProcessingError, as_xy
from .noise import NoiseEstimate
from .peak_data import PeakContext, peak_context
from .threshold import FALSE_PEAKS, MIN_PROMINENCE, default_threshold

__all__ = [
    "PEAK_COLUMNS",
    "PeakContext",
    "PeakSearch",
    "peak_context",
    "search_peaks",
    "find_peaks",
    "default_threshold",
    "refine_parabola",
]

#: columns of the table :func:`find_peaks` returns, in order
PEAK_COLUMNS = ("peak_id", "position", "height", "snr", "prominence", "fwhm", "baseline", "index")


def refine_parabola(x, y, index) -> tuple[np.ndarray, np.ndarray]:
    """Vertex of the parabola through samples ``index - 1, index, index + 1``.

    With h₁ = x₁ − x₀, h₂ = x₂ − x₁ (any spacing) and t = x − x₁ the parabola
    is p(t) = y₁ + b t + a t², where

    .. math::

        a = \\frac{(y_2 - y_1)/h_2 - (y_1 - y_0)/h_1}{h_1 + h_2}, \\qquad
        b = \\frac{h_2 (y_1 - y_0)/h_1 + h_1 (y_2 - y_1)/h_2}{h_1 + h_2},

    and the vertex is t* = −b / (2a), p* = y₁ − b² / (4a). Where a ≥ 0 (no
    maximum) or the index is at an end, the sample itself is returned. t* is
    clipped to [−h₁, h₂].

    Parameters
    ----------
    x, y : ndarray, shape (n,)
        Ascending x and the values.
    index : array_like of int, shape (m,)
        Indices of local maxima.

    Returns
    -------
    position, height : ndarray, shape (m,)
    """
    x = np.asarray(x, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    i = np.atleast_1d(np.asarray(index, dtype=np.intp))
    pos = x[i].astype(np.float64, copy=True)
    hgt = y[i].astype(np.float64, copy=True)
    inner = (i > 0) & (i < x.size - 1)
    j = i[inner]
    h1 = x[j] - x[j - 1]
    h2 = x[j + 1] - x[j]
    s1 = (y[j] - y[j - 1]) / h1
    s2 = (y[j + 1] - y[j]) / h2
    a = (s2 - s1) / (h1 + h2)
    b = (h2 * s1 + h1 * s2) / (h1 + h2)
    ok = a < 0
    a_ok = np.where(ok, a, -1.0)
    t = np.where(ok, np.clip(-b / (2.0 * a_ok), -h1, h2), 0.0)
    # the clipped vertex must still lie on the parabola
    p = np.where(ok, y[j] + b * t + a * t * t, y[j])
    pos[inner] = x[j] + t
    hgt[inner] = p
    return pos, hgt



@dataclass(frozen=True)
class PeakSearch:
    """Result of :func:`search_peaks`: the table and how it was obtained.

    Attributes
    ----------
    table : pandas.DataFrame
        Columns :data:`PEAK_COLUMNS`.
    context : PeakContext
    min_snr : float
        The threshold applied, in snr units (height above baseline / σ).
    threshold : str
        How ``min_snr`` was chosen, for people.
    min_prominence : float
        In units of the smoothed noise.
    """

    table: pd.DataFrame = field(repr=False)
    context: PeakContext
    min_snr: float
    threshold: str
    min_prominence: float

    @property
    def noise(self) -> NoiseEstimate:
        return self.context.noise

    def to_json(self) -> dict:
        """How the search went, as plain JSON (for the session record)."""
        c = self.context
        return {"noise": c.noise.to_json(), "direction": c.direction,
                "min_snr": float(self.min_snr), "threshold": self.threshold,
                "min_prominence": float(self.min_prominence), "smoothing": int(c.smoothing),
                "width_points": None if not math.isfinite(c.width) else float(c.width),
                **({"fringe": c.fringe.to_json()} if c.fringe is not None else {})}


def _empty_table() -> pd.DataFrame:
    cols = {c: pd.Series([], dtype="int64" if c in ("peak_id", "index") else "float64")
            for c in PEAK_COLUMNS}
    return pd.DataFrame(cols)



def _fwhm_points(s: np.ndarray, idx: np.ndarray, heights: np.ndarray) -> np.ndarray:
    """Width at half height above zero, between the valleys to the neighbouring peaks."""
    n = s.size
    if idx.size == 0:
        return np.zeros(0)
    bounds = np.concatenate(([0], idx, [n - 1]))
    left = np.empty(idx.size, dtype=np.intp)
    right = np.empty(idx.size, dtype=np.intp)
    for k in range(idx.size):
        a, b, c = bounds[k], bounds[k + 1], bounds[k + 2]
        left[k] = a + int(np.argmin(s[a:b + 1]))
        right[k] = b + int(np.argmin(s[b:c + 1]))
    left = np.minimum(left, idx)
    right = np.maximum(right, idx)
    prom = np.maximum(heights, 1e-300)
    widths = signal.peak_widths(s, idx, rel_height=0.5, prominence_data=(prom, left, right))[0]
    return widths


def _channels(ctx: PeakContext) -> list[tuple[np.ndarray, float, float | None]]:
    """The searches to run: (data, noise gain, neighbour correlation)."""
    out = [(ctx.signal, ctx.gain, ctx.rho)]
    if ctx.matched is not None:
        out.append((ctx.matched, ctx.matched_gain, ctx.matched_rho))
    return out


def _threshold(ctx: PeakContext, n: int, min_snr, gain: float, rho: float | None,
               channels: int) -> tuple[float, str]:
    """Threshold in snr units for a channel of noise ``gain``·σ, and why."""
    if min_snr is not None:
        t = float(min_snr)
        if not (math.isfinite(t) and t > 0):
            raise ProcessingError(f"min_snr must be a positive number or None (automatic), "
                                  f"got {min_snr!r}")
        return t, "given"
    t = default_threshold(n, channels, rho)
    why = (f"automatic: height above the local baseline at least {t * gain:.2f} x the noise, "
           f"which keeps pure noise below {FALSE_PEAKS:g} false peaks in {n} points")
    if ctx.smoothing > 1:
        why += f" (data smoothed over {ctx.smoothing} points)"
    if channels > 1:
        why += (f"; weak lines about {ctx.width:.1f} points wide are also searched with a "
                "filter matched to them")
    return t * gain, why


def _plateau_merge(ctx: PeakContext, idx: np.ndarray, p_min: float,
                   sigma: np.ndarray) -> np.ndarray:
    """Keep-mask over peaks sorted by position: of two neighbours that no real valley
    separates on the gently smoothed data (a flat, saturated top whose smoothed edges
    overshoot), only the higher is kept; ``sigma`` is σ at every sample."""
    keep = np.ones(idx.size, dtype=bool)
    if ctx.gentle is None or idx.size < 2:
        return keep
    r, tol = ctx.gentle, p_min * ctx.gentle_gain * sigma
    last = 0
    for k in range(1, idx.size):
        a, b = idx[last], idx[k]
        lo, hi = (a, b) if a <= b else (b, a)
        dip = min(r[a], r[b]) - float(r[lo:hi + 1].min())
        if dip >= max(tol[a], tol[b]):
            last = k
            continue
        if r[b] > r[a]:
            keep[last], last = False, k
        else:
            keep[k] = False
    return keep


def search_peaks(x, y, *, min_snr: float | None = None, min_separation: float | None = None,
                 noise=None, noise_region=None, direction: str = "up",
                 min_prominence: float | None = None, width: float | None = None,
                 context: PeakContext | None = None, fringe: bool = True) -> PeakSearch:
    """Find the peaks of ``y`` that stand out of the noise (see the module docstring).

    Parameters
    ----------
    x : array_like, shape (n,)
        Wavenumber in cm⁻¹, strictly ascending.
    y : array_like, shape (n,)
        Values; peaks point up (``direction="down"``: dips).
    min_snr : float, optional
        Minimum height above the local baseline in units of σ. Default (None):
        automatic, from the false-alarm rule of the module docstring.
    min_separation : float, optional
        Minimum distance between peaks in cm⁻¹, converted to samples with the
        median spacing; of closer peaks the higher is kept (scipy's rule).
    noise : float, optional
        σ in y units; default measured on the line-free points.
    noise_region : (lo, hi), optional
        A flat stretch (cm⁻¹) to measure σ on instead.
    direction : {"up", "down"}, default "up"
    min_prominence : float, optional
        Minimum prominence in units of the searched data's noise (default 4).
    width : float, optional
        Known line FWHM in cm⁻¹, used when no line stands out enough to measure it.
    context : PeakContext, optional
        A context already computed for these data (:func:`peak_context`).
    fringe : bool, default True
        Set an interference fringe of the baseline aside before the search
        (:mod:`.fringe`; its maxima are not lines). ``context.fringe`` holds it.

    Returns
    -------
    PeakSearch
        ``.table`` (columns :data:`PEAK_COLUMNS`, ascending position; empty with
        those columns when nothing stands out), the noise, the threshold and why.

    Raises
    ------
    ProcessingError
        On mismatched or non-finite arrays, or a bad option.
    """
    xa, ya = as_xy(x, y)
    ctx = context or peak_context(xa, ya, noise=noise, noise_region=noise_region,
                                  direction=direction, width=width, fringe=fringe)
    # σ where each sample is (the overall σ, raised where the spectrum is noisier)
    sigma = ctx.noise.at(xa)
    p_min = MIN_PROMINENCE if min_prominence is None else float(min_prominence)
    if not (math.isfinite(p_min) and p_min >= 0):
        raise ProcessingError(f"min_prominence must be a number >= 0 (in noise sigmas), got "
                              f"{min_prominence!r}")
    dx = float(np.median(np.diff(xa)))
    distance = None
    if min_separation is not None:
        sep = float(min_separation)
        if not (math.isfinite(sep) and sep > 0):
            raise ProcessingError(
                f"min_separation must be a positive distance in cm-1, got {min_separation!r}")
        distance = max(1, math.ceil(sep / dx - 1e-9))
    chans = _channels(ctx)
    found: list[tuple[np.ndarray, ...]] = []
    t_main, why = _threshold(ctx, xa.size, min_snr, chans[0][1], chans[0][2], len(chans))
    taken = np.zeros(0)
    for k, (sig, gain, rho) in enumerate(chans):
        t_snr, _ = _threshold(ctx, xa.size, min_snr, gain, rho, len(chans))
        # the baseline's own noise adds to the filtered data's: the automatic bar rises
        # point by point (a given min_snr applies to the snr column as it is)
        bvar = (0.0 if ctx.baseline_variance is None or min_snr is not None
                else ctx.baseline_variance)
        height = t_snr * sigma * np.sqrt(1.0 + bvar / gain**2)
        idx, props = signal.find_peaks(sig, height=height, distance=distance,
                                       prominence=np.maximum(p_min * gain * sigma, 1e-300))
        if idx.size == 0:
            continue
        pos, hgt = refine_parabola(xa, sig, idx)
        prom = np.asarray(props["prominences"], dtype=np.float64)
        if k > 0 and taken.size:
            # the matched channel adds only lines the first one did not find
            near = np.abs(pos[:, None] - taken[None, :]).min(axis=1)
            new = near > 0.75 * ctx.width * dx
            idx, pos, hgt, prom = idx[new], pos[new], hgt[new], prom[new]
        fw = _fwhm_points(sig, idx, hgt) * dx
        found.append((idx, pos, hgt, prom, fw))
        taken = np.concatenate([taken, pos])
    if not found:
        return PeakSearch(_empty_table(), ctx, t_main, why, p_min)
    idx, pos, hgt, prom, fw = (np.concatenate(parts) for parts in zip(*found))
    order = np.argsort(pos, kind="stable")
    keep = _plateau_merge(ctx, idx[order], p_min, sigma)
    idx, pos, hgt, prom, fw = (a[order][keep] for a in (idx, pos, hgt, prom, fw))
    base_at = np.interp(pos, xa, ctx.baseline)
    table = pd.DataFrame({
        "peak_id": np.arange(1, idx.size + 1, dtype=np.int64),
        "position": pos,
        "height": base_at + ctx.sign * hgt,
        "snr": hgt / sigma[idx],
        "prominence": prom,
        "fwhm": fw,
        "baseline": base_at,
        "index": idx.astype(np.int64),
    })
    return PeakSearch(table, ctx, t_main, why, p_min)


def find_peaks(x, y, *, min_snr: float | None = None, min_separation: float | None = None,
               noise=None, noise_region=None, direction: str = "up",
               min_prominence: float | None = None, width: float | None = None,
               fringe: bool = True) -> pd.DataFrame:
    """The peak table of :func:`search_peaks` (same parameters)."""
    return search_peaks(x, y, min_snr=min_snr, min_separation=min_separation, noise=noise,
                        noise_region=noise_region, direction=direction,
                        min_prominence=min_prominence, width=width, fringe=fringe).table

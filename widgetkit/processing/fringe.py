"""Interference fringes in the baseline: found, measured and set aside before peaks are sought.

Light reflected back and forth between two parallel faces (cell windows, a beamsplitter, a
thin sample) modulates the baseline of an absorption spectrum with a near-sinusoid whose
period in wavenumber, 1/(2·n·d) for faces a distance d apart in a medium of refractive
index n, is the same across the whole spectrum (Fabry–Pérot multiple-beam
interference: Hecht, *Optics*, chapter on interference, cited from memory; common practice in
infrared spectroscopy). Its maxima look like broad peaks: a fringe
a few line widths long makes a peak search report every maximum as a line, and a line fit
then bends its lines into the fringe. :func:`find_fringe` finds such a modulation so that the
peak search can measure heights above it and the line fit can subtract it with its
background.

**Method.**

1. *Trend and lines.* A cubic polynomial in x is fitted to the data by least squares with
   iterative clipping: points further than :data:`CLIP` robust scales (1.4826 × the median
   absolute residual) from it are left out, so strong lines do not count.
2. *Periodogram.* The residual of the kept points (0 elsewhere), on a uniform grid (the data
   are interpolated onto one when their spacing varies), is Fourier transformed with
   four-fold zero padding. The highest power between :data:`MIN_CYCLES` cycles over the
   data and a period of :data:`MIN_PERIOD_STEPS` samples gives the starting frequency.
3. *Model.* The cubic trend plus ``(a₀ + a₁t)·cos 2πf(x − x₀) + (b₀ + b₁t)·sin 2πf(x − x₀)``
   (t from −1 to 1 across the data: an amplitude and phase that drift slowly, as they do
   for an absorbance fringe of varying depth) is fitted by linear least squares to the kept
   points, and f refined by a bounded one-dimensional search of the residual sum of squares
   within one periodogram bin; the clipping is repeated on the residual of this model.
4. *Accepted* only when it is
   - significant: the fitted sinusoid lowers the sum of squares by more than
     ``2·ln(F/α) + 8`` residual variances (F frequencies searched, α = 10⁻⁴: the highest of
     F independent periodogram values of white noise, a chi-square of two degrees of freedom
     each, exceeds 2·ln(F/α) variances with probability about α; Scargle, *ApJ* 263 (1982)
     835, cited from memory; the 8 covers the two drift terms, which make it a chi-square
     of four);
   - relevant: its amplitude is at least :data:`MIN_AMPLITUDE` times the residual scale or
     the noise σ when one is given, whichever is smaller (a smaller ripple makes no false
     peak; the wings of wide lines left among the kept points can raise the residual
     scale well above the noise), and at least :data:`ABOVE_SCATTER` times that residual
     scale (a ripple lost in what the model leaves is not worth a claim);
   - everywhere: fitted on each quarter of the data alone (frequency held), it has in at
     least three quarters (all, when fewer than four can be judged) an amplitude within a
     factor :data:`QUARTER_RATIO` of the whole fit's there and a phase within
     :data:`QUARTER_PHASE` degrees of it. A regular series of lines (a rotational branch)
     has power near its spacing too, but only where the band is, and its spacing drifts;
     a fringe is the same everywhere.
5. A second fringe is sought on what the first leaves (at most :data:`MAX_FRINGES`).

The result (:class:`Fringe`) holds only the sinusoids, not the trend: the trend is the
baseline's business. Limits: a fringe with fewer than :data:`MIN_CYCLES` periods over the
data is a curve, left to the smooth background of the line fit; a fringe whose period is
only a few line widths cannot be told from lines by its shape, and the peak search drops a
fringe shorter than :data:`MIN_PERIOD_WIDTHS` line widths; in a spectrum whose every point
lies on a line (a dense band) too little baseline remains to see a fringe.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import minimize_scalar

__all__ = ["Fringe", "find_fringe", "MIN_CYCLES", "MIN_PERIOD_WIDTHS"]

#: a fringe has at least this many periods over the data
MIN_CYCLES = 4.0
#: a fringe period is at least this many samples
MIN_PERIOD_STEPS = 8.0
#: the peak search keeps a fringe only if its period is at least this many line widths
MIN_PERIOD_WIDTHS = 6.0
#: clipping level (robust scales) of the trend and fringe fits
CLIP = 4.0
#: a fringe is at least this many residual scales high (mean amplitude)
MIN_AMPLITUDE = 2.0
#: ... and at least this many times the scatter of what the model leaves
ABOVE_SCATTER = 1.25
#: false-alarm probability of the periodogram's highest peak
ALPHA = 1e-4
#: quarters agree with the whole fit within this factor of amplitude ...
QUARTER_RATIO = 2.0
#: ... and this many degrees of phase
QUARTER_PHASE = 50.0
#: most fringes sought
MAX_FRINGES = 2
#: points used by the search of the frequency within a bin
SEARCH_POINTS = 40_000
#: scales a median absolute value to σ for Gaussian noise (1 / Φ⁻¹(3/4))
_MAD = 1.482602218505602


@dataclass(frozen=True)
class Fringe:
    """Sinusoidal modulations of a baseline: ``Σₖ (aₖ₀ + aₖ₁t)·cos 2πfₖ(x − x₀) +
    (bₖ₀ + bₖ₁t)·sin 2πfₖ(x − x₀)``, t = (x − x₀)/half.

    Attributes
    ----------
    frequency : ndarray, shape (k,)
        Cycles per cm⁻¹ (the period is 1/frequency cm⁻¹).
    coefficients : ndarray, shape (k, 4)
        a₀, a₁, b₀, b₁ of each, y units.
    x0, half : float
        Centre and half span of the data it was measured on, cm⁻¹.
    scale : float
        Robust scale of what the model left on the kept points (y units).
    """

    frequency: np.ndarray = field(repr=False)
    coefficients: np.ndarray = field(repr=False)
    x0: float
    half: float
    scale: float

    @property
    def periods(self) -> np.ndarray:
        return 1.0 / np.asarray(self.frequency, dtype=float)

    @property
    def amplitudes(self) -> np.ndarray:
        """Amplitude of each fringe at the centre of the data, y units."""
        c = np.asarray(self.coefficients, dtype=float).reshape(-1, 4)
        return np.hypot(c[:, 0], c[:, 2])

    def at(self, x) -> np.ndarray:
        """The modulation at ``x`` (cm⁻¹), y units."""
        xa = np.asarray(x, dtype=float)
        t = (xa - self.x0) / self.half
        out = np.zeros_like(xa)
        for f, (a0, a1, b0, b1) in zip(np.atleast_1d(self.frequency),
                                       np.asarray(self.coefficients).reshape(-1, 4)):
            ph = 2.0 * math.pi * f * (xa - self.x0)
            out += (a0 + a1 * t) * np.cos(ph) + (b0 + b1 * t) * np.sin(ph)
        return out

    def columns(self, x) -> np.ndarray:
        """The model's columns at ``x`` (n, 4k): cos, t·cos, sin, t·sin of each fringe;
        ``columns(x) @ coefficients.ravel() == at(x)``."""
        xa = np.asarray(x, dtype=float)
        return _design(xa, self.x0, self.half, np.atleast_1d(self.frequency))[:, 4:]

    def with_coefficients(self, coefficients) -> Fringe:
        """The same fringes with other coefficients (refitted elsewhere)."""
        return dataclasses.replace(
            self, coefficients=np.asarray(coefficients, dtype=float).reshape(-1, 4))

    def describe(self) -> str:
        parts = [f"period {p:.4g} cm-1, amplitude {a:.3g}"
                 for p, a in zip(self.periods, self.amplitudes)]
        what = "an interference fringe" if len(parts) == 1 else f"{len(parts)} interference fringes"
        return f"{what} in the baseline ({'; '.join(parts)}) was set aside"

    def to_json(self) -> dict:
        return {"frequency": np.atleast_1d(self.frequency).astype(float).tolist(),
                "coefficients": np.asarray(self.coefficients, float).reshape(-1, 4).tolist(),
                "x0": float(self.x0), "half": float(self.half), "scale": float(self.scale)}

    @classmethod
    def from_json(cls, d) -> Fringe:
        return cls(frequency=np.asarray(d["frequency"], dtype=float),
                   coefficients=np.asarray(d["coefficients"], dtype=float).reshape(-1, 4),
                   x0=float(d["x0"]), half=float(d["half"]), scale=float(d["scale"]))


def _robust_scale(r: np.ndarray) -> float:
    return float(_MAD * np.median(np.abs(r - np.median(r)))) if r.size else 0.0


def _design(x: np.ndarray, x0: float, half: float, freqs) -> np.ndarray:
    """Columns: cubic trend, then 4 per frequency (cos, t·cos, sin, t·sin)."""
    t = (x - x0) / half
    a = np.empty((x.size, 4 + 4 * len(freqs)))
    a[:, 0] = 1.0
    a[:, 1] = t
    a[:, 2] = t * t
    a[:, 3] = a[:, 2] * t
    for k, f in enumerate(freqs):
        ph = (2.0 * math.pi * f) * (x - x0)
        j = 4 + 4 * k
        np.cos(ph, out=a[:, j])
        np.sin(ph, out=a[:, j + 2])
        np.multiply(a[:, j], t, out=a[:, j + 1])
        np.multiply(a[:, j + 2], t, out=a[:, j + 3])
    return a


def _lsq(a: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, float]:
    """Least-squares coefficients and residual sum of squares (normal equations: the columns
    are bounded by 1 and nearly orthogonal; a singular set falls back to an SVD)."""
    try:
        coef = np.linalg.solve(a.T @ a, a.T @ y)
    except np.linalg.LinAlgError:
        coef = np.linalg.lstsq(a, y, rcond=None)[0]
    r = y - a @ coef
    return coef, float(r @ r)


def _clipped(x, y, x0, half, freqs, keep, rounds: int = 4):
    """Least squares of trend + fringes with iterative clipping; coefficients, kept mask,
    robust scale of the residual on the kept points."""
    a = _design(x, x0, half, freqs)
    coef = np.zeros(a.shape[1])
    for _ in range(rounds):
        # a few columns need no more than a few 10^5 points for their coefficients
        use = np.flatnonzero(keep)[::max(1, int(keep.sum()) // (5 * SEARCH_POINTS))]
        coef, _ = _lsq(a[use], y[use])
        r = y - a @ coef
        s = _robust_scale(r[keep])
        new = np.abs(r) <= CLIP * max(s, 1e-300)
        if np.array_equal(new, keep) or new.sum() < 0.5 * x.size:
            break
        keep = new
    return coef, keep, _robust_scale((y - a @ coef)[keep])


def _strongest_frequency(x, r, keep, fmin: float, fmax: float) -> tuple[float, float, int]:
    """Frequency of the periodogram's highest peak of ``r`` on the kept points, its bin
    width and the number of frequencies searched."""
    n = x.size
    xu = np.linspace(x[0], x[-1], n)
    ru = np.where(keep, r, 0.0)
    if not np.allclose(np.diff(x), xu[1] - xu[0], rtol=1e-3, atol=0.0):
        ru = np.interp(xu, x, ru)
    dx = xu[1] - xu[0]
    m = 4 * n
    power = np.abs(np.fft.rfft(ru, m)) ** 2
    freq = np.fft.rfftfreq(m, dx)
    band = (freq >= fmin) & (freq <= fmax)
    if not band.any():
        return math.nan, math.nan, 0
    k = int(np.flatnonzero(band)[np.argmax(power[band])])
    return float(freq[k]), float(freq[1] - freq[0]), int(band.sum() // 4)


def _quarters_agree(x, y, x0, half, freqs, coef, keep) -> bool:
    """Each quarter fitted alone (frequencies held) has the whole fit's amplitude and phase
    of the last fringe (module docstring, step 4)."""
    edges = np.linspace(x[0], x[-1], 5)
    f = freqs[-1]
    judged = agree = 0
    for lo, hi in zip(edges[:-1], edges[1:]):
        sel = keep & (x >= lo) & (x <= hi)
        if sel.sum() < 40 or (hi - lo) * f < 1.0:
            continue
        judged += 1
        xs, ys = x[sel], y[sel]
        c_q, _ = _lsq(_design(xs, x0, half, freqs), ys)
        tq = float(np.mean((xs - x0) / half))
        a_w, b_w = coef[-4] + coef[-3] * tq, coef[-2] + coef[-1] * tq
        a_q, b_q = c_q[-4] + c_q[-3] * tq, c_q[-2] + c_q[-1] * tq
        amp_w, amp_q = math.hypot(a_w, b_w), math.hypot(a_q, b_q)
        if amp_w <= 0 or amp_q <= 0:
            continue
        ratio = amp_q / amp_w
        dphase = abs(math.degrees(math.atan2(a_w * b_q - b_w * a_q, a_w * a_q + b_w * b_q)))
        agree += (1.0 / QUARTER_RATIO <= ratio <= QUARTER_RATIO) and dphase <= QUARTER_PHASE
    return judged >= 2 and agree >= min(3, judged)


def _one_more(x, y, x0, half, freqs: list, keep, sigma: float
              ) -> tuple[float, np.ndarray, np.ndarray] | None:
    """The next fringe on top of ``freqs`` (frequency, all coefficients, kept mask), or None."""
    coef0, keep0, _ = _clipped(x, y, x0, half, freqs, keep)
    r = y - _design(x, x0, half, freqs) @ coef0
    span = x[-1] - x[0]
    dx = span / (x.size - 1)
    f0, df, nf = _strongest_frequency(x, r, keep0, MIN_CYCLES / span, 1.0 / (MIN_PERIOD_STEPS * dx))
    if not math.isfinite(f0) or nf < 1:
        return None

    # the search compares frequencies within a bin of each other: every k-th kept point does
    # (a stride aliases only frequencies k samples apart, far outside the bin)
    pick = np.flatnonzero(keep0)[::max(1, int(keep0.sum()) // SEARCH_POINTS)]
    xs, ys = x[pick], y[pick]

    def rss(f: float) -> float:
        return _lsq(_design(xs, x0, half, [*freqs, f]), ys)[1]

    best = minimize_scalar(rss, bounds=(max(f0 - df, 1e-12), f0 + df), method="bounded",
                           options={"xatol": 1e-2 * df})
    f = float(best.x)
    coef, keep1, scale = _clipped(x, y, x0, half, [*freqs, f], keep0)
    if scale <= 0:
        return None
    a_full = _design(x[keep1], x0, half, [*freqs, f])
    _, rss_with = _lsq(a_full, y[keep1])
    _, rss_without = _lsq(a_full[:, :-4], y[keep1])
    gain = (rss_without - rss_with) / scale**2
    amp = float(np.mean(np.hypot(coef[-4] + coef[-3] * (x - x0) / half,
                                 coef[-2] + coef[-1] * (x - x0) / half)))
    if (gain < 2.0 * math.log(nf / ALPHA) + 8.0 or amp < MIN_AMPLITUDE * min(scale, sigma)
            or amp < ABOVE_SCATTER * scale):
        return None
    if not _quarters_agree(x, y, x0, half, [*freqs, f], coef, keep1):
        return None
    return f, coef, keep1


def find_fringe(x, y, sigma: float | None = None) -> Fringe | None:
    """The interference fringe(s) in the baseline of ``y(x)``, or None (module docstring).

    Parameters
    ----------
    x : ndarray, shape (n,)
        Ascending wavenumber, cm⁻¹.
    y : ndarray, shape (n,)
        The data (absorbance or transmittance alike).
    sigma : float, optional
        The noise σ of y, for the relevance test (step 4).

    Returns
    -------
    Fringe or None
        None when no modulation passes every test of the module docstring.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    if x.size < 16 * MIN_PERIOD_STEPS or not (x[-1] > x[0]):
        return None
    x0, half = 0.5 * (x[0] + x[-1]), 0.5 * (x[-1] - x[0])
    freqs: list[float] = []
    coef = np.zeros(4)
    keep = np.ones(x.size, dtype=bool)
    for _ in range(MAX_FRINGES):
        found = _one_more(x, y, x0, half, freqs, keep,
                          math.inf if sigma is None or not sigma > 0 else float(sigma))
        if found is None:
            break
        f, coef, keep = found
        freqs.append(f)
    if not freqs:
        return None
    scale = _robust_scale((y - _design(x, x0, half, freqs) @ coef)[keep])
    return Fringe(frequency=np.asarray(freqs), coefficients=coef[4:].reshape(-1, 4),
                  x0=x0, half=half, scale=scale)

"""The noise σ of a spectrum, measured on its line-free points (the one implementation).

A spectroscopist judges noise where there is no line: on the baseline between
lines, or on a stretch known to be flat. :func:`measure_noise` does the same
automatically, in four parts.

1. **Line-free points.** A point belongs to a feature when the step to a
   neighbour, ``y[i+1] − y[i]``, departs from the local trend by more than
   ``4·σ·√2``, or when its departure from the straight line through its two
   neighbours, ``y[i] − (y[i−1] + y[i+1])/2``, exceeds ``4·σ·√1.5`` (the
   standard deviations of those two quantities for white noise of σ). Each
   flagged run is widened on both sides by half its length plus two
   points, so that the top and the foot of a line go with its flanks.
2. **Spread of what is left.** On runs of line-free points the lag-k
   differences ``d = y[i+k] − y[i]`` are taken, their local mean (over 31
   differences) is removed so that sloping baselines, fringes and broad bands
   do not count, and σ is their clipped root mean square (iteratively
   clipped at 3.5 of itself and corrected for the clipping) divided by √2.
   The clipped RMS, unlike a median, stays right on digitised data, where
   most differences are exactly 0.
3. **Neighbouring points that share noise.** Zero-filled, interpolated or
   smoothed spectra have noise correlated over a few points, which makes
   short-lag differences too small. The Gaussian core of the differences
   (their normal-scaled median absolute value) is computed at lags 1, 2, 3,
   4, 6 and 8 and the lag is increased while it still grows by more than 5 %
   (plus its statistical scatter); for white noise lag 1 is kept. Weak lines
   left in the line-free set also make longer-lag differences grow; they are
   told apart by the heavy tails they give the lag-1 differences (clipped
   RMS more than 15 % away from the core), and then lag 1 is kept, as it is
   for digitised data. Noise shared by neighbours levels off within a few lags; a core
   still growing at lag 8 is a smooth signal (a fringe, a broad band) and lag 1 is
   kept.
4. **Iteration from below.** The mask needs σ and σ needs the mask. The
   iteration starts low (the 10th percentile of σ over short segments, so
   that the quiet stretches between lines set it), and alternates mask and
   spread until σ changes by less than 0.1 %; when fewer than 8 pairs of
   neighbouring points stay line-free, σ is raised by a quarter and the mask
   recomputed. Starting from
   below matters: from a high start (dense lines inflate every global
   measure) the same iteration would stop at once, finding nothing to mask.

**Floors.** Digitised data (values on a grid of step q) cannot have less
noise than the rounding itself, q/√12 (a uniform error over one step); that
floor is applied and said. Data without any measurable noise (exact or
synthetic) get σ = 10⁻⁹ of the data range, and the record says so: σ is
never silently 0.

**Noise that varies along the spectrum.** Given the wavenumbers, :func:`measure_noise`
also measures σ segment by segment in the same way and reports where the spectrum is
significantly noisier than the overall σ (``NoiseEstimate.profile``, :meth:`NoiseEstimate.at`;
:mod:`.noise_profile`); the peak search judges peaks there against that higher σ.

**A flat region given by the user** (``noise_region=(lo, hi)`` in cm⁻¹)
replaces all of that: σ is the clipped RMS of the residuals of a straight-line
fit over the points in the region, ``√(n/(n−2))`` for the two fitted
coefficients. This measures the noise amplitude directly, correlated or not.

Limits: a spectrum whose every point lies on a line (a dense band at low
resolution with no gap) has no line-free points; σ then comes out too high. When
the lines are about one sample wide, their scatter is indistinguishable from noise
and every point is taken as line-free (the record says 100 %: measured on a
simulated band of 260 lines of 4 cm⁻¹ sampled every 4 cm⁻¹, σ came out 100 times
the true one and no peak was found); ``fit_lines`` then says so. A flat stretch
(``noise_region``) or a crop that keeps some baseline is the remedy. Correlation over more than
8 points is not followed.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from ._common import ProcessingError, as_xy, as_y
from ._noise_stats import (  # noqa: F401  (FEATURE_SIGMAS, CLIP, TREND_POINTS: documented here)
    CLIP,
    FEATURE_SIGMAS,
    TREND_POINTS,
    _clipped_rms,
    lag_sigma,
    line_free_mask,
    quantum,
)
from .noise_profile import noise_profile

__all__ = ["NoiseEstimate", "measure_noise", "estimate_noise", "line_free_mask", "quantum"]

#: lags (in points) at which the spread of differences is measured
LAGS = (1, 2, 3, 4, 6, 8)
#: relative resolution given to data with no measurable noise
EXACT_FLOOR = 1e-9
#: fewer line-free points than this fraction is reported as doubtful
FEW_FREE = 0.05


@dataclass(frozen=True)
class NoiseEstimate:
    """The noise σ of a spectrum and how it was obtained.

    Attributes
    ----------
    sigma : float
        Standard deviation of the noise, in y units (> 0).
    method : str
        ``"line-free points"``, ``"noise region"`` or ``"given"``.
    n_used : int
        Points the estimate rests on.
    line_free_fraction : float
        Fraction of the points judged line-free (1 for a region or a given σ).
    lag : int
        Lag (points) of the differences used; above 1 when neighbouring points
        share noise.
    quantum : float
        Digitisation step of y (0 when y is not on a grid).
    floor : str
        ``""``, ``"digitisation"`` (σ raised to q/√12) or ``"exact data"``.
    region : tuple of float or None
        The user's flat region, cm⁻¹.
    note : str
        A warning for people ("" when there is none).
    profile : tuple of (tuple of float, tuple of float) or None
        Where the spectrum is noisier than ``sigma``: segment centres (cm⁻¹) and the
        factors (≥ 1) σ is raised by there (:mod:`.noise_profile`); None where the noise
        is uniform or was not measured along the spectrum. :meth:`at` gives σ at any x.
    """

    sigma: float
    method: str
    n_used: int
    line_free_fraction: float = 1.0
    lag: int = 1
    quantum: float = 0.0
    floor: str = ""
    region: tuple[float, float] | None = None
    note: str = ""
    profile: tuple[tuple[float, ...], tuple[float, ...]] | None = None

    def at(self, x) -> np.ndarray:
        """σ at the wavenumbers ``x`` (cm⁻¹): ``sigma`` times the profile's factor,
        interpolated between segment centres and held beyond the end ones."""
        xa = np.asarray(x, dtype=np.float64)
        if self.profile is None:
            return np.full(xa.shape, self.sigma)
        centres, factors = self.profile
        return self.sigma * np.interp(xa, centres, factors)

    def describe(self) -> str:
        """One line for people: σ and how it was measured."""
        how = {"line-free points": f"from {self.n_used} line-free points "
                                   f"({100 * self.line_free_fraction:.0f} %)",
               "noise region": (f"from the flat region {self.region[0]:.6g}-"
                                f"{self.region[1]:.6g} cm-1 ({self.n_used} points)"
                                if self.region else "from the flat region"),
               "given": "as given"}.get(self.method, self.method)
        text = f"noise {self.sigma:.3g} {how}"
        if self.lag > 1:
            text += f"; neighbouring points share noise (differences over {self.lag} points)"
        if self.floor == "digitisation":
            text += f"; raised to the digitisation floor (step {self.quantum:.3g})"
        elif self.floor == "exact data":
            text += "; no noise found in the data (exact values), so a floor of 1e-9 of the range"
        if self.profile is not None:
            centres, factors = self.profile
            k = int(np.argmax(factors))
            text += (f"; up to {factors[k]:.2g} x higher near {centres[k]:.0f} cm-1, where "
                     "peaks are judged against that higher noise")
        if self.note:
            text += f"; {self.note}"
        return text

    def to_json(self) -> dict:
        """Plain JSON for a session record."""
        return {"sigma": float(self.sigma), "method": self.method, "n_used": int(self.n_used),
                "line_free_fraction": float(self.line_free_fraction), "lag": int(self.lag),
                "quantum": float(self.quantum), "floor": self.floor,
                "region": None if self.region is None else [float(v) for v in self.region],
                "note": self.note,
                # recorded only when there is one, so that earlier records stay as they were
                **({"profile": {"x": list(self.profile[0]), "factor": list(self.profile[1])}}
                   if self.profile is not None else {})}


# ---------------------------------------------------------------------------- helpers
def _start_sigma(y: np.ndarray) -> float:
    """A low first guess: the 10th percentile of σ over short segments."""
    d = np.diff(y)
    seg = int(np.clip(d.size // 40, 8, 48))
    nseg = d.size // seg
    if nseg < 5:
        return float(np.std(d)) / math.sqrt(2.0)
    blocks = d[: nseg * seg].reshape(nseg, seg)
    return float(np.quantile(np.std(blocks, axis=1), 0.1)) / math.sqrt(2.0)


def _walk_lags(rms: list[float], core: list[float], n: int, quantised: bool
               ) -> tuple[float, int]:
    """The lag to use (module part 3): follow the lags while the Gaussian core of the
    differences still grows by more than 5 % plus its scatter, provided lag 1 looks
    like pure Gaussian noise (clipped RMS within 15 % of the core: leakage of weak
    lines gives heavy tails) and the data are not digitised (no core to speak of)."""
    if quantised or not all(math.isfinite(v) and v > 0 for v in (rms[0], core[0])):
        return rms[0], LAGS[0]
    if not 0.85 <= rms[0] / core[0] <= 1.15:
        return rms[0], LAGS[0]
    tol = 1.05 + 2.0 / math.sqrt(max(n, 1))
    k = 0
    for j in range(1, len(LAGS)):
        if not math.isfinite(core[j]) or core[j] <= tol * core[k]:
            break
        k = j
    if k == len(LAGS) - 1:
        # still growing at the longest lag: a smooth signal (a fringe, a broad band), not
        # noise shared by a few neighbours, which levels off within a few lags
        return rms[0], LAGS[0]
    return rms[k], LAGS[k]


# ---------------------------------------------------------------------------- public
def _auto(y: np.ndarray) -> NoiseEstimate:
    n = y.size
    q = quantum(y)
    q_floor = q / math.sqrt(12.0)
    span = float(y.max() - y.min())
    sigma = max(_start_sigma(y), q_floor)
    if sigma == 0.0:
        sigma = EXACT_FLOOR * span if span > 0 else EXACT_FLOOR
    free = np.ones(n, dtype=bool)
    lag, used = 1, n
    for _ in range(60):
        free = line_free_mask(y, sigma)
        rms, core, counts = zip(*(lag_sigma(y, free, L) for L in LAGS))
        if not math.isfinite(rms[0]):
            sigma *= 1.25  # too few line-free pairs at this σ: look less strictly
            continue
        new, lag = _walk_lags(list(rms), list(core), counts[0], q > 0)
        used = counts[LAGS.index(lag)]
        new = max(new, q_floor)
        if new <= 0.0:
            break
        done = abs(new - sigma) <= 1e-3 * sigma
        sigma = new
        if done:
            break
    floor = ""
    if q_floor > 0 and sigma <= q_floor * (1 + 1e-12):
        floor = "digitisation"
    exact = EXACT_FLOOR * (span if span > 0 else 1.0)
    if sigma <= exact:
        sigma, floor = exact, "exact data"
    frac = float(free.mean())
    note = ""
    if frac < FEW_FREE:
        note = (f"only {100 * frac:.1f} % of the points are free of lines, so σ may be "
                "too high; give noise_region=(lo, hi) over a flat stretch")
    return NoiseEstimate(sigma=float(sigma), method="line-free points", n_used=int(used),
                         line_free_fraction=frac, lag=int(lag), quantum=q, floor=floor,
                         note=note)


def _region(x: np.ndarray, y: np.ndarray, region) -> NoiseEstimate:
    try:
        lo, hi = sorted(float(v) for v in region)
    except (TypeError, ValueError):
        raise ProcessingError(f"noise_region must be (lo, hi) in cm-1, got {region!r}") from None
    if not (math.isfinite(lo) and math.isfinite(hi)):
        raise ProcessingError(f"noise_region must be finite numbers in cm-1, got {region!r}")
    keep = (x >= lo) & (x <= hi)
    n = int(keep.sum())
    if n < 10:
        raise ProcessingError(
            f"noise_region ({lo:.6g}, {hi:.6g}) cm-1 holds {n} points of the spectrum "
            f"({x[0]:.6g}-{x[-1]:.6g} cm-1); give a flat stretch of at least 10 points")
    xs, ys = x[keep], y[keep]
    t = xs - xs.mean()
    coef = np.polyfit(t, ys, 1)
    r = ys - np.polyval(coef, t)
    sigma = _clipped_rms(r) * math.sqrt(n / (n - 2))
    q = quantum(ys)
    floor = ""
    if sigma < q / math.sqrt(12.0):
        sigma, floor = q / math.sqrt(12.0), "digitisation"
    if sigma <= 0.0:
        span = float(np.ptp(y))
        sigma, floor = EXACT_FLOOR * (span if span > 0 else 1.0), "exact data"
    return NoiseEstimate(sigma=float(sigma), method="noise region", n_used=n, quantum=q,
                         floor=floor, region=(lo, hi))


def measure_noise(x, y, *, noise_region=None) -> NoiseEstimate:
    """Measure the noise σ of ``y`` (see the module docstring for the method).

    Parameters
    ----------
    x : array_like, shape (n,) or None
        Wavenumber, cm⁻¹, ascending; needed only with ``noise_region``.
    y : array_like, shape (n,), n ≥ 3
        The values (any sign convention: dips and peaks count alike).
    noise_region : (lo, hi), optional
        A flat, line-free stretch in cm⁻¹; σ is then measured there only.

    Returns
    -------
    NoiseEstimate
        σ (> 0) and how it was obtained; with ``x`` given and σ measured on the line-free
        points, also where the spectrum is noisier (``profile``, :mod:`.noise_profile`).

    Raises
    ------
    ProcessingError
        On bad arrays, or a region with fewer than 10 points.
    """
    if noise_region is not None:
        if x is None:
            raise ProcessingError("noise_region needs the x values (cm-1) of the spectrum")
        xa, ya = as_xy(x, y)
        return _region(xa, ya, noise_region)
    if x is None:
        return _auto(as_y(y))
    xa, ya = as_xy(x, y)
    est = _auto(ya)
    if est.floor:
        return est
    profile = noise_profile(xa, ya, est.sigma, est.lag)
    return est if profile is None else dataclasses.replace(est, profile=profile)


def estimate_noise(y, *, x=None, noise_region=None) -> float:
    """The noise σ of ``y`` in y units: :func:`measure_noise` ``.sigma``.

    Never 0: digitised data get the rounding floor q/√12, exact data 10⁻⁹ of
    their range (see the module docstring).
    """
    return measure_noise(x, y, noise_region=noise_region).sigma

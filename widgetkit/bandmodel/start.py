"""Start values of a band-model fit from the spectrum alone (private).

1. Baseline: a straight line under the lower envelope (:func:`.quick.baseline_line`).
2. P and R maxima and the line spacing (:func:`.quick.pr_separation`).
3. Resolved lines (a regular comb was found): the strongest peaks are indexed from the
   band-origin gap (R(0)–P(1) is twice the neighbouring spacings) with the running
   number m, and ν(m) = ν₀ + (B′+B″) m + (B′−B″) m² − 2(D′+D″) m³ is fitted
   (Herzberg 1950, ch. III) for ν₀, B′, B″ and D; T from a Boltzmann plot of the peak
   heights, ln(h/|m|) against B″J″(J″+1) (slope −c₂/T).
4. Unresolved contour: ν₀ at the dip between the maxima, B from the P–R separation
   at the start temperature (given, else 296 K), B′ = B″ (1 − 0.01), D from the Kratzer
   relation.
5. Band area: the integrated absorbance above the baseline.

Every number says where it came from (``sources``), so the result can report it.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.integrate import trapezoid
from scipy.ndimage import gaussian_filter1d

from ..errors import FitError
from ..oscillator import C2
from .build import kratzer_d
from .quick import (
    PRSeparation,
    _absorbance_like,
    _detrend,
    _pr_from_uniform,
    _uniform,
    baseline_line,
    contour_like,
    pr_from_transmittance,
    saturated,
    strong_peaks,
)

__all__ = ["estimate_starts", "index_comb"]

DEFAULT_TEMPERATURE = 296.0  # K, room temperature (common practice)
DEFAULT_LORENTZ = 0.05  # cm-1 HWHM, a small molecule near 1 atm (common practice, order of magnitude)


def _median(v: list[float]) -> float:
    """np.median of a short list (the same value, without the array overhead)."""
    v = sorted(float(a) for a in v)
    n = len(v)
    return v[n // 2] if n % 2 else (v[n // 2 - 1] + v[n // 2]) / 2.0


def index_comb(xu: np.ndarray, au: np.ndarray, spacing: float, centre: float):
    """Index the strongest peaks of a resolved band by their running number m.

    Returns (positions, heights, m) of the indexed peaks, or None when no band-origin
    gap is found near ``centre``.
    """
    top = float(au.max())
    pk = strong_peaks(xu, au, spacing, floor=0.05 * top, radius=0.45)
    if pk.size < 5:
        return None
    p, h = xu[pk], au[pk]
    sp = np.diff(p)
    best, best_d = None, math.inf
    for i in range(sp.size):
        nb = [sp[j] for j in (i - 2, i - 1, i + 1, i + 2) if 0 <= j < sp.size]
        local = _median(nb) if nb else spacing
        if 1.5 * local < sp[i] < 2.6 * local:
            mid = 0.5 * (p[i] + p[i + 1])
            if abs(mid - centre) < best_d:
                best, best_d = i, abs(mid - centre)
    if best is None or best_d > 3.0 * spacing:
        return None
    m = np.zeros(p.size, dtype=int)
    m[best + 1] = 1
    for k in range(best + 2, p.size):  # R branch: m = 1, 2, ...
        d_prev = p[k - 1] - p[k - 2] if k - 2 > best else spacing
        m[k] = m[k - 1] + max(1, int(round((p[k] - p[k - 1]) / d_prev)))
    m[best] = -1
    for k in range(best - 1, -1, -1):  # P branch: m = -1, -2, ...
        d_prev = p[k + 2] - p[k + 1] if k + 2 <= best else spacing
        m[k] = m[k + 1] - max(1, int(round((p[k + 1] - p[k]) / d_prev)))
    return p, h, m


def _from_comb(p, h, m, temperature: float | None):
    """ν₀, B′, B″, D (and T) from indexed peaks; None when the fit is poor."""
    sel = np.abs(m) <= 25
    p, h, m = p[sel], h[sel], m[sel].astype(float)
    if p.size < 5:
        return None
    deg = 3 if p.size >= 8 else 2
    A = np.column_stack([m**k for k in range(deg + 1)])
    coef, *_ = np.linalg.lstsq(A, p, rcond=None)
    rms = float(np.sqrt(np.mean((A @ coef - p) ** 2)))
    nu0, b_sum, b_diff = coef[0], coef[1], coef[2]
    Bl, Bu = 0.5 * (b_sum - b_diff), 0.5 * (b_sum + b_diff)
    if not (Bl > 0 and Bu > 0) or rms > 0.15 * b_sum:
        return None
    D = -coef[3] / 4.0 if deg == 3 and coef[3] < 0 else kratzer_d(Bl, nu0)
    out = {"band_origin": float(nu0), "B_lower": float(Bl), "B_upper": float(Bu), "D": float(D)}
    if temperature is None:
        J = np.where(m > 0, m - 1, -m)
        y = np.log(np.maximum(h, 1e-12) / np.abs(m))
        E = Bl * J * (J + 1)
        if np.ptp(E) > 0 and h.size >= 4:
            slope = np.polyfit(E, y, 1)[0]
            if slope < 0:
                out["temperature"] = float(np.clip(-C2 / slope, 20.0, 5000.0))
    return out


def _central_spacing(xu: np.ndarray, au: np.ndarray, pr: PRSeparation) -> float:
    """Median spacing of the strong peaks between the P and R maxima (≈ B′ + B″), or the
    periodogram's spacing when there are too few."""
    d = pr.line_spacing
    light = gaussian_filter1d(au, 1.0, mode="nearest")
    pk = strong_peaks(xu, light, d, floor=0.05 * float(light.max()), radius=0.45)
    p = xu[pk]
    sp = np.diff(p)
    mid = 0.5 * (p[1:] + p[:-1])
    inner = (mid > pr.p_max - d) & (mid < pr.r_max + d) & (sp > 0.6 * d) & (sp < 1.4 * d)
    return float(np.median(sp[inner])) if inner.sum() >= 4 else d


def _observed_fwhm(xu: np.ndarray, au: np.ndarray, i: int) -> float | None:
    """FWHM of the peak at index i (linear interpolation of the half-height crossings); None
    when a side reaches the end of the data, or a valley to a neighbouring line, before half
    height (blended lines: measured on CO at 2 cm⁻¹, lines 3.9 cm⁻¹ apart, the walk ran on
    over the neighbours and gave 21 cm⁻¹, and the fit started the resolution there and lost
    the band)."""
    half = 0.5 * au[i]
    lo = i
    while lo > 0 and au[lo] > half and au[lo - 1] <= au[lo]:
        lo -= 1
    hi = i
    while hi < au.size - 1 and au[hi] > half and au[hi + 1] <= au[hi]:
        hi += 1
    if lo == 0 or hi == au.size - 1 or au[lo] > half or au[hi] > half:
        return None
    xl = np.interp(half, [au[lo], au[lo + 1]], [xu[lo], xu[lo + 1]])
    xh = np.interp(half, [au[hi], au[hi - 1]], [xu[hi], xu[hi - 1]])
    return float(xh - xl)


def estimate_starts(x, y, *, y_kind: str, band, temperature: float | None,
                    resolution: float | None, spacing_in_B: float = 2.0
                    ) -> tuple[dict, dict, PRSeparation | None]:
    """Start values and their sources, and the P–R separation (None when not found).

    ``spacing_in_B`` is the line spacing in units of B: 2 (B′ + B″), or 4 when nuclear-spin
    statistics remove every other level (¹⁶O¹²C¹⁶O); then the lines are not indexed from
    the band-origin gap (its pattern differs) but B comes from the spacing.

    Returns ``(starts, sources, pr)``; starts has ``band_origin, B_upper, B_lower, D,
    temperature, band_area, baseline, lorentz_hwhm`` and, when lines are resolved,
    ``observed_fwhm``.
    """
    x = np.asarray(x, dtype=float)
    a = _absorbance_like(np.asarray(y, dtype=float), y_kind)
    b0, b1 = baseline_line(x, a)
    xu, au, step = _uniform(x, _detrend(x, a, (b0, b1)))
    src: dict[str, str] = {}
    # pr_separation(x, y, ...) on the grid made above
    try:
        if saturated(y, y_kind):
            cu = _uniform(x, _detrend(x, contour_like(y, y_kind)))[1]
            pr = pr_from_transmittance(xu, au, cu, step, resolution=resolution)
        else:
            pr = _pr_from_uniform(xu, au, step, resolution=resolution)
    except FitError:
        pr = None
    T0 = float(temperature) if temperature is not None else DEFAULT_TEMPERATURE
    st: dict = {"baseline": [b0, b1], "temperature": T0, "lorentz_hwhm": DEFAULT_LORENTZ}
    src["temperature"] = "given" if temperature is not None else "default (296 K)"
    src["lorentz_hwhm"] = "default (0.05 cm-1)"
    comb = None
    if pr is not None and pr.line_spacing is not None and spacing_in_B == 2.0:
        light = gaussian_filter1d(au, 1.0, mode="nearest")
        idx = index_comb(xu, light, pr.line_spacing, pr.centre)
        if idx is not None:
            comb = _from_comb(*idx, temperature)
            if comb is not None:
                i_top = int(np.argmin(np.abs(xu - idx[0][np.argmax(idx[1])])))
                fw = _observed_fwhm(xu, light, i_top)
                if fw is not None:
                    st["observed_fwhm"] = fw
    st["spacing"] = pr.line_spacing if pr is not None else None
    st["indexed"] = comb is not None
    st["index_skipped"] = spacing_in_B != 2.0
    if comb is not None:
        st.update(comb)
        for k in ("band_origin", "B_upper", "B_lower", "D"):
            src[k] = "indexed line positions"
        if "temperature" in comb:
            src["temperature"] = "Boltzmann plot of peak heights"
    elif pr is not None and pr.line_spacing is not None:
        # resolved lines that could not be indexed: B from the spacing, T from the envelope
        B = _central_spacing(xu, au, pr) / spacing_in_B
        st.update(band_origin=pr.centre, B_lower=B, B_upper=B * 0.99, D=kratzer_d(B, pr.centre))
        for k in ("band_origin", "B_upper", "B_lower"):
            src[k] = f"line spacing {pr.line_spacing:.4g} cm-1 and the P-R maxima"
        src["D"] = "Kratzer relation"
        if temperature is None:
            st["temperature"] = float(np.clip(pr.temperature(B), 20.0, 5000.0))
            src["temperature"] = f"P-R separation {pr.separation:.4g} cm-1 with B from the spacing"
    elif pr is not None:
        B = pr.rotational_constant(T0)
        st.update(band_origin=pr.centre, B_lower=B, B_upper=B * 0.99,
                  D=kratzer_d(B, pr.centre))
        for k in ("band_origin", "B_upper", "B_lower"):
            src[k] = f"P-R separation {pr.separation:.4g} cm-1 at {T0:g} K"
        src["D"] = "Kratzer relation"
    else:
        raise FitError(
            "cannot find the band in the spectrum: neither resolved rotational lines nor P and R "
            "branch maxima; crop the spectrum to one band, or give start values, e.g. "
            "start={'band_origin': 2143.0, 'B_lower': 1.92}")
    st["band_area"] = float(max(trapezoid(np.clip(au, 0, None), xu), 1e-12))
    src["band_area"] = "integrated absorbance"
    src["baseline"] = "spectrum ends"
    return st, src, pr

"""Does the fitted model put the P and R branch maxima where the data have them?
(private; :func:`check_contour`, used by :meth:`.stages.Run.result`)

A band model fitted to an unresolved contour takes B·T from the whole shape of the
contour: its wings, its depth, the slit function, the line shape. When the model cannot
describe that shape (saturated lines under a coarse slit, a trace smoothed by hand when
it was digitised, another band underneath) the least-squares optimum can sit far from
the constants while the residual still looks modest. The positions of the two branch
maxima depend on B·T alone to first order (Δν ≈ K √(B T), :mod:`widgetkit.levels.contour`)
and are the most robust measure of it, so the data's and the model's maxima are compared
with the same smoothing. A mismatch larger than the noise allows and than
:data:`TOLERANCE` of the separation marks the fit doubtful, says what the separation
alone gives, and widens the standard errors of the parameters that the contour
determines (B and T for an unresolved band, T alone when the lines are resolved and
their positions fix B) by the relative error it implies: δ(BT)/(BT) = 2 δΔ/Δ.

Measured on a real digitised CO spectrum (a 1964 grating spectrum, 400 mmHg in 10 cm,
transmittance down to 0.15, nominal resolution 4 cm⁻¹, "congested rotational lines
smoothened" by the digitiser): with T fixed at 296 K the model gave B_e = 2.31 ± 0.045
cm⁻¹ "ok" while the maxima 56.3 cm⁻¹ apart give 1.93 (B_e of CO is 1.931 cm⁻¹).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import FitError
from .quick import (
    PRSeparation,
    _pr_from_uniform,
    contour_like,
    point_noise,
    smooth,
)

__all__ = ["ContourCheck", "check_contour", "TOLERANCE", "NOISE_SIGMAS"]

#: a separation mismatch below this fraction of the separation passes whatever the noise
#: (2 % of Δν is 4 % of B·T)
TOLERANCE = 0.02
#: and a mismatch must exceed this many standard deviations of the noise-driven spread of
#: the separation (:func:`separation_noise`)
NOISE_SIGMAS = 5.0
#: the contour is smoothed over this many line spacings for the check (the spacing found
#: in the data, else 2B of the fit), so that no ripple of resolved lines is left to decide
#: where a maximum sits (at 1.2 spacings the maxima of simulated CO bands jumped by a whole
#: spacing from one noise draw to the next)
RESOLVED_SMOOTHING = 2.0


@dataclass(frozen=True)
class ContourCheck:
    """The comparison of the data's and the model's P–R branch maxima.

    Attributes
    ----------
    data, model : PRSeparation
        The maxima of the data and of the fitted model (the same smoothing, both with the
        model's baseline removed); ``model`` is None when the model has no two maxima.
    allowed : float
        The largest mismatch (cm⁻¹) that passes.
    estimate : PRSeparation or None
        The data's maxima at the start's (lighter) smoothing: the quick estimate quoted
        when the check fails (the heavier smoothing of the comparison moves both maxima).
    passed : bool
    widened : dict
        Parameter name -> factor its standard error was widened by (empty when passed).
    """

    data: PRSeparation
    model: PRSeparation | None
    allowed: float
    passed: bool
    widened: dict = field(default_factory=dict)
    estimate: PRSeparation | None = None

    @property
    def mismatch(self) -> float:
        """Model minus data separation (cm⁻¹); inf when the model has no maxima."""
        return math.inf if self.model is None else self.model.separation - self.data.separation

    def relative_product_error(self) -> float:
        """The relative error of B·T the mismatch implies, 2|δΔ|/Δ."""
        return 2.0 * abs(self.mismatch) / self.data.separation

    def to_dict(self) -> dict:
        return {"data_separation": self.data.separation,
                "model_separation": None if self.model is None else self.model.separation,
                "allowed": self.allowed, "passed": self.passed, "widened": dict(self.widened)}


#: the contour is averaged in bins of at most this fraction of the smoothing width before it
#: is smoothed (the check's cost; the maxima of the smoothed contour do not move)
BIN_FRACTION = 0.05


def _band_part(y: np.ndarray, baseline_y: np.ndarray, y_kind: str) -> np.ndarray:
    """What the band adds to the baseline: absorbance, or for transmittance data the
    absorptance 1 − T/T_baseline (:func:`.quick.contour_like`; a floored logarithm biased
    noisy data against the model by a whole standard deviation of the separation)."""
    if y_kind == "transmittance":
        return contour_like(y / np.clip(baseline_y, 1e-6, None), y_kind)
    return y - baseline_y


def _binned(x: np.ndarray, a: np.ndarray, width: float) -> tuple[np.ndarray, np.ndarray, int]:
    """``a`` on a uniform grid of the mean step, averaged in bins of :data:`BIN_FRACTION` of
    ``width``: (grid, values, points per bin)."""
    step = (x[-1] - x[0]) / (x.size - 1)
    xu = np.linspace(x[0], x[-1], x.size)
    au = np.interp(xu, x, a)
    b = max(int(BIN_FRACTION * width / step), 1)
    if b > 1:
        m = au.size // b
        xu = xu[:m * b].reshape(m, b).mean(axis=1)
        au = au[:m * b].reshape(m, b).mean(axis=1)
    return xu, au, b


def separation_noise(xu: np.ndarray, smoothed: np.ndarray, sigma: np.ndarray, width: float,
                     maxima: tuple[float, float]) -> float:
    """Standard deviation (cm⁻¹) of the separation of two maxima of a contour smoothed by a
    Gaussian of FWHM ``width`` from independent noise ``sigma`` per point (an array: the
    noise may vary along the contour). A maximum moves by
    δx = −δs′/s″ (s the smoothed contour), and δs′ = Σ h g′(x₀ − x_k) ε_k for the kernel g
    on a grid of step h (first-order propagation; common practice for a peak's position)."""
    h = float(xu[1] - xu[0])
    s = width / 2.3548
    var = 0.0
    for x0 in maxima:
        i = int(np.clip(np.searchsorted(xu, x0), 1, xu.size - 2))
        curv = (smoothed[i - 1] - 2.0 * smoothed[i] + smoothed[i + 1]) / h ** 2
        if not curv < 0:
            return math.inf
        near = slice(max(i - int(5 * s / h) - 1, 0), i + int(5 * s / h) + 2)
        t = x0 - xu[near]
        g1 = -t / s ** 2 * np.exp(-0.5 * (t / s) ** 2) / (s * math.sqrt(2.0 * math.pi))
        var += float(np.sum((h * g1 * sigma[near]) ** 2)) / curv ** 2
    return math.sqrt(var)


def check_contour(x, y, model_y, baseline_y, y_kind: str, start: PRSeparation | None,
                  rotational_constant: float) -> ContourCheck | None:
    """Compare the maxima (None when the data have no P–R maxima to compare: no ``start``
    separation, or none found above the model's baseline). ``rotational_constant``: the
    fitted B (cm⁻¹), for the smoothing when the data's line spacing was not found."""
    if start is None:
        return None
    spacing = start.line_spacing or 2.0 * abs(rotational_constant)
    width = max(start.smoothing, RESOLVED_SMOOTHING * spacing)
    xu, au, b = _binned(x, _band_part(y, baseline_y, y_kind), width)
    _, am, _ = _binned(x, _band_part(model_y, baseline_y, y_kind), width)
    step = float(xu[1] - xu[0])
    try:
        data = _pr_from_uniform(xu, au, step, smoothing=width, find_spacing=False)
    except FitError:
        return None
    try:
        model = _pr_from_uniform(xu, am, step, smoothing=data.smoothing, find_spacing=False)
    except FitError:
        model = None
    if model is None:
        return ContourCheck(data=data, model=None, allowed=TOLERANCE * data.separation,
                            passed=False, estimate=start)
    # white noise per point (of the absorptance too: 1 - T is linear in T), averaged over
    # the bins
    sigma = np.full(xu.size, point_noise(np.asarray(y, dtype=float)) / math.sqrt(b))
    # the curvature of the maxima from the model's (noise-free) contour
    noise = separation_noise(xu, smooth(am, max(data.smoothing / step / 2.3548, 0.5)), sigma,
                             data.smoothing, (model.p_max, model.r_max))
    allowed = max(NOISE_SIGMAS * noise, TOLERANCE * data.separation)
    passed = abs(model.separation - data.separation) <= allowed
    return ContourCheck(data=data, model=model, allowed=allowed, passed=passed, estimate=start)


def contour_parameters(names: list[str], free: list[int], resolved: bool) -> list[int]:
    """Indices of the free parameters the contour's width determines: T, and B unless the
    lines are resolved (their positions fix B)."""
    out = []
    for k in free:
        n = names[k]
        if n == "temperature" or (not resolved and (n == "B_e" or n.startswith(("B_lower",
                                                                                "B_upper")))):
            out.append(k)
    return out


def widen_for_contour(cov: np.ndarray, theta: np.ndarray, names: list[str], free: list[int],
                      check: ContourCheck) -> tuple[np.ndarray, ContourCheck]:
    """``cov`` with the contour-determined parameters' standard errors widened (rows and
    columns scaled, correlations kept) to cover the relative error 2|δΔ|/Δ."""
    if check.passed:
        return cov, check
    resolved = check.data.line_spacing is not None
    rel = check.relative_product_error() if check.model is not None else 1.0
    cov = cov.copy()
    widened = {}
    for k in contour_parameters(names, free, resolved):
        var = float(cov[k, k])
        extra = (rel * abs(theta[k])) ** 2
        h = math.sqrt(1.0 + extra / var) if var > 0 else 1.0
        if h > 1.0:
            cov[k, :] *= h
            cov[:, k] *= h
            widened[names[k]] = h
    return cov, dataclasses.replace(check, passed=False, widened=widened)


def contour_reason(check: ContourCheck, theta: dict, free: list[str]) -> str:
    """Why a fit whose maxima miss the data's is doubtful, with what the separation alone
    gives: T with B held (fixed by the user), else B at the fit's T."""
    d = check.data
    if check.model is None:
        head = (f"the data's P and R branch maxima are {d.separation:.1f} cm-1 apart but the "
                "fitted model has no two maxima")
    else:
        head = (f"the model's P and R branch maxima are {check.model.separation:.1f} cm-1 apart, "
                f"the data's {d.separation:.1f} (the same smoothing, {d.smoothing:.2g} cm-1)")
    text = (head + ": the model does not reproduce the band contour (saturated lines, the slit "
            "function, a trace smoothed when it was digitised, another band underneath)")
    d = check.estimate or d
    T = float(theta.get("temperature", float("nan")))
    B = float(theta.get("B_lower", theta.get("B_e", float("nan"))))
    b_free = any(n == "B_e" or n.startswith(("B_lower", "B_upper")) for n in free)
    rel = 2.0 * d.uncertainty / d.separation
    if "temperature" in free and not b_free and math.isfinite(B) and B > 0:
        t_alt = d.temperature(B)
        text += (f"; the separation alone gives T ≈ {t_alt:.4g} ± {rel * t_alt:.2g} K with "
                 f"B = {B:.5g} cm-1")
    elif math.isfinite(T) and T > 0:
        b_alt = d.rotational_constant(T)
        text += (f"; the separation alone gives B ≈ {b_alt:.4g} ± {rel * b_alt:.2g} cm-1 at "
                 f"{T:.4g} K")
    if check.widened:
        text += "; standard errors widened for the mismatch (" + ", ".join(
            f"{n} ×{h:.2g}" for n, h in check.widened.items()) + ")"
    return text + " (widgetkit.bandmodel.pr_separation gives the estimate)"

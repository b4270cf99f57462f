"""Baselines under upward peaks: iteratively masked polynomial and asymmetric
least squares.

Peaks point up (absorbance, intensity), so both methods put the baseline
*under* them. Both are pure functions of the arrays; :func:`subtract_baseline`
applies one to a :class:`~widgetkit.spectrum.Spectrum`.
"""

from __future__ import annotations

import inspect
import math

import numpy as np
from scipy.linalg import solveh_banded

from ..errors import FitError
from ..spectrum import Spectrum
from ._common import ProcessingError, as_xy, as_y
from .noise import estimate_noise

__all__ = [
    "BASELINE_METHODS",
    "baseline_als",
    "baseline_poly",
    "second_difference_penalty",
    "subtract_baseline",
]


def baseline_poly(
    x,
    y,
    *,
    degree: int = 3,
    k: float = 3.0,
    noise: float | None = None,
    max_iter: int = 100,
    tol: float = 0.01,
) -> np.ndarray:
    """Polynomial baseline fitted to the points that are not peaks.

    Algorithm: scale x to t ∈ [−1, 1], t = (2x − x₀ − x₋₁)/(x₋₁ − x₀), and fit
    ``y`` by least squares with Chebyshev polynomials T₀(t) … T_degree(t)
    (well conditioned for any degree). Then repeat:

    1. mask the points above the fit, y > b + k·σ (peaks), with σ the noise;
    2. refit using only the unmasked points;

    until the mask does not change or the baseline moves by less than
    ``tol·σ`` at every point. σ is :func:`estimate_noise` of ``y`` unless
    given; a floor of 10⁻⁹ × (max y − min y) keeps rounding from counting as a
    peak on noise-free data.

    Parameters
    ----------
    x : array_like, shape (n,)
        Ascending wavenumber (cm⁻¹); the spacing may vary.
    y : array_like, shape (n,)
        Values with peaks pointing up.
    degree : int, default 3
        Polynomial degree, 0 ≤ degree < n.
    k : float, default 3.0
        Mask threshold in units of σ.
    noise : float, optional
        σ in y units (> 0); default estimated from ``y``.
    max_iter : int, default 100
        Most refits after the first.
    tol : float, default 0.01
        Convergence on the baseline change, in units of σ.

    Returns
    -------
    ndarray, shape (n,)
        The baseline at every x.

    Raises
    ------
    ProcessingError
        On invalid arrays or options.
    FitError
        When fewer than ``degree + 1`` points stay unmasked, or the mask has
        not settled after ``max_iter`` refits.
    """
    xa, ya = as_xy(x, y)
    deg = _int_option("degree", degree, 0)
    if deg >= xa.size:
        raise ProcessingError(
            f"degree={deg} needs more than {deg} points, the data has {xa.size}; lower degree"
        )
    iters = _int_option("max_iter", max_iter, 1)
    kk = _positive("k", k)
    tolerance = _positive("tol", tol)
    sigma = estimate_noise(ya) if noise is None else _positive("noise", noise)
    span = float(ya.max() - ya.min())
    thresh = max(kk * sigma, 1e-9 * span)
    step_tol = max(tolerance * sigma, 1e-12 * span)

    t = (2.0 * xa - xa[0] - xa[-1]) / (xa[-1] - xa[0])
    basis = np.polynomial.chebyshev.chebvander(t, deg)

    def fit(mask: np.ndarray) -> np.ndarray:
        coef, *_ = np.linalg.lstsq(basis[mask], ya[mask], rcond=None)
        return basis @ coef

    mask = np.ones(xa.size, dtype=bool)
    base = fit(mask)
    for _ in range(iters):
        new_mask = ya <= base + thresh
        kept = int(new_mask.sum())
        if kept < deg + 1:
            raise FitError(
                f"only {kept} of {xa.size} points lie under the degree-{deg} baseline, too few "
                "to fit it; lower degree, crop to the region around the band, or raise k"
            )
        if np.array_equal(new_mask, mask):
            return base
        new_base = fit(new_mask)
        moved = float(np.max(np.abs(new_base - base)))
        mask, base = new_mask, new_base
        if moved < step_tol:
            return base
    raise FitError(
        f"the polynomial baseline did not settle after max_iter={iters} refits (the set of "
        "points treated as peaks kept changing); raise max_iter or tol, or lower degree"
    )


def second_difference_penalty(n: int) -> np.ndarray:
    """D′D for the second-difference matrix D of shape (n − 2, n), in the upper
    banded form of :func:`scipy.linalg.solveh_banded` (shape (3, n)).

    Row 2 is the diagonal (1, 5, 6, …, 6, 5, 1), row 1 the first
    super-diagonal (−2, −4, …, −4, −2) shifted right by one, row 0 the second
    super-diagonal (1, …, 1) shifted right by two; for n = 3 the diagonal is
    (1, 4, 1).
    """
    if n < 3:
        raise ProcessingError(f"a second-difference penalty needs n >= 3, got {n}")
    ab = np.zeros((3, n))
    diag = ab[2]
    diag[:-2] += 1.0
    diag[1:-1] += 4.0
    diag[2:] += 1.0
    off1 = np.zeros(n - 1)
    off1[:-1] -= 2.0
    off1[1:] -= 2.0
    ab[1, 1:] = off1
    ab[0, 2:] = 1.0
    return ab


def baseline_als(y, *, lam: float = 1e5, p: float = 0.01, max_iter: int = 10) -> np.ndarray:
    """Asymmetric least squares baseline (Eilers and Boelens, 2005).

    Eilers, P. H. C. and Boelens, H. F. M., "Baseline correction with
    asymmetric least squares smoothing" (Leiden University Medical Centre
    report, 2005). The baseline z minimises

    .. math::

        S = \\sum_i w_i (y_i - z_i)^2 + \\lambda \\sum_i (\\Delta^2 z_i)^2,

    which for fixed weights is the linear system (W + λ D′D) z = W y with
    W = diag(w) and D the second-difference matrix. Starting from w = 1, each
    iteration solves it and sets wᵢ = p where yᵢ > zᵢ (points above the
    baseline: peaks) and wᵢ = 1 − p elsewhere (the published code gives an
    exact tie yᵢ = zᵢ weight 0; here it gets 1 − p, which keeps the system
    positive definite); iterations stop after
    ``max_iter`` or as soon as the weights repeat (a further step would give
    the same z). W + λ D′D is symmetric positive definite and pentadiagonal, so
    each step is a banded Cholesky solve (:func:`scipy.linalg.solveh_banded`),
    O(n) in time and memory.

    The penalty counts samples, not cm⁻¹: ``lam`` is for equally spaced data,
    and the smoothness it gives scales with the number of points (roughly,
    features narrower than about λ^(1/4) samples are not followed).

    Parameters
    ----------
    y : array_like, shape (n,), n ≥ 3
        Values with peaks pointing up, equally spaced.
    lam : float, default 1e5
        Smoothness λ > 0.
    p : float, default 0.01
        Asymmetry, 0 < p < 1 (small: the baseline stays under the peaks;
        p = 0.5 gives the symmetric Whittaker smoother: with every weight ½ the
        converged z solves (I + 2λ D′D) z = y, and ``max_iter=1`` (w = 1)
        solves (I + λ D′D) z = y).
    max_iter : int, default 10
        Most reweighting iterations (the published procedure uses 10).

    Returns
    -------
    ndarray, shape (n,)
    """
    ya = as_y(y)
    lam_ = _positive("lam", lam)
    p_ = float(p)
    if not (math.isfinite(p_) and 0.0 < p_ < 1.0):
        raise ProcessingError(f"p must lie strictly between 0 and 1, got {p!r}")
    iters = _int_option("max_iter", max_iter, 1)
    penalty = lam_ * second_difference_penalty(ya.size)
    w = np.ones(ya.size)
    z = ya
    for _ in range(iters):
        ab = penalty.copy()
        ab[2] += w
        z = solveh_banded(ab, w * ya, check_finite=False)
        new_w = np.where(ya > z, p_, 1.0 - p_)
        if np.array_equal(new_w, w):
            break
        w = new_w
    return z


#: method name -> baseline function; options are the function's keyword arguments
BASELINE_METHODS = {"poly": baseline_poly, "als": baseline_als}


def subtract_baseline(
    spectrum: Spectrum, method: str = "poly", **opts
) -> tuple[Spectrum, np.ndarray]:
    """Subtract a baseline from an absorbance or intensity spectrum.

    Parameters
    ----------
    spectrum : Spectrum
        ``y_kind`` ``"absorbance"`` or ``"intensity"`` (peaks up).
        Transmittance is refused: convert it with
        :func:`~widgetkit.processing.to_absorbance` first.
    method : {"poly", "als"}, default "poly"
        :func:`baseline_poly` (options ``degree, k, noise, max_iter, tol``) or
        :func:`baseline_als` (options ``lam, p, max_iter``).
    **opts
        Options of the chosen method, passed on unchanged.

    Returns
    -------
    corrected : Spectrum
        ``y - baseline``, same ``x``, ``y_kind``, ``meta`` and ``source``.
    baseline : ndarray, shape (n,)

    Raises
    ------
    ProcessingError
        On an unknown method or option (the message lists the accepted ones)
        or a transmittance spectrum.
    """
    if method not in BASELINE_METHODS:
        raise ProcessingError(
            f"unknown baseline method {method!r}; use one of "
            + ", ".join(repr(m) for m in BASELINE_METHODS)
        )
    func = BASELINE_METHODS[method]
    accepted = baseline_options(method)
    unknown = sorted(set(opts) - set(accepted))
    if unknown:
        raise ProcessingError(
            f"unknown option(s) {', '.join(unknown)} for baseline method {method!r}; "
            f"it accepts {', '.join(accepted)}"
        )
    if spectrum.y_kind == "transmittance":
        raise ProcessingError(
            "baselines are fitted under upward peaks, but transmittance bands point down; "
            "convert with to_absorbance() first"
        )
    if method == "poly":
        base = func(spectrum.x, spectrum.y, **opts)
    else:
        base = func(spectrum.y, **opts)
    return spectrum.replace(y=spectrum.y - base), base


def baseline_options(method: str) -> tuple[str, ...]:
    """The option names :func:`subtract_baseline` accepts for ``method``."""
    params = inspect.signature(BASELINE_METHODS[method]).parameters.values()
    return tuple(q.name for q in params if q.kind is inspect.Parameter.KEYWORD_ONLY)


def _positive(name: str, value) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError) as exc:
        raise ProcessingError(f"{name} must be a positive number, got {value!r}") from exc
    if not (math.isfinite(v) and v > 0):
        raise ProcessingError(f"{name} must be a positive number, got {value!r}")
    return v


def _int_option(name: str, value, minimum: int) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        raise ProcessingError(f"{name} must be an integer >= {minimum}, got {value!r}")
    if value < minimum:
        raise ProcessingError(f"{name} must be an integer >= {minimum}, got {value!r}")
    return int(value)

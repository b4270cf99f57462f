"""Rendering a line list into an observed spectrum, with its derivatives (private).

Every line k is a Voigt profile of area I_k at ν_k, with Gaussian part σ_k and a
Lorentzian HWHM γ common to all lines, seen through the instrument (ILS, see
:mod:`.instrument`). The computation is exact up to sampling and uses one FFT
per column:

1. **Deposit.** On a uniform working grid u (spacing h, covering the data with a
   margin) each line is deposited as a sampled Gaussian of width s_k ≥ 1.5 h,
   evaluated exactly, D(u) = Σ_k I_k g(u − ν_k; s_k).
2. **Convolve in Fourier space.** The remaining factors are applied as their exact
   transforms at path differences t: Lorentz exp(−2πγ|t|), the instrument A(t), and
   for band-limited instruments (boxcar, triangular) the deconvolution
   exp(+2π²τ²t²) of a common auxiliary width τ put into every deposit
   (s_k² = σ_k² + τ², τ ≤ 0.3/L, so the factor never exceeds e^{1.8} where A(t) ≠ 0).
   With a Gaussian instrument its σ goes into the deposit instead; beyond 8 data steps
   only two steps of it do (the rest is applied as its transform, exp(−2π²σ²t²)).
3. **Sample** at the data points: the grid is aligned with a uniform data grid
   (h = Δx/k), otherwise a cubic spline interpolates.

Two convolution domains:

* ``"absorbance"`` (the absorbance approximation): A_obs = ILS ⊛ A_mono, linear in the
  intensities; exact for weak lines and for lines wider than the instrument;
* ``"transmittance"``: A_obs = −log₁₀(ILS ⊛ 10^(−A_mono)), the physics of a
  spectrometer; the monochromatic A_mono is resolved on the grid (h ≤ s/3). Here τ is
  borrowed from the Lorentzian instead (τ ≤ γ/6, so that exp(−2πγt + 2π²τ²t²) ≤ 1 up to
  the grid's Nyquist frequency): pressure-broadened lines need no grid finer than γ/18.

Derivatives: for every parameter p, the deposit of
Σ_k (∂I_k/∂p g_k + I_k ∂ν_k/∂p ∂g_k/∂ν + I_k ∂s_k/∂p ∂g_k/∂s) goes through the same
transforms; γ and the resolution act on the kernel (∂K/∂γ = −2π|t| K, ∂A/∂Δ).
The circular convolution is padded by at least half the grid so wrapped wings are
negligible (the period is part of the model: with a quarter of the grid, the benchmark
band's baseline moved by 0.09 and its constants by 0.0014 standard errors, 4e-5 relative;
an unapodised instrument's fit by far more).

Cost (absorbance domain, what a fit repeats): one forward and one inverse transform for a
value; a Jacobian at the point of the last value (the solver's accepted step) reuses the
value's transform (``cache``) and transforms only the columns with a non-zero deposit
(a batch in float32), and back those and the kernel-only columns (γ, Δ); large work
arrays stay with the caller between calls (``work``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import fft as sfft

from ..errors import FitError
from .deposit import deposit as _deposit
from .deposit import sample as _sample
from .deposit import scratch as _scratch
from .instrument import SIGMA_PER_FWHM, transfer, transfer_derivative
from .kernel import (  # noqa: F401  (Kernel and its widths are imported from here too)
    GAUSS_DEPOSIT_STEPS,
    GAUSS_SPLIT_STEPS,
    Kernel,
    auxiliary_tau,
    deposit_extra,
    fourier_sigma,
)

__all__ = ["Grid", "make_grid", "render", "MAX_GRID", "fourier_sigma", "GAUSS_DEPOSIT_STEPS",
           "GAUSS_SPLIT_STEPS"]

LN10 = math.log(10.0)
#: largest working grid (points) before the fit refuses and asks for a narrower range
MAX_GRID = 4_000_000


@dataclass(frozen=True)
class Grid:
    """The working grid: u_j = u0 + j h, j < M; the FFT length ``n_fft`` ≥ M + padding;
    ``index`` the grid index of every data point when aligned, else None (spline)."""

    u0: float
    h: float
    M: int
    n_fft: int
    index: np.ndarray | None
    x: np.ndarray

    @property
    def u(self) -> np.ndarray:
        return self.u0 + self.h * np.arange(self.M)

    @property
    def t(self) -> np.ndarray:
        """Path differences (cm) of the rfft bins."""
        return np.arange(self.n_fft // 2 + 1) / (self.n_fft * self.h)


def uniform_step(x: np.ndarray) -> float | None:
    """The step of ``x`` when it is uniform to 1e-3 of a step, else None."""
    if x.size < 2:
        return None
    dx = (x[-1] - x[0]) / (x.size - 1)
    err = np.max(np.abs(x - (x[0] + dx * np.arange(x.size))))
    return float(dx) if err <= 1e-3 * dx else None


def make_grid(x: np.ndarray, h_max: float, margin: float, *, wrap: float = 0.0) -> Grid:
    """A working grid with spacing ≤ ``h_max`` covering x ± ``margin`` (cm⁻¹).

    ``wrap`` is the extra zero padding (cm⁻¹) needed against circular wrap-around,
    at least half the grid's span.
    """
    if not h_max > 0:
        raise FitError(f"the line widths imply a grid spacing of {h_max!r} cm-1; check the "
                       "temperature, widths and resolution")
    dx = uniform_step(x)
    if dx is not None:
        k = max(1, int(math.ceil(dx / h_max - 1e-9)))
        h = dx / k
        n_margin = int(math.ceil(margin / h))
        M = (x.size - 1) * k + 1 + 2 * n_margin
        u0 = float(x[0]) - n_margin * h
        index = n_margin + k * np.arange(x.size)
    else:
        h = min(h_max, float(np.min(np.diff(x))))
        u0 = float(x[0]) - margin
        M = int(math.ceil((float(x[-1]) + margin - u0) / h)) + 1
        index = None
    if M > MAX_GRID:
        raise FitError(
            f"the band model would need {M} grid points (spacing {h:.3g} cm-1 over "
            f"{x[-1] - x[0]:.4g} cm-1 plus margins) to resolve the narrowest lines; crop the "
            "spectrum to the band, or give the resolution and line widths (fix=...)")
    pad = max(M // 2, int(math.ceil(wrap / h)), 64)
    n_fft = sfft.next_fast_len(M + pad, real=True)
    return Grid(u0=u0, h=h, M=M, n_fft=n_fft, index=index, x=x)


class _Spectra:
    """Rows on the grid in Fourier space: the value in float64, derivatives in float32
    (their precision, 1e-7, is ample for a Jacobian and halves the transform time).
    Derivative rows whose deposit is zero (``live`` false) are not transformed: their
    spectrum is zero until a kernel term is added."""

    def __init__(self, grid: Grid, rows: np.ndarray, live: np.ndarray | None = None):
        """``rows``: the value row, then the derivative rows whose ``live`` flag is true
        (all of them when ``live`` is None)."""
        self.grid = grid
        self.v = sfft.rfft(rows[0], n=grid.n_fft, workers=1)
        self.d = None
        if live is None:
            if rows.shape[0] > 1:
                self.d = sfft.rfft(rows[1:].astype(np.float32), n=grid.n_fft, axis=-1, workers=1)
            return
        live = np.asarray(live, dtype=bool)
        if live.size:
            self.d = np.zeros((live.size, self.v.size), dtype=np.complex64)
            if live.any():
                self.d[live] = sfft.rfft(rows[1:].astype(np.float32), n=grid.n_fft, axis=-1,
                                         workers=1)

    def times(self, k: np.ndarray) -> _Spectra:
        out = object.__new__(_Spectra)
        out.grid = self.grid
        out.v = self.v * k
        out.d = None if self.d is None else self.d * k.astype(np.complex64)[None, :]
        return out

    def add(self, row: int, term: np.ndarray) -> None:
        """Add ``term`` (a full-precision spectrum) to derivative row ``row``."""
        self.d[row] += term.astype(np.complex64)

    def back(self) -> np.ndarray:
        """Rows on the grid, shape (1 + n_d, M), float64."""
        n, M = self.grid.n_fft, self.grid.M
        v = sfft.irfft(self.v, n=n, workers=1)[:M]
        if self.d is None:
            return v[None, :]
        out = np.empty((1 + self.d.shape[0], M))
        out[0] = v
        out[1:] = sfft.irfft(self.d, n=n, axis=-1, workers=1)[:, :M]
        return out


def render(grid: Grid, *args, **kwargs) -> tuple[np.ndarray, np.ndarray | None]:
    """Observed band absorbance at the data points and its derivatives.

    Arguments: ``grid, pos, area, sigma, kernel`` and the keywords below. Floating-point
    overflow is allowed: a solver's trial step may ask for absurd parameters; the result is
    then non-finite and the solver rejects the step.

    Parameters
    ----------
    grid : Grid
    pos, area, sigma : ndarray (L,)
        Line positions (cm⁻¹), areas (decadic absorbance × cm⁻¹) and Gaussian σ (cm⁻¹)
        of the monochromatic lines (Doppler, or a free Gaussian width).
    kernel : Kernel
    d_area, d_pos, d_sigma : ndarray (L, P), optional
        ∂area/∂p, ∂ν/∂p, ∂σ/∂p of the P parameters whose columns are wanted.
    d_gamma, d_resolution : int, optional
        The column that is ∂/∂γ, ∂/∂Δ (their kernel terms are added to it).
    cache : dict, optional
        Absorbance domain: a dict kept by the caller for one set of lines and kernel (the
        same ``pos, area, sigma, kernel`` and grid); the value and its spectrum are kept in
        it, so that the Jacobian at the point of the last value costs only its columns.
        Ignored in the transmittance domain.
    work : dict, optional
        Absorbance domain: a dict the caller keeps for this grid, where the large work
        arrays stay between calls (no fresh memory for every evaluation); the returned
        Jacobian is then one of them, valid until the next call with this dict.

    Returns
    -------
    y : ndarray (N,)
        At the data points, without baseline: the band absorbance A_obs in the
        ``"absorbance"`` domain, the band transmittance ILS ⊛ 10^(−A_mono) in the
        ``"transmittance"`` domain (it may leave [0, 1] slightly where an unapodised
        instrument rings next to saturated lines, as real spectra do).
    jac : ndarray (N, P) or None
        Derivatives of ``y`` (float32 in the absorbance domain: the precision of the
        transforms, 1e-7; float64 in the transmittance domain).
    """
    with np.errstate(over="ignore", invalid="ignore", divide="ignore", under="ignore"):
        return _render(grid, *args, **kwargs)


def _render(grid: Grid, pos: np.ndarray, area: np.ndarray, sigma: np.ndarray, kernel: Kernel, *,
           d_area: np.ndarray | None = None, d_pos: np.ndarray | None = None,
           d_sigma: np.ndarray | None = None, d_gamma: int | None = None,
           d_resolution: int | None = None, cache: dict | None = None,
           work: dict | None = None) -> tuple[np.ndarray, np.ndarray | None]:
    """The computation of :func:`render`."""
    extra = deposit_extra(kernel)
    s = np.sqrt(sigma * sigma + extra * extra)
    n_par = 0 if d_area is None else d_area.shape[1]
    weights = []
    live = np.zeros(n_par, dtype=bool)  # columns with a non-zero deposit
    if n_par:
        ds = d_sigma * (sigma / s)[:, None]  # ∂s/∂p = (σ/s) ∂σ/∂p
        ds_extra = None
        if kernel.domain == "absorbance" and kernel.instrument == "gaussian" and d_resolution is not None:
            # ∂s/∂Δ through the instrument's σ (with a part of it in Fourier space the value
            # depends on the total σ alone, so the deposit may carry all of the change)
            ds_extra = (kernel.resolution * SIGMA_PER_FWHM / s) * SIGMA_PER_FWHM
        for p in range(n_par):
            c = area * ds[:, p]
            if ds_extra is not None and p == d_resolution:
                c = c + area * ds_extra
            w = (d_area[:, p], area * d_pos[:, p], c)
            live[p] = bool(w[0].any() or w[1].any() or w[2].any())
            if live[p]:
                weights.append(w)
    if kernel.domain == "absorbance":
        return _render_absorbance(grid, pos, s, area, weights, live, kernel, d_gamma,
                                  d_resolution, {} if cache is None else cache, work)
    # transmittance domain: resolve A_mono, exponentiate, then the instrument
    t = grid.t
    F = _Spectra(grid, _deposit(grid, pos, s, [(area, None, None)] + weights), live)
    dt = 1.0 / (grid.n_fft * grid.h)
    lor = np.exp(-2.0 * math.pi * kernel.gamma * t)
    kl = lor * np.exp(2.0 * math.pi**2 * kernel.tau**2 * t * t) if kernel.tau > 0 else lor
    R = F.times(kl)
    if d_gamma is not None:
        R.add(d_gamma, F.v * (-2.0 * math.pi * t) * kl)
    amono = R.back()
    tmono = np.exp(-LN10 * amono[0])
    rows = np.empty_like(amono)
    rows[0] = tmono - 1.0
    rows[1:] = -LN10 * tmono[None, :] * amono[1:]
    G = _Spectra(grid, rows)
    a_t = transfer(kernel.instrument, kernel.resolution, t, dt=dt)
    R2 = G.times(a_t)
    if d_resolution is not None:
        R2.add(d_resolution, G.v * transfer_derivative(kernel.instrument, kernel.resolution, t,
                                                         dt=dt))
    res = _sample(grid, R2.back())
    res[0] += 1.0
    return res[0], (res[1:].T if n_par else None)


def _render_absorbance(grid: Grid, pos, s, area, weights, live, kernel: Kernel, d_gamma,
                       d_resolution, cache: dict,
                       work: dict | None = None) -> tuple[np.ndarray, np.ndarray | None]:
    """The absorbance domain: A_obs = ILS ⊛ A_mono, linear in the deposits.

    ``cache`` holds the kernel transform, the value's spectrum and the value at the data
    points of these lines (the caller passes the same dict only for the same lines and
    kernel): a Jacobian asked for at the point of the last value (the solver's accepted
    step) transforms only its derivative columns. ``work`` keeps the large work arrays
    between calls (the returned Jacobian is one of them: valid until the next call)."""
    if work is None:
        work = {}
    if work.get("grid") is not grid:
        if work.get("size") != (grid.M, grid.n_fft):
            work.clear()  # (the scratch arrays hold zeros beyond M: kept for the same M only)
            work["size"] = (grid.M, grid.n_fft)
        work["grid"] = grid
        work["t"] = grid.t
    t = work["t"]
    n, M = grid.n_fft, grid.M
    if "k" not in cache:
        lor = np.exp(-2.0 * math.pi * kernel.gamma * t)
        dt = 1.0 / (n * grid.h)
        if kernel.instrument != "gaussian":
            k = lor * transfer(kernel.instrument, kernel.resolution, t, dt=dt)
        elif kernel.fourier_sigma > 0:
            k = lor * np.exp(-2.0 * math.pi**2 * kernel.fourier_sigma**2 * t * t)
        else:
            k = lor
        if kernel.tau > 0 and kernel.instrument != "gaussian":
            k = k * np.exp(2.0 * math.pi**2 * kernel.tau**2 * t * t)
        cache["k"], cache["lor"] = k, lor
        # for the float32 derivative spectra: each value twice, for the real and the
        # imaginary part of each bin
        cache["k32"] = np.repeat(k.astype(np.float32), 2)
    k = cache["k"]
    if "v" not in cache:
        padded = _scratch(work, "value", (n,), np.float64)  # zeros beyond M
        _deposit(grid, pos, s, [(area, None, None)], out=padded)
        fv = sfft.rfft(padded, workers=1)
        cache["v"] = fv
        prod = _scratch(work, "product", fv.shape, fv.dtype)
        np.multiply(fv, k, out=prod)
        cache["y"] = _sample(grid, sfft.irfft(prod, n=n, workers=1)[None, :M])[0]
    fv, y = cache["v"], cache["y"]
    n_par = live.size
    if not n_par:
        return y, None
    # rows to transform back: the live deposits, then kernel-only columns (γ, Δ): ∂k/∂p
    kern_terms = {}
    if d_gamma is not None:
        if "gk" not in cache:
            cache["gk"] = (-2.0 * math.pi * t) * k  # ∂k/∂γ
        kern_terms[d_gamma] = cache["gk"]
    if d_resolution is not None and kernel.instrument != "gaussian":
        dt = 1.0 / (n * grid.h)
        dk = cache["lor"] * transfer_derivative(kernel.instrument, kernel.resolution, t, dt=dt) * \
            np.exp(2.0 * math.pi**2 * kernel.tau**2 * t * t)
        kern_terms[d_resolution] = dk
    order = [p for p in range(n_par) if live[p]]
    n_live = len(order)
    order += [p for p in kern_terms if not live[p]]
    if not order:
        return y, np.zeros((y.size, n_par), dtype=np.float32)
    d = _scratch(work, "spectra", (len(order), fv.size), np.complex64)
    if n_live:
        padded = _scratch(work, "padded", (n_live, n), np.float32)  # zeros beyond M
        _deposit(grid, pos, s, weights, out=padded)
        # the real kernel on the real and imaginary parts (the complex product with a zero
        # imaginary part gives the same numbers, with three times the work)
        spec = sfft.rfft(padded, axis=-1, workers=1)
        np.multiply(spec.view(np.float32), cache["k32"][None, :], out=d[:n_live].view(np.float32))
    for p, dk in kern_terms.items():  # the value's spectrum times ∂k/∂p
        r = order.index(p)
        if live[p]:
            d[r] += (fv * dk).astype(np.complex64)
        else:  # (a zero deposit plus the kernel term: the product rounded once, in one pass)
            np.multiply(fv, dk, out=d[r], casting="same_kind")
    back = _sample(grid, sfft.irfft(d, n=n, axis=-1, workers=1)[:, :M])
    if order == list(range(n_par)):
        return y, back.T  # (the usual case: every column in order, no copy)
    jac = _scratch(work, "jac", (n_par, y.size), np.float32)
    jac.fill(0.0)
    jac[order] = back
    return y, jac.T

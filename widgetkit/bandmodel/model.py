"""The band model: parameters θ → observed spectrum and its Jacobian (private).

Intensities come from the line system of :mod:`widgetkit.simulate.linesystem` (the
simulator's own formula), normalised to the band area S:

    I_k = S · w_k / Σ_j w_j,   w_k = a_iso f_k ν_k e^{−c₂E″_k/T} (1 − e^{−c₂ν_k/T}) (1 + C m_k)² / Q_iso(T)

(a_iso the abundance ratio to the main isotopologue), so S is the integrated decadic
absorbance of all modelled bands (cm⁻¹) and the sum runs over every line, also those
outside the data. Gaussian width of each line: Doppler σ_k = ν_k √(kT/(m c²)) (line
shape ``"doppler"``) or a free FWHM common to all lines (``"voigt"``); Lorentzian
HWHM γ common to all lines. Derivatives (c₂ = hc/k, x = c₂ν/T, ε = 1/(eˣ − 1)):

    ∂ln w/∂θ_spec = (1/ν + c₂ε/T) ∂ν/∂θ − (c₂/T) ∂E″/∂θ + (c₂/T) ⟨∂E/∂θ⟩_Q
    ∂ln w/∂T      = c₂E″/T² − c₂νε/T² − c₂⟨E⟩_Q/T²
    ∂I_k/∂θ       = I_k (∂ln w_k/∂θ − Σ_j (w_j/W) ∂ln w_j/∂θ)

(⟨·⟩_Q the Boltzmann average over the isotopologue's partition levels). The observed
band (see :mod:`.render`) gets an absorbance baseline Σ_j b_j t^j, t = (x − centre)/half
range (the simulator's convention): y = A_band + baseline for absorbance data,
y = 10^(−baseline) · T_band for transmittance data.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import scipy.constants as sc

from ..errors import FitError
from ..oscillator import C2
from ..simulate.linesystem import LineSystem
from .deposit import thread_work
from .instrument import SIGMA_PER_FWHM, fwhm_factor
from .kernel import Kernel, auxiliary_tau, deposit_extra, fourier_sigma
from .render import LN10, make_grid, render

__all__ = ["BandModel"]

_KT_MC2 = sc.k / (sc.atomic_mass * sc.c**2)  # σ_D/ν = sqrt(T/M · this), M in u


class BandModel:
    """Evaluate the band model and its Jacobian on a data grid.

    Parameters
    ----------
    x : ndarray (N,)
        Data wavenumbers, ascending (cm⁻¹).
    y_kind : {"absorbance", "transmittance"}
        What the data are.
    system : LineSystem
    names : list of str
        All parameter names, in θ order.
    C : ndarray (n_c, P)
        Linear map from θ to the system's constants.
    domain : {"absorbance", "transmittance"}
        Convolution domain (:mod:`.render`).
    instrument : str
    shape : {"doppler", "voigt"}
    baseline_degree : int or None
    theta0 : ndarray (P,)
        Start values, for the grid and the lines kept.
    """

    def __init__(self, x, y_kind: str, system: LineSystem, names: list[str], C: np.ndarray, *,
                 domain: str, instrument: str, shape: str, baseline_degree: int | None,
                 theta0: np.ndarray):
        self.x = np.asarray(x, dtype=float)
        #: the smallest step of the data (the working grid is never coarser)
        self._step = float(np.min(np.diff(self.x))) if self.x.size > 1 else 0.0
        self.y_kind = y_kind
        self.system = system
        self.names = list(names)
        self.index = {n: k for k, n in enumerate(self.names)}
        self.domain = domain
        self.instrument = instrument
        self.shape = shape
        self.P = len(self.names)
        self.dpos = system.P @ C  # (L, P), constant
        self.dE = system.E @ C
        self.dQ = system.Q @ C
        self.m = system.m
        self.inv_mass = 1.0 / system.mass
        mid, half = 0.5 * (self.x[0] + self.x[-1]), 0.5 * (self.x[-1] - self.x[0])
        t = (self.x - mid) / half if half > 0 else np.zeros_like(self.x)
        self.basis = (np.column_stack([t**j for j in range(baseline_degree + 1)])
                      if baseline_degree is not None else np.zeros((self.x.size, 0)))
        self.base_names = [f"baseline_{j}" for j in range(self.basis.shape[1])]
        self.basis_t = np.ascontiguousarray(self.basis.T)
        #: (key, grid, band area) of the value kept by the renderer (absorbance domain), and
        #: the renderer's cache of it
        self._value_key: tuple | None = None
        self._value_cache: dict = {}
        #: the renderer's work arrays (absorbance domain) for large grids, kept between
        #: evaluations (small grids use the thread's, see :func:`.deposit.thread_work`)
        self._work: dict = {}
        self.iso_names = [f"abundance_ratio({n})" for n in system.isotopologues[1:]]
        self.nfev = 0
        self.njev = 0
        #: σ (cm⁻¹) of an extra Gaussian smoothing of the model (coarse fitting stages)
        self.smoothing = 0.0
        self._setup(np.asarray(theta0, dtype=float))

    # ------------------------------------------------------------------ set-up
    def _get(self, theta, name, default=0.0) -> float:
        k = self.index.get(name)
        return default if k is None else float(theta[k])

    def kernel(self, theta) -> Kernel:
        res = self._get(theta, "resolution")
        tau = auxiliary_tau(self.instrument, res) if self.domain == "absorbance" else self.tau_l
        fs = fourier_sigma(self.instrument, res, self.smoothing, self._step) \
            if self.domain == "absorbance" else 0.0
        return Kernel(gamma=max(self._get(theta, "lorentz_hwhm"), 0.0), instrument=self.instrument,
                      resolution=res, tau=tau, domain=self.domain, smooth=self.smoothing,
                      fourier_sigma=fs)

    def _sigma(self, theta, pos) -> np.ndarray:
        if self.shape == "voigt":
            return np.full(pos.shape, max(self._get(theta, "gauss_fwhm"), 1e-12) * SIGMA_PER_FWHM)
        T = max(self._get(theta, "temperature"), 1e-6)
        return np.abs(pos) * np.sqrt(T * _KT_MC2 * self.inv_mass)

    def _h_needed(self, theta) -> tuple[float, float, float]:
        """(grid spacing needed, largest deposit width, observed line width) at θ."""
        pos = self.dpos @ theta
        sig = self._sigma(theta, pos)
        k = self.kernel(theta)
        extra = deposit_extra(k)
        s = np.sqrt(sig**2 + extra**2)
        h = float(np.min(s)) / (1.5 if self.domain == "absorbance" else 3.0)
        width = max(fwhm_factor(self.instrument) * k.resolution,
                    2.3548 * float(np.max(sig)) + 2.0 * k.gamma)
        return h, float(np.max(s)), width

    def _setup(self, theta) -> None:
        # the transmittance domain borrows τ from the Lorentzian (see .render)
        self.tau_l = max(self._get(theta, "lorentz_hwhm"), 0.0) / 6.0 if self.domain != "absorbance" \
            else 0.0
        h, smax, width = self._h_needed(theta)
        ringing = 60.0 if self.instrument == "boxcar" else 25.0
        self.margin_lines = max(2.0, ringing * width)
        pos = self.dpos @ theta
        self.keep = (pos > self.x[0] - self.margin_lines) & (pos < self.x[-1] + self.margin_lines)
        self._grid_margin = self.margin_lines + 8.0 * smax + 2.0
        self.grid = make_grid(self.x, 0.8 * h, self._grid_margin)

    def _regrid(self, theta) -> None:
        """A finer grid when the lines at θ became narrower than this one resolves (or, in
        the transmittance domain, γ smaller than the borrowed τ allows). A grid that would be
        too large is not made: the old one stays for this θ (a trial step of the solver,
        which its χ² then rejects)."""
        h, _, _ = self._h_needed(theta)
        old = (self.grid, self.tau_l, self.keep, self.margin_lines, self._grid_margin)
        try:
            if self.domain != "absorbance" and self._get(theta, "lorentz_hwhm") < 5.5 * self.tau_l:
                self._setup(theta)
            elif h < 0.8 * self.grid.h:
                self.grid = make_grid(self.x, 0.8 * h, self._grid_margin)
        except FitError:
            self.grid, self.tau_l, self.keep, self.margin_lines, self._grid_margin = old

    # ------------------------------------------------------------------ lines
    def lines(self, theta, want: list[int] | None = None):
        """Positions, areas, Gaussian σ of all lines and their derivatives for ``want``.

        Returns (pos, area, sigma, d_pos, d_area, d_sigma, w) with d_* of shape (L, len(want)).
        """
        theta = np.asarray(theta, dtype=float)
        want = [] if want is None else list(want)
        T = max(self._get(theta, "temperature"), 1e-6)
        S = self._get(theta, "band_area")
        C_hw = self._get(theta, "herman_wallis")
        pos = self.dpos @ theta
        e_low = self.dE @ theta
        eq = self.dQ @ theta
        sysm = self.system
        iso = sysm.iso
        n_iso = len(sysm.isotopologues)
        ratios = np.ones(n_iso)
        for i, nm in enumerate(self.iso_names, start=1):
            ratios[i] = self._get(theta, nm, 1.0)
        qterm = sysm.q_weight * np.exp(-C2 * (eq - eq.min()) / T)
        qsum = np.bincount(sysm.q_iso, weights=qterm, minlength=n_iso)
        x = C2 * np.abs(pos) / T
        hw = 1.0 + C_hw * self.m
        lnw = (np.log(np.maximum(sysm.factor * ratios[iso], 1e-300)) + np.log(np.abs(pos))
               + 2.0 * np.log(np.abs(hw) + 1e-300) - C2 * e_low / T + np.log(-np.expm1(-x))
               - np.log(np.maximum(qsum, 1e-300))[iso])
        lnw -= lnw.max()
        w = np.exp(lnw)
        W = w.sum()
        frac = w / W
        area = S * frac
        sig = self._sigma(theta, pos)
        L, n = pos.size, len(want)
        d_pos = np.zeros((L, n))
        d_area = np.zeros((L, n))
        d_sig = np.zeros((L, n))
        if n:
            eps = 1.0 / np.expm1(x)
            pq = qterm / qsum[sysm.q_iso]
            dlnw = np.zeros((L, n))
            for j, k in enumerate(want):
                name = self.names[k]
                dp = self.dpos[:, k]
                if np.any(dp) or np.any(self.dE[:, k]):
                    mean_dq = np.bincount(sysm.q_iso, weights=pq * self.dQ[:, k], minlength=n_iso)
                    dlnw[:, j] = ((1.0 / pos + C2 * eps / T) * dp - (C2 / T) * self.dE[:, k]
                                  + (C2 / T) * mean_dq[iso])
                    d_pos[:, j] = dp
                    if self.shape == "doppler":
                        d_sig[:, j] = sig / pos * dp
                elif name == "temperature":
                    mean_e = np.bincount(sysm.q_iso, weights=pq * (eq - eq.min()), minlength=n_iso)
                    dlnw[:, j] = C2 * (e_low - pos * eps - mean_e[iso]) / T**2
                    if self.shape == "doppler":
                        d_sig[:, j] = sig / (2.0 * T)
                elif name == "herman_wallis":
                    dlnw[:, j] = 2.0 * self.m / hw
                elif name in self.iso_names:
                    i = self.iso_names.index(name) + 1
                    dlnw[:, j] = np.where(iso == i, 1.0 / ratios[i], 0.0)
                elif name == "band_area":
                    d_area[:, j] = frac
                    continue
                elif name == "gauss_fwhm":
                    d_sig[:, j] = SIGMA_PER_FWHM
                    continue
                else:
                    continue
                d_area[:, j] = area * (dlnw[:, j] - frac @ dlnw[:, j])
        return pos, area, sig, d_pos, d_area, d_sig, w

    # ------------------------------------------------------------------ spectrum
    def evaluate(self, theta, free: list[int] | None = None, *, jac: bool = True,
                 out: np.ndarray | None = None):
        """y_model at the data points and ∂y/∂θ for the ``free`` parameters (N, len(free)).

        A solver's trial θ may be absurd (T near 0, say): floating-point overflow is then
        allowed, the result is non-finite and the solver rejects the step. ``out``: a
        C-ordered float array (len(free), N) the Jacobian is written into (returned as its
        transpose), so that a solver reuses one array for all its Jacobians.
        """
        with np.errstate(over="ignore", invalid="ignore", divide="ignore", under="ignore"):
            return self._evaluate(theta, free, jac=jac, out=out)

    def _evaluate(self, theta, free: list[int] | None = None, *, jac: bool = True,
                  out: np.ndarray | None = None):
        """y_model at the data points and ∂y/∂θ for the ``free`` parameters (N, len(free)).

        Columns of baseline coefficients are the basis functions; in the absorbance domain
        the band area's column is the band over the area (the band is linear in it); all
        others go through the line list and the renderer. Re-grids when the lines became
        narrower than the working grid resolves. The Jacobian is returned as the transpose
        of a C-ordered (len(free), N) array (fast Jᵀ J).
        """
        theta = np.asarray(theta, dtype=float)
        free = list(range(self.P)) if free is None else list(free)
        self._regrid(theta)
        base_idx = [self.index[n] for n in self.base_names]
        lin = [k for k in free if k not in base_idx] if jac else []
        k_area = self.index.get("band_area")
        by_area = (self.domain == "absorbance" and k_area in lin and theta[k_area] > 0)
        rlin = [k for k in lin if not (by_area and k == k_area)]
        th_lines, scale = theta, 1.0
        kw = {}
        if self.domain == "absorbance":
            th_lines, scale = self._use_value_cache(theta, k_area, base_idx)
            kw["cache"] = self._value_cache
            kw["work"] = thread_work(self.grid.n_fft, self._work)
        pos, area, sig, d_pos, d_area, d_sig, _ = self.lines(th_lines, rlin)
        keep = self.keep
        kern = self.kernel(theta)
        if rlin:
            kw.update(d_area=d_area[keep], d_pos=d_pos[keep], d_sigma=d_sig[keep],
                      d_gamma=rlin.index(self.index["lorentz_hwhm"])
                      if self.index.get("lorentz_hwhm") in rlin else None,
                      d_resolution=rlin.index(self.index["resolution"])
                      if self.index.get("resolution") in rlin else None)
        band, dband = render(self.grid, pos[keep], area[keep], sig[keep], kern, **kw)
        if scale != 1.0:
            band = band * scale
        self.nfev += 1
        b = np.array([theta[k] for k in base_idx])
        base = self.basis @ b if b.size else np.zeros_like(self.x)
        # y, and the factor f and baseline rows of J: J = f · ∂band/∂θ, or the baseline rows
        if self.y_kind == "absorbance":
            if self.domain == "absorbance":
                y = band + base
                factor = None
            else:
                tb = np.maximum(band, 1e-12)
                y = -np.log10(tb) + base
                factor = -1.0 / (LN10 * tb)
            base_rows = self.basis_t
        else:
            att = 10.0 ** (-base)
            if self.domain == "absorbance":
                y = 10.0 ** (-(band + base))
                factor = -LN10 * y
            else:
                y = band * att
                factor = att
            base_rows = None
        J = None
        if jac:
            J = self._assemble(theta, free, rlin, base_idx, band, dband, factor, base_rows, y,
                               k_area if by_area else None, out, scale)
            self.njev += 1
        return y, J

    def _use_value_cache(self, theta, k_area, base_idx) -> tuple[np.ndarray, float]:
        """Absorbance domain: choose the renderer's cache for θ; returns the θ to compute
        the lines at and the factor on the band and its derivatives.

        The band does not depend on the baseline and is proportional to the band area S
        (so are its derivatives, the band area's own column aside, which is band/S): a θ
        that differs from the kept one only there uses the kept band times S/S_kept (the
        linear stages of a fit evaluate the band once)."""
        shape = theta.copy()
        shape[base_idx] = 0.0
        S = None
        if k_area is not None:
            S, shape[k_area] = float(theta[k_area]), 0.0
        key = (shape.tobytes(), self.smoothing, self.tau_l)
        kept = self._value_key
        if kept is not None and kept[0] == key and kept[1] is self.grid:
            S_kept = kept[2]
            if S == S_kept:
                return theta, 1.0
            if S is not None and S > 0 and S_kept > 0:
                th = theta.copy()
                th[k_area] = S_kept
                return th, S / S_kept
        self._value_key, self._value_cache = (key, self.grid, S), {}
        return theta, 1.0

    def _assemble(self, theta, free, rlin, base_idx, band, dband, factor, base_rows, y,
                  k_area, out=None, scale: float = 1.0) -> np.ndarray:
        """J (N, len(free)), the transpose of a C-ordered array (fast Jᵀ J): rows
        factor · ∂band/∂θ (∂band/∂S = band/S for ``k_area``), and the baseline rows
        (``base_rows``, or −ln10 · y · basis for transmittance data)."""
        shape = (len(free), self.x.size)
        Jt = out if out is not None and out.shape == shape and out.flags.c_contiguous \
            else np.empty(shape)
        for j, k in enumerate(free):
            if k in base_idx:
                i = base_idx.index(k)
                if base_rows is not None:
                    Jt[j] = base_rows[i]
                else:
                    np.multiply(-LN10 * y, self.basis_t[i], out=Jt[j])
                continue
            if k == k_area:
                row = band / theta[k]
            else:
                row = dband[:, rlin.index(k)]
                if scale != 1.0:
                    row = row * scale
            if factor is None:
                Jt[j] = row
            else:
                np.multiply(row, factor, out=Jt[j])
        return Jt.T

    def components(self, theta) -> dict[str, np.ndarray]:
        """The model's parts at the data points: ``model``, ``baseline`` (in y units: the
        absorbance baseline, or the transmittance 10^(−baseline)) and ``band``."""
        theta = np.asarray(theta, dtype=float)
        y, _ = self.evaluate(theta, [], jac=False)
        base_idx = [self.index[n] for n in self.base_names]
        b = np.array([theta[k] for k in base_idx])
        base = self.basis @ b if b.size else np.zeros_like(self.x)
        if self.y_kind == "absorbance":
            return {"model": y, "baseline": base, "band": y - base}
        att = 10.0 ** (-base)
        return {"model": y, "baseline": att, "band": y / att}

    def line_table(self, theta) -> pd.DataFrame:
        """The modelled lines at θ: isotopologue, label, band, position, area, E_lower."""
        theta = np.asarray(theta, dtype=float)
        pos, area, sig, *_ = self.lines(theta)
        sysm = self.system
        return pd.DataFrame({
            "isotopologue": np.asarray(sysm.isotopologues, dtype=object)[sysm.iso],
            "label": sysm.labels(),
            "band": [f"{a}-{b}" for a, b in zip(sysm.v_upper.tolist(), sysm.v_lower.tolist(),
                                                 strict=True)],
            "J_upper": sysm.J_upper, "J_lower": sysm.J_lower,
            "position": pos, "area": area, "E_lower": self.dE @ theta,
            "doppler_fwhm": sig / SIGMA_PER_FWHM if self.shape == "doppler" else np.nan,
        }).sort_values("position", kind="stable").reset_index(drop=True)


def _unused() -> None:  # pragma: no cover
    return math.pi
